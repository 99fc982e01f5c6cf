//! Figures of a sized cell, worked out from its sized devices once: every transistor as written to
//! netlists, input capacitance, logical effort, parasitic delay, each network's worst and best case
//! and path count, totals, area, the other method's total; the path listing; and the diffusion
//! width of each node (the one rule the delays and the simulation deck share).
//!
//! Capacitances are in units of the gate capacitance of the unit NMOS (W/L = 1). Logical effort
//! and parasitic delay divide by the reference inverter's input capacitance at the same drive, which
//! is the unit gate against the unit inverter, so neither changes with drive.

pub mod stages;

pub use stages::output_diffusion;

use std::sync::{Arc, OnceLock};

use crate::budget::Meter;
use crate::cell::{SizedCell, SizedNetwork, SizedStage, device_name};
use crate::expr::GateFunction;
use crate::network::NetworkKind;
use crate::paths::{self, Vector};
use crate::process::Process;
use crate::sizing::plan::{Method, Plan, WorstCase};
use crate::sizing::rules::{self, Rule};
use crate::sizing::vectors;

/// One sized transistor, as netlists write it.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Transistor {
    /// `MN1`, `MP1` ...: the number is the device's index in its network; in a cell of several
    /// stages the stage's net follows (`MN1_a_n`).
    pub name: String,
    /// The stage it belongs to, by the net the stage drives.
    pub stage: String,
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
    /// The worst case with the drawn (snapped) widths, in units of R, by the definition the cell was
    /// sized to: the weakest path, or (sized against vectors) the exact worst over input vectors.
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

/// What min-area under the other worst-case definition would use, for a cell with repeated inputs
/// sized by a path rule (docs/model.md section 10).
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct WorstCaseComparison {
    /// The other definition: `vectors` for a cell sized against paths, `paths` for one sized
    /// against vectors.
    pub worst_case: WorstCase,
    /// Min-area's total W/L under it, where it could be worked out.
    pub total_w_over_l: Option<f64>,
    /// That total relative to this cell's, in percent (negative: it would save).
    pub change_percent: Option<f64>,
    /// Why it could not be worked out (a limit or the work budget of the sizing over vectors).
    pub not_computed: Option<String>,
}

/// Every figure of a sized cell; its serde form is the JSON output (with the delays beside it).
#[derive(Debug, Clone, serde::Serialize)]
pub struct CellFigures {
    /// Cell name.
    pub name: String,
    /// The expression in canonical form.
    pub expression: String,
    /// Output node.
    pub output: String,
    /// How the cell's logic stage reaches the output: `direct` (a one-stage cell, or a logic stage
    /// driving the output) or `inverted` (an output inverter after it).
    pub form: &'static str,
    /// The function's other forms, not kept: each with its total W/L.
    pub other_forms: Vec<crate::cell::OtherForm>,
    /// Sizing method.
    pub method: Method,
    /// What the method sizes against: `paths` or `vectors` (docs/model.md section 10).
    pub worst_case: WorstCase,
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
    /// Every transistor, stage by stage (in the order of the stages), each stage's NMOS then PMOS,
    /// in device order.
    pub transistors: Vec<Transistor>,
    /// Every input, in order of first appearance; the capacitance of an input that several stages
    /// read is their sum.
    pub inputs: Vec<InputFigures>,
    /// Every stage, first to last (one for a one-stage cell).
    pub stages: Vec<stages::StageFigures>,
    /// Each input's logical-effort delay estimate through the cell, sum(g h + p) in tau.
    pub delay_estimates: Vec<stages::DelayEstimate>,
    /// Parasitic delay of the output stage, output node only, in units of the reference inverter's.
    pub parasitic_delay: f64,
    /// The devices whose drain is the output node.
    pub output_devices: Vec<String>,
    /// Number of transistors.
    pub transistor_count: usize,
    /// Sum of all W/L.
    pub total_w_over_l: f64,
    /// The output stage's pull-down then pull-up (the networks sized against the reference inverter
    /// at the cell's drive).
    pub networks: Vec<NetworkFigures>,
    /// The other method's total.
    pub comparison: Comparison,
    /// With repeated inputs and a path rule: what min-area under the other worst-case definition
    /// would use; else `null`.
    pub worst_case_comparison: Option<WorstCaseComparison>,
    /// Sum of all drawn widths, um.
    pub total_drawn_width_um: f64,
    /// Drawn area, um^2: the sum over devices of drawn width x length, the channel areas. Not a
    /// layout's area: no diffusions, spacing or wiring.
    pub area_um2: f64,
    /// The same figures from the drawn W/L, where snapping moves some device's W/L by more than
    /// [`DRAWN_CHANGE_PERCENT`].
    #[serde(skip_serializing_if = "Option::is_none")]
    pub drawn: Option<DrawnFigures>,
    /// The process the drawn sizes come from.
    pub process: Arc<Process>,
}

