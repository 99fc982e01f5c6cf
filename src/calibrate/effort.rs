//! Logical effort and parasitic delay measured by simulation: each input's delay on both output
//! edges, and the reference inverter's, at several fan-outs, fitted by least squares to a line
//! `d = tau (g h + p)` (Sutherland, Sproull & Harris, "Logical Effort", 1999, chapter 5). The
//! inverter's slope is tau, averaged over its two edges; each input's slope over tau is its
//! logical effort on that edge, its intercept over tau its parasitic delay. The fit's residual is
//! reported; the FO4 delay is the inverter's at fan-out 4, measured.
//!
//! The load at fan-out `h` is `h` times the driving input's capacitance: an inverter of the
//! reference's proportions (the models' own gate capacitance), or, where the models carry none
//! (the process's level-1 models have no TOX), a capacitor of the process's gate capacitance.

use std::fmt::Write as _;

use super::testbench::{self, Setting, Window, direction, edge, seconds, toggle};
use super::{CalibrateError, Runs};
use crate::cell::SizedCell;
use crate::figures::input_capacitance;
use crate::network::NetworkKind;
use crate::number::format as number;
use crate::output::spice::mosfet_line;

/// The fan-outs measured.
pub const FANOUTS: [f64; 5] = [1.0, 2.0, 4.0, 6.0, 8.0];

/// How each load is made.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LoadKind {
    /// An inverter of the reference's proportions: the models' own gate capacitance.
    Gates,
    /// A capacitor of the process's gate capacitance (models without gate capacitance).
    Capacitors,
}

/// A line fitted to delay against fan-out.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Fit {
    /// Slope, s per unit fan-out.
    pub slope_s: f64,
    /// Intercept, s.
    pub intercept_s: f64,
    /// The largest distance of a measured delay from the line, over the delay, percent.
    pub residual_percent: f64,
}

/// Least squares through `(h, d)`.
pub fn fit(points: &[(f64, f64)]) -> Fit {
    let n = points.len() as f64;
    let (sx, sy) = points.iter().fold((0.0, 0.0), |(a, b), &(x, y)| (a + x, b + y));
    let (mx, my) = (sx / n, sy / n);
    let sxx: f64 = points.iter().map(|&(x, _)| (x - mx) * (x - mx)).sum();
    let sxy: f64 = points.iter().map(|&(x, y)| (x - mx) * (y - my)).sum();
    let slope = sxy / sxx;
    let intercept = my - slope * mx;
    let residual = points.iter().map(|&(x, y)| ((y - (intercept + slope * x)) / y).abs() * 100.0).fold(0.0, f64::max);
    Fit { slope_s: slope, intercept_s: intercept, residual_percent: residual }
}

/// One input on one output edge, measured beside first-order.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct InputEffort {
    /// The input.
    pub input: String,
    /// The output's edge.
    pub output_edge: &'static str,
    /// The side inputs held (the one worst-transition rule's vector).
    pub held: String,
    /// Logical effort measured.
    pub logical_effort: f64,
    /// First-order logical effort (docs/model.md section 6).
    pub first_order_logical_effort: f64,
    /// Parasitic delay measured, in tau.
    pub parasitic_delay: f64,
    /// The fit.
    pub fit: Fit,
}

/// What the measurement found.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Efforts {
    /// tau, s: the inverter's slope, mean of its two edges.
    pub tau_s: f64,
    /// The inverter's parasitic delay in tau, mean of its two edges.
    pub inverter_parasitic_delay: f64,
    /// The inverter's fits, output falling and rising.
    pub inverter_fits: [Fit; 2],
    /// The FO4 inverter delay, s: mean of its two edges at fan-out 4, measured.
    pub fo4_s: f64,
    /// Every input on both edges.
    pub inputs: Vec<InputEffort>,
    /// How the loads were made.
    pub loads: &'static str,
    /// Simulator runs.
    pub runs: usize,
}

