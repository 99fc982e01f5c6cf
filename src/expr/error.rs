//! Errors of the expression stage: lexing, parsing, shorthand names and the one-stage check, each
//! with the byte span it is about.

use thiserror::Error;

use crate::diagnostic::{Span, escaped};

/// Errors of the expression stage: lexing, parsing, shorthand names and the one-stage check.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum ExprError {
    /// Nothing but white space.
    #[error("the expression is empty")]
    Empty {
        /// Where the (empty) text is.
        span: Span,
    },
    /// A character no token starts with (a control character is written escaped).
    #[error("unknown character '{}'", escaped(&character.to_string()))]
    UnknownCharacter {
        /// The character.
        character: char,
        /// Where it is.
        span: Span,
    },
    /// A token that cannot stand where it is.
    #[error("expected {expected}, found {found}")]
    Unexpected {
        /// What could stand here.
        expected: String,
        /// What stands here instead (quoted, or "the end").
        found: String,
        /// Where.
        span: Span,
    },
    /// An opening parenthesis never closed.
    #[error("'(' is never closed: expected ')' before the end")]
    Unclosed {
        /// The opening parenthesis.
        span: Span,
    },
    /// Deeper nesting than the parser allows.
    #[error("nesting deeper than {limit} levels of parentheses")]
    TooDeep {
        /// The limit.
        limit: usize,
        /// Where the limit was crossed.
        span: Span,
    },
    /// A longer text than the parser reads.
    #[error("the expression is {length} bytes long; the limit is {limit}")]
    TooLong {
        /// Its length.
        length: usize,
        /// The limit.
        limit: usize,
        /// The whole text.
        span: Span,
    },
    /// More literal occurrences (transistors per network) than allowed.
    #[error("the expression has {count} input occurrences; the limit is {limit} transistors per network")]
    TooManyDevices {
        /// How many.
        count: usize,
        /// The limit.
        limit: usize,
        /// Where the first one past the limit is.
        span: Span,
    },
    /// More distinct inputs than allowed.
    #[error("the expression has {count} distinct inputs; the limit is {limit}")]
    TooManyInputs {
        /// How many.
        count: usize,
        /// The limit.
        limit: usize,
        /// Where the first one past the limit is.
        span: Span,
    },
    /// Every input appears uncomplemented: the function is non-inverting.
    #[error(
        "'{text}' is non-inverting: every input appears uncomplemented, so one static stage gives its complement; \
         write the complement (e.g. '!({text})') and follow it with an inverter"
    )]
    NonInverting {
        /// The expression text.
        text: String,
        /// The whole expression.
        span: Span,
    },
    /// Inputs in both polarities after pushing NOTs to the leaves.
    #[error(
        "not a single stage: input '{name}' appears uncomplemented here, but a one-stage gate needs every input \
         complemented once NOTs are pushed to the inputs (the pull-up would need an NMOS-style input, or the \
         pull-down a PMOS-style one)"
    )]
    Binate {
        /// The input that appears in the wrong polarity.
        name: String,
        /// Where.
        span: Span,
    },
    /// Exclusive OR needs every input in both polarities.
    #[error("'^' (exclusive or) is binate: it needs each input in both polarities, which no single static stage has")]
    ExclusiveOr {
        /// The operator.
        span: Span,
    },
    /// A name that looks like a gate shorthand but is not one.
    #[error("unknown gate '{name}': {why}")]
    UnknownShorthand {
        /// The name.
        name: String,
        /// What is wrong with it and what is known.
        why: String,
        /// Where.
        span: Span,
    },
    /// An input or the output named with a reserved name: a rail, ground or a device model.
    #[error("{role} '{name}' takes a reserved name: {why}")]
    ReservedName {
        /// `input` or `the output`.
        role: &'static str,
        /// The name.
        name: String,
        /// Why it is reserved.
        why: String,
        /// Where.
        span: Span,
    },
    /// An input named like the output or like another input.
    #[error("input '{name}' clashes with {what}")]
    NameClash {
        /// The input.
        name: String,
        /// What it clashes with.
        what: String,
        /// Where.
        span: Span,
    },
}

impl ExprError {
    /// Where in the expression the error is.
    pub fn span(&self) -> Span {
        match self {
            ExprError::Empty { span }
            | ExprError::UnknownCharacter { span, .. }
            | ExprError::Unexpected { span, .. }
            | ExprError::Unclosed { span }
            | ExprError::TooDeep { span, .. }
            | ExprError::TooLong { span, .. }
            | ExprError::TooManyDevices { span, .. }
            | ExprError::TooManyInputs { span, .. }
            | ExprError::NonInverting { span, .. }
            | ExprError::Binate { span, .. }
            | ExprError::ExclusiveOr { span }
            | ExprError::UnknownShorthand { span, .. }
            | ExprError::ReservedName { span, .. }
            | ExprError::NameClash { span, .. } => *span,
        }
    }
}
