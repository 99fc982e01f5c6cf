//! Delay: the Elmore delay of every input's worst-case transition on both output edges, with the
//! gate's own diffusion capacitance, a logical-effort view beside it, a stack-order search and the
//! third sizing method (least area with every delay at most the reference inverter's).
//!
//! Units: delays in RC, where R is the on-resistance of the unit NMOS (W/L = 1) and C the gate
//! capacitance of a unit transistor; every diffusion terminal adds `diffusion_ratio x C` per unit
//! W/L, and a diffusion shared by two series devices (an internal node joining exactly two devices)
//! counts once, as wide as the wider device ([`NodeDiffusion`], the rule the simulation deck uses
//! too). A process turns RC into picoseconds.
//!
//! A transition is an input vector (from [`SizedGate::worst_case_for_input`]) with the timed input
//! switching to the level that turns its devices in the timed network on. The conducting network is
//! every device on under the new vector and every node it connects to the output (internal nodes of
//! either network, never through a rail). A node counts with its charge when it starts at the
//! output's old level: connected to the output or to the old rail before the switch, or floating
//! (assumed charged, the worst case); a node already tied to the new rail before the switch starts at
//! its final level and adds nothing to the output's first moment. The first moment comes from
//! `G m = C d` ([`rc::first_moments`]), so parallel branches are solved, not approximated.

pub mod geometric;
pub mod order;
pub mod program;
pub mod rc;
pub mod report;

use thiserror::Error;

use crate::budget::{DEFAULT_WORK_BUDGET, Meter, OverBudget, Work};
use crate::expr::GateFunction;
use crate::figures::NodeDiffusion;
use crate::gate::{GateError, GateOptions, SizedGate, device_name, size_function};
use crate::network::{Network, NetworkKind, Sides};
use crate::paths::EXACT_WORST_MAX_INPUTS;
use crate::paths::Vector;
use crate::process::Process;
use crate::sizing::{self, Method, SizingOptions};

pub use order::StackOrder;
pub use report::{
    Delay, DelayModel, Edge, EffortView, MethodDelay, ProcessUnits, RESISTANCE_FORMULA, StackOrderReport, Timing,
    Unavailable,
};

/// Most input occurrences (transistors per network) of a gate that is timed: the report is
/// quadratic in it (every input's vector and nodes).
pub const MAX_TIMED_OCCURRENCES: usize = 1000;

/// The load on the output.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Load {
    /// H copies of the gate, each loading the output with the timed input's capacitance. The copies
    /// are the gate as the longest-path rule sizes it at this drive, so the load does not change with
    /// the method or the stack order of the gate being timed.
    Fanout(f64),
    /// A fixed capacitance, in units of C.
    Capacitance(f64),
}

/// How delays are worked out.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DelayOptions {
    /// The load on the output.
    pub load: Load,
    /// Diffusion capacitance per unit W/L of one terminal, over the gate capacitance per unit W/L.
    pub diffusion_ratio: f64,
    /// Which series-stack order to time: the default one or the one the search finds.
    pub stack_order: StackOrder,
    /// The work budget of timing, the order search and the elmore method ([`crate::budget`]).
    pub work_budget: u64,
}

impl Default for DelayOptions {
    /// Fan-out 1, diffusion ratio 1 (as in the published worked examples), the default order.
    fn default() -> DelayOptions {
        DelayOptions {
            load: Load::Fanout(1.0),
            diffusion_ratio: 1.0,
            stack_order: StackOrder::Default,
            work_budget: DEFAULT_WORK_BUDGET,
        }
    }
}

/// The diffusion ratio when none is given: with a process file, its diffusion capacitance over its
/// gate capacitance per um of width (`diffusion_cap_ff_per_um / gate_cap_ff_per_um`), so that the
/// delays see the capacitors of that process's simulation deck; without one, 1, as in the published
/// worked examples (the built-in process is not used for it).
pub fn default_diffusion_ratio(process_file: Option<&Process>) -> Result<f64, DelayError> {
    let Some(process) = process_file else { return Ok(1.0) };
    let ratio = process.diffusion_cap_ff_per_um / process.gate_cap_ff_per_um;
    if !ratio.is_finite() {
        return Err(DelayError::NoDefaultRatio { gate_cap_ff_per_um: process.gate_cap_ff_per_um });
    }
    Ok(ratio)
}

