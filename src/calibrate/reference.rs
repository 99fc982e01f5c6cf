//! The reference inverter in the calibration's models: measured at its load and slew, and, when it
//! is the default balanced one, first balanced there: its PMOS adjusted by secant steps until its
//! rise equals its fall within half the tolerance. A skewed reference is measured as given.

use super::testbench::{self, Setting, Window};
use super::{CalibrateError, Runs};
use crate::network::NetworkKind;
use crate::ngspice;
use crate::process::Process;

/// The reference inverter a calibration matches: its sizes and simulated delays.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ReferenceCalibration {
    /// NMOS W/L at the cell's drive.
    pub nmos: f64,
    /// PMOS W/L at the cell's drive, as the plan gives it.
    pub pmos_first_order: f64,
    /// PMOS W/L used: balanced in the models, or as given for a skewed reference.
    pub pmos: f64,
    /// Whether it was balanced here (the default reference) or kept as given (skewed).
    pub balanced: bool,
    /// Its delay, output falling, s (at the last run).
    pub fall_s: f64,
    /// Its delay, output rising, s.
    pub rise_s: f64,
    /// Its load, fF.
    pub load_ff: f64,
    /// Simulator runs it took.
    pub runs: usize,
}

/// Rise and fall of the reference at NMOS `n`, PMOS `p` over `window`.
fn delays(
    process: &Process,
    setting: &Setting,
    [n, p]: [f64; 2],
    window: &Window,
    runs: &mut Runs,
    simulator: &ngspice::Options,
) -> Result<[f64; 2], CalibrateError> {
    let run = runs.run(&testbench::reference_bench(process, setting, n, p, window), simulator)?;
    let mut out = [0.0; 2];
    for (slot, kind) in NetworkKind::BOTH.into_iter().enumerate() {
        out[slot] = run.value(&testbench::reference_measure(kind)).map_err(|source| CalibrateError::Unmeasured {
            run: runs.used,
            what: format!("the reference inverter's output {}", testbench::edge(kind)),
            source,
        })?;
    }
    Ok(out)
}

/// Measure the reference inverter of NMOS `n`, PMOS `p` W/L (at the cell's drive) in `setting`;
/// when `balance`, adjust its PMOS until rise equals fall within `tolerance`, its PMOS kept
/// within `area_cap` times `p` either way; where the drawing grid cannot bring it closer (the next
/// step draws a PMOS already tried), the closest tried is kept. Runs count on `runs`.
#[allow(clippy::too_many_arguments)]
pub fn balance_reference(
    process: &Process,
    setting: &Setting,
    [n, p]: [f64; 2],
    balance: bool,
    tolerance: f64,
    area_cap: f64,
    runs: &mut Runs,
    simulator: &ngspice::Options,
) -> Result<ReferenceCalibration, CalibrateError> {
    let used = runs.used;
    let over_budget = |runs: &Runs, ratio: f64| CalibrateError::RunBudget {
        budget: runs.budget,
        tolerance,
        best_ratio: ratio,
        best_area: n + p,
        first_order_area: n + p,
    };
    if !runs.left() {
        return Err(over_budget(runs, f64::NAN));
    }
    // A first run in a long window finds the time scale; its coarse steps are not used for more.
    let load = |p: f64| setting.load.reference_ff(process, n, p);
    let first = Window::first(process, n, p, load(p), setting.slew_s);
    let [fall, rise] = delays(process, setting, [n, p], &first, runs, simulator)?;
    let mut scale = fall.max(rise);
    let mut pmos = p;
    let mut last: Option<(f64, f64)> = None;
    // Every PMOS tried: its drawn width (nm), W/L, fall and rise.
    let mut tried: Vec<(f64, f64, f64, f64)> = Vec::new();
    let done = |pmos: f64, fall: f64, rise: f64, runs: &Runs| ReferenceCalibration {
        nmos: n,
        pmos_first_order: p,
        pmos,
        balanced: balance,
        fall_s: fall,
        rise_s: rise,
        load_ff: load(pmos),
        runs: runs.used - used,
    };
    loop {
        if !runs.left() {
            return Err(over_budget(runs, f64::NAN));
        }
        let window = Window::around(scale, 50.0, setting.slew_s);
        let [fall, rise] = delays(process, setting, [n, pmos], &window, runs, simulator)?;
        let ratio = rise / fall;
        if !balance || (ratio - 1.0).abs() <= tolerance {
            return Ok(done(pmos, fall, rise, runs));
        }
        tried.push((process.draw(pmos).width_nm(), pmos, fall, rise));
        if !runs.left() {
            return Err(over_budget(runs, ratio));
        }
        // Rise goes about as 1 / PMOS width: a secant step in x = 1 / pmos.
        let x = 1.0 / pmos;
        let mut next = x / ratio;
        if let Some((x0, r0)) = last {
            let slope = (ratio - r0) / (x - x0);
            if slope.is_finite() && slope > 0.0 {
                next = x + (1.0 - ratio) / slope;
            }
        }
        last = Some((x, ratio));
        let next = 1.0 / next.clamp(x / 2.5, x * 2.5);
        if next > p * area_cap || next < p / area_cap {
            return Err(CalibrateError::ReferenceUnbalanced { ratio, pmos: next, cap: area_cap, first_order: p });
        }
        if tried.iter().any(|t| (t.0 - process.draw(next).width_nm()).abs() < 1e-6) {
            // The grid allows nothing closer: the closest tried.
            let closest = tried
                .iter()
                .min_by(|a, b| (a.3 / a.2 - 1.0).abs().total_cmp(&(b.3 / b.2 - 1.0).abs()))
                .copied()
                .unwrap_or((0.0, pmos, fall, rise));
            return Ok(done(closest.1, closest.2, closest.3, runs));
        }
        pmos = next;
        scale = fall.max(rise);
    }
}
