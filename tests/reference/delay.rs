//! Elmore delays against published worked examples, and the elmore sizing method against its
//! closed-form special cases and against scipy on the same geometric program.

use std::io::Write;
use std::process::{Command, Stdio};

use widthwise::budget::Meter;
use widthwise::cell::{SizedCell, describe};
use widthwise::expr::read_gate;
use widthwise::figures::CellFigures;
use widthwise::network::Network;
use widthwise::optimize::geometric::{self, Outcome, Program};
use widthwise::paths;
use widthwise::process::Process;
use widthwise::size_text;
use widthwise::sizing::target::Goal;
use widthwise::sizing::{Conditions, Load, Method, Order, Plan, elmore};
use widthwise::timing::circuit::{Circuit, flat_widths};
use widthwise::timing::transition::{EVERY_VECTOR, time_vector};
use widthwise::timing::{self, Delay, Edge, ProcessUnits, Timing};

use super::support::{ngspice_available, scipy_available};

fn options(method: Method) -> Plan {
    Plan::new(method, 2.0, 1.0, None)
}

fn sized(text: &str) -> SizedCell {
    size_text(text, &options(Method::LongestPath)).unwrap()
}

fn timed(gate: &SizedCell, load: Load, diffusion_ratio: f64) -> Timing {
    timing::time_in_rc(gate, &Conditions { load, diffusion_ratio }, &Meter::unlimited()).unwrap()
}

/// Total W/L of a sized cell.
fn total(gate: &SizedCell) -> f64 {
    CellFigures::of(gate).total_w_over_l
}

fn find<'a>(timing: &'a Timing, input: &str, edge: Edge) -> &'a Delay {
    timing.delays.iter().find(|d| d.input == input && d.edge == edge).unwrap()
}

#[test]
fn unit_nand3_driving_h_identical_gates() {
    // Unit NAND3 (NMOS 3, PMOS 2) driving h identical gates, diffusion = gate capacitance per unit
    // width, a shared series diffusion counted once: falling (12 + 5h) RC, rising (9 + 5h) RC
    // (Weste & Harris, "CMOS VLSI Design", ch. 4, worked example of the 3-input NAND; from memory).
    // Which transitions give these numbers: falling, the input nearest the rail (c, MN3 on vss)
    // switches with a and b already on, so n1 and n2 sit charged at the output's level and discharge
    // with it: 3 (R/3) + 3 (2R/3) + (9 + 5h) R. Rising, the input nearest the output (a, MN1 on y)
    // switches: its NMOS turns off and cuts n1 and n2 from the output, so only the output charges
    // through one PMOS of resistance R: (9 + 5h) R.
    let gate = sized("nand3");
    for h in [1.0, 4.0] {
        let timing = timed(&gate, Load::Fanout(h), 1.0);
        let fall = find(&timing, "c", Edge::Fall);
        assert!((fall.elmore_rc - (12.0 + 5.0 * h)).abs() < 1e-9, "h = {h}: {}", fall.elmore_rc);
        assert_eq!(fall.internal_nodes, ["n1", "n2"]);
        let rise = find(&timing, "a", Edge::Rise);
        assert!((rise.elmore_rc - (9.0 + 5.0 * h)).abs() < 1e-9, "h = {h}: {}", rise.elmore_rc);
        assert!(rise.internal_nodes.is_empty());
        // The load is h copies of the input's capacitance, 5 C each (g = 5/3 with C_inv = 3:
        // Sutherland, Sproull & Harris, "Logical Effort", 1999, ch. 4).
        assert!((fall.load_c - 5.0 * h).abs() < 1e-12);
        // In units of tau = 3 RC: d = g h + p with g = 5/3 and p = 12/3 = 4 from the Elmore delay
        // (internal nodes included) against p = 3 from the output node alone (the same chapter's
        // parasitic delay of a NAND3; Weste & Harris, ch. 4, from memory).
        let view = &fall.logical_effort_view;
        assert!((view.p_elmore - 4.0).abs() < 1e-9 && (view.p_output_node - 3.0).abs() < 1e-9);
        assert!((view.d_elmore - fall.elmore_rc / 3.0).abs() < 1e-9);
        assert!((view.d_output_node - (5.0 / 3.0 * h + 3.0)).abs() < 1e-9);
    }
}

