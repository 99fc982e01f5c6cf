//! Tests of exact sizing: closed forms by hand, limits, derivatives, and random networks checked
//! by an independent nodal solve over every input vector.

use super::*;
use crate::expr::read_gate;
use crate::network::Sides;
use proptest::prelude::*;

/// A random series-parallel shape over inputs; devices are numbered in written order.
#[derive(Debug, Clone)]
enum Tree {
    Leaf(usize),
    Series(Vec<Tree>),
    Parallel(Vec<Tree>),
}

fn tree(inputs: usize) -> impl Strategy<Value = Tree> {
    (0..inputs).prop_map(Tree::Leaf).prop_recursive(4, 20, 4, |inner| {
        prop_oneof![
            prop::collection::vec(inner.clone(), 2..4).prop_map(Tree::Series),
            prop::collection::vec(inner, 2..4).prop_map(Tree::Parallel),
        ]
    })
}

/// A shape of at least two devices.
fn group(inputs: usize) -> impl Strategy<Value = Tree> {
    prop::collection::vec(tree(inputs), 2..4)
        .prop_flat_map(|members| prop_oneof![Just(Tree::Series(members.clone())), Just(Tree::Parallel(members))])
}

/// The network of a shape, `input_of`, and the input count (inputs renumbered in order of
/// appearance, so each is used); `distinct` gives every leaf its own input.
fn build(tree: &Tree, kind: NetworkKind, distinct: bool) -> (Network, Vec<usize>, usize) {
    fn walk(tree: &Tree, input_of: &mut Vec<usize>, names: &mut Vec<usize>, distinct: bool) -> Node {
        match tree {
            Tree::Leaf(input) => {
                let index = if distinct {
                    names.push(usize::MAX);
                    names.len() - 1
                } else {
                    names.iter().position(|n| n == input).unwrap_or_else(|| {
                        names.push(*input);
                        names.len() - 1
                    })
                };
                input_of.push(index);
                Node::Device(input_of.len() - 1)
            }
            Tree::Series(c) => Node::Series(c.iter().map(|t| walk(t, input_of, names, distinct)).collect()),
            Tree::Parallel(c) => Node::Parallel(c.iter().map(|t| walk(t, input_of, names, distinct)).collect()),
        }
    }
    let (mut input_of, mut names) = (Vec::new(), Vec::new());
    let root = walk(tree, &mut input_of, &mut names, distinct);
    (Network { kind, root, inputs: input_of.clone() }, input_of, names.len())
}

/// [`build`] with at least one input repeated: where every leaf drew its own input, the last
/// one (the only holder of the highest input) takes input 0 instead.
fn build_repeated(tree: &Tree, kind: NetworkKind) -> (Network, Vec<usize>, usize) {
    let (mut network, mut input_of, mut inputs) = build(tree, kind, false);
    if input_of.len() == inputs {
        *input_of.last_mut().expect("two devices or more") = 0;
        network.inputs = input_of.clone();
        inputs -= 1;
    }
    (network, input_of, inputs)
}

/// Min-area closed-form widths for a target and unit resistance.
fn closed_form(network: &Network, unit: f64, target: f64) -> Vec<f64> {
    rules::widths(network, Rule::MinArea, 1.0).iter().map(|w| w * unit / target).collect()
}

