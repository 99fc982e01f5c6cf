//! Parser: precedence climbing over the tokens, NOT > AND > XOR > OR, with an explicit nesting limit.
//!
//! Chains of one operator are read in a loop into one n-ary node and runs of NOTs collapse by
//! parity, so only parentheses nest the recursion; [`MAX_NESTING`] bounds it, so no input can
//! overflow the stack.

use crate::diagnostic::Span;
use crate::expr::ast::{Expr, ExprKind};
use crate::expr::error::ExprError;
use crate::expr::lexer::{Token, TokenKind, tokenize};

/// Deepest nesting of parentheses the parser accepts.
pub const MAX_NESTING: usize = 256;
/// Longest expression text the parser reads, in bytes.
pub const MAX_EXPRESSION_BYTES: usize = 1 << 20;

/// A parsed line: an optional `name =` prefix and the expression.
#[derive(Debug, Clone, PartialEq)]
pub struct Parsed {
    /// The output name and its span, when the text starts with `name =`.
    pub output: Option<(String, Span)>,
    /// The expression.
    pub expr: Expr,
}

/// What may start an operand, for messages.
const OPERAND: &str = "an input name, a NOT or '('";

/// Parse `source` into an expression, with an optional `name =` output prefix.
pub fn parse(source: &str) -> Result<Parsed, ExprError> {
    parse_within(source, MAX_EXPRESSION_BYTES)
}

/// Parse text of at most `limit` bytes: [`parse`] with another length limit, for text the program
/// wrote itself (a canonical form of an accepted expression may be longer than what was written).
pub fn parse_within(source: &str, limit: usize) -> Result<Parsed, ExprError> {
    if source.len() > limit {
        return Err(ExprError::TooLong { length: source.len(), limit, span: Span::new(0, source.len()) });
    }
    let tokens = tokenize(source)?;
    if tokens.is_empty() {
        return Err(ExprError::Empty { span: Span::new(0, source.len()) });
    }
    let mut parser = Parser { source, tokens: &tokens, position: 0, depth: 0 };
    let output = match (tokens.first(), tokens.get(1)) {
        (Some(name), Some(equals)) if name.kind == TokenKind::Identifier && equals.kind == TokenKind::Equals => {
            parser.position = 2;
            if parser.peek().is_none() {
                return Err(parser.unexpected(OPERAND));
            }
            Some((source[name.span.start..name.span.end].to_string(), name.span))
        }
        _ => None,
    };
    let expr = parser.or()?;
    if let Some(token) = parser.peek() {
        let expected = if token.kind == TokenKind::Close {
            "an operator or the end (this ')' has no matching '(')"
        } else {
            "an operator or the end"
        };
        return Err(parser.unexpected(expected));
    }
    Ok(Parsed { output, expr })
}

struct Parser<'a> {
    source: &'a str,
    tokens: &'a [Token],
    position: usize,
    depth: usize,
}

