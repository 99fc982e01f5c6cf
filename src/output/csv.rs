//! CSV for spreadsheets: one header row and a fixed set of columns per view (gates, devices,
//! inputs), quoted as RFC 4180 asks. The views of many rows are put together here, each cell
//! quoted as the `csv` crate quotes (tested against it); the path listing and the delays go
//! through the crate.

use std::io::{self, Write};

use crate::cell::SizedCell;
use crate::figures::{self, CellFigures, NamedCell, NetworkFigures, PathListing, SharedCell, Transistor};
use crate::number::Texts;
use crate::process::Process;
use crate::sizing::Method;

use super::{CellReport, Kept, Rows};

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

/// The largest and least of some numbers (NaN-free: figures of a sized gate).
fn extremes(values: impl Iterator<Item = f64>) -> (f64, f64) {
    values.fold((f64::NEG_INFINITY, f64::INFINITY), |(most, least), v| (most.max(v), least.min(v)))
}

/// Write the gates in the chosen view.
pub fn write_gates(gates: &[CellReport], rows: Rows, out: &mut dyn Write) -> io::Result<()> {
    if rows == Rows::Delays {
        let mut writer = csv::Writer::from_writer(out);
        // A cell of several stages has a delays view of its own (its paths cross stages).
        if gates.iter().any(|r| r.cell_delays.is_some()) {
            super::cell_delays::write_csv(gates, &mut writer).map_err(into_io)?;
        } else {
            super::delays::write_csv(gates, &mut writer).map_err(into_io)?;
        }
        return writer.flush();
    }
    let mut view = CsvView::new(out, rows);
    view.write(gates.iter().map(|r| &r.figures))?;
    view.flush()
}

/// The `csv` crate wraps a failed write in its own error; give back the write's own error, so a
/// reader that closes the pipe early is seen as such.
pub(crate) fn into_io(error: csv::Error) -> io::Error {
    match error.into_kind() {
        csv::ErrorKind::Io(error) => error,
        other => io::Error::other(format!("{other:?}")),
    }
}

/// Whether a cell must be quoted (RFC 4180): it holds a comma, a double quote or a line break.
fn needs_quotes(cell: &[u8]) -> bool {
    cell.iter().any(|&byte| matches!(byte, b',' | b'"' | b'\n' | b'\r'))
}

/// Append `cell` to `text`, in double quotes where it needs them (see [`Lines`]).
fn push_cell(cell: &[u8], text: &mut Vec<u8>) {
    if needs_quotes(cell) {
        text.push(b'"');
        for &byte in cell {
            if byte == b'"' {
                text.push(b'"');
            }
            text.push(byte);
        }
        text.push(b'"');
    } else {
        text.extend_from_slice(cell);
    }
}

/// CSV text being put together, record by record, cell by cell, quoted as the `csv` crate quotes
/// (RFC 4180, quotes where needed): a cell that holds a comma, a double quote or a line break in
/// double quotes, its double quotes doubled; records end with `\n`. Numbers and counts never need
/// quotes. (The crate would also quote a record of one empty cell, which no view has.)
#[derive(Debug, Default)]
struct Lines {
    text: Vec<u8>,
    /// Whether the record being written has a cell yet.
    open: bool,
    /// Where the name cell goes in each record started without one (see [`Lines::start`]).
    holes: Vec<usize>,
}

impl Lines {
    fn separator(&mut self) {
        if self.open {
            self.text.push(b',');
        }
        self.open = true;
    }

    fn cell(&mut self, cell: &[u8]) {
        self.separator();
        push_cell(cell, &mut self.text);
    }

    fn text(&mut self, text: &str) {
        self.cell(text.as_bytes());
    }

    fn empty(&mut self) {
        self.separator();
    }

    /// A number by the one rule, its text made once while `numbers` holds the gate's.
    fn number(&mut self, numbers: &mut Texts, value: f64) {
        self.separator();
        self.text.extend_from_slice(numbers.of(value));
    }

    /// A count, as an integer.
    fn count(&mut self, count: usize) {
        self.separator();
        self.text.extend_from_slice(crate::number::decimal_digits(count as u64, &mut [0; 20]).as_bytes());
    }

    /// Cells written already (a variant's first cells, the same on each of its rows).
    fn cells_from(&mut self, written: &[u8]) {
        self.text.extend_from_slice(written);
        self.open = true;
    }

    fn end(&mut self) {
        self.text.push(b'\n');
        self.open = false;
    }

    /// Start a record with `name`'s cell; without one, as if a cell were written, its place kept
    /// (a record's text after its name, kept for a variant's other names).
    fn start(&mut self, name: Option<&str>) {
        match name {
            Some(name) => self.text(name),
            None => {
                self.holes.push(self.text.len());
                self.open = true;
            }
        }
    }

