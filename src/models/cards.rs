//! A library file as ngspice splits it: comments stripped, continuation lines joined into cards,
//! the cards' keywords and words, SPICE numbers, and a `.model` card read.

use crate::diagnostic::Span;
use crate::models::error::{Problem, ScanError};
use crate::models::types::{Bin, DeviceType, FileId, Level, Limit, Location, Model, ModelType, Range, SourceFile};

/// A logical line: its pieces (the first line, then each continuation after its `+`), comments
/// stripped, as spans of one file.
#[derive(Debug, Clone)]
pub(crate) struct Card {
    pub(crate) file: FileId,
    pub(crate) pieces: Vec<Span>,
}

impl Card {
    pub(crate) fn first<'t>(&self, files: &'t [SourceFile]) -> &'t str {
        let span = self.pieces[0];
        &files[self.file.0].text[span.start..span.end]
    }

    pub(crate) fn location(&self) -> Location {
        let first = self.pieces[0];
        let last = self.pieces[self.pieces.len() - 1];
        Location { file: self.file, span: Span::new(first.start, last.end) }
    }

    pub(crate) fn first_location(&self) -> Location {
        Location { file: self.file, span: self.pieces[0] }
    }
}

/// What the keyword of a card says it is.
#[derive(Debug, PartialEq)]
pub(crate) enum Kind {
    Include,
    Lib,
    EndLib,
    Model,
    Subcircuit,
    EndSubcircuit,
    Options,
    Other,
}

fn starts_with_ignore_case(text: &str, prefix: &str) -> bool {
    text.len() >= prefix.len() && text.as_bytes()[..prefix.len()].eq_ignore_ascii_case(prefix.as_bytes())
}

pub(crate) fn kind(first: &str) -> Kind {
    let keyword = first.split(|c: char| c.is_ascii_whitespace()).next().unwrap_or("");
    let is = |word: &str| keyword.eq_ignore_ascii_case(word);
    if starts_with_ignore_case(first, ".lib") {
        Kind::Lib
    } else if starts_with_ignore_case(first, ".inc") {
        Kind::Include
    } else if starts_with_ignore_case(first, ".endl") {
        Kind::EndLib
    } else if is(".model") {
        Kind::Model
    } else if is(".subckt") || is(".macro") {
        Kind::Subcircuit
    } else if is(".ends") || is(".eom") {
        Kind::EndSubcircuit
    } else if starts_with_ignore_case(keyword, ".opt") {
        Kind::Options
    } else {
        Kind::Other
    }
}

/// What a `.lib` card says.
pub(crate) enum LibCard<'t> {
    Reference { path: &'t str, section: &'t str },
    Definition { name: &'t str },
}

/// A `.lib` line as ngspice splits it: words separated by blanks and quotes, with where the first
/// word starts in the line; `None` for `.lib` alone.
pub(crate) fn lib_card(first: &str) -> Option<(usize, LibCard<'_>)> {
    let bytes = first.as_bytes();
    let separator = |c: u8| c.is_ascii_whitespace() || c == b'"' || c == b'\'';
    let mut i = first.find(|c: char| c.is_ascii_whitespace())?;
    let mut word = || {
        while i < bytes.len() && separator(bytes[i]) {
            i += 1;
        }
        let start = i;
        while i < bytes.len() && !separator(bytes[i]) {
            i += 1;
        }
        (i > start).then_some((start, i))
    };
    let (start, end) = word()?;
    Some(match word() {
        Some((section_start, section_end)) => {
            (start, LibCard::Reference { path: &first[start..end], section: &first[section_start..section_end] })
        }
        None => (start, LibCard::Definition { name: &first[start..end] }),
    })
}

/// The file name of an `.include` line: quoted (up to the same quote) or up to a blank; its span
/// within the line.
pub(crate) fn include_path(first: &str) -> Result<(usize, &str), ScanError> {
    let keyword_end = first.find(|c: char| c.is_ascii_whitespace()).unwrap_or(first.len());
    let rest = &first[keyword_end..];
    let start = keyword_end + (rest.len() - rest.trim_start().len());
    let rest = rest.trim_start();
    let keyword = || ScanError::MissingFileName { keyword: first[..keyword_end].to_string() };
    match rest.chars().next() {
        None => Err(keyword()),
        Some(quote @ ('"' | '\'')) => match rest[1..].find(quote) {
            Some(0) => Err(keyword()),
            Some(end) => Ok((start + 1, &rest[1..=end])),
            None => Err(ScanError::UnclosedQuote),
        },
        Some(_) => {
            let end = rest.find(|c: char| c.is_ascii_whitespace()).unwrap_or(rest.len());
            Ok((start, &rest[..end]))
        }
    }
}