impl Parser<'_> {
    fn peek(&self) -> Option<Token> {
        self.tokens.get(self.position).copied()
    }

    fn end_span(&self) -> Span {
        Span::new(self.source.len(), self.source.len())
    }

    fn unexpected(&self, expected: &str) -> ExprError {
        match self.peek() {
            Some(token) => ExprError::Unexpected {
                expected: expected.to_string(),
                found: format!("'{}'", &self.source[token.span.start..token.span.end]),
                span: token.span,
            },
            None => ExprError::Unexpected {
                expected: expected.to_string(),
                found: "the end".to_string(),
                span: self.end_span(),
            },
        }
    }

    /// `or := xor (OR xor)*`
    fn or(&mut self) -> Result<Expr, ExprError> {
        let first = self.exclusive_or()?;
        let mut operands = vec![first];
        while self.peek().is_some_and(|t| t.kind == TokenKind::Or) {
            self.position += 1;
            operands.push(self.exclusive_or()?);
        }
        Ok(gather(operands, ExprKind::Or))
    }

    /// `xor := and (^ and)*`
    fn exclusive_or(&mut self) -> Result<Expr, ExprError> {
        let first = self.and()?;
        let mut operands = vec![first];
        let mut operator = None;
        while let Some(token) = self.peek().filter(|t| t.kind == TokenKind::ExclusiveOr) {
            operator.get_or_insert(token.span);
            self.position += 1;
            operands.push(self.and()?);
        }
        Ok(match operator {
            None => operands.pop().expect("one operand"),
            Some(operator) => gather(operands, |operands| ExprKind::ExclusiveOr { operands, operator }),
        })
    }

    /// `and := unary ((AND | juxtaposition) unary)*`
    fn and(&mut self) -> Result<Expr, ExprError> {
        let first = self.unary()?;
        let mut operands = vec![first];
        loop {
            match self.peek().map(|t| t.kind) {
                Some(TokenKind::And) => {
                    self.position += 1;
                    operands.push(self.unary()?);
                }
                Some(TokenKind::Identifier | TokenKind::Not | TokenKind::Open) => operands.push(self.unary()?),
                _ => break,
            }
        }
        Ok(gather(operands, ExprKind::And))
    }

    /// `unary := NOT* primary PRIME*`; the NOTs count by parity.
    fn unary(&mut self) -> Result<Expr, ExprError> {
        let mut negations = 0usize;
        let start = self.peek().map(|t| t.span.start);
        while self.peek().is_some_and(|t| t.kind == TokenKind::Not) {
            negations += 1;
            self.position += 1;
        }
        let mut expr = self.primary()?;
        while let Some(token) = self.peek().filter(|t| t.kind == TokenKind::Prime) {
            negations += 1;
            expr.span = expr.span.join(token.span);
            self.position += 1;
        }
        if negations % 2 == 1 {
            let span = Span::new(start.unwrap_or(expr.span.start), expr.span.end);
            expr = Expr { kind: ExprKind::Not(Box::new(expr)), span };
        } else if let Some(start) = start {
            expr.span = Span::new(start, expr.span.end);
        }
        Ok(expr)
    }

    /// `primary := IDENT | '(' or ')'`
    fn primary(&mut self) -> Result<Expr, ExprError> {
        let Some(token) = self.peek() else {
            return Err(self.unexpected(OPERAND));
        };
        match token.kind {
            TokenKind::Identifier => {
                self.position += 1;
                let name = self.source[token.span.start..token.span.end].to_string();
                Ok(Expr { kind: ExprKind::Input(name), span: token.span })
            }
            TokenKind::Open => {
                if self.depth >= MAX_NESTING {
                    return Err(ExprError::TooDeep { limit: MAX_NESTING, span: token.span });
                }
                self.depth += 1;
                self.position += 1;
                let mut inner = self.or()?;
                match self.peek() {
                    Some(close) if close.kind == TokenKind::Close => {
                        self.position += 1;
                        self.depth -= 1;
                        inner.span = Span::new(token.span.start, close.span.end);
                        Ok(inner)
                    }
                    Some(_) => Err(self.unexpected("an operator or ')'")),
                    None => Err(ExprError::Unclosed { span: token.span }),
                }
            }
            _ => Err(self.unexpected(OPERAND)),
        }
    }
}

