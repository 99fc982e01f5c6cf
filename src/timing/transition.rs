//! An input's worst transition on an output edge: the input vector it switches under, and that
//! transition's conducting network and Elmore delay. One rule, used by the delays, the simulation
//! deck and the sizing strategies that time a cell (the elmore method, the stack-order search).
//!
//! The rule: of every vector of the side inputs under which the input, going to its on-level,
//! switches the output (the timed network turns from off to on), the one with the slowest Elmore
//! delay, timed with the same capacitance model as the delays ([`crate::timing::circuit`]: every
//! node the new vector connects to the output, charged unless the new rail already held it). Ties
//! (within a relative 1e-9) go to the larger resistance of what conducts after the switch (sizing
//! widths), then to the lower vector index, the vector read as its on-set: input k (in order of
//! first appearance, from 0) is bit k, set where the input turns its devices in the switching
//! network on (the plain index on falling edges, the complemented one on rising edges).
//!
//! Bound: the vectors are enumerated up to [`EXACT_WORST_MAX_INPUTS`] inputs, 64 on-sets a machine
//! word, and each transition found is timed, its work counted against the budget (the conduction of
//! each network over every on-set: words x devices, once; each input and edge: a pass over the
//! words; each vector that switches the output: its conducting network, the devices of the circuit;
//! each network solved by elimination, the same again). Where the circuit is the networks'
//! series-parallel trees (always, for a stage built here), the vectors are compared by their
//! delays composed over the trees ([`crate::timing::composed`]: the elimination's numbers up to
//! rounding, a relative 1e-12), a vector whose delay with every node of its component charged
//! cannot beat or tie the one held passed over, and each input's kept vector timed by elimination,
//! so that every delay reported is the elimination's. Otherwise every vector is timed by
//! elimination, vectors that give the same conducting network and starting charges solved once
//! (keyed and cached). Past the bound,
//! the stated fallback: the weakest path through the input that can conduct alone, with the vector
//! that makes it the only conducting path (labelled `"weakest path"`); none where repeated inputs
//! block every such path.

use std::collections::HashMap;
use std::hash::{BuildHasherDefault, Hasher};

use crate::budget::{Meter, OverBudget, Work};
use crate::cell::SizedStage;
use crate::network::{NetworkKind, Sides};
use crate::paths::{self, EXACT_WORST_MAX_INPUTS, conduction_by_on_set, vector_word};
use crate::sizing::plan::Plan;
use crate::timing::circuit::{
    Adjacency, Circuit, Component, Conducting, Moments, Scratch, Solved, component_in, conducting, elmore,
};
use crate::timing::composed::{Composed, other_of};
use crate::timing::error::NetworkFault;
use crate::timing::report::Edge;

/// How the rule found a transition.
pub const EVERY_VECTOR: &str = "every vector";
/// The fallback past [`EXACT_WORST_MAX_INPUTS`] inputs.
pub const WEAKEST_PATH: &str = "weakest path";

/// Two delays (or resistances) within this fraction of the larger are a tie.
const TIE: f64 = 1e-9;

/// How far, relatively, a delay composed over the trees may sit from the same delay with every
/// node charged summed another way: rounding alone (a few units in the last place per level).
const BOUND_ROUNDING: f64 = 1e-10;

/// One transition, timed.
#[derive(Debug, Clone)]
pub struct Transition {
    /// The input that switches.
    pub input: usize,
    /// The output's edge.
    pub edge: Edge,
    /// Every input's value after the switch (the input at its on-level).
    pub after: Vec<bool>,
    /// What conducts after the switch.
    pub shape: Conducting,
    /// The output's Elmore delay with the load, RC.
    pub elmore: f64,
    /// The same with no load.
    pub unloaded: f64,
    /// Whether the conducting network is a tree.
    pub tree: bool,
    /// How the vector was found: [`EVERY_VECTOR`] or [`WEAKEST_PATH`].
    pub search: &'static str,
}

/// Why a transition could not be timed: its network, or the work budget.
#[derive(Debug, Clone, PartialEq)]
pub enum TransitionError {
    /// The conducting network could not be solved (an internal inconsistency).
    Network(NetworkFault),
    /// More work than the budget allows.
    OverBudget(OverBudget),
}

