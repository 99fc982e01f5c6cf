//! Exact min-area sizing of one network against every input vector: the least total W/L such that
//! every input vector under which the network conducts pulls the output through at most the target
//! resistance, with the devices that are off left open. Repeated inputs make many paths unable to
//! conduct alone, so this is often well below the lone-path sizing of [`crate::sizing`].
//!
//! It is a convex program. For one vector, the devices that are on form a resistor network whose
//! effective conductance `G_v(g)`, as a function of the device conductances `g` (W/L over the unit
//! resistance), is concave: by the Dirichlet principle it is the least, over node potentials with
//! the output at 1 and the rail at 0, of `sum_e g_e (dV_e)^2` (Doyle & Snell, "Random Walks and
//! Electric Networks", 1984, chapter 1, from memory), and a pointwise minimum of functions linear in
//! `g` is concave (Boyd & Vandenberghe, "Convex Optimization", 2004, section 3.2.3). So each constraint
//! `G_v >= 1 / target` bounds a convex set. Turning a device on never lowers `G_v`, so only the
//! vectors whose set of inputs holding devices on is minimal need a constraint. On a series-parallel
//! network `G_v` and its derivatives come from the tree: parallel branches add, series members
//! combine as `1 / sum(1 / G_i)`, an off device is open and opens any series it is in.
//!
//! Without repeated inputs every minimal vector turns on exactly one path, and the optimum is the
//! closed form of min-area sizing. The optimum value is unique; the widths need not be.

use crate::network::{Network, NetworkKind, Node};
use crate::optimize::{self, Budget, Linear, Outcome, Program, Settings, Smooth, SolveError};
use crate::paths::{EXACT_WORST_MAX_INPUTS, conduction_by_on_set, vector_word};
use crate::sizing::rules::{self, Rule};

/// Most inputs of a network sized exactly: its input vectors are enumerated (bit-parallel).
pub const MAX_INPUTS: usize = EXACT_WORST_MAX_INPUTS;
/// Most minimal conducting vectors (constraints) in one network.
pub const MAX_MINIMAL_VECTORS: usize = 4096;
/// Most devices (variables) in one network: the Newton system is dense.
pub const MAX_DEVICES: usize = 256;
/// The work budget a caller uses unless told otherwise, in the units of [`Budget`] (Newton
/// iterations x (variables + constraints)): about 230 iterations at the limits above, where the
/// networks measured take 35 to 90 (random networks of up to 10 inputs: 54 on average).
pub const DEFAULT_BUDGET: Budget = Budget { work: 1_000_000 };
/// Vectors whose resistance at the optimum is within this fraction of the worst are reported as
/// binding.
pub const BINDING_TOLERANCE: f64 = 1e-6;

/// The exact sizing of one network.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ExactSizing {
    /// W/L of every device, indexed by device. A device that no minimal vector needs (it conducts
    /// only beside a stronger path) stays at its lower bound.
    pub widths: Vec<f64>,
    /// Their sum.
    pub total: f64,
    /// The highest resistance of what conducts, over every input vector, in units of R: the
    /// target, unless the lower bounds alone already meet it.
    pub worst_resistance: f64,
    /// The input vectors (values by input) that reach `worst_resistance`, lowest-numbered first
    /// (input 0 is bit 0).
    pub binding: Vec<Vec<bool>>,
    /// How many minimal conducting vectors were constrained.
    pub minimal_vectors: usize,
    /// The relative duality gap the solver certified at the end: the total is at most this
    /// fraction above the optimum value.
    pub gap: f64,
    /// Newton iterations of the solver.
    pub iterations: usize,
    /// Work used, in the units of [`Budget`].
    pub work: u64,
}

