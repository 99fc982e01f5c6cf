//! `widthwise effort`: measure by simulation each input's logical effort and parasitic delay on
//! both output edges, tau and the FO4 inverter delay, by fitting delay against fan-out, beside the
//! first-order figures.

use std::ffi::OsString;

use clap::ValueEnum;

use super::simulate::{self, ModelArgs};
use super::{GateArgs, OutputFile, Timed};
use crate::calibrate::effort::{self, Efforts, FANOUTS, LoadKind};
use crate::calibrate::{Runs, Setting};
use crate::error::Error;
use crate::number::format as number;
use crate::output::deck::Models;
use crate::sizing::StackOrder;

/// Measure by simulation each input's logical effort and parasitic delay on both output edges,
/// tau and the fan-out-of-4 inverter delay: ngspice times the gate (each input's worst transition,
/// as the delays pick it) and the reference inverter at fan-outs 1, 2, 4, 6 and 8, and a line
/// d = tau (g h + p) is fitted to each by least squares (the calibration of Sutherland, Sproull &
/// Harris, "Logical Effort", 1999, chapter 5). Printed beside the first-order logical effort, with
/// each fit's largest residual.
///
/// The load at fan-out h is h times the driving input's capacitance: with --models, an inverter
/// of the reference's proportions (the models' own gate capacitance); with the process's level-1
/// models, which carry no gate capacitance (no TOX), a capacitor of the process's gate
/// capacitance, and the output says so. --load-with chooses either way.
#[derive(Debug, Clone, clap::Args)]
#[command(after_help = super::AFTER_HELP)]
pub struct Args {
    /// The gate: an expression or a shorthand (one stage); - reads it from standard input.
    pub expression: OsString,
    /// How the gate is sized.
    #[command(flatten)]
    pub gate: GateArgs,
    /// The models and the inputs' slew.
    #[command(flatten)]
    pub models: ModelArgs,
    /// How each load is made [default: gates with --models, capacitors with the process's models].
    #[arg(long, value_enum, value_name = "HOW")]
    pub load_with: Option<LoadWith>,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
    /// Where to write.
    #[command(flatten)]
    pub output: OutputFile,
}

/// How the loads are made.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum LoadWith {
    /// Inverters of the reference's proportions: the models' own gate capacitance.
    Gates,
    /// Capacitors of the process's gate capacitance (for models without gate capacitance).
    Capacitors,
}

/// How `effort` writes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Format {
    /// A readable table.
    Table,
    /// JSON.
    Json,
}

#[derive(serde::Serialize)]
struct Report<'a> {
    name: &'a str,
    models: String,
    fanouts: [f64; 5],
    #[serde(flatten)]
    efforts: &'a Efforts,
}

/// Size the gate, measure and write.
pub fn run(args: Args) -> Result<(), Error> {
    let mut plan = super::plan(&args.gate, StackOrder::Default, Timed::default())?;
    let models = simulate::models(&args.models, &plan.process)?;
    crate::ngspice::check_installed(&crate::ngspice::Options::default())?;
    plan.process = simulate::with_model_names(&plan.process, &models);
    let kind = match (args.load_with, &models) {
        (Some(LoadWith::Gates), _) => LoadKind::Gates,
        (Some(LoadWith::Capacitors), _) | (None, Models::Process) => LoadKind::Capacitors,
        (None, Models::Library { .. }) => LoadKind::Gates,
    };
    let text = super::expression_text(&args.expression)?;
    let cell = super::read_and_size(&text, &plan, args.gate.pull_up.as_deref())?;
    crate::output::deck::check_size(&cell)?;
    if let (Some(path), Models::Library { nmos, pmos, .. }) = (&args.models.models, &models) {
        super::deck::check_library(path, args.models.models_section.as_deref(), &cell, [nmos, pmos])?;
    }
    let words = simulate::models_words(&models);
    let setting = Setting {
        models,
        load: crate::calibrate::BenchLoad::Fanout(1.0),
        slew_s: args.models.slew_ps.map(|ps| ps * 1e-12),
    };
    let mut runs = Runs::new(2);
    let efforts = effort::measure(&cell, &setting, kind, &mut runs, &crate::ngspice::Options::default())?;
    let report = Report { name: &cell.name, models: words, fanouts: FANOUTS, efforts: &efforts };
    crate::io::write_output(args.output.output.as_deref(), |out| match args.format {
        Format::Json => {
            crate::output::json::write_pretty(&report, out)?;
            writeln!(out)
        }
        Format::Table => write_table(&report, kind, out),
    })?;
    Ok(())
}

use std::io::Write;

fn write_table(report: &Report<'_>, kind: LoadKind, out: &mut dyn Write) -> std::io::Result<()> {
    let e = report.efforts;
    writeln!(out, "{}: logical effort measured in ngspice with {}", report.name, report.models)?;
    if kind == LoadKind::Capacitors {
        writeln!(
            out,
            "the process's level-1 models carry no gate capacitance (no TOX): each load is a capacitor of the \
             process's gate capacitance"
        )?;
    } else {
        writeln!(out, "each load: {}", e.loads)?;
    }
    let fanouts: Vec<String> = FANOUTS.iter().map(|&h| number(h)).collect();
    writeln!(
        out,
        "tau {} ps, FO4 inverter delay {} ps, inverter parasitic delay {} tau (fan-outs {}; fit residuals fall {} %, rise {} %)",
        number(e.tau_s * 1e12),
        number(e.fo4_s * 1e12),
        number(e.inverter_parasitic_delay),
        fanouts.join(", "),
        number(e.inverter_fits[0].residual_percent),
        number(e.inverter_fits[1].residual_percent)
    )?;
    let header = ["input", "output", "held", "g measured", "g first-order", "p measured (tau)", "residual %"];
    let rows: Vec<[String; 7]> = e
        .inputs
        .iter()
        .map(|i| {
            [
                i.input.clone(),
                i.output_edge.to_string(),
                if i.held.is_empty() { "-".into() } else { i.held.clone() },
                number(i.logical_effort),
                number(i.first_order_logical_effort),
                number(i.parasitic_delay),
                number(i.fit.residual_percent),
            ]
        })
        .collect();
    let mut widths = header.map(str::len);
    for row in &rows {
        for (w, c) in widths.iter_mut().zip(row) {
            *w = (*w).max(c.len());
        }
    }
    let line = |cells: Vec<&str>| {
        let padded: Vec<String> = cells.iter().zip(widths).map(|(c, w)| format!("{c:<w$}")).collect();
        padded.join("  ").trim_end().to_string()
    };
    writeln!(out, "{}", line(header.to_vec()))?;
    for row in &rows {
        writeln!(out, "{}", line(row.iter().map(String::as_str).collect()))?;
    }
    writeln!(out, "{} simulator runs", e.runs)
}