/// Snapping that moves a device's W/L by more than this, in percent, puts the drawn figures beside
/// the sized ones.
pub const DRAWN_CHANGE_PERCENT: f64 = 0.5;

/// Figures worked out from the drawn W/L (drawn width over the unit width), by the same rules as the
/// sized ones (docs/model.md section 6).
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct DrawnFigures {
    /// The largest change snapping makes to a device's W/L, percent of its sized W/L.
    pub largest_change_percent: f64,
    /// Every input's capacitance and logical effort from the drawn W/L.
    pub inputs: Vec<InputFigures>,
    /// Parasitic delay from the drawn W/L.
    pub parasitic_delay: f64,
    /// Sum of all drawn W/L.
    pub total_w_over_l: f64,
}

impl CellFigures {
    /// The figures of `cell`.
    pub fn of(cell: &SizedCell) -> CellFigures {
        let plan = &cell.plan;
        let stage = cell.stage();
        let function = &stage.function;
        let process = &plan.process;
        let reference_capacitance = plan.reference_capacitance();
        let capacitance = pin_capacitance(cell);
        let inputs = cell
            .logic
            .inputs
            .iter()
            .zip(&capacitance)
            .map(|(name, &c)| InputFigures {
                name: name.clone(),
                input_capacitance: c,
                input_capacitance_ff: c * process.unit_capacitance_ff(),
                logical_effort: c / reference_capacitance,
            })
            .collect();
        let pins: Vec<(String, f64)> = cell.logic.inputs.iter().cloned().zip(capacitance.iter().copied()).collect();
        let (stage_figures, delay_estimates) = stages::of(cell, &pins);
        let parasitic_delay = output_diffusion(stage) / reference_capacitance;
        let transistors = transistors(cell);
        let output_devices =
            transistors.iter().filter(|t| t.drain == function.output).map(|t| t.name.clone()).collect();
        let networks = stage.networks.values().map(|sized| network_figures(function, sized, plan)).collect();
        let total_drawn_width_um = transistors.iter().map(|t| t.drawn_width_um).sum();
        let area_um2 = transistors.iter().map(|t| t.drawn_width_um * t.length_um).sum();
        let total = cell.total_w_over_l();
        let other = plan.method.other();
        let other_total = cell.stages.iter().map(|s| other_total(s, plan, other)).sum();
        let drawn = drawn_figures(cell, plan, &transistors);
        let worst_case_comparison = worst_case_comparison(cell, plan, total);
        CellFigures {
            name: cell.name.clone(),
            expression: if cell.is_single_stage() { function.text.clone() } else { cell.logic.text.clone() },
            output: function.output.clone(),
            form: cell.logic.form.name(),
            other_forms: cell.other_forms.clone(),
            method: plan.method,
            worst_case: plan.method.worst_case(),
            mobility_ratio: plan.mobility_ratio,
            drive: plan.drive,
            reference_nmos_w_over_l: plan.reference_width(NetworkKind::PullDown),
            reference_pmos_w_over_l: plan.reference_width(NetworkKind::PullUp),
            critical_input: plan.order.critical().map(str::to_string),
            transistor_count: transistors.len(),
            transistors,
            inputs,
            stages: stage_figures,
            delay_estimates,
            parasitic_delay,
            output_devices,
            total_w_over_l: total,
            networks,
            comparison: Comparison {
                method: other,
                total_w_over_l: other_total,
                change_percent: (other_total / total - 1.0) * 100.0,
            },
            worst_case_comparison,
            total_drawn_width_um,
            area_um2,
            drawn,
            process: Arc::clone(process),
        }
    }
}

