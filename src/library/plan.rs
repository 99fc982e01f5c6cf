//! One library gate, read and checked: its plan for each drive, and where its problems are.

use std::sync::Arc;

use crate::diagnostic::{Diagnostic, Source, Span};
use crate::names;
use crate::process::Process;
use crate::sizing::{Method, Order, Plan, Reference, SizingError, StackOrder};

/// Where an expression's text is in the file.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct ExpressionPlace {
    /// The whole string value, quotes included.
    pub(crate) string: Span,
    /// Where its contents start, when the file holds them verbatim (no escapes).
    pub(crate) verbatim_start: Option<usize>,
}

/// A pull-up as a library gives it: its text and where it is written (the command line's: at the
/// gate's name).
#[derive(Debug, Clone, PartialEq)]
pub struct PullUpPlace {
    /// The structure, or `mirror`.
    pub text: String,
    /// The value in the file (with its quotes), or the gate's name for the command line's.
    pub(crate) span: Span,
    /// Where its contents start, when the file holds them verbatim.
    pub(crate) verbatim_start: Option<usize>,
}

impl PullUpPlace {
    /// Where byte `span` of the pull-up text (or the whole value, without one) is in the file.
    pub(crate) fn place(&self, span: Option<Span>) -> Place {
        match (self.verbatim_start, span) {
            (Some(start), Some(span)) => Place::File(Span::new(start + span.start, start + span.end)),
            _ => Place::File(self.span),
        }
    }
}

/// The calibration settings of a gate (`batch --calibrate`): its keys, else `[defaults]`'s; the
/// command line's options come before both.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct CalibrationKeys {
    /// `tolerance`, percent.
    pub tolerance_percent: Option<f64>,
    /// `max_runs`.
    pub max_runs: Option<u16>,
    /// `area_cap`.
    pub area_cap: Option<f64>,
    /// `cell_time_limit`, seconds.
    pub time_limit_s: Option<f64>,
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
    pub(crate) drive_spans: Vec<Span>,
    /// The input to place nearest the output.
    pub critical: Option<String>,
    /// Series-stack order: the default rule or as written.
    pub stack_order: StackOrder,
    /// A skewed reference inverter (NMOS and PMOS W/L at drive 1); `None`: balanced, 1 and the
    /// mobility ratio.
    pub reference: Option<Reference>,
    /// The effort each stage before the output stage bears, in a cell of several stages.
    pub stage_effort: f64,
    /// The logic stage's pull-up as written (a structure or `mirror`), with its place.
    pub pull_up: Option<PullUpPlace>,
    /// The calibration settings of the gate and `[defaults]`.
    pub calibration: CalibrationKeys,
    pub(crate) name_span: Span,
    pub(crate) expression_place: ExpressionPlace,
    pub(crate) critical_span: Option<Span>,
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
            stage_effort: self.stage_effort,
            ..Plan::new(self.method, self.mobility_ratio, drive, self.reference)
        })
    }

    /// A problem of this gate at `span`.
    pub(crate) fn problem(&self, message: String, place: Place) -> GateProblem {
        GateProblem { number: self.number, name: Some(self.name.clone()), message, place }
    }

    /// Where in the file byte `span` of the expression is.
    pub(crate) fn expression_problem(&self, message: String, span: Span) -> GateProblem {
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
