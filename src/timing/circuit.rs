//! A sized stage as an RC circuit, and one transition's conducting network in it: which devices
//! conduct after the switch, which nodes they connect to the output, which of those start at their
//! final level, and the output's Elmore delay (docs/model.md section 7).
//!
//! Units: resistances in R (the unit NMOS's on-resistance), capacitances in C (the unit gate
//! capacitance); every diffusion terminal adds `diffusion_ratio x C` per unit W/L, and a diffusion
//! shared by two series devices counts once, as wide as the wider ([`NodeDiffusion`]).

use crate::cell::SizedStage;
use crate::figures::NodeDiffusion;
use crate::network::{NetworkKind, Sides};
use crate::sizing::plan::Plan;
use crate::timing::error::NetworkFault;
use crate::timing::rc;
use crate::timing::report::Edge;

/// Node indices of the circuit: the output, then the rails, then internal nodes.
pub const OUTPUT: usize = 0;
/// The ground rail's node.
pub const VSS: usize = 1;
/// The supply rail's node.
pub const VDD: usize = 2;

/// The rail a network pulls the output to.
pub fn rail_of(kind: NetworkKind) -> usize {
    match kind {
        NetworkKind::PullDown => VSS,
        NetworkKind::PullUp => VDD,
    }
}

/// One transistor of the circuit.
#[derive(Debug, Clone)]
pub struct Device {
    /// Its network.
    pub kind: NetworkKind,
    /// Its index in its network.
    pub index: usize,
    /// The stage input on its gate.
    pub input: usize,
    /// Its output-side node.
    pub drain: usize,
    /// Its rail-side node.
    pub source: usize,
    /// Resistance at W/L = 1, in R: 1 for NMOS, mu for PMOS.
    pub unit_resistance: f64,
}

/// A sized gate's structure as a circuit: nodes, devices (pull-down 0..n, then pull-up) and which
/// device terminals make each node's capacitance.
#[derive(Debug, Clone)]
pub struct Circuit {
    /// Node names, by node index.
    pub names: Vec<String>,
    /// Every device, network by network in device order.
    pub devices: Vec<Device>,
    /// Per node: the devices with a terminal on it.
    pub incident: Vec<Vec<usize>>,
    /// Per node: which device diffusions make its capacitance (the rule the deck uses too).
    pub diffusion: Vec<NodeDiffusion>,
    /// Diffusion capacitance per unit W/L of one terminal, in C.
    pub diffusion_ratio: f64,
    /// The circuit index of each network's device 0 (its devices follow in order).
    pub offsets: Sides<usize>,
    /// How many inputs the stage has.
    pub input_count: usize,
}

impl Circuit {
    /// The circuit of a sized stage under `plan`, with `diffusion_ratio` C of diffusion per unit W/L
    /// and terminal.
    pub fn new(stage: &SizedStage, plan: &Plan, diffusion_ratio: f64) -> Circuit {
        let mut names = vec![stage.function.output.clone(), "vss".to_string(), "vdd".to_string()];
        let mut index_of = std::collections::HashMap::new();
        for (index, name) in names.iter().enumerate() {
            index_of.insert(name.clone(), index);
        }
        let mut node = |name: &str, names: &mut Vec<String>| -> usize {
            *index_of.entry(name.to_string()).or_insert_with(|| {
                names.push(name.to_string());
                names.len() - 1
            })
        };
        let mut devices = Vec::with_capacity(stage.networks.values().map(|n| n.widths.len()).sum());
        let mut offsets = Sides::new(0, 0);
        for sized in stage.networks.values() {
            let kind = sized.kind();
            offsets[kind] = devices.len();
            for (index, (&input, terminals)) in sized.network.inputs.iter().zip(&sized.terminals).enumerate() {
                let drain = node(&terminals.drain, &mut names);
                let source = node(&terminals.source, &mut names);
                devices.push(Device { kind, index, input, drain, source, unit_resistance: plan.unit_resistance(kind) });
            }
        }
        let mut incident = vec![Vec::new(); names.len()];
        for (index, device) in devices.iter().enumerate() {
            incident[device.drain].push(index);
            incident[device.source].push(index);
        }
        let diffusion = incident
            .iter()
            .enumerate()
            .map(|(node, touching)| NodeDiffusion::of(touching, node == VSS || node == VDD, node == OUTPUT))
            .collect();
        Circuit {
            names,
            devices,
            incident,
            diffusion,
            diffusion_ratio,
            offsets,
            input_count: stage.function.inputs.len(),
        }
    }

