//! SPICE netlists: each gate as a `.subckt` with standard MOSFET lines and drawn W and L.
//!
//! `.subckt NAME <inputs in order of first appearance> <output> vdd vss`; NMOS bulk on `vss`,
//! PMOS bulk on `vdd`. Widths are the snapped, folded ones: `W=` is the width of one finger and
//! the standard multiplicity `m=` the number of fingers.

use std::io::{self, Write};

use crate::figures::{CellFigures, Transistor};
use crate::network::NetworkKind;
use crate::process::Process;

/// A length in nm as a SPICE value in micrometres (`1.5u`), by the one rule of every number
/// ([`crate::number`]): a width on a 1 pm grid has at most 10 significant digits up to 10 mm.
pub fn micrometres(nanometres: f64) -> String {
    format!("{}u", super::number(nanometres / 1000.0))
}

/// One `.subckt` per gate, with a header comment.
pub fn write_library<'a>(
    gates: impl IntoIterator<Item = &'a CellFigures>,
    process: &Process,
    out: &mut dyn Write,
) -> io::Result<()> {
    writeln!(out, "* widthwise: static CMOS gates sized against a reference inverter")?;
    writeln!(out, "* process: {}; first-order estimates: sign off with the foundry's models and rules", process.name)?;
    for gate in gates {
        writeln!(out)?;
        write_subcircuit(gate, process, out)?;
    }
    Ok(())
}

/// One gate's `.subckt ... .ends`.
pub fn write_subcircuit(gate: &CellFigures, process: &Process, out: &mut dyn Write) -> io::Result<()> {
    writeln!(out, "* {}: {} = {}", gate.name, gate.output, gate.expression)?;
    writeln!(out, "* {}", super::sizing_line(gate))?;
    let inputs: Vec<&str> = gate.inputs.iter().map(|i| i.name.as_str()).collect();
    writeln!(out, ".subckt {} {} {} vdd vss", gate.name, inputs.join(" "), gate.output)?;
    for transistor in &gate.transistors {
        writeln!(out, "{}", transistor_line(transistor, [&process.nmos_model, &process.pmos_model]))?;
    }
    writeln!(out, ".ends {}", gate.name)
}

/// One transistor's MOSFET line with its drawn sizes; `models` names the NMOS and PMOS models.
pub fn transistor_line(transistor: &Transistor, models: [&str; 2]) -> String {
    let (bulk, model) = match transistor.network {
        NetworkKind::PullDown => ("vss", models[0]),
        NetworkKind::PullUp => ("vdd", models[1]),
    };
    mosfet_line(
        &transistor.name,
        [&transistor.drain, &transistor.input, &transistor.source, bulk],
        model,
        transistor.finger_width_um * 1000.0,
        transistor.length_um * 1000.0,
        transistor.fingers,
    )
}

/// A MOSFET line: `NAME drain gate source bulk MODEL W=<finger> L=<length> m=<fingers>`.
pub fn mosfet_line(
    name: &str,
    nodes: [&str; 4],
    model: &str,
    finger_nm: f64,
    length_nm: f64,
    fingers: usize,
) -> String {
    format!("{name} {} {model} W={} L={} m={fingers}", nodes.join(" "), micrometres(finger_nm), micrometres(length_nm))
}
