//! Negation-normal form and the one-stage check: turns `Y = expr` into `Y = NOT f` with `f` an
//! AND/OR tree of uncomplemented input occurrences, or says why one static stage cannot build it.

use std::collections::HashMap;

use crate::diagnostic::Span;
use crate::expr::ast::{Expr, ExprKind};
use crate::expr::error::ExprError;
use crate::names::reserved_reason;

/// Most input occurrences (transistors per network) in one gate.
pub const MAX_DEVICES: usize = 10_000;
/// Most distinct inputs of one gate.
pub const MAX_INPUTS: usize = 10_000;

/// One occurrence of an input in the expression: one NMOS and one PMOS.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Literal {
    /// Index into [`GateFunction::inputs`].
    pub input: usize,
    /// Where it is written.
    pub span: Span,
}

/// The monotone function `f` of a gate `Y = NOT f`, over literal occurrences.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Function {
    /// A literal occurrence, by index into [`GateFunction::literals`].
    Literal(usize),
    /// AND of two or more (never directly of another AND).
    And(Vec<Function>),
    /// OR of two or more (never directly of another OR).
    Or(Vec<Function>),
}

/// A gate read from text: its output, inputs, literal occurrences and `f`.
#[derive(Debug, Clone, PartialEq)]
pub struct GateFunction {
    /// Output node name (`y` unless the text names it).
    pub output: String,
    /// Input names in order of first appearance.
    pub inputs: Vec<String>,
    /// Literal occurrences in written order.
    pub literals: Vec<Literal>,
    /// `f`, where the gate computes `NOT f`.
    pub function: Function,
    /// The expression as written, in canonical form (`!(a & b | c)`).
    pub text: String,
    /// The shorthand name, when the gate was given as one.
    pub shorthand: Option<String>,
}

/// Default output node name.
pub const DEFAULT_OUTPUT: &str = "y";
/// What a gate's names may not be: the output's (for inputs), the reserved names and the models'.
#[derive(Debug, Clone, Copy)]
pub struct Reserved<'a> {
    /// The output's name.
    pub output: &'a str,
    /// The device models in use.
    pub models: &'a [&'a str],
}

impl Reserved<'_> {
    /// Whether an input may not be called `name` (compared without case).
    pub fn takes(&self, name: &str) -> bool {
        name.eq_ignore_ascii_case(self.output) || reserved_reason(name, self.models).is_some()
    }
}

/// Bring `expr` to the form `NOT f`; `output` names the output node; `models` are reserved too.
pub fn normalize(
    expr: &Expr,
    output: Option<(&str, Span)>,
    shorthand: Option<String>,
    models: &[&str],
) -> Result<GateFunction, ExprError> {
    let mut builder = Builder { inputs: Vec::new(), index: HashMap::new(), literals: Vec::new(), wrong: None };
    // f = NOT expr, pushed to the leaves: a one-stage gate has only uncomplemented literals in f.
    let function = builder.push(expr, true)?;
    let all_wrong = builder.literals.iter().all(|(_, right)| !right);
    if let Some(span) = builder.wrong {
        if all_wrong {
            return Err(ExprError::NonInverting { text: expr.to_text(), span: expr.span });
        }
        let name = builder.inputs[builder.index_at(span)].clone();
        return Err(ExprError::Binate { name, span });
    }
    let (output, output_span) = match output {
        Some((name, span)) => (name.to_string(), span),
        None => (DEFAULT_OUTPUT.to_string(), expr.span),
    };
    check_names(&builder, &output, output_span, models)?;
    Ok(GateFunction {
        output,
        inputs: builder.inputs,
        literals: builder.literals.into_iter().map(|(literal, _)| literal).collect(),
        function,
        text: expr.to_text(),
        shorthand,
    })
}

/// Up to this many inputs, names are looked up by a plain scan; past it, through a hash map.
const SCAN_INPUTS: usize = 16;

struct Builder {
    inputs: Vec<String>,
    /// Input index by name, filled once there are more than [`SCAN_INPUTS`] inputs.
    index: HashMap<String, usize>,
    /// Literals in f, with the polarity check passed (true) or not.
    literals: Vec<(Literal, bool)>,
    /// The first literal in the wrong polarity.
    wrong: Option<Span>,
}

impl Builder {
    fn index_at(&self, span: Span) -> usize {
        self.literals.iter().find(|(l, _)| l.span == span).map_or(0, |(l, _)| l.input)
    }

