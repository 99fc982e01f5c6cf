//! Pull-ups written by the user: a series-parallel PMOS structure over a stage's inputs, or the
//! mirror of its pull-down, accepted only when a switch-level check of every input vector proves
//! it conducts exactly when the pull-down does not.
//!
//! The check is bit-parallel (64 vectors a word, a block of words per pass over each network) on
//! every core, and bounded: at most [`MAX_PULL_UP_CHECK_INPUTS`] variables and
//! [`PULL_UP_CHECK_BUDGET`] words times transistors.

use std::collections::HashMap;
use std::sync::Mutex;
use std::sync::atomic::{AtomicU64, Ordering};

use thiserror::Error;

use crate::diagnostic::Span;
use crate::expr::ast::{Expr, ExprKind};
use crate::expr::error::ExprError;
use crate::expr::lexer::{TokenKind, tokenize};
use crate::expr::normal::{self, Function, GateFunction, Literal};
use crate::expr::parser;
use crate::logic::{CellLogic, StageRole};
use crate::network::{Network, NetworkKind, Node};
use crate::paths::vector_word;

/// Most variables (stage inputs, or the cell's pins) a pull-up check takes: every vector is tried,
/// so this is verification's exhaustive limit (30 inputs, about a billion vectors).
pub const MAX_PULL_UP_CHECK_INPUTS: usize = 30;
/// Most work a pull-up check does, in words of 64 vectors times transistors of both networks
/// (2^32: a few seconds).
pub const PULL_UP_CHECK_BUDGET: u64 = 1 << 32;

/// The pull-up a user asks for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PullUpSpec<'a> {
    /// The PMOS network as text: `&` in series, `|` in parallel, parentheses, over uncomplemented
    /// stage inputs (each PMOS conducts when its input is 0).
    Written(&'a str),
    /// The pull-down's own structure in PMOS (the mirror form of carry and majority cells): right
    /// only for a self-dual function.
    Mirror,
}

/// A pull-up other than the dual of the pull-down, proved its complement.
#[derive(Debug, Clone, PartialEq)]
pub struct PullUp {
    /// Its literal occurrences (one PMOS each) in written order; `input` indexes the stage's
    /// inputs. Spans point into the pull-up text (into the cell's text for a mirror).
    pub literals: Vec<Literal>,
    /// The PMOS network: AND in series, OR in parallel (unlike the stage's `f`, whose AND is series
    /// in the pull-down and parallel in the default pull-up).
    pub function: Function,
    /// The structure in canonical form (`a & b | c & (a | b)`).
    pub text: String,
    /// Whether it is the mirror of the pull-down.
    pub mirror: bool,
}

impl PullUp {
    /// The PMOS tree, device `k` gated by literal `k`.
    pub fn network(&self) -> Network {
        fn walk(function: &Function) -> Node {
            match function {
                Function::Literal(index) => Node::Device(*index),
                Function::And(children) => Node::Series(children.iter().map(walk).collect()),
                Function::Or(children) => Node::Parallel(children.iter().map(walk).collect()),
            }
        }
        Network { kind: NetworkKind::PullUp, root: walk(&self.function), inputs: self.input_of() }
    }

    /// The stage input of every device, by device index.
    pub fn input_of(&self) -> Vec<usize> {
        self.literals.iter().map(|l| l.input).collect()
    }

    /// Whether the pull-up conducts for these stage input values.
    pub fn conducts(&self, values: &[bool]) -> bool {
        fn walk(function: &Function, literals: &[Literal], values: &[bool]) -> bool {
            match function {
                Function::Literal(index) => !values[literals[*index].input],
                Function::And(children) => children.iter().all(|c| walk(c, literals, values)),
                Function::Or(children) => children.iter().any(|c| walk(c, literals, values)),
            }
        }
        walk(&self.function, &self.literals, values)
    }
}

