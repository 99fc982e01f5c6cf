//! Diagnostics: one type for every message that points into a text (an expression, a process file,
//! a library file, a model library), and the one renderer that prints it like a compiler: what is
//! wrong, where (the text's origin, line and column), the source line and a caret under the place.
//!
//! A leaf module: it imports nothing of the crate, so every stage may give its errors a place.

use std::fmt::Write as _;
use std::ops::Range;
use std::sync::{Arc, OnceLock};

/// A half-open byte range `start..end` in a source text.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize)]
pub struct Span {
    /// First byte of the range.
    pub start: usize,
    /// One past the last byte of the range.
    pub end: usize,
}

impl Span {
    /// A span from `start` to `end` (bytes).
    pub fn new(start: usize, end: usize) -> Self {
        Span { start, end }
    }

    /// The smallest span covering both.
    pub fn join(self, other: Span) -> Span {
        Span::new(self.start.min(other.start), self.end.max(other.end))
    }
}

impl From<Range<usize>> for Span {
    fn from(range: Range<usize>) -> Span {
        Span::new(range.start, range.end)
    }
}

/// A text that diagnostics point into, and what messages call it (a file name, `the expression`,
/// `standard input`). Clones share the text, so an error can hold its source without copying it.
#[derive(Clone)]
pub struct Source(Arc<SourceText>);

struct SourceText {
    origin: String,
    text: String,
    /// A file: every place names its line. Else a text given on its own (an expression), whose
    /// places name a line only when it has several.
    file: bool,
    /// Where each line starts, found on the first lookup.
    lines: OnceLock<Vec<usize>>,
}

impl Source {
    /// A file's text. A leading byte-order mark is dropped (as every reader drops it), so that
    /// places count from what follows it.
    pub fn file(origin: impl Into<String>, text: impl Into<String>) -> Source {
        let mut text = text.into();
        if text.starts_with('\u{feff}') {
            text.drain(..'\u{feff}'.len_utf8());
        }
        Source::new(origin.into(), text, true)
    }

    /// A text given on its own, such as an expression.
    pub fn inline(origin: impl Into<String>, text: impl Into<String>) -> Source {
        Source::new(origin.into(), text.into(), false)
    }

    fn new(origin: String, text: String, file: bool) -> Source {
        Source(Arc::new(SourceText { origin, text, file, lines: OnceLock::new() }))
    }

    /// What messages call the text.
    pub fn origin(&self) -> &str {
        &self.0.origin
    }

    /// The whole text.
    pub fn text(&self) -> &str {
        &self.0.text
    }

    /// Line number (1-based) and the line's byte range, without its line ending (`\n` or `\r\n`),
    /// for a byte offset. The line starts are found once, on the first call, so that a file with
    /// many reported places is scanned once.
    pub fn line_of(&self, offset: usize) -> (usize, Range<usize>) {
        let text = self.text();
        let starts = self.0.lines.get_or_init(|| {
            std::iter::once(0)
                .chain(text.bytes().enumerate().filter(|&(_, b)| b == b'\n').map(|(i, _)| i + 1))
                .collect()
        });
        let offset = offset.min(text.len());
        let index = starts.partition_point(|&start| start <= offset) - 1;
        let start = starts[index];
        let mut end = starts.get(index + 1).map_or(text.len(), |&next| next - 1);
        if end > start && text.as_bytes()[end - 1] == b'\r' {
            end -= 1;
        }
        (index + 1, start..end)
    }
}

impl std::fmt::Debug for Source {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        // The text may be a 64 MiB library: its length only.
        f.debug_struct("Source").field("origin", &self.0.origin).field("bytes", &self.0.text.len()).finish()
    }
}

/// How bad a diagnostic is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Severity {
    /// The input cannot be used as it is.
    Error,
    /// The input is used, perhaps not as its author meant.
    Warning,
}

/// A message, and where it points: a span of a source, the source as a whole, or nowhere.
#[derive(Debug, Clone)]
pub struct Diagnostic {
    /// Error or warning.
    pub severity: Severity,
    /// What is wrong, in one sentence (lowercase, the bad value quoted).
    pub message: String,
    /// The text it is about.
    pub source: Option<Source>,
    /// Where in the text, when known.
    pub span: Option<Span>,
}

