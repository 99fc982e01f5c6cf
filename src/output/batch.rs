//! A library's sized variants written as they come, chunk by chunk, in any format: a CSV header
//! once, one JSON object (the process once, then an array with a compact object per variant, one
//! per line), one SPICE library, or (the one view that waits for the end, to align its columns) a
//! summary table under a heading. JSON and SPICE are put together in a buffer and written on in
//! large pieces; the CSV goes through one `csv` writer for the whole library.

use std::io::{self, Write};

use super::calibration::CalibratedReport;
use super::summary::SummaryTable;
use serde::Serialize;

use super::csv::CsvView;
use super::{CellReport, Format, Kept, Rows, json, number, spice};
use crate::figures::{CellFigures, NamedCell};
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
    process: &'a Process,
    sink: Sink<'a>,
    /// Whether a variant was written (the JSON separators depend on it).
    written: bool,
}

/// Where each format keeps what it writes.
enum Sink<'a> {
    /// One CSV view for the whole library: its header once, before the first row.
    Csv(Box<CsvView<&'a mut dyn Write>>),
    /// JSON or SPICE: a chunk's text put together in `buffer`, then written to `out` in one piece;
    /// the text of each shared cell without its name kept by its id, for its other variants.
    /// (`name`: a variant's name as a JSON string.)
    Text { format: Format, out: &'a mut dyn Write, buffer: Vec<u8>, json: Option<JsonGates>, kept: Kept, name: Vec<u8> },
    /// The table's rows and calibration sections, kept until the end.
    Table { out: &'a mut dyn Write, table: SummaryTable, sections: Vec<u8> },
}

impl<'a> BatchWriter<'a> {
    /// Start writing `format` (`rows` for the table and the CSV) of gates drawn in `process` to
    /// `out`: what comes before the first gate is written now (the CSV header waits for the first
    /// row, or the end).
    pub fn start(format: Format, rows: Rows, process: &'a Process, out: &'a mut dyn Write) -> io::Result<Self> {
        let sink = match format {
            Format::Csv => Sink::Csv(Box::new(CsvView::new(out, rows))),
            Format::Table => Sink::Table { out, table: SummaryTable::new(rows), sections: Vec::new() },
            Format::Json | Format::Spice => {
                let mut buffer = Vec::with_capacity(BUFFER_BYTES);
                let json = match format {
                    // One object: the process once, then the gates' array, one compact gate object
                    // per line (a library is read by scripts, and a line per variant keeps it
                    // greppable).
                    Format::Json => Some(JsonGates::start(process, &mut buffer)?),
                    _ => {
                        spice::push_header(process, &mut buffer);
                        None
                    }
                };
                out.write_all(&buffer)?;
                buffer.clear();
                Sink::Text { format, out, buffer, json, kept: Kept::default(), name: Vec::new() }
            }
        };
        Ok(BatchWriter { process, sink, written: false })
    }

    /// Write (or, for the table, keep) a chunk of a batch's variants, each under its own name: what
    /// a shared cell writes is made once, for the first of its variants, and written under the
    /// others' names as it is.
    pub fn write(&mut self, chunk: &[NamedCell]) -> io::Result<()> {
        match &mut self.sink {
            Sink::Csv(view) => view.write_named(chunk)?,
            Sink::Table { table, .. } => table.add_named(chunk),
            Sink::Text { out, buffer, json, kept, name, .. } => {
                for (index, cell) in chunk.iter().enumerate() {
                    let first = !self.written && index == 0;
                    if cell.is_own() {
                        // The variant the cell was sized for comes first: its text as it is.
                        match json {
                            Some(json) => json.push(&Flat { figures: cell.shared.figures() }, first, buffer)?,
                            None => {
                                buffer.push(b'\n');
                                spice::push_subcircuit(cell.shared.figures(), self.process, buffer);
                            }
                        }
                    } else {
                        let template = kept.of(&cell.shared, |shared, text, holes| match json {
                            Some(json) => json.unnamed(shared.figures(), text, holes),
                            None => {
                                spice::push_unnamed_subcircuit(shared.figures(), self.process, text, holes);
                                Ok(())
                            }
                        })?;
                        match json {
                            Some(_) => {
                                buffer.extend_from_slice(if first { b"\n" } else { b",\n" });
                                name.clear();
                                json::write_compact(&cell.name, &mut *name)?;
                                template.fill(name, buffer);
                            }
                            None => {
                                buffer.push(b'\n');
                                template.fill(cell.name.as_bytes(), buffer);
                            }
                        }
                    }
                    if buffer.len() >= BUFFER_BYTES {
                        out.write_all(buffer)?;
                        buffer.clear();
                    }
                }
                out.write_all(buffer)?;
                buffer.clear();
            }
        }
        self.written |= !chunk.is_empty();
        Ok(())
    }

    /// Write (or, for the table, keep) calibrated variants, at their calibrated sizes: JSON with
    /// each one's `calibration` object, SPICE with its comment line of ratios ahead of the
    /// subcircuit, the table's calibration sections after the table; CSV carries the sizes.
    pub fn write_calibrated(&mut self, cells: &[CalibratedReport]) -> io::Result<()> {
        for cell in cells {
            match &mut self.sink {
                Sink::Text { format: Format::Json, out, buffer, json: Some(json), .. } => {
                    json.push(cell, !self.written, buffer)?;
                    out.write_all(buffer)?;
                    buffer.clear();
                    self.written = true;
                }
                Sink::Text { out, buffer, .. } => {
                    buffer.push(b'\n');
                    super::calibration::write_comment(cell, buffer)?;
                    spice::push_subcircuit(&cell.report.figures, self.process, buffer);
                    out.write_all(buffer)?;
                    buffer.clear();
                    self.written = true;
                }
                Sink::Table { sections, .. } => {
                    writeln!(sections)?;
                    super::calibration::write_section(&cell.calibration, &cell.report.figures.name, sections)?;
                    self.write_reports(std::slice::from_ref(&cell.report))?;
                }
                Sink::Csv(_) => self.write_reports(std::slice::from_ref(&cell.report))?,
            }
        }
        Ok(())
    }

    /// Hand on what is written so far, so that each variant shows as it completes.
    pub fn flush(&mut self) -> io::Result<()> {
        match &mut self.sink {
            Sink::Csv(view) => view.flush(),
            Sink::Text { out, .. } | Sink::Table { out, .. } => out.flush(),
        }
    }

    fn write_reports(&mut self, chunk: &[CellReport]) -> io::Result<()> {
        match &mut self.sink {
            Sink::Csv(view) => view.write(chunk.iter().map(|r| &r.figures))?,
            Sink::Text { out, buffer, json, .. } => {
                for (index, gate) in chunk.iter().enumerate() {
                    match json {
                        Some(json) => json.push(gate, !self.written && index == 0, buffer)?,
                        None => {
                            buffer.push(b'\n');
                            spice::push_subcircuit(&gate.figures, self.process, buffer);
                        }
                    }
                    if buffer.len() >= BUFFER_BYTES {
                        out.write_all(buffer)?;
                        buffer.clear();
                    }
                }
                out.write_all(buffer)?;
                buffer.clear();
            }
            Sink::Table { table, .. } => table.add(chunk.iter().map(|g| &g.figures)),
        }
        self.written |= !chunk.is_empty();
        Ok(())
    }

    /// Write what comes after the last gate: a CSV header if no gate was written, the JSON
    /// document's end, or the whole table under its heading.
    pub fn finish(self, heading: &Heading<'_>) -> io::Result<()> {
        match self.sink {
            Sink::Csv(mut view) => {
                view.header();
                view.flush()
            }
            Sink::Text { json: Some(_), out, .. } => out.write_all(JsonGates::end(self.written)),
            Sink::Text { .. } => Ok(()),
            Sink::Table { out, table, sections } => {
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
                writeln!(out, "{line}")?;
                writeln!(out, "process: {}; mobility ratio {}", self.process.name, number(heading.mobility_ratio))?;
                writeln!(out, "{}\n", table.legend())?;
                table.write(out)?;
                out.write_all(&sections)
            }
        }
    }
}

/// A gate's figures as a batch writes them: the object of a [`super::CellReport`] without delays.
#[derive(Serialize)]
struct Flat<'a> {
    #[serde(flatten)]
    figures: &'a CellFigures,
}

/// Bytes of JSON or SPICE put together before they are written on.
const BUFFER_BYTES: usize = 1 << 16;

/// The library's JSON: `{"process":{...},"gates":[` first, one gate object per line without its
/// `process` (the library's, written once), `]}` at the end.
struct JsonGates {
    /// `,"process":{...}` as a gate's object carries it, cut out of each gate.
    process_entry: Vec<u8>,
}

impl JsonGates {
    /// Put the document's start in `buffer`.
    fn start(process: &Process, buffer: &mut Vec<u8>) -> io::Result<JsonGates> {
        let mut entry = b",\"process\":".to_vec();
        json::write_compact(process, &mut entry)?;
        buffer.extend_from_slice(b"{\"process\":");
        buffer.extend_from_slice(&entry[b",\"process\":".len()..]);
        buffer.extend_from_slice(b",\"gates\":[");
        Ok(JsonGates { process_entry: entry })
    }

    /// Put a gate's object in `buffer` on a line of its own, after a separator unless it is the
    /// `first`, without the process entry where it is the library's.
    fn push<T: Serialize>(&self, gate: &T, first: bool, buffer: &mut Vec<u8>) -> io::Result<()> {
        buffer.extend_from_slice(if first { b"\n" } else { b",\n" });
        self.object(gate, buffer)
    }

    /// A gate's object without its name's value, appended to `text`, with the place in `text`
    /// where the name goes (its JSON string) appended to `holes`: the figures write `name` first,
    /// so it follows `{"name":`. Where it does not (never so), the whole object, no place.
    fn unnamed(&self, figures: &CellFigures, text: &mut Vec<u8>, holes: &mut Vec<usize>) -> io::Result<()> {
        let start = text.len();
        self.object(&Flat { figures }, text)?;
        let mut named = b"{\"name\":".to_vec();
        let key = named.len();
        json::write_compact(&figures.name, &mut named)?;
        if text[start..].starts_with(&named) {
            text.drain(start + key..start + named.len());
            holes.push(start + key);
        }
        Ok(())
    }

    /// A gate's object, appended to `buffer`, without the process entry where it is the library's.
    fn object<T: Serialize>(&self, gate: &T, buffer: &mut Vec<u8>) -> io::Result<()> {
        let start = buffer.len();
        json::write_compact(gate, &mut *buffer)?;
        let object = &buffer[start..];
        let entry = &self.process_entry[..];
        // The figures write `process` last, so in a sized variant it ends the object; after it come
        // only the keys of a calibrated variant (none of them `process`). A gate in another process
        // would keep its own.
        let at = if object.len() > entry.len() && object[..object.len() - 1].ends_with(entry) {
            Some(object.len() - 1 - entry.len())
        } else {
            object.windows(entry.len()).rposition(|window| window == entry)
        };
        if let Some(at) = at {
            buffer.drain(start + at..start + at + entry.len());
        }
        Ok(())
    }

    /// The document's end.
    fn end(written: bool) -> &'static [u8] {
        if written { b"\n]}\n" } else { b"]}\n" }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

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
        let json = written(Format::Json);
        assert!(json.starts_with("{\"process\":{\"name\":") && json.ends_with("},\"gates\":[]}\n"), "{json}");
        assert!(written(Format::Table).starts_with("lib.toml: 0 of 0 gates sized, 0 variants\n"));
    }

    #[test]
    fn a_gate_s_process_is_cut_where_it_is_the_library_s() {
        #[derive(serde::Serialize)]
        struct Gate<'p> {
            name: &'static str,
            process: &'p Process,
            #[serde(skip_serializing_if = "Option::is_none")]
            calibration: Option<[u8; 2]>,
        }
        let process = Process::default();
        let other = Process { name: "other".to_string(), ..Process::default() };
        let mut buffer = Vec::new();
        let json = JsonGates::start(&process, &mut buffer).unwrap();
        for (index, (process, calibration)) in
            [(&process, None), (&process, Some([1, 2])), (&other, None)].into_iter().enumerate()
        {
            json.push(&Gate { name: "g", process, calibration }, index == 0, &mut buffer).unwrap();
        }
        buffer.extend_from_slice(JsonGates::end(true));
        let text = String::from_utf8(buffer).unwrap();
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(&lines[1..], [r#"{"name":"g"},"#, r#"{"name":"g","calibration":[1,2]},"#, lines[3], "]}"]);
        assert!(lines[3].starts_with(r#"{"name":"g","process":{"name":"other","#), "{}", lines[3]);
        let document: serde_json::Value = serde_json::from_str(&text).unwrap();
        assert_eq!(document["process"]["name"], process.name.as_str());
    }
}