/// Effective resistance between the output and the rail by node-voltage analysis, written here
/// independently of the tree recursion: the devices become edges between numbered nodes
/// (0 the output, 1 the rail), the output is held at 1 V and the rail at 0 V, the conductance
/// equations of the nodes connected to the output are solved by Gaussian elimination with partial
/// pivoting, and the resistance is 1 V over the current leaving the output. `None` where nothing
/// conducts (Kirchhoff's current law; common practice, no source).
fn nodal_resistance(network: &Network, widths: &[f64], unit: f64, on: &[bool]) -> Option<f64> {
    fn edges(node: &Node, top: usize, bottom: usize, nodes: &mut usize, out: &mut Vec<(usize, usize, usize)>) {
        match node {
            Node::Device(d) => out.push((*d, top, bottom)),
            Node::Parallel(branches) => branches.iter().for_each(|b| edges(b, top, bottom, nodes, out)),
            Node::Series(members) => {
                let mut upper = top;
                for (i, member) in members.iter().enumerate() {
                    let lower = if i + 1 == members.len() {
                        bottom
                    } else {
                        *nodes += 1;
                        *nodes - 1
                    };
                    edges(member, upper, lower, nodes, out);
                    upper = lower;
                }
            }
        }
    }
    let (mut count, mut all) = (2, Vec::new());
    edges(&network.root, 0, 1, &mut count, &mut all);
    // A device of width 0 is as open as one that is off.
    let on_edges: Vec<(usize, usize, f64)> =
        all.iter().filter(|e| on[e.0] && widths[e.0] > 0.0).map(|&(d, a, b)| (a, b, widths[d] / unit)).collect();
    // The nodes the output reaches through devices that are on.
    let mut reached = vec![false; count];
    reached[0] = true;
    let mut changed = true;
    while changed {
        changed = false;
        for &(a, b, _) in &on_edges {
            if reached[a] != reached[b] {
                reached[a] = true;
                reached[b] = true;
                changed = true;
            }
        }
    }
    if !reached[1] {
        return None;
    }
    let unknown: Vec<usize> = (2..count).filter(|&n| reached[n]).collect();
    let position = |node: usize| unknown.iter().position(|&u| u == node);
    let size = unknown.len();
    let mut matrix = vec![vec![0.0; size + 1]; size];
    for &(a, b, g) in &on_edges {
        for (here, there) in [(a, b), (b, a)] {
            let Some(row) = position(here) else { continue };
            matrix[row][row] += g;
            match position(there) {
                Some(column) => matrix[row][column] -= g,
                None if there == 0 => matrix[row][size] += g, // the output at 1 V
                None => {}                                    // the rail at 0 V
            }
        }
    }
    for column in 0..size {
        let pivot = (column..size).max_by(|&i, &j| matrix[i][column].abs().total_cmp(&matrix[j][column].abs()))?;
        matrix.swap(column, pivot);
        let (upper, lower) = matrix.split_at_mut(column + 1);
        let pivot_row = &upper[column];
        for row in lower {
            let factor = row[column] / pivot_row[column];
            for (value, p) in row[column..].iter_mut().zip(&pivot_row[column..]) {
                *value -= factor * p;
            }
        }
    }
    let mut voltage = vec![0.0; size];
    for row in (0..size).rev() {
        let known: f64 = (row + 1..size).map(|c| matrix[row][c] * voltage[c]).sum();
        voltage[row] = (matrix[row][size] - known) / matrix[row][row];
    }
    let at = |node: usize| match node {
        0 => 1.0,
        1 => 0.0,
        n => voltage[position(n).expect("reached")],
    };
    let current: f64 = on_edges
        .iter()
        .map(|&(a, b, g)| {
            if a == 0 {
                g * (1.0 - at(b))
            } else if b == 0 {
                g * (1.0 - at(a))
            } else {
                0.0
            }
        })
        .sum();
    Some(1.0 / current)
}

/// The highest resistance over every input vector under which the network conducts.
fn brute_force_worst(network: &Network, widths: &[f64], unit: f64, input_of: &[usize], inputs: usize) -> f64 {
    (0..1u64 << inputs)
        .filter_map(|vector| {
            let on: Vec<bool> = input_of.iter().map(|&i| network.kind.conducts(vector >> i & 1 == 1)).collect();
            nodal_resistance(network, widths, unit, &on)
        })
        .fold(0.0, |worst, r| {
            assert!(r.is_finite() && r > 0.0, "resistance {r}");
            worst.max(r)
        })
}

fn pull_up(text: &str) -> (Network, Vec<usize>, usize) {
    let gate = read_gate(text).unwrap();
    let up = Network::pair(&gate).pull_up;
    (up, gate.input_of(), gate.inputs.len())
}

