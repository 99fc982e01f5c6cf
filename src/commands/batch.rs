//! `widthwise batch`: size every gate of a library file, in every drive it lists, into one table,
//! CSV, JSON or SPICE library. A bad gate is reported on stderr as it is found (through the
//! diagnostic renderer) and the others are still written.

use std::borrow::Cow;
use std::io::{self, Write};
use std::path::{Path, PathBuf};

use clap::ValueEnum;

use std::sync::Arc;

use super::simulate::CalibrateArgs;
use super::{LoadArgs, OutputFile, SizingArgs, estimates_note, exit_codes_line, work_budget};
use crate::budget::{DEFAULT_WORK_BUDGET, Meter, Work};
use crate::diagnostic::Source;
use crate::error::Error;
use crate::figures::NamedCell;
use crate::io::{Diagnostics, diagnose};
use crate::library::{GateProblem, Library, MAX_LIBRARY_BYTES, Outcome, Overrides, size_all};
use crate::output::batch::{BatchWriter, Heading};
use crate::output::{self, schematic_cell};
use crate::process::MAX_PROCESS_FILE_BYTES;
use crate::sizing::{Method, MethodName, SizingError, StackOrder};
use crate::verify::VerifyOptions;

/// Help shown after `widthwise batch --help`.
pub const AFTER_HELP: &str = concat!(
    "\
The library file (TOML):
  process = \"PATH\"          optional: a process file, relative to the library file (on standard
                            input: relative to --base-dir DIR, else refused); or a [process] table
                            with the process file's keys. Default: the built-in process.
  [defaults]                optional: method, drive (a number or a list such as [1, 2, 4]),
                            stack_order (\"default\" or \"written\"), mobility_ratio (default: the
                            process's), reference (a skewed reference inverter, NMOS and PMOS W/L
                            at drive 1: [1, 3] or \"1:3\"; default: balanced, [1, mobility ratio]),
                            worst_case, stage_effort (cells of several stages; default 4), pull_up
                            (the logic stage's PMOS structure, or \"mirror\").
  [[gate]]                  one per cell: name (an identifier), expr (an expression or a shorthand
                            such as nand2), and optional method, drive (number or list), critical
                            (the input to place nearest the output), stack_order, reference,
                            worst_case, stage_effort, pull_up.
Each drive of a gate is one variant, named <name>_x<drive> with p for a decimal point (nand2_x1p5):
at most 100000 drives per gate and 200000 variants per library, checked before any gate is sized.
A high- or low-skew family is a set of gates with names of their own and a reference each.

Precedence: the command line (--process, --method, --worst-case, --mobility-ratio, --drive,
--reference, --stack-order, --stage-effort, --pull-up) over the gate's keys, over [defaults], over the process file (its mobility ratio),
over the built-in defaults. --drive D replaces every drive list: each gate becomes the one variant
<name>_x<D>. --process FILE replaces the library's process (its process key is not read).

--verify checks every variant within --work-budget UNITS (default 2^30 = 1073741824): vectors / 64 x
input occurrences, summed over the variants, counted before anything is written.

Rows: --rows gates (default), devices or inputs choose the table's and the CSV's rows (refused with
JSON, which has every figure of every variant, SPICE, one .subckt per variant, and SVG).

Schematics: --format svg -o DIR writes each variant's schematic to DIR/<variant>.svg (DIR is created;
an existing file named DIR is refused, and so is standard output).

Calibration (--calibrate, ngspice on PATH; checked before any work): every variant is calibrated
as 'size --calibrate' calibrates one, --jobs N at once (default: the cores), each ngspice run held
to one thread, and written in the library's order as each completes; a progress bar shows on a
terminal only. Each distinct reference inverter (drive, reference, mobility ratio) is balanced once
and shared. Keys in [defaults] or a [[gate]]: tolerance (percent), max_runs, area_cap,
cell_time_limit (seconds; default none); --tolerance, --max-runs, --area-cap and --cell-time-limit
come before them. The load (--load-ff, --load, --fanout; default the process's load_ff), the slew
and the models are the command line's. A variant not calibrated (its time limit, its run budget,
its area cap) is reported on stderr and left out; the others are written (exit 1; 2 where one was
past its run budget).

Errors: a bad gate (a TOML error inside its [[gate]] table included) is reported on stderr with its
name, line and column and the others are still written (exit 2). A TOML error outside the gate
tables, a bad process or [defaults], a duplicate name or two variants with the same name stop the
run before any output (exit 2).

",
    exit_codes_line!(),
    "

",
    estimates_note!()
);

