//! Smooth convex programs: minimise a convex objective subject to convex constraints `c_i(x) <= 0`
//! and a box `lower <= x <= upper`, to a stated duality gap, with the work counted and bounded.
//!
//! Each function supplies its value, gradient and Hessian over the variables it touches (the
//! [`Smooth`] trait), so a constraint that touches 5 of 200 variables costs 25 Hessian entries, not
//! 40,000. The method is interior point (Boyd & Vandenberghe, "Convex Optimization", 2004, chapter
//! 11): Newton steps that centre the logarithmic barrier for a growing `t` (section 11.3; the same
//! steps as the primal-dual method of section 11.7 with the multipliers held on the central path), a
//! dense Cholesky factorisation of the Newton system, and a backtracking line search that keeps
//! every iterate strictly inside. Each centred point yields multipliers, and the run stops when the
//! duality gap they certify is within [`Settings::gap`]. Phase I (section 11.4.1) finds a strictly
//! feasible start by minimising the largest constraint value, or reports the least value it can
//! reach above zero.
//!
//! Work is counted, not timed: each Newton iteration costs one unit per variable and one per
//! constraint of the phase it belongs to, and a run that would pass its [`Budget`] stops with
//! [`SolveError::OverBudget`], which names the budget. The same program always takes the same work.

pub mod geometric;
mod interior;
mod linear;

use interior::{Bound, Meter, Phase};

/// A twice-differentiable function of some of the variables.
pub trait Smooth {
    /// The variables the function depends on, each once, in the order its gradient and Hessian use.
    fn variables(&self) -> &[usize];

    /// The value at `x` (the whole variable vector). Where `gradient` is given, it is overwritten
    /// with the partial derivatives along [`Smooth::variables`]; where `hessian` is given, it is
    /// overwritten with the second derivatives, row-major, `k x k` for `k` variables. Outside its
    /// domain a function may return any value that is not a finite negative number for a
    /// constraint (infinity or NaN); the solver never steps there.
    fn evaluate(&self, x: &[f64], gradient: Option<&mut [f64]>, hessian: Option<&mut [f64]>) -> f64;
}

impl<T: Smooth + ?Sized> Smooth for &T {
    fn variables(&self) -> &[usize] {
        (**self).variables()
    }

    fn evaluate(&self, x: &[f64], gradient: Option<&mut [f64]>, hessian: Option<&mut [f64]>) -> f64 {
        (**self).evaluate(x, gradient, hessian)
    }
}

/// `sum coefficient_k x_k` (plus a constant): an objective or a linear constraint.
#[derive(Debug, Clone, PartialEq)]
pub struct Linear {
    variables: Vec<usize>,
    coefficients: Vec<f64>,
    constant: f64,
}

impl Linear {
    /// `constant + sum coefficient x_variable` over `terms` (variable, coefficient); a variable that
    /// appears more than once has its coefficients added.
    pub fn new(terms: &[(usize, f64)], constant: f64) -> Linear {
        let mut variables: Vec<usize> = Vec::with_capacity(terms.len());
        let mut coefficients: Vec<f64> = Vec::with_capacity(terms.len());
        for &(variable, coefficient) in terms {
            match variables.iter().position(|&v| v == variable) {
                Some(at) => coefficients[at] += coefficient,
                None => {
                    variables.push(variable);
                    coefficients.push(coefficient);
                }
            }
        }
        Linear { variables, coefficients, constant }
    }
}

impl Smooth for Linear {
    fn variables(&self) -> &[usize] {
        &self.variables
    }

    fn evaluate(&self, x: &[f64], gradient: Option<&mut [f64]>, hessian: Option<&mut [f64]>) -> f64 {
        if let Some(gradient) = gradient {
            gradient.copy_from_slice(&self.coefficients);
        }
        if let Some(hessian) = hessian {
            hessian.fill(0.0);
        }
        self.constant + self.variables.iter().zip(&self.coefficients).map(|(&v, c)| c * x[v]).sum::<f64>()
    }
}

/// A convex program: minimise `objective` subject to every constraint `<= 0` and
/// `lower <= x <= upper` (either bound may be infinite). The number of variables is `lower.len()`.
#[derive(Debug, Clone, Copy)]
pub struct Program<'a, F, C> {
    /// What to minimise (convex).
    pub objective: &'a F,
    /// Each must be at most 0 (convex).
    pub constraints: &'a [C],
    /// Lower bound of each variable, or `-inf`.
    pub lower: &'a [f64],
    /// Upper bound of each variable, or `+inf`.
    pub upper: &'a [f64],
}