#[test]
fn carry_pull_up_by_symmetry() {
    // Pull-up of !(a & b | c & (a | b)) at mobility ratio 2, target R: devices a0 b1 c2 a3 b4 in
    // S(P(a0 b1) P(c2 S(a3 b4))). The minimal vectors turn on {a, b} (G = series(g0 + g1,
    // g3 g4 / (g3 + g4))), {a, c} (series(g0, g2)) and {b, c} (series(g1, g2)). The program is
    // convex and symmetric in a and b, so some optimum has g0 = g1 = p, g3 = g4 = q, g2 = r; the
    // two binding constraints give r = p / (p - 1) and q = 4p / (2p - 1), leaving
    // total g = 2p + p / (p - 1) + 8p / (2p - 1) to minimise over p > 1, and W/L = 2 g
    // (derived by hand; the 1-D minimum found here by bisection on its derivative).
    let derivative = |p: f64| 2.0 - 1.0 / (p - 1.0).powi(2) - 8.0 / (2.0 * p - 1.0).powi(2);
    let (mut low, mut high) = (1.0 + 1e-9, 100.0);
    for _ in 0..200 {
        let middle = 0.5 * (low + high);
        if derivative(middle) < 0.0 { low = middle } else { high = middle }
    }
    let p = 0.5 * (low + high);
    let by_hand = 2.0 * (2.0 * p + p / (p - 1.0) + 8.0 * p / (2.0 * p - 1.0));
    let (up, _, inputs) = pull_up("!(a & b | c & (a | b))");
    let sizing = size_network(&up, inputs, 2.0, 1.0, &[0.0; 5], DEFAULT_BUDGET).unwrap();
    assert!((sizing.total - by_hand).abs() < 1e-9 * by_hand, "{} vs {by_hand}", sizing.total);
    assert_eq!(sizing.minimal_vectors, 3);
    // All three minimal vectors bind at the optimum: b = c = 0 (vector 1, a = 1), a = c = 0
    // (vector 2), a = b = 0 (vector 4), lowest number first (input a is bit 0).
    assert_eq!(
        sizing.binding,
        [[true, false, false], [false, true, false], [false, false, true]].map(|v| v.to_vec()).to_vec()
    );
}

#[test]
fn figures_for_three_pull_ups() {
    // Pull-ups at mobility ratio 2 with reference PMOS 2 (target R). Exact totals: scipy's SLSQP
    // on the same convex program (scipy from PyPI; tests/reference/vectors.rs re-solves these
    // three), quoted to two decimals in the repository's issue on exact sizing. Lone-path
    // min-area totals: the closed form (series members share the budget in proportion to
    // sqrt K_i, by Lagrange; for the carry (sqrt 2 + sqrt 5)^2 x 2 = 26.65, by hand).
    for (text, exact, closed) in [
        ("!(a & b | c & (a | b))", 22.66, 26.65),
        ("!(a & b & c | d & (a | b | c))", 37.39, 47.91),
        ("!(a & b | a & c | b & c & d)", 36.65, 41.60),
    ] {
        let (up, input_of, inputs) = pull_up(text);
        let lower = vec![0.0; input_of.len()];
        let sizing = size_network(&up, inputs, 2.0, 1.0, &lower, DEFAULT_BUDGET).unwrap();
        let lone: f64 = closed_form(&up, 2.0, 1.0).iter().sum();
        assert!((sizing.total - exact).abs() < 0.005, "{text}: {}", sizing.total);
        assert!((lone - closed).abs() < 0.005, "{text}: closed form {lone}");
        assert!((sizing.worst_resistance - 1.0).abs() < 1e-6, "{text}: {}", sizing.worst_resistance);
    }
}

#[test]
fn lower_bounds_hold_and_can_meet_the_target_alone() {
    // NAND2 pull-down at target R: the two NMOS in series need W/L 2 each (common practice, no
    // source). A lower bound of 3 already meets the target with room: both stay at 3, and the
    // worst resistance is 2/3 R.
    let gate = read_gate("nand2").unwrap();
    let down = Network::pair(&gate).pull_down;
    let free = size_network(&down, 2, 1.0, 1.0, &[0.0, 0.0], DEFAULT_BUDGET).unwrap();
    assert!(free.widths.iter().all(|w| (w - 2.0).abs() < 1e-6), "{:?}", free.widths);
    assert_eq!(free.binding, vec![vec![true, true]]);
    let held = size_network(&down, 2, 1.0, 1.0, &[3.0, 3.0], DEFAULT_BUDGET).unwrap();
    assert!(held.widths.iter().all(|w| (w - 3.0).abs() < 1e-6), "{:?}", held.widths);
    assert!((held.worst_resistance - 2.0 / 3.0).abs() < 1e-6);
    // One lower bound above what the optimum would give: the other device takes the rest,
    // 1/3 + 1/w = 1, w = 1.5 (by hand).
    let one = size_network(&down, 2, 1.0, 1.0, &[3.0, 0.0], DEFAULT_BUDGET).unwrap();
    assert!((one.widths[0] - 3.0).abs() < 1e-6 && (one.widths[1] - 1.5).abs() < 1e-6, "{:?}", one.widths);
}

