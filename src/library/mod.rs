//! Library files: a library file lists the gates a library or block needs, each in one or more
//! drives; this reads it into a plan per gate and sizes every variant, one bad gate spoiling no
//! other.
//!
//! The file is TOML: an optional `process` (a path or a table), optional `[defaults]` and
//! `[[gate]]` entries. It is parsed once into a spanned tree; each gate entry is then read on its
//! own, so a wrong key or value in one gate is reported with its place while the rest go on.
//! Variants are sized in file order and handed on in chunks as they come, so memory grows with the
//! file, not with the output. Nothing here touches a file: a process file the library names is read
//! through a reader the caller supplies.

pub mod entries;
pub mod error;
pub mod plan;

use std::collections::HashMap;
use std::io;
use std::ops::Range;
use std::path::Path;
use std::sync::Arc;

use serde::Deserialize;
use toml::de::{DeArray, DeTable, DeValue, ValueDeserializer};

use crate::bounds;
use crate::budget::Estimate;
use crate::cell::SizedCell;
use crate::diagnostic::{Source, Span, escaped};
use crate::figures::CellFigures;
use crate::logic::{CellLogic, PullUpSpec, synthesize_with_models};
use crate::names;
use crate::process::Process;
use crate::sizing::{self, MethodName, StackOrder};
use crate::verify::{self, VerifyOptions};

use entries::{
    Common, DefaultsEntry, check_calibration, check_drives, check_reference, check_stack_order, check_stage_effort,
    read_gate_entry, read_process, repeated_drive, taken, to_span,
};
pub use entries::{MAX_DRIVES_PER_GATE, Overrides, ReadFile};
pub use error::LibraryError;
pub use plan::{CalibrationKeys, GatePlan, GateProblem, Place};

/// The drive of a gate that neither it nor `[defaults]` sets.
pub const DEFAULT_DRIVE: f64 = 1.0;

/// Longest library file read, in bytes (a 20,000-gate library is about 1.2 MB).
pub const MAX_LIBRARY_BYTES: usize = 64 << 20;
/// Most variants (gates x drives) of one library, checked before any gate is sized: six times the
/// 33,334 variants of the 20,000-gate benchmark library.
pub const MAX_VARIANTS: usize = 200_000;

/// The method of a gate that neither it nor `[defaults]` sets.
pub const DEFAULT_METHOD: MethodName = MethodName::LongestPath;
/// How many sized variants are held before they are written.
const CHUNK: usize = 256;

/// A library file, read and checked: the process and every gate, or why it cannot be sized.
#[derive(Debug, Clone)]
pub struct Library {
    /// The process: physical sizes and, unless `[defaults]` says otherwise, the mobility ratio.
    pub process: Arc<Process>,
    /// The mobility ratio every gate is sized with: `[defaults]`, else the process's.
    pub mobility_ratio: f64,
    /// Every gate in file order.
    pub gates: Vec<Result<GatePlan, GateProblem>>,
}