    fn record<'c>(&mut self, cells: impl IntoIterator<Item = &'c str>) {
        for cell in cells {
            self.text(cell);
        }
        self.end();
    }

    /// Target, worst path, its vector, best case, path count, drawn worst path and its error.
    fn network(&mut self, numbers: &mut Texts, network: &NetworkFigures) {
        self.number(numbers, network.target_resistance);
        self.number(numbers, network.worst_resistance);
        match &network.worst_vector {
            Some(vector) => self.text(&vector.to_string()),
            None => self.empty(),
        }
        self.number(numbers, network.best_resistance);
        self.text(&network.path_count);
        self.number(numbers, network.drawn_worst_resistance);
        self.number(numbers, network.drawn_error_percent);
    }
}

/// Bytes of CSV put together before they are written on.
const BUFFER_BYTES: usize = 1 << 16;

/// A CSV view written gate by gate (a whole library through one): the header first, then each
/// gate's rows, put together in a buffer and written on in large pieces; each number's text made
/// once per gate (a gate's devices repeat its drive, widths and capacitances) and the cells every
/// row of a variant starts with once per variant. The rows of a cell several variants share
/// ([`NamedCell`]) are made once and written under each variant's name.
pub struct CsvView<W: Write> {
    out: W,
    rows: Rows,
    /// Whether the header is written.
    started: bool,
    lines: Lines,
    numbers: Texts,
    /// The cells a variant's rows start with after its name (its drive and method).
    prefix: Lines,
    /// The rows of shared cells without their names, by their ids.
    kept: Kept,
    /// A variant's name cell, quoted where it needs to be.
    name: Vec<u8>,
}

impl<W: Write> CsvView<W> {
    /// A view of `rows` (gates, devices or inputs: delays are written by their own writers) to
    /// `out`; nothing is written yet.
    pub fn new(out: W, rows: Rows) -> CsvView<W> {
        CsvView {
            out,
            rows,
            started: false,
            lines: Lines::default(),
            numbers: Texts::default(),
            prefix: Lines::default(),
            kept: Kept::default(),
            name: Vec::new(),
        }
    }

    /// Put the header row in, unless it is in already.
    pub fn header(&mut self) {
        if !self.started {
            self.started = true;
            match self.rows {
                Rows::Gates => self.lines.record(GATE_COLUMNS),
                Rows::Devices => self.lines.record(DEVICE_COLUMNS),
                Rows::Inputs => self.lines.record(INPUT_COLUMNS),
                Rows::Delays => {}
            }
        }
    }

    /// Write the rows of `gates` (the header first, if it is not written yet).
    pub fn write<'g>(&mut self, gates: impl IntoIterator<Item = &'g CellFigures>) -> io::Result<()> {
        self.header();
        for gate in gates {
            self.numbers.clear();
            let (lines, numbers, prefix) = (&mut self.lines, &mut self.numbers, &mut self.prefix);
            match self.rows {
                Rows::Gates => gate_row(lines, numbers, Some(&gate.name), gate),
                Rows::Devices => {
                    let of = (gate.drive, gate.method, &*gate.process);
                    device_rows(lines, numbers, prefix, Some(&gate.name), of, &gate.transistors)
                }
                Rows::Inputs => input_rows(lines, numbers, Some(&gate.name), gate),
                Rows::Delays => {}
            }
            self.hand_on()?;
        }
        Ok(())
    }

    /// Write the rows of sized cells: the devices view from their transistors alone, the others
    /// from their figures.
    pub fn write_cells(&mut self, cells: &[SizedCell]) -> io::Result<()> {
        if self.rows != Rows::Devices {
            let figures: Vec<CellFigures> = cells.iter().map(CellFigures::of).collect();
            return self.write(&figures);
        }
        self.header();
        for cell in cells {
            self.numbers.clear();
            let plan = &cell.plan;
            let of = (plan.drive, plan.method, &*plan.process);
            let transistors = figures::transistors(cell);
            device_rows(&mut self.lines, &mut self.numbers, &mut self.prefix, Some(&cell.name), of, &transistors);
            self.hand_on()?;
        }
        Ok(())
    }

    /// Write the rows of a batch's variants, each under its own name: the rows of a shared cell
    /// made once (the devices view from its transistors alone, the others from its figures) and
    /// kept while the view keeps them.
    pub fn write_named(&mut self, cells: &[NamedCell]) -> io::Result<()> {
        self.header();
        for cell in cells {
            if cell.is_own() {
                // The variant the cell was sized for comes first: its rows as they are (most cells
                // of a library with many distinct variants have no other).
                self.own_rows(cell);
                self.hand_on()?;
                continue;
            }
            let (rows, numbers, prefix) = (self.rows, &mut self.numbers, &mut self.prefix);
            let rows_unnamed = self.kept.of(&cell.shared, |shared, text, holes| {
                numbers.clear();
                let mut lines = Lines::default();
                view_rows(rows, &mut lines, numbers, prefix, None, shared);
                (*text, *holes) = (lines.text, lines.holes);
                Ok(())
            })?;
            self.name.clear();
            push_cell(cell.name.as_bytes(), &mut self.name);
            rows_unnamed.fill(&self.name, &mut self.lines.text);
            self.hand_on()?;
        }
        Ok(())
    }

    /// The rows of the variant a shared cell was sized for, under its name.
    fn own_rows(&mut self, cell: &NamedCell) {
        self.numbers.clear();
        let name = Some(cell.name.as_str());
        view_rows(self.rows, &mut self.lines, &mut self.numbers, &mut self.prefix, name, &cell.shared);
    }

    /// Write what is put together on, if it is a large piece.
    fn hand_on(&mut self) -> io::Result<()> {
        if self.lines.text.len() >= BUFFER_BYTES {
            self.out.write_all(&self.lines.text)?;
            self.lines.text.clear();
        }
        Ok(())
    }

    /// Write everything put together on, and flush the writer underneath.
    pub fn flush(&mut self) -> io::Result<()> {
        self.out.write_all(&self.lines.text)?;
        self.lines.text.clear();
        self.out.flush()
    }
}

