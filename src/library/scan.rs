//! A light scanner over a library file's text that finds its top-level tables without building a
//! tree of the file: each `[[gate]]` table (with any `[gate.KEY]` or `[[gate.KEY]]` table under it)
//! and the rest (`process`, `[process]`, `[defaults]`, anything else). Each gate table is then
//! parsed on its own, so the file is never held as one tree. It knows what hides a header: basic
//! and literal strings (one line or several), comments and the brackets and braces of a value.

use std::ops::Range;

/// The library file cut at its top-level tables. Each piece runs from the start of its header's
/// line (or the file's start) to the start of the next piece's header line (or the file's end),
/// so the pieces are whole lines and, in order, the whole file.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub(crate) struct Layout {
    /// Each `[[gate]]` table, in file order.
    pub(crate) gates: Vec<Range<usize>>,
    /// Everything else, in file order: the text before the first header and every other table.
    pub(crate) others: Vec<Range<usize>>,
}

/// What a header line opens.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Opens {
    /// `[[gate]]`: a new gate table.
    Gate,
    /// A table under `gate` (`[gate.pins]`, `[[gate.pins]]`) or `[gate]`: part of the gate table
    /// it follows (where it follows none, part of the rest).
    UnderGate,
    /// Any other table, or a line that starts like a header and is not one.
    Other,
}

/// Which piece the scanner is in.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Piece {
    Gate,
    Other,
}

/// Cut `text` at its top-level tables.
pub(crate) fn scan(text: &str) -> Layout {
    let bytes = text.as_bytes();
    let mut layout = Layout::default();
    let (mut piece, mut start) = (Piece::Other, 0usize);
    let close = |layout: &mut Layout, piece: Piece, range: Range<usize>| {
        if range.is_empty() {
            return;
        }
        match piece {
            Piece::Gate => layout.gates.push(range),
            Piece::Other => match layout.others.last_mut() {
                Some(last) if last.end == range.start => last.end = range.end,
                _ => layout.others.push(range),
            },
        }
    };
    // Brackets and braces open in a value that runs over several lines.
    let mut depth = 0usize;
    let mut position = 0usize;
    while position < bytes.len() {
        let line = position;
        let first = skip_blanks(bytes, position);
        if bytes.get(first) == Some(&b'[') {
            // Within an open array a line may start with '[' (a nested array); only a header that
            // no value could be (bare keys that are not true, false, inf or nan) ends the value.
            let header = header(text, first);
            let opens = match header {
                Some((opens, bare)) if depth == 0 || bare => Some(opens),
                Some(_) => None,
                None if depth == 0 => Some(Opens::Other),
                None => None,
            };
            if let Some(opens) = opens {
                let next = match (opens, piece) {
                    (Opens::Gate, _) => Some(Piece::Gate),
                    (Opens::UnderGate, Piece::Gate) => None,
                    (Opens::UnderGate | Opens::Other, _) => Some(Piece::Other),
                };
                if let Some(next) = next
                    && (next == Piece::Gate || next != piece)
                {
                    close(&mut layout, piece, start..line);
                    (piece, start) = (next, line);
                }
                // The header's own brackets open nothing.
                let mut ignored = 0;
                position = end_of_line(bytes, first, &mut ignored);
                depth = 0;
                continue;
            }
        }
        position = end_of_line(bytes, first, &mut depth);
    }
    close(&mut layout, piece, start..bytes.len());
    layout
}

/// The first byte at or after `position` that is not a space or a tab.
fn skip_blanks(bytes: &[u8], mut position: usize) -> usize {
    while matches!(bytes.get(position), Some(b' ' | b'\t')) {
        position += 1;
    }
    position
}

/// Scan from `position` to just past the end of its line, through any string that runs over
/// several lines, counting the brackets and braces of values in `depth`.
fn end_of_line(bytes: &[u8], mut position: usize, depth: &mut usize) -> usize {
    while let Some(&byte) = bytes.get(position) {
        match byte {
            b'\n' => return position + 1,
            b'#' => {
                while bytes.get(position).is_some_and(|&b| b != b'\n') {
                    position += 1;
                }
            }
            b'"' | b'\'' => position = end_of_string(bytes, position),
            b'[' | b'{' => {
                *depth += 1;
                position += 1;
            }
            b']' | b'}' => {
                *depth = depth.saturating_sub(1);
                position += 1;
            }
            _ => position += 1,
        }
    }
    bytes.len()
}