impl From<NetworkFault> for TransitionError {
    fn from(why: NetworkFault) -> TransitionError {
        TransitionError::Network(why)
    }
}

impl From<OverBudget> for TransitionError {
    fn from(over: OverBudget) -> TransitionError {
        TransitionError::OverBudget(over)
    }
}

/// The transition of `input` on `edge` under the vector `after`, timed with `load` C on the output.
pub fn time_vector(
    circuit: &Circuit,
    widths: &[f64],
    input: usize,
    edge: Edge,
    after: Vec<bool>,
    load: f64,
    search: &'static str,
) -> Result<Transition, NetworkFault> {
    let shape = conducting(circuit, edge, input, &after)?;
    let (elmore, unloaded, tree) = elmore(circuit, &shape, widths, load)?;
    Ok(Transition { input, edge, after, shape, elmore, unloaded, tree, search })
}

/// The rule for one sized stage and capacitance model: what it needs once, and the conducting
/// networks it has solved.
pub struct Rule<'a> {
    stage: &'a SizedStage,
    plan: &'a Plan,
    circuit: &'a Circuit,
    widths: &'a [f64],
    /// Each network's conduction over every on-set, 64 a word; `None` past the bound.
    conduction: Option<Sides<Vec<u64>>>,
    /// Every component met so far (its rail and the devices that conduct within it, which decide
    /// its nodes and their order), numbered.
    components: HashMap<(usize, Box<[u64]>), usize, BuildHasherDefault<WordHasher>>,
    /// Every conducting network solved so far, by its key.
    solved: HashMap<NetworkKey, Moments, BuildHasherDefault<WordHasher>>,
    /// The searches' buffers, reused from one vector to the next.
    scratch: Scratch,
    /// The networks as composable trees, where the circuit is theirs and the conduction known:
    /// the scan compares vectors with their sums and times the kept ones by elimination.
    composed: Option<Composed>,
}

/// A conducting network as a cache key: its component's number (see [`Rule`]'s `components`) and
/// which of its nodes start at their final level, in bits.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
struct NetworkKey {
    component: usize,
    at_final: Box<[u64]>,
}

/// The cache's hasher: each word of a key folded in by a rotate, an exclusive or and a multiply
/// (the keys are long bit sets, which SipHash took longer over).
#[derive(Debug, Default)]
struct WordHasher(u64);

impl WordHasher {
    fn add(&mut self, word: u64) {
        self.0 = (self.0.rotate_left(5) ^ word).wrapping_mul(0x517c_c1b7_2722_0a95);
    }
}

impl Hasher for WordHasher {
    fn finish(&self) -> u64 {
        self.0
    }

    fn write(&mut self, bytes: &[u8]) {
        for chunk in bytes.chunks(8) {
            let mut word = [0u8; 8];
            word[..chunk.len()].copy_from_slice(chunk);
            self.add(u64::from_le_bytes(word));
        }
    }

    fn write_u64(&mut self, word: u64) {
        self.add(word);
    }

    fn write_usize(&mut self, word: usize) {
        self.add(word as u64);
    }
}

/// `flags` as a bit set, 64 a word.
fn bits_of(flags: &[bool]) -> Box<[u64]> {
    let mut words = vec![0u64; flags.len().div_ceil(64)];
    for (index, &flag) in flags.iter().enumerate() {
        if flag {
            words[index / 64] |= 1 << (index % 64);
        }
    }
    words.into_boxed_slice()
}

/// The component of one on-set, shared by every input that switches the output at it: found once,
/// its system eliminated at most once.
struct OnSet {
    after: Vec<bool>,
    component: Component,
    adjacency: Adjacency,
    /// Its number among the components met.
    number: usize,
    solved: Option<Solved>,
}