/// Characters that make a line a comment when they stand first (ngspice-39 replaces them by `*`).
const COMMENT_LEADERS: &[u8] = b"*$=[]?()&%\"!:,;\x0c";

/// Where an end-of-line comment starts in `line` (ngspice's rule), or its length.
fn comment_start(line: &[u8]) -> usize {
    for i in 0..line.len() {
        let c = line[i];
        if c == b';' && i > 0 {
            return i;
        }
        if c == b'$' && i > 0 && matches!(line[i - 1], b' ' | b',' | b'\t') {
            return i;
        }
        if c == b'/' && line.get(i + 1) == Some(&b'/') {
            return i;
        }
    }
    line.len()
}

/// Split a file's text into cards: comments stripped, continuation lines joined.
pub(crate) fn split_cards(file: FileId, text: &str) -> (Vec<Card>, Vec<Problem>) {
    let mut cards: Vec<Card> = Vec::new();
    let mut problems = Vec::new();
    let mut continued = false;
    let mut offset = 0;
    for raw in text.split_inclusive('\n') {
        let line_start = offset;
        offset += raw.len();
        let line = raw.strip_suffix('\n').unwrap_or(raw);
        let line = line.strip_suffix('\r').unwrap_or(line);
        let content = line.trim_start_matches([' ', '\t']);
        let start = line_start + (line.len() - content.len());
        if content.is_empty() {
            continue;
        }
        let bytes = content.as_bytes();
        let shell_continuation = continued;
        // A line that ends in `\\` continues on the next one (checked before comments, as ngspice does).
        let trimmed_end = content.trim_end_matches([' ', '\t']);
        continued = bytes[0] != b'*' && bytes[0] != b'$' && trimmed_end.ends_with("\\\\");
        let content = if continued { &trimmed_end[..trimmed_end.len() - 2] } else { content };
        if !shell_continuation && COMMENT_LEADERS.contains(&bytes[0]) {
            continue;
        }
        let kept = content[..comment_start(content.as_bytes())].trim_end_matches([' ', '\t']);
        if kept.is_empty() {
            continue;
        }
        let (is_continuation, piece_start) = if shell_continuation {
            (true, start)
        } else if let Some(rest) = kept.strip_prefix('+') {
            (true, start + (kept.len() - rest.len()))
        } else {
            (false, start)
        };
        let piece = Span::new(piece_start, start + kept.len());
        if is_continuation {
            match cards.last_mut() {
                Some(card) => card.pieces.push(piece),
                None => problems.push(Problem {
                    error: ScanError::ContinuationFirst,
                    at: Some(Location { file, span: Span::new(start, start + kept.len()) }),
                }),
            }
        } else {
            cards.push(Card { file, pieces: vec![piece] });
        }
    }
    (cards, problems)
}

/// A word of a card with its place in the file.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Token {
    pub(crate) text: String,
    pub(crate) span: Span,
}

/// A card's words, split at blanks, `=`, `(`, `)` and `,` as ngspice splits a model card; an
/// expression in braces or single quotes is one word.
pub(crate) fn tokens(card: &Card, files: &[SourceFile]) -> Vec<Token> {
    let text = &files[card.file.0].text;
    // The pieces joined by one blank, with where each starts in the joined text and in the file.
    let mut joined = String::new();
    let mut map: Vec<(usize, usize)> = Vec::new();
    for (index, piece) in card.pieces.iter().enumerate() {
        if index > 0 {
            joined.push(' ');
        }
        map.push((joined.len(), piece.start));
        joined.push_str(&text[piece.start..piece.end]);
    }
    let to_file = |virtual_offset: usize| {
        let (joined_start, file_start) =
            map.iter().rev().find(|(j, _)| *j <= virtual_offset).copied().unwrap_or((0, 0));
        file_start + (virtual_offset - joined_start)
    };
    let bytes = joined.as_bytes();
    let separator = |c: u8| c.is_ascii_whitespace() || matches!(c, b'=' | b'(' | b')' | b',');
    let mut out = Vec::new();
    let mut i = 0;
    while i < bytes.len() {
        if separator(bytes[i]) {
            i += 1;
            continue;
        }
        let start = i;
        while i < bytes.len() && !separator(bytes[i]) {
            match bytes[i] {
                b'{' => {
                    let mut depth = 0usize;
                    while i < bytes.len() {
                        match bytes[i] {
                            b'{' => depth += 1,
                            b'}' => {
                                depth -= 1;
                                if depth == 0 {
                                    break;
                                }
                            }
                            _ => {}
                        }
                        i += 1;
                    }
                    i = (i + 1).min(bytes.len());
                }
                b'\'' => {
                    i += 1;
                    while i < bytes.len() && bytes[i] != b'\'' {
                        i += 1;
                    }
                    i = (i + 1).min(bytes.len());
                }
                _ => i += 1,
            }
        }
        // Each piece ends at a blank or the end, so a word that crosses pieces does so only inside
        // an expression; its end maps through the piece it ends in.
        let end_file = to_file(i.saturating_sub(1)) + 1;
        out.push(Token { text: joined[start..i].to_string(), span: Span::new(to_file(start), end_file) });
    }
    out
}

