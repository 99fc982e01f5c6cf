//! The testbench a calibration run simulates: the output stage of a cell as drawn at given widths,
//! the reference inverter at given widths, and one copy of the stage per transition (every input,
//! both edges, every side-input vector that lets the input switch the output), each with its own
//! sources, load and `.meas`; or the reference inverter alone. Text only: `crate::ngspice` runs it.

use std::fmt::Write as _;

use crate::cell::SizedCell;
use crate::figures::{CellFigures, input_capacitance};
use crate::network::NetworkKind;
use crate::number::format as number;
use crate::output::deck::Models;
use crate::output::deck::geometry::{self, Device};
use crate::output::spice::{mosfet_line, transistor_line};
use crate::process::Process;
use crate::timing::transition::switching_vectors;

/// Most transitions one testbench holds (every input, both edges, every switching vector): past
/// it a cell is refused before any run.
pub const MAX_TRANSITIONS: usize = 512;

/// One transition of the output stage: `input` toggles to `vector[input]`, the side inputs held.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Switching {
    /// The toggling input (index into the stage's inputs).
    pub input: usize,
    /// The network that switches the output: pull-down (output falls) or pull-up (rises).
    pub kind: NetworkKind,
    /// Every stage input's value after the toggle.
    pub vector: Vec<bool>,
}

/// Every transition of the output stage of `cell`: input by input, output falling then rising,
/// every side-input vector in counting order; `None` past 16 inputs (the vectors are not listed).
pub fn switchings(cell: &SizedCell) -> Option<Vec<Switching>> {
    let stage = cell.stage();
    let mut out = Vec::new();
    for input in 0..stage.function.inputs.len() {
        for kind in NetworkKind::BOTH {
            for vector in switching_vectors(stage, input, kind)? {
                out.push(Switching { input, kind, vector });
            }
        }
    }
    Some(out)
}

/// The load on each copy's output.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum BenchLoad {
    /// A fixed capacitance, fF, on every copy.
    Femtofarads(f64),
    /// H times the toggling input's capacitance (the reference: H times its own).
    Fanout(f64),
}

impl BenchLoad {
    /// The load of a gate copy whose toggling input has `input_c` (C), fF.
    pub fn gate_ff(self, process: &Process, input_c: f64) -> f64 {
        match self {
            BenchLoad::Femtofarads(ff) => ff,
            BenchLoad::Fanout(h) => h * input_c * process.unit_capacitance_ff(),
        }
    }

    /// The load of a reference copy of NMOS `n` and PMOS `p` W/L, fF.
    pub fn reference_ff(self, process: &Process, n: f64, p: f64) -> f64 {
        self.gate_ff(process, n + p)
    }
}

/// What every testbench of one calibration shares.
#[derive(Debug, Clone, PartialEq)]
pub struct Setting {
    /// The device models.
    pub models: Models,
    /// The load.
    pub load: BenchLoad,
    /// The inputs' ramp, rail to rail, s (`None`: a step of a thousandth of the time scale).
    pub slew_s: Option<f64>,
}

/// The run's times, s.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Window {
    /// When the inputs start to move.
    pub start: f64,
    /// How long they take.
    pub ramp: f64,
    /// When the run stops.
    pub stop: f64,
    /// The largest time step.
    pub step: f64,
}

impl Window {
    /// A window for delays of about `delay` s (the slowest expected): the inputs start `delay / 20`
    /// in, the run lasts `runs` delays past the ramp, in steps of `delay / 200` (at most 20,000
    /// steps: longer windows take coarser steps, which ngspice refines where the circuit moves).
    pub fn around(delay: f64, runs: f64, slew: Option<f64>) -> Window {
        let start = delay / 20.0;
        let ramp = slew.unwrap_or(delay / 1000.0);
        let stop = start + ramp + runs * delay;
        Window { start, ramp, stop, step: (delay / 200.0).max(stop / 20_000.0) }
    }

    /// The first guess before anything is simulated: the level-1 time for the slower device of the
    /// reference inverter (`n`, `p` W/L) to move `load_ff` by half the supply at its saturation
    /// current, in a window 200 times it (the library's devices may be far from level 1).
    pub fn first(process: &Process, n: f64, p: f64, load_ff: f64, slew: Option<f64>) -> Window {
        let overdrive = |threshold: f64| (process.supply_v - threshold).max(0.05 * process.supply_v);
        let current = |kp: f64, w: f64, threshold: f64| kp * 1e-6 / 2.0 * w * overdrive(threshold).powi(2);
        let slower = (load_ff * 1e-15 * process.supply_v / 2.0)
            / current(process.nmos_kp_ua_per_v2, n, process.nmos_threshold_v).min(current(
                process.pmos_kp_ua_per_v2,
                p,
                process.pmos_threshold_v,
            ));
        Window::around(slower, 200.0, slew)
    }
}

