//! The delays of a sized stage: every input's worst transition on both output edges (the one rule
//! of [`crate::timing::transition`]), with the reference inverter's delay at the same load and the
//! logical-effort view beside each.

use crate::budget::Meter;
use crate::cell::{SizedStage, device_name};
use crate::figures;
use crate::paths::{EXACT_WORST_MAX_INPUTS, Vector};
use crate::sizing::plan::{Conditions, Load, Plan};
use crate::timing::circuit::{Circuit, OUTPUT, conducting_devices, flat_widths, reference_delay, tau};
use crate::timing::error::TimingError;
use crate::timing::report::{Delay, DelayModel, Edge, EffortView, ProcessUnits, Timing, Unavailable};
use crate::timing::transition::{Rule, Transition, TransitionError};

/// Most input occurrences (transistors per network) of a cell that is timed: the report is
/// quadratic in it (every input's vector and nodes).
pub const MAX_TIMED_OCCURRENCES: usize = 1000;

/// The load on the output when each input is timed, in C: with a fan-out H, H copies of that
/// input's own capacitance in this stage as sized (the textbook electrical effort h = C_out / C_in);
/// a capacitance in C as given; one in fF over the process's unit capacitance C.
pub fn input_loads(stage: &SizedStage, plan: &Plan, load: Load) -> Result<Vec<f64>, TimingError> {
    let inputs = stage.function.inputs.len();
    Ok(match load {
        Load::Fanout(h) => figures::input_capacitance(stage).into_iter().map(|c| h * c).collect(),
        Load::Units(c) => vec![c; inputs],
        Load::Femtofarads(load_ff) => vec![units_of(plan, load_ff)?; inputs],
    })
}

/// What every delay of a cell was timed under: the load as given (and in C), the diffusion ratio,
/// tau for each edge and the process's units; one-stage and several-stage timing alike.
pub fn delay_model(
    plan: &Plan,
    conditions: &Conditions,
    units: Option<ProcessUnits>,
) -> Result<DelayModel, TimingError> {
    let (fanout, load_c, load_ff) = match conditions.load {
        Load::Fanout(h) => (Some(h), None, None),
        Load::Units(c) => (None, Some(c), None),
        Load::Femtofarads(ff) => (None, Some(units_of(plan, ff)?), Some(ff)),
    };
    Ok(DelayModel {
        diffusion_ratio: conditions.diffusion_ratio,
        fanout,
        load_c,
        load_ff,
        tau_fall_rc: tau(plan, Edge::Fall),
        tau_rise_rc: tau(plan, Edge::Rise),
        process: units,
    })
}

/// A capacitance in fF in units of C, the process's unit gate capacitance.
pub fn units_of(plan: &Plan, load_ff: f64) -> Result<f64, TimingError> {
    let c = load_ff / plan.process.unit_capacitance_ff();
    if c.is_finite() { Ok(c) } else { Err(TimingError::NoUnitCapacitance { load_ff }) }
}

/// The error of a transition of `input` on `edge`.
pub fn transition_error(stage: &SizedStage, input: usize, edge: Edge, error: TransitionError) -> TimingError {
    match error {
        TransitionError::Network(why) => {
            TimingError::Network { input: stage.function.inputs[input].clone(), edge: edge.name(), why }
        }
        TransitionError::OverBudget(over) => TimingError::OverBudget(over),
    }
}

/// One input's worst transition on one edge: the input, the edge, its load in C and the transition
/// (`None` where the input has none on that edge).
pub type Found = (usize, Edge, f64, Option<Transition>);

/// Every input's worst transition on both edges (input by input, fall then rise) under
/// `conditions`, with its load in C; `None` where the input has none on that edge. The circuit
/// they were timed in comes with them.
pub fn worst_transitions(
    stage: &SizedStage,
    plan: &Plan,
    conditions: &Conditions,
    meter: &Meter,
) -> Result<(Circuit, Vec<Found>), TimingError> {
    let occurrences = stage.function.literals.len();
    if occurrences > MAX_TIMED_OCCURRENCES {
        return Err(TimingError::TooLargeToTime { count: occurrences, limit: MAX_TIMED_OCCURRENCES });
    }
    let circuit = Circuit::new(stage, plan, conditions.diffusion_ratio);
    let widths = flat_widths(stage);
    let loads = input_loads(stage, plan, conditions.load)?;
    let found = every_worst(stage, plan, &circuit, &widths, &loads, meter)?;
    Ok((circuit, found))
}

