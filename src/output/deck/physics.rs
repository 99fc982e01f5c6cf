//! The device physics a deck needs beside the gate: the reference inverter as drawn, the level-1
//! saturation current that sets the run's time scale, and SPICE's spelling of times and capacitances.

use crate::figures::CellFigures;
use crate::network::NetworkKind;
use crate::number;
use crate::process::Process;

/// The reference inverter as drawn: NMOS and PMOS (fingers, finger width nm).
pub(crate) fn reference_devices(gate: &CellFigures) -> [(usize, f64); 2] {
    let process = &gate.process;
    [gate.reference_nmos_w_over_l, gate.reference_pmos_w_over_l].map(|w| {
        let drawn = process.draw(w);
        (drawn.fingers, drawn.finger_width_nm)
    })
}

/// Saturation current of a device of drawn width `width_nm` at full gate drive, A (level 1:
/// KP/2 x W/L x (supply - threshold)^2).
pub(crate) fn saturation_current(process: &Process, kind: NetworkKind, width_nm: f64) -> f64 {
    let (kp, threshold) = match kind {
        NetworkKind::PullDown => (process.nmos_kp_ua_per_v2, process.nmos_threshold_v),
        NetworkKind::PullUp => (process.pmos_kp_ua_per_v2, process.pmos_threshold_v),
    };
    let overdrive = process.supply_v - threshold;
    kp * 1e-6 / 2.0 * (width_nm / process.length_nm) * overdrive * overdrive
}

/// A time in seconds as SPICE reads it: a stimulus time, chosen to four significant digits, then
/// written by the one rule of every number ([`crate::number`]).
pub(crate) fn seconds(value: f64) -> String {
    let chosen: f64 = format!("{value:.3e}").parse().unwrap_or(value);
    number::format(chosen)
}

/// A capacitance in fF as SPICE reads it.
pub(crate) fn femtofarads(value: f64) -> String {
    format!("{}f", number::format(value))
}

/// The transient run's times, s: the inputs' step, when it starts, when the run stops and its step.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct TimeScale {
    /// How long an input takes to step.
    pub rise: f64,
    /// When the inputs step.
    pub start: f64,
    /// When the run ends.
    pub stop: f64,
    /// The run's time step.
    pub step: f64,
}

impl TimeScale {
    /// The scale of a run whose slowest expected delay is `slowest` (s): the inputs start 1/20 of
    /// it in and ramp in `slew` (rail to rail; default a thousandth of it); the run lasts `runs`
    /// of it after the ramp, in steps of 1/200 of it.
    pub fn new(slowest: f64, runs: f64, slew: Option<f64>) -> TimeScale {
        let start = slowest / 20.0;
        let stop = match slew {
            Some(slew) => start + slew + runs * slowest,
            None => start + runs * slowest,
        };
        TimeScale { rise: slew.unwrap_or(slowest / 1000.0), start, stop, step: slowest / 200.0 }
    }
}

/// The level-1 estimate of the slowest edge (s): the reference inverter (`reference`: NMOS and
/// PMOS fingers and finger width, nm) charging `load_ff` to half the supply at its saturation
/// current.
pub(crate) fn estimate(process: &Process, reference: [(usize, f64); 2], load_ff: f64) -> f64 {
    let supply = process.supply_v;
    NetworkKind::BOTH
        .into_iter()
        .zip(reference)
        .map(|(kind, (fingers, finger))| {
            load_ff * 1e-15 * (supply / 2.0) / saturation_current(process, kind, fingers as f64 * finger)
        })
        .fold(0.0, f64::max)
}

/// The load on every copy's output.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum DeckLoad {
    /// The same capacitance, fF, on every copy of the gate and of the reference.
    Femtofarads(f64),
    /// A fan-out H: each copy of the gate drives H times the toggling input's own capacitance in
    /// the gate as sized, the reference H times its own input capacitance.
    Fanout(f64),
}

impl DeckLoad {
    /// The load of a copy of the gate whose toggling input is `input`, fF.
    pub fn gate_ff(&self, gate: &CellFigures, input: usize) -> f64 {
        match *self {
            DeckLoad::Femtofarads(load_ff) => load_ff,
            DeckLoad::Fanout(h) => h * gate.inputs[input].input_capacitance * gate.process.unit_capacitance_ff(),
        }
    }

    /// The load of a copy of the reference inverter, fF.
    pub fn reference_ff(&self, gate: &CellFigures) -> f64 {
        match *self {
            DeckLoad::Femtofarads(load_ff) => load_ff,
            DeckLoad::Fanout(h) => {
                h * (gate.reference_nmos_w_over_l + gate.reference_pmos_w_over_l) * gate.process.unit_capacitance_ff()
            }
        }
    }
}

/// How a deck's time window is chosen.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Window {
    /// From the process's level-1 values: 20 times the reference inverter's estimated delay at the
    /// largest load with the level-1 models the deck writes; 100 times with a model library, whose
    /// devices the estimate may not describe.
    Estimate,
    /// A calibration run: 1000 times the estimate, in coarse steps that ngspice refines where
    /// the circuit moves; for the reference inverter's delays only.
    Calibration,
    /// From the reference inverter's delay as simulated (s, the slower edge, at its own load):
    /// scaled to the largest load, the run lasts 50 times it.
    Measured {
        /// The reference inverter's delay, s.
        reference_s: f64,
    },
}

impl Window {
    /// The run's times for a deck whose largest load is `load_ratio` times the reference's
    /// (`load_ff` with the diffusions), with inputs ramping in `slew`; `library`: the models come
    /// from a library, not the process.
    pub(crate) fn scale(
        &self,
        library: bool,
        process: &Process,
        reference: [(usize, f64); 2],
        load_ratio: f64,
        load_ff: f64,
        slew: Option<f64>,
    ) -> TimeScale {
        match *self {
            Window::Estimate => {
                let runs = if library { 100.0 } else { 20.0 };
                TimeScale::new(estimate(process, reference, load_ff), runs, slew)
            }
            Window::Calibration => {
                let scale = TimeScale::new(estimate(process, reference, load_ff), 1000.0, slew);
                TimeScale { step: scale.stop / 2000.0, ..scale }
            }
            Window::Measured { reference_s } => TimeScale::new(reference_s * load_ratio.max(1.0), 50.0, slew),
        }
    }
}