impl Library {
    /// Read a library file, `source` (whose origin names it in messages); a relative process path
    /// is read from `directory` (none: a library on standard input without a stated folder, where a
    /// relative path is refused), through `read_file`. `overrides` (the command line) come before
    /// every key of the file. A TOML error, an unknown top-level key, a bad `[defaults]` or a bad
    /// process stops here; a bad gate becomes that gate's [`GateProblem`].
    pub fn read(
        source: &Source,
        directory: Option<&Path>,
        overrides: &Overrides,
        read_file: &mut ReadFile<'_>,
    ) -> Result<Library, LibraryError> {
        let document = DeTable::parse(source.text()).map_err(|e| {
            let span = e.span().map(to_span);
            let (message, span) = crate::diagnostic::toml_error_place(source.text(), e.message(), span);
            LibraryError::File { message, span }
        })?;
        let mut process = None;
        let mut defaults = None;
        let mut gates = None;
        let mut unknown: Option<(String, Range<usize>)> = None;
        for (key, value) in document.into_inner() {
            match key.get_ref().as_ref() {
                "process" => process = Some(value),
                "defaults" => defaults = Some(value),
                "gate" => gates = Some(value),
                other => {
                    if unknown.as_ref().is_none_or(|(_, span)| key.span().start < span.start) {
                        unknown = Some((other.to_string(), key.span()));
                    }
                }
            }
        }
        if let Some((key, span)) = unknown {
            return Err(LibraryError::at(
                format!("unknown key '{}': a library file has process, [defaults] and [[gate]] entries", escaped(&key)),
                Some(span),
            ));
        }
        let process = match (&overrides.process, process) {
            (Some(given), _) => Arc::clone(given),
            (None, None) => Arc::new(Process::default()),
            (None, Some(value)) => Arc::new(read_process(directory, read_file, value)?),
        };
        let defaults = match defaults {
            None => DefaultsEntry::default(),
            Some(value) => {
                if !value.get_ref().is_table() {
                    return Err(LibraryError::at("defaults must be a [defaults] table", Some(value.span())));
                }
                DefaultsEntry::deserialize(ValueDeserializer::from(value))
                    .map_err(|e| LibraryError::at(format!("[defaults]: {}", e.message().trim()), e.span()))?
            }
        };
        let mobility_ratio = match (overrides.mobility_ratio, &defaults.mobility_ratio) {
            (Some(given), _) => given,
            (None, None) => process.mobility_ratio,
            (None, Some(written)) => {
                let value = *written.get_ref();
                bounds::SIZING.check(value).map_err(|why| {
                    let value = bounds::show(value);
                    LibraryError::at(format!("[defaults]: mobility_ratio = {value}: {why}"), Some(written.span()))
                })?
            }
        };
        let default_drives = match &defaults.drive {
            None => vec![(DEFAULT_DRIVE, Span::default())],
            Some(written) => {
                let drives = check_drives(written).map_err(|(message, span)| {
                    LibraryError::at(format!("[defaults]: {message}"), Some(span.start..span.end))
                })?;
                if let Some((drive, span)) = repeated_drive(&drives) {
                    return Err(LibraryError::at(
                        format!(
                            "[defaults]: drive {drive} is listed twice: every gate would get two variants named \
                             <name>_{}",
                            names::drive_suffix(drive)
                        ),
                        Some(span.start..span.end),
                    ));
                }
                drives
            }
        };
        let stack_order = match &defaults.stack_order {
            Some(order) => {
                check_stack_order(order).map_err(|message| LibraryError::at(message, Some(order.span())))?;
                *order.get_ref()
            }
            None => StackOrder::Default,
        };
        let reference = match &defaults.reference {
            Some(written) => Some(check_reference(written).map_err(|(message, span)| {
                LibraryError::at(format!("[defaults]: {message}"), Some(span.start..span.end))
            })?),
            None => None,
        };
        let stage_effort = match (overrides.stage_effort, &defaults.stage_effort) {
            (Some(given), _) => given,
            (None, None) => crate::sizing::plan::DEFAULT_STAGE_EFFORT,
            (None, Some(written)) => check_stage_effort(written).map_err(|(message, span)| {
                LibraryError::at(format!("[defaults]: {message}"), Some(span.start..span.end))
            })?,
        };
        let pull_up = defaults.pull_up.as_ref().map(|written| (written.get_ref().clone(), to_span(written.span())));
        let calibration = check_calibration(
            [&defaults.tolerance, &defaults.max_runs, &defaults.area_cap, &defaults.cell_time_limit],
            CalibrationKeys::default(),
        )
        .map_err(|(message, span)| LibraryError::at(format!("[defaults]: {message}"), Some(span.start..span.end)))?;
        let common = Common {
            calibration,
            method: defaults.method.unwrap_or(DEFAULT_METHOD),
            worst_case: defaults.worst_case.unwrap_or_default(),
            stack_order,
            mobility_ratio,
            drives: default_drives,
            reference,
            stage_effort,
            pull_up,
            overrides: overrides.clone(),
        };

        let mut entries = match gates {
            None => DeArray::new(),
            Some(value) => {
                let span = value.span();
                match value.into_inner() {
                    DeValue::Array(array) => array,
                    _ => return Err(LibraryError::at("gate must be a list of [[gate]] tables", Some(span))),
                }
            }
        };
        // Each entry is taken out of the tree as it is read, so the tree shrinks as plans grow.
        let gates: Vec<Result<GatePlan, GateProblem>> = entries
            .iter_mut()
            .enumerate()
            .map(|(index, entry)| read_gate_entry(source, &common, index + 1, std::mem::replace(entry, taken())))
            .collect();
        let variants: usize = gates.iter().flatten().map(|plan: &GatePlan| plan.drives.len()).sum();
        if variants > MAX_VARIANTS {
            return Err(LibraryError::at(
                format!(
                    "the library asks for {variants} variants (each gate in each of its drives); the limit is \
                     {MAX_VARIANTS} per library: split it into several files"
                ),
                None,
            ));
        }
        Ok(Library { process, mobility_ratio, gates })
    }

