//! Typed errors of every stage, and their rendering like a compiler: where, the source line, a caret.
//!
//! Each stage returns its own error enum; [`Error`] gathers them for the binary, which maps each
//! kind to a fixed exit code ([`Error::exit_code`]).

use std::fmt::Write as _;
use std::path::PathBuf;

use thiserror::Error;

use crate::process::ProcessError;

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

/// Exit code for success.
pub const EXIT_OK: u8 = 0;
/// Exit code when a check (verification, a limit a user asked to hold) failed.
pub const EXIT_CHECK_FAILED: u8 = 1;
/// Exit code for bad input or usage.
pub const EXIT_BAD_INPUT: u8 = 2;

/// Errors of the expression stage: lexing, parsing, shorthand names and the one-stage check.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum ExprError {
    /// Nothing but white space.
    #[error("the expression is empty")]
    Empty {
        /// Where the (empty) text is.
        span: Span,
    },
    /// A character no token starts with (a control character is written escaped).
    #[error("unknown character '{}'", escaped(&character.to_string()))]
    UnknownCharacter {
        /// The character.
        character: char,
        /// Where it is.
        span: Span,
    },
    /// A token that cannot stand where it is.
    #[error("expected {expected}, found {found}")]
    Unexpected {
        /// What could stand here.
        expected: String,
        /// What stands here instead (quoted, or "the end").
        found: String,
        /// Where.
        span: Span,
    },
    /// An opening parenthesis never closed.
    #[error("'(' is never closed: expected ')' before the end")]
    Unclosed {
        /// The opening parenthesis.
        span: Span,
    },
    /// Deeper nesting than the parser allows.
    #[error("nesting deeper than {limit} levels of parentheses")]
    TooDeep {
        /// The limit.
        limit: usize,
        /// Where the limit was crossed.
        span: Span,
    },
    /// A longer text than the parser reads.
    #[error("the expression is {length} bytes long; the limit is {limit}")]
    TooLong {
        /// Its length.
        length: usize,
        /// The limit.
        limit: usize,
        /// The whole text.
        span: Span,
    },
    /// More literal occurrences (transistors per network) than allowed.
    #[error("the expression has {count} input occurrences; the limit is {limit} transistors per network")]
    TooManyDevices {
        /// How many.
        count: usize,
        /// The limit.
        limit: usize,
        /// Where the first one past the limit is.
        span: Span,
    },
    /// More distinct inputs than allowed.
    #[error("the expression has {count} distinct inputs; the limit is {limit}")]
    TooManyInputs {
        /// How many.
        count: usize,
        /// The limit.
        limit: usize,
        /// Where the first one past the limit is.
        span: Span,
    },
    /// Every input appears uncomplemented: the function is non-inverting.
    #[error(
        "'{text}' is non-inverting: every input appears uncomplemented, so one static stage gives its complement; \
         write the complement (e.g. '!({text})') and follow it with an inverter"
    )]
    NonInverting {
        /// The expression text.
        text: String,
        /// The whole expression.
        span: Span,
    },
    /// Inputs in both polarities after pushing NOTs to the leaves.
    #[error(
        "not a single stage: input '{name}' appears uncomplemented here, but a one-stage gate needs every input \
         complemented once NOTs are pushed to the inputs (the pull-up would need an NMOS-style input, or the \
         pull-down a PMOS-style one)"
    )]
    Binate {
        /// The input that appears in the wrong polarity.
        name: String,
        /// Where.
        span: Span,
    },
    /// Exclusive OR needs every input in both polarities.
    #[error("'^' (exclusive or) is binate: it needs each input in both polarities, which no single static stage has")]
    ExclusiveOr {
        /// The operator.
        span: Span,
    },
    /// A name that looks like a gate shorthand but is not one.
    #[error("unknown gate '{name}': {why}")]
    UnknownShorthand {
        /// The name.
        name: String,
        /// What is wrong with it and what is known.
        why: String,
        /// Where.
        span: Span,
    },
    /// An input or the output named with a reserved name: a rail, ground or a device model.
    #[error("{role} '{name}' takes a reserved name: {why}")]
    ReservedName {
        /// `input` or `the output`.
        role: &'static str,
        /// The name.
        name: String,
        /// Why it is reserved.
        why: String,
        /// Where.
        span: Span,
    },
    /// An input named like the output or like another input.
    #[error("input '{name}' clashes with {what}")]
    NameClash {
        /// The input.
        name: String,
        /// What it clashes with.
        what: String,
        /// Where.
        span: Span,
    },
}

impl ExprError {
    /// Where in the expression the error is.
    pub fn span(&self) -> Span {
        match self {
            ExprError::Empty { span }
            | ExprError::UnknownCharacter { span, .. }
            | ExprError::Unexpected { span, .. }
            | ExprError::Unclosed { span }
            | ExprError::TooDeep { span, .. }
            | ExprError::TooLong { span, .. }
            | ExprError::TooManyDevices { span, .. }
            | ExprError::TooManyInputs { span, .. }
            | ExprError::NonInverting { span, .. }
            | ExprError::Binate { span, .. }
            | ExprError::ExclusiveOr { span }
            | ExprError::UnknownShorthand { span, .. }
            | ExprError::ReservedName { span, .. }
            | ExprError::NameClash { span, .. } => *span,
        }
    }
}