/// Every input's worst transition on both edges, input by input, fall then rise: each edge's found
/// in one pass over the vectors ([`Rule::worst_of`]). A network fault (an internal inconsistency)
/// is looked for again input by input, so that its error names the input and edge the rule meets
/// it at.
fn every_worst(
    stage: &SizedStage,
    plan: &Plan,
    circuit: &Circuit,
    widths: &[f64],
    loads: &[f64],
    meter: &Meter,
) -> Result<Vec<Found>, TimingError> {
    let inputs: Vec<(usize, f64)> = loads.iter().copied().enumerate().collect();
    let mut rule = Rule::new(stage, plan, circuit, widths, meter)?;
    let mut scan = |edge: Edge| match rule.worst_of(edge, &inputs, meter) {
        Ok(found) => Ok(Some(found)),
        Err(TransitionError::OverBudget(over)) => Err(TimingError::OverBudget(over)),
        Err(TransitionError::Network(_)) => Ok(None),
    };
    let Some(fall) = scan(Edge::Fall)? else { return one_by_one(stage, plan, circuit, widths, loads) };
    let Some(rise) = scan(Edge::Rise)? else { return one_by_one(stage, plan, circuit, widths, loads) };
    let mut found = Vec::with_capacity(2 * loads.len());
    for ((input, &load), (fall, rise)) in loads.iter().enumerate().zip(fall.into_iter().zip(rise)) {
        found.push((input, Edge::Fall, load, fall));
        found.push((input, Edge::Rise, load, rise));
    }
    Ok(found)
}

/// The rule input by input, on a meter of its own: where a network fault is met, the error of the
/// first input and edge that meets it.
fn one_by_one(
    stage: &SizedStage,
    plan: &Plan,
    circuit: &Circuit,
    widths: &[f64],
    loads: &[f64],
) -> Result<Vec<Found>, TimingError> {
    let meter = Meter::unlimited();
    let mut rule = Rule::new(stage, plan, circuit, widths, &meter)?;
    let mut found = Vec::with_capacity(2 * loads.len());
    for (input, &load) in loads.iter().enumerate() {
        for edge in Edge::BOTH {
            let transition =
                rule.worst(input, edge, load, &meter).map_err(|error| transition_error(stage, input, edge, error))?;
            found.push((input, edge, load, transition));
        }
    }
    Ok(found)
}

/// Delays of every input of `stage` on both edges under `conditions`, the model and the
/// logical-effort view, their work counted on `meter`; with `units`, in picoseconds too.
pub fn time_stage(
    stage: &SizedStage,
    plan: &Plan,
    conditions: &Conditions,
    units: Option<ProcessUnits>,
    meter: &Meter,
) -> Result<Timing, TimingError> {
    let function = &stage.function;
    let (circuit, found) = worst_transitions(stage, plan, conditions, meter)?;
    let widths = flat_widths(stage);
    let reference_capacitance = plan.reference_capacitance();
    let capacitance = figures::input_capacitance(stage);
    let p_output_node = circuit.node_capacitance(OUTPUT, &widths) / reference_capacitance;
    let mut delays = Vec::new();
    let mut unavailable = Vec::new();
    for (input, edge, load, measured) in found {
        let name = &function.inputs[input];
        let Some(measured) = measured else {
            unavailable.push(Unavailable {
                input: name.clone(),
                edge,
                why: if circuit.input_count > EXACT_WORST_MAX_INPUTS {
                    format!(
                        "no path through it conducts alone, and {EXACT_WORST_MAX_INPUTS} inputs is the most searched"
                    )
                } else {
                    "it never switches the output on this edge".to_string()
                },
            });
            continue;
        };
        let g = capacitance[input] / reference_capacitance;
        let h = if capacitance[input] > 0.0 { load / capacitance[input] } else { 0.0 };
        delays.push(delay(stage, plan, conditions, &circuit, &measured, units.as_ref(), load, g, h, p_output_node));
    }
    Ok(Timing { delay_model: delay_model(plan, conditions, units)?, delays, unavailable_delays: unavailable })
}

