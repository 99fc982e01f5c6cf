//! Figures of each stage of a cell and the cell's logical-effort delay estimate per input
//! (docs/model.md section 9): each stage's drive, load, logical effort g and electrical effort h
//! per input, effort f = g h and parasitic delay p, as sized (after any clamp); and, per cell input,
//! the largest sum of g h + p over the stages along its paths to the output, in tau.

use crate::cell::{SizedCell, SizedStage};
use crate::logic::StageRole;
use crate::sizing::plan::Load;

/// One input of a stage.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct StageInput {
    /// The net (a pin of the cell or a net an earlier stage drives).
    pub net: String,
    /// Sum of the W/L of the stage's devices it gates, in C.
    pub input_capacitance: f64,
    /// Logical effort g: its capacitance over the reference inverter's at the stage's drive.
    pub logical_effort: f64,
    /// Electrical effort h: the stage's load over its capacitance.
    pub electrical_effort: f64,
}

/// One stage's figures.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct StageFigures {
    /// The net the stage drives, which names it.
    pub stage: String,
    /// `complement`, `logic` or `output-inverter`.
    pub role: &'static str,
    /// What it computes: `NOT f` over its input nets.
    pub expression: String,
    /// The drive it is sized at, in multiples of the unit reference inverter.
    pub drive: f64,
    /// Whether that drive was raised to keep every device at the process's minimum width.
    pub clamped: bool,
    /// The capacitance it drives, in C: the gates of the later stages its net feeds; for the output
    /// stage, the cell's load (under a fan-out, that of the input with the largest capacitance).
    pub load_capacitance: f64,
    /// Its effort f = g h, the same for each of its inputs: its load over the reference inverter's
    /// input capacitance at its drive.
    pub effort: f64,
    /// Its parasitic delay p: diffusion on its output over the reference inverter's input
    /// capacitance at its drive.
    pub parasitic_delay: f64,
    /// Its inputs, in its own order.
    pub inputs: Vec<StageInput>,
    /// Sum of its devices' W/L.
    pub total_w_over_l: f64,
}

/// The logical-effort delay estimate of one cell input.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct DelayEstimate {
    /// The cell input.
    pub input: String,
    /// The cell's load when this input is timed, in C.
    pub load_capacitance: f64,
    /// The largest sum of g h + p over the stages of a path from the input to the output, in tau
    /// (the delay of the unit inverter driving an equal one with no parasitics).
    pub delay_tau: f64,
    /// The stages of that path, by the nets they drive, first to last.
    pub path: Vec<String>,
}

/// The role's name, as the figures give it.
pub fn role_name(role: StageRole) -> &'static str {
    match role {
        StageRole::Complement { .. } => "complement",
        StageRole::Logic => "logic",
        StageRole::OutputInverter => "output-inverter",
    }
}

/// Gate capacitance of every stage input, in C, in the stage's input order.
fn gate_capacitance(stage: &SizedStage) -> Vec<f64> {
    let mut capacitance = vec![0.0; stage.function.inputs.len()];
    for sized in stage.networks.values() {
        for (&input, &width) in sized.network.inputs.iter().zip(&sized.widths) {
            capacitance[input] += width;
        }
    }
    capacitance
}

/// Diffusion width on the stage's output node, in W/L: the W/L of every device whose drain is the
/// output (the parasitic delay of a stage, in one stage's figures and a cell's alike).
pub fn output_diffusion(stage: &SizedStage) -> f64 {
    let output = &stage.function.output;
    stage
        .networks
        .values()
        .flat_map(|n| n.terminals.iter().zip(&n.widths))
        .filter(|(terminals, _)| terminals.drain == *output)
        .map(|(_, width)| width)
        .sum()
}

/// The cell's load when an input of capacitance `input_capacitance` (C) is timed, in C.
pub fn cell_load(cell: &SizedCell, input_capacitance: f64) -> f64 {
    match cell.plan.conditions.load {
        Load::Fanout(h) => h * input_capacitance,
        Load::Units(c) => c,
        Load::Femtofarads(ff) => ff / cell.plan.process.unit_capacitance_ff(),
    }
}