/// Why a pull-up is refused. Spans point into the pull-up text.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum PullUpError {
    /// The text does not read.
    #[error("in the pull-up: {0}")]
    Syntax(ExprError),
    /// A NOT: a PMOS network reads uncomplemented inputs.
    #[error(
        "a pull-up takes uncomplemented inputs (each PMOS conducts when its input is 0): '{operator}' is refused; \
         name a complement's net instead where the stage has one"
    )]
    Complemented {
        /// The NOT as written (`!`, `~` or `'`).
        operator: char,
        /// Where.
        span: Span,
    },
    /// Something other than series (`&`) and parallel (`|`).
    #[error("a pull-up is a series (&) and parallel (|) structure of inputs: {what} is refused")]
    NotStructure {
        /// What (`'^'`, an output name).
        what: String,
        /// Where.
        span: Span,
    },
    /// A name that is not an input of the stage.
    #[error("'{name}' is not an input of the stage (its inputs: {inputs})")]
    UnknownInput {
        /// The name.
        name: String,
        /// The stage's inputs, listed.
        inputs: String,
        /// Where.
        span: Span,
    },
    /// The check would take too long.
    #[error(
        "the pull-up check tries every input vector: it takes at most {limit} inputs and {budget} words of 64 \
         vectors times transistors, and this one has {inputs} inputs and {transistors} transistors"
    )]
    TooLarge {
        /// Variables of the check.
        inputs: usize,
        /// Transistors of both networks.
        transistors: usize,
        /// [`MAX_PULL_UP_CHECK_INPUTS`].
        limit: usize,
        /// [`PULL_UP_CHECK_BUDGET`].
        budget: u64,
    },
    /// The check found a vector where the networks are not complementary.
    #[error(
        "{} is not the complement of the pull-down: at vector {index} ({}) {}",
        if .span.is_some() { "the pull-up" } else { "the mirrored pull-up (right only for a self-dual function)" },
        shown_vector(.vector),
        if *.both_conduct { "both conduct (the rails would short)" } else { "neither conducts (the output would float)" }
    )]
    NotComplementary {
        /// The vector's number: input 1 is bit 0, as verification numbers them.
        index: u64,
        /// Each input and its value.
        vector: Vec<(String, bool)>,
        /// Whether both networks conduct there (else neither does).
        both_conduct: bool,
        /// The whole pull-up text; none for a mirror.
        span: Option<Span>,
    },
}

impl PullUpError {
    /// Where in the pull-up text the error is, when it is somewhere in particular.
    pub fn span(&self) -> Option<Span> {
        match self {
            PullUpError::Syntax(error) => Some(error.span()),
            PullUpError::Complemented { span, .. }
            | PullUpError::NotStructure { span, .. }
            | PullUpError::UnknownInput { span, .. } => Some(*span),
            PullUpError::NotComplementary { span, .. } => *span,
            PullUpError::TooLarge { .. } => None,
        }
    }
}

fn shown_vector(vector: &[(String, bool)]) -> String {
    let parts: Vec<String> = vector.iter().map(|(name, value)| format!("{name}={}", u8::from(*value))).collect();
    parts.join(" ")
}

/// The pull-up `written` for one stage, checked on every vector of the stage's inputs, each taken
/// as free (vector `k` sets input `i` to bit `i` of `k`). For the logic stage of a cell, whose
/// complement nets follow their pins, see [`cell_pull_up`].
pub fn pull_up(stage: &GateFunction, written: PullUpSpec) -> Result<PullUp, PullUpError> {
    let pull_up = read_pull_up(stage, written)?;
    let free: Vec<(usize, bool)> = (0..stage.inputs.len()).map(|i| (i, false)).collect();
    check_complementary(stage, &pull_up, &stage.inputs, &free, written)?;
    Ok(pull_up)
}

/// The pull-up `written` for the logic stage of `cell`, checked on every vector of the cell's pins
/// (verification's order): a complement net is the complement of its pin, as the cell makes it.
/// This is what accepts, say, the sum-of-products pull-up of an XOR, which is the pull-down's
/// complement only when `a_n` is `!a`.
pub fn cell_pull_up(cell: &CellLogic, written: PullUpSpec) -> Result<PullUp, PullUpError> {
    let stage = &cell.logic().function;
    let pull_up = read_pull_up(stage, written)?;
    // Each stage input is a pin, a pin's complement, or (in a cell built by hand) a free net
    // checked after the pins.
    let mut variables = cell.inputs.clone();
    let source: Vec<(usize, bool)> = stage
        .inputs
        .iter()
        .map(|net| {
            if let Some(pin) = cell.inputs.iter().position(|pin| pin == net) {
                return (pin, false);
            }
            let complement = cell.stages.iter().find_map(|s| match s.role {
                StageRole::Complement { input } if s.function.output == *net && input < cell.inputs.len() => {
                    Some(input)
                }
                _ => None,
            });
            match complement {
                Some(pin) => (pin, true),
                None => {
                    variables.push(net.clone());
                    (variables.len() - 1, false)
                }
            }
        })
        .collect();
    check_complementary(stage, &pull_up, &variables, &source, written)?;
    Ok(pull_up)
}