/// An error of any stage, as the binary sees it.
#[derive(Debug, Error)]
pub enum Error {
    /// A bad expression, with the text it came from.
    #[error("{error}")]
    Expression {
        /// The stage's error.
        error: ExprError,
        /// The expression text.
        source_text: String,
    },
    /// Bad usage or an option value out of range.
    #[error("{0}")]
    Usage(String),
    /// A command-line argument that is not UTF-8.
    #[error("{what} is not valid UTF-8 (first bad byte at byte {byte})")]
    NotUtf8 {
        /// Which argument.
        what: String,
        /// Index of the first invalid byte.
        byte: usize,
    },
    /// A file could not be read or written.
    #[error("cannot {action} '{path}': {source}")]
    File {
        /// "read" or "write".
        action: &'static str,
        /// The file.
        path: PathBuf,
        /// Why.
        source: std::io::Error,
    },
    /// Writing the output failed (a closed pipe is handled by the binary).
    #[error("cannot write the output: {0}")]
    Output(#[from] std::io::Error),
    /// A bad process file, with its name and text.
    #[error("{}: {error}", path.display())]
    Process {
        /// What is wrong, with the key and its place.
        error: Box<ProcessError>,
        /// The file.
        path: PathBuf,
        /// The file's text.
        source_text: String,
    },
    /// A netlist that verification cannot simulate, or a verification past its work budget.
    #[error("{0}")]
    Verify(#[from] crate::verify::VerifyError),
    /// A check the user asked for failed; the message says which.
    #[error("{0}")]
    CheckFailed(String),
    /// A bad file (a library or process file): the message and where in which file.
    #[error("{message}")]
    InFile {
        /// What is wrong.
        message: String,
        /// The file's name as messages give it.
        origin: String,
        /// The file's text.
        source_text: String,
        /// Where, when known.
        span: Option<Span>,
    },
    /// Names in a batch clash: a gate name used twice, or a drive listed twice in one gate (each
    /// clash was reported as it was found); nothing was written.
    #[error("{count} name clash(es) among the gates and their variants (reported above); nothing was written")]
    NameClashes {
        /// How many clashes.
        count: usize,
    },
    /// A computation would pass its work budget ([`crate::budget`]).
    #[error("{0}")]
    OverBudget(#[from] crate::budget::OverBudget),
    /// Some gates of a batch could not be sized (each was reported as it was found); the others
    /// were written.
    #[error("{failed} of {total} gates could not be sized (reported above); gates written: {}", total - failed)]
    GatesFailed {
        /// Gates that failed.
        failed: usize,
        /// Gates in the file.
        total: usize,
    },
}

impl Error {
    /// The documented exit code: 1 for a failed check, 2 for bad input, usage or I/O.
    pub fn exit_code(&self) -> u8 {
        match self {
            Error::CheckFailed(_) => EXIT_CHECK_FAILED,
            _ => EXIT_BAD_INPUT,
        }
    }

    /// The message as printed on stderr, with source line and caret where there is a span.
    pub fn render(&self) -> String {
        match self {
            Error::Expression { error, source_text } => {
                render_at(&error.to_string(), "the expression", source_text, error.span())
            }
            Error::Process { error, path, source_text } => match error.span() {
                Some(span) => render_at(&error.to_string(), &path.display().to_string(), source_text, span),
                None => format!("error: {}: {}\n", path.display(), escaped_lines(&error.to_string())),
            },
            Error::InFile { message, origin, source_text, span: Some(span) } => {
                render_at(message, origin, source_text, *span)
            }
            Error::InFile { message, origin, span: None, .. } => {
                format!("error: {}\n  in {origin}\n", escaped_lines(message))
            }
            other => format!("error: {}\n", escaped_lines(&other.to_string())),
        }
    }
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
    while index > 0 && !text.is_char_boundary(index) {
        index -= 1;
    }
    index
}

/// How many characters of a long line are shown on each side of the caret.
const CONTEXT_CHARACTERS: usize = 40;

/// Render `message` pointing at `span` of `source`, which is called `origin` ("the expression",
/// a file name ...): `error: message`, then where, the source line and a caret under the span.
pub fn render_at(message: &str, origin: &str, source: &str, span: Span) -> String {
    let (line, column, text) = line_and_column(source, span.start);
    let mut out = String::new();
    let _ = writeln!(out, "error: {}", escaped_lines(message));
    if source.contains('\n') {
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
    let characters: Vec<char> = text.chars().collect();
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
    let width = {
        let end = floor_char_boundary(source, span.end.min(source.len()));
        let covered = source
            .get(span.start.min(end)..end)
            .map_or(1, |s| s.chars().take_while(|c| *c != '\n').map(|c| shown_as(c).chars().count()).sum::<usize>());
        covered.clamp(1, CONTEXT_CHARACTERS)
    };
    let _ = writeln!(out, "    {shown}");
    let _ = writeln!(out, "    {}{}", " ".repeat(caret_column), "^".repeat(width));
    out
}

#[cfg(test)]
mod tests {
    use super::*;

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
    }
}
