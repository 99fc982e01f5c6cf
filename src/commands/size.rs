//! `widthwise size`: size one gate and report every transistor, input and network, with its
//! delays when asked.

use std::ffi::OsString;

use clap::ValueEnum;

use super::simulate::{self, CalibrateArgs};
use super::{DelayArgs, GateArgs, OutputFile, Timed};
use crate::error::Error;
use crate::output::{self, CellReport};
use crate::sizing::StackOrder;
use crate::{analysis, figures::CellFigures};

/// Size one gate and report every transistor, input and network.
#[derive(Debug, Clone, clap::Args)]
#[command(after_help = super::AFTER_HELP)]
pub struct Args {
    /// The gate: an expression such as "!(a & b | c)" or a shorthand such as aoi21; - reads it
    /// from standard input.
    pub expression: OsString,
    /// How the gate is sized.
    #[command(flatten)]
    pub gate: GateArgs,
    /// Delays and the stack-order search.
    #[command(flatten)]
    pub delay: DelayArgs,
    /// Calibration by simulation.
    #[command(flatten)]
    pub calibration: CalibrateArgs,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
    /// Where to write.
    #[command(flatten)]
    pub output: OutputFile,
    /// CSV rows (with --format csv only): one per gate, per transistor, per input, or per input and
    /// output edge (delays) [default: devices].
    #[arg(long, value_enum)]
    pub rows: Option<Rows>,
}

/// How `size` writes a gate.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Format {
    /// A readable table.
    Table,
    /// Comma-separated values (RFC 4180), one header row.
    Csv,
    /// JSON.
    Json,
    /// A SPICE subcircuit per gate.
    Spice,
}

impl From<Format> for output::Format {
    fn from(format: Format) -> output::Format {
        match format {
            Format::Table => output::Format::Table,
            Format::Csv => output::Format::Csv,
            Format::Json => output::Format::Json,
            Format::Spice => output::Format::Spice,
        }
    }
}

/// Which rows the CSV of `size` has.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Rows {
    /// One row per sized gate.
    Gates,
    /// One row per transistor: the keys to join on and the device's own values.
    Devices,
    /// One row per gate input.
    Inputs,
    /// One row per input and output edge: Elmore delays and the logical-effort view.
    Delays,
}

impl From<Rows> for output::Rows {
    fn from(rows: Rows) -> output::Rows {
        match rows {
            Rows::Gates => output::Rows::Gates,
            Rows::Devices => output::Rows::Devices,
            Rows::Inputs => output::Rows::Inputs,
            Rows::Delays => output::Rows::Delays,
        }
    }
}

/// Refuse what does not apply to the format asked for: rows where there are none, delay options
/// where nothing shows delays and they do not change the sizing.
fn check_applies(args: &Args) -> Result<(), Error> {
    if args.rows.is_some() && args.format != Format::Csv {
        return Err(Error::NotApplicable {
            option: "--rows",
            case: "with --format table, json or spice",
            why: "only the CSV has rows (the table shows every section, JSON every figure); add --format csv",
        });
    }
    let sizes_by_delay = args.gate.sizing.sizes_by_delay() || args.delay.stack_order == Some(StackOrder::Search);
    if args.format == Format::Spice && !sizes_by_delay {
        let given = [
            (args.delay.delays, "--delays"),
            (args.delay.load.fanout.is_some(), "--fanout"),
            (args.delay.load.load.is_some(), "--load"),
            (args.delay.load.load_ff.is_some(), "--load-ff"),
            (args.delay.diffusion_ratio.is_some(), "--diffusion-ratio"),
        ];
        if let Some((_, option)) = given.into_iter().find(|(given, _)| *given) {
            return Err(Error::NotApplicable {
                option,
                case: "with --format spice",
                why: "a netlist holds no delays, and the load sizes a gate only with --method elmore or \
                      --stack-order search; time the gate in the table, JSON or --format csv --rows delays",
            });
        }
    }
    Ok(())
}