impl<'a> Rule<'a> {
    /// The rule for `stage` as `circuit` (its capacitance model) with these widths (circuit order),
    /// each network's conduction worked out once, its work counted on `meter`.
    pub fn new(
        stage: &'a SizedStage,
        plan: &'a Plan,
        circuit: &'a Circuit,
        widths: &'a [f64],
        meter: &Meter,
    ) -> Result<Rule<'a>, OverBudget> {
        let inputs = stage.function.inputs.len();
        let conduction = if inputs <= EXACT_WORST_MAX_INPUTS {
            let words = (1u128 << inputs).div_ceil(64);
            let devices: usize = stage.networks.values().map(|n| n.widths.len()).sum();
            meter.charge(words * devices as u128, Work::Delays)?;
            Some(stage.networks.as_ref().map(|_, sized| conduction_by_on_set(&sized.network, inputs)))
        } else {
            None
        };
        Ok(Rule {
            stage,
            plan,
            circuit,
            widths,
            components: HashMap::default(),
            solved: HashMap::default(),
            scratch: Scratch::new(circuit),
            composed: if conduction.is_some() { Composed::new(stage, circuit, widths) } else { None },
            conduction,
        })
    }

    /// The rule with every vector timed by elimination (no composed trees), to check them by.
    #[cfg(test)]
    fn by_elimination(mut self) -> Rule<'a> {
        self.composed = None;
        self
    }

    /// The worst transition of `input` on `edge` (the rule above), timed with `load` C on the
    /// output; `None` where the input never switches the output on that edge (or, past the bound, no
    /// path through it conducts alone).
    pub fn worst(
        &mut self,
        input: usize,
        edge: Edge,
        load: f64,
        meter: &Meter,
    ) -> Result<Option<Transition>, TransitionError> {
        if self.conduction.is_none() {
            let kind = edge.network();
            let Some((_, after)) = lone_path(self.stage, self.plan, input, kind, meter)? else { return Ok(None) };
            meter.charge(self.circuit.devices.len() as u128, Work::Delays)?;
            return Ok(Some(time_vector(self.circuit, self.widths, input, edge, after, load, WEAKEST_PATH)?));
        }
        Ok(self.scan(edge, &[(input, load)], meter)?.pop().flatten())
    }

    /// The worst transition of each of `inputs` (an input with its load in C) on `edge`, in their
    /// order: what [`Rule::worst`] gives each, found in one pass over the on-sets, so that an on-set
    /// at which several inputs switch the output has its conducting network found once and its
    /// system eliminated once.
    pub fn worst_of(
        &mut self,
        edge: Edge,
        inputs: &[(usize, f64)],
        meter: &Meter,
    ) -> Result<Vec<Option<Transition>>, TransitionError> {
        if self.conduction.is_none() {
            return inputs.iter().map(|&(input, load)| self.worst(input, edge, load, meter)).collect();
        }
        self.scan(edge, inputs, meter)
    }

    /// [`Rule::worst_of`] where the conduction is known: on-sets in increasing order, each input's
    /// candidates met in the order [`Rule::worst`] meets them alone, so every tie goes the same way.
    fn scan(
        &mut self,
        edge: Edge,
        inputs: &[(usize, f64)],
        meter: &Meter,
    ) -> Result<Vec<Option<Transition>>, TransitionError> {
        let kind = edge.network();
        let Some(conduction) = &self.conduction else { return Ok(vec![None; inputs.len()]) };
        // A copy (a word per 64 on-sets), so that the rule's buffers can change while it is read.
        let conducts = &conduction[kind].clone();
        let input_count = self.stage.function.inputs.len();
        let circuit = self.circuit;
        let devices = circuit.devices.len() as u128;
        meter.charge(conducts.len() as u128 * inputs.len() as u128, Work::Delays)?;
        // Whether the other network conducts too after a switch into an on-set.
        let other = &conduction[other_of(kind)].clone();
        let every = (1u64 << input_count) - 1;
        let other_conducts = |on_set: u64| {
            let index = (!on_set & every) as usize;
            other.get(index / 64).is_some_and(|word| word >> (index % 64) & 1 == 1)
        };
        // Each input's slowest so far, and the resistance after the switch of each on-set met in a tie.
        let mut resistances = HashMap::default();
        // With the trees: per on-set met, the most resistance a load sees after the switch.
        let mut drives = if self.composed.is_some() { vec![f64::INFINITY; 1 << input_count] } else { Vec::new() };
        let mut best: Vec<Option<Candidate>> = (0..inputs.len()).map(|_| None).collect();
        let mut switching = vec![0u64; inputs.len()];
        for (word, &bits) in conducts.iter().enumerate() {
            if bits == 0 {
                continue;
            }
            // On-sets with the input on where the network conducts, and would not with it off.
            let mut any = 0;
            for (slot, &(input, _)) in inputs.iter().enumerate() {
                switching[slot] = bits & vector_word(word as u64, input) & !flip(conducts, word, input);
                any |= switching[slot];
            }
            while any != 0 {
                let bit = any.trailing_zeros();
                any &= any - 1;
                let on_set = word as u64 * 64 + u64::from(bit);
                let mut here: Option<OnSet> = None;
                // With the trees: what no transition into this on-set exceeds.
                let mut bound: Option<(f64, f64)> = None;
                let mut hanging: Option<f64> = None;
                let mut least: Option<f64> = None;
                for (slot, &(input, load)) in inputs.iter().enumerate() {
                    if switching[slot] >> bit & 1 == 0 {
                        continue;
                    }
                    meter.charge(devices, Work::Delays)?;
                    let candidate = match &mut self.composed {
                        Some(composed) => {
                            // What no transition into this on-set exceeds, in two steps (the
                            // other network's nodes joined to the output at most all of them,
                            // then as many as are): a vector that cannot be slower than the one
                            // held, nor tie with it, is passed over, as the rule would pass it.
                            if other_conducts(on_set) {
                                return Err(NetworkFault::BothRails.into());
                            }
                            // First with every node of the circuit charged and the resistance of
                            // an on-set within this one (fewer devices on: no less resistance).
                            let most_drive = *least.get_or_insert_with(|| {
                                let mut bits = on_set;
                                let mut most = f64::INFINITY;
                                while bits != 0 {
                                    most = most.min(drives[(on_set ^ (bits & bits.wrapping_neg())) as usize]);
                                    bits &= bits - 1;
                                }
                                most
                            });
                            let most = (composed.charge_most() + load) * most_drive * (1.0 + BOUND_ROUNDING);
                            if bound.is_none()
                                && best[slot].as_ref().is_some_and(|held| most < held.elmore * (1.0 - TIE))
                            {
                                continue;
                            }
                            let (reach, drive) = match bound {
                                Some(bound) => bound,
                                None => *bound.insert(composed.reach(kind, on_set).ok_or(NetworkFault::NoRail)?),
                            };
                            let below = |joined: f64| {
                                let most = (reach + joined + load) * drive * (1.0 + BOUND_ROUNDING);
                                best[slot].as_ref().is_some_and(|held| most < held.elmore * (1.0 - TIE))
                            };
                            if below(composed.hanging_most(kind)) {
                                continue;
                            }
                            let joined = match hanging {
                                Some(joined) => joined,
                                None => *hanging.insert(composed.hanging(kind, on_set).ok_or(NetworkFault::BothRails)?),
                            };
                            if below(joined) {
                                continue;
                            }
                            let (unloaded, drive) = composed.moments(kind, on_set, input)?;
                            Candidate { elmore: unloaded + load * drive, on_set, drive: Some(drive), timed: None }
                        }
                        None => {
                            let (elmore, timed) = self.eliminated(edge, on_set, input, load, &mut here, meter)?;
                            Candidate { elmore, on_set, drive: None, timed: Some(timed) }
                        }
                    };
                    let replace = match &mut best[slot] {
                        None => true,
                        Some(held) => Self::slower(self.stage, self.plan, &candidate, held, kind, &mut resistances),
                    };
                    if replace {
                        best[slot] = Some(candidate);
                    }
                }
                // The most resistance this on-set has, for the on-sets that hold it.
                if let Some(at) = drives.get_mut(on_set as usize) {
                    *at = bound.map_or(least.unwrap_or(f64::INFINITY), |(_, drive)| drive);
                }
            }
        }
        let mut found = Vec::with_capacity(inputs.len());
        for (candidate, &(input, load)) in best.into_iter().zip(inputs) {
            let Some(candidate) = candidate else {
                found.push(None);
                continue;
            };
            // The vector kept is timed by elimination, as the rule states it.
            let (elmore, timed) = match candidate.timed {
                Some(timed) => (candidate.elmore, timed),
                None => self.eliminated(edge, candidate.on_set, input, load, &mut None, meter)?,
            };
            let Timed { at_final, unloaded, tree, component: Component { nodes, devices, rail }, after } = timed;
            found.push(Some(Transition {
                input,
                edge,
                after,
                shape: Conducting { nodes, at_final, devices, rail },
                elmore,
                unloaded,
                tree,
                search: EVERY_VECTOR,
            }));
        }
        Ok(found)
    }

    /// The transition of `input` into `on_set` on `edge`, timed by elimination: its component
    /// found once per on-set (kept in `here`), each conducting network solved once (kept by its
    /// key).
    fn eliminated(
        &mut self,
        edge: Edge,
        on_set: u64,
        input: usize,
        load: f64,
        here: &mut Option<OnSet>,
        meter: &Meter,
    ) -> Result<(f64, Timed), TransitionError> {
        let circuit = self.circuit;
        let found = match here {
            Some(found) => found,
            None => {
                let after = after_of(on_set, circuit.input_count, edge.network());
                let component = component_in(circuit, edge, &after, &mut self.scratch)?;
                let on: Box<[u64]> = self.scratch.found().into();
                let adjacency = Adjacency::of(circuit, &component, &mut self.scratch);
                let next = self.components.len();
                let number = *self.components.entry((component.rail, on)).or_insert(next);
                here.insert(OnSet { after, component, adjacency, number, solved: None })
            }
        };
        let at_final = found.adjacency.held(input, &mut self.scratch)?;
        let key = NetworkKey { component: found.number, at_final: bits_of(&at_final) };
        let moments = match self.solved.get(&key) {
            Some(moments) => *moments,
            None => {
                meter.charge(circuit.devices.len() as u128, Work::Delays)?;
                let solved = match &mut found.solved {
                    Some(solved) => solved,
                    None => {
                        found.solved.insert(Solved::of_in(circuit, &found.component, self.widths, &mut self.scratch)?)
                    }
                };
                let moments = solved.moments(&at_final);
                self.solved.insert(key, moments);
                moments
            }
        };
        let (elmore, unloaded, tree) = moments.with_load(load);
        Ok((elmore, Timed { at_final, unloaded, tree, component: found.component.clone(), after: found.after.clone() }))
    }

    /// Whether `candidate` (a later vector) beats `held`: a slower delay, or a tie and a larger
    /// resistance after the switch (each on-set's worked out once, kept in `resistances`).
    fn slower(
        stage: &SizedStage,
        plan: &Plan,
        candidate: &Candidate,
        held: &Candidate,
        kind: NetworkKind,
        resistances: &mut HashMap<u64, f64, BuildHasherDefault<WordHasher>>,
    ) -> bool {
        let scale = candidate.elmore.abs().max(held.elmore.abs());
        if candidate.elmore > held.elmore + TIE * scale {
            return true;
        }
        if candidate.elmore < held.elmore - TIE * scale {
            return false;
        }
        let mut resistance = |on_set: u64| {
            *resistances.entry(on_set).or_insert_with(|| {
                let sized = &stage.networks[kind];
                let resistance = plan.resistances(kind, &sized.widths);
                let on = sized.network.on_devices(&after_of(on_set, stage.function.inputs.len(), kind));
                paths::effective_resistance(&sized.network, &resistance, &on).unwrap_or(f64::INFINITY)
            })
        };
        let candidate_r = candidate.drive.unwrap_or_else(|| resistance(candidate.on_set));
        let held_r = held.drive.unwrap_or_else(|| resistance(held.on_set));
        candidate_r > held_r + TIE * candidate_r.max(held_r)
    }
}

