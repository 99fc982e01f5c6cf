//! `widthwise deck`: write a self-contained SPICE simulation deck of one gate, its reference
//! inverter and every input's worst-case transition; with `--run`, run it through ngspice and
//! print the measured delays.

use std::ffi::OsString;
use std::path::{Path, PathBuf};
use std::sync::Arc;

use clap::ValueEnum;

use super::{GateArgs, LoadArgs, Timed};
use crate::cell::SizedCell;
use crate::diagnostic::{Diagnostic, Severity};
use crate::error::Error;
use crate::figures::CellFigures;
use crate::models::{self, MAX_LIBRARY_BYTES};
use crate::output::deck::{self, DeckError, DeckLoad, DeckOptions, Models, Window};
use crate::output::measured;
use crate::process::Process;
use crate::sizing::{Load, StackOrder};

/// Write a self-contained SPICE simulation deck: models, the gate, the reference inverter at the
/// same drive, and every input's worst-case transition on both output edges, with .tran and .meas;
/// with --run, widthwise runs it through ngspice and prints the delays it measured.
///
/// The deck has one copy of the gate per worst-case transition (an input toggling with the side
/// inputs held as the delays pick them: the slowest Elmore delay over every side-input vector), each
/// with its own sources and load (--load-ff, --load or --fanout, else the process's load_ff), and one
/// copy of the reference inverter per output edge; one transient run measures them all.
/// Measurements: tpd_<input>_fall_gate and tpd_<input>_rise_gate (named by the output's edge),
/// tpd_fall_ref and tpd_rise_ref, each from the input crossing supply/2 to the output crossing
/// supply/2. A cell of several stages (and2, xor2, mux2 ...) is simulated whole: per pin and output
/// edge the vector of the other pins with the slowest Elmore delay through the stages the pin
/// switches, measured pin to output and, as tpd_<input>_<edge>_stage, from the net the output
/// stage switches on; its delay is stated against its logical-effort estimate sum(g h + p), the
/// output stage's against the reference inverter's (up to 16 pins). Devices are written as W=<finger width> with SPICE multiplicity m=<fingers>, with
/// AS/AD/PS/PD when the process sets diffusion_length_nm. The built-in models are level 1 from the
/// process (threshold, KP, body effect as GAMMA, LAMBDA=0, no parasitic capacitance); --models
/// includes a library instead, whose model names (binned NAME.N sets too, through its .include
/// and .lib files) are checked against every drawn device before anything is written or run.
///
/// Without --run the deck is written and nothing is simulated ('ngspice -b deck.sp' runs it). With
/// --run, widthwise runs ngspice itself (one thread, a time limit) and prints every transition's
/// delay beside the reference inverter's; a measurement that fails is an error naming the
/// transition (exit 1), and a missing ngspice one clear error (exit 2).
#[derive(Debug, Clone, clap::Args)]
#[command(after_help = super::AFTER_HELP)]
pub struct Args {
    /// The gate: an expression or a shorthand; - reads it from standard input.
    pub expression: OsString,
    /// How the gate is sized.
    #[command(flatten)]
    pub gate: GateArgs,
    /// A model library to use instead of level-1 models from the process: included whole
    /// (`.include`, by absolute path), or one section of it with --models-section. It must be a
    /// regular file. Its model names are checked before anything is written.
    #[arg(long, value_name = "FILE")]
    pub models: Option<PathBuf>,
    /// Read only this section of the --models library (written `.lib FILE NAME`): a library with
    /// `.lib NAME` ... `.endl` sections (corners) must be read through one.
    #[arg(long, value_name = "NAME", requires = "models", value_parser = section_name)]
    pub models_section: Option<String>,
    /// The NMOS model's name in the --models library, a plain model or the base name of a binned
    /// set NAME.1, NAME.2 ... (default: the process's nmos_model).
    #[arg(long, value_name = "NAME", requires = "models", value_parser = model_name)]
    pub nmos_model: Option<String>,
    /// The PMOS model's name in the --models library (default: the process's pmos_model).
    #[arg(long, value_name = "NAME", requires = "models", value_parser = model_name)]
    pub pmos_model: Option<String>,
    /// Add a capacitor to ground on every node of the gate and the reference inverter for its
    /// diffusions: diffusion_cap_ff_per_um x drawn width, a diffusion shared by two series devices
    /// counted once (the wider one). With --models only beside --count-diffusion-twice.
    #[arg(long)]
    pub diffusion_capacitance: bool,
    /// With --models and --diffusion-capacitance: write the capacitors although the library's own
    /// junction model charges the same diffusions.
    #[arg(long, requires = "diffusion_capacitance")]
    pub count_diffusion_twice: bool,
    /// Add an ngspice .control block so that 'ngspice -b deck.sp' prints each gate delay, the matching
    /// reference delay and their ratio.
    #[arg(long, conflicts_with = "run")]
    pub summary: bool,
    /// The load on every copy of the gate (with --fanout, H times the toggling input's capacitance,
    /// and the reference inverter H times its own) [deck's default: the process's load_ff]. The
    /// elmore method sizes against it.
    #[command(flatten)]
    pub load: LoadArgs,
    /// The inputs ramp linearly rail to rail in PS picoseconds (default: a step, a thousandth of
    /// the run's time scale).
    #[arg(long, value_name = "PS", value_parser = super::positive_number)]
    pub slew_ps: Option<f64>,
    /// Run the deck through ngspice (it must be on PATH) and print the measured delays instead of
    /// the deck.
    #[arg(long)]
    pub run: bool,
    /// How --run prints the delays [default: table].
    #[arg(long, value_enum, requires = "run")]
    pub format: Option<Format>,
    /// Write to FILE (atomically) instead of standard output.
    #[arg(short, long, value_name = "FILE")]
    pub output: Option<PathBuf>,
}

