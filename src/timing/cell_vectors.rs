//! The worst transition of each pin of a cell of several stages, chosen over whole vectors of the
//! cell's pins (docs/model.md sections 7 and 9): what a deck of such a cell simulates.
//!
//! For a pin, an output edge and every vector of the other pins under which toggling the pin
//! toggles the output (the pin may rise or fall), the stages are evaluated in order. A stage whose
//! output keeps its value does not switch. One whose output changes switches on the first of its
//! changing inputs, in order of arrival (ties to the lower input), after which its output holds its
//! final value; it is timed as that input switching with the inputs that changed before it at their
//! new values and the later ones at their old (a pin's complement, from an input inverter, changes
//! one inverter delay after the pin: its stage's transition is a step of the chain of its own). Each
//! step is the stage's Elmore delay at that vector (section 7) loaded by what it drives (section 9);
//! a net's arrival is its driving input's arrival plus the step. The pin's transition is the vector
//! with the slowest arrival at the output; ties (within a relative 1e-9) go to the larger sum of
//! the switching stages' resistances (what conducts after each switch, sizing widths), then to the
//! lower vector index, the pins' values after the switch read as bits (pin k, in order of first
//! appearance, is bit k). Unlike [`crate::timing::cell`], whose stages each take their own worst
//! vector, every step here is one vector of the pins.
//!
//! Bound: up to [`MAX_CELL_PINS`] pins (every vector enumerated); each vector's evaluation and each
//! new step's solve are counted on the run's meter as the devices of the stages.

use std::collections::HashMap;

use crate::budget::{Meter, Work};
use crate::cell::SizedCell;
use crate::network::NetworkKind;
use crate::paths;
use crate::sizing::plan::{Conditions, Load};
use crate::timing::cell::{stage_estimate, stage_loads};
use crate::timing::circuit::{Circuit, conducting_devices, flat_widths, reference_delay, tau};
use crate::timing::delays::units_of;
use crate::timing::error::TimingError;
use crate::timing::report::Edge;
use crate::timing::transition::{EVERY_VECTOR, time_vector};

/// Most pins a cell's transitions are chosen over (2^16 vectors each).
pub const MAX_CELL_PINS: usize = 16;

/// Two delays (or resistances) within this fraction of the larger are a tie.
const TIE: f64 = 1e-9;

/// One stage's switch in a cell-level transition.
#[derive(Debug, Clone, PartialEq)]
pub struct CellStep {
    /// The stage's index in the cell.
    pub stage: usize,
    /// The stage input that switches it.
    pub input: usize,
    /// The stage's output edge.
    pub edge: Edge,
    /// The stage's input values after the switch.
    pub after: Vec<bool>,
    /// Its Elmore delay, RC.
    pub elmore: f64,
    /// The resistance of what conducts after the switch, R (sizing widths).
    pub resistance: f64,
    /// What it drives, C.
    pub load: f64,
    /// Its logical-effort delay g h + p, tau (docs/model.md section 9).
    pub estimate_tau: f64,
    /// The conducting devices of its switching network (netlist names), output side first.
    pub conducting: Vec<String>,
}

/// One pin's transition through the cell on one output edge.
#[derive(Debug, Clone, PartialEq)]
pub struct CellTransition {
    /// The pin (index into the cell's inputs).
    pub pin: usize,
    /// The output's edge.
    pub edge: Edge,
    /// Every pin's value after the switch (the toggling pin at its new value).
    pub after: Vec<bool>,
    /// The stages that switch, from the pin to the output, each on the arrival of the previous.
    pub steps: Vec<CellStep>,
    /// The output's arrival: the sum of the steps' Elmore delays, RC.
    pub elmore: f64,
    /// The same in tau (each step over its edge's tau).
    pub elmore_tau: f64,
    /// The logical-effort estimate sum(g h + p) of the same steps, tau.
    pub estimate_tau: f64,
    /// The cell's load, C.
    pub load: f64,
    /// The reference inverter at the cell's drive driving the same load, RC.
    pub reference_elmore: f64,
}