/// Why delays or the elmore method could not be worked out.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum DelayError {
    /// An option out of range.
    #[error("{what} {rule}, found '{value}'")]
    Option {
        /// Which option.
        what: &'static str,
        /// What it must be (`must be ...`).
        rule: String,
        /// The value.
        value: f64,
    },
    /// A process whose values give no unit resistance.
    #[error(
        "the process gives no unit resistance: supply {supply_v} V must exceed the NMOS threshold {threshold_v} V, \
         and KP, unit width and length must be positive"
    )]
    Process {
        /// Supply.
        supply_v: f64,
        /// NMOS threshold.
        threshold_v: f64,
    },
    /// A process file whose gate capacitance gives no diffusion ratio.
    #[error(
        "the process's gate_cap_ff_per_um is '{gate_cap_ff_per_um}', so the diffusion ratio has no default: \
         give --diffusion-ratio"
    )]
    NoDefaultRatio {
        /// The process's gate capacitance per um.
        gate_cap_ff_per_um: f64,
    },
    /// A gate too large to time: every input's report lists its vector and nodes.
    #[error("delays are worked out for gates of up to {limit} input occurrences per network; this one has {count}")]
    TooLargeToTime {
        /// Input occurrences (transistors per network).
        count: usize,
        /// The limit.
        limit: usize,
    },
    /// A gate too large for the elmore method's dense Newton steps.
    #[error("the elmore method handles gates of up to {limit} transistors; this one has {count}")]
    TooLarge {
        /// Transistors in the gate.
        count: usize,
        /// The limit.
        limit: usize,
    },
    /// More paths than the elmore method lists as constraints.
    #[error("the elmore method lists every conducting path as a constraint; the {network} has {count}, above {limit}")]
    TooManyPaths {
        /// Which network.
        network: &'static str,
        /// How many.
        count: String,
        /// The limit.
        limit: usize,
    },
    /// An input whose worst case needs more than one path on at once (repeated inputs).
    #[error(
        "the elmore method needs every input to switch the output through one path alone; input '{input}' \
         ({edge}) cannot (repeated inputs): factor the expression"
    )]
    NoSinglePath {
        /// The input.
        input: String,
        /// The edge.
        edge: &'static str,
    },
    /// No widths meet every delay bound.
    #[error(
        "no widths make every Elmore delay at most the reference inverter's: the best is {ratio:.4} times it \
         (input '{input}', {edge}); a larger load or less diffusion capacitance makes it feasible"
    )]
    Infeasible {
        /// Least achievable worst ratio of delay to bound.
        ratio: f64,
        /// The input of the transition that keeps it above 1.
        input: String,
        /// Its edge.
        edge: &'static str,
    },
    /// Meeting the bounds needs widths beyond the search box.
    #[error("meeting every Elmore delay bound needs widths beyond {factor} times the longest-path widths")]
    Unbounded {
        /// The box, as a factor on the longest-path widths.
        factor: f64,
    },
    /// The conducting network of a transition could not be solved (an internal inconsistency).
    #[error("transition of input '{input}' ({edge}): {why}")]
    Network {
        /// The input.
        input: String,
        /// The edge.
        edge: &'static str,
        /// What went wrong.
        why: NetworkFault,
    },
    /// The geometric program's solver stopped without converging.
    #[error("the elmore method's solver did not converge: {0}")]
    Solver(geometric::SolveError),
    /// More work than the budget allows.
    #[error("{0}")]
    OverBudget(OverBudget),
    /// A delay option out of its bound.
    #[error(transparent)]
    OutOfBounds(#[from] crate::bounds::OutOfBounds),
    /// The gate could not be sized (in some order, by some method).
    #[error(transparent)]
    Gate(#[from] GateError),
    /// A gate too large for the stack-order search.
    #[error("the stack-order search handles gates of up to {limit} input occurrences; this one has {count}")]
    TooLargeToSearch {
        /// Input occurrences of the gate.
        count: usize,
        /// The limit.
        limit: usize,
    },
    /// Both a critical input and the written stack order choose the order.
    #[error(
        "--critical {critical} and the written stack order both choose the order: write '{critical}' first in its \
         stacks, or drop one of them"
    )]
    CriticalWithWrittenOrder {
        /// The critical input.
        critical: String,
    },
    /// The default stack order sized once, then not again (an internal inconsistency).
    #[error("the default stack order could not be sized twice the same way")]
    DefaultOrderChanged,
}

impl From<OverBudget> for DelayError {
    fn from(over: OverBudget) -> DelayError {
        DelayError::OverBudget(over)
    }
}

/// Why a transition's conducting network cannot be timed: an internal inconsistency (a vector from
/// the worst-case search always switches the output through one network to one rail).
#[derive(Debug, Clone, PartialEq, Error)]
pub enum NetworkFault {
    /// The output would connect to both rails.
    #[error("the output would connect to both rails")]
    BothRails,
    /// The output reaches no rail.
    #[error("the output does not reach the rail")]
    NoRail,
    /// The output is at its new level before the switch.
    #[error("the output already sits at the new level")]
    AlreadySwitched,
    /// The RC network has no first moments.
    #[error("{0}")]
    Solve(rc::RcError),
    /// A path transition that is not a chain of devices from the output.
    #[error("the path is not a chain from the output")]
    NotAChain,
    /// A path transition that does not end on the rail.
    #[error("the path does not end on the rail")]
    OffTheRail,
    /// More than the path conducts in the timed network.
    #[error("more than the path conducts in the timed network")]
    MoreThanThePath,
}

