//! `widthwise paths`: list the conducting paths of each network, weakest first, and count them all.

use std::ffi::OsString;

use clap::ValueEnum;

use super::{GateArgs, OutputFile, Timed};
use crate::error::Error;
use crate::figures::{self, CellFigures};
use crate::output;
use crate::paths::{self, MAX_LISTED_PATHS};
use crate::sizing::StackOrder;

/// List the conducting paths of each network, weakest first, and count them all.
#[derive(Debug, Clone, clap::Args)]
#[command(after_help = super::AFTER_HELP)]
pub struct Args {
    /// The gate: an expression or a shorthand; - reads it from standard input.
    pub expression: OsString,
    /// How the gate is sized (path resistances depend on it).
    #[command(flatten)]
    pub gate: GateArgs,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
    /// Where to write.
    #[command(flatten)]
    pub output: OutputFile,
    /// How many paths to list per network (the count covers all of them).
    #[arg(long, default_value_t = 20, value_parser = path_limit)]
    pub limit: usize,
}

/// How `paths` writes its listing (SPICE has no form for it).
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Format {
    /// A readable table.
    Table,
    /// Comma-separated values (RFC 4180), one header row.
    Csv,
    /// JSON.
    Json,
}

impl From<Format> for output::Format {
    fn from(format: Format) -> output::Format {
        match format {
            Format::Table => output::Format::Table,
            Format::Csv => output::Format::Csv,
            Format::Json => output::Format::Json,
        }
    }
}

fn path_limit(text: &str) -> Result<usize, String> {
    let value: usize = text.parse().map_err(|_| format!("expected a whole number, found '{text}'"))?;
    if value > MAX_LISTED_PATHS {
        return Err(format!("at most {MAX_LISTED_PATHS} paths are listed, found '{text}'"));
    }
    Ok(value)
}

/// Size the gate, refuse a listing past its limits, list and write.
pub fn run(args: Args) -> Result<(), Error> {
    let Args { expression, gate, format, output, limit } = args;
    // The elmore method sizes at fan-out 1 and the default diffusion ratio.
    let plan = super::plan(&gate, StackOrder::Default, Timed::default())?;
    let text = super::expression_text(&expression)?;
    let sized = super::read_and_size(&text, &plan, gate.pull_up.as_deref())?;
    for network in sized.stages.iter().flat_map(|s| s.networks.values()) {
        paths::check_listing(&network.network, limit)?;
    }
    let listings = figures::path_listings(&sized, limit);
    let figures = CellFigures::of(&sized);
    let format = format.into();
    crate::io::write_output(output.output.as_deref(), |out| output::write_paths(&figures, &listings, format, out))?;
    Ok(())
}
