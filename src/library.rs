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

use std::collections::{HashMap, HashSet};
use std::fmt;
use std::io;
use std::ops::Range;
use std::path::Path;
use std::sync::Arc;

use serde::Deserialize;
use serde::de::{SeqAccess, Visitor};
use thiserror::Error;
use toml::Spanned;
use toml::de::{DeArray, DeTable, DeValue, ValueDeserializer};

use crate::bounds;
use crate::cell::SizedCell;
use crate::diagnostic::{Diagnostic, Source, Span, escaped};
use crate::expr::read_gate_with_models;
use crate::figures::CellFigures;
use crate::io::InputError;
use crate::logic::read_cell;
use crate::names;
use crate::process::{Process, ProcessError, ProcessFile};
use crate::sizing::{self, Method, MethodName, Order, Plan, Reference, SizingError, StackOrder};
use crate::verify::{self, VerifyOptions};

/// The drive of a gate that neither it nor `[defaults]` sets.
pub const DEFAULT_DRIVE: f64 = 1.0;
/// Why a library sizes by longest-path or min-area only.
const ELMORE_IN_A_LIBRARY: &str = "method = \"elmore\" sizes against a load, which a library does not give: \
                                   use \"longest-path\" or \"min-area\", or size the gate with \
                                   'widthwise size --method elmore --fanout H'";

/// Longest library file read, in bytes (a 20,000-gate library is about 1.2 MB).
pub const MAX_LIBRARY_BYTES: usize = 64 << 20;
/// Most drives of one gate (each is a variant), checked as the file is read.
pub const MAX_DRIVES_PER_GATE: usize = 100_000;
/// Most variants (gates x drives) of one library, checked before any gate is sized: six times the
/// 33,334 variants of the 20,000-gate benchmark library.
pub const MAX_VARIANTS: usize = 200_000;

/// The method of a gate that neither it nor `[defaults]` sets.
pub const DEFAULT_METHOD: MethodName = MethodName::LongestPath;
/// How many sized variants are held before they are written.
const CHUNK: usize = 256;

/// How a library reads a process file it names: the file's text, or why not. Supplied by the
/// command, through the I/O layer.
pub type ReadFile<'a> = dyn FnMut(&Path) -> Result<String, InputError> + 'a;

/// Why a library file cannot be sized at all (a bad gate is that gate's [`GateProblem`] instead).
#[derive(Debug, Error)]
pub enum LibraryError {
    /// Something wrong in the library file: what, and where when known.
    #[error("{message}")]
    File {
        /// What is wrong.
        message: String,
        /// Where in the library file.
        span: Option<Span>,
    },
    /// The process file the library names cannot be read.
    #[error("cannot read the process file: {error}")]
    ProcessUnreadable {
        /// Why.
        error: InputError,
        /// The `process = "..."` value in the library file.
        span: Span,
    },
    /// The process file the library names is bad.
    #[error("{error}")]
    ProcessFile {
        /// What is wrong, with the key and its place in that file.
        error: ProcessError,
        /// The process file.
        file: Source,
    },
}

impl LibraryError {
    /// A problem in the library file at `span`.
    fn at(message: impl Into<String>, span: Option<Range<usize>>) -> LibraryError {
        LibraryError::File { message: message.into(), span: span.map(Span::from) }
    }

    /// The error as a diagnostic, `library` being the library file it was read from.
    pub fn diagnostic(&self, library: &Source) -> Diagnostic {
        let message = Diagnostic::error(self.to_string());
        match self {
            LibraryError::File { span, .. } => message.at_or_within(library, *span),
            LibraryError::ProcessUnreadable { span, .. } => message.at(library, *span),
            LibraryError::ProcessFile { error, file } => message.at_or_within(file, error.span()),
        }
    }
}

/// What the command line sets for every gate of a library. Precedence: these, then the gate's keys,
/// then `[defaults]`, then the process file (its mobility ratio), then the built-in defaults.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Overrides {
    /// A process for every gate: the library's own `process` is then not read.
    pub process: Option<Arc<Process>>,
    /// The method of every gate (longest-path or min-area).
    pub method: Option<MethodName>,
    /// The mobility ratio every gate is sized with.
    pub mobility_ratio: Option<f64>,
    /// One drive for every gate, in place of the drive lists: each gate becomes one variant.
    pub drive: Option<f64>,
    /// The reference inverter of every gate (NMOS and PMOS W/L at drive 1).
    pub reference: Option<Reference>,
    /// The series-stack order of every gate (default or written).
    pub stack_order: Option<StackOrder>,
}