impl DelayError {
    /// Whether no widths meet the elmore method's bounds (within its box): the method's answer for
    /// this gate and load, which the stack-order search skips and the binary ends with exit 1.
    pub fn is_infeasible(&self) -> bool {
        matches!(self, DelayError::Infeasible { .. } | DelayError::Unbounded { .. })
    }

    /// Whether a computation did not succeed (exit 1): infeasible bounds, a solver that did not
    /// converge; everything else is bad input, a limit or a budget (exit 2), or internal.
    pub fn is_check_failure(&self) -> bool {
        self.is_infeasible() || matches!(self, DelayError::Solver(_))
    }

    /// Whether the error is an internal inconsistency: a bug when the binary meets it.
    pub fn is_internal(&self) -> bool {
        match self {
            DelayError::Network { .. }
            | DelayError::DefaultOrderChanged
            | DelayError::Solver(geometric::SolveError::Bad(_)) => true,
            DelayError::Gate(error) => error.is_internal(),
            _ => false,
        }
    }
}

impl ProcessUnits {
    /// R and C of `process`. t50 integrates the level-1 drain current over the discharge, saturated
    /// then linear (the same expression as the propagation delay in Kang & Leblebici, "CMOS Digital
    /// Integrated Circuits", ch. 6; from memory), so a single RC stage's 50% delay, ln 2 x R C, is the
    /// level-1 one.
    pub fn of(process: &Process) -> Result<ProcessUnits, DelayError> {
        let supply = process.supply_v;
        let threshold = process.nmos_threshold_v;
        let overdrive = supply - threshold;
        let aspect = process.unit_width_nm / process.length_nm;
        let beta = process.nmos_kp_ua_per_v2 * 1e-6 * aspect;
        if !(overdrive > 0.0 && beta > 0.0 && beta.is_finite() && threshold >= 0.0) {
            return Err(DelayError::Process { supply_v: supply, threshold_v: threshold });
        }
        // t50 / C, seconds per farad.
        let per_capacitance = if threshold < supply / 2.0 {
            (2.0 * threshold / overdrive + ((4.0 * overdrive - supply) / supply).ln()) / (beta * overdrive)
        } else {
            supply / (beta * overdrive * overdrive)
        };
        let unit_resistance_ohm = per_capacitance / std::f64::consts::LN_2;
        let unit_capacitance_ff = process.unit_capacitance_ff();
        Ok(ProcessUnits {
            process: process.name.clone(),
            unit_resistance_ohm,
            unit_capacitance_ff,
            rc_ps: unit_resistance_ohm * unit_capacitance_ff * 1e-3,
            resistance_formula: RESISTANCE_FORMULA,
        })
    }
}

/// Node indices of the circuit: the output, then the rails, then internal nodes.
const OUTPUT: usize = 0;
const VSS: usize = 1;
const VDD: usize = 2;

fn rail_of(kind: NetworkKind) -> usize {
    match kind {
        NetworkKind::PullDown => VSS,
        NetworkKind::PullUp => VDD,
    }
}

/// One transistor of the circuit.
#[derive(Debug, Clone)]
pub(crate) struct Device {
    pub kind: NetworkKind,
    /// Its index in its network.
    pub index: usize,
    pub input: usize,
    pub drain: usize,
    pub source: usize,
    /// Resistance at W/L = 1, in R: 1 for NMOS, mu for PMOS.
    pub unit_resistance: f64,
}

/// A sized gate's structure as a circuit: nodes, devices (pull-down 0..n, then pull-up) and which
/// device terminals make each node's capacitance.
#[derive(Debug, Clone)]
pub(crate) struct Circuit {
    pub names: Vec<String>,
    pub devices: Vec<Device>,
    pub incident: Vec<Vec<usize>>,
    /// Per node: which device diffusions make its capacitance (the rule the deck uses too).
    pub diffusion: Vec<NodeDiffusion>,
    /// Diffusion capacitance per unit W/L of one terminal, in C.
    pub diffusion_ratio: f64,
    /// The circuit index of each network's device 0 (its devices follow in order).
    pub offsets: Sides<usize>,
    pub input_count: usize,
}

