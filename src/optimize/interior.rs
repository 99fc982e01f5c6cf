//! The interior-point iteration that both phases run: the barrier method (Boyd & Vandenberghe,
//! "Convex Optimization", 2004, section 11.3). For a growing `t`, Newton's method with a
//! backtracking line search (section 9.5) centres `t f(x) + phi(x)`, where `phi = -sum log(-c_i)`
//! is the logarithmic barrier of the constraints and the box; each centred point gives the dual
//! point `lambda_i = 1 / (t (-c_i))` (section 11.2.2), corrected by the last Newton step, whose
//! duality gap ends the run.
//!
//! The Newton step is the primal-dual one of section 11.7 with the multipliers taken on the central
//! path, so the curvature of every constraint enters with its barrier weight: a primal-dual
//! iteration that lets the multipliers drift from the central path lets a constraint's weight
//! collapse, and then its linearisation leads the step outside (measured on networks whose
//! devices go to zero: hundreds of steps cut short). The gap is certified, not assumed: the dual
//! residual left by inexact centring is moved onto the box multipliers where it can be, and what
//! it costs is added to the gap (see [`Phase::certify`]).

use super::{Budget, Settings, Smooth, SolveError, linear};

/// One finite side of the box as a constraint: `sign (x_variable - value) <= 0`.
#[derive(Debug, Clone, Copy)]
pub(super) struct Bound {
    variable: usize,
    value: f64,
    sign: f64,
}

impl Bound {
    /// The finite sides of the box: upper bounds, then lower bounds.
    pub(super) fn all(lower: &[f64], upper: &[f64]) -> Vec<Bound> {
        let uppers = upper.iter().enumerate().filter(|(_, u)| u.is_finite()).map(|(j, &u)| Bound {
            variable: j,
            value: u,
            sign: 1.0,
        });
        let lowers = lower.iter().enumerate().filter(|(_, l)| l.is_finite()).map(|(j, &l)| Bound {
            variable: j,
            value: l,
            sign: -1.0,
        });
        uppers.chain(lowers).collect()
    }

    fn value(&self, x: &[f64]) -> f64 {
        self.sign * (x[self.variable] - self.value)
    }
}

/// Work used so far, against the budget.
pub(super) struct Meter {
    budget: u64,
    pub(super) used: u64,
    pub(super) iterations: usize,
}

impl Meter {
    pub(super) fn new(budget: Budget) -> Meter {
        Meter { budget: budget.work, used: 0, iterations: 0 }
    }

    /// Charge one Newton iteration of `units`, or stop if that would pass the budget.
    fn charge(&mut self, units: u64) -> Result<(), SolveError> {
        if self.used.saturating_add(units) > self.budget {
            return Err(SolveError::OverBudget { budget: self.budget });
        }
        self.used += units;
        self.iterations += 1;
        Ok(())
    }
}

/// One phase: minimise `objective` subject to `constraints <= 0` and `bounds`, over `n` variables.
pub(super) struct Phase<'a, F, C> {
    pub(super) objective: &'a F,
    pub(super) constraints: &'a [C],
    pub(super) bounds: Vec<Bound>,
    pub(super) n: usize,
}

/// How a phase ended: the constraints' multipliers and the relative duality gap they certify.
pub(super) struct Finish {
    pub(super) multipliers: Vec<f64>,
    pub(super) gap: f64,
}

/// How one centring ended.
enum Centring {
    /// The Newton decrement fell below [`CENTRED`]; the step it was measured on.
    Centred(Vec<f64>),
    /// The caller's early stop held.
    Early,
    /// Rounding left no step that lowers the barrier objective (nor the decrement, in the
    /// quadratic phase); the last step computed.
    Stuck(Vec<f64>),
}

/// Values and gradients of every function at one point.
struct Point {
    objective: f64,
    objective_gradient: Vec<f64>,
    /// Constraint values, then bound values.
    values: Vec<f64>,
    /// Constraint gradients, constraint `i` at `offsets[i]..offsets[i + 1]`.
    gradients: Vec<f64>,
}