#[test]
fn unit_nand2_driving_h_identical_gates() {
    // Unit NAND2 (NMOS 2, PMOS 2) driving h identical gates: falling (7 + 4h) RC, rising (6 + 4h) RC
    // (Weste & Harris, "CMOS VLSI Design", ch. 4; from memory). Same convention as the NAND3: falling
    // with the input nearest the rail (b) switching, n1 charged; rising with the input nearest the
    // output (a) switching, n1 cut off.
    let gate = sized("nand2");
    for h in [1.0, 4.0] {
        let timing = timed(&gate, Load::Fanout(h), 1.0);
        assert!((find(&timing, "b", Edge::Fall).elmore_rc - (7.0 + 4.0 * h)).abs() < 1e-9);
        assert!((find(&timing, "a", Edge::Rise).elmore_rc - (6.0 + 4.0 * h)).abs() < 1e-9);
    }
}

#[test]
fn nodes_already_at_the_final_level_add_nothing() {
    // NAND3, the input nearest the output (a) falling: b and c were on, n1 and n2 already sat at
    // ground, so only the output discharges, through R: (9 + 5h) RC. First moment of a linear RC
    // network with initial voltages: a node starting at its final value adds no charge to move
    // (common practice, no source).
    let gate = sized("nand3");
    let timing = timed(&gate, Load::Fanout(1.0), 1.0);
    let fall = find(&timing, "a", Edge::Fall);
    assert!((fall.elmore_rc - 14.0).abs() < 1e-9);
    assert_eq!(fall.nodes_at_final_level, ["n1", "n2"]);
}

#[test]
fn parallel_branches_are_solved_not_treed() {
    // OAI21 = !((a | b) & c), longest-path sizing (NMOS 2, PMOS a, b 4, c 2), with c at the rail
    // side of the pull-down stack. Input c rising: a = b = 1 keep both NMOS a and b on, so n1 hangs
    // off the output through two parallel devices (not a tree) and was charged with it. The output's
    // first moment is R_c x (all charged capacitance): 1 x (load 4 + output 10 + n1 6) = 20 RC
    // (worked by hand from the Elmore model; parallel branches off the output's path do not change
    // the resistance shared with it; common practice, no source). That vector is timed here as it
    // is (the worst-transition rule picks a slower one, a = 0: see the next test).
    // The written order of oai21's pull-down is (a | b) then c.
    let written = Network::pair(&read_gate("oai21").unwrap());
    assert_eq!(describe(&written.pull_down), "pull-down: (MN1 | MN2) - MN3");
    let gate = size_text("oai21", &Plan { order: Order::Written, ..options(Method::LongestPath) }).unwrap();
    let circuit = Circuit::new(gate.stage(), &gate.plan, 1.0);
    let widths = flat_widths(gate.stage());
    let rise = time_vector(&circuit, &widths, 2, Edge::Rise, vec![true, true, false], 4.0, EVERY_VECTOR).unwrap();
    assert!(!rise.tree);
    assert!((rise.elmore - 20.0).abs() < 1e-9, "{}", rise.elmore);
    // The rule's own choice for c rising: a = 0 turns MP1 on as well, and p1 (4 C, charged low
    // through MP1 before the switch) hangs off the output too: 1 x (4 + 10 + 6 + 4) = 24 RC (by hand).
    let timing = timed(&gate, Load::Fanout(1.0), 1.0);
    let rule = find(&timing, "c", Edge::Rise);
    assert_eq!(rule.vector.to_string(), "a=0 b=1 c=0");
    assert!((rule.elmore_rc - 24.0).abs() < 1e-9, "{}", rule.elmore_rc);
}