/// The input values after the switch at `on_set` in `kind`'s network: input `i` at its on-level
/// where bit `i` is set.
fn after_of(on_set: u64, input_count: usize, kind: NetworkKind) -> Vec<bool> {
    (0..input_count).map(|i| kind.conducts(true) == (on_set >> i & 1 == 1)).collect()
}

/// A transition the rule holds while it looks at the others.
struct Candidate {
    elmore: f64,
    /// Where composed over the trees: the resistance of what conducts after the switch (the
    /// resistance a load sees, the same sum as [`paths::effective_resistance`]'s in another order).
    drive: Option<f64>,
    on_set: u64,
    /// Where it was timed by elimination, the rest of its transition.
    timed: Option<Timed>,
}

/// A transition's network and figures besides its delay, as elimination gives them.
struct Timed {
    at_final: Vec<bool>,
    unloaded: f64,
    tree: bool,
    component: Component,
    after: Vec<bool>,
}

/// Word `word` of the on-sets with `input` flipped, aligned with `conducts[word]`.
fn flip(conducts: &[u64], word: usize, input: usize) -> u64 {
    if input < 6 {
        let shift = 1 << input;
        let mask = vector_word(0, input);
        ((conducts[word] & mask) >> shift) | ((conducts[word] & !mask) << shift)
    } else {
        conducts[word ^ (1 << (input - 6))]
    }
}

