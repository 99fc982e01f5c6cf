//! Geometric programs: minimise a posynomial subject to posynomials `<= 1` and a box on every
//! variable. In log variables `y = ln x` each posynomial becomes a log-sum-exp of affine functions,
//! which is convex, so an interior-point method finds the global optimum: phase I finds a strictly
//! feasible point (or shows there is none) by minimising the largest constraint, phase II minimises
//! the objective. Both are primal-dual (Boyd & Vandenberghe, "Convex Optimization", 2004, section
//! 11.7): Newton steps on the perturbed KKT conditions, a dense Cholesky factorisation of the reduced
//! system, and a backtracking line search on the residual that keeps every iterate strictly inside.
//! Hard constraints hold strictly at the start and phase I keeps them at `<= 1` rather than relaxing
//! them, so the least worst value it reports is over the points that meet them.

// Dense linear algebra reads best with explicit indices.
#![allow(clippy::needless_range_loop)]

use crate::budget::{Estimate, Meter, OverBudget, Work};

/// `coefficient x prod x_k ^ exponent_k`.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Monomial {
    /// Positive coefficient.
    pub coefficient: f64,
    /// (variable, exponent) pairs.
    pub exponents: Vec<(usize, f64)>,
}

/// A sum of monomials.
#[derive(Debug, Clone, PartialEq, Default, serde::Serialize)]
pub struct Posynomial {
    /// Its terms.
    pub terms: Vec<Monomial>,
}

impl Posynomial {
    /// Its value at `x`.
    pub fn value(&self, x: &[f64]) -> f64 {
        self.terms.iter().map(|t| t.coefficient * t.exponents.iter().map(|&(k, e)| x[k].powf(e)).product::<f64>()).sum()
    }
}

/// A geometric program: minimise `objective` subject to every constraint `<= 1` and
/// `lower <= x <= upper`, from `start` (inside the box).
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Program {
    /// Number of variables.
    pub variables: usize,
    /// What to minimise.
    pub objective: Posynomial,
    /// Each must be at most 1.
    pub constraints: Vec<Posynomial>,
    /// Each must be at most 1 too, and already is (strictly) at the start: phase I keeps them so
    /// instead of relaxing them with the others, and an infeasible program's least worst value is
    /// over `constraints` alone.
    pub hard: Vec<Posynomial>,
    /// Lower bound of each variable, positive.
    pub lower: Vec<f64>,
    /// Upper bound of each variable.
    pub upper: Vec<f64>,
    /// Where the search starts, strictly inside the box.
    pub start: Vec<f64>,
}

/// What the solver found.
#[derive(Debug, Clone, PartialEq)]
pub enum Outcome {
    /// The optimum.
    Optimal {
        /// The variables.
        x: Vec<f64>,
        /// The objective there.
        objective: f64,
        /// Variables within a hair of their box bound (the box, not the constraints, holds them).
        at_bound: Vec<usize>,
    },
    /// No point of the box meets every constraint.
    Infeasible {
        /// The least, over the box, of the largest constraint value (above 1).
        least_worst: f64,
        /// The constraint that reaches it there.
        worst_constraint: usize,
    },
}

/// Why the solver stopped.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SolveError {
    /// Inconsistent input.
    #[error("bad program: {0}")]
    Bad(String),
    /// A Newton system that could not be factorised.
    #[error("the Newton system is singular")]
    Singular,
    /// No convergence within the iteration limit.
    #[error("no convergence within the iteration limit")]
    Stalled,
    /// More work than the budget allows.
    #[error("{0}")]
    OverBudget(OverBudget),
}

impl From<OverBudget> for SolveError {
    fn from(over: OverBudget) -> SolveError {
        SolveError::OverBudget(over)
    }
}

/// A posynomial in log variables: terms `exp(b + a . y)`.
struct LogSum {
    terms: Vec<(f64, Vec<(usize, f64)>)>,
    touched: Vec<usize>,
}

