//! Summary tables for batches: one aligned row per gate, device or input, with the columns people
//! read first (the CSV views have every column). Rows are added chunk by chunk and kept as text
//! only, so a long batch costs a few bytes per cell, not a sized gate per row.

use std::collections::HashMap;
use std::io::{self, Write};

use super::{Rows, number};
use crate::figures::{CellFigures, NamedCell};

/// Columns of the gates summary, in order.
pub const GATE_SUMMARY_COLUMNS: [&str; 13] = [
    "gate",
    "expression",
    "drive",
    "method",
    "transistors",
    "area um2",
    "total W/L",
    "max C in",
    "max g",
    "min g",
    "p",
    "pull-down R",
    "pull-up R",
];

/// Columns of the devices summary, in order.
pub const DEVICE_SUMMARY_COLUMNS: [&str; 10] =
    ["gate", "device", "type", "input", "drain", "source", "W/L", "drawn W um", "fingers", "area um2"];

/// Columns of the inputs summary, in order.
pub const INPUT_SUMMARY_COLUMNS: [&str; 5] = ["gate", "input", "C in", "C in fF", "g"];

/// Longest expression shown in full; longer ones are cut with `...` (the CSV has them whole).
pub const EXPRESSION_WIDTH: usize = 40;

/// The columns of a view.
pub fn columns(rows: Rows) -> &'static [&'static str] {
    match rows {
        Rows::Gates => &GATE_SUMMARY_COLUMNS,
        Rows::Devices => &DEVICE_SUMMARY_COLUMNS,
        Rows::Inputs => &INPUT_SUMMARY_COLUMNS,
        // Delays are a view of `size --delays`; the batch refuses it before sizing anything.
        Rows::Delays => &[],
    }
}

/// A table being filled: every cell's text in one buffer, and each column's width so far.
#[derive(Debug, Clone)]
pub struct SummaryTable {
    rows: Rows,
    /// Every cell's text, one after another (whole UTF-8 texts, so each cell is one).
    text: Vec<u8>,
    /// The length of each cell in `text`, in bytes, in order; a row has `widths.len()` cells. (A
    /// cell is a name, a number or a word of a library file, which is at most 64 MiB.)
    lengths: Vec<u32>,
    widths: Vec<usize>,
    /// Where the rows of a shared cell are (its first cell, where its text starts, how many rows),
    /// by its id: a variant's rows copied from an earlier variant's but for the name.
    shared: HashMap<u64, (usize, usize, usize)>,
}

/// Most shared cells whose rows' places the table keeps (a few words each); past it they are
/// forgotten and the next variants' rows made again.
const KEPT_CELLS: usize = 4096;

/// A cell's length as kept: no cell comes near 4 GiB (see [`SummaryTable`]'s lengths).
fn length(bytes: usize) -> u32 {
    u32::try_from(bytes).unwrap_or(u32::MAX)
}

fn shortened(expression: &str) -> String {
    if expression.chars().count() <= EXPRESSION_WIDTH {
        expression.to_string()
    } else {
        let cut: String = expression.chars().take(EXPRESSION_WIDTH - 3).collect();
        format!("{cut}...")
    }
}

impl SummaryTable {
    /// An empty table of `rows` (the header row only).
    pub fn new(rows: Rows) -> SummaryTable {
        let header = columns(rows);
        let mut table = SummaryTable {
            rows,
            text: Vec::new(),
            lengths: Vec::new(),
            widths: vec![0; header.len()],
            shared: HashMap::new(),
        };
        table.push(header.iter().map(|c| c.to_string()));
        table
    }

    fn push(&mut self, cells: impl IntoIterator<Item = String>) {
        for (column, cell) in cells.into_iter().enumerate() {
            self.widths[column] = self.widths[column].max(cell.chars().count());
            self.text.extend_from_slice(cell.as_bytes());
            self.lengths.push(length(cell.len()));
        }
    }

