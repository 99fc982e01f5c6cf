//! SPICE netlists: each gate as a `.subckt` with standard MOSFET lines and drawn W and L.
//!
//! `.subckt NAME <inputs in order of first appearance> <output> vdd vss`; NMOS bulk on `vss`,
//! PMOS bulk on `vdd`. Widths are the snapped, folded ones: `W=` is the width of one finger and
//! the standard multiplicity `m=` the number of fingers.

use std::io::{self, Write};

use crate::figures::{CellFigures, Transistor};
use crate::network::NetworkKind;
use crate::number;
use crate::process::Process;

/// A length in nm as a SPICE value in micrometres (`1.5u`), by the one rule of every number
/// ([`crate::number`]): a width on a 1 pm grid has at most 10 significant digits up to 10 mm.
pub fn micrometres(nanometres: f64) -> String {
    let mut text = String::new();
    push_micrometres(nanometres, &mut text);
    text
}

fn push_micrometres(nanometres: f64, out: &mut String) {
    number::push(out, nanometres / 1000.0);
    out.push('u');
}

/// One `.subckt` per gate, with a header comment.
pub fn write_library<'a>(
    gates: impl IntoIterator<Item = &'a CellFigures>,
    process: &Process,
    out: &mut dyn Write,
) -> io::Result<()> {
    let mut text = Vec::new();
    push_header(process, &mut text);
    for gate in gates {
        text.push(b'\n');
        push_subcircuit(gate, process, &mut text);
    }
    out.write_all(&text)
}

/// The library's header comment, appended to `out`.
pub fn push_header(process: &Process, out: &mut Vec<u8>) {
    out.extend_from_slice(b"* widthwise: static CMOS gates sized against a reference inverter\n* process: ");
    out.extend_from_slice(process.name.as_bytes());
    out.extend_from_slice(b"; first-order estimates: sign off with the foundry's models and rules\n");
}

/// One gate's `.subckt ... .ends`.
pub fn write_subcircuit(gate: &CellFigures, process: &Process, out: &mut dyn Write) -> io::Result<()> {
    let mut text = Vec::new();
    push_subcircuit(gate, process, &mut text);
    out.write_all(&text)
}

/// One gate's `.subckt ... .ends`, appended to `out`.
pub fn push_subcircuit(gate: &CellFigures, process: &Process, out: &mut Vec<u8>) {
    let mut template = super::Template::default();
    push_unnamed_subcircuit(gate, process, &mut template.text, &mut template.holes);
    template.fill(gate.name.as_bytes(), out);
}

/// One gate's `.subckt ... .ends` without its name, appended to `out`, with the places in `out`
/// where the name goes (the comment, `.subckt` and `.ends`) appended to `holes`: the text a
/// variant shares with every other of the same cell.
pub fn push_unnamed_subcircuit(gate: &CellFigures, process: &Process, out: &mut Vec<u8>, holes: &mut Vec<usize>) {
    let mut text = String::with_capacity(128 + 64 * gate.transistors.len());
    let base = out.len();
    text.push_str("* ");
    holes.push(base + text.len());
    for part in [": ", &gate.output, " = ", &gate.expression, "\n* "] {
        text.push_str(part);
    }
    text.push_str(&super::sizing_line(gate));
    text.push_str("\n.subckt ");
    holes.push(base + text.len());
    for input in &gate.inputs {
        text.push(' ');
        text.push_str(&input.name);
    }
    for part in [" ", &gate.output, " vdd vss\n"] {
        text.push_str(part);
    }
    // The devices of a gate share their length: its text is made once.
    let mut length = (f64::NAN, String::new());
    for transistor in &gate.transistors {
        if transistor.length_um.to_bits() != length.0.to_bits() {
            length = (transistor.length_um, micrometres(transistor.length_um * 1000.0));
        }
        let (bulk, model) = bulk_and_model(transistor, [&process.nmos_model, &process.pmos_model]);
        let nodes = [&transistor.drain[..], &transistor.input, &transistor.source, bulk];
        let width = transistor.finger_width_um * 1000.0;
        push_mosfet_line(&transistor.name, nodes, model, width, &length.1, transistor.fingers, &mut text);
        text.push('\n');
    }
    text.push_str(".ends ");
    holes.push(base + text.len());
    text.push('\n');
    out.extend_from_slice(text.as_bytes());
}

/// A transistor's bulk node and model: `models` names the NMOS and PMOS models.
fn bulk_and_model<'m>(transistor: &Transistor, models: [&'m str; 2]) -> (&'static str, &'m str) {
    match transistor.network {
        NetworkKind::PullDown => ("vss", models[0]),
        NetworkKind::PullUp => ("vdd", models[1]),
    }
}

/// One transistor's MOSFET line with its drawn sizes; `models` names the NMOS and PMOS models.
pub fn transistor_line(transistor: &Transistor, models: [&str; 2]) -> String {
    let (bulk, model) = bulk_and_model(transistor, models);
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
    let mut line = String::new();
    push_mosfet_line(name, nodes, model, finger_nm, &micrometres(length_nm), fingers, &mut line);
    line
}

/// [`mosfet_line`] appended to `out`, its length's text (`1u`) given.
fn push_mosfet_line(
    name: &str,
    nodes: [&str; 4],
    model: &str,
    finger_nm: f64,
    length: &str,
    fingers: usize,
    out: &mut String,
) {
    out.push_str(name);
    for node in nodes {
        out.push(' ');
        out.push_str(node);
    }
    for part in [" ", model, " W="] {
        out.push_str(part);
    }
    push_micrometres(finger_nm, out);
    for part in [" L=", length, " m="] {
        out.push_str(part);
    }
    out.push_str(number::decimal_digits(fingers as u64, &mut [0; 20]));
}