impl LogSum {
    fn new(posynomial: &Posynomial) -> LogSum {
        let terms: Vec<(f64, Vec<(usize, f64)>)> =
            posynomial.terms.iter().map(|t| (t.coefficient.ln(), t.exponents.clone())).collect();
        let mut touched: Vec<usize> = terms.iter().flat_map(|(_, a)| a.iter().map(|&(k, _)| k)).collect();
        touched.sort_unstable();
        touched.dedup();
        LogSum { terms, touched }
    }

    fn exponents(&self, y: &[f64]) -> Vec<f64> {
        self.terms.iter().map(|(b, a)| b + a.iter().map(|&(k, e)| e * y[k]).sum::<f64>()).collect()
    }

    /// `ln sum exp(z)`, stably.
    fn value(&self, y: &[f64]) -> f64 {
        let z = self.exponents(y);
        let top = z.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        top + z.iter().map(|v| (v - top).exp()).sum::<f64>().ln()
    }

    /// Value, gradient (dense) and the term weights.
    fn derivatives(&self, y: &[f64], n: usize) -> (f64, Vec<f64>, Vec<f64>) {
        let z = self.exponents(y);
        let top = z.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let weights: Vec<f64> = z.iter().map(|v| (v - top).exp()).collect();
        let total: f64 = weights.iter().sum();
        let weights: Vec<f64> = weights.iter().map(|w| w / total).collect();
        let mut gradient = vec![0.0; n];
        for ((_, a), w) in self.terms.iter().zip(&weights) {
            for &(k, e) in a {
                gradient[k] += w * e;
            }
        }
        (top + total.ln(), gradient, weights)
    }

    /// Add `scale x Hessian + outer x g g^T` to `hessian` (n x n, row-major).
    fn add_hessian(&self, weights: &[f64], gradient: &[f64], scale: f64, outer: f64, hessian: &mut [f64], n: usize) {
        for ((_, a), w) in self.terms.iter().zip(weights) {
            for &(i, ei) in a {
                for &(j, ej) in a {
                    hessian[i * n + j] += scale * w * ei * ej;
                }
            }
        }
        let rank_one = outer - scale;
        for &i in &self.touched {
            for &j in &self.touched {
                hessian[i * n + j] += rank_one * gradient[i] * gradient[j];
            }
        }
    }
}

/// One phase of the interior-point method: minimise the objective (phase II) or the slack `s`
/// (phase I, variable `n`, constraints read `F_i(y) - s <= 0`), with the box as linear constraints.
struct Problem<'a> {
    meter: &'a Meter,
    /// Work units of one Newton step and of one line-search trial ([`step_work`]).
    work: (u128, u128),
    objective: &'a LogSum,
    constraints: &'a [LogSum],
    /// How many of `constraints` (the first ones) phase I relaxes by `s`; the rest are hard.
    soft: usize,
    lower: &'a [f64],
    upper: &'a [f64],
    phase_one: bool,
    n: usize,
}

/// How a phase ended.
enum Finish {
    /// Surrogate gap and dual residual below tolerance.
    Converged,
    /// The phase's own early stop (phase I: a point with margin was found).
    Early,
}

