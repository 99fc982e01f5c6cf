//! Elmore delays as posynomials in the device widths, for the elmore method's geometric program.
//!
//! A transition whose conducting network is a tree rooted at the rail has a chain of devices from
//! the output to the rail, and whatever else conducts hangs off a chain node (off the output through
//! the other network, or off an internal node through a side branch that reaches no rail). Its
//! Elmore delay is then `sum over nodes k of C_k x (the chain's resistance from where k hangs, or k
//! itself on the chain, down to the rail)`, the load counting at the output.
//!
//! A node's capacitance is a sum of device widths, except a diffusion shared by two series devices,
//! which is as wide as the wider ([`NodeDiffusion::Shared`]): a maximum, not a posynomial. Each such
//! node gets a variable `t` of its own with the hard constraints `w_a / t <= 1` and `w_b / t <= 1`,
//! and its capacitance is `ratio x t`. Every delay grows with `t`, so wherever the widths meet the
//! delays with some `t` they meet them with `t = max(w_a, w_b)`. With `r = u / w`, every delay is then
//! a posynomial.

use std::collections::BTreeMap;

use crate::cell::SizedStage;
use crate::figures::NodeDiffusion;
use crate::optimize::geometric::{Monomial, Posynomial};
use crate::paths::{self, MAX_LISTED_PATHS};
use crate::sizing::plan::Plan;
use crate::timing::circuit::{Circuit, Conducting, OUTPUT, conducting, rail_of};
use crate::timing::error::{NetworkFault, TimingError};
use crate::timing::report::Edge;

/// One transition with one conducting path.
#[derive(Debug, Clone)]
pub struct PathTransition {
    pub input: usize,
    pub edge: Edge,
    pub shape: Conducting,
    /// The path's devices (circuit indices), output side first.
    pub chain: Vec<usize>,
}

/// Every path of each network, with each distinct input on it switching: under the vector that
/// makes it conduct alone, with whatever side branches that vector connects; where repeated inputs
/// leave no such vector, the path as if it conducted alone, every node on it charged.
pub fn path_transitions(
    stage: &SizedStage,
    plan: &Plan,
    circuit: &Circuit,
) -> Result<Vec<PathTransition>, TimingError> {
    let inputs = stage.function.inputs.len();
    let mut out = Vec::new();
    for edge in Edge::BOTH {
        let kind = edge.network();
        let network = &stage.networks[kind].network;
        let total = paths::count(network);
        if total > MAX_LISTED_PATHS.into() {
            return Err(TimingError::TooManyPaths {
                network: kind.name(),
                count: total.to_string(),
                limit: MAX_LISTED_PATHS,
            });
        }
        let resistance = plan.resistances(kind, &stage.networks[kind].widths);
        for path in paths::list(network, &resistance, MAX_LISTED_PATHS) {
            let chain: Vec<usize> = path.devices.iter().map(|&d| circuit.offsets[kind] + d).collect();
            let Some(after) = paths::sensitize(network, &path.devices, inputs) else {
                let shape = alone(circuit, edge, &chain);
                let mut seen = Vec::new();
                for &device in &path.devices {
                    let input = network.inputs[device];
                    if !seen.contains(&input) {
                        seen.push(input);
                        out.push(PathTransition { input, edge, shape: shape.clone(), chain: chain.clone() });
                    }
                }
                continue;
            };
            let mut seen = Vec::new();
            for &device in &path.devices {
                let input = network.inputs[device];
                if seen.contains(&input) {
                    continue;
                }
                seen.push(input);
                let shape = conducting(circuit, edge, input, &after).map_err(|why| TimingError::Network {
                    input: stage.function.inputs[input].clone(),
                    edge: edge.name(),
                    why,
                })?;
                out.push(PathTransition { input, edge, shape, chain: chain.clone() });
            }
        }
    }
    Ok(out)
}

/// A path (circuit devices, output side first) conducting alone on `edge`, every node on it charged.
fn alone(circuit: &Circuit, edge: Edge, chain: &[usize]) -> Conducting {
    let mut nodes = vec![OUTPUT];
    nodes.extend(chain[..chain.len().saturating_sub(1)].iter().map(|&d| circuit.devices[d].source));
    let at_final = vec![false; nodes.len()];
    Conducting { nodes, at_final, devices: chain.to_vec(), rail: rail_of(edge.network()) }
}

/// The program's variables: every circuit device's W/L, then one per shared diffusion standing
/// for the wider of its two devices.
#[derive(Debug, Clone)]
pub struct Variables {
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
    pub fn capacitance(&self, circuit: &Circuit, node: usize) -> Vec<(usize, f64)> {
        let ratio = circuit.diffusion_ratio;
        match (&circuit.diffusion[node], self.shared[node]) {
            (NodeDiffusion::Separate(devices), _) => devices.iter().map(|&d| (d, ratio)).collect(),
            (NodeDiffusion::Shared(..), Some(variable)) => vec![(variable, ratio)],
            _ => Vec::new(),
        }
    }

    /// The hard constraints `w / t <= 1` of every shared diffusion.
    pub fn bounds(&self) -> Vec<Posynomial> {
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
pub fn delay_posynomial(
    circuit: &Circuit,
    variables: &Variables,
    transition: &PathTransition,
    load: f64,
) -> Result<Posynomial, NetworkFault> {
    let chain = &transition.chain;
    let shape = &transition.shape;
    // The chain's nodes from the output: v0 = output, v_{j+1} = source of device j.
    let mut chain_nodes = vec![OUTPUT];
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
    // Every other node hangs off one chain node (the network is a tree rooted at the rail): the
    // resistance it shares with the output is the chain's from there down.
    let mut attached: Vec<Option<usize>> = vec![None; circuit.names.len()];
    for (position, &node) in chain_nodes.iter().enumerate() {
        attached[node] = Some(position);
    }
    let mut stack: Vec<usize> = chain_nodes[..chain.len()].to_vec();
    while let Some(here) = stack.pop() {
        let position = attached[here].unwrap_or(0);
        for &device in shape.devices.iter().filter(|d| !chain.contains(d)) {
            let d = &circuit.devices[device];
            let other = if d.drain == here {
                d.source
            } else if d.source == here {
                d.drain
            } else {
                continue;
            };
            if other == shape.rail {
                return Err(NetworkFault::MoreThanThePath);
            }
            if attached[other].is_none() {
                attached[other] = Some(position);
                stack.push(other);
            }
        }
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
            if node == OUTPUT && load > 0.0 {
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
            add_node(node, attached[node].unwrap_or(0), &mut terms);
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
