//! Why verification cannot check a netlist: it names something the gate does not have, or the work
//! is past its budget.

use thiserror::Error;

use crate::budget::OverBudget;
use crate::expr::error::ExprError;

/// A netlist that cannot be simulated: it names something the gate does not have.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum VerifyError {
    /// A transistor gated by a name that is not an input of the gate.
    #[error("transistor '{device}' is gated by '{input}', which is not an input of the gate")]
    UnknownInput {
        /// The transistor.
        device: String,
        /// Its gate input.
        input: String,
    },
    /// A transistor of a type other than nmos or pmos.
    #[error("transistor '{device}' has type '{device_type}'; expected nmos or pmos")]
    UnknownType {
        /// The transistor.
        device: String,
        /// Its type.
        device_type: String,
    },
    /// The gate's canonical expression does not read back.
    #[error("the gate's expression '{text}' does not read back: {error}")]
    Expression {
        /// The text.
        text: String,
        /// Why.
        error: ExprError,
    },
    /// An input of the expression that the gate does not list.
    #[error("the expression names '{input}', which is not an input of the gate")]
    ExpressionInput {
        /// The name.
        input: String,
    },
    /// More work than the budget allows.
    #[error("{0}")]
    OverBudget(OverBudget),
    /// More pseudo-random vectors than allowed.
    #[error("{requested} random vectors asked for; the limit is {limit}")]
    TooManyVectors {
        /// What was asked.
        requested: u64,
        /// The limit.
        limit: u64,
    },
}

impl VerifyError {
    /// Whether the error is an internal inconsistency: the netlist of a gate this crate sized names
    /// something the gate does not have, or its expression does not read back (a bug when the
    /// binary meets it). The others are limits and budgets.
    pub fn is_internal(&self) -> bool {
        matches!(
            self,
            VerifyError::UnknownInput { .. }
                | VerifyError::UnknownType { .. }
                | VerifyError::Expression { .. }
                | VerifyError::ExpressionInput { .. }
        )
    }
}
