//! A calibrated cell as the writers show it: its figures at the calibrated sizes (every format,
//! through the cell writers), and beside them the calibration: first-order and calibrated W/L side
//! by side, every transition's simulated ratio before and after, the reference inverter, the
//! factors and the simulator runs used (table, JSON, and comment lines ahead of the SPICE).

use std::io::{self, Write};

use serde::Serialize;

use super::{CellReport, Format, Rows, json, number};
use crate::calibrate::{Calibrated, Factor, ReferenceCalibration, TransitionRatio};
use crate::figures::CellFigures;

/// One device, first-order beside calibrated.
#[derive(Debug, Clone, Serialize)]
pub struct DeviceChange {
    /// `MN1`, `MP1` ...
    pub name: String,
    /// The input on its gate.
    pub input: String,
    /// First-order W/L.
    pub first_order_w_over_l: f64,
    /// Calibrated W/L.
    pub calibrated_w_over_l: f64,
    /// Calibrated W/L as drawn.
    pub calibrated_drawn_w_over_l: f64,
    /// Calibrated over first-order, less 1, percent.
    pub change_percent: f64,
}

/// The calibration as JSON and the table show it.
#[derive(Debug, Clone, Serialize)]
pub struct CalibrationView {
    /// The models: `level 1 from the process` or the library (and section).
    pub models: String,
    /// The load in words.
    pub load: String,
    /// How long the inputs ramp, ps (`None`: a step).
    pub slew_ps: Option<f64>,
    /// The tolerance, percent.
    pub tolerance_percent: f64,
    /// The reference inverter matched.
    pub reference: ReferenceView,
    /// Every device of the output stage.
    pub devices: Vec<DeviceChange>,
    /// The factors.
    pub factors: Vec<Factor>,
    /// Whether groups of devices were refined.
    pub refined_in_groups: bool,
    /// Every transition before and after.
    pub transitions: Vec<TransitionRatio>,
    /// The worst ratio through the pull-down (output falling) before and after.
    pub worst_fall_before: f64,
    /// After.
    pub worst_fall_after: f64,
    /// The worst ratio through the pull-up (output rising) before.
    pub worst_rise_before: f64,
    /// After.
    pub worst_rise_after: f64,
    /// Simulator runs used for this cell.
    pub runs: usize,
    /// The budget.
    pub run_budget: usize,
    /// Seconds spent in the simulator.
    pub simulator_seconds: f64,
}

/// The reference inverter as the view shows it.
#[derive(Debug, Clone, Serialize)]
pub struct ReferenceView {
    /// NMOS W/L.
    pub nmos_w_over_l: f64,
    /// PMOS W/L as the plan gives it.
    pub pmos_first_order_w_over_l: f64,
    /// PMOS W/L matched.
    pub pmos_w_over_l: f64,
    /// `balanced in the models` or `kept as given (skewed)`.
    pub how: &'static str,
    /// Delay, output falling, ps.
    pub fall_ps: f64,
    /// Delay, output rising, ps.
    pub rise_ps: f64,
    /// Its load, fF.
    pub load_ff: f64,
    /// Runs it took.
    pub runs: usize,
}

impl ReferenceView {
    fn of(reference: &ReferenceCalibration) -> ReferenceView {
        ReferenceView {
            nmos_w_over_l: reference.nmos,
            pmos_first_order_w_over_l: reference.pmos_first_order,
            pmos_w_over_l: reference.pmos,
            how: if reference.balanced { "balanced in the models" } else { "kept as given (skewed)" },
            fall_ps: reference.fall_s * 1e12,
            rise_ps: reference.rise_s * 1e12,
            load_ff: reference.load_ff,
            runs: reference.runs,
        }
    }
}

impl CalibrationView {
    /// The view of `calibrated`, with the models and the load in words.
    pub fn of(calibrated: &Calibrated, models: &str, load: &str, slew_s: Option<f64>) -> CalibrationView {
        let before = CellFigures::of(&calibrated.first_order);
        let after = CellFigures::of(&calibrated.cell);
        let stage = &calibrated.cell.stage().function.output;
        let devices = before
            .transistors
            .iter()
            .zip(&after.transistors)
            .filter(|(t, _)| &t.stage == stage)
            .map(|(first, now)| DeviceChange {
                name: now.name.clone(),
                input: now.input.clone(),
                first_order_w_over_l: first.w_over_l,
                calibrated_w_over_l: now.w_over_l,
                calibrated_drawn_w_over_l: now.drawn_w_over_l,
                change_percent: (now.w_over_l / first.w_over_l - 1.0) * 100.0,
            })
            .collect();
        CalibrationView {
            models: models.to_string(),
            load: load.to_string(),
            slew_ps: slew_s.map(|s| s * 1e12),
            tolerance_percent: calibrated.tolerance * 100.0,
            reference: ReferenceView::of(&calibrated.reference),
            devices,
            factors: calibrated.factors.clone(),
            refined_in_groups: calibrated.refined_in_groups,
            transitions: calibrated.transitions.clone(),
            worst_fall_before: calibrated.worst_before[0],
            worst_fall_after: calibrated.worst_after[0],
            worst_rise_before: calibrated.worst_before[1],
            worst_rise_after: calibrated.worst_after[1],
            runs: calibrated.runs,
            run_budget: calibrated.run_budget,
            simulator_seconds: calibrated.seconds,
        }
    }
}

