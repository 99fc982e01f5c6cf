//! Cells of several stages: any function of NOT, AND, OR and XOR as the static CMOS stages that
//! compute it, and pull-ups written by the user, accepted only when proved complementary.
//!
//! One static stage computes `NOT f` with `f` an AND/OR tree of uncomplemented inputs. A function
//! whose negation-normal form has every input complemented is one such stage, exactly as
//! [`read_gate`](crate::expr::read_gate) reads it. Any other becomes a cell: input inverters make the
//! complements its logic stage reads (one per input, shared by every use), then the logic stage,
//! then an output inverter where the polarity asks for it. XOR is expanded to a sum of products
//! (`a ^ b = a & !b | !a & b`, its complement `!a & !b | a & b`), bounded before it is built.
//!
//! Where both polarities appear, two forms exist: the logic stage drives the output directly
//! ([`Form::Direct`]), or computes the complement and an output inverter restores it
//! ([`Form::Inverted`]). [`synthesize`] returns every form that exists, for the caller to size
//! and keep the smaller.
//!
//! Names: a stage is named by the net it drives. The complement of input `a` is `a_n`, the logic
//! stage's output before an output inverter is `<output>_n`; where a name is taken (compared
//! without case, as netlists compare them), `a_n2`, `a_n3` ... is the first free one. No generated
//! name is reserved ([`crate::names::RESERVED`], the device models in use).

use std::collections::{HashMap, HashSet};
use std::fmt;

use thiserror::Error;

use crate::diagnostic::Span;
use crate::expr::ast::{Expr, ExprKind};
use crate::expr::error::ExprError;
use crate::expr::normal::{self, GateFunction, MAX_DEVICES};
use crate::expr::{parser, shorthand};
use crate::names::{RESERVED, reserved_reason};

pub mod pull_up;
#[cfg(test)]
mod testing;

pub use pull_up::{
    MAX_PULL_UP_CHECK_INPUTS, PULL_UP_CHECK_BUDGET, PullUp, PullUpError, PullUpSpec, cell_pull_up, pull_up,
};

/// A static CMOS cell of one or more stages that computes one function.
#[derive(Debug, Clone, PartialEq)]
pub struct CellLogic {
    /// Output net (`y` unless the text names it).
    pub output: String,
    /// The cell's pins, in order of first appearance (a shorthand's own order for `mux2`, `mux2i`).
    pub inputs: Vec<String>,
    /// The stages in topological order: input inverters (in pin order), the logic stage, then the
    /// output inverter if there is one. The last drives [`CellLogic::output`].
    pub stages: Vec<StageLogic>,
    /// Whether the logic stage drives the output or its complement.
    pub form: Form,
    /// The function in canonical form, as written (`^` kept): what the cell must compute.
    pub text: String,
    /// The shorthand name, when the cell was given as one.
    pub shorthand: Option<String>,
}

/// One stage of a cell: a single static stage over nets.
#[derive(Debug, Clone, PartialEq)]
pub struct StageLogic {
    /// What the stage is for.
    pub role: StageRole,
    /// What it computes, `NOT f`, over net names: `inputs` are the nets it reads (pins or
    /// complements), `output` the net it drives, `text` its own expression over those nets
    /// (`!(a_n & b_n | a & b)`), `shorthand` set only for a one-stage cell given as one. Literal
    /// spans point into the cell's text as written (a complement's at where it is first needed).
    pub function: GateFunction,
}

/// What a stage is for.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize)]
#[serde(rename_all = "kebab-case", tag = "kind")]
pub enum StageRole {
    /// An input inverter making the complement of pin `input` (an index into [`CellLogic::inputs`]),
    /// read by every use of that complement.
    Complement {
        /// The pin, by index into [`CellLogic::inputs`].
        input: usize,
    },
    /// The stage that computes the function (or its complement, before an output inverter).
    Logic,
    /// The inverter from the logic stage's output to the cell's output.
    OutputInverter,
}

/// How the logic stage reaches the output.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Form {
    /// The logic stage drives the output: it computes `NOT f` with `f` the complement of the
    /// function in negation-normal form. A one-stage gate has this form.
    Direct,
    /// The logic stage computes the complement of the function (`f` is the function itself in
    /// negation-normal form) and an output inverter drives the output.
    Inverted,
}

impl Form {
    /// `"direct"` or `"inverted"`, for reports.
    pub fn name(self) -> &'static str {
        match self {
            Form::Direct => "direct",
            Form::Inverted => "inverted",
        }
    }

    /// What the form is, in a phrase.
    pub fn describe(self) -> &'static str {
        match self {
            Form::Direct => "the logic stage drives the output",
            Form::Inverted => "the logic stage computes the complement, an output inverter drives the output",
        }
    }
}

impl CellLogic {
    /// The logic stage (there is exactly one in every cell [`synthesize`] gives; panics on a cell
    /// built by hand without one).
    pub fn logic(&self) -> &StageLogic {
        self.stages.iter().find(|s| s.role == StageRole::Logic).expect("every cell has a logic stage")
    }

    /// Whether the cell is one stage.
    pub fn is_single_stage(&self) -> bool {
        self.stages.len() == 1
    }

    /// Transistors of the whole cell with complementary networks: two per literal occurrence.
    pub fn transistor_count(&self) -> usize {
        self.stages.iter().map(|s| 2 * s.function.literals.len()).sum()
    }

    /// The net that carries the complement of pin `input`, if the cell makes it.
    pub fn complement_net(&self, input: usize) -> Option<&str> {
        self.stages.iter().find_map(|s| match s.role {
            StageRole::Complement { input: pin } if pin == input => Some(s.function.output.as_str()),
            _ => None,
        })
    }
}

impl StageLogic {
    /// The net the stage drives, which also names the stage.
    pub fn net(&self) -> &str {
        &self.function.output
    }
}

/// Why a function has no cell.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum LogicError {
    /// The text is not a function (syntax, names, an unknown shorthand, too many inputs ...).
    #[error(transparent)]
    Expression(#[from] ExprError),
    /// Expanding XOR to a sum of products would give more literal occurrences than a network
    /// takes; counted before anything is built.
    #[error(
        "expanding '^' to a sum of products gives {} input occurrences here, one transistor each per network; \
         the limit is {limit} transistors per network",
        shown(*.count)
    )]
    TooLarge {
        /// Occurrences the expansion would have (saturating).
        count: u64,
        /// The limit ([`MAX_DEVICES`]).
        limit: usize,
        /// The innermost part whose expansion crosses the limit (an XOR's first `^` where it is one).
        span: Span,
    },
}

