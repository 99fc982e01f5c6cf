//! One gate through every stage: read the expression, build both networks, size them, order the
//! series stacks, name the nodes, find the worst cases and work out the figures.
//!
//! [`SizedGate`] is what every writer in `output` takes; its serde form is the JSON output.

use std::sync::Arc;

use crate::bounds;
use crate::budget::{Meter, OverBudget, Work};
use crate::diagnostic::escaped;
use crate::expr::GateFunction;
use crate::figures::{self, DeviceLoad};
use crate::names::reserved_reason;
use crate::network::{Network, NetworkKind, Sides, Terminals, internal_prefix};
use crate::paths::{self, Vector};
use crate::process::{Drawn, Process};
use crate::sizing::{self, Method, SizingOptions};

/// What to size and how.
#[derive(Debug, Clone, PartialEq)]
pub struct GateOptions {
    /// Method, mobility ratio, drive and reference inverter.
    pub sizing: SizingOptions,
    /// An input to put nearest the output in every series stack.
    pub critical: Option<String>,
    /// The cell name, used as given (default: the shorthand, or `cell`, with the drive:
    /// `nand2_x1`, `cell_x1p5`).
    pub name: Option<String>,
    /// The process that turns relative sizes into drawn widths (snapping, fingers).
    pub process: Arc<Process>,
    /// Series-stack order chosen by a later stage (the delay stage's order search, the elmore
    /// method), pull-down first: used in place of [`Network::ordered`]. Same devices and structure.
    pub stack_order: Option<Sides<Network>>,
    /// W/L chosen by a later stage (the elmore method), pull-down then pull-up, by device: used as given.
    pub fixed_widths: Option<Sides<Vec<f64>>>,
}

impl GateOptions {
    /// Options with the given sizing, no critical input, the default name and the built-in process.
    pub fn new(sizing: SizingOptions) -> GateOptions {
        GateOptions::cell(sizing, None, None, Arc::new(Process::default()))
    }

    /// Options for one cell as a user gives them: its sizing, the input to place nearest the output,
    /// its name and its process; no order or widths fixed by a later stage. Every command (and each
    /// variant of a library) builds its options here.
    pub fn cell(
        sizing: SizingOptions,
        critical: Option<String>,
        name: Option<String>,
        process: Arc<Process>,
    ) -> GateOptions {
        GateOptions { sizing, critical, name, process, stack_order: None, fixed_widths: None }
    }
}

/// Why a read gate cannot be sized.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum GateError {
    /// The cell name is reserved (a rail, ground, a model in use).
    #[error("the cell name '{name}' is reserved: {why}")]
    ReservedCellName {
        /// The name.
        name: String,
        /// Why it is reserved.
        why: String,
    },
    /// An input or the output takes a reserved name (a function read without the models in use).
    #[error("{role} '{name}' takes a reserved name: {why}")]
    ReservedName {
        /// `input` or `the output`.
        role: &'static str,
        /// The name.
        name: String,
        /// Why it is reserved.
        why: String,
    },
    /// A sizing value out of its bound.
    #[error(transparent)]
    OutOfBounds(#[from] bounds::OutOfBounds),
    /// A device drawn with more fingers than allowed.
    #[error(
        "{device} (W/L {}) would be drawn as {fingers} fingers; the limit is {limit} fingers per device: a \
         smaller drive or reference, a larger max_finger_width_nm or a smaller unit_width_nm keeps it in",
        crate::number::format(*w_over_l)
    )]
    TooManyFingers {
        /// The device.
        device: String,
        /// Its W/L.
        w_over_l: f64,
        /// Its fingers.
        fingers: usize,
        /// The limit.
        limit: usize,
    },
    /// The critical input is not an input of the gate.
    #[error("critical input '{}' is not an input of the gate (its inputs: {inputs})", escaped(name))]
    UnknownCritical {
        /// The name given.
        name: String,
        /// The gate's inputs, listed.
        inputs: String,
    },
    /// Widths fixed by a later stage that do not fit the gate (an internal inconsistency).
    #[error("fixed widths must be {count} positive numbers per network")]
    FixedWidths {
        /// Devices per network.
        count: usize,
    },
    /// The elmore method asked of the path sizer (an internal inconsistency: the delay stage sizes it).
    #[error("the elmore method sets widths from delays and needs a load: size it through the delay stage")]
    ElmoreWithoutLoad,
    /// A stack order that is not the gate's own networks (an internal inconsistency).
    #[error("a stack order must hold the gate's own networks, reordered")]
    ForeignStackOrder,
}