    /// The work units of verifying every variant ([`verify::verify_work`]), from each gate's pins and
    /// input occurrences, every stage of a cell counted (the pull-down devices of all its stages, as
    /// verify counts them); a gate that cannot be read counts nothing (it is reported when it is
    /// sized). A function with two forms (docs/model.md section 9) counts the larger, since the one
    /// kept is known only once both are sized: the estimate is then an upper bound.
    pub fn verify_work(&self, options: &VerifyOptions) -> (u128, Estimate) {
        let models = self.process.model_names();
        let mut estimate = Estimate::Exactly;
        let work = self
            .gates
            .iter()
            .flatten()
            .filter_map(|plan| {
                let forms = synthesize_with_models(&plan.expression, &models).ok()?;
                if forms.len() > 1 {
                    estimate = Estimate::UpTo;
                }
                let one = forms
                    .iter()
                    .map(|form| {
                        let occurrences = form.stages.iter().map(|stage| stage.function.literals.len()).sum();
                        verify::verify_work(form.inputs.len(), occurrences, options)
                    })
                    .max()?;
                Some(one * plan.drives.len() as u128)
            })
            .sum();
        (work, estimate)
    }

    /// Names that would clash in the output, each reported at its second use: a gate name used
    /// twice, or a drive listed twice in one gate (two variants of one name). Variants of distinct
    /// gates cannot clash: `<name>_x<drive>` is unique for distinct names (see [`names::drive_suffix`]).
    pub fn name_clashes(&self) -> Vec<GateProblem> {
        // Netlists ignore case, so `Nand2` and `nand2` would be one subcircuit.
        let mut first: HashMap<String, (usize, &str)> = HashMap::with_capacity(self.gates.len());
        let mut clashes = Vec::new();
        for plan in self.gates.iter().flatten() {
            let repeated = if plan.drives.len() > 1 {
                let drives: Vec<(f64, Span)> =
                    plan.drives.iter().copied().zip(plan.drive_spans.iter().copied()).collect();
                repeated_drive(&drives)
            } else {
                None
            };
            if let Some((drive, span)) = repeated {
                clashes.push(plan.problem(
                    format!(
                        "drive {drive} is listed twice: both variants would be subcircuit '{}'; variant names must \
                         be unique",
                        plan.variant_name(drive)
                    ),
                    Place::File(span),
                ));
            }
            let key = plan.name.to_ascii_lowercase();
            if let Some(&(number, name)) = first.get(&key) {
                let how =
                    if name == plan.name { String::new() } else { format!(" as '{name}' (netlists ignore case)") };
                clashes.push(plan.problem(
                    format!(
                        "the name is already used by gate {number}{how}; names must be unique, since each becomes a \
                         subcircuit and a spreadsheet key"
                    ),
                    Place::File(plan.name_span),
                ));
            } else {
                first.insert(key, (plan.number, &plan.name));
            }
        }
        clashes
    }
}

/// How a batch went.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Outcome {
    /// Gates in the file.
    pub gates: usize,
    /// Gates that could not be sized (each reported).
    pub failed: usize,
    /// Variants sized and written.
    pub variants: usize,
    /// Variants that passed verification (with `--verify`).
    pub verified: usize,
    /// Variants that failed verification (with `--verify`; still written).
    pub unverified: usize,
}

/// Size one gate in each of its drives, or say why it cannot be.
pub fn size_plan(plan: &GatePlan, process: &Arc<Process>) -> Result<Vec<SizedCell>, GateProblem> {
    let forms = forms_of(plan, process)?;
    let mut variants = Vec::with_capacity(plan.drives.len());
    for &drive in &plan.drives {
        variants.push(size_form(plan, &forms, drive, process)?);
    }
    Ok(variants)
}

/// Size one variant of a gate, the one at `drive`, or say why the gate cannot be sized.
pub fn size_variant(plan: &GatePlan, drive: f64, process: &Arc<Process>) -> Result<SizedCell, GateProblem> {
    size_form(plan, &forms_of(plan, process)?, drive, process)
}

fn size_form(
    plan: &GatePlan,
    forms: &[CellLogic],
    drive: f64,
    process: &Arc<Process>,
) -> Result<SizedCell, GateProblem> {
    sizing::size_best(forms, &plan.plan(drive, process)?)
        .map_err(|error| plan.problem(error.to_string(), Place::File(plan.name_span)))
}

