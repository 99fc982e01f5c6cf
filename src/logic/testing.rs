//! Test support: a switch-level simulator of cells written from each stage's trees (NMOS in series
//! for AND and in parallel for OR from the stage output to vss, PMOS the dual from vdd, or a custom
//! pull-up as written; stage by stage, every stage output tied to exactly one rail), independent of
//! the library's networks; the expression evaluated on its own tree; random monotone functions.

use proptest::prelude::*;

use crate::expr::ast::{Expr, ExprKind};
use crate::expr::normal::{Function, Literal};
use crate::expr::parser;
use crate::logic::pull_up::PullUp;
use crate::logic::{CellLogic, Form, StageRole, synthesize};

/// Local node numbers of a stage: the rails and its output; internal nodes follow.
const VDD: usize = 0;
const VSS: usize = 1;
const OUT: usize = 2;

#[derive(Debug, Clone, Copy)]
struct Switch {
    /// Global net that gates it.
    gate: usize,
    pmos: bool,
    a: usize,
    b: usize,
}

struct StageNet {
    output: usize,
    nodes: usize,
    switches: Vec<Switch>,
}

struct Simulated {
    nets: Vec<String>,
    pins: usize,
    stages: Vec<StageNet>,
    output: usize,
}

/// Switches of `function` between local nodes `top` and `bottom`: AND in series where
/// `series_on_and`, else in parallel (the dual).
#[allow(clippy::too_many_arguments)]
fn place(
    function: &Function,
    literals: &[Literal],
    gates: &[usize],
    series_on_and: bool,
    pmos: bool,
    (top, bottom): (usize, usize),
    nodes: &mut usize,
    out: &mut Vec<Switch>,
) {
    match function {
        Function::Literal(k) => out.push(Switch { gate: gates[literals[*k].input], pmos, a: top, b: bottom }),
        Function::And(children) | Function::Or(children) => {
            if matches!(function, Function::And(_)) == series_on_and {
                let mut upper = top;
                for (i, child) in children.iter().enumerate() {
                    let lower = if i + 1 == children.len() {
                        bottom
                    } else {
                        *nodes += 1;
                        *nodes - 1
                    };
                    place(child, literals, gates, series_on_and, pmos, (upper, lower), nodes, out);
                    upper = lower;
                }
            } else {
                for child in children {
                    place(child, literals, gates, series_on_and, pmos, (top, bottom), nodes, out);
                }
            }
        }
    }
}

fn netlist(cell: &CellLogic, pull_up: Option<&PullUp>) -> Simulated {
    let mut nets: Vec<String> = cell.inputs.clone();
    let id = |name: &str, nets: &mut Vec<String>| match nets.iter().position(|n| n == name) {
        Some(i) => i,
        None => {
            nets.push(name.to_string());
            nets.len() - 1
        }
    };
    let mut stages = Vec::new();
    for stage in &cell.stages {
        let function = &stage.function;
        let gates: Vec<usize> = function.inputs.iter().map(|n| id(n, &mut nets)).collect();
        let output = id(&function.output, &mut nets);
        let mut nodes = 3;
        let mut switches = Vec::new();
        let (f, l) = (&function.function, &function.literals);
        place(f, l, &gates, true, false, (OUT, VSS), &mut nodes, &mut switches);
        match pull_up.filter(|_| stage.role == StageRole::Logic) {
            Some(up) => place(&up.function, &up.literals, &gates, true, true, (VDD, OUT), &mut nodes, &mut switches),
            None => place(f, l, &gates, false, true, (VDD, OUT), &mut nodes, &mut switches),
        }
        stages.push(StageNet { output, nodes, switches });
    }
    let output = nets.iter().position(|n| *n == cell.output).expect("the output is driven");
    Simulated { nets, pins: cell.inputs.len(), stages, output }
}

fn find(parent: &mut [usize], mut x: usize) -> usize {
    while parent[x] != x {
        parent[x] = parent[parent[x]];
        x = parent[x];
    }
    x
}

