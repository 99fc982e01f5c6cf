//! `widthwise deck`: write a self-contained SPICE simulation deck of one gate, its reference
//! inverter and every input's worst-case transition.

use std::ffi::OsString;
use std::path::PathBuf;
use std::sync::Arc;

use super::{GateArgs, Timed};
use crate::error::Error;
use crate::output::deck::{self, DeckError, DeckOptions, Models};
use crate::process::Process;
use crate::sizing::{Load, StackOrder};

/// Write a self-contained SPICE simulation deck: models, the gate, the reference inverter at the
/// same drive, and every input's worst-case transition on both output edges, with .tran and .meas.
///
/// The deck has one copy of the gate per worst-case transition (an input toggling with the side
/// inputs held as the delays pick them: the slowest Elmore delay over every side-input vector), each
/// with its own sources and load (--load or --load-ff, else the process's load_ff), and one copy of
/// the reference inverter per output edge; one transient run measures them all. Measurements: tpd_<input>_fall_gate and tpd_<input>_rise_gate
/// (named by the output's edge), tpd_fall_ref and tpd_rise_ref, each from the input crossing
/// supply/2 to the output crossing supply/2. Run it with, e.g., 'ngspice -b deck.sp'; widthwise
/// never runs a simulator. Devices are written as W=<finger width> with SPICE multiplicity
/// m=<fingers>. The built-in models are level 1 from the process (threshold, KP, body effect as
/// GAMMA, LAMBDA=0, no parasitic capacitance).
#[derive(Debug, Clone, clap::Args)]
#[command(after_help = super::AFTER_HELP)]
pub struct Args {
    /// The gate: an expression or a shorthand; - reads it from standard input.
    pub expression: OsString,
    /// How the gate is sized.
    #[command(flatten)]
    pub gate: GateArgs,
    /// Include this model library (`.include`, written as an absolute path) instead of writing level-1
    /// models from the process. It must be a regular file.
    #[arg(long, value_name = "FILE")]
    pub models: Option<PathBuf>,
    /// The NMOS model's name in the --models library (default: the process's nmos_model).
    #[arg(long, value_name = "NAME", requires = "models", value_parser = model_name)]
    pub nmos_model: Option<String>,
    /// The PMOS model's name in the --models library (default: the process's pmos_model).
    #[arg(long, value_name = "NAME", requires = "models", value_parser = model_name)]
    pub pmos_model: Option<String>,
    /// Add a capacitor to ground on every node of the gate and the reference inverter for its
    /// diffusions: diffusion_cap_ff_per_um x drawn width, a diffusion shared by two series devices
    /// counted once (the wider one).
    #[arg(long)]
    pub diffusion_capacitance: bool,
    /// Add an ngspice .control block so that 'ngspice -b deck.sp' prints each gate delay, the matching
    /// reference delay and their ratio.
    #[arg(long)]
    pub summary: bool,
    /// The load on the output of every copy of the gate and of the reference inverter, in units of C,
    /// the gate capacitance of a unit transistor (gate_cap_ff_per_um x unit_width_nm) [default: the
    /// process's load_ff]. The elmore method sizes against it.
    #[arg(long, value_name = "C", value_parser = super::positive_number, conflicts_with = "load_ff")]
    pub load: Option<f64>,
    /// The same load in fF [default: the process's load_ff].
    #[arg(long, value_name = "FF", value_parser = super::positive_number)]
    pub load_ff: Option<f64>,
    /// Write to FILE (atomically) instead of standard output.
    #[arg(short, long, value_name = "FILE")]
    pub output: Option<PathBuf>,
}

/// A device model's name ([`crate::process::check_model_name`]).
fn model_name(text: &str) -> Result<String, String> {
    crate::process::check_model_name(text)
        .map_err(|why| format!("{why}, found '{}'", crate::diagnostic::escaped(text)))?;
    Ok(text.to_string())
}

/// Deck options from the command line; a `--models` file must be a regular file (it is named by its
/// absolute path).
fn deck_options(args: &Args, process: &Process, load_ff: f64) -> Result<DeckOptions, Error> {
    let models = match &args.models {
        None => Models::Process,
        Some(path) => {
            let absolute = crate::io::absolute_regular(path, "the --models file")?;
            let include = crate::io::utf8_text(absolute.into_os_string().into_encoded_bytes(), "the --models path")?;
            let nmos = args.nmos_model.clone().unwrap_or_else(|| process.nmos_model.clone());
            let pmos = args.pmos_model.clone().unwrap_or_else(|| process.pmos_model.clone());
            Models::library(include, nmos, pmos)?
        }
    };
    if !(load_ff > 0.0 && load_ff.is_finite()) {
        return Err(DeckError::NoLoad { load_ff }.into());
    }
    Ok(DeckOptions { models, diffusion_capacitance: args.diffusion_capacitance, summary: args.summary, load_ff })
}

/// Check every input, size the gate and write its deck.
pub fn run(args: Args) -> Result<(), Error> {
    // The deck's load (the process's load_ff unless given) is the plan's: the elmore method sizes
    // against it, at the default diffusion ratio.
    let given = match (args.load, args.load_ff) {
        (Some(c), _) => Some(Load::Units(c)),
        (None, Some(ff)) => Some(Load::Femtofarads(ff)),
        (None, None) => None,
    };
    let mut plan = super::plan(&args.gate, StackOrder::Default, Timed { load: given, ..Timed::default() })?;
    if given.is_none() {
        plan.conditions.load = Load::Femtofarads(plan.process.load_ff);
    }
    let load_ff = match given {
        Some(Load::Units(c)) => c * plan.process.unit_capacitance_ff(),
        Some(Load::Femtofarads(ff)) => ff,
        Some(Load::Fanout(_)) | None => plan.process.load_ff,
    };
    // Every input is checked before anything is written.
    let deck = deck_options(&args, &plan.process, load_ff)?;
    if let Models::Library { nmos, pmos, .. } = &deck.models {
        // The deck's models are the ones in use: no name of the gate may take theirs.
        let process = Process { nmos_model: nmos.clone(), pmos_model: pmos.clone(), ..(*plan.process).clone() };
        plan.process = Arc::new(process);
    }
    let text = super::expression_text(&args.expression)?;
    let sized = super::read_and_size(&text, &plan, args.gate.pull_up.as_deref())?;
    deck::check_size(&sized)?;
    let transitions = deck::transitions(&sized, deck.load_ff)?;
    crate::io::write_output(args.output.as_deref(), |out| deck::write_deck(&sized, &transitions, &deck, out))?;
    Ok(())
}