/// When the solver stops.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Settings {
    /// Largest surrogate duality gap accepted at the optimum, relative to `max(1, |objective|)`:
    /// with the dual residual at zero, the objective is then within this of the optimum value.
    pub gap: f64,
    /// Largest dual residual (the gradient of the Lagrangian, Euclidean norm) accepted, relative to
    /// `max(1, |gradient of the objective|)`. A residual that the multiplier of a variable's bound
    /// can take is moved there and counted in the gap instead.
    pub residual: f64,
    /// Where rounding leaves no step that makes progress (the constraints' values near the optimum
    /// have few significant digits left), the gap accepted instead of [`Settings::gap`].
    pub acceptable_gap: f64,
    /// Likewise for [`Settings::residual`].
    pub acceptable_residual: f64,
}

/// The duality-gap tolerance of [`Settings::default`].
pub const GAP_TOLERANCE: f64 = 1e-10;
/// The dual-residual tolerance of [`Settings::default`].
pub const RESIDUAL_TOLERANCE: f64 = 1e-9;
/// The gap [`Settings::default`] accepts where rounding stops progress.
pub const ACCEPTABLE_GAP: f64 = 1e-8;
/// The dual residual [`Settings::default`] accepts where rounding stops progress.
pub const ACCEPTABLE_RESIDUAL: f64 = 1e-6;

impl Default for Settings {
    fn default() -> Settings {
        Settings {
            gap: GAP_TOLERANCE,
            residual: RESIDUAL_TOLERANCE,
            acceptable_gap: ACCEPTABLE_GAP,
            acceptable_residual: ACCEPTABLE_RESIDUAL,
        }
    }
}

/// How much work a solve may do: Newton iterations x (variables + constraints), summed over both
/// phases (phase I has one variable more, the relaxation).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Budget {
    /// Work units: one per variable and one per constraint in each Newton iteration.
    pub work: u64,
}

/// The optimum.
#[derive(Debug, Clone, PartialEq)]
pub struct Solution {
    /// The variables, strictly inside every constraint and the box.
    pub x: Vec<f64>,
    /// The objective there.
    pub objective: f64,
    /// The multiplier of each constraint (positive; large where the constraint binds).
    pub multipliers: Vec<f64>,
    /// The surrogate duality gap at the end: with a zero dual residual, `objective` is at most this
    /// above the optimum value.
    pub gap: f64,
    /// Newton iterations, both phases.
    pub iterations: usize,
    /// Work used, in the units of [`Budget`].
    pub work: u64,
}

/// What the solver found.
#[derive(Debug, Clone, PartialEq)]
pub enum Outcome {
    /// The optimum.
    Optimal(Solution),
    /// No point of the box meets every constraint strictly.
    Infeasible {
        /// The least, over the box, of the largest constraint value (at least 0, up to the gap).
        least_worst: f64,
        /// The constraint that reaches it there.
        worst_constraint: usize,
        /// Where it is reached.
        x: Vec<f64>,
        /// Work used, in the units of [`Budget`].
        work: u64,
    },
}

/// Why the solver stopped without an answer.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SolveError {
    /// Inconsistent input.
    #[error("bad program: {0}")]
    Bad(String),
    /// The work budget ran out first.
    #[error(
        "the work budget of {budget} (Newton iterations x (variables + constraints)) ran out before the duality gap closed"
    )]
    OverBudget {
        /// The budget, in work units.
        budget: u64,
    },
    /// A Newton system that could not be factorised.
    #[error("the Newton system is singular")]
    Singular,
    /// The line search found no step that lowers the residual.
    #[error("no progress at a relative duality gap of {gap:.1e}")]
    Stalled {
        /// The surrogate duality gap reached, relative to `max(1, |objective|)`.
        gap: f64,
    },
}

/// Phase I stops once every constraint is below zero by this much, so that phase II starts with
/// room to move (constraints are best scaled to values of order 1).
const MARGIN: f64 = 1e-3;

/// A constraint relaxed for phase I: `c(x) - s`, where `s` is the last variable.
struct Relaxed<C> {
    inner: C,
    variables: Vec<usize>,
}

impl<C: Smooth> Smooth for Relaxed<C> {
    fn variables(&self) -> &[usize] {
        &self.variables
    }