impl Problem<'_> {
    fn size(&self) -> usize {
        self.n + usize::from(self.phase_one)
    }

    fn count(&self) -> usize {
        self.constraints.len() + 2 * self.n
    }

    fn slack(&self, z: &[f64]) -> f64 {
        if self.phase_one { z[self.n] } else { 0.0 }
    }

    /// Every constraint value `G_i(z)` (posynomials, then `y - upper`, then `lower - y`); the
    /// domain is where all are negative.
    fn values(&self, z: &[f64]) -> Vec<f64> {
        let s = self.slack(z);
        let mut values: Vec<f64> = self
            .constraints
            .iter()
            .enumerate()
            .map(|(i, c)| c.value(z) - if i < self.soft { s } else { 0.0 })
            .collect();
        values.extend((0..self.n).map(|j| z[j] - self.upper[j]));
        values.extend((0..self.n).map(|j| self.lower[j] - z[j]));
        values
    }

    fn inside(values: &[f64]) -> bool {
        values.iter().all(|v| *v < 0.0)
    }

    /// Gradient of the objective, with the log-sum-exp's term weights in phase II.
    fn objective_gradient(&self, z: &[f64]) -> (Vec<f64>, Vec<f64>) {
        let size = self.size();
        if self.phase_one {
            let mut gradient = vec![0.0; size];
            gradient[self.n] = 1.0;
            (gradient, Vec::new())
        } else {
            let (_, gradient, weights) = self.objective.derivatives(z, size);
            (gradient, weights)
        }
    }

    /// Gradients and term weights of the posynomial constraints (with -1 on `s` in phase I, soft
    /// constraints only).
    fn constraint_gradients(&self, z: &[f64]) -> Vec<(Vec<f64>, Vec<f64>)> {
        let size = self.size();
        self.constraints
            .iter()
            .enumerate()
            .map(|(i, c)| {
                let (_, mut gradient, weights) = c.derivatives(z, size);
                if self.phase_one && i < self.soft {
                    gradient[self.n] = -1.0;
                }
                (gradient, weights)
            })
            .collect()
    }

    /// The residual `(grad f + sum lambda_i grad G_i, -lambda_i G_i - 1/t)` and its norm.
    fn residual(&self, z: &[f64], lambda: &[f64], t: f64, values: &[f64]) -> (Vec<f64>, f64) {
        let (mut dual, _) = self.objective_gradient(z);
        for ((gradient, _), l) in self.constraint_gradients(z).iter().zip(lambda) {
            for (d, g) in dual.iter_mut().zip(gradient) {
                *d += l * g;
            }
        }
        let m = self.constraints.len();
        for j in 0..self.n {
            dual[j] += lambda[m + j] - lambda[m + self.n + j];
        }
        let central: f64 = values.iter().zip(lambda).map(|(g, l)| (-l * g - 1.0 / t).powi(2)).sum();
        let norm = (dual.iter().map(|d| d * d).sum::<f64>() + central).sqrt();
        (dual, norm)
    }

    /// The primal-dual Newton direction at `t`.
    fn direction(&self, z: &[f64], lambda: &[f64], t: f64, values: &[f64]) -> Result<(Vec<f64>, Vec<f64>), SolveError> {
        let size = self.size();
        let n = self.n;
        let m = self.constraints.len();
        let mut hessian = vec![0.0; size * size];
        let (objective_gradient, objective_weights) = self.objective_gradient(z);
        if !self.phase_one {
            self.objective.add_hessian(&objective_weights, &objective_gradient, 1.0, 0.0, &mut hessian, size);
        }
        // Right-hand side: -(grad f + (1/t) sum grad G_i / (-G_i)).
        let mut right: Vec<f64> = objective_gradient.iter().map(|g| -g).collect();
        let gradients = self.constraint_gradients(z);
        for (i, (c, (gradient, weights))) in self.constraints.iter().zip(&gradients).enumerate() {
            let distance = -values[i];
            let outer = lambda[i] / distance;
            c.add_hessian(weights, gradient, lambda[i], outer, &mut hessian, size);
            if self.phase_one && i < self.soft {
                for &k in &c.touched {
                    hessian[k * size + n] -= outer * gradient[k];
                    hessian[n * size + k] -= outer * gradient[k];
                }
                hessian[n * size + n] += outer;
            }
            for k in c.touched.iter().copied().chain(self.phase_one.then_some(n)) {
                right[k] -= gradient[k] / (t * distance);
            }
        }
        for j in 0..n {
            let (above, below) = (-values[m + j], -values[m + n + j]);
            hessian[j * size + j] += lambda[m + j] / above + lambda[m + n + j] / below;
            right[j] -= (1.0 / above - 1.0 / below) / t;
        }
        let step = solve_spd(hessian, &right, size)?;
        // d lambda_i = -lambda_i - 1 / (t G_i) - lambda_i (grad G_i . dz) / G_i
        let mut dual_step = Vec::with_capacity(values.len());
        for (i, (gradient, _)) in gradients.iter().enumerate() {
            let along: f64 = gradient.iter().zip(&step).map(|(g, d)| g * d).sum();
            dual_step.push(-lambda[i] - 1.0 / (t * values[i]) - lambda[i] * along / values[i]);
        }
        for j in 0..n {
            for (offset, sign) in [(m, 1.0), (m + n, -1.0)] {
                let i = offset + j;
                dual_step.push(-lambda[i] - 1.0 / (t * values[i]) - lambda[i] * sign * step[j] / values[i]);
            }
        }
        // The box duals were pushed interleaved (upper, lower per variable): put them in order.
        let box_duals = dual_step.split_off(m);
        dual_step.extend(box_duals.iter().step_by(2));
        dual_step.extend(box_duals.iter().skip(1).step_by(2));
        Ok((step, dual_step))
    }

    /// Primal-dual interior-point iterations from a strictly feasible `z`.
    fn run(&self, z: &mut [f64], early: impl Fn(&[f64]) -> bool) -> Result<Finish, SolveError> {
        let values = self.values(z);
        if !Self::inside(&values) {
            return Err(SolveError::Bad("the start is not strictly feasible".into()));
        }
        let mut lambda: Vec<f64> = values.iter().map(|g| -1.0 / g).collect();
        let count = self.count() as f64;
        for _ in 0..ITERATIONS {
            self.meter.charge(self.work.0, Work::Elmore)?;
            let values = self.values(z);
            if early(z) {
                return Ok(Finish::Early);
            }
            let gap: f64 = -values.iter().zip(&lambda).map(|(g, l)| g * l).sum::<f64>();
            let t = GROWTH * count / gap;
            let (dual, norm) = self.residual(z, &lambda, t, &values);
            if gap <= GAP && dual.iter().map(|d| d * d).sum::<f64>().sqrt() <= DUAL_TOLERANCE {
                return Ok(Finish::Converged);
            }
            let (step, dual_step) = self.direction(z, &lambda, t, &values)?;
            let mut length: f64 = 1.0;
            for (l, d) in lambda.iter().zip(&dual_step) {
                if *d < 0.0 {
                    length = length.min(-l / d);
                }
            }
            length *= 0.99;
            let mut trial = z.to_vec();
            let mut trial_lambda = lambda.clone();
            loop {
                self.meter.charge(self.work.1, Work::Elmore)?;
                for k in 0..z.len() {
                    trial[k] = z[k] + length * step[k];
                }
                for (i, l) in trial_lambda.iter_mut().enumerate() {
                    *l = lambda[i] + length * dual_step[i];
                }
                let trial_values = self.values(&trial);
                if Self::inside(&trial_values) && trial_values.iter().all(|v| v.is_finite()) {
                    let (_, trial_norm) = self.residual(&trial, &trial_lambda, t, &trial_values);
                    if trial_norm <= (1.0 - 0.01 * length) * norm {
                        break;
                    }
                }
                length *= 0.5;
                if length < 1e-14 {
                    // No progress at this precision: as close as rounding allows.
                    return Ok(Finish::Converged);
                }
            }
            z.copy_from_slice(&trial);
            lambda = trial_lambda;
        }
        Err(SolveError::Stalled)
    }
}

