//! The library file's entries as written: `[defaults]` and `[[gate]]` tables, drives and references
//! with their places, the process a library names, each gate read into its plan on its own.

use std::collections::HashSet;
use std::fmt;
use std::ops::Range;
use std::path::Path;
use std::sync::Arc;

use serde::Deserialize;
use serde::de::{SeqAccess, Visitor};
use toml::Spanned;
use toml::de::{DeValue, ValueDeserializer};

use crate::bounds;
use crate::diagnostic::{Source, Span, escaped};
use crate::io::InputError;
use crate::library::error::LibraryError;
use crate::library::plan::{CalibrationKeys, ExpressionPlace, GatePlan, GateProblem, Place, PullUpPlace};
use crate::names;
use crate::process::{Process, ProcessFile};
use crate::sizing::{Method, MethodName, Reference, SizingError, StackOrder, WorstCase};

/// Why a library sizes by longest-path or min-area only.
const ELMORE_IN_A_LIBRARY: &str = "method = \"elmore\" sizes against a load, which a library does not give: \
                                   use \"longest-path\" or \"min-area\", or size the gate with \
                                   'widthwise size --method elmore --fanout H'";
/// Most drives of one gate (each is a variant), checked as the file is read.
pub const MAX_DRIVES_PER_GATE: usize = 100_000;

/// How a library reads a process file it names: the file's text, or why not. Supplied by the
/// command, through the I/O layer.
pub type ReadFile<'a> = dyn FnMut(&Path) -> Result<String, InputError> + 'a;

/// What the command line sets for every gate of a library. Precedence: these, then the gate's keys,
/// then `[defaults]`, then the process file (its mobility ratio), then the built-in defaults.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Overrides {
    /// A process for every gate: the library's own `process` is then not read.
    pub process: Option<Arc<Process>>,
    /// The method of every gate (longest-path or min-area).
    pub method: Option<MethodName>,
    /// What min-area sizes every gate against.
    pub worst_case: Option<WorstCase>,
    /// The mobility ratio every gate is sized with.
    pub mobility_ratio: Option<f64>,
    /// One drive for every gate, in place of the drive lists: each gate becomes one variant.
    pub drive: Option<f64>,
    /// The reference inverter of every gate (NMOS and PMOS W/L at drive 1).
    pub reference: Option<Reference>,
    /// The series-stack order of every gate (default or written).
    pub stack_order: Option<StackOrder>,
    /// The stage effort of every cell of several stages.
    pub stage_effort: Option<f64>,
    /// The logic stage's pull-up of every gate: a structure, or `mirror`.
    pub pull_up: Option<String>,
}

