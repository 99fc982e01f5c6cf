//! The command line: commands, options and their checks (clap derive).

use std::ffi::OsString;
use std::path::PathBuf;

use clap::{Args, Parser, Subcommand};

use crate::bounds;
use crate::budget::DEFAULT_WORK_BUDGET;
use crate::delay::{DelayError, DelayOptions, Load, StackOrder};
use crate::output::{Format, Rows};
use crate::paths::MAX_LISTED_PATHS;
use crate::sizing::{Method, Reference};

const ABOUT: &str = "Size the transistors of static CMOS gates so that each gate's worst case drives like a \
reference inverter, and report what that costs.";

const AFTER_HELP: &str = "\
Expressions: NOT as !, ~ or postfix '; AND as &, *, . or juxtaposition; OR as | or +; parentheses;
an optional 'name =' prefix names the output (default y). Precedence NOT > AND > OR. Any expression
whose negation-normal form is one inverting stage is accepted (!a & !b is a NOR). Shorthands: inv,
nand2..nand8, nor2..nor8, aoi21, aoi22, aoi211 ..., oai21, oai22 ... (inputs a, b, c ... z, a1 ...,
skipping the output's name). Reserved, compared without case, for inputs, the output and the cell
name: vdd, vss, gnd, 0 and the model names in use (the process's nmos_model and pmos_model).

Units: sizes are relative W/L, 1 = the unit NMOS; resistances are in units of R, the unit NMOS's
on-resistance; capacitances in unit-NMOS gate capacitances. Physical sizes use the built-in process
(L = 1u, unit NMOS W = 1u, so W = W/L x 1u) unless --process FILE gives another ('widthwise process'
prints the built-in one to start from). Widths snap up to the process grid and minimum width; a device
wider than the maximum finger width is drawn as n equal fingers, written in SPICE as W=<finger width>
with the multiplicity m=n. The worst path after snapping is reported with its error against the target.

Limits: expressions up to 1 MiB and 256 levels of parentheses; up to 10000 input occurrences
(transistors per network) and 10000 distinct inputs; up to 10000 listed paths and 1000000 device
names in one listing (paths x devices on the longest path); one path listing builds at most 5000000
partial paths; the exact worst case over input vectors (for repeated inputs) up to 16 inputs; verify
checks every input vector up to 30 inputs, a stated pseudo-random sample (at most 2^30 vectors) past
that; process files up to 1 MiB, library files up to 64 MiB, both regular files; drive, mobility
ratio and reference W/L from 1e-6 to 1e6, fan-out, load and diffusion ratio 0 or 1e-6 to 1e6,
process values each in its range (README), 1000000 fingers per device; decks up to 256 input
occurrences per network; delays up to 1000 input occurrences per network, the stack-order search up
to 64, the elmore method up to 96 transistors and 10000 paths per network.

Work budget (--work-budget UNITS, default 2^30 = 1073741824 for each computation of a run; past it,
exit 2 before any output): verify counts vectors / 64 x input occurrences before it starts (the
default allows every gate up to 20 inputs, 30 inputs with up to 64 occurrences); the stack-order
search counts orders tried x the devices timed per order and stops after the first order when the
rest would pass (about 22 occurrences of 11 repeated inputs); delays count the devices of every
transition timed, path tried and input vector searched; the elmore method's solver counts 600 Newton steps
(its most) x the multiply-adds of one before it starts (about 1.8e6 per step, e.g. 40 transistors
with 625 paths). At the budget each takes a few seconds.

Exit codes: 0 ok, 1 a check failed, 2 bad input or usage.

Results are first-order estimates (switch-level RC model). Sign-off needs the foundry's models,
design rules and licensed practice.";

/// The whole command line.
#[derive(Debug, Parser)]
#[command(name = "widthwise", version, about = ABOUT, after_help = AFTER_HELP)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// The commands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Size one gate and report every transistor, input and network.
    #[command(after_help = AFTER_HELP)]
    Size {
        /// The gate: an expression such as "!(a & b | c)" or a shorthand such as aoi21; - reads it
        /// from standard input.
        expression: OsString,
        /// How the gate is sized.
        #[command(flatten)]
        gate: GateArgs,
        /// Delays and the stack-order search.
        #[command(flatten)]
        delay: DelayArgs,
        /// Where and how to write.
        #[command(flatten)]
        output: OutputArgs,
        /// CSV rows: one per gate, per transistor (with its input's and gate's figures), per input, or
        /// per input and output edge (delays).
        #[arg(long, value_enum, default_value_t = Rows::Devices)]
        rows: Rows,
    },
    /// List the conducting paths of each network, weakest first, and count them all.
    #[command(after_help = AFTER_HELP)]
    Paths {
        /// The gate: an expression or a shorthand; - reads it from standard input.
        expression: OsString,
        /// How the gate is sized (path resistances depend on it).
        #[command(flatten)]
        gate: GateArgs,
        /// Where and how to write (table, csv or json).
        #[command(flatten)]
        output: OutputArgs,
        /// How many paths to list per network (the count covers all of them).
        #[arg(long, default_value_t = 20, value_parser = path_limit)]
        limit: usize,
    },
    /// Write a self-contained SPICE simulation deck: models, the gate, the reference inverter at the
    /// same drive, and every input's worst-case transition on both output edges, with .tran and .meas.
    ///
    /// The deck has one copy of the gate per worst-case transition (an input toggling with the side
    /// inputs held so that its weakest path is the only one that conducts), each with its own sources
    /// and load (the process's load_ff), and one copy of the reference inverter per output edge; one
    /// transient run measures them all. Measurements: tpd_<input>_fall_gate and tpd_<input>_rise_gate
    /// (named by the output's edge), tpd_fall_ref and tpd_rise_ref, each from the input crossing
    /// supply/2 to the output crossing supply/2. Run it with, e.g., 'ngspice -b deck.sp'; widthwise
    /// never runs a simulator. Devices are written as W=<finger width> with SPICE multiplicity
    /// m=<fingers>. The built-in models are level 1 from the process (threshold, KP, body effect as
    /// GAMMA, LAMBDA=0, no parasitic capacitance).
    #[command(after_help = AFTER_HELP)]
    Deck {
        /// The gate: an expression or a shorthand; - reads it from standard input.
        expression: OsString,
        /// How the gate is sized.
        #[command(flatten)]
        gate: GateArgs,
        /// What the deck holds.
        #[command(flatten)]
        deck: DeckArgs,
        /// Write to FILE (atomically) instead of standard output.
        #[arg(short, long, value_name = "FILE")]
        output: Option<PathBuf>,
    },
    /// Print the built-in process as a commented process file to start from.
    #[command(after_help = AFTER_HELP)]
    Process {
        /// Write to FILE (atomically) instead of standard output.
        #[arg(short, long, value_name = "FILE")]
        output: Option<PathBuf>,
    },
    /// Size every gate of a library file, in every drive it lists, into one table, CSV, JSON or
    /// SPICE library.
    #[command(after_help = crate::batch::AFTER_HELP)]
    Batch {
        /// The library file: TOML with an optional process and [defaults], then [[gate]] entries; a
        /// regular file (a FIFO, a device or process substitution, <(...), is refused), or - to read
        /// it from standard input.
        library: PathBuf,
        /// Where and how to write.
        #[command(flatten)]
        output: OutputArgs,
        /// Rows of the table and the CSV: one per gate variant, per transistor or per input.
        #[arg(long, value_enum, default_value_t = Rows::Gates)]
        rows: Rows,
        /// Also prove every variant's netlist on its input vectors, as 'widthwise verify' does; a
        /// variant that fails is reported on stderr (and still written), and the exit code is 1.
        #[arg(long)]
        verify: bool,
        /// The work budget, in work units, of --verify over the whole library (vectors / 64 x input
        /// occurrences, summed over every variant); past it nothing is written, exit 2.
        #[arg(long, value_name = "UNITS", default_value_t = DEFAULT_WORK_BUDGET, value_parser = work_budget)]
        work_budget: u64,
    },
    /// Prove the sized netlist right: simulate its switches on every input vector and check that
    /// pull-up and pull-down never both conduct, are never both off, and give the expression.
    #[command(after_help = VERIFY_HELP)]
    Verify {
        /// The gate: an expression or a shorthand; - reads it from standard input.
        expression: OsString,
        /// How the gate is sized (the worst-case figures depend on it).
        #[command(flatten)]
        gate: GateArgs,
        /// Where and how to write (table, csv or json).
        #[command(flatten)]
        output: OutputArgs,
        /// Pseudo-random vectors to check when the gate has too many inputs to check them all.
        #[arg(long, value_name = "N", default_value_t = crate::verify::DEFAULT_RANDOM_VECTORS, value_parser = random_vectors)]
        random_vectors: u64,
        /// Seed of the pseudo-random vectors.
        #[arg(long, value_name = "SEED", default_value_t = crate::verify::DEFAULT_SEED)]
        seed: u64,
    },
}

/// Options of the simulation deck.
#[derive(Debug, Clone, Args)]
pub struct DeckArgs {
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
}

const VERIFY_HELP: &str = "\
Exit codes: 0 every check holds, 1 a check failed (the first failing vector is reported), 2 bad input
or usage.

Vectors: every one of the 2^n input vectors up to 30 inputs (bit-parallel, 64 per word, on every
core); past 30 inputs, the number given by --random-vectors (default 1048576) of pseudo-random ones
from --seed (default 26719299881249566), with vector 0 all zeros and vector 1 all ones. Input 1 is
bit 0 of a vector's index. The exact worst case over vectors (repeated inputs) is enumerated up to 16
inputs. The work, vectors / 64 x input occurrences, must be within --work-budget (default
2^30 = 1073741824 units: every gate up to 20 inputs, 30 inputs with up to 64 occurrences), or
nothing is checked, exit 2.

Results are first-order estimates (switch-level RC model). Sign-off needs the foundry's models,
design rules and licensed practice.";

/// Options that say how a gate is sized.
#[derive(Debug, Clone, Args)]
pub struct GateArgs {
    /// Sizing method: longest-path (each device: reference W/L x devices on the longest path through
    /// it), min-area (least total W/L with every path at the target) or elmore (least total W/L with
    /// every worst-case Elmore delay at most the reference inverter's driving the same load).
    #[arg(long, value_enum, default_value_t = Method::LongestPath)]
    pub method: Method,
    /// Mobility ratio mu_n / mu_p (real processes run about 2 to 3) [default: the process's, 2 for
    /// the built-in one].
    #[arg(long, value_name = "MU", value_parser = positive_number, allow_hyphen_values = true)]
    pub mobility_ratio: Option<f64>,
    /// Drive strength: multiple of the unit reference inverter.
    #[arg(long, value_name = "D", default_value_t = 1.0, value_parser = positive_number, allow_hyphen_values = true)]
    pub drive: f64,
    /// A skewed reference inverter: its NMOS and PMOS W/L at drive 1, as N:P (default 1:MU, balanced).
    #[arg(long, value_name = "N:P", value_parser = reference_inverter, allow_hyphen_values = true)]
    pub reference: Option<Reference>,
    /// An input to place nearest the output in every series stack (default: the member with the least
    /// diffusion width facing the output goes there; ties keep the written order).
    #[arg(long, value_name = "INPUT")]
    pub critical: Option<String>,
    /// The cell name in netlists and tables (default: the shorthand, or "cell"); not a reserved name
    /// (vdd, vss, gnd, 0, the model names in use).
    #[arg(long, value_name = "NAME", value_parser = cell_name)]
    pub name: Option<String>,
    /// A process file (TOML): length, unit width, grid, minimum and maximum finger width, mobility
    /// ratio and device values (default: the built-in process; 'widthwise process' prints it). A
    /// regular file: a FIFO, a device or process substitution <(...) is refused.
    #[arg(long, value_name = "FILE")]
    pub process: Option<PathBuf>,
    /// The work budget, in work units, of each long computation: the elmore method's solver, timing
    /// the delays with the stack-order search, verification (what a unit is: 'Limits' below). Past
    /// it the command stops before any output, exit 2.
    #[arg(long, value_name = "UNITS", default_value_t = DEFAULT_WORK_BUDGET, value_parser = work_budget)]
    pub work_budget: u64,
}

/// Options for Elmore delays: the load, the diffusion capacitance, the stack-order search.
#[derive(Debug, Clone, Args)]
pub struct DelayArgs {
    /// Report the Elmore delay of every input on both output edges, with the logical-effort view and
    /// the three methods side by side (implied by every option below and by --method elmore).
    #[arg(long)]
    pub delays: bool,
    /// Load: H copies of the gate (as longest-path sizing makes it), each loading the output with the
    /// timed input's capacitance [default: 1].
    #[arg(long, value_name = "H", value_parser = non_negative_number, conflicts_with = "load")]
    pub fanout: Option<f64>,
    /// Load: a fixed capacitance in units of C, the gate capacitance of a unit transistor
    /// (gate_cap_ff_per_um x unit_width_nm; a deck's load is load_ff / C of them).
    #[arg(long, value_name = "C", value_parser = non_negative_number)]
    pub load: Option<f64>,
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
            || self.fanout.is_some()
            || self.load.is_some()
            || self.diffusion_ratio.is_some()
            || self.stack_order == Some(StackOrder::Search)
    }

    /// The delay options these arguments give; `process_file` is the `--process` file's process,
    /// if one was given (it sets the default diffusion ratio, [`crate::delay::default_diffusion_ratio`]).
    pub fn options(&self, process_file: Option<&crate::process::Process>) -> Result<DelayOptions, DelayError> {
        let defaults = DelayOptions::default();
        let diffusion_ratio = match self.diffusion_ratio {
            Some(ratio) => ratio,
            None => crate::delay::default_diffusion_ratio(process_file)?,
        };
        Ok(DelayOptions {
            load: match (self.load, self.fanout) {
                (Some(c), _) => Load::Capacitance(c),
                (None, Some(h)) => Load::Fanout(h),
                (None, None) => defaults.load,
            },
            diffusion_ratio,
            stack_order: self.stack_order.unwrap_or(defaults.stack_order),
            work_budget: defaults.work_budget,
        })
    }
}