#[test]
fn the_worst_transition_charges_every_side_branch_it_can() {
    // !(a & (b | c & d)), longest-path, mu = 2, fan-out 1, diffusion ratio 1 (docs/model.md
    // sections 5 and 7; worked by hand, no published source). NMOS a 3, b 2, c 3, d 3 (the longest
    // path a-c-d has 3 devices); PMOS a 2, b 4, c 4, d 4. Default order: MN1 (a) at the output,
    // then n1, then MN2 (b) to vss beside MN3 (c) - n2 - MN4 (d) to vss; MP2 (b) at the output over
    // p1 and MP3 | MP4. Capacitances: y = 3 + 2 + 4 = 9 C (drains of MN1, MP1, MP2), n1 = 3 + 2 + 3
    // = 8 C (three terminals), n2 = max(3, 3) = 3 C (shared by MN3 and MN4); the load is C_in(b) =
    // 2 + 4 = 6 C. Input b rising, output falling through MN1 (R/3) and MN2 (R/2), a = 1 and the
    // c-d branch off, so (c, d) is 00, 10 or 01:
    //   c = 0, d = 0: y (9 + 6) x (1/3 + 1/2) + n1 8 x 1/2 = 12.5 + 4 = 16.5 RC;
    //   c = 1, d = 0: MN3 on hangs n2 (charged high through MN3, MN1 before the switch) off n1,
    //                 sharing MN2 with the output: 16.5 + 3 x 1/2 = 18 RC, the slowest;
    //   c = 0, d = 1: MN4 holds n2 at ground, cut from the output: 16.5 RC.
    // The rule takes 18 RC at c = 1 (the weakest path's lone vector gave 16.5, 9% less).
    let gate = sized("!(a & (b | c & d))");
    let timing = timed(&gate, Load::Fanout(1.0), 1.0);
    let fall = find(&timing, "b", Edge::Fall);
    assert!((fall.elmore_rc - 18.0).abs() < 1e-9, "{}", fall.elmore_rc);
    assert_eq!(fall.vector.to_string(), "a=1 b=1 c=1 d=0");
    assert_eq!(fall.internal_nodes, ["n1", "n2"]);
    assert_eq!(fall.search, EVERY_VECTOR);
    // The lone vector, timed as it is: 16.5 RC.
    let circuit = Circuit::new(gate.stage(), &gate.plan, 1.0);
    let widths = flat_widths(gate.stage());
    let lone = time_vector(&circuit, &widths, 1, Edge::Fall, vec![true, true, false, false], 6.0, EVERY_VECTOR);
    assert!((lone.unwrap().elmore - 16.5).abs() < 1e-9);
}

/// Every vector of the inputs under which `input` switches the output on `edge`, by the function's
/// own truth table (the pull-down conducts where f is true): before the switch the output is at the
/// old level, after it at the new one.
fn switching(gate: &SizedCell, input: usize, edge: Edge) -> Vec<Vec<bool>> {
    let function = &gate.stage().function;
    let count = function.inputs.len();
    let on_level = edge == Edge::Fall;
    (0u32..1 << count)
        .map(|bits| (0..count).map(|i| bits >> i & 1 == 1).collect::<Vec<bool>>())
        .filter(|after| {
            let mut before = after.clone();
            before[input] = !on_level;
            let pulls = |values: &[bool]| function.evaluate(values) == on_level;
            after[input] == on_level && pulls(after) && !pulls(&before)
        })
        .collect()
}

#[test]
fn the_rule_is_the_slowest_over_every_side_input_vector() {
    // Brute force, written here: every side-input vector under which each input switches the output
    // (from the truth table), each timed as it is; the rule's delay is the largest, and its vector the
    // first of those within 1e-9 of it that has the largest resistance after the switch, vectors
    // ordered by their on-set (input k as bit k, set where it turns its devices in the switching
    // network on). Gates with side branches, parallel paths and repeated inputs.
    for text in [
        "aoi21",
        "oai22",
        "!(a & (b | c & d))",
        "!(a & b | a & c)",
        "!((a | b) & (a | c))",
        "aoi221",
        "!(a & (b | c) | d & (e | a))",
    ] {
        for (load, ratio) in [(Load::Fanout(1.0), 1.0), (Load::Units(7.0), 0.5), (Load::Units(3.0), 0.0)] {
            for method in [Method::LongestPath, Method::MIN_AREA] {
                let gate = size_text(text, &options(method)).unwrap();
                let timing = timed(&gate, load, ratio);
                let stage = gate.stage();
                let circuit = Circuit::new(stage, &gate.plan, ratio);
                let widths = flat_widths(stage);
                for (input, name) in stage.function.inputs.iter().enumerate() {
                    for edge in Edge::BOTH {
                        let load_c =
                            timing.delays.iter().find(|d| d.input == *name).map(|d| d.load_c).unwrap_or_default();
                        let kind = edge.network();
                        let network = &stage.networks[kind];
                        let resistance = gate.plan.resistances(kind, &network.widths);
                        let mut every: Vec<(u64, f64, f64, Vec<bool>)> = switching(&gate, input, edge)
                            .into_iter()
                            .map(|after| {
                                let timed =
                                    time_vector(&circuit, &widths, input, edge, after.clone(), load_c, EVERY_VECTOR)
                                        .unwrap();
                                let on = network.network.on_devices(&after);
                                let r = paths::effective_resistance(&network.network, &resistance, &on).unwrap();
                                let on_set = after
                                    .iter()
                                    .enumerate()
                                    .filter(|(_, v)| **v == (edge == Edge::Fall))
                                    .map(|(i, _)| 1u64 << i)
                                    .sum();
                                (on_set, timed.elmore, r, after)
                            })
                            .collect();
                        let found = timing.delays.iter().find(|d| d.input == *name && d.edge == edge);
                        if every.is_empty() {
                            assert!(found.is_none(), "{text} {name} {edge:?}: no switching vector, yet a delay");
                            continue;
                        }
                        let found = found.unwrap_or_else(|| panic!("{text} {name} {edge:?}: no delay"));
                        let slowest = every.iter().map(|e| e.1).fold(f64::NEG_INFINITY, f64::max);
                        assert!((found.elmore_rc - slowest).abs() <= 1e-9 * slowest, "{text} {name} {edge:?}");
                        every.retain(|e| e.1 >= slowest * (1.0 - 1e-9));
                        let largest = every.iter().map(|e| e.2).fold(f64::NEG_INFINITY, f64::max);
                        every.retain(|e| e.2 >= largest * (1.0 - 1e-9));
                        every.sort_by_key(|e| e.0);
                        let expected: Vec<(String, bool)> =
                            stage.function.inputs.iter().cloned().zip(every[0].3.iter().copied()).collect();
                        assert_eq!(found.vector.values, expected, "{text} {name} {edge:?} {method:?} {load:?}");
                    }
                }
            }
        }
    }
}

