//! A transition's Elmore delay composed over the series-parallel trees of the stage's two
//! networks, for the rule's scan over every vector: each subtree summed up as a two-terminal part
//! (its conductance, and its inner nodes' capacitance weighted by their voltage as fractions of its
//! two ends' voltages), members joined in series or in parallel, so that a subtree's figures depend
//! only on its own inputs' values and are kept from one vector to the next.
//!
//! The quantity is the one [`crate::timing::circuit`] solves by elimination: with a unit current
//! into the output and the rail at 0, every node's voltage `v_k` is its transfer resistance to the
//! output (the conductance matrix is symmetric), so the output's first moment is
//! `sum_k C_k d_k v_k`, `v_output` the resistance a load sees. A node of the switching network
//! starts at its final level (`d_k = 0`) where the rail reaches it before the switch; the other
//! network's nodes joined to the output never do (the rail reaches them only through the output).
//! The sums are the same as the elimination's up to rounding (a relative 1e-12 is checked in the
//! tests), so the rule compares vectors with them and times the vector it keeps by elimination.
//!
//! Composition (every resistance positive): in series, `X` above `Y` joined at a node `m`, the
//! ends conduct where both do, `g = gx gy / (gx + gy)`, and `m` sits at `p V_top + q V_bottom`
//! (`p = gx / (gx + gy)`, `q = gy / (gx + gy)`; `m` follows the end its conducting side reaches,
//! and is cut off where neither conducts); in parallel, conductances add and inner voltages are
//! untouched. Before the switch (the switching input's devices off) each inner node is classed by
//! the ends it reaches, carried up the same way.

use std::cell::RefCell;

use crate::cell::SizedStage;
use crate::network::{NetworkKind, Node, Sides};
use crate::timing::circuit::{Circuit, OUTPUT, VDD, rail_of};
use crate::timing::error::NetworkFault;

/// Subtrees of at most this many distinct inputs keep every state asked of them with an input
/// switching (those with none are [`After`] sums, kept as such).
const TABLED_INPUTS: usize = 4;

/// Subtrees of at most this many distinct inputs keep every [`After`] asked of them; larger ones
/// keep their last (one vector's, reused while their inputs keep it).
const TABLED_AFTER_INPUTS: usize = 12;

/// Most inputs the trees take: two bytes of a vector.
const MAX_INPUTS: usize = 16;

/// No input switching: the state after the switch, before it alike.
const NONE: u32 = u32::MAX;

/// A subtree summed up under one vector.
#[derive(Debug, Clone, Copy, Default)]
struct State {
    /// After the switch: the conductance between its ends, 0 where they are not joined.
    g: f64,
    /// Before the switch: whether its ends are joined.
    before: bool,
    /// Its inner nodes' capacitance times their voltage after the switch, as coefficients of the
    /// top and bottom end's voltages, by the ends each node reaches before the switch (bit 0 the
    /// top, bit 1 the bottom).
    w: [[f64; 2]; 4],
}

/// A subtree after the switch alone: its conductance (0 where its ends are not joined) and its
/// inner nodes' capacitance times their voltage, as coefficients of its top and bottom end's
/// voltages (a node cut off from both counts nothing).
#[derive(Debug, Clone, Copy, Default)]
struct After {
    g: f64,
    top: f64,
    bottom: f64,
}

/// One subtree: a device, or members in series (output side first, with the capacitance of the
/// node below each member but the last), or in parallel.
#[derive(Debug, Clone)]
enum Part {
    Device { input: u32, conductance: f64 },
    Series { members: Vec<u32>, below: Vec<f64> },
    Parallel { members: Vec<u32> },
}

/// What a subtree keeps of the states it has been asked for with an input switching.
#[derive(Debug, Clone)]
enum Memo {
    /// Nothing: a device (its state is read off the vector), or a subtree of many inputs.
    Nothing,
    /// Every state, by its inputs' values and which of them switches; `known` marks those
    /// filled. Allocated when first asked.
    Table { inputs: Vec<u8>, states: Vec<State>, known: Vec<u64> },
}