/// Shrink factor of the backtracking line search, and the fraction of the predicted decrease it
/// asks (section 9.2 of the book).
const BACKTRACK: f64 = 0.5;
const SUFFICIENT: f64 = 0.01;
/// `mu`: the factor `t` grows by between centrings (section 11.3.3 of the book).
const GROWTH: f64 = 20.0;
/// The first `t` is the one that best centres the start divided by this: the first centring then
/// aims at a point deeper inside and needs fewer damped Newton steps (measured on twenty
/// exact-sizing programs: at most 88 Newton steps in all, where the least-squares `t` itself took
/// up to 170 and ten times it up to 1,617).
const START_BELOW: f64 = 10.0;
/// Centring stops once half the squared Newton decrement is below this.
const CENTRED: f64 = 1e-9;
/// Below this squared Newton decrement the full step is taken when it stays strictly inside, even
/// where rounding hides the barrier objective's decrease (Newton's quadratic phase).
const QUADRATIC: f64 = 1e-4;
/// The line search gives up below this step length.
const SHORTEST_STEP: f64 = 1e-12;

impl<F: Smooth, C: Smooth> Phase<'_, F, C> {
    fn offsets(&self) -> Vec<usize> {
        let mut offsets = Vec::with_capacity(self.constraints.len() + 1);
        offsets.push(0);
        for c in self.constraints {
            offsets.push(offsets.last().copied().unwrap_or(0) + c.variables().len());
        }
        offsets
    }

    /// Whether `x` is strictly inside the box.
    fn in_box(&self, x: &[f64]) -> bool {
        self.bounds.iter().all(|b| b.value(x) < 0.0)
    }

    fn point(&self, x: &[f64], offsets: &[usize]) -> Point {
        let mut objective_gradient = vec![0.0; self.objective.variables().len()];
        let objective = self.objective.evaluate(x, Some(&mut objective_gradient), None);
        let mut gradients = vec![0.0; offsets[self.constraints.len()]];
        let mut values: Vec<f64> = self
            .constraints
            .iter()
            .enumerate()
            .map(|(i, c)| c.evaluate(x, Some(&mut gradients[offsets[i]..offsets[i + 1]]), None))
            .collect();
        values.extend(self.bounds.iter().map(|b| b.value(x)));
        Point { objective, objective_gradient, values, gradients }
    }

    fn inside(point: &Point) -> bool {
        point.objective.is_finite()
            && point.values.iter().all(|v| *v < 0.0)
            && point.gradients.iter().chain(&point.objective_gradient).all(|g| g.is_finite())
    }

    /// The dual residual `grad f + sum lambda_i grad c_i` (dense, bounds included).
    fn residual(&self, point: &Point, lambda: &[f64], offsets: &[usize]) -> Vec<f64> {
        let mut dual = vec![0.0; self.n];
        for (&v, g) in self.objective.variables().iter().zip(&point.objective_gradient) {
            dual[v] += g;
        }
        for (i, c) in self.constraints.iter().enumerate() {
            for (&v, g) in c.variables().iter().zip(&point.gradients[offsets[i]..offsets[i + 1]]) {
                dual[v] += lambda[i] * g;
            }
        }
        let m = self.constraints.len();
        for (k, b) in self.bounds.iter().enumerate() {
            dual[b.variable] += lambda[m + k] * b.sign;
        }
        dual
    }

    /// The duality gap that the multipliers certify once the dual residual is moved onto the
    /// box: where a variable's residual can be taken by the multiplier of one of its bounds (which
    /// stays non-negative), the multipliers become exactly dual feasible there and the gap
    /// `-sum lambda_i c_i` changes by that residual times the distance to the bound, so a residual
    /// left on a variable pressed against its bound costs next to nothing. Returns that gap (with
    /// no residual left it bounds the objective's distance from the optimum, by weak duality) and
    /// the norm of the residual no bound could take.
    fn certify(&self, dual: &[f64], lambda: &[f64], values: &[f64]) -> (f64, f64) {
        let m = self.constraints.len();
        let mut gap = -values.iter().zip(lambda).map(|(c, l)| c * l).sum::<f64>();
        let mut rest = dual.to_vec();
        for (k, b) in self.bounds.iter().enumerate() {
            let r = rest[b.variable];
            // The bound's term in the residual is lambda sign e_j: lambda - r sign cancels r.
            let adjusted = lambda[m + k] - r * b.sign;
            if r != 0.0 && adjusted >= 0.0 {
                gap -= (adjusted - lambda[m + k]) * values[m + k];
                rest[b.variable] = 0.0;
            }
        }
        (gap, rest.iter().map(|r| r * r).sum::<f64>().sqrt())
    }

    /// The Newton step for `t f + phi` at `x`, and the squared Newton decrement. With `lambda_i =
    /// 1 / (t (-c_i))` this is the primal-dual step of section 11.7 of the book: the system
    /// `(H_f + sum lambda_i H_i + sum (lambda_i / -c_i) g_i g_i^T) dx = -(grad f + sum lambda_i g_i)`
    /// (bounds included), which is the barrier's Newton system divided by `t`.
    fn direction(&self, x: &[f64], point: &Point, t: f64, offsets: &[usize]) -> Result<(Vec<f64>, f64), SolveError> {
        let n = self.n;
        let m = self.constraints.len();
        let widest = self.constraints.iter().map(|c| c.variables().len()).chain([self.objective.variables().len()]);
        let widest = widest.max().unwrap_or(0);
        let mut gradient = vec![0.0; widest];
        let mut local = vec![0.0; widest * widest];
        let mut hessian = vec![0.0; n * n];
        let mut right = vec![0.0; n];

        let variables = self.objective.variables();
        let k = variables.len();
        self.objective.evaluate(x, Some(&mut gradient[..k]), Some(&mut local[..k * k]));
        for (a, &va) in variables.iter().enumerate() {
            right[va] -= point.objective_gradient[a];
            for (b, &vb) in variables.iter().enumerate() {
                hessian[va * n + vb] += local[a * k + b];
            }
        }
        for (i, c) in self.constraints.iter().enumerate() {
            let variables = c.variables();
            let k = variables.len();
            c.evaluate(x, Some(&mut gradient[..k]), Some(&mut local[..k * k]));
            let g = &point.gradients[offsets[i]..offsets[i + 1]];
            let distance = -point.values[i];
            let lambda = 1.0 / (t * distance);
            let outer = lambda / distance;
            for (a, &va) in variables.iter().enumerate() {
                right[va] -= lambda * g[a];
                let row = &mut hessian[va * n..va * n + n];
                for (b, &vb) in variables.iter().enumerate() {
                    row[vb] += lambda * local[a * k + b] + outer * g[a] * g[b];
                }
            }
        }
        for (k, b) in self.bounds.iter().enumerate() {
            let distance = -point.values[m + k];
            let lambda = 1.0 / (t * distance);
            hessian[b.variable * n + b.variable] += lambda / distance;
            right[b.variable] -= lambda * b.sign;
        }
        let step = solve_spd(hessian, &right, n)?;
        let decrement = t * right.iter().zip(&step).map(|(r, s)| r * s).sum::<f64>();
        Ok((step, decrement))
    }

    /// `t f + phi` at `trial` less its value at the current point, from the values alone, term by
    /// term (each barrier term as the log of a ratio), or `None` outside the domain.
    fn rise(&self, trial: &[f64], point: &Point, t: f64) -> Option<f64> {
        if !self.in_box(trial) {
            return None;
        }
        let objective = self.objective.evaluate(trial, None, None);
        let mut rise = t * (objective - point.objective);
        let m = self.constraints.len();
        for (i, c) in self.constraints.iter().enumerate() {
            let value = c.evaluate(trial, None, None);
            if value.is_nan() || value >= 0.0 {
                return None;
            }
            rise -= (value / point.values[i]).ln();
        }
        for (k, b) in self.bounds.iter().enumerate() {
            rise -= (b.value(trial) / point.values[m + k]).ln();
        }
        rise.is_finite().then_some(rise)
    }

    /// Newton's method on `t f + phi` from `x`, until centred, stopped early, or stuck.
    fn centre(
        &self,
        x: &mut [f64],
        point: &mut Point,
        t: f64,
        offsets: &[usize],
        meter: &mut Meter,
        early: &impl Fn(&[f64], &[f64]) -> bool,
    ) -> Result<Centring, SolveError> {
        let units = (self.n + self.constraints.len()) as u64;
        let mut trial = x.to_vec();
        let mut previous = f64::INFINITY;
        loop {
            if early(x, &point.values) {
                return Ok(Centring::Early);
            }
            let (step, decrement) = self.direction(x, point, t, offsets)?;
            if decrement / 2.0 <= CENTRED {
                return Ok(Centring::Centred(step));
            }
            if decrement < QUADRATIC && decrement > previous / 4.0 {
                // Newton's quadratic phase has stopped shrinking the decrement: rounding.
                return Ok(Centring::Stuck(step));
            }
            previous = decrement;
            meter.charge(units)?;
            let mut length: f64 = 1.0;
            loop {
                for (k, value) in trial.iter_mut().enumerate() {
                    *value = x[k] + length * step[k];
                }
                if let Some(rise) = self.rise(&trial, point, t) {
                    if rise <= -SUFFICIENT * length * decrement || (length == 1.0 && decrement < QUADRATIC) {
                        let next = self.point(&trial, offsets);
                        if Self::inside(&next) {
                            *point = next;
                            break;
                        }
                    }
                }
                length *= BACKTRACK;
                if length < SHORTEST_STEP {
                    return Ok(Centring::Stuck(step));
                }
            }
            x.copy_from_slice(&trial);
        }
    }

    /// The multipliers at a nearly centred point: `lambda_i = 1 / (t (-c_i))` corrected by the last
    /// Newton step `dx` as the linearised complementarity `-lambda_i c_i = 1 / t` asks,
    /// `lambda_i (1 + grad c_i . dx / (-c_i))` (never below 0). The dual residual then shrinks to
    /// the Lagrangian's curvature times `dx`, where the uncorrected one keeps a part along each
    /// constraint's normal of the size of the Newton decrement, however large `t` grows.
    fn multipliers(&self, point: &Point, t: f64, step: &[f64], offsets: &[usize]) -> Vec<f64> {
        let m = self.constraints.len();
        let mut lambda = Vec::with_capacity(point.values.len());
        for (i, c) in self.constraints.iter().enumerate() {
            let g = &point.gradients[offsets[i]..offsets[i + 1]];
            let along: f64 = c.variables().iter().zip(g).map(|(&v, g)| g * step[v]).sum();
            let distance = -point.values[i];
            lambda.push((1.0 / (t * distance) * (1.0 + along / distance)).max(0.0));
        }
        for (k, b) in self.bounds.iter().enumerate() {
            let distance = -point.values[m + k];
            lambda.push((1.0 / (t * distance) * (1.0 + b.sign * step[b.variable] / distance)).max(0.0));
        }
        lambda
    }

    /// `t` to start with: a [`START_BELOW`]th of the one that best centres the start (least
    /// `|t grad f + grad phi|`, section 11.3.1 of the book), kept where the barrier's gap `m / t` is within a factor of a
    /// million of the objective's size.
    fn first_t(&self, point: &Point, offsets: &[usize]) -> f64 {
        let total = point.values.len() as f64;
        let mut objective = vec![0.0; self.n];
        for (&v, g) in self.objective.variables().iter().zip(&point.objective_gradient) {
            objective[v] += g;
        }
        let unit: Vec<f64> = point.values.iter().map(|c| -1.0 / c).collect();
        let barrier = self.residual(point, &unit, offsets);
        let barrier: Vec<f64> = barrier.iter().zip(&objective).map(|(b, f)| b - f).collect();
        let along: f64 = objective.iter().zip(&barrier).map(|(f, b)| f * b).sum();
        let square: f64 = objective.iter().map(|f| f * f).sum();
        let scale = point.objective.abs().max(1.0);
        let best = if square > 0.0 { -along / square } else { 0.0 };
        let (low, high) = (total / (1e6 * scale), total * 1e6 / scale);
        if best.is_finite() && best > 0.0 { (best / START_BELOW).clamp(low, high) } else { total / scale }
    }

    /// Iterate from `x` (strictly inside) until the certified gap and the dual residual meet
    /// `settings`, or `early(x, values)` says stop. `x` is left at the last point.
    pub(super) fn run(
        &self,
        x: &mut [f64],
        settings: &Settings,
        meter: &mut Meter,
        early: impl Fn(&[f64], &[f64]) -> bool,
    ) -> Result<Finish, SolveError> {
        let offsets = self.offsets();
        let mut point = self.point(x, &offsets);
        if !(Self::inside(&point) && self.in_box(x)) {
            return Err(SolveError::Bad("the start is not strictly feasible".into()));
        }
        let m = self.constraints.len();
        let mut t = self.first_t(&point, &offsets);
        loop {
            let centring = self.centre(x, &mut point, t, &offsets, meter, &early)?;
            let lambda = match &centring {
                Centring::Centred(step) | Centring::Stuck(step) => self.multipliers(&point, t, step, &offsets),
                Centring::Early => point.values.iter().map(|c| 1.0 / (t * -c)).collect(),
            };
            let dual = self.residual(&point, &lambda, &offsets);
            let (gap, unabsorbed) = self.certify(&dual, &lambda, &point.values);
            let relative_gap = gap / point.objective.abs().max(1.0);
            let scale = point.objective_gradient.iter().map(|g| g * g).sum::<f64>().sqrt().max(1.0);
            let finish = Finish { multipliers: lambda[..m].to_vec(), gap: relative_gap };
            match centring {
                Centring::Early => return Ok(finish),
                _ if relative_gap <= settings.gap && unabsorbed <= settings.residual * scale => return Ok(finish),
                Centring::Stuck(_) => {
                    if relative_gap <= settings.acceptable_gap && unabsorbed <= settings.acceptable_residual * scale {
                        return Ok(finish);
                    }
                    return Err(SolveError::Stalled { gap: relative_gap });
                }
                Centring::Centred(_) => t *= GROWTH,
            }
        }
    }
}

/// Solve `a x = b` for a symmetric positive definite `a` (n x n, row-major) by Cholesky, with a
/// growing diagonal shift where rounding leaves it indefinite.
fn solve_spd(a: Vec<f64>, b: &[f64], n: usize) -> Result<Vec<f64>, SolveError> {
    let mut factor = vec![0.0; n * n];
    let mut x = vec![0.0; n];
    if linear::solve_spd(&a, b, n, &mut factor, &mut x) { Ok(x) } else { Err(SolveError::Singular) }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cholesky_solves_a_small_system() {
        // [4 2; 2 3] x = [2; 1]: x = [0.5, 0] (by hand)
        let x = solve_spd(vec![4.0, 2.0, 2.0, 3.0], &[2.0, 1.0], 2).unwrap();
        assert!((x[0] - 0.5).abs() < 1e-15 && x[1].abs() < 1e-15, "{x:?}");
        assert_eq!(solve_spd(vec![f64::NAN; 4], &[1.0, 1.0], 2), Err(SolveError::Singular));
    }
}