    /// Add the rows of these gates.
    pub fn add<'a>(&mut self, gates: impl IntoIterator<Item = &'a CellFigures>) {
        for gate in gates {
            self.add_gate(&gate.name, gate);
        }
    }

    /// Add the rows of a batch's variants, each under its own name: a shared cell's rows made once
    /// and copied for its other variants.
    pub fn add_named(&mut self, cells: &[NamedCell]) {
        let columns = self.widths.len();
        for cell in cells {
            let id = cell.shared.id();
            if let Some(&(first, start, count)) = self.shared.get(&id) {
                let mut at = start;
                for row in 0..count {
                    let cells = first + row * columns..first + (row + 1) * columns;
                    self.widths[0] = self.widths[0].max(cell.name.chars().count());
                    self.text.extend_from_slice(cell.name.as_bytes());
                    self.lengths.push(length(cell.name.len()));
                    at += self.lengths[cells.start] as usize;
                    for index in cells.start + 1..cells.end {
                        let size = self.lengths[index];
                        self.text.extend_from_within(at..at + size as usize);
                        self.lengths.push(size);
                        at += size as usize;
                    }
                }
                continue;
            }
            let (first, start) = (self.lengths.len(), self.text.len());
            self.add_gate(&cell.name, cell.shared.figures());
            if self.shared.len() >= KEPT_CELLS {
                self.shared.clear();
            }
            self.shared.insert(id, (first, start, (self.lengths.len() - first) / columns));
        }
    }

    /// Add the rows of `gate` under `name`.
    fn add_gate(&mut self, name: &str, gate: &CellFigures) {
        match self.rows {
            Rows::Delays => {}
            Rows::Gates => {
                let efforts = gate.inputs.iter().map(|i| i.logical_effort);
                let most_effort = efforts.clone().fold(f64::NEG_INFINITY, f64::max);
                let least_effort = efforts.fold(f64::INFINITY, f64::min);
                let most_c = gate.inputs.iter().map(|i| i.input_capacitance).fold(f64::NEG_INFINITY, f64::max);
                self.push([
                    name.to_string(),
                    shortened(&gate.expression),
                    number(gate.drive),
                    gate.method.name().to_string(),
                    gate.transistor_count.to_string(),
                    number(gate.area_um2),
                    number(gate.total_w_over_l),
                    number(most_c),
                    number(most_effort),
                    number(least_effort),
                    number(gate.parasitic_delay),
                    number(gate.networks[0].worst_resistance),
                    number(gate.networks[1].worst_resistance),
                ]);
            }
            Rows::Devices => {
                for transistor in &gate.transistors {
                    self.push([
                        name.to_string(),
                        transistor.name.clone(),
                        transistor.device_type.to_string(),
                        transistor.input.clone(),
                        transistor.drain.clone(),
                        transistor.source.clone(),
                        number(transistor.w_over_l),
                        number(transistor.drawn_width_um),
                        transistor.fingers.to_string(),
                        number(transistor.drawn_width_um * transistor.length_um),
                    ]);
                }
            }
            Rows::Inputs => {
                for input in &gate.inputs {
                    self.push([
                        name.to_string(),
                        input.name.clone(),
                        number(input.input_capacitance),
                        number(input.input_capacitance_ff),
                        number(input.logical_effort),
                    ]);
                }
            }
        }
    }

    /// Rows added, the header not counted.
    pub fn len(&self) -> usize {
        self.lengths.len() / self.widths.len() - 1
    }

    /// Whether only the header is there.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// A line saying what the units are.
    pub fn legend(&self) -> &'static str {
        match self.rows {
            Rows::Gates => {
                "units: area = drawn W x L summed over the devices, um^2 (channels only: no diffusion, spacing or \
                 wiring);\nW/L relative to the unit NMOS; C in: the largest input capacitance, in unit-NMOS gate \
                 capacitances;\ng: logical effort, largest and least over the inputs, and p: parasitic delay, both \
                 against the\nreference inverter; R: the worst path, in unit-NMOS on-resistances"
            }
            Rows::Devices => "units: W/L relative to the unit NMOS, width in um, area = drawn W x L in um^2",
            Rows::Delays => "",
            Rows::Inputs => {
                "units: C in, input capacitance in unit-NMOS gate capacitances and in fF; g, logical effort against \
                 the reference inverter"
            }
        }
    }

    /// Write the table, columns aligned, two spaces of indent.
    pub fn write(&self, out: &mut dyn Write) -> io::Result<()> {
        let columns = self.widths.len();
        let mut line = String::new();
        let mut start = 0;
        for row in self.lengths.chunks(columns) {
            line.clear();
            line.push_str("  ");
            for (column, &size) in row.iter().enumerate() {
                let end = start + size as usize;
                let cell = std::str::from_utf8(&self.text[start..end]).unwrap_or_default();
                start = end;
                line.push_str(cell);
                if column + 1 < columns {
                    let pad = self.widths[column] - cell.chars().count() + 2;
                    line.extend(std::iter::repeat_n(' ', pad));
                }
            }
            writeln!(out, "{}", line.trim_end())?;
        }
        Ok(())
    }
}

