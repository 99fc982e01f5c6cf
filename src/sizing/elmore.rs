//! The elmore method, a sizing strategy that calls timing: the least total W/L such that every
//! worst-case Elmore delay is at most the reference inverter's driving the same load, as a geometric
//! program over the W/L of every device, built from timing's delay posynomials
//! ([`crate::timing::posynomial`]) and solved by [`crate::optimize::geometric`].
//!
//! The constraints are every transition through one path that conducts alone, of every input on
//! both edges (each such path, with each input on it), which include the worst cases timing
//! reports, whatever widths the optimum picks.

use crate::budget::{Estimate, Meter, Work};
use crate::cell::SizedStage;
use crate::network::Sides;
use crate::optimize::geometric::{self, Monomial, Outcome, Posynomial, Program, SolveError};
use crate::sizing::error::SizingError;
use crate::sizing::plan::Plan;
use crate::sizing::rules::{self, Rule};
use crate::timing::circuit::{Circuit, reference_delay};
use crate::timing::delays::input_loads;
use crate::timing::error::TimingError;
use crate::timing::posynomial::{Variables, delay_posynomial, path_transitions};
use crate::timing::report::Edge;
use crate::timing::transition::lone_path;

/// Most transistors (both networks) a gate may have for the elmore method: its Newton steps are dense.
pub const MAX_DEVICES: usize = 96;
/// Every width stays within this factor of its longest-path width, either way.
pub const BOX: f64 = 1e4;

/// Whether `a >= b` everywhere because every term of `b` is in `a` with at least its coefficient.
fn dominates(a: &Posynomial, b: &Posynomial) -> bool {
    b.terms.iter().all(|term| {
        a.terms.iter().any(|other| other.exponents == term.exponents && other.coefficient >= term.coefficient)
    })
}

/// The objective: the total W/L of `devices` devices.
fn objective(devices: usize) -> Posynomial {
    Posynomial { terms: (0..devices).map(|d| Monomial { coefficient: 1.0, exponents: vec![(d, 1.0)] }).collect() }
}

/// The elmore method's program for a stage whose structure (stack order) is that of `stage`, under
/// `plan` (its load and diffusion ratio). Also gives, per constraint, its input and edge.
pub fn program(stage: &SizedStage, plan: &Plan) -> Result<(Program, Vec<(usize, Edge)>), SizingError> {
    program_within(stage, plan, &Meter::unlimited())
}

/// [`program`], refused as soon as the constraints built so far make the solver's Newton
/// steps, as many as it may take, pass the work budget of `meter` ([`geometric::solve_within`]
/// would refuse the whole program the same way, after building all of it).
fn program_within(
    stage: &SizedStage,
    plan: &Plan,
    meter: &Meter,
) -> Result<(Program, Vec<(usize, Edge)>), SizingError> {
    let diffusion_ratio = plan.conditions.diffusion_ratio;
    let circuit = Circuit::new(stage, plan, diffusion_ratio);
    let devices = circuit.devices.len();
    if devices > MAX_DEVICES {
        return Err(SizingError::TooLarge { count: devices, limit: MAX_DEVICES });
    }
    let variables = Variables::of(&circuit);
    let loads = input_loads(stage, plan, plan.conditions.load)?;
    for (input, &load) in loads.iter().enumerate() {
        if load.is_nan() || load <= 0.0 {
            return Err(SizingError::Option {
                what: "the load for the elmore method (with no load the delays do not depend on scale)",
                rule: "must be positive".to_string(),
                value: load,
            });
        }
        for edge in Edge::BOTH {
            if lone_path(stage, plan, input, edge.network(), &Meter::unlimited())?.is_none() {
                return Err(SizingError::NoSinglePath {
                    input: stage.function.inputs[input].clone(),
                    edge: edge.name(),
                });
            }
        }
    }
    let transitions = path_transitions(stage, plan, &circuit)?;
    let mut constraints: Vec<Posynomial> = Vec::with_capacity(transitions.len());
    let mut labels = Vec::with_capacity(transitions.len());
    let mut chains: Vec<(Edge, &[usize])> = Vec::with_capacity(transitions.len());
    let mut group_start = 0;
    // The Newton step's work: the objective, the box, the hard constraints, then each chain's
    // constraints once they are final (the next chain's first transition comes).
    let variable_count = variables.count();
    let objective = objective(devices);
    let hard = variables.bounds();
    let mut step = hard.iter().chain([&objective]).fold(geometric::base_work(variable_count).0, |total, p| {
        total + geometric::posynomial_work(p, variable_count).0
    });
    for transition in &transitions {
        let load = loads[transition.input];
        let bound = reference_delay(plan, diffusion_ratio, transition.edge, load);
        let mut posynomial =
            delay_posynomial(&circuit, &variables, transition, load).map_err(|why| TimingError::Network {
                input: stage.function.inputs[transition.input].clone(),
                edge: transition.edge.name(),
                why,
            })?;
        for term in &mut posynomial.terms {
            term.coefficient /= bound;
        }
        // Of two transitions on one path, one whose every term another has, with at least its
        // coefficient, never binds (typically: the input nearest the rail charges the most nodes).
        let key = (transition.edge, transition.chain.as_slice());
        // A path's transitions come one after another, so the constraints of its chain are the
        // last ones: only those are compared (a scan of all of them made this quadratic).
        if chains.last() != Some(&key) {
            step += constraints[group_start..]
                .iter()
                .map(|p| geometric::posynomial_work(p, variable_count).0)
                .sum::<u128>();
            meter.fits(step.saturating_mul(geometric::MAX_NEWTON_STEPS), Estimate::MoreThan, Work::Elmore)?;
            group_start = constraints.len();
        }
        let mut dominated = false;
        let mut index = group_start;
        while index < constraints.len() {
            if chains[index] == key {
                if dominates(&constraints[index], &posynomial) {
                    dominated = true;
                    break;
                }
                if dominates(&posynomial, &constraints[index]) {
                    constraints.swap_remove(index);
                    labels.swap_remove(index);
                    chains.swap_remove(index);
                    continue;
                }
            }
            index += 1;
        }
        if !dominated {
            constraints.push(posynomial);
            labels.push((transition.input, transition.edge));
            chains.push(key);
        }
    }
    let mut longest = Vec::with_capacity(devices);
    let mut start = Vec::with_capacity(devices);
    for sized in stage.networks.values() {
        let reference = plan.reference_width(sized.kind());
        longest.extend(rules::widths(&sized.network, Rule::LongestPath, reference));
        start.extend(rules::widths(&sized.network, Rule::MinArea, reference));
    }
    let mut lower: Vec<f64> = longest.iter().map(|w| w / BOX).collect();
    let mut upper: Vec<f64> = longest.iter().map(|w| w * BOX).collect();
    // A shared diffusion's variable starts above its wider device and may go anywhere its devices
    // may (and a little beyond, so that the box never holds it).
    for &(_, first, second) in &variables.pairs {
        lower.push(lower[first].min(lower[second]));
        upper.push(2.0 * upper[first].max(upper[second]));
    }
    let mut start = variables.at(&start);
    start[devices..].iter_mut().for_each(|t| *t *= 1.25);
    let program = Program { variables: variable_count, objective, constraints, hard, lower, upper, start };
    Ok((program, labels))
}

