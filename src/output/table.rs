//! The readable table: a block per gate with its transistors, inputs, networks and totals.

use std::io::{self, Write};

use super::CellReport;
use super::number;
use crate::figures::{CellFigures, PathListing};
use crate::sizing::WorstCase;

/// Write rows as aligned columns, the first row a header, two spaces of indent.
pub fn write_columns(rows: &[Vec<String>], out: &mut dyn Write) -> io::Result<()> {
    write_aligned(rows, "  ", out)
}

/// A header line and its rows, aligned at the margin (the simulation reports).
pub fn write_headed(header: &[&str], rows: &[Vec<String>], out: &mut dyn Write) -> io::Result<()> {
    let mut all = vec![header.iter().map(|h| h.to_string()).collect::<Vec<String>>()];
    all.extend(rows.iter().cloned());
    write_aligned(&all, "", out)
}

/// Write rows as columns aligned on their widest cell, two spaces apart, each line after `indent`
/// (the report's sections indent by two spaces; the simulation reports start at the margin).
pub fn write_aligned(rows: &[Vec<String>], indent: &str, out: &mut dyn Write) -> io::Result<()> {
    let width = rows.iter().map(Vec::len).max().unwrap_or(0);
    let mut widths = vec![0; width];
    for row in rows {
        for (column, cell) in row.iter().enumerate() {
            widths[column] = widths[column].max(cell.chars().count());
        }
    }
    for row in rows {
        let mut line = String::from(indent);
        for (column, cell) in row.iter().enumerate() {
            line.push_str(cell);
            if column + 1 < row.len() {
                line.push_str(&" ".repeat(widths[column] - cell.chars().count() + 2));
            }
        }
        writeln!(out, "{}", line.trim_end())?;
    }
    Ok(())
}

fn strings<const N: usize>(cells: [&str; N]) -> Vec<String> {
    cells.iter().map(|c| c.to_string()).collect()
}

/// Write every gate's block, a blank line between them.
pub fn write_gates(gates: &[CellReport], out: &mut dyn Write) -> io::Result<()> {
    for (index, gate) in gates.iter().enumerate() {
        if index > 0 {
            writeln!(out)?;
        }
        write_gate(gate, out)?;
    }
    Ok(())
}