impl GateError {
    /// Whether the error is an internal inconsistency (options built in code, not by a user): a bug
    /// when the binary meets it.
    pub fn is_internal(&self) -> bool {
        matches!(self, GateError::FixedWidths { .. } | GateError::ElmoreWithoutLoad | GateError::ForeignStackOrder)
    }
}

/// One sized transistor.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Transistor {
    /// `MN1`, `MP1` ...: the number is the literal occurrence, shared by its NMOS and PMOS.
    pub name: String,
    /// `"nmos"` or `"pmos"`.
    #[serde(rename = "type")]
    pub device_type: &'static str,
    /// Which network.
    pub network: NetworkKind,
    /// The input on its gate.
    pub input: String,
    /// Output-side node.
    pub drain: String,
    /// Rail-side node.
    pub source: String,
    /// Relative W/L: 1 is the unit NMOS.
    pub w_over_l: f64,
    /// Physical width before snapping, um: W/L x the process's unit width.
    pub width_um: f64,
    /// Drawn length, um.
    pub length_um: f64,
    /// Drawn width in all, um: fingers x finger width, on the grid and at least the minimum width.
    pub drawn_width_um: f64,
    /// Width of each finger, um (SPICE `W=`).
    pub finger_width_um: f64,
    /// Number of equal fingers (SPICE `m=`).
    pub fingers: usize,
    /// Relative W/L as drawn: drawn width / unit width.
    pub drawn_w_over_l: f64,
}

/// Figures of one input.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct InputFigures {
    /// Input name.
    pub name: String,
    /// Sum of the W/L of the devices it gates, in unit-NMOS gate capacitances (C).
    pub input_capacitance: f64,
    /// The same in fF: input capacitance x C, the process's gate capacitance per um x unit width
    /// (from the sized W/L, before snapping).
    pub input_capacitance_ff: f64,
    /// Input capacitance over the reference inverter's at the same drive.
    pub logical_effort: f64,
}

/// The exact worst case over input vectors, where repeated inputs make it differ from the path bound.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ExactWorst {
    /// Highest resistance of what conducts over all input vectors, in units of R.
    pub resistance: f64,
    /// A vector that reaches it.
    pub vector: Vector,
}

/// Worst and best case of one network.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct NetworkFigures {
    /// Which network.
    pub network: NetworkKind,
    /// The reference inverter's resistance on this side, in units of R.
    pub target_resistance: f64,
    /// The weakest path's resistance, in units of R.
    pub worst_resistance: f64,
    /// Its devices, output side first.
    pub worst_path: Vec<String>,
    /// The input vector that makes it the only conducting path; `null` where repeated inputs
    /// make that impossible.
    pub worst_vector: Option<Vector>,
    /// With repeated inputs: the exact worst over input vectors (at most 16 inputs), else `null`.
    pub exact_worst: Option<ExactWorst>,
    /// Resistance with every device on, in units of R.
    pub best_resistance: f64,
    /// Number of conducting paths, as a decimal string (it can exceed any machine integer).
    pub path_count: String,
    /// Sum of the network's W/L.
    pub total_w_over_l: f64,
    /// The weakest path's resistance with the drawn (snapped) widths, in units of R.
    pub drawn_worst_resistance: f64,
    /// Its error against the target, percent (negative: faster than the reference).
    pub drawn_error_percent: f64,
}