/// Size every gate of a library file, in every drive it lists, into one table, CSV, JSON or
/// SPICE library.
#[derive(Debug, Clone, clap::Args)]
#[command(after_help = AFTER_HELP)]
pub struct Args {
    /// The library file: TOML with an optional process and [defaults], then [[gate]] entries; a
    /// regular file (a FIFO, a device or process substitution, <(...), is refused), or - to read
    /// it from standard input.
    pub library: PathBuf,
    /// Sizing for every gate, over the library's keys (see Precedence below).
    #[command(flatten)]
    pub sizing: SizingArgs,
    /// Series-stack order of every gate, over the library's keys: default (a gate's critical input,
    /// else the least diffusion facing the output, nearest the output) or written.
    #[arg(long, value_enum, value_name = "ORDER")]
    pub stack_order: Option<LibraryStackOrder>,
    /// The logic stage's pull-up of every gate, over the library's pull_up keys: a series (&) and
    /// parallel (|) structure of its uncomplemented input nets, or 'mirror' for the pull-down's own
    /// structure; a gate it does not fit (not proved the pull-down's complement) is reported.
    #[arg(long, value_name = "STRUCTURE|mirror")]
    pub pull_up: Option<String>,
    /// With a library on standard input (-): the folder its relative process path is relative to.
    /// Without it such a path is refused (a library file's path is relative to the file's folder).
    #[arg(long, value_name = "DIR")]
    pub base_dir: Option<PathBuf>,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
    /// Where to write.
    #[command(flatten)]
    pub output: OutputFile,
    /// Rows of the table and the CSV: one per gate variant, per transistor or per input
    /// [default: gates].
    #[arg(long, value_enum)]
    pub rows: Option<Rows>,
    /// Also prove every variant's netlist on its input vectors, as 'widthwise verify' does; a
    /// variant that fails is reported on stderr (and still written), and the exit code is 1.
    #[arg(long)]
    pub verify: bool,
    /// The work budget, in work units, of --verify over the whole library (vectors / 64 x input
    /// occurrences of every stage, summed over every variant); past it nothing is written, exit 2
    /// [default: 1073741824].
    #[arg(long, value_name = "UNITS", value_parser = work_budget, requires = "verify")]
    pub work_budget: Option<u64>,
    /// Calibration by simulation: every variant, as 'size --calibrate' does one, several at once.
    #[command(flatten)]
    pub calibration: CalibrateArgs,
    /// The calibration's load (with --calibrate only): every variant and its reference inverter
    /// drive it [default: the process's load_ff].
    #[command(flatten)]
    pub load: LoadArgs,
    /// With --calibrate: variants calibrated at once, each through its own ngspice process held
    /// to one thread [default: the machine's cores].
    #[arg(long, value_name = "N", requires = "calibrate", value_parser = clap::value_parser!(u16).range(1..=1024))]
    pub jobs: Option<u16>,
    /// With --calibrate: the most seconds one variant's calibration may take; past it the variant
    /// is reported not calibrated and left out, the others are written, and the exit code is 1
    /// [default: none].
    #[arg(long, value_name = "SECONDS", requires = "calibrate", value_parser = cell_time_limit)]
    pub cell_time_limit: Option<f64>,
}

fn cell_time_limit(text: &str) -> Result<f64, String> {
    let value = super::positive_number(text)?;
    if value > 1e6 {
        return Err(format!("the time limit is at most 1000000 seconds, found '{text}'"));
    }
    Ok(value)
}

/// The stack orders a library takes (the search times every order: one gate at a time, by `size`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum LibraryStackOrder {
    /// The critical input, else the least diffusion width facing the output, nearest the output.
    Default,
    /// As the expression writes the series members, the first nearest the output.
    Written,
}

/// How `batch` writes a library.
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
    /// A schematic per variant, DIR/<variant>.svg (with -o DIR; DIR is created).
    Svg,
}

