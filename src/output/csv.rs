//! CSV for spreadsheets: one header row and a fixed set of columns per view (gates, devices,
//! inputs), written by the `csv` crate so quoting follows RFC 4180.

use std::io::{self, Write};

use crate::gate::{NetworkFigures, PathListing, SizedGate};

use super::Rows;

/// Columns of the gates view, in order.
pub const GATE_COLUMNS: [&str; 26] = [
    "gate",
    "expression",
    "output",
    "drive",
    "method",
    "mobility_ratio",
    "transistors",
    "total_w_over_l",
    "total_width_um",
    "parasitic_delay",
    "pull_down_target_r",
    "worst_pull_down_r",
    "pull_down_vector",
    "best_pull_down_r",
    "pull_down_paths",
    "pull_up_target_r",
    "worst_pull_up_r",
    "pull_up_vector",
    "best_pull_up_r",
    "pull_up_paths",
    "total_drawn_width_um",
    "drawn_worst_pull_down_r",
    "pull_down_error_percent",
    "drawn_worst_pull_up_r",
    "pull_up_error_percent",
    "process",
];

/// Columns of the devices view, in order.
pub const DEVICE_COLUMNS: [&str; 26] = [
    "gate",
    "drive",
    "method",
    "device",
    "type",
    "network",
    "input",
    "drain",
    "source",
    "w_over_l",
    "width_um",
    "length_um",
    "input_capacitance",
    "logical_effort",
    "parasitic_delay",
    "transistors",
    "worst_pull_down_r",
    "worst_pull_up_r",
    "drawn_width_um",
    "finger_width_um",
    "fingers",
    "drawn_w_over_l",
    "drawn_worst_pull_down_r",
    "pull_down_error_percent",
    "drawn_worst_pull_up_r",
    "pull_up_error_percent",
];

/// Columns of the inputs view, in order.
pub const INPUT_COLUMNS: [&str; 6] = ["gate", "drive", "method", "input", "input_capacitance", "logical_effort"];

/// A number by the one rule of every format ([`crate::number`]).
fn value(number: f64) -> String {
    super::number(number)
}

fn micrometres(nanometres: f64) -> String {
    value(nanometres / 1000.0)
}

fn network_cells(network: &NetworkFigures) -> [String; 5] {
    [
        value(network.target_resistance),
        value(network.worst_resistance),
        network.worst_vector.as_ref().map(ToString::to_string).unwrap_or_default(),
        value(network.best_resistance),
        network.path_count.clone(),
    ]
}

/// Drawn worst path and its error, pull-down then pull-up.
fn drawn_cells(gate: &SizedGate) -> Vec<String> {
    gate.networks
        .iter()
        .flat_map(|network| [value(network.drawn_worst_resistance), value(network.drawn_error_percent)])
        .collect()
}

/// Write the gates in the chosen view.
pub fn write_gates(gates: &[SizedGate], rows: Rows, out: &mut dyn Write) -> io::Result<()> {
    gates_view(gates, rows, out).map_err(into_io)
}

/// The `csv` crate wraps a failed write in its own error; give back the write's own error, so a
/// reader that closes the pipe early is seen as such.
fn into_io(error: csv::Error) -> io::Error {
    match error.into_kind() {
        csv::ErrorKind::Io(error) => error,
        other => io::Error::other(format!("{other:?}")),
    }
}

fn gates_view(gates: &[SizedGate], rows: Rows, out: &mut dyn Write) -> csv::Result<()> {
    let mut writer = csv::Writer::from_writer(out);
    match rows {
        Rows::Gates => {
            writer.write_record(GATE_COLUMNS)?;
            for gate in gates {
                let mut record = vec![
                    gate.name.clone(),
                    gate.expression.clone(),
                    gate.output.clone(),
                    value(gate.drive),
                    gate.method.name().to_string(),
                    value(gate.mobility_ratio),
                    gate.transistor_count.to_string(),
                    value(gate.total_w_over_l),
                    micrometres(gate.process.width_nm(gate.total_w_over_l)),
                    value(gate.parasitic_delay),
                ];
                for network in &gate.networks {
                    record.extend(network_cells(network));
                }
                record.push(value(gate.total_drawn_width_um));
                record.extend(drawn_cells(gate));
                record.push(gate.process.name.clone());
                writer.write_record(&record)?;
            }
        }
        Rows::Devices => {
            writer.write_record(DEVICE_COLUMNS)?;
            for gate in gates {
                let literals = &gate.function.literals;
                // Transistors come NMOS then PMOS, each in literal order: transistor k is literal k mod n.
                for (index, transistor) in gate.transistors.iter().enumerate() {
                    let input = &gate.inputs[literals[index % literals.len()].input];
                    let mut record = vec![
                        gate.name.clone(),
                        value(gate.drive),
                        gate.method.name().to_string(),
                        transistor.name.clone(),
                        transistor.device_type.to_string(),
                        transistor.network.name().to_string(),
                        transistor.input.clone(),
                        transistor.drain.clone(),
                        transistor.source.clone(),
                        value(transistor.w_over_l),
                        micrometres(gate.process.width_nm(transistor.w_over_l)),
                        micrometres(gate.process.length_nm),
                        value(input.input_capacitance),
                        value(input.logical_effort),
                        value(gate.parasitic_delay),
                        gate.transistor_count.to_string(),
                        value(gate.networks[0].worst_resistance),
                        value(gate.networks[1].worst_resistance),
                        value(transistor.drawn_width_um),
                        value(transistor.finger_width_um),
                        transistor.fingers.to_string(),
                        value(transistor.drawn_w_over_l),
                    ];
                    record.extend(drawn_cells(gate));
                    writer.write_record(&record)?;
                }
            }
        }
        Rows::Inputs => {
            writer.write_record(INPUT_COLUMNS)?;
            for gate in gates {
                for input in &gate.inputs {
                    writer.write_record([
                        gate.name.clone(),
                        value(gate.drive),
                        gate.method.name().to_string(),
                        input.name.clone(),
                        value(input.input_capacitance),
                        value(input.logical_effort),
                    ])?;
                }
            }
        }
        Rows::Delays => super::delays::write_csv(gates, &mut writer)?,
    }
    writer.flush()?;
    Ok(())
}

/// Columns of the path listing, in order.
pub const PATH_COLUMNS: [&str; 7] = ["gate", "network", "rank", "resistance", "devices", "vector", "drawn_resistance"];

/// One row per listed path.
pub fn write_paths(gate: &SizedGate, listings: &[PathListing], out: &mut dyn Write) -> io::Result<()> {
    paths_view(gate, listings, out).map_err(into_io)
}

fn paths_view(gate: &SizedGate, listings: &[PathListing], out: &mut dyn Write) -> csv::Result<()> {
    let mut writer = csv::Writer::from_writer(out);
    writer.write_record(PATH_COLUMNS)?;
    for listing in listings {
        for (rank, path) in listing.paths.iter().enumerate() {
            writer.write_record([
                gate.name.clone(),
                listing.network.name().to_string(),
                (rank + 1).to_string(),
                value(path.resistance),
                path.devices.join(" "),
                path.vector.as_ref().map(ToString::to_string).unwrap_or_default(),
                value(path.drawn_resistance),
            ])?;
        }
    }
    writer.flush()?;
    Ok(())
}