/// A sized cell that the variants of a batch share where they differ only in their names, its
/// figures worked out once, when first asked for. `id` tells it from every other shared cell of the
/// same batch (a writer may keep what it made of one by its id); the cell and its figures carry the
/// name of the variant it was sized for.
#[derive(Debug)]
pub struct SharedCell {
    id: u64,
    cell: SizedCell,
    figures: OnceLock<CellFigures>,
}

impl SharedCell {
    /// `cell`, shared under `id` (unique within its batch).
    pub fn new(id: u64, cell: SizedCell) -> SharedCell {
        SharedCell { id, cell, figures: OnceLock::new() }
    }

    /// Its id within the batch.
    pub fn id(&self) -> u64 {
        self.id
    }

    /// The cell, under the name of the variant it was sized for.
    pub fn cell(&self) -> &SizedCell {
        &self.cell
    }

    /// Its figures ([`CellFigures::of`]), worked out on the first call.
    pub fn figures(&self) -> &CellFigures {
        self.figures.get_or_init(|| CellFigures::of(&self.cell))
    }

    /// Whether its figures are worked out already.
    pub fn has_figures(&self) -> bool {
        self.figures.get().is_some()
    }
}

/// One variant of a batch: its own name and the sized cell it shares with every variant of the
/// batch that differs from it only in name. Its cell and figures are the shared ones with every
/// place of the name (the cell's name, its plan's name, the figures' name) set to `name`.
#[derive(Debug, Clone)]
pub struct NamedCell {
    /// The variant's name.
    pub name: String,
    /// The cell it shares.
    pub shared: Arc<SharedCell>,
}

impl NamedCell {
    /// The variant's own sized cell: the shared one, renamed.
    pub fn cell(&self) -> SizedCell {
        let mut cell = self.shared.cell().clone();
        cell.name.clone_from(&self.name);
        cell.plan.name = Some(self.name.clone());
        cell
    }

    /// The variant's own figures: the shared ones, renamed.
    pub fn figures(&self) -> CellFigures {
        let mut figures = self.shared.figures().clone();
        figures.name.clone_from(&self.name);
        figures
    }

    /// Whether the shared cell is under this variant's name (it was sized for it).
    pub fn is_own(&self) -> bool {
        self.shared.cell().name == self.name
    }
}

/// Every transistor of `cell`, stage by stage, pull-down then pull-up, as netlists write them (the
/// devices of [`CellFigures`], for a writer that needs nothing else).
pub fn transistors(cell: &SizedCell) -> Vec<Transistor> {
    let process = &cell.plan.process;
    let mut transistors = Vec::with_capacity(cell.logic.transistor_count());
    for (index, sized_stage) in cell.stages.iter().enumerate() {
        for sized in sized_stage.networks.values() {
            let kind = sized.kind();
            for (device, node) in sized.terminals.iter().enumerate() {
                let drawn = &sized.drawn[device];
                transistors.push(Transistor {
                    name: cell.device_name(index, kind, device),
                    stage: sized_stage.function.output.clone(),
                    device_type: kind.device_type(),
                    network: kind,
                    input: sized_stage.function.inputs[sized.network.inputs[device]].clone(),
                    drain: node.drain.clone(),
                    source: node.source.clone(),
                    w_over_l: sized.widths[device],
                    width_um: process.width_nm(sized.widths[device]) / 1000.0,
                    length_um: process.length_nm / 1000.0,
                    drawn_width_um: drawn.width_nm() / 1000.0,
                    finger_width_um: drawn.finger_width_nm / 1000.0,
                    fingers: drawn.fingers,
                    drawn_w_over_l: drawn.width_nm() / process.unit_width_nm,
                });
            }
        }
    }
    transistors
}

