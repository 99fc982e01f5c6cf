//! Lexer: turns expression text into tokens that carry their byte spans.
//!
//! Spans are what let every later error point at the exact place in the text.

use crate::diagnostic::Span;
use crate::expr::error::ExprError;
use crate::names::{is_identifier_continue, is_identifier_start};

/// The kinds of token an expression is made of.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TokenKind {
    /// An input or output name, `[A-Za-z_][A-Za-z0-9_]*`.
    Identifier,
    /// Prefix NOT: `!` or `~`.
    Not,
    /// Postfix NOT: `'`.
    Prime,
    /// AND: `&`, `*` or `.` (juxtaposition is AND too, found by the parser).
    And,
    /// OR: `|` or `+`.
    Or,
    /// Exclusive OR: `^` (parsed so that the error can say why no single stage builds it).
    ExclusiveOr,
    /// `(`.
    Open,
    /// `)`.
    Close,
    /// `=` after an output name.
    Equals,
}

impl TokenKind {
    /// How the kind is named in "expected ..., found ..." messages.
    pub fn describe(self) -> &'static str {
        match self {
            TokenKind::Identifier => "an input name",
            TokenKind::Not => "a NOT",
            TokenKind::Prime => "a postfix NOT (')",
            TokenKind::And => "an AND",
            TokenKind::Or => "an OR",
            TokenKind::ExclusiveOr => "'^'",
            TokenKind::Open => "'('",
            TokenKind::Close => "')'",
            TokenKind::Equals => "'='",
        }
    }
}

/// One token and where it is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Token {
    /// What it is.
    pub kind: TokenKind,
    /// Where it is (bytes of the source).
    pub span: Span,
}

/// Split `source` into tokens, skipping white space.
pub fn tokenize(source: &str) -> Result<Vec<Token>, ExprError> {
    let bytes = source.as_bytes();
    let mut tokens = Vec::with_capacity(source.len() / 2 + 1);
    let mut index = 0;
    while index < bytes.len() {
        let byte = bytes[index];
        let single = |kind| Token { kind, span: Span::new(index, index + 1) };
        let token = match byte {
            b' ' | b'\t' | b'\r' | b'\n' => {
                index += 1;
                continue;
            }
            // A byte-order mark (U+FEFF) at the very start is skipped, as every reader skips it.
            0xEF if index == 0 && source.starts_with('\u{feff}') => {
                index += '\u{feff}'.len_utf8();
                continue;
            }
            b'!' | b'~' => single(TokenKind::Not),
            b'\'' => single(TokenKind::Prime),
            b'&' | b'*' | b'.' => single(TokenKind::And),
            b'|' | b'+' => single(TokenKind::Or),
            b'^' => single(TokenKind::ExclusiveOr),
            b'(' => single(TokenKind::Open),
            b')' => single(TokenKind::Close),
            b'=' => single(TokenKind::Equals),
            byte if is_identifier_start(byte) => {
                let start = index;
                let mut end = index + 1;
                while end < bytes.len() && is_identifier_continue(bytes[end]) {
                    end += 1;
                }
                Token { kind: TokenKind::Identifier, span: Span::new(start, end) }
            }
            _ => {
                let character = source[index..].chars().next().unwrap_or('\u{fffd}');
                let span = Span::new(index, index + character.len_utf8());
                let found = if byte.is_ascii_digit() {
                    return Err(ExprError::Unexpected {
                        expected: "an input name (a letter or '_' first)".into(),
                        found: format!("'{character}'"),
                        span,
                    });
                } else {
                    character
                };
                return Err(ExprError::UnknownCharacter { character: found, span });
            }
        };
        index = token.span.end;
        tokens.push(token);
    }
    Ok(tokens)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn kinds(source: &str) -> Vec<TokenKind> {
        tokenize(source).unwrap().into_iter().map(|t| t.kind).collect()
    }

    #[test]
    fn every_operator_spelling() {
        use TokenKind::*;
        assert_eq!(
            kinds("!~'&*.|+^()="),
            vec![Not, Not, Prime, And, And, And, Or, Or, ExclusiveOr, Open, Close, Equals]
        );
    }

    #[test]
    fn identifiers_carry_spans() {
        let tokens = tokenize("  ab_1 & c").unwrap();
        assert_eq!(tokens[0].span, Span::new(2, 6));
        assert_eq!(tokens[2].span, Span::new(9, 10));
    }

    #[test]
    fn unknown_characters_are_located() {
        assert_eq!(tokenize("a # b"), Err(ExprError::UnknownCharacter { character: '#', span: Span::new(2, 3) }));
        let error = tokenize("a & é").unwrap_err();
        assert_eq!(error.span(), Span::new(4, 6));
    }

    #[test]
    fn a_leading_byte_order_mark_is_skipped_and_a_nul_is_refused() {
        let tokens = tokenize("\u{feff}!a").unwrap();
        assert_eq!(tokens[0].span, Span::new(3, 4));
        // Anywhere else it is an unknown character, as is a NUL, whose message escapes it.
        assert!(tokenize("!a\u{feff}").is_err());
        let error = tokenize("a \u{0} b").unwrap_err();
        assert_eq!(error.to_string(), "unknown character '\\u{0}'");
    }

    #[test]
    fn a_digit_cannot_start_a_name() {
        assert!(matches!(tokenize("1a"), Err(ExprError::Unexpected { .. })));
    }
}