/// What the other method would use.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Comparison {
    /// The other method.
    pub method: Method,
    /// Its total W/L.
    pub total_w_over_l: f64,
    /// Its total relative to this one's, in percent (negative: it would save).
    pub change_percent: f64,
}

/// A gate with every device sized and every figure worked out.
#[derive(Debug, Clone, serde::Serialize)]
pub struct SizedGate {
    /// Cell name.
    pub name: String,
    /// The expression in canonical form.
    pub expression: String,
    /// Output node.
    pub output: String,
    /// Sizing method.
    pub method: Method,
    /// Mobility ratio mu_n / mu_p.
    pub mobility_ratio: f64,
    /// Drive strength.
    pub drive: f64,
    /// Reference inverter NMOS W/L at this drive.
    pub reference_nmos_w_over_l: f64,
    /// Reference inverter PMOS W/L at this drive.
    pub reference_pmos_w_over_l: f64,
    /// The input placed nearest the output, if one was named.
    pub critical_input: Option<String>,
    /// Every transistor, NMOS then PMOS, in literal order.
    pub transistors: Vec<Transistor>,
    /// Every input, in order of first appearance.
    pub inputs: Vec<InputFigures>,
    /// Parasitic delay, output node only, in units of the reference inverter's.
    pub parasitic_delay: f64,
    /// The devices whose drain is the output node.
    pub output_devices: Vec<String>,
    /// Number of transistors.
    pub transistor_count: usize,
    /// Sum of all W/L.
    pub total_w_over_l: f64,
    /// Pull-down then pull-up.
    pub networks: Vec<NetworkFigures>,
    /// The other method's total.
    pub comparison: Comparison,
    /// Sum of all drawn widths, um.
    pub total_drawn_width_um: f64,
    /// Drawn area, um^2: the sum over devices of drawn width x length, the channel areas. Not a
    /// layout's area: no diffusions, spacing or wiring.
    pub area_um2: f64,
    /// The process the drawn sizes come from.
    pub process: Arc<Process>,
    /// Delays, the logical-effort view and the three methods side by side, once the delay stage ran.
    #[serde(flatten)]
    pub timing: Option<crate::delay::report::Timing>,
    /// The gate function, for later stages.
    #[serde(skip)]
    pub function: GateFunction,
    /// The ordered networks, pull-down first, for later stages.
    #[serde(skip)]
    pub trees: Sides<Network>,
    /// W/L per device index, by network.
    #[serde(skip)]
    pub widths: Sides<Vec<f64>>,
    /// Drawn W/L (drawn width / unit width) per device index, by network.
    #[serde(skip)]
    pub drawn_widths: Sides<Vec<f64>>,
    /// The sizing options used.
    #[serde(skip)]
    pub options: SizingOptions,
}

/// Name of device `index` (0-based literal occurrence) in a network.
pub fn device_name(kind: NetworkKind, index: usize) -> String {
    let mut name = String::with_capacity(8);
    name.push_str(match kind {
        NetworkKind::PullDown => "MN",
        NetworkKind::PullUp => "MP",
    });
    // Digits by hand: this runs for every device of every gate, and `format!` costs more than the rest.
    let number = index + 1;
    let digits = number.checked_ilog10().unwrap_or(0) + 1;
    for place in (0..digits).rev() {
        name.push(char::from(b'0' + (number / 10usize.pow(place) % 10) as u8));
    }
    name
}

/// The cell name `options` give a gate: the name given, as given; else the shorthand, or `cell` for
/// an expression, with the drive as a library's variants carry it (`nand2_x1`, `cell_x2`).
fn cell_name(function: &GateFunction, options: &GateOptions) -> String {
    options.name.clone().unwrap_or_else(|| {
        crate::names::variant_name(function.shorthand.as_deref().unwrap_or("cell"), options.sizing.drive)
    })
}

