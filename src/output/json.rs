//! JSON: one object per gate (an array for several), keys as documented in the README.

use std::io::{self, Write};

use crate::gate::{PathListing, SizedGate};

/// One gate as an object; several as an array of objects.
pub fn write_gates(gates: &[SizedGate], out: &mut dyn Write) -> io::Result<()> {
    match gates {
        [gate] => serde_json::to_writer_pretty(&mut *out, gate)?,
        _ => serde_json::to_writer_pretty(&mut *out, gates)?,
    }
    writeln!(out)
}

#[derive(serde::Serialize)]
struct Paths<'a> {
    name: &'a str,
    expression: &'a str,
    networks: &'a [PathListing],
}

/// The path listing as `{ name, expression, networks: [{ network, path_count, paths: [...] }] }`.
pub fn write_paths(gate: &SizedGate, listings: &[PathListing], out: &mut dyn Write) -> io::Result<()> {
    let paths = Paths { name: &gate.name, expression: &gate.expression, networks: listings };
    serde_json::to_writer_pretty(&mut *out, &paths)?;
    writeln!(out)
}