#[test]
fn stack_order_search_finds_the_faster_oai21() {
    // OAI21, longest-path (NMOS 2, PMOS a, b 4, c 2), fan-out 4: loads 24 C on a and b (C_in 6),
    // 16 C on c (C_in 4). Default order: MN3 (c, the least diffusion facing the output) at the
    // output, y = 2 + 4 + 2 = 8 C, n1 = 6 C under it, p1 = 4 C between MP1 (a) and MP2 (b). The worst
    // transition is b rising (a = 0, c = 1): y (24 + 8) x R through MP1 and MP2 (R/2 each), p1 4 x R/2,
    // and n1 hanging off y through MN3, charged low before the switch, 6 x R: 32 + 2 + 6 = 40 RC.
    // With MN3 at the rail (y = 2 + 2 + 4 + 2 = 10 C) n1 sits on MN3 at ground for every pull-up
    // transition, and the worst becomes b falling (a = 0, c = 1): y (24 + 10) x (R/2 + R/2), p1 (charged
    // high, hanging off y through MP1) 4 x R: 34 + 4 = 38 RC (all worked by hand from the Elmore
    // model, docs/model.md section 7; no published source): a gain of 2/40.
    let plan = Plan {
        order: Order::Search { critical: None },
        conditions: Conditions { load: Load::Fanout(4.0), diffusion_ratio: 1.0 },
        ..options(Method::LongestPath)
    };
    let gate = size_text("oai21", &plan).unwrap();
    let report = gate.search.clone().unwrap();
    assert!((report.default_value - 40.0).abs() < 1e-9, "{}", report.default_value);
    assert!((report.chosen_value - 38.0).abs() < 1e-9, "{}", report.chosen_value);
    assert!((report.gain_percent - 100.0 * 2.0 / 40.0).abs() < 1e-9);
    assert_eq!(describe(&gate.stage().networks.pull_down.network), "pull-down: (MN1 | MN2) - MN3");
}

const GATES: [&str; 8] = ["inv", "nand2", "nand3", "nor2", "nor3", "aoi21", "aoi22", "oai21"];

fn elmore_sized(text: &str, load: Load, diffusion_ratio: f64) -> Result<SizedCell, widthwise::Error> {
    // The target 1: every delay at most the reference inverter's (docs/model.md section 12).
    let conditions = Conditions { load, diffusion_ratio };
    size_text(text, &Plan { conditions, delay_target: Some(1.0), ..options(Method::ELMORE) })
}