impl CellTransition {
    /// Whether the pin rises.
    pub fn pin_rises(&self) -> bool {
        self.after[self.pin]
    }

    /// The output stage's step (every transition ends with it).
    pub fn output_step(&self) -> &CellStep {
        self.steps.last().expect("a cell transition switches the output stage")
    }
}

/// A net's value before and after, when it settles (RC) and the steps that brought it there.
#[derive(Clone)]
struct NetState {
    before: bool,
    after: bool,
    arrival: f64,
    chain: Vec<usize>,
}

/// A stage, the input that switches it, its inputs after the switch and its load's bits.
type StepKey = (usize, usize, Vec<bool>, u64);

/// A step's Elmore delay (RC), the resistance of what conducts (R) and the conducting devices.
type StepTiming = (f64, f64, Vec<String>);

/// A stage's output at `values` (its pull-down off).
fn evaluate(cell: &SizedCell, stage: usize, values: &[bool]) -> bool {
    let network = &cell.stages[stage].networks[NetworkKind::PullDown].network;
    !network.conducts(&network.on_devices(values))
}

/// Every pin's worst transition through `cell` on each output edge (pin by pin, output falling
/// then rising) under `conditions`, their work counted on `meter`. A pin and edge that no vector
/// switches is left out.
pub fn cell_transitions(
    cell: &SizedCell,
    conditions: &Conditions,
    meter: &Meter,
) -> Result<Vec<CellTransition>, TimingError> {
    let pins = &cell.logic.inputs;
    if pins.len() > MAX_CELL_PINS {
        return Err(TimingError::TooManyPins { count: pins.len(), limit: MAX_CELL_PINS });
    }
    let plan = &cell.plan;
    let circuits: Vec<(Circuit, Vec<f64>)> = cell
        .stages
        .iter()
        .map(|stage| (Circuit::new(stage, plan, conditions.diffusion_ratio), flat_widths(stage)))
        .collect();
    let devices: u128 = circuits.iter().map(|(c, _)| c.devices.len() as u128).sum();
    let loads = stage_loads(cell);
    let pin_capacitance = crate::figures::pin_capacitance(cell);
    let output = cell.stages.len() - 1;
    let mut solved: HashMap<StepKey, StepTiming> = HashMap::new();
    let mut found = Vec::new();
    for (pin, &capacitance) in pin_capacitance.iter().enumerate() {
        let cell_load = match conditions.load {
            Load::Fanout(h) => h * capacitance,
            Load::Units(c) => c,
            Load::Femtofarads(ff) => units_of(plan, ff)?,
        };
        let mut best: [Option<CellTransition>; 2] = [None, None];
        for index in 0..1u64 << pins.len() {
            meter.charge(devices, Work::Delays)?;
            let after: Vec<bool> = (0..pins.len()).map(|k| index >> k & 1 == 1).collect();
            let mut nets: HashMap<&str, NetState> = pins
                .iter()
                .zip(&after)
                .enumerate()
                .map(|(k, (name, &value))| {
                    let before = if k == pin { !value } else { value };
                    (name.as_str(), NetState { before, after: value, arrival: 0.0, chain: Vec::new() })
                })
                .collect();
            let mut steps: Vec<CellStep> = Vec::new();
            for (index, stage) in cell.stages.iter().enumerate() {
                let inputs: Vec<&NetState> = stage.function.inputs.iter().map(|net| &nets[net.as_str()]).collect();
                let mut values: Vec<bool> = inputs.iter().map(|s| s.before).collect();
                let before = evaluate(cell, index, &values);
                let final_values: Vec<bool> = inputs.iter().map(|s| s.after).collect();
                let target = evaluate(cell, index, &final_values);
                if before == target {
                    let state = NetState { before, after: target, arrival: 0.0, chain: Vec::new() };
                    nets.insert(stage.function.output.as_str(), state);
                    continue;
                }
                let mut changing: Vec<usize> =
                    (0..inputs.len()).filter(|&i| inputs[i].before != inputs[i].after).collect();
                changing.sort_by(|&x, &y| inputs[x].arrival.total_cmp(&inputs[y].arrival).then(x.cmp(&y)));
                let mut switching = changing[0];
                for &input in &changing {
                    values[input] = final_values[input];
                    if evaluate(cell, index, &values) == target {
                        switching = input;
                        break;
                    }
                }
                let edge = if target { Edge::Rise } else { Edge::Fall };
                let load = if index == output { cell_load } else { loads[index] };
                let key = (index, switching, values.clone(), load.to_bits());
                let (elmore, resistance, conducting) = match solved.get(&key) {
                    Some(held) => held.clone(),
                    None => {
                        meter.charge(circuits[index].0.devices.len() as u128, Work::Delays)?;
                        let timed = step_delay(cell, index, &circuits[index], switching, edge, &values, load)?;
                        solved.insert(key, timed.clone());
                        timed
                    }
                };
                let source = inputs[switching];
                let mut chain = source.chain.clone();
                chain.push(steps.len());
                let arrival = source.arrival + elmore;
                steps.push(CellStep {
                    stage: index,
                    input: switching,
                    edge,
                    after: values,
                    elmore,
                    resistance,
                    load,
                    estimate_tau: stage_estimate(cell, index, load),
                    conducting,
                });
                nets.insert(stage.function.output.as_str(), NetState { before, after: target, arrival, chain });
            }
            let out = &nets[cell.output()];
            if out.before == out.after {
                continue;
            }
            let edge = if out.after { Edge::Rise } else { Edge::Fall };
            let chain: Vec<CellStep> = out.chain.iter().map(|&k| steps[k].clone()).collect();
            let candidate = CellTransition {
                pin,
                edge,
                after,
                elmore: out.arrival,
                elmore_tau: chain.iter().map(|s| s.elmore / tau(plan, s.edge)).sum(),
                estimate_tau: chain.iter().map(|s| s.estimate_tau).sum(),
                steps: chain,
                load: cell_load,
                reference_elmore: reference_delay(plan, conditions.diffusion_ratio, edge, cell_load),
            };
            let slot = usize::from(edge == Edge::Rise);
            if best[slot].as_ref().is_none_or(|held| slower(&candidate, held)) {
                best[slot] = Some(candidate);
            }
        }
        found.extend(best.into_iter().flatten());
    }
    Ok(found)
}

