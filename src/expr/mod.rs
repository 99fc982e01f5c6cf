//! The expression stage: text -> tokens -> tree -> `Y = NOT f`, with shorthands for the trade's gates.

pub mod ast;
pub mod error;
pub mod lexer;
pub mod normal;
pub mod parser;
pub mod shorthand;

pub use ast::{Expr, ExprKind};
pub use error::ExprError;
pub use normal::{Function, GateFunction, Literal};

/// Read a gate from text: an expression (with an optional `name =` prefix) or a shorthand such
/// as `nand2`, in place of the whole expression or after `name =`. No name may be reserved
/// ([`crate::names::RESERVED`]).
pub fn read_gate(source: &str) -> Result<GateFunction, ExprError> {
    read_gate_with_models(source, &[])
}

/// [`read_gate`] where `models`, the device models the netlists will name, are reserved too: no
/// input or output may take one (compared without case), and a shorthand's inputs skip them.
pub fn read_gate_with_models(source: &str, models: &[&str]) -> Result<GateFunction, ExprError> {
    let parsed = parser::parse(source)?;
    let output = parsed.output.as_ref().map(|(name, span)| (name.as_str(), *span));
    let reserved = normal::Reserved { output: output.map_or(normal::DEFAULT_OUTPUT, |(name, _)| name), models };
    match &parsed.expr.kind {
        ExprKind::Input(name) => {
            let expr = shorthand::expand(name, parsed.expr.span, &|candidate| reserved.takes(candidate))?;
            normal::normalize(&expr, output, Some(name.to_ascii_lowercase()), models)
        }
        _ => normal::normalize(&parsed.expr, output, None, models),
    }
}