/// Every input vector (the values after the switch) under which `input`, going to its on-level,
/// turns `kind`'s network from off to on: the transitions of that input on that edge. `None` past
/// [`EXACT_WORST_MAX_INPUTS`] inputs.
pub fn switching_vectors(stage: &SizedStage, input: usize, kind: NetworkKind) -> Option<Vec<Vec<bool>>> {
    let count = stage.function.inputs.len();
    if count > EXACT_WORST_MAX_INPUTS {
        return None;
    }
    let network = &stage.networks[kind].network;
    let conducts = |values: &[bool]| network.conducts(&network.on_devices(values));
    let on_level = kind.conducts(true);
    let mut vectors = Vec::new();
    for bits in 0..(1u64 << count) {
        let mut values: Vec<bool> = (0..count).map(|i| bits >> i & 1 == 1).collect();
        if values[input] != on_level || !conducts(&values) {
            continue;
        }
        values[input] = !on_level;
        if conducts(&values) {
            continue;
        }
        values[input] = on_level;
        vectors.push(values);
    }
    Some(vectors)
}

/// The weakest path through one of `input`'s devices in `kind`'s network that can conduct alone,
/// with the vector that makes it the only conducting path (the input itself at its on-level).
/// `None` where no such path exists (repeated inputs can block every one). Its work is counted on
/// `meter`: each path found or tried is as many units as the network has devices, a listing as
/// many as the partial paths it builds.
pub fn lone_path(
    stage: &SizedStage,
    plan: &Plan,
    input: usize,
    kind: NetworkKind,
    meter: &Meter,
) -> Result<Option<(paths::Path, Vec<bool>)>, OverBudget> {
    let sized = &stage.networks[kind];
    let network = &sized.network;
    let resistance = plan.resistances(kind, &sized.widths);
    let input_of = &network.inputs;
    let input_count = stage.function.inputs.len();
    let occurrences = input_of.len() as u128;
    let mut best: Option<(paths::Path, Vec<bool>)> = None;
    // Repeated inputs can block the weakest path through a device; then the weakest few paths of
    // the network are searched (listed once, a bounded number).
    let mut listing: Option<Vec<paths::Path>> = None;
    for device in (0..input_of.len()).filter(|&d| input_of[d] == input) {
        meter.charge(2 * occurrences, Work::Delays)?;
        let mut candidates = match paths::weakest_through(network, &resistance, device) {
            Some(path) => vec![path],
            None => continue,
        };
        if paths::sensitize(network, &candidates[0].devices, input_count).is_none() {
            if listing.is_none() {
                let limit = (paths::MAX_LISTING_WORK / paths::listing_work(network, 1).max(1)) as usize;
                let limit = limit.clamp(1, paths::MAX_LISTED_PATHS);
                // The listing builds at most its paths per series member, and there may be fewer.
                let listed = usize::try_from(paths::count(network)).map_or(limit, |count| count.min(limit));
                meter.charge(paths::listing_work(network, listed), Work::Delays)?;
                listing = Some(paths::list(network, &resistance, limit));
            }
            let listed = listing.as_deref().unwrap_or_default();
            candidates = listed.iter().filter(|p| p.devices.contains(&device)).cloned().collect();
        }
        for path in candidates {
            meter.charge(occurrences, Work::Delays)?;
            if let Some(values) = paths::sensitize(network, &path.devices, input_count) {
                if best.as_ref().is_none_or(|(b, _)| path.resistance > b.resistance + 1e-12) {
                    best = Some((path, values));
                }
                break;
            }
        }
    }
    Ok(best)
}