/// Solve `a x = b` for a symmetric positive definite `a` (n x n, row-major) by Cholesky, with a
/// growing diagonal shift where rounding leaves it indefinite.
pub fn solve_spd(a: Vec<f64>, b: &[f64], n: usize) -> Result<Vec<f64>, SolveError> {
    let largest = (0..n).map(|i| a[i * n + i].abs()).fold(0.0, f64::max).max(1e-300);
    let mut shift = 0.0;
    for _ in 0..12 {
        if let Some(l) = cholesky(&a, n, shift) {
            let mut y = b.to_vec();
            for i in 0..n {
                for k in 0..i {
                    y[i] -= l[i * n + k] * y[k];
                }
                y[i] /= l[i * n + i];
            }
            for i in (0..n).rev() {
                for k in i + 1..n {
                    y[i] -= l[k * n + i] * y[k];
                }
                y[i] /= l[i * n + i];
            }
            if y.iter().all(|v| v.is_finite()) {
                return Ok(y);
            }
        }
        shift = if shift == 0.0 { largest * 1e-14 } else { shift * 100.0 };
    }
    Err(SolveError::Singular)
}

fn cholesky(a: &[f64], n: usize, shift: f64) -> Option<Vec<f64>> {
    let mut l = vec![0.0; n * n];
    for i in 0..n {
        for j in 0..=i {
            let mut sum = a[i * n + j] + if i == j { shift } else { 0.0 };
            for k in 0..j {
                sum -= l[i * n + k] * l[j * n + k];
            }
            if i == j {
                if sum.is_nan() || sum <= 0.0 {
                    return None;
                }
                l[i * n + i] = sum.sqrt();
            } else {
                l[i * n + j] = sum / l[j * n + j];
            }
        }
    }
    Some(l)
}