fn read_pull_up(stage: &GateFunction, written: PullUpSpec) -> Result<PullUp, PullUpError> {
    let text = match written {
        PullUpSpec::Mirror => {
            return Ok(PullUp {
                literals: stage.literals.clone(),
                function: stage.function.clone(),
                text: function_text(&stage.function, &stage.literals, &stage.inputs, 0),
                mirror: true,
            });
        }
        PullUpSpec::Written(text) => text,
    };
    for token in tokenize(text).map_err(PullUpError::Syntax)? {
        let at = token.span;
        match token.kind {
            TokenKind::Not | TokenKind::Prime => {
                let operator = text[at.start..].chars().next().unwrap_or('!');
                return Err(PullUpError::Complemented { operator, span: at });
            }
            TokenKind::ExclusiveOr => {
                return Err(PullUpError::NotStructure { what: "'^' (exclusive or)".into(), span: at });
            }
            TokenKind::Equals => {
                return Err(PullUpError::NotStructure { what: "an output name ('=')".into(), span: at });
            }
            _ => {}
        }
    }
    let parsed = parser::parse(text).map_err(PullUpError::Syntax)?;
    let index: HashMap<&str, usize> = stage.inputs.iter().enumerate().map(|(i, n)| (n.as_str(), i)).collect();
    check_inputs(&parsed.expr, &index, &stage.inputs)?;
    // Read as the one-stage gate NOT(structure), whose f is the structure itself, AND for AND.
    let not = Expr { kind: ExprKind::Not(Box::new(parsed.expr.clone())), span: parsed.expr.span };
    // Names are stage inputs, checked above, so no model list is needed.
    let read =
        normal::normalize(&not, Some((&stage.output, parsed.expr.span)), None, &[]).map_err(PullUpError::Syntax)?;
    let literals =
        read.literals.iter().map(|l| Literal { input: index[read.inputs[l.input].as_str()], span: l.span }).collect();
    Ok(PullUp { literals, function: read.function, text: parsed.expr.to_text(), mirror: false })
}

fn check_inputs(expr: &Expr, index: &HashMap<&str, usize>, inputs: &[String]) -> Result<(), PullUpError> {
    match &expr.kind {
        ExprKind::Input(name) if !index.contains_key(name.as_str()) => {
            Err(PullUpError::UnknownInput { name: name.clone(), inputs: inputs.join(", "), span: expr.span })
        }
        ExprKind::Input(_) => Ok(()),
        ExprKind::Not(inner) => check_inputs(inner, index, inputs),
        ExprKind::And(operands) | ExprKind::Or(operands) | ExprKind::ExclusiveOr { operands, .. } => {
            operands.iter().try_for_each(|o| check_inputs(o, index, inputs))
        }
    }
}

/// Canonical text of an AND/OR tree over named literals; `context` is the enclosing precedence.
fn function_text(function: &Function, literals: &[Literal], inputs: &[String], context: u8) -> String {
    match function {
        Function::Literal(index) => inputs[literals[*index].input].clone(),
        Function::And(children) | Function::Or(children) => {
            let (own, separator) = if matches!(function, Function::And(_)) { (2, " & ") } else { (1, " | ") };
            let parts: Vec<String> = children.iter().map(|c| function_text(c, literals, inputs, own + 1)).collect();
            let joined = parts.join(separator);
            if own < context { format!("({joined})") } else { joined }
        }
    }
}

/// Words of vectors evaluated together.
const BLOCK: usize = 8;
/// Words per unit of work handed to a thread.
const CHUNK_WORDS: u64 = 1024;

/// Reusable buffers of one thread of the pull-up check.
struct Space {
    /// The check's variables, a block of words each.
    variables: Vec<[u64; BLOCK]>,
    /// The stage's inputs (complemented for the pull-up).
    gates: Vec<[u64; BLOCK]>,
    stack: Vec<[u64; BLOCK]>,
}