/// What a subtree keeps of the [`After`] sums it has been asked for: as [`Memo`], with no
/// switching input.
#[derive(Debug, Clone)]
enum AfterMemo {
    Nothing,
    /// `gather` turns a vector into the table's index: its low byte's entry or'ed with its high
    /// byte's (256 each), for large tables (empty for the others).
    Table {
        gather: Box<[u16]>,
        states: Vec<After>,
        known: Vec<u64>,
        last: Option<(u64, After)>,
    },
    Last {
        key: u64,
        state: Option<After>,
    },
}

/// One network's tree with the states it keeps.
#[derive(Debug, Clone)]
struct Tree {
    parts: Vec<Part>,
    /// Per subtree: its inputs, a bit each.
    inputs: Vec<u64>,
    memos: Vec<Memo>,
    after_memos: Vec<AfterMemo>,
    root: usize,
}

/// Both networks of a stage as composable trees at one set of widths, with the output's own
/// capacitance: what [`Composed::moments`] needs for any vector.
#[derive(Debug, Clone)]
pub struct Composed {
    trees: Sides<Tree>,
    output_capacitance: f64,
    /// Each network's inner nodes' capacitance, C.
    inner_capacitance: Sides<f64>,
    /// All inputs, a bit each.
    every_input: u64,
}

impl Composed {
    /// The trees of `stage` as `circuit` at `widths` (circuit order). `None` where the circuit is
    /// not the two trees' nodes (each inner node the junction of one series pair, the ends the
    /// output and the rail) or an input lies past a word's bits.
    pub fn new(stage: &SizedStage, circuit: &Circuit, widths: &[f64]) -> Option<Composed> {
        let input_count = stage.function.inputs.len();
        if input_count > MAX_INPUTS {
            return None;
        }
        let mut seen = vec![false; circuit.names.len()];
        let mut trees = Vec::with_capacity(2);
        for sized in stage.networks.values() {
            let kind = sized.kind();
            let mut tree =
                Tree { parts: Vec::new(), inputs: Vec::new(), memos: Vec::new(), after_memos: Vec::new(), root: 0 };
            let offset = circuit.offsets[kind];
            let builder = Builder { circuit, widths, kind, offset };
            let (root, top, bottom) = builder.walk(&sized.network.root, &mut tree, &mut seen)?;
            if (top, bottom) != (OUTPUT, rail_of(kind)) {
                return None;
            }
            tree.root = root;
            trees.push(tree);
        }
        // Every inner node is a series junction of one tree (none left over, none shared).
        if seen.iter().skip(VDD + 1).any(|&s| !s) {
            return None;
        }
        let pull_up = trees.pop()?;
        let pull_down = trees.pop()?;
        let inner = |tree: &Tree| -> f64 {
            tree.parts
                .iter()
                .map(|part| if let Part::Series { below, .. } = part { below.iter().sum() } else { 0.0 })
                .sum()
        };
        Some(Composed {
            inner_capacitance: Sides::new(inner(&pull_down), inner(&pull_up)),
            trees: Sides::new(pull_down, pull_up),
            output_capacitance: circuit.node_capacitance(OUTPUT, widths),
            every_input: (1u64 << input_count) - 1,
        })
    }

    /// Towards what no transition into `kind`'s on-set `on_set` exceeds, whichever input switches
    /// (the Elmore delay were every node of the output's component charged): the output's
    /// capacitance and the switching network's nodes joined to it weighted by their voltage, in
    /// C, and the resistance a load sees, R; `None` where the network does not conduct.
    pub fn reach(&mut self, kind: NetworkKind, on_set: u64) -> Option<(f64, f64)> {
        let switching = self.trees[kind].root_after(on_set);
        (switching.g > 0.0).then(|| (self.output_capacitance + switching.top, 1.0 / switching.g))
    }

    /// The capacitance of the other network's nodes joined to the output after a switch into
    /// `kind`'s on-set `on_set`, C; `None` where that network conducts too.
    pub fn hanging(&mut self, kind: NetworkKind, on_set: u64) -> Option<f64> {
        let hanging = self.trees[other_of(kind)].root_after(!on_set & self.every_input);
        (hanging.g <= 0.0).then_some(hanging.top)
    }