impl LogicError {
    /// Where in the text the error is.
    pub fn span(&self) -> Span {
        match self {
            LogicError::Expression(error) => error.span(),
            LogicError::TooLarge { span, .. } => *span,
        }
    }
}

fn shown(count: u64) -> String {
    if count == u64::MAX { format!("more than {}", u64::MAX - 1) } else { count.to_string() }
}

/// Every cell that computes `text` (an expression with an optional `name =` prefix, or a shorthand
/// of [`shorthand::CELL_HELP`]): one for a single-stage gate or a non-inverting unate function,
/// two (direct first, then inverted) where both polarities appear.
pub fn synthesize(text: &str) -> Result<Vec<CellLogic>, LogicError> {
    synthesize_with_models(text, &[])
}

/// [`synthesize`] where `models`, the device models the netlists will name, are reserved too, as
/// [`read_gate_with_models`](crate::expr::read_gate_with_models) reserves them.
pub fn synthesize_with_models(text: &str, models: &[&str]) -> Result<Vec<CellLogic>, LogicError> {
    let parsed = parser::parse(text)?;
    let output = parsed.output.as_ref().map(|(name, span)| (name.as_str(), *span));
    match &parsed.expr.kind {
        ExprKind::Input(name) => {
            let reserved = normal::Reserved { output: output.map_or(normal::DEFAULT_OUTPUT, |(name, _)| name), models };
            let cell = shorthand::expand_cell(name, parsed.expr.span, &|candidate| reserved.takes(candidate))?;
            cells(&cell.expr, output, Some(name.to_ascii_lowercase()), Some(cell.pins), models)
        }
        _ => cells(&parsed.expr, output, None, None, models),
    }
}

/// The cell sizing takes today for `text`: a function of one inverting stage, in the single-stage
/// form [`synthesize_with_models`] gives it. A function that needs several stages (a non-inverting,
/// binate or exclusive-or function) is refused, as is any text that does not read, with the error
/// the one-stage reader ([`read_gate_with_models`](crate::expr::read_gate_with_models)) gives it.
pub fn read_cell(text: &str, models: &[&str]) -> Result<CellLogic, ExprError> {
    match synthesize_with_models(text, models) {
        Ok(mut cells) if cells.len() == 1 && cells[0].is_single_stage() => Ok(cells.remove(0)),
        // The one-stage reader says why the function is not one stage (or does not read); every
        // function it takes is one stage here (the two agree, `one_stage_functions_are_todays_gates`).
        _ => crate::expr::read_gate_with_models(text, models).map(single_stage),
    }
}

/// [`synthesize_with_models`] for an expression already parsed (a lone input is a buffer here, not
/// a shorthand); `output` names the output net, pins follow first appearance.
pub fn synthesize_expr(
    expr: &Expr,
    output: Option<(&str, Span)>,
    shorthand: Option<String>,
    models: &[&str],
) -> Result<Vec<CellLogic>, LogicError> {
    cells(expr, output, shorthand, None, models)
}

fn cells(
    expr: &Expr,
    output: Option<(&str, Span)>,
    shorthand: Option<String>,
    declared_pins: Option<Vec<String>>,
    models: &[&str],
) -> Result<Vec<CellLogic>, LogicError> {
    if !contains_exclusive_or(expr) {
        // Today's reader decides one-stage gates, so they come out exactly as it gives them.
        match normal::normalize(expr, output, shorthand.clone(), models) {
            Ok(gate) => return Ok(vec![single_stage(gate)]),
            Err(ExprError::NonInverting { .. } | ExprError::Binate { .. }) => {}
            Err(error) => return Err(error.into()),
        }
    }
    if let Some((count, span)) = crossing(expr, MAX_DEVICES as u64) {
        return Err(LogicError::TooLarge { count, limit: MAX_DEVICES, span });
    }
    let written = first_appearance(expr);
    let pins: Vec<(String, Span)> = match declared_pins {
        Some(pins) => pins
            .into_iter()
            .map(|pin| {
                let span = written.iter().find(|(name, _)| *name == pin).map_or(expr.span, |(_, span)| *span);
                (pin, span)
            })
            .collect(),
        None => written,
    };
    let (output, output_span) = match output {
        Some((name, span)) => (name.to_string(), span),
        None => (normal::DEFAULT_OUTPUT.to_string(), expr.span),
    };
    check_names(&pins, &output, output_span, models)?;
    let index: HashMap<&str, usize> = pins.iter().enumerate().map(|(i, (name, _))| (name.as_str(), i)).collect();
    // The function and its complement in negation-normal form, XOR expanded.
    let function = nnf(expr, false, &index);
    let complement = nnf(expr, true, &index);
    let mut polarity = vec![(false, false); pins.len()];
    function.visit(&mut |pin, positive, _| {
        if positive {
            polarity[pin].0 = true;
        } else {
            polarity[pin].1 = true;
        }
    });
    let any_positive = polarity.iter().any(|p| p.0);
    let any_negative = polarity.iter().any(|p| p.1);
    let forms = match (any_positive, any_negative) {
        // Non-inverting: the complement is one stage over the pins, then an output inverter.
        (true, false) => vec![Form::Inverted],
        // Every input complemented: one stage (reached here only by a bug in the reader's check).
        (false, _) => vec![Form::Direct],
        (true, true) => vec![Form::Direct, Form::Inverted],
    };
    // Names, given once in a fixed order so both forms share them.
    let mut names = Names::new(&pins, &output, models);
    let complements: Vec<Option<String>> = pins
        .iter()
        .zip(&polarity)
        .map(|((name, _), &(positive, negative))| {
            let direct = forms.contains(&Form::Direct) && positive;
            let inverted = forms.contains(&Form::Inverted) && negative;
            (direct || inverted).then(|| names.fresh(name))
        })
        .collect();
    let inverted_output = forms.contains(&Form::Inverted).then(|| names.fresh(&output));
    let build = Build { pins: &pins, complements: &complements, output: &output, output_span, expr, models };
    forms
        .into_iter()
        .map(|form| {
            let (f, logic_output) = match form {
                Form::Direct => (&complement, output.as_str()),
                Form::Inverted => (&function, inverted_output.as_deref().expect("named with the form")),
            };
            let stages = build.stages(form, f, logic_output)?;
            Ok(CellLogic {
                output: output.clone(),
                inputs: pins.iter().map(|(name, _)| name.clone()).collect(),
                stages,
                form,
                text: expr.to_text(),
                shorthand: shorthand.clone(),
            })
        })
        .collect()
}

