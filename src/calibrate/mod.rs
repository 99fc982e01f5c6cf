//! Calibration by simulation: ngspice in the loop adjusts a sized cell's output stage until each
//! network's worst transition, measured on every input, both edges and every side-input vector
//! that lets the input switch the output, matches the reference inverter's in the same models, at
//! the same load and slew, within a tolerance (docs/model.md section 14).
//!
//! The default (balanced) reference inverter is itself first balanced in the models: its PMOS is
//! adjusted until its rise equals its fall ([`reference`]). Then one scale factor per network is
//! updated by a secant step on the simulated worst-transition ratio, read against the inverse of
//! the factor (the first-order model's sensitivity: a delay goes as resistance, so as 1 / W);
//! where that does not settle within [`NETWORK_RUNS`] runs, the factors are refined per group of
//! devices (the devices one input gates in one network), each group updated from its own input's
//! slowest transition. No calibrated stage takes more than the area cap times its first-order
//! total W/L, and every simulator run counts against a budget.

pub mod effort;
pub mod reference;
pub mod testbench;

use std::time::{Duration, Instant};

use thiserror::Error;

use crate::cell::SizedCell;
use crate::network::NetworkKind;
use crate::ngspice::{self, SimulationError};
use crate::number::format as number;
pub use reference::{ReferenceCalibration, balance_reference};
pub use testbench::{BenchLoad, MAX_TRANSITIONS, Setting, Switching, Window, switchings};

/// The tolerance unless one is given: 1 %.
pub const DEFAULT_TOLERANCE_PERCENT: f64 = 1.0;

/// Simulator runs per cell unless another budget is given (the reference inverter's runs included
/// where the cell's calibration balanced it).
pub const DEFAULT_RUN_BUDGET: usize = 30;

/// The area cap unless another is given: the calibrated output stage's total W/L at most 4 times
/// its first-order total.
pub const DEFAULT_AREA_CAP: f64 = 4.0;

/// Runs with one factor per network before the factors are refined per group of devices.
pub const NETWORK_RUNS: usize = 5;

/// The largest change of one factor in one step: a factor moves by at most this ratio either way.
const MAX_STEP: f64 = 2.5;

/// How to calibrate.
#[derive(Debug, Clone, PartialEq)]
pub struct Options {
    /// Models, load and slew.
    pub setting: Setting,
    /// The tolerance on every ratio, as a fraction (0.01: 1 %).
    pub tolerance: f64,
    /// Most simulator runs per cell.
    pub run_budget: usize,
    /// Most total W/L of the calibrated output stage, over its first-order total.
    pub area_cap: f64,
    /// How to run ngspice.
    pub simulator: ngspice::Options,
}

