//! One gate table of a library file parsed on its own by the TOML reader, and its places moved back
//! into the whole file, so that every message about it points at the file's line and column.

use std::ops::Range;

use toml::Spanned;
use toml::de::{DeTable, DeValue};

use crate::diagnostic::{Span, toml_error_place};
use crate::names;

/// A gate table the TOML reader refuses: what it says, where in the file, and the gate's name where
/// the reader could still make it out.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Unreadable {
    pub(crate) message: String,
    pub(crate) span: Option<Span>,
    pub(crate) name: Option<String>,
}

/// The gate table at `range` of `text`: a `[[gate]]` table with what follows its header, or (with
/// `inline`) one inline table of a `gate = [...]` list. Its value's places are places in `text`.
pub(crate) fn read(text: &str, range: Range<usize>, inline: bool) -> Result<Spanned<DeValue<'_>>, Unreadable> {
    if !inline && let Some(value) = super::plain::read(text, range.clone()) {
        return Ok(value);
    }
    read_by_reader(text, range, inline)
}

/// [`read`] by the TOML reader alone, whatever the table holds.
pub(crate) fn read_by_reader(
    text: &str,
    range: Range<usize>,
    inline: bool,
) -> Result<Spanned<DeValue<'_>>, Unreadable> {
    let piece = &text[range.clone()];
    let (value, errors) = if inline {
        DeValue::parse_recoverable(piece)
    } else {
        let (mut root, errors) = DeTable::parse_recoverable(piece);
        // The piece holds one `[[gate]]` header and the tables under it: `gate` is a list of one.
        let gate = root.get_mut().remove("gate");
        let first = gate.and_then(|gate| match gate.into_inner() {
            DeValue::Array(array) => array.into_iter().next(),
            _ => None,
        });
        let first = first.unwrap_or_else(|| Spanned::new(0..piece.len(), DeValue::Table(DeTable::new())));
        (first, errors)
    };
    let value = shifted(value, range.start);
    match errors.into_iter().next() {
        None => Ok(value),
        Some(error) => {
            let span = error.span().map(Span::from);
            let (message, span) = toml_error_place(piece, error.message(), span);
            let name =
                value.get_ref().get("name").and_then(|n| n.get_ref().as_str()).filter(|n| names::is_identifier(n));
            Err(Unreadable {
                message,
                span: span.map(|span| Span::new(span.start + range.start, span.end + range.start)),
                name: name.map(str::to_string),
            })
        }
    }
}

/// `value` with every place in it (its own, its keys', its items') moved `offset` bytes on.
pub(crate) fn shifted(value: Spanned<DeValue<'_>>, offset: usize) -> Spanned<DeValue<'_>> {
    if offset == 0 {
        return value;
    }
    let span = value.span();
    let inner = match value.into_inner() {
        DeValue::Array(mut array) => {
            for item in array.iter_mut() {
                let taken = std::mem::replace(item, Spanned::new(0..0, DeValue::Boolean(false)));
                *item = shifted(taken, offset);
            }
            DeValue::Array(array)
        }
        DeValue::Table(table) => {
            let mut moved = DeTable::with_capacity(table.len());
            for (key, value) in table {
                let key_span = key.span();
                moved.insert(
                    Spanned::new(key_span.start + offset..key_span.end + offset, key.into_inner()),
                    shifted(value, offset),
                );
            }
            DeValue::Table(moved)
        }
        other => other,
    };
    Spanned::new(span.start + offset..span.end + offset, inner)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn places_are_places_in_the_whole_file() {
        let text = "[defaults]\ndrive = 1\n[[gate]]\nname = \"a\"\ndrive = [1, 2]\n";
        let start = text.find("[[gate]]").unwrap();
        let gate = read(text, start..text.len(), false).unwrap();
        let name = gate.get_ref().get("name").unwrap();
        assert_eq!(&text[name.span()], "\"a\"");
        let drive = gate.get_ref().get("drive").unwrap();
        assert_eq!(&text[drive.get_ref().as_array().unwrap()[1].span()], "2");
        let keys: Vec<&str> = gate.get_ref().as_table().unwrap().keys().map(|k| &text[k.span()]).collect();
        assert_eq!(keys, ["drive", "name"]);
    }

    #[test]
    fn a_reader_error_names_the_gate_and_its_place() {
        let text = "[[gate]]\nname = \"ok\"\n[[gate]]\nname = \"bad\"\nexpr = \"nand2\" x\n";
        let start = text.rfind("[[gate]]").unwrap();
        let error = read(text, start..text.len(), false).unwrap_err();
        assert_eq!(error.name.as_deref(), Some("bad"));
        let span = error.span.unwrap();
        assert_eq!(&text[span.start..], "x\n", "{error:?}");
    }

    #[test]
    fn inline_tables_are_read_alone() {
        let text = "gate = [{ name = \"a\", expr = \"inv\" }]\n";
        let start = text.find('{').unwrap();
        let end = text.find('}').unwrap() + 1;
        let gate = read(text, start..end, true).unwrap();
        assert_eq!(&text[gate.get_ref().get("expr").unwrap().span()], "\"inv\"");
    }
}