/// How many characters of a long line are shown on each side of the caret.
const CONTEXT_CHARACTERS: usize = 40;

impl Diagnostic {
    /// An error with no place.
    pub fn error(message: impl Into<String>) -> Diagnostic {
        Diagnostic { severity: Severity::Error, message: message.into(), source: None, span: None }
    }

    /// A warning with no place.
    pub fn warning(message: impl Into<String>) -> Diagnostic {
        Diagnostic { severity: Severity::Warning, message: message.into(), ..Diagnostic::error("") }
    }

    /// The same, about `source` as a whole.
    pub fn within(self, source: &Source) -> Diagnostic {
        Diagnostic { source: Some(source.clone()), span: None, ..self }
    }

    /// The same, pointing at `span` of `source`.
    pub fn at(self, source: &Source, span: Span) -> Diagnostic {
        Diagnostic { source: Some(source.clone()), span: Some(span), ..self }
    }

    /// The same, pointing at `span` of `source` when there is one, else about `source` as a whole.
    pub fn at_or_within(self, source: &Source, span: Option<Span>) -> Diagnostic {
        Diagnostic { source: Some(source.clone()), span, ..self }
    }

    /// The diagnostic as printed on standard error: `error: message` (or `warning: ...`), then
    /// `at ORIGIN, line L, column C:`, the source line and a caret under the span; or `in ORIGIN`
    /// when there is no span. Control characters of the message and the line are shown escaped.
    pub fn render(&self) -> String {
        let label = match self.severity {
            Severity::Error => "error",
            Severity::Warning => "warning",
        };
        let mut out = format!("{label}: {}\n", escaped_lines(&self.message));
        match (&self.source, self.span) {
            (Some(source), Some(span)) => render_place(&mut out, source, span),
            (Some(source), None) => {
                let _ = writeln!(out, "  in {}", escaped(source.origin()));
            }
            (None, _) => {}
        }
        out
    }
}

/// `where`, the source line and the caret of `span` in `source`, appended to `out`.
fn render_place(out: &mut String, source: &Source, span: Span) {
    let text = source.text();
    let (line, range) = source.line_of(span.start);
    let start = floor_char_boundary(text, span.start.clamp(range.start, range.end));
    let end = floor_char_boundary(text, span.end.clamp(start, range.end));
    let column = text[range.start..start].chars().count() + 1;
    let origin = escaped(source.origin());
    if source.0.file || text.contains('\n') {
        let _ = writeln!(out, "  at {origin}, line {line}, column {column}:");
    } else {
        let _ = writeln!(out, "  at {origin}, column {column}:");
    }
    // Each character as shown: a tab as a space, a control character escaped (a NUL is never
    // echoed raw), the rest as it is; the caret counts what is shown.
    let shown_as = |c: char| -> String {
        match c {
            '\t' => " ".to_string(),
            c if c.is_control() => c.escape_default().collect(),
            c => c.to_string(),
        }
    };
    let characters: Vec<char> = text[range.clone()].chars().collect();
    let caret_at = column - 1;
    let first = caret_at.saturating_sub(CONTEXT_CHARACTERS);
    let last = (caret_at + CONTEXT_CHARACTERS).min(characters.len());
    let mut shown = String::new();
    let mut caret_column = 0;
    for (index, &character) in characters[first..last].iter().enumerate() {
        let piece = shown_as(character);
        if first + index < caret_at {
            caret_column += piece.chars().count();
        }
        shown.push_str(&piece);
    }
    if first > 0 {
        shown.insert_str(0, "...");
        caret_column += 3;
    }
    if last < characters.len() {
        shown.push_str("...");
    }
    let covered: usize = text[start..end].chars().map(|c| shown_as(c).chars().count()).sum();
    let width = covered.clamp(1, CONTEXT_CHARACTERS);
    let _ = writeln!(out, "    {shown}");
    let _ = writeln!(out, "    {}{}", " ".repeat(caret_column), "^".repeat(width));
}