    /// A node's diffusion capacitance at `widths`, in C.
    pub fn node_capacitance(&self, node: usize, widths: &[f64]) -> f64 {
        self.diffusion_ratio * self.diffusion[node].width(widths)
    }

    /// Whether `device` conducts under the input values `values`.
    pub fn on(&self, device: usize, values: &[bool]) -> bool {
        let device = &self.devices[device];
        device.kind.conducts(values[device.input])
    }
}

/// The shape of a transition's conducting network, independent of widths.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub struct Conducting {
    /// Circuit nodes in the network, the output first.
    pub nodes: Vec<usize>,
    /// Per network node: whether it starts at its final level.
    pub at_final: Vec<bool>,
    /// Devices that conduct within it.
    pub devices: Vec<usize>,
    /// The new rail.
    pub rail: usize,
}

/// What conducts after a switch, whatever input switched: the output's component under the new
/// vector, not through a rail. A transition's [`Conducting`] network is this with which of its nodes
/// start at their final level ([`held`]); its linear system is this alone ([`Solved`]).
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub struct Component {
    /// Circuit nodes in it, the output first.
    pub nodes: Vec<usize>,
    /// Devices that conduct within it.
    pub devices: Vec<usize>,
    /// The new rail.
    pub rail: usize,
}

/// The conducting network when `input` switches to `after` (its on-level in `edge`'s network).
pub fn conducting(circuit: &Circuit, edge: Edge, input: usize, after: &[bool]) -> Result<Conducting, NetworkFault> {
    let Component { nodes, devices, rail } = component(circuit, edge, after)?;
    let at_final = held(circuit, edge, input, after, &nodes)?;
    Ok(Conducting { nodes, at_final, devices, rail })
}

/// The output's component under `after` on `edge` (the first half of [`conducting`]).
fn component(circuit: &Circuit, edge: Edge, after: &[bool]) -> Result<Component, NetworkFault> {
    let rail = rail_of(edge.network());
    let old_rail = if rail == VSS { VDD } else { VSS };
    // After: the output's component, not through a rail.
    let mut inside = vec![false; circuit.names.len()];
    let mut nodes = vec![OUTPUT];
    inside[OUTPUT] = true;
    let mut reaches_rail = false;
    let mut next = 0;
    while next < nodes.len() {
        let here = nodes[next];
        next += 1;
        for &device in &circuit.incident[here] {
            if !circuit.on(device, after) {
                continue;
            }
            let d = &circuit.devices[device];
            let other = if d.drain == here { d.source } else { d.drain };
            if other == old_rail {
                return Err(NetworkFault::BothRails);
            }
            if other == rail {
                reaches_rail = true;
            } else if !inside[other] {
                inside[other] = true;
                nodes.push(other);
            }
        }
    }
    let devices: Vec<usize> = (0..circuit.devices.len())
        .filter(|&device| {
            let d = &circuit.devices[device];
            circuit.on(device, after) && (inside[d.drain] || inside[d.source])
        })
        .collect();
    if !reaches_rail {
        return Err(NetworkFault::NoRail);
    }
    Ok(Component { nodes, devices, rail })
}

/// A device as one of a node's [`Scratch`] links: the device, the node at its other end, its input
/// and the input's value that turns it on.
#[derive(Debug, Clone, Copy)]
struct Link {
    device: u32,
    other: u32,
    input: u32,
    on_at: bool,
}

/// Buffers the searches of one vector after another reuse: each node's devices as links (in the
/// order of [`Circuit::incident`]), the devices a search finds, what each node was last marked in
/// (by a stamp each search moves on, so nothing is cleared between vectors), a node's position in
/// a component, and a stack.
#[derive(Debug, Clone)]
pub struct Scratch {
    /// Where each node's links start in `links`, and one past the last node's.
    link_start: Vec<u32>,
    links: Vec<Link>,
    /// The devices a component search has found, 64 a word.
    found: Vec<u64>,
    /// Per node: the stamp of the search that last reached it.
    nodes: Vec<u32>,
    stamp: u32,
    position: Vec<usize>,
    stack: Vec<usize>,
}