/// A load of `c` units of gate capacitance on `node`, as `kind` makes it.
fn load(out: &mut String, cell: &SizedCell, models: &[String; 2], kind: LoadKind, tag: &str, c: f64) {
    let process = &cell.plan.process;
    match kind {
        LoadKind::Capacitors => {
            let _ = writeln!(out, "C{tag} {tag}_out 0 {}f", number(c * process.unit_capacitance_ff()));
        }
        LoadKind::Gates => {
            let reference = cell.plan.reference;
            let total = reference.nmos + reference.pmos;
            for (name, rail, model, width) in [
                ("N", "0", &models[0], c * reference.nmos / total),
                ("P", "vdd", &models[1], c * reference.pmos / total),
            ] {
                let drawn = process.draw(width);
                let nodes = [format!("{tag}_lo"), format!("{tag}_out"), rail.to_string(), rail.to_string()];
                let nodes = [nodes[0].as_str(), nodes[1].as_str(), nodes[2].as_str(), nodes[3].as_str()];
                let line = mosfet_line(
                    &format!("ML{name}{tag}"),
                    nodes,
                    model,
                    drawn.finger_width_nm,
                    process.length_nm,
                    drawn.fingers,
                );
                let _ = writeln!(out, "{line}");
            }
            // The load inverter drives a copy of its own capacitance, so that its output is a node
            // with a capacitance of its own (a fan-out of 1).
            let _ = writeln!(out, "C{tag}_lo {tag}_lo 0 {}f", number(c * process.unit_capacitance_ff()));
        }
    }
}