    fn evaluate(&self, x: &[f64], gradient: Option<&mut [f64]>, hessian: Option<&mut [f64]>) -> f64 {
        let k = self.variables.len() - 1;
        let slack = x[self.variables[k]];
        let gradient = gradient.map(|g| {
            g[k] = -1.0;
            &mut g[..k]
        });
        let Some(hessian) = hessian else { return self.inner.evaluate(x, gradient, None) - slack };
        let value = self.inner.evaluate(x, gradient, Some(&mut hessian[..k * k]));
        // Spread the k x k block to rows of k + 1, from the end so nothing is overwritten unread.
        hessian[k * (k + 1)..].fill(0.0);
        for i in (0..k).rev() {
            hessian[i * (k + 1) + k] = 0.0;
            for j in (0..k).rev() {
                hessian[i * (k + 1) + j] = hessian[i * k + j];
            }
        }
        value - slack
    }
}

/// Solve `program` from `start` (strictly inside the box): phase I where `start` is not clearly
/// inside every constraint, then phase II to the tolerances of `settings`, within `budget`.
pub fn solve<F: Smooth, C: Smooth>(
    program: &Program<'_, F, C>,
    start: &[f64],
    settings: &Settings,
    budget: Budget,
) -> Result<Outcome, SolveError> {
    let n = program.lower.len();
    check(program, start)?;
    let mut meter = Meter::new(budget);
    let bounds = Bound::all(program.lower, program.upper);
    let worst = |x: &[f64]| {
        program
            .constraints
            .iter()
            .enumerate()
            .map(|(i, c)| (i, c.evaluate(x, None, None)))
            .fold((0, f64::NEG_INFINITY), |a, b| if b.1 > a.1 || b.1.is_nan() { b } else { a })
    };
    let mut x = start.to_vec();
    let (_, start_worst) = worst(&x);
    if !program.constraints.is_empty() && (start_worst.is_nan() || start_worst >= -MARGIN) {
        // Phase I: minimise s subject to c_i(x) <= s and the box.
        if !start_worst.is_finite() {
            return Err(SolveError::Bad("a constraint is not finite at the start".into()));
        }
        let relaxed: Vec<Relaxed<&C>> = program
            .constraints
            .iter()
            .map(|c| Relaxed { inner: c, variables: c.variables().iter().copied().chain([n]).collect() })
            .collect();
        let objective = Linear::new(&[(n, 1.0)], 0.0);
        let phase = Phase { objective: &objective, constraints: &relaxed, bounds: bounds.clone(), n: n + 1 };
        let mut z = x.clone();
        z.push(start_worst.max(0.0) + 1.0);
        let m = relaxed.len();
        // The relaxed values are c_i - s, so c_i's largest is their largest plus s.
        let early =
            |z: &[f64], values: &[f64]| values[..m].iter().fold(f64::NEG_INFINITY, |a, &b| a.max(b)) + z[n] < -MARGIN;
        phase.run(&mut z, settings, &mut meter, early)?;
        x.truncate(0);
        x.extend_from_slice(&z[..n]);
        let (index, value) = worst(&x);
        if value.is_nan() || value >= 0.0 {
            return Ok(Outcome::Infeasible { least_worst: value, worst_constraint: index, x, work: meter.used });
        }
    }
    let phase = Phase { objective: program.objective, constraints: program.constraints, bounds, n };
    let finish = phase.run(&mut x, settings, &mut meter, |_, _| false)?;
    let objective = program.objective.evaluate(&x, None, None);
    Ok(Outcome::Optimal(Solution {
        x,
        objective,
        multipliers: finish.multipliers,
        gap: finish.gap,
        iterations: meter.iterations,
        work: meter.used,
    }))
}

