//! Library files: a library file lists the gates a library or block needs, each in one or more
//! drives; this reads it a gate table at a time and sizes every variant, one bad gate spoiling no
//! other.
//!
//! The file is TOML: an optional `process` (a path or a table), optional `[defaults]` and
//! `[[gate]]` tables. A light scanner (`scan`) cuts the text at its top-level tables; the rest of
//! the file (process, defaults) is parsed as one document and each gate table on its own, its places
//! moved back into the file (`table`), so a TOML error, a wrong key or a wrong value in one gate is
//! that gate's problem, reported with its place, while the rest go on. A first pass reads every gate
//! for its name and drives (name clashes and the variant limit stop the run before any output) and
//! keeps the plans it read within a bound; the others are read again one at a time, and every gate
//! is sized variant by variant, handed on in chunks, so memory stays bounded however many gates and
//! drives the file has (beyond the file's text, a name per gate while the names are checked and the
//! plans kept). Each distinct function is synthesized once per batch (`forms`), and each variant
//! that differs from an earlier one only in its name shares that one's sized cell (`reuse`).
//! Nothing here touches a file: a process file the library names is read through a reader the
//! caller supplies.

pub mod entries;
pub mod error;
mod forms;
mod plain;
pub mod plan;
mod reuse;
mod scan;
mod table;

use std::borrow::Cow;
use std::io;
use std::ops::Range;
use std::path::Path;
use std::sync::Arc;

use rustc_hash::FxHashMap;
use serde::Deserialize;
use toml::Spanned;
use toml::de::{DeTable, DeValue, ValueDeserializer};

use crate::bounds;
use crate::budget::Estimate;
use crate::cell::SizedCell;
use crate::diagnostic::{Source, Span, escaped, toml_error_place};
use crate::figures::NamedCell;
use crate::logic::CellLogic;
use crate::names;
use crate::process::Process;
use crate::sizing::{self, MethodName, SizingError, StackOrder};
use crate::verify::{self, VerifyOptions};

use entries::{
    Common, DefaultsEntry, check_calibration, check_drives, check_reference, check_stack_order, check_stage_effort,
    read_gate_entry, read_process, repeated_drive, to_span,
};
pub use entries::{MAX_DRIVES_PER_GATE, Overrides, ReadFile};
pub use error::LibraryError;
use forms::Forms;
pub use plan::{CalibrationKeys, GatePlan, GateProblem, Place};
use reuse::Reuse;
pub use reuse::{MAX_KEPT_CELLS, MAX_KEPT_DEVICES};

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
/// A gate table longer than this, in bytes, is read once and its plan kept: the TOML reader takes
/// some fifty times a table's length while it reads it (a gate of 100,000 drives is about 700 kB),
/// and the plan a few times its drives' (a plan's drives count towards [`MAX_VARIANTS`], so the plans
/// kept stay within a few megabytes).
const KEEP_PLANS_OVER: usize = 64 << 10;
/// The plans of shorter tables read by the first pass are kept too, rather than read again, while
/// they take at most about this many bytes in all (some 15,000 plans of a name, a short expression
/// and a drive); the tables past it are read again when they are sized.
const KEEP_PLANS_BYTES: usize = 8 << 20;

/// A library file, read and checked: the process, what `[defaults]` gives every gate, and where
/// each gate's table is; each gate is read from its table when it is asked for ([`Library::gate`]).
#[derive(Debug, Clone)]
pub struct Library {
    /// The process: physical sizes and, unless `[defaults]` says otherwise, the mobility ratio.
    pub process: Arc<Process>,
    /// The mobility ratio every gate is sized with: `[defaults]`, else the process's.
    pub mobility_ratio: f64,
    /// The file.
    source: Source,
    /// What `[defaults]`, the process and the command line give every gate.
    common: Common,
    /// Where each gate's table is in the file, in file order.
    tables: Vec<Range<usize>>,
    /// Whether the gates are inline tables of a `gate = [...]` list (else `[[gate]]` tables).
    inline: bool,
    /// Names that would clash in the output, found by the first pass.
    clashes: Vec<GateProblem>,
    /// The plans the first pass kept, by gate index: every table longer than [`KEEP_PLANS_OVER`], and
    /// the others within [`KEEP_PLANS_BYTES`], rather than read twice.
    kept: Vec<Option<Arc<GatePlan>>>,
}