/// An AND/OR tree as postfix steps over blocks of input words.
enum Step {
    Input(usize),
    And(usize),
    Or(usize),
}

fn compile(function: &Function, literals: &[Literal], steps: &mut Vec<Step>) {
    match function {
        Function::Literal(index) => steps.push(Step::Input(literals[*index].input)),
        Function::And(children) | Function::Or(children) => {
            children.iter().for_each(|c| compile(c, literals, steps));
            steps.push(if matches!(function, Function::And(_)) {
                Step::And(children.len())
            } else {
                Step::Or(children.len())
            });
        }
    }
}

fn run(steps: &[Step], inputs: &[[u64; BLOCK]], stack: &mut Vec<[u64; BLOCK]>) -> [u64; BLOCK] {
    stack.clear();
    for step in steps {
        match *step {
            Step::Input(i) => stack.push(inputs[i]),
            Step::And(count) | Step::Or(count) => {
                let start = stack.len() - count;
                let is_and = matches!(step, Step::And(_));
                // An empty AND conducts, an empty OR does not (only a tree built by hand has one).
                let mut value = [if is_and { u64::MAX } else { 0 }; BLOCK];
                for word in &stack[start..] {
                    for (v, w) in value.iter_mut().zip(word) {
                        if is_and {
                            *v &= w;
                        } else {
                            *v |= w;
                        }
                    }
                }
                stack.truncate(start);
                stack.push(value);
            }
        }
    }
    stack.pop().unwrap_or([0; BLOCK])
}

