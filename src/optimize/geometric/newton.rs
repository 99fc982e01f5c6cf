//! The primal-dual interior-point iteration of the geometric-program solver (Boyd & Vandenberghe,
//! "Convex Optimization", 2004, section 11.7), on posynomials compiled once into log-sum-exp form:
//! each term's exponents are stored against the function's own variables, so a value, its gradient
//! and its Hessian touch only those, and every buffer (the points, the Newton system, its Cholesky
//! factor, the steps) is allocated once per phase, never inside the iteration. Only the lower
//! triangle of the Newton system is assembled: it is symmetric and the factorisation reads no more.

// Dense linear algebra reads best with explicit indices.
#![allow(clippy::needless_range_loop)]

use crate::budget::{Meter, OverBudget, Work};

use crate::optimize::linear::solve_spd;

/// Why a phase stopped without an answer.
pub(super) enum Stop {
    /// The start is not strictly inside.
    Outside,
    /// A Newton system that could not be factorised.
    Singular,
    /// No convergence within the iteration limit.
    Stalled,
    /// More work than the budget allows.
    OverBudget(OverBudget),
}

impl From<OverBudget> for Stop {
    fn from(over: OverBudget) -> Stop {
        Stop::OverBudget(over)
    }
}

/// The objective and the constraints in log variables, each `ln sum_t exp(b_t + a_t . y)`, over one
/// table of distinct monomials `a_u . y`: the elmore method's delays share most of their monomials
/// (a resistance times a capacitance appears in every delay through both), so each is evaluated,
/// exponentiated and added into the Hessian once per point, whatever number of functions use it.
pub(super) struct Table {
    /// Monomial `u`'s (variable, exponent) pairs at `monomial_at[u]..monomial_at[u + 1]`, sorted
    /// by variable, each variable once.
    pub(super) monomial_at: Vec<usize>,
    pairs: Vec<(usize, f64)>,
    /// Function `f`'s terms at `term_at[f]..term_at[f + 1]` (function 0 the objective).
    pub(super) term_at: Vec<usize>,
    /// Each term's monomial and coefficient.
    pub(super) monomial: Vec<usize>,
    coefficient: Vec<f64>,
    /// Function `f`'s variables, ascending, at `touched_at[f]..touched_at[f + 1]`.
    pub(super) touched_at: Vec<usize>,
    pub(super) touched: Vec<usize>,
    /// Term `t`'s (position in its function's variables, exponent) pairs at
    /// `local_at[t]..local_at[t + 1]`.
    local_at: Vec<usize>,
    local: Vec<(u32, f64)>,
    /// Each pair's index into the variables (exponent 1) and then their reciprocals (-1), and
    /// whether every pair of a monomial has one.
    base_index: Vec<u32>,
    plain: Vec<bool>,
    variables: usize,
    /// Each function's terms' sums of (pairs as given) squared and of pairs plus one.
    sizes: Vec<(u128, u128)>,
}

