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
    /// The scale of the reference inverter (`reference`: NMOS and PMOS fingers and finger width, nm)
    /// charging `load_ff` to half the supply at its saturation current, the slower edge: the inputs
    /// step in a thousandth of it, 1/20 of it in, and the run lasts 20 of it.
    pub fn of(process: &Process, reference: [(usize, f64); 2], load_ff: f64) -> TimeScale {
        let supply = process.supply_v;
        let slowest = NetworkKind::BOTH
            .into_iter()
            .zip(reference)
            .map(|(kind, (fingers, finger))| {
                load_ff * 1e-15 * (supply / 2.0) / saturation_current(process, kind, fingers as f64 * finger)
            })
            .fold(0.0, f64::max);
        let start = slowest / 20.0;
        TimeScale { rise: slowest / 1000.0, start, stop: start + 20.0 * slowest, step: slowest / 200.0 }
    }
}