impl Scratch {
    /// Buffers for `circuit`'s nodes and devices.
    pub fn new(circuit: &Circuit) -> Scratch {
        let mut link_start = vec![0u32];
        let mut links = Vec::new();
        for (node, incident) in circuit.incident.iter().enumerate() {
            for &device in incident {
                let d = &circuit.devices[device];
                let other = if d.drain == node { d.source } else { d.drain };
                links.push(Link {
                    device: device as u32,
                    other: other as u32,
                    input: d.input as u32,
                    on_at: d.kind.conducts(true),
                });
            }
            link_start.push(links.len() as u32);
        }
        Scratch {
            link_start,
            links,
            found: Vec::new(),
            nodes: vec![0; circuit.names.len()],
            stamp: 0,
            position: vec![usize::MAX; circuit.names.len()],
            stack: Vec::new(),
        }
    }

    /// The devices the last [`component_in`] found, 64 a word.
    pub fn found(&self) -> &[u64] {
        &self.found
    }

    /// A stamp no node carries yet.
    fn next(&mut self) -> u32 {
        if self.stamp == u32::MAX {
            self.nodes.fill(0);
            self.stamp = 0;
        }
        self.stamp += 1;
        self.stamp
    }
}

/// [`component`] with reused buffers: the same nodes in the same order, the same devices and the
/// same faults, each conducting device met from the component's own nodes rather than by a pass
/// over every device of the circuit.
pub fn component_in(
    circuit: &Circuit,
    edge: Edge,
    after: &[bool],
    scratch: &mut Scratch,
) -> Result<Component, NetworkFault> {
    let rail = rail_of(edge.network());
    let old_rail = if rail == VSS { VDD } else { VSS };
    debug_assert_eq!(scratch.links.len(), 2 * circuit.devices.len(), "buffers of another circuit");
    let stamp = scratch.next();
    let mut nodes = vec![OUTPUT];
    let mut found = std::mem::take(&mut scratch.found);
    found.clear();
    found.resize(circuit.devices.len().div_ceil(64), 0);
    scratch.nodes[OUTPUT] = stamp;
    let mut reaches_rail = false;
    let mut next = 0;
    while next < nodes.len() {
        let here = nodes[next];
        next += 1;
        let links = &scratch.links[scratch.link_start[here] as usize..scratch.link_start[here + 1] as usize];
        for &Link { device, other, input, on_at } in links {
            if after[input as usize] != on_at {
                continue;
            }
            let (device, other) = (device as usize, other as usize);
            if other == old_rail {
                return Err(NetworkFault::BothRails);
            }
            // A conducting device with an end in the component: in it.
            found[device / 64] |= 1 << (device % 64);
            if other == rail {
                reaches_rail = true;
            } else if scratch.nodes[other] != stamp {
                scratch.nodes[other] = stamp;
                nodes.push(other);
            }
        }
    }
    if !reaches_rail {
        return Err(NetworkFault::NoRail);
    }
    // In increasing order, as a pass over every device would list them.
    let mut devices = Vec::new();
    for (word, &bits) in found.iter().enumerate() {
        let mut bits = bits;
        while bits != 0 {
            devices.push(word * 64 + bits.trailing_zeros() as usize);
            bits &= bits - 1;
        }
    }
    scratch.found = found;
    Ok(Component { nodes, devices, rail })
}

/// A component's devices as lists of its own nodes (the output is node 0), made once per vector
/// and read by each switching input's search of the nodes at their final level ([`Adjacency::held`]).
#[derive(Debug, Clone, Default)]
pub struct Adjacency {
    /// Where each node's list starts in `ends`, and one past the last node's.
    start: Vec<u32>,
    /// Each device from each of its ends in the component: the far end ([`RAIL_END`] for the rail)
    /// and the device's input.
    ends: Vec<(u32, u32)>,
    /// The component's devices on the rail: the node at their other end and their input.
    rail: Vec<(u32, u32)>,
}

/// The rail as the far end of a device in an [`Adjacency`].
const RAIL_END: u32 = u32::MAX;