/// The rows of one view of `shared`, named `name` (none: the name cell left out).
fn view_rows(
    rows: Rows,
    lines: &mut Lines,
    numbers: &mut Texts,
    prefix: &mut Lines,
    name: Option<&str>,
    shared: &SharedCell,
) {
    match rows {
        Rows::Gates => gate_row(lines, numbers, name, shared.figures()),
        Rows::Inputs => input_rows(lines, numbers, name, shared.figures()),
        Rows::Devices => {
            let plan = &shared.cell().plan;
            let of = (plan.drive, plan.method, &*plan.process);
            let made;
            let transistors = if shared.has_figures() {
                &shared.figures().transistors
            } else {
                made = figures::transistors(shared.cell());
                &made
            };
            device_rows(lines, numbers, prefix, name, of, transistors);
        }
        Rows::Delays => {}
    }
}

/// A gate's row, after its name's cell where `name` is `None`.
fn gate_row(lines: &mut Lines, numbers: &mut Texts, name: Option<&str>, gate: &CellFigures) {
    let (most_effort, least_effort) = extremes(gate.inputs.iter().map(|i| i.logical_effort));
    let most_c = extremes(gate.inputs.iter().map(|i| i.input_capacitance)).0;
    let most_ff = extremes(gate.inputs.iter().map(|i| i.input_capacitance_ff)).0;
    lines.start(name);
    lines.text(&gate.expression);
    lines.text(&gate.output);
    lines.number(numbers, gate.drive);
    lines.text(gate.method.name());
    lines.count(gate.transistor_count);
    for value in [
        gate.area_um2,
        most_c,
        most_ff,
        most_effort,
        least_effort,
        gate.parasitic_delay,
        gate.total_w_over_l,
        gate.process.width_nm(gate.total_w_over_l) / 1000.0,
        gate.total_drawn_width_um,
        gate.process.length_nm / 1000.0,
        gate.mobility_ratio,
        gate.reference_nmos_w_over_l,
        gate.reference_pmos_w_over_l,
    ] {
        lines.number(numbers, value);
    }
    for network in &gate.networks {
        lines.network(numbers, network);
    }
    lines.text(&gate.process.name);
    match &gate.drawn {
        Some(drawn) => {
            for value in [
                drawn.largest_change_percent,
                extremes(drawn.inputs.iter().map(|i| i.input_capacitance)).0,
                drawn.parasitic_delay,
                drawn.total_w_over_l,
            ] {
                lines.number(numbers, value);
            }
        }
        None => (0..4).for_each(|_| lines.empty()),
    }
    lines.count(gate.stages.len().max(1));
    lines.text(gate.form);
    lines.end();
}