impl Circuit {
    pub fn new(gate: &SizedGate, diffusion_ratio: f64) -> Circuit {
        let mut names = vec![gate.output.clone(), "vss".to_string(), "vdd".to_string()];
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
        let mut devices = Vec::with_capacity(gate.transistors.len());
        let mut offsets = Sides::new(0, 0);
        for (kind, network) in gate.trees.iter() {
            offsets[kind] = devices.len();
            devices.extend(network.inputs.iter().enumerate().map(|(index, &input)| Device {
                kind,
                index,
                input,
                drain: 0,
                source: 0,
                unit_resistance: gate.options.unit_resistance(kind),
            }));
        }
        // The transistors come network by network, each in device order, as the circuit's devices.
        for (device, transistor) in devices.iter_mut().zip(&gate.transistors) {
            device.drain = node(&transistor.drain, &mut names);
            device.source = node(&transistor.source, &mut names);
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
            input_count: gate.function.inputs.len(),
        }
    }

    /// A node's diffusion capacitance at `widths`, in C.
    pub fn node_capacitance(&self, node: usize, widths: &[f64]) -> f64 {
        self.diffusion_ratio * self.diffusion[node].width(widths)
    }

    fn on(&self, device: usize, values: &[bool]) -> bool {
        let device = &self.devices[device];
        device.kind.conducts(values[device.input])
    }
}

/// The shape of a transition's conducting network, independent of widths.
#[derive(Debug, Clone)]
pub(crate) struct Conducting {
    /// Circuit nodes in the network, the output first.
    pub nodes: Vec<usize>,
    /// Per network node: whether it starts at its final level.
    pub at_final: Vec<bool>,
    /// Devices that conduct within it.
    pub devices: Vec<usize>,
    /// The new rail.
    pub rail: usize,
}