impl Table {
    /// The table of `functions` (each a list of terms: coefficient, (variable, exponent) pairs)
    /// over `variables` variables; `size` is about how many functions, terms and pairs there are
    /// (room is made for that many).
    pub(super) fn new<'a, T>(functions: impl Iterator<Item = T>, variables: usize, size: (usize, usize, usize)) -> Table
    where
        T: Iterator<Item = (f64, &'a [(usize, f64)])>,
    {
        let with = |capacity: usize| {
            let mut at = Vec::with_capacity(capacity + 1);
            at.push(0);
            at
        };
        let (functions_hint, terms, pairs) = size;
        let mut table = Table {
            monomial_at: with(terms),
            pairs: Vec::with_capacity(pairs),
            term_at: with(functions_hint),
            monomial: Vec::with_capacity(terms),
            coefficient: Vec::with_capacity(terms),
            touched_at: with(functions_hint),
            touched: Vec::with_capacity(functions_hint * variables.min(8)),
            local_at: with(terms),
            local: Vec::with_capacity(pairs),
            sizes: Vec::with_capacity(functions_hint),
            base_index: Vec::with_capacity(pairs),
            plain: Vec::with_capacity(terms),
            variables,
        };
        // Distinct monomials in an open-addressed table of (hash of the pairs, monomial) with room
        // for every term twice over, probing on past a collision: no key is allocated per term.
        let mut slots: Vec<(u64, usize)> = vec![(0, EMPTY); (2 * terms).next_power_of_two().max(16)];
        let mut merged: Vec<(usize, f64)> = Vec::new();
        let (mut seen, mut position) = (vec![false; variables], vec![0u32; variables]);
        for terms in functions {
            let first = table.touched.len();
            let mut size = (0u128, 0u128);
            for (coefficient, exponents) in terms {
                let given = exponents.len() as u128;
                size = (size.0 + given * given, size.1 + given + 1);
                merged.clear();
                for &(k, e) in exponents {
                    match merged.iter_mut().find(|(v, _)| *v == k) {
                        Some(pair) => pair.1 += e,
                        None => merged.push((k, e)),
                    }
                }
                if !merged.is_sorted_by_key(|&(k, _)| k) {
                    merged.sort_unstable_by_key(|&(k, _)| k);
                }
                let key = merged.iter().fold(0x9e37_79b9_7f4a_7c15u64, |h, &(k, e)| {
                    (h.rotate_left(5) ^ k as u64 ^ e.to_bits().rotate_left(17)).wrapping_mul(0x517c_c1b7_2722_0a95)
                });
                let mask = slots.len() - 1;
                let mut at = (key >> 32) as usize & mask;
                let u = loop {
                    match slots[at] {
                        (_, EMPTY) => {
                            let next = table.monomial_at.len() - 1;
                            slots[at] = (key, next);
                            table.pairs.extend_from_slice(&merged);
                            let index = |&(k, e): &(usize, f64)| match e {
                                1.0 => k as u32,
                                -1.0 => (variables + k) as u32,
                                _ => u32::MAX,
                            };
                            table.base_index.extend(merged.iter().map(index));
                            table.plain.push(merged.iter().all(|pair| index(pair) != u32::MAX));
                            table.monomial_at.push(table.pairs.len());
                            if 2 * table.monomial_at.len() > slots.len() {
                                slots = grown(&slots);
                            }
                            break next;
                        }
                        (known, u) if known == key && same(table.monomial_pairs(u), &merged) => break u,
                        _ => at = (at + 1) & mask,
                    }
                };
                table.monomial.push(u);
                table.coefficient.push(coefficient);
                for &(k, _) in &merged {
                    if !seen[k] {
                        seen[k] = true;
                        table.touched.push(k);
                    }
                }
            }
            let terms = *table.term_at.last().unwrap_or(&0)..table.monomial.len();
            table.term_at.push(table.monomial.len());
            table.sizes.push(size);
            let touched = &mut table.touched[first..];
            touched.sort_unstable();
            for (local, &k) in touched.iter().enumerate() {
                seen[k] = false;
                position[k] = local as u32;
            }
            table.touched_at.push(table.touched.len());
            // Each term's pairs against the function's own variables, for its gradient.
            for t in terms {
                let u = table.monomial[t];
                for &(k, e) in &table.pairs[table.monomial_at[u]..table.monomial_at[u + 1]] {
                    table.local.push((position[k], e));
                }
                table.local_at.push(table.local.len());
            }
        }
        table
    }

    /// Work units of one Newton step and of one line-search trial over every function, as
    /// [`super::step_work`] counts them, `base` the box's and the factorisation's.
    pub(super) fn work(&self, base: (u128, u128)) -> (u128, u128) {
        let gradient = self.variables as u128 + 1;
        (0..self.functions()).fold(base, |(step, trial), f| {
            let touched = self.touched(f).len() as u128;
            let (hessian, values) = self.sizes[f];
            (step + touched * touched + hessian + values + gradient, trial + values + gradient)
        })
    }

    /// Number of functions.
    pub(super) fn functions(&self) -> usize {
        self.term_at.len() - 1
    }

    /// Function `f`'s variables.
    pub(super) fn touched(&self, f: usize) -> &[usize] {
        &self.touched[self.touched_at[f]..self.touched_at[f + 1]]
    }

    pub(super) fn monomial_pairs(&self, u: usize) -> &[(usize, f64)] {
        &self.pairs[self.monomial_at[u]..self.monomial_at[u + 1]]
    }

    /// `b_t + a_t . y` of term `t`.
    fn exponent(&self, t: usize, y: &[f64]) -> f64 {
        self.coefficient[t].ln() + self.monomial_pairs(self.monomial[t]).iter().map(|&(k, e)| e * y[k]).sum::<f64>()
    }

    /// Every function's value at `y`, stably.
    pub(super) fn values(&self, y: &[f64]) -> Vec<f64> {
        let mut values = vec![0.0; self.functions()];
        let mut weights = vec![0.0; self.monomial.len()];
        let mut scratch = Scratch::new(self, self.variables);
        self.evaluate(y, &mut values, &mut weights, &mut scratch);
        values
    }

    /// Every function's value at `y` into `values` and its term shares into `weights` (one per
    /// term), with `scratch.powers` (one per monomial) as scratch.
    pub(super) fn evaluate(&self, y: &[f64], values: &mut [f64], weights: &mut [f64], scratch: &mut Scratch) {
        if !self.products(y, scratch) {
            self.exponentials(y, scratch);
        }
        let top = scratch.top;
        for f in 0..self.functions() {
            let terms = self.term_at[f]..self.term_at[f + 1];
            let mut total = 0.0;
            let own = &mut weights[terms.clone()];
            for ((weight, &c), &u) in
                own.iter_mut().zip(&self.coefficient[terms.clone()]).zip(&self.monomial[terms.clone()])
            {
                *weight = c * scratch.powers[u];
                total += *weight;
            }
            if total > 1e-280 && total.is_finite() {
                values[f] = top + total.ln();
                let share = 1.0 / total;
                own.iter_mut().for_each(|weight| *weight *= share);
            } else {
                // Terms far below the table's largest: each function shifted by its own largest.
                let own = terms.clone().map(|t| self.exponent(t, y)).fold(f64::NEG_INFINITY, f64::max);
                let mut total = 0.0;
                for t in terms.clone() {
                    weights[t] = (self.exponent(t, y) - own).exp();
                    total += weights[t];
                }
                terms.clone().for_each(|t| weights[t] /= total);
                values[f] = own + total.ln();
            }
        }
    }

    /// Every monomial's value `exp(a_u . y - top)` into `scratch.powers`, `top` the largest
    /// `a_u . y`, into `scratch.top`.
    fn exponentials(&self, y: &[f64], scratch: &mut Scratch) {
        let mut top = f64::NEG_INFINITY;
        for (u, power) in scratch.powers.iter_mut().enumerate() {
            *power = self.monomial_pairs(u).iter().map(|&(k, e)| e * y[k]).sum::<f64>();
            top = top.max(*power);
        }
        for power in scratch.powers.iter_mut() {
            *power = (*power - top).exp();
        }
        scratch.top = top;
    }

    /// Every monomial's value `exp(a_u . y)` into `scratch.powers` (and `top` 0), a monomial whose
    /// exponents are all 1 or -1 as a product of the variables and their reciprocals (one
    /// exponential per variable, not per monomial); false, leaving the work to
    /// [`Table::exponentials`], where a value is too large or too small to keep its precision.
    fn products(&self, y: &[f64], scratch: &mut Scratch) -> bool {
        let n = self.variables;
        for k in 0..n {
            let x = y[k].exp();
            if !(1e-150..=1e150).contains(&x) {
                return false;
            }
            scratch.base[k] = x;
            scratch.base[n + k] = 1.0 / x;
        }
        let (mut low, mut high) = (f64::INFINITY, 0.0f64);
        for (u, power) in scratch.powers.iter_mut().enumerate() {
            let at = self.monomial_at[u]..self.monomial_at[u + 1];
            *power = if self.plain[u] {
                self.base_index[at].iter().map(|&i| scratch.base[i as usize]).product()
            } else {
                self.pairs[at].iter().map(|&(k, e)| e * y[k]).sum::<f64>().exp()
            };
            low = low.min(*power);
            high = high.max(*power);
        }
        scratch.top = 0.0;
        low > 1e-200 && high < 1e200
    }

    /// Every function's gradient over its variables into `gradients` (at `touched_at`), from the
    /// term shares [`Table::evaluate`] gave.
    pub(super) fn gradients(&self, weights: &[f64], gradients: &mut [f64]) {
        for f in 0..self.functions() {
            let gradient = &mut gradients[self.touched_at[f]..self.touched_at[f + 1]];
            gradient.fill(0.0);
            for t in self.term_at[f]..self.term_at[f + 1] {
                let weight = weights[t];
                for &(local, e) in &self.local[self.local_at[t]..self.local_at[t + 1]] {
                    gradient[local as usize] += weight * e;
                }
            }
        }
    }

    /// Each monomial's summed weight over the functions, `sum_f scale_f weight_t` over its terms
    /// `t` (a function of scale 0 adds nothing), into `shares` (one per monomial).
    pub(super) fn monomial_shares(&self, weights: &[f64], scales: &[f64], shares: &mut [f64]) {
        shares.fill(0.0);
        for f in 0..self.functions() {
            let scale = scales[f];
            if scale != 0.0 {
                let terms = self.term_at[f]..self.term_at[f + 1];
                for (&u, &weight) in self.monomial[terms.clone()].iter().zip(&weights[terms]) {
                    shares[u] += scale * weight;
                }
            }
        }
    }

    /// Add `sum_f scale_f (Hessian of f)` to the lower triangle of `hessian` (`size x size`,
    /// row-major), from the shares and gradients [`Table::evaluate`] and [`Table::gradients`] gave: each monomial's outer
    /// product once with its summed weight, then each function's rank-one part `(outer_f - scale_f)
    /// g g^T` (`scales` and `outers` per function; a function of scale 0 and outer 0 adds nothing).
    /// `shares` (one per monomial) is scratch.
    pub(super) fn add_hessian(
        &self,
        (weights, gradients): (&[f64], &[f64]),
        (scales, outers): (&[f64], &[f64]),
        hessian: &mut [f64],
        size: usize,
        shares: &mut [f64],
    ) {
        self.monomial_shares(weights, scales, shares);
        for (u, &share) in shares.iter().enumerate() {
            if share == 0.0 {
                continue;
            }
            let pairs = self.monomial_pairs(u);
            for (p, &(kp, ep)) in pairs.iter().enumerate() {
                let row = &mut hessian[kp * size..];
                let factor = share * ep;
                for &(kq, eq) in &pairs[..=p] {
                    row[kq] += factor * eq;
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
            for (p, &vp) in touched.iter().enumerate() {
                let row = &mut hessian[vp * size..];
                let factor = rank_one * gradient[p];
                for (q, &vq) in touched[..=p].iter().enumerate() {
                    row[vq] += factor * gradient[q];
                }
            }
        }
    }
}

/// Whether two monomials' pairs are the same, exponents compared bit for bit.
fn same(a: &[(usize, f64)], b: &[(usize, f64)]) -> bool {
    a.len() == b.len() && a.iter().zip(b).all(|(p, q)| p.0 == q.0 && p.1.to_bits() == q.1.to_bits())
}

/// An empty slot of the monomials' table.
const EMPTY: usize = usize::MAX;

/// The monomials' table `slots` rehashed into twice as many slots.
fn grown(slots: &[(u64, usize)]) -> Vec<(u64, usize)> {
    let mut more = vec![(0, EMPTY); 2 * slots.len()];
    let mask = more.len() - 1;
    for &(key, u) in slots.iter().filter(|slot| slot.1 != EMPTY) {
        let mut at = (key >> 32) as usize & mask;
        while more[at].1 != EMPTY {
            at = (at + 1) & mask;
        }
        more[at] = (key, u);
    }
    more
}

/// Scratch of [`Table::evaluate`].
pub(super) struct Scratch {
    powers: Vec<f64>,
    /// What every monomial's value is shifted by (in log terms).
    top: f64,
    /// Each variable and its reciprocal.
    base: Vec<f64>,
}

impl Scratch {
    /// Scratch for `table` over `variables` variables.
    pub(super) fn new(table: &Table, variables: usize) -> Scratch {
        Scratch { powers: vec![0.0; table.monomial_at.len() - 1], top: 0.0, base: vec![0.0; 2 * variables] }
    }
}

/// One phase of the interior-point method: minimise the objective (phase II) or the slack `s`
/// (phase I, variable `n`, constraints read `F_i(y) - s <= 0`), with the box as linear constraints.
pub(super) struct Problem<'a> {
    pub(super) meter: &'a Meter,
    /// Work units of one Newton step and of one line-search trial.
    pub(super) work: (u128, u128),
    /// The objective (function 0) and the constraints (function `i + 1` is constraint `i`).
    pub(super) table: &'a Table,
    /// How many of the constraints (the first ones) phase I relaxes by `s`; the rest are hard.
    pub(super) soft: usize,
    pub(super) lower: &'a [f64],
    pub(super) upper: &'a [f64],
    pub(super) phase_one: bool,
    pub(super) n: usize,
}

/// How a phase ended.
pub(super) enum Finish {
    /// Surrogate gap and dual residual below tolerance.
    Converged,
    /// The phase's own early stop (phase I: a point with margin was found).
    Early,
}

/// Every function's value and derivatives at one point.
pub(super) struct Point {
    /// Constraint values `G_i` (posynomials less the slack where it relaxes them, then
    /// `y - upper`, then `lower - y`).
    pub(super) values: Vec<f64>,
    /// Each function's value, term shares and gradient ([`Table::evaluate`], [`Table::gradients`]).
    pub(super) functions: Vec<f64>,
    pub(super) weights: Vec<f64>,
    pub(super) gradients: Vec<f64>,
}

/// The buffers every Newton step of either iteration fills: the table's scratch, each function's
/// curvature scale and rank-one weight, each monomial's share, the Newton matrix and its factor,
/// the right-hand side, the step and the dual residual.
pub(super) struct Buffers {
    pub(super) scratch: Scratch,
    pub(super) scales: Vec<f64>,
    pub(super) outers: Vec<f64>,
    pub(super) shares: Vec<f64>,
    pub(super) hessian: Vec<f64>,
    pub(super) factor: Vec<f64>,
    pub(super) right: Vec<f64>,
    pub(super) step: Vec<f64>,
    pub(super) dual: Vec<f64>,
}

impl Buffers {
    /// Buffers for `table` over `n` variables and Newton systems of `size` unknowns.
    pub(super) fn new(table: &Table, n: usize, size: usize) -> Buffers {
        let functions = table.functions();
        let monomials = table.monomial_at.len() - 1;
        Buffers {
            scratch: Scratch::new(table, n),
            scales: vec![0.0; functions],
            outers: vec![0.0; functions],
            shares: vec![0.0; monomials],
            hessian: vec![0.0; size * size],
            factor: vec![0.0; size * size],
            right: vec![0.0; size],
            step: vec![0.0; size],
            dual: vec![0.0; size],
        }
    }
}

/// The buffers of one phase.
struct Space {
    common: Buffers,
    dual_step: Vec<f64>,
}

impl Problem<'_> {
    fn size(&self) -> usize {
        self.n + usize::from(self.phase_one)
    }

    /// Number of posynomial constraints.
    pub(super) fn constraints(&self) -> usize {
        self.table.functions() - 1
    }

    pub(super) fn count(&self) -> usize {
        self.constraints() + 2 * self.n
    }

    pub(super) fn point(&self) -> Point {
        let table = self.table;
        Point {
            values: vec![0.0; self.count()],
            functions: vec![0.0; table.functions()],
            weights: vec![0.0; table.monomial.len()],
            gradients: vec![0.0; table.touched.len()],
        }
    }

    /// Function `f`'s gradient over its variables ([`Table::touched`] of `f`; constraint `i` is
    /// function `i + 1`).
    pub(super) fn gradient<'p>(&self, point: &'p Point, f: usize) -> &'p [f64] {
        &point.gradients[self.table.touched_at[f]..self.table.touched_at[f + 1]]
    }

    /// Fill `point` at `z`; whether `z` is strictly inside (every value negative and finite).
    /// Outside, the gradients are left as they were (a trial there is dropped before they are read).
    fn evaluate(&self, z: &[f64], point: &mut Point, scratch: &mut Scratch) -> bool {
        if (0..self.n).any(|j| !(self.lower[j] < z[j] && z[j] < self.upper[j])) {
            // Outside the box: no function is worth evaluating.
            return false;
        }
        let s = if self.phase_one { z[self.n] } else { 0.0 };
        self.table.evaluate(z, &mut point.functions, &mut point.weights, scratch);
        let m = self.constraints();
        for i in 0..m {
            point.values[i] = point.functions[i + 1] - if i < self.soft { s } else { 0.0 };
        }
        for j in 0..self.n {
            point.values[m + j] = z[j] - self.upper[j];
            point.values[m + self.n + j] = self.lower[j] - z[j];
        }
        let inside = point.values.iter().all(|v| *v < 0.0 && v.is_finite());
        if inside {
            self.table.gradients(&point.weights, &mut point.gradients);
        }
        inside
    }

    /// Of a trial `trial` outside (from `z`, inside), a share of the way to it that is surely
    /// inside: each constraint is convex along the segment, so below its chord, which crosses 0 at
    /// `G(z) / (G(z) - G(trial))` of the way; the box is linear. 0 where it cannot tell.
    fn inside_share(&self, z: &[f64], trial: &[f64], point: &Point, trial_point: &Point) -> f64 {
        let mut share: f64 = 1.0;
        for j in 0..self.n {
            let (from, to) = (z[j], trial[j]);
            if to >= self.upper[j] {
                share = share.min((self.upper[j] - from) / (to - from));
            } else if to <= self.lower[j] {
                share = share.min((from - self.lower[j]) / (from - to));
            }
        }
        if share < 1.0 {
            // Outside the box: the functions were not evaluated there.
            return 0.99 * share;
        }
        for i in 0..self.constraints() {
            let (from, to) = (point.values[i], trial_point.values[i]);
            if to.is_nan() || to == f64::INFINITY {
                return 0.0;
            }
            if to >= 0.0 {
                share = share.min(from / (from - to));
            }
        }
        0.99 * share
    }

    /// The residual `(grad f + sum lambda_i grad G_i, -lambda_i G_i - 1/t)`: its dual part in
    /// `dual`, and the norm of the whole.
    fn residual(&self, point: &Point, lambda: &[f64], t: f64, dual: &mut [f64]) -> f64 {
        dual.fill(0.0);
        if self.phase_one {
            dual[self.n] = 1.0;
        } else {
            for (&k, g) in self.table.touched(0).iter().zip(self.gradient(point, 0)) {
                dual[k] += g;
            }
        }
        let m = self.constraints();
        for i in 0..m {
            for (&k, g) in self.table.touched(i + 1).iter().zip(self.gradient(point, i + 1)) {
                dual[k] += lambda[i] * g;
            }
            if self.phase_one && i < self.soft {
                dual[self.n] -= lambda[i];
            }
        }
        for j in 0..self.n {
            dual[j] += lambda[m + j] - lambda[m + self.n + j];
        }
        let central: f64 = point.values.iter().zip(lambda).map(|(g, l)| (-l * g - 1.0 / t).powi(2)).sum();
        (dual.iter().map(|d| d * d).sum::<f64>() + central).sqrt()
    }

    /// The primal-dual Newton direction at `t`, into `space.common.step` and `space.dual_step`.
    fn direction(&self, point: &Point, lambda: &[f64], t: f64, space: &mut Space) -> Result<(), Stop> {
        let size = self.size();
        let n = self.n;
        let m = self.constraints();
        // The Lagrangian's curvature: the objective's (phase II), each constraint's at its
        // multiplier, and each constraint's rank-one barrier term at lambda_i / (-G_i).
        space.common.scales[0] = if self.phase_one { 0.0 } else { 1.0 };
        space.common.outers[0] = 0.0;
        for i in 0..m {
            space.common.scales[i + 1] = lambda[i];
            space.common.outers[i + 1] = lambda[i] / -point.values[i];
        }
        let (hessian, right) = (&mut space.common.hessian, &mut space.common.right);
        hessian.fill(0.0);
        right.fill(0.0);
        let table = self.table;
        let curvature = (space.common.scales.as_slice(), space.common.outers.as_slice());
        table.add_hessian((&point.weights, &point.gradients), curvature, hessian, size, &mut space.common.shares);
        // Right-hand side: -(grad f + (1/t) sum grad G_i / (-G_i)).
        if self.phase_one {
            right[n] = -1.0;
        } else {
            for (&k, g) in table.touched(0).iter().zip(self.gradient(point, 0)) {
                right[k] -= g;
            }
        }
        for i in 0..m {
            let gradient = self.gradient(point, i + 1);
            let distance = -point.values[i];
            if self.phase_one && i < self.soft {
                // The slack's gradient is -1: its row of the rank-one term, and its share of the
                // right-hand side.
                let outer = space.common.outers[i + 1];
                for (&k, g) in table.touched(i + 1).iter().zip(gradient) {
                    hessian[n * size + k] -= outer * g;
                }
                hessian[n * size + n] += outer;
                right[n] += 1.0 / (t * distance);
            }
            for (&k, g) in table.touched(i + 1).iter().zip(gradient) {
                right[k] -= g / (t * distance);
            }
        }
        for j in 0..n {
            let (above, below) = (-point.values[m + j], -point.values[m + n + j]);
            hessian[j * size + j] += lambda[m + j] / above + lambda[m + n + j] / below;
            right[j] -= (1.0 / above - 1.0 / below) / t;
        }
        if !solve_spd(
            &space.common.hessian,
            &space.common.right,
            size,
            &mut space.common.factor,
            &mut space.common.step,
        ) {
            return Err(Stop::Singular);
        }
        let step = &space.common.step;
        // d lambda_i = -lambda_i - 1 / (t G_i) - lambda_i (grad G_i . dz) / G_i
        for i in 0..m {
            let gradient = self.gradient(point, i + 1);
            let mut along: f64 = table.touched(i + 1).iter().zip(gradient).map(|(&k, g)| g * step[k]).sum();
            if self.phase_one && i < self.soft {
                along -= step[n];
            }
            let value = point.values[i];
            space.dual_step[i] = -lambda[i] - 1.0 / (t * value) - lambda[i] * along / value;
        }
        for j in 0..n {
            for (i, along) in [(m + j, step[j]), (m + n + j, -step[j])] {
                let value = point.values[i];
                space.dual_step[i] = -lambda[i] - 1.0 / (t * value) - lambda[i] * along / value;
            }
        }
        Ok(())
    }

    /// Primal-dual interior-point iterations from a strictly feasible `z`.
    /// `early` reads every function's value at the iterate (the objective's first).
    /// At most `limit` Newton steps.
    pub(super) fn run(&self, z: &mut [f64], limit: usize, early: impl Fn(&[f64]) -> bool) -> Result<Finish, Stop> {
        let size = self.size();
        let mut space = Space { common: Buffers::new(self.table, self.n, size), dual_step: vec![0.0; self.count()] };
        let mut point = self.point();
        let mut trial_point = self.point();
        if !self.evaluate(z, &mut point, &mut space.common.scratch) {
            return Err(Stop::Outside);
        }
        let mut lambda: Vec<f64> = point.values.iter().map(|g| -1.0 / g).collect();
        let mut trial_lambda = lambda.clone();
        let mut trial = z.to_vec();
        let mut trial_dual = vec![0.0; size];
        let count = self.count() as f64;
        let mut growth = GROWTH;
        for _ in 0..limit {
            self.meter.charge(self.work.0, Work::Elmore)?;
            if early(&point.functions) {
                return Ok(Finish::Early);
            }
            let gap: f64 = -point.values.iter().zip(&lambda).map(|(g, l)| g * l).sum::<f64>();
            let t = growth * count / gap;
            let norm = self.residual(&point, &lambda, t, &mut space.common.dual);
            let dual_norm = space.common.dual.iter().map(|d| d * d).sum::<f64>().sqrt();
            if gap <= GAP && dual_norm <= DUAL_TOLERANCE {
                return Ok(Finish::Converged);
            }
            self.direction(&point, &lambda, t, &mut space)?;
            let mut length: f64 = 1.0;
            for (l, d) in lambda.iter().zip(&space.dual_step) {
                if *d < 0.0 {
                    length = length.min(-l / d);
                }
            }
            length *= 0.99;
            let first = length;
            loop {
                self.meter.charge(self.work.1, Work::Elmore)?;
                for (k, value) in trial.iter_mut().enumerate() {
                    *value = z[k] + length * space.common.step[k];
                }
                for (i, l) in trial_lambda.iter_mut().enumerate() {
                    *l = lambda[i] + length * space.dual_step[i];
                }
                if self.evaluate(&trial, &mut trial_point, &mut space.common.scratch) {
                    let trial_norm = self.residual(&trial_point, &trial_lambda, t, &mut trial_dual);
                    if trial_norm <= (1.0 - 0.01 * length) * norm {
                        break;
                    }
                    length *= 0.5;
                } else {
                    length *= 0.5f64.max(self.inside_share(&z[..self.n], &trial, &point, &trial_point));
                }
                if length < 1e-14 {
                    // No progress at this precision: as close as rounding allows.
                    return Ok(Finish::Converged);
                }
            }
            // The next step aims further after a full step near the central path (Newton's
            // method converging there), nearer after a short one.
            growth = if length == first && length > 0.9 && dual_norm < NEAR {
                FAR
            } else if length < 0.9 {
                SHORT
            } else {
                GROWTH
            };
            z.copy_from_slice(&trial);
            std::mem::swap(&mut point, &mut trial_point);
            std::mem::swap(&mut lambda, &mut trial_lambda);
        }
        Err(Stop::Stalled)
    }
}

/// Relative accuracy of the optimum: the surrogate duality gap on the log objective.
const GAP: f64 = 1e-10;
/// Largest dual residual accepted at the optimum.
const DUAL_TOLERANCE: f64 = 1e-8;
/// How far each iteration aims along the central path (mu in t = mu m / gap): after a step of
/// at least 0.9 of the way, [`FAR`] after a full one whose dual residual was below [`NEAR`],
/// [`SHORT`] after a step of less than 0.9.
const GROWTH: f64 = 10.0;
const FAR: f64 = 1000.0;
const NEAR: f64 = 1e-3;
const SHORT: f64 = 3.0;
/// Most iterations per phase.
pub(super) const ITERATIONS: usize = 300;