fn single_stage(gate: GateFunction) -> CellLogic {
    CellLogic {
        output: gate.output.clone(),
        inputs: gate.inputs.clone(),
        form: Form::Direct,
        text: gate.text.clone(),
        shorthand: gate.shorthand.clone(),
        stages: vec![StageLogic { role: StageRole::Logic, function: gate }],
    }
}

fn contains_exclusive_or(expr: &Expr) -> bool {
    match &expr.kind {
        ExprKind::Input(_) => false,
        ExprKind::Not(inner) => contains_exclusive_or(inner),
        ExprKind::And(operands) | ExprKind::Or(operands) => operands.iter().any(contains_exclusive_or),
        ExprKind::ExclusiveOr { .. } => true,
    }
}

/// Literal occurrences of the negation-normal form with XOR expanded to a sum of products, counted
/// without building it (saturating). Pushing NOT to the inputs never changes the count, and an XOR
/// of `n` operands has `2^(n-1)` terms in either polarity, in which every operand appears
/// `2^(n-2)` times as itself and as many times complemented: `2^(n-1)` times the operands' counts.
pub fn occurrences(expr: &Expr) -> u64 {
    match &expr.kind {
        ExprKind::Input(_) => 1,
        ExprKind::Not(inner) => occurrences(inner),
        ExprKind::And(operands) | ExprKind::Or(operands) => {
            operands.iter().fold(0u64, |sum, operand| sum.saturating_add(occurrences(operand)))
        }
        ExprKind::ExclusiveOr { operands, .. } => {
            let sum = operands.iter().fold(0u64, |sum, operand| sum.saturating_add(occurrences(operand)));
            let terms = u32::try_from(operands.len() - 1).ok().and_then(|n| 1u64.checked_shl(n)).unwrap_or(u64::MAX);
            sum.saturating_mul(terms)
        }
    }
}

/// The innermost node whose expansion has more than `limit` occurrences, with that count.
fn crossing(expr: &Expr, limit: u64) -> Option<(u64, Span)> {
    let count = occurrences(expr);
    if count <= limit {
        return None;
    }
    let inner = match &expr.kind {
        ExprKind::Input(_) => None,
        ExprKind::Not(inner) => crossing(inner, limit),
        ExprKind::And(operands) | ExprKind::Or(operands) | ExprKind::ExclusiveOr { operands, .. } => {
            operands.iter().find_map(|operand| crossing(operand, limit))
        }
    };
    inner.or(Some((
        count,
        match &expr.kind {
            ExprKind::ExclusiveOr { operator, .. } => *operator,
            _ => expr.span,
        },
    )))
}

/// Input names in order of first appearance, with the span of the first occurrence.
fn first_appearance(expr: &Expr) -> Vec<(String, Span)> {
    fn walk<'a>(expr: &'a Expr, seen: &mut HashSet<&'a str>, out: &mut Vec<(String, Span)>) {
        match &expr.kind {
            ExprKind::Input(name) => {
                if seen.insert(name) {
                    out.push((name.clone(), expr.span));
                }
            }
            ExprKind::Not(inner) => walk(inner, seen, out),
            ExprKind::And(operands) | ExprKind::Or(operands) | ExprKind::ExclusiveOr { operands, .. } => {
                operands.iter().for_each(|operand| walk(operand, seen, out))
            }
        }
    }
    let mut out = Vec::new();
    walk(expr, &mut HashSet::new(), &mut out);
    out
}

/// The same rules as a one-stage gate's names: no name reserved (rails, ground, `models`), no pin
/// named as the output, no two pins differing only in case.
fn check_names(pins: &[(String, Span)], output: &str, output_span: Span, models: &[&str]) -> Result<(), ExprError> {
    if let Some(why) = reserved_reason(output, models) {
        return Err(ExprError::ReservedName { role: "the output", name: output.to_string(), why, span: output_span });
    }
    let mut seen: HashMap<String, &str> = HashMap::new();
    for (name, span) in pins {
        if name.eq_ignore_ascii_case(output) {
            return Err(ExprError::NameClash {
                name: name.clone(),
                what: format!("the output '{output}' (a gate cannot take its own output as an input)"),
                span: *span,
            });
        }
        if let Some(why) = reserved_reason(name, models) {
            return Err(ExprError::ReservedName { role: "input", name: name.clone(), why, span: *span });
        }
        if let Some(other) = seen.insert(name.to_ascii_lowercase(), name) {
            return Err(ExprError::NameClash {
                name: name.clone(),
                what: format!("input '{other}' (netlist names ignore case)"),
                span: *span,
            });
        }
    }
    Ok(())
}

/// Generated net names: `<base>_n`, else `<base>_n2`, `<base>_n3` ..., never a name already taken
/// (compared without case) nor a reserved one (rails, ground, the models).
struct Names {
    taken: HashSet<String>,
}

impl Names {
    fn new(pins: &[(String, Span)], output: &str, models: &[&str]) -> Names {
        let mut taken: HashSet<String> = pins.iter().map(|(name, _)| name.to_ascii_lowercase()).collect();
        taken.insert(output.to_ascii_lowercase());
        taken.extend(RESERVED.iter().chain(models).map(|name| name.to_ascii_lowercase()));
        Names { taken }
    }

    fn fresh(&mut self, base: &str) -> String {
        let mut name = format!("{base}_n");
        let mut suffix = 2;
        while self.taken.contains(&name.to_ascii_lowercase()) {
            name = format!("{base}_n{suffix}");
            suffix += 1;
        }
        self.taken.insert(name.to_ascii_lowercase());
        name
    }
}

/// A negation-normal form over pins: literals in either polarity, AND and OR.
#[derive(Debug, Clone)]
enum Nnf {
    Literal { pin: usize, positive: bool, span: Span },
    And(Vec<Nnf>, Span),
    Or(Vec<Nnf>, Span),
}

impl Nnf {
    fn visit(&self, see: &mut impl FnMut(usize, bool, Span)) {
        match self {
            Nnf::Literal { pin, positive, span } => see(*pin, *positive, *span),
            Nnf::And(children, _) | Nnf::Or(children, _) => children.iter().for_each(|c| c.visit(see)),
        }
    }

    /// AND (or OR) of `children`, a child of the same kind merged into it.
    fn join(is_and: bool, children: Vec<Nnf>, span: Span) -> Nnf {
        let mut flat = Vec::with_capacity(children.len());
        for child in children {
            match (child, is_and) {
                (Nnf::And(inner, _), true) | (Nnf::Or(inner, _), false) => flat.extend(inner),
                (child, _) => flat.push(child),
            }
        }
        if flat.len() == 1 {
            return flat.pop().expect("one child");
        }
        if is_and { Nnf::And(flat, span) } else { Nnf::Or(flat, span) }
    }