/// The report of one timed transition.
#[allow(clippy::too_many_arguments)]
fn delay(
    stage: &SizedStage,
    plan: &Plan,
    conditions: &Conditions,
    circuit: &Circuit,
    measured: &Transition,
    units: Option<&ProcessUnits>,
    load: f64,
    g: f64,
    h: f64,
    p_output_node: f64,
) -> Delay {
    let edge = measured.edge;
    let reference = reference_delay(plan, conditions.diffusion_ratio, edge, load);
    let p_elmore = measured.unloaded / tau(plan, edge);
    let kind = edge.network();
    let path = conducting_devices(circuit, &measured.shape, kind);
    let (mut internal_nodes, mut nodes_at_final_level) = (Vec::new(), Vec::new());
    for (&node, &at_final) in measured.shape.nodes.iter().zip(&measured.shape.at_final).skip(1) {
        let name = circuit.names[node].clone();
        if at_final { nodes_at_final_level.push(name) } else { internal_nodes.push(name) }
    }
    Delay {
        input: stage.function.inputs[measured.input].clone(),
        edge,
        elmore_rc: measured.elmore,
        elmore_ps: units.map(|u| measured.elmore * u.rc_ps),
        t50_estimate_ps: units.map(|u| std::f64::consts::LN_2 * measured.elmore * u.rc_ps),
        load_c: load,
        reference_elmore_rc: reference,
        delay_ratio: measured.elmore / reference,
        path: path.iter().map(|&d| device_name(kind, circuit.devices[d].index)).collect(),
        vector: Vector::new(&stage.function.inputs, &measured.after),
        internal_nodes,
        nodes_at_final_level,
        tree: measured.tree,
        search: measured.search,
        logical_effort_view: EffortView {
            g,
            h,
            p_output_node,
            p_elmore,
            d_output_node: g * h + p_output_node,
            d_elmore: g * h + p_elmore,
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::logic::{StageRole, read_cell};
    use crate::network::{Network, Sides};
    use crate::process::Process;
    use crate::sizing::{Method, build};

    #[test]
    fn a_shared_series_diffusion_counts_as_wide_as_the_wider_device() {
        // NAND2 with a tapered pull-down, MN1 (a) W/L 3 and MN2 (b) W/L 1, PMOS 2 and 2, diffusion
        // ratio 1, no load. The default order puts the narrower MN2 at the output (y - MN2 - n1 - MN1 -
        // vss). Input a rising with b on: y (drains 1 + 2 + 2 = 5 C) and n1 (one region shared by MN2
        // and MN1, as wide as the wider: 3 C) discharge through MN1 (R/3) and, for y, MN2 (R):
        // (1 + 1/3) 5 + (1/3) 3 = 7.667 RC (the Elmore tree sum; the rule for the shared region is
        // common practice, no source; half of each device would give 7.333).
        let plan = Plan::new(Method::LongestPath, 2.0, 1.0, None);
        let logic = read_cell("nand2", &[]).unwrap();
        let function = &logic.stages[0].function;
        let widths = Sides::new(vec![3.0, 1.0], vec![2.0, 2.0]);
        let networks = Network::pair(function).map(|kind, network| network.ordered(&widths[kind], None));
        let stage = build::stage(function, StageRole::Logic, networks, widths, &plan).unwrap();
        let terminals: Vec<(&str, &str)> =
            stage.networks.pull_down.terminals.iter().map(|t| (t.drain.as_str(), t.source.as_str())).collect();
        assert_eq!(terminals, [("n1", "vss"), ("y", "n1")]);
        let conditions = Conditions { load: Load::Units(0.0), diffusion_ratio: 1.0 };
        let timing = time_stage(&stage, &plan, &conditions, None, &Meter::unlimited()).unwrap();
        let fall = timing.delays.iter().find(|d| d.input == "a" && d.edge == Edge::Fall).unwrap();
        assert_eq!(fall.internal_nodes, ["n1"]);
        assert!((fall.elmore_rc - (5.0 * 4.0 / 3.0 + 1.0)).abs() < 1e-9, "{}", fall.elmore_rc);
    }

    #[test]
    fn the_deck_and_the_delay_stage_see_the_same_diffusion() {
        // One rule for both (NodeDiffusion): on a gate with tapered stacks (the elmore method, NAND3 and
        // AOI21 with a load), each node's deck capacitor over the unit gate capacitance is the delay
        // stage's node capacitance at the process's diffusion ratio, to the drawing grid.
        let process = Process::default();
        let unit_um = process.unit_width_nm / 1000.0;
        let ratio = process.diffusion_cap_ff_per_um / process.gate_cap_ff_per_um;
        for text in ["nand3", "aoi21"] {
            let plan = Plan {
                conditions: Conditions { load: Load::Units(50.0), diffusion_ratio: ratio },
                ..Plan::new(Method::ELMORE, 2.0, 1.0, None)
            };
            let cell = crate::size_text(text, &plan).unwrap();
            let circuit = Circuit::new(cell.stage(), &plan, ratio);
            let widths = flat_widths(cell.stage());
            let gate = crate::figures::CellFigures::of(&cell);
            let devices: Vec<(&str, &str, f64)> =
                gate.transistors.iter().map(|t| (t.drain.as_str(), t.source.as_str(), t.drawn_width_um)).collect();
            let deck = crate::output::deck::node_diffusion_um(&devices, &gate.output);
            assert!(deck.iter().any(|(name, _)| name != &gate.output), "{text}: no internal node");
            for (name, width_um) in deck {
                let node = circuit.names.iter().position(|n| *n == name).unwrap();
                let deck_c = width_um * process.diffusion_cap_ff_per_um / (process.gate_cap_ff_per_um * unit_um);
                let stage_c = circuit.node_capacitance(node, &widths);
                assert!((deck_c / stage_c - 1.0).abs() < 2e-3, "{text} {name}: deck {deck_c} C, delays {stage_c} C");
            }
        }
    }
}
