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
mod tests;