/// Why a cell is not calibrated.
#[derive(Debug, Error)]
pub enum CalibrateError {
    /// ngspice is missing, could not run, or rejected the testbench.
    #[error(transparent)]
    Simulation(#[from] SimulationError),
    /// A delay the testbench measures was not measured.
    #[error("calibration run {run}: {what} was not measured: {source}")]
    Unmeasured {
        /// The run, counted from 1.
        run: usize,
        /// The transition in words.
        what: String,
        /// ngspice's reason.
        source: SimulationError,
    },
    /// The cell has too many inputs for its side-input vectors to be listed.
    #[error(
        "calibration lists every side-input vector of every input, so it takes cells whose output stage has up to \
         16 inputs; this one has {inputs}"
    )]
    TooManyInputs {
        /// The output stage's inputs.
        inputs: usize,
    },
    /// The testbench would hold more transitions than [`MAX_TRANSITIONS`].
    #[error(
        "a calibration testbench holds one copy of the cell per transition (every input, both edges, every \
         side-input vector that lets the input switch the output): this cell has {count}, past the limit of {limit}"
    )]
    TooManyTransitions {
        /// Transitions.
        count: usize,
        /// The limit.
        limit: usize,
    },
    /// The run budget was spent before the ratios came within the tolerance.
    #[error(
        "calibration used its budget of {budget} simulator runs before every ratio came within {} %: the best \
         worst-transition ratio reached was {} at a total W/L of {} (first-order {}); give --max-runs to allow more",
        number(tolerance * 100.0),
        number(*best_ratio),
        number(*best_area),
        number(*first_order_area)
    )]
    RunBudget {
        /// The budget.
        budget: usize,
        /// The tolerance, a fraction.
        tolerance: f64,
        /// The best worst-transition ratio reached (the one farthest from 1 of that run).
        best_ratio: f64,
        /// The output stage's total W/L at that run.
        best_area: f64,
        /// Its first-order total W/L.
        first_order_area: f64,
    },
    /// No sizing within the area cap reaches the target.
    #[error(
        "no sizing within the area cap ({} times the first-order total W/L of the output stage, {}) brings every \
         worst transition within {} % of the reference inverter: the best worst-transition ratio reached was {} at \
         a total W/L of {}; the cell's own capacitance sets a floor at this load (a larger load, or --area-cap, \
         may reach it)",
        number(*cap),
        number(*first_order_area),
        number(tolerance * 100.0),
        number(*best_ratio),
        number(*best_area)
    )]
    AreaCap {
        /// The cap, over the first-order total.
        cap: f64,
        /// The tolerance, a fraction.
        tolerance: f64,
        /// The best worst-transition ratio reached.
        best_ratio: f64,
        /// The total W/L at that run.
        best_area: f64,
        /// The first-order total W/L.
        first_order_area: f64,
    },
    /// The cell took longer than its time limit (`batch --cell-time-limit`).
    #[error(
        "the calibration took longer than the cell's time limit of {} s and was stopped in simulator run {runs}; \
         give a longer --cell-time-limit (or the library's cell_time_limit key)",
        number(limit.as_secs_f64())
    )]
    TimeLimit {
        /// The limit.
        limit: Duration,
        /// Runs started within it.
        runs: usize,
    },
    /// The reference inverter does not balance within the area cap (its PMOS would grow past it).
    #[error(
        "the reference inverter does not balance in these models: its rise over fall is still {} with a PMOS of \
         {} W/L (the cap: {} times the first-order {}); give a skewed --reference to keep one as given",
        number(*ratio),
        number(*pmos),
        number(*cap),
        number(*first_order)
    )]
    ReferenceUnbalanced {
        /// Rise over fall at the last run.
        ratio: f64,
        /// The PMOS W/L tried last.
        pmos: f64,
        /// The cap.
        cap: f64,
        /// The first-order PMOS W/L.
        first_order: f64,
    },
}

impl CalibrateError {
    /// The exit code: a missing simulator, a cell past a limit or the run budget is 2; a simulation
    /// that failed, a target no sizing reaches 1.
    pub fn exit_code(&self) -> u8 {
        match self {
            CalibrateError::Simulation(error) => error.exit_code(),
            CalibrateError::TooManyInputs { .. }
            | CalibrateError::TooManyTransitions { .. }
            | CalibrateError::RunBudget { .. } => crate::exit::EXIT_BAD_INPUT,
            CalibrateError::Unmeasured { .. }
            | CalibrateError::TimeLimit { .. }
            | CalibrateError::AreaCap { .. }
            | CalibrateError::ReferenceUnbalanced { .. } => crate::exit::EXIT_CHECK_FAILED,
        }
    }
}

/// Simulator runs, counted against a budget.
#[derive(Debug, Clone)]
pub struct Runs {
    /// Runs made.
    pub used: usize,
    /// The budget.
    pub budget: usize,
    /// Time spent in them.
    pub elapsed: Duration,
    /// When the work must end, and the limit it came from: no run starts after it, and a run
    /// under way is stopped at it.
    pub deadline: Option<(Instant, Duration)>,
}

impl Runs {
    /// No runs yet, `budget` allowed.
    pub fn new(budget: usize) -> Runs {
        Runs { used: 0, budget, elapsed: Duration::ZERO, deadline: None }
    }

    /// No runs yet, `budget` allowed, every run to end within `limit` from now.
    pub fn within(budget: usize, limit: Duration) -> Runs {
        Runs { deadline: Some((Instant::now() + limit, limit)), ..Runs::new(budget) }
    }

    /// Whether another run fits the budget.
    pub fn left(&self) -> bool {
        self.used < self.budget
    }

    /// Run `deck` (the caller checked [`Runs::left`]).
    /// Past the deadline no run starts, and a run is held to the time left.
    pub fn run(&mut self, deck: &str, simulator: &ngspice::Options) -> Result<ngspice::Run, CalibrateError> {
        let started = Instant::now();
        let mut simulator = simulator.clone();
        if let Some((deadline, limit)) = self.deadline {
            let left = deadline.saturating_duration_since(started);
            if left.is_zero() {
                return Err(CalibrateError::TimeLimit { limit, runs: self.used });
            }
            simulator.time_limit = simulator.time_limit.min(left);
        }
        self.used += 1;
        let run = ngspice::run(deck, &simulator);
        self.elapsed += started.elapsed();
        match (run, self.deadline) {
            (Err(SimulationError::TimedOut { .. }), Some((deadline, limit))) if Instant::now() >= deadline => {
                Err(CalibrateError::TimeLimit { limit, runs: self.used })
            }
            (run, _) => Ok(run?),
        }
    }
}