fn write_gate(report: &CellReport, out: &mut dyn Write) -> io::Result<()> {
    let gate = &report.figures;
    writeln!(out, "{}: {} = {}", gate.name, gate.output, gate.expression)?;
    let mut settings = format!("  {}", super::sizing_line(gate));
    if let Some(critical) = &gate.critical_input {
        settings.push_str(&format!(", critical input {critical} nearest the output"));
    }
    writeln!(out, "{settings}")?;
    let process = &gate.process;
    writeln!(
        out,
        "  process {}: L {} um, unit NMOS W {} um, grid {} nm, min W {} um, max finger {} um",
        process.name,
        number(process.length_nm / 1000.0),
        number(process.unit_width_nm / 1000.0),
        number(process.grid_nm),
        number(process.min_width_nm / 1000.0),
        number(process.max_finger_width_nm / 1000.0),
    )?;

    writeln!(out, "\ntransistors (drawn W snapped to the grid; fingers n x W, SPICE m=n)")?;
    let mut rows =
        vec![strings(["name", "type", "network", "input", "drain", "source", "W/L", "W um", "fingers", "L um"])];
    rows.extend(gate.transistors.iter().map(|t| {
        vec![
            t.name.clone(),
            t.device_type.to_string(),
            t.network.name().to_string(),
            t.input.clone(),
            t.drain.clone(),
            t.source.clone(),
            number(t.w_over_l),
            number(t.drawn_width_um),
            if t.fingers == 1 { "1".to_string() } else { format!("{} x {}", t.fingers, number(t.finger_width_um)) },
            number(t.length_um),
        ]
    }));
    write_columns(&rows, out)?;

    writeln!(out, "\ninputs")?;
    let mut rows = vec![strings(["input", "C in (unit C)", "C in (fF)", "logical effort"])];
    rows.extend(gate.inputs.iter().map(|i| {
        vec![i.name.clone(), number(i.input_capacitance), number(i.input_capacitance_ff), number(i.logical_effort)]
    }));
    write_columns(&rows, out)?;

    if gate.stages.len() > 1 {
        write_stages(gate, out)?;
        writeln!(out, "\nnetworks of the output stage {} (resistance in units of R, the unit NMOS)", gate.output)?;
    } else {
        writeln!(out, "\nnetworks (resistance in units of R, the unit NMOS)")?;
    }
    let mut rows = vec![strings([
        "network",
        "target",
        "worst path",
        "only it conducts at",
        "best case",
        "paths",
        "drawn worst (error)",
    ])];
    for network in &gate.networks {
        rows.push(vec![
            network.network.name().to_string(),
            number(network.target_resistance),
            format!("{} ({})", number(network.worst_resistance), network.worst_path.join(" ")),
            network.worst_vector.as_ref().map_or("no vector (repeated inputs)".to_string(), |v| v.to_string()),
            number(network.best_resistance),
            network.path_count.clone(),
            format!("{} ({})", number(network.drawn_worst_resistance), percent(network.drawn_error_percent)),
        ]);
    }
    write_columns(&rows, out)?;
    // Min-area over vectors sizes each network to its exact worst resistance; the elmore method over
    // vectors sizes for delay, so its networks report the exact worst beside the path value.
    let sized_to_vectors = gate.worst_case == WorstCase::Vectors && !gate.method.sizes_by_delay();
    for network in &gate.networks {
        if let Some(exact) = &network.exact_worst
            && (exact.resistance - network.worst_resistance).abs() > 1e-9
        {
            let name = network.network.name();
            let (worst, at, path) = (number(exact.resistance), &exact.vector, number(network.worst_resistance));
            if sized_to_vectors {
                writeln!(
                    out,
                    "  {name}: sized to its exact worst over input vectors, {worst} at {at}; the weakest path's \
                     {path} never conducts alone (repeated inputs)"
                )?;
            } else {
                writeln!(
                    out,
                    "  {name}: exact worst over input vectors {worst} at {at} (the path value {path} is an upper bound)"
                )?;
            }
        }
    }
    if sized_to_vectors {
        writeln!(out, "  drawn worst: the exact worst over input vectors with the drawn widths")?;
    }

    writeln!(out, "\ngate")?;
    let comparison = &gate.comparison;
    let mut change = would(comparison.method.name(), comparison.change_percent);
    if let Some(other) = &gate.worst_case_comparison {
        let name = format!("min-area over {}", other.worst_case.name());
        match (other.change_percent, &other.not_computed) {
            (Some(percent), _) => change = format!("{change}; {}", would(&name, percent)),
            (None, Some(why)) => change = format!("{change}; {name} not worked out: {why}"),
            (None, None) => {}
        }
    }
    let rows = vec![
        vec![
            "parasitic delay".to_string(),
            format!("{} (output node: {})", number(gate.parasitic_delay), gate.output_devices.join(" ")),
        ],
        vec!["transistors".to_string(), gate.transistor_count.to_string()],
        vec!["total W/L".to_string(), format!("{} ({change})", number(gate.total_w_over_l))],
        vec!["drawn area".to_string(), format!("{} um^2 (sum of drawn W x L: channels only)", number(gate.area_um2))],
    ];
    write_columns(&rows, out)?;
    if let Some(drawn) = &gate.drawn {
        writeln!(
            out,
            "\ndrawn (snapping moves a device's W/L by up to {}%: the same figures from the drawn W/L)",
            number(drawn.largest_change_percent)
        )?;
        let mut rows = vec![strings(["input", "C in (unit C)", "C in (fF)", "logical effort"])];
        rows.extend(drawn.inputs.iter().map(|i| {
            vec![i.name.clone(), number(i.input_capacitance), number(i.input_capacitance_ff), number(i.logical_effort)]
        }));
        rows.push(vec!["parasitic delay".to_string(), number(drawn.parasitic_delay)]);
        rows.push(vec!["total W/L".to_string(), number(drawn.total_w_over_l)]);
        write_columns(&rows, out)?;
    }
    if let Some(timing) = &report.cell_delays {
        super::cell_delays::write_table(timing, out)?;
    }
    if let Some(delays) = &report.delays {
        super::delays::write_table(delays, out)?;
    }
    Ok(())
}