/// A skewed reference inverter as written: `reference = [N, P]` or `reference = "N:P"`, the NMOS and
/// PMOS W/L at drive 1.
#[derive(Debug, Clone, Copy)]
struct WrittenReference(f64, f64);

impl<'de> Deserialize<'de> for WrittenReference {
    fn deserialize<D: serde::Deserializer<'de>>(deserializer: D) -> Result<WrittenReference, D::Error> {
        struct ReferenceVisitor;
        impl<'de> Visitor<'de> for ReferenceVisitor {
            type Value = WrittenReference;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str(
                    "the reference inverter's NMOS and PMOS W/L, as [N, P] such as [1, 3] or \"N:P\" such as \"1:3\"",
                )
            }
            fn visit_str<E: serde::de::Error>(self, text: &str) -> Result<WrittenReference, E> {
                let pair =
                    text.split_once(':').and_then(|(n, p)| Some((n.trim().parse().ok()?, p.trim().parse().ok()?)));
                pair.map(|(n, p)| WrittenReference(n, p))
                    .ok_or_else(|| E::invalid_value(serde::de::Unexpected::Str(text), &self))
            }
            fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> Result<WrittenReference, A::Error> {
                let mut values = Vec::with_capacity(2);
                while let Some(value) = seq.next_element::<f64>()? {
                    values.push(value);
                }
                match values[..] {
                    [n, p] => Ok(WrittenReference(n, p)),
                    _ => Err(serde::de::Error::invalid_length(values.len(), &self)),
                }
            }
        }
        deserializer.deserialize_any(ReferenceVisitor)
    }
}

/// Check a written reference: both W/L within [`bounds::SIZING`].
fn check_reference(written: &Spanned<WrittenReference>) -> Result<Reference, (String, Span)> {
    let WrittenReference(nmos, pmos) = *written.get_ref();
    for (what, value) in [("NMOS", nmos), ("PMOS", pmos)] {
        bounds::SIZING.check(value).map_err(|why| {
            (format!("reference: the {what} W/L {} {why}", bounds::show(value)), to_span(written.span()))
        })?;
    }
    Ok(Reference { nmos, pmos })
}

/// One drive or a list of them, as written.
#[derive(Debug, Clone)]
enum Drives {
    One(f64),
    Many(Vec<Spanned<f64>>),
}

impl<'de> Deserialize<'de> for Drives {
    fn deserialize<D: serde::Deserializer<'de>>(deserializer: D) -> Result<Drives, D::Error> {
        struct DrivesVisitor;
        impl<'de> Visitor<'de> for DrivesVisitor {
            type Value = Drives;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str("a drive (a positive number) or a list of drives such as [1, 2, 4]")
            }
            fn visit_i64<E>(self, value: i64) -> Result<Drives, E> {
                Ok(Drives::One(value as f64))
            }
            fn visit_u64<E>(self, value: u64) -> Result<Drives, E> {
                Ok(Drives::One(value as f64))
            }
            fn visit_f64<E>(self, value: f64) -> Result<Drives, E> {
                Ok(Drives::One(value))
            }
            fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> Result<Drives, A::Error> {
                let mut drives = Vec::new();
                while let Some(drive) = seq.next_element::<Spanned<f64>>()? {
                    drives.push(drive);
                }
                Ok(Drives::Many(drives))
            }
        }
        deserializer.deserialize_any(DrivesVisitor)
    }
}

/// Check a written drive or list: every value positive and finite, a list not empty. Gives each
/// drive with its place.
fn check_drives(written: &Spanned<Drives>) -> Result<Vec<(f64, Span)>, (String, Span)> {
    let whole = to_span(written.span());
    let drives: Vec<(f64, Span)> = match written.get_ref() {
        Drives::One(drive) => vec![(*drive, whole)],
        Drives::Many(list) if list.is_empty() => {
            return Err(("drive = []: the list is empty; give at least one drive".to_string(), whole));
        }
        Drives::Many(list) if list.len() > MAX_DRIVES_PER_GATE => {
            return Err((
                format!(
                    "drive lists {} drives; the limit is {MAX_DRIVES_PER_GATE} per gate (each drive is a variant)",
                    list.len()
                ),
                whole,
            ));
        }
        Drives::Many(list) => list.iter().map(|d| (*d.get_ref(), to_span(d.span()))).collect(),
    };
    for &(drive, span) in &drives {
        bounds::SIZING.check(drive).map_err(|why| (format!("drive {}: a drive {why}", bounds::show(drive)), span))?;
    }
    Ok(drives)
}