/// The `.meas` name of gate copy `index` (0-based).
pub fn gate_measure(index: usize) -> String {
    format!("tpd_c{}", index + 1)
}

/// The `.meas` name of the reference's delay through `kind`.
pub fn reference_measure(kind: NetworkKind) -> String {
    format!("tpd_ref_{}", edge(kind))
}

/// `fall` (pull-down) or `rise` (pull-up): the output's edge.
pub fn edge(kind: NetworkKind) -> &'static str {
    match kind {
        NetworkKind::PullDown => "fall",
        NetworkKind::PullUp => "rise",
    }
}

pub(crate) fn seconds(value: f64) -> String {
    let chosen: f64 = format!("{value:.4e}").parse().unwrap_or(value);
    number(chosen)
}

pub(crate) fn models_text(models: &Models, process: &Process, out: &mut String) -> [String; 2] {
    match models {
        Models::Process => {
            let _ = writeln!(out, "* Level-1 models from the process (LAMBDA=0, no parasitic capacitance).");
            for (name, kind, kp, threshold) in [
                (&process.nmos_model, "NMOS", process.nmos_kp_ua_per_v2, process.nmos_threshold_v),
                (&process.pmos_model, "PMOS", process.pmos_kp_ua_per_v2, -process.pmos_threshold_v),
            ] {
                let _ = writeln!(
                    out,
                    ".model {name} {kind} (LEVEL=1 VTO={} KP={}u GAMMA={} LAMBDA=0)",
                    number(threshold),
                    number(kp),
                    number(process.body_effect_sqrt_v)
                );
            }
            [process.nmos_model.clone(), process.pmos_model.clone()]
        }
        Models::Library { include, section, nmos, pmos } => {
            match section {
                Some(section) => {
                    let _ = writeln!(out, ".lib {include} {section}");
                }
                None if include.chars().any(char::is_whitespace) => {
                    let _ = writeln!(out, ".include \"{include}\"");
                }
                None => {
                    let _ = writeln!(out, ".include {include}");
                }
            }
            [nmos.clone(), pmos.clone()]
        }
    }
}

/// The reference inverter's subcircuit `wwref a y vdd vss` at NMOS `n` and PMOS `p` W/L, drawn.
pub(crate) fn reference_subckt(process: &Process, models: &[String; 2], n: f64, p: f64, out: &mut String) {
    let [dn, dp] = [process.draw(n), process.draw(p)];
    let devices = [
        Device { drain: "y", source: "vss", finger_um: dn.finger_width_nm / 1000.0, fingers: dn.fingers },
        Device { drain: "y", source: "vdd", finger_um: dp.finger_width_nm / 1000.0, fingers: dp.fingers },
    ];
    let suffixes = geometry::suffixes(&devices, "y", process);
    let _ = writeln!(out, ".subckt wwref a y vdd vss");
    for (index, (name, nodes, model, drawn)) in
        [("MN1", ["y", "a", "vss", "vss"], &models[0], dn), ("MP1", ["y", "a", "vdd", "vdd"], &models[1], dp)]
            .into_iter()
            .enumerate()
    {
        let suffix = suffixes.as_ref().map_or("", |lines| lines[index].as_str());
        let line = mosfet_line(name, nodes, model, drawn.finger_width_nm, process.length_nm, drawn.fingers);
        let _ = writeln!(out, "{line}{suffix}");
    }
    let _ = writeln!(out, ".ends wwref");
}

/// The output stage of `cell` as a subcircuit `wwgate <stage inputs> <output> vdd vss`, drawn.
pub(crate) fn gate_subckt(cell: &SizedCell, models: &[String; 2], out: &mut String) {
    let figures = CellFigures::of(cell);
    let stage = cell.stage();
    let output = &stage.function.output;
    let transistors: Vec<_> = figures.transistors.iter().filter(|t| &t.stage == output).collect();
    let devices: Vec<Device<'_>> = transistors
        .iter()
        .map(|t| Device { drain: &t.drain, source: &t.source, finger_um: t.finger_width_um, fingers: t.fingers })
        .collect();
    let suffixes = geometry::suffixes(&devices, output, &cell.plan.process);
    let _ = writeln!(out, ".subckt wwgate {} {output} vdd vss", stage.function.inputs.join(" "));
    for (index, transistor) in transistors.iter().enumerate() {
        let suffix = suffixes.as_ref().map_or("", |lines| lines[index].as_str());
        let _ = writeln!(out, "{}{suffix}", transistor_line(transistor, [&models[0], &models[1]]));
    }
    let _ = writeln!(out, ".ends wwgate");
}