/// Just past the string that opens at `position` (a `"` or a `'`): a basic string takes escapes, a
/// literal string none; a string of one line ends at its line's end when unclosed (the TOML
/// reader then says why), a string of several lines at its closing quotes, which may follow one or
/// two quotes of its own (TOML 1.0 specification (toml.io), from memory).
fn end_of_string(bytes: &[u8], position: usize) -> usize {
    let quote = bytes[position];
    let escapes = quote == b'"';
    let several_lines = bytes.get(position..position + 3).is_some_and(|three| three.iter().all(|&b| b == quote));
    let mut at = position + if several_lines { 3 } else { 1 };
    while let Some(&byte) = bytes.get(at) {
        if escapes && byte == b'\\' {
            at += 2;
        } else if byte == quote {
            if !several_lines {
                return at + 1;
            }
            let run = bytes[at..].iter().take_while(|&&b| b == quote).count();
            if run >= 3 {
                return at + run;
            }
            at += run;
        } else if byte == b'\n' && !several_lines {
            return at;
        } else {
            at += 1;
        }
    }
    bytes.len()
}

/// The header at `position` (a `[`) and whether its keys are all bare: what it opens, or `None`
/// where the line is not a header (`[` or `[[`, dotted keys, `]` or `]]`, then only blanks and a
/// comment to the line's end).
fn header(text: &str, position: usize) -> Option<(Opens, bool)> {
    let bytes = text.as_bytes();
    let double = bytes.get(position + 1) == Some(&b'[');
    let mut at = position + if double { 2 } else { 1 };
    // The first key and how many there are: all a header's kind depends on.
    let mut first: Option<std::borrow::Cow<'_, str>> = None;
    let mut count = 0usize;
    let mut bare = true;
    loop {
        at = skip_blanks(bytes, at);
        let (key, end, is_bare) = simple_key(text, at)?;
        bare &= is_bare;
        first.get_or_insert(key);
        count += 1;
        at = skip_blanks(bytes, end);
        if bytes.get(at) != Some(&b'.') {
            break;
        }
        at += 1;
    }
    let closing: &[u8] = if double { b"]]" } else { b"]" };
    if !bytes[at..].starts_with(closing) {
        return None;
    }
    at = skip_blanks(bytes, at + closing.len());
    match bytes.get(at) {
        None | Some(b'\n' | b'#') => {}
        Some(b'\r') if matches!(bytes.get(at + 1), None | Some(b'\n')) => {}
        _ => return None,
    }
    // A value word may start a line of an open array: a header of such keys ends nothing there.
    let first = first?;
    let value_word = matches!(first.as_ref(), "true" | "false" | "inf" | "nan")
        || !first.starts_with(|c: char| c.is_ascii_alphabetic() || c == '_');
    let opens = match (double, count, first.as_ref()) {
        (true, 1, "gate") => Opens::Gate,
        (_, _, "gate") => Opens::UnderGate,
        _ => Opens::Other,
    };
    Some((opens, bare && !value_word))
}