/// The first drive listed twice, at its second place.
fn repeated_drive(drives: &[(f64, Span)]) -> Option<(f64, Span)> {
    let mut seen = HashSet::with_capacity(drives.len());
    drives.iter().copied().find(|(drive, _)| !seen.insert(drive.to_bits()))
}

/// `[defaults]` as written.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(deny_unknown_fields)]
struct DefaultsEntry {
    method: Option<MethodName>,
    stack_order: Option<Spanned<StackOrder>>,
    drive: Option<Spanned<Drives>>,
    mobility_ratio: Option<Spanned<f64>>,
    reference: Option<Spanned<WrittenReference>>,
}

/// One `[[gate]]` as written.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct GateEntry {
    name: Spanned<String>,
    expr: Spanned<String>,
    method: Option<MethodName>,
    stack_order: Option<Spanned<StackOrder>>,
    drive: Option<Spanned<Drives>>,
    critical: Option<Spanned<String>>,
    reference: Option<Spanned<WrittenReference>>,
}

/// Where an expression's text is in the file.
#[derive(Debug, Clone, PartialEq)]
struct ExpressionPlace {
    /// The whole string value, quotes included.
    string: Span,
    /// Where its contents start, when the file holds them verbatim (no escapes).
    verbatim_start: Option<usize>,
}

/// One gate, read and checked, ready to size in each of its drives.
#[derive(Debug, Clone, PartialEq)]
pub struct GatePlan {
    /// 1-based position among the file's gates.
    pub number: usize,
    /// The cell name.
    pub name: String,
    /// The expression or shorthand, as written.
    pub expression: String,
    /// Sizing method.
    pub method: Method,
    /// Mobility ratio mu_n / mu_p.
    pub mobility_ratio: f64,
    /// Drives, one variant each, in written order.
    pub drives: Vec<f64>,
    /// Where each drive is written (in the gate, or in `[defaults]`).
    drive_spans: Vec<Span>,
    /// The input to place nearest the output.
    pub critical: Option<String>,
    /// Series-stack order: the default rule or as written.
    pub stack_order: StackOrder,
    /// A skewed reference inverter (NMOS and PMOS W/L at drive 1); `None`: balanced, 1 and the
    /// mobility ratio.
    pub reference: Option<Reference>,
    name_span: Span,
    expression_place: ExpressionPlace,
    critical_span: Option<Span>,
}

impl GatePlan {
    /// The variant's name: the cell name, `_x` and the drive, `p` for a decimal point.
    pub fn variant_name(&self, drive: f64) -> String {
        names::variant_name(&self.name, drive)
    }

    /// The plan of one variant, the one place a library builds plans: the gate's method, mobility
    /// ratio, reference and stack order (with its critical input) at `drive`, named as the variant,
    /// in `process`; refused where the critical input and the written order both choose the order.
    pub fn plan(&self, drive: f64, process: &Arc<Process>) -> Result<Plan, GateProblem> {
        let order = Order::new(self.stack_order, self.critical.clone())
            .map_err(|error| self.problem(SizingError::from(error).to_string(), Place::File(self.name_span)))?;
        Ok(Plan {
            order,
            process: Arc::clone(process),
            name: Some(self.variant_name(drive)),
            ..Plan::new(self.method, self.mobility_ratio, drive, self.reference)
        })
    }

    /// A problem of this gate at `span`.
    fn problem(&self, message: String, place: Place) -> GateProblem {
        GateProblem { number: self.number, name: Some(self.name.clone()), message, place }
    }

    /// Where in the file byte `span` of the expression is.
    fn expression_problem(&self, message: String, span: Span) -> GateProblem {
        let place = match self.expression_place.verbatim_start {
            Some(start) => Place::File(Span::new(start + span.start, start + span.end)),
            None => Place::Expression { text: self.expression.clone(), span, string: self.expression_place.string },
        };
        self.problem(message, place)
    }
}

/// Where a gate's problem is.
#[derive(Debug, Clone, PartialEq)]
pub enum Place {
    /// A byte span of the library file.
    File(Span),
    /// A span of an expression whose file text differs from its value (it has escapes): the
    /// value, the span in it, and where the string is in the file.
    Expression {
        /// The expression as read.
        text: String,
        /// The span in it.
        span: Span,
        /// The string in the file.
        string: Span,
    },
}

/// Why one gate cannot be sized, and where in the file.
#[derive(Debug, Clone, PartialEq)]
pub struct GateProblem {
    /// 1-based position among the file's gates.
    pub number: usize,
    /// The gate's name, where it could be read.
    pub name: Option<String>,
    /// What is wrong.
    pub message: String,
    /// Where.
    pub place: Place,
}