impl Adjacency {
    /// The adjacency of `component` (of `circuit`), its nodes' places kept in `scratch`.
    pub fn of(circuit: &Circuit, component: &Component, scratch: &mut Scratch) -> Adjacency {
        let position = &mut scratch.position;
        for (index, &node) in component.nodes.iter().enumerate() {
            position[node] = index;
        }
        let end = |node: usize| if node == component.rail { RAIL_END } else { position[node] as u32 };
        // Each device from each of its ends: (that end, the far end, its input), in device order;
        // a device with both ends on one node joins nothing.
        let device_ends = || {
            component.devices.iter().flat_map(|&device| {
                let d = &circuit.devices[device];
                let (a, b, input) = (end(d.drain), end(d.source), d.input as u32);
                (a != b).then_some([(a, b, input), (b, a, input)]).into_iter().flatten()
            })
        };
        let mut start = vec![0u32; component.nodes.len() + 1];
        let mut rail = Vec::new();
        for (here, other, input) in device_ends() {
            if here == RAIL_END {
                rail.push((other, input));
            } else {
                start[here as usize + 1] += 1;
            }
        }
        for index in 1..start.len() {
            start[index] += start[index - 1];
        }
        let mut fill = start.clone();
        let mut ends = vec![(0, 0); start[component.nodes.len()] as usize];
        for (here, other, input) in device_ends().filter(|&(here, _, _)| here != RAIL_END) {
            ends[fill[here as usize] as usize] = (other, input);
            fill[here as usize] += 1;
        }
        Adjacency { start, ends, rail }
    }

    /// [`held`] of the component when `input` switches: the same nodes and fault, searched within
    /// the component. A path the old vector conducts from the new rail to a node of the component
    /// stays in it: before the switch, only the switching input's devices of the other network
    /// conduct that do not after, and the rail reaches them only through the output, where the
    /// search stops with [`NetworkFault::AlreadySwitched`]; every other device on the path
    /// conducts after the switch too, so each node before the rail is joined to the component by
    /// it. Within the component, what conducts before is every device but the input's own (its
    /// devices in the switching network; those of the other network are off after the switch).
    pub fn held(&self, input: usize, scratch: &mut Scratch) -> Result<Vec<bool>, NetworkFault> {
        let input = input as u32;
        let mut held = vec![false; self.start.len() - 1];
        let stack = &mut scratch.stack;
        stack.clear();
        let mut reach = |other: u32, stack: &mut Vec<usize>| -> bool {
            match other {
                0 => false,
                RAIL_END => true,
                _ => {
                    if !held[other as usize] {
                        held[other as usize] = true;
                        stack.push(other as usize);
                    }
                    true
                }
            }
        };
        for &(other, gate) in &self.rail {
            if gate != input && !reach(other, stack) {
                return Err(NetworkFault::AlreadySwitched);
            }
        }
        while let Some(here) = stack.pop() {
            let list = &self.ends[self.start[here] as usize..self.start[here + 1] as usize];
            for &(other, gate) in list {
                if gate != input && !reach(other, stack) {
                    return Err(NetworkFault::AlreadySwitched);
                }
            }
        }
        Ok(held)
    }
}

/// Which of `nodes` (a component under `after`) start at their final level when `input` switches
/// to `after` on `edge`: those the new rail already held before the switch (the second half of
/// [`conducting`]).
pub fn held(
    circuit: &Circuit,
    edge: Edge,
    input: usize,
    after: &[bool],
    nodes: &[usize],
) -> Result<Vec<bool>, NetworkFault> {
    let rail = rail_of(edge.network());
    let old_rail = if rail == VSS { VDD } else { VSS };
    // Before: `after` with the input at its other level.
    let on_before = |device: usize| {
        let d = &circuit.devices[device];
        let value = if d.input == input { !after[input] } else { after[d.input] };
        d.kind.conducts(value)
    };
    let mut held = vec![false; circuit.names.len()];
    held[rail] = true;
    let mut stack = vec![rail];
    while let Some(here) = stack.pop() {
        for &device in &circuit.incident[here] {
            if !on_before(device) {
                continue;
            }
            let d = &circuit.devices[device];
            let other = if d.drain == here { d.source } else { d.drain };
            if other == OUTPUT {
                return Err(NetworkFault::AlreadySwitched);
            }
            if other != old_rail && !held[other] {
                held[other] = true;
                stack.push(other);
            }
        }
    }
    Ok(nodes.iter().map(|&n| held[n]).collect())
}

/// A transition's conducting network as an RC network, with its initial deviations.
pub fn rc_network(circuit: &Circuit, shape: &Conducting, widths: &[f64], load: f64) -> (rc::RcNetwork, Vec<f64>) {
    let mut position = vec![usize::MAX; circuit.names.len()];
    let network = rc_of(circuit, &shape.nodes, &shape.devices, shape.rail, widths, load, &mut position);
    let initial = shape.at_final.iter().map(|&f| if f { 0.0 } else { 1.0 }).collect();
    (network, initial)
}