#[cfg(test)]
pub(super) mod tests {
    use super::*;
    use crate::sizing::{Method, Plan};

    fn sized(text: &str) -> crate::cell::SizedCell {
        crate::size_text(text, &Plan::new(Method::LongestPath, 2.0, 1.0, None)).unwrap()
    }

    #[test]
    fn the_lone_path_sets_the_side_inputs() {
        // AOI21 pull-up: input c's weakest path is c with a or b (both 1 R); a and b off-side at 1
        let cell = sized("aoi21");
        let plan = &cell.plan;
        let (path, vector) =
            lone_path(cell.stage(), plan, 2, NetworkKind::PullUp, &Meter::unlimited()).unwrap().unwrap();
        assert!((path.resistance - 1.0).abs() < 1e-12);
        assert_eq!(vector, [false, true, false]);
        let (path, vector) =
            lone_path(cell.stage(), plan, 2, NetworkKind::PullDown, &Meter::unlimited()).unwrap().unwrap();
        assert_eq!(path.devices, vec![2]);
        assert_eq!(vector, [false, false, true]);
    }

    #[test]
    fn switching_vectors_are_the_transitions_of_an_input() {
        // !(a & (a | b)) is !a: a switches the pull-down whatever b is, b never does (Boolean
        // algebra, absorption; common practice, no source).
        let cell = sized("!(a & (a | b))");
        let stage = cell.stage();
        let a = switching_vectors(stage, 0, NetworkKind::PullDown).unwrap();
        assert_eq!(a, vec![vec![true, false], vec![true, true]]);
        assert!(switching_vectors(stage, 1, NetworkKind::PullDown).unwrap().is_empty());
        assert!(switching_vectors(stage, 1, NetworkKind::PullUp).unwrap().is_empty());
        assert_eq!(switching_vectors(stage, 0, NetworkKind::PullUp).unwrap().len(), 2);
    }