/// A source stepping or ramping from `from` to the other rail at the window's start.
pub(crate) fn toggle(supply: f64, from: bool, window: &Window) -> String {
    let level = |value: bool| if value { number(supply) } else { "0".to_string() };
    let (before, after) = (level(from), level(!from));
    format!("PWL(0 {before} {} {before} {} {after})", seconds(window.start), seconds(window.start + window.ramp))
}

pub(crate) fn direction(rising: bool) -> &'static str {
    if rising { "RISE=1" } else { "FALL=1" }
}

/// The reference inverter's two copies (output falling, rising) with their loads and `.meas`.
fn reference_copies(process: &Process, setting: &Setting, n: f64, p: f64, window: &Window, out: &mut String) {
    let half = number(process.supply_v / 2.0);
    let load = setting.load.reference_ff(process, n, p);
    for kind in NetworkKind::BOTH {
        let tag = format!("r{}", edge(kind));
        let rising = kind == NetworkKind::PullDown;
        let _ = writeln!(out, "V{tag} {tag}_in 0 {}", toggle(process.supply_v, !rising, window));
        let _ = writeln!(out, "X{tag} {tag}_in {tag}_out vdd 0 wwref");
        let _ = writeln!(out, "C{tag} {tag}_out 0 {}f", number(load));
        let _ = writeln!(
            out,
            ".meas tran {} TRIG v({tag}_in) VAL={half} {} TARG v({tag}_out) VAL={half} {}",
            reference_measure(kind),
            direction(rising),
            direction(!rising)
        );
    }
}

/// The reference inverter alone (NMOS `n`, PMOS `p` W/L) in `setting`, over `window`.
pub fn reference_bench(process: &Process, setting: &Setting, n: f64, p: f64, window: &Window) -> String {
    let mut out = String::from("* widthwise calibration: the reference inverter alone\n");
    let models = models_text(&setting.models, process, &mut out);
    reference_subckt(process, &models, n, p, &mut out);
    let _ = writeln!(out, "Vsupply vdd 0 DC {}", number(process.supply_v));
    reference_copies(process, setting, n, p, window, &mut out);
    let _ = writeln!(out, ".tran {} {} 0 {}", seconds(window.step), seconds(window.stop), seconds(window.step));
    out.push_str(".end\n");
    out
}

/// The output stage of `cell` as drawn, one copy per transition of `switchings`, beside the
/// reference inverter (NMOS `n`, PMOS `p` W/L), over `window`.
pub fn gate_bench(
    cell: &SizedCell,
    switchings: &[Switching],
    setting: &Setting,
    reference: [f64; 2],
    window: &Window,
) -> String {
    let process = &cell.plan.process;
    let half = number(process.supply_v / 2.0);
    let mut out = format!("* widthwise calibration: {} beside the reference inverter\n", cell.name);
    let models = models_text(&setting.models, process, &mut out);
    gate_subckt(cell, &models, &mut out);
    reference_subckt(process, &models, reference[0], reference[1], &mut out);
    let _ = writeln!(out, "Vsupply vdd 0 DC {}", number(process.supply_v));
    let capacitance = input_capacitance(cell.stage());
    let level = |value: bool| if value { number(process.supply_v) } else { "0".to_string() };
    for (index, switching) in switchings.iter().enumerate() {
        let tag = format!("c{}", index + 1);
        let mut nodes = Vec::new();
        for (input, &value) in switching.vector.iter().enumerate() {
            let node = format!("{tag}_in{}", input + 1);
            let source = if input == switching.input {
                toggle(process.supply_v, !value, window)
            } else {
                format!("DC {}", level(value))
            };
            let _ = writeln!(out, "V{tag}_{} {node} 0 {source}", input + 1);
            nodes.push(node);
        }
        let _ = writeln!(out, "X{tag} {} {tag}_out vdd 0 wwgate", nodes.join(" "));
        let load = setting.load.gate_ff(process, capacitance[switching.input]);
        let _ = writeln!(out, "C{tag} {tag}_out 0 {}f", number(load));
        let rising = switching.vector[switching.input];
        let _ = writeln!(
            out,
            ".meas tran {} TRIG v({tag}_in{}) VAL={half} {} TARG v({tag}_out) VAL={half} {}",
            gate_measure(index),
            switching.input + 1,
            direction(rising),
            direction(!rising)
        );
    }
    reference_copies(process, setting, reference[0], reference[1], window, &mut out);
    let _ = writeln!(out, ".tran {} {} 0 {}", seconds(window.step), seconds(window.stop), seconds(window.step));
    out.push_str(".end\n");
    out
}