/// Every form of a gate's function, its critical input checked.
fn forms_of(plan: &GatePlan, process: &Arc<Process>) -> Result<Vec<CellLogic>, GateProblem> {
    let mut forms = synthesize_with_models(&plan.expression, &process.model_names())
        .map_err(|error| plan.expression_problem(error.to_string(), error.span()))?;
    if let Some(pull_up) = &plan.pull_up {
        let spec =
            if pull_up.text.trim() == "mirror" { PullUpSpec::Mirror } else { PullUpSpec::Written(&pull_up.text) };
        // As for one gate: the forms whose logic stage it fits; where it fits none, the first refusal.
        let mut first_error = None;
        let mut accepted = Vec::with_capacity(forms.len());
        for form in forms {
            match form.with_pull_up(spec) {
                Ok(form) => accepted.push(form),
                Err(error) => {
                    first_error.get_or_insert(error);
                }
            }
        }
        if let (true, Some(error)) = (accepted.is_empty(), first_error) {
            let place =
                if spec == PullUpSpec::Mirror { Place::File(pull_up.span) } else { pull_up.place(error.span()) };
            return Err(plan.problem(format!("pull_up: {error}"), place));
        }
        forms = accepted;
    }
    let logic = &forms[0];
    if let Some(critical) = &plan.critical
        && !logic.inputs.contains(critical)
    {
        let span = plan.critical_span.unwrap_or(plan.name_span);
        return Err(plan.problem(
            format!(
                "critical input '{}' is not an input of the gate (its inputs: {})",
                escaped(critical),
                logic.inputs.join(", ")
            ),
            Place::File(span),
        ));
    }
    Ok(forms)
}