/// A calibrated cell: its report at the calibrated sizes and its calibration.
#[derive(Debug, Clone, Serialize)]
pub struct CalibratedReport {
    /// The cell at its calibrated sizes.
    #[serde(flatten)]
    pub report: CellReport,
    /// How it was calibrated.
    pub calibration: CalibrationView,
}

/// The calibration section of the table.
pub fn write_section(view: &CalibrationView, name: &str, out: &mut dyn Write) -> io::Result<()> {
    let slew = match view.slew_ps {
        Some(ps) => format!("inputs ramp rail to rail in {} ps", number(ps)),
        None => "inputs step".to_string(),
    };
    writeln!(
        out,
        "{name}: calibrated in ngspice with {}; load {}; {slew}; tolerance {} %",
        view.models,
        view.load,
        number(view.tolerance_percent)
    )?;
    let r = &view.reference;
    writeln!(
        out,
        "reference inverter: NMOS {} PMOS {} W/L (first-order PMOS {}; {}), fall {} ps, rise {} ps at {} fF",
        number(r.nmos_w_over_l),
        number(r.pmos_w_over_l),
        number(r.pmos_first_order_w_over_l),
        r.how,
        number(r.fall_ps),
        number(r.rise_ps),
        number(r.load_ff)
    )?;
    let rows: Vec<Vec<String>> = view
        .devices
        .iter()
        .map(|d| {
            vec![
                d.name.clone(),
                d.input.clone(),
                number(d.first_order_w_over_l),
                number(d.calibrated_w_over_l),
                number(d.calibrated_drawn_w_over_l),
                number(d.change_percent),
            ]
        })
        .collect();
    super::table::write_headed(
        &["device", "input", "first-order W/L", "calibrated W/L", "drawn W/L", "change %"],
        &rows,
        out,
    )?;
    let factors: Vec<String> = view
        .factors
        .iter()
        .map(|f| match &f.input {
            Some(input) => format!("{} {input} x{}", f.network, number(f.factor)),
            None => format!("{} x{}", f.network, number(f.factor)),
        })
        .collect();
    writeln!(
        out,
        "factors{}: {}",
        if view.refined_in_groups { " (one per network did not settle: refined per input's devices)" } else { "" },
        factors.join(", ")
    )?;
    let rows: Vec<Vec<String>> = view
        .transitions
        .iter()
        .map(|t| {
            vec![
                format!("{} {}", t.input, t.input_edge),
                t.output_edge.to_string(),
                if t.held.is_empty() { "-".to_string() } else { t.held.clone() },
                number(t.load_ff),
                number(t.before_ps),
                number(t.before_ratio),
                number(t.after_ps),
                number(t.after_ratio),
            ]
        })
        .collect();
    super::table::write_headed(
        &["input", "output", "held", "load_fF", "before_ps", "before_ratio", "after_ps", "after_ratio"],
        &rows,
        out,
    )?;
    writeln!(
        out,
        "worst ratio: fall {} -> {}, rise {} -> {}; {} simulator runs of {} ({} s in ngspice)",
        number(view.worst_fall_before),
        number(view.worst_fall_after),
        number(view.worst_rise_before),
        number(view.worst_rise_after),
        view.runs,
        view.run_budget,
        number(view.simulator_seconds)
    )
}

/// The SPICE comment line of a calibrated cell: its models, load and worst ratios.
pub fn write_comment(cell: &CalibratedReport, out: &mut dyn Write) -> io::Result<()> {
    let view = &cell.calibration;
    writeln!(
        out,
        "* {}: calibrated in ngspice with {}, load {}: worst ratio fall {} rise {} (first-order {} and {})",
        cell.report.figures.name,
        view.models,
        view.load,
        number(view.worst_fall_after),
        number(view.worst_rise_after),
        number(view.worst_fall_before),
        number(view.worst_rise_before)
    )
}

/// Write calibrated cells in `format`: every format at the calibrated sizes; the table adds each
/// calibration section, JSON a `calibration` object per cell, SPICE comment lines ahead of the
/// library; CSV carries the calibrated sizes only.
pub fn write_calibrated(cells: &[CalibratedReport], format: Format, rows: Rows, out: &mut dyn Write) -> io::Result<()> {
    let reports: Vec<CellReport> = cells.iter().map(|c| c.report.clone()).collect();
    match format {
        Format::Table => {
            super::write_gates(&reports, format, rows, out)?;
            for cell in cells {
                writeln!(out)?;
                write_section(&cell.calibration, &cell.report.figures.name, out)?;
            }
            Ok(())
        }
        Format::Json => {
            match cells {
                [cell] => json::write_pretty(cell, out)?,
                _ => json::write_pretty(cells, out)?,
            }
            writeln!(out)
        }
        Format::Csv => super::write_gates(&reports, format, rows, out),
        Format::Spice => {
            for cell in cells {
                write_comment(cell, out)?;
            }
            super::write_gates(&reports, format, rows, out)
        }
    }
}