/// No name that reaches a netlist may be reserved: the cell's, and (for a function read without the
/// process's model names) the inputs' and the output's.
fn check_reserved(function: &GateFunction, options: &GateOptions) -> Result<(), GateError> {
    let models = options.process.model_names();
    let name = cell_name(function, options);
    if let Some(why) = reserved_reason(&name, &models) {
        return Err(GateError::ReservedCellName { name, why });
    }
    for (role, name) in function.inputs.iter().map(|i| ("input", i)).chain([("the output", &function.output)]) {
        if let Some(why) = reserved_reason(name, &models) {
            return Err(GateError::ReservedName { role, name: name.clone(), why });
        }
    }
    Ok(())
}

/// The sizing values within [`bounds::SIZING`], as every reader checks them (for options built
/// in code).
fn check_sizing(sizing: &SizingOptions) -> Result<(), GateError> {
    for (what, value) in [
        ("the drive", sizing.drive),
        ("the mobility ratio", sizing.mobility_ratio),
        ("the reference NMOS W/L", sizing.reference.nmos),
        ("the reference PMOS W/L", sizing.reference.pmos),
    ] {
        bounds::SIZING.check_named(what, value)?;
    }
    Ok(())
}

/// Every device drawn with at most [`bounds::MAX_FINGERS`] fingers.
fn check_fingers(drawn: &Sides<Vec<Drawn>>, widths: &Sides<Vec<f64>>) -> Result<(), GateError> {
    for (kind, drawn) in drawn.iter() {
        for (device, d) in drawn.iter().enumerate() {
            if d.fingers > bounds::MAX_FINGERS {
                return Err(GateError::TooManyFingers {
                    device: device_name(kind, device),
                    w_over_l: widths[kind][device],
                    fingers: d.fingers,
                    limit: bounds::MAX_FINGERS,
                });
            }
        }
    }
    Ok(())
}

