//! The geometric-program solver's main iteration: a primal-dual interior-point method with a slack
//! per constraint (Nocedal & Wright, "Numerical Optimization", 2006, section 19.2), so that only the
//! slacks and the multipliers must stay positive, not the constraints: `G_i(y) + s_i = 0`,
//! `s_i > 0`, `lambda_i > 0`, with Mehrotra's predictor-corrector choice of the centring (section
//! 14.2, there for linear programs) and steps to 0.99 or more of the way to the boundary, one
//! length for the point and its slacks, another for the multipliers. A convex `G_i` lies above its
//! linearisation, so a step may leave a constraint above its slack, which the next steps close; the
//! start need not meet the constraints, only lie inside the box. The optimum is accepted with every
//! `|G_i + s_i|` within `1e-11`, so a constraint may end that far (in log terms) above 0. Where the
//! multipliers run away (an infeasible program) or the Newton matrix cannot be factorised, the
//! iteration gives up and the caller falls back on phase I and the strictly feasible iteration.

// Dense linear algebra reads best with explicit indices.
#![allow(clippy::needless_range_loop)]

use super::newton::{Buffers, Point, Problem, Scratch, Stop, Table};

use crate::budget::Work;
use crate::optimize::linear::{factor_spd, solve_factored};

/// How the iteration ended.
pub(super) enum Ending {
    /// At the optimum, within tolerance: the point is in the caller's `y`.
    Converged,
    /// The start does not meet every hard constraint strictly.
    HardBroken,
    /// Given up after this many Newton steps (no progress or the step limit): `y` is as it was.
    GaveUp(usize),
}

/// The iteration's buffers.
struct Space {
    common: Buffers,
    slack_step: Vec<f64>,
    dual_step: Vec<f64>,
    /// The predictor's slack and multiplier steps.
    slack_guess: Vec<f64>,
    dual_guess: Vec<f64>,
    /// Each constraint's share of the right-hand side.
    weights: Vec<f64>,
    /// One gradient spread over every variable.
    dense: Vec<f64>,
    /// Each slack's reciprocal.
    inverse: Vec<f64>,
}

