//! widthwise: size the transistors of static CMOS cells against a reference inverter.
//!
//! The stages, in the order data flows through them:
//! [`expr`] (text to `Y = NOT f`) -> [`logic`] (the cell's stages) -> [`network`] (pull-down and
//! pull-up trees) -> [`sizing`] (a [`sizing::Plan`] and the cell's logic to a [`cell::SizedCell`], the
//! one way in) -> [`figures`] (input capacitance, logical effort, parasitic delay, worst and best
//! case) and [`timing`] (Elmore delays at a load) -> [`output`] (table, CSV, JSON, SPICE, decks).
//! Every result is a first-order estimate: sign-off needs the foundry's models, design rules and
//! licensed practice.

#![forbid(unsafe_code)]

pub mod analysis;
pub mod bounds;
pub mod budget;
pub mod calibrate;
pub mod cell;
pub mod cli;
pub mod commands;
pub mod diagnostic;
pub mod error;
pub mod exact;
pub mod exit;
pub mod expr;
pub mod figures;
pub mod io;
pub mod library;
pub mod logic;
pub mod measure;
pub mod models;
pub mod names;
pub mod network;
pub mod ngspice;
pub mod number;
pub mod optimize;
pub mod ordered;
pub mod output;
pub mod paths;
pub mod process;
pub mod sizing;
pub mod timing;
pub mod verify;

pub use cell::SizedCell;
pub use diagnostic::Span;
pub use error::Error;
pub use expr::ExprError;
pub use sizing::{Method, Plan, Reference};

/// Read `text` (an expression or a shorthand; the process's model names reserved) as a cell and
/// size it under `plan` ([`sizing::size_best`]: of a function's forms, the one of least total W/L):
/// the reading and the sizing in one call.
pub fn size_text(text: &str, plan: &Plan) -> Result<SizedCell, Error> {
    let forms = logic::synthesize_with_models(text, &plan.process.model_names())
        .map_err(|error| Error::Logic { error, input: diagnostic::Source::inline("the expression", text) })?;
    Ok(sizing::size_best(&forms, plan)?)
}
