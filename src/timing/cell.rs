//! The delays of a cell of several stages (docs/model.md section 9): each stage timed by the one
//! worst-transition rule ([`crate::timing::transition`]) loaded by what it drives (the gates of the
//! later stages its net feeds; the output stage, the cell's load), and each pin's delay on each
//! output edge the largest sum of stage delays over its paths through the stages, reconvergent
//! paths included (a pin read directly and through its complement takes the slower). Beside each,
//! the logical-effort estimate sum(g h + p) of the same path, in tau.

use crate::budget::Meter;
use crate::cell::{SizedCell, SizedStage};
use crate::figures;
use crate::paths::Vector;
use crate::sizing::plan::{Conditions, Load};
use crate::timing::circuit::{Circuit, conducting_devices, flat_widths, reference_delay, tau};
use crate::timing::delays::{MAX_TIMED_OCCURRENCES, delay_model, transition_error, units_of};
use crate::timing::error::TimingError;
use crate::timing::report::{DelayModel, Edge, ProcessUnits, Unavailable};
use crate::timing::transition::{Rule, Transition};

/// One stage's part of a pin's delay.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct StageStep {
    /// The stage, by the net it drives.
    pub stage: String,
    /// The net at its input that switches.
    pub input: String,
    /// The stage's output edge.
    pub edge: Edge,
    /// Its worst transition's Elmore delay, RC.
    pub elmore_rc: f64,
    /// What it drives, C.
    pub load_c: f64,
    /// Its logical-effort delay g h + p, tau.
    pub estimate_tau: f64,
    /// The conducting devices of its switching network, output side first.
    pub path: Vec<String>,
    /// Its input values after the switch.
    pub vector: Vector,
}

/// One pin, one output edge: the slowest path through the stages.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct CellDelay {
    /// The pin that switches.
    pub input: String,
    /// Its own edge on that path (`rise`: it goes to 1).
    pub input_edge: Edge,
    /// The output's edge.
    pub edge: Edge,
    /// The sum of the stages' Elmore delays along the path, RC.
    pub elmore_rc: f64,
    /// The same in picoseconds, with a process.
    pub elmore_ps: Option<f64>,
    /// The same in tau (each stage's delay over its edge's tau).
    pub elmore_tau: f64,
    /// The logical-effort estimate of the same path, sum(g h + p), tau.
    pub estimate_tau: f64,
    /// The cell's load when this pin is timed, C.
    pub load_c: f64,
    /// The reference inverter's Elmore delay at the cell's drive driving the same load, RC.
    pub reference_elmore_rc: f64,
    /// `elmore_rc / reference_elmore_rc`.
    pub delay_ratio: f64,
    /// The stages of the path, first to last.
    pub stages: Vec<StageStep>,
}

/// The delays of a cell of several stages.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct CellTiming {
    /// What the delays assume.
    pub delay_model: DelayModel,
    /// Per pin, fall then rise.
    pub delays: Vec<CellDelay>,
    /// Pins and edges with no path that switches the output.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub unavailable_delays: Vec<Unavailable>,
}

impl Edge {
    /// The other edge: a stage's input edge for its output edge (every stage inverts).
    pub fn opposite(self) -> Edge {
        match self {
            Edge::Fall => Edge::Rise,
            Edge::Rise => Edge::Fall,
        }
    }
}

/// A partial path: the delay and estimate up to a stage's output, its steps and the pin's edge.
#[derive(Debug, Clone)]
struct Arrival {
    elmore: f64,
    elmore_tau: f64,
    estimate: f64,
    pin_edge: Edge,
    steps: Vec<StageStep>,
}

/// The capacitance each stage drives, C: the gates of the later stages its net feeds (the output
/// stage's entry is 0; its load is the cell's).
pub fn stage_loads(cell: &SizedCell) -> Vec<f64> {
    let capacitance: Vec<Vec<f64>> = cell.stages.iter().map(figures::input_capacitance).collect();
    cell.stages
        .iter()
        .enumerate()
        .map(|(index, stage)| {
            (index + 1..cell.stages.len())
                .flat_map(|later| {
                    let net = &stage.function.output;
                    let later_stage = &cell.stages[later];
                    later_stage.function.inputs.iter().zip(&capacitance[later]).filter(move |(i, _)| *i == net)
                })
                .map(|(_, c)| c)
                .sum()
        })
        .collect()
}

/// The logical-effort delay g h + p of stage `index` driving `load` C, in tau: its load and output
/// diffusion over its reference's input capacitance (docs/model.md section 9).
pub fn stage_estimate(cell: &SizedCell, index: usize, load: f64) -> f64 {
    let stage = &cell.stages[index];
    (load + figures::output_diffusion(stage)) / (stage.drive * cell.plan.reference.input_capacitance())
}