    #[test]
    fn one_pass_over_the_vectors_gives_what_each_input_gets_alone() {
        // The rule above, input by input on a fresh rule, and each transition it finds timed again
        // from scratch (its conducting network built and solved alone, `time_vector`): the same
        // vectors, networks and delays to the bit, whatever the loads.
        use crate::timing::circuit::flat_widths;
        for text in [
            "!(a & b | b & c | a & c)",
            "!((a | b) & (a | c) & (b | d | a))",
            "aoi221",
            "!(a & (b | c) & (c | d) | d & a)",
        ] {
            let cell = sized(text);
            let (stage, plan) = (cell.stage(), &cell.plan);
            let circuit = Circuit::new(stage, plan, 0.75);
            let widths = flat_widths(stage);
            let meter = Meter::unlimited();
            let inputs: Vec<(usize, f64)> =
                (0..stage.function.inputs.len()).map(|i| (i, 1.0 + i as f64 / 3.0)).collect();
            let mut together = Rule::new(stage, plan, &circuit, &widths, &meter).unwrap();
            assert!(together.composed.is_some(), "{text}: not composed");
            let mut eliminating = Rule::new(stage, plan, &circuit, &widths, &meter).unwrap().by_elimination();
            for edge in Edge::BOTH {
                let found = together.worst_of(edge, &inputs, &meter).unwrap();
                // Vectors compared by their composed delays or by elimination: the same transitions.
                let eliminated = eliminating.worst_of(edge, &inputs, &meter).unwrap();
                for (found, eliminated) in found.iter().zip(&eliminated) {
                    let key = |t: &Option<Transition>| {
                        t.as_ref().map(|t| (t.after.clone(), t.shape.clone(), t.elmore.to_bits()))
                    };
                    assert_eq!(key(found), key(eliminated), "{text} {edge:?}");
                }
                for (&(input, load), found) in inputs.iter().zip(found) {
                    let mut alone = Rule::new(stage, plan, &circuit, &widths, &meter).unwrap();
                    let single = alone.worst(input, edge, load, &meter).unwrap();
                    assert_eq!(found.is_some(), single.is_some(), "{text}: {input} {edge:?}");
                    let (Some(found), Some(single)) = (found, single) else { continue };
                    assert_eq!((&found.after, &found.shape, found.tree), (&single.after, &single.shape, single.tree));
                    assert_eq!(found.elmore.to_bits(), single.elmore.to_bits(), "{text}: {input} {edge:?}");
                    let scratch =
                        time_vector(&circuit, &widths, input, edge, found.after.clone(), load, EVERY_VECTOR).unwrap();
                    assert_eq!(scratch.shape, found.shape);
                    assert_eq!(
                        (scratch.elmore.to_bits(), scratch.unloaded.to_bits()),
                        (found.elmore.to_bits(), found.unloaded.to_bits())
                    );
                    assert_eq!(scratch.tree, found.tree, "{text}: {input} {edge:?}");
                }
            }
        }
    }

