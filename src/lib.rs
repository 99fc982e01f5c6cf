//! widthwise: size the transistors of static CMOS gates against a reference inverter.
//!
//! The stages, in the order data flows through them:
//! [`expr`] (text to `Y = NOT f`) -> [`network`] (pull-down and pull-up trees) -> [`paths`]
//! (worst and best case) -> [`sizing`] (W/L of every device) -> [`figures`] (input capacitance,
//! logical effort, parasitic delay) -> [`output`] (table, CSV, JSON, SPICE). [`gate`] runs one
//! gate through all of them. Every result is a first-order estimate: sign-off needs the
//! foundry's models, design rules and licensed practice.

#![forbid(unsafe_code)]

pub mod bounds;
pub mod budget;
pub mod cli;
pub mod commands;
pub mod delay;
pub mod diagnostic;
pub mod error;
pub mod exact;
pub mod exit;
pub mod expr;
pub mod figures;
pub mod gate;
pub mod io;
pub mod library;
pub mod logic;
pub mod models;
pub mod names;
pub mod network;
pub mod ngspice;
pub mod number;
pub mod optimize;
pub mod output;
pub mod paths;
pub mod process;
pub mod sizing;
pub mod verify;

pub use diagnostic::Span;
pub use error::Error;
pub use expr::ExprError;
pub use gate::{GateOptions, SizedGate};
pub use sizing::{Method, Reference, SizingOptions};

/// Read `text` (an expression or a shorthand; the process's model names reserved) and size it by a
/// path method ([`gate::size_function`]): the expression stage and the sizing in one call.
pub fn size_text(text: &str, options: &GateOptions) -> Result<SizedGate, Error> {
    let function = expr::read_gate_with_models(text, &options.process.model_names())
        .map_err(|error| Error::Expression { error, input: diagnostic::Source::inline("the expression", text) })?;
    Ok(gate::size_function(function, options)?)
}