    /// The most capacitance a transition can charge: the output's and every inner node's, C.
    pub fn charge_most(&self) -> f64 {
        self.output_capacitance + self.inner_capacitance.pull_down + self.inner_capacitance.pull_up
    }

    /// The most [`Composed::hanging`] can be: every inner node of the other network.
    pub fn hanging_most(&self, kind: NetworkKind) -> f64 {
        self.inner_capacitance[other_of(kind)]
    }

    /// The output's Elmore delay with no load and the resistance a load sees (RC, R) when `input`
    /// switches into `kind`'s on-set `on_set` (input `k` at its on-level in `kind`'s network where
    /// bit `k` is set), the faults of [`crate::timing::circuit::conducting`] where it has one.
    pub fn moments(&mut self, kind: NetworkKind, on_set: u64, input: usize) -> Result<(f64, f64), NetworkFault> {
        let hanging = self.trees[other_of(kind)].root_state(!on_set & self.every_input, NONE);
        if hanging.g > 0.0 {
            return Err(NetworkFault::BothRails);
        }
        let switching = self.trees[kind].root_state(on_set, input as u32);
        if switching.g <= 0.0 {
            return Err(NetworkFault::NoRail);
        }
        if switching.before {
            return Err(NetworkFault::AlreadySwitched);
        }
        // The other network's nodes joined to the output sit at the output's voltage; the
        // switching network's count unless the rail reaches them before the switch.
        let joined: f64 = hanging.w.iter().map(|w| w[0]).sum();
        let charged = switching.w[0][0] + switching.w[1][0];
        let drive = 1.0 / switching.g;
        Ok(((self.output_capacitance + joined + charged) * drive, drive))
    }
}

/// The network that is not `kind`.
pub fn other_of(kind: NetworkKind) -> NetworkKind {
    match kind {
        NetworkKind::PullDown => NetworkKind::PullUp,
        NetworkKind::PullUp => NetworkKind::PullDown,
    }
}

/// What building a tree reads.
struct Builder<'a> {
    circuit: &'a Circuit,
    widths: &'a [f64],
    kind: NetworkKind,
    offset: usize,
}

impl Builder<'_> {
    /// `node`'s subtree added to `tree`: its number, top and bottom circuit nodes.
    fn walk(&self, node: &Node, tree: &mut Tree, seen: &mut [bool]) -> Option<(usize, usize, usize)> {
        let (part, top, bottom, inputs) = match node {
            Node::Device(index) => {
                let device = self.offset + index;
                let d = self.circuit.devices.get(device)?;
                if d.kind != self.kind || d.index != *index || d.drain == d.source || d.input >= 63 {
                    return None;
                }
                let conductance = 1.0 / (d.unit_resistance / self.widths[device]);
                (Part::Device { input: d.input as u32, conductance }, d.drain, d.source, 1u64 << d.input)
            }
            Node::Series(members) | Node::Parallel(members) => {
                let mut ids = Vec::with_capacity(members.len());
                let mut below = Vec::new();
                let mut inputs = 0;
                let mut ends: Option<(usize, usize)> = None;
                for member in members {
                    let (id, top, bottom) = self.walk(member, tree, seen)?;
                    inputs |= tree.inputs[id];
                    ids.push(id as u32);
                    ends = Some(match (ends, node) {
                        (None, _) => (top, bottom),
                        (Some((first, last)), Node::Series(_)) => {
                            if last != top || last <= VDD || seen[last] {
                                return None;
                            }
                            seen[last] = true;
                            below.push(self.circuit.node_capacitance(last, self.widths));
                            (first, bottom)
                        }
                        (Some(same), _) => {
                            if same != (top, bottom) {
                                return None;
                            }
                            same
                        }
                    });
                }
                let (top, bottom) = ends?;
                let part = match node {
                    Node::Series(_) => Part::Series { members: ids, below },
                    _ => Part::Parallel { members: ids },
                };
                (part, top, bottom, inputs)
            }
        };
        let listed: Vec<u8> = (0..MAX_INPUTS as u8).filter(|&i| inputs >> i & 1 == 1).collect();
        let memo = match part {
            Part::Device { .. } => Memo::Nothing,
            _ if listed.len() <= TABLED_INPUTS => {
                Memo::Table { inputs: listed.clone(), states: Vec::new(), known: Vec::new() }
            }
            _ => Memo::Nothing,
        };
        let after_memo = match part {
            Part::Device { .. } => AfterMemo::Nothing,
            _ if listed.len() <= TABLED_AFTER_INPUTS => {
                AfterMemo::Table { gather: Box::default(), states: Vec::new(), known: Vec::new(), last: None }
            }
            _ => AfterMemo::Last { key: 0, state: None },
        };
        tree.after_memos.push(after_memo);
        tree.parts.push(part);
        tree.inputs.push(inputs);
        tree.memos.push(memo);
        Some((tree.parts.len() - 1, top, bottom))
    }
}