/// Size a gate that has been read.
pub fn size_function(function: GateFunction, options: &GateOptions) -> Result<SizedGate, GateError> {
    check_reserved(&function, options)?;
    let sizing = options.sizing;
    check_sizing(&sizing)?;
    let critical =
        match &options.critical {
            None => None,
            Some(name) => Some(function.inputs.iter().position(|i| i == name).ok_or_else(|| {
                GateError::UnknownCritical { name: name.clone(), inputs: function.inputs.join(", ") }
            })?),
        };
    let count = function.literals.len();
    let built = Network::pair(&function);
    let widths = match &options.fixed_widths {
        Some(given) => {
            if given.values().any(|w| w.len() != count || w.iter().any(|x| !(x.is_finite() && *x > 0.0))) {
                return Err(GateError::FixedWidths { count });
            }
            given.clone()
        }
        None if sizing.method == Method::Elmore => {
            return Err(GateError::ElmoreWithoutLoad);
        }
        None => built.as_ref().map(|_, network| sizing::size(network, sizing.method, &sizing)),
    };
    let other_total: f64 =
        built.values().map(|n| sizing::size(n, sizing.method.other(), &sizing).iter().sum::<f64>()).sum();
    let trees = match &options.stack_order {
        Some(given) => {
            if !NetworkKind::BOTH.into_iter().all(|kind| built[kind].same_up_to_order(&given[kind])) {
                return Err(GateError::ForeignStackOrder);
            }
            given.clone()
        }
        None => built.as_ref().map(|kind, network| network.ordered(&widths[kind], critical)),
    };
    let process = &options.process;
    let drawn: Sides<Vec<Drawn>> = widths.as_ref().map(|_, widths| widths.iter().map(|&w| process.draw(w)).collect());
    check_fingers(&drawn, &widths)?;
    let drawn_widths =
        drawn.as_ref().map(|_, drawn| drawn.iter().map(|d| d.width_nm() / process.unit_width_nm).collect::<Vec<f64>>());

    // Internal nodes are named unlike every input, the output and the models.
    let mut names: Vec<&str> = function.inputs.iter().map(String::as_str).collect();
    names.push(&function.output);
    names.extend(process.model_names());
    let terminals: Sides<Vec<Terminals>> = trees.as_ref().map(|kind, tree| {
        let base = if kind == NetworkKind::PullDown { "n" } else { "p" };
        tree.nodes(&function.output, &internal_prefix(base, &names))
    });

    let mut loads = Vec::with_capacity(2 * count);
    for (kind, nodes) in terminals.iter() {
        for (device, node) in nodes.iter().enumerate() {
            let input = trees[kind].inputs[device];
            loads.push(DeviceLoad { input, w_over_l: widths[kind][device], terminals: node });
        }
    }
    let reference_capacitance = sizing.drive * sizing.reference.input_capacitance();
    let capacitance = figures::input_capacitance(&loads, function.inputs.len());
    let effort = figures::logical_effort(&capacitance, reference_capacitance);
    let inputs = function
        .inputs
        .iter()
        .zip(capacitance.iter().zip(&effort))
        .map(|(name, (&c, &g))| InputFigures {
            name: name.clone(),
            input_capacitance: c,
            input_capacitance_ff: c * options.process.unit_capacitance_ff(),
            logical_effort: g,
        })
        .collect();
    let parasitic_delay = figures::parasitic_delay(&loads, &function.output, reference_capacitance);
    drop(loads);

    // The terminals move into the transistors (no copies of the node names).
    let mut transistors = Vec::with_capacity(2 * count);
    for (kind, nodes) in NetworkKind::BOTH.into_iter().zip(terminals) {
        for (device, node) in nodes.into_iter().enumerate() {
            transistors.push(Transistor {
                name: device_name(kind, device),
                device_type: kind.device_type(),
                network: kind,
                input: function.inputs[trees[kind].inputs[device]].clone(),
                drain: node.drain,
                source: node.source,
                w_over_l: widths[kind][device],
                width_um: process.width_nm(widths[kind][device]) / 1000.0,
                length_um: process.length_nm / 1000.0,
                drawn_width_um: drawn[kind][device].width_nm() / 1000.0,
                finger_width_um: drawn[kind][device].finger_width_nm / 1000.0,
                fingers: drawn[kind][device].fingers,
                drawn_w_over_l: drawn_widths[kind][device],
            });
        }
    }
    let output_devices = transistors.iter().filter(|t| t.drain == function.output).map(|t| t.name.clone()).collect();

    let networks: Vec<NetworkFigures> = NetworkKind::BOTH
        .into_iter()
        .map(|kind| network_figures(&function, &trees[kind], [&widths[kind], &drawn_widths[kind]], &sizing))
        .collect();
    let total_drawn_width_um = transistors.iter().map(|t| t.drawn_width_um).sum();
    let area_um2 = transistors.iter().map(|t| t.drawn_width_um * t.length_um).sum();
    let total: f64 = widths.values().flatten().sum();
    let name = cell_name(&function, options);
    Ok(SizedGate {
        name,
        expression: function.text.clone(),
        output: function.output.clone(),
        method: sizing.method,
        mobility_ratio: sizing.mobility_ratio,
        drive: sizing.drive,
        reference_nmos_w_over_l: sizing.reference_width(NetworkKind::PullDown),
        reference_pmos_w_over_l: sizing.reference_width(NetworkKind::PullUp),
        critical_input: options.critical.clone(),
        transistor_count: transistors.len(),
        transistors,
        inputs,
        parasitic_delay,
        output_devices,
        total_w_over_l: total,
        networks,
        comparison: Comparison {
            method: sizing.method.other(),
            total_w_over_l: other_total,
            change_percent: (other_total / total - 1.0) * 100.0,
        },
        total_drawn_width_um,
        area_um2,
        process: Arc::clone(process),
        timing: None,
        function,
        trees,
        widths,
        drawn_widths,
        options: sizing,
    })
}