impl Library {
    /// Read a library file, `source` (whose origin names it in messages); a relative process path
    /// is read from `directory` (none: a library on standard input without a stated folder, where a
    /// relative path is refused), through `read_file`. `overrides` (the command line) come before
    /// every key of the file. A TOML error outside the gate tables, an unknown top-level key, a bad
    /// `[defaults]`, a bad process or more than [`MAX_VARIANTS`] variants stop here; a bad gate
    /// (a TOML error in its table included) is that gate's [`GateProblem`], given by
    /// [`Library::gate`]. Every gate is read once here, for its name and drives: name clashes are
    /// then [`Library::name_clashes`].
    pub fn read(
        source: &Source,
        directory: Option<&Path>,
        overrides: &Overrides,
        read_file: &mut ReadFile<'_>,
    ) -> Result<Library, LibraryError> {
        let text = source.text();
        let layout = scan::scan(text);
        // The rest of the file with the gate tables blanked out (new lines kept), as long as the
        // last piece of it: one document whose places are the file's.
        let end = layout.others.last().map_or(0, |piece| piece.end);
        let mut rest = text.as_bytes()[..end].to_vec();
        for gate in layout.gates.iter().take_while(|gate| gate.start < end) {
            for byte in &mut rest[gate.start..gate.end.min(end)] {
                if *byte != b'\n' {
                    *byte = b' ';
                }
            }
        }
        let rest = String::from_utf8(rest).expect("whole lines of UTF-8 text blanked with spaces");
        let document = DeTable::parse(&rest).map_err(|e| {
            let span = e.span().map(to_span);
            let (message, span) = toml_error_place(&rest, e.message(), span);
            LibraryError::File { message, span }
        })?;
        let mut process = None;
        let mut defaults = None;
        let mut gates: Option<(Range<usize>, Spanned<DeValue>)> = None;
        let mut unknown: Option<(String, Range<usize>)> = None;
        for (key, value) in document.into_inner() {
            match key.get_ref().as_ref() {
                "process" => process = Some(value),
                "defaults" => defaults = Some(value),
                "gate" => gates = Some((key.span(), value)),
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
        let (tables, inline) = match gates {
            None => (layout.gates, false),
            Some((key, _)) if !layout.gates.is_empty() => {
                let (line, _) = source.line_of(layout.gates[0].start);
                return Err(LibraryError::at(
                    format!(
                        "gate is written here and as [[gate]] tables (the first at line {line}): a library lists \
                         its gates as [[gate]] tables"
                    ),
                    Some(key),
                ));
            }
            Some((_, value)) => match value.get_ref() {
                DeValue::Array(array) => (array.iter().map(Spanned::span).collect(), true),
                _ => return Err(LibraryError::at("gate must be a list of [[gate]] tables", Some(value.span()))),
            },
        };
        let process = match (&overrides.process, process) {
            (Some(given), _) => Arc::clone(given),
            (None, None) => Arc::new(Process::default()),
            (None, Some(value)) => Arc::new(read_process(directory, read_file, value)?),
        };
        let common = common(defaults, &process, overrides)?;
        let mut library = Library {
            process,
            mobility_ratio: common.mobility_ratio,
            source: source.clone(),
            common,
            tables,
            inline,
            clashes: Vec::new(),
            kept: Vec::new(),
        };
        library.clashes = library.first_pass()?;
        Ok(library)
    }

    /// How many gates the file has.
    pub fn gate_count(&self) -> usize {
        self.tables.len()
    }

    /// Gate `index` (0-based, in file order), read from its table: its plan, or why it cannot be
    /// sized, with its place.
    pub fn gate(&self, index: usize) -> Result<Arc<GatePlan>, GateProblem> {
        match self.kept.get(index) {
            Some(Some(plan)) => Ok(Arc::clone(plan)),
            _ => self.read_gate(index),
        }
    }

    /// Gate `index` read from its table.
    fn read_gate(&self, index: usize) -> Result<Arc<GatePlan>, GateProblem> {
        let number = index + 1;
        let range = self.tables[index].clone();
        let value = table::read(self.source.text(), range.clone(), self.inline).map_err(|unreadable| {
            // A message without a place points at the table's first character.
            let start = range.end - self.source.text()[range.clone()].trim_start().len();
            GateProblem {
                number,
                name: unreadable.name,
                message: unreadable.message,
                place: Place::File(unreadable.span.unwrap_or(Span::new(start, (start + 1).min(range.end)))),
            }
        })?;
        read_gate_entry(&self.source, &self.common, number, value).map(Arc::new)
    }

    /// Every gate in file order, each read from its table as it is reached.
    pub fn gates(&self) -> impl Iterator<Item = Result<Arc<GatePlan>, GateProblem>> + '_ {
        (0..self.tables.len()).map(|index| self.gate(index))
    }

    /// Read every gate once: the variant limit, and the names that would clash in the output; the
    /// plans of long tables, and of the others within a bound, are kept.
    fn first_pass(&mut self) -> Result<Vec<GateProblem>, LibraryError> {
        // Netlists ignore case, so `Nand2` and `nand2` would be one subcircuit: each name is kept
        // in lower case with its gate's index, the first use's own spelling read again on a clash.
        let mut first: FxHashMap<Box<str>, usize> = FxHashMap::default();
        first.reserve(self.tables.len());
        let mut clashes = Vec::new();
        let mut variants = 0usize;
        let mut kept_bytes = 0usize;
        // Kept as they are read, so that an earlier gate is found by `gate` on a clash.
        self.kept = Vec::with_capacity(self.tables.len());
        for index in 0..self.tables.len() {
            let Ok(plan) = self.read_gate(index) else {
                self.kept.push(None);
                continue;
            };
            variants += plan.drives.len();
            if let Some(clash) = repeated_drive_of(&plan) {
                clashes.push(clash);
            }
            let key = plan.name.to_ascii_lowercase();
            match first.get(key.as_str()) {
                Some(&earlier) => {
                    let name = self.gate(earlier).map(|earlier| earlier.name.clone()).unwrap_or_default();
                    let how =
                        if name == plan.name { String::new() } else { format!(" as '{name}' (netlists ignore case)") };
                    clashes.push(plan.problem(
                        format!(
                            "the name is already used by gate {}{how}; names must be unique, since each becomes a \
                             subcircuit and a spreadsheet key",
                            earlier + 1
                        ),
                        Place::File(plan.name_span),
                    ));
                }
                None => {
                    first.insert(key.into_boxed_str(), index);
                }
            }
            let bytes = plan_bytes(&plan);
            let keep = self.tables[index].len() > KEEP_PLANS_OVER || kept_bytes + bytes <= KEEP_PLANS_BYTES;
            if keep {
                kept_bytes += bytes;
            }
            self.kept.push(keep.then_some(plan));
        }
        if variants > MAX_VARIANTS {
            return Err(LibraryError::at(
                format!(
                    "the library asks for {variants} variants (each gate in each of its drives); the limit is \
                     {MAX_VARIANTS} per library: split it into several files"
                ),
                None,
            ));
        }
        Ok(clashes)
    }

    /// The work units of verifying every variant ([`verify::verify_work`]), from each gate's pins and
    /// input occurrences, every stage of a cell counted (the pull-down devices of all its stages, as
    /// verify counts them); a gate that cannot be read counts nothing (it is reported when it is
    /// sized). A function with two forms (docs/model.md section 9) counts the larger, since the one
    /// kept is known only once both are sized: the estimate is then an upper bound.
    pub fn verify_work(&self, options: &VerifyOptions) -> (u128, Estimate) {
        let mut forms = Forms::new(&self.process);
        let mut estimate = Estimate::Exactly;
        let mut work = 0u128;
        for plan in self.gates().flatten() {
            let Ok(forms) = forms.of(&plan) else { continue };
            if forms.len() > 1 {
                estimate = Estimate::UpTo;
            }
            let one = forms
                .iter()
                .map(|form| {
                    let occurrences = form.stages.iter().map(|stage| stage.function.literals.len()).sum();
                    verify::verify_work(form.inputs.len(), occurrences, options)
                })
                .max()
                .unwrap_or(0);
            work = work.saturating_add(one.saturating_mul(plan.drives.len() as u128));
        }
        (work, estimate)
    }

    /// Names that would clash in the output, each reported at its second use: a gate name used
    /// twice, or a drive listed twice in one gate (two variants of one name). Variants of distinct
    /// gates cannot clash: `<name>_x<drive>` is unique for distinct names (see [`names::drive_suffix`]).
    pub fn name_clashes(&self) -> &[GateProblem] {
        &self.clashes
    }
}

/// About how many bytes a plan takes: itself, its texts and its drives.
fn plan_bytes(plan: &GatePlan) -> usize {
    let texts =
        [Some(&plan.name), Some(&plan.expression), plan.critical.as_ref(), plan.pull_up.as_ref().map(|p| &p.text)];
    let drives = plan.drives.len() * (size_of::<f64>() + size_of::<Span>());
    size_of::<GatePlan>()
        + size_of::<(usize, Arc<GatePlan>)>()
        + texts.iter().flatten().map(|t| t.len() + 32).sum::<usize>()
        + drives
}

/// A drive listed twice in a gate: both variants would have one name.
fn repeated_drive_of(plan: &GatePlan) -> Option<GateProblem> {
    if plan.drives.len() < 2 {
        return None;
    }
    let drives: Vec<(f64, Span)> = plan.drives.iter().copied().zip(plan.drive_spans.iter().copied()).collect();
    let (drive, span) = repeated_drive(&drives)?;
    Some(plan.problem(
        format!(
            "drive {drive} is listed twice: both variants would be subcircuit '{}'; variant names must be unique",
            plan.variant_name(drive)
        ),
        Place::File(span),
    ))
}

/// What `[defaults]` (`defaults`, as written), the process and the command line give every gate.
fn common(
    defaults: Option<Spanned<DeValue<'_>>>,
    process: &Process,
    overrides: &Overrides,
) -> Result<Common, LibraryError> {
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
    Ok(Common {
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
    })
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
    /// Variants that share the cell of an earlier variant that differs from them only in name.
    pub reused: usize,
}

/// Size one variant of a gate, the one at `drive`, or say why the gate cannot be sized (its
/// function synthesized for this variant alone: a batch keeps the forms of each function instead).
pub fn size_variant(plan: &GatePlan, drive: f64, process: &Arc<Process>) -> Result<SizedCell, GateProblem> {
    size_form(plan, &Forms::new(process).of(plan)?, drive, process)
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

/// Size every gate in file order, variant by variant, reporting each bad gate as it is found and
/// handing the sized variants on in chunks (a chunk may end within a gate's drives). A gate that
/// cannot be read or synthesized is reported and none of its variants are sized; a drive that
/// cannot be sized is reported as its gate's problem and ends that gate (the variants before it
/// are handed on).
///
/// A variant that differs from one sized before only in its name shares that one's cell
/// ([`NamedCell`]), sized, figured and verified once (`reuse`: at most [`MAX_KEPT_CELLS`] cells of
/// [`MAX_KEPT_DEVICES`] devices in all kept at once).
///
/// With `verify`, every variant is also checked switch by switch on its input vectors
/// ([`verify::verify`]); a variant that fails is still written, and reported like a bad gate.
pub fn size_all(
    library: &Library,
    verify: Option<&VerifyOptions>,
    report: &mut dyn FnMut(&GateProblem) -> io::Result<()>,
    emit: &mut dyn FnMut(&[NamedCell]) -> io::Result<()>,
) -> io::Result<Outcome> {
    size_all_keeping(library, verify, (MAX_KEPT_CELLS, MAX_KEPT_DEVICES), report, emit)
}

/// [`size_all`], at most `limits` (cells, devices) kept for reuse; `(0, 0)`: every variant sized
/// afresh.
pub(crate) fn size_all_keeping(
    library: &Library,
    verify: Option<&VerifyOptions>,
    limits: (usize, usize),
    report: &mut dyn FnMut(&GateProblem) -> io::Result<()>,
    emit: &mut dyn FnMut(&[NamedCell]) -> io::Result<()>,
) -> io::Result<Outcome> {
    let mut outcome = Outcome { gates: library.gate_count(), ..Outcome::default() };
    let mut forms = Forms::new(&library.process);
    let mut reuse = Reuse::new(&library.process, limits);
    let mut chunk: Vec<NamedCell> = Vec::with_capacity(CHUNK);
    for gate in library.gates() {
        let read = gate.and_then(|plan| forms.of(&plan).map(|forms| (plan, forms)));
        let (plan, gate_forms) = match read {
            Ok(read) => read,
            Err(problem) => {
                outcome.failed += 1;
                report(&problem)?;
                continue;
            }
        };
        for &drive in &plan.drives {
            let (variant, verified) = match named_variant(&plan, &gate_forms, drive, &library.process, &mut reuse) {
                Ok(variant) => variant,
                Err(problem) => {
                    outcome.failed += 1;
                    report(&problem)?;
                    break;
                }
            };
            if !variant.is_own() {
                outcome.reused += 1;
            }
            if let Some(options) = verify {
                // A pass holds for every name; a failure's message names the variant.
                let failure = if verified {
                    None
                } else {
                    let figures = if variant.is_own() {
                        Cow::Borrowed(variant.shared.figures())
                    } else {
                        Cow::Owned(variant.figures())
                    };
                    match verify::verify(&figures, options) {
                        Ok(result) => result.outcome().err().map(|error| error.to_string()),
                        Err(error) => Some(format!("'{}' cannot be verified: {error}", variant.name)),
                    }
                };
                match failure {
                    None => {
                        outcome.verified += 1;
                        reuse.verified();
                    }
                    Some(message) => {
                        outcome.unverified += 1;
                        report(&plan.problem(message, Place::File(plan.name_span)))?;
                    }
                }
            }
            outcome.variants += 1;
            chunk.push(variant);
            if chunk.len() >= CHUNK {
                emit(&chunk)?;
                chunk.clear();
            }
        }
    }
    if !chunk.is_empty() {
        emit(&chunk)?;
    }
    Ok(outcome)
}

/// The variant of `plan` at `drive`: the cell kept for its key, renamed (whether it passed
/// verification beside it), or sized now and kept; or why it cannot be sized.
fn named_variant(
    plan: &GatePlan,
    forms: &[CellLogic],
    drive: f64,
    process: &Arc<Process>,
    reuse: &mut Reuse,
) -> Result<(NamedCell, bool), GateProblem> {
    let mut variant_plan = plan.plan(drive, process)?;
    let problem = |error: SizingError| plan.problem(error.to_string(), Place::File(plan.name_span));
    if let Some(found) = reuse.find(plan, &variant_plan) {
        // Of what sizing checks, only the cell's name can differ between the variants of one key
        // (the pins passed when the kept cell was sized), and it is checked first, on the first
        // form: the same check, the same refusal.
        sizing::build::check_cell_name(&forms[0], &variant_plan).map_err(problem)?;
        let name = variant_plan.name.take().unwrap_or_else(|| plan.variant_name(drive));
        return Ok((NamedCell { name, shared: found.shared }, found.verified));
    }
    let name = variant_plan.name.clone().unwrap_or_else(|| plan.variant_name(drive));
    let cell = sizing::size_best(forms, &variant_plan).map_err(problem)?;
    Ok((NamedCell { name, shared: reuse.keep(cell) }, false))
}

#[cfg(test)]
mod tests;
