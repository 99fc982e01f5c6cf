//! Batch sizing: a library file lists the gates a library or block needs, each in one or more
//! drives; every variant is sized and written in one run, and one bad gate spoils no other.
//!
//! The file is TOML: an optional `process` (a path or a table), optional `[defaults]` and
//! `[[gate]]` entries. It is parsed once into a spanned tree; each gate entry is then read on its
//! own, so a wrong key or value in one gate is reported with its place while the rest go on.
//! Sized gates are written in chunks as they come, so memory grows with the file, not with the
//! output (the table view alone keeps its rows, as text, to align them).

use std::collections::{HashMap, HashSet};
use std::fmt;
use std::io::{self, Write};
use std::ops::Range;
use std::path::{Path, PathBuf};
use std::sync::Arc;

use serde::Deserialize;
use serde::de::{SeqAccess, Visitor};
use toml::Spanned;
use toml::de::{DeArray, DeTable, DeValue, ValueDeserializer};

use crate::bounds;
use crate::budget::{Estimate, Meter, Work};
use crate::cli::{OutputArgs, cell_name};
use crate::commands::write_output;
use crate::delay::{self, StackOrder};
use crate::diagnostic::{Diagnostic, Span, escaped};
use crate::error::Error;
use crate::expr::read_gate_with_models;
use crate::gate::{GateOptions, SizedGate, size_function};
use crate::io::{Diagnostics, diagnose};
use crate::names::is_identifier;
use crate::output::summary::SummaryTable;
use crate::output::{self, Format, Rows};
use crate::process::{Process, ProcessFile};
use crate::sizing::{Method, SizingOptions};
use crate::verify::{self, VerifyOptions};

/// Help shown after `widthwise batch --help`.
pub const AFTER_HELP: &str = "\
The library file (TOML):
  process = \"PATH\"          optional: a process file, relative to the library file; or a [process]
                            table with the process file's keys. Default: the built-in process.
  [defaults]                optional: method, drive (a number or a list such as [1, 2, 4]),
                            stack_order (\"default\" or \"written\"), mobility_ratio (default: the
                            process's).
  [[gate]]                  one per cell: name (an identifier), expr (an expression or a shorthand
                            such as nand2), and optional method, drive (number or list), critical
                            (the input to place nearest the output), stack_order.
Each drive of a gate is one variant, named <name>_x<drive> with p for a decimal point (nand2_x1p5):
at most 100000 drives per gate and 200000 variants per library, checked before any gate is sized.
--verify checks every variant within --work-budget UNITS (default 2^30 = 1073741824): vectors / 64 x
input occurrences, summed over the variants, counted before anything is written.

Rows: --rows gates (default), devices or inputs choose the table's and the CSV's rows; JSON has
every figure of every variant; --format spice writes one .subckt per variant.

Errors: a bad gate is reported on stderr with its name, line and column and the others are still
written (exit 2). A TOML error, a bad process or [defaults], a duplicate name or two variants with the
same name stop the run before any output (exit 2).

Exit codes: 0 ok, 1 a check failed, 2 bad input or usage.

Results are first-order estimates (switch-level RC model). Sign-off needs the foundry's models,
design rules and licensed practice.";

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
pub const DEFAULT_METHOD: Method = Method::LongestPath;
/// How many sized variants are held before they are written.
const CHUNK: usize = 256;

/// A library file's text, what messages call it, and the directory a process path is relative to.
#[derive(Debug, Clone)]
pub struct Source {
    /// The file name as given, or `standard input`.
    pub origin: String,
    /// Where a relative `process` path starts.
    pub directory: PathBuf,
    /// The text, for diagnostics.
    pub source: crate::diagnostic::Source,
}

impl Source {
    /// A source from text already read (a leading byte-order mark is dropped, as TOML allows it).
    pub fn new(origin: impl Into<String>, text: impl Into<String>, directory: impl Into<PathBuf>) -> Source {
        let mut text = text.into();
        if text.starts_with('\u{feff}') {
            text.drain(..'\u{feff}'.len_utf8());
        }
        let origin = origin.into();
        Source { source: crate::diagnostic::Source::file(origin.as_str(), text), origin, directory: directory.into() }
    }

    /// The whole text.
    pub fn text(&self) -> &str {
        self.source.text()
    }

    /// Read the library file at `path` (`-`: standard input) as UTF-8.
    pub fn read(path: &Path) -> Result<Source, Error> {
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
            Some(parent) if !from_stdin && !parent.as_os_str().is_empty() => parent.to_path_buf(),
            _ => PathBuf::from("."),
        };
        Ok(Source::new(origin, text, directory))
    }

    /// A whole-file error at `span` of this file.
    fn error(&self, message: impl Into<String>, span: Option<Range<usize>>) -> Error {
        Error::InFile {
            message: message.into(),
            origin: self.origin.clone(),
            source_text: self.text().to_string(),
            span: span.map(|r| Span::new(r.start, r.end)),
        }
    }
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
    method: Option<Method>,
    stack_order: Option<Spanned<StackOrder>>,
    drive: Option<Spanned<Drives>>,
    mobility_ratio: Option<Spanned<f64>>,
}

