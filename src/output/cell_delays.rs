//! The delays of a cell of several stages in the table and in the CSV delays view: each pin's
//! slowest path through the stages on each output edge, its Elmore delay against the reference
//! inverter's and against its logical-effort estimate, and the stages it crosses.

use std::io::{self, Write};

use super::CellReport;
use super::delays::{dash_if_empty, side_inputs_of};
use super::number;
use super::table::write_columns;
use crate::timing::CellTiming;

fn strings<const N: usize>(cells: [&str; N]) -> Vec<String> {
    cells.iter().map(|c| c.to_string()).collect()
}

/// The delay sections of a cell of several stages in its table block.
pub fn write_table(timing: &CellTiming, out: &mut dyn Write) -> io::Result<()> {
    let model = &timing.delay_model;
    let load = match (model.fanout, model.load_c, model.load_ff) {
        (Some(h), _, _) => format!("fan-out {} (the timed pin's own capacitance)", number(h)),
        (None, Some(c), Some(ff)) => format!("{} C ({} fF)", number(c), number(ff)),
        (None, Some(c), None) => format!("{} C", number(c)),
        (None, None, _) => "none".to_string(),
    };
    writeln!(
        out,
        "\ndelays through the stages (Elmore, in RC: each stage's worst transition at what it drives, summed \
         along the pin's slowest path; diffusion ratio {}; load {load})",
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
    }
    let mut rows = vec![strings([
        "input",
        "edge",
        "Elmore",
        "ps",
        "load",
        "reference",
        "ratio",
        "Elmore (tau)",
        "estimate (tau)",
        "Elmore / estimate",
        "through",
    ])];
    for delay in &timing.delays {
        rows.push(vec![
            format!("{} {}", delay.input, delay.input_edge.name()),
            delay.edge.name().to_string(),
            number(delay.elmore_rc),
            delay.elmore_ps.map_or("-".to_string(), number),
            number(delay.load_c),
            number(delay.reference_elmore_rc),
            number(delay.delay_ratio),
            number(delay.elmore_tau),
            number(delay.estimate_tau),
            if delay.estimate_tau > 0.0 { number(delay.elmore_tau / delay.estimate_tau) } else { "-".to_string() },
            delay.stages.iter().map(|s| s.stage.as_str()).collect::<Vec<_>>().join(" -> "),
        ]);
    }
    write_columns(&rows, out)?;
    for missing in &timing.unavailable_delays {
        writeln!(out, "  {} {}: no delay ({})", missing.input, missing.edge.name(), missing.why)?;
    }
    writeln!(
        out,
        "\nstages of each path (tau: {} RC falling, {} RC rising; estimate g h + p)",
        number(model.tau_fall_rc),
        number(model.tau_rise_rc)
    )?;
    let mut rows = vec![strings([
        "input",
        "edge",
        "stage",
        "from",
        "stage edge",
        "Elmore",
        "load",
        "estimate",
        "path",
        "side inputs",
    ])];
    for delay in &timing.delays {
        for step in &delay.stages {
            rows.push(vec![
                delay.input.clone(),
                delay.edge.name().to_string(),
                step.stage.clone(),
                step.input.clone(),
                step.edge.name().to_string(),
                number(step.elmore_rc),
                number(step.load_c),
                number(step.estimate_tau),
                step.path.join(" "),
                dash_if_empty(side_inputs_of(&step.vector, &step.input)),
            ]);
        }
    }
    write_columns(&rows, out)
}

/// Columns of the delays view of a cell of several stages, in order: `_rc` in units of RC, `_ps`
/// picoseconds, `_c` unit gate capacitances, `_tau` the logical-effort delay unit; `stages` the
/// path's stages by the nets they drive and `stage_elmore_rc` each one's delay, space-separated.
pub const CELL_DELAY_COLUMNS: [&str; 17] = [
    "gate",
    "drive",
    "method",
    "input",
    "input_edge",
    "edge",
    "elmore_rc",
    "elmore_ps",
    "load_c",
    "reference_elmore_rc",
    "delay_ratio",
    "elmore_tau",
    "estimate_tau",
    "stages",
    "stage_elmore_rc",
    "diffusion_ratio",
    "fanout",
];

/// One row per pin and output edge of every cell of several stages that was timed.
pub fn write_csv<W: Write>(reports: &[CellReport], writer: &mut csv::Writer<W>) -> csv::Result<()> {
    writer.write_record(CELL_DELAY_COLUMNS)?;
    for report in reports {
        let Some(timing) = &report.cell_delays else { continue };
        let gate = &report.figures;
        let fanout = timing.delay_model.fanout.map(number).unwrap_or_default();
        for delay in &timing.delays {
            writer.write_record([
                gate.name.clone(),
                number(gate.drive),
                gate.method.name().to_string(),
                delay.input.clone(),
                delay.input_edge.name().to_string(),
                delay.edge.name().to_string(),
                number(delay.elmore_rc),
                delay.elmore_ps.map(number).unwrap_or_default(),
                number(delay.load_c),
                number(delay.reference_elmore_rc),
                number(delay.delay_ratio),
                number(delay.elmore_tau),
                number(delay.estimate_tau),
                delay.stages.iter().map(|s| s.stage.as_str()).collect::<Vec<_>>().join(" "),
                delay.stages.iter().map(|s| number(s.elmore_rc)).collect::<Vec<_>>().join(" "),
                number(timing.delay_model.diffusion_ratio),
                fanout.clone(),
            ])?;
        }
    }
    Ok(())
}