/// Options that say where and how output is written.
#[derive(Debug, Clone, Args)]
pub struct OutputArgs {
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
    /// Write to FILE (atomically: a temporary file, then a rename) instead of standard output. A
    /// symbolic link is written through; FILE must be a regular file or not exist (a FIFO, device or
    /// directory is refused); a new file gets 0666 less the umask, an existing one keeps its mode.
    #[arg(short, long, value_name = "FILE")]
    pub output: Option<PathBuf>,
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
    let value: f64 = text.trim().parse().map_err(|_| format!("'{}' is not a number", crate::error::escaped(text)))?;
    bound.check(value).map_err(|why| format!("{why}, found '{}'", crate::error::escaped(text)))
}

fn reference_inverter(text: &str) -> Result<Reference, String> {
    let (nmos, pmos) =
        text.split_once(':').ok_or_else(|| format!("expected NMOS:PMOS W/L such as 1:2.5, found '{text}'"))?;
    Ok(Reference { nmos: positive_number(nmos)?, pmos: positive_number(pmos)? })
}

fn path_limit(text: &str) -> Result<usize, String> {
    let value: usize = text.parse().map_err(|_| format!("expected a whole number, found '{text}'"))?;
    if value > MAX_LISTED_PATHS {
        return Err(format!("at most {MAX_LISTED_PATHS} paths are listed, found '{text}'"));
    }
    Ok(value)
}

