//! CSV for spreadsheets: one header row and a fixed set of columns per view (gates, devices,
//! inputs), written by the `csv` crate so quoting follows RFC 4180.

use std::io::{self, Write};

use crate::figures::{CellFigures, NetworkFigures, PathListing};

use super::{CellReport, Rows};

/// Columns of the gates view, in order: one tidy row per sized cell (variant), with what cells are
/// compared by. Units are in the names (`_um`, `_um2`, `_c` for unit-NMOS gate capacitances, `_ff`,
/// `_r` for unit-NMOS on-resistances, `_percent`); the rest are dimensionless or text (README). The
/// `drawn_` columns give the same figures from the drawn W/L where snapping moves some device's W/L
/// by more than 0.5% (else they are empty). `stages` counts the cell's stages and `form` says how
/// its logic stage reaches the output (`direct` or `inverted`, the devices view's `stage` column
/// names each device's stage); the network columns are the output stage's.
pub const GATE_COLUMNS: [&str; 40] = [
    "gate",
    "expression",
    "output",
    "drive",
    "method",
    "transistors",
    "area_um2",
    "max_input_cap_c",
    "max_input_cap_ff",
    "max_logical_effort",
    "min_logical_effort",
    "parasitic_delay",
    "total_w_over_l",
    "total_width_um",
    "total_drawn_width_um",
    "length_um",
    "mobility_ratio",
    "reference_nmos_w_over_l",
    "reference_pmos_w_over_l",
    "pull_down_target_r",
    "worst_pull_down_r",
    "pull_down_vector",
    "best_pull_down_r",
    "pull_down_paths",
    "drawn_worst_pull_down_r",
    "pull_down_error_percent",
    "pull_up_target_r",
    "worst_pull_up_r",
    "pull_up_vector",
    "best_pull_up_r",
    "pull_up_paths",
    "drawn_worst_pull_up_r",
    "pull_up_error_percent",
    "process",
    "drawn_change_percent",
    "drawn_max_input_cap_c",
    "drawn_parasitic_delay",
    "drawn_total_w_over_l",
    "stages",
    "form",
];

/// Columns of the devices view, in order: keys to join on (the variant, its drive and method, the
/// device, its stage (the net the stage drives), its network and input), then the device's own values. Every number sums per gate to the
/// gate's figure (W/L, widths, area, fingers; gate capacitance per gate and input to the input's
/// capacitance), except the one named per finger.
pub const DEVICE_COLUMNS: [&str; 19] = [
    "gate",
    "drive",
    "method",
    "device",
    "stage",
    "type",
    "network",
    "input",
    "drain",
    "source",
    "w_over_l",
    "width_um",
    "drawn_w_over_l",
    "drawn_width_um",
    "fingers",
    "per_finger_width_um",
    "area_um2",
    "gate_cap_c",
    "gate_cap_ff",
];

/// Columns of the inputs view, in order. The `drawn_` columns are filled where snapping moves some
/// device of the gate by more than 0.5% (else empty), as the gates view's.
pub const INPUT_COLUMNS: [&str; 9] = [
    "gate",
    "drive",
    "method",
    "input",
    "input_cap_c",
    "input_cap_ff",
    "logical_effort",
    "drawn_input_cap_c",
    "drawn_logical_effort",
];

/// A number by the one rule of every format ([`crate::number`]).
fn value(number: f64) -> String {
    super::number(number)
}

fn micrometres(nanometres: f64) -> String {
    value(nanometres / 1000.0)
}

/// Target, worst path, its vector, best case, path count, drawn worst path and its error.
fn network_cells(network: &NetworkFigures) -> [String; 7] {
    [
        value(network.target_resistance),
        value(network.worst_resistance),
        network.worst_vector.as_ref().map(ToString::to_string).unwrap_or_default(),
        value(network.best_resistance),
        network.path_count.clone(),
        value(network.drawn_worst_resistance),
        value(network.drawn_error_percent),
    ]
}

/// The largest and least of some numbers (NaN-free: figures of a sized gate).
fn extremes(values: impl Iterator<Item = f64>) -> (f64, f64) {
    values.fold((f64::NEG_INFINITY, f64::INFINITY), |(most, least), v| (most.max(v), least.min(v)))
}

/// Write the gates in the chosen view.
pub fn write_gates(gates: &[CellReport], rows: Rows, out: &mut dyn Write) -> io::Result<()> {
    gates_view(gates, rows, out).map_err(into_io)
}

/// The `csv` crate wraps a failed write in its own error; give back the write's own error, so a
/// reader that closes the pipe early is seen as such.
pub(crate) fn into_io(error: csv::Error) -> io::Error {
    match error.into_kind() {
        csv::ErrorKind::Io(error) => error,
        other => io::Error::other(format!("{other:?}")),
    }
}