impl Format {
    /// The writers' format for the library; `None` for the schematics, a file per variant.
    pub(super) fn report(self) -> Option<output::Format> {
        match self {
            Format::Table => Some(output::Format::Table),
            Format::Csv => Some(output::Format::Csv),
            Format::Json => Some(output::Format::Json),
            Format::Spice => Some(output::Format::Spice),
            Format::Svg => None,
        }
    }
}

/// Which rows the table and the CSV of a library have (delays are timed one gate at a time, by
/// `size --delays`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Rows {
    /// One row per sized gate.
    Gates,
    /// One row per transistor, with its input's and its gate's figures.
    Devices,
    /// One row per gate input.
    Inputs,
}

impl From<Rows> for output::Rows {
    fn from(rows: Rows) -> output::Rows {
        match rows {
            Rows::Gates => output::Rows::Gates,
            Rows::Devices => output::Rows::Devices,
            Rows::Inputs => output::Rows::Inputs,
        }
    }
}

/// Read the library file at `path` (`-`: standard input): its text, named as messages name it, and
/// the directory a relative process path starts from (on standard input: `base`, if given).
fn read_library(path: &Path, base: Option<&Path>) -> Result<(Source, Option<PathBuf>), Error> {
    let from_stdin = path.as_os_str() == "-";
    let origin = if from_stdin { "standard input".to_string() } else { path.display().to_string() };
    let what = format!("the library file '{origin}'");
    let bytes = if from_stdin {
        crate::io::read_stdin(MAX_LIBRARY_BYTES, &what)?
    } else {
        let hint = "; give '-' to read the library from standard input";
        let file = crate::io::open_regular(path, "the library file", hint)?;
        crate::io::read_bounded(file, MAX_LIBRARY_BYTES, &what, path)?
    };
    let text = crate::io::utf8_text(bytes, &what)?;
    let directory = match path.parent() {
        _ if from_stdin => base.map(Path::to_path_buf),
        Some(parent) if !parent.as_os_str().is_empty() => Some(parent.to_path_buf()),
        _ => Some(PathBuf::from(".")),
    };
    Ok((Source::file(origin, text), directory))
}

/// Read a library from `source`, a relative process path from `directory` (none: refused), the
/// command line's `overrides` first (process files through the I/O layer).
pub fn read(source: &Source, directory: Option<&Path>, overrides: &Overrides) -> Result<Library, Error> {
    let mut read_file = |path: &Path| crate::io::read_text(path, MAX_PROCESS_FILE_BYTES, "the process file");
    Library::read(source, directory, overrides, &mut read_file)
        .map_err(|error| Error::Library { error, file: source.clone() })
}

/// The refusal of `--format svg` without `-o DIR`.
fn schematics_need_a_folder() -> Error {
    Error::NotApplicable {
        option: "--format svg",
        case: "to standard output",
        why: "a library's schematics are one SVG file per variant: give -o DIR, the folder to write \
              DIR/<variant>.svg in (created if missing)",
    }
}

/// Size the library and write each variant's schematic to `folder/<variant>.svg` (the folder made if
/// missing; each file written atomically), each bad gate to standard error as it is found. The
/// first file that cannot be laid out or written stops the run.
fn write_schematics(
    library: &Library,
    source: &Source,
    verify: Option<&VerifyOptions>,
    folder: &Path,
) -> Result<Outcome, Error> {
    crate::io::create_folder(folder)?;
    let mut stopped: Option<Error> = None;
    let mut report = |problem: &GateProblem| Diagnostics.write_all(problem.render(source).as_bytes());
    let mut emit = |chunk: &[NamedCell]| {
        for variant in chunk {
            // The cell and figures of another variant of the same key are its own but for the name.
            let (cell, figures) = if variant.is_own() {
                (Cow::Borrowed(variant.shared.cell()), Cow::Borrowed(variant.shared.figures()))
            } else {
                (Cow::Owned(variant.cell()), Cow::Owned(variant.figures()))
            };
            let written = schematic_cell::layout(&cell, &figures).map_err(Error::from).and_then(|layout| {
                let path = folder.join(format!("{}.svg", cell.name));
                crate::io::write_atomically(&path, |out| layout.write_svg(out)).map_err(Error::from)
            });
            if let Err(error) = written {
                stopped = Some(error);
                return Err(io::Error::other("stopped"));
            }
        }
        Ok(())
    };
    let outcome = size_all(library, verify, &mut report, &mut emit);
    match (stopped, outcome) {
        (Some(error), _) => Err(error),
        (None, Ok(outcome)) => Ok(outcome),
        (None, Err(error)) => {
            Err(crate::io::OutputError::Unwritable { path: folder.to_path_buf(), source: error }.into())
        }
    }
}