/// The RC network of the devices `devices` joining `nodes` (the output first) to `rail`, each of
/// `nodes` given its place in `position` (one entry per circuit node; the others are not read).
fn rc_of(
    circuit: &Circuit,
    nodes: &[usize],
    devices: &[usize],
    rail: usize,
    widths: &[f64],
    load: f64,
    position: &mut [usize],
) -> rc::RcNetwork {
    for (index, &node) in nodes.iter().enumerate() {
        position[node] = index;
    }
    let end = |node: usize| if node == rail { rc::End::Rail } else { rc::End::Node(position[node]) };
    let resistors = devices
        .iter()
        .map(|&device| {
            let d = &circuit.devices[device];
            rc::Resistor { from: end(d.drain), to: end(d.source), resistance: d.unit_resistance / widths[device] }
        })
        .collect();
    let mut capacitance: Vec<f64> = nodes.iter().map(|&n| circuit.node_capacitance(n, widths)).collect();
    capacitance[0] += load;
    rc::RcNetwork { capacitance, resistors }
}

/// A component's linear system solved once for every transition into it: its elimination, its
/// drive and whether it is a tree, so that each set of starting charges costs one substitution.
#[derive(Debug)]
pub struct Solved {
    factored: rc::Factored,
    capacitance: Vec<f64>,
    /// The output's resistance to the rail as a load sees it, R.
    drive: f64,
    /// Whether the component is a tree rooted at the rail.
    tree: bool,
}

impl Solved {
    /// The component's system at `widths`, eliminated once, in `scratch`'s reused buffers.
    pub fn of_in(
        circuit: &Circuit,
        component: &Component,
        widths: &[f64],
        scratch: &mut Scratch,
    ) -> Result<Solved, NetworkFault> {
        let Component { nodes, devices, rail } = component;
        let network = rc_of(circuit, nodes, devices, *rail, widths, 0.0, &mut scratch.position);
        let factored = rc::factor_joined(&network).map_err(NetworkFault::Solve)?;
        let mut unit = vec![0.0; nodes.len()];
        unit[0] = 1.0;
        factored.solve(&mut unit);
        // Connected (the elimination checked it) with as many resistors, rail to rail and self loops
        // aside, as nodes besides the rail: a tree rooted at the rail, as `rc::tree_moment` decides.
        let joining = network
            .resistors
            .iter()
            .filter(|r| match (r.from, r.to) {
                (rc::End::Node(a), rc::End::Node(b)) => a != b,
                (rc::End::Rail, rc::End::Rail) => false,
                _ => true,
            })
            .count();
        let tree = joining == nodes.len();
        Ok(Solved { factored, capacitance: network.capacitance, drive: unit[0], tree })
    }

    /// The [`Moments`] of the transition whose nodes start at their final level where `at_final`
    /// says: the same numbers as [`moments`] of that conducting network.
    pub fn moments(&self, at_final: &[bool]) -> Moments {
        let mut charge: Vec<f64> =
            self.capacitance.iter().zip(at_final).map(|(c, &f)| c * if f { 0.0 } else { 1.0 }).collect();
        self.factored.solve(&mut charge);
        Moments { unloaded: charge[0], drive: self.drive, tree: self.tree }
    }
}

/// The output's Elmore delay of one conducting network with `load` and with none, and whether the
/// network is a tree. Both come from one elimination: `G m = C d` and `G r = e_output`, since the
/// load adds `load x r[output]`.
pub fn elmore(
    circuit: &Circuit,
    shape: &Conducting,
    widths: &[f64],
    load: f64,
) -> Result<(f64, f64, bool), NetworkFault> {
    Ok(moments(circuit, shape, widths)?.with_load(load))
}

/// What a conducting network's Elmore delay is made of, whatever the load: the output's first
/// moment with no load, the resistance a load on the output sees (the output's own first moment per
/// unit of charge on it), and whether the network is a tree rooted at the rail.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Moments {
    /// The output's Elmore delay with no load, RC.
    pub unloaded: f64,
    /// The output's resistance to the rail as a load sees it, R.
    pub drive: f64,
    /// Whether the network is a tree rooted at the rail (one path from every node to the rail).
    pub tree: bool,
}