/// The least table whose index is gathered byte by byte ([`gathering`]) rather than bit by bit.
const GATHER_FROM: usize = 64;

/// The index of a vector in the table of a subtree whose inputs are `inputs`: for each of its
/// two bytes, each value's bits of those inputs packed in their order (low byte first).
fn gathering(inputs: u64) -> Box<[u16]> {
    let mut gather = vec![0u16; 512].into_boxed_slice();
    let listed = (0..MAX_INPUTS).filter(|&i| inputs >> i & 1 == 1);
    for (k, input) in listed.enumerate() {
        let (half, bit) = (input / 8, input % 8);
        for byte in 0..256 {
            if byte >> bit & 1 == 1 {
                gather[half * 256 + byte] |= 1 << k;
            }
        }
    }
    gather
}

thread_local! {
    /// Tables of [`After`] sums of trees no longer in use, for the next trees of this thread: a
    /// delay report times one stage at several sets of widths, and the memory kept is not handed
    /// back to the system to be cleared again.
    static SPARE: RefCell<Vec<Vec<After>>> = const { RefCell::new(Vec::new()) };
}

/// The least table kept spare (smaller ones come and go cheaply).
const SPARE_FROM: usize = 256;

/// Most spare tables kept.
const MOST_SPARE: usize = 512;

/// A table of `size` sums (their values unread until known): a spare one where one is large
/// enough.
fn spare_table(size: usize) -> Vec<After> {
    let spare = SPARE.with(|spare| {
        let mut spare = spare.borrow_mut();
        let at = spare.iter().position(|table| (size..2 * size).contains(&table.capacity()))?;
        Some(spare.swap_remove(at))
    });
    let mut table = spare.unwrap_or_default();
    table.resize(size, After::default());
    table
}

impl Drop for Tree {
    fn drop(&mut self) {
        SPARE.with(|spare| {
            let mut spare = spare.borrow_mut();
            for memo in &mut self.after_memos {
                if let AfterMemo::Table { states, .. } = memo
                    && states.capacity() >= SPARE_FROM
                    && spare.len() < MOST_SPARE
                {
                    let mut table = std::mem::take(states);
                    table.clear();
                    spare.push(table);
                }
            }
        });
    }
}

impl Tree {
    fn root_state(&mut self, on_set: u64, switching: u32) -> State {
        state(&self.parts, &self.inputs, &mut self.memos, &mut self.after_memos, self.root, on_set, switching)
    }

    fn root_after(&mut self, on_set: u64) -> After {
        after(&self.parts, &self.inputs, &mut self.after_memos, self.root, on_set)
    }
}

