//! Geometric programs: minimise a posynomial subject to posynomials `<= 1` and a box on every
//! variable. In log variables `y = ln x` each posynomial becomes a log-sum-exp of affine functions,
//! which is convex, so a log-barrier interior-point method finds the global optimum: phase I finds
//! a strictly feasible point (or shows there is none), phase II follows the central path with Newton
//! steps, a dense Cholesky factorisation and a backtracking line search.

// Dense linear algebra reads best with explicit indices.
#![allow(clippy::needless_range_loop)]

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

/// What the barrier minimises: the objective (phase II) or the slack variable (phase I).
struct Barrier<'a> {
    objective: &'a LogSum,
    constraints: &'a [LogSum],
    lower: &'a [f64],
    upper: &'a [f64],
    /// Phase I: variable `n` is the slack `s`, constraints read `F_i(y) - s <= 0`, minimise `s`.
    phase_one: bool,
    n: usize,
}

impl Barrier<'_> {
    fn size(&self) -> usize {
        self.n + usize::from(self.phase_one)
    }

    fn slack(&self, z: &[f64]) -> f64 {
        if self.phase_one { z[self.n] } else { 0.0 }
    }

    /// The barrier value at `z`, or `None` outside the domain.
    fn value(&self, z: &[f64], t: f64) -> Option<f64> {
        let mut total = if self.phase_one { t * z[self.n] } else { t * self.objective.value(z) };
        let s = self.slack(z);
        for c in self.constraints {
            let g = c.value(z) - s;
            if g.is_nan() || g >= 0.0 {
                return None;
            }
            total -= (-g).ln();
        }
        for j in 0..self.n {
            let (above, below) = (self.upper[j] - z[j], z[j] - self.lower[j]);
            if !(above > 0.0 && below > 0.0) {
                return None;
            }
            total -= above.ln() + below.ln();
        }
        Some(total)
    }

    /// Gradient and Hessian at a point of the domain.
    fn derivatives(&self, z: &[f64], t: f64) -> (Vec<f64>, Vec<f64>) {
        let size = self.size();
        let n = self.n;
        let mut gradient = vec![0.0; size];
        let mut hessian = vec![0.0; size * size];
        if self.phase_one {
            gradient[n] += t;
        } else {
            let (_, g, w) = self.objective.derivatives(z, size);
            for k in 0..size {
                gradient[k] += t * g[k];
            }
            self.objective.add_hessian(&w, &g, t, 0.0, &mut hessian, size);
        }
        let s = self.slack(z);
        for c in self.constraints {
            let (value, mut g, w) = c.derivatives(z, size);
            let slack = s - value; // > 0
            // d/dz of -ln(slack): grad F / slack (with -1 on s in phase I)
            if self.phase_one {
                g[n] = -1.0;
            }
            for k in c.touched.iter().copied().chain(self.phase_one.then_some(n)) {
                gradient[k] += g[k] / slack;
            }
            // Hessian: hess F / slack + g g^T / slack^2 (the s entry of g is -1, its Hessian part 0).
            c.add_hessian(&w, &g, 1.0 / slack, 1.0 / (slack * slack), &mut hessian, size);
            if self.phase_one {
                let outer = 1.0 / (slack * slack);
                for &i in &c.touched {
                    hessian[i * size + n] += outer * g[i] * g[n];
                    hessian[n * size + i] += outer * g[n] * g[i];
                }
                hessian[n * size + n] += outer;
            }
        }
        for j in 0..n {
            let (above, below) = (self.upper[j] - z[j], z[j] - self.lower[j]);
            gradient[j] += 1.0 / above - 1.0 / below;
            hessian[j * size + j] += 1.0 / (above * above) + 1.0 / (below * below);
        }
        (gradient, hessian)
    }

    /// Newton steps to the centre for this `t`.
    fn center(&self, z: &mut [f64], t: f64) -> Result<(), SolveError> {
        let size = self.size();
        for _ in 0..200 {
            let Some(here) = self.value(z, t) else {
                return Err(SolveError::Bad("left the domain".into()));
            };
            let (gradient, hessian) = self.derivatives(z, t);
            let negative: Vec<f64> = gradient.iter().map(|g| -g).collect();
            let step = solve_spd(hessian, &negative, size)?;
            let decrement: f64 = -gradient.iter().zip(&step).map(|(g, d)| g * d).sum::<f64>();
            if decrement / 2.0 <= 1e-12 {
                return Ok(());
            }
            let mut length = 1.0;
            let mut trial = z.to_vec();
            loop {
                for k in 0..size {
                    trial[k] = z[k] + length * step[k];
                }
                if let Some(there) = self.value(&trial, t)
                    && there <= here - 0.25 * length * decrement
                {
                    break;
                }
                length *= 0.5;
                if length < 1e-16 {
                    return Ok(()); // no further progress at this precision
                }
            }
            z.copy_from_slice(&trial);
        }
        Ok(())
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

/// Relative accuracy of the optimum: the barrier's duality gap on the log objective.
const GAP: f64 = 1e-10;
/// How fast `t` grows between centerings.
const GROWTH: f64 = 20.0;

/// Solve a geometric program.
pub fn solve(program: &Program) -> Result<Outcome, SolveError> {
    let n = program.variables;
    if program.lower.len() != n || program.upper.len() != n || program.start.len() != n {
        return Err(SolveError::Bad("bounds and start must have one value per variable".into()));
    }
    let positive = |p: &Posynomial| {
        p.terms.iter().all(|t| {
            t.coefficient > 0.0 && t.coefficient.is_finite() && t.exponents.iter().all(|&(k, e)| k < n && e.is_finite())
        })
    };
    if !positive(&program.objective) || !program.constraints.iter().all(positive) || program.objective.terms.is_empty()
    {
        return Err(SolveError::Bad("coefficients must be positive and finite, variables in range".into()));
    }
    let lower: Vec<f64> = program.lower.iter().map(|v| v.ln()).collect();
    let upper: Vec<f64> = program.upper.iter().map(|v| v.ln()).collect();
    let mut y: Vec<f64> = program.start.iter().map(|v| v.ln()).collect();
    if (0..n).any(|j| !(lower[j] < y[j] && y[j] < upper[j])) {
        return Err(SolveError::Bad("the start must lie strictly inside the box".into()));
    }
    let objective = LogSum::new(&program.objective);
    let constraints: Vec<LogSum> = program.constraints.iter().map(LogSum::new).collect();
    let worst = |y: &[f64]| {
        constraints
            .iter()
            .enumerate()
            .map(|(i, c)| (i, c.value(y)))
            .fold((0, f64::NEG_INFINITY), |a, b| if b.1 > a.1 { b } else { a })
    };
    let count = (constraints.len() + 2 * n) as f64;

    // Phase I: minimise s with F_i(y) <= s, until some y has every F_i clearly below 0.
    if !constraints.is_empty() && worst(&y).1 >= -1e-7 {
        let barrier = Barrier {
            objective: &objective,
            constraints: &constraints,
            lower: &lower,
            upper: &upper,
            phase_one: true,
            n,
        };
        let mut z = y.clone();
        z.push(worst(&y).1 + 1.0);
        let mut t = 1.0;
        loop {
            barrier.center(&mut z, t)?;
            let (_, value) = worst(&z[..n]);
            if value < -1e-4 {
                break;
            }
            if count / t < GAP {
                if value >= -1e-9 {
                    let (index, value) = worst(&z[..n]);
                    return Ok(Outcome::Infeasible { least_worst: value.exp(), worst_constraint: index });
                }
                break;
            }
            t *= GROWTH;
        }
        y = z[..n].to_vec();
    }

    // Phase II: the central path.
    let barrier =
        Barrier { objective: &objective, constraints: &constraints, lower: &lower, upper: &upper, phase_one: false, n };
    let mut t = 1.0;
    loop {
        barrier.center(&mut y, t)?;
        if count / t < GAP {
            break;
        }
        t *= GROWTH;
    }
    let x: Vec<f64> = y.iter().map(|v| v.exp()).collect();
    let at_bound = (0..n).filter(|&j| y[j] - lower[j] < 1e-6 || upper[j] - y[j] < 1e-6).collect();
    Ok(Outcome::Optimal { objective: program.objective.value(&x), x, at_bound })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn monomial(coefficient: f64, exponents: &[(usize, f64)]) -> Monomial {
        Monomial { coefficient, exponents: exponents.to_vec() }
    }

    #[test]
    fn box_volume_by_hand() {
        // Minimise 1/(x y) with x + y <= 2 (as x/2 + y/2 <= 1): x = y = 1 by AM-GM
        // (common practice, no source)
        let program = Program {
            variables: 2,
            objective: Posynomial { terms: vec![monomial(1.0, &[(0, -1.0), (1, -1.0)])] },
            constraints: vec![Posynomial { terms: vec![monomial(0.5, &[(0, 1.0)]), monomial(0.5, &[(1, 1.0)])] }],
            lower: vec![1e-3; 2],
            upper: vec![1e3; 2],
            start: vec![0.1, 5.0],
        };
        let Outcome::Optimal { x, objective, at_bound } = solve(&program).unwrap() else { panic!("feasible") };
        assert!((x[0] - 1.0).abs() < 1e-6 && (x[1] - 1.0).abs() < 1e-6, "{x:?}");
        assert!((objective - 1.0).abs() < 1e-8);
        assert!(at_bound.is_empty());
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
        };
        let Outcome::Infeasible { least_worst, worst_constraint } = solve(&program).unwrap() else {
            panic!("infeasible")
        };
        assert_eq!(worst_constraint, 0);
        assert!((least_worst - 2.001).abs() < 1e-4, "{least_worst}");
    }
}
