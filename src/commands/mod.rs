//! The commands, a module each: its arguments (clap derive, with its own format and rows, so clap
//! refuses what does not apply) and its `run`. This module holds what several commands share: the
//! argument groups for sizing and delays, the number and name checks of arguments, the one place
//! sizing options are built from arguments, and reading an expression argument.
//!
//! Files and streams are touched through the I/O layer ([`crate::io`]) only.

pub mod batch;
pub mod batch_calibrate;
pub mod completions;
pub mod deck;
pub mod effort;
pub mod man_page;
pub mod paths;
pub mod process;
pub mod simulate;
pub mod size;
pub mod verify;

use std::ffi::OsString;
use std::path::{Path, PathBuf};
use std::sync::Arc;

use clap::Args;

use crate::bounds;
use crate::budget::DEFAULT_WORK_BUDGET;
use crate::diagnostic::{Source, escaped};
use crate::error::Error;
use crate::expr::parser::MAX_EXPRESSION_BYTES;
use crate::logic::{self, CellLogic};
use crate::names;
use crate::process::{MAX_PROCESS_FILE_BYTES, Process};
use crate::sizing::plan::default_diffusion_ratio;
use crate::sizing::{Conditions, Load, Method, MethodName, Order, Plan, Reference, SizingError, StackOrder, WorstCase};

/// The exit codes as the help texts give them (the contributor guide states them in full).
macro_rules! exit_codes_line {
    () => {
        "Exit codes: 0 ok, 1 a check failed, 2 bad input or usage."
    };
}
pub(crate) use exit_codes_line;

/// The closing note of every help text.
macro_rules! estimates_note {
    () => {
        "Results are first-order estimates (switch-level RC model). Sign-off needs the foundry's models,
design rules and licensed practice."
    };
}
pub(crate) use estimates_note;

