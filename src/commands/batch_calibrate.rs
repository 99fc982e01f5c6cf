//! `widthwise batch --calibrate`: every variant of a library calibrated in ngspice as
//! `size --calibrate` calibrates one, several at once (a worker thread per core or `--jobs N`, each
//! running its own ngspice held to one thread), written in the library's order as each variant in
//! order completes. Each distinct reference inverter (one per drive, reference and mobility ratio)
//! is balanced once, first, and shared by every variant that matches it. A variant past its time
//! limit or its budget is reported and left out; the others are written. Part of the `batch`
//! command, not a command of its own.

use std::collections::{HashMap, HashSet};
use std::sync::Arc;
use std::time::Duration;

use super::batch::Args;
use super::simulate::{self, Simulation};
use crate::calibrate::{
    self, CalibrateError, Calibrated, DEFAULT_AREA_CAP, DEFAULT_RUN_BUDGET, DEFAULT_TOLERANCE_PERCENT,
    ReferenceCalibration, Runs,
};
use crate::cell::SizedCell;
use crate::diagnostic::Source;
use crate::error::Error;
use crate::io::Progress;
use crate::library::{CalibrationKeys, GatePlan, GateProblem, Library, Outcome, Place, size_variant};
use crate::output::CellReport;
use crate::output::batch::{BatchWriter, Heading};
use crate::output::calibration::{CalibratedReport, CalibrationView};

/// One piece of the batch: a gate that cannot be read, or one variant of a gate.
enum Item<'a> {
    /// A gate whose entry is wrong.
    Bad(&'a GateProblem),
    /// A gate's variant at a drive: `reference`, the index of its reference inverter; its
    /// calibration options and time limit.
    Variant {
        plan: &'a GatePlan,
        drive: f64,
        reference: Option<usize>,
        settings: Box<(calibrate::Options, Option<Duration>)>,
    },
}

/// What became of one piece.
enum Done {
    /// The gate cannot be sized (reported once per gate).
    GateFailed(GateProblem),
    /// The variant was sized but not calibrated.
    NotCalibrated { cell: String, why: String, code: u8 },
    /// Calibrated.
    Calibrated(Box<Calibrated>),
}

/// A reference inverter as the batch shares it: NMOS and PMOS W/L and whether it is balanced.
type ReferenceKey = ([u64; 2], bool);

fn key(([n, p], balanced): ([f64; 2], bool)) -> ReferenceKey {
    ([n.to_bits(), p.to_bits()], balanced)
}

/// A variant's calibration options and time limit: the command line's, else its gate's keys,
/// else `[defaults]`'s, else the built-in defaults.
fn settings(args: &Args, simulation: &Simulation, keys: &CalibrationKeys) -> (calibrate::Options, Option<Duration>) {
    let given = &args.calibration;
    let options = calibrate::Options {
        tolerance: given.tolerance.or(keys.tolerance_percent).unwrap_or(DEFAULT_TOLERANCE_PERCENT) / 100.0,
        run_budget: usize::from(given.max_runs.or(keys.max_runs).unwrap_or(DEFAULT_RUN_BUDGET as u16)),
        area_cap: given.area_cap.or(keys.area_cap).unwrap_or(DEFAULT_AREA_CAP),
        ..simulation.options.clone()
    };
    (options, args.cell_time_limit.or(keys.time_limit_s).map(Duration::from_secs_f64))
}

/// A reference inverter the batch shares, and the options it is balanced with: the tightest
/// tolerance, the widest area cap and the largest run budget of the variants that match it.
struct SharedReference {
    widths: [f64; 2],
    balanced: bool,
    options: calibrate::Options,
}

/// Balance (or measure) one reference inverter (no time limit: it is no cell; its runs count on
/// a budget of their own).
fn reference(library: &Library, shared: &SharedReference) -> Result<ReferenceCalibration, CalibrateError> {
    let options = &shared.options;
    calibrate::balance_reference(
        &library.process,
        &options.setting,
        shared.widths,
        shared.balanced,
        options.tolerance,
        options.area_cap,
        &mut Runs::new(options.run_budget),
        &options.simulator,
    )
}