/// The step of `transition` in stage `index`.
fn step(
    cell: &SizedCell,
    index: usize,
    circuit: &Circuit,
    transition: &Transition,
    load: f64,
    estimate: f64,
) -> StageStep {
    let stage = &cell.stages[index];
    let kind = transition.edge.network();
    StageStep {
        stage: stage.function.output.clone(),
        input: stage.function.inputs[transition.input].clone(),
        edge: transition.edge,
        elmore_rc: transition.elmore,
        load_c: load,
        estimate_tau: estimate,
        path: conducting_devices(circuit, &transition.shape, kind)
            .iter()
            .map(|&d| cell.device_name(index, kind, circuit.devices[d].index))
            .collect(),
        vector: Vector::new(&stage.function.inputs, &transition.after),
    }
}

/// Each stage's circuit and widths (circuit order) under `conditions`.
fn circuits(cell: &SizedCell, conditions: &Conditions) -> Result<Vec<(Circuit, Vec<f64>)>, TimingError> {
    cell.stages
        .iter()
        .map(|stage: &SizedStage| {
            let occurrences = stage.function.literals.len();
            if occurrences > MAX_TIMED_OCCURRENCES {
                return Err(TimingError::TooLargeToTime { count: occurrences, limit: MAX_TIMED_OCCURRENCES });
            }
            Ok((Circuit::new(stage, &cell.plan, conditions.diffusion_ratio), flat_widths(stage)))
        })
        .collect()
}