/// The simple key at `position`: its value, where it ends and whether it is bare. A bare key is
/// ASCII letters, digits, `_` and `-`; a quoted key is a basic or literal string of one line (a
/// basic one with escapes is decoded by the TOML reader).
fn simple_key(text: &str, position: usize) -> Option<(std::borrow::Cow<'_, str>, usize, bool)> {
    let bytes = text.as_bytes();
    match *bytes.get(position)? {
        quote @ (b'"' | b'\'') => {
            if bytes.get(position + 1) == Some(&quote) && bytes.get(position + 2) == Some(&quote) {
                return None;
            }
            let end = end_of_string(bytes, position);
            if end <= position + 1 || bytes[end - 1] != quote {
                return None;
            }
            let inner = &text[position + 1..end - 1];
            if quote == b'"' && inner.contains('\\') {
                let value = toml::de::DeValue::parse(&text[position..end]).ok()?;
                let decoded = value.get_ref().as_str()?.to_string();
                return Some((decoded.into(), end, false));
            }
            Some((inner.into(), end, false))
        }
        _ => {
            let length =
                bytes[position..].iter().take_while(|b| b.is_ascii_alphanumeric() || matches!(b, b'_' | b'-')).count();
            (length > 0).then(|| (text[position..position + length].into(), position + length, true))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The pieces of `text` as text: gates, then the rest.
    fn pieces(text: &str) -> (Vec<&str>, Vec<&str>) {
        let layout = scan(text);
        (
            layout.gates.iter().map(|r| &text[r.clone()]).collect(),
            layout.others.iter().map(|r| &text[r.clone()]).collect(),
        )
    }

    /// `text` cut into exactly `gates` and `others`.
    #[track_caller]
    fn assert_cut(text: &str, gates: &[&str], others: &[&str]) {
        let (found_gates, found_others) = pieces(text);
        assert_eq!((found_gates.as_slice(), found_others.as_slice()), (gates, others), "{text:?}");
    }

    #[test]
    fn gate_tables_are_cut_at_their_header_lines() {
        let text =
            "process = \"p.toml\"\n[defaults]\ndrive = 2\n\n[[gate]]\nname = \"a\"\n  [[gate]] # b\nname = \"b\"\n";
        let (gates, others) = pieces(text);
        assert_eq!(gates, ["[[gate]]\nname = \"a\"\n", "  [[gate]] # b\nname = \"b\"\n"]);
        assert_eq!(others, ["process = \"p.toml\"\n[defaults]\ndrive = 2\n\n"]);
        // The pieces are the whole file, in order.
        let layout = scan(text);
        assert_eq!(layout.others[0].end, layout.gates[0].start);
        assert_eq!(layout.gates[1].end, text.len());
    }

    #[test]
    fn tables_after_the_gates_and_tables_under_a_gate() {
        // `[gate.x]` after `[[gate]]` is a table in that gate's last element; `[defaults]` is a
        // top-level table wherever it is (TOML 1.0 specification (toml.io), from memory).
        let text = "[[gate]]\nname = \"a\"\n[gate.extra]\nk = 1\n[defaults]\ndrive = 1\n[[ \"gate\" ]]\nname = \"b\"\n";
        assert_cut(
            text,
            &["[[gate]]\nname = \"a\"\n[gate.extra]\nk = 1\n", "[[ \"gate\" ]]\nname = \"b\"\n"],
            &["[defaults]\ndrive = 1\n"],
        );
        // A table under gate before any gate is the rest's (the TOML reader refuses it there).
        assert_cut("[gate.x]\nk = 1\n[[gate]]\n", &["[[gate]]\n"], &["[gate.x]\nk = 1\n"]);
    }

    #[test]
    fn strings_comments_and_arrays_hide_headers() {
        // Multi-line basic and literal strings and arrays run over lines; a header inside one is
        // text or a value, not a table (TOML 1.0 specification (toml.io), from memory).
        let text = concat!(
            "[[gate]]\nname = \"a\"\nexpr = \"\"\"\n[[gate]]\n\\\"\"\"\n[defaults]\"\"\"\n",
            "note = '''\n[[gate]]\n'''\n",
            "drive = [\n  1,\n  [[2]],\n  2, # [[gate]]\n]\n",
            "quote = \"[[gate]]\" # ]]\n",
            "literal = '\\'\n",
            "[[gate]]\nname = \"b\"\nexpr = \"\"\"x\"\"\"\"\"\n[[gate]]\nname = \"c\"\n",
        );
        let (gates, others) = pieces(text);
        assert!(others.is_empty(), "{others:?}");
        assert_eq!(gates.len(), 3, "{gates:#?}");
        assert!(gates[0].ends_with("literal = '\\'\n"), "{}", gates[0]);
        assert_eq!(gates[1], "[[gate]]\nname = \"b\"\nexpr = \"\"\"x\"\"\"\"\"\n");
    }

    #[test]
    fn an_unclosed_array_ends_at_a_header_no_value_could_be() {
        // `[[gate]]` and `[defaults]` are no values (bare words), so they end an array left open;
        // `[[1]]` and `[true]` are values, and stay in it.
        let text = "[[gate]]\ndrive = [1,\n[[1]]\n[true]\n[[gate]]\nname = \"b\"\n[defaults]\n";
        assert_cut(text, &["[[gate]]\ndrive = [1,\n[[1]]\n[true]\n", "[[gate]]\nname = \"b\"\n"], &["[defaults]\n"]);
        // At the top level a header-like line that is no header is the rest's (the reader says why).
        assert_cut("[[gate]\nname = \"x\"\n[[gate]]\n", &["[[gate]]\n"], &["[[gate]\nname = \"x\"\n"]);
        assert_cut("[[gate]] x\n", &[], &["[[gate]] x\n"]);
    }

    #[test]
    fn escaped_quoted_keys_are_read_as_the_reader_reads_them() {
        let (gates, _) = pieces("[[\"g\\u0061te\"]]\nname = \"a\"\n[[ 'gate' ]]\r\nname = \"b\"\r\n");
        assert_eq!(gates.len(), 2);
        let (gates, others) = pieces("[[gates]]\n[[gate.pins]]\n");
        assert_eq!((gates.len(), others.len()), (0, 1));
    }
}