#[test]
fn elmore_method_meets_every_bound_and_never_costs_more_than_a_feasible_longest_path() {
    let mut feasible = 0;
    for text in GATES {
        for load in [Load::Units(20.0), Load::Units(60.0), Load::Fanout(4.0)] {
            for ratio in [0.0, 0.5, 1.0] {
                let longest = sized(text);
                let longest_timing = timed(&longest, load, ratio);
                let longest_meets = longest_timing.delays.iter().all(|d| d.delay_ratio <= 1.0 + 1e-9);
                let gate = match elmore_sized(text, load, ratio) {
                    Ok(gate) => gate,
                    Err(widthwise::Error::Sizing(error)) if error.is_infeasible() => {
                        let message = error.to_string();
                        // Infeasible: then longest-path cannot meet the bounds either.
                        assert!(!longest_meets, "{text} {load:?} {ratio}: {message}");
                        continue;
                    }
                    Err(error) => panic!("{text}: {error}"),
                };
                feasible += 1;
                let timing = timed(&gate, load, ratio);
                // The method's definition: every worst-case delay at most the reference inverter's.
                for d in &timing.delays {
                    assert!(d.elmore_rc <= d.reference_elmore_rc * (1.0 + 1e-6), "{text} {:?}", d);
                }
                if longest_meets {
                    assert!(total(&gate) <= total(&longest) * (1.0 + 1e-6), "{text} {load:?} {ratio}");
                }
                if ratio == 0.0 && matches!(load, Load::Units(_)) {
                    // No parasitics and a fixed load: every delay is (path resistance) x load, so the
                    // bound is the path constraint and the optimum is the min-area closed form
                    // (series rule B_i = B sqrt(K_i) / sum sqrt(K_j), docs/model.md section 5).
                    let min_area = size_text(text, &options(Method::MIN_AREA)).unwrap();
                    let relative = (total(&gate) / total(&min_area) - 1.0).abs();
                    assert!(relative < 1e-6, "{text}: {} vs {}", total(&gate), total(&min_area));
                }
            }
        }
    }
    assert!(feasible > 20, "only {feasible} feasible cases");
}

#[test]
fn the_inverter_needs_exactly_the_reference() {
    // The reference inverter meets its own bound with equality, and no smaller one does: adding the
    // two bounds (fall x n / (diff S + L), rise x p / mu (diff S + L)) gives S >= S_ref for the total
    // S = n + p (worked by hand; no published source).
    let gate = elmore_sized("inv", Load::Units(10.0), 1.0).unwrap();
    assert!((total(&gate) - 3.0).abs() < 1e-6, "{}", total(&gate));
}

#[test]
fn infeasible_bounds_say_so() {
    // A unit NAND3 driving a fixed 5 C (one copy of the unit NAND3's input): the falling delay of c
    // cannot come down to the reference inverter's (3 + 5) RC, whatever the widths, since its
    // parasitic part alone stays above it as the widths grow (the output and internal diffusions grow
    // with them).
    let error = elmore_sized("nand3", Load::Units(5.0), 1.0).unwrap_err();
    assert_eq!(error.exit_code(), 1);
    assert!(error.to_string().contains("make every Elmore delay at most 1 times"), "{error}");
}