/// Size and calibrate one variant against its (shared) reference inverter.
fn variant(
    library: &Library,
    simulation: &Simulation,
    (plan, drive): (&GatePlan, f64),
    (options, limit): &(calibrate::Options, Option<Duration>),
    reference: Option<&Result<ReferenceCalibration, CalibrateError>>,
) -> Done {
    let cell: SizedCell = match size_variant(plan, drive, &library.process) {
        Ok(cell) => cell,
        Err(problem) => return Done::GateFailed(problem),
    };
    let failed = |why: String, code: u8| Done::NotCalibrated { cell: plan.variant_name(drive), why, code };
    if let Err(error) = simulate::check_cell(simulation, &cell) {
        return failed(error.to_string(), error.exit_code());
    }
    let reference = match reference {
        Some(Ok(reference)) => reference,
        Some(Err(error)) => return failed(format!("its reference inverter: {error}"), error.exit_code()),
        None => return failed("its reference inverter was not balanced (a bug)".to_string(), 1),
    };
    let mut runs = match limit {
        Some(limit) => Runs::within(options.run_budget, *limit),
        None => Runs::new(options.run_budget),
    };
    match calibrate::calibrate(&cell, reference, options, &mut runs) {
        Ok(calibrated) => Done::Calibrated(Box::new(calibrated)),
        Err(error) => failed(error.to_string(), error.exit_code()),
    }
}