/// One transition measured before and after calibration.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct TransitionRatio {
    /// The toggling input.
    pub input: String,
    /// Its edge: `rise` or `fall`.
    pub input_edge: &'static str,
    /// The output's edge.
    pub output_edge: &'static str,
    /// The side inputs held, `b=1 c=0`, or empty.
    pub held: String,
    /// The load on this copy, fF.
    pub load_ff: f64,
    /// The delay at the first-order sizes, ps.
    pub before_ps: f64,
    /// Its ratio to the reference inverter's on the same output edge.
    pub before_ratio: f64,
    /// The delay at the calibrated sizes, ps.
    pub after_ps: f64,
    /// Its ratio.
    pub after_ratio: f64,
}

/// One scale factor of the calibration: a network's, or a group's (the devices one input gates
/// in one network).
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Factor {
    /// `pull-down` or `pull-up`.
    pub network: &'static str,
    /// The input whose devices it scales, or `None` for the whole network.
    pub input: Option<String>,
    /// Calibrated W/L over first-order W/L.
    pub factor: f64,
}

/// A calibrated cell and how it got there.
#[derive(Debug, Clone)]
pub struct Calibrated {
    /// The cell at its calibrated sizes (output stage; earlier stages as sized).
    pub cell: SizedCell,
    /// The cell at its first-order sizes.
    pub first_order: SizedCell,
    /// The reference inverter it was matched to.
    pub reference: ReferenceCalibration,
    /// Every transition, before and after.
    pub transitions: Vec<TransitionRatio>,
    /// The factors found.
    pub factors: Vec<Factor>,
    /// Whether one factor per network did not settle and groups of devices were refined.
    pub refined_in_groups: bool,
    /// The worst ratio of each network after, pull-down (fall) and pull-up (rise).
    pub worst_after: [f64; 2],
    /// The worst ratio of each network before.
    pub worst_before: [f64; 2],
    /// Simulator runs for this cell (the reference's included where counted here).
    pub runs: usize,
    /// The budget.
    pub run_budget: usize,
    /// Time in ngspice for this cell, s.
    pub seconds: f64,
    /// The tolerance, a fraction.
    pub tolerance: f64,
}

/// A group of devices sharing a factor.
#[derive(Debug, Clone)]
struct Group {
    kind: NetworkKind,
    devices: Vec<usize>,
    input: Option<usize>,
    factor: f64,
    last: Option<(f64, f64)>,
}

impl Group {
    /// The slowest ratio among the transitions this group answers for.
    fn ratio(&self, switchings: &[Switching], ratios: &[f64]) -> Option<f64> {
        switchings
            .iter()
            .zip(ratios)
            .filter(|(s, _)| s.kind == self.kind && self.input.is_none_or(|input| input == s.input))
            .map(|(_, &r)| r)
            .reduce(f64::max)
    }

    /// The secant step toward ratio 1 in `x = 1 / factor`: a delay goes about as the resistance,
    /// so as `x`. From one point: `x / r`; from two, the line through them.
    fn step(&mut self, ratio: f64) {
        let x = 1.0 / self.factor;
        let mut next = x / ratio;
        if let Some((x0, r0)) = self.last {
            let slope = (ratio - r0) / (x - x0);
            if slope.is_finite() && slope > 0.0 && (x - x0).abs() > 1e-12 {
                next = x + (1.0 - ratio) / slope;
            }
        }
        self.last = Some((x, ratio));
        let next = next.clamp(x / MAX_STEP, x * MAX_STEP);
        self.factor = 1.0 / next;
    }
}

/// The cell with its output stage's device `k` of `kind` at `first`'s W/L times `factor(kind, k)`,
/// redrawn.
fn scaled(first: &SizedCell, groups: &[Group]) -> SizedCell {
    let mut cell = first.clone();
    let process = cell.plan.process.clone();
    let Some(stage) = cell.stages.last_mut() else { return cell };
    for group in groups {
        let network = &mut stage.networks[group.kind];
        for &device in &group.devices {
            network.widths[device] = first.stage().networks[group.kind].widths[device] * group.factor;
            network.drawn[device] = process.draw(network.widths[device]);
        }
    }
    cell
}