    /// The tree as an expression over nets: a pin's name, or its complement's net.
    fn to_expr(&self, pins: &[(String, Span)], complements: &[Option<String>]) -> Expr {
        match self {
            Nnf::Literal { pin, positive, span } => {
                let name = if *positive {
                    pins[*pin].0.clone()
                } else {
                    complements[*pin].clone().expect("a complement is named for every complemented literal")
                };
                Expr { kind: ExprKind::Input(name), span: *span }
            }
            Nnf::And(children, span) | Nnf::Or(children, span) => {
                let operands = children.iter().map(|c| c.to_expr(pins, complements)).collect();
                let kind = if matches!(self, Nnf::And(..)) { ExprKind::And(operands) } else { ExprKind::Or(operands) };
                Expr { kind, span: *span }
            }
        }
    }
}

/// `expr` (its complement when `negate`) in negation-normal form; an XOR of `x1 .. xn` becomes the
/// OR of one term per odd-sized set of operands taken true (even-sized for its complement), in
/// order of the set read as a binary number with `x1` as bit 0: `a ^ b = a & !b | !a & b`.
/// Only called once [`crossing`] has bounded the size.
fn nnf(expr: &Expr, negate: bool, index: &HashMap<&str, usize>) -> Nnf {
    match &expr.kind {
        ExprKind::Input(name) => Nnf::Literal { pin: index[name.as_str()], positive: !negate, span: expr.span },
        ExprKind::Not(inner) => nnf(inner, !negate, index),
        ExprKind::And(operands) | ExprKind::Or(operands) => {
            let is_and = matches!(expr.kind, ExprKind::And(_)) != negate;
            Nnf::join(is_and, operands.iter().map(|o| nnf(o, negate, index)).collect(), expr.span)
        }
        ExprKind::ExclusiveOr { operands, .. } => {
            let both: Vec<[Nnf; 2]> = operands.iter().map(|o| [nnf(o, false, index), nnf(o, true, index)]).collect();
            let odd = !negate;
            let terms = (0u64..1 << operands.len())
                .filter(|set| (set.count_ones() % 2 == 1) == odd)
                .map(|set| {
                    let members =
                        both.iter().enumerate().map(|(i, pair)| pair[usize::from(set >> i & 1 == 0)].clone()).collect();
                    Nnf::join(true, members, expr.span)
                })
                .collect();
            Nnf::join(false, terms, expr.span)
        }
    }
}

/// What the stages of every form are built from.
struct Build<'a> {
    pins: &'a [(String, Span)],
    complements: &'a [Option<String>],
    output: &'a str,
    output_span: Span,
    expr: &'a Expr,
    models: &'a [&'a str],
}

impl Build<'_> {
    /// The stages of `form`, whose logic stage computes `NOT f` and drives `logic_output`.
    fn stages(&self, form: Form, f: &Nnf, logic_output: &str) -> Result<Vec<StageLogic>, LogicError> {
        // The complements this form reads, each with where it is first needed.
        let mut needed: Vec<Option<Span>> = vec![None; self.pins.len()];
        f.visit(&mut |pin, positive, span| {
            if !positive && needed[pin].is_none() {
                needed[pin] = Some(span);
            }
        });
        let mut stages = Vec::new();
        for (pin, span) in needed.iter().enumerate().filter_map(|(pin, span)| span.map(|s| (pin, s))) {
            let net = self.complements[pin].as_deref().expect("named for the form");
            let input = Expr { kind: ExprKind::Input(self.pins[pin].0.clone()), span };
            stages.push(StageLogic {
                role: StageRole::Complement { input: pin },
                function: stage(&input, net, span, self.models)?,
            });
        }
        let span = self.expr.span;
        let logic_span = if form == Form::Direct { self.output_span } else { span };
        stages.push(StageLogic {
            role: StageRole::Logic,
            function: stage(&f.to_expr(self.pins, self.complements), logic_output, logic_span, self.models)?,
        });
        if form == Form::Inverted {
            let input = Expr { kind: ExprKind::Input(logic_output.to_string()), span };
            stages.push(StageLogic {
                role: StageRole::OutputInverter,
                function: stage(&input, self.output, self.output_span, self.models)?,
            });
        }
        Ok(stages)
    }
}

/// The one-stage gate `output = NOT f` over nets, through the same reader as every gate.
fn stage(f: &Expr, output: &str, output_span: Span, models: &[&str]) -> Result<GateFunction, LogicError> {
    let not = Expr { kind: ExprKind::Not(Box::new(f.clone())), span: f.span };
    Ok(normal::normalize(&not, Some((output, output_span)), None, models)?)
}

impl fmt::Display for CellLogic {
    /// One line per stage: `a_n = !a`, `y = !(a_n & b_n | a & b)`.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (index, stage) in self.stages.iter().enumerate() {
            if index > 0 {
                f.write_str("; ")?;
            }
            write!(f, "{} = {}", stage.function.output, stage.function.text)?;
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::expr::read_gate;
    use crate::logic::testing::{by_text, check_cell, form, inverting, monotone, one};
    use proptest::prelude::*;