/// Write gates as one summary table.
pub fn write_summary<'a>(
    gates: impl IntoIterator<Item = &'a CellFigures>,
    rows: Rows,
    out: &mut dyn Write,
) -> io::Result<()> {
    let mut table = SummaryTable::new(rows);
    table.add(gates);
    table.write(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::size_text;
    use crate::sizing::{Method, Plan};

    #[test]
    fn columns_line_up() {
        let plan = Plan::new(Method::LongestPath, 2.0, 1.0, None);
        let gates: Vec<CellFigures> =
            ["nand2", "aoi21"].iter().map(|text| CellFigures::of(&size_text(text, &plan).unwrap())).collect();
        let mut out = Vec::new();
        write_summary(&gates, Rows::Gates, &mut out).unwrap();
        let text = String::from_utf8(out).unwrap();
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines.len(), 3);
        let column = lines[0].find("drive").unwrap();
        assert_eq!(&lines[1][column..column + 1], "1");
        let cells = |line: &str| line.split_whitespace().map(str::to_string).collect::<Vec<String>>();
        let header: Vec<&str> = lines[0].split("  ").map(str::trim).filter(|c| !c.is_empty()).collect();
        assert_eq!(header, GATE_SUMMARY_COLUMNS);
        let column = |name: &str| GATE_SUMMARY_COLUMNS.iter().position(|c| *c == name).unwrap();
        // Every column but the expression is one word of the row (the expression of nand2 is "!(a & b)").
        let row = |line: &str| {
            let mut found = cells(line);
            let expression_words = found.len() + 1 - GATE_SUMMARY_COLUMNS.len();
            let joined = found.drain(1..1 + expression_words).collect::<Vec<_>>().join(" ");
            found.insert(1, joined);
            found
        };
        // NAND2 at mu = 2: C in 4, g = 4/3 on both inputs, p = 2 (common practice, no source)
        let nand2 = row(lines[1]);
        assert_eq!((nand2[column("max C in")].as_str(), nand2[column("p")].as_str()), ("4", "2"), "{text}");
        assert_eq!(nand2[column("max g")], "1.333333333", "{text}");
        assert_eq!(nand2[column("min g")], "1.333333333", "{text}");
        // AOI21: g = 2, 2, 5/3 (Weste & Harris, logical-effort table; from memory): the largest and least
        let aoi21 = row(lines[2]);
        assert_eq!((aoi21[column("max g")].as_str(), aoi21[column("min g")].as_str()), ("2", "1.666666667"));
        // Area of NAND2 on the built-in process (L = 1 um): four devices of W 2 um, 8 um^2 (W x L summed).
        assert_eq!(nand2[column("area um2")], "8", "{text}");
    }

    #[test]
    fn long_expressions_are_cut() {
        let long = "a".repeat(100);
        assert_eq!(shortened(&long).chars().count(), EXPRESSION_WIDTH);
        assert!(shortened(&long).ends_with("..."));
    }
}