/// Measure `cell`'s (one stage) logical effort and parasitic delay per input and edge, and tau,
/// in `setting` with loads made as `kind` says.
pub fn measure(
    cell: &SizedCell,
    setting: &Setting,
    kind: LoadKind,
    runs: &mut Runs,
    simulator: &crate::ngspice::Options,
) -> Result<Efforts, CalibrateError> {
    let process = &cell.plan.process;
    let plan = &cell.plan;
    let [n, p] = [plan.drive * plan.reference.nmos, plan.drive * plan.reference.pmos];
    let c_inv = n + p;
    let largest = FANOUTS[FANOUTS.len() - 1];
    // The time scale from the reference alone at the largest load.
    let scale_setting = Setting {
        load: super::BenchLoad::Femtofarads(largest * c_inv * process.unit_capacitance_ff()),
        ..setting.clone()
    };
    let first = Window::first(process, n, p, largest * c_inv * process.unit_capacitance_ff(), setting.slew_s);
    let run = runs.run(&testbench::reference_bench(process, &scale_setting, n, p, &first), simulator)?;
    let mut scale: f64 = 0.0;
    for kind in NetworkKind::BOTH {
        scale = scale.max(run.value(&testbench::reference_measure(kind)).map_err(|source| {
            CalibrateError::Unmeasured { run: 1, what: "the reference inverter at the largest fan-out".into(), source }
        })?);
    }
    let load_ff = plan.process.load_ff;
    let transitions = crate::output::deck::transitions(cell, load_ff).unwrap_or_default();
    let window = Window::around(scale * 3.0, 30.0, setting.slew_s);
    let mut out = String::from("* widthwise: delay against fan-out\n");
    let models = testbench::models_text(&setting.models, process, &mut out);
    testbench::gate_subckt(cell, &models, &mut out);
    testbench::reference_subckt(process, &models, n, p, &mut out);
    let _ = writeln!(out, "Vsupply vdd 0 DC {}", number(process.supply_v));
    let half = number(process.supply_v / 2.0);
    let capacitance = input_capacitance(cell.stage());
    let level = |value: bool| if value { number(process.supply_v) } else { "0".to_string() };
    for (h_index, &h) in FANOUTS.iter().enumerate() {
        for network in NetworkKind::BOTH {
            let tag = format!("r{}h{h_index}", edge(network));
            let rising = network == NetworkKind::PullDown;
            let _ = writeln!(out, "V{tag} {tag}_in 0 {}", toggle(process.supply_v, !rising, &window));
            let _ = writeln!(out, "X{tag} {tag}_in {tag}_out vdd 0 wwref");
            load(&mut out, cell, &models, kind, &tag, h * c_inv);
            let _ = writeln!(
                out,
                ".meas tran tpd_{tag} TRIG v({tag}_in) VAL={half} {} TARG v({tag}_out) VAL={half} {}",
                direction(rising),
                direction(!rising)
            );
        }
        for (t_index, transition) in transitions.iter().enumerate() {
            let tag = format!("g{t_index}h{h_index}");
            let mut nodes = Vec::new();
            for (input, &value) in transition.vector.iter().enumerate() {
                let node = format!("{tag}_in{}", input + 1);
                let source = if input == transition.input {
                    toggle(process.supply_v, !value, &window)
                } else {
                    format!("DC {}", level(value))
                };
                let _ = writeln!(out, "V{tag}_{} {node} 0 {source}", input + 1);
                nodes.push(node);
            }
            let _ = writeln!(out, "X{tag} {} {tag}_out vdd 0 wwgate", nodes.join(" "));
            load(&mut out, cell, &models, kind, &tag, h * capacitance[transition.input]);
            let rising = transition.vector[transition.input];
            let _ = writeln!(
                out,
                ".meas tran tpd_{tag} TRIG v({tag}_in{}) VAL={half} {} TARG v({tag}_out) VAL={half} {}",
                transition.input + 1,
                direction(rising),
                direction(!rising)
            );
        }
    }
    let _ = writeln!(out, ".tran {} {} 0 {}", seconds(window.step), seconds(window.stop), seconds(window.step));
    out.push_str(".end\n");
    let run = runs.run(&out, simulator)?;
    let used = runs.used;
    let value = |name: String, what: String| {
        run.value(&name).map_err(|source| CalibrateError::Unmeasured { run: used, what, source })
    };
    let mut inverter = Vec::new();
    for network in NetworkKind::BOTH {
        let mut points = Vec::new();
        for (h_index, &h) in FANOUTS.iter().enumerate() {
            let what = format!("the reference inverter at fan-out {}", number(h));
            points.push((h, value(format!("tpd_r{}h{h_index}", edge(network)), what)?));
        }
        inverter.push(points);
    }
    let inverter_fits = [fit(&inverter[0]), fit(&inverter[1])];
    let tau = (inverter_fits[0].slope_s + inverter_fits[1].slope_s) / 2.0;
    let four = FANOUTS.iter().position(|&h| h == 4.0).unwrap_or(0);
    let fo4 = (inverter[0][four].1 + inverter[1][four].1) / 2.0;
    // Each edge against the inverter's same edge: the loads' own capacitance moves alike there.
    let edge_tau = |kind: NetworkKind| inverter_fits[usize::from(kind == NetworkKind::PullUp)].slope_s;
    let figures = crate::figures::CellFigures::of(cell);
    let names = &cell.stage().function.inputs;
    let mut inputs = Vec::new();
    for (t_index, transition) in transitions.iter().enumerate() {
        let mut points = Vec::new();
        for (h_index, &h) in FANOUTS.iter().enumerate() {
            let what = format!("input {} at fan-out {}", names[transition.input], number(h));
            points.push((h, value(format!("tpd_g{t_index}h{h_index}"), what)?));
        }
        let line = fit(&points);
        let held: Vec<String> = transition
            .vector
            .iter()
            .enumerate()
            .filter(|&(i, _)| i != transition.input)
            .map(|(i, &v)| format!("{}={}", names[i], u8::from(v)))
            .collect();
        inputs.push(InputEffort {
            input: names[transition.input].clone(),
            output_edge: edge(transition.kind),
            held: held.join(" "),
            logical_effort: line.slope_s / edge_tau(transition.kind),
            first_order_logical_effort: figures.inputs[transition.input].logical_effort,
            parasitic_delay: line.intercept_s / edge_tau(transition.kind),
            fit: line,
        });
    }
    Ok(Efforts {
        tau_s: tau,
        inverter_parasitic_delay: (inverter_fits[0].intercept_s + inverter_fits[1].intercept_s) / 2.0 / tau,
        inverter_fits,
        fo4_s: fo4,
        inputs,
        loads: match kind {
            LoadKind::Gates => "inverters of the reference's proportions (the models' gate capacitance)",
            LoadKind::Capacitors => "capacitors of the process's gate capacitance",
        },
        runs: runs.used,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_line_is_fitted_exactly_and_its_residual_is_the_worst_point() {
        // d = 2 h + 3 through five points (least squares, common practice, no source).
        let points: Vec<(f64, f64)> = FANOUTS.iter().map(|&h| (h, 2.0 * h + 3.0)).collect();
        let line = fit(&points);
        assert!((line.slope_s - 2.0).abs() < 1e-12 && (line.intercept_s - 3.0).abs() < 1e-12);
        assert!(line.residual_percent < 1e-9);
        let bent = [(1.0, 5.0), (2.0, 7.0), (3.0, 10.0)];
        let line = fit(&bent);
        // Slope 2.5, intercept 7.3333 - 5 = 2.3333; worst relative residual at h = 2: |7 - 7.3333| / 7.
        assert!((line.slope_s - 2.5).abs() < 1e-12);
        assert!((line.residual_percent - (1.0 / 3.0) / 7.0 * 100.0).abs() < 1e-9);
    }
}