    /// Structure every cell has: stage order, one shared complement per complemented pin and only
    /// those the logic stage reads, the output inverter with the inverted form, names that clash
    /// with nothing.
    fn check_structure(cell: &CellLogic) {
        let roles: Vec<StageRole> = cell.stages.iter().map(|s| s.role).collect();
        let logic = roles.iter().position(|r| *r == StageRole::Logic).expect("a logic stage");
        assert_eq!(roles.iter().filter(|r| **r == StageRole::Logic).count(), 1, "{cell}");
        let complemented: Vec<usize> = roles[..logic]
            .iter()
            .map(|r| match r {
                StageRole::Complement { input } => *input,
                other => panic!("{other:?} before the logic stage in {cell}"),
            })
            .collect();
        assert!(complemented.windows(2).all(|w| w[0] < w[1]), "one complement per pin, in pin order: {cell}");
        match cell.form {
            Form::Direct => assert_eq!(roles.len(), logic + 1, "{cell}"),
            Form::Inverted => {
                assert_eq!(roles[logic + 1..], [StageRole::OutputInverter], "{cell}");
                assert_eq!(cell.stages[logic + 1].function.inputs, [cell.logic().net()], "{cell}");
            }
        }
        assert_eq!(cell.stages.last().unwrap().net(), cell.output, "{cell}");
        let logic_inputs = &cell.logic().function.inputs;
        for (stage, &pin) in cell.stages.iter().zip(&complemented) {
            assert_eq!(stage.function.inputs, [cell.inputs[pin].clone()], "{cell}");
            assert_eq!(stage.function.literals.len(), 1, "{cell}");
            assert!(logic_inputs.iter().any(|n| n == stage.net()), "{} made but not read: {cell}", stage.net());
        }
        for net in logic_inputs {
            assert!(
                cell.inputs.contains(net) || cell.stages[..logic].iter().any(|s| s.net() == net),
                "{net} read but neither a pin nor a complement: {cell}"
            );
        }
        let mut all: Vec<String> =
            cell.inputs.iter().chain(cell.stages.iter().map(|s| &s.function.output)).cloned().collect();
        all.iter_mut().for_each(|n| *n = n.to_ascii_lowercase());
        let count = all.len();
        all.sort();
        all.dedup();
        assert_eq!(all.len(), count, "every net distinct without case: {cell}");
        for stage in &cell.stages {
            assert!(!RESERVED.iter().any(|r| r.eq_ignore_ascii_case(stage.net())), "{cell}");
        }
    }

    /// One-stage shorthands of the existing reader (the same list as its own table).
    const SINGLE_STAGE_SHORTHANDS: [&str; 33] = [
        "inv", "nand2", "nand3", "nand4", "nand5", "nand6", "nand7", "nand8", "nor2", "nor3", "nor4", "nor5", "nor6",
        "nor7", "nor8", "aoi21", "aoi22", "aoi211", "aoi221", "aoi222", "aoi31", "aoi32", "aoi33", "oai21", "oai22",
        "oai211", "oai221", "oai222", "oai31", "oai32", "oai33", "NAND3", "y = nor2",
    ];

    /// One-stage expressions from the reader's and parser's tables.
    const SINGLE_STAGE_EXPRESSIONS: [&str; 13] = [
        "!(a & b)",
        "!a | !b",
        "!a & !b",
        "!(a & (b | c))",
        "!((a & b) & c)",
        "!(a & b | a & c)",
        "(!a | !b) & !c",
        "y = !(a*b + c)",
        "~((a | b) & c)",
        "(a b + c)'",
        "!a !b",
        "out = !(a & b | c & (a | b))",
        "!(x0 & x1 | x2 & (x3 | x4 & x5) | x6)",
    ];

    #[test]
    fn one_stage_functions_are_todays_gates() {
        for text in SINGLE_STAGE_SHORTHANDS.iter().chain(&SINGLE_STAGE_EXPRESSIONS) {
            let cell = one(text);
            let gate = read_gate(text).unwrap();
            assert_eq!(cell.stages.len(), 1, "{text}");
            assert_eq!(cell.stages[0].role, StageRole::Logic, "{text}");
            assert_eq!(cell.stages[0].function, gate, "{text}: same inputs, literals, names, text");
            assert_eq!(cell.form, Form::Direct, "{text}");
            assert_eq!(
                (&cell.inputs, &cell.output, &cell.text, &cell.shorthand),
                (&gate.inputs, &gate.output, &gate.text, &gate.shorthand)
            );
            // Each computes its own expression at switch level (De Morgan; common practice, no source).
            check_cell(&cell, None, &by_text(&gate.text, &cell));
        }
    }

    /// Each cell shorthand's function, written here from its usual meaning (common practice, no
    /// source), over the pins by name.
    #[allow(clippy::type_complexity)]
    fn shorthand_meanings() -> Vec<(&'static str, Vec<&'static str>, Box<dyn Fn(&dyn Fn(&str) -> bool) -> bool>)> {
        let letters = ["a", "b", "c", "d", "e", "f", "g", "h"];
        let mut table: Vec<(&'static str, Vec<&'static str>, Box<dyn Fn(&dyn Fn(&str) -> bool) -> bool>)> = vec![
            ("buf", vec!["a"], Box::new(|v| v("a"))),
            ("ao21", vec!["a", "b", "c"], Box::new(|v| v("a") && v("b") || v("c"))),
            ("ao22", vec!["a", "b", "c", "d"], Box::new(|v| v("a") && v("b") || v("c") && v("d"))),
            ("oa21", vec!["a", "b", "c"], Box::new(|v| (v("a") || v("b")) && v("c"))),
            ("oa22", vec!["a", "b", "c", "d"], Box::new(|v| (v("a") || v("b")) && (v("c") || v("d")))),
            ("ao211", vec!["a", "b", "c", "d"], Box::new(|v| v("a") && v("b") || v("c") || v("d"))),
            ("xor2", vec!["a", "b"], Box::new(|v| v("a") != v("b"))),
            ("xnor2", vec!["a", "b"], Box::new(|v| v("a") == v("b"))),
            ("xor3", vec!["a", "b", "c"], Box::new(|v| (v("a") != v("b")) != v("c"))),
            ("mux2", vec!["a", "b", "s"], Box::new(|v| if v("s") { v("b") } else { v("a") })),
            ("MUX2I", vec!["a", "b", "s"], Box::new(|v| !(if v("s") { v("b") } else { v("a") }))),
            ("maj3", vec!["a", "b", "c"], Box::new(|v| [v("a"), v("b"), v("c")].iter().filter(|x| **x).count() >= 2)),
        ];
        for n in 2..=8 {
            let pins = letters[..n].to_vec();
            let and_pins = pins.clone();
            let or_pins = pins.clone();
            let and: &'static str = Box::leak(format!("and{n}").into_boxed_str());
            let or: &'static str = Box::leak(format!("or{n}").into_boxed_str());
            table.push((and, pins.clone(), Box::new(move |v| and_pins.iter().all(|p| v(p)))));
            table.push((or, pins, Box::new(move |v| or_pins.iter().any(|p| v(p)))));
        }
        table
    }

    #[test]
    fn every_shorthand_computes_its_function_at_switch_level() {
        for (name, pins, meaning) in shorthand_meanings() {
            let cells = synthesize(name).unwrap_or_else(|e| panic!("{name}: {e}"));
            for cell in &cells {
                assert_eq!(cell.inputs, pins, "{name}");
                assert_eq!(cell.shorthand.as_deref(), Some(name.to_ascii_lowercase().as_str()));
                check_structure(cell);
                check_cell(cell, None, &|values: &[bool]| {
                    meaning(&|p: &str| values[pins.iter().position(|q| *q == p).unwrap()])
                });
            }
        }
        for name in SINGLE_STAGE_SHORTHANDS {
            let cell = one(name);
            check_structure(&cell);
        }
    }