/// Dimensions agree, every function's variables are in range and each is listed once, and the
/// start lies strictly inside the box.
fn check<F: Smooth, C: Smooth>(program: &Program<'_, F, C>, start: &[f64]) -> Result<(), SolveError> {
    let n = program.lower.len();
    if program.upper.len() != n || start.len() != n {
        return Err(SolveError::Bad(format!(
            "{n} lower bounds, {} upper bounds and {} start values: they must agree",
            program.upper.len(),
            start.len()
        )));
    }
    let mut seen = vec![usize::MAX; n];
    let functions =
        std::iter::once(program.objective.variables()).chain(program.constraints.iter().map(|c| c.variables()));
    for (f, variables) in functions.enumerate() {
        for &v in variables {
            if v >= n || seen[v] == f {
                return Err(SolveError::Bad(format!("variable {v} is out of range or listed twice by one function")));
            }
            seen[v] = f;
        }
    }
    for (j, &x) in start.iter().enumerate() {
        let (l, u) = (program.lower[j], program.upper[j]);
        if l.is_nan() || u.is_nan() || !x.is_finite() || !(l < x && x < u) {
            return Err(SolveError::Bad(format!("start value {x} of variable {j} is not strictly inside [{l}, {u}]")));
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Value, gradient and Hessian (dense over the function's variables).
    type Derivatives = (f64, Vec<f64>, Vec<f64>);

    /// A function given by a closure.
    struct Closure<'a> {
        variables: Vec<usize>,
        f: &'a dyn Fn(&[f64]) -> Derivatives,
    }

    impl Smooth for Closure<'_> {
        fn variables(&self) -> &[usize] {
            &self.variables
        }
        fn evaluate(&self, x: &[f64], gradient: Option<&mut [f64]>, hessian: Option<&mut [f64]>) -> f64 {
            let (value, g, h) = (self.f)(x);
            if let Some(gradient) = gradient {
                gradient.copy_from_slice(&g);
            }
            if let Some(hessian) = hessian {
                hessian.copy_from_slice(&h);
            }
            value
        }
    }

    const BIG: Budget = Budget { work: 1_000_000 };

    fn optimal(outcome: Outcome) -> Solution {
        match outcome {
            Outcome::Optimal(solution) => solution,
            other => panic!("expected an optimum: {other:?}"),
        }
    }

    #[test]
    fn series_budget_matches_the_closed_form() {
        // Minimise x + y with 1/x + 2/y <= 1: Lagrange gives x = 1 + sqrt 2, y = 2 + sqrt 2, total
        // (1 + sqrt 2)^2 (worked by hand; the same rule as two devices in series sized for least area)
        let f = |x: &[f64]| {
            let (a, b) = (x[0], x[1]);
            (
                1.0 / a + 2.0 / b - 1.0,
                vec![-1.0 / (a * a), -2.0 / (b * b)],
                vec![2.0 / a.powi(3), 0.0, 0.0, 4.0 / b.powi(3)],
            )
        };
        let constraint = Closure { variables: vec![0, 1], f: &f };
        let objective = Linear::new(&[(0, 1.0), (1, 1.0)], 0.0);
        let program = Program {
            objective: &objective,
            constraints: std::slice::from_ref(&constraint),
            lower: &[0.0, 0.0],
            upper: &[f64::INFINITY; 2],
        };
        let solution = optimal(solve(&program, &[10.0, 10.0], &Settings::default(), BIG).unwrap());
        let best = (1.0 + 2f64.sqrt()).powi(2);
        assert!((solution.objective - best).abs() < 1e-9 * best, "{}", solution.objective);
        assert!((solution.x[0] - (1.0 + 2f64.sqrt())).abs() < 1e-6, "{:?}", solution.x);
        // The multiplier: d(objective)/d(relaxing the constraint) = best (homogeneity), by hand.
        assert!((solution.multipliers[0] - best).abs() < 1e-5 * best, "{:?}", solution.multipliers);
        assert!(solution.iterations > 0 && solution.work == solution.iterations as u64 * 3);
    }

    #[test]
    fn projection_onto_a_half_plane() {
        // Minimise (x - 2)^2 + (y - 1)^2 with x + y <= 1: the nearest point of the half-plane is
        // (1, 0), at squared distance 2 (worked by hand).
        let objective_f = |x: &[f64]| {
            let (a, b) = (x[0] - 2.0, x[1] - 1.0);
            (a * a + b * b, vec![2.0 * a, 2.0 * b], vec![2.0, 0.0, 0.0, 2.0])
        };
        let objective = Closure { variables: vec![0, 1], f: &objective_f };
        let line = Linear::new(&[(0, 1.0), (1, 1.0)], -1.0);
        let program = Program {
            objective: &objective,
            constraints: std::slice::from_ref(&line),
            lower: &[f64::NEG_INFINITY; 2],
            upper: &[f64::INFINITY; 2],
        };
        let solution = optimal(solve(&program, &[-3.0, -3.0], &Settings::default(), BIG).unwrap());
        assert!((solution.objective - 2.0).abs() < 1e-9, "{}", solution.objective);
        assert!((solution.x[0] - 1.0).abs() < 1e-6 && solution.x[1].abs() < 1e-6, "{:?}", solution.x);
        // The multiplier is 2 (gradient of the objective at (1, 0) is (-2, -2)), by hand.
        assert!((solution.multipliers[0] - 2.0).abs() < 1e-6);
    }

    #[test]
    fn the_box_can_hold_the_optimum() {
        // Minimise (x - 2)^2 with x <= 1 (the box only): x = 1, value 1 (worked by hand).
        let f = |x: &[f64]| ((x[0] - 2.0).powi(2), vec![2.0 * (x[0] - 2.0)], vec![2.0]);
        let objective = Closure { variables: vec![0], f: &f };
        let none: [Linear; 0] = [];
        let program = Program { objective: &objective, constraints: &none, lower: &[-5.0], upper: &[1.0] };
        let solution = optimal(solve(&program, &[0.0], &Settings::default(), BIG).unwrap());
        assert!((solution.objective - 1.0).abs() < 1e-9 && (solution.x[0] - 1.0).abs() < 1e-9, "{solution:?}");
    }

    #[test]
    fn phase_one_finds_a_start_from_outside() {
        // Minimise x with x >= 1 (as 1 - x <= 0) and x^2 <= 9, from x = 5 (outside the second):
        // phase I brings x inside, phase II to x = 1 (worked by hand).
        let square = |x: &[f64]| (x[0] * x[0] - 9.0, vec![2.0 * x[0]], vec![2.0]);
        let constraints = [
            Closure { variables: vec![0], f: &|x: &[f64]| (1.0 - x[0], vec![-1.0], vec![0.0]) },
            Closure { variables: vec![0], f: &square },
        ];
        let objective = Linear::new(&[(0, 1.0)], 0.0);
        let program = Program { objective: &objective, constraints: &constraints, lower: &[-100.0], upper: &[100.0] };
        let solution = optimal(solve(&program, &[5.0], &Settings::default(), BIG).unwrap());
        assert!((solution.x[0] - 1.0).abs() < 1e-9, "{solution:?}");
        // Phase I's iterations cost (1 variable + 1 relaxation + 2 constraints) each, phase II's 3.
        assert!(solution.work > solution.iterations as u64 * 3);
    }

    #[test]
    fn infeasible_programs_report_the_least_worst_value() {
        // x >= 1 and x <= 0 (as 1 - x <= 0 and x <= 0): the least of max(1 - x, x) is 1/2 at
        // x = 1/2 (worked by hand).
        let constraints = [Linear::new(&[(0, -1.0)], 1.0), Linear::new(&[(0, 1.0)], 0.0)];
        let objective = Linear::new(&[(0, 1.0)], 0.0);
        let program = Program { objective: &objective, constraints: &constraints, lower: &[-10.0], upper: &[10.0] };
        let Outcome::Infeasible { least_worst, x, .. } = solve(&program, &[3.0], &Settings::default(), BIG).unwrap()
        else {
            panic!("infeasible")
        };
        assert!((least_worst - 0.5).abs() < 1e-8, "{least_worst}");
        assert!((x[0] - 0.5).abs() < 1e-6, "{x:?}");
    }

    #[test]
    fn work_past_the_budget_is_an_error_naming_it() {
        let f = |x: &[f64]| (1.0 / x[0] - 1.0, vec![-1.0 / (x[0] * x[0])], vec![2.0 / x[0].powi(3)]);
        let constraint = Closure { variables: vec![0], f: &f };
        let objective = Linear::new(&[(0, 1.0)], 0.0);
        let program = Program {
            objective: &objective,
            constraints: std::slice::from_ref(&constraint),
            lower: &[0.0],
            upper: &[f64::INFINITY],
        };
        let error = solve(&program, &[10.0], &Settings::default(), Budget { work: 10 }).unwrap_err();
        assert_eq!(error, SolveError::OverBudget { budget: 10 });
        assert!(error.to_string().contains("work budget of 10"), "{error}");
        // Enough budget: x = 1.
        let solution = optimal(solve(&program, &[10.0], &Settings::default(), BIG).unwrap());
        assert!((solution.x[0] - 1.0).abs() < 1e-9);
    }

    #[test]
    fn inconsistent_programs_are_refused() {
        let objective = Linear::new(&[(0, 1.0)], 0.0);
        let none: [Linear; 0] = [];
        let program = Program { objective: &objective, constraints: &none, lower: &[0.0], upper: &[1.0] };
        assert!(matches!(solve(&program, &[1.0], &Settings::default(), BIG), Err(SolveError::Bad(_))));
        assert!(matches!(solve(&program, &[0.5, 0.5], &Settings::default(), BIG), Err(SolveError::Bad(_))));
        let outside = Linear::new(&[(3, 1.0)], 0.0);
        let program = Program { objective: &outside, constraints: &none, lower: &[0.0], upper: &[1.0] };
        assert!(matches!(solve(&program, &[0.5], &Settings::default(), BIG), Err(SolveError::Bad(_))));
    }
}