/// How `deck --run` prints the measured delays.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Format {
    /// A readable table.
    Table,
    /// Comma-separated values (RFC 4180), one row per transition.
    Csv,
    /// JSON.
    Json,
}

/// A device model's name: one a SPICE instance line can hold, not a reserved name.
pub(crate) fn model_name(text: &str) -> Result<String, String> {
    crate::process::check_model_name(text)
        .map_err(|why| format!("{why}, found '{}'", crate::diagnostic::escaped(text)))?;
    Ok(text.to_string())
}

/// A section name a `.lib` line can hold.
pub(crate) fn section_name(text: &str) -> Result<String, String> {
    models::check_section_name(text).map_err(|why| why.to_string())?;
    Ok(text.to_string())
}

/// Deck options from the command line; a `--models` file must be a regular file (it is named by its
/// absolute path).
fn deck_options(args: &Args, process: &Process, load: DeckLoad) -> Result<DeckOptions, Error> {
    let models = match &args.models {
        None => Models::Process,
        Some(path) => {
            let absolute = crate::io::absolute_regular(path, "the --models file")?;
            let include = crate::io::utf8_text(absolute.into_os_string().into_encoded_bytes(), "the --models path")?;
            let nmos = args.nmos_model.clone().unwrap_or_else(|| process.nmos_model.clone());
            let pmos = args.pmos_model.clone().unwrap_or_else(|| process.pmos_model.clone());
            Models::library(include, args.models_section.clone(), nmos, pmos)?
        }
    };
    if args.diffusion_capacitance && args.models.is_some() && !args.count_diffusion_twice {
        return Err(DeckError::DoubleDiffusion.into());
    }
    let unit = match load {
        DeckLoad::Femtofarads(load_ff) => load_ff,
        DeckLoad::Fanout(h) => h * process.unit_capacitance_ff(),
    };
    if !(unit > 0.0 && unit.is_finite()) {
        return Err(DeckError::NoLoad { load_ff: unit }.into());
    }
    Ok(DeckOptions {
        models,
        diffusion_capacitance: args.diffusion_capacitance,
        summary: args.summary,
        load,
        slew_s: args.slew_ps.map(|ps| ps * 1e-12),
        window: Window::Estimate,
    })
}