/// Why a network could not be sized exactly.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ExactError {
    /// More inputs than [`MAX_INPUTS`].
    #[error("{count} inputs: exact sizing over input vectors handles at most {limit}")]
    TooManyInputs {
        /// Inputs of the network.
        count: usize,
        /// The limit.
        limit: usize,
    },
    /// More devices than [`MAX_DEVICES`].
    #[error("{count} transistors in the {network}: exact sizing over input vectors handles at most {limit}")]
    TooManyDevices {
        /// `"pull-down"` or `"pull-up"`.
        network: &'static str,
        /// Devices of the network.
        count: usize,
        /// The limit.
        limit: usize,
    },
    /// More minimal conducting vectors than [`MAX_MINIMAL_VECTORS`].
    #[error("the {network} has {count} minimal conducting input vectors: exact sizing handles at most {limit}")]
    TooManyVectors {
        /// `"pull-down"` or `"pull-up"`.
        network: &'static str,
        /// Minimal conducting vectors of the network.
        count: usize,
        /// The limit.
        limit: usize,
    },
    /// The solver used its whole work budget.
    #[error(
        "exact sizing of the {network} used its work budget of {budget} (Newton iterations x (variables + constraints))"
    )]
    OverBudget {
        /// `"pull-down"` or `"pull-up"`.
        network: &'static str,
        /// The budget.
        budget: u64,
    },
    /// Inconsistent arguments.
    #[error("bad exact-sizing problem: {0}")]
    Bad(String),
    /// The solver stopped without an optimum.
    #[error("exact sizing of the {network} did not converge: {reason}")]
    NotConverged {
        /// `"pull-down"` or `"pull-up"`.
        network: &'static str,
        /// What the solver said.
        reason: String,
    },
}

impl ExactError {
    /// Whether the problem is past a documented limit or the work budget (bad input, exit 2),
    /// rather than a computation that failed (exit 1).
    pub fn past_limit(&self) -> bool {
        matches!(
            self,
            ExactError::TooManyInputs { .. }
                | ExactError::TooManyDevices { .. }
                | ExactError::TooManyVectors { .. }
                | ExactError::OverBudget { .. }
                | ExactError::Bad(_)
        )
    }
}

/// The minimal conducting on-sets of `network`: bit `i` of an on-set says input `i` holds its
/// devices on (at 1 for NMOS, at 0 for PMOS). The network conducts under each, and under none with
/// one of its inputs turned off. Ascending. `input_of[k]` is device `k`'s input.
///
/// Which on-sets conduct is found 64 per machine word; an on-set is minimal where it conducts and,
/// for each input in it, the on-set without that input does not.
pub fn minimal_on_sets(network: &Network, input_count: usize) -> Result<Vec<u64>, ExactError> {
    check_network(network, input_count)?;
    let conducts = conduction_by_on_set(network, input_count);
    let mut minimal = conducts.clone();
    for input in 0..input_count {
        for (word, bits) in minimal.iter_mut().enumerate() {
            // The word of on-sets with `input` flipped, aligned with this one.
            let flipped = if input < 6 {
                let shift = 1 << input;
                let mask = vector_word(0, input);
                ((conducts[word] & mask) >> shift) | ((conducts[word] & !mask) << shift)
            } else {
                conducts[word ^ (1 << (input - 6))]
            };
            *bits &= !(vector_word(word as u64, input) & flipped);
        }
    }
    let count: usize = minimal.iter().map(|w| w.count_ones() as usize).sum();
    if count > MAX_MINIMAL_VECTORS {
        return Err(ExactError::TooManyVectors { network: network.kind.name(), count, limit: MAX_MINIMAL_VECTORS });
    }
    let mut out = Vec::with_capacity(count);
    for (word, &bits) in minimal.iter().enumerate() {
        let mut bits = bits;
        while bits != 0 {
            out.push(word as u64 * 64 + u64::from(bits.trailing_zeros()));
            bits &= bits - 1;
        }
    }
    Ok(out)
}

/// The input vector (values by input) of an on-set of `kind`'s network.
pub fn on_set_vector(kind: NetworkKind, on_set: u64, input_count: usize) -> Vec<bool> {
    (0..input_count).map(|i| (on_set >> i & 1 == 1) == kind.conducts(true)).collect()
}