    fn roles(cell: &CellLogic) -> Vec<String> {
        cell.stages
            .iter()
            .map(|s| match s.role {
                StageRole::Complement { input } => format!("{}->{}", cell.inputs[input], s.net()),
                StageRole::Logic => format!("{} = {} ({}T)", s.net(), s.function.text, 2 * s.function.literals.len()),
                StageRole::OutputInverter => format!("{} = {}", s.net(), s.function.text),
            })
            .collect()
    }

    #[test]
    fn stage_structure_of_the_trade_cells() {
        // XOR2: both inputs inverted, one complex stage of 4 transistors per network; AND2 a NAND2
        // and an inverter; mux2i an inverter on the select and an AOI22-shaped stage; maj3 the
        // inverting carry stage and an inverter (common practice, no source).
        let cases: [(&str, Form, &[&str]); 9] = [
            ("xor2", Form::Direct, &["a->a_n", "b->b_n", "y = !(a_n & b_n | a & b) (8T)"]),
            ("xor2", Form::Inverted, &["a->a_n", "b->b_n", "y_n = !(a & b_n | a_n & b) (8T)", "y = !y_n"]),
            ("xnor2", Form::Direct, &["a->a_n", "b->b_n", "y = !(a & b_n | a_n & b) (8T)"]),
            ("mux2i", Form::Direct, &["s->s_n", "y = !(a & s_n | b & s) (8T)"]),
            ("mux2", Form::Inverted, &["s->s_n", "y_n = !(a & s_n | b & s) (8T)", "y = !y_n"]),
            ("mux2", Form::Direct, &["a->a_n", "b->b_n", "s->s_n", "y = !((a_n | s) & (b_n | s_n)) (8T)"]),
            ("maj3", Form::Inverted, &["y_n = !(a & b | c & (a | b)) (10T)", "y = !y_n"]),
            ("and2", Form::Inverted, &["y_n = !(a & b) (4T)", "y = !y_n"]),
            ("buf", Form::Inverted, &["y_n = !a (2T)", "y = !y_n"]),
        ];
        for (name, which, expected) in cases {
            assert_eq!(roles(&form(name, which)), expected, "{name} {which:?}");
        }
        // Forms that exist: both where both polarities appear, one otherwise.
        let forms = |name: &str| synthesize(name).unwrap().iter().map(|c| c.form).collect::<Vec<_>>();
        for name in ["xor2", "xnor2", "xor3", "mux2", "mux2i", "a & !b"] {
            assert_eq!(forms(name), [Form::Direct, Form::Inverted], "{name}");
        }
        for name in ["maj3", "and3", "or2", "buf", "ao21", "a | b & c"] {
            assert_eq!(forms(name), [Form::Inverted], "{name}");
        }
        // XOR3 as a sum of products: 4 terms of 3 literals, 12 transistors per network in both
        // forms (common practice, no source).
        for cell in synthesize("xor3").unwrap() {
            assert_eq!(cell.logic().function.literals.len(), 12);
            assert_eq!(cell.stages.iter().filter(|s| matches!(s.role, StageRole::Complement { .. })).count(), 3);
        }
        assert_eq!(
            form("xor3", Form::Inverted).logic().function.text,
            "!(a & b_n & c_n | a_n & b & c_n | a_n & b_n & c | a & b & c)"
        );
        assert_eq!(
            form("xor3", Form::Direct).logic().function.text,
            "!(a_n & b_n & c_n | a & b & c_n | a & b_n & c | a_n & b & c)"
        );
    }

    #[test]
    fn binate_examples_compute_their_function() {
        for text in [
            "a ^ b",
            "s & b | !s & a",
            "a & !b | !a & b & c",
            "out = !(a ^ b) & c | !c & d",
            "(a ^ b) ^ c",
            "a ^ b ^ c ^ d",
            "!(a & b ^ c)",
            "a & !a",
        ] {
            let cells = synthesize(text).unwrap_or_else(|e| panic!("{text}: {e}"));
            assert_eq!(cells.len(), 2, "{text}");
            for cell in &cells {
                check_structure(cell);
                check_cell(cell, None, &by_text(text.split('=').next_back().unwrap(), cell));
                // Every use of a complement reads the one shared net.
                let logic = &cell.logic().function;
                for (pin, name) in cell.inputs.iter().enumerate() {
                    if let Some(net) = cell.complement_net(pin) {
                        let uses = logic.literals.iter().filter(|l| logic.inputs[l.input] == net).count();
                        assert!(uses >= 1, "{text}: {name}");
                    }
                }
            }
        }
        // s & b | !s & a: pins in order of appearance, one inverter for s in the inverted form.
        let mux = form("s & b | !s & a", Form::Inverted);
        assert_eq!(mux.inputs, ["s", "b", "a"]);
        assert_eq!(roles(&mux), ["s->s_n", "y_n = !(s & b | s_n & a) (8T)", "y = !y_n"]);
        // a & !b | !a & b & c reads a and b in both polarities: both complemented in either form.
        let cell = form("a & !b | !a & b & c", Form::Direct);
        assert_eq!(roles(&cell)[..3], ["a->a_n", "b->b_n", "c->c_n"]);
    }

    #[test]
    fn a_lone_input_is_a_buffer_when_given_as_an_expression() {
        let parsed = parser::parse("a").unwrap();
        let cells = synthesize_expr(&parsed.expr, None, None, &[]).unwrap();
        assert_eq!(cells.len(), 1);
        assert_eq!(roles(&cells[0]), ["y_n = !a (2T)", "y = !y_n"]);
    }

    #[test]
    fn generated_names_avoid_the_users() {
        // a's complement would be a_n, which is a pin: a_n2; a_n's own complement is a_n_n.
        let direct = form("y = a & !b | a_n", Form::Direct);
        assert_eq!(roles(&direct)[..2], ["a->a_n2", "a_n->a_n_n"]);
        check_cell(&direct, None, &by_text("a & !b | a_n", &direct));
        // Compared without case: A_N takes a_n too.
        let inverted = form("A_N & !a | b", Form::Inverted);
        assert_eq!(roles(&inverted)[0], "a->a_n2");
        // The logic stage's output before the inverter: y_n is a pin, so y_n2; Y_N2 too, so y_n3.
        assert_eq!(one("y = a & y_n").logic().net(), "y_n2");
        assert_eq!(one("Y = a & y_n & Y_N2").logic().net(), "Y_n3");
        // Both forms name the same complement the same way.
        let cells = synthesize("q = a_n ^ a").unwrap();
        for cell in &cells {
            assert_eq!(cell.complement_net(1), Some("a_n2"), "{cell}");
            assert_eq!(cell.complement_net(0), Some("a_n_n"), "{cell}");
            check_structure(cell);
        }
        assert_eq!(cells[1].logic().net(), "q_n");
    }