/// Refuse what does not apply, and gather the command line's overrides of the library's keys.
fn overrides(args: &Args) -> Result<Overrides, Error> {
    if args.rows.is_some() && matches!(args.format, Format::Json | Format::Spice | Format::Svg) {
        return Err(Error::NotApplicable {
            option: "--rows",
            case: "with --format json, spice or svg",
            why: "only the table and the CSV have rows (JSON has every figure of every variant, SPICE a .subckt \
                  per variant, SVG a schematic per variant)",
        });
    }
    if args.format == Format::Svg && args.output.output.is_none() {
        return Err(schematics_need_a_folder());
    }
    if args.base_dir.is_some() && args.library.as_os_str() != "-" {
        return Err(Error::NotApplicable {
            option: "--base-dir",
            case: "to a library file",
            why: "a library file's relative process path is relative to the file's own folder; --base-dir states \
                  it for a library read from standard input (-)",
        });
    }
    let calibration = &args.calibration;
    let simulation_given = [
        (calibration.models.models.is_some(), "--models"),
        (calibration.models.slew_ps.is_some(), "--slew-ps"),
        (args.load.fanout.is_some(), "--fanout"),
        (args.load.load.is_some(), "--load"),
        (args.load.load_ff.is_some(), "--load-ff"),
    ];
    if let Some((_, option)) = simulation_given.into_iter().find(|(given, _)| *given && !calibration.calibrate) {
        return Err(Error::NotApplicable {
            option,
            case: "without --calibrate",
            why: "only a calibration simulates the cells and loads them; add --calibrate",
        });
    }
    if calibration.calibrate && args.verify {
        return Err(Error::NotApplicable {
            option: "--verify",
            case: "with --calibrate",
            why: "verify the library first ('widthwise batch --verify'): calibration changes widths only, never \
                  the transistors' connections",
        });
    }
    if args.sizing.method == Some(MethodName::Elmore) {
        return Err(Error::NotApplicable {
            option: "--method elmore",
            case: "to a library",
            why: "the elmore method sizes against a load, which a library does not give: use longest-path or \
                  min-area, or size the gate with 'widthwise size --method elmore --fanout H'",
        });
    }
    if args.sizing.delay_target.is_some() {
        return Err(Error::NotApplicable {
            option: "--delay-target",
            case: "in a batch",
            why: "the delay target belongs to the elmore method, which a library does not take: size the gate \
                  with 'widthwise size --method elmore --delay-target RATIO'",
        });
    }
    if let (Some(method), Some(worst_case)) = (args.sizing.method, args.sizing.worst_case) {
        Method::with(method, worst_case).map_err(SizingError::from)?;
    }
    let process = match &args.sizing.process {
        Some(_) => Some(Arc::new(args.sizing.read_process()?)),
        None => None,
    };
    Ok(Overrides {
        process,
        method: args.sizing.method,
        worst_case: args.sizing.worst_case,
        mobility_ratio: args.sizing.mobility_ratio,
        drive: args.sizing.drive,
        reference: args.sizing.reference,
        stack_order: args.stack_order.map(|order| match order {
            LibraryStackOrder::Default => StackOrder::Default,
            LibraryStackOrder::Written => StackOrder::Written,
        }),
        stage_effort: args.sizing.stage_effort,
        pull_up: args.pull_up.clone(),
    })
}

/// Size the library and write it in `format` (`rows` for table and CSV) to `out`, each bad gate to
/// `diagnostics` as it is found (`source`: the library file, for the places).
pub fn write_batch(
    library: &Library,
    source: &Source,
    format: output::Format,
    rows: output::Rows,
    verify: Option<&VerifyOptions>,
    out: &mut dyn Write,
    diagnostics: &mut dyn Write,
) -> io::Result<Outcome> {
    let mut report = |problem: &GateProblem| diagnostics.write_all(problem.render(source).as_bytes());
    let mut writer = BatchWriter::start(format, rows, &library.process, out)?;
    let outcome = size_all(library, verify, &mut report, &mut |chunk| writer.write(chunk))?;
    writer.finish(&Heading {
        origin: source.origin(),
        gates: outcome.gates,
        failed: outcome.failed,
        variants: outcome.variants,
        mobility_ratio: library.mobility_ratio,
    })?;
    Ok(outcome)
}

