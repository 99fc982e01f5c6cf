//! The elmore method, a sizing strategy that calls timing: the least total W/L such that every
//! worst-case Elmore delay is at most the delay target times the reference inverter's driving the
//! same load, within a cap on the total W/L ([`crate::sizing::target`]), as a geometric program over
//! the W/L of every device, built from timing's delay posynomials ([`crate::timing::posynomial`]) and
//! solved by [`crate::optimize::geometric`]; or, the same program's other question, the least worst
//! delay ratio within the cap.
//!
//! The constraints are every transition through one path that conducts alone, of every input on
//! both edges (each such path, with each input on it), which include the worst cases timing
//! reports, whatever widths the optimum picks.

use crate::budget::{Estimate, Meter, Work};
use crate::cell::SizedStage;
use crate::network::Sides;
use crate::optimize::geometric::{self, Monomial, Outcome, Posynomial, Program, SolveError};
use crate::sizing::build;
use crate::sizing::error::SizingError;
use crate::sizing::plan::{Load, Plan};
use crate::sizing::rules::{self, Rule};
use crate::sizing::target::{self, Goal, Optimum};
use crate::timing::circuit::{Circuit, chain, reference_delay};
use crate::timing::delays::{input_loads, worst_transitions};
use crate::timing::error::TimingError;
use crate::timing::posynomial::{PathTransition, Variables, delay_posynomial, path_transitions};
use crate::timing::report::Edge;

/// Most transistors (both networks) a gate may have for the elmore method: its Newton steps are dense.
pub const MAX_DEVICES: usize = 96;
/// No width goes above this factor times its longest-path width (the cap on the total W/L binds first).
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

/// The load on the output as the program sees it.
#[derive(Debug, Clone, PartialEq)]
enum Loads {
    /// A fixed load per input, C.
    Fixed(Vec<f64>),
    /// H times the timed input's own capacitance (the sum of its devices' widths, a posynomial in
    /// them). The reference inverter's delay at that load, the bound, is then a posynomial too, and a
    /// constraint `delay <= bound` is not one a geometric program takes: the bound is condensed to
    /// the monomial that touches it at `point` (the weighted arithmetic-geometric mean inequality:
    /// never above it, equal at the point), and the program solved again at its optimum until the
    /// total W/L stops falling (Boyd, Kim, Vandenberghe & Hassibi, "A tutorial on geometric
    /// programming", 2007, section 9, signomial programming by condensation; from memory). Each
    /// optimum meets the true bounds, since the condensed one is never above them.
    Fanout {
        /// H.
        h: f64,
        /// The circuit devices of each input.
        devices: Vec<Vec<usize>>,
        /// Where the bounds are condensed: every device's W/L.
        point: Vec<f64>,
    },
}

/// Most rounds of the elmore method: each adds the worst transitions above their bounds, and with a
/// fan-out load condenses the bounds again.
const MAX_ROUNDS: usize = 30;
/// A worst transition this far above its bound joins the program.
const CUT_TOLERANCE: f64 = 1e-6;
/// The rounds stop once the total W/L falls by less than this fraction.
const ROUND_TOLERANCE: f64 = 1e-7;

/// What the program of a stage is built from, once.
struct Setup<'a> {
    stage: &'a SizedStage,
    plan: &'a Plan,
    circuit: Circuit,
    variables: Variables,
    transitions: Vec<PathTransition>,
    /// The longest-path widths (the box's centre) and the min-area ones (the start), by circuit
    /// device.
    longest: Vec<f64>,
    start: Vec<f64>,
    /// The most total W/L: [`target::CAP`] times the longest-path total.
    cap: f64,
}