/// Relative accuracy of the optimum: the surrogate duality gap on the log objective.
const GAP: f64 = 1e-10;
/// Largest dual residual accepted at the optimum.
const DUAL_TOLERANCE: f64 = 1e-8;
/// How far each iteration aims along the central path (mu in t = mu m / gap).
const GROWTH: f64 = 10.0;
/// Most iterations per phase.
const ITERATIONS: usize = 300;
/// Most Newton steps of a solve: both phases at their limit.
pub const MAX_NEWTON_STEPS: u128 = 2 * ITERATIONS as u128;

/// Work units (multiply-adds, roughly) that one posynomial adds to a Newton step and to a
/// line-search trial, with `variables` variables: its Hessian terms, its value and its dense
/// gradient.
pub fn posynomial_work(posynomial: &Posynomial, variables: usize) -> (u128, u128) {
    let mut touched: Vec<usize> = posynomial.terms.iter().flat_map(|t| t.exponents.iter().map(|&(k, _)| k)).collect();
    touched.sort_unstable();
    touched.dedup();
    let (mut hessian, mut values) = (touched.len() as u128 * touched.len() as u128, 0u128);
    for term in &posynomial.terms {
        let exponents = term.exponents.len() as u128;
        hessian += exponents * exponents;
        values += exponents + 1;
    }
    let gradient = variables as u128 + 1;
    (hessian + values + gradient, values + gradient)
}

/// Work units of one Newton step and of one line-search trial beyond the posynomials': the box's
/// gradients and the Cholesky factorisation, with `variables` variables (phase I adds one).
pub fn base_work(variables: usize) -> (u128, u128) {
    let n = variables as u128 + 1;
    (2 * n * n + n * n * n / 3, 2 * n * n)
}

/// Work units of one Newton step and of one line-search trial of a program.
pub fn step_work(program: &Program) -> (u128, u128) {
    let n = program.variables;
    std::iter::once(&program.objective).chain(&program.constraints).chain(&program.hard).fold(
        base_work(n),
        |(step, trial), posynomial| {
            let (s, t) = posynomial_work(posynomial, n);
            (step + s, trial + t)
        },
    )
}

/// Solve a geometric program (no work budget).
pub fn solve(program: &Program) -> Result<Outcome, SolveError> {
    solve_within(program, &Meter::unlimited())
}