/// Calibrate every variant of `library` (read from `source`) and write them in the library's
/// order; a missing ngspice is one error before any work.
pub fn run(args: &Args, mut library: Library, source: &Source) -> Result<(), Error> {
    let format = args.format.report().ok_or(Error::NotApplicable {
        option: "--format svg",
        case: "with --calibrate",
        why: "a calibration reports its sizes and simulated ratios as a table, CSV, JSON or SPICE; draw a calibrated \
              cell with 'widthwise size --calibrate --format svg'",
    })?;
    let load = args.load.load();
    // ngspice is found, and the models and the load checked, before anything is sized or run.
    let simulation = simulate::simulation(&args.calibration, &library.process, load)?;
    library.process = simulate::with_model_names(&library.process, &simulation.options.setting.models);
    let jobs = match args.jobs {
        Some(jobs) => usize::from(jobs),
        None => std::thread::available_parallelism().map_or(1, usize::from),
    };

    // The pieces in file order, and the distinct reference inverters they match. Every gate is read
    // up front: each variant takes seconds of simulation, so their plans are small beside it.
    let gates: Vec<Result<Arc<GatePlan>, GateProblem>> = library.gates().collect();
    let mut references: Vec<SharedReference> = Vec::new();
    let mut seen: HashMap<ReferenceKey, usize> = HashMap::new();
    let mut items: Vec<Item> = Vec::new();
    for gate in &gates {
        match gate {
            Err(problem) => items.push(Item::Bad(problem)),
            Ok(plan) => {
                let settings = settings(args, &simulation, &plan.calibration);
                for &drive in &plan.drives {
                    // A plan refused here is the variant's problem, reported when it is sized.
                    let reference = plan.plan(drive, &library.process).ok().map(|p| simulate::reference_of(&p));
                    let index = reference.map(|(widths, balanced)| {
                        let index = *seen.entry(key((widths, balanced))).or_insert(references.len());
                        if index == references.len() {
                            references.push(SharedReference { widths, balanced, options: settings.0.clone() });
                        }
                        let shared = &mut references[index].options;
                        shared.tolerance = shared.tolerance.min(settings.0.tolerance);
                        shared.area_cap = shared.area_cap.max(settings.0.area_cap);
                        shared.run_budget = shared.run_budget.max(settings.0.run_budget);
                        index
                    });
                    items.push(Item::Variant { plan, drive, reference: index, settings: Box::new(settings.clone()) });
                }
            }
        }
    }
    let variants = items.iter().filter(|item| matches!(item, Item::Variant { .. })).count();
    let progress = Progress::start((references.len() + variants) as u64, "simulated");
    progress.say("balancing the reference inverters");

    let mut balanced: Vec<Result<ReferenceCalibration, CalibrateError>> = Vec::with_capacity(references.len());
    crate::ordered::map_in_order(
        &references,
        jobs,
        |_, shared| reference(&library, shared),
        |_, result| {
            balanced.push(result);
            let next = if balanced.len() < references.len() {
                "balancing the reference inverters".to_string()
            } else {
                next_name(&items, 0)
            };
            progress.step(&next);
            Ok::<(), Error>(())
        },
    )?;

    let rows = args.rows.unwrap_or(super::batch::Rows::Gates).into();
    let mut outcome = Outcome { gates: gates.len(), ..Outcome::default() };
    let mut reported: HashSet<usize> = HashSet::new();
    let (mut not_calibrated, mut code) = (0usize, crate::exit::EXIT_CHECK_FAILED);
    let models = simulation.models.clone();
    let slew_s = simulation.options.setting.slew_s;
    crate::io::write_output(args.output.output.as_deref(), |out| {
        let mut writer = BatchWriter::start(format, rows, &library.process, &mut *out)?;
        let work = |_, item: &Item| match item {
            Item::Bad(problem) => Done::GateFailed((*problem).clone()),
            Item::Variant { plan, drive, reference, settings } => variant(
                &library,
                &simulation,
                (plan, *drive),
                settings,
                reference.and_then(|index| balanced.get(index)),
            ),
        };
        let emit = |index: usize, done: Done| -> std::io::Result<()> {
            match done {
                Done::GateFailed(problem) => {
                    if reported.insert(problem.number) {
                        outcome.failed += 1;
                        progress.diagnose(&problem.render(source));
                    }
                }
                Done::NotCalibrated { cell, why, code: exit } => {
                    not_calibrated += 1;
                    code = code.max(exit);
                    outcome.variants += 1;
                    if let Item::Variant { plan, .. } = &items[index] {
                        let message = format!("variant '{cell}' was not calibrated: {why}");
                        progress.diagnose(&plan_problem(plan, message).render(source));
                    }
                }
                Done::Calibrated(calibrated) => {
                    outcome.variants += 1;
                    let view = CalibrationView::of(&calibrated, &models, &simulation.load, slew_s);
                    let report = CalibratedReport { report: CellReport::of(&calibrated.cell), calibration: view };
                    writer.write_calibrated(std::slice::from_ref(&report))?;
                    writer.flush()?;
                }
            }
            if matches!(items[index], Item::Variant { .. }) {
                progress.step(&next_name(&items, index + 1));
            }
            Ok(())
        };
        crate::ordered::map_in_order(&items, jobs, work, emit)?;
        writer.finish(&Heading {
            origin: source.origin(),
            gates: outcome.gates,
            failed: outcome.failed,
            variants: outcome.variants - not_calibrated,
            mobility_ratio: library.mobility_ratio,
        })
    })?;
    progress.finish();
    if outcome.failed > 0 {
        return Err(Error::GatesFailed { failed: outcome.failed, total: outcome.gates });
    }
    if not_calibrated > 0 {
        return Err(Error::VariantsNotCalibrated { failed: not_calibrated, variants: outcome.variants, code });
    }
    Ok(())
}

/// A problem of `plan`, placed at its name.
fn plan_problem(plan: &GatePlan, message: String) -> GateProblem {
    GateProblem { number: plan.number, name: Some(plan.name.clone()), message, place: Place::File(plan.name_span) }
}

/// The name of the next variant from `from` on, for the progress bar.
fn next_name(items: &[Item], from: usize) -> String {
    items
        .iter()
        .skip(from)
        .find_map(|item| match item {
            Item::Variant { plan, drive, .. } => Some(plan.variant_name(*drive)),
            Item::Bad(_) => None,
        })
        .unwrap_or_default()
}