/// The drawn figures, where snapping moves some device by more than [`DRAWN_CHANGE_PERCENT`].
fn drawn_figures(cell: &SizedCell, plan: &Plan, transistors: &[Transistor]) -> Option<DrawnFigures> {
    let change = transistors.iter().map(|t| (t.drawn_w_over_l / t.w_over_l - 1.0).abs() * 100.0).fold(0.0, f64::max);
    if change.is_nan() || change <= DRAWN_CHANGE_PERCENT {
        return None;
    }
    let reference_capacitance = plan.reference_capacitance();
    let unit_ff = plan.process.unit_capacitance_ff();
    let pins = &cell.logic.inputs;
    let mut capacitance = vec![0.0; pins.len()];
    let mut output = 0.0;
    let numbers = pin_numbers(pins);
    for transistor in transistors {
        if let Some(&pin) = numbers.get(transistor.input.as_str()) {
            capacitance[pin] += transistor.drawn_w_over_l;
        }
        if transistor.drain == cell.logic.output {
            output += transistor.drawn_w_over_l;
        }
    }
    let inputs = pins
        .iter()
        .zip(&capacitance)
        .map(|(name, &c)| InputFigures {
            name: name.clone(),
            input_capacitance: c,
            input_capacitance_ff: c * unit_ff,
            logical_effort: c / reference_capacitance,
        })
        .collect();
    Some(DrawnFigures {
        largest_change_percent: change,
        inputs,
        parasitic_delay: output / reference_capacitance,
        total_w_over_l: transistors.iter().map(|t| t.drawn_w_over_l).sum(),
    })
}

/// The total W/L the path method `method` gives the stage (the elmore method has no closed form:
/// it is compared with min-area).
fn other_total(stage: &SizedStage, plan: &Plan, method: Method) -> f64 {
    let rule = match method {
        Method::LongestPath => Rule::LongestPath,
        Method::MinArea { .. } | Method::Elmore { .. } => Rule::MinArea,
    };
    // At the stage's own drive (the cell's for a one-stage cell).
    let scale = stage.drive / plan.drive;
    stage.networks.values().map(|n| rules::total(&n.network, rule, scale * plan.reference_width(n.kind()))).sum()
}

/// Input capacitance of every pin of the cell, in C: the W/L of every device of every stage it
/// gates, both networks (docs/model.md sections 6 and 9).
pub fn pin_capacitance(cell: &SizedCell) -> Vec<f64> {
    let mut capacitance = vec![0.0; cell.logic.inputs.len()];
    let pins = pin_numbers(&cell.logic.inputs);
    for stage in &cell.stages {
        for (net, c) in stage.function.inputs.iter().zip(input_capacitance(stage)) {
            if let Some(&pin) = pins.get(net.as_str()) {
                capacitance[pin] += c;
            }
        }
    }
    capacitance
}

/// Each pin's number by its name (the first, where a name repeats), so that a lookup per device
/// stays constant however many pins the cell has.
fn pin_numbers(pins: &[String]) -> std::collections::HashMap<&str, usize> {
    let mut numbers = std::collections::HashMap::with_capacity(pins.len());
    for (index, pin) in pins.iter().enumerate() {
        numbers.entry(pin.as_str()).or_insert(index);
    }
    numbers
}