/// Solve a geometric program within the work budget of `meter`: refused at once if its Newton steps,
/// as many as the iteration limit allows, would pass the whole budget ([`step_work`] x
/// [`MAX_NEWTON_STEPS`]), and stopped if the steps it takes pass what is left.
pub fn solve_within(program: &Program, meter: &Meter) -> Result<Outcome, SolveError> {
    let n = program.variables;
    if program.lower.len() != n || program.upper.len() != n || program.start.len() != n {
        return Err(SolveError::Bad("bounds and start must have one value per variable".into()));
    }
    let positive = |p: &Posynomial| {
        p.terms.iter().all(|t| {
            t.coefficient > 0.0 && t.coefficient.is_finite() && t.exponents.iter().all(|&(k, e)| k < n && e.is_finite())
        })
    };
    if !positive(&program.objective)
        || !program.constraints.iter().chain(&program.hard).all(positive)
        || program.objective.terms.is_empty()
    {
        return Err(SolveError::Bad("coefficients must be positive and finite, variables in range".into()));
    }
    let lower: Vec<f64> = program.lower.iter().map(|v| v.ln()).collect();
    let upper: Vec<f64> = program.upper.iter().map(|v| v.ln()).collect();
    let mut y: Vec<f64> = program.start.iter().map(|v| v.ln()).collect();
    if (0..n).any(|j| !(lower[j] < y[j] && y[j] < upper[j])) {
        return Err(SolveError::Bad("the start must lie strictly inside the box".into()));
    }
    let work = step_work(program);
    meter.fits(work.0.saturating_mul(MAX_NEWTON_STEPS), Estimate::UpTo, Work::Elmore)?;
    let objective = LogSum::new(&program.objective);
    let soft = program.constraints.len();
    let constraints: Vec<LogSum> = program.constraints.iter().chain(&program.hard).map(LogSum::new).collect();
    if constraints[soft..].iter().map(|c| c.value(&y)).any(|v| v.is_nan() || v >= 0.0) {
        return Err(SolveError::Bad("the start must meet every hard constraint strictly".into()));
    }
    // The largest soft constraint and its index.
    let worst = |y: &[f64]| {
        constraints[..soft]
            .iter()
            .enumerate()
            .map(|(i, c)| (i, c.value(y)))
            .fold((0, f64::NEG_INFINITY), |a, b| if b.1 > a.1 { b } else { a })
    };

    let problem = |phase_one| Problem {
        meter,
        work,
        objective: &objective,
        constraints: &constraints,
        soft,
        lower: &lower,
        upper: &upper,
        phase_one,
        n,
    };

    // Phase I: minimise s with F_i(y) <= s, until some y has every F_i clearly below 0.
    if soft > 0 && worst(&y).1 >= -MARGIN {
        let phase = problem(true);
        let mut z = y.clone();
        z.push(worst(&y).1.max(0.0) + 1.0);
        let finish = phase.run(&mut z, |z| worst(&z[..n]).1 < -MARGIN)?;
        let (index, value) = worst(&z[..n]);
        if matches!(finish, Finish::Converged) && value >= -1e-9 {
            return Ok(Outcome::Infeasible { least_worst: value.exp(), worst_constraint: index });
        }
        if value >= 0.0 {
            return Err(SolveError::Stalled);
        }
        y = z[..n].to_vec();
    }

    // Phase II.
    problem(false).run(&mut y, |_| false)?;
    let x: Vec<f64> = y.iter().map(|v| v.exp()).collect();
    let at_bound = (0..n).filter(|&j| y[j] - lower[j] < 1e-6 || upper[j] - y[j] < 1e-6).collect();
    Ok(Outcome::Optimal { objective: program.objective.value(&x), x, at_bound })
}

/// Phase I stops once every constraint is below 1 by this margin (in log terms).
const MARGIN: f64 = 1e-3;

#[cfg(test)]
mod tests {
    use super::*;

    fn monomial(coefficient: f64, exponents: &[(usize, f64)]) -> Monomial {
        Monomial { coefficient, exponents: exponents.to_vec() }
    }

    /// Minimise 1/(x y) with x + y <= 2 (as x/2 + y/2 <= 1), from x = 0.1, y = 5.
    fn box_volume() -> Program {
        Program {
            variables: 2,
            objective: Posynomial { terms: vec![monomial(1.0, &[(0, -1.0), (1, -1.0)])] },
            constraints: vec![Posynomial { terms: vec![monomial(0.5, &[(0, 1.0)]), monomial(0.5, &[(1, 1.0)])] }],
            lower: vec![1e-3; 2],
            upper: vec![1e3; 2],
            start: vec![0.1, 5.0],
            hard: Vec::new(),
        }
    }

    #[test]
    fn box_volume_by_hand() {
        // x = y = 1 by AM-GM (common practice, no source)
        let program = box_volume();
        let Outcome::Optimal { x, objective, at_bound } = solve(&program).unwrap() else { panic!("feasible") };
        assert!((x[0] - 1.0).abs() < 1e-6 && (x[1] - 1.0).abs() < 1e-6, "{x:?}");
        assert!((objective - 1.0).abs() < 1e-8);
        assert!(at_bound.is_empty());
    }