#[test]
fn devices_no_vector_needs_stay_at_their_lower_bound() {
    // !(a | a & b): a alone conducts through the first device, so the series a-b is never
    // needed; the first device takes W/L 1, the others their lower bound (by hand).
    let gate = read_gate("!(a | a & b)").unwrap();
    let down = Network::pair(&gate).pull_down;
    let sizing = size_network(&down, 2, 1.0, 1.0, &[0.0, 0.5, 0.25], DEFAULT_BUDGET).unwrap();
    assert!((sizing.widths[0] - 1.0).abs() < 1e-9 && sizing.widths[1..] == [0.5, 0.25], "{:?}", sizing.widths);
    assert_eq!(sizing.minimal_vectors, 1);
}

#[test]
fn limits_and_bad_arguments_are_typed_errors() {
    let wide: Vec<String> = (0..17).map(|i| format!("x{i}")).collect();
    let gate = read_gate(&format!("!({})", wide.join(" & "))).unwrap();
    let down = Network::pair(&gate).pull_down;
    let error = size_network(&down, 17, 1.0, 1.0, &[0.0; 17], DEFAULT_BUDGET).unwrap_err();
    assert_eq!(error, ExactError::TooManyInputs { count: 17, limit: MAX_INPUTS });
    assert!(error.past_limit() && error.to_string().contains("at most 16"), "{error}");

    let (up, _, inputs) = pull_up("!(a & b | c & (a | b))");
    let error = size_network(&up, inputs, 2.0, 1.0, &[0.0; 5], Budget { work: 50 }).unwrap_err();
    assert_eq!(error, ExactError::OverBudget { network: "pull-up", budget: 50 });
    assert!(error.past_limit() && error.to_string().contains("work budget of 50"), "{error}");

    for (unit, target, lower) in [(0.0, 1.0, vec![0.0; 5]), (2.0, f64::NAN, vec![0.0; 5]), (2.0, 1.0, vec![0.0; 4])] {
        let error = size_network(&up, inputs, unit, target, &lower, DEFAULT_BUDGET).unwrap_err();
        assert!(matches!(error, ExactError::Bad(_)), "{error}");
    }
    let bad = Network { inputs: vec![0, 1, 2, 0, 5], ..up.clone() };
    let error = size_network(&bad, inputs, 2.0, 1.0, &[0.0; 5], DEFAULT_BUDGET).unwrap_err();
    assert!(matches!(error, ExactError::Bad(_)), "{error}");
}

#[test]
fn minimal_vectors_of_a_majority_gate() {
    // Pull-down of !(a & b | a & c | b & c): conducts when two inputs are 1; the minimal on-sets
    // are the three pairs (common practice, no source). Above 6 inputs the word-level path runs:
    // a chain of 8 in series has one minimal on-set, all of them.
    let gate = read_gate("!(a & b | a & c | b & c)").unwrap();
    let Sides { pull_down: down, pull_up: up } = Network::pair(&gate);
    assert_eq!(minimal_on_sets(&down, 3).unwrap(), vec![0b011, 0b101, 0b110]);
    assert_eq!(minimal_on_sets(&up, 3).unwrap(), vec![0b011, 0b101, 0b110]);
    assert_eq!(on_set_vector(NetworkKind::PullUp, 0b011, 3), vec![false, false, true]);
    let gate = read_gate("nand8").unwrap();
    let Sides { pull_down: down, pull_up: up } = Network::pair(&gate);
    assert_eq!(minimal_on_sets(&down, 8).unwrap(), vec![0xFF]);
    assert_eq!(minimal_on_sets(&up, 8).unwrap(), (0..8).map(|i| 1u64 << i).collect::<Vec<_>>());
}