/// Scan the library as ngspice reads it and check every device of the deck against it; warnings
/// (what the scan cannot check) go to standard error.
pub(crate) fn check_library(
    path: &Path,
    section: Option<&str>,
    cell: &SizedCell,
    names: [&str; 2],
) -> Result<(), Error> {
    let text = crate::io::read_text(path, MAX_LIBRARY_BYTES, "the --models file")?;
    let mut read = |file: &Path| {
        crate::io::read_text(file, MAX_LIBRARY_BYTES, "a file the model library names").map_err(std::io::Error::other)
    };
    let library = models::scan(path, &text, section, &mut read);
    // Warnings of a library that cannot be read as asked would only bury its error.
    for warning in library.warnings.iter().filter(|_| library.errors.is_empty()) {
        crate::io::diagnose(&library.diagnostic(warning.error.to_string(), warning.at, Severity::Warning).render());
    }
    let gate = CellFigures::of(cell);
    let checked =
        models::scan_errors(&library).and_then(|()| models::check_devices(&library, &deck::device_uses(&gate, names)));
    match checked {
        Ok(warnings) => {
            for warning in warnings {
                crate::io::diagnose(&Diagnostic::warning(warning).render());
            }
            Ok(())
        }
        Err(error) => Err(Error::Models { error: Box::new(error), library: Box::new(library) }),
    }
}

/// Check every input, size the gate and write its deck, or run it and write the delays.
pub fn run(args: Args) -> Result<(), Error> {
    // The deck's load (the process's load_ff unless given) is the plan's: the elmore method sizes
    // against it, at the default diffusion ratio.
    let given = args.load.load();
    let mut plan = super::plan(&args.gate, StackOrder::Default, Timed { load: given, ..Timed::default() })?;
    if given.is_none() {
        plan.conditions.load = Load::Femtofarads(plan.process.load_ff);
    }
    let load = match given {
        Some(Load::Units(c)) => DeckLoad::Femtofarads(c * plan.process.unit_capacitance_ff()),
        Some(Load::Femtofarads(ff)) => DeckLoad::Femtofarads(ff),
        Some(Load::Fanout(h)) => DeckLoad::Fanout(h),
        None => DeckLoad::Femtofarads(plan.process.load_ff),
    };
    // Every input is checked before anything is written or run.
    let deck = deck_options(&args, &plan.process, load)?;
    if let Models::Library { nmos, pmos, .. } = &deck.models {
        // The deck's models are the ones in use: no name of the gate may take theirs.
        let process = Process { nmos_model: nmos.clone(), pmos_model: pmos.clone(), ..(*plan.process).clone() };
        plan.process = Arc::new(process);
    }
    let text = super::expression_text(&args.expression)?;
    let sized = super::read_and_size(&text, &plan, args.gate.pull_up.as_deref())?;
    deck::check_size(&sized)?;
    if let (Models::Library { include, section, nmos, pmos }, Some(_)) = (&deck.models, &args.models) {
        check_library(Path::new(include), section.as_deref(), &sized, [nmos, pmos])?;
    }
    let simulator = crate::ngspice::Options::default();
    let measured = if sized.is_single_stage() {
        let transitions = deck::transitions_under(&sized, plan.conditions.load)?;
        if !args.run {
            crate::io::write_output(args.output.as_deref(), |out| deck::write_deck(&sized, &transitions, &deck, out))?;
            return Ok(());
        }
        crate::measure::measure(&sized, &transitions, &deck, &simulator)?
    } else {
        let transitions = deck::pin_transitions(&sized, plan.conditions.load)?;
        if !args.run {
            crate::io::write_output(args.output.as_deref(), |out| {
                deck::write_cell_deck(&sized, &transitions, &deck, out)
            })?;
            return Ok(());
        }
        crate::measure::measure_cell(&sized, &transitions, &deck, &simulator)?
    };
    crate::io::write_output(args.output.as_deref(), |out| match args.format.unwrap_or(Format::Table) {
        Format::Table => measured::write_table(&measured, out),
        Format::Csv => measured::write_csv(&measured, out),
        Format::Json => measured::write_json(&measured, out),
    })?;
    Ok(())
}
