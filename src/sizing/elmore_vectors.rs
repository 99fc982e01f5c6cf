//! The elmore method against every input vector (`--worst-case vectors`, docs/model.md section 12):
//! a transition where several paths conduct at once has an Elmore delay that is not a posynomial in
//! the widths, so the program is no longer a geometric program. It is solved by a sequence of convex
//! approximations: from the optimum over paths, each worst transition (section 7's rule, over every
//! vector) above the target joins the program as the monomial that matches its delay ratio and its
//! slopes in log-widths at the current point, every width held within a trust region of it; the
//! step is taken, the region shrunk where it missed, until every vector meets the target and the
//! total settles. The result is a local optimum, and its feasibility is checked on every vector.

use crate::budget::Meter;
use crate::cell::SizedStage;
use crate::network::Sides;
use crate::optimize::geometric::{Monomial, Posynomial};
use crate::sizing::elmore::{self, stage_at};
use crate::sizing::error::SizingError;
use crate::sizing::plan::Plan;
use crate::sizing::target;
use crate::timing::circuit::{Circuit, flat_widths, reference_delay};
use crate::timing::delays::{input_loads, worst_transitions};
use crate::timing::error::TimingError;
use crate::timing::report::Edge;
use crate::timing::transition::{EVERY_VECTOR, time_vector};

/// Most steps of the sequence.
const STEPS: usize = 40;
/// A worst ratio this far above the target misses it.
const TOLERANCE: f64 = 1e-6;
/// The steps stop once the total W/L moves by less than this fraction and every vector meets the
/// target.
const SETTLED: f64 = 1e-7;
/// Relative step of the slopes' finite differences, in log-width.
const SLOPE_STEP: f64 = 1e-6;

/// One transition held by the sequence: its input, edge and vector (the values after the switch).
#[derive(Debug, Clone, PartialEq)]
struct Held {
    input: usize,
    edge: Edge,
    after: Vec<bool>,
}

/// The delay ratio of `held` at device widths `x`.
fn ratio_at(structure: &SizedStage, plan: &Plan, held: &Held, x: &[f64]) -> Result<f64, SizingError> {
    let stage = stage_at(structure, x, plan)?;
    let load = input_loads(&stage, plan, plan.conditions.load)?[held.input];
    let circuit = Circuit::new(&stage, plan, plan.conditions.diffusion_ratio);
    let timed =
        time_vector(&circuit, &flat_widths(&stage), held.input, held.edge, held.after.clone(), load, EVERY_VECTOR)
            .map_err(|why| TimingError::Network {
                input: stage.function.inputs[held.input].clone(),
                edge: held.edge.name(),
                why,
            })?;
    Ok(timed.elmore / reference_delay(plan, plan.conditions.diffusion_ratio, held.edge, load))
}

/// The monomial that matches `held`'s delay ratio over `ratio` and its slopes at `x`.
fn monomial(
    structure: &SizedStage,
    plan: &Plan,
    held: &Held,
    x: &[f64],
    ratio: f64,
) -> Result<Posynomial, SizingError> {
    let value = ratio_at(structure, plan, held, x)?;
    let mut coefficient = value / ratio;
    let mut exponents = Vec::new();
    for j in 0..x.len() {
        let mut moved = x.to_vec();
        moved[j] *= SLOPE_STEP.exp();
        let slope = (ratio_at(structure, plan, held, &moved)? / value).ln() / SLOPE_STEP;
        if slope.abs() > 1e-12 {
            coefficient /= x[j].powf(slope);
            exponents.push((j, slope));
        }
    }
    Ok(Posynomial { terms: vec![Monomial { coefficient, exponents }] })
}

/// Every worst transition above `ratio` at `x`, and the worst ratio with its input and edge.
#[allow(clippy::type_complexity)]
fn misses(
    structure: &SizedStage,
    plan: &Plan,
    x: &[f64],
    ratio: f64,
    meter: &Meter,
) -> Result<(Vec<Held>, (f64, usize, Edge)), SizingError> {
    let stage = stage_at(structure, x, plan)?;
    let (_, found) = worst_transitions(&stage, plan, &plan.conditions, meter)?;
    let mut missed = Vec::new();
    let mut worst = (0.0, 0, Edge::Fall);
    for (input, edge, load, transition) in found {
        let Some(transition) = transition else { continue };
        let value = transition.elmore / reference_delay(plan, plan.conditions.diffusion_ratio, edge, load);
        if value > worst.0 {
            worst = (value, input, edge);
        }
        if value > ratio * (1.0 + TOLERANCE) {
            missed.push(Held { input, edge, after: transition.after });
        }
    }
    Ok((missed, worst))
}

/// The elmore method's widths against every input vector, a local optimum, for the structure of
/// `structure` (the stage sized by the longest-path rule in the chosen order).
pub fn widths(structure: &SizedStage, plan: &Plan, meter: &Meter) -> Result<Sides<Vec<f64>>, SizingError> {
    let ratio = match plan.delay_target {
        Some(ratio) => ratio,
        None => target::classic_ratio(structure, plan, meter)?,
    };
    let split = structure.networks.pull_down.widths.len();
    let paths = elmore::widths(structure, plan, meter)?;
    let mut x: Vec<f64> = paths.values().flatten().copied().collect();
    let mut held: Vec<Held> = Vec::new();
    let mut trust = 1.5;
    let mut last_total = f64::INFINITY;
    let (mut missed, mut worst) = misses(structure, plan, &x, ratio, meter)?;
    for _ in 0..STEPS {
        let total: f64 = x.iter().sum();
        if missed.is_empty() && (total - last_total).abs() <= SETTLED * total {
            break;
        }
        for miss in &missed {
            if !held.contains(miss) {
                held.push(miss.clone());
            }
        }
        let mut extra = Vec::with_capacity(held.len());
        for h in &held {
            extra.push((monomial(structure, plan, h, &x, ratio)?, (h.input, h.edge)));
        }
        let step = match elmore::trust_step(structure, plan, ratio, &x, &extra, trust, meter) {
            Ok(step) => step,
            Err(SizingError::Infeasible { .. } | SizingError::Solver(_)) if trust > 1.01 => {
                trust = 1.0 + (trust - 1.0) / 2.0;
                continue;
            }
            Err(error) => return Err(error),
        };
        let (next_missed, next_worst) = misses(structure, plan, &step, ratio, meter)?;
        // A step that lands further from the target than it started is taken with a smaller region.
        if next_worst.0 > worst.0.max(ratio) * (1.0 + TOLERANCE) && trust > 1.01 {
            trust = 1.0 + (trust - 1.0) / 2.0;
            continue;
        }
        last_total = total;
        x = step;
        (missed, worst) = (next_missed, next_worst);
    }
    // Feasibility, checked on every vector by section 7's rule.
    let (missed, worst) = misses(structure, plan, &x, ratio, meter)?;
    if !missed.is_empty() {
        return Err(SizingError::VectorsNotMet {
            target: ratio,
            best: worst.0,
            input: structure.function.inputs[worst.1].clone(),
            edge: worst.2.name(),
        });
    }
    Ok(Sides::new(x[..split].to_vec(), x[split..].to_vec()))
}