fn gates_view(reports: &[CellReport], rows: Rows, out: &mut dyn Write) -> csv::Result<()> {
    let mut writer = csv::Writer::from_writer(out);
    let gates = reports.iter().map(|r| &r.figures);
    match rows {
        Rows::Gates => {
            writer.write_record(GATE_COLUMNS)?;
            for gate in gates {
                let (most_effort, least_effort) = extremes(gate.inputs.iter().map(|i| i.logical_effort));
                let most_c = extremes(gate.inputs.iter().map(|i| i.input_capacitance)).0;
                let most_ff = extremes(gate.inputs.iter().map(|i| i.input_capacitance_ff)).0;
                let mut record = vec![
                    gate.name.clone(),
                    gate.expression.clone(),
                    gate.output.clone(),
                    value(gate.drive),
                    gate.method.name().to_string(),
                    gate.transistor_count.to_string(),
                    value(gate.area_um2),
                    value(most_c),
                    value(most_ff),
                    value(most_effort),
                    value(least_effort),
                    value(gate.parasitic_delay),
                    value(gate.total_w_over_l),
                    micrometres(gate.process.width_nm(gate.total_w_over_l)),
                    value(gate.total_drawn_width_um),
                    micrometres(gate.process.length_nm),
                    value(gate.mobility_ratio),
                    value(gate.reference_nmos_w_over_l),
                    value(gate.reference_pmos_w_over_l),
                ];
                for network in &gate.networks {
                    record.extend(network_cells(network));
                }
                record.push(gate.process.name.clone());
                match &gate.drawn {
                    Some(drawn) => record.extend([
                        value(drawn.largest_change_percent),
                        value(extremes(drawn.inputs.iter().map(|i| i.input_capacitance)).0),
                        value(drawn.parasitic_delay),
                        value(drawn.total_w_over_l),
                    ]),
                    None => record.extend(std::iter::repeat_n(String::new(), 4)),
                }
                record.push(gate.stages.len().max(1).to_string());
                record.push(gate.form.to_string());
                writer.write_record(&record)?;
            }
        }
        Rows::Devices => {
            writer.write_record(DEVICE_COLUMNS)?;
            for gate in gates {
                let unit_ff = gate.process.unit_capacitance_ff();
                for transistor in &gate.transistors {
                    writer.write_record([
                        gate.name.clone(),
                        value(gate.drive),
                        gate.method.name().to_string(),
                        transistor.name.clone(),
                        transistor.stage.clone(),
                        transistor.device_type.to_string(),
                        transistor.network.name().to_string(),
                        transistor.input.clone(),
                        transistor.drain.clone(),
                        transistor.source.clone(),
                        value(transistor.w_over_l),
                        value(transistor.width_um),
                        value(transistor.drawn_w_over_l),
                        value(transistor.drawn_width_um),
                        transistor.fingers.to_string(),
                        value(transistor.finger_width_um),
                        value(transistor.drawn_width_um * transistor.length_um),
                        // A device loads its input with its W/L in units of C (docs/model.md section 6).
                        value(transistor.w_over_l),
                        value(transistor.w_over_l * unit_ff),
                    ])?;
                }
            }
        }
        Rows::Inputs => {
            writer.write_record(INPUT_COLUMNS)?;
            for gate in gates {
                for (index, input) in gate.inputs.iter().enumerate() {
                    let drawn = gate.drawn.as_ref().map(|d| &d.inputs[index]);
                    writer.write_record([
                        gate.name.clone(),
                        value(gate.drive),
                        gate.method.name().to_string(),
                        input.name.clone(),
                        value(input.input_capacitance),
                        value(input.input_capacitance_ff),
                        value(input.logical_effort),
                        drawn.map(|d| value(d.input_capacitance)).unwrap_or_default(),
                        drawn.map(|d| value(d.logical_effort)).unwrap_or_default(),
                    ])?;
                }
            }
        }
        // A cell of several stages has a delays view of its own (its paths cross stages).
        Rows::Delays if reports.iter().any(|r| r.cell_delays.is_some()) => {
            super::cell_delays::write_csv(reports, &mut writer)?
        }
        Rows::Delays => super::delays::write_csv(reports, &mut writer)?,
    }
    writer.flush()?;
    Ok(())
}

/// Columns of the path listing, in order.
pub const PATH_COLUMNS: [&str; 8] =
    ["gate", "stage", "network", "rank", "resistance_r", "devices", "vector", "drawn_resistance_r"];

/// One row per listed path.
pub fn write_paths(gate: &CellFigures, listings: &[PathListing], out: &mut dyn Write) -> io::Result<()> {
    paths_view(gate, listings, out).map_err(into_io)
}

fn paths_view(gate: &CellFigures, listings: &[PathListing], out: &mut dyn Write) -> csv::Result<()> {
    let mut writer = csv::Writer::from_writer(out);
    writer.write_record(PATH_COLUMNS)?;
    for listing in listings {
        for (rank, path) in listing.paths.iter().enumerate() {
            writer.write_record([
                gate.name.clone(),
                listing.stage.clone(),
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