/// Size `network` exactly: the least total W/L such that every input vector under which it
/// conducts has an effective resistance of at most `target` (in units of R), where a device of W/L
/// `w` has resistance `unit_resistance / w` (1 for NMOS, the mobility ratio for PMOS), and no
/// device is below its `lower` bound (W/L; 0 for none, or the process's minimum width).
///
/// `input_of[k]` is device `k`'s input, of `input_count`. The solver starts from the min-area
/// closed form of [`crate::sizing`] (it meets every lone path, so every vector) scaled up 1%.
pub fn size_network(
    network: &Network,
    input_count: usize,
    unit_resistance: f64,
    target: f64,
    lower: &[f64],
    budget: Budget,
) -> Result<ExactSizing, ExactError> {
    let name = network.kind.name();
    let input_of = &network.inputs;
    if !(unit_resistance > 0.0 && unit_resistance.is_finite() && target > 0.0 && target.is_finite()) {
        return Err(ExactError::Bad(format!(
            "unit resistance {unit_resistance} and target {target} must be positive and finite"
        )));
    }
    if lower.len() != input_of.len() || lower.iter().any(|l| !(*l >= 0.0 && l.is_finite())) {
        return Err(ExactError::Bad(format!(
            "{} lower bounds for {} devices: one per device, each finite and at least 0",
            lower.len(),
            input_of.len()
        )));
    }
    if input_of.len() > MAX_DEVICES {
        return Err(ExactError::TooManyDevices { network: name, count: input_of.len(), limit: MAX_DEVICES });
    }
    let on_sets = minimal_on_sets(network, input_count)?;

    // One constraint per minimal on-set, over the devices on a conducting path under it.
    let device_count = input_of.len();
    let mut parts = Vec::with_capacity(on_sets.len());
    let mut on = vec![false; device_count];
    for &on_set in &on_sets {
        for (device, &input) in input_of.iter().enumerate() {
            on[device] = on_set >> input & 1 == 1;
        }
        let mut devices = Vec::new();
        let part = prune(&network.root, &on, &mut devices).expect("a minimal on-set conducts");
        parts.push((part, devices));
    }
    // Variables: the devices some constraint touches; the rest stay at their lower bound.
    let mut variable_of = vec![usize::MAX; device_count];
    let mut device_of = Vec::new();
    for (_, devices) in &parts {
        for &d in devices {
            if variable_of[d] == usize::MAX {
                variable_of[d] = device_of.len();
                device_of.push(d);
            }
        }
    }
    let scale = target / unit_resistance;
    let constraints: Vec<VectorConstraint> = parts
        .into_iter()
        .map(|(part, devices)| VectorConstraint {
            variables: devices.iter().map(|&d| variable_of[d]).collect(),
            part,
            scale,
        })
        .collect();

    // Start: the closed form (unit reference width, then scaled to this target), 1% up.
    let closed = rules::widths(network, Rule::MinArea, 1.0);
    let start: Vec<f64> = device_of.iter().map(|&d| 1.01 * (closed[d] / scale).max(lower[d])).collect();
    let variable_lower: Vec<f64> = device_of.iter().map(|&d| lower[d]).collect();
    let upper = vec![f64::INFINITY; device_of.len()];
    let terms: Vec<(usize, f64)> = (0..device_of.len()).map(|v| (v, 1.0)).collect();
    let objective = Linear::new(&terms, 0.0);
    let program = Program { objective: &objective, constraints: &constraints, lower: &variable_lower, upper: &upper };
    let solution = match optimize::solve(&program, &start, &Settings::default(), budget) {
        Ok(Outcome::Optimal(solution)) => solution,
        Ok(Outcome::Infeasible { least_worst, .. }) => {
            return Err(ExactError::NotConverged {
                network: name,
                reason: format!("the solver found no feasible point (least worst constraint {least_worst:.3e})"),
            });
        }
        Err(SolveError::OverBudget { budget }) => return Err(ExactError::OverBudget { network: name, budget }),
        Err(SolveError::Bad(reason)) => return Err(ExactError::Bad(reason)),
        Err(other) => return Err(ExactError::NotConverged { network: name, reason: other.to_string() }),
    };

    let mut widths = lower.to_vec();
    for (v, &d) in device_of.iter().enumerate() {
        widths[d] = solution.x[v];
    }
    let resistances: Vec<f64> =
        constraints.iter().map(|c| unit_resistance / conductance(&c.part, &solution.x, &c.variables)).collect();
    let worst_resistance = resistances.iter().copied().fold(0.0, f64::max);
    let mut binding: Vec<u64> = on_sets
        .iter()
        .zip(&resistances)
        .filter(|(_, r)| **r >= worst_resistance * (1.0 - BINDING_TOLERANCE))
        .map(|(&on_set, _)| vector_number(network.kind, on_set, input_count))
        .collect();
    binding.sort_unstable();
    Ok(ExactSizing {
        total: widths.iter().sum(),
        widths,
        worst_resistance,
        binding: binding.into_iter().map(|v| (0..input_count).map(|i| v >> i & 1 == 1).collect()).collect(),
        minimal_vectors: on_sets.len(),
        gap: solution.gap,
        iterations: solution.iterations,
        work: solution.work,
    })
}

