//! Writers: the same sized gates as a readable table, CSV, JSON or a SPICE netlist, to any `Write`.

pub mod batch;
pub mod calibration;
pub mod cell_delays;
pub mod csv;
pub mod deck;
pub mod delays;
pub mod json;
pub mod measured;
pub mod plot;
pub mod schematic;
pub mod schematic_cell;
pub mod spice;
pub mod summary;
pub mod svg;
pub mod table;
pub mod tradeoff;
pub mod verify;
pub mod warnings;

use std::io::{self, Write};

use rustc_hash::FxHashMap;

use crate::cell::SizedCell;
use crate::figures::{CellFigures, PathListing, SharedCell};
use crate::timing::{CellTiming, DelayReport};

/// Output format, chosen once per run.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Format {
    /// A readable table.
    #[default]
    Table,
    /// Comma-separated values (RFC 4180), one header row.
    Csv,
    /// JSON.
    Json,
    /// A SPICE subcircuit per gate.
    Spice,
}

/// Which rows a CSV (or a library's table) has.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Rows {
    /// One row per sized gate.
    Gates,
    /// One row per transistor, with its input's and its gate's figures.
    #[default]
    Devices,
    /// One row per gate input.
    Inputs,
    /// One row per input and output edge: Elmore delays and the logical-effort view.
    Delays,
}

/// A sized cell as the writers show it: its figures and, where it was timed, its delay report.
#[derive(Debug, Clone, serde::Serialize)]
pub struct CellReport {
    /// Every figure of the cell.
    #[serde(flatten)]
    pub figures: CellFigures,
    /// Its delays, the methods side by side and the stack-order search, where asked for.
    #[serde(flatten)]
    pub delays: Option<DelayReport>,
    /// A cell of several stages: its delays through all its stages, where asked for (the same
    /// keys as a one-stage cell's delays, each delay with its stages).
    #[serde(flatten)]
    pub cell_delays: Option<CellTiming>,
}

impl CellReport {
    /// The report of `cell`, untimed.
    pub fn of(cell: &SizedCell) -> CellReport {
        CellReport { figures: CellFigures::of(cell), delays: None, cell_delays: None }
    }
}

/// Write sized gates in `format`.
pub fn write_gates(gates: &[CellReport], format: Format, rows: Rows, out: &mut dyn Write) -> io::Result<()> {
    match format {
        Format::Table => table::write_gates(gates, out),
        Format::Csv => csv::write_gates(gates, rows, out),
        Format::Json => json::write_gates(gates, out),
        // The library's header names the process the gates were drawn in.
        Format::Spice => match gates.first() {
            Some(first) => spice::write_library(gates.iter().map(|g| &g.figures), &first.figures.process, out),
            None => Ok(()),
        },
    }
}

/// Write path listings of one gate in `format` (SPICE has no form for them).
pub fn write_paths(
    gate: &CellFigures,
    listings: &[PathListing],
    format: Format,
    out: &mut dyn Write,
) -> io::Result<()> {
    match format {
        Format::Table | Format::Spice => table::write_paths(gate, listings, out),
        Format::Csv => csv::write_paths(gate, listings, out),
        Format::Json => json::write_paths(gate, listings, out),
    }
}

/// How a gate was sized, in one line for headers and comments: method, mobility ratio, drive and
/// the reference inverter at that drive.
pub fn sizing_line(gate: &CellFigures) -> String {
    format!(
        "{} sizing{}, mobility ratio {}, drive {}, reference inverter NMOS {} PMOS {} (W/L)",
        gate.method.name(),
        match (gate.worst_case, gate.method.sizes_by_delay()) {
            (crate::sizing::WorstCase::Vectors, false) => " against every input vector",
            (crate::sizing::WorstCase::Vectors, true) => " against every input vector (a local optimum)",
            _ => "",
        },
        number(gate.mobility_ratio),
        number(gate.drive),
        number(gate.reference_nmos_w_over_l),
        number(gate.reference_pmos_w_over_l),
    )
}

/// Every number of every writer, by the one rule ([`crate::number`]): at most ten significant
/// digits, trailing zeros dropped.
pub use crate::number::format as number;

/// What a shared cell writes without its name, and the places its name goes.
#[derive(Debug, Default)]
struct Template {
    text: Vec<u8>,
    holes: Vec<usize>,
}

impl Template {
    /// The text with `name` at each of its places, appended to `out`.
    fn fill(&self, name: &[u8], out: &mut Vec<u8>) {
        let mut start = 0;
        for &hole in &self.holes {
            out.extend_from_slice(&self.text[start..hole]);
            out.extend_from_slice(name);
            start = hole;
        }
        out.extend_from_slice(&self.text[start..]);
    }
}

/// Most shared cells whose text a batch writer keeps, and most bytes of it: past either, all of it
/// is dropped and made again as the variants come.
const KEPT_CELLS: usize = 256;
const KEPT_BYTES: usize = 8 << 20;

/// The templates of shared cells, by their ids (a batch writer's, for the variants after the first).
#[derive(Debug, Default)]
struct Kept {
    templates: FxHashMap<u64, Template>,
    bytes: usize,
}

impl Kept {
    /// The template of `shared`, made by `make` (text and places) the first time.
    fn of(
        &mut self,
        shared: &SharedCell,
        make: impl FnOnce(&SharedCell, &mut Vec<u8>, &mut Vec<usize>) -> io::Result<()>,
    ) -> io::Result<&Template> {
        let id = shared.id();
        if !self.templates.contains_key(&id) {
            let mut template = Template::default();
            make(shared, &mut template.text, &mut template.holes)?;
            if self.templates.len() >= KEPT_CELLS || self.bytes + template.text.len() > KEPT_BYTES {
                self.templates.clear();
                self.bytes = 0;
            }
            self.bytes += template.text.len();
            self.templates.insert(id, template);
        }
        Ok(&self.templates[&id])
    }
}