    /// A random series-parallel function of up to five inputs, repeated freely, as text.
    pub(in crate::timing) fn gate_text() -> impl proptest::strategy::Strategy<Value = String> {
        use proptest::prelude::*;
        let leaf = (0usize..5).prop_map(|i| ["a", "b", "c", "d", "e"][i].to_string());
        let tree = leaf.prop_recursive(3, 16, 3, |inner| {
            (prop::collection::vec(inner, 2..4), any::<bool>())
                .prop_map(|(members, and)| format!("({})", members.join(if and { " & " } else { " | " })))
        });
        tree.prop_map(|tree| format!("!{tree}"))
    }

    proptest::proptest! {
        /// The one pass against the rule written out plainly: every switching vector of each input
        /// and edge (`switching_vectors`, which walks the networks itself), in the order of their
        /// on-sets, each timed from scratch (`time_vector`: the component and the nodes at their
        /// final level searched over the whole circuit, the system solved alone), the slowest kept,
        /// a tie within 1e-9 to the larger resistance after the switch, then to the earlier vector
        /// (the rule this module states). The same vectors, networks and delays to the bit (the
        /// one pass compares vectors by delays composed over the trees, within a relative 1e-12 of
        /// these, and times the kept ones as these are timed).
        #[test]
        fn the_one_pass_is_the_rule_written_out(
            text in gate_text(),
            diffusion in 0.0f64..2.0,
            loads in proptest::collection::vec(0.0f64..8.0, 5),
        ) {
            use crate::timing::circuit::flat_widths;
            let cell = sized(&text);
            let (stage, plan) = (cell.stage(), &cell.plan);
            let circuit = Circuit::new(stage, plan, diffusion);
            let widths = flat_widths(stage);
            let meter = Meter::unlimited();
            let count = stage.function.inputs.len();
            let inputs: Vec<(usize, f64)> = (0..count).map(|i| (i, loads[i])).collect();
            let mut rule = Rule::new(stage, plan, &circuit, &widths, &meter).unwrap();
            for edge in Edge::BOTH {
                let kind = edge.network();
                let sized = &stage.networks[kind];
                let resistance = plan.resistances(kind, &sized.widths);
                let found = rule.worst_of(edge, &inputs, &meter).unwrap();
                for (&(input, load), found) in inputs.iter().zip(found) {
                    let mut vectors = switching_vectors(stage, input, kind).unwrap();
                    let on_set = |values: &Vec<bool>| {
                        values.iter().enumerate().filter(|&(_, &v)| v == kind.conducts(true)).map(|(i, _)| 1u64 << i).sum::<u64>()
                    };
                    vectors.sort_by_key(on_set);
                    let mut best: Option<(Transition, f64)> = None;
                    for after in vectors {
                        let on = sized.network.on_devices(&after);
                        let r = paths::effective_resistance(&sized.network, &resistance, &on).unwrap_or(f64::INFINITY);
                        let timed = time_vector(&circuit, &widths, input, edge, after, load, EVERY_VECTOR).unwrap();
                        let replace = match &best {
                            None => true,
                            Some((held, held_r)) => {
                                let scale = timed.elmore.abs().max(held.elmore.abs());
                                if timed.elmore > held.elmore + TIE * scale {
                                    true
                                } else if timed.elmore < held.elmore - TIE * scale {
                                    false
                                } else {
                                    r > held_r + TIE * r.max(*held_r)
                                }
                            }
                        };
                        if replace {
                            best = Some((timed, r));
                        }
                    }
                    proptest::prop_assert_eq!(found.is_some(), best.is_some(), "{} {} {:?}", text, input, edge);
                    let (Some(found), Some((plain, _))) = (found, best) else { continue };
                    proptest::prop_assert_eq!(&found.after, &plain.after, "{} {} {:?}", text, input, edge);
                    proptest::prop_assert_eq!(&found.shape, &plain.shape);
                    proptest::prop_assert_eq!(found.elmore.to_bits(), plain.elmore.to_bits());
                    proptest::prop_assert_eq!(found.unloaded.to_bits(), plain.unloaded.to_bits());
                    proptest::prop_assert_eq!(found.tree, plain.tree);
                }
            }
        }
    }
}