/// The number of the input vector of an on-set (input `i` is bit `i`).
fn vector_number(kind: NetworkKind, on_set: u64, input_count: usize) -> u64 {
    let all = if input_count == 64 { u64::MAX } else { (1u64 << input_count) - 1 };
    if kind.conducts(true) { on_set } else { !on_set & all }
}

/// Inputs within the limit, every device's input in range, every device of the tree listed once
/// in `input_of`.
fn check_network(network: &Network, input_count: usize) -> Result<(), ExactError> {
    let input_of = &network.inputs;
    if input_count > MAX_INPUTS {
        return Err(ExactError::TooManyInputs { count: input_count, limit: MAX_INPUTS });
    }
    if let Some(bad) = input_of.iter().find(|&&i| i >= input_count) {
        return Err(ExactError::Bad(format!("device input {bad} is not below the input count {input_count}")));
    }
    fn walk(node: &Node, seen: &mut [bool]) -> Result<(), ExactError> {
        match node {
            Node::Device(index) => match seen.get_mut(*index) {
                Some(seen) if !*seen => {
                    *seen = true;
                    Ok(())
                }
                _ => Err(ExactError::Bad(format!("device {index} has no input or appears twice"))),
            },
            Node::Series(members) | Node::Parallel(members) if members.is_empty() => {
                Err(ExactError::Bad("a series or parallel group has no members".into()))
            }
            Node::Series(members) | Node::Parallel(members) => members.iter().try_for_each(|m| walk(m, seen)),
        }
    }
    walk(&network.root, &mut vec![false; input_of.len()])
}

/// The part of the tree that conducts under one on-set, with its devices numbered locally in tree
/// order, so that every subtree holds a contiguous range `start..end` of them.
#[derive(Debug, Clone)]
struct Part {
    start: usize,
    end: usize,
    shape: Shape,
}

#[derive(Debug, Clone)]
enum Shape {
    Device,
    Series(Vec<Part>),
    Parallel(Vec<Part>),
}

/// What of `node` conducts under `on`: open branches dropped, a series with an open member open,
/// groups of one collapsed. Its devices are pushed onto `devices` (local index = position).
fn prune(node: &Node, on: &[bool], devices: &mut Vec<usize>) -> Option<Part> {
    let start = devices.len();
    match node {
        Node::Device(index) => on[*index].then(|| {
            devices.push(*index);
            Part { start, end: start + 1, shape: Shape::Device }
        }),
        Node::Series(members) => {
            let mut parts = Vec::with_capacity(members.len());
            for member in members {
                match prune(member, on, devices) {
                    Some(part) => parts.push(part),
                    None => {
                        devices.truncate(start);
                        return None;
                    }
                }
            }
            Some(if parts.len() == 1 {
                parts.remove(0)
            } else {
                Part { start, end: devices.len(), shape: Shape::Series(parts) }
            })
        }
        Node::Parallel(branches) => {
            let mut parts: Vec<Part> = branches.iter().filter_map(|b| prune(b, on, devices)).collect();
            match parts.len() {
                0 => None,
                1 => parts.pop(),
                _ => Some(Part { start, end: devices.len(), shape: Shape::Parallel(parts) }),
            }
        }
    }
}

