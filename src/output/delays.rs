//! The delay stage's part of the table and its CSV view: Elmore delays per input and edge, the
//! logical-effort view, the three methods side by side and the stack-order search.

use std::io::{self, Write};

use super::CellReport;
use super::number;
use super::table::write_columns;
use crate::paths::{EXACT_WORST_MAX_INPUTS, Vector};
use crate::timing::transition::WEAKEST_PATH;
use crate::timing::{Delay, DelayReport};

fn strings<const N: usize>(cells: [&str; N]) -> Vec<String> {
    cells.iter().map(|c| c.to_string()).collect()
}

fn list(names: &[String]) -> String {
    dash_if_empty(names.join(" "))
}

/// The side inputs of a delay row, `name=value` in input order: the vector the transition is timed
/// at without the switching input, whose level the edge gives (its on-level in the network that
/// pulls: 1 on a fall, 0 on a rise). Empty for a gate of one input.
fn side_inputs(delay: &Delay) -> String {
    side_inputs_of(&delay.vector, &delay.input)
}

/// A table cell: `text`, or `-` where it is empty.
pub(super) fn dash_if_empty(text: String) -> String {
    if text.is_empty() { "-".to_string() } else { text }
}

/// `vector` without `input`, `name=value` in input order; empty where `input` is the only one.
pub(super) fn side_inputs_of(vector: &Vector, input: &str) -> String {
    let mut text = String::new();
    for (name, value) in vector.values.iter().filter(|(name, _)| name != input) {
        if !text.is_empty() {
            text.push(' ');
        }
        text.push_str(name);
        text.push_str(if *value { "=1" } else { "=0" });
    }
    text
}

/// The delay sections of one gate's table block.
pub fn write_table(report: &DelayReport, out: &mut dyn Write) -> io::Result<()> {
    let timing = &report.timing;
    let model = &timing.delay_model;
    let load = match (model.fanout, model.load_c, model.load_ff) {
        (Some(h), _, _) => format!("fan-out {} (the timed input's own capacitance)", number(h)),
        (None, Some(c), Some(ff)) => format!("{} C ({} fF)", number(c), number(ff)),
        (None, Some(c), None) => format!("{} C", number(c)),
        (None, None, _) => "none".to_string(),
    };
    writeln!(
        out,
        "\ndelays (Elmore, in RC: R = unit NMOS on-resistance, C = unit gate capacitance; diffusion ratio {}; load {load})",
        number(model.diffusion_ratio)
    )?;
    if let Some(units) = &model.process {
        writeln!(
            out,
            "  R = {} ohm, C = {} fF, RC = {} ps ({})",
            number(units.unit_resistance_ohm),
            number(units.unit_capacitance_ff),
            number(units.rc_ps),
            units.process
        )?;
        writeln!(
            out,
            "  Elmore ps: the Elmore delay, a time constant (the step response's first moment); 50% est. ps: \
             ln 2 x it, a single-pole estimate of the 50% delay"
        )?;
    }
    let mut rows = vec![strings([
        "input",
        "edge",
        "Elmore",
        "Elmore ps",
        "50% est. ps",
        "load",
        "reference",
        "ratio",
        "path",
        "charged internal nodes",
        "at final level",
        "side inputs",
    ])];
    for delay in &timing.delays {
        rows.push(vec![
            delay.input.clone(),
            delay.edge.name().to_string(),
            number(delay.elmore_rc),
            delay.elmore_ps.map_or("-".to_string(), number),
            delay.t50_estimate_ps.map_or("-".to_string(), number),
            number(delay.load_c),
            number(delay.reference_elmore_rc),
            number(delay.delay_ratio),
            delay.path.join(" "),
            list(&delay.internal_nodes),
            list(&delay.nodes_at_final_level),
            dash_if_empty(side_inputs(delay)),
        ]);
    }
    write_columns(&rows, out)?;
    for missing in &timing.unavailable_delays {
        writeln!(out, "  {} {}: no delay ({})", missing.input, missing.edge.name(), missing.why)?;
    }
    if timing.delays.iter().any(|d| d.search == WEAKEST_PATH) {
        writeln!(
            out,
            "  past {EXACT_WORST_MAX_INPUTS} inputs the side inputs are not searched: each delay is its input's weakest \
             path alone"
        )?;
    }

    writeln!(
        out,
        "\nlogical-effort view (d = g h + p in units of tau: {} RC falling, {} RC rising)",
        number(model.tau_fall_rc),
        number(model.tau_rise_rc)
    )?;
    let mut rows = vec![strings(["input", "edge", "g", "h", "p output node", "p Elmore", "d output node", "d Elmore"])];
    for delay in &timing.delays {
        let view = &delay.logical_effort_view;
        rows.push(vec![
            delay.input.clone(),
            delay.edge.name().to_string(),
            number(view.g),
            number(view.h),
            number(view.p_output_node),
            number(view.p_elmore),
            number(view.d_output_node),
            number(view.d_elmore),
        ]);
    }
    write_columns(&rows, out)?;

    writeln!(
        out,
        "\nmethods (delay ratio: worst Elmore delay over the reference inverter's, same load; delay target {}{})",
        number(report.delay_target),
        if report.delay_target_is_default { ", longest-path's ratio" } else { "" }
    )?;
    let mut rows = vec![strings(["method", "total W/L", "worst delay ratio", "at", "meets the target"])];
    for row in &report.method_comparison {
        match row.total_w_over_l {
            Some(total) => rows.push(vec![
                row.method.name().to_string(),
                number(total),
                row.worst_delay_ratio.map_or("-".to_string(), number),
                row.worst_transition.clone().unwrap_or_default(),
                if row.meets_delay_target { "yes" } else { "no" }.to_string(),
            ]),
            None => rows.push(vec![
                row.method.name().to_string(),
                "-".to_string(),
                "-".to_string(),
                "-".to_string(),
                row.note.clone().unwrap_or_default(),
            ]),
        }
    }
    write_columns(&rows, out)?;

    if let Some(order) = &report.stack_order {
        let how = if order.exhaustive { "every order" } else { "a local search" };
        writeln!(
            out,
            "\nstack order: {} {} -> {} ({}% less) over {} orders ({how})",
            order.objective,
            number(order.default_value),
            number(order.chosen_value),
            number(order.gain_percent),
            order.orders_tried
        )?;
        for network in &order.networks {
            writeln!(out, "  {network}")?;
        }
    }
    Ok(())
}

