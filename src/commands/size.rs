//! `widthwise size`: size one gate and report every transistor, input and network, with its
//! delays when asked.

use std::ffi::OsString;

use clap::ValueEnum;

use super::simulate::{self, CalibrateArgs};
use super::{DelayArgs, GateArgs, OutputFile, Timed};
use crate::error::Error;
use crate::output::{self, CellReport, schematic_cell};
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
    /// Print the elmore method's trade-off instead of one sizing: the least total W/L for each delay
    /// target from the ratio longest-path sizing reaches down to the least reachable within 10x its
    /// total W/L, with longest-path and min-area beside it (table, csv, json, or svg: a plot), at the
    /// load given (default fan-out 1).
    #[arg(long)]
    pub tradeoff: bool,
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
    /// The sized cell's schematic as a plain SVG picture: every device with its W/L, the weakest
    /// path of each network marked; with --tradeoff, the trade-off plot.
    Svg,
}

impl Format {
    /// The writers' format for the report; `None` for the pictures, which their own writers draw.
    fn report(self) -> Option<output::Format> {
        match self {
            Format::Table => Some(output::Format::Table),
            Format::Csv => Some(output::Format::Csv),
            Format::Json => Some(output::Format::Json),
            Format::Spice => Some(output::Format::Spice),
            Format::Svg => None,
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
    if args.tradeoff {
        let refused = [
            (args.format == Format::Spice, "--format spice", "a netlist holds one sizing, the curve many"),
            (args.rows.is_some(), "--rows", "the trade-off's CSV has one row per point"),
            (args.gate.sizing.delay_target.is_some(), "--delay-target", "the curve covers every delay target"),
            (
                args.gate.sizing.worst_case == Some(crate::sizing::WorstCase::Vectors),
                "--worst-case vectors",
                "the curve is the geometric program over paths; size one target against every vector with \
                 --method elmore --worst-case vectors --delay-target RATIO",
            ),
            (
                args.delay.stack_order == Some(StackOrder::Search),
                "--stack-order search",
                "the curve is drawn on one stack order: give default or written",
            ),
        ];
        if let Some((_, option, why)) = refused.into_iter().find(|(given, _, _)| *given) {
            return Err(Error::NotApplicable { option, case: "with --tradeoff", why });
        }
    }
    if args.rows.is_some() && args.format != Format::Csv {
        return Err(Error::NotApplicable {
            option: "--rows",
            case: "with --format table, json, spice or svg",
            why: "only the CSV has rows (the table shows every section, JSON every figure); add --format csv",
        });
    }
    let sizes_by_delay = args.gate.sizing.sizes_by_delay() || args.delay.stack_order == Some(StackOrder::Search);
    if matches!(args.format, Format::Spice | Format::Svg) && !sizes_by_delay {
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
                case: "with --format spice or svg",
                why: "a netlist or a schematic holds no delays, and the load sizes a gate only with --method \
                      elmore or --stack-order search; time the gate in the table, JSON or --format csv --rows delays",
            });
        }
    }
    Ok(())
}