/// One operand stands for itself; more become an n-ary node spanning all of them.
fn gather(mut operands: Vec<Expr>, make: impl FnOnce(Vec<Expr>) -> ExprKind) -> Expr {
    if operands.len() == 1 {
        return operands.pop().expect("one operand");
    }
    let span = operands[0].span.join(operands[operands.len() - 1].span);
    Expr { kind: make(operands), span }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The tree as compact text: `!` NOT, `&`/`|`/`^` n-ary in brackets.
    fn shape(expr: &Expr) -> String {
        let list = |operator: &str, operands: &[Expr]| {
            let inner: Vec<String> = operands.iter().map(shape).collect();
            format!("{operator}[{}]", inner.join(" "))
        };
        match &expr.kind {
            ExprKind::Input(name) => name.clone(),
            ExprKind::Not(inner) => format!("!{}", shape(inner)),
            ExprKind::And(operands) => list("&", operands),
            ExprKind::Or(operands) => list("|", operands),
            ExprKind::ExclusiveOr { operands, .. } => list("^", operands),
        }
    }

    #[test]
    fn table_of_accepted_expressions() {
        // input text -> tree
        let cases = [
            ("!(a & b)", "!&[a b]"),
            ("y = !(a*b + c)", "!|[&[a b] c]"),
            ("~((a | b) & c)", "!&[|[a b] c]"),
            ("(a b + c)'", "!|[&[a b] c]"),
            ("a.b", "&[a b]"),
            ("a b c", "&[a b c]"),
            ("a(b+c)", "&[a |[b c]]"),
            ("!a !b", "&[!a !b]"),
            ("!!a", "a"),
            ("a''", "a"),
            ("!a'", "a"),
            ("a | b & c", "|[a &[b c]]"),
            ("a ^ b | c", "|[^[a b] c]"),
            ("!a & b ^ c", "^[&[!a b] c]"),
            ("(((a)))", "a"),
            ("_x1 & B2", "&[_x1 B2]"),
        ];
        for (text, expected) in cases {
            let parsed = parse(text).unwrap_or_else(|e| panic!("{text}: {e}"));
            assert_eq!(shape(&parsed.expr), expected, "{text}");
        }
    }

    #[test]
    fn output_name_prefix() {
        let parsed = parse("out = !(a & b)").unwrap();
        assert_eq!(parsed.output, Some(("out".to_string(), Span::new(0, 3))));
        assert_eq!(parse("!(a & b)").unwrap().output, None);
    }

    #[test]
    fn table_of_rejected_expressions() {
        // input text -> (byte where the caret goes, a word of the message)
        let cases = [
            ("", 0, "empty"),
            ("   ", 0, "empty"),
            ("&", 0, "found '&'"),
            ("a &", 3, "found the end"),
            ("!(a &)", 5, "found ')'"),
            ("(a & b", 0, "never closed"),
            ("a & b)", 5, "no matching"),
            ("a # b", 2, "unknown character '#'"),
            ("a + + b", 4, "found '+'"),
            ("y =", 3, "found the end"),
            ("a = b = c", 6, "found '='"),
            ("()", 1, "found ')'"),
            ("2a", 0, "input name"),
            ("!", 1, "found the end"),
        ];
        for (text, at, word) in cases {
            let error = parse(text).expect_err(text);
            assert_eq!(error.span().start, at, "{text}: {error}");
            assert!(error.to_string().contains(word), "{text}: {error}");
        }
    }

    #[test]
    fn deep_nesting_is_an_error_not_a_crash() {
        let deep = format!("{}a{}", "(".repeat(100_000), ")".repeat(100_000));
        let error = parse(&deep).unwrap_err();
        assert!(matches!(error, ExprError::TooDeep { .. }));
        assert_eq!(error.span().start, MAX_NESTING);
        let nots = format!("{}a", "!".repeat(100_001));
        assert_eq!(shape(&parse(&nots).unwrap().expr), "!a");
        let fine = format!("!{}a{}", "(".repeat(MAX_NESTING), ")".repeat(MAX_NESTING));
        assert!(parse(&fine).is_ok());
    }

    #[test]
    fn long_flat_chains_do_not_recurse() {
        let text: Vec<String> = (0..50_000).map(|i| format!("x{i}")).collect();
        let parsed = parse(&format!("!({})", text.join(" & "))).unwrap();
        let ExprKind::Not(inner) = parsed.expr.kind else { panic!() };
        assert!(matches!(inner.kind, ExprKind::And(ref v) if v.len() == 50_000));
    }
}