/// Columns of the delays view, in order: `_rc` in units of RC, `_ps` picoseconds (`elmore_ps` the
/// Elmore time constant, `t50_estimate_ps` ln 2 times it, a single-pole 50% estimate), `_c` unit gate
/// capacitances, `_tau` the logical-effort delay unit; `g`, `h`, the ratios and `fanout` are
/// dimensionless; `diffusion_ratio` and `fanout` are the run's settings, the same on every row.
pub const DELAY_COLUMNS: [&str; 23] = [
    "gate",
    "drive",
    "method",
    "input",
    "edge",
    "elmore_rc",
    "elmore_ps",
    "t50_estimate_ps",
    "load_c",
    "reference_elmore_rc",
    "delay_ratio",
    "path",
    "side_inputs",
    "internal_nodes",
    "nodes_at_final_level",
    "diffusion_ratio",
    "g",
    "h",
    "p_output_node_tau",
    "p_elmore_tau",
    "d_output_node_tau",
    "d_elmore_tau",
    "fanout",
];

/// One row per input and edge of every timed gate.
pub fn write_csv<W: Write>(reports: &[CellReport], writer: &mut csv::Writer<W>) -> csv::Result<()> {
    writer.write_record(DELAY_COLUMNS)?;
    for report in reports {
        let Some(delays) = &report.delays else { continue };
        let (gate, timing) = (&report.figures, &delays.timing);
        let fanout = match timing.delay_model.fanout {
            Some(h) => number(h),
            None => String::new(),
        };
        for delay in &timing.delays {
            let view = &delay.logical_effort_view;
            writer.write_record([
                gate.name.clone(),
                number(gate.drive),
                gate.method.name().to_string(),
                delay.input.clone(),
                delay.edge.name().to_string(),
                number(delay.elmore_rc),
                delay.elmore_ps.map(number).unwrap_or_default(),
                delay.t50_estimate_ps.map(number).unwrap_or_default(),
                number(delay.load_c),
                number(delay.reference_elmore_rc),
                number(delay.delay_ratio),
                delay.path.join(" "),
                side_inputs(delay),
                delay.internal_nodes.join(" "),
                delay.nodes_at_final_level.join(" "),
                number(timing.delay_model.diffusion_ratio),
                number(view.g),
                number(view.h),
                number(view.p_output_node),
                number(view.p_elmore),
                number(view.d_output_node),
                number(view.d_elmore),
                fanout.clone(),
            ])?;
        }
    }
    Ok(())
}