    #[test]
    fn names_are_checked_as_for_one_stage() {
        // expression -> byte the caret points at, and a word of the reason
        let cases = [
            ("y = y & !a", 4, "own output"),
            ("vss = a ^ b", 0, "the output 'vss' takes a reserved name"),
            ("vdd & !a", 0, "input 'vdd' takes a reserved name"),
            ("a & !GND", 5, "ground"),
            ("a ^ A", 4, "ignore case"),
            ("Q = q & r", 4, "own output"),
        ];
        for (text, at, word) in cases {
            let error = synthesize(text).expect_err(text);
            assert_eq!(error.span().start, at, "{text}: {error}");
            assert!(error.to_string().contains(word), "{text}: {error}");
        }
        // Device model names are reserved as for one stage; generated names avoid them too.
        let error = synthesize_with_models("a ^ NMOS", &["nmos", "pmos"]).unwrap_err();
        assert_eq!(error.span().start, 4, "{error}");
        assert!(error.to_string().contains("device model"), "{error}");
        let cells = synthesize_with_models("a ^ b", &["A_N", "y_n"]).unwrap();
        assert_eq!(cells[1].complement_net(0), Some("a_n2"));
        assert_eq!(cells[1].logic().net(), "y_n2");
        // Shorthand inputs skip the output's name and the models, as the one-stage reader's do.
        let pins = |text: &str, models: &[&str]| synthesize_with_models(text, models).unwrap()[0].inputs.clone();
        assert_eq!(pins("a = and2", &[]), ["b", "c"]);
        assert_eq!(pins("b = mux2", &[]), ["a", "c", "s"]);
        assert_eq!(pins("s = mux2i", &[]), ["a", "b", "s1"]);
        assert_eq!(pins("mux2", &["s", "S1"]), ["a", "b", "s2"]);
        assert_eq!(pins("z = xor3", &["b"]), ["a", "c", "d"]);
        assert_eq!(one("y = nor2").stages[0].function, read_gate("y = nor2").unwrap());
        let one_stage = synthesize_with_models("nand3", &["b"]).unwrap();
        assert_eq!(one_stage[0].stages[0].function, crate::expr::read_gate_with_models("nand3", &["b"]).unwrap());
    }

    #[test]
    fn xor_expansion_is_bounded_before_it_is_built() {
        // XOR of n inputs: 2^(n-1) terms of n literals.
        let chain = |n: usize| (0..n).map(|i| format!("x{i}")).collect::<Vec<_>>().join(" ^ ");
        let expr = |text: &str| parser::parse(text).unwrap().expr;
        assert_eq!(occurrences(&expr("a ^ b")), 4);
        assert_eq!(occurrences(&expr("a ^ b ^ c")), 12);
        assert_eq!(occurrences(&expr("(a ^ b) ^ c")), 10);
        assert_eq!(occurrences(&expr(&chain(10))), 5120);
        assert_eq!(occurrences(&expr(&chain(11))), 11264);
        assert_eq!(occurrences(&expr(&chain(200))), u64::MAX);
        let cells = synthesize(&chain(10)).unwrap();
        assert_eq!(cells[0].logic().function.literals.len(), 5120);
        let error = synthesize(&format!("!(q & ({}))", chain(11))).unwrap_err();
        // The caret on the chain's first '^' (byte 10 of "!(q & (x0 ^ ...").
        assert_eq!(error, LogicError::TooLarge { count: 11264, limit: MAX_DEVICES, span: Span::new(10, 11) });
        assert!(error.to_string().contains("limit is 10000 transistors per network"), "{error}");
        let huge = synthesize(&chain(5000)).unwrap_err();
        assert!(matches!(huge, LogicError::TooLarge { count: u64::MAX, .. }), "{huge}");
        assert!(huge.to_string().contains("more than"), "{huge}");
        // Parts each within the limit (2304) that together cross it (11520): the caret spans
        // their AND.
        assert!(synthesize(&format!("({}) & ({})", chain(9), chain(9))).is_ok());
        let error = synthesize(&format!("({0}) & ({0}) & ({0}) & ({0}) & ({0})", chain(9))).unwrap_err();
        assert_eq!(error, LogicError::TooLarge { count: 11520, limit: MAX_DEVICES, span: error.span() });
        assert_eq!(error.span().start, 0, "{error}");
        // Without XOR the reader's own limit and message hold.
        let wide = (0..10_001).map(|i| format!("x{}", i % 100)).collect::<Vec<_>>().join(" & ");
        assert!(matches!(synthesize(&wide), Err(LogicError::Expression(ExprError::TooManyDevices { .. }))));
    }

    #[test]
    fn unknown_shorthands_say_so_with_a_position() {
        for (text, at) in [("y = mux3", 4), ("xor4", 0), ("and9", 0), ("or1", 0), ("ao2", 0), ("oa11", 0), ("nand9", 0)]
        {
            let error = synthesize(text).unwrap_err();
            assert!(matches!(error, LogicError::Expression(ExprError::UnknownShorthand { .. })), "{text}");
            assert_eq!(error.span().start, at, "{text}");
        }
        let message = synthesize("mux3").unwrap_err().to_string();
        for known in ["buf", "and2..and8", "xor3", "mux2i", "maj3", "nand2..nand8"] {
            assert!(message.contains(known), "{message}");
        }
        // Each shorthand of the help text expands, with the pins it lists where it lists them all.
        for line in shorthand::CELL_HELP.lines() {
            let name = line.split([' ', ',']).next().unwrap();
            let cells = synthesize(name).unwrap_or_else(|e| panic!("{name}: {e}"));
            let listed = line[25..38].trim();
            if !line.contains("...") {
                assert_eq!(cells[0].inputs.join(", "), listed, "{line}");
            }
        }
    }

    // ---- Random functions.

    #[derive(Debug, Clone)]
    enum Random {
        Leaf(usize),
        Not(Box<Random>),
        And(Vec<Random>),
        Or(Vec<Random>),
        Xor(Vec<Random>),
    }