/// The output stage's total W/L.
fn stage_area(cell: &SizedCell) -> f64 {
    cell.stage().networks.values().flat_map(|n| &n.widths).sum()
}

/// One measured run of the gate: each transition's delay and ratio, the reference's delays.
struct Measured {
    delays: Vec<f64>,
    ratios: Vec<f64>,
}

impl Measured {
    fn worst(&self, switchings: &[Switching]) -> [f64; 2] {
        let mut worst = [0.0f64; 2];
        for (s, &r) in switchings.iter().zip(&self.ratios) {
            let slot = usize::from(s.kind == NetworkKind::PullUp);
            worst[slot] = worst[slot].max(r);
        }
        worst
    }
}

fn describe(cell: &SizedCell, switching: &Switching) -> (String, String) {
    let inputs = &cell.stage().function.inputs;
    let held: Vec<String> = switching
        .vector
        .iter()
        .enumerate()
        .filter(|&(i, _)| i != switching.input)
        .map(|(i, &v)| format!("{}={}", inputs[i], u8::from(v)))
        .collect();
    (inputs[switching.input].clone(), held.join(" "))
}

fn measure(
    cell: &SizedCell,
    switchings: &[Switching],
    options: &Options,
    reference: &ReferenceCalibration,
    runs: &mut Runs,
) -> Result<Measured, CalibrateError> {
    let process = &cell.plan.process;
    let capacitance = crate::figures::input_capacitance(cell.stage());
    let reference_load = options.setting.load.reference_ff(process, reference.nmos, reference.pmos);
    let largest = switchings
        .iter()
        .map(|s| options.setting.load.gate_ff(process, capacitance[s.input]))
        .fold(reference_load, f64::max);
    let slowest = reference.fall_s.max(reference.rise_s) * (largest / reference_load).max(1.0);
    let window = Window::around(slowest, 50.0, options.setting.slew_s);
    let deck = testbench::gate_bench(cell, switchings, &options.setting, [reference.nmos, reference.pmos], &window);
    let run = runs.run(&deck, &options.simulator)?;
    let number_of_run = runs.used;
    let unmeasured = |what: String| move |source| CalibrateError::Unmeasured { run: number_of_run, what, source };
    let mut reference_s = [0.0; 2];
    for (slot, kind) in NetworkKind::BOTH.into_iter().enumerate() {
        reference_s[slot] = run
            .value(&testbench::reference_measure(kind))
            .map_err(unmeasured(format!("the reference inverter's output {}", testbench::edge(kind))))?;
    }
    let mut delays = Vec::with_capacity(switchings.len());
    let mut ratios = Vec::with_capacity(switchings.len());
    for (index, switching) in switchings.iter().enumerate() {
        let (input, held) = describe(cell, switching);
        let what = format!(
            "{input} {}, output {}{}",
            if switching.vector[switching.input] { "rising" } else { "falling" },
            if switching.kind == NetworkKind::PullDown { "falling" } else { "rising" },
            if held.is_empty() { String::new() } else { format!(", held {held}") }
        );
        let delay = run.value(&testbench::gate_measure(index)).map_err(unmeasured(what))?;
        delays.push(delay);
        ratios.push(delay / reference_s[usize::from(switching.kind == NetworkKind::PullUp)]);
    }
    Ok(Measured { delays, ratios })
}

/// How far a run is from the target: the ratio farthest from 1 of its networks' worst.
fn farthest(worst: [f64; 2]) -> f64 {
    if (worst[0] - 1.0).abs() >= (worst[1] - 1.0).abs() { worst[0] } else { worst[1] }
}