/// Size the gate (and time it, when a delay option, the elmore method or the delays view asks),
/// then write it.
pub fn run(args: Args) -> Result<(), Error> {
    check_applies(&args)?;
    if args.tradeoff {
        return run_tradeoff(args);
    }
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
    let Args { expression, gate, delay, format, output, rows, .. } = args;
    let rows = rows.unwrap_or(Rows::Devices);
    let timed = delay.wanted() || gate.sizing.sizes_by_delay() || rows == Rows::Delays;
    // Untimed, only the stack order of the delay options matters.
    let conditions = Timed { load: delay.load(), diffusion_ratio: delay.diffusion_ratio, matter: timed };
    let plan = super::plan(&gate, delay.stack_order.unwrap_or_default(), conditions)?;
    let text = super::expression_text(&expression)?;
    let forms = super::read_cells(&text, &plan, gate.pull_up.as_deref())?;
    let (cell, sized) = if timed {
        // The form of least total W/L, timed.
        let untimed = crate::sizing::size_best(&forms, &plan)?;
        if untimed.is_single_stage() {
            let (cell, report) = analysis::size_and_time(&untimed.logic, &plan)?;
            let figures = CellFigures::of(&cell);
            (cell, CellReport { figures, delays: Some(report), cell_delays: None })
        } else {
            // Through every stage; the form kept is the untimed choice, its other forms named.
            let (mut cell, timing) = analysis::size_and_time_stages(&untimed.logic, &plan)?;
            cell.other_forms = untimed.other_forms;
            let figures = CellFigures::of(&cell);
            (cell, CellReport { figures, delays: None, cell_delays: Some(timing) })
        }
    } else {
        let cell = crate::sizing::size_best(&forms, &plan)?;
        let report = CellReport::of(&cell);
        (cell, report)
    };
    for warning in output::warnings::of(&sized) {
        crate::io::diagnose(&crate::diagnostic::Diagnostic::warning(warning).render());
    }
    let Some(format) = format.report() else {
        let layout = schematic_cell::layout(&cell, &sized.figures)?;
        crate::io::write_output(output.output.as_deref(), |out| layout.write_svg(out))?;
        return Ok(());
    };
    let rows = rows.into();
    crate::io::write_output(output.output.as_deref(), |out| {
        output::write_gates(std::slice::from_ref(&sized), format, rows, out)
    })?;
    Ok(())
}

/// `size --tradeoff`: the elmore method's curve for the form of least total W/L.
fn run_tradeoff(args: Args) -> Result<(), Error> {
    let Args { expression, gate, delay, format, output, .. } = args;
    let conditions = Timed { load: delay.load(), diffusion_ratio: delay.diffusion_ratio, matter: true };
    let plan = super::plan(&gate, delay.stack_order.unwrap_or_default(), conditions)?;
    let text = super::expression_text(&expression)?;
    let forms = super::read_cells(&text, &plan, gate.pull_up.as_deref())?;
    let cell = crate::sizing::size_best(&forms, &plan)?;
    let meter = crate::budget::Meter::new(plan.budget);
    let tradeoff = crate::sizing::tradeoff::tradeoff(&cell.logic, &plan, &meter)?;
    let load = match plan.conditions.load {
        crate::sizing::Load::Fanout(h) => format!("fan-out {}", output::number(h)),
        crate::sizing::Load::Units(c) => format!("{} C", output::number(c)),
        crate::sizing::Load::Femtofarads(ff) => format!("{} fF", output::number(ff)),
    };
    let figures = CellFigures::of(&cell);
    let report = output::tradeoff::TradeoffReport {
        gate: figures.name.clone(),
        expression: figures.expression.clone(),
        load,
        diffusion_ratio: plan.conditions.diffusion_ratio,
        tradeoff,
    };
    crate::io::write_output(output.output.as_deref(), |out| match format {
        Format::Table => output::tradeoff::write_table(&report, out),
        Format::Csv => output::tradeoff::write_csv(&report, out),
        Format::Json => output::tradeoff::write_json(&report, out),
        Format::Svg => output::tradeoff::write_svg(&report, out),
        Format::Spice => Err(std::io::Error::other("a netlist holds one sizing")),
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
        (args.tradeoff, "--tradeoff"),
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
    let Some(format) = args.format.report() else {
        // The schematic of the calibrated cell.
        let layout = schematic_cell::layout(&calibrated.cell, &report.report.figures)?;
        crate::io::write_output(args.output.output.as_deref(), |out| layout.write_svg(out))?;
        return Ok(());
    };
    crate::io::write_output(args.output.output.as_deref(), |out| {
        output::calibration::write_calibrated(std::slice::from_ref(&report), format, rows.into(), out)
    })?;
    Ok(())
}