/// The delays of `cell`, a cell of several stages, under `conditions`, their work counted on
/// `meter`; with `units`, in picoseconds too.
pub fn time_cell(
    cell: &SizedCell,
    conditions: &Conditions,
    units: Option<ProcessUnits>,
    meter: &Meter,
) -> Result<CellTiming, TimingError> {
    let plan = &cell.plan;
    let count = cell.stages.len();
    let output = count - 1;
    let built = circuits(cell, conditions)?;
    let loads = stage_loads(cell);
    // g h + p of each earlier stage at its own load.
    let own_estimate: Vec<f64> =
        loads.iter().enumerate().map(|(index, &load)| stage_estimate(cell, index, load)).collect();
    let pins = figures::pin_capacitance(cell);
    let pin_loads: Vec<f64> = match conditions.load {
        Load::Fanout(h) => pins.iter().map(|c| h * c).collect(),
        Load::Units(c) => vec![c; pins.len()],
        Load::Femtofarads(ff) => vec![units_of(plan, ff)?; pins.len()],
    };
    let mut rules: Vec<Rule<'_>> = Vec::with_capacity(count);
    for (stage, (circuit, widths)) in cell.stages.iter().zip(&built) {
        rules.push(Rule::new(stage, plan, circuit, widths, meter)?);
    }
    // Earlier stages: each input's worst transition on each edge, at the stage's own load.
    let mut inner: Vec<Vec<[Option<Transition>; 2]>> = Vec::with_capacity(output);
    for (index, rule) in rules.iter_mut().enumerate().take(output) {
        let stage = &cell.stages[index];
        let mut per_input = Vec::with_capacity(stage.function.inputs.len());
        for input in 0..stage.function.inputs.len() {
            let mut found = [None, None];
            for (slot, edge) in Edge::BOTH.into_iter().enumerate() {
                found[slot] = rule
                    .worst(input, edge, loads[index], meter)
                    .map_err(|error| transition_error(stage, input, edge, error))?;
            }
            per_input.push(found);
        }
        inner.push(per_input);
    }
    let slot = |edge: Edge| if edge == Edge::Fall { 0 } else { 1 };
    let mut delays = Vec::new();
    let mut unavailable = Vec::new();
    for (pin_index, pin) in cell.logic.inputs.iter().enumerate() {
        let load = pin_loads[pin_index];
        let mut arrivals: Vec<[Option<Arrival>; 2]> = vec![[None, None]; count];
        for index in 0..count {
            let stage = &cell.stages[index];
            for edge in Edge::BOTH {
                let mut best: Option<Arrival> = None;
                for (input, net) in stage.function.inputs.iter().enumerate() {
                    let before = edge.opposite();
                    let source = if net == pin {
                        Arrival { elmore: 0.0, elmore_tau: 0.0, estimate: 0.0, pin_edge: before, steps: Vec::new() }
                    } else if let Some(from) = cell.stages[..index].iter().position(|s| &s.function.output == net) {
                        match &arrivals[from][slot(before)] {
                            Some(arrival) => arrival.clone(),
                            None => continue,
                        }
                    } else {
                        continue;
                    };
                    let (transition, stage_load, estimate) = if index == output {
                        let found = rules[index]
                            .worst(input, edge, load, meter)
                            .map_err(|error| transition_error(stage, input, edge, error))?;
                        (found, load, stage_estimate(cell, index, load))
                    } else {
                        (inner[index][input][slot(edge)].clone(), loads[index], own_estimate[index])
                    };
                    let Some(transition) = transition else { continue };
                    let elmore = source.elmore + transition.elmore;
                    if best.as_ref().is_some_and(|held| held.elmore >= elmore) {
                        continue;
                    }
                    let mut steps = source.steps;
                    steps.push(step(cell, index, &built[index].0, &transition, stage_load, estimate));
                    best = Some(Arrival {
                        elmore,
                        elmore_tau: source.elmore_tau + transition.elmore / tau(plan, edge),
                        estimate: source.estimate + estimate,
                        pin_edge: source.pin_edge,
                        steps,
                    });
                }
                arrivals[index][slot(edge)] = best;
            }
        }
        for edge in Edge::BOTH {
            let Some(arrival) = arrivals[output][slot(edge)].take() else {
                unavailable.push(Unavailable {
                    input: pin.clone(),
                    edge,
                    why: "no path through the stages switches the output on this edge".to_string(),
                });
                continue;
            };
            let reference = reference_delay(plan, conditions.diffusion_ratio, edge, load);
            delays.push(CellDelay {
                input: pin.clone(),
                input_edge: arrival.pin_edge,
                edge,
                elmore_rc: arrival.elmore,
                elmore_ps: units.as_ref().map(|u| arrival.elmore * u.rc_ps),
                elmore_tau: arrival.elmore_tau,
                estimate_tau: arrival.estimate,
                load_c: load,
                reference_elmore_rc: reference,
                delay_ratio: arrival.elmore / reference,
                stages: arrival.steps,
            });
        }
    }
    Ok(CellTiming { delay_model: delay_model(plan, conditions, units)?, delays, unavailable_delays: unavailable })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sizing::plan::{Method, Plan};

    fn timed(text: &str, load: Load) -> CellTiming {
        let plan = Plan {
            conditions: Conditions { load, diffusion_ratio: 1.0 },
            ..Plan::new(Method::LongestPath, 2.0, 1.0, None)
        };
        let cell = crate::sizing::size_best(&crate::logic::synthesize(text).unwrap(), &plan).unwrap();
        time_cell(&cell, &plan.conditions, None, &Meter::unlimited()).unwrap()
    }

    #[test]
    fn and2_is_its_nand_stage_then_its_inverter() {
        // and2 at drive 1, mu = 2, diffusion ratio 1, fan-out 1 (pin capacitance 1 C): the NAND2 at
        // drive 0.25 (every device W/L 0.5: NMOS 2 R, PMOS 4 R) drives the inverter's 3 C; the
        // inverter (1 and 2) drives 1 C. Worked by hand from the Elmore sum (docs/model.md sections 7
        // and 9): b falling, a = 1: y_n rises through MP2 (4 R) charging y_n (3 C + drains 1.5 C) and
        // the node under MN1 (0.5 C): 4 x 5 = 20 RC; then y falls through MN1_y (1 R) with 3 C of
        // drains and the 1 C load: 4 RC. 24 RC against the reference inverter's 1 x (3 + 1) = 4 RC.
        let timing = timed("and2", Load::Fanout(1.0));
        let delay = timing.delays.iter().find(|d| d.input == "b" && d.edge == Edge::Fall).unwrap();
        assert_eq!(delay.input_edge, Edge::Fall);
        let stages: Vec<(&str, f64)> = delay.stages.iter().map(|s| (s.stage.as_str(), s.elmore_rc)).collect();
        assert_eq!(stages.len(), 2);
        assert_eq!(stages[0].0, "y_n");
        assert!((stages[0].1 - 20.0).abs() < 1e-9 && (stages[1].1 - 4.0).abs() < 1e-9, "{stages:?}");
        assert!((delay.elmore_rc - 24.0).abs() < 1e-9);
        assert!((delay.delay_ratio - 6.0).abs() < 1e-9);
        // The logical-effort estimate of the same path: NAND f = 3 / 0.75 = 4, p = 1.5 / 0.75 = 2;
        // inverter f = 1 / 3, p = 1: 22 / 3 tau (docs/model.md section 9).
        assert!((delay.estimate_tau - 22.0 / 3.0).abs() < 1e-9);
        // tau = 3 RC on both edges: 24 RC is 8 tau.
        assert!((delay.elmore_tau - 8.0).abs() < 1e-9);
    }

    #[test]
    fn a_reconvergent_pin_takes_its_slower_path() {
        // xor2's pins reach the logic stage directly and through their complement: each delay is
        // the largest sum over the paths, so at least each path's, and the path through the
        // complement is the longer here (three stages against two, every stage a positive delay).
        let timing = timed("xor2", Load::Units(4.0));
        assert_eq!(timing.delays.len(), 4);
        for delay in &timing.delays {
            assert!(delay.stages.len() >= 2, "{delay:?}");
            let sum: f64 = delay.stages.iter().map(|s| s.elmore_rc).sum();
            assert!((sum - delay.elmore_rc).abs() < 1e-9);
            assert_eq!(delay.stages.last().unwrap().stage, "y");
        }
        assert!(timing.delays.iter().any(|d| d.stages[0].stage.ends_with("_n") && d.stages.len() == 3));
    }
}