    /// NNF of `expr` (negated when `negate`), as `f`'s tree.
    fn push(&mut self, expr: &Expr, negate: bool) -> Result<Function, ExprError> {
        match &expr.kind {
            ExprKind::Input(name) => {
                let found = if self.inputs.len() <= SCAN_INPUTS {
                    self.inputs.iter().position(|known| known == name)
                } else {
                    if self.index.is_empty() {
                        self.index.extend(self.inputs.iter().cloned().zip(0..));
                    }
                    self.index.get(name).copied()
                };
                let input = match found {
                    Some(index) => index,
                    None => {
                        if self.inputs.len() == MAX_INPUTS {
                            return Err(ExprError::TooManyInputs {
                                count: self.inputs.len() + 1,
                                limit: MAX_INPUTS,
                                span: expr.span,
                            });
                        }
                        if !self.index.is_empty() {
                            self.index.insert(name.clone(), self.inputs.len());
                        }
                        self.inputs.push(name.clone());
                        self.inputs.len() - 1
                    }
                };
                if self.literals.len() == MAX_DEVICES {
                    return Err(ExprError::TooManyDevices {
                        count: self.literals.len() + 1,
                        limit: MAX_DEVICES,
                        span: expr.span,
                    });
                }
                // Reached without an odd number of NOTs above it: uncomplemented in the gate's
                // expression, so complemented in f.
                if negate && self.wrong.is_none() {
                    self.wrong = Some(expr.span);
                }
                self.literals.push((Literal { input, span: expr.span }, !negate));
                Ok(Function::Literal(self.literals.len() - 1))
            }
            ExprKind::Not(inner) => self.push(inner, !negate),
            ExprKind::And(operands) | ExprKind::Or(operands) => {
                let is_and = matches!(expr.kind, ExprKind::And(_)) != negate;
                let mut children = Vec::with_capacity(operands.len());
                for operand in operands {
                    match (self.push(operand, negate)?, is_and) {
                        (Function::And(inner), true) | (Function::Or(inner), false) => children.extend(inner),
                        (child, _) => children.push(child),
                    }
                }
                Ok(if is_and { Function::And(children) } else { Function::Or(children) })
            }
            ExprKind::ExclusiveOr { operator, .. } => Err(ExprError::ExclusiveOr { span: *operator }),
        }
    }
}

impl GateFunction {
    /// Literal indices per input.
    pub fn occurrences(&self) -> Vec<Vec<usize>> {
        let mut result = vec![Vec::new(); self.inputs.len()];
        for (index, literal) in self.literals.iter().enumerate() {
            result[literal.input].push(index);
        }
        result
    }

    /// The input of every device (literal occurrence), by device index.
    pub fn input_of(&self) -> Vec<usize> {
        self.literals.iter().map(|l| l.input).collect()
    }

    /// Whether some input has more than one occurrence.
    pub fn has_repeated_inputs(&self) -> bool {
        self.literals.len() > self.inputs.len()
    }

    /// `f` evaluated on one input vector (`values[i]` for input `i`), from the tree, not the netlist.
    pub fn evaluate(&self, values: &[bool]) -> bool {
        fn walk(function: &Function, literals: &[Literal], values: &[bool]) -> bool {
            match function {
                Function::Literal(index) => values[literals[*index].input],
                Function::And(children) => children.iter().all(|c| walk(c, literals, values)),
                Function::Or(children) => children.iter().any(|c| walk(c, literals, values)),
            }
        }
        walk(&self.function, &self.literals, values)
    }
}

