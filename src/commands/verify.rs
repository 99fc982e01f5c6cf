//! `widthwise verify`: prove the sized netlist right on every input vector (or a stated sample),
//! switch by switch.

use std::ffi::OsString;

use clap::ValueEnum;

use super::{GateArgs, OutputFile, Timed, estimates_note};
use crate::error::Error;
use crate::figures::CellFigures;
use crate::output;
use crate::sizing::StackOrder;
use crate::verify::{self, DEFAULT_RANDOM_VECTORS, DEFAULT_SEED, MAX_RANDOM_VECTORS, VerifyOptions};

/// Help shown after `widthwise verify --help`.
pub const AFTER_HELP: &str = concat!(
    "\
Exit codes: 0 every check holds, 1 a check failed (the first failing vector is reported), 2 bad input
or usage.

Vectors: every one of the 2^n input vectors up to 30 inputs (bit-parallel, 64 per word, on every
core); past 30 inputs, the number given by --random-vectors (default 1048576) of pseudo-random ones
from --seed (default 26719299881249566), with vector 0 all zeros and vector 1 all ones. Input 1 is
bit 0 of a vector's index. The exact worst case over vectors (repeated inputs) is enumerated up to 16
inputs. The work, vectors / 64 x input occurrences, must be within --work-budget (default
2^30 = 1073741824 units: every gate up to 20 inputs, 30 inputs with up to 64 occurrences), or
nothing is checked, exit 2.

",
    estimates_note!()
);

/// Prove the sized netlist right: simulate its switches on every input vector and check that
/// pull-up and pull-down never both conduct, are never both off, and give the expression.
#[derive(Debug, Clone, clap::Args)]
#[command(after_help = AFTER_HELP)]
pub struct Args {
    /// The gate: an expression or a shorthand; - reads it from standard input.
    pub expression: OsString,
    /// How the gate is sized (the worst-case figures depend on it).
    #[command(flatten)]
    pub gate: GateArgs,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
    /// Where to write.
    #[command(flatten)]
    pub output: OutputFile,
    /// Pseudo-random vectors to check when the gate has too many inputs to check them all.
    #[arg(long, value_name = "N", default_value_t = DEFAULT_RANDOM_VECTORS, value_parser = random_vectors)]
    pub random_vectors: u64,
    /// Seed of the pseudo-random vectors.
    #[arg(long, value_name = "SEED", default_value_t = DEFAULT_SEED)]
    pub seed: u64,
}

/// How `verify` writes its result (SPICE has no form for it).
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

fn random_vectors(text: &str) -> Result<u64, String> {
    let value: u64 = text.parse().map_err(|_| format!("expected a whole number, found '{text}'"))?;
    if value == 0 || value > MAX_RANDOM_VECTORS {
        return Err(format!("must be 1 to {MAX_RANDOM_VECTORS}, found '{text}'"));
    }
    Ok(value)
}

/// Size the gate, verify its netlist, write the result; a failed check is the exit code (1).
pub fn run(args: Args) -> Result<(), Error> {
    let Args { expression, gate, format, output, random_vectors, seed } = args;
    let text = super::expression_text(&expression)?;
    let plan = super::plan(&gate, StackOrder::Default, Timed::default())?;
    let sized = super::read_and_size(&text, &plan, gate.pull_up.as_deref())?;
    let options = VerifyOptions { random_vectors, seed, work_budget: gate.work_budget, ..VerifyOptions::default() };
    let result = verify::verify(&CellFigures::of(&sized), &options)?;
    let format = format.into();
    crate::io::write_output(output.output.as_deref(), |out| {
        output::verify::write_verifications(std::slice::from_ref(&result), format, out)
    })?;
    Ok(result.outcome()?)
}