/// Effective conductance of a conducting part, in units of W/L (device conductance = its W/L);
/// `variables[j]` is local device `j`'s variable in `x`.
fn conductance(part: &Part, x: &[f64], variables: &[usize]) -> f64 {
    match &part.shape {
        Shape::Device => x[variables[part.start]],
        Shape::Parallel(branches) => branches.iter().map(|b| conductance(b, x, variables)).sum(),
        Shape::Series(members) => 1.0 / members.iter().map(|m| 1.0 / conductance(m, x, variables)).sum::<f64>(),
    }
}

/// Effective conductance with its gradient (over local devices, into `gradient[part.start..part.end]`)
/// and, where given, its Hessian (`k x k` row-major over all `k` local devices, block
/// `part.start..part.end` written; the caller zeroes it first).
///
/// Series, with `G = 1 / sum(1 / G_i)`, `w_i = (G / G_i)^2 = dG / dG_i` and `u_i` the gradient of
/// `G_i`: the gradient is `q = sum w_i u_i`, and since `d2G / dG_i dG_j = 2 w_i w_j / G - 2 w_i /
/// G_i [i = j]` the Hessian is `sum_i (w_i H_i - 2 (w_i / G_i) u_i u_i^T) + (2 / G) q q^T`.
fn derivatives(
    part: &Part,
    x: &[f64],
    variables: &[usize],
    gradient: &mut [f64],
    mut hessian: Option<&mut [f64]>,
    k: usize,
) -> f64 {
    match &part.shape {
        Shape::Device => {
            gradient[part.start] = 1.0;
            x[variables[part.start]]
        }
        Shape::Parallel(branches) => {
            branches.iter().map(|b| derivatives(b, x, variables, gradient, hessian.as_deref_mut(), k)).sum()
        }
        Shape::Series(members) => {
            let values: Vec<f64> =
                members.iter().map(|m| derivatives(m, x, variables, gradient, hessian.as_deref_mut(), k)).collect();
            let total = 1.0 / values.iter().map(|g| 1.0 / g).sum::<f64>();
            for (member, g) in members.iter().zip(&values) {
                let weight = (total / g).powi(2);
                let range = member.start..member.end;
                if let Some(hessian) = hessian.as_deref_mut() {
                    let curvature = 2.0 * weight / g;
                    for a in range.clone() {
                        for b in range.clone() {
                            hessian[a * k + b] = weight * hessian[a * k + b] - curvature * gradient[a] * gradient[b];
                        }
                    }
                }
                for value in &mut gradient[range] {
                    *value *= weight;
                }
            }
            if let Some(hessian) = hessian {
                let coupling = 2.0 / total;
                for a in part.start..part.end {
                    for b in part.start..part.end {
                        hessian[a * k + b] += coupling * gradient[a] * gradient[b];
                    }
                }
            }
            total
        }
    }
}

/// `1 - scale G_v(x) <= 0`: one minimal vector meets the target (`scale` = target / unit resistance).
struct VectorConstraint {
    variables: Vec<usize>,
    part: Part,
    scale: f64,
}

impl Smooth for VectorConstraint {
    fn variables(&self) -> &[usize] {
        &self.variables
    }

    fn evaluate(&self, x: &[f64], gradient: Option<&mut [f64]>, hessian: Option<&mut [f64]>) -> f64 {
        let k = self.variables.len();
        let Some(gradient) = gradient else { return 1.0 - self.scale * conductance(&self.part, x, &self.variables) };
        let mut hessian = hessian;
        if let Some(h) = hessian.as_deref_mut() {
            h.fill(0.0);
        }
        let g = derivatives(&self.part, x, &self.variables, gradient, hessian.as_deref_mut(), k);
        for value in gradient.iter_mut() {
            *value *= -self.scale;
        }
        if let Some(hessian) = hessian {
            for value in hessian.iter_mut() {
                *value *= -self.scale;
            }
        }
        1.0 - self.scale * g
    }
}

#[cfg(test)]
mod tests {
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

        for (unit, target, lower) in [(0.0, 1.0, vec![0.0; 5]), (2.0, f64::NAN, vec![0.0; 5]), (2.0, 1.0, vec![0.0; 4])]
        {
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
}
