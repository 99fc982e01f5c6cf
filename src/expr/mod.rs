//! The expression stage: text -> tokens -> tree -> `Y = NOT f`, with shorthands for the trade's gates.

pub mod ast;
pub mod lexer;
pub mod normal;
pub mod parser;
pub mod shorthand;

pub use ast::{Expr, ExprKind};
pub use normal::{Function, GateFunction, Literal};

use crate::error::ExprError;

/// Read a gate from text: an expression (with an optional `name =` prefix) or a shorthand such
/// as `nand2`, in place of the whole expression or after `name =`.
pub fn read_gate(source: &str) -> Result<GateFunction, ExprError> {
    let parsed = parser::parse(source)?;
    let output = parsed.output.as_ref().map(|(name, span)| (name.as_str(), *span));
    match &parsed.expr.kind {
        ExprKind::Input(name) => {
            let expr = shorthand::expand(name, parsed.expr.span)?;
            normal::normalize(&expr, output, Some(name.to_ascii_lowercase()))
        }
        _ => normal::normalize(&parsed.expr, output, None),
    }
}