/// Min-area's total under the other worst-case definition than the plan's, where a stage has
/// repeated inputs (without them both give the same) and the method is a path rule: each stage with
/// repeated inputs sized the other way at its own drive, the others as they are. Sizing over
/// vectors runs within the plan's work budget, as a computation of its own.
fn worst_case_comparison(cell: &SizedCell, plan: &Plan, total: f64) -> Option<WorstCaseComparison> {
    if plan.method.sizes_by_delay() || !cell.stages.iter().any(|s| s.function.has_repeated_inputs()) {
        return None;
    }
    let worst_case = match plan.method.worst_case() {
        WorstCase::Vectors => WorstCase::Paths,
        WorstCase::Paths => WorstCase::Vectors,
    };
    let meter = Meter::new(plan.budget);
    let mut other = 0.0;
    for stage in &cell.stages {
        if !stage.function.has_repeated_inputs() {
            other += stage.networks.values().flat_map(|n| &n.widths).sum::<f64>();
            continue;
        }
        let stage_total = match worst_case {
            WorstCase::Paths => Ok(other_total(stage, plan, Method::MIN_AREA)),
            WorstCase::Vectors => {
                let networks = stage.networks.as_ref().map(|_, n| n.network.clone());
                let stage_plan = Plan { drive: stage.drive, ..plan.clone() };
                vectors::total(&networks, stage.function.inputs.len(), &stage_plan, &meter)
            }
        };
        match stage_total {
            Ok(value) => other += value,
            Err(error) => {
                return Some(WorstCaseComparison {
                    worst_case,
                    total_w_over_l: None,
                    change_percent: None,
                    not_computed: Some(error.to_string()),
                });
            }
        }
    }
    Some(WorstCaseComparison {
        worst_case,
        total_w_over_l: Some(other),
        change_percent: Some((other / total - 1.0) * 100.0),
        not_computed: None,
    })
}

/// Input capacitance of every stage input, in C: the W/L of every device it gates, both networks
/// (docs/model.md section 6).
pub fn input_capacitance(stage: &SizedStage) -> Vec<f64> {
    let mut capacitance = vec![0.0; stage.function.inputs.len()];
    for sized in stage.networks.values() {
        for (&input, &width) in sized.network.inputs.iter().zip(&sized.widths) {
            capacitance[input] += width;
        }
    }
    capacitance
}

fn network_figures(function: &GateFunction, sized: &SizedNetwork, plan: &Plan) -> NetworkFigures {
    let network = &sized.network;
    let kind = network.kind;
    let resistance = plan.resistances(kind, &sized.widths);
    let drawn_resistance = plan.resistances(kind, &sized.drawn_widths(&plan.process));
    let input_count = function.inputs.len();
    // The drawn worst case by the definition the cell was sized to.
    let drawn_worst = match plan.method.worst_case() {
        WorstCase::Vectors => paths::exact_worst(network, &drawn_resistance, input_count).map(|(r, _)| r),
        WorstCase::Paths => None,
    }
    .unwrap_or_else(|| paths::highest(&network.root, &drawn_resistance));
    let weakest = paths::weakest(network, &resistance);
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
        target_resistance: plan.target(kind),
        worst_resistance: weakest.resistance,
        worst_path: weakest.devices.iter().map(|&d| device_name(kind, d)).collect(),
        worst_vector,
        exact_worst,
        best_resistance: paths::best_case(network, &resistance),
        path_count: paths::count_text(network),
        total_w_over_l: sized.widths.iter().sum(),
        drawn_worst_resistance: drawn_worst,
        drawn_error_percent: (drawn_worst / plan.target(kind) - 1.0) * 100.0,
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
    /// The stage, by the net it drives.
    pub stage: String,
    /// Which network.
    pub network: NetworkKind,
    /// The target, in units of R.
    pub target_resistance: f64,
    /// All paths, counted (decimal string).
    pub path_count: String,
    /// The weakest ones, weakest first.
    pub paths: Vec<ListedPath>,
}