/// Read the library, refuse name clashes and (with `--verify`) verification past its work budget
/// before any output, size and write.
pub fn run(args: Args) -> Result<(), Error> {
    let overrides = overrides(&args)?;
    let work_budget = args.work_budget.unwrap_or(DEFAULT_WORK_BUDGET);
    let verify = args.verify.then_some(VerifyOptions { work_budget, ..VerifyOptions::default() });
    let (source, directory) = read_library(&args.library, args.base_dir.as_deref())?;
    let library = read(&source, directory.as_deref(), &overrides)?;
    let clashes = library.name_clashes();
    if !clashes.is_empty() {
        for clash in clashes {
            diagnose(&clash.render(&source));
        }
        return Err(Error::NameClashes { count: clashes.len() });
    }
    if args.calibration.calibrate {
        return super::batch_calibrate::run(&args, library, &source);
    }
    if let Some(options) = &verify {
        let (work, estimate) = library.verify_work(options);
        Meter::new(options.work_budget).require(work, estimate, Work::Verify)?;
    }
    let rows = args.rows.unwrap_or(Rows::Gates).into();
    let mut outcome = Outcome::default();
    match (args.format.report(), args.output.output.as_deref()) {
        (Some(format), output) => crate::io::write_output(output, |out| {
            // Gates are sized one after another, so each verification may use every core.
            outcome = write_batch(&library, &source, format, rows, verify.as_ref(), out, &mut Diagnostics)?;
            Ok(())
        })?,
        (None, output) => {
            let folder = output.ok_or_else(schematics_need_a_folder)?;
            outcome = write_schematics(&library, &source, verify.as_ref(), folder)?;
            diagnose(&format!("wrote {} schematics in '{}'\n", outcome.variants, folder.display()));
        }
    }
    if outcome.failed > 0 {
        return Err(Error::GatesFailed { failed: outcome.failed, total: outcome.gates });
    }
    if verify.is_some() {
        if outcome.unverified > 0 {
            return Err(Error::VariantsUnverified { unverified: outcome.unverified, variants: outcome.variants });
        }
        diagnose(&format!("verified: all {} variants pass every check on their input vectors\n", outcome.verified));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The library written with its variants shared (`limits`) or each sized afresh (`(0, 0)`):
    /// the output, the diagnostics and how it went.
    fn written(
        text: &str,
        format: output::Format,
        rows: output::Rows,
        verify: Option<&VerifyOptions>,
        limits: (usize, usize),
    ) -> (String, String, Outcome) {
        let source = Source::file("lib.toml", text);
        let library = read(&source, Some(Path::new(".")), &Overrides::default()).unwrap();
        let (mut out, mut diagnostics) = (Vec::new(), Vec::new());
        let mut report = |problem: &GateProblem| diagnostics.write_all(problem.render(&source).as_bytes());
        let mut writer = BatchWriter::start(format, rows, &library.process, &mut out).unwrap();
        let outcome =
            crate::library::size_all_keeping(&library, verify, limits, &mut report, &mut |c| writer.write(c)).unwrap();
        let heading = Heading { origin: "lib.toml", gates: outcome.gates, failed: 0, variants: 0, mobility_ratio: 2.0 };
        writer.finish(&heading).unwrap();
        (String::from_utf8(out).unwrap(), String::from_utf8(diagnostics).unwrap(), outcome)
    }

    #[test]
    fn shared_variants_write_the_bytes_of_variants_sized_afresh() {
        // Gates repeated under other names, beside gates that differ in one key; a process whose
        // model is named as one variant, which only that variant's name refuses (common practice,
        // no source: a name labels a cell and never changes its sizes).
        let kinds = [
            "expr = \"nand2\"",
            "expr = \"nand2\"\nmethod = \"min-area\"",
            "expr = \"!(a & b | a & c)\"\nmethod = \"min-area\"\nworst_case = \"vectors\"",
            "expr = \"!(a & b | a & c)\"\nmethod = \"min-area\"",
            "expr = \"aoi21\"\ncritical = \"c\"\ndrive = [1, 3.5]",
            "expr = \"and2\"\nstage_effort = 3",
            "expr = \"xor2\"",
            "expr = \"nor3\"\nstack_order = \"written\"\nreference = [1, 3]",
        ];
        let mut text = String::from(
            "[process]\nname = \"p\"\nmobility_ratio = 2.5\nlength_nm = 150.0\nunit_width_nm = 320.0\ngrid_nm = 10.0\n\
             min_width_nm = 220.0\nmax_finger_width_nm = 4000.0\nsupply_v = 1.5\nnmos_model = \"g3_1_x2\"\n\
             pmos_model = \"pch\"\nnmos_threshold_v = 0.42\npmos_threshold_v = 0.45\nnmos_kp_ua_per_v2 = 280.0\n\
             pmos_kp_ua_per_v2 = 112.0\nbody_effect_sqrt_v = 0.35\ngate_cap_ff_per_um = 1.1\n\
             diffusion_cap_ff_per_um = 0.9\nload_ff = 5.0\n\n[defaults]\ndrive = [1, 2]\n",
        );
        for copy in 0..3 {
            for (kind, keys) in kinds.iter().enumerate() {
                text.push_str(&format!("\n[[gate]]\nname = \"g{kind}_{copy}\"\n{keys}\n"));
            }
        }
        let views = [
            (output::Format::Csv, output::Rows::Gates),
            (output::Format::Csv, output::Rows::Devices),
            (output::Format::Csv, output::Rows::Inputs),
            (output::Format::Json, output::Rows::Gates),
            (output::Format::Spice, output::Rows::Gates),
            (output::Format::Table, output::Rows::Gates),
            (output::Format::Table, output::Rows::Devices),
            (output::Format::Table, output::Rows::Inputs),
        ];
        for (format, rows) in views {
            let shared = written(&text, format, rows, None, (64, 4096));
            let afresh = written(&text, format, rows, None, (0, 0));
            assert_eq!(shared.0, afresh.0, "{format:?} {rows:?}");
            assert_eq!(shared.1, afresh.1, "{format:?} {rows:?}");
            assert!(shared.1.contains("gate 'g3_1': ") && shared.1.contains("g3_1_x2"), "{}", shared.1);
            // 16 variants of 8 kinds in 3 copies; g3_1_x2 is refused.
            assert_eq!((shared.2.reused, afresh.2.reused), (31, 0), "{format:?} {rows:?}");
            assert_eq!(Outcome { reused: 0, ..shared.2 }, afresh.2);
        }
        let options = VerifyOptions::default();
        let shared = written(&text, output::Format::Csv, output::Rows::Gates, Some(&options), (64, 4096));
        let afresh = written(&text, output::Format::Csv, output::Rows::Gates, Some(&options), (0, 0));
        assert_eq!((&shared.0, &shared.1), (&afresh.0, &afresh.1));
        assert_eq!((shared.2.verified, afresh.2.verified), (afresh.2.variants, afresh.2.variants));
        // Kept one cell at a time, each new key drops the last: the same bytes.
        let one = written(&text, output::Format::Json, output::Rows::Gates, None, (1, 4096));
        assert_eq!(one.0, written(&text, output::Format::Json, output::Rows::Gates, None, (0, 0)).0);
    }

    #[test]
    fn a_closed_pipe_under_the_csv_writer_keeps_its_kind() {
        struct Closed;
        impl Write for Closed {
            fn write(&mut self, _: &[u8]) -> io::Result<usize> {
                Err(io::ErrorKind::BrokenPipe.into())
            }
            fn flush(&mut self) -> io::Result<()> {
                Err(io::ErrorKind::BrokenPipe.into())
            }
        }
        let source =
            Source::file("lib.toml", "[[gate]]\nname = \"g\"\nexpr = \"nand8\"\ndrive = [1, 2, 3, 4, 5, 6, 7, 8]\n");
        let library = read(&source, Some(Path::new(".")), &Overrides::default()).unwrap();
        let error = write_batch(
            &library,
            &source,
            output::Format::Csv,
            output::Rows::Devices,
            None,
            &mut Closed,
            &mut io::sink(),
        )
        .unwrap_err();
        assert_eq!(error.kind(), io::ErrorKind::BrokenPipe);
    }
}
