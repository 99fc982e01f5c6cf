//! Whether a model name, a library path or a section name can be written into a deck that
//! ngspice reads.

use std::path::Path;

use thiserror::Error;

/// Why a model name or path cannot be written into a deck.
#[derive(Debug, Clone, PartialEq, Eq, Error)]
pub enum Unwritable {
    /// Nothing to write.
    #[error("the {what} is empty")]
    Empty {
        /// "model name" or "path".
        what: &'static str,
    },
    /// A character SPICE cannot take there.
    #[error("the {what} '{text}' holds {character:?}: {why}")]
    Character {
        /// "model name" or "path".
        what: &'static str,
        /// The name or path.
        text: String,
        /// The character.
        character: char,
        /// Why SPICE cannot take it.
        why: &'static str,
    },
    /// Not text.
    #[error("the path '{path}' is not valid UTF-8, so it cannot be written into a deck")]
    NotUtf8 {
        /// The path, lossily shown.
        path: String,
    },
    /// A model name SPICE reads as something else.
    #[error("the model name '{name}' {why}")]
    Reserved {
        /// The name.
        name: String,
        /// What ngspice makes of it.
        why: &'static str,
    },
}

/// Why ngspice cannot take `c` in a model name, if it cannot.
fn name_character(c: char) -> Option<&'static str> {
    Some(match c {
        c if c.is_whitespace() => "white space ends a SPICE word",
        '=' | '(' | ')' | ',' => "ngspice splits an instance line at '=', '(', ')' and ','",
        '\'' | '"' | '{' | '}' => "ngspice reads quotes and braces as an expression",
        ';' => "ngspice reads ';' as the start of a comment",
        c if c.is_control() || !c.is_ascii() => "widthwise writes only printable ASCII into decks",
        _ => return None,
    })
}

/// Check that `name` can stand as the model of an instance line in a deck ngspice reads.
pub fn check_model_name(name: &str) -> Result<(), Unwritable> {
    let what = "model name";
    let Some(first) = name.chars().next() else { return Err(Unwritable::Empty { what }) };
    if let Some((character, why)) = name.chars().find_map(|c| name_character(c).map(|why| (c, why))) {
        return Err(Unwritable::Character { what, text: name.to_string(), character, why });
    }
    if name.contains("//") {
        return Err(Unwritable::Character {
            what,
            text: name.to_string(),
            character: '/',
            why: "ngspice reads '//' as the start of a comment",
        });
    }
    if !(first.is_ascii_alphabetic() || first == '_') {
        return Err(Unwritable::Reserved {
            name: name.to_string(),
            why: "must start with a letter or '_': ngspice reads a word such as '1e5' where it looks for a model \
                  as a number, and a leading '$' as a comment",
        });
    }
    if name.eq_ignore_ascii_case("gnd") {
        return Err(Unwritable::Reserved { name: name.to_string(), why: "is read by ngspice as node 0 (ground)" });
    }
    if name.eq_ignore_ascii_case("off") {
        return Err(Unwritable::Reserved {
            name: name.to_string(),
            why: "is read by ngspice as the instance flag 'off', not as a model",
        });
    }
    Ok(())
}

/// Check that `path` can be written as the file of `.include PATH` or `.lib PATH SECTION`; the
/// text to write.
pub fn check_deck_path(path: &Path) -> Result<&str, Unwritable> {
    let Some(text) = path.to_str() else {
        return Err(Unwritable::NotUtf8 { path: path.to_string_lossy().into_owned() });
    };
    check_lib_word("path", text)?;
    if text.starts_with('~') {
        return Err(Unwritable::Character {
            what: "path",
            text: text.to_string(),
            character: '~',
            why: "ngspice expands a leading '~' to a home directory",
        });
    }
    Ok(text)
}

/// Check that `name` can be written as the section of `.lib PATH SECTION`.
pub fn check_section_name(name: &str) -> Result<(), Unwritable> {
    check_lib_word("section name", name)
}

/// A word of an `.include` or `.lib` line: no blank, quote or comment.
fn check_lib_word(what: &'static str, text: &str) -> Result<(), Unwritable> {
    if text.is_empty() {
        return Err(Unwritable::Empty { what });
    }
    let bad =
        |character: char, why: &'static str| Unwritable::Character { what, text: text.to_string(), character, why };
    for c in text.chars() {
        let why = match c {
            c if c.is_whitespace() => "ngspice ends a word of a '.lib' line at white space, and cannot quote it",
            c if c.is_control() => "a control character cannot be written into a deck",
            '"' | '\'' => "ngspice reads quotes on a '.lib' line as blanks",
            ';' => "ngspice reads ';' as the start of a comment",
            _ => continue,
        };
        return Err(bad(c, why));
    }
    if text.contains("//") {
        return Err(bad('/', "ngspice reads '//' as the start of a comment"));
    }
    if text.contains(",$") {
        return Err(bad('$', "ngspice reads '$' after ',' as the start of a comment"));
    }
    Ok(())
}
