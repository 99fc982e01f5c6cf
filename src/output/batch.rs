//! A library's sized variants written as they come, chunk by chunk, in any format: a CSV header
//! once, one JSON array with a compact object per line, one SPICE library, or (the one view that
//! waits for the end, to align its columns) a summary table under a heading.

use std::io::{self, Write};

use super::calibration::CalibratedReport;
use super::summary::SummaryTable;
use super::{CellReport, Format, Rows, csv, number, spice};
use crate::cell::SizedCell;
use crate::process::Process;

/// What the table's heading says about the run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Heading<'a> {
    /// The library file's name as messages give it.
    pub origin: &'a str,
    /// Gates in the file.
    pub gates: usize,
    /// Gates that could not be sized.
    pub failed: usize,
    /// Variants sized.
    pub variants: usize,
    /// The mobility ratio every gate was sized with.
    pub mobility_ratio: f64,
}

/// A writer of sized variants in one format, fed chunk by chunk.
pub struct BatchWriter<'a> {
    format: Format,
    rows: Rows,
    process: &'a Process,
    out: &'a mut dyn Write,
    /// Whether a chunk was written (the CSV header and the JSON separators depend on it).
    written: bool,
    /// The table's rows, kept until the end.
    table: Option<SummaryTable>,
    /// The table's calibration sections, written after it.
    sections: Vec<u8>,
}

impl<'a> BatchWriter<'a> {
    /// Start writing `format` (`rows` for the table and the CSV) of gates drawn in `process` to
    /// `out`: what comes before the first gate is written now.
    pub fn start(format: Format, rows: Rows, process: &'a Process, out: &'a mut dyn Write) -> io::Result<Self> {
        match format {
            // One array, one compact gate object per line: a library is read by scripts, and a line
            // per variant keeps it greppable.
            Format::Json => out.write_all(b"[")?,
            Format::Spice => spice::write_library([], process, out)?,
            Format::Csv | Format::Table => {}
        }
        let table = (format == Format::Table).then(|| SummaryTable::new(rows));
        Ok(BatchWriter { format, rows, process, out, written: false, table, sections: Vec::new() })
    }

    /// Write (or, for the table, keep) a chunk of sized variants.
    pub fn write(&mut self, chunk: &[SizedCell]) -> io::Result<()> {
        let chunk: Vec<CellReport> = chunk.iter().map(CellReport::of).collect();
        self.write_reports(&chunk)
    }

    /// Write (or, for the table, keep) calibrated variants, at their calibrated sizes: JSON with
    /// each one's `calibration` object, SPICE with its comment line of ratios ahead of the
    /// subcircuit, the table's calibration sections after the table; CSV carries the sizes.
    pub fn write_calibrated(&mut self, cells: &[CalibratedReport]) -> io::Result<()> {
        for cell in cells {
            match self.format {
                Format::Json => {
                    self.out.write_all(if self.written { b",\n" } else { b"\n" })?;
                    super::json::write_compact(cell, self.out)?;
                    self.written = true;
                }
                Format::Spice => {
                    writeln!(self.out)?;
                    super::calibration::write_comment(cell, self.out)?;
                    spice::write_subcircuit(&cell.report.figures, self.process, self.out)?;
                    self.written = true;
                }
                Format::Table => {
                    writeln!(self.sections)?;
                    super::calibration::write_section(
                        &cell.calibration,
                        &cell.report.figures.name,
                        &mut self.sections,
                    )?;
                    self.write_reports(std::slice::from_ref(&cell.report))?;
                }
                Format::Csv => self.write_reports(std::slice::from_ref(&cell.report))?,
            }
        }
        Ok(())
    }

    /// Hand on what is written so far, so that each variant shows as it completes.
    pub fn flush(&mut self) -> io::Result<()> {
        self.out.flush()
    }

