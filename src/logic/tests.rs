//! Tests of cell synthesis: structure, names, bounds and switch-level function of every form.

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
    for (text, at) in [("y = mux3", 4), ("xor4", 0), ("and9", 0), ("or1", 0), ("ao2", 0), ("oa11", 0), ("nand9", 0)] {
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
        let join = |c: &[Random], op: &str| c.iter().map(|t| format!("({})", t.text())).collect::<Vec<_>>().join(op);
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
