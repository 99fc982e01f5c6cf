//! JSON: one object per gate (an array for several), keys as documented in the README. Every
//! number is written by the one rule of [`crate::number`], through [`Numbers`], a serde_json
//! formatter that passes everything else on.

use std::io::{self, Write};

use serde::Serialize;
use serde_json::ser::{CompactFormatter, Formatter, PrettyFormatter};

use super::CellReport;
use crate::figures::{CellFigures, PathListing};

/// A serde_json formatter that writes every float by [`crate::number::format`] and leaves the rest
/// to `F` (pretty or compact). Non-finite floats never reach it: serde_json writes them `null`.
pub struct Numbers<F>(pub F);

impl<F: Formatter> Formatter for Numbers<F> {
    fn write_f64<W: ?Sized + Write>(&mut self, writer: &mut W, value: f64) -> io::Result<()> {
        writer.write_all(crate::number::Text::new().of(value))
    }

    fn write_f32<W: ?Sized + Write>(&mut self, writer: &mut W, value: f32) -> io::Result<()> {
        self.write_f64(writer, f64::from(value))
    }

    fn begin_array<W: ?Sized + Write>(&mut self, writer: &mut W) -> io::Result<()> {
        self.0.begin_array(writer)
    }

    fn end_array<W: ?Sized + Write>(&mut self, writer: &mut W) -> io::Result<()> {
        self.0.end_array(writer)
    }

    fn begin_array_value<W: ?Sized + Write>(&mut self, writer: &mut W, first: bool) -> io::Result<()> {
        self.0.begin_array_value(writer, first)
    }

    fn end_array_value<W: ?Sized + Write>(&mut self, writer: &mut W) -> io::Result<()> {
        self.0.end_array_value(writer)
    }

    fn begin_object<W: ?Sized + Write>(&mut self, writer: &mut W) -> io::Result<()> {
        self.0.begin_object(writer)
    }

    fn end_object<W: ?Sized + Write>(&mut self, writer: &mut W) -> io::Result<()> {
        self.0.end_object(writer)
    }

    fn begin_object_key<W: ?Sized + Write>(&mut self, writer: &mut W, first: bool) -> io::Result<()> {
        self.0.begin_object_key(writer, first)
    }

    fn end_object_key<W: ?Sized + Write>(&mut self, writer: &mut W) -> io::Result<()> {
        self.0.end_object_key(writer)
    }

    fn begin_object_value<W: ?Sized + Write>(&mut self, writer: &mut W) -> io::Result<()> {
        self.0.begin_object_value(writer)
    }

    fn end_object_value<W: ?Sized + Write>(&mut self, writer: &mut W) -> io::Result<()> {
        self.0.end_object_value(writer)
    }
}

/// Write `value` as indented JSON, numbers by the one rule. serde_json writes a document in many
/// small pieces: it is put together in memory and handed on in one.
pub fn write_pretty<T: Serialize + ?Sized>(value: &T, out: &mut dyn Write) -> io::Result<()> {
    let mut text = Vec::new();
    let mut serializer = serde_json::Serializer::with_formatter(&mut text, Numbers(PrettyFormatter::new()));
    value.serialize(&mut serializer).map_err(io::Error::from)?;
    out.write_all(&text)
}

/// Write `value` as JSON on one line, numbers by the one rule, to a writer of the caller's type
/// (a buffer, written on in large pieces, where there are many values).
pub fn write_compact<T: Serialize + ?Sized, W: Write>(value: &T, out: W) -> io::Result<()> {
    let mut serializer = serde_json::Serializer::with_formatter(out, Numbers(CompactFormatter));
    value.serialize(&mut serializer).map_err(io::Error::from)
}

/// One gate as an object (with its process); several as an array of objects.
pub fn write_gates(gates: &[CellReport], out: &mut dyn Write) -> io::Result<()> {
    match gates {
        [gate] => write_pretty(gate, out)?,
        _ => write_pretty(gates, out)?,
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
pub fn write_paths(gate: &CellFigures, listings: &[PathListing], out: &mut dyn Write) -> io::Result<()> {
    let paths = Paths { name: &gate.name, expression: &gate.expression, networks: listings };
    write_pretty(&paths, out)?;
    writeln!(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn floats_follow_the_one_rule_and_the_rest_is_as_serde_json_writes_it() {
        let value = serde_json::json!({"a": [3.0240000000000005, 2.0, 1], "b": null, "c": "x"});
        let mut compact = Vec::new();
        write_compact(&value, &mut compact).unwrap();
        assert_eq!(String::from_utf8(compact).unwrap(), r#"{"a":[3.024,2,1],"b":null,"c":"x"}"#);
        let mut pretty = Vec::new();
        write_pretty(&value, &mut pretty).unwrap();
        let expected = serde_json::to_string_pretty(&serde_json::json!({"a": [3.024, 2, 1], "b": null, "c": "x"}));
        assert_eq!(String::from_utf8(pretty).unwrap(), expected.unwrap());
        let mut infinite = Vec::new();
        write_compact(&[f64::INFINITY], &mut infinite).unwrap();
        assert_eq!(infinite, b"[null]");
    }
}