impl Problem<'_> {
    /// Every constraint's value and gradient at `y` (phase II only), whatever their sign; false
    /// outside the box or where a value is not finite.
    fn evaluate_any(&self, y: &[f64], point: &mut Point, scratch: &mut Scratch) -> bool {
        if (0..self.n).any(|j| !(self.lower[j] < y[j] && y[j] < self.upper[j])) {
            return false;
        }
        self.table.evaluate(y, &mut point.functions, &mut point.weights, scratch);
        let m = self.constraints();
        point.values[..m].copy_from_slice(&point.functions[1..=m]);
        for j in 0..self.n {
            point.values[m + j] = y[j] - self.upper[j];
            point.values[m + self.n + j] = self.lower[j] - y[j];
        }
        if !point.values.iter().chain(&point.functions[..1]).all(|v| v.is_finite()) {
            return false;
        }
        self.table.gradients(&point.weights, &mut point.gradients);
        true
    }

    /// `grad G_i . step` of every constraint, into `along`.
    fn along(&self, point: &Point, step: &[f64], along: &mut [f64]) {
        let (n, m) = (self.n, self.constraints());
        for i in 0..m {
            along[i] =
                self.table.touched(i + 1).iter().zip(self.gradient(point, i + 1)).map(|(&k, g)| g * step[k]).sum();
        }
        for j in 0..n {
            along[m + j] = step[j];
            along[m + n + j] = -step[j];
        }
    }

    /// The dual residual `grad f + sum lambda_i grad G_i` into `dual`.
    fn dual_residual(&self, point: &Point, lambda: &[f64], dual: &mut [f64]) {
        let (n, m) = (self.n, self.constraints());
        dual.fill(0.0);
        for (&k, g) in self.table.touched(0).iter().zip(self.gradient(point, 0)) {
            dual[k] += g;
        }
        for i in 0..m {
            for (&k, g) in self.table.touched(i + 1).iter().zip(self.gradient(point, i + 1)) {
                dual[k] += lambda[i] * g;
            }
        }
        for j in 0..n {
            dual[j] += lambda[m + j] - lambda[m + n + j];
        }
    }

    /// The Newton step for the centring residual `centring` (`sigma mu - lambda_i s_i` and any
    /// correction) with the factor in `space.common.factor` and the slacks' reciprocals in
    /// `space.inverse`: `space.common.step`, `space.slack_step`, `space.dual_step`. `primal` is
    /// `G_i + s_i`.
    fn newton_step(&self, point: &Point, lambda: &[f64], primal: &[f64], centring: &[f64], space: &mut Space) {
        let (n, m) = (self.n, self.constraints());
        // right = -r_d - sum grad G_i (lambda_i r_p_i + r_c_i) / s_i
        for (i, w) in space.weights.iter_mut().enumerate() {
            *w = (lambda[i] * primal[i] + centring[i]) * space.inverse[i];
        }
        for (r, d) in space.common.right.iter_mut().zip(&space.common.dual) {
            *r = -d;
        }
        for i in 0..m {
            let w = space.weights[i];
            for (&k, g) in self.table.touched(i + 1).iter().zip(self.gradient(point, i + 1)) {
                space.common.right[k] -= w * g;
            }
        }
        for j in 0..n {
            space.common.right[j] -= space.weights[m + j] - space.weights[m + n + j];
        }
        solve_factored(&space.common.factor, &space.common.right, n, &mut space.common.step);
        self.along(point, &space.common.step, &mut space.slack_step);
        for i in 0..self.count() {
            // ds_i = -r_p_i - grad G_i . dy;  dlambda_i = (r_c_i - lambda_i ds_i) / s_i
            let ds = -primal[i] - space.slack_step[i];
            space.slack_step[i] = ds;
            space.dual_step[i] = (centring[i] - lambda[i] * ds) * space.inverse[i];
        }
    }

    /// The longest step up to 1 that keeps every slack and multiplier at least `1 - keep` of
    /// the way from 0.
    fn reach(slack: &[f64], slack_step: &[f64], lambda: &[f64], dual_step: &[f64], keep: f64) -> f64 {
        // The least of 1 / keep and every v / -d, kept as a fraction (no division in the loop).
        let (mut above, mut below) = (1.0, keep);
        for (&v, &d) in slack.iter().zip(slack_step).chain(lambda.iter().zip(dual_step)) {
            if d < 0.0 && v * below < above * -d {
                (above, below) = (v, -d);
            }
        }
        keep * above / below
    }

    /// The slack iteration from `y` (inside the box; phase II only), at most `limit` Newton steps.
    pub(super) fn run_slack(&self, y: &mut [f64], limit: usize) -> Result<Ending, Stop> {
        let n = self.n;
        let m = self.constraints();
        let count = self.count();
        let mut space = Space {
            common: Buffers::new(self.table, n, n),
            slack_step: vec![0.0; count],
            dual_step: vec![0.0; count],
            slack_guess: vec![0.0; count],
            dual_guess: vec![0.0; count],
            weights: vec![0.0; count],
            dense: vec![0.0; n],
            inverse: vec![0.0; count],
        };
        let outer = self.table.outer(n);
        let mut point = self.point();
        let mut trial_point = self.point();
        if !self.evaluate_any(y, &mut point, &mut space.common.scratch) {
            return Ok(Ending::GaveUp(0));
        }
        if point.functions[self.soft + 1..].iter().any(|v| *v >= 0.0) {
            return Ok(Ending::HardBroken);
        }
        let mut slack: Vec<f64> = point.values.iter().map(|g| (-g).max(SLACK_FLOOR)).collect();
        let mut lambda: Vec<f64> = slack.iter().map(|s| START / s).collect();
        let mut primal = vec![0.0; count];
        let mut centring = vec![0.0; count];
        let mut z = y.to_vec();
        let mut trial = y.to_vec();
        let mut trial_slack = slack.clone();
        let mut trial_lambda = lambda.clone();
        let mut first_gap = 0.0;
        for step in 0..limit {
            self.meter.charge(self.work.0, Work::Elmore)?;
            for i in 0..count {
                primal[i] = point.values[i] + slack[i];
            }
            self.dual_residual(&point, &lambda, &mut space.common.dual);
            let gap: f64 = slack.iter().zip(&lambda).map(|(s, l)| s * l).sum();
            let dual_norm = space.common.dual.iter().map(|d| d * d).sum::<f64>().sqrt();
            let primal_worst = primal.iter().fold(0.0f64, |a, p| a.max(p.abs()));
            if gap <= GAP && dual_norm <= DUAL_TOLERANCE && primal_worst <= PRIMAL_TOLERANCE {
                y.copy_from_slice(&z);
                return Ok(Ending::Converged);
            }
            if step == 0 {
                first_gap = gap;
            } else if gap.is_nan() || gap >= DIVERGED * first_gap {
                // The multipliers run away (what an infeasible program does): no optimum here.
                return Ok(Ending::GaveUp(step + 1));
            }
            for (inverse, s) in space.inverse.iter_mut().zip(&slack) {
                *inverse = 1.0 / s;
            }
            // K = hess f + sum lambda_i hess G_i + sum (lambda_i / s_i) grad G_i grad G_i^T.
            space.common.scales[0] = 1.0;
            space.common.outers[0] = 0.0;
            for i in 0..m {
                space.common.scales[i + 1] = lambda[i];
                space.common.outers[i + 1] = lambda[i] * space.inverse[i];
            }
            space.common.hessian.fill(0.0);
            let curvature = (space.common.scales.as_slice(), space.common.outers.as_slice());
            self.table.add_hessian_flat(
                (&point.weights, &point.gradients),
                curvature,
                &mut space.common.hessian,
                n,
                &mut space.common.shares,
                &outer,
                &mut space.dense,
            );
            for j in 0..n {
                space.common.hessian[j * n + j] +=
                    lambda[m + j] * space.inverse[m + j] + lambda[m + n + j] * space.inverse[m + n + j];
            }
            if !factor_spd(&space.common.hessian, n, &mut space.common.factor) {
                return Ok(Ending::GaveUp(step + 1));
            }
            // Predictor: the affine step (no centring).
            let mu = gap / count as f64;
            for i in 0..count {
                centring[i] = -lambda[i] * slack[i];
            }
            self.newton_step(&point, &lambda, &primal, &centring, &mut space);
            let reach = Self::reach(&slack, &space.slack_step, &lambda, &space.dual_step, 1.0);
            let guess: f64 = (0..count)
                .map(|i| (slack[i] + reach * space.slack_step[i]) * (lambda[i] + reach * space.dual_step[i]))
                .sum::<f64>()
                / count as f64;
            let sigma = (guess / mu).clamp(0.0, 1.0).powi(3);
            space.slack_guess.copy_from_slice(&space.slack_step);
            space.dual_guess.copy_from_slice(&space.dual_step);
            // Corrector: centring at sigma mu (no nearer 0 than the gap needs: rounding takes over
            // there), less the predictor's second-order term.
            let target = (sigma * mu).max(FLOOR * GAP / count as f64);
            for i in 0..count {
                centring[i] = target - lambda[i] * slack[i] - space.slack_guess[i] * space.dual_guess[i];
            }
            self.newton_step(&point, &lambda, &primal, &centring, &mut space);
            let keep = (1.0 - mu).max(KEEP);
            // The primal point and the slacks go their own share of the way, the multipliers theirs.
            let mut length = Self::reach(&slack, &space.slack_step, &[], &[], keep);
            let mut dual_length = Self::reach(&[], &[], &lambda, &space.dual_step, keep);
            loop {
                if length < 1e-12 {
                    return Ok(Ending::GaveUp(step + 1));
                }
                self.meter.charge(self.work.1, Work::Elmore)?;
                for k in 0..n {
                    trial[k] = z[k] + length * space.common.step[k];
                }
                for i in 0..count {
                    trial_slack[i] = slack[i] + length * space.slack_step[i];
                    trial_lambda[i] = lambda[i] + dual_length * space.dual_step[i];
                }
                if self.evaluate_any(&trial, &mut trial_point, &mut space.common.scratch) {
                    break;
                }
                length *= 0.5;
                dual_length *= 0.5;
            }
            std::mem::swap(&mut z, &mut trial);
            std::mem::swap(&mut point, &mut trial_point);
            std::mem::swap(&mut slack, &mut trial_slack);
            std::mem::swap(&mut lambda, &mut trial_lambda);
        }
        Ok(Ending::GaveUp(limit))
    }
}