/// Run scipy's SLSQP on each program (log variables, the same box), in one python3 process.
/// `mode` "optimum" minimises the objective; "least-worst" minimises the largest constraint, the
/// hard ones (a shared diffusion's variable above each of its devices) held at `<= 1`.
pub(super) fn scipy(programs: &[Program], mode: &str) -> Vec<serde_json::Value> {
    const SCRIPT: &str = r#"
import json, sys
import numpy as np
from scipy.optimize import minimize
mode = sys.argv[1]
def solve(fun, x0, jac, bounds, cons):
    # SLSQP can stop at the optimum without meeting its own ftol ("positive directional derivative
    # for linesearch"), as it does on one shifted trade-off program: started again halfway between
    # where it stopped and the start, it converges. At most three restarts; the caller still checks
    # success and feasibility.
    r = minimize(fun, x0, jac=jac, method='SLSQP', bounds=bounds, constraints=cons,
                 options={'ftol': 1e-13, 'maxiter': 2000})
    for _ in range(3):
        if r.success:
            break
        r = minimize(fun, 0.5 * (r.x + x0), jac=jac, method='SLSQP', bounds=bounds, constraints=cons,
                     options={'ftol': 1e-13, 'maxiter': 2000})
    return r
out = []
for p in json.load(sys.stdin):
    n = p['variables']
    def compile(poly):
        b = np.array([np.log(t['coefficient']) for t in poly['terms']])
        A = np.zeros((len(poly['terms']), n))
        for i, t in enumerate(poly['terms']):
            for k, e in t['exponents']:
                A[i, k] += e
        return A, b
    def lse(A, b, y):
        z = A @ y + b
        m = z.max()
        return m + np.log(np.exp(z - m).sum())
    def grad(A, b, y):
        z = A @ y + b
        w = np.exp(z - z.max())
        return A.T @ (w / w.sum())
    objective = compile(p['objective'])
    constraints = [compile(c) for c in p['constraints']]
    hard = [compile(c) for c in p['hard']]
    bounds = list(zip(np.log(p['lower']), np.log(p['upper'])))
    y0 = np.log(p['start'])
    if mode == 'optimum':
        cons = [{'type': 'ineq', 'fun': (lambda y, A=A, b=b: -lse(A, b, y)),
                 'jac': (lambda y, A=A, b=b: -grad(A, b, y))} for A, b in constraints + hard]
        r = solve(lambda y: lse(*objective, y), y0, lambda y: grad(*objective, y), bounds, cons)
        worst = max(lse(A, b, r.x) for A, b in constraints)
        out.append({'success': bool(r.success), 'objective': float(np.exp(r.fun)), 'worst': float(np.exp(worst))})
    else:
        z0 = np.append(y0, max(lse(A, b, y0) for A, b in constraints))
        cons = [{'type': 'ineq', 'fun': (lambda z, A=A, b=b: z[-1] - lse(A, b, z[:-1])),
                 'jac': (lambda z, A=A, b=b: np.append(-grad(A, b, z[:-1]), 1.0))} for A, b in constraints]
        cons += [{'type': 'ineq', 'fun': (lambda z, A=A, b=b: -lse(A, b, z[:-1])),
                  'jac': (lambda z, A=A, b=b: np.append(-grad(A, b, z[:-1]), 0.0))} for A, b in hard]
        last = np.zeros(n + 1)
        last[-1] = 1.0
        r = solve(lambda z: z[-1], z0, lambda z: last, bounds + [(None, None)], cons)
        out.append({'success': bool(r.success), 'least_worst': float(np.exp(r.x[-1]))})
print(json.dumps(out))
"#;
    let mut child = Command::new("python3")
        .args(["-c", SCRIPT, mode])
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .spawn()
        .expect("python3 runs");
    let input = serde_json::to_vec(programs).unwrap();
    child.stdin.take().unwrap().write_all(&input).unwrap();
    let output = child.wait_with_output().unwrap();
    assert!(output.status.success(), "scipy script failed");
    serde_json::from_slice(&output.stdout).unwrap()
}

#[test]
fn elmore_optimum_agrees_with_scipy() {
    // Reference tool: scipy.optimize.minimize (SLSQP, from PyPI) on the same program in log
    // variables, run by python3. The barrier method and SLSQP are independent solvers of one
    // convex problem, so their optima must agree.
    if !scipy_available("elmore_optimum_agrees_with_scipy") {
        return;
    }
    let cases = [
        ("nand2", Load::Units(30.0), 1.0),
        ("nand3", Load::Units(50.0), 1.0),
        ("nor2", Load::Fanout(4.0), 0.5),
        ("aoi21", Load::Units(40.0), 1.0),
        ("aoi22", Load::Units(60.0), 0.7),
        ("oai21", Load::Fanout(6.0), 1.0),
        // 27 paths down, each with three inputs: many near-identical constraints active at once.
        ("!((a | b | c) & (d | e | f) & (g | h | i))", Load::Units(150.0), 1.0),
    ];
    let mut programs = Vec::new();
    let mut ours = Vec::new();
    for (text, load, ratio) in cases {
        let plan = Plan { conditions: Conditions { load, diffusion_ratio: ratio }, ..options(Method::ELMORE) };
        let (program, _) = elmore::program(sized(text).stage(), &plan, Goal::Area { ratio: 1.0 }).unwrap();
        let Outcome::Optimal { objective, .. } = geometric::solve(&program).unwrap() else {
            panic!("{text} is feasible")
        };
        ours.push(objective);
        programs.push(program);
    }
    let theirs = scipy(&programs, "optimum");
    for ((case, objective), answer) in cases.iter().zip(&ours).zip(&theirs) {
        assert!(answer["success"].as_bool().unwrap(), "{}: scipy did not converge", case.0);
        assert!(answer["worst"].as_f64().unwrap() <= 1.0 + 1e-6, "{}: scipy's point is infeasible", case.0);
        let scipy_objective = answer["objective"].as_f64().unwrap();
        assert!(
            (objective / scipy_objective - 1.0).abs() < 1e-6,
            "{}: ours {objective}, scipy {scipy_objective}",
            case.0
        );
    }
}

