//! The elmore method: the least total W/L such that every worst-case Elmore delay is at most the
//! reference inverter's driving the same load, as a geometric program over the W/L of every device.
//!
//! A transition through one path that conducts alone has a chain of devices from the output to the
//! rail, and whatever else conducts hangs off the output through the other network. Its Elmore delay
//! is then `sum over chain nodes k of C_k x (resistance from k to the rail)` plus the hanging
//! capacitance times the whole chain's resistance. The constraints are every such transition of
//! every input on both edges (each conducting path that conducts alone, with each input on it), which
//! include the worst cases the delay stage reports, whatever widths the optimum picks.
//!
//! A node's capacitance is a sum of device widths, except a diffusion shared by two series devices,
//! which is as wide as the wider ([`NodeDiffusion::Shared`]): a maximum, not a posynomial. Each such
//! node gets a variable `t` of its own with the hard constraints `w_a / t <= 1` and `w_b / t <= 1`,
//! and its capacitance is `ratio x t`. Every delay grows with `t`, so wherever the widths meet the
//! delays with some `t` they meet them with `t = max(w_a, w_b)`: the program's optimum in the widths
//! is the one with the maximum. With `r = u / w`, every delay is then a posynomial.

use std::collections::BTreeMap;

use super::geometric::{self, Monomial, Outcome, Posynomial, Program, SolveError};
use super::{
    Circuit, Conducting, DelayError, DelayOptions, Edge, NetworkFault, conducting, fanout_copies, load_for,
    reference_delay,
};
use crate::budget::{Estimate, Meter, Work};
use crate::expr::GateFunction;
use crate::figures::NodeDiffusion;
use crate::gate::{GateOptions, SizedGate, size_function};
use crate::network::Sides;
use crate::paths::{self, MAX_LISTED_PATHS};
use crate::sizing::{self, Method};

/// Most transistors (both networks) a gate may have for the elmore method: its Newton steps are dense.
pub const MAX_DEVICES: usize = 96;
/// Every width stays within this factor of its longest-path width, either way.
pub const BOX: f64 = 1e4;

/// One transition with one conducting path.
#[derive(Debug, Clone)]
pub(crate) struct PathTransition {
    pub input: usize,
    pub edge: Edge,
    pub shape: Conducting,
    /// The path's devices (circuit indices), output side first.
    pub chain: Vec<usize>,
}

/// Every transition through one path that conducts alone: each such path of each network, with
/// each distinct input on it switching.
pub(crate) fn path_transitions(gate: &SizedGate, circuit: &Circuit) -> Result<Vec<PathTransition>, DelayError> {
    let input_of = gate.function.input_of();
    let inputs = gate.function.inputs.len();
    let mut out = Vec::new();
    for edge in Edge::BOTH {
        let kind = edge.network();
        let network = &gate.trees[kind];
        let total = paths::count(network);
        if total > MAX_LISTED_PATHS.into() {
            return Err(DelayError::TooManyPaths {
                network: kind.name(),
                count: total.to_string(),
                limit: MAX_LISTED_PATHS,
            });
        }
        let resistance = gate.options.resistances(kind, &gate.widths[kind]);
        for path in paths::list(network, &resistance, MAX_LISTED_PATHS) {
            let Some(after) = paths::sensitize(network, &path.devices, inputs) else { continue };
            let mut seen = Vec::new();
            for &device in &path.devices {
                let input = input_of[device];
                if seen.contains(&input) {
                    continue;
                }
                seen.push(input);
                let shape = conducting(circuit, edge, input, &after).map_err(|why| DelayError::Network {
                    input: gate.function.inputs[input].clone(),
                    edge: edge.name(),
                    why,
                })?;
                let chain = path.devices.iter().map(|&d| circuit.offsets[kind] + d).collect();
                out.push(PathTransition { input, edge, shape, chain });
            }
        }
    }
    Ok(out)
}

/// The program's variables: every circuit device's W/L, then one per shared diffusion standing
/// for the wider of its two devices.
#[derive(Debug, Clone)]
pub(crate) struct Variables {
    /// Circuit devices (the first variables).
    pub devices: usize,
    /// Per circuit node: its shared-diffusion variable, if it is one.
    pub shared: Vec<Option<usize>>,
    /// Every shared diffusion: (its variable, its two devices).
    pub pairs: Vec<(usize, usize, usize)>,
}

impl Variables {
    /// The variables of a circuit.
    pub fn of(circuit: &Circuit) -> Variables {
        let devices = circuit.devices.len();
        let mut shared = vec![None; circuit.diffusion.len()];
        let mut pairs = Vec::new();
        for (node, rule) in circuit.diffusion.iter().enumerate() {
            if let NodeDiffusion::Shared(first, second) = *rule {
                let variable = devices + pairs.len();
                shared[node] = Some(variable);
                pairs.push((variable, first, second));
            }
        }
        Variables { devices, shared, pairs }
    }