    fn write_reports(&mut self, chunk: &[CellReport]) -> io::Result<()> {
        match self.format {
            Format::Csv if self.written => {
                csv::write_gates(chunk, self.rows, &mut SkipFirstLine { inner: &mut *self.out, skipping: true })?
            }
            Format::Csv => csv::write_gates(chunk, self.rows, self.out)?,
            Format::Json => {
                for (index, gate) in chunk.iter().enumerate() {
                    let first = !self.written && index == 0;
                    self.out.write_all(if first { b"\n" } else { b",\n" })?;
                    super::json::write_compact(gate, self.out)?;
                }
            }
            Format::Spice => {
                for gate in chunk {
                    writeln!(self.out)?;
                    spice::write_subcircuit(&gate.figures, self.process, self.out)?;
                }
            }
            Format::Table => {
                if let Some(table) = &mut self.table {
                    table.add(chunk.iter().map(|g| &g.figures));
                }
            }
        }
        self.written |= !chunk.is_empty();
        Ok(())
    }

    /// Write what comes after the last gate: a CSV header if no gate was written, the JSON array's
    /// end, or the whole table under its heading.
    pub fn finish(self, heading: &Heading<'_>) -> io::Result<()> {
        match self.format {
            Format::Csv if !self.written => csv::write_gates(&[], self.rows, self.out),
            Format::Csv | Format::Spice => Ok(()),
            Format::Json => self.out.write_all(if self.written { b"\n]\n" } else { b"]\n" }),
            Format::Table => {
                let mut line = format!(
                    "{}: {} of {} gates sized, {} variants",
                    heading.origin,
                    heading.gates - heading.failed,
                    heading.gates,
                    heading.variants
                );
                if heading.failed > 0 {
                    line.push_str(&format!("; {} could not be sized (errors on stderr)", heading.failed));
                }
                writeln!(self.out, "{line}")?;
                writeln!(
                    self.out,
                    "process: {}; mobility ratio {}",
                    self.process.name,
                    number(heading.mobility_ratio)
                )?;
                let table = self.table.unwrap_or_else(|| SummaryTable::new(self.rows));
                writeln!(self.out, "{}\n", table.legend())?;
                table.write(self.out)?;
                self.out.write_all(&self.sections)
            }
        }
    }
}

/// Passes everything on except the first line (a CSV header already written once).
struct SkipFirstLine<'a> {
    inner: &'a mut dyn Write,
    skipping: bool,
}

impl Write for SkipFirstLine<'_> {
    fn write(&mut self, buffer: &[u8]) -> io::Result<usize> {
        if !self.skipping {
            return self.inner.write(buffer);
        }
        match buffer.iter().position(|&b| b == b'\n') {
            None => Ok(buffer.len()),
            Some(end) => {
                self.skipping = false;
                self.inner.write_all(&buffer[end + 1..])?;
                Ok(buffer.len())
            }
        }
    }

    fn flush(&mut self) -> io::Result<()> {
        self.inner.flush()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn csv_header_is_skipped_once() {
        let mut out = Vec::new();
        let mut skip = SkipFirstLine { inner: &mut out, skipping: true };
        skip.write_all(b"a,b").unwrap();
        skip.write_all(b",c\n1,2,3\n").unwrap();
        skip.write_all(b"4,5,6\n").unwrap();
        assert_eq!(out, b"1,2,3\n4,5,6\n");
    }

    #[test]
    fn an_empty_library_is_a_header_an_empty_array_or_a_heading() {
        let process = Process::default();
        let heading = Heading { origin: "lib.toml", gates: 0, failed: 0, variants: 0, mobility_ratio: 2.0 };
        let written = |format| {
            let mut out = Vec::new();
            let writer = BatchWriter::start(format, Rows::Gates, &process, &mut out).unwrap();
            writer.finish(&heading).unwrap();
            String::from_utf8(out).unwrap()
        };
        assert!(written(Format::Csv).starts_with("gate,"), "{}", written(Format::Csv));
        assert_eq!(written(Format::Json), "[]\n");
        assert!(written(Format::Table).starts_with("lib.toml: 0 of 0 gates sized, 0 variants\n"));
    }
}