/// `text` with every control character escaped (`\0`, `\u{7f}` ...), so that a message never
/// echoes a NUL, an escape sequence or a line break from its input; everything else as it is.
pub fn escaped(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for character in text.chars() {
        if character.is_control() {
            out.extend(character.escape_default());
        } else {
            out.push(character);
        }
    }
    out
}

/// `text` with every control character but the line break escaped ([`escaped`]): for whole
/// messages, whose lines are the program's own.
pub fn escaped_lines(text: &str) -> String {
    text.split('\n').map(escaped).collect::<Vec<_>>().join("\n")
}

/// Line (1-based), column (1-based, in characters) and the line's text for a byte offset.
pub fn line_and_column(source: &str, offset: usize) -> (usize, usize, &str) {
    let offset = floor_char_boundary(source, offset.min(source.len()));
    let line_start = source[..offset].rfind('\n').map_or(0, |i| i + 1);
    let line_end = source[offset..].find('\n').map_or(source.len(), |i| offset + i);
    let line = source[..offset].matches('\n').count() + 1;
    let column = source[line_start..offset].chars().count() + 1;
    (line, column, &source[line_start..line_end])
}

fn floor_char_boundary(text: &str, mut index: usize) -> usize {
    index = index.min(text.len());
    while index > 0 && !text.is_char_boundary(index) {
        index -= 1;
    }
    index
}

/// A TOML reader's error message and place, given a place where it has none: its recursion limit
/// ("recursion limit") comes without one, so the place becomes where the text nests deepest
/// ([`deepest_nesting`]), and the message says what the limit is about.
pub fn toml_error_place(text: &str, message: &str, span: Option<Span>) -> (String, Option<Span>) {
    let message = message.trim();
    match span {
        None if message.contains("recursion") => (
            format!(
                "{message}: the file nests too deeply here (each part of a dotted key, each table, array and \
                 inline table is a level)"
            ),
            deepest_nesting(text),
        ),
        _ => (message.to_string(), span),
    }
}

