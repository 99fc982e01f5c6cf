//! What the commands that run ngspice in the loop share (`size --calibrate`, `batch --calibrate`,
//! `effort`): the model-library options, the tolerance, the run budget and the area cap, and how
//! one cell is calibrated from them. Not a command of its own.

use std::path::{Path, PathBuf};
use std::sync::Arc;

use crate::calibrate::{
    self, BenchLoad, CalibrateError, Calibrated, DEFAULT_AREA_CAP, DEFAULT_RUN_BUDGET, DEFAULT_TOLERANCE_PERCENT, Runs,
    Setting,
};
use crate::cell::SizedCell;
use crate::error::Error;
use crate::ngspice;
use crate::number::format as number;
use crate::output::deck::{DeckError, Models};
use crate::process::Process;
use crate::sizing::{Load, Plan, Reference};

/// The model library and the devices' names in it.
#[derive(Debug, Clone, Default, clap::Args)]
pub struct ModelArgs {
    /// A model library to simulate with instead of level-1 models from the process: included whole
    /// (`.include`), or one section of it with --models-section; a regular file. Its model names
    /// are checked against every drawn device before any run.
    #[arg(long, value_name = "FILE")]
    pub models: Option<PathBuf>,
    /// Read only this section of the --models library (`.lib FILE NAME`).
    #[arg(long, value_name = "NAME", requires = "models", value_parser = super::deck::section_name)]
    pub models_section: Option<String>,
    /// The NMOS model's name in the --models library (default: the process's nmos_model).
    #[arg(long, value_name = "NAME", requires = "models", value_parser = super::deck::model_name)]
    pub nmos_model: Option<String>,
    /// The PMOS model's name in the --models library (default: the process's pmos_model).
    #[arg(long, value_name = "NAME", requires = "models", value_parser = super::deck::model_name)]
    pub pmos_model: Option<String>,
    /// The inputs ramp linearly rail to rail in PS picoseconds (default: a step, a thousandth of
    /// the run's time scale).
    #[arg(long, value_name = "PS", value_parser = super::positive_number)]
    pub slew_ps: Option<f64>,
}

/// Calibration by simulation.
#[derive(Debug, Clone, Default, clap::Args)]
pub struct CalibrateArgs {
    /// Run ngspice in the loop (it must be on PATH): the output stage's widths are adjusted until
    /// each network's worst transition (every input, both edges, every side-input vector that lets
    /// the input switch the output) matches the reference inverter's in the same models, at the
    /// load (--load-ff, --load or --fanout, else the process's load_ff) and slew, within
    /// --tolerance. The default reference inverter is first balanced (rise = fall) in the models;
    /// a skewed --reference is kept as given.
    #[arg(long)]
    pub calibrate: bool,
    /// The models and the inputs' slew.
    #[command(flatten)]
    pub models: ModelArgs,
    /// The tolerance on every worst-transition ratio, percent [default: 1].
    #[arg(long, value_name = "PERCENT", requires = "calibrate", value_parser = tolerance)]
    pub tolerance: Option<f64>,
    /// Most simulator runs per cell, the reference inverter's included; past it, exit 2 with the
    /// best ratio reached [default: 30].
    #[arg(long, value_name = "RUNS", requires = "calibrate", value_parser = clap::value_parser!(u16).range(2..=1000))]
    pub max_runs: Option<u16>,
    /// The area cap: the calibrated output stage's total W/L at most X times its first-order
    /// total; where no sizing within it reaches the target, exit 1 with the best ratio and its
    /// area [default: 4].
    #[arg(long, value_name = "X", requires = "calibrate", value_parser = area_cap)]
    pub area_cap: Option<f64>,
}

fn tolerance(text: &str) -> Result<f64, String> {
    let value = super::positive_number(text)?;
    if !(0.01..=50.0).contains(&value) {
        return Err(format!("the tolerance is a percentage from 0.01 to 50, found '{text}'"));
    }
    Ok(value)
}

fn area_cap(text: &str) -> Result<f64, String> {
    let value = super::positive_number(text)?;
    if !(1.0..=1000.0).contains(&value) {
        return Err(format!("the area cap is a ratio from 1 to 1000, found '{text}'"));
    }
    Ok(value)
}

/// A simulation's setting from the command line, with the models and the load in words.
#[derive(Debug, Clone)]
pub struct Simulation {
    /// The calibration's options.
    pub options: calibrate::Options,
    /// The models in words.
    pub models: String,
    /// The load in words.
    pub load: String,
    /// The library file and section, to check a cell against.
    pub library: Option<(PathBuf, Option<String>)>,
}