/// Subtree `id`'s [`After`] sums under `on_set`: kept, or composed from its members'.
fn after(parts: &[Part], inputs: &[u64], memos: &mut [AfterMemo], id: usize, on_set: u64) -> After {
    let slot = match &mut memos[id] {
        AfterMemo::Nothing => None,
        AfterMemo::Table { gather, states, known, last } => {
            // The last vector's first (neighbouring vectors often agree on a subtree's inputs).
            let key = on_set & inputs[id];
            if let Some((last_key, state)) = last
                && *last_key == key
            {
                return *state;
            }
            if states.is_empty() {
                let size = 1usize << inputs[id].count_ones();
                *states = spare_table(size);
                *known = vec![0; size.div_ceil(64)];
                if size > GATHER_FROM {
                    *gather = gathering(inputs[id]);
                }
            }
            let index = if gather.is_empty() {
                // A few inputs: their bits picked one by one.
                let (mut index, mut rest, mut place) = (0, inputs[id], 0);
                while rest != 0 {
                    index |= (on_set >> rest.trailing_zeros() & 1) << place;
                    place += 1;
                    rest &= rest - 1;
                }
                index as usize
            } else {
                usize::from(gather[on_set as usize & 255] | gather[256 + (on_set as usize >> 8 & 255)])
            };
            if known[index / 64] >> (index % 64) & 1 == 1 {
                *last = Some((key, states[index]));
                return states[index];
            }
            Some(index)
        }
        AfterMemo::Last { key, state } => {
            if *key == on_set & inputs[id]
                && let Some(state) = state
            {
                return *state;
            }
            None
        }
    };
    let composed = match &parts[id] {
        &Part::Device { input, conductance } => {
            After { g: if on_set >> input & 1 == 1 { conductance } else { 0.0 }, top: 0.0, bottom: 0.0 }
        }
        Part::Series { members, below } => {
            let mut upper = after(parts, inputs, memos, members[0] as usize, on_set);
            for (&member, &capacitance) in members[1..].iter().zip(below) {
                let lower = after(parts, inputs, memos, member as usize, on_set);
                let (p, q, g) = divide(upper.g, lower.g);
                let middle = upper.bottom + capacitance + lower.top;
                upper = After { g, top: upper.top + middle * p, bottom: middle * q + lower.bottom };
            }
            upper
        }
        Part::Parallel { members } => {
            let mut joined = after(parts, inputs, memos, members[0] as usize, on_set);
            for &member in &members[1..] {
                let branch = after(parts, inputs, memos, member as usize, on_set);
                joined = After {
                    g: joined.g + branch.g,
                    top: joined.top + branch.top,
                    bottom: joined.bottom + branch.bottom,
                };
            }
            joined
        }
    };
    match &mut memos[id] {
        AfterMemo::Table { states, known, last, .. } => {
            if let Some(index) = slot {
                states[index] = composed;
                known[index / 64] |= 1 << (index % 64);
                *last = Some((on_set & inputs[id], composed));
            }
        }
        AfterMemo::Last { key, state } => {
            *key = on_set & inputs[id];
            *state = Some(composed);
        }
        AfterMemo::Nothing => {}
    }
    composed
}

/// Two parts in series with conductances `upper` and `lower` (0 where open): where their
/// junction sits, as the fractions `p` of the top end's voltage and `q` of the bottom's, and the
/// conductance of the pair.
fn divide(upper: f64, lower: f64) -> (f64, f64, f64) {
    match (upper > 0.0, lower > 0.0) {
        (true, true) => {
            let sum = upper + lower;
            (upper / sum, lower / sum, upper * lower / sum)
        }
        (true, false) => (1.0, 0.0, 0.0),
        (false, true) => (0.0, 1.0, 0.0),
        (false, false) => (0.0, 0.0, 0.0),
    }
}