#[test]
fn infeasibility_margin_agrees_with_scipy() {
    // Reference tool: scipy SLSQP minimising the largest constraint value over the same box. Where
    // our phase I says "infeasible", the least worst ratio it reports must be scipy's.
    if !scipy_available("infeasibility_margin_agrees_with_scipy") {
        return;
    }
    let mut programs = Vec::new();
    let mut ours = Vec::new();
    // A fixed load of one copy of each gate's input at longest-path sizes (NAND3 5 C, AOI22 6 C).
    for (text, load) in [("nand3", 5.0), ("aoi22", 6.0)] {
        let plan = Plan {
            conditions: Conditions { load: Load::Units(load), diffusion_ratio: 1.0 },
            ..options(Method::ELMORE)
        };
        let (program, _) = elmore::program(sized(text).stage(), &plan, Goal::Area { ratio: 1.0 }).unwrap();
        let Outcome::Infeasible { least_worst, .. } = geometric::solve(&program).unwrap() else {
            panic!("{text} at {load} C is infeasible")
        };
        ours.push(least_worst);
        programs.push(program);
    }
    for (least_worst, answer) in ours.iter().zip(&scipy(&programs, "least-worst")) {
        let theirs = answer["least_worst"].as_f64().unwrap();
        assert!((least_worst / theirs - 1.0).abs() < 1e-4, "ours {least_worst}, scipy {theirs}");
    }
}

#[test]
fn unit_resistance_gives_the_level1_half_swing_time() {
    // Reference tool: ngspice (Debian's package), run in batch mode on a level-1 (Shichman-Hodges)
    // unit NMOS, no body effect or channel-length modulation, discharging C from VDD after a fast
    // step on its gate. R is defined so that ln 2 x R x C is that time to VDD/2. Two processes: the
    // built-in one (saturated, then linear) and a low-supply one whose threshold is above VDD/2
    // (saturated all the way down to VDD/2).
    if !ngspice_available("unit_resistance_gives_the_level1_half_swing_time") {
        return;
    }
    let low_supply =
        Process { supply_v: 1.2, nmos_threshold_v: 0.7, unit_width_nm: 500.0, length_nm: 250.0, ..Process::default() };
    for process in [Process::default(), low_supply] {
        let units = ProcessUnits::of(&process).unwrap();
        let deck = format!(
            "* unit NMOS discharging C\n\
             .model nch nmos level=1 vto={vt} kp={kp}u gamma=0 lambda=0\n\
             vg g 0 pulse(0 {vdd} 0 1f 1f 1 2)\n\
             m1 d g 0 0 nch w={w}n l={l}n\n\
             c1 d 0 {c}f\n\
             .ic v(d)={vdd}\n\
             .options reltol=1e-6\n\
             .tran 0.001p {stop}p uic\n\
             .meas tran tf when v(d)={half} fall=1\n\
             .end\n",
            vt = process.nmos_threshold_v,
            kp = process.nmos_kp_ua_per_v2,
            vdd = process.supply_v,
            w = process.unit_width_nm,
            l = process.length_nm,
            c = units.unit_capacitance_ff,
            stop = (units.rc_ps * 4.0).ceil(),
            half = process.supply_v / 2.0,
        );
        let directory = tempfile::tempdir().unwrap();
        let path = directory.path().join("unit.cir");
        std::fs::write(&path, deck).unwrap();
        let output = Command::new("ngspice").arg("-b").arg(&path).output().unwrap();
        let text = String::from_utf8_lossy(&output.stdout);
        let line = text.lines().find(|l| l.trim_start().starts_with("tf")).expect("ngspice measured tf");
        let seconds: f64 = line.split('=').nth(1).unwrap().split_whitespace().next().unwrap().parse().unwrap();
        let expected = std::f64::consts::LN_2 * units.rc_ps * 1e-12;
        assert!(
            (seconds / expected - 1.0).abs() < 1e-3,
            "{}: ngspice {seconds}, ln 2 R C {expected}",
            process.supply_v
        );
    }
}