/// Size every gate in file order, reporting each bad one as it is found and handing the sized
/// variants on in chunks.
///
/// With `verify`, every variant is also checked switch by switch on its input vectors
/// ([`verify::verify`]); a variant that fails is still written, and reported like a bad gate.
pub fn size_all(
    library: &Library,
    verify: Option<&VerifyOptions>,
    report: &mut dyn FnMut(&GateProblem) -> io::Result<()>,
    emit: &mut dyn FnMut(&[SizedCell]) -> io::Result<()>,
) -> io::Result<Outcome> {
    let mut outcome = Outcome { gates: library.gates.len(), ..Outcome::default() };
    let mut chunk: Vec<SizedCell> = Vec::with_capacity(CHUNK + 8);
    for gate in &library.gates {
        match gate.as_ref().map_err(Clone::clone).and_then(|plan| size_plan(plan, &library.process).map(|v| (plan, v)))
        {
            Ok((plan, variants)) => {
                if let Some(options) = verify {
                    for variant in &variants {
                        let failure = match verify::verify(&CellFigures::of(variant), options) {
                            Ok(result) => result.outcome().err().map(|error| error.to_string()),
                            Err(error) => Some(format!("'{}' cannot be verified: {error}", variant.name)),
                        };
                        match failure {
                            None => outcome.verified += 1,
                            Some(message) => {
                                outcome.unverified += 1;
                                report(&plan.problem(message, Place::File(plan.name_span)))?;
                            }
                        }
                    }
                }
                outcome.variants += variants.len();
                chunk.extend(variants);
                if chunk.len() >= CHUNK {
                    emit(&chunk)?;
                    chunk.clear();
                }
            }
            Err(problem) => {
                outcome.failed += 1;
                report(&problem)?;
            }
        }
    }
    if !chunk.is_empty() {
        emit(&chunk)?;
    }
    Ok(outcome)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::InputError;
    use crate::sizing::Method;

    /// The reader the command supplies: process files through the I/O layer.
    fn read_file(path: &Path) -> Result<String, InputError> {
        crate::io::read_text(path, crate::process::MAX_PROCESS_FILE_BYTES, "the process file")
    }

    fn read(source: &Source) -> Result<Library, LibraryError> {
        Library::read(source, Some(Path::new(".")), &Overrides::default(), &mut read_file)
    }

    fn library(text: &str) -> Library {
        read(&Source::file("lib.toml", text)).unwrap()
    }

    fn read_error(text: &str) -> String {
        let source = Source::file("lib.toml", text);
        read(&source).unwrap_err().diagnostic(&source).render()
    }

    fn problem(text: &str, index: usize) -> String {
        let source = Source::file("lib.toml", text);
        let library = read(&source).unwrap();
        let problem = match &library.gates[index] {
            Err(problem) => problem.clone(),
            Ok(plan) => size_plan(plan, &Arc::new(Process::default())).unwrap_err(),
        };
        problem.render(&source)
    }

    #[test]
    fn drive_suffixes_keep_the_drive() {
        assert_eq!(names::drive_suffix(1.0), "x1");
        assert_eq!(names::drive_suffix(1.5), "x1p5");
        assert_eq!(names::drive_suffix(0.25), "x0p25");
        assert_eq!(names::drive_suffix(16.0), "x16");
    }

    #[test]
    fn precedence_is_gate_then_defaults_then_process() {
        let lib = library(
            "[defaults]\nmethod = \"min-area\"\ndrive = [1, 2]\n\n\
             [[gate]]\nname = \"a\"\nexpr = \"nand2\"\n\n\
             [[gate]]\nname = \"b\"\nexpr = \"nor2\"\nmethod = \"longest-path\"\ndrive = 4\n",
        );
        let a = lib.gates[0].as_ref().unwrap();
        assert_eq!((a.method, a.drives.clone(), a.mobility_ratio), (Method::MIN_AREA, vec![1.0, 2.0], 2.0));
        let b = lib.gates[1].as_ref().unwrap();
        assert_eq!((b.method, b.drives.clone()), (Method::LongestPath, vec![4.0]));
        assert_eq!(a.variant_name(2.0), "a_x2");
    }

    #[test]
    fn expression_errors_point_into_the_file_line() {
        let text = "[[gate]]\nname = \"ok\"\nexpr = \"nand2\"\n\n[[gate]]\nname = \"bad\"\nexpr = \"!(a & )\"\n";
        let rendered = problem(text, 1);
        let lines: Vec<&str> = rendered.lines().collect();
        assert!(lines[0].starts_with("error: gate 'bad': expected"), "{rendered}");
        assert_eq!(lines[1], "  at lib.toml, line 7, column 15:");
        assert_eq!(lines[2], "    expr = \"!(a & )\"");
        assert_eq!(lines[3], "                  ^");
    }

    #[test]
    fn escaped_expressions_are_shown_on_their_own() {
        let text = "[[gate]]\nname = \"bad\"\nexpr = \"!(a \\u0026 )\"\n";
        let rendered = problem(text, 0);
        assert!(rendered.contains("the expr string (lib.toml, line 3)"), "{rendered}");
        assert!(rendered.contains("    !(a & )\n          ^"), "{rendered}");
    }

    #[test]
    fn schema_errors_in_one_gate_name_it_and_its_line() {
        let text = "[[gate]]\nname = \"ok\"\nexpr = \"nand2\"\n\n[[gate]]\nname = \"odd\"\nexpr = \"nor2\"\nsize = 3\n";
        let lib = library(text);
        assert!(lib.gates[0].is_ok());
        let rendered = problem(text, 1);
        assert!(rendered.starts_with("error: gate 'odd': unknown field `size`"), "{rendered}");
        assert!(rendered.contains("lib.toml, line 8"), "{rendered}");
        let missing = problem("[[gate]]\nname = \"m\"\n", 0);
        assert!(missing.contains("missing field `expr`") && missing.contains("line 1"), "{missing}");
    }

    #[test]
    fn bad_names_say_why() {
        for name in ["=cmd", "+x", "-x", "@x", "1x", ""] {
            let rendered = problem(&format!("[[gate]]\nname = \"{name}\"\nexpr = \"inv\"\n"), 0);
            assert!(rendered.contains("spreadsheet"), "{rendered}");
            assert!(rendered.contains("line 2"), "{rendered}");
        }
    }

    #[test]
    fn bad_drives() {
        for (drive, why) in [
            ("0", "from 1e-6 up to 1e6"),
            ("[1, -2]", "1e-6"),
            ("[1, 5e-324]", "1e-6"),
            ("[]", "empty"),
            ("\"x\"", "expected"),
        ] {
            let rendered = problem(&format!("[[gate]]\nname = \"g\"\nexpr = \"inv\"\ndrive = {drive}\n"), 0);
            assert!(rendered.contains(why) && rendered.contains("line 4"), "{drive}: {rendered}");
        }
        let error = read_error("[defaults]\ndrive = [2, 2]\n");
        assert!(error.contains("twice") && error.contains("line 2"), "{error}");
    }

    #[test]
    fn whole_file_errors() {
        assert!(read_error("[[gate]\n").contains("line 1"));
        let unknown = read_error("gates = []\n");
        assert!(unknown.contains("unknown key 'gates'"), "{unknown}");
        let defaults = read_error("[defaults]\nmobility_ratio = -2\n");
        assert!(defaults.contains("mobility_ratio") && defaults.contains("line 2"), "{defaults}");
        let process = read_error("[process]\nmobility_ratio = 2.0\n");
        assert!(process.contains("[process]: missing field"), "{process}");
        let missing = read_error("process = \"no-such-process.toml\"\n");
        assert!(missing.contains("cannot read the process file"), "{missing}");
    }

    #[test]
    fn duplicate_names_and_drives_are_clashes() {
        let lib = library("[[gate]]\nname = \"g\"\nexpr = \"inv\"\n[[gate]]\nname = \"g\"\nexpr = \"nand2\"\n");
        let clashes = lib.name_clashes();
        assert_eq!(clashes.len(), 1);
        assert!(clashes[0].message.contains("gate 1"));
        let text = "[[gate]]\nname = \"g\"\nexpr = \"inv\"\ndrive = [1, 2, 1.0]\n";
        let clashes = library(text).name_clashes();
        assert_eq!(clashes.len(), 1);
        let rendered = clashes[0].render(&Source::file("lib.toml", text));
        assert!(rendered.contains("subcircuit 'g_x1'") && rendered.contains("line 4, column 16"), "{rendered}");
    }

    #[test]
    fn variants_are_bounded_per_gate_and_per_library() {
        let list = |count: usize| (1..=count).map(|d| d.to_string()).collect::<Vec<_>>().join(", ");
        let gate = |drives: &str| format!("[[gate]]\nname = \"g\"\nexpr = \"inv\"\ndrive = [{drives}]\n");
        // At the gate's limit the file reads; one more drive is that gate's problem, at its list.
        let at = library(&gate(&list(MAX_DRIVES_PER_GATE)));
        assert_eq!(at.gates[0].as_ref().unwrap().drives.len(), MAX_DRIVES_PER_GATE);
        let rendered = problem(&gate(&list(MAX_DRIVES_PER_GATE + 1)), 0);
        assert!(rendered.contains("drive lists 100001 drives; the limit is 100000 per gate"), "{rendered}");
        assert!(rendered.contains("line 4, column 9"), "{rendered}");
        // Two gates of the most drives are the library's limit; a third gate is past it.
        let defaults = format!("[defaults]\ndrive = [{}]\n", list(MAX_DRIVES_PER_GATE));
        let gates = |count: usize| {
            (0..count).map(|i| format!("[[gate]]\nname = \"g{i}\"\nexpr = \"inv\"\n")).collect::<String>()
        };
        assert_eq!(library(&format!("{defaults}{}", gates(2))).gates.len(), 2);
        let error = read_error(&format!("{defaults}{}", gates(3)));
        assert!(error.contains("asks for 300000 variants") && error.contains("the limit is 200000"), "{error}");
    }

    #[test]
    fn unknown_critical_input_points_at_the_key() {
        let rendered = problem("[[gate]]\nname = \"g\"\nexpr = \"nand2\"\ncritical = \"q\"\n", 0);
        assert!(rendered.contains("'q'") && rendered.contains("line 4, column 12"), "{rendered}");
    }

    #[test]
    fn verify_work_counts_every_stage() {
        // and2 is a NAND2 and an inverter: 3 pull-down devices on one word of 4 vectors, per drive;
        // verify charges the sized cell the same (its pull-down transistors of every stage).
        let options = VerifyOptions::default();
        let text =
            "[[gate]]\nname = \"a\"\nexpr = \"and2\"\ndrive = [1, 2]\n\n[[gate]]\nname = \"n\"\nexpr = \"nand2\"\n";
        let read = library(text);
        assert_eq!(read.verify_work(&options), (3 * 2 + 2, Estimate::Exactly));
        let plan = read.gates[0].as_ref().unwrap();
        let sized = size_plan(plan, &Arc::new(Process::default())).unwrap();
        let charged: u128 = sized
            .iter()
            .map(|cell| {
                let figures = CellFigures::of(cell);
                let pull_down =
                    figures.transistors.iter().filter(|t| t.network == crate::network::NetworkKind::PullDown);
                verify::verify_work(figures.inputs.len(), pull_down.count(), &options)
            })
            .sum();
        assert_eq!(charged, 3 * 2);
        // xor2 has two forms, 6 and 7 pull-down devices: the larger counts, as an upper bound.
        let xor = library("[[gate]]\nname = \"x\"\nexpr = \"xor2\"\n");
        assert_eq!(xor.verify_work(&options), (7, Estimate::UpTo));
    }
}