/// Whether `candidate` (a later vector) is slower than `held`: a slower arrival, or a tie and a
/// larger sum of resistances.
fn slower(candidate: &CellTransition, held: &CellTransition) -> bool {
    let scale = candidate.elmore.abs().max(held.elmore.abs());
    if (candidate.elmore - held.elmore).abs() > TIE * scale {
        return candidate.elmore > held.elmore;
    }
    let resistance = |t: &CellTransition| t.steps.iter().map(|s| s.resistance).sum::<f64>();
    let (c, h) = (resistance(candidate), resistance(held));
    c > h + TIE * c.max(h)
}

/// Stage `index` switched by `input` on `edge` with its inputs at `values` after the switch, timed
/// with `load` C: its Elmore delay, the resistance of what conducts and the conducting devices.
fn step_delay(
    cell: &SizedCell,
    index: usize,
    (circuit, widths): &(Circuit, Vec<f64>),
    input: usize,
    edge: Edge,
    values: &[bool],
    load: f64,
) -> Result<StepTiming, TimingError> {
    let stage = &cell.stages[index];
    let kind = edge.network();
    let transition = time_vector(circuit, widths, input, edge, values.to_vec(), load, EVERY_VECTOR)
        .map_err(|why| TimingError::Network { input: stage.function.inputs[input].clone(), edge: edge.name(), why })?;
    let sized = &stage.networks[kind];
    let resistance = cell.plan.resistances(kind, &sized.widths);
    let on = sized.network.on_devices(values);
    let resistance = paths::effective_resistance(&sized.network, &resistance, &on).unwrap_or(f64::INFINITY);
    let conducting = conducting_devices(circuit, &transition.shape, kind)
        .iter()
        .map(|&d| cell.device_name(index, kind, circuit.devices[d].index))
        .collect();
    Ok((transition.elmore, resistance, conducting))
}

#[cfg(test)]
mod tests;