fn network_figures(
    function: &GateFunction,
    network: &Network,
    [widths, drawn_widths]: [&[f64]; 2],
    sizing: &SizingOptions,
) -> NetworkFigures {
    let kind = network.kind;
    let resistance = sizing.resistances(kind, widths);
    let drawn_worst = paths::highest(&network.root, &sizing.resistances(kind, drawn_widths));
    let weakest = paths::weakest(network, &resistance);
    let input_count = function.inputs.len();
    let worst_vector =
        paths::sensitize(network, &weakest.devices, input_count).map(|values| Vector::new(&function.inputs, &values));
    let exact_worst = if function.has_repeated_inputs() {
        paths::exact_worst(network, &resistance, input_count)
            .map(|(resistance, values)| ExactWorst { resistance, vector: Vector::new(&function.inputs, &values) })
    } else {
        None
    };
    NetworkFigures {
        network: kind,
        target_resistance: sizing.target(kind),
        worst_resistance: weakest.resistance,
        worst_path: weakest.devices.iter().map(|&d| device_name(kind, d)).collect(),
        worst_vector,
        exact_worst,
        best_resistance: paths::best_case(network, &resistance),
        path_count: paths::count_text(network),
        total_w_over_l: widths.iter().sum(),
        drawn_worst_resistance: drawn_worst,
        drawn_error_percent: (drawn_worst / sizing.target(kind) - 1.0) * 100.0,
    }
}

/// One listed path, for the `paths` command.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ListedPath {
    /// Resistance in units of R.
    pub resistance: f64,
    /// Resistance with the drawn (snapped) widths, in units of R.
    pub drawn_resistance: f64,
    /// Devices, output side first.
    pub devices: Vec<String>,
    /// The vector that makes it the only conducting path, or `null`.
    pub vector: Option<Vector>,
}

/// The listed paths of one network.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct PathListing {
    /// Which network.
    pub network: NetworkKind,
    /// The target, in units of R.
    pub target_resistance: f64,
    /// All paths, counted (decimal string).
    pub path_count: String,
    /// The weakest ones, weakest first.
    pub paths: Vec<ListedPath>,
}

impl SizedGate {
    /// The `limit` weakest paths of each network, with their vectors.
    pub fn list_paths(&self, limit: usize) -> Vec<PathListing> {
        NetworkKind::BOTH
            .into_iter()
            .map(|kind| {
                let network = &self.trees[kind];
                let resistance = self.options.resistances(kind, &self.widths[kind]);
                let drawn = self.options.resistances(kind, &self.drawn_widths[kind]);
                let paths = paths::list(network, &resistance, limit)
                    .into_iter()
                    .map(|path| ListedPath {
                        resistance: path.resistance,
                        drawn_resistance: path.devices.iter().map(|&d| drawn[d]).sum(),
                        vector: paths::sensitize(network, &path.devices, self.function.inputs.len())
                            .map(|values| Vector::new(&self.function.inputs, &values)),
                        devices: path.devices.iter().map(|&d| device_name(kind, d)).collect(),
                    })
                    .collect();
                PathListing {
                    network: kind,
                    target_resistance: self.options.target(kind),
                    path_count: paths::count(network).to_string(),
                    paths,
                }
            })
            .collect()
    }

