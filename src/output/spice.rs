//! SPICE netlists: each gate as a `.subckt` with standard MOSFET lines and physical W and L.
//!
//! `.subckt NAME <inputs in order of first appearance> <output> vdd vss`; NMOS bulk on `vss`,
//! PMOS bulk on `vdd`.

use std::io::{self, Write};

use crate::gate::SizedGate;
use crate::network::NetworkKind;
use crate::process::Process;

use super::number;

/// A length in nm as a SPICE value in micrometres (`1.5u`), to 0.1 pm.
pub fn micrometres(nanometres: f64) -> String {
    let text = format!("{:.4}", nanometres / 1000.0);
    let text = text.trim_end_matches('0').trim_end_matches('.');
    format!("{text}u")
}

/// One `.subckt` per gate, with a header comment.
pub fn write_library(gates: &[SizedGate], process: &Process, out: &mut dyn Write) -> io::Result<()> {
    writeln!(out, "* widthwise: static CMOS gates sized against a reference inverter")?;
    writeln!(out, "* process: {}; first-order estimates: sign off with the foundry's models and rules", process.name)?;
    for gate in gates {
        writeln!(out)?;
        write_subcircuit(gate, process, out)?;
    }
    Ok(())
}

/// One gate's `.subckt ... .ends`.
pub fn write_subcircuit(gate: &SizedGate, process: &Process, out: &mut dyn Write) -> io::Result<()> {
    writeln!(out, "* {}: {} = {}", gate.name, gate.output, gate.expression)?;
    writeln!(
        out,
        "* {} sizing, mobility ratio {}, drive {}",
        gate.method.name(),
        number(gate.mobility_ratio),
        number(gate.drive)
    )?;
    let inputs: Vec<&str> = gate.inputs.iter().map(|i| i.name.as_str()).collect();
    writeln!(out, ".subckt {} {} {} vdd vss", gate.name, inputs.join(" "), gate.output)?;
    for transistor in &gate.transistors {
        let (bulk, model) = match transistor.network {
            NetworkKind::PullDown => ("vss", &process.nmos_model),
            NetworkKind::PullUp => ("vdd", &process.pmos_model),
        };
        writeln!(
            out,
            "{} {} {} {} {} {} W={} L={}",
            transistor.name,
            transistor.drain,
            transistor.input,
            transistor.source,
            bulk,
            model,
            micrometres(process.width_nm(transistor.w_over_l)),
            micrometres(process.length_nm),
        )?;
    }
    writeln!(out, ".ends {}", gate.name)
}