/// Calibrate `cell`'s output stage against `reference` (already balanced or measured), counting
/// runs on `runs`.
pub fn calibrate(
    cell: &SizedCell,
    reference: &ReferenceCalibration,
    options: &Options,
    runs: &mut Runs,
) -> Result<Calibrated, CalibrateError> {
    let inputs = cell.stage().function.inputs.len();
    let switchings = switchings(cell).ok_or(CalibrateError::TooManyInputs { inputs })?;
    if switchings.len() > MAX_TRANSITIONS {
        return Err(CalibrateError::TooManyTransitions { count: switchings.len(), limit: MAX_TRANSITIONS });
    }
    let first_area = stage_area(cell);
    let cap_area = options.area_cap * first_area;
    let network_group = |kind: NetworkKind| Group {
        kind,
        devices: (0..cell.stage().networks[kind].widths.len()).collect(),
        input: None,
        factor: 1.0,
        last: None,
    };
    let mut groups: Vec<Group> = NetworkKind::BOTH.into_iter().map(network_group).collect();
    let mut refined = false;
    let mut gate_runs = 0;
    let mut current = cell.clone();
    let mut before: Option<Measured> = None;
    let mut best: Option<(f64, f64)> = None;
    let mut at_cap = false;
    let mut runs_at_cap = 0;
    loop {
        if !runs.left() {
            let (best_ratio, best_area) = best.unwrap_or((f64::NAN, first_area));
            return Err(CalibrateError::RunBudget {
                budget: runs.budget,
                tolerance: options.tolerance,
                best_ratio,
                best_area,
                first_order_area: first_area,
            });
        }
        let measured = measure(&current, &switchings, options, reference, runs)?;
        gate_runs += 1;
        let worst = measured.worst(&switchings);
        let area = stage_area(&current);
        let off = farthest(worst);
        if best.is_none_or(|(ratio, _)| (off - 1.0).abs() < (ratio - 1.0).abs()) {
            best = Some((off, area));
        }
        let done = worst.iter().all(|r| (r - 1.0).abs() <= options.tolerance);
        let first =
            before.get_or_insert_with(|| Measured { delays: measured.delays.clone(), ratios: measured.ratios.clone() });
        if done {
            let worst_before = first.worst(&switchings);
            let transitions = switchings
                .iter()
                .enumerate()
                .map(|(index, switching)| {
                    let (input, held) = describe(cell, switching);
                    TransitionRatio {
                        input,
                        input_edge: if switching.vector[switching.input] { "rise" } else { "fall" },
                        output_edge: testbench::edge(switching.kind),
                        held,
                        load_ff: options.setting.load.gate_ff(
                            &cell.plan.process,
                            crate::figures::input_capacitance(current.stage())[switching.input],
                        ),
                        before_ps: first.delays[index] * 1e12,
                        before_ratio: first.ratios[index],
                        after_ps: measured.delays[index] * 1e12,
                        after_ratio: measured.ratios[index],
                    }
                })
                .collect();
            let names = &cell.stage().function.inputs;
            let factors = groups
                .iter()
                .map(|g| Factor { network: g.kind.name(), input: g.input.map(|i| names[i].clone()), factor: g.factor })
                .collect();
            return Ok(Calibrated {
                cell: current,
                first_order: cell.clone(),
                reference: reference.clone(),
                transitions,
                factors,
                refined_in_groups: refined,
                worst_after: worst,
                worst_before,
                runs: runs.used,
                run_budget: runs.budget,
                seconds: runs.elapsed.as_secs_f64(),
                tolerance: options.tolerance,
            });
        }
        if at_cap && worst.iter().any(|&r| r > 1.0 + options.tolerance) {
            runs_at_cap += 1;
            let (best_ratio, best_area) = best.unwrap_or((off, area));
            // Refined groups get a second run at the cap to share it out before the cell is given up.
            if refined && runs_at_cap >= 2 {
                return Err(CalibrateError::AreaCap {
                    cap: options.area_cap,
                    tolerance: options.tolerance,
                    best_ratio,
                    best_area,
                    first_order_area: first_area,
                });
            }
        }
        if !refined && (gate_runs >= NETWORK_RUNS || at_cap) {
            // One factor per network did not settle: a factor per input's devices in each network.
            refined = true;
            let mut split = Vec::new();
            for group in &groups {
                let network = &cell.stage().networks[group.kind].network;
                for input in 0..inputs {
                    let devices: Vec<usize> =
                        (0..network.inputs.len()).filter(|&k| network.inputs[k] == input).collect();
                    if !devices.is_empty() {
                        split.push(Group { devices, input: Some(input), last: None, ..group.clone() });
                    }
                }
            }
            groups = split;
        }
        for group in &mut groups {
            if let Some(ratio) = group.ratio(&switchings, &measured.ratios) {
                group.step(ratio);
            }
        }
        let mut next = scaled(cell, &groups);
        at_cap = false;
        let proposed = stage_area(&next);
        if proposed > cap_area {
            // Shrink every factor alike to the cap.
            let shrink = cap_area / proposed;
            for group in &mut groups {
                group.factor *= shrink;
            }
            next = scaled(cell, &groups);
            at_cap = true;
        }
        current = next;
    }
}