/// The conducting network when `input` switches to `after` (its on-level in `edge`'s network).
pub(crate) fn conducting(
    circuit: &Circuit,
    edge: Edge,
    input: usize,
    after: &[bool],
) -> Result<Conducting, NetworkFault> {
    let rail = rail_of(edge.network());
    let old_rail = if rail == VSS { VDD } else { VSS };
    let mut before = after.to_vec();
    before[input] = !after[input];
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
    // Before: what the new rail already holds.
    let mut held = vec![false; circuit.names.len()];
    held[rail] = true;
    let mut stack = vec![rail];
    while let Some(here) = stack.pop() {
        for &device in &circuit.incident[here] {
            if !circuit.on(device, &before) {
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
    let at_final = nodes.iter().map(|&n| held[n]).collect();
    Ok(Conducting { nodes, at_final, devices, rail })
}

/// A transition's conducting network as an RC network, with its initial deviations.
pub(crate) fn rc_network(
    circuit: &Circuit,
    shape: &Conducting,
    widths: &[f64],
    load: f64,
) -> (rc::RcNetwork, Vec<f64>) {
    let mut position = vec![usize::MAX; circuit.names.len()];
    for (index, &node) in shape.nodes.iter().enumerate() {
        position[node] = index;
    }
    let end = |node: usize| if node == shape.rail { rc::End::Rail } else { rc::End::Node(position[node]) };
    let resistors = shape
        .devices
        .iter()
        .map(|&device| {
            let d = &circuit.devices[device];
            rc::Resistor { from: end(d.drain), to: end(d.source), resistance: d.unit_resistance / widths[device] }
        })
        .collect();
    let mut capacitance: Vec<f64> = shape.nodes.iter().map(|&n| circuit.node_capacitance(n, widths)).collect();
    capacitance[0] += load;
    let initial = shape.at_final.iter().map(|&f| if f { 0.0 } else { 1.0 }).collect();
    (rc::RcNetwork { capacitance, resistors }, initial)
}

/// The output's Elmore delay of one conducting network with `load` and with none, and whether the
/// network is a tree. Both come from one elimination: `G m = C d` and `G r = e_output`, since the
/// load adds `load x r[output]`.
pub(crate) fn elmore(
    circuit: &Circuit,
    shape: &Conducting,
    widths: &[f64],
    load: f64,
) -> Result<(f64, f64, bool), NetworkFault> {
    let (network, initial) = rc_network(circuit, shape, widths, 0.0);
    let charge = network.capacitance.iter().zip(&initial).map(|(c, d)| c * d).collect();
    let mut unit = vec![0.0; initial.len()];
    unit[0] = 1.0;
    let solved = rc::solve(&network, vec![charge, unit]).map_err(NetworkFault::Solve)?;
    let (unloaded, drive) = (solved[0][0], solved[1][0]);
    Ok((unloaded + load * drive, unloaded, rc::tree_moment(&network, &initial, 0).is_some()))
}

/// All widths of a gate, pull-down then pull-up, by circuit device.
pub(crate) fn flat_widths(gate: &SizedGate) -> Vec<f64> {
    gate.widths.values().flatten().copied().collect()
}

/// Each input's capacitance in the longest-path sizing at these options: the fan-out copies.
pub(crate) fn fanout_copies(function: &GateFunction, sizing: &SizingOptions) -> Vec<f64> {
    let mut capacitance = vec![0.0; function.inputs.len()];
    for network in Network::pair(function) {
        let widths = sizing::size(&network, Method::LongestPath, sizing);
        for (device, width) in widths.iter().enumerate() {
            capacitance[network.inputs[device]] += width;
        }
    }
    capacitance
}

/// The load on the output when `input` is timed, in C.
pub(crate) fn load_for(load: Load, copies: &[f64], input: usize) -> f64 {
    match load {
        Load::Fanout(h) => h * copies[input],
        Load::Capacitance(c) => c,
    }
}

/// The reference inverter's Elmore delay on `edge` driving `load` (C), in RC.
pub(crate) fn reference_delay(sizing: &SizingOptions, diffusion_ratio: f64, edge: Edge, load: f64) -> f64 {
    let own = diffusion_ratio * sizing.drive * sizing.reference.input_capacitance();
    sizing.target(edge.network()) * (own + load)
}

/// tau of an edge: the unit reference inverter's resistance on that edge x its input capacitance.
fn tau(sizing: &SizingOptions, edge: Edge) -> f64 {
    let width = match edge {
        Edge::Fall => sizing.reference.nmos,
        Edge::Rise => sizing.reference.pmos,
    };
    sizing.unit_resistance(edge.network()) / width * sizing.reference.input_capacitance()
}

/// Check the options: the diffusion ratio and the load within [`crate::bounds::LOAD`].
pub fn check_options(options: &DelayOptions) -> Result<(), DelayError> {
    let (what, value) = match options.load {
        Load::Fanout(h) => ("the fan-out", h),
        Load::Capacitance(c) => ("the load", c),
    };
    for (what, value) in [("the diffusion ratio", options.diffusion_ratio), (what, value)] {
        crate::bounds::LOAD.check_named(what, value)?;
    }
    Ok(())
}

/// A measured transition.
struct Measured {
    elmore: f64,
    unloaded: f64,
    tree: bool,
    shape: Conducting,
    after: Vec<bool>,
    search: &'static str,
}

/// The worst-case transition of `input` on `edge`: the weakest path through it with its vector;
/// where repeated inputs leave no such path, the slowest over every vector where the input switches
/// the output (up to [`EXACT_WORST_MAX_INPUTS`] inputs).
fn measure(
    gate: &SizedGate,
    circuit: &Circuit,
    widths: &[f64],
    input: usize,
    edge: Edge,
    load: f64,
    meter: &Meter,
) -> Result<Option<Measured>, MeasureError> {
    // Each transition visits every device (its conducting network, then the solve).
    let devices = circuit.devices.len() as u128;
    let measure_vector = |after: Vec<bool>, search| -> Result<Measured, MeasureError> {
        meter.charge(devices, Work::Delays)?;
        let shape = conducting(circuit, edge, input, &after)?;
        let (loaded, unloaded, tree) = elmore(circuit, &shape, widths, load)?;
        Ok(Measured { elmore: loaded, unloaded, tree, shape, after, search })
    };
    if let Some((_, vector)) = gate.worst_case_for_input_within(input, edge.network(), meter)? {
        let after: Vec<bool> = vector.values.iter().map(|(_, v)| *v).collect();
        return measure_vector(after, "weakest path").map(Some);
    }
    if circuit.input_count > EXACT_WORST_MAX_INPUTS {
        return Ok(None);
    }
    // Every vector of the inputs is made, and the half with the input at its on-level is tried on
    // the network: its devices' states, then a walk that stops at the first branch that conducts
    // (or member that does not).
    let vectors = 1u128 << circuit.input_count;
    meter.charge(
        vectors * circuit.input_count as u128 + vectors / 2 * circuit.devices.len() as u128 / 2,
        Work::Delays,
    )?;
    let Some(vectors) = gate.switching_vectors(input, edge.network()) else { return Ok(None) };
    let mut worst: Option<Measured> = None;
    for after in vectors {
        let measured = measure_vector(after, "every vector")?;
        if worst.as_ref().is_none_or(|w| measured.elmore > w.elmore) {
            worst = Some(measured);
        }
    }
    Ok(worst)
}

/// Why a transition could not be measured: its network, or the work budget.
enum MeasureError {
    Network(NetworkFault),
    OverBudget(OverBudget),
}

impl From<NetworkFault> for MeasureError {
    fn from(why: NetworkFault) -> MeasureError {
        MeasureError::Network(why)
    }
}

impl From<OverBudget> for MeasureError {
    fn from(over: OverBudget) -> MeasureError {
        MeasureError::OverBudget(over)
    }
}

/// Delays of every input on both edges, the model and the logical-effort view (no method
/// comparison or order report: [`size_and_time`] adds those), within `options.work_budget`.
pub fn analyse(gate: &SizedGate, options: &DelayOptions, process: Option<&Process>) -> Result<Timing, DelayError> {
    analyse_within(gate, options, process, &Meter::new(options.work_budget))
}

/// [`analyse`], its work counted on `meter`.
pub(crate) fn analyse_within(
    gate: &SizedGate,
    options: &DelayOptions,
    process: Option<&Process>,
    meter: &Meter,
) -> Result<Timing, DelayError> {
    check_options(options)?;
    let occurrences = gate.function.literals.len();
    if occurrences > MAX_TIMED_OCCURRENCES {
        return Err(DelayError::TooLargeToTime { count: occurrences, limit: MAX_TIMED_OCCURRENCES });
    }
    let sizing = &gate.options;
    let units = process.map(ProcessUnits::of).transpose()?;
    let circuit = Circuit::new(gate, options.diffusion_ratio);
    let widths = flat_widths(gate);
    let copies = fanout_copies(&gate.function, sizing);
    let reference_capacitance = sizing.drive * sizing.reference.input_capacitance();
    let p_output_node = circuit.node_capacitance(OUTPUT, &widths) / reference_capacitance;
    let mut delays = Vec::new();
    let mut unavailable = Vec::new();
    for input in 0..gate.function.inputs.len() {
        let name = &gate.function.inputs[input];
        let load = load_for(options.load, &copies, input);
        for edge in Edge::BOTH {
            let measured = measure(gate, &circuit, &widths, input, edge, load, meter).map_err(|error| match error {
                MeasureError::Network(why) => DelayError::Network { input: name.clone(), edge: edge.name(), why },
                MeasureError::OverBudget(over) => DelayError::OverBudget(over),
            })?;
            let Some(measured) = measured else {
                unavailable.push(Unavailable {
                    input: name.clone(),
                    edge,
                    why: if circuit.input_count > EXACT_WORST_MAX_INPUTS {
                        format!("no path through it conducts alone, and {EXACT_WORST_MAX_INPUTS} inputs is the most searched")
                    } else {
                        "it never switches the output on this edge".to_string()
                    },
                });
                continue;
            };
            let reference = reference_delay(sizing, options.diffusion_ratio, edge, load);
            let figures = &gate.inputs[input];
            let g = figures.logical_effort;
            let h = if figures.input_capacitance > 0.0 { load / figures.input_capacitance } else { 0.0 };
            let p_elmore = measured.unloaded / tau(sizing, edge);
            let kind = edge.network();
            let mut path: Vec<usize> =
                measured.shape.devices.iter().copied().filter(|&d| circuit.devices[d].kind == kind).collect();
            let mut position = vec![usize::MAX; circuit.names.len()];
            for (index, &node) in measured.shape.nodes.iter().enumerate() {
                position[node] = index;
            }
            path.sort_by_key(|&d| position[circuit.devices[d].drain]);
            let (mut internal_nodes, mut nodes_at_final_level) = (Vec::new(), Vec::new());
            for (&node, &at_final) in measured.shape.nodes.iter().zip(&measured.shape.at_final).skip(1) {
                let name = circuit.names[node].clone();
                if at_final { nodes_at_final_level.push(name) } else { internal_nodes.push(name) }
            }
            delays.push(Delay {
                input: name.clone(),
                edge,
                elmore_rc: measured.elmore,
                elmore_ps: units.as_ref().map(|u| measured.elmore * u.rc_ps),
                load_c: load,
                reference_elmore_rc: reference,
                delay_ratio: measured.elmore / reference,
                path: path.iter().map(|&d| device_name(kind, circuit.devices[d].index)).collect(),
                vector: Vector {
                    values: gate.function.inputs.iter().cloned().zip(measured.after.iter().copied()).collect(),
                },
                internal_nodes,
                nodes_at_final_level,
                tree: measured.tree,
                search: measured.search,
                logical_effort_view: EffortView {
                    g,
                    h,
                    p_output_node,
                    p_elmore,
                    d_output_node: g * h + p_output_node,
                    d_elmore: g * h + p_elmore,
                },
            });
        }
    }
    let (fanout, load_c) = match options.load {
        Load::Fanout(h) => (Some(h), None),
        Load::Capacitance(c) => (None, Some(c)),
    };
    Ok(Timing {
        delay_model: DelayModel {
            diffusion_ratio: options.diffusion_ratio,
            fanout,
            load_c,
            tau_fall_rc: tau(sizing, Edge::Fall),
            tau_rise_rc: tau(sizing, Edge::Rise),
            process: units,
        },
        delays,
        unavailable_delays: unavailable,
        method_comparison: Vec::new(),
        stack_order: None,
    })
}

/// Size a read gate: the path methods through [`size_function`], the elmore method through its
/// geometric program ([`program::size_for_delay`]).
pub fn size_read_gate(
    function: &GateFunction,
    options: &GateOptions,
    delay: &DelayOptions,
) -> Result<SizedGate, DelayError> {
    size_read_gate_within(function, options, delay, &Meter::new(delay.work_budget))
}

/// [`size_read_gate`], the elmore method's work counted on `meter`.
pub(crate) fn size_read_gate_within(
    function: &GateFunction,
    options: &GateOptions,
    delay: &DelayOptions,
    meter: &Meter,
) -> Result<SizedGate, DelayError> {
    if options.sizing.method == Method::Elmore && options.fixed_widths.is_none() {
        program::size_for_delay(function, options, delay, meter)
    } else {
        Ok(size_function(function.clone(), options)?)
    }
}

/// The options with every series stack in written order (the first member nearest the output).
pub fn written_order(function: &GateFunction, options: &GateOptions) -> Result<GateOptions, DelayError> {
    if let Some(critical) = &options.critical {
        return Err(DelayError::CriticalWithWrittenOrder { critical: critical.clone() });
    }
    Ok(GateOptions { stack_order: Some(Network::pair(function)), ..options.clone() })
}

/// Size a read gate with any method and stack order, without timing it (for the `paths`, `deck`
/// and `verify` commands).
pub fn size_gate(
    function: &GateFunction,
    options: &GateOptions,
    delay: &DelayOptions,
) -> Result<SizedGate, DelayError> {
    check_options(delay)?;
    let meter = Meter::new(delay.work_budget);
    match delay.stack_order {
        StackOrder::Default => size_read_gate_within(function, options, delay, &meter),
        StackOrder::Written => size_read_gate_within(function, &written_order(function, options)?, delay, &meter),
        StackOrder::Search => order::search_within(function, options, delay, &meter).map(|(gate, _)| gate),
    }
}

/// Size a gate, time it and set its [`SizedGate::timing`]: delays, the logical-effort view, the three
/// methods side by side and, when asked, the stack-order search.
pub fn size_and_time(
    function: &GateFunction,
    options: &GateOptions,
    delay: &DelayOptions,
    process: Option<&Process>,
) -> Result<SizedGate, DelayError> {
    check_options(delay)?;
    // One budget for the sizing, the search, the delays and the comparison of methods.
    let meter = Meter::new(delay.work_budget);
    let (mut gate, order_report) = match delay.stack_order {
        StackOrder::Default => (size_read_gate_within(function, options, delay, &meter)?, None),
        StackOrder::Written => {
            (size_read_gate_within(function, &written_order(function, options)?, delay, &meter)?, None)
        }
        StackOrder::Search => {
            let (gate, report) = order::search_within(function, options, delay, &meter)?;
            (gate, Some(report))
        }
    };
    let mut timing = analyse_within(&gate, delay, process, &meter)?;
    timing.method_comparison = compare_methods_within(function, options, delay, &gate, &timing, &meter)?;
    timing.stack_order = order_report;
    gate.timing = Some(timing);
    Ok(gate)
}

/// Longest-path, min-area and elmore on the stack order of `gate` (whose own timing is `timing`),
/// with their worst delay ratio.
pub fn compare_methods(
    function: &GateFunction,
    options: &GateOptions,
    delay: &DelayOptions,
    gate: &SizedGate,
    timing: &Timing,
) -> Result<Vec<MethodDelay>, DelayError> {
    compare_methods_within(function, options, delay, gate, timing, &Meter::new(delay.work_budget))
}

/// [`compare_methods`], its work counted on `meter`. An elmore sizing that would pass the budget
/// is a note in its row, like one that is infeasible.
fn compare_methods_within(
    function: &GateFunction,
    options: &GateOptions,
    delay: &DelayOptions,
    gate: &SizedGate,
    timing: &Timing,
    meter: &Meter,
) -> Result<Vec<MethodDelay>, DelayError> {
    let mut rows = Vec::new();
    // Widths already timed, so that equal sizings (NAND, NOR ...) are timed once.
    let mut timed: Vec<(Sides<Vec<f64>>, Timing)> = Vec::new();
    for method in Method::ALL {
        let sized = if method == gate.method {
            Ok(gate.clone())
        } else {
            let mut own = options.clone();
            own.sizing.method = method;
            own.stack_order = Some(gate.trees.clone());
            own.fixed_widths = None;
            size_read_gate_within(function, &own, delay, meter)
        };
        match sized {
            Ok(sized) => {
                let index = if sized.widths == gate.widths {
                    None
                } else if let Some(index) = timed.iter().position(|(w, _)| *w == sized.widths) {
                    Some(index)
                } else {
                    timed.push((sized.widths.clone(), analyse_within(&sized, delay, None, meter)?));
                    Some(timed.len() - 1)
                };
                let own_timing = index.map_or(timing, |i| &timed[i].1);
                let worst = own_timing.worst_ratio(None);
                rows.push(MethodDelay {
                    method,
                    total_w_over_l: Some(sized.total_w_over_l),
                    worst_delay_ratio: worst.map(|d| d.delay_ratio),
                    worst_transition: worst.map(|d| format!("{} {}", d.input, d.edge.name())),
                    meets_delay_bound: own_timing.delays.iter().all(|d| d.delay_ratio <= 1.0 + 1e-9),
                    note: None,
                });
            }
            Err(error) if method == Method::Elmore => rows.push(MethodDelay {
                method,
                total_w_over_l: None,
                worst_delay_ratio: None,
                worst_transition: None,
                meets_delay_bound: false,
                note: Some(error.to_string()),
            }),
            Err(error) => return Err(error),
        }
    }
    Ok(rows)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::size_text;

    #[test]
    fn a_shared_series_diffusion_counts_as_wide_as_the_wider_device() {
        // NAND2 with a tapered pull-down, MN1 (a) W/L 3 and MN2 (b) W/L 1, PMOS 2 and 2, diffusion
        // ratio 1, no load. The default order puts the narrower MN2 at the output (y - MN2 - n1 - MN1 -
        // vss). Input a rising with b on: y (drains 1 + 2 + 2 = 5 C) and n1 (one region shared by MN2
        // and MN1, as wide as the wider: 3 C) discharge through MN1 (R/3) and, for y, MN2 (R):
        // (1 + 1/3) 5 + (1/3) 3 = 7.667 RC (the Elmore tree sum; the rule for the shared region is
        // common practice, no source; half of each device would give 7.333).
        let mut options = GateOptions::new(SizingOptions::new(Method::LongestPath, 2.0, 1.0, None));
        options.fixed_widths = Some(Sides::new(vec![3.0, 1.0], vec![2.0, 2.0]));
        let gate = size_text("nand2", &options).unwrap();
        let terminals: Vec<(&str, &str)> =
            gate.transistors.iter().map(|t| (t.drain.as_str(), t.source.as_str())).take(2).collect();
        assert_eq!(terminals, [("n1", "vss"), ("y", "n1")]);
        let delay = DelayOptions { load: Load::Capacitance(0.0), ..DelayOptions::default() };
        let timing = analyse(&gate, &delay, None).unwrap();
        let fall = timing.delays.iter().find(|d| d.input == "a" && d.edge == Edge::Fall).unwrap();
        assert_eq!(fall.internal_nodes, ["n1"]);
        assert!((fall.elmore_rc - (5.0 * 4.0 / 3.0 + 1.0)).abs() < 1e-9, "{}", fall.elmore_rc);
    }

    #[test]
    fn the_deck_and_the_delay_stage_see_the_same_diffusion() {
        // One rule for both (NodeDiffusion): on a gate with tapered stacks (the elmore method, NAND3 and
        // AOI21 with a load), each node's deck capacitor over the unit gate capacitance is the delay
        // stage's node capacitance at the process's diffusion ratio, to the drawing grid.
        let process = Process::default();
        let unit_um = process.unit_width_nm / 1000.0;
        let ratio = process.diffusion_cap_ff_per_um / process.gate_cap_ff_per_um;
        for text in ["nand3", "aoi21"] {
            let options = GateOptions::new(SizingOptions::new(Method::Elmore, 2.0, 1.0, None));
            let delay =
                DelayOptions { load: Load::Capacitance(50.0), diffusion_ratio: ratio, ..DelayOptions::default() };
            let gate = size_gate(&crate::expr::read_gate(text).unwrap(), &options, &delay).unwrap();
            let circuit = Circuit::new(&gate, ratio);
            let widths = flat_widths(&gate);
            let devices: Vec<(&str, &str, f64)> =
                gate.transistors.iter().map(|t| (t.drain.as_str(), t.source.as_str(), t.drawn_width_um)).collect();
            let deck = crate::output::deck::node_diffusion_um(&devices, &gate.output);
            assert!(deck.iter().any(|(name, _)| name != &gate.output), "{text}: no internal node");
            for (name, width_um) in deck {
                let node = circuit.names.iter().position(|n| *n == name).unwrap();
                let deck_c = width_um * process.diffusion_cap_ff_per_um / (process.gate_cap_ff_per_um * unit_um);
                let stage_c = circuit.node_capacitance(node, &widths);
                assert!((deck_c / stage_c - 1.0).abs() < 2e-3, "{text} {name}: deck {deck_c} C, delays {stage_c} C");
            }
        }
    }
}