/// No name may be reserved; inputs may not clash with the output, or with each other when case is
/// ignored (netlists ignore case).
fn check_names(builder: &Builder, output: &str, output_span: Span, models: &[&str]) -> Result<(), ExprError> {
    let span_of =
        |input: usize| builder.literals.iter().find(|(l, _)| l.input == input).map_or(Span::default(), |(l, _)| l.span);
    if let Some(why) = reserved_reason(output, models) {
        return Err(ExprError::ReservedName { role: "the output", name: output.to_string(), why, span: output_span });
    }
    let output_clash = |name: &str| name.eq_ignore_ascii_case(output);
    // Inputs equal but for case: a plain scan for few inputs, a hash map of lower-case names past that.
    let mut seen: HashMap<String, usize> = HashMap::new();
    for (index, name) in builder.inputs.iter().enumerate() {
        if output_clash(name) {
            return Err(ExprError::NameClash {
                name: name.clone(),
                what: format!("the output '{output}' (a gate cannot take its own output as an input)"),
                span: span_of(index),
            });
        }
        if let Some(why) = reserved_reason(name, models) {
            return Err(ExprError::ReservedName { role: "input", name: name.clone(), why, span: span_of(index) });
        }
        let other = if builder.inputs.len() <= SCAN_INPUTS {
            builder.inputs[..index].iter().position(|earlier| earlier.eq_ignore_ascii_case(name))
        } else {
            let lower = name.to_ascii_lowercase();
            let other = seen.get(&lower).copied();
            seen.insert(lower, index);
            other
        };
        if let Some(other) = other {
            return Err(ExprError::NameClash {
                name: name.clone(),
                what: format!("input '{}' (netlist names ignore case)", builder.inputs[other]),
                span: span_of(index),
            });
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::expr::read_gate;

    fn f_shape(function: &Function, gate: &GateFunction) -> String {
        let list = |op: &str, children: &[Function]| {
            let inner: Vec<String> = children.iter().map(|c| f_shape(c, gate)).collect();
            format!("{op}[{}]", inner.join(" "))
        };
        match function {
            Function::Literal(i) => gate.inputs[gate.literals[*i].input].clone(),
            Function::And(children) => list("&", children),
            Function::Or(children) => list("|", children),
        }
    }

    #[test]
    fn table_of_single_stage_forms() {
        // expression -> f, where the gate computes NOT f (De Morgan; common practice, no source)
        let cases = [
            ("!(a & b)", "&[a b]"),
            ("!a | !b", "&[a b]"),
            ("!a & !b", "|[a b]"),
            ("!(a & (b | c))", "&[a |[b c]]"),
            ("!((a & b) & c)", "&[a b c]"),
            ("!(a & b | a & c)", "|[&[a b] &[a c]]"),
            ("(!a | !b) & !c", "|[&[a b] c]"),
            ("inv", "a"),
            ("aoi21", "|[&[a b] c]"),
        ];
        for (text, expected) in cases {
            let gate = read_gate(text).unwrap_or_else(|e| panic!("{text}: {e}"));
            assert_eq!(f_shape(&gate.function, &gate), expected, "{text}");
        }
    }

    #[test]
    fn repeated_inputs_are_separate_devices() {
        let gate = read_gate("!(a & b | a & c)").unwrap();
        assert_eq!(gate.inputs, ["a", "b", "c"]);
        assert_eq!(gate.literals.len(), 4);
        assert_eq!(gate.occurrences()[0], vec![0, 2]);
        assert!(gate.has_repeated_inputs());
    }

    #[test]
    fn table_of_refused_forms() {
        // expression -> byte the caret points at, and a word of the reason
        let cases = [
            ("a & b", 0, "non-inverting"),
            ("a", 0, "unknown gate"),
            ("a & !b", 0, "not a single stage"),
            ("!a & b", 5, "'b'"),
            ("!(a ^ b)", 4, "exclusive or"),
            ("y = !(y & a)", 6, "own output"),
            ("!(vdd & a)", 2, "input 'vdd' takes a reserved name: 'vdd' is a supply rail"),
            ("vss = !a", 0, "the output 'vss' takes a reserved name"),
            ("VDD = !(a & b)", 0, "the output 'VDD' takes a reserved name: 'vdd' is a supply rail"),
            ("!(GND & a)", 2, "input 'GND' takes a reserved name: 'gnd' is ground"),
            ("gnd = !(a & b)", 0, "the output 'gnd' takes a reserved name"),
            ("!(a & A)", 6, "ignore case"),
        ];
        for (text, at, word) in cases {
            let error = read_gate(text).expect_err(text);
            assert_eq!(error.span().start, at, "{text}: {error}");
            assert!(error.to_string().contains(word), "{text}: {error}");
        }
    }

    #[test]
    fn model_names_are_reserved() {
        use crate::expr::read_gate_with_models;
        let models = ["nmos", "PMOS"];
        for (text, at, word) in [
            ("!(nmos & a)", 2, "input 'nmos' takes a reserved name: 'nmos' names a device model in use"),
            ("!(a & Pmos)", 6, "input 'Pmos' takes a reserved name: 'PMOS' names a device model"),
            ("NMOS = !a", 0, "the output 'NMOS' takes a reserved name"),
        ] {
            let error = read_gate_with_models(text, &models).expect_err(text);
            assert_eq!(error.span().start, at, "{text}: {error}");
            assert!(error.to_string().contains(word), "{text}: {error}");
        }
        // A shorthand's inputs skip a model's name: with a model called 'b', nand2 reads a and c.
        let gate = read_gate_with_models("nand2", &["b", "p"]).unwrap();
        assert_eq!(gate.inputs, ["a", "c"]);
        // Without the models, the names are free.
        assert!(read_gate("!(nmos & a)").is_ok());
    }

    #[test]
    fn wide_shorthands_never_name_an_input_like_the_output() {
        // aoi8881 and oai8881 have 25 inputs: the 25th letter is y, the default output.
        for name in ["aoi8881", "oai8881", "oai88888888"] {
            let gate = read_gate(name).unwrap_or_else(|e| panic!("{name}: {e}"));
            assert!(!gate.inputs.iter().any(|i| i == "y"), "{name}");
        }
        let gate = read_gate("b = nand3").unwrap();
        assert_eq!((gate.output.as_str(), gate.inputs.clone()), ("b", vec!["a".to_string(), "c".into(), "d".into()]));
    }

    #[test]
    fn evaluation_follows_the_tree() {
        let gate = read_gate("aoi21").unwrap();
        assert!(gate.evaluate(&[true, true, false]));
        assert!(!gate.evaluate(&[true, false, false]));
        assert!(gate.evaluate(&[false, false, true]));
    }
}