/// Subtree `id`'s state under `on_set` with `switching` (an input, or [`NONE`]) going from off
/// before the switch to on after it: kept, or composed from its members'. With no input of the
/// subtree switching, its state is its [`After`] sums.
fn state(
    parts: &[Part],
    inputs: &[u64],
    memos: &mut [Memo],
    after_memos: &mut [AfterMemo],
    id: usize,
    on_set: u64,
    switching: u32,
) -> State {
    if switching == NONE || inputs[id] >> switching & 1 == 0 {
        return State::of(after(parts, inputs, after_memos, id, on_set));
    }
    let slot = match &mut memos[id] {
        Memo::Nothing => None,
        Memo::Table { inputs: listed, states, known } => {
            let width = listed.len() + 1;
            if states.is_empty() {
                let size = (1usize << listed.len()) * width;
                *states = vec![State::default(); size];
                *known = vec![0; size.div_ceil(64)];
            }
            let mut values = 0;
            let mut place = 0;
            for (k, &input) in listed.iter().enumerate() {
                values |= ((on_set >> input) & 1) << k;
                if u32::from(input) == switching {
                    place = k + 1;
                }
            }
            let index = values as usize * width + place;
            if known[index / 64] >> (index % 64) & 1 == 1 {
                return states[index];
            }
            Some(index)
        }
    };
    let composed = match &parts[id] {
        &Part::Device { input, conductance } => {
            let on = on_set >> input & 1 == 1;
            State { g: if on { conductance } else { 0.0 }, before: on && input != switching, w: [[0.0; 2]; 4] }
        }
        Part::Series { members, below } => {
            let mut upper = state(parts, inputs, memos, after_memos, members[0] as usize, on_set, switching);
            for (&member, &capacitance) in members[1..].iter().zip(below) {
                let lower = state(parts, inputs, memos, after_memos, member as usize, on_set, switching);
                upper = series(&upper, &lower, capacitance);
            }
            upper
        }
        Part::Parallel { members } => {
            let mut joined = state(parts, inputs, memos, after_memos, members[0] as usize, on_set, switching);
            for &member in &members[1..] {
                let branch = state(parts, inputs, memos, after_memos, member as usize, on_set, switching);
                joined = parallel(&joined, &branch);
            }
            joined
        }
    };
    if let (Memo::Table { states, known, .. }, Some(index)) = (&mut memos[id], slot) {
        states[index] = composed;
        known[index / 64] |= 1 << (index % 64);
    }
    composed
}

impl State {
    /// The state of a subtree none of whose inputs switches, from its [`After`] sums: every node
    /// reaches before the switch the ends it reaches after it.
    fn of(after: After) -> State {
        let mut w = [[0.0; 2]; 4];
        if after.g > 0.0 {
            w[3] = [after.top, after.bottom];
        } else {
            w[1][0] = after.top;
            w[2][1] = after.bottom;
        }
        State { g: after.g, before: after.g > 0.0, w }
    }
}

/// `upper` above `lower`, joined at a node of capacitance `capacitance`.
fn series(upper: &State, lower: &State, capacitance: f64) -> State {
    let (p, q, g) = divide(upper.g, lower.g);
    // The ends the junction reaches before the switch.
    let junction = usize::from(upper.before) | usize::from(lower.before) << 1;
    let mut w = [[0.0; 2]; 4];
    w[junction][0] += capacitance * p;
    w[junction][1] += capacitance * q;
    for (class, &[top, middle]) in upper.w.iter().enumerate() {
        let reach = (class & 1) | if class & 2 != 0 { junction } else { 0 };
        w[reach][0] += top + middle * p;
        w[reach][1] += middle * q;
    }
    for (class, &[middle, bottom]) in lower.w.iter().enumerate() {
        let reach = (class & 2) | if class & 1 != 0 { junction } else { 0 };
        w[reach][0] += middle * p;
        w[reach][1] += middle * q + bottom;
    }
    State { g, before: upper.before && lower.before, w }
}