#[test]
fn derivatives_match_differences() {
    // The tree's gradient and Hessian against central differences of its value (common
    // practice, no source), on a part with nested series and parallel groups.
    let (up, input_of, _) = pull_up("!(a & (b | c & (d | e)) | f & g)");
    let on = vec![true; input_of.len()];
    let mut devices = Vec::new();
    let part = prune(&up.root, &on, &mut devices).unwrap();
    let constraint = VectorConstraint { variables: (0..devices.len()).collect(), part, scale: 0.7 };
    let k = devices.len();
    let x: Vec<f64> = (0..k).map(|j| 0.5 + 0.37 * j as f64).collect();
    let (mut gradient, mut hessian) = (vec![0.0; k], vec![0.0; k * k]);
    constraint.evaluate(&x, Some(&mut gradient), Some(&mut hessian));
    let h = 1e-5;
    for a in 0..k {
        let shifted = |d: f64| {
            let mut y = x.clone();
            y[a] += d;
            let mut g = vec![0.0; k];
            (constraint.evaluate(&y, Some(&mut g), None), g)
        };
        let ((up_value, up_gradient), (down_value, down_gradient)) = (shifted(h), shifted(-h));
        assert!((gradient[a] - (up_value - down_value) / (2.0 * h)).abs() < 1e-8, "gradient {a}");
        for b in 0..k {
            let difference = (up_gradient[b] - down_gradient[b]) / (2.0 * h);
            assert!((hessian[a * k + b] - difference).abs() < 1e-7, "hessian {a} {b}");
        }
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(48))]

    #[test]
    fn without_repeated_inputs_the_closed_form(tree in tree(16), pull_up in any::<bool>()) {
        // Every minimal vector turns on one lone path, so the program is min-area's and its
        // optimum the closed form (series budgets in proportion to sqrt K_i, by Lagrange;
        // derived by hand).
        let kind = if pull_up { NetworkKind::PullUp } else { NetworkKind::PullDown };
        let (network, input_of, inputs) = build(&tree, kind, true);
        prop_assume!(inputs <= MAX_INPUTS);
        let (unit, target) = if pull_up { (2.0, 0.8) } else { (1.0, 1.3) };
        let lower = vec![0.0; input_of.len()];
        let sizing = size_network(&network, inputs, unit, target, &lower, DEFAULT_BUDGET).unwrap();
        let closed = closed_form(&network, unit, target);
        let total: f64 = closed.iter().sum();
        prop_assert!((sizing.total - total).abs() <= 1e-9 * total, "{} vs {total}", sizing.total);
        for (ours, theirs) in sizing.widths.iter().zip(&closed) {
            prop_assert!((ours - theirs).abs() <= 1e-5 * theirs, "{:?} vs {closed:?}", sizing.widths);
        }
    }

    #[test]
    fn every_vector_meets_the_target(tree in (1..=10usize).prop_flat_map(group), pull_up in any::<bool>()) {
        let kind = if pull_up { NetworkKind::PullUp } else { NetworkKind::PullDown };
        let (network, input_of, inputs) = build_repeated(&tree, kind);
        prop_assert!(input_of.len() > inputs && inputs <= 10);
        let (unit, target) = if pull_up { (2.0, 1.0) } else { (1.0, 0.5) };
        let lower = vec![0.0; input_of.len()];
        let sizing = size_network(&network, inputs, unit, target, &lower, DEFAULT_BUDGET).unwrap();
        // Every vector, by the independent nodal solve: at most the target.
        let worst = brute_force_worst(&network, &sizing.widths, unit, &input_of, inputs);
        prop_assert!(worst <= target * (1.0 + 1e-9), "worst {worst} over target {target}");
        // Scaling every width by s divides every resistance by s, so at the least area the
        // worst vector sits on the target (by hand), and it is what the sizing reports.
        prop_assert!((worst - target).abs() <= 1e-6 * target, "worst {worst}, target {target}");
        prop_assert!((sizing.worst_resistance - worst).abs() <= 1e-9 * target);
        for vector in &sizing.binding {
            let on: Vec<bool> = input_of.iter().map(|&i| kind.conducts(vector[i])).collect();
            let r = nodal_resistance(&network, &sizing.widths, unit, &on).unwrap();
            prop_assert!((r - worst).abs() <= 2e-6 * worst);
        }
        // The lone-path closed form meets every vector too, so the optimum is never above it.
        let closed: f64 = closed_form(&network, unit, target).iter().sum();
        prop_assert!(sizing.total <= closed * (1.0 + 1e-9), "{} above the closed form {closed}", sizing.total);
    }
}