/// The stages of a cell of several stages, and each input's logical-effort delay estimate.
fn write_stages(gate: &CellFigures, out: &mut dyn Write) -> io::Result<()> {
    writeln!(out, "\nstages ({} form; {})", gate.form, form_note(gate))?;
    let mut rows = vec![strings(["stage", "role", "computes", "drive", "input", "C in", "g", "h", "f = g h", "p"])];
    for stage in &gate.stages {
        let drive = if stage.clamped {
            format!("{} (raised to the minimum width)", number(stage.drive))
        } else {
            number(stage.drive)
        };
        for (index, input) in stage.inputs.iter().enumerate() {
            let first = index == 0;
            let shown = |text: String| if first { text } else { String::new() };
            rows.push(vec![
                shown(stage.stage.clone()),
                shown(stage.role.to_string()),
                shown(format!("{} = {}", stage.stage, stage.expression)),
                shown(drive.clone()),
                input.net.clone(),
                number(input.input_capacitance),
                number(input.logical_effort),
                number(input.electrical_effort),
                shown(number(stage.effort)),
                shown(number(stage.parasitic_delay)),
            ]);
        }
    }
    write_columns(&rows, out)?;
    writeln!(out, "\ndelay estimate (logical effort: the largest sum of g h + p along the input's paths, in tau)")?;
    let mut rows = vec![strings(["input", "load (unit C)", "delay (tau)", "through"])];
    rows.extend(
        gate.delay_estimates
            .iter()
            .map(|e| vec![e.input.clone(), number(e.load_capacitance), number(e.delay_tau), e.path.join(" -> ")]),
    );
    write_columns(&rows, out)
}

/// Which form the cell takes, and why.
fn form_note(gate: &CellFigures) -> String {
    let others: Vec<String> = gate
        .other_forms
        .iter()
        .map(|f| format!("the {} form would take total W/L {}", f.form, number(f.total_w_over_l)))
        .collect();
    if others.is_empty() {
        "the only form".to_string()
    } else {
        format!("the smaller total W/L: {}", others.join(", "))
    }
}

/// What another sizing would use, from its total's change in percent.
fn would(name: &str, change_percent: f64) -> String {
    if change_percent.abs() < 1e-9 {
        format!("{name} would use the same")
    } else if change_percent < 0.0 {
        format!("{name} would save {}%", number(-change_percent))
    } else {
        format!("{name} would use {}% more", number(change_percent))
    }
}

/// A signed percentage: `-0.1126003414%`, `0%`.
fn percent(value: f64) -> String {
    format!("{}%", number(value))
}

/// Write the path listing of both networks.
pub fn write_paths(gate: &CellFigures, listings: &[PathListing], out: &mut dyn Write) -> io::Result<()> {
    let against = if gate.worst_case == WorstCase::Vectors { " against every input vector" } else { "" };
    writeln!(out, "{}: {} = {} ({} sizing{against})", gate.name, gate.output, gate.expression, gate.method.name())?;
    let several = listings.iter().any(|l| l.stage != gate.output);
    for listing in listings {
        let stage = if several { format!("stage {}, ", listing.stage) } else { String::new() };
        writeln!(
            out,
            "\n{stage}{}: {} paths, target {} R; {} weakest shown",
            listing.network.name(),
            listing.path_count,
            number(listing.target_resistance),
            listing.paths.len()
        )?;
        let mut rows = vec![strings(["resistance", "devices", "only it conducts at", "drawn"])];
        rows.extend(listing.paths.iter().map(|p| {
            vec![
                number(p.resistance),
                p.devices.join(" "),
                p.vector.as_ref().map_or("never alone (repeated inputs)".to_string(), |v| v.to_string()),
                number(p.drawn_resistance),
            ]
        }));
        write_columns(&rows, out)?;
    }
    Ok(())
}