/// The `limit` weakest paths of each network of each stage of the cell, with their vectors (over
/// the stage's inputs).
pub fn path_listings(cell: &SizedCell, limit: usize) -> Vec<PathListing> {
    let plan = &cell.plan;
    let mut listings = Vec::with_capacity(2 * cell.stages.len());
    for (index, stage) in cell.stages.iter().enumerate() {
        let function = &stage.function;
        // Each stage against the reference inverter at its own drive.
        let scale = plan.drive / stage.drive;
        for sized in stage.networks.values() {
            let network = &sized.network;
            let kind = network.kind;
            let resistance = plan.resistances(kind, &sized.widths);
            let drawn = plan.resistances(kind, &sized.drawn_widths(&plan.process));
            let paths = paths::list(network, &resistance, limit)
                .into_iter()
                .map(|path| ListedPath {
                    resistance: path.resistance,
                    drawn_resistance: path.devices.iter().map(|&d| drawn[d]).sum(),
                    vector: paths::sensitize(network, &path.devices, function.inputs.len())
                        .map(|values| Vector::new(&function.inputs, &values)),
                    devices: path.devices.iter().map(|&d| cell.device_name(index, kind, d)).collect(),
                })
                .collect();
            listings.push(PathListing {
                stage: function.output.clone(),
                network: kind,
                target_resistance: plan.target(kind) * scale,
                path_count: paths::count(network).to_string(),
                paths,
            });
        }
    }
    listings
}

/// How the diffusions on one node make its diffusion width: the one rule the delay stage and the
/// simulation deck share, so that Elmore delays and simulated ones see the same capacitance.
///
/// Every device has a drain and a source diffusion as wide as the device. An internal node with
/// exactly two device terminals on it joins two devices in series, drawn as one diffusion region
/// shared by both and as wide as the wider of them (common practice, no source). Any other node
/// (the output, or a node with one or three and more terminals, such as a stack meeting a parallel
/// group) counts each terminal as its own diffusion. Rails count nothing: the supply holds them.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum NodeDiffusion {
    /// A rail: no capacitance counted.
    Rail,
    /// One diffusion shared by two series devices (by index), as wide as the wider.
    Shared(usize, usize),
    /// Separate diffusions, one per terminal (devices by index, a device once per terminal).
    Separate(Vec<usize>),
}

impl NodeDiffusion {
    /// The rule for a node whose device terminals are `terminals` (a device index per drain or
    /// source on the node), given whether the node is a rail and whether it is the output.
    pub fn of(terminals: &[usize], rail: bool, output: bool) -> NodeDiffusion {
        match terminals {
            _ if rail => NodeDiffusion::Rail,
            &[first, second] if !output => NodeDiffusion::Shared(first, second),
            _ => NodeDiffusion::Separate(terminals.to_vec()),
        }
    }

    /// The node's diffusion width, from every device's width (`widths[device]`), in the widths'
    /// unit (W/L for the delay stage, um for the deck).
    pub fn width(&self, widths: &[f64]) -> f64 {
        match self {
            NodeDiffusion::Rail => 0.0,
            NodeDiffusion::Shared(first, second) => widths[*first].max(widths[*second]),
            NodeDiffusion::Separate(devices) => devices.iter().map(|&d| widths[d]).sum(),
        }
    }
}

