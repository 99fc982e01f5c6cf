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
//! each new conducting network, the same again for its solve). Vectors that give the same
//! conducting network and starting charges are solved once (keyed and cached). Past the bound,
//! the stated fallback: the weakest path through the input that can conduct alone, with the vector
//! that makes it the only conducting path (labelled `"weakest path"`); none where repeated inputs
//! block every such path.

use std::collections::HashMap;

use crate::budget::{Meter, OverBudget, Work};
use crate::cell::SizedStage;
use crate::network::{NetworkKind, Sides};
use crate::paths::{self, EXACT_WORST_MAX_INPUTS, conduction_by_on_set, vector_word};
use crate::sizing::plan::Plan;
use crate::timing::circuit::{Circuit, Conducting, Moments, conducting, elmore, moments};
use crate::timing::error::NetworkFault;
use crate::timing::report::Edge;

/// How the rule found a transition.
pub const EVERY_VECTOR: &str = "every vector";
/// The fallback past [`EXACT_WORST_MAX_INPUTS`] inputs.
pub const WEAKEST_PATH: &str = "weakest path";

/// Two delays (or resistances) within this fraction of the larger are a tie.
const TIE: f64 = 1e-9;

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
    /// Every conducting network solved so far.
    solved: HashMap<Conducting, Moments>,
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
        Ok(Rule { stage, plan, circuit, widths, conduction, solved: HashMap::new() })
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
        let kind = edge.network();
        let Some(conduction) = &self.conduction else {
            let Some((_, after)) = lone_path(self.stage, self.plan, input, kind, meter)? else { return Ok(None) };
            meter.charge(self.circuit.devices.len() as u128, Work::Delays)?;
            return Ok(Some(time_vector(self.circuit, self.widths, input, edge, after, load, WEAKEST_PATH)?));
        };
        let conducts = &conduction[kind];
        let inputs = self.stage.function.inputs.len();
        let devices = self.circuit.devices.len() as u128;
        meter.charge(conducts.len() as u128, Work::Delays)?;
        let mut best: Option<Candidate> = None;
        for (word, &bits) in conducts.iter().enumerate() {
            // On-sets with the input on where the network conducts, and would not with it off.
            let flipped = flip(conducts, word, input);
            let mut switching = bits & vector_word(word as u64, input) & !flipped;
            while switching != 0 {
                let on_set = word as u64 * 64 + u64::from(switching.trailing_zeros());
                switching &= switching - 1;
                meter.charge(devices, Work::Delays)?;
                let after: Vec<bool> = (0..inputs).map(|i| kind.conducts(true) == (on_set >> i & 1 == 1)).collect();
                let shape = conducting(self.circuit, edge, input, &after)?;
                let found = match self.solved.get(&shape) {
                    Some(found) => *found,
                    None => {
                        meter.charge(devices, Work::Delays)?;
                        let found = moments(self.circuit, &shape, self.widths)?;
                        self.solved.insert(shape.clone(), found);
                        found
                    }
                };
                let (elmore, unloaded, tree) = found.with_load(load);
                let candidate = Candidate { elmore, resistance: None, after, shape, unloaded, tree };
                best = Some(match best {
                    None => candidate,
                    Some(mut held) => {
                        let mut candidate = candidate;
                        if self.slower(&mut candidate, &mut held, kind) { candidate } else { held }
                    }
                });
            }
        }
        Ok(best.map(|b| Transition {
            input,
            edge,
            after: b.after,
            shape: b.shape,
            elmore: b.elmore,
            unloaded: b.unloaded,
            tree: b.tree,
            search: EVERY_VECTOR,
        }))
    }

    /// Whether `candidate` (a later vector) beats `held`: a slower delay, or a tie and a larger
    /// resistance after the switch.
    fn slower(&self, candidate: &mut Candidate, held: &mut Candidate, kind: NetworkKind) -> bool {
        let scale = candidate.elmore.abs().max(held.elmore.abs());
        if candidate.elmore > held.elmore + TIE * scale {
            return true;
        }
        if candidate.elmore < held.elmore - TIE * scale {
            return false;
        }
        let candidate_r = self.resistance(candidate, kind);
        let held_r = self.resistance(held, kind);
        candidate_r > held_r + TIE * candidate_r.max(held_r)
    }

    /// The resistance of what conducts in `kind`'s network after the switch (sizing widths).
    fn resistance(&self, candidate: &mut Candidate, kind: NetworkKind) -> f64 {
        *candidate.resistance.get_or_insert_with(|| {
            let sized = &self.stage.networks[kind];
            let resistance = self.plan.resistances(kind, &sized.widths);
            let on = sized.network.on_devices(&candidate.after);
            paths::effective_resistance(&sized.network, &resistance, &on).unwrap_or(f64::INFINITY)
        })
    }
}

/// A transition the rule holds while it looks at the others.
struct Candidate {
    elmore: f64,
    resistance: Option<f64>,
    after: Vec<bool>,
    shape: Conducting,
    unloaded: f64,
    tree: bool,
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
mod tests {
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
}
