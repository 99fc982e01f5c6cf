//! Why a cell could not be sized under its plan.

use thiserror::Error;

use crate::bounds::OutOfBounds;
use crate::budget::OverBudget;
use crate::diagnostic::escaped;
use crate::exact::ExactError;
use crate::optimize::geometric::SolveError;
use crate::sizing::plan::{CriticalWithWrittenOrder, WorstCaseRefused};
use crate::timing::error::TimingError;

/// Why sizing gave no cell.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum SizingError {
    /// The cell name is reserved (a rail, ground, a model in use).
    #[error("the cell name '{name}' is reserved: {why}")]
    ReservedCellName {
        /// The name.
        name: String,
        /// Why it is reserved.
        why: String,
    },
    /// An input or the output takes a reserved name (a function read without the models in use).
    #[error("{role} '{name}' takes a reserved name: {why}")]
    ReservedName {
        /// `input` or `the output`.
        role: &'static str,
        /// The name.
        name: String,
        /// Why it is reserved.
        why: String,
    },
    /// A plan value out of its bound.
    #[error(transparent)]
    OutOfBounds(#[from] OutOfBounds),
    /// A process file whose gate capacitance gives no diffusion ratio.
    #[error(
        "the process's gate_cap_ff_per_um is '{gate_cap_ff_per_um}', so the diffusion ratio has no default: \
         give --diffusion-ratio"
    )]
    NoDefaultRatio {
        /// The process's gate capacitance per um.
        gate_cap_ff_per_um: f64,
    },
    /// Both a critical input and the written stack order choose the order.
    #[error(transparent)]
    CriticalWithWrittenOrder(#[from] CriticalWithWrittenOrder),
    /// The critical input is not an input of the gate.
    #[error("critical input '{}' is not an input of the gate (its inputs: {inputs})", escaped(name))]
    UnknownCritical {
        /// The name given.
        name: String,
        /// The gate's inputs, listed.
        inputs: String,
    },
    /// What takes one stage only (the stack-order search), asked of a cell of several stages.
    #[error(
        "{what} takes cells of one stage, and this one has {stages} stages (docs/model.md section 9): drop it, \
         or size the cell's stages as expressions of their own"
    )]
    SeveralStages {
        /// What was asked (`the stack-order search`, `the delay report`).
        what: &'static str,
        /// Its stages.
        stages: usize,
    },
    /// An earlier stage whose drive, raised again and again, still draws a device below the
    /// process's minimum width (the raise did not converge).
    #[error(
        "stage {stage}: raising its drive did not bring every device to the process's minimum width (smallest W/L \
         {}, minimum {}); the sizing did not converge",
        crate::number::format(*width),
        crate::number::format(*least)
    )]
    BelowMinimum {
        /// The net the stage drives.
        stage: String,
        /// Its smallest W/L.
        width: f64,
        /// The minimum W/L.
        least: f64,
    },
    /// A device drawn with more fingers than allowed.
    #[error(
        "{device} (W/L {}) would be drawn as {fingers} fingers; the limit is {limit} fingers per device: a \
         smaller drive or reference, a larger max_finger_width_nm or a smaller unit_width_nm keeps it in",
        crate::number::format(*w_over_l)
    )]
    TooManyFingers {
        /// The device.
        device: String,
        /// Its W/L.
        w_over_l: f64,
        /// Its fingers.
        fingers: usize,
        /// The limit.
        limit: usize,
    },
    /// An option of the elmore method out of range.
    #[error("{what} {rule}, found '{value}'")]
    Option {
        /// Which option.
        what: &'static str,
        /// What it must be (`must be ...`).
        rule: String,
        /// The value.
        value: f64,
    },
    /// A gate too large for the elmore method's dense Newton steps.
    #[error("the elmore method handles gates of up to {limit} transistors; this one has {count}")]
    TooLarge {
        /// Transistors in the gate.
        count: usize,
        /// The limit.
        limit: usize,
    },
    /// No widths within the cap meet every delay bound.
    #[error(
        "no widths within {} times the longest-path total W/L ({} W/L) make every Elmore delay at most {} times \
         the reference inverter's: the best ratio reached within it is {} (input '{input}', {edge}); a larger \
         --delay-target, a larger load or less diffusion capacitance makes it feasible",
        crate::number::format(*cap_factor),
        crate::number::format(*cap),
        crate::number::format(*target),
        crate::number::format(*best)
    )]
    Infeasible {
        /// The delay target asked for.
        target: f64,
        /// The least worst ratio of delay to the reference's reached within the cap.
        best: f64,
        /// The cap on the total W/L.
        cap: f64,
        /// The cap, as a multiple of the longest-path total.
        cap_factor: f64,
        /// The input of the transition that keeps it above the target.
        input: String,
        /// Its edge.
        edge: &'static str,
    },
    /// The sequence of convex approximations against every input vector stopped with a vector above
    /// the target.
    #[error(
        "sizing for delay against every input vector did not converge: its last point (a local search) leaves \
         a worst delay ratio of {} (input '{input}', {edge}) above the target {}; a larger --delay-target, or \
         --worst-case paths",
        crate::number::format(*best),
        crate::number::format(*target)
    )]
    VectorsNotMet {
        /// The delay target.
        target: f64,
        /// The worst ratio at the last point.
        best: f64,
        /// The input of the worst transition there.
        input: String,
        /// Its edge.
        edge: &'static str,
    },
    /// Meeting the bounds needs widths beyond the search box.
    #[error("meeting every Elmore delay bound needs widths beyond {factor} times the longest-path widths")]
    Unbounded {
        /// The box, as a factor on the longest-path widths.
        factor: f64,
    },
    /// The geometric program's solver stopped without converging.
    #[error("the elmore method's solver did not converge: {0}")]
    Solver(SolveError),
    /// A gate too large for the stack-order search.
    #[error("the stack-order search handles gates of up to {limit} input occurrences; this one has {count}")]
    TooLargeToSearch {
        /// Input occurrences of the gate.
        count: usize,
        /// The limit.
        limit: usize,
    },
    /// The default stack order sized once, then not again (an internal inconsistency).
    #[error("the default stack order could not be sized twice the same way")]
    DefaultOrderChanged,
    /// A strategy that times the cell could not (delays, the elmore method, the order search).
    #[error(transparent)]
    Timing(#[from] TimingError),
    /// More work than the budget allows.
    #[error("{0}")]
    OverBudget(OverBudget),
    /// A worst-case definition the method does not take.
    #[error(transparent)]
    WorstCase(#[from] WorstCaseRefused),
    /// A network the worst case over input vectors cannot size: past a limit, or its solver failed.
    #[error("{}", exact_message(error))]
    Exact {
        /// `"pull-down"` or `"pull-up"`.
        network: &'static str,
        /// Why.
        error: ExactError,
    },
}

/// An exact-sizing error, with the way out where it is a limit.
fn exact_message(error: &ExactError) -> String {
    if matches!(
        error,
        ExactError::TooManyInputs { .. } | ExactError::TooManyDevices { .. } | ExactError::TooManyVectors { .. }
    ) {
        format!("{error}: size against every path with --worst-case paths")
    } else {
        error.to_string()
    }
}

impl From<OverBudget> for SizingError {
    fn from(over: OverBudget) -> SizingError {
        SizingError::OverBudget(over)
    }
}

impl SizingError {
    /// Whether no widths meet the elmore method's bounds (within its box): the method's answer for
    /// this gate and load, which the stack-order search skips and the binary ends with exit 1.
    pub fn is_infeasible(&self) -> bool {
        matches!(self, SizingError::Infeasible { .. } | SizingError::Unbounded { .. })
    }

    /// Whether a computation did not succeed (exit 1): infeasible bounds, a solver that did not
    /// converge; everything else is bad input, a limit or a budget (exit 2), or internal.
    pub fn is_check_failure(&self) -> bool {
        self.is_infeasible()
            || matches!(
                self,
                SizingError::Solver(_) | SizingError::BelowMinimum { .. } | SizingError::VectorsNotMet { .. }
            )
            || matches!(self, SizingError::Exact { error, .. } if !error.past_limit())
    }

    /// Whether the error is an internal inconsistency: a bug when the binary meets it.
    pub fn is_internal(&self) -> bool {
        match self {
            SizingError::DefaultOrderChanged
            | SizingError::Solver(SolveError::Bad(_))
            | SizingError::Exact { error: ExactError::Bad(_), .. } => true,
            SizingError::Timing(error) => error.is_internal(),
            _ => false,
        }
    }
}