impl GateProblem {
    /// The problem as a diagnostic: `gate 'NAME': ...`, pointing into `library` (the file the
    /// gate was read from) or into the expression where the file holds it with escapes.
    pub fn diagnostic(&self, library: &Source) -> Diagnostic {
        let message = match &self.name {
            Some(name) => format!("gate '{name}': {}", self.message),
            None => format!("gate {}: {}", self.number, self.message),
        };
        match &self.place {
            Place::File(span) => Diagnostic::error(message).at(library, *span),
            Place::Expression { text, span, string } => {
                let (line, _) = library.line_of(string.start);
                let origin = format!("the expr string ({}, line {line})", library.origin());
                Diagnostic::error(message).at(&Source::inline(origin, text.as_str()), *span)
            }
        }
    }

    /// The problem as printed: `error: gate 'NAME': ...`, the file, line and column, the line, a caret.
    pub fn render(&self, library: &Source) -> String {
        self.diagnostic(library).render()
    }
}

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

fn to_span(range: Range<usize>) -> Span {
    Span::from(range)
}

/// A placeholder left where a value was taken out of the parsed tree.
fn taken() -> Spanned<DeValue<'static>> {
    Spanned::new(0..0, DeValue::Boolean(false))
}

/// Where a string value's contents start in the file, when the file holds them verbatim (no
/// escapes or line continuations), so that a place in the value is a place in the file.
fn verbatim_start(text: &str, span: Range<usize>, value: &str) -> Option<usize> {
    let raw = text.get(span.clone())?;
    let quote = if raw.starts_with("\"\"\"") || raw.starts_with("'''") {
        3
    } else if raw.starts_with('"') || raw.starts_with('\'') {
        1
    } else {
        return None;
    };
    let mut start = span.start + quote;
    let mut inner = raw.get(quote..raw.len().checked_sub(quote)?)?;
    if quote == 3 {
        for newline in ["\r\n", "\n"] {
            if let Some(rest) = inner.strip_prefix(newline) {
                inner = rest;
                start += newline.len();
                break;
            }
        }
    }
    (inner == value).then_some(start)
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
        let common = Common {
            method: defaults.method.unwrap_or(DEFAULT_METHOD),
            stack_order,
            mobility_ratio,
            drives: default_drives,
            reference,
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

    /// The work units of verifying every variant ([`verify::verify_work`]), from each gate's inputs and
    /// occurrences; a gate that cannot be read counts nothing (it is reported when it is sized).
    pub fn verify_work(&self, options: &VerifyOptions) -> u128 {
        let models = self.process.model_names();
        self.gates
            .iter()
            .flatten()
            .filter_map(|plan| {
                let function = read_gate_with_models(&plan.expression, &models).ok()?;
                let one = verify::verify_work(function.inputs.len(), function.literals.len(), options);
                Some(one * plan.drives.len() as u128)
            })
            .sum()
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

/// What `[defaults]` and the process give every gate, and what the command line sets over all.
struct Common {
    method: MethodName,
    stack_order: StackOrder,
    mobility_ratio: f64,
    drives: Vec<(f64, Span)>,
    reference: Option<Reference>,
    overrides: Overrides,
}

/// The option of `batch` that states the folder of a library read from standard input.
pub const BASE_DIR_OPTION: &str = "--base-dir";

fn read_process(
    directory: Option<&Path>,
    read_file: &mut ReadFile<'_>,
    value: Spanned<DeValue<'_>>,
) -> Result<Process, LibraryError> {
    let span = value.span();
    match value.get_ref() {
        DeValue::String(path) => {
            let written = Path::new(path.as_ref());
            let path = match directory {
                Some(directory) => directory.join(written),
                None if written.is_absolute() => written.to_path_buf(),
                None => {
                    return Err(LibraryError::at(
                        format!(
                            "process = \"{}\" is a relative path, and a library read from standard input has no \
                             folder to resolve it against: give {BASE_DIR_OPTION} DIR (the folder the path is \
                             relative to), write an absolute path, or give the process with --process FILE",
                            escaped(path)
                        ),
                        Some(span),
                    ));
                }
            };
            let text = read_file(&path)
                .map_err(|error| LibraryError::ProcessUnreadable { error, span: Span::from(span.clone()) })?;
            Process::from_toml(&text).map_err(|error| LibraryError::ProcessFile {
                error,
                file: Source::file(path.display().to_string(), text),
            })
        }
        DeValue::Table(_) => {
            let file = ProcessFile::deserialize(ValueDeserializer::from(value))
                .map_err(|e| LibraryError::at(format!("[process]: {}", e.message().trim()), e.span()))?;
            file.validate().map_err(|e| LibraryError::at(format!("[process]: {e}"), e.span().map(|s| s.start..s.end)))
        }
        _ => Err(LibraryError::at(
            "process must be the path of a process file (a string) or a [process] table",
            Some(span),
        )),
    }
}

fn read_gate_entry(
    source: &Source,
    common: &Common,
    number: usize,
    entry: Spanned<DeValue<'_>>,
) -> Result<GatePlan, GateProblem> {
    let whole = to_span(entry.span());
    // The name, for messages, even when the rest of the entry is wrong.
    let written_name = entry.get_ref().get("name").and_then(|n| n.get_ref().as_str()).map(str::to_string);
    let problem = |message: String, span: Span| GateProblem {
        number,
        name: written_name.clone().filter(|n| names::is_identifier(n)),
        message,
        place: Place::File(span),
    };
    if !entry.get_ref().is_table() {
        return Err(problem("each gate must be a table with name and expr".to_string(), whole));
    }
    let gate = GateEntry::deserialize(ValueDeserializer::from(entry))
        .map_err(|e| problem(e.message().trim().to_string(), e.span().map_or(whole, to_span)))?;
    let name_span = to_span(gate.name.span());
    let name = gate.name.get_ref();
    if !names::is_identifier(name) {
        return Err(problem(
            format!(
                "name '{}' is refused: a gate name is an identifier ({}) so that netlists take it and no spreadsheet \
                 reads its cell as a formula (a cell starting with '=', '+', '-' or '@')",
                escaped(name),
                names::IDENTIFIER_RULE
            ),
            name_span,
        ));
    }
    if let Some(why) = names::reserved_reason(name, &[]) {
        return Err(problem(SizingError::ReservedCellName { name: name.clone(), why }.to_string(), name_span));
    }
    let (drives, drive_spans) = match (common.overrides.drive, &gate.drive) {
        (Some(drive), _) => (vec![drive], vec![name_span]),
        (None, None) => common.drives.iter().copied().unzip(),
        (None, Some(written)) => {
            check_drives(written).map_err(|(message, span)| problem(message, span))?.into_iter().unzip()
        }
    };
    let method = Method::of(common.overrides.method.or(gate.method).unwrap_or(common.method));
    if method.sizes_by_delay() {
        return Err(problem(ELMORE_IN_A_LIBRARY.to_string(), name_span));
    }
    let stack_order = match (common.overrides.stack_order, &gate.stack_order) {
        (Some(order), _) => order,
        (None, Some(order)) => {
            check_stack_order(order).map_err(|message| problem(message, to_span(order.span())))?;
            *order.get_ref()
        }
        (None, None) => common.stack_order,
    };
    let reference = match (common.overrides.reference, &gate.reference) {
        (Some(reference), _) => Some(reference),
        (None, Some(written)) => Some(check_reference(written).map_err(|(message, span)| problem(message, span))?),
        (None, None) => common.reference,
    };
    let expression = gate.expr.get_ref().clone();
    let expression_place = ExpressionPlace {
        string: to_span(gate.expr.span()),
        verbatim_start: verbatim_start(source.text(), gate.expr.span(), &expression),
    };
    Ok(GatePlan {
        number,
        name: gate.name.into_inner(),
        expression,
        method,
        mobility_ratio: common.mobility_ratio,
        drives,
        drive_spans,
        critical_span: gate.critical.as_ref().map(|c| to_span(c.span())),
        critical: gate.critical.map(Spanned::into_inner),
        stack_order,
        reference,
        name_span,
        expression_place,
    })
}

/// A library sizes by the default order or as written; the search times every order, which is a
/// job for `widthwise size` one gate at a time.
fn check_stack_order(order: &Spanned<StackOrder>) -> Result<(), String> {
    match order.get_ref() {
        StackOrder::Search => Err("stack_order = \"search\" times every order of a gate: a library takes \"default\" \
                                   or \"written\"; search one gate with 'widthwise size --stack-order search'"
            .to_string()),
        StackOrder::Default | StackOrder::Written => Ok(()),
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
    let logic = read_cell(&plan.expression, &process.model_names())
        .map_err(|error| plan.expression_problem(error.to_string(), error.span()))?;
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
    let mut variants = Vec::with_capacity(plan.drives.len());
    for &drive in &plan.drives {
        let sized = sizing::size(&logic, &plan.plan(drive, process)?)
            .map_err(|error| plan.problem(error.to_string(), Place::File(plan.name_span)))?;
        variants.push(sized);
    }
    Ok(variants)
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
}