/// The elmore method's widths for the structure (stack order) of `structure`, a stage sized by
/// the longest-path rule in the chosen order: the least total W/L with every worst-case Elmore delay
/// at most the reference inverter's driving the same load.
pub fn widths(structure: &SizedStage, plan: &Plan, meter: &Meter) -> Result<Sides<Vec<f64>>, SizingError> {
    let devices: usize = structure.networks.values().map(|n| n.widths.len()).sum();
    if devices > MAX_DEVICES {
        return Err(SizingError::TooLarge { count: devices, limit: MAX_DEVICES });
    }
    let (program, labels) = program_within(structure, plan, meter)?;
    let outcome = geometric::solve_within(&program, meter).map_err(|error| match error {
        SolveError::OverBudget(over) => SizingError::OverBudget(over),
        error => SizingError::Solver(error),
    })?;
    let widths = match outcome {
        Outcome::Optimal { x, at_bound, .. } => {
            // Only the widths' box counts (a shared diffusion's variable follows its devices).
            if at_bound.iter().any(|&variable| variable < devices) {
                return Err(SizingError::Unbounded { factor: BOX });
            }
            x
        }
        Outcome::Infeasible { least_worst, worst_constraint } => {
            let (input, edge) = labels[worst_constraint];
            return Err(SizingError::Infeasible {
                ratio: least_worst,
                input: structure.function.inputs[input].clone(),
                edge: edge.name(),
            });
        }
    };
    let split = structure.networks.pull_down.widths.len();
    Ok(Sides::new(widths[..split].to_vec(), widths[split..devices].to_vec()))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::size_text;
    use crate::sizing::plan::Method;
    use crate::timing::circuit::{elmore, flat_widths};

    #[test]
    fn posynomials_equal_the_network_solve_at_any_widths() {
        // The posynomial form must give the same first moment as G m = C d (the two are derived
        // apart; the solve is checked against a dense elimination and the tree formula in rc.rs).
        for text in ["nand3", "nor3", "aoi21", "aoi22", "oai221", "!(a & (b | c) & d)"] {
            let plan = Plan::new(Method::LongestPath, 2.5, 1.0, None);
            let cell = size_text(text, &plan).unwrap();
            let circuit = Circuit::new(cell.stage(), &plan, 0.8);
            let mut widths = flat_widths(cell.stage());
            for (index, w) in widths.iter_mut().enumerate() {
                *w *= 1.0 + 0.37 * ((index * 7 % 5) as f64);
            }
            let variables = Variables::of(&circuit);
            for transition in path_transitions(cell.stage(), &plan, &circuit).unwrap() {
                let posynomial = delay_posynomial(&circuit, &variables, &transition, 3.5).unwrap();
                let (solved, _, _) = elmore(&circuit, &transition.shape, &widths, 3.5).unwrap();
                let value = posynomial.value(&variables.at(&widths));
                assert!((value - solved).abs() < 1e-9 * solved, "{text}: {value} vs {solved}");
            }
        }
    }
}
