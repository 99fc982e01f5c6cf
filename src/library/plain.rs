//! A plain `[[gate]]` table (bare keys, simple strings, booleans, plain numbers) read straight from
//! the file's text into the same spanned value the TOML reader builds; anything else is left to it.
//!
//! Syntax facts: TOML 1.0 specification (toml.io), from memory. Numbers are handed to the TOML
//! reader's own value parser (it offers no other way to make its integers and floats), one value or
//! one array at a time, so their kinds and text are the reader's by construction.

use std::borrow::Cow;
use std::ops::Range;

use toml::Spanned;
use toml::de::{DeTable, DeValue};

const HEADER: &str = "[[gate]]";

/// The gate table at `range` of `text` (a `[[gate]]` header and the lines under it) when every line
/// of it is plain; `None` when the TOML reader must read it. Places are places in `text`.
pub(crate) fn read(text: &str, range: Range<usize>) -> Option<Spanned<DeValue<'_>>> {
    let bytes = text.as_bytes();
    let end = range.end;
    let start = range.start;
    if !text.get(start..end)?.starts_with(HEADER) {
        return None;
    }
    let mut at = start + HEADER.len();
    at = rest_of_line(bytes, at, end)?;
    let mut table = DeTable::new();
    while at < end {
        at = skip_blank(bytes, at, end);
        if at >= end {
            break;
        }
        match bytes[at] {
            b'\n' => {
                at += 1;
                continue;
            }
            b'#' => {
                at = rest_of_line(bytes, at, end)?;
                continue;
            }
            _ => {}
        }
        let key_start = at;
        while at < end && is_bare(bytes[at]) {
            at += 1;
        }
        if at == key_start {
            return None;
        }
        let key_span = key_start..at;
        at = skip_blank(bytes, at, end);
        if at >= end || bytes[at] != b'=' {
            return None;
        }
        at = skip_blank(bytes, at + 1, end);
        let (value, after) = value(text, at, end)?;
        at = rest_of_line(bytes, after, end)?;
        let key = Spanned::new(key_span.clone(), Cow::Borrowed(&text[key_span]));
        if table.insert(key, value).is_some() {
            return None;
        }
    }
    Some(Spanned::new(start..start + HEADER.len(), DeValue::Table(table)))
}

fn is_bare(byte: u8) -> bool {
    byte.is_ascii_alphanumeric() || byte == b'_' || byte == b'-'
}

fn skip_blank(bytes: &[u8], mut at: usize, end: usize) -> usize {
    while at < end && (bytes[at] == b' ' || bytes[at] == b'\t') {
        at += 1;
    }
    at
}

/// Past optional blanks, an optional comment and the newline (or the end) from `at`.
fn rest_of_line(bytes: &[u8], at: usize, end: usize) -> Option<usize> {
    let mut at = skip_blank(bytes, at, end);
    if at < end && bytes[at] == b'#' {
        at += 1;
        while at < end && bytes[at] != b'\n' {
            if is_control(bytes[at]) {
                return None;
            }
            at += 1;
        }
    }
    match bytes.get(at) {
        _ if at >= end => Some(end),
        Some(b'\n') => Some(at + 1),
        _ => None,
    }
}

/// Control characters (tab included) and DEL: left to the TOML reader wherever they appear.
fn is_control(byte: u8) -> bool {
    byte < 0x20 || byte == 0x7f
}

/// The plain value starting at `at` and where it ends.
fn value(text: &str, at: usize, end: usize) -> Option<(Spanned<DeValue<'_>>, usize)> {
    let bytes = text.as_bytes();
    let first = *bytes.get(at).filter(|_| at < end)?;
    match first {
        b'"' | b'\'' => {
            if bytes.get(at + 1) == Some(&first) && bytes.get(at + 2) == Some(&first) {
                return None;
            }
            let mut close = at + 1;
            while close < end && bytes[close] != first {
                // A literal string keeps a backslash as it is; a basic one may escape with it.
                if is_control(bytes[close]) || (first == b'"' && bytes[close] == b'\\') {
                    return None;
                }
                close += 1;
            }
            if close >= end {
                return None;
            }
            let string = DeValue::String(Cow::Borrowed(&text[at + 1..close]));
            Some((Spanned::new(at..close + 1, string), close + 1))
        }
        b't' | b'f' => {
            let word = if first == b't' { "true" } else { "false" };
            let after = at + word.len();
            if after > end || &text[at..after] != word || bytes.get(after).is_some_and(|b| is_bare(*b)) {
                return None;
            }
            Some((Spanned::new(at..after, DeValue::Boolean(first == b't')), after))
        }
        b'[' => {
            let mut at_item = skip_blank(bytes, at + 1, end);
            let mut close = None;
            while at_item < end {
                if bytes[at_item] == b']' {
                    close = Some(at_item);
                    break;
                }
                at_item = skip_blank(bytes, number_end(bytes, at_item, end)?, end);
                match bytes.get(at_item).filter(|_| at_item < end) {
                    Some(b',') => at_item = skip_blank(bytes, at_item + 1, end),
                    Some(b']') => {
                        close = Some(at_item);
                        break;
                    }
                    _ => return None,
                }
            }
            let after = close? + 1;
            Some((parsed(text, at..after)?, after))
        }
        _ => {
            let after = number_end(bytes, at, end)?;
            Some((parsed(text, at..after)?, after))
        }
    }
}

/// The end of a plain decimal number at `at`: `[+-]?(0|[1-9][0-9]*)(\.[0-9]+)?`, followed by
/// neither a bare-key character nor a dot.
fn number_end(bytes: &[u8], mut at: usize, end: usize) -> Option<usize> {
    let digit = |at: usize| at < end && bytes[at].is_ascii_digit();
    if at < end && (bytes[at] == b'+' || bytes[at] == b'-') {
        at += 1;
    }
    if !digit(at) {
        return None;
    }
    if bytes[at] == b'0' {
        at += 1;
    } else {
        while digit(at) {
            at += 1;
        }
    }
    if at < end && bytes[at] == b'.' {
        at += 1;
        if !digit(at) {
            return None;
        }
        while digit(at) {
            at += 1;
        }
    }
    if at < end && (is_bare(bytes[at]) || bytes[at] == b'.') {
        return None;
    }
    Some(at)
}

/// The number or array of numbers at `span` read by the TOML reader's value parser, its places moved
/// into the file; `None` if the reader finds anything amiss or makes something else of it.
fn parsed(text: &str, span: Range<usize>) -> Option<Spanned<DeValue<'_>>> {
    let value = DeValue::parse(&text[span.clone()]).ok()?;
    if value.span() != (0..span.len()) {
        return None;
    }
    let numbers = |item: &Spanned<DeValue<'_>>| matches!(item.get_ref(), DeValue::Integer(_) | DeValue::Float(_));
    let plain = match value.get_ref() {
        DeValue::Array(items) => items.iter().all(numbers),
        _ => numbers(&value),
    };
    plain.then(|| super::table::shifted(value, span.start))
}

#[cfg(test)]
mod tests;