/// One `[[gate]]` as written.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct GateEntry {
    name: Spanned<String>,
    expr: Spanned<String>,
    method: Option<Method>,
    stack_order: Option<Spanned<StackOrder>>,
    drive: Option<Spanned<Drives>>,
    critical: Option<Spanned<String>>,
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
    name_span: Span,
    expression_place: ExpressionPlace,
    critical_span: Option<Span>,
}

impl GatePlan {
    /// The variant's name: the cell name, `_x` and the drive, `p` for a decimal point.
    pub fn variant_name(&self, drive: f64) -> String {
        format!("{}_{}", self.name, drive_suffix(drive))
    }

    /// Options for one variant.
    fn options(&self, drive: f64, process: &Arc<Process>) -> GateOptions {
        gate_options(self.method, self.mobility_ratio, drive, self.critical.clone(), self.variant_name(drive), process)
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

/// The options one variant is sized with; the only place a batch builds [`GateOptions`].
pub fn gate_options(
    method: Method,
    mobility_ratio: f64,
    drive: f64,
    critical: Option<String>,
    name: String,
    process: &Arc<Process>,
) -> GateOptions {
    GateOptions {
        sizing: SizingOptions::new(method, mobility_ratio, drive, None),
        critical,
        name: Some(name),
        process: Arc::clone(process),
        stack_order: None,
        fixed_widths: None,
    }
}

/// The suffix a drive gives its variant's name: `x1`, `x2`, `x1p5`, `x0p25`.
///
/// The drive is written in its shortest exact decimal form, so distinct drives give distinct
/// suffixes; and since a suffix has no `_`, `<name>_<suffix>` names the gate and drive uniquely.
pub fn drive_suffix(drive: f64) -> String {
    format!("x{}", drive.to_string().replace('.', "p"))
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
    /// The message as printed: `error: gate 'NAME': ...`, the file, line and column, the line, a caret.
    pub fn render(&self, source: &Source) -> String {
        let message = match &self.name {
            Some(name) => format!("gate '{name}': {}", self.message),
            None => format!("gate {}: {}", self.number, self.message),
        };
        match &self.place {
            Place::File(span) => Diagnostic::error(message).at(&source.source, *span).render(),
            Place::Expression { text, span, string } => {
                let (line, _) = source.source.line_of(string.start);
                let origin = format!("the expr string ({}, line {line})", source.origin);
                Diagnostic::error(message).at(&crate::diagnostic::Source::inline(origin, text.as_str()), *span).render()
            }
        }
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
    Span::new(range.start, range.end)
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
    /// Read a library file. A TOML error, an unknown top-level key, a bad `[defaults]` or a bad
    /// process stops here; a bad gate becomes that gate's [`GateProblem`].
    pub fn read(source: &Source) -> Result<Library, Error> {
        let document = DeTable::parse(source.text()).map_err(|e| {
            let span = e.span().map(to_span);
            let (message, span) = crate::diagnostic::toml_error_place(source.text(), e.message(), span);
            source.error(message, span.map(|s| s.start..s.end))
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
            return Err(source.error(
                format!("unknown key '{}': a library file has process, [defaults] and [[gate]] entries", escaped(&key)),
                Some(span),
            ));
        }
        let process = match process {
            None => Process::default(),
            Some(value) => read_process(source, value)?,
        };
        let defaults = match defaults {
            None => DefaultsEntry::default(),
            Some(value) => {
                if !value.get_ref().is_table() {
                    return Err(source.error("defaults must be a [defaults] table", Some(value.span())));
                }
                DefaultsEntry::deserialize(ValueDeserializer::from(value))
                    .map_err(|e| source.error(format!("[defaults]: {}", e.message().trim()), e.span()))?
            }
        };
        let mobility_ratio = match &defaults.mobility_ratio {
            None => process.mobility_ratio,
            Some(written) => {
                let value = *written.get_ref();
                bounds::SIZING.check(value).map_err(|why| {
                    let value = bounds::show(value);
                    source.error(format!("[defaults]: mobility_ratio = {value}: {why}"), Some(written.span()))
                })?
            }
        };
        let default_drives = match &defaults.drive {
            None => vec![(DEFAULT_DRIVE, Span::default())],
            Some(written) => {
                let drives = check_drives(written).map_err(|(message, span)| {
                    source.error(format!("[defaults]: {message}"), Some(span.start..span.end))
                })?;
                if let Some((drive, span)) = repeated_drive(&drives) {
                    return Err(source.error(
                        format!(
                            "[defaults]: drive {drive} is listed twice: every gate would get two variants named \
                             <name>_{}",
                            drive_suffix(drive)
                        ),
                        Some(span.start..span.end),
                    ));
                }
                drives
            }
        };
        let stack_order = match &defaults.stack_order {
            Some(order) => {
                check_stack_order(order).map_err(|message| source.error(message, Some(order.span())))?;
                *order.get_ref()
            }
            None => StackOrder::Default,
        };
        let common = Common {
            method: defaults.method.unwrap_or(DEFAULT_METHOD),
            stack_order,
            mobility_ratio,
            drives: default_drives,
        };

        let mut entries = match gates {
            None => DeArray::new(),
            Some(value) => {
                let span = value.span();
                match value.into_inner() {
                    DeValue::Array(array) => array,
                    _ => return Err(source.error("gate must be a list of [[gate]] tables", Some(span))),
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
            return Err(source.error(
                format!(
                    "the library asks for {variants} variants (each gate in each of its drives); the limit is \
                     {MAX_VARIANTS} per library: split it into several files"
                ),
                None,
            ));
        }
        Ok(Library { process: Arc::new(process), mobility_ratio, gates })
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
    /// gates cannot clash: `<name>_x<drive>` is unique for distinct names (see [`drive_suffix`]).
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

/// What `[defaults]` and the process give every gate.
struct Common {
    method: Method,
    stack_order: StackOrder,
    mobility_ratio: f64,
    drives: Vec<(f64, Span)>,
}

fn read_process(source: &Source, value: Spanned<DeValue<'_>>) -> Result<Process, Error> {
    let span = value.span();
    match value.get_ref() {
        DeValue::String(path) => {
            let path = source.directory.join(path.as_ref());
            let text = crate::io::read_text(&path, crate::process::MAX_PROCESS_FILE_BYTES, "the process file")
                .map_err(|error| source.error(format!("cannot read the process file: {error}"), Some(span.clone())))?;
            Process::from_toml(&text).map_err(|error| Error::InFile {
                message: error.to_string(),
                origin: path.display().to_string(),
                span: error.span(),
                source_text: text,
            })
        }
        DeValue::Table(_) => {
            let file = ProcessFile::deserialize(ValueDeserializer::from(value))
                .map_err(|e| source.error(format!("[process]: {}", e.message().trim()), e.span()))?;
            file.validate().map_err(|e| source.error(format!("[process]: {e}"), e.span().map(|s| s.start..s.end)))
        }
        _ => {
            Err(source.error("process must be the path of a process file (a string) or a [process] table", Some(span)))
        }
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
        name: written_name.clone().filter(|n| is_identifier(n)),
        message,
        place: Place::File(span),
    };
    if !entry.get_ref().is_table() {
        return Err(problem("each gate must be a table with name and expr".to_string(), whole));
    }
    let gate = GateEntry::deserialize(ValueDeserializer::from(entry))
        .map_err(|e| problem(e.message().trim().to_string(), e.span().map_or(whole, to_span)))?;
    let name_span = to_span(gate.name.span());
    if let Err(why) = cell_name(gate.name.get_ref()) {
        if crate::names::reserved_reason(gate.name.get_ref(), &[]).is_some() {
            return Err(problem(why, name_span));
        }
        return Err(problem(
            format!(
                "name '{}' is refused: a gate name is an identifier (a letter or '_', then letters, digits and \
                 '_') so that netlists take it and no spreadsheet reads its cell as a formula (a cell starting \
                 with '=', '+', '-' or '@')",
                escaped(gate.name.get_ref())
            ),
            name_span,
        ));
    }
    let (drives, drive_spans) = match &gate.drive {
        None => common.drives.iter().copied().unzip(),
        Some(written) => check_drives(written).map_err(|(message, span)| problem(message, span))?.into_iter().unzip(),
    };
    let method = gate.method.unwrap_or(common.method);
    if method == Method::Elmore {
        return Err(problem(ELMORE_IN_A_LIBRARY.to_string(), name_span));
    }
    let stack_order = match &gate.stack_order {
        Some(order) => {
            check_stack_order(order).map_err(|message| problem(message, to_span(order.span())))?;
            *order.get_ref()
        }
        None => common.stack_order,
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
pub fn size_plan(plan: &GatePlan, process: &Arc<Process>) -> Result<Vec<SizedGate>, GateProblem> {
    let function = read_gate_with_models(&plan.expression, &process.model_names())
        .map_err(|error| plan.expression_problem(error.to_string(), error.span()))?;
    if let Some(critical) = &plan.critical
        && !function.inputs.contains(critical)
    {
        let span = plan.critical_span.unwrap_or(plan.name_span);
        return Err(plan.problem(
            format!(
                "critical input '{}' is not an input of the gate (its inputs: {})",
                escaped(critical),
                function.inputs.join(", ")
            ),
            Place::File(span),
        ));
    }
    let mut variants = Vec::with_capacity(plan.drives.len());
    for &drive in &plan.drives {
        let mut options = plan.options(drive, process);
        if plan.stack_order == StackOrder::Written {
            options = delay::written_order(&function, &options)
                .map_err(|error| plan.problem(error.to_string(), Place::File(plan.name_span)))?;
        }
        let sized = size_function(function.clone(), &options)
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
    emit: &mut dyn FnMut(&[SizedGate]) -> io::Result<()>,
) -> io::Result<Outcome> {
    let mut outcome = Outcome { gates: library.gates.len(), ..Outcome::default() };
    let mut chunk: Vec<SizedGate> = Vec::with_capacity(CHUNK + 8);
    for gate in &library.gates {
        match gate.as_ref().map_err(Clone::clone).and_then(|plan| size_plan(plan, &library.process).map(|v| (plan, v)))
        {
            Ok((plan, variants)) => {
                if let Some(options) = verify {
                    for variant in &variants {
                        let failure = match verify::verify(variant, options) {
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

/// Passes everything on except the first line (a CSV header already written once).
struct SkipFirstLine<'a> {
    inner: &'a mut dyn Write,
    skipping: bool,
}

impl Write for SkipFirstLine<'_> {
    fn write(&mut self, buffer: &[u8]) -> io::Result<usize> {
        if !self.skipping {
            return self.inner.write(buffer);
        }
        match buffer.iter().position(|&b| b == b'\n') {
            None => Ok(buffer.len()),
            Some(end) => {
                self.skipping = false;
                self.inner.write_all(&buffer[end + 1..])?;
                Ok(buffer.len())
            }
        }
    }

    fn flush(&mut self) -> io::Result<()> {
        self.inner.flush()
    }
}

/// Size the library and write it in `format` (`rows` for table and CSV) to `out`, each bad gate to
/// `diagnostics` as it is found.
pub fn write_batch(
    library: &Library,
    source: &Source,
    format: Format,
    rows: Rows,
    verify: Option<&VerifyOptions>,
    out: &mut dyn Write,
    diagnostics: &mut dyn Write,
) -> io::Result<Outcome> {
    let process = &library.process;
    let mut report = |problem: &GateProblem| diagnostics.write_all(problem.render(source).as_bytes());
    match format {
        Format::Csv => {
            let mut header_written = false;
            let outcome = size_all(library, verify, &mut report, &mut |chunk| {
                if header_written {
                    output::csv::write_gates(chunk, rows, &mut SkipFirstLine { inner: out, skipping: true })
                } else {
                    header_written = true;
                    output::csv::write_gates(chunk, rows, out)
                }
            })?;
            if !header_written {
                output::csv::write_gates(&[], rows, out)?;
            }
            Ok(outcome)
        }
        Format::Json => {
            // One array, one compact gate object per line: a library is read by scripts, and a
            // line per variant keeps it greppable.
            out.write_all(b"[")?;
            let mut first = true;
            let outcome = size_all(library, verify, &mut report, &mut |chunk| {
                for gate in chunk {
                    out.write_all(if first { b"\n" } else { b",\n" })?;
                    first = false;
                    serde_json::to_writer(&mut *out, gate)?;
                }
                Ok(())
            })?;
            out.write_all(if first { b"]\n" } else { b"\n]\n" })?;
            Ok(outcome)
        }
        Format::Spice => {
            output::spice::write_library(&[], process, out)?;
            size_all(library, verify, &mut report, &mut |chunk| {
                for gate in chunk {
                    writeln!(out)?;
                    output::spice::write_subcircuit(gate, process, out)?;
                }
                Ok(())
            })
        }
        Format::Table => {
            let mut table = SummaryTable::new(rows);
            let outcome = size_all(library, verify, &mut report, &mut |chunk| {
                table.add(chunk);
                Ok(())
            })?;
            let mut heading = format!(
                "{}: {} of {} gates sized, {} variants",
                source.origin,
                outcome.gates - outcome.failed,
                outcome.gates,
                outcome.variants
            );
            if outcome.failed > 0 {
                heading.push_str(&format!("; {} could not be sized (errors on stderr)", outcome.failed));
            }
            writeln!(out, "{heading}")?;
            writeln!(out, "process: {}; mobility ratio {}", process.name, output::number(library.mobility_ratio))?;
            writeln!(out, "{}\n", table.legend())?;
            table.write(out)?;
            Ok(outcome)
        }
    }
}

/// `widthwise batch`: read the library, refuse name clashes and (with `verify`) verification past
/// its work budget before any output, size and write.
pub fn run(
    library_path: &Path,
    output_args: &OutputArgs,
    rows: Rows,
    verify: Option<VerifyOptions>,
) -> Result<(), Error> {
    if rows == Rows::Delays {
        return Err(Error::Usage(
            "a library has gates, devices and inputs views; delays are timed per gate with 'widthwise size --delays'"
                .into(),
        ));
    }
    let source = Source::read(library_path)?;
    let library = Library::read(&source)?;
    let clashes = library.name_clashes();
    if !clashes.is_empty() {
        for clash in &clashes {
            diagnose(&clash.render(&source));
        }
        return Err(Error::NameClashes { count: clashes.len() });
    }
    if let Some(options) = &verify {
        Meter::new(options.work_budget).require(library.verify_work(options), Estimate::Exactly, Work::Verify)?;
    }
    let mut outcome = Outcome::default();
    write_output(output_args, |out| {
        // Gates are sized one after another, so each verification may use every core.
        outcome = write_batch(&library, &source, output_args.format, rows, verify.as_ref(), out, &mut Diagnostics)?;
        Ok(())
    })?;
    if outcome.failed > 0 {
        return Err(Error::GatesFailed { failed: outcome.failed, total: outcome.gates });
    }
    if verify.is_some() {
        if outcome.unverified > 0 {
            return Err(Error::CheckFailed(format!(
                "{} of {} variants fail verification (each named above); they are still written",
                outcome.unverified, outcome.variants
            )));
        }
        diagnose(&format!("verified: all {} variants pass every check on their input vectors\n", outcome.verified));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn library(text: &str) -> Library {
        Library::read(&Source::new("lib.toml", text, ".")).unwrap()
    }

    fn read_error(text: &str) -> String {
        Library::read(&Source::new("lib.toml", text, ".")).unwrap_err().render()
    }

    fn problem(text: &str, index: usize) -> String {
        let source = Source::new("lib.toml", text, ".");
        let library = Library::read(&source).unwrap();
        let problem = match &library.gates[index] {
            Err(problem) => problem.clone(),
            Ok(plan) => size_plan(plan, &Arc::new(Process::default())).unwrap_err(),
        };
        problem.render(&source)
    }

    #[test]
    fn drive_suffixes_keep_the_drive() {
        assert_eq!(drive_suffix(1.0), "x1");
        assert_eq!(drive_suffix(1.5), "x1p5");
        assert_eq!(drive_suffix(0.25), "x0p25");
        assert_eq!(drive_suffix(16.0), "x16");
    }

    #[test]
    fn precedence_is_gate_then_defaults_then_process() {
        let lib = library(
            "[defaults]\nmethod = \"min-area\"\ndrive = [1, 2]\n\n\
             [[gate]]\nname = \"a\"\nexpr = \"nand2\"\n\n\
             [[gate]]\nname = \"b\"\nexpr = \"nor2\"\nmethod = \"longest-path\"\ndrive = 4\n",
        );
        let a = lib.gates[0].as_ref().unwrap();
        assert_eq!((a.method, a.drives.clone(), a.mobility_ratio), (Method::MinArea, vec![1.0, 2.0], 2.0));
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
        let rendered = clashes[0].render(&Source::new("lib.toml", text, "."));
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
        let lib = library("[[gate]]\nname = \"g\"\nexpr = \"nand8\"\ndrive = [1, 2, 3, 4, 5, 6, 7, 8]\n");
        let source = Source::new("lib.toml", "", ".");
        let error =
            write_batch(&lib, &source, Format::Csv, Rows::Devices, None, &mut Closed, &mut io::sink()).unwrap_err();
        assert_eq!(error.kind(), io::ErrorKind::BrokenPipe);
    }

    #[test]
    fn csv_header_is_skipped_once() {
        let mut out = Vec::new();
        let mut skip = SkipFirstLine { inner: &mut out, skipping: true };
        skip.write_all(b"a,b").unwrap();
        skip.write_all(b",c\n1,2,3\n").unwrap();
        skip.write_all(b"4,5,6\n").unwrap();
        assert_eq!(out, b"1,2,3\n4,5,6\n");
    }
}