/// Every node of a netlist that is not a rail (`vss`, `vdd`), in order of first appearance, with
/// its diffusion rule. `devices` are `(drain, source)` node names, indexed like the widths.
pub fn node_diffusions(devices: &[(&str, &str)], output: &str) -> Vec<(String, NodeDiffusion)> {
    let mut nodes: Vec<(String, Vec<usize>)> = Vec::new();
    let mut numbers: std::collections::HashMap<&str, usize> = std::collections::HashMap::new();
    for (index, &(drain, source)) in devices.iter().enumerate() {
        for node in [drain, source] {
            if node == "vdd" || node == "vss" {
                continue;
            }
            match numbers.get(node) {
                Some(&number) => nodes[number].1.push(index),
                None => {
                    numbers.insert(node, nodes.len());
                    nodes.push((node.to_string(), vec![index]));
                }
            }
        }
    }
    nodes
        .into_iter()
        .map(|(name, terminals)| {
            let rule = NodeDiffusion::of(&terminals, false, name == output);
            (name, rule)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sizing::plan::Plan;

    fn figures(text: &str) -> CellFigures {
        CellFigures::of(&crate::size_text(text, &Plan::new(Method::LongestPath, 2.0, 1.0, None)).unwrap())
    }

    #[test]
    fn nand2_by_hand() {
        // NAND2, mu = 2: NMOS 2, 2 in series (the first at y), PMOS 2, 2 in parallel.
        // C_in = 4 per input, g = 4/3, output diffusion 2 + 2 + 2 = 6, p = 2 (common practice, no source)
        let nand2 = figures("nand2");
        let c: Vec<f64> = nand2.inputs.iter().map(|i| i.input_capacitance).collect();
        assert_eq!(c, [4.0, 4.0]);
        assert!(nand2.inputs.iter().all(|i| i.logical_effort == 4.0 / 3.0));
        assert_eq!(nand2.parasitic_delay, 2.0);
        let up = &nand2.networks[1];
        assert_eq!(up.worst_vector.as_ref().unwrap().to_string(), "a=0 b=1");
        // best case of the NAND2 pull-up: two PMOS of 2 in parallel, R/2 (common practice, no source)
        assert!((up.best_resistance - 0.5).abs() < 1e-12);
        assert_eq!(up.path_count, "2");
    }

    #[test]
    fn aoi21_puts_the_or_input_pmos_at_the_output() {
        // AOI21 p = 7/3 with the OR input's PMOS at the output (Weste & Harris, logical-effort table; from memory)
        let aoi21 = figures("aoi21");
        assert!((aoi21.parasitic_delay - 7.0 / 3.0).abs() < 1e-12);
        assert!(aoi21.output_devices.contains(&"MP3".to_string()));
        assert!(!aoi21.output_devices.contains(&"MP1".to_string()));
    }

    #[test]
    fn min_area_comparison_is_reported() {
        let longest = figures("!(a & (b | c))");
        let plan = Plan::new(Method::of(crate::sizing::plan::MethodName::MinArea), 2.0, 1.0, None);
        let min = CellFigures::of(&crate::size_text("!(a & (b | c))", &plan).unwrap());
        // Pull-down K = (1 + sqrt 2)^2, pull-up a || (b - c): 2 + 4 + 4 (the closed form, by hand).
        assert!((min.total_w_over_l - ((1.0 + 2f64.sqrt()).powi(2) + 10.0)).abs() < 1e-12);
        assert!((longest.comparison.total_w_over_l - min.total_w_over_l).abs() < 1e-12);
        assert!(longest.comparison.change_percent < 0.0);
    }

    #[test]
    fn a_shared_series_diffusion_is_as_wide_as_the_wider_device() {
        // NAND2 pull-down drawn as MN1 y-n1 (3 wide) over MN2 n1-vss (2 wide), two PMOS on y: n1 is one
        // region shared by the two series NMOS, as wide as the wider (3); the output keeps every drain
        // (3 + 2 + 2); rails count nothing (common practice, no source).
        let devices = [("y", "n1"), ("n1", "vss"), ("y", "vdd"), ("y", "vdd")];
        let widths = [3.0, 2.0, 2.0, 2.0];
        let nodes = node_diffusions(&devices, "y");
        assert_eq!(nodes[0], ("y".to_string(), NodeDiffusion::Separate(vec![0, 2, 3])));
        assert_eq!(nodes[1], ("n1".to_string(), NodeDiffusion::Shared(0, 1)));
        assert_eq!(nodes[0].1.width(&widths), 7.0);
        assert_eq!(nodes[1].1.width(&widths), 3.0);
        // Equal widths: the shared region is one device's width, as in the published NAND delays.
        assert_eq!(nodes[1].1.width(&[2.0, 2.0, 2.0, 2.0]), 2.0);
        // A node joining three terminals (a device over a parallel pair) keeps them all; a rail none.
        assert_eq!(NodeDiffusion::of(&[0, 1, 2], false, false).width(&widths), 7.0);
        assert_eq!(NodeDiffusion::of(&[0, 1], true, false).width(&widths), 0.0);
        // An inverter's output joins two devices but is the output: both drains count.
        assert_eq!(NodeDiffusion::of(&[0, 1], false, true).width(&widths), 5.0);
    }
}
