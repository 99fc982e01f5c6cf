//! `widthwise size`: size one gate and report every transistor, input and network, with its
//! delays when asked.

use std::ffi::OsString;

use clap::ValueEnum;

use super::{DelayArgs, GateArgs, OutputFile, gate_options, process_file, read_gate};
use crate::delay::{self, DelayOptions};
use crate::error::Error;
use crate::output;
use crate::sizing::Method;

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
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
    /// Where to write.
    #[command(flatten)]
    pub output: OutputFile,
    /// CSV rows: one per gate, per transistor (with its input's and gate's figures), per input, or
    /// per input and output edge (delays).
    #[arg(long, value_enum, default_value_t = Rows::Devices)]
    pub rows: Rows,
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
    /// One row per transistor, with its input's and its gate's figures.
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

/// Size the gate (and time it, when a delay option, the elmore method or the delays view asks),
/// then write it.
pub fn run(args: Args) -> Result<(), Error> {
    let Args { expression, gate, delay, format, output, rows } = args;
    let options = gate_options(&gate)?;
    let text = super::expression_text(&expression)?;
    let sized = if delay.wanted() || gate.method == Method::Elmore || rows == Rows::Delays {
        let delay = DelayOptions { work_budget: gate.work_budget, ..delay.options(process_file(&gate, &options))? };
        let function = read_gate(&text, &options, &delay)?;
        delay::size_and_time(&function, &options, &delay, Some(&options.process))?
    } else {
        // Untimed: only the stack order of the delay options matters.
        let order = DelayOptions {
            stack_order: delay.stack_order.unwrap_or_default(),
            work_budget: gate.work_budget,
            ..DelayOptions::default()
        };
        super::read_and_size(&text, &options, &order)?
    };
    let (format, rows) = (format.into(), rows.into());
    crate::io::write_output(output.output.as_deref(), |out| {
        output::write_gates(std::slice::from_ref(&sized), format, rows, out)
    })?;
    Ok(())
}