/// Two branches between the same ends.
fn parallel(one: &State, other: &State) -> State {
    let before = one.before || other.before;
    let mut w = [[0.0; 2]; 4];
    for class in 0..4 {
        let reach = if before && class != 0 { 3 } else { class };
        w[reach][0] += one.w[class][0] + other.w[class][0];
        w[reach][1] += one.w[class][1] + other.w[class][1];
    }
    State { g: one.g + other.g, before, w }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sizing::{Method, Plan};
    use crate::timing::circuit::{OUTPUT, conducting, flat_widths, moments};
    use crate::timing::report::Edge;
    use crate::timing::transition::switching_vectors;
    use crate::timing::transition::tests::gate_text;

    /// Whether `a` and `b` agree within a relative 1e-12.
    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() <= 1e-12 * a.abs().max(b.abs())
    }

    #[test]
    fn a_nand2_falls_as_its_ladder() {
        // NAND2 with both inputs on: the output y discharges through the top NMOS then the bottom
        // one (R/W each), the node n between them through the bottom one. The top input switching
        // finds n already at 0 (the bottom device held it to the rail): (Rt + Rb) Cy. The bottom
        // input switching finds n charged through the top device: (Rt + Rb) Cy + Rb Cn (Elmore's
        // ladder sum; common practice, no source).
        let plan = Plan::new(Method::LongestPath, 2.0, 1.0, None);
        let cell = crate::size_text("nand2", &plan).unwrap();
        let stage = cell.stage();
        let circuit = Circuit::new(stage, &plan, 1.0);
        let widths = flat_widths(stage);
        let mut composed = Composed::new(stage, &circuit, &widths).unwrap();
        let pull_down: Vec<usize> =
            (0..circuit.devices.len()).filter(|&d| circuit.devices[d].kind == NetworkKind::PullDown).collect();
        let top = *pull_down.iter().find(|&&d| circuit.devices[d].drain == OUTPUT).unwrap();
        let bottom = *pull_down.iter().find(|&&d| d != top).unwrap();
        let node = circuit.devices[top].source;
        let r = |d: usize| circuit.devices[d].unit_resistance / widths[d];
        let (c_y, c_n) = (circuit.node_capacitance(OUTPUT, &widths), circuit.node_capacitance(node, &widths));
        for (device, expected) in
            [(top, (r(top) + r(bottom)) * c_y), (bottom, (r(top) + r(bottom)) * c_y + r(bottom) * c_n)]
        {
            let input = circuit.devices[device].input;
            let (unloaded, drive) = composed.moments(NetworkKind::PullDown, 0b11, input).unwrap();
            assert!(close(unloaded, expected), "{input}: {unloaded} vs {expected}");
            assert!(close(drive, r(top) + r(bottom)));
        }
    }

    proptest::proptest! {
        /// Every switching vector of every input and edge of a random gate: the composed delay and
        /// drive against the elimination of its conducting network (`circuit::moments`, the rule
        /// written out) within a relative 1e-12 (the two sum in different orders, so the last bits
        /// may differ), and the bound never below the delay.
        #[test]
        fn composed_moments_are_the_eliminated_ones(text in gate_text(), diffusion in 0.0f64..2.0) {
            let plan = Plan::new(Method::LongestPath, 2.0, 1.0, None);
            let cell = crate::size_text(&text, &plan).unwrap();
            let stage = cell.stage();
            let circuit = Circuit::new(stage, &plan, diffusion);
            let widths = flat_widths(stage);
            let mut composed = Composed::new(stage, &circuit, &widths).expect("a series-parallel circuit");
            for edge in Edge::BOTH {
                let kind = edge.network();
                for input in 0..stage.function.inputs.len() {
                    for after in switching_vectors(stage, input, kind).unwrap() {
                        let on_set = after
                            .iter()
                            .enumerate()
                            .filter(|&(_, &v)| v == kind.conducts(true))
                            .map(|(i, _)| 1u64 << i)
                            .sum::<u64>();
                        let shape = conducting(&circuit, edge, input, &after).unwrap();
                        let solved = moments(&circuit, &shape, &widths).unwrap();
                        let (unloaded, drive) = composed.moments(kind, on_set, input).unwrap();
                        proptest::prop_assert!(close(unloaded, solved.unloaded), "{} {:?}: {} vs {}", text, after, unloaded, solved.unloaded);
                        proptest::prop_assert!(close(drive, solved.drive), "{} {:?}: {} vs {}", text, after, drive, solved.drive);
                        let (reach, bound_drive) = composed.reach(kind, on_set).unwrap();
                        let hanging = composed.hanging(kind, on_set).unwrap();
                        proptest::prop_assert!(hanging <= composed.hanging_most(kind) * (1.0 + 1e-12));
                        proptest::prop_assert!(close(bound_drive, drive));
                        proptest::prop_assert!((reach + hanging) * bound_drive >= unloaded * (1.0 - 1e-12));
                    }
                }
            }
        }
    }
}