    /// Random functions of NOT, AND, OR and XOR over x0..x9: a few random subtrees joined at the
    /// top, so that most use 6 to 10 inputs.
    fn random() -> impl Strategy<Value = Random> {
        let leaf = (0..10usize).prop_map(Random::Leaf);
        let subtree = leaf.prop_recursive(4, 24, 4, |inner| {
            prop_oneof![
                1 => inner.clone().prop_map(|t| Random::Not(Box::new(t))),
                3 => prop::collection::vec(inner.clone(), 2..5).prop_map(Random::And),
                3 => prop::collection::vec(inner.clone(), 2..5).prop_map(Random::Or),
                1 => prop::collection::vec(inner, 2..4).prop_map(Random::Xor),
            ]
        });
        (0..4usize, prop::collection::vec(subtree, 2..5)).prop_map(|(top, parts)| match top {
            0 => Random::And(parts),
            1 => Random::Or(parts),
            2 => Random::Not(Box::new(Random::Or(parts))),
            _ => Random::Xor(parts.into_iter().take(2).collect()),
        })
    }

    impl Random {
        fn text(&self) -> String {
            let join =
                |c: &[Random], op: &str| c.iter().map(|t| format!("({})", t.text())).collect::<Vec<_>>().join(op);
            match self {
                Random::Leaf(i) => format!("x{i}"),
                Random::Not(t) => format!("!({})", t.text()),
                Random::And(c) => join(c, " & "),
                Random::Or(c) => join(c, " | "),
                Random::Xor(c) => join(c, " ^ "),
            }
        }

        fn evaluate(&self, x: &dyn Fn(usize) -> bool) -> bool {
            match self {
                Random::Leaf(i) => x(*i),
                Random::Not(t) => !t.evaluate(x),
                Random::And(c) => c.iter().all(|t| t.evaluate(x)),
                Random::Or(c) => c.iter().any(|t| t.evaluate(x)),
                Random::Xor(c) => c.iter().fold(false, |acc, t| acc != t.evaluate(x)),
            }
        }

        /// Polarities of the leaves once NOTs are pushed down: an XOR operand appears both ways.
        fn polarities(&self, negate: bool, out: &mut [(bool, bool)]) {
            match self {
                Random::Leaf(i) if negate => out[*i].1 = true,
                Random::Leaf(i) => out[*i].0 = true,
                Random::Not(t) => t.polarities(!negate, out),
                Random::And(c) | Random::Or(c) => c.iter().for_each(|t| t.polarities(negate, out)),
                Random::Xor(c) => c.iter().for_each(|t| {
                    t.polarities(false, out);
                    t.polarities(true, out);
                }),
            }
        }
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(128))]

        #[test]
        fn random_functions_are_computed_by_their_cells(tree in random()) {
            let text = tree.text();
            let parsed = parser::parse(&text).unwrap();
            prop_assume!(!matches!(parsed.expr.kind, ExprKind::Input(_)));
            let cells = match synthesize(&text) {
                Ok(cells) => cells,
                Err(LogicError::TooLarge { count, .. }) => {
                    prop_assert!(count > MAX_DEVICES as u64);
                    return Ok(());
                }
                Err(error) => panic!("{text}: {error}"),
            };
            let mut polarity = [(false, false); 10];
            tree.polarities(false, &mut polarity);
            let positive = polarity.iter().any(|p| p.0);
            let negative = polarity.iter().any(|p| p.1);
            let forms: Vec<Form> = cells.iter().map(|c| c.form).collect();
            match (positive, negative) {
                (false, _) => {
                    prop_assert_eq!(&forms, &[Form::Direct]);
                    prop_assert_eq!(&cells[0].stages[0].function, &read_gate(&text).unwrap());
                }
                (true, false) => prop_assert_eq!(&forms, &[Form::Inverted]),
                (true, true) => prop_assert_eq!(&forms, &[Form::Direct, Form::Inverted]),
            }
            for cell in &cells {
                check_structure(cell);
                prop_assert_eq!(cell.logic().function.literals.len() as u64, occurrences(&parsed.expr));
                // Complements exactly where the logic stage reads an input complemented.
                let complemented: Vec<usize> = (0..cell.inputs.len()).filter(|&p| cell.complement_net(p).is_some()).collect();
                let wanted: Vec<usize> = cell.inputs.iter().enumerate().filter(|(_, name)| {
                    let i: usize = name[1..].parse().unwrap();
                    match cell.form { Form::Direct => polarity[i].0, Form::Inverted => polarity[i].1 }
                }).map(|(p, _)| p).collect();
                prop_assert_eq!(complemented, wanted);
                let pins: Vec<usize> = cell.inputs.iter().map(|n| n[1..].parse().unwrap()).collect();
                check_cell(cell, None, &|values: &[bool]| {
                    tree.evaluate(&|i| values[pins.iter().position(|p| *p == i).unwrap()])
                });
            }
        }

        #[test]
        fn any_text_is_cells_or_an_error(
            text in "[a-dsyA_!~'&*.|+^()= ]{0,40}|(buf|and[0-9]|or[0-9]|ao[0-9]{0,3}|oa[0-9]{0,3}|xn?or[0-9]|mux2i?|maj[0-9])",
        ) {
            match synthesize(&text) {
                Ok(cells) => {
                    prop_assert!(!cells.is_empty() && cells.len() <= 2);
                    cells.iter().for_each(check_structure);
                }
                Err(error) => prop_assert!(error.span().end <= text.len()),
            }
        }

        #[test]
        fn random_one_stage_gates_are_todays(text in inverting()) {
            let cell = one(&text);
            let gate = read_gate(&text).unwrap();
            prop_assert_eq!(&cell.stages[0].function, &gate);
            prop_assert_eq!((&cell.inputs, &cell.text), (&gate.inputs, &gate.text));
        }

        #[test]
        fn random_non_inverting_functions_are_a_stage_and_an_inverter(f in monotone()) {
            let parsed = parser::parse(&f).unwrap();
            prop_assume!(!matches!(parsed.expr.kind, ExprKind::Input(_)));
            let cell = one(&f);
            prop_assert_eq!(cell.form, Form::Inverted);
            prop_assert_eq!(cell.stages.len(), 2);
            // The logic stage is today's gate for the complement, over the pins themselves.
            let complement = read_gate(&format!("y_n = !{f}")).unwrap();
            prop_assert_eq!(&cell.logic().function.inputs, &complement.inputs);
            prop_assert_eq!(&cell.logic().function.function, &complement.function);
            check_structure(&cell);
            check_cell(&cell, None, &by_text(&f, &cell));
        }
    }
}