/// The models of `args` (a library by absolute path, or level 1 from the process).
pub fn models(args: &ModelArgs, process: &Process) -> Result<Models, Error> {
    match &args.models {
        None => Ok(Models::Process),
        Some(path) => {
            let absolute = crate::io::absolute_regular(path, "the --models file")?;
            let include = crate::io::utf8_text(absolute.into_os_string().into_encoded_bytes(), "the --models path")?;
            let nmos = args.nmos_model.clone().unwrap_or_else(|| process.nmos_model.clone());
            let pmos = args.pmos_model.clone().unwrap_or_else(|| process.pmos_model.clone());
            Ok(Models::library(include, args.models_section.clone(), nmos, pmos)?)
        }
    }
}

/// The process with the library's model names, which a cell may then not take.
pub fn with_model_names(process: &Arc<Process>, models: &Models) -> Arc<Process> {
    match models {
        Models::Library { nmos, pmos, .. } => {
            Arc::new(Process { nmos_model: nmos.clone(), pmos_model: pmos.clone(), ..(**process).clone() })
        }
        Models::Process => process.clone(),
    }
}

/// The models in words.
pub fn models_words(models: &Models) -> String {
    match models {
        Models::Process => "level 1 from the process".to_string(),
        Models::Library { include, section: Some(section), .. } => format!("{include}, section {section}"),
        Models::Library { include, section: None, .. } => include.clone(),
    }
}

/// The testbench load of `load` (default: the process's load_ff), refused where it is no
/// capacitance.
pub fn bench_load(load: Option<Load>, process: &Process) -> Result<(BenchLoad, String), Error> {
    let (bench, words) = match load {
        Some(Load::Units(c)) => {
            let ff = c * process.unit_capacitance_ff();
            (BenchLoad::Femtofarads(ff), format!("{} C ({} fF)", number(c), number(ff)))
        }
        Some(Load::Femtofarads(ff)) => (BenchLoad::Femtofarads(ff), format!("{} fF", number(ff))),
        Some(Load::Fanout(h)) => (BenchLoad::Fanout(h), format!("fan-out {}", number(h))),
        None => {
            (BenchLoad::Femtofarads(process.load_ff), format!("{} fF (the process's load_ff)", number(process.load_ff)))
        }
    };
    let unit = match bench {
        BenchLoad::Femtofarads(ff) => ff,
        BenchLoad::Fanout(h) => h * process.unit_capacitance_ff(),
    };
    if !(unit > 0.0 && unit.is_finite()) {
        return Err(DeckError::NoLoad { load_ff: unit }.into());
    }
    Ok((bench, words))
}

/// The calibration's setting from the command line (the library's model names already in
/// `process`); ngspice is checked to run before anything else is done.
pub fn simulation(args: &CalibrateArgs, process: &Process, load: Option<Load>) -> Result<Simulation, Error> {
    let models = models(&args.models, process)?;
    let (bench, load_words) = bench_load(load, process)?;
    let simulator = ngspice::Options::default();
    ngspice::check_installed(&simulator)?;
    let library = args.models.models.as_ref().map(|path| (path.clone(), args.models.models_section.clone()));
    Ok(Simulation {
        models: models_words(&models),
        load: load_words,
        library,
        options: calibrate::Options {
            setting: Setting { models, load: bench, slew_s: args.models.slew_ps.map(|ps| ps * 1e-12) },
            tolerance: args.tolerance.unwrap_or(DEFAULT_TOLERANCE_PERCENT) / 100.0,
            run_budget: usize::from(args.max_runs.unwrap_or(DEFAULT_RUN_BUDGET as u16)),
            area_cap: args.area_cap.unwrap_or(DEFAULT_AREA_CAP),
            simulator,
        },
    })
}

/// Check `cell`'s devices against the library, where there is one.
pub fn check_cell(simulation: &Simulation, cell: &SizedCell) -> Result<(), Error> {
    if let (Some((path, section)), Models::Library { nmos, pmos, .. }) =
        (&simulation.library, &simulation.options.setting.models)
    {
        super::deck::check_library(Path::new(path), section.as_deref(), cell, [nmos, pmos])?;
    }
    Ok(())
}

/// The reference inverter of `plan` at its drive: NMOS and PMOS W/L, and whether it is the
/// balanced one (to be balanced in the models) rather than a skewed one kept as given.
pub fn reference_of(plan: &Plan) -> ([f64; 2], bool) {
    let widths = [plan.drive * plan.reference.nmos, plan.drive * plan.reference.pmos];
    (widths, plan.reference == Reference::balanced(plan.mobility_ratio))
}

/// Balance (or measure) `cell`'s reference inverter and calibrate the cell, its runs counted on
/// one budget.
pub fn calibrate_cell(cell: &SizedCell, simulation: &Simulation) -> Result<Calibrated, CalibrateError> {
    let options = &simulation.options;
    let mut runs = Runs::new(options.run_budget);
    let (widths, balanced) = reference_of(&cell.plan);
    let reference = calibrate::balance_reference(
        &cell.plan.process,
        &options.setting,
        widths,
        balanced,
        options.tolerance,
        options.area_cap,
        &mut runs,
        &options.simulator,
    )?;
    calibrate::calibrate(cell, &reference, options, &mut runs)
}
