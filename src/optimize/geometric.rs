//! Geometric programs: minimise a posynomial subject to posynomials `<= 1` and a box on every
//! variable. In log variables `y = ln x` each posynomial becomes a log-sum-exp of affine functions,
//! which is convex, so an interior-point method finds the global optimum. The main iteration
//! ([`slack`]) is primal-dual with a slack per constraint, so it starts anywhere inside the box and
//! needs no phase I; where it gives up (an infeasible program's multipliers run away), the solver
//! falls back on two strictly feasible phases: phase I finds a strictly feasible point (or shows
//! there is none) by minimising the largest constraint, phase II minimises the objective. Both are
//! primal-dual (Boyd & Vandenberghe, "Convex Optimization", 2004, section 11.7): Newton steps on
//! the perturbed KKT conditions, a dense Cholesky factorisation of the reduced system, and a
//! backtracking line search on the residual that keeps every iterate strictly inside (a trial
//! outside steps back at once to where every constraint's chord, which lies above the convex
//! constraint, is still below 0, and to inside the box; each step aims further along the central
//! path after a full step near it, nearer after a short one).
//! Hard constraints hold strictly at the start and phase I keeps them at `<= 1` rather than relaxing
//! them, so the least worst value it reports is over the points that meet them.

mod newton;
mod slack;

use crate::budget::{Estimate, Meter, OverBudget, Work};
use newton::{Finish, ITERATIONS, Problem, Stop, Table};

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

/// Most Newton steps of a solve: both phases at their limit.
pub const MAX_NEWTON_STEPS: u128 = 2 * ITERATIONS as u128;

/// Work units (multiply-adds, roughly) that one posynomial adds to a Newton step and to a
/// line-search trial, with `variables` variables: its Hessian terms, its value and its dense
/// gradient.
pub fn posynomial_work(posynomial: &Posynomial, variables: usize) -> (u128, u128) {
    posynomial_work_with(posynomial, variables, &mut Vec::new())
}

/// [`posynomial_work`] with `seen` (all false, left so) as scratch.
fn posynomial_work_with(posynomial: &Posynomial, variables: usize, seen: &mut Vec<bool>) -> (u128, u128) {
    let mut touched = 0u128;
    for &(k, _) in posynomial.terms.iter().flat_map(|t| &t.exponents) {
        if k >= seen.len() {
            seen.resize(k + 1, false);
        }
        touched += u128::from(!seen[k]);
        seen[k] = true;
    }
    posynomial.terms.iter().flat_map(|t| &t.exponents).for_each(|&(k, _)| seen[k] = false);
    let (mut hessian, mut values) = (touched * touched, 0u128);
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
    let mut seen = vec![false; n];
    std::iter::once(&program.objective).chain(&program.constraints).chain(&program.hard).fold(
        base_work(n),
        |(step, trial), posynomial| {
            let (s, t) = posynomial_work_with(posynomial, n, &mut seen);
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
    let functions = std::iter::once(&program.objective).chain(&program.constraints).chain(&program.hard);
    let size = functions.clone().fold((0, 0, 0), |(f, t, p), posynomial| {
        (f + 1, t + posynomial.terms.len(), p + posynomial.terms.iter().map(|t| t.exponents.len()).sum::<usize>())
    });
    let terms = functions.map(|p| p.terms.iter().map(|t| (t.coefficient, t.exponents.as_slice())));
    let table = Table::new(terms, n, size);
    // step_work(program), counted from the table.
    let work = table.work(base_work(n));
    debug_assert_eq!(work, step_work(program));
    meter.fits(work.0.saturating_mul(MAX_NEWTON_STEPS), Estimate::UpTo, Work::Elmore)?;
    let soft = program.constraints.len();
    let broken = || SolveError::Bad("the start must meet every hard constraint strictly".into());
    // The largest soft constraint and its index, of every function's values.
    let worst = |values: &[f64]| {
        values[1..=soft].iter().copied().enumerate().fold((0, f64::NEG_INFINITY), |a, b| if b.1 > a.1 { b } else { a })
    };

    let problem = |phase_one| Problem { meter, work, table: &table, soft, lower: &lower, upper: &upper, phase_one, n };

    // The slack iteration needs no strictly feasible start: tried first, phase I (where the start
    // is not strictly feasible) and the strictly feasible iteration are what it falls back on, with
    // the steps left, and what tells an infeasible program.
    let mut z = y.clone();
    let used = match problem(false).run_slack(&mut z, SLACK_STEPS).map_err(stopped)? {
        slack::Ending::Converged => return Ok(optimal(program, z, &lower, &upper)),
        slack::Ending::HardBroken => return Err(broken()),
        slack::Ending::GaveUp(steps) => steps,
    };
    let values = table.values(&y);
    if values[soft + 1..].iter().any(|v| v.is_nan() || *v >= 0.0) {
        return Err(broken());
    }

    // Phase I: minimise s with F_i(y) <= s, until some y has every F_i clearly below 0.
    let start_worst = worst(&values).1;
    if soft > 0 && start_worst >= -MARGIN {
        let phase = problem(true);
        let mut z = y.clone();
        z.push(start_worst.max(0.0) + 1.0);
        let finish = phase.run(&mut z, ITERATIONS - used, |values| worst(values).1 < -MARGIN).map_err(stopped)?;
        let (index, value) = worst(&table.values(&z[..n]));
        if matches!(finish, Finish::Converged) && value >= -1e-9 {
            return Ok(Outcome::Infeasible { least_worst: value.exp(), worst_constraint: index });
        }
        if value >= 0.0 {
            return Err(SolveError::Stalled);
        }
        y = z[..n].to_vec();
    }

    // Phase II.
    problem(false).run(&mut y, ITERATIONS, |_| false).map_err(stopped)?;
    Ok(optimal(program, y, &lower, &upper))
}

/// The outcome at the optimum `y` (log variables) of `program` with the box `lower`, `upper` (logs).
fn optimal(program: &Program, y: Vec<f64>, lower: &[f64], upper: &[f64]) -> Outcome {
    let x: Vec<f64> = y.iter().map(|v| v.exp()).collect();
    let at_bound = (0..y.len()).filter(|&j| y[j] - lower[j] < 1e-6 || upper[j] - y[j] < 1e-6).collect();
    Outcome::Optimal { objective: program.objective.value(&x), x, at_bound }
}

/// The solver's error for a phase's stop.
fn stopped(stop: Stop) -> SolveError {
    match stop {
        Stop::Outside => SolveError::Bad("the start is not strictly feasible".into()),
        Stop::Singular => SolveError::Singular,
        Stop::Stalled => SolveError::Stalled,
        Stop::OverBudget(over) => SolveError::OverBudget(over),
    }
}

/// Most Newton steps of the slack iteration before phase II falls back to the strictly feasible one.
const SLACK_STEPS: usize = 50;

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