/// A skewed reference inverter as written: `reference = [N, P]` or `reference = "N:P"`, the NMOS and
/// PMOS W/L at drive 1.
#[derive(Debug, Clone, Copy)]
pub(crate) struct WrittenReference(f64, f64);

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
pub(crate) fn check_reference(written: &Spanned<WrittenReference>) -> Result<Reference, (String, Span)> {
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
pub(crate) enum Drives {
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
pub(crate) fn check_drives(written: &Spanned<Drives>) -> Result<Vec<(f64, Span)>, (String, Span)> {
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
pub(crate) fn repeated_drive(drives: &[(f64, Span)]) -> Option<(f64, Span)> {
    let mut seen = HashSet::with_capacity(drives.len());
    drives.iter().copied().find(|(drive, _)| !seen.insert(drive.to_bits()))
}

/// `[defaults]` as written.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct DefaultsEntry {
    pub(crate) method: Option<MethodName>,
    pub(crate) worst_case: Option<WorstCase>,
    pub(crate) stack_order: Option<Spanned<StackOrder>>,
    pub(crate) drive: Option<Spanned<Drives>>,
    pub(crate) mobility_ratio: Option<Spanned<f64>>,
    pub(crate) reference: Option<Spanned<WrittenReference>>,
    pub(crate) stage_effort: Option<Spanned<f64>>,
    pub(crate) pull_up: Option<Spanned<String>>,
    pub(crate) tolerance: Option<Spanned<f64>>,
    pub(crate) max_runs: Option<Spanned<f64>>,
    pub(crate) area_cap: Option<Spanned<f64>>,
    pub(crate) cell_time_limit: Option<Spanned<f64>>,
}

/// One `[[gate]]` as written.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct GateEntry {
    name: Spanned<String>,
    expr: Spanned<String>,
    pub(crate) method: Option<MethodName>,
    pub(crate) worst_case: Option<Spanned<WorstCase>>,
    pub(crate) stack_order: Option<Spanned<StackOrder>>,
    pub(crate) drive: Option<Spanned<Drives>>,
    critical: Option<Spanned<String>>,
    pub(crate) reference: Option<Spanned<WrittenReference>>,
    pub(crate) stage_effort: Option<Spanned<f64>>,
    pub(crate) pull_up: Option<Spanned<String>>,
    pub(crate) tolerance: Option<Spanned<f64>>,
    pub(crate) max_runs: Option<Spanned<f64>>,
    pub(crate) area_cap: Option<Spanned<f64>>,
    pub(crate) cell_time_limit: Option<Spanned<f64>>,
}

/// The calibration keys as written (`tolerance`, `max_runs`, `area_cap`, `cell_time_limit`),
/// checked against their bounds; where a key is not written, `under`'s.
pub(crate) fn check_calibration(
    [tolerance, max_runs, area_cap, time_limit]: [&Option<Spanned<f64>>; 4],
    under: CalibrationKeys,
) -> Result<CalibrationKeys, (String, Span)> {
    let check =
        |key: &str, written: &Option<Spanned<f64>>, bound: bounds::Bound| -> Result<Option<f64>, (String, Span)> {
            let Some(written) = written else { return Ok(None) };
            let value = *written.get_ref();
            let whole = key != "max_runs" || value.fract() == 0.0;
            match bound.check(value) {
                Ok(value) if whole => Ok(Some(value)),
                Ok(_) => Err((
                    format!("max_runs = {}: must be a whole number", bounds::show(value)),
                    to_span(written.span()),
                )),
                Err(why) => Err((format!("{key} = {}: {why}", bounds::show(value)), to_span(written.span()))),
            }
        };
    Ok(CalibrationKeys {
        tolerance_percent: check("tolerance", tolerance, bounds::TOLERANCE_PERCENT)?.or(under.tolerance_percent),
        max_runs: check("max_runs", max_runs, bounds::RUNS)?.map(|runs| runs as u16).or(under.max_runs),
        area_cap: check("area_cap", area_cap, bounds::AREA_CAP)?.or(under.area_cap),
        time_limit_s: check("cell_time_limit", time_limit, bounds::TIME_LIMIT_S)?.or(under.time_limit_s),
    })
}

pub(crate) fn to_span(range: Range<usize>) -> Span {
    Span::from(range)
}

/// Where a string value's contents start in the file, when the file holds them verbatim (no
/// escapes or line continuations), so that a place in the value is a place in the file.
pub(crate) fn verbatim_start(text: &str, span: Range<usize>, value: &str) -> Option<usize> {
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

/// What `[defaults]` and the process give every gate, and what the command line sets over all.
#[derive(Debug, Clone)]
pub(crate) struct Common {
    pub(crate) method: MethodName,
    pub(crate) worst_case: WorstCase,
    pub(crate) stack_order: StackOrder,
    pub(crate) mobility_ratio: f64,
    pub(crate) drives: Vec<(f64, Span)>,
    pub(crate) reference: Option<Reference>,
    pub(crate) stage_effort: f64,
    /// `[defaults]`'s pull-up and where it is written.
    pub(crate) pull_up: Option<(String, Span)>,
    pub(crate) calibration: CalibrationKeys,
    pub(crate) overrides: Overrides,
}

/// Check a written stage effort: within [`bounds::SIZING`].
pub(crate) fn check_stage_effort(written: &Spanned<f64>) -> Result<f64, (String, Span)> {
    let value = *written.get_ref();
    bounds::SIZING.check(value).map_err(|why| {
        (format!("stage_effort = {}: a stage effort {why}", bounds::show(value)), to_span(written.span()))
    })
}

/// The option of `batch` that states the folder of a library read from standard input.
pub const BASE_DIR_OPTION: &str = "--base-dir";

pub(crate) fn read_process(
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

pub(crate) fn read_gate_entry(
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
    let method_name = common.overrides.method.or(gate.method).unwrap_or(common.method);
    if Method::of(method_name).sizes_by_delay() {
        return Err(problem(ELMORE_IN_A_LIBRARY.to_string(), name_span));
    }
    let worst_case_span = gate.worst_case.as_ref().map_or(name_span, |w| to_span(w.span()));
    let worst_case =
        common.overrides.worst_case.or(gate.worst_case.map(Spanned::into_inner)).unwrap_or(common.worst_case);
    let method = Method::with(method_name, worst_case)
        .map_err(|error| problem(format!("worst_case = \"{}\": {error}", worst_case.name()), worst_case_span))?;
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
    let stage_effort = match (common.overrides.stage_effort, &gate.stage_effort) {
        (Some(effort), _) => effort,
        (None, Some(written)) => check_stage_effort(written).map_err(|(message, span)| problem(message, span))?,
        (None, None) => common.stage_effort,
    };
    let pull_up = match (&common.overrides.pull_up, &gate.pull_up) {
        (Some(written), _) => Some(PullUpPlace { text: written.clone(), span: name_span, verbatim_start: None }),
        (None, Some(written)) => Some(PullUpPlace {
            text: written.get_ref().clone(),
            span: to_span(written.span()),
            verbatim_start: verbatim_start(source.text(), written.span(), written.get_ref()),
        }),
        (None, None) => common.pull_up.as_ref().map(|(text, span)| PullUpPlace {
            text: text.clone(),
            span: *span,
            verbatim_start: verbatim_start(source.text(), span.start..span.end, text),
        }),
    };
    let calibration =
        check_calibration([&gate.tolerance, &gate.max_runs, &gate.area_cap, &gate.cell_time_limit], common.calibration)
            .map_err(|(message, span)| problem(message, span))?;
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
        stage_effort,
        pull_up,
        calibration,
        name_span,
        expression_place,
    })
}

/// A library sizes by the default order or as written; the search times every order, which is a
/// job for `widthwise size` one gate at a time.
pub(crate) fn check_stack_order(order: &Spanned<StackOrder>) -> Result<(), String> {
    match order.get_ref() {
        StackOrder::Search => Err("stack_order = \"search\" times every order of a gate: a library takes \"default\" \
                                   or \"written\"; search one gate with 'widthwise size --stack-order search'"
            .to_string()),
        StackOrder::Default | StackOrder::Written => Ok(()),
    }
}