    /// Every input vector (the values after the switch) under which `input`, going to its on-level,
    /// turns `kind`'s network from off to on: the transitions of that input on that edge, for when
    /// repeated inputs leave no path through it that conducts alone. `None` past
    /// [`paths::EXACT_WORST_MAX_INPUTS`] inputs.
    pub fn switching_vectors(&self, input: usize, kind: NetworkKind) -> Option<Vec<Vec<bool>>> {
        let count = self.function.inputs.len();
        if count > paths::EXACT_WORST_MAX_INPUTS {
            return None;
        }
        let network = &self.trees[kind];
        let conducts = |values: &[bool]| network.conducts(&network.on_devices(values));
        let on_level = kind.conducts(true);
        let mut vectors = Vec::new();
        for bits in 0..(1u64 << count) {
            let mut values: Vec<bool> = (0..count).map(|i| bits >> i & 1 == 1).collect();
            if values[input] != on_level || !conducts(&values) {
                continue;
            }
            values[input] = !on_level;
            if conducts(&values) {
                continue;
            }
            values[input] = on_level;
            vectors.push(values);
        }
        Some(vectors)
    }

    /// The worst-case transition of `input` through `kind`'s network: the weakest path through one
    /// of the input's devices that can conduct alone, with the vector that makes it the only
    /// conducting path (the input itself at its on-level). `None` where no such path exists
    /// (repeated inputs can block every one).
    pub fn worst_case_for_input(&self, input: usize, kind: NetworkKind) -> Option<(paths::Path, Vector)> {
        self.worst_case_for_input_within(input, kind, &Meter::unlimited()).unwrap_or(None)
    }