    #[test]
    fn the_solver_keeps_to_its_work_budget() {
        let program = box_volume();
        let (step, trial) = step_work(&program);
        assert!(step > trial && trial > 0);
        // Refused before it starts when its most Newton steps pass the whole budget.
        let most = step * MAX_NEWTON_STEPS;
        let Err(SolveError::OverBudget(over)) = solve_within(&program, &Meter::new(most as u64 - 1)) else {
            panic!("refused")
        };
        assert_eq!(over.needed, Some((crate::budget::Estimate::UpTo, most)));
        // Within it, the steps it takes are counted: a few, far below the most.
        let meter = Meter::new(most as u64);
        assert!(matches!(solve_within(&program, &meter), Ok(Outcome::Optimal { .. })));
        assert!(meter.spent() >= 2 * step && meter.spent() < most / 4, "{} of {most}", meter.spent());
        // Stopped on the way when what is left runs out.
        let meter = Meter::new(most as u64);
        meter.charge(most - step, Work::Elmore).unwrap();
        let Err(SolveError::OverBudget(over)) = solve_within(&program, &meter) else { panic!("stopped") };
        assert_eq!(over.needed, None);
    }

    #[test]
    fn series_budget_matches_the_closed_form() {
        // Minimise x1 + x2 with 1/x1 + 2/x2 <= 1: Lagrange gives x_i = sqrt(c_i) (sqrt 1 + sqrt 2),
        // total (1 + sqrt 2)^2 (the min-area series rule; common practice, no source)
        let program = Program {
            variables: 2,
            objective: Posynomial { terms: vec![monomial(1.0, &[(0, 1.0)]), monomial(1.0, &[(1, 1.0)])] },
            constraints: vec![Posynomial { terms: vec![monomial(1.0, &[(0, -1.0)]), monomial(2.0, &[(1, -1.0)])] }],
            lower: vec![1e-3; 2],
            upper: vec![1e3; 2],
            start: vec![1.0, 1.0],
            hard: Vec::new(),
        };
        let Outcome::Optimal { objective, .. } = solve(&program).unwrap() else { panic!("feasible") };
        assert!((objective - (1.0 + 2f64.sqrt()).powi(2)).abs() < 1e-7, "{objective}");
    }

    #[test]
    fn infeasible_programs_say_by_how_much() {
        // 2 + 1/x <= 1 never holds; over the box the least worst value tends to 2 (by hand)
        let program = Program {
            variables: 1,
            objective: Posynomial { terms: vec![monomial(1.0, &[(0, 1.0)])] },
            constraints: vec![Posynomial { terms: vec![monomial(2.0, &[]), monomial(1.0, &[(0, -1.0)])] }],
            lower: vec![1e-3],
            upper: vec![1e3],
            start: vec![1.0],
            hard: Vec::new(),
        };
        let Outcome::Infeasible { least_worst, worst_constraint } = solve(&program).unwrap() else {
            panic!("infeasible")
        };
        assert_eq!(worst_constraint, 0);
        assert!((least_worst - 2.001).abs() < 1e-4, "{least_worst}");
    }

    #[test]
    fn hard_constraints_are_not_relaxed_in_phase_one() {
        // 2 t / x <= 1 cannot hold for any x <= 1, so the program is infeasible; with t >= 1 hard
        // (1 / t <= 1) the least worst value of the soft constraint over x in the box [1e-3, 1] is
        // 2 t / x at x = 1 and t = 1: 2. Relaxing the hard one too would let t drop to sqrt(1/2) and
        // report sqrt 2 instead (worked by hand; no published source).
        let program = Program {
            variables: 2,
            objective: Posynomial { terms: vec![monomial(1.0, &[(0, 1.0)])] },
            constraints: vec![Posynomial { terms: vec![monomial(2.0, &[(1, 1.0), (0, -1.0)])] }],
            hard: vec![Posynomial { terms: vec![monomial(1.0, &[(1, -1.0)])] }],
            lower: vec![1e-3, 1e-3],
            upper: vec![1.0, 1e3],
            start: vec![0.5, 2.0],
        };
        let Outcome::Infeasible { least_worst, worst_constraint } = solve(&program).unwrap() else {
            panic!("infeasible")
        };
        assert_eq!(worst_constraint, 0);
        assert!((least_worst - 2.0).abs() < 1e-3, "{least_worst}");
        // A start that breaks a hard constraint is refused.
        let broken = Program { start: vec![0.5, 0.5], ..program };
        assert!(matches!(solve(&broken), Err(SolveError::Bad(_))));
    }
}