/// The cell's output on vector `vector` (pin `i` is bit `i`), or why a stage is not static.
fn simulate(sim: &Simulated, vector: u64) -> Result<bool, String> {
    let mut value: Vec<Option<bool>> = vec![None; sim.nets.len()];
    for (pin, slot) in value.iter_mut().enumerate().take(sim.pins) {
        *slot = Some(vector >> pin & 1 == 1);
    }
    for stage in &sim.stages {
        let mut parent: Vec<usize> = (0..stage.nodes).collect();
        for switch in &stage.switches {
            let gate = value[switch.gate].ok_or_else(|| format!("'{}' read before driven", sim.nets[switch.gate]))?;
            if gate != switch.pmos {
                let (a, b) = (find(&mut parent, switch.a), find(&mut parent, switch.b));
                parent[a] = b;
            }
        }
        let out = find(&mut parent, OUT);
        let (up, down) = (out == find(&mut parent, VDD), out == find(&mut parent, VSS));
        let name = &sim.nets[stage.output];
        if find(&mut parent, VDD) == find(&mut parent, VSS) {
            return Err(format!("'{name}': vdd and vss joined at vector {vector}"));
        }
        value[stage.output] = Some(match (up, down) {
            (true, false) => true,
            (false, true) => false,
            (true, true) => return Err(format!("'{name}': both networks conduct at vector {vector}")),
            (false, false) => return Err(format!("'{name}': floats at vector {vector}")),
        });
    }
    Ok(value[sim.output].expect("driven"))
}

/// Every vector of the cell's pins: static stages, and the output equal to `expected`.
pub(crate) fn check_cell(cell: &CellLogic, pull_up: Option<&PullUp>, expected: &dyn Fn(&[bool]) -> bool) {
    let sim = netlist(cell, pull_up);
    for vector in 0..1u64 << cell.inputs.len() {
        let values: Vec<bool> = (0..cell.inputs.len()).map(|i| vector >> i & 1 == 1).collect();
        let got = simulate(&sim, vector).unwrap_or_else(|e| panic!("{} ({:?}): {e}", cell.text, cell.form));
        assert_eq!(got, expected(&values), "{} ({:?}) at vector {vector}", cell.text, cell.form);
    }
}

/// The expression evaluated on its tree (XOR included), by pin name.
pub(crate) fn evaluate(expr: &Expr, value: &dyn Fn(&str) -> bool) -> bool {
    match &expr.kind {
        ExprKind::Input(name) => value(name),
        ExprKind::Not(inner) => !evaluate(inner, value),
        ExprKind::And(operands) => operands.iter().all(|o| evaluate(o, value)),
        ExprKind::Or(operands) => operands.iter().any(|o| evaluate(o, value)),
        ExprKind::ExclusiveOr { operands, .. } => operands.iter().filter(|o| evaluate(o, value)).count() % 2 == 1,
    }
}

/// `text` (the definition, as a test writes it) evaluated on the pins of `cell`.
pub(crate) fn by_text<'a>(text: &'a str, cell: &'a CellLogic) -> impl Fn(&[bool]) -> bool + 'a {
    let expr = parser::parse(text).unwrap().expr;
    move |values: &[bool]| evaluate(&expr, &|name| values[cell.inputs.iter().position(|p| p == name).expect("a pin")])
}

pub(crate) fn one(text: &str) -> CellLogic {
    let mut cells = synthesize(text).unwrap_or_else(|e| panic!("{text}: {e}"));
    assert_eq!(cells.len(), 1, "{text}: {cells:?}");
    cells.pop().unwrap()
}

pub(crate) fn form(text: &str, form: Form) -> CellLogic {
    let cells = synthesize(text).unwrap_or_else(|e| panic!("{text}: {e}"));
    cells.into_iter().find(|c| c.form == form).unwrap_or_else(|| panic!("{text}: no {form:?} form"))
}

/// Random monotone functions f over x0..x9, as text.
pub(crate) fn monotone() -> impl Strategy<Value = String> {
    let leaf = (0..10usize).prop_map(|i| format!("x{i}"));
    leaf.prop_recursive(4, 32, 5, |inner| {
        prop_oneof![
            prop::collection::vec(inner.clone(), 2..5).prop_map(|c| format!("({})", c.join(" & "))),
            prop::collection::vec(inner, 2..5).prop_map(|c| format!("({})", c.join(" | "))),
        ]
    })
}

/// Random inverting monotone functions: `!(f)` or `(f)'`.
pub(crate) fn inverting() -> impl Strategy<Value = String> {
    (monotone(), any::<bool>()).prop_map(|(f, postfix)| if postfix { format!("({f})'") } else { format!("!{f}") })
}