    /// [`SizedGate::worst_case_for_input`], its work counted on `meter` (as timing the delays):
    /// each path found or tried is as many units as the gate has input occurrences, a listing as
    /// many as the partial paths it builds.
    pub fn worst_case_for_input_within(
        &self,
        input: usize,
        kind: NetworkKind,
        meter: &Meter,
    ) -> Result<Option<(paths::Path, Vector)>, OverBudget> {
        let network = &self.trees[kind];
        let resistance = self.options.resistances(kind, &self.widths[kind]);
        let input_of = &network.inputs;
        let occurrences = input_of.len() as u128;
        let mut best: Option<(paths::Path, Vec<bool>)> = None;
        // Repeated inputs can block the weakest path through a device; then the weakest few paths of
        // the network are searched (listed once, a bounded number).
        let mut listing: Option<Vec<paths::Path>> = None;
        for device in (0..input_of.len()).filter(|&d| input_of[d] == input) {
            meter.charge(2 * occurrences, Work::Delays)?;
            let mut candidates = match paths::weakest_through(network, &resistance, device) {
                Some(path) => vec![path],
                None => continue,
            };
            if paths::sensitize(network, &candidates[0].devices, self.function.inputs.len()).is_none() {
                if listing.is_none() {
                    let limit = (paths::MAX_LISTING_WORK / paths::listing_work(network, 1).max(1)) as usize;
                    let limit = limit.clamp(1, paths::MAX_LISTED_PATHS);
                    // The listing builds at most its paths per series member, and there may be fewer.
                    let listed = usize::try_from(paths::count(network)).map_or(limit, |count| count.min(limit));
                    meter.charge(paths::listing_work(network, listed), Work::Delays)?;
                    listing = Some(paths::list(network, &resistance, limit));
                }
                let listed = listing.as_deref().unwrap_or_default();
                candidates = listed.iter().filter(|p| p.devices.contains(&device)).cloned().collect();
            }
            for path in candidates {
                meter.charge(occurrences, Work::Delays)?;
                if let Some(values) = paths::sensitize(network, &path.devices, self.function.inputs.len()) {
                    if best.as_ref().is_none_or(|(b, _)| path.resistance > b.resistance + 1e-12) {
                        best = Some((path, values));
                    }
                    break;
                }
            }
        }
        Ok(best.map(|(path, values)| (path, Vector::new(&self.function.inputs, &values))))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::size_text;
    use approx::assert_relative_eq;

    fn sized(text: &str, method: Method) -> SizedGate {
        size_text(text, &GateOptions::new(SizingOptions::new(method, 2.0, 1.0, None))).unwrap()
    }

    #[test]
    fn aoi21_puts_the_or_input_pmos_at_the_output() {
        // AOI21 p = 7/3 with the OR input's PMOS at the output (Weste & Harris, logical-effort table; from memory)
        let gate = sized("aoi21", Method::LongestPath);
        assert_relative_eq!(gate.parasitic_delay, 7.0 / 3.0, epsilon = 1e-12);
        assert!(gate.output_devices.contains(&"MP3".to_string()));
        assert!(!gate.output_devices.contains(&"MP1".to_string()));
    }

    #[test]
    fn nand2_vectors_and_best_case() {
        let gate = sized("nand2", Method::LongestPath);
        let up = &gate.networks[1];
        assert_eq!(up.worst_vector.as_ref().unwrap().to_string(), "a=0 b=1");
        // best case of the NAND2 pull-up: two PMOS of 2 in parallel, R/2 (common practice, no source)
        assert_relative_eq!(up.best_resistance, 0.5, epsilon = 1e-12);
        assert_eq!(up.path_count, "2");
    }

    #[test]
    fn worst_case_per_input_sets_the_side_inputs() {
        // AOI21 pull-up: input c's weakest path is c with a or b (both 1 R); a and b off-side at 1
        let gate = sized("aoi21", Method::LongestPath);
        let (path, vector) = gate.worst_case_for_input(2, NetworkKind::PullUp).unwrap();
        assert_relative_eq!(path.resistance, 1.0, epsilon = 1e-12);
        assert_eq!(vector.to_string(), "a=0 b=1 c=0");
        let (path, vector) = gate.worst_case_for_input(2, NetworkKind::PullDown).unwrap();
        assert_eq!(path.devices, vec![2]);
        assert_eq!(vector.to_string(), "a=0 b=0 c=1");
    }

    #[test]
    fn device_names_count_from_one() {
        assert_eq!(device_name(NetworkKind::PullDown, 0), "MN1");
        assert_eq!(device_name(NetworkKind::PullUp, 9), "MP10");
        assert_eq!(device_name(NetworkKind::PullUp, 9_999), "MP10000");
    }

    #[test]
    fn switching_vectors_are_the_transitions_of_an_input() {
        // !(a & (a | b)) is !a: a switches the pull-down whatever b is, b never does (Boolean
        // algebra, absorption; common practice, no source).
        let gate = sized("!(a & (a | b))", Method::LongestPath);
        let a = gate.switching_vectors(0, NetworkKind::PullDown).unwrap();
        assert_eq!(a, vec![vec![true, false], vec![true, true]]);
        assert!(gate.switching_vectors(1, NetworkKind::PullDown).unwrap().is_empty());
        assert!(gate.switching_vectors(1, NetworkKind::PullUp).unwrap().is_empty());
        assert_eq!(gate.switching_vectors(0, NetworkKind::PullUp).unwrap().len(), 2);
    }

    #[test]
    fn unknown_critical_input_is_refused() {
        let mut options = GateOptions::new(SizingOptions::new(Method::LongestPath, 2.0, 1.0, None));
        options.critical = Some("q".into());
        let error = size_text("nand2", &options).unwrap_err();
        assert!(error.to_string().contains("'q'"));
    }

    #[test]
    fn min_area_comparison_is_reported() {
        let gate = sized("!(a & (b | c))", Method::LongestPath);
        let min = sized("!(a & (b | c))", Method::MinArea);
        // Pull-down K = (1 + sqrt 2)^2, pull-up a || (b - c): 2 + 4 + 4 (the closed form, by hand).
        assert_relative_eq!(min.total_w_over_l, (1.0 + 2f64.sqrt()).powi(2) + 10.0, epsilon = 1e-12);
        assert_relative_eq!(gate.comparison.total_w_over_l, min.total_w_over_l, epsilon = 1e-12);
        assert!(gate.comparison.change_percent < 0.0);
    }
}