/// Every vector of `variables`: the stage's input `k` is variable `source[k].0`, complemented where
/// `source[k].1`; the pull-down conducts where `f` does, the pull-up where its structure does with
/// every input complemented; exactly one must conduct.
fn check_complementary(
    stage: &GateFunction,
    pull_up: &PullUp,
    variables: &[String],
    source: &[(usize, bool)],
    written: PullUpSpec,
) -> Result<(), PullUpError> {
    let transistors = stage.literals.len() + pull_up.literals.len();
    let too_large = PullUpError::TooLarge {
        inputs: variables.len(),
        transistors,
        limit: MAX_PULL_UP_CHECK_INPUTS,
        budget: PULL_UP_CHECK_BUDGET,
    };
    if variables.len() > MAX_PULL_UP_CHECK_INPUTS {
        return Err(too_large);
    }
    let vectors = 1u64 << variables.len();
    let words = vectors.div_ceil(64);
    if words.saturating_mul(transistors as u64) > PULL_UP_CHECK_BUDGET {
        return Err(too_large);
    }
    let mut down = Vec::new();
    compile(&stage.function, &stage.literals, &mut down);
    let mut up = Vec::new();
    compile(&pull_up.function, &pull_up.literals, &mut up);

    // Failing bits of the block of words starting at `first`, and where the pull-down conducts.
    let block = |first: u64, space: &mut Space| {
        for (variable, value) in space.variables.iter_mut().enumerate() {
            for (b, word) in value.iter_mut().enumerate() {
                *word = vector_word(first + b as u64, variable);
            }
        }
        for (gate, &(variable, complemented)) in space.gates.iter_mut().zip(source) {
            *gate = space.variables[variable].map(|word| if complemented { !word } else { word });
        }
        let pull_down = run(&down, &space.gates, &mut space.stack);
        // A PMOS conducts where its input is 0.
        for gate in space.gates.iter_mut() {
            *gate = gate.map(|word| !word);
        }
        let pull_up = run(&up, &space.gates, &mut space.stack);
        let mut failing = [0u64; BLOCK];
        for (b, bits) in failing.iter_mut().enumerate() {
            let word = first + b as u64;
            let valid = if word >= words {
                0
            } else if vectors < 64 {
                (1u64 << vectors) - 1
            } else {
                u64::MAX
            };
            *bits = !(pull_down[b] ^ pull_up[b]) & valid;
        }
        (failing, pull_down)
    };
    let space = || Space {
        variables: vec![[0; BLOCK]; variables.len()],
        gates: vec![[0; BLOCK]; source.len()],
        stack: Vec::new(),
    };

    let chunks = words.div_ceil(CHUNK_WORDS);
    let next = AtomicU64::new(0);
    let first_bad = AtomicU64::new(u64::MAX);
    let found: Mutex<Option<(u64, bool)>> = Mutex::new(None);
    let work = || {
        let mut space = space();
        loop {
            let chunk = next.fetch_add(1, Ordering::Relaxed);
            if chunk >= chunks || chunk * CHUNK_WORDS * 64 > first_bad.load(Ordering::Relaxed) {
                break;
            }
            let end = ((chunk + 1) * CHUNK_WORDS).min(words);
            let mut first = chunk * CHUNK_WORDS;
            while first < end {
                let (failing, pull_down) = block(first, &mut space);
                if let Some(b) = failing.iter().position(|bits| *bits != 0) {
                    let bit = failing[b].trailing_zeros() as u64;
                    let index = (first + b as u64) * 64 + bit;
                    first_bad.fetch_min(index, Ordering::Relaxed);
                    let mut found = found.lock().unwrap_or_else(|e| e.into_inner());
                    if found.is_none_or(|(other, _)| index < other) {
                        *found = Some((index, pull_down[b] >> bit & 1 == 1));
                    }
                    return;
                }
                first += BLOCK as u64;
            }
        }
    };
    let threads = std::thread::available_parallelism().map_or(1, |n| n.get()).min(chunks as usize).max(1);
    if threads == 1 {
        work();
    } else {
        std::thread::scope(|scope| {
            for _ in 0..threads {
                scope.spawn(work);
            }
        });
    }
    match found.into_inner().unwrap_or_else(|e| e.into_inner()) {
        None => Ok(()),
        Some((index, both_conduct)) => Err(PullUpError::NotComplementary {
            index,
            vector: variables.iter().enumerate().map(|(i, name)| (name.clone(), index >> i & 1 == 1)).collect(),
            both_conduct,
            span: match written {
                PullUpSpec::Written(text) => Some(Span::new(0, text.len())),
                PullUpSpec::Mirror => None,
            },
        }),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::diagnostic::{Diagnostic, Source};
    use crate::expr::read_gate;
    use crate::logic::testing::{by_text, check_cell, evaluate, form, inverting, monotone, one};
    use crate::logic::{Form, synthesize};
    use proptest::prelude::*;

    fn stage_of(text: &str) -> GateFunction {
        read_gate(text).unwrap()
    }

    #[test]
    fn carry_mirror_is_accepted_and_a_wrong_pull_up_fails_where_derived() {
        // The mirror carry: the majority pull-down repeated in PMOS (majority is self-dual); Weste &
        // Harris, CMOS VLSI Design, 4th ed. 2011, ch. 11, mirror adder (from memory).
        let carry = stage_of("!(a & b | c & (a | b))");
        let mirror = pull_up(&carry, PullUpSpec::Mirror).unwrap();
        assert!(mirror.mirror);
        assert_eq!(mirror.text, "a & b | c & (a | b)");
        assert_eq!(mirror.literals.len(), 5);
        // The dual written out is accepted too (De Morgan; common practice, no source).
        assert!(pull_up(&carry, PullUpSpec::Written("(a | b) & (c | a & b)")).is_ok());
        // (a | b) & c by hand, vectors numbered with a as bit 0: 0 (000) pull-up on, pull-down off;
        // 1 (a) and 2 (b): !a | !b and !c hold, pull-up on, majority 0; 3 (a b): !a | !b fails,
        // pull-up off, majority 1; 4 (c alone): !c fails so the pull-up is off, and the majority
        // is 0 so the pull-down is off too: the output floats at vector 4.
        let error = pull_up(&carry, PullUpSpec::Written("(a | b) & c")).unwrap_err();
        match &error {
            PullUpError::NotComplementary { index, vector, both_conduct, .. } => {
                assert_eq!(*index, 4);
                assert_eq!(vector, &[("a".to_string(), false), ("b".to_string(), false), ("c".to_string(), true)]);
                assert!(!both_conduct);
            }
            other => panic!("{other}"),
        }
        assert!(error.to_string().contains("at vector 4 (a=0 b=0 c=1) neither conducts"), "{error}");
        // The cell of maj3 with its logic stage mirrored computes the majority at switch level.
        let maj3 = one("maj3");
        let mirror = cell_pull_up(&maj3, PullUpSpec::Mirror).unwrap();
        check_cell(&maj3, Some(&mirror), &|v: &[bool]| v.iter().filter(|x| **x).count() >= 2);
    }

    #[test]
    fn a_mirror_of_a_function_that_is_not_self_dual_fails() {
        // NAND2 mirrored: two PMOS in series. Vector 1 (a=1, b=0): pull-down off (a & b is 0),
        // pull-up off (a is 1): floats (common practice, no source).
        let error = pull_up(&stage_of("nand2"), PullUpSpec::Mirror).unwrap_err();
        assert!(matches!(error, PullUpError::NotComplementary { index: 1, both_conduct: false, .. }), "{error}");
        assert!(error.to_string().contains("mirrored pull-up (right only for a self-dual function)"), "{error}");
        assert_eq!(error.span(), None);
        // PMOS a | b against the NOR2 pull-down a | b: vector 0 (a = b = 0) pull-down off, pull-up
        // on; vector 1 (a=1 b=0) the pull-down conducts through a and the pull-up through b.
        let error = pull_up(&stage_of("nor2"), PullUpSpec::Written("a | b")).unwrap_err();
        assert!(matches!(error, PullUpError::NotComplementary { index: 1, both_conduct: true, .. }), "{error}");
    }

    #[test]
    fn a_pull_up_may_have_its_own_device_count() {
        // !(a & b | a & c) = !(a & (b | c)): a PMOS a in parallel with b and c in series, 3
        // devices against the pull-down's 4 (De Morgan; common practice, no source).
        let stage = stage_of("!(a & b | a & c)");
        let up = pull_up(&stage, PullUpSpec::Written("a | b & c")).unwrap();
        assert_eq!(up.literals.len(), 3);
        assert_eq!(up.input_of(), [0, 1, 2]);
        assert_eq!(stage.literals.len(), 4);
        assert_eq!(
            up.network().root,
            Node::Parallel(vec![Node::Device(0), Node::Series(vec![Node::Device(1), Node::Device(2)])])
        );
        for vector in 0..8u32 {
            let values: Vec<bool> = (0..3).map(|i| vector >> i & 1 == 1).collect();
            assert_ne!(up.conducts(&values), stage.evaluate(&values));
        }
        let cell = one("!(a & b | a & c)");
        check_cell(&cell, Some(&up), &by_text("!(a & b | a & c)", &cell));
    }

    #[test]
    fn xor_sum_of_products_pull_up_holds_only_with_true_complements() {
        // The sum-of-products pull-up of XOR2 (Sutherland, Sproull & Harris, Logical Effort, 1999,
        // table 4.1, from memory): PMOS a & b_n in parallel with a_n & b. It is the pull-down's
        // complement only when a_n = !a and b_n = !b, so the cell accepts it and the stage alone,
        // whose nets are free, does not. By hand over the stage inputs a_n, b_n, a, b (bits 0..3),
        // pull-down a_n & b_n | a & b, pull-up on where !a & !b_n or !a_n & !b: vectors 0 to 4 hold
        // (0, 1, 2, 4: pull-up on, pull-down off; 3: the reverse); vector 5 (a_n = a = 1,
        // b_n = b = 0) leaves both off.
        let cell = form("xor2", Form::Direct);
        let written = PullUpSpec::Written("a & b_n | a_n & b");
        let up = cell_pull_up(&cell, written).unwrap();
        check_cell(&cell, Some(&up), &|v: &[bool]| v[0] != v[1]);
        let error = pull_up(&cell.logic().function, written).unwrap_err();
        assert!(matches!(error, PullUpError::NotComplementary { index: 5, both_conduct: false, .. }), "{error}");
        // XOR3 is self-dual: its mirror is right in the cell, with either form.
        for cell in synthesize("xor3").unwrap() {
            let mirror = cell_pull_up(&cell, PullUpSpec::Mirror).unwrap();
            check_cell(&cell, Some(&mirror), &|v: &[bool]| v.iter().filter(|x| **x).count() % 2 == 1);
        }
        // XOR2 is not: its mirror fails at vector 0 (a = b = 0: f = a_n & b_n is 1 and the mirror's
        // a & b terms conduct in PMOS too).
        let error = cell_pull_up(&cell, PullUpSpec::Mirror).unwrap_err();
        assert!(matches!(error, PullUpError::NotComplementary { index: 0, both_conduct: true, .. }), "{error}");
    }

    #[test]
    fn bad_pull_up_text_is_refused_where_it_is() {
        let carry = stage_of("!(a & b | c & (a | b))");
        // pull-up text -> byte the caret points at, and a word of the reason
        let cases = [
            ("a | !b", 4, "uncomplemented"),
            ("(a | b) & ~c", 10, "uncomplemented"),
            ("a' | b", 1, "uncomplemented"),
            ("!!a | b", 0, "uncomplemented"),
            ("a ^ b", 2, "exclusive or"),
            ("y = a | b", 2, "output name"),
            ("a | d", 4, "not an input of the stage (its inputs: a, b, c)"),
            ("a | (b", 4, "never closed"),
            ("", 0, "empty"),
        ];
        for (text, at, word) in cases {
            let error = pull_up(&carry, PullUpSpec::Written(text)).unwrap_err();
            assert_eq!(error.span().map(|s| s.start), Some(at), "{text}: {error}");
            assert!(error.to_string().contains(word), "{text}: {error}");
        }
        // The caret sits under the NOT.
        let text = "a & b | !c";
        let error = pull_up(&carry, PullUpSpec::Written(text)).unwrap_err();
        let rendered = Diagnostic::error(error.to_string())
            .at(&Source::inline("the pull-up", text), error.span().unwrap())
            .render();
        let lines: Vec<&str> = rendered.lines().collect();
        assert_eq!(lines[2], "    a & b | !c");
        assert_eq!(lines[3], "            ^");
    }

    #[test]
    fn the_pull_up_check_is_bounded() {
        let wide = (0..31).map(|i| format!("x{i}")).collect::<Vec<_>>().join(" & ");
        let stage = stage_of(&format!("!({wide})"));
        let error = pull_up(&stage, PullUpSpec::Mirror).unwrap_err();
        assert!(matches!(error, PullUpError::TooLarge { inputs: 31, limit: 30, .. }), "{error}");
        // 24 inputs and 2 x 180 devices: 2^18 words x 360 is past 2^32... no: 94 million, within.
        // 30 inputs and 130 devices: 2^24 x 260 is past the budget.
        let many: Vec<String> = (0..130).map(|i| format!("x{}", i % 30)).collect();
        let stage = stage_of(&format!("!({})", many.join(" | ")));
        let error = pull_up(&stage, PullUpSpec::Mirror).unwrap_err();
        assert!(matches!(error, PullUpError::TooLarge { inputs: 30, transistors: 260, .. }), "{error}");
        assert!(error.span().is_none());
    }

    #[test]
    fn large_checks_find_the_first_failure_across_words() {
        // nand of 12 inputs with a mirror (12 PMOS in series): off at vector 1 as NAND2's;
        // a correct pull-up (all parallel) passes over all 4096 vectors in 64 words.
        let names: Vec<String> = (0..12).map(|i| format!("x{i}")).collect();
        let stage = stage_of(&format!("!({})", names.join(" & ")));
        assert!(pull_up(&stage, PullUpSpec::Written(&names.join(" | "))).is_ok());
        assert!(matches!(pull_up(&stage, PullUpSpec::Mirror), Err(PullUpError::NotComplementary { index: 1, .. })));
        // x0 and x11 in series, beside x1..x10 in parallel: off only where x1..x10 are all 1 and x0
        // or x11 is 1; the pull-down (all twelve in series) is off there unless all are 1, so the
        // first floating vector is x0..x10 high and x11 low: 2^11 - 1 = 2047, the last bit of word
        // 31 (by hand; brute force below agrees).
        let text = format!("x0 & x11 | {}", names[1..11].join(" | "));
        let brute = (0..1u64 << 12).find(|v| {
            let x = |i: u64| v >> i & 1 == 1;
            let down = (0..12).all(x);
            let up = (!x(0) && !x(11)) || (1..11).any(|i| !x(i));
            down == up
        });
        assert_eq!(brute, Some(2047));
        match pull_up(&stage, PullUpSpec::Written(&text)) {
            Err(PullUpError::NotComplementary { index, both_conduct, .. }) => {
                assert_eq!((index, both_conduct), (2047, false))
            }
            other => panic!("{other:?}"),
        }
        // The same with 18 inputs: 4,096 words in 4 chunks, shared among threads. Floating
        // vectors: x1..x16 high with x0 high and x17 low (2^17 - 1 = 131071, chunk 1) or x0 low and
        // x17 high (131070 + 131072 = 262142, chunk 3); the lower is reported.
        let names: Vec<String> = (0..18).map(|i| format!("x{i}")).collect();
        let stage = stage_of(&format!("!({})", names.join(" & ")));
        let text = format!("x0 & x17 | {}", names[1..17].join(" | "));
        match pull_up(&stage, PullUpSpec::Written(&text)) {
            Err(PullUpError::NotComplementary { index, .. }) => assert_eq!(index, 131_071),
            other => panic!("{other:?}"),
        }
        assert!(pull_up(&stage, PullUpSpec::Written(&names.join(" | "))).is_ok());
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(128))]

        #[test]
        fn any_pull_up_text_is_a_pull_up_or_an_error(text in "[a-dxyA_!~'&*.|+^()= ]{0,30}", mirror in any::<bool>()) {
            let carry = stage_of("!(a & b | c & (a | b))");
            let spec = if mirror { PullUpSpec::Mirror } else { PullUpSpec::Written(&text) };
            if let Err(error) = pull_up(&carry, spec) {
                // Every refusal renders, with a caret where it has a place.
                let rendered = match error.span() {
                    Some(span) => Diagnostic::error(error.to_string()).at(&Source::inline("the pull-up", text.as_str()), span).render(),
                    None => error.to_string(),
                };
                prop_assert!(!rendered.is_empty());
            }
        }

        #[test]
        fn random_pull_ups_are_judged_as_brute_force_judges_them(
            text in inverting(),
            structure in monotone(),
            mirror in any::<bool>(),
        ) {
            let gate = read_gate(&text).unwrap();
            // The dual written out is always the complement (De Morgan; common practice, no source).
            let dual = function_text(&dual_of(&gate.function), &gate.literals, &gate.inputs, 0);
            prop_assert!(pull_up(&gate, PullUpSpec::Written(&dual)).is_ok(), "{}", dual);
            // A random structure over the stage's inputs, or the mirror.
            let mut written = parser::parse(&structure).unwrap().expr;
            rename(&mut written, &gate.inputs);
            let written_text = written.to_text();
            let spec = if mirror { PullUpSpec::Mirror } else { PullUpSpec::Written(&written_text) };
            // Brute force here: the pull-down conducts where the expression is 0; the mirror's PMOS
            // conduct where f (the complement of the expression) holds on complemented inputs, a
            // written structure where it holds on complemented inputs.
            let expression = parser::parse(&text).unwrap().expr;
            let inputs = &gate.inputs;
            let first = (0..1u64 << inputs.len()).find_map(|vector| {
                let value = |name: &str| vector >> inputs.iter().position(|n| n == name).unwrap() & 1 == 1;
                let low = |name: &str| !value(name);
                let down = !evaluate(&expression, &value);
                let up = if mirror { !evaluate(&expression, &low) } else { evaluate(&written, &low) };
                (down == up).then_some((vector, down))
            });
            match (pull_up(&gate, spec), first) {
                (Ok(_), None) => {}
                (Err(PullUpError::NotComplementary { index, both_conduct, .. }), Some((vector, both))) => {
                    prop_assert_eq!((index, both_conduct), (vector, both));
                }
                (got, expected) => prop_assert!(false, "{text} with {spec:?}: {got:?}, brute force {expected:?}"),
            }
        }
    }

    /// Input `x<i>` of a random structure becomes the stage's input `i` modulo their number.
    fn rename(expr: &mut Expr, inputs: &[String]) {
        match &mut expr.kind {
            ExprKind::Input(name) => *name = inputs[name[1..].parse::<usize>().unwrap() % inputs.len()].clone(),
            ExprKind::Not(inner) => rename(inner, inputs),
            ExprKind::And(operands) | ExprKind::Or(operands) | ExprKind::ExclusiveOr { operands, .. } => {
                operands.iter_mut().for_each(|o| rename(o, inputs))
            }
        }
    }

    fn dual_of(function: &Function) -> Function {
        match function {
            Function::Literal(k) => Function::Literal(*k),
            Function::And(c) => Function::Or(c.iter().map(dual_of).collect()),
            Function::Or(c) => Function::And(c.iter().map(dual_of).collect()),
        }
    }
}