/// Each stage's figures and each cell input's delay estimate; `pins` is every cell input with its
/// capacitance (C), in the cell's order.
pub fn of(cell: &SizedCell, pins: &[(String, f64)]) -> (Vec<StageFigures>, Vec<DelayEstimate>) {
    let unit_inverter = cell.plan.reference.input_capacitance();
    let count = cell.stages.len();
    let largest_pin = pins.iter().map(|(_, c)| *c).fold(0.0, f64::max);
    let mut figures = Vec::with_capacity(count);
    for (index, stage) in cell.stages.iter().enumerate() {
        let load = if index + 1 == count {
            cell_load(cell, largest_pin)
        } else {
            cell.stages[index + 1..]
                .iter()
                .map(|later| {
                    let capacitance = gate_capacitance(later);
                    later
                        .function
                        .inputs
                        .iter()
                        .zip(capacitance)
                        .filter(|(net, _)| **net == stage.function.output)
                        .map(|(_, c)| c)
                        .sum::<f64>()
                })
                .sum()
        };
        let reference = stage.drive * unit_inverter;
        let inputs = stage
            .function
            .inputs
            .iter()
            .zip(gate_capacitance(stage))
            .map(|(net, c)| StageInput {
                net: net.clone(),
                input_capacitance: c,
                logical_effort: c / reference,
                electrical_effort: load / c,
            })
            .collect();
        figures.push(StageFigures {
            stage: stage.function.output.clone(),
            role: role_name(stage.role),
            expression: stage.function.text.clone(),
            drive: stage.drive,
            clamped: stage.clamped,
            load_capacitance: load,
            effort: load / reference,
            parasitic_delay: output_diffusion(stage) / reference,
            inputs,
            total_w_over_l: stage.networks.values().flat_map(|n| &n.widths).sum(),
        });
    }
    // The longest path after each stage up to (not including) the output stage, by g h + p: the
    // stages come in topological order, so the later ones are known first.
    let mut after: Vec<(f64, Vec<usize>)> = vec![(0.0, Vec::new()); count];
    for index in (0..count.saturating_sub(1)).rev() {
        let net = &cell.stages[index].function.output;
        let next = (index + 1..count)
            .filter(|&t| cell.stages[t].function.inputs.iter().any(|i| i == net))
            .map(|t| (if t + 1 == count { 0.0 } else { after[t].0 }, t))
            .fold(None, |best: Option<(f64, usize)>, (delay, t)| match best {
                Some((most, _)) if most >= delay => best,
                _ => Some((delay, t)),
            });
        let own = figures[index].effort + figures[index].parasitic_delay;
        let (delay, path) = match next {
            Some((delay, t)) if t + 1 < count => {
                let mut path = vec![t];
                path.extend(after[t].1.iter().copied());
                (delay, path)
            }
            _ => (0.0, Vec::new()),
        };
        after[index] = (own + delay, path);
    }
    let output = count - 1;
    let output_reference = cell.stages[output].drive * unit_inverter;
    let estimates = pins
        .iter()
        .map(|(pin, capacitance)| {
            let load = cell_load(cell, *capacitance);
            let tail = load / output_reference + figures[output].parasitic_delay;
            let (inner, first) = (0..count)
                .filter(|&s| cell.stages[s].function.inputs.iter().any(|i| i == pin))
                .map(|s| (if s == output { 0.0 } else { after[s].0 }, s))
                .fold(
                    (f64::NEG_INFINITY, output),
                    |(most, at), (delay, s)| {
                        if delay > most { (delay, s) } else { (most, at) }
                    },
                );
            let mut path = vec![first];
            if first != output {
                path.extend(after[first].1.iter().copied());
                path.push(output);
            }
            DelayEstimate {
                input: pin.clone(),
                load_capacitance: load,
                delay_tau: inner.max(0.0) + tail,
                path: path.into_iter().map(|s| cell.stages[s].function.output.clone()).collect(),
            }
        })
        .collect();
    (figures, estimates)
}