/// Help shown after the top level's and most commands' `--help`.
pub const AFTER_HELP: &str = concat!(
    "\
Expressions: NOT as !, ~ or postfix '; AND as &, *, . or juxtaposition; OR as | or +; parentheses;
an optional 'name =' prefix names the output (default y); XOR as ^. Precedence NOT > AND > XOR > OR.
A function whose negation-normal form is one inverting stage is one stage (!a & !b is a NOR); any
other is a cell of several stages: input inverters for the complements it needs (a_n, shared), the
logic stage, an output inverter where the polarity asks (where both forms exist, the one of smaller
total W/L). Earlier stages bear --stage-effort F driving what they drive. Shorthands: inv,
nand2..nand8, nor2..nor8, aoi21, aoi22, aoi211 ..., oai21, oai22 ... (inputs a, b, c ... z, a1 ...,
skipping the output's name); buf, and2..and8, or2..or8, ao21, ao22, oa21, oa22 (the same inputs);
xor2, xnor2, xor3; mux2 (inputs a, b, s: y = a at s = 0, b at s = 1), mux2i (its complement); maj3
(majority of a, b, c). A cell of several stages is timed through its stages (--delays, the load
options: each stage's worst transition at what it drives, summed along each pin's slowest path);
deck simulates each pin's worst transition through the whole cell (the output stage against the
reference inverter, the cell's delay against its logical-effort estimate); --method elmore and the
stack-order search take one stage. Reserved, compared without case,
for inputs, the output and the cell name: vdd, vss, gnd, 0 and the model names in use (the
process's nmos_model and pmos_model).

Units: sizes are relative W/L, 1 = the unit NMOS; resistances are in units of R, the unit NMOS's
on-resistance; capacitances in unit-NMOS gate capacitances. Physical sizes use the built-in process
(L = 1u, unit NMOS W = 1u, so W = W/L x 1u) unless --process FILE gives another ('widthwise process'
prints the built-in one to start from). Widths snap up to the process grid and minimum width; a device
wider than the maximum finger width is drawn as n equal fingers, written in SPICE as W=<finger width>
with the multiplicity m=n. The worst path after snapping is reported with its error against the target.

Limits: expressions up to 1 MiB and 256 levels of parentheses; up to 10000 input occurrences
(transistors per network) and 10000 distinct inputs; up to 10000 listed paths and 1000000 device
names in one listing (paths x devices on the longest path); one path listing builds at most 5000000
partial paths; the exact worst case over input vectors (for repeated inputs) and each input's worst
transition over every side-input vector up to 16 inputs (past that, its weakest path alone);
--worst-case vectors up to 16 inputs, 4096 minimal conducting vectors and 256 transistors per
network (past them, exit 2); verify
checks every input vector up to 30 inputs, a stated pseudo-random sample (at most 2^30 vectors) past
that; process files up to 1 MiB, library files up to 64 MiB, both regular files; drive, mobility
ratio and reference W/L from 1e-6 to 1e6, fan-out, load and diffusion ratio 0 or 1e-6 to 1e6,
process values each in its range (README), 1000000 fingers per device; decks up to 256 input
occurrences per network; delays up to 1000 input occurrences per network, the stack-order search up
to 64, the elmore method up to 96 transistors and 10000 paths per network; a schematic (--format
svg) up to 1024 devices, groups nested 64 deep.

Schematic: --format svg writes the sized cell as a plain SVG picture: pull-ups above pull-downs
between the rails, stages left to right, each device named with its W/L (with --process, its drawn
width and fingers), nodes and pins named, the worst path of each network heavy, with a legend.

Work budget (--work-budget UNITS, default 2^30 = 1073741824 for each computation of a run; past it,
exit 2 before any output): verify counts vectors / 64 x input occurrences before it starts (the
default allows every gate up to 20 inputs, 30 inputs with up to 64 occurrences); the stack-order
search counts orders tried x the work of timing one order and stops after the first order when the
rest would pass (six AND3 groups over 16 inputs); delays count each network's devices per word of 64
vectors, the devices of every switching vector and conducting network timed, and, past 16 inputs,
of every path tried; --worst-case vectors counts the multiply-adds of its Newton steps (minimal
vectors x devices^2 + devices^3 / 3 each) as it runs; the elmore method's solver counts 600 Newton steps
(its most) x the multiply-adds of one before it starts (about 1.8e6 per step, e.g. 40 transistors
with 625 paths). At the budget each takes a few seconds.

",
    exit_codes_line!(),
    "

",
    estimates_note!()
);

/// The sizing options `size`, `paths`, `deck`, `verify` and `batch` share: method, mobility ratio,
/// drive, reference inverter and process. Each is optional, so that `batch` can tell a value given
/// on the command line (which wins over the library's keys) from one left to the file.
#[derive(Debug, Clone, Default, Args)]
pub struct SizingArgs {
    /// Sizing method: longest-path (each device: reference W/L x devices on the longest path through
    /// it), min-area (least total W/L with every path, or with --worst-case vectors every input vector, at
    /// the target) or elmore (least total W/L with
    /// every worst-case Elmore delay at most --delay-target times the reference inverter's driving the
    /// same load, within 10x longest-path's total W/L; not in a library) [default: longest-path].
    #[arg(long, value_enum)]
    pub method: Option<MethodName>,
    /// What min-area sizes against: paths (every conducting path as if it conducted alone) or
    /// vectors (every input vector, with everything it turns on: less W/L where inputs repeat; a
    /// convex program, up to 16 inputs) [default: paths]. Longest-path is a rule, not an optimum,
    /// and takes paths only. With elmore: every path as if it conducted alone (a geometric program,
    /// solved to optimality), or every input vector (a sequence of convex approximations: a local
    /// optimum, its target checked on every vector).
    #[arg(long, value_enum, value_name = "WHAT")]
    pub worst_case: Option<WorstCase>,
    /// Mobility ratio mu_n / mu_p (real processes run about 2 to 3) [default: the process's, 2 for
    /// the built-in one].
    #[arg(long, value_name = "MU", value_parser = positive_number, allow_hyphen_values = true)]
    pub mobility_ratio: Option<f64>,
    /// Drive strength: multiple of the unit reference inverter [default: 1].
    #[arg(long, value_name = "D", value_parser = positive_number, allow_hyphen_values = true)]
    pub drive: Option<f64>,
    /// A skewed reference inverter: its NMOS and PMOS W/L at drive 1, as N:P [default: 1:MU, balanced].
    #[arg(long, value_name = "N:P", value_parser = reference_inverter, allow_hyphen_values = true)]
    pub reference: Option<Reference>,
    /// A process file (TOML): length, unit width, grid, minimum and maximum finger width, mobility
    /// ratio and device values (default: the built-in process; 'widthwise process' prints it). A
    /// regular file: a FIFO, a device or process substitution <(...) is refused.
    #[arg(long, value_name = "FILE")]
    pub process: Option<PathBuf>,
    /// The effort each stage before the output stage of a cell of several stages bears: its drive is
    /// what it drives over F times the unit reference inverter's input capacitance, C_in = g C_out / F,
    /// raised where a device would fall below the process's minimum width [default: 4].
    #[arg(long, value_name = "F", value_parser = positive_number, allow_hyphen_values = true)]
    pub stage_effort: Option<f64>,
    /// With --method elmore: the worst Elmore delay allowed, as a ratio to the reference inverter's
    /// driving the same load (1 = as fast as the reference) [default: the ratio longest-path sizing
    /// reaches at that load, so the method is never slower than the classic rule].
    #[arg(long, value_name = "RATIO", value_parser = positive_number, allow_hyphen_values = true)]
    pub delay_target: Option<f64>,
}

impl SizingArgs {
    /// The method given (else longest-path) with the worst case given (else paths); refused where
    /// the method does not take that worst case.
    pub fn method(&self) -> Result<Method, SizingError> {
        let name = self.method.unwrap_or(MethodName::LongestPath);
        Ok(Method::with(name, self.worst_case.unwrap_or_default())?)
    }

    /// Whether the method given sizes by delay (the elmore method), so the load sizes the cell.
    pub fn sizes_by_delay(&self) -> bool {
        Method::of(self.method.unwrap_or(MethodName::LongestPath)).sizes_by_delay()
    }

    /// The process of `--process`, or the built-in one.
    pub fn read_process(&self) -> Result<Process, Error> {
        match &self.process {
            Some(path) => read_process(path),
            None => Ok(Process::default()),
        }
    }
}

/// Options that say how a gate is sized.
#[derive(Debug, Clone, Args)]
pub struct GateArgs {
    /// Method, mobility ratio, drive, reference inverter, process.
    #[command(flatten)]
    pub sizing: SizingArgs,
    /// An input to place nearest the output in every series stack (default: the member with the least
    /// diffusion width facing the output goes there; ties keep the written order).
    #[arg(long, value_name = "INPUT")]
    pub critical: Option<String>,
    /// The cell name in netlists and tables (default: the shorthand, or "cell"); not a reserved name
    /// (vdd, vss, gnd, 0, the model names in use).
    #[arg(long, value_name = "NAME", value_parser = cell_name)]
    pub name: Option<String>,
    /// The work budget, in work units, of each long computation: the elmore method's solver, timing
    /// the delays with the stack-order search, verification (what a unit is: 'Limits' below). Past
    /// it the command stops before any output, exit 2.
    #[arg(long, value_name = "UNITS", default_value_t = DEFAULT_WORK_BUDGET, value_parser = work_budget)]
    pub work_budget: u64,
    /// The logic stage's pull-up: a series (&) and parallel (|) structure of its uncomplemented input
    /// nets (each PMOS conducts when its input is 0; ! is refused), or 'mirror' for the pull-down's own
    /// structure. Taken only where a check of every input vector proves it the pull-down's complement
    /// [default: the dual of the pull-down].
    #[arg(long, value_name = "STRUCTURE|mirror")]
    pub pull_up: Option<String>,
}

/// The load on a cell's output, as `size` (with delays) and `deck` take it: a fan-out or a fixed
/// capacitance, in C or in fF.
#[derive(Debug, Clone, Default, Args)]
pub struct LoadArgs {
    /// Load: H times the timed input's own capacitance in the gate as sized, the textbook fan-out
    /// h = C_out / C_in [default: 1; deck: the process's load_ff].
    #[arg(long, value_name = "H", value_parser = non_negative_number, conflicts_with_all = ["load", "load_ff"])]
    pub fanout: Option<f64>,
    /// Load: a fixed capacitance in units of C, the gate capacitance of a unit transistor
    /// (gate_cap_ff_per_um x unit_width_nm).
    #[arg(long, value_name = "C", value_parser = non_negative_number, conflicts_with = "load_ff")]
    pub load: Option<f64>,
    /// Load: a fixed capacitance in fF, counted in units of C by the process's gate capacitance
    /// (gate_cap_ff_per_um x unit_width_nm).
    #[arg(long, value_name = "FF", value_parser = non_negative_number)]
    pub load_ff: Option<f64>,
}

impl LoadArgs {
    /// Whether a load was given.
    pub fn given(&self) -> bool {
        self.fanout.is_some() || self.load.is_some() || self.load_ff.is_some()
    }

    /// The load these arguments give, if any.
    pub fn load(&self) -> Option<Load> {
        match (self.load, self.load_ff, self.fanout) {
            (Some(c), _, _) => Some(Load::Units(c)),
            (None, Some(ff), _) => Some(Load::Femtofarads(ff)),
            (None, None, Some(h)) => Some(Load::Fanout(h)),
            (None, None, None) => None,
        }
    }
}

/// Options for Elmore delays: the load, the diffusion capacitance, the stack-order search.
#[derive(Debug, Clone, Args)]
pub struct DelayArgs {
    /// Report the Elmore delay of every input on both output edges, with the logical-effort view and
    /// the three methods side by side (implied by every option below and by --method elmore).
    #[arg(long)]
    pub delays: bool,
    /// The load.
    #[command(flatten)]
    pub load: LoadArgs,
    /// Diffusion capacitance of one source or drain per unit W/L, over the gate capacitance per unit
    /// W/L [default: with --process, the file's diffusion_cap_ff_per_um / gate_cap_ff_per_um, the ratio
    /// of its deck's capacitors; without, 1, as in the published worked examples].
    #[arg(long, value_name = "RATIO", value_parser = non_negative_number)]
    pub diffusion_ratio: Option<f64>,
    /// Series-stack order: default (--critical's input, then the least diffusion width facing the
    /// output, nearest the output), written (as the expression lists them, the first nearest the
    /// output), or search (the order with the least worst Elmore delay, or least worst delay of
    /// --critical's input; with --method elmore the least total W/L; turns delays on).
    #[arg(long, value_enum, value_name = "ORDER")]
    pub stack_order: Option<StackOrder>,
}

impl DelayArgs {
    /// Whether any delay option was given.
    pub fn wanted(&self) -> bool {
        self.delays
            || self.load.given()
            || self.diffusion_ratio.is_some()
            || self.stack_order == Some(StackOrder::Search)
    }

    /// The load these arguments give, if any.
    pub fn load(&self) -> Option<Load> {
        self.load.load()
    }
}

/// Where the output goes.
#[derive(Debug, Clone, Args)]
pub struct OutputFile {
    /// Write to FILE (atomically: a temporary file, then a rename) instead of standard output. A
    /// symbolic link is written through; FILE must be a regular file or not exist (a FIFO, device or
    /// directory is refused); a new file gets 0666 less the umask, an existing one keeps its mode.
    #[arg(short, long, value_name = "FILE")]
    pub output: Option<PathBuf>,
}

/// What a plan is timed against, as the command line gives it.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Timed {
    /// The load given, if any (default: fan-out 1).
    pub load: Option<Load>,
    /// The diffusion ratio given, if any.
    pub diffusion_ratio: Option<f64>,
    /// Whether the conditions matter (delays are reported, or they size the cell): then a diffusion
    /// ratio not given is the process file's default, else it stays 1 (and unused).
    pub matter: bool,
}

/// The plan of one cell from the command line, the one place plans are built from arguments: the
/// process from `--process` (or the built-in one), the mobility ratio from `--mobility-ratio` if
/// given, else from the process; the method, drive, reference, stack order (with `--critical`),
/// name and work budget; and what the cell is timed against. Every value is checked here.
pub fn plan(args: &GateArgs, order: StackOrder, timed: Timed) -> Result<Plan, Error> {
    let given = &args.sizing;
    let process = given.read_process()?;
    let mobility_ratio = given.mobility_ratio.unwrap_or(process.mobility_ratio);
    let drive = given.drive.unwrap_or(1.0);
    let method = given.method()?;
    if given.delay_target.is_some() && !method.sizes_by_delay() {
        return Err(Error::NotApplicable {
            option: "--delay-target",
            case: "without --method elmore",
            why: "only the elmore method sizes for a delay; add --method elmore",
        });
    }
    let order = Order::new(order, args.critical.clone()).map_err(SizingError::from)?;
    let process_file = given.process.as_ref().map(|_| &process);
    let diffusion_ratio = match timed.diffusion_ratio {
        Some(ratio) => ratio,
        None if timed.matter || method.sizes_by_delay() => default_diffusion_ratio(process_file)
            .ok_or(SizingError::NoDefaultRatio { gate_cap_ff_per_um: process.gate_cap_ff_per_um })?,
        None => 1.0,
    };
    let conditions = Conditions { load: timed.load.unwrap_or(Load::Fanout(1.0)), diffusion_ratio };
    let plan = Plan {
        order,
        conditions,
        process: Arc::new(process),
        name: args.name.clone(),
        budget: args.work_budget,
        stage_effort: given.stage_effort.unwrap_or(crate::sizing::plan::DEFAULT_STAGE_EFFORT),
        delay_target: given.delay_target,
        ..Plan::new(method, mobility_ratio, drive, given.reference)
    };
    plan.check().map_err(SizingError::from)?;
    plan.conditions.check().map_err(SizingError::from)?;
    Ok(plan)
}

/// Read and check a process file; errors name the key and its line and column.
pub fn read_process(path: &Path) -> Result<Process, Error> {
    let text = crate::io::read_text(path, MAX_PROCESS_FILE_BYTES, "the process file")?;
    Process::from_toml(&text)
        .map_err(|error| Error::Process { error, file: Source::file(path.display().to_string(), text) })
}

/// An expression argument as UTF-8 (`-` reads it from standard input), a leading byte-order mark
/// dropped, or an error naming the first bad byte.
pub fn expression_text(argument: &OsString) -> Result<String, Error> {
    let bytes = if argument == "-" {
        crate::io::read_stdin(MAX_EXPRESSION_BYTES, "the expression on standard input")?
    } else {
        argument.as_encoded_bytes().to_vec()
    };
    Ok(crate::io::utf8_text(bytes, "the expression")?)
}

/// Every form of the cell `text` (one for a one-stage gate or a non-inverting function, two where
/// both polarities appear), the plan's model names reserved, each with the pull-up `pull_up` asks for
/// (forms whose logic stage it does not fit are dropped; where it fits none, the first form's
/// refusal); an error points into the text it is about.
pub fn read_cells(text: &str, plan: &Plan, pull_up: Option<&str>) -> Result<Vec<CellLogic>, Error> {
    let forms = logic::synthesize_with_models(text, &plan.process.model_names())
        .map_err(|error| Error::Logic { error, input: Source::inline("the expression", text) })?;
    let Some(written) = pull_up else { return Ok(forms) };
    let (spec, source) = if written.trim() == "mirror" {
        (logic::PullUpSpec::Mirror, Source::inline("the expression", text))
    } else {
        (logic::PullUpSpec::Written(written), Source::inline("the pull-up", written))
    };
    let mut first_error = None;
    let mut accepted = Vec::new();
    for form in forms {
        match form.with_pull_up(spec) {
            Ok(form) => accepted.push(form),
            Err(error) => {
                first_error.get_or_insert(error);
            }
        }
    }
    match first_error {
        Some(error) if accepted.is_empty() => Err(Error::PullUp { error, input: source }),
        _ => Ok(accepted),
    }
}

/// Read the cell `text` and size it under `plan`, untimed (for `paths`, `deck`, `verify`, and `size`
/// without delays): of its forms, the one of least total W/L.
pub fn read_and_size(text: &str, plan: &Plan, pull_up: Option<&str>) -> Result<crate::cell::SizedCell, Error> {
    let forms = read_cells(text, plan, pull_up)?;
    Ok(crate::sizing::size_best(&forms, plan)?)
}

/// A drive, mobility ratio or reference W/L: within [`bounds::SIZING`].
pub fn positive_number(text: &str) -> Result<f64, String> {
    within(text, &bounds::SIZING)
}

/// A fan-out, load or diffusion ratio: within [`bounds::LOAD`].
pub fn non_negative_number(text: &str) -> Result<f64, String> {
    within(text, &bounds::LOAD)
}

/// A number within `bound`, or what it must be and what was found.
fn within(text: &str, bound: &bounds::Bound) -> Result<f64, String> {
    let value: f64 = text.trim().parse().map_err(|_| format!("'{}' is not a number", escaped(text)))?;
    bound.check(value).map_err(|why| format!("{why}, found '{}'", escaped(text)))
}

fn reference_inverter(text: &str) -> Result<Reference, String> {
    let (nmos, pmos) =
        text.split_once(':').ok_or_else(|| format!("expected NMOS:PMOS W/L such as 1:2.5, found '{text}'"))?;
    Ok(Reference { nmos: positive_number(nmos)?, pmos: positive_number(pmos)? })
}

/// A work budget: a whole number of work units, 1 or more.
pub fn work_budget(text: &str) -> Result<u64, String> {
    match text.parse::<u64>() {
        Ok(value) if value > 0 => Ok(value),
        _ => Err(format!("expected a whole number of work units from 1 to {}, found '{}'", u64::MAX, escaped(text))),
    }
}

/// A cell name: an identifier, so that netlists take it and spreadsheets never read it as a formula,
/// and not a reserved name (a rail or ground; the models in use are checked when the gate is sized).
pub fn cell_name(text: &str) -> Result<String, String> {
    if !names::is_identifier(text) {
        return Err(format!("a cell name is {}, found '{}'", names::IDENTIFIER_RULE, escaped(text)));
    }
    if let Some(why) = names::reserved_reason(text, &[]) {
        return Err(SizingError::ReservedCellName { name: text.to_string(), why }.to_string());
    }
    Ok(text.to_string())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_must_be_positive_and_finite() {
        assert_eq!(positive_number("2.5"), Ok(2.5));
        for bad in ["-1", "0", "nan", "NaN", "inf", "x", "", "1e7", "5e-324", "1e-7"] {
            assert!(positive_number(bad).is_err(), "{bad}");
        }
        assert_eq!(non_negative_number("0"), Ok(0.0));
        for bad in ["-1", "1e308", "5e-324", "nan"] {
            assert!(non_negative_number(bad).is_err(), "{bad}");
        }
    }

    #[test]
    fn reference_takes_two_numbers() {
        assert_eq!(reference_inverter("1:3"), Ok(Reference { nmos: 1.0, pmos: 3.0 }));
        assert!(reference_inverter("1").is_err());
        assert!(reference_inverter("1:-3").is_err());
    }

    #[test]
    fn cell_names_are_identifiers_and_not_reserved() {
        assert_eq!(cell_name("nand2_x1"), Ok("nand2_x1".to_string()));
        let bad = cell_name("1x").unwrap_err();
        assert_eq!(bad, "a cell name is a letter or '_' followed by letters, digits and '_', found '1x'");
        let reserved = cell_name("GND").unwrap_err();
        assert!(reserved.starts_with("the cell name 'GND' is reserved: "), "{reserved}");
    }
}
