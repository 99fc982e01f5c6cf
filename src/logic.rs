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
use crate::network::{Network, NetworkKind, Sides};

pub mod pull_up;
#[cfg(test)]
mod testing;
#[cfg(test)]
mod tests;

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
    /// A pull-up the user wrote (`--pull-up`), proved the complement of the pull-down; `None`: the
    /// dual of the pull-down, as every stage has by default.
    pub pull_up: Option<PullUp>,
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

    /// The stage's two networks as written: the pull-down of `f`, and its dual or the pull-up the
    /// user wrote.
    pub fn networks(&self) -> Sides<Network> {
        let mut networks = Network::pair(&self.function);
        if let Some(pull_up) = &self.pull_up {
            networks[NetworkKind::PullUp] = pull_up.network();
        }
        networks
    }
}

impl CellLogic {
    /// The cell with the logic stage's pull-up as `written`, accepted only where a switch-level
    /// check on every vector of the cell's pins proves it the complement of the pull-down
    /// ([`cell_pull_up`]).
    pub fn with_pull_up(mut self, written: PullUpSpec) -> Result<CellLogic, PullUpError> {
        let pull_up = cell_pull_up(&self, written)?;
        let logic = self.stages.iter_mut().find(|s| s.role == StageRole::Logic).expect("every cell has a logic stage");
        logic.pull_up = Some(pull_up);
        Ok(self)
    }

    /// The stage that drives the output (the last).
    pub fn output_stage(&self) -> &StageLogic {
        self.stages.last().expect("every cell has a stage")
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
        stages: vec![StageLogic { role: StageRole::Logic, function: gate, pull_up: None }],
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
                pull_up: None,
            });
        }
        let span = self.expr.span;
        let logic_span = if form == Form::Direct { self.output_span } else { span };
        stages.push(StageLogic {
            role: StageRole::Logic,
            function: stage(&f.to_expr(self.pins, self.complements), logic_output, logic_span, self.models)?,
            pull_up: None,
        });
        if form == Form::Inverted {
            let input = Expr { kind: ExprKind::Input(logic_output.to_string()), span };
            stages.push(StageLogic {
                role: StageRole::OutputInverter,
                function: stage(&input, self.output, self.output_span, self.models)?,
                pull_up: None,
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