    /// How many there are.
    pub fn count(&self) -> usize {
        self.devices + self.pairs.len()
    }

    /// Every variable at these device widths: the widths, then each shared diffusion's wider device.
    pub fn at(&self, widths: &[f64]) -> Vec<f64> {
        let mut values = widths[..self.devices].to_vec();
        values.extend(self.pairs.iter().map(|&(_, first, second)| widths[first].max(widths[second])));
        values
    }

    /// A node's capacitance as (variable, coefficient) terms, in C.
    fn capacitance(&self, circuit: &Circuit, node: usize) -> Vec<(usize, f64)> {
        let ratio = circuit.diffusion_ratio;
        match (&circuit.diffusion[node], self.shared[node]) {
            (NodeDiffusion::Separate(devices), _) => devices.iter().map(|&d| (d, ratio)).collect(),
            (NodeDiffusion::Shared(..), Some(variable)) => vec![(variable, ratio)],
            _ => Vec::new(),
        }
    }

    /// The hard constraints `w / t <= 1` of every shared diffusion.
    fn bounds(&self) -> Vec<Posynomial> {
        self.pairs
            .iter()
            .flat_map(|&(variable, first, second)| {
                [first, second].map(|device| Posynomial {
                    terms: vec![Monomial { coefficient: 1.0, exponents: vec![(device, 1.0), (variable, -1.0)] }],
                })
            })
            .collect()
    }
}

/// A transition's Elmore delay as a posynomial in the [`Variables`], in RC.
pub(crate) fn delay_posynomial(
    circuit: &Circuit,
    variables: &Variables,
    transition: &PathTransition,
    load: f64,
) -> Result<Posynomial, NetworkFault> {
    let chain = &transition.chain;
    let shape = &transition.shape;
    // The chain's nodes from the output: v0 = output, v_{j+1} = source of device j.
    let mut chain_nodes = vec![super::OUTPUT];
    for (position, &device) in chain.iter().enumerate() {
        let d = &circuit.devices[device];
        if d.drain != chain_nodes[position] {
            return Err(NetworkFault::NotAChain);
        }
        chain_nodes.push(d.source);
    }
    if chain_nodes.last() != Some(&shape.rail) {
        return Err(NetworkFault::OffTheRail);
    }
    let kind = circuit.devices[chain[0]].kind;
    if shape.devices.iter().any(|d| circuit.devices[*d].kind == kind && !chain.contains(d)) {
        return Err(NetworkFault::MoreThanThePath);
    }
    let charged = |node: usize| shape.nodes.iter().zip(&shape.at_final).any(|(&n, &f)| n == node && !f);
    // (resistor device, capacitor device or None for the load) -> coefficient.
    let mut terms: BTreeMap<(usize, Option<usize>), f64> = BTreeMap::new();
    let add_node = |node: usize, from: usize, terms: &mut BTreeMap<(usize, Option<usize>), f64>| {
        for &resistor in &chain[from..] {
            let unit = circuit.devices[resistor].unit_resistance;
            for (capacitor, coefficient) in variables.capacitance(circuit, node) {
                *terms.entry((resistor, Some(capacitor))).or_insert(0.0) += unit * coefficient;
            }
            if node == super::OUTPUT && load > 0.0 {
                *terms.entry((resistor, None)).or_insert(0.0) += unit * load;
            }
        }
    };
    for (position, &node) in chain_nodes[..chain.len()].iter().enumerate() {
        if charged(node) {
            add_node(node, position, &mut terms);
        }
    }
    for &node in &shape.nodes {
        if !chain_nodes.contains(&node) && charged(node) {
            add_node(node, 0, &mut terms);
        }
    }
    let terms = terms
        .into_iter()
        .filter(|(_, c)| *c > 0.0)
        .map(|((resistor, capacitor), coefficient)| {
            let exponents = match capacitor {
                Some(c) if c == resistor => Vec::new(),
                Some(c) => vec![(resistor, -1.0), (c, 1.0)],
                None => vec![(resistor, -1.0)],
            };
            Monomial { coefficient, exponents }
        })
        .collect();
    Ok(Posynomial { terms })
}

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

/// The elmore method's program for a gate whose structure (stack order) is that of `gate`.
/// Also gives, per constraint, its input and edge.
pub fn elmore_program(gate: &SizedGate, delay: &DelayOptions) -> Result<(Program, Vec<(usize, Edge)>), DelayError> {
    elmore_program_within(gate, delay, &Meter::unlimited())
}