/// Every monomial's outer product `a_u a_u^T` as (index into a row-major `size x size` matrix,
/// value) over its lower triangle, at `at[u]..at[u + 1]`: what [`Table::add_hessian_flat`] adds
/// with the monomial's summed weight, read in order.
pub(super) struct Outer {
    at: Vec<usize>,
    entries: Vec<(u32, f64)>,
}

impl Table {
    /// The monomials' outer products for a `size x size` matrix.
    pub(super) fn outer(&self, size: usize) -> Outer {
        let mut outer = Outer { at: Vec::with_capacity(self.monomial_at.len()), entries: Vec::new() };
        outer.at.push(0);
        for u in 0..self.monomial_at.len() - 1 {
            let pairs = self.monomial_pairs(u);
            for (p, &(kp, ep)) in pairs.iter().enumerate() {
                for &(kq, eq) in &pairs[..=p] {
                    // Pairs are sorted by variable, so kq <= kp: the lower triangle.
                    outer.entries.push(((kp * size + kq) as u32, ep * eq));
                }
            }
            outer.at.push(outer.entries.len());
        }
        outer
    }

    /// [`Table::add_hessian`] with the monomials' outer products read from `outer` (built for
    /// `size`) and each function's rank-one part added a row at a time through `dense` (`size`
    /// long, left at zero), so every inner loop runs over contiguous memory.
    #[allow(clippy::too_many_arguments)]
    pub(super) fn add_hessian_flat(
        &self,
        (weights, gradients): (&[f64], &[f64]),
        (scales, outers): (&[f64], &[f64]),
        hessian: &mut [f64],
        size: usize,
        shares: &mut [f64],
        outer: &Outer,
        dense: &mut [f64],
    ) {
        self.monomial_shares(weights, scales, shares);
        for (u, &share) in shares.iter().enumerate() {
            if share != 0.0 {
                for &(index, value) in &outer.entries[outer.at[u]..outer.at[u + 1]] {
                    hessian[index as usize] += share * value;
                }
            }
        }
        for f in 0..self.functions() {
            let rank_one = outers[f] - scales[f];
            if rank_one == 0.0 {
                continue;
            }
            let touched = self.touched(f);
            let gradient = &gradients[self.touched_at[f]..self.touched_at[f + 1]];
            for (&k, &g) in touched.iter().zip(gradient) {
                dense[k] = g;
            }
            for (&vp, &g) in touched.iter().zip(gradient) {
                let factor = rank_one * g;
                let row = &mut hessian[vp * size..vp * size + vp + 1];
                for (h, d) in row.iter_mut().zip(&dense[..=vp]) {
                    *h += factor * d;
                }
            }
            for &k in touched {
                dense[k] = 0.0;
            }
        }
    }
}

/// Every `s_i lambda_i` at the start.
const START: f64 = 0.5;
/// The least slack a constraint starts with (in log terms) where the start does not meet it.
const SLACK_FLOOR: f64 = 1e-2;
/// The least share of the way to the boundary a step keeps (more near the optimum).
const KEEP: f64 = 0.99;
/// Largest `sum s_i lambda_i` accepted at the optimum (relative accuracy of the objective).
const GAP: f64 = 1e-10;
/// The iteration gives up once `sum s_i lambda_i` passes its start's by this factor.
const DIVERGED: f64 = 1e3;
/// The least centring target, a share of the mean `s_i lambda_i` the optimum is accepted at.
const FLOOR: f64 = 0.1;
/// Largest dual residual accepted at the optimum.
const DUAL_TOLERANCE: f64 = 1e-8;
/// Largest `|G_i + s_i|` accepted at the optimum.
const PRIMAL_TOLERANCE: f64 = 1e-11;
