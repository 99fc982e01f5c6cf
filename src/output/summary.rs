//! Summary tables for batches: one aligned row per gate, device or input, with the columns people
//! read first (the CSV views have every column). Rows are added chunk by chunk and kept as text
//! only, so a long batch costs a few bytes per cell, not a sized gate per row.

use std::io::{self, Write};

use super::{Rows, number};
use crate::gate::SizedGate;

/// Columns of the gates summary, in order.
pub const GATE_SUMMARY_COLUMNS: [&str; 11] = [
    "gate",
    "expression",
    "drive",
    "method",
    "transistors",
    "total W/L",
    "drawn W um",
    "pull-down R",
    "pull-up R",
    "parasitic delay",
    "logical effort",
];

/// Columns of the devices summary, in order.
pub const DEVICE_SUMMARY_COLUMNS: [&str; 8] =
    ["gate", "device", "type", "input", "drain", "source", "W/L", "drawn W um"];

/// Columns of the inputs summary, in order.
pub const INPUT_SUMMARY_COLUMNS: [&str; 4] = ["gate", "input", "input capacitance", "logical effort"];

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
    text: String,
    /// End of each cell in `text`; a row has `widths.len()` cells.
    ends: Vec<usize>,
    widths: Vec<usize>,
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
        let mut table = SummaryTable { rows, text: String::new(), ends: Vec::new(), widths: vec![0; header.len()] };
        table.push(header.iter().map(|c| c.to_string()));
        table
    }

    fn push(&mut self, cells: impl IntoIterator<Item = String>) {
        for (column, cell) in cells.into_iter().enumerate() {
            self.widths[column] = self.widths[column].max(cell.chars().count());
            self.text.push_str(&cell);
            self.ends.push(self.text.len());
        }
    }

    /// Add the rows of these gates.
    pub fn add(&mut self, gates: &[SizedGate]) {
        for gate in gates {
            match self.rows {
                Rows::Delays => {}
                Rows::Gates => {
                    let efforts: Vec<String> = gate.inputs.iter().map(|i| number(i.logical_effort)).collect();
                    self.push([
                        gate.name.clone(),
                        shortened(&gate.expression),
                        number(gate.drive),
                        gate.method.name().to_string(),
                        gate.transistor_count.to_string(),
                        number(gate.total_w_over_l),
                        number(gate.total_drawn_width_um),
                        number(gate.networks[0].worst_resistance),
                        number(gate.networks[1].worst_resistance),
                        number(gate.parasitic_delay),
                        efforts.join(" "),
                    ]);
                }
                Rows::Devices => {
                    for transistor in &gate.transistors {
                        self.push([
                            gate.name.clone(),
                            transistor.name.clone(),
                            transistor.device_type.to_string(),
                            transistor.input.clone(),
                            transistor.drain.clone(),
                            transistor.source.clone(),
                            number(transistor.w_over_l),
                            number(transistor.drawn_width_um),
                        ]);
                    }
                }
                Rows::Inputs => {
                    for input in &gate.inputs {
                        self.push([
                            gate.name.clone(),
                            input.name.clone(),
                            number(input.input_capacitance),
                            number(input.logical_effort),
                        ]);
                    }
                }
            }
        }
    }

    /// Rows added, the header not counted.
    pub fn len(&self) -> usize {
        self.ends.len() / self.widths.len() - 1
    }

    /// Whether only the header is there.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// A line saying what the units are.
    pub fn legend(&self) -> &'static str {
        match self.rows {
            Rows::Gates => {
                "units: W/L relative to the unit NMOS, width in um; R: worst path, in unit-NMOS on-resistances;\n\
                 parasitic delay and logical effort (per input, in input order) against the reference inverter"
            }
            Rows::Devices => "units: W/L relative to the unit NMOS, width in um",
            Rows::Delays => "",
            Rows::Inputs => {
                "units: input capacitance in unit-NMOS gate capacitances; logical effort against the reference \
                 inverter"
            }
        }
    }

    /// Write the table, columns aligned, two spaces of indent.
    pub fn write(&self, out: &mut dyn Write) -> io::Result<()> {
        let columns = self.widths.len();
        let mut line = String::new();
        let mut start = 0;
        for row in self.ends.chunks(columns) {
            line.clear();
            line.push_str("  ");
            for (column, &end) in row.iter().enumerate() {
                let cell = &self.text[start..end];
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
pub fn write_summary(gates: &[SizedGate], rows: Rows, out: &mut dyn Write) -> io::Result<()> {
    let mut table = SummaryTable::new(rows);
    table.add(gates);
    table.write(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::gate::GateOptions;
    use crate::size_text;
    use crate::sizing::{Method, SizingOptions};

    #[test]
    fn columns_line_up() {
        let options = GateOptions::new(SizingOptions::new(Method::LongestPath, 2.0, 1.0, None));
        let gates = vec![size_text("nand2", &options).unwrap(), size_text("aoi21", &options).unwrap()];
        let mut out = Vec::new();
        write_summary(&gates, Rows::Gates, &mut out).unwrap();
        let text = String::from_utf8(out).unwrap();
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines.len(), 3);
        let column = lines[0].find("drive").unwrap();
        assert_eq!(&lines[1][column..column + 1], "1");
        // NAND2 at mu = 2: total W/L 8, g = 4/3 per input (common practice, no source)
        assert!(lines[1].contains("1.333333333 1.333333333"), "{text}");
        // AOI21: g = 2, 2, 5/3 (Weste & Harris, logical-effort table; from memory)
        assert!(lines[2].ends_with("2 2 1.666666667"), "{text}");
    }

    #[test]
    fn long_expressions_are_cut() {
        let long = "a".repeat(100);
        assert_eq!(shortened(&long).chars().count(), EXPRESSION_WIDTH);
        assert!(shortened(&long).ends_with("..."));
    }
}
