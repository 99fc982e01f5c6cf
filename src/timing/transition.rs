//! An input's worst transition on an output edge: the input vector it switches under, and that
//! transition's conducting network and Elmore delay. One rule, used by the delays, the simulation
//! deck and the sizing strategies that time a cell.
//!
//! The rule: the weakest path through the input that can conduct alone, with the vector that makes
//! it the only conducting path; where repeated inputs leave no such path, the slowest over every
//! vector where the input switches the output (up to [`EXACT_WORST_MAX_INPUTS`] inputs).

use crate::budget::{Meter, OverBudget, Work};
use crate::cell::SizedStage;
use crate::network::NetworkKind;
use crate::paths::{self, EXACT_WORST_MAX_INPUTS};
use crate::sizing::plan::Plan;
use crate::timing::circuit::{Circuit, Conducting, conducting, elmore};
use crate::timing::error::NetworkFault;
use crate::timing::report::Edge;

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
    /// How the vector was found: `"weakest path"` or `"every vector"`.
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

/// The worst transition of `input` on `edge` (the rule above), timed with `load` C on the output;
/// `None` where the input never switches the output on that edge (or, past
/// [`EXACT_WORST_MAX_INPUTS`] inputs, no path through it conducts alone).
#[allow(clippy::too_many_arguments)]
pub fn worst(
    stage: &SizedStage,
    plan: &Plan,
    circuit: &Circuit,
    widths: &[f64],
    input: usize,
    edge: Edge,
    load: f64,
    meter: &Meter,
) -> Result<Option<Transition>, TransitionError> {
    // Each transition visits every device (its conducting network, then the solve).
    let devices = circuit.devices.len() as u128;
    let measure = |after: Vec<bool>, search| -> Result<Transition, TransitionError> {
        meter.charge(devices, Work::Delays)?;
        Ok(time_vector(circuit, widths, input, edge, after, load, search)?)
    };
    if let Some((_, after)) = lone_path(stage, plan, input, edge.network(), meter)? {
        return measure(after, "weakest path").map(Some);
    }
    if circuit.input_count > EXACT_WORST_MAX_INPUTS {
        return Ok(None);
    }
    // Every vector of the inputs is made, and the half with the input at its on-level is tried on
    // the network: its devices' states, then a walk that stops at the first branch that conducts
    // (or member that does not).
    let vectors = 1u128 << circuit.input_count;
    meter.charge(
        vectors * circuit.input_count as u128 + vectors / 2 * circuit.devices.len() as u128 / 2,
        Work::Delays,
    )?;
    let Some(vectors) = switching_vectors(stage, input, edge.network()) else { return Ok(None) };
    let mut worst: Option<Transition> = None;
    for after in vectors {
        let measured = measure(after, "every vector")?;
        if worst.as_ref().is_none_or(|w| measured.elmore > w.elmore) {
            worst = Some(measured);
        }
    }
    Ok(worst)
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