/// A work budget: a whole number of work units, 1 or more.
fn work_budget(text: &str) -> Result<u64, String> {
    match text.parse::<u64>() {
        Ok(value) if value > 0 => Ok(value),
        _ => Err(format!(
            "expected a whole number of work units from 1 to {}, found '{}'",
            u64::MAX,
            crate::error::escaped(text)
        )),
    }
}

fn random_vectors(text: &str) -> Result<u64, String> {
    let value: u64 = text.parse().map_err(|_| format!("expected a whole number, found '{text}'"))?;
    if value == 0 || value > crate::verify::MAX_RANDOM_VECTORS {
        return Err(format!("must be 1 to {}, found '{text}'", crate::verify::MAX_RANDOM_VECTORS));
    }
    Ok(value)
}

/// A cell name: an identifier, so that netlists take it and spreadsheets never read it as a formula,
/// and not a reserved name (a rail or ground; the models in use are checked when the gate is sized).
pub fn cell_name(text: &str) -> Result<String, String> {
    if !crate::names::is_identifier(text) {
        return Err(format!(
            "a cell name is a letter or '_' followed by letters, digits and '_', found '{}'",
            crate::error::escaped(text)
        ));
    }
    if let Some(why) = crate::names::reserved_reason(text, &[]) {
        return Err(format!("the cell name '{text}' is reserved: {why}"));
    }
    Ok(text.to_string())
}

/// A device model's name ([`crate::process::check_model_name`]).
fn model_name(text: &str) -> Result<String, String> {
    crate::process::check_model_name(text).map_err(|why| format!("{why}, found '{}'", crate::error::escaped(text)))?;
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
    fn command_line_is_consistent() {
        use clap::CommandFactory;
        Cli::command().debug_assert();
    }
}