/// Size the gate (and time it, when a delay option, the elmore method or the delays view asks),
/// then write it.
pub fn run(args: Args) -> Result<(), Error> {
    check_applies(&args)?;
    if args.calibration.calibrate {
        return run_calibrated(args);
    }
    if args.calibration.models.slew_ps.is_some() || args.calibration.models.models.is_some() {
        return Err(Error::NotApplicable {
            option: if args.calibration.models.models.is_some() { "--models" } else { "--slew-ps" },
            case: "without --calibrate",
            why: "only a calibration simulates the cell; add --calibrate, or write a deck with 'widthwise deck'",
        });
    }
    let Args { expression, gate, delay, format, output, rows, calibration: _ } = args;
    let rows = rows.unwrap_or(Rows::Devices);
    let timed = delay.wanted() || gate.sizing.sizes_by_delay() || rows == Rows::Delays;
    // Untimed, only the stack order of the delay options matters.
    let conditions = Timed { load: delay.load(), diffusion_ratio: delay.diffusion_ratio, matter: timed };
    let plan = super::plan(&gate, delay.stack_order.unwrap_or_default(), conditions)?;
    let text = super::expression_text(&expression)?;
    let forms = super::read_cells(&text, &plan, gate.pull_up.as_deref())?;
    let sized = if timed {
        // The form of least total W/L, timed.
        let untimed = crate::sizing::size_best(&forms, &plan)?;
        let (cell, report) = analysis::size_and_time(&untimed.logic, &plan)?;
        CellReport { figures: CellFigures::of(&cell), delays: Some(report) }
    } else {
        CellReport::of(&crate::sizing::size_best(&forms, &plan)?)
    };
    let (format, rows) = (format.into(), rows.into());
    crate::io::write_output(output.output.as_deref(), |out| {
        output::write_gates(std::slice::from_ref(&sized), format, rows, out)
    })?;
    Ok(())
}

/// `size --calibrate`: size the cell, then adjust its output stage in ngspice until each network's
/// worst transition matches the reference inverter's; write it at the calibrated sizes.
fn run_calibrated(args: Args) -> Result<(), Error> {
    let refused = [
        (args.delay.delays, "--delays"),
        (args.delay.diffusion_ratio.is_some(), "--diffusion-ratio"),
        (args.delay.stack_order == Some(StackOrder::Search), "--stack-order search"),
        (args.rows == Some(Rows::Delays), "--rows delays"),
    ];
    if let Some((_, option)) = refused.into_iter().find(|(given, _)| *given) {
        return Err(Error::NotApplicable {
            option,
            case: "with --calibrate",
            why: "the Elmore delays model the first-order sizes, not the calibrated ones; the calibration reports \
                  every transition's simulated delay before and after",
        });
    }
    let rows = args.rows.unwrap_or(Rows::Devices);
    let load = args.delay.load();
    let timed = Timed { load, diffusion_ratio: None, matter: false };
    let mut plan = super::plan(&args.gate, args.delay.stack_order.unwrap_or_default(), timed)?;
    if load.is_none() {
        plan.conditions.load = crate::sizing::Load::Femtofarads(plan.process.load_ff);
    }
    // Every input is checked, and ngspice found, before anything is sized or run.
    let simulation = simulate::simulation(&args.calibration, &plan.process, load)?;
    plan.process = simulate::with_model_names(&plan.process, &simulation.options.setting.models);
    let text = super::expression_text(&args.expression)?;
    let forms = super::read_cells(&text, &plan, args.gate.pull_up.as_deref())?;
    let sized = crate::sizing::size_best(&forms, &plan)?;
    simulate::check_cell(&simulation, &sized)?;
    let calibrated = simulate::calibrate_cell(&sized, &simulation)?;
    let view = output::calibration::CalibrationView::of(
        &calibrated,
        &simulation.models,
        &simulation.load,
        simulation.options.setting.slew_s,
    );
    let report = output::calibration::CalibratedReport { report: CellReport::of(&calibrated.cell), calibration: view };
    crate::io::write_output(args.output.output.as_deref(), |out| {
        output::calibration::write_calibrated(std::slice::from_ref(&report), args.format.into(), rows.into(), out)
    })?;
    Ok(())
}