impl Moments {
    /// The Elmore delay with `load` C, with no load, and whether the network is a tree.
    pub fn with_load(self, load: f64) -> (f64, f64, bool) {
        (self.unloaded + load * self.drive, self.unloaded, self.tree)
    }
}

/// The [`Moments`] of one conducting network: both from one elimination, `G m = C d` and
/// `G r = e_output`, since a load adds `load x r[output]`.
pub fn moments(circuit: &Circuit, shape: &Conducting, widths: &[f64]) -> Result<Moments, NetworkFault> {
    let (network, initial) = rc_network(circuit, shape, widths, 0.0);
    let charge = network.capacitance.iter().zip(&initial).map(|(c, d)| c * d).collect();
    let mut unit = vec![0.0; initial.len()];
    unit[0] = 1.0;
    let solved = rc::solve(&network, vec![charge, unit]).map_err(NetworkFault::Solve)?;
    let tree = rc::tree_moment(&network, &initial, 0).is_some();
    Ok(Moments { unloaded: solved[0][0], drive: solved[1][0], tree })
}

/// The devices of `kind`'s network that conduct in `shape`, output side first (by the position of
/// their drain among the network's nodes).
pub fn conducting_devices(circuit: &Circuit, shape: &Conducting, kind: NetworkKind) -> Vec<usize> {
    let mut path: Vec<usize> = shape.devices.iter().copied().filter(|&d| circuit.devices[d].kind == kind).collect();
    let mut position = vec![usize::MAX; circuit.names.len()];
    for (index, &node) in shape.nodes.iter().enumerate() {
        position[node] = index;
    }
    path.sort_by_key(|&d| position[circuit.devices[d].drain]);
    path
}

/// Where `shape` is a tree rooted at the rail: its chain, the devices from the output to the rail
/// in order (the one path every charge of the output flows through).
pub fn chain(circuit: &Circuit, shape: &Conducting) -> Option<Vec<usize>> {
    let mut chain = Vec::new();
    let mut node = OUTPUT;
    let mut used = vec![false; circuit.devices.len()];
    while node != shape.rail {
        // In a tree, one conducting device leads from each chain node towards the rail: the one whose
        // far side reaches the rail without coming back.
        let next = shape.devices.iter().copied().find(|&d| {
            let device = &circuit.devices[d];
            !used[d] && (device.drain == node || device.source == node) && reaches_rail(circuit, shape, d, node)
        })?;
        used[next] = true;
        chain.push(next);
        let device = &circuit.devices[next];
        node = if device.drain == node { device.source } else { device.drain };
    }
    Some(chain)
}

/// Whether, leaving `from` through `device`, the conducting network reaches the rail (not back
/// through `from`).
fn reaches_rail(circuit: &Circuit, shape: &Conducting, device: usize, from: usize) -> bool {
    let d = &circuit.devices[device];
    let start = if d.drain == from { d.source } else { d.drain };
    let mut seen = vec![false; circuit.names.len()];
    seen[from] = true;
    let mut stack = vec![start];
    seen[start] = true;
    while let Some(here) = stack.pop() {
        if here == shape.rail {
            return true;
        }
        for &other in &shape.devices {
            let o = &circuit.devices[other];
            if other == device {
                continue;
            }
            let next = if o.drain == here {
                o.source
            } else if o.source == here {
                o.drain
            } else {
                continue;
            };
            if !seen[next] {
                seen[next] = true;
                stack.push(next);
            }
        }
    }
    false
}

/// Every device's W/L in circuit order (network by network, in device order).
pub fn flat_widths(stage: &SizedStage) -> Vec<f64> {
    stage.networks.values().flat_map(|n| n.widths.iter().copied()).collect()
}

/// The reference inverter's Elmore delay on `edge` driving `load` (C), in RC, with `diffusion_ratio`
/// C of its own drain diffusion per unit W/L.
pub fn reference_delay(plan: &Plan, diffusion_ratio: f64, edge: Edge, load: f64) -> f64 {
    let own = diffusion_ratio * plan.reference_capacitance();
    plan.target(edge.network()) * (own + load)
}

/// tau of an edge: the unit reference inverter's resistance on that edge x its input capacitance.
pub fn tau(plan: &Plan, edge: Edge) -> f64 {
    let width = match edge {
        Edge::Fall => plan.reference.nmos,
        Edge::Rise => plan.reference.pmos,
    };
    plan.unit_resistance(edge.network()) / width * plan.reference.input_capacitance()
}
