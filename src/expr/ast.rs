//! The parsed expression tree, with a span on every node, and its canonical text.

use crate::diagnostic::Span;

/// A node of the parsed expression.
#[derive(Debug, Clone, PartialEq)]
pub struct Expr {
    /// What the node is.
    pub kind: ExprKind,
    /// The text it came from.
    pub span: Span,
}

/// The kinds of expression node. AND, OR and XOR are n-ary: `a & b & c` is one node.
#[derive(Debug, Clone, PartialEq)]
pub enum ExprKind {
    /// An input by name.
    Input(String),
    /// Logical NOT.
    Not(Box<Expr>),
    /// Logical AND of two or more operands.
    And(Vec<Expr>),
    /// Logical OR of two or more operands.
    Or(Vec<Expr>),
    /// Exclusive OR, parsed only to be refused with a reason; `operator` is the first `^`.
    ExclusiveOr {
        /// The operands.
        operands: Vec<Expr>,
        /// The first `^`.
        operator: Span,
    },
}

impl Expr {
    /// Canonical text: `!` for NOT, `&` for AND, `|` for OR, the fewest parentheses.
    pub fn to_text(&self) -> String {
        let mut out = String::new();
        self.write_text(&mut out, 0);
        out
    }

    /// Binding strength of the node's operator (higher binds tighter).
    fn precedence(&self) -> u8 {
        match self.kind {
            ExprKind::Or(_) => 1,
            ExprKind::ExclusiveOr { .. } => 2,
            ExprKind::And(_) => 3,
            ExprKind::Not(_) | ExprKind::Input(_) => 4,
        }
    }

    fn write_text(&self, out: &mut String, context: u8) {
        let parenthesize = self.precedence() < context;
        if parenthesize {
            out.push('(');
        }
        let join = |operands: &[Expr], separator: &str, own: u8, out: &mut String| {
            for (index, operand) in operands.iter().enumerate() {
                if index > 0 {
                    out.push_str(separator);
                }
                operand.write_text(out, own + 1);
            }
        };
        match &self.kind {
            ExprKind::Input(name) => out.push_str(name),
            ExprKind::Not(inner) => {
                out.push('!');
                inner.write_text(out, 4);
            }
            ExprKind::And(operands) => join(operands, " & ", 3, out),
            ExprKind::ExclusiveOr { operands, .. } => join(operands, " ^ ", 2, out),
            ExprKind::Or(operands) => join(operands, " | ", 1, out),
        }
        if parenthesize {
            out.push(')');
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn input(name: &str) -> Expr {
        Expr { kind: ExprKind::Input(name.into()), span: Span::default() }
    }

    #[test]
    fn canonical_text_uses_fewest_parentheses() {
        let and = Expr { kind: ExprKind::And(vec![input("a"), input("b")]), span: Span::default() };
        let or = Expr { kind: ExprKind::Or(vec![and, input("c")]), span: Span::default() };
        let not = Expr { kind: ExprKind::Not(Box::new(or.clone())), span: Span::default() };
        assert_eq!(not.to_text(), "!(a & b | c)");
        let and_of_or = Expr { kind: ExprKind::And(vec![or, input("d")]), span: Span::default() };
        assert_eq!(and_of_or.to_text(), "(a & b | c) & d");
    }
}