/// A number as SPICE writes it: optional sign, digits with an optional point and exponent, an
/// optional scale suffix (t g meg k m mil u n p f a, any case) and letters after it (units, which
/// ngspice ignores); `None` for anything else.
pub fn spice_number(text: &str) -> Option<f64> {
    let bytes = text.as_bytes();
    let mut i = 0;
    if matches!(bytes.first(), Some(b'+' | b'-')) {
        i += 1;
    }
    let digits_start = i;
    let mut digits = 0;
    while i < bytes.len() && bytes[i].is_ascii_digit() {
        i += 1;
        digits += 1;
    }
    if bytes.get(i) == Some(&b'.') {
        i += 1;
        while i < bytes.len() && bytes[i].is_ascii_digit() {
            i += 1;
            digits += 1;
        }
    }
    if digits == 0 || i == digits_start {
        return None;
    }
    if matches!(bytes.get(i), Some(b'e' | b'E')) {
        let mut j = i + 1;
        if matches!(bytes.get(j), Some(b'+' | b'-')) {
            j += 1;
        }
        let exponent_start = j;
        while j < bytes.len() && bytes[j].is_ascii_digit() {
            j += 1;
        }
        if j > exponent_start {
            i = j;
        }
    }
    let mantissa: f64 = text[..i].parse().ok()?;
    let rest = &text[i..];
    let lower = rest.to_ascii_lowercase();
    let (scale, used) = if lower.starts_with("meg") {
        (1e6, 3)
    } else if lower.starts_with("mil") {
        (25.4e-6, 3)
    } else {
        match lower.bytes().next() {
            Some(b't') => (1e12, 1),
            Some(b'g') => (1e9, 1),
            Some(b'k') => (1e3, 1),
            Some(b'm') => (1e-3, 1),
            Some(b'u') => (1e-6, 1),
            Some(b'n') => (1e-9, 1),
            Some(b'p') => (1e-12, 1),
            Some(b'f') => (1e-15, 1),
            Some(b'a') => (1e-18, 1),
            _ => (1.0, 0),
        }
    };
    if !rest[used..].bytes().all(|c| c.is_ascii_alphabetic()) {
        return None;
    }
    let value = mantissa * scale;
    value.is_finite().then_some(value)
}

/// A `.model` card read: name, type, level and (for `NAME.N`) the bin.
pub(crate) fn model(card: &Card, files: &[SourceFile]) -> Result<Model, ScanError> {
    let tokens = tokens(card, files);
    let (Some(name), Some(model_type)) = (tokens.get(1), tokens.get(2)) else {
        return Err(ScanError::MalformedModel);
    };
    let lowered = model_type.text.to_ascii_lowercase();
    let model_type = match lowered.as_str() {
        "nmos" => ModelType::Device(DeviceType::Nmos),
        "pmos" => ModelType::Device(DeviceType::Pmos),
        _ => ModelType::Other(lowered),
    };
    // The last value of each key counts, as in ngspice.
    let value_of = |key: &str| {
        tokens[3..]
            .windows(2)
            .rev()
            .find(|pair| pair[0].text.eq_ignore_ascii_case(key))
            .map(|pair| pair[1].text.clone())
    };
    let limit = |key: &str| match value_of(key) {
        None => Limit::Missing,
        Some(text) => spice_number(&text).map_or(Limit::Expression(text), Limit::Metres),
    };
    let level = match value_of("level") {
        None => Level::Default,
        Some(text) => spice_number(&text).map_or(Level::Expression(text), Level::Number),
    };
    let lowered_name = name.text.to_ascii_lowercase();
    let bin = lowered_name.rsplit_once('.').and_then(|(base, index)| {
        let numbered = !base.is_empty() && !index.is_empty() && index.bytes().all(|c| c.is_ascii_digit());
        numbered.then(|| Bin {
            base: base.to_string(),
            length: Range { min: limit("lmin"), max: limit("lmax") },
            width: Range { min: limit("wmin"), max: limit("wmax") },
        })
    });
    Ok(Model {
        name: lowered_name,
        model_type,
        level,
        bin,
        subcircuit: None,
        at: Location { file: card.file, span: name.span },
        card: card.location(),
    })
}