/// The devices of the variant `name` (each row after its name's cell where it is `None`) at
/// `drive`, sized by `method` in `process`.
fn device_rows(
    lines: &mut Lines,
    numbers: &mut Texts,
    prefix: &mut Lines,
    name: Option<&str>,
    (drive, method, process): (f64, Method, &Process),
    transistors: &[Transistor],
) {
    let unit_ff = process.unit_capacitance_ff();
    prefix.text.clear();
    prefix.open = true;
    prefix.number(numbers, drive);
    prefix.text(method.name());
    for transistor in transistors {
        lines.start(name);
        lines.cells_from(&prefix.text);
        lines.text(&transistor.name);
        lines.text(&transistor.stage);
        lines.text(transistor.device_type);
        lines.text(transistor.network.name());
        lines.text(&transistor.input);
        lines.text(&transistor.drain);
        lines.text(&transistor.source);
        lines.number(numbers, transistor.w_over_l);
        lines.number(numbers, transistor.width_um);
        lines.number(numbers, transistor.drawn_w_over_l);
        lines.number(numbers, transistor.drawn_width_um);
        lines.count(transistor.fingers);
        lines.number(numbers, transistor.finger_width_um);
        lines.number(numbers, transistor.drawn_width_um * transistor.length_um);
        // A device loads its input with its W/L in units of C (docs/model.md section 6).
        lines.number(numbers, transistor.w_over_l);
        lines.number(numbers, transistor.w_over_l * unit_ff);
        lines.end();
    }
}

/// A gate's input rows, each after its name's cell where `name` is `None`.
fn input_rows(lines: &mut Lines, numbers: &mut Texts, name: Option<&str>, gate: &CellFigures) {
    for (index, input) in gate.inputs.iter().enumerate() {
        let drawn = gate.drawn.as_ref().map(|d| &d.inputs[index]);
        lines.start(name);
        lines.number(numbers, gate.drive);
        lines.text(gate.method.name());
        lines.text(&input.name);
        lines.number(numbers, input.input_capacitance);
        lines.number(numbers, input.input_capacitance_ff);
        lines.number(numbers, input.logical_effort);
        match drawn {
            Some(drawn) => {
                lines.number(numbers, drawn.input_capacitance);
                lines.number(numbers, drawn.logical_effort);
            }
            None => {
                lines.empty();
                lines.empty();
            }
        }
        lines.end();
    }
}

impl<W: Write> Drop for CsvView<W> {
    /// What is put together is written on even if the view is not flushed (as the `csv` crate's
    /// writer does), an error then ignored.
    fn drop(&mut self) {
        let _ = self.out.write_all(&self.lines.text);
    }
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

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// Records as the `csv` crate writes them (RFC 4180, quotes where needed).
    fn by_the_crate(records: &[Vec<String>]) -> Vec<u8> {
        let mut writer = csv::WriterBuilder::new().flexible(true).from_writer(Vec::new());
        for record in records {
            writer.write_record(record).unwrap();
        }
        writer.into_inner().unwrap()
    }

    proptest! {
        #[test]
        fn cells_are_quoted_as_the_csv_crate_quotes_them(
            records in prop::collection::vec(prop::collection::vec("[a-c ,\"\r\n=+é-]{0,6}", 2..6), 0..8)
        ) {
            let mut lines = Lines::default();
            for record in &records {
                lines.record(record.iter().map(String::as_str));
            }
            prop_assert_eq!(lines.text, by_the_crate(&records));
        }
    }

    #[test]
    fn numbers_counts_and_empty_cells_need_no_quotes() {
        let mut lines = Lines::default();
        let mut numbers = Texts::default();
        lines.text("g,1");
        lines.number(&mut numbers, -1.5e-12);
        lines.count(1200);
        lines.empty();
        lines.number(&mut numbers, f64::NEG_INFINITY);
        lines.end();
        assert_eq!(String::from_utf8(lines.text).unwrap(), "\"g,1\",-1.5e-12,1200,,-inf\n");
    }

    #[test]
    fn a_library_s_rows_are_the_rows_of_its_gates_one_by_one() {
        // Written gate by gate through one view, or a gate at a time alone: the same rows.
        use crate::sizing::{Method, Plan};
        let plans = [Plan::new(Method::LongestPath, 2.0, 1.0, None), Plan::new(Method::MIN_AREA, 2.5, 1.37, None)];
        let cells: Vec<SizedCell> = ["nand2", "aoi21", "!(a & (b | c))", "xor2"]
            .iter()
            .enumerate()
            .map(|(index, text)| crate::size_text(text, &plans[index % 2]).unwrap())
            .collect();
        for rows in [Rows::Gates, Rows::Devices, Rows::Inputs] {
            let mut together = Vec::new();
            let mut view = CsvView::new(&mut together, rows);
            view.write_cells(&cells[..1]).unwrap();
            view.write_cells(&[]).unwrap();
            view.write_cells(&cells[1..]).unwrap();
            view.flush().unwrap();
            drop(view);
            let reports: Vec<CellReport> = cells.iter().map(CellReport::of).collect();
            let mut alone = Vec::new();
            write_gates(&reports, rows, &mut alone).unwrap();
            assert_eq!(String::from_utf8(together).unwrap(), String::from_utf8(alone).unwrap(), "{rows:?}");
        }
    }
}