/// [`elmore_program`], refused as soon as the constraints built so far make the solver's Newton
/// steps, as many as it may take, pass the work budget of `meter` ([`geometric::solve_within`]
/// would refuse the whole program the same way, after building all of it).
pub(crate) fn elmore_program_within(
    gate: &SizedGate,
    delay: &DelayOptions,
    meter: &Meter,
) -> Result<(Program, Vec<(usize, Edge)>), DelayError> {
    let circuit = Circuit::new(gate, delay.diffusion_ratio);
    let devices = circuit.devices.len();
    if devices > MAX_DEVICES {
        return Err(DelayError::TooLarge { count: devices, limit: MAX_DEVICES });
    }
    let variables = Variables::of(&circuit);
    let copies = fanout_copies(&gate.function, &gate.options);
    for input in 0..gate.function.inputs.len() {
        let load = load_for(delay.load, &copies, input);
        if load.is_nan() || load <= 0.0 {
            return Err(DelayError::Option {
                what: "the load for the elmore method (with no load the delays do not depend on scale)",
                rule: "must be positive".to_string(),
                value: load,
            });
        }
        for edge in Edge::BOTH {
            if gate.worst_case_for_input(input, edge.network()).is_none() {
                return Err(DelayError::NoSinglePath { input: gate.function.inputs[input].clone(), edge: edge.name() });
            }
        }
    }
    let transitions = path_transitions(gate, &circuit)?;
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
        let load = load_for(delay.load, &copies, transition.input);
        let bound = reference_delay(&gate.options, delay.diffusion_ratio, transition.edge, load);
        let mut posynomial =
            delay_posynomial(&circuit, &variables, transition, load).map_err(|why| DelayError::Network {
                input: gate.function.inputs[transition.input].clone(),
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
    for network in crate::network::Network::pair(&gate.function) {
        longest.extend(sizing::size(&network, Method::LongestPath, &gate.options));
        start.extend(sizing::size(&network, Method::MinArea, &gate.options));
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

/// Size a gate by the elmore method: the program on the structure the longest-path sizing gives (or
/// the stack order in `options`), then the gate with those widths.
pub fn size_for_delay(
    function: &GateFunction,
    options: &GateOptions,
    delay: &DelayOptions,
    meter: &Meter,
) -> Result<SizedGate, DelayError> {
    let devices = 2 * function.literals.len();
    if devices > MAX_DEVICES {
        return Err(DelayError::TooLarge { count: devices, limit: MAX_DEVICES });
    }
    let mut structure = options.clone();
    structure.sizing.method = Method::LongestPath;
    structure.fixed_widths = None;
    let longest = size_function(function.clone(), &structure)?;
    let (program, labels) = elmore_program_within(&longest, delay, meter)?;
    let outcome = geometric::solve_within(&program, meter).map_err(|error| match error {
        SolveError::OverBudget(over) => DelayError::OverBudget(over),
        error => DelayError::Solver(error),
    })?;
    let widths = match outcome {
        Outcome::Optimal { x, at_bound, .. } => {
            // Only the widths' box counts (a shared diffusion's variable follows its devices).
            if at_bound.iter().any(|&variable| variable < devices) {
                return Err(DelayError::Unbounded { factor: BOX });
            }
            x
        }
        Outcome::Infeasible { least_worst, worst_constraint } => {
            let (input, edge) = labels[worst_constraint];
            return Err(DelayError::Infeasible {
                ratio: least_worst,
                input: function.inputs[input].clone(),
                edge: edge.name(),
            });
        }
    };
    let split = longest.trees.pull_down.device_count();
    let mut sized = options.clone();
    sized.sizing.method = Method::Elmore;
    sized.stack_order = Some(longest.trees.clone());
    sized.fixed_widths = Some(Sides::new(widths[..split].to_vec(), widths[split..devices].to_vec()));
    Ok(size_function(function.clone(), &sized)?)
}

#[cfg(test)]
mod tests {
    use super::super::{elmore, flat_widths};
    use super::*;
    use crate::size_text;
    use crate::sizing::SizingOptions;

    #[test]
    fn posynomials_equal_the_network_solve_at_any_widths() {
        // The posynomial form must give the same first moment as G m = C d (the two are derived
        // apart; the solve is checked against a dense elimination and the tree formula in rc.rs).
        for text in ["nand3", "nor3", "aoi21", "aoi22", "oai221", "!(a & (b | c) & d)"] {
            let options = GateOptions::new(SizingOptions::new(Method::LongestPath, 2.5, 1.0, None));
            let gate = size_text(text, &options).unwrap();
            let circuit = Circuit::new(&gate, 0.8);
            let mut widths = flat_widths(&gate);
            for (index, w) in widths.iter_mut().enumerate() {
                *w *= 1.0 + 0.37 * ((index * 7 % 5) as f64);
            }
            let variables = Variables::of(&circuit);
            for transition in path_transitions(&gate, &circuit).unwrap() {
                let posynomial = delay_posynomial(&circuit, &variables, &transition, 3.5).unwrap();
                let (solved, _, _) = elmore(&circuit, &transition.shape, &widths, 3.5).unwrap();
                let value = posynomial.value(&variables.at(&widths));
                assert!((value - solved).abs() < 1e-9 * solved, "{text}: {value} vs {solved}");
            }
        }
    }
}