impl<'a> Setup<'a> {
    /// Check the stage and list the transitions of its program.
    fn new(stage: &'a SizedStage, plan: &'a Plan) -> Result<Setup<'a>, SizingError> {
        let circuit = Circuit::new(stage, plan, plan.conditions.diffusion_ratio);
        let devices = circuit.devices.len();
        if devices > MAX_DEVICES {
            return Err(SizingError::TooLarge { count: devices, limit: MAX_DEVICES });
        }
        let mut longest = Vec::with_capacity(devices);
        let mut start = Vec::with_capacity(devices);
        for sized in stage.networks.values() {
            let reference = plan.reference_width(sized.kind());
            longest.extend(rules::widths(&sized.network, Rule::LongestPath, reference));
            start.extend(rules::widths(&sized.network, Rule::MinArea, reference));
        }
        let variables = Variables::of(&circuit);
        let cap = target::CAP * longest.iter().sum::<f64>();
        let setup = Setup { stage, plan, circuit, variables, transitions: Vec::new(), longest, start, cap };
        let loads = setup.loads(None)?;
        for input in 0..stage.function.inputs.len() {
            let load = match &loads {
                Loads::Fixed(loads) => loads[input],
                Loads::Fanout { h, devices, point } => h * devices[input].iter().map(|&d| point[d]).sum::<f64>(),
            };
            if load.is_nan() || load <= 0.0 {
                return Err(SizingError::Option {
                    what: "the load for the elmore method (with no load the delays do not depend on scale)",
                    rule: "must be positive".to_string(),
                    value: load,
                });
            }
        }
        let transitions = path_transitions(stage, plan, &setup.circuit)?;
        Ok(Setup { transitions, ..setup })
    }

    /// The plan's load as the program sees it, a fan-out's bounds condensed at `point` (else at the
    /// longest-path widths, so that they stay feasible for a target they meet).
    fn loads(&self, point: Option<&[f64]>) -> Result<Loads, SizingError> {
        Ok(match self.plan.conditions.load {
            Load::Fanout(h) => {
                let mut devices = vec![Vec::new(); self.stage.function.inputs.len()];
                for (index, device) in self.circuit.devices.iter().enumerate() {
                    devices[device.input].push(index);
                }
                Loads::Fanout { h, devices, point: point.unwrap_or(&self.longest).to_vec() }
            }
            load => Loads::Fixed(input_loads(self.stage, self.plan, load)?),
        })
    }

    /// A transition's constraint, `delay / bound <= 1`, as a posynomial.
    fn constraint(&self, transition: &PathTransition, loads: &Loads) -> Result<Posynomial, SizingError> {
        let diffusion_ratio = self.plan.conditions.diffusion_ratio;
        let network = |why| TimingError::Network {
            input: self.stage.function.inputs[transition.input].clone(),
            edge: transition.edge.name(),
            why,
        };
        match loads {
            Loads::Fixed(loads) => {
                let load = loads[transition.input];
                let bound = reference_delay(self.plan, diffusion_ratio, transition.edge, load);
                let mut posynomial =
                    delay_posynomial(&self.circuit, &self.variables, transition, load).map_err(network)?;
                for term in &mut posynomial.terms {
                    term.coefficient /= bound;
                }
                Ok(posynomial)
            }
            Loads::Fanout { h, devices, point } => {
                let own = &devices[transition.input];
                let mut posynomial =
                    delay_posynomial(&self.circuit, &self.variables, transition, 0.0).map_err(network)?;
                // The load's terms: h x (sum of the input's widths) x (the chain's resistance).
                for &resistor in &transition.chain {
                    let unit = self.circuit.devices[resistor].unit_resistance;
                    for &device in own {
                        let exponents =
                            if device == resistor { Vec::new() } else { vec![(resistor, -1.0), (device, 1.0)] };
                        posynomial.terms.push(Monomial { coefficient: h * unit, exponents });
                    }
                }
                // The bound t (own diffusion + h x input capacitance), condensed at the point.
                let target = self.plan.target(transition.edge.network());
                let fixed = target * diffusion_ratio * self.plan.reference_capacitance();
                let parts: Vec<(Option<usize>, f64, f64)> = std::iter::once((None, fixed, fixed))
                    .chain(own.iter().map(|&d| (Some(d), target * h, target * h * point[d])))
                    .filter(|&(_, _, value)| value > 0.0)
                    .collect();
                let total: f64 = parts.iter().map(|&(_, _, value)| value).sum();
                let mut coefficient = 1.0;
                let mut powers: Vec<(usize, f64)> = Vec::new();
                for (device, scale, value) in parts {
                    let weight = value / total;
                    coefficient *= (scale / weight).powf(weight);
                    if let Some(device) = device {
                        powers.push((device, weight));
                    }
                }
                for term in &mut posynomial.terms {
                    term.coefficient /= coefficient;
                    for &(device, weight) in &powers {
                        match term.exponents.iter_mut().find(|(k, _)| *k == device) {
                            Some((_, exponent)) => *exponent -= weight,
                            None => term.exponents.push((device, -weight)),
                        }
                    }
                    term.exponents.retain(|&(_, exponent)| exponent != 0.0);
                }
                Ok(posynomial)
            }
        }
    }

    /// The program with `loads` for `goal`, started at the min-area widths, refused as soon as
    /// the constraints built so far make the solver's Newton steps, as many as it may take, pass the
    /// work budget of `meter` ([`geometric::solve_within`] would refuse the whole program the same
    /// way, after building all of it). Also gives, per constraint, its input and edge. The total W/L
    /// is held within the cap (a hard constraint: the start, min-area's widths, is well inside it).
    /// For [`Goal::Ratio`] the last variable is the worst ratio, the objective.
    fn program(&self, loads: &Loads, goal: Goal, meter: &Meter) -> Result<(Program, Vec<(usize, Edge)>), SizingError> {
        let devices = self.circuit.devices.len();
        let variables = &self.variables;
        let mut constraints: Vec<Posynomial> = Vec::with_capacity(self.transitions.len());
        let mut labels = Vec::with_capacity(self.transitions.len());
        let mut chains: Vec<(Edge, &[usize])> = Vec::with_capacity(self.transitions.len());
        let mut group_start = 0;
        // The Newton step's work: the objective, the box, the hard constraints, then each chain's
        // constraints once they are final (the next chain's first transition comes).
        let ratio_variable = matches!(goal, Goal::Ratio).then_some(variables.count());
        let variable_count = variables.count() + usize::from(ratio_variable.is_some());
        let total = objective(devices);
        let objective = match ratio_variable {
            Some(t) => Posynomial { terms: vec![Monomial { coefficient: 1.0, exponents: vec![(t, 1.0)] }] },
            None => total.clone(),
        };
        let mut hard = variables.bounds();
        let mut cap = total;
        cap.terms.iter_mut().for_each(|term| term.coefficient /= self.cap);
        hard.push(cap);
        let mut step = hard.iter().chain([&objective]).fold(geometric::base_work(variable_count).0, |total, p| {
            total + geometric::posynomial_work(p, variable_count).0
        });
        for transition in &self.transitions {
            let mut posynomial = self.constraint(transition, loads)?;
            if let Goal::Area { ratio } = goal {
                posynomial.terms.iter_mut().for_each(|term| term.coefficient /= ratio);
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
        // No width below the process's minimum (as W/L), or the longest-path width where that is
        // smaller: a device no constraint needs keeps a drawable width.
        let minimum = self.plan.process.min_width_nm / self.plan.process.unit_width_nm;
        let mut lower: Vec<f64> = self.longest.iter().map(|&w| w.min(minimum)).collect();
        let mut upper: Vec<f64> = self.longest.iter().map(|w| w * BOX).collect();
        // A shared diffusion's variable starts above its wider device and may go anywhere its devices
        // may (and a little beyond, so that the box never holds it).
        for &(_, first, second) in &variables.pairs {
            lower.push(lower[first].min(lower[second]));
            upper.push(2.0 * upper[first].max(upper[second]));
        }
        let floor = lower.clone();
        let mut start = variables.at(&self.start.iter().zip(&floor).map(|(w, f)| w.max(f * 1.01)).collect::<Vec<_>>());
        start[devices..].iter_mut().for_each(|t| *t *= 1.25);
        if let Some(t) = ratio_variable {
            // The ratio starts above the worst constraint at the start, so the program starts inside.
            let worst = constraints.iter().map(|c| c.value(&start)).fold(1e-6, f64::max);
            for constraint in &mut constraints {
                constraint.terms.iter_mut().for_each(|term| term.exponents.push((t, -1.0)));
            }
            lower.push(RATIO_RANGE.0);
            upper.push(RATIO_RANGE.1);
            start.push((2.0 * worst).clamp(RATIO_RANGE.0 * 10.0, RATIO_RANGE.1 / 10.0));
        }
        let program = Program { variables: variable_count, objective, constraints, hard, lower, upper, start };
        Ok((program, labels))
    }

    /// The worst transitions (by the one rule, at these widths) above `ratio` times their bounds
    /// that the program does not hold yet and can: those whose conducting network is a tree rooted
    /// at the rail.
    fn cuts(&self, widths: &[f64], ratio: f64, meter: &Meter) -> Result<Vec<PathTransition>, SizingError> {
        let split = self.stage.networks.pull_down.widths.len();
        let widths = Sides::new(widths[..split].to_vec(), widths[split..].to_vec());
        let networks = self.stage.networks.as_ref().map(|_, n| n.network.clone());
        let sized = build::stage(&self.stage.function, self.stage.role, networks, widths, self.plan)?;
        let (circuit, found) = worst_transitions(&sized, self.plan, &self.plan.conditions, meter)?;
        let mut cuts = Vec::new();
        for (input, edge, load, transition) in found {
            let Some(transition) = transition else { continue };
            let bound = ratio * reference_delay(self.plan, self.plan.conditions.diffusion_ratio, edge, load);
            if transition.elmore <= bound * (1.0 + CUT_TOLERANCE) || !transition.tree {
                continue;
            }
            let Some(chain) = chain(&circuit, &transition.shape) else { continue };
            let held =
                self.transitions.iter().any(|t| t.input == input && t.edge == edge && t.shape == transition.shape);
            if !held {
                cuts.push(PathTransition { input, edge, shape: transition.shape, chain });
            }
        }
        Ok(cuts)
    }

    /// Solve a program for `goal`: the optimum's variables, or why there is none.
    fn solve(
        &self,
        program: &Program,
        labels: &[(usize, Edge)],
        goal: Goal,
        meter: &Meter,
    ) -> Result<Vec<f64>, SizingError> {
        let devices = self.circuit.devices.len();
        let outcome = geometric::solve_within(program, meter).map_err(|error| match error {
            SolveError::OverBudget(over) => SizingError::OverBudget(over),
            error => SizingError::Solver(error),
        })?;
        match outcome {
            Outcome::Optimal { x, at_bound, .. } => {
                // Only the widths' upper bounds count (a shared diffusion's variable follows its
                // devices; a width at the process's minimum is where the optimum puts it).
                if at_bound.iter().any(|&variable| variable < devices && x[variable] > self.longest[variable]) {
                    return Err(SizingError::Unbounded { factor: BOX });
                }
                Ok(x)
            }
            Outcome::Infeasible { least_worst, worst_constraint } => {
                let (input, edge) = labels[worst_constraint];
                let target = match goal {
                    Goal::Area { ratio } => ratio,
                    Goal::Ratio => 1.0,
                };
                Err(SizingError::Infeasible {
                    target,
                    best: least_worst * target,
                    cap: self.cap,
                    cap_factor: target::CAP,
                    input: self.stage.function.inputs[input].clone(),
                    edge: edge.name(),
                })
            }
        }
    }
}

/// The range the worst ratio may take in [`Goal::Ratio`]'s program.
const RATIO_RANGE: (f64, f64) = (1e-9, 1e9);

/// The elmore method's program for a stage whose structure (stack order) is that of `stage`, under
/// `plan` (its load and diffusion ratio; a fan-out's bounds condensed at the longest-path widths),
/// for `goal`. Also gives, per constraint, its input and edge.
pub fn program(stage: &SizedStage, plan: &Plan, goal: Goal) -> Result<(Program, Vec<(usize, Edge)>), SizingError> {
    let setup = Setup::new(stage, plan)?;
    let loads = setup.loads(None)?;
    setup.program(&loads, goal, &Meter::unlimited())
}

/// The elmore method's widths for the structure (stack order) of `structure`, a stage sized by
/// the longest-path rule in the chosen order: the least total W/L with every worst-case Elmore delay
/// at most the plan's delay target (by default the ratio the longest-path widths reach,
/// [`target::classic_ratio`]) times the reference inverter's driving the same load, within the cap.
pub fn widths(structure: &SizedStage, plan: &Plan, meter: &Meter) -> Result<Sides<Vec<f64>>, SizingError> {
    let ratio = match plan.delay_target {
        Some(ratio) => ratio,
        None => target::classic_ratio(structure, plan, meter)?,
    };
    let optimum = match optimum(structure, plan, Goal::Area { ratio }, None, meter) {
        Ok(optimum) => optimum,
        // With a fan-out load the first program's bounds are condensed at the longest-path widths,
        // below the true ones elsewhere: the least ratio within the cap, timed by the one rule, says
        // whether the target is reachable; if it is, the program starts again from those widths.
        Err(SizingError::Infeasible { input, edge, cap, cap_factor, .. }) => {
            let fastest = optimum(structure, plan, Goal::Ratio, None, meter)?;
            let best = target::worst_ratio(&stage_at(structure, &fastest.widths, plan)?, plan, meter)?;
            if best > ratio {
                return Err(SizingError::Infeasible { target: ratio, best, cap, cap_factor, input, edge });
            }
            optimum(structure, plan, Goal::Area { ratio }, Some(&fastest.widths), meter)?
        }
        Err(error) => return Err(error),
    };
    let split = structure.networks.pull_down.widths.len();
    Ok(Sides::new(optimum.widths[..split].to_vec(), optimum.widths[split..].to_vec()))
}

/// One step of the sequence of convex approximations (`--worst-case vectors`): the program at
/// `ratio` with a fan-out's bounds condensed at `x` (device widths), `extra` constraints (each a
/// monomial approximation of a transition's delay ratio over the target, with its input and edge)
/// and every width within `trust` of `x` either way, started at `x`. Gives the optimum's widths.
pub fn trust_step(
    structure: &SizedStage,
    plan: &Plan,
    ratio: f64,
    x: &[f64],
    extra: &[(Posynomial, (usize, Edge))],
    trust: f64,
    meter: &Meter,
) -> Result<Vec<f64>, SizingError> {
    let setup = Setup::new(structure, plan)?;
    let devices = setup.circuit.devices.len();
    let loads = setup.loads(Some(x))?;
    let goal = Goal::Area { ratio };
    let (mut program, mut labels) = setup.program(&loads, goal, meter)?;
    for (constraint, label) in extra {
        program.constraints.push(constraint.clone());
        labels.push(*label);
    }
    for (j, &w) in x.iter().enumerate() {
        program.lower[j] = program.lower[j].max(w / trust);
        program.upper[j] = program.upper[j].min(w * trust);
    }
    let mut start = setup.variables.at(x);
    start[devices..].iter_mut().for_each(|t| *t *= 1.25);
    for (j, value) in start.iter().enumerate() {
        let (low, high) = (program.lower[j], program.upper[j]);
        program.start[j] = if *value > low && *value < high { *value } else { (low * high).sqrt() };
    }
    let x = setup.solve(&program, &labels, goal, meter)?;
    Ok(x[..devices].to_vec())
}

/// The stage of `structure`'s networks at these widths (pull-down first).
pub fn stage_at(structure: &SizedStage, widths: &[f64], plan: &Plan) -> Result<SizedStage, SizingError> {
    let split = structure.networks.pull_down.widths.len();
    let widths = Sides::new(widths[..split].to_vec(), widths[split..].to_vec());
    let networks = structure.networks.as_ref().map(|_, n| n.network.clone());
    build::stage(&structure.function, structure.role, networks, widths, plan)
}

/// The optimum of `goal` for the structure (stack order) of `structure`; with a fan-out load the
/// bounds are first condensed at `from` (widths, pull-down first), else at the longest-path widths:
/// widths that meet the target there keep the first program feasible.
///
/// The program starts from the transitions through one path that conducts alone; each optimum is
/// then timed by the one worst-transition rule, and every worst transition above its bound whose
/// conducting network is a tree (a path with side branches) joins the program as a constraint of
/// its own, until none is left (a cutting plane), or the rounds run out and the last optimum stands
/// (its delays, as reported, say by how much a bound is missed). With a fan-out load, each round
/// also condenses the bounds at the last optimum, until the total W/L settles.
pub fn optimum(
    structure: &SizedStage,
    plan: &Plan,
    goal: Goal,
    from: Option<&[f64]>,
    meter: &Meter,
) -> Result<Optimum, SizingError> {
    let devices: usize = structure.networks.values().map(|n| n.widths.len()).sum();
    if devices > MAX_DEVICES {
        return Err(SizingError::TooLarge { count: devices, limit: MAX_DEVICES });
    }
    let mut setup = Setup::new(structure, plan)?;
    let mut loads = setup.loads(from)?;
    let fanout = matches!(loads, Loads::Fanout { .. });
    let mut last: Option<(Vec<f64>, f64, Program)> = None;
    for round in 0..MAX_ROUNDS {
        let (program, labels) = setup.program(&loads, goal, meter)?;
        let x = match setup.solve(&program, &labels, goal, meter) {
            Ok(x) => x,
            // A later round the solver cannot finish (a bound condensed where it is already tight can
            // leave it no interior to start from) ends the refinement with the last optimum.
            Err(SizingError::Solver(SolveError::Stalled | SolveError::Singular)) if round > 0 => break,
            Err(error) => return Err(error),
        };
        let value = program.objective.value(&x);
        let ratio = match goal {
            Goal::Area { ratio } => ratio,
            Goal::Ratio => value,
        };
        let settled =
            !fanout || last.as_ref().is_some_and(|(_, before, _)| (before - value).abs() <= ROUND_TOLERANCE * value);
        let cuts = setup.cuts(&x[..devices], ratio, meter)?;
        let done = cuts.is_empty() && settled;
        setup.transitions.extend(cuts);
        if fanout {
            loads = setup.loads(Some(&x[..devices]))?;
        }
        last = Some((x, value, program));
        if done {
            break;
        }
    }
    let (x, value, program) = last.ok_or(SizingError::Solver(SolveError::Stalled))?;
    let total = x[..devices].iter().sum();
    let ratio = match goal {
        Goal::Area { ratio } => ratio,
        Goal::Ratio => value,
    };
    Ok(Optimum { widths: x[..devices].to_vec(), total, ratio, cap: setup.cap, program })
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