/// Where a TOML text nests deepest: the first place where the parts of a dotted key, plus the
/// brackets and braces around it, are most. Strings and comments are skipped; a rough reading that
/// is enough to point at the place.
pub fn deepest_nesting(text: &str) -> Option<Span> {
    let (mut brackets, mut dots) = (0usize, 0usize);
    let mut quote: Option<char> = None;
    let (mut escaped, mut comment) = (false, false);
    let mut best: Option<(usize, usize)> = None;
    for (offset, character) in text.char_indices() {
        if comment {
            comment = character != '\n';
            if !comment {
                dots = 0;
            }
            continue;
        }
        if let Some(open) = quote {
            if escaped {
                escaped = false;
            } else if open == '"' && character == '\\' {
                escaped = true;
            } else if character == open || character == '\n' {
                quote = None;
            }
            continue;
        }
        match character {
            '"' | '\'' => quote = Some(character),
            '#' => comment = true,
            '[' | '{' => brackets += 1,
            ']' | '}' => brackets = brackets.saturating_sub(1),
            '.' => dots += 1,
            '\n' | '=' | ',' => dots = 0,
            _ => continue,
        }
        let depth = brackets + dots;
        if depth > 0 && best.is_none_or(|(deepest, _)| depth > deepest) {
            best = Some((depth, offset));
        }
    }
    best.map(|(_, offset)| Span::new(offset, offset + 1))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn render_at(message: &str, origin: &str, text: &str, span: Span) -> String {
        Diagnostic::error(message).at(&Source::inline(origin, text), span).render()
    }

    #[test]
    fn caret_sits_under_the_span() {
        let text = render_at("expected x, found ')'", "the expression", "!(a &)", Span::new(5, 6));
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines[0], "error: expected x, found ')'");
        assert_eq!(lines[1], "  at the expression, column 6:");
        assert_eq!(lines[2], "    !(a &)");
        assert_eq!(lines[3], "         ^");
    }

    #[test]
    fn control_characters_are_escaped_and_the_caret_follows() {
        // A NUL and an escape character in the source line are shown escaped, and the caret still
        // sits under the character the span names.
        let text = render_at("unknown character '\\u{0}'", "the expression", "a \u{0}\u{1b} & b", Span::new(2, 3));
        let lines: Vec<&str> = text.lines().collect();
        assert!(!text.contains('\u{0}') && !text.contains('\u{1b}'), "{text:?}");
        assert_eq!(lines[2], "    a \\u{0}\\u{1b} & b");
        assert_eq!(lines[3], "      ^^^^^");
        assert_eq!(escaped("tab\tnul\u{0}"), "tab\\tnul\\u{0}");
        assert_eq!(escaped_lines("one\u{7}\ntwo"), "one\\u{7}\ntwo");
    }

    #[test]
    fn long_lines_are_windowed() {
        let source = "a".repeat(500);
        let text = render_at("m", "e", &source, Span::new(250, 251));
        let lines: Vec<&str> = text.lines().collect();
        assert!(lines[2].starts_with("    ..."));
        assert!(lines[2].ends_with("..."));
        assert_eq!(lines[3].find('^'), Some(4 + 3 + CONTEXT_CHARACTERS));
    }

    #[test]
    fn files_always_name_the_line_and_drop_a_carriage_return() {
        let file = Source::file("lib.toml", "a = 1\r\nb = x\r\n");
        let text = Diagnostic::error("bad").at(&file, Span::new(11, 12)).render();
        assert_eq!(text, "error: bad\n  at lib.toml, line 2, column 5:\n    b = x\n        ^\n");
        let one_line = Source::file("one.toml", "gates = []");
        let text = Diagnostic::error("unknown").at(&one_line, Span::new(0, 5)).render();
        assert!(text.contains("  at one.toml, line 1, column 1:\n    gates = []\n    ^^^^^\n"), "{text}");
        // A span running past its line is underlined to the line's end.
        let text = Diagnostic::error("m").at(&file, Span::new(4, 12)).render();
        assert!(text.ends_with("    a = 1\n        ^\n"), "{text}");
    }

    #[test]
    fn without_a_span_the_origin_is_named_and_warnings_say_so() {
        let file = Source::file("lib.toml", "x");
        assert_eq!(Diagnostic::error("too many").within(&file).render(), "error: too many\n  in lib.toml\n");
        assert_eq!(Diagnostic::warning("odd").render(), "warning: odd\n");
        let warning = Diagnostic::warning("again").at(&file, Span::new(0, 1)).render();
        assert!(warning.starts_with("warning: again\n  at lib.toml, line 1, column 1:"), "{warning}");
    }

    #[test]
    fn the_deepest_nesting_is_found() {
        let keys = format!("name = \"x.y\" # a.b.c.d\n{} = 1\n", vec!["k"; 30].join("."));
        let span = deepest_nesting(&keys).unwrap();
        let (line, column, _) = line_and_column(&keys, span.start);
        assert_eq!((line, column), (2, 58), "the last dot of the 30-part key");
        let arrays = format!("a = 1\nb = [[1], {}{}]\n", "[".repeat(20), "]".repeat(20));
        let span = deepest_nesting(&arrays).unwrap();
        assert_eq!(line_and_column(&arrays, span.start).0, 2);
        assert_eq!(&arrays[span.start..span.end], "[");
        let (message, place) = toml_error_place(&keys, "recursion limit", None);
        assert!(message.starts_with("recursion limit: the file nests too deeply here"), "{message}");
        assert_eq!(place, Some(span_of_last_dot(&keys)));
    }

    fn span_of_last_dot(text: &str) -> Span {
        let at = text.rfind('.').unwrap();
        Span::new(at, at + 1)
    }

    #[test]
    fn multi_line_sources_name_the_line() {
        let (line, column, text) = line_and_column("one\ntwo = 3\n", 8);
        assert_eq!((line, column, text), (2, 5, "two = 3"));
        let text = render_at("m", "the expression", "!(a &\n b c)", Span::new(9, 10));
        assert!(text.contains("  at the expression, line 2, column 4:\n     b c)\n       ^\n"), "{text}");
    }
}
