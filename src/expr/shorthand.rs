//! The trade's gate names (`inv`, `nand2`, `aoi21`, `oai33` ...) as expression trees.
//!
//! Inputs are named `a`, `b`, `c` ... `z`, then `a1`, `b1` ... in order, skipping any name the gate
//! cannot give an input: the output's (`y` unless named) and the reserved ones. AOI groups are ANDed
//! then ORed; OAI groups are ORed then ANDed; the digits give the group sizes (`aoi21` =
//! `!(a & b | c)`). [`expand_cell`] adds the cells of more than one stage (`buf`, `and2`, `ao21`,
//! `xor2`, `mux2`, `maj3` ...), listed with their inputs and functions in [`CELL_HELP`].

use crate::diagnostic::Span;
use crate::expr::ast::{Expr, ExprKind};
use crate::expr::error::ExprError;

/// Most inputs of a NAND or NOR shorthand, and most members of an AOI/OAI group.
pub const MAX_STACK: usize = 8;
/// Most groups of an AOI/OAI shorthand.
pub const MAX_GROUPS: usize = 8;

const KNOWN: &str = "known gates are inv, nand2..nand8, nor2..nor8, and aoi/oai followed by group sizes \
                     such as aoi21, aoi22, aoi211, aoi221, aoi222, aoi31, aoi32, aoi33, oai21 ... oai33";

/// Whether `name` is meant as a gate shorthand: a lone name in place of an expression always is,
/// since a lone input would be a non-inverting buffer.
///
/// Returns the expression tree, with every span on `span`, or why the name is not a known gate.
/// `taken` says which names the inputs may not have (the output's, the reserved ones): they are
/// skipped.
pub fn expand(name: &str, span: Span, taken: &dyn Fn(&str) -> bool) -> Result<Expr, ExprError> {
    let mut names = InputNames { taken, next: 0 };
    let lower = name.to_ascii_lowercase();
    let unknown = |why: String| ExprError::UnknownShorthand { name: name.to_string(), why, span };
    let groups: Vec<usize> = if lower == "inv" {
        return Ok(not(names.input(span), span));
    } else if let Some(count) = lower.strip_prefix("nand").or_else(|| lower.strip_prefix("nor")) {
        let is_nand = lower.starts_with("nand");
        let family = if is_nand { "nand" } else { "nor" };
        let inputs: usize =
            count.parse().ok().filter(|n| (2..=MAX_STACK).contains(n) && !count.starts_with('0')).ok_or_else(|| {
                unknown(format!("{family} takes 2 to {MAX_STACK} inputs ({family}2 .. {family}{MAX_STACK})"))
            })?;
        let operands: Vec<Expr> = (0..inputs).map(|_| names.input(span)).collect();
        let kind = if is_nand { ExprKind::And(operands) } else { ExprKind::Or(operands) };
        return Ok(not(Expr { kind, span }, span));
    } else if let Some(digits) = lower.strip_prefix("aoi").or_else(|| lower.strip_prefix("oai")) {
        let family = &lower[..3];
        let sizes: Option<Vec<usize>> = digits
            .chars()
            .map(|c| c.to_digit(10).map(|d| d as usize).filter(|d| (1..=MAX_STACK).contains(d)))
            .collect();
        match sizes {
            Some(sizes) if (2..=MAX_GROUPS).contains(&sizes.len()) && sizes.iter().any(|&s| s > 1) => sizes,
            _ => {
                return Err(unknown(format!(
                    "{family} takes 2 to {MAX_GROUPS} group sizes of 1 to {MAX_STACK}, at least one above 1 \
                     (e.g. {family}21)"
                )));
            }
        }
    } else {
        return Err(unknown(format!(
            "{KNOWN}; a lone input '{name}' would be a non-inverting buffer, not a single stage"
        )));
    };
    let is_aoi = lower.starts_with("aoi");
    let mut terms = Vec::with_capacity(groups.len());
    for size in groups {
        let members: Vec<Expr> = (0..size).map(|_| names.input(span)).collect();
        terms.push(if size == 1 {
            members.into_iter().next().expect("one member")
        } else if is_aoi {
            Expr { kind: ExprKind::And(members), span }
        } else {
            Expr { kind: ExprKind::Or(members), span }
        });
    }
    let kind = if is_aoi { ExprKind::Or(terms) } else { ExprKind::And(terms) };
    Ok(not(Expr { kind, span }, span))
}

/// What the shorthands of cells of one or more stages are, one line each: name, inputs, function.
/// Every name is case-insensitive and stands in place of the whole expression or after `name =`;
/// the digits of the group families give the group sizes, as for `aoi`.
pub const CELL_HELP: &str = "\
inv                      a            y = !a
nand2 .. nand8           a, b, ...    y = !(a & b & ...)
nor2 .. nor8             a, b, ...    y = !(a | b | ...)
aoi21, aoi22, aoi211 ... a, b, c, ... y = !(a & b | c): 2 to 8 AND groups of 1 to 8, ORed, inverted
oai21, oai22, oai211 ... a, b, c, ... y = !((a | b) & c): OR groups ANDed, inverted
buf                      a            y = a
and2 .. and8             a, b, ...    y = a & b & ...
or2 .. or8               a, b, ...    y = a | b | ...
ao21, ao22, ao211 ...    a, b, c, ... y = a & b | c: AND groups ORed
oa21, oa22, oa211 ...    a, b, c, ... y = (a | b) & c: OR groups ANDed
xor2                     a, b         y = a ^ b
xnor2                    a, b         y = !(a ^ b)
xor3                     a, b, c      y = a ^ b ^ c
mux2                     a, b, s      y = a & !s | b & s (a when s = 0, b when s = 1)
mux2i                    a, b, s      y = !(a & !s | b & s)
maj3                     a, b, c      y = a & b | c & (a | b) (1 when two or more inputs are 1)
";

const KNOWN_CELLS: &str = "known cells are inv, nand2..nand8, nor2..nor8, aoi/oai followed by group sizes (aoi21, \
                           oai22 ...), buf, and2..and8, or2..or8, ao/oa followed by group sizes (ao21, ao22, oa21, \
                           oa22 ...), xor2, xnor2, xor3, mux2, mux2i and maj3";

/// A cell shorthand expanded: the expression and its pins in order.
#[derive(Debug, Clone, PartialEq)]
pub struct CellShorthand {
    /// The function, every span on the name.
    pub expr: Expr,
    /// Input names in pin order: `a`, `b`, `c` ... in order of first appearance, except the muxes,
    /// whose pins are `a`, `b`, `s` though `s` is written before `b`.
    pub pins: Vec<String>,
}

/// Expand any cell shorthand of [`CELL_HELP`]: those of one inverting stage exactly as [`expand`]
/// gives them, and the non-inverting and binate ones (`buf`, `and2`, `xor2`, `mux2`, `maj3` ...)
/// that need more than one stage. As in [`expand`], inputs skip the names `taken` says no input may
/// have (a mux's select is `s`, else `s1`, `s2` ...).
pub fn expand_cell(name: &str, span: Span, taken: &dyn Fn(&str) -> bool) -> Result<CellShorthand, ExprError> {
    // These cells take at most three inputs: their names, skipping the taken ones.
    let names: Vec<String> = (0..).map(input_name).filter(|name| !taken(name)).take(3).collect();
    let input = |index: usize| Expr { kind: ExprKind::Input(names[index].clone()), span };
    let lower = name.to_ascii_lowercase();
    let unknown = |why: String| ExprError::UnknownShorthand { name: name.to_string(), why, span };
    let binary = |make: fn(Vec<Expr>) -> ExprKind, operands: Vec<Expr>| Expr { kind: make(operands), span };
    let exclusive_or = |count: usize| {
        let operands = (0..count).map(input).collect();
        Expr { kind: ExprKind::ExclusiveOr { operands, operator: span }, span }
    };
    // a & !s | b & s: data a and b, select s.
    let mux = |select: &str| {
        let select = || Expr { kind: ExprKind::Input(select.to_string()), span };
        let when_low = binary(ExprKind::And, vec![input(0), not(select(), span)]);
        let when_high = binary(ExprKind::And, vec![input(1), select()]);
        binary(ExprKind::Or, vec![when_low, when_high])
    };
    let expr = match lower.as_str() {
        "buf" => input(0),
        "xor2" => exclusive_or(2),
        "xnor2" => not(exclusive_or(2), span),
        "xor3" => exclusive_or(3),
        "mux2" | "mux2i" => {
            let data = [names[0].clone(), names[1].clone()];
            let select = (0..=MAX_GROUPS * MAX_STACK)
                .map(|k| if k == 0 { "s".to_string() } else { format!("s{k}") })
                .find(|candidate| !taken(candidate) && !data.contains(candidate))
                .unwrap_or_else(|| "s".to_string());
            let expr = if lower == "mux2" { mux(&select) } else { not(mux(&select), span) };
            let [a, b] = data;
            return Ok(CellShorthand { expr, pins: vec![a, b, select] });
        }
        "maj3" => {
            let either = binary(ExprKind::Or, vec![input(0), input(1)]);
            let both = binary(ExprKind::And, vec![input(0), input(1)]);
            binary(ExprKind::Or, vec![both, binary(ExprKind::And, vec![input(2), either])])
        }
        _ => {
            // The non-inverting families are their inverting namesakes without the final NOT.
            // Only a prefix followed by digits alone is taken as one of these families.
            let digits =
                |prefix: &str| lower.strip_prefix(prefix).filter(|rest| rest.bytes().all(|b| b.is_ascii_digit()));
            let namesake = if let Some(count) = digits("and") {
                Some((format!("nand{count}"), format!("and takes 2 to {MAX_STACK} inputs (and2 .. and{MAX_STACK})")))
            } else if let Some(count) = digits("or") {
                Some((format!("nor{count}"), format!("or takes 2 to {MAX_STACK} inputs (or2 .. or{MAX_STACK})")))
            } else if let Some(sizes) = digits("ao") {
                Some((format!("aoi{sizes}"), groups_why("ao")))
            } else {
                digits("oa").map(|sizes| (format!("oai{sizes}"), groups_why("oa")))
            };
            match namesake {
                Some((namesake, why)) => match expand(&namesake, span, taken) {
                    Ok(Expr { kind: ExprKind::Not(inner), .. }) => *inner,
                    _ => return Err(unknown(why)),
                },
                None if lower == "inv" || ["nand", "nor", "aoi", "oai"].iter().any(|f| lower.starts_with(f)) => {
                    expand(name, span, taken)?
                }
                None => return Err(unknown(KNOWN_CELLS.to_string())),
            }
        }
    };
    let mut pins = Vec::new();
    first_appearance(&expr, &mut pins);
    Ok(CellShorthand { expr, pins })
}

/// Why a group-size shorthand of `family` is not known.
fn groups_why(family: &str) -> String {
    format!("{family} takes 2 to {MAX_GROUPS} group sizes of 1 to {MAX_STACK}, at least one above 1 (e.g. {family}21)")
}

/// Input names of `expr` in order of first appearance.
fn first_appearance(expr: &Expr, pins: &mut Vec<String>) {
    match &expr.kind {
        ExprKind::Input(name) => {
            if !pins.contains(name) {
                pins.push(name.clone());
            }
        }
        ExprKind::Not(inner) => first_appearance(inner, pins),
        ExprKind::And(operands) | ExprKind::Or(operands) | ExprKind::ExclusiveOr { operands, .. } => {
            operands.iter().for_each(|operand| first_appearance(operand, pins))
        }
    }
}

/// The name of the `index`th candidate: a, b, ... z, then a1, b1 ...
pub fn input_name(index: usize) -> String {
    let letter = (b'a' + (index % 26) as u8) as char;
    match index / 26 {
        0 => letter.to_string(),
        round => format!("{letter}{round}"),
    }
}

/// The names a shorthand's inputs take, in order: the candidates of [`input_name`], less the taken
/// ones, made as they are asked for.
struct InputNames<'a> {
    taken: &'a dyn Fn(&str) -> bool,
    /// The next candidate to try.
    next: usize,
}

impl InputNames<'_> {
    /// The next input, as an expression node.
    fn input(&mut self, span: Span) -> Expr {
        loop {
            let name = input_name(self.next);
            self.next += 1;
            if !(self.taken)(&name) {
                return Expr { kind: ExprKind::Input(name), span };
            }
        }
    }
}

fn not(inner: Expr, span: Span) -> Expr {
    Expr { kind: ExprKind::Not(Box::new(inner)), span }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn text(name: &str) -> String {
        expand(name, Span::default(), &|name| name == "y").unwrap().to_text()
    }

    #[test]
    fn table_of_shorthands() {
        // The usual meaning of each name (common practice, no source).
        let cases = [
            ("inv", "!a"),
            ("nand2", "!(a & b)"),
            ("NAND3", "!(a & b & c)"),
            ("nor2", "!(a | b)"),
            ("nor8", "!(a | b | c | d | e | f | g | h)"),
            ("aoi21", "!(a & b | c)"),
            ("aoi22", "!(a & b | c & d)"),
            ("aoi211", "!(a & b | c | d)"),
            ("aoi221", "!(a & b | c & d | e)"),
            ("aoi222", "!(a & b | c & d | e & f)"),
            ("aoi31", "!(a & b & c | d)"),
            ("aoi32", "!(a & b & c | d & e)"),
            ("aoi33", "!(a & b & c | d & e & f)"),
            ("oai21", "!((a | b) & c)"),
            ("oai22", "!((a | b) & (c | d))"),
            ("oai211", "!((a | b) & c & d)"),
            ("oai221", "!((a | b) & (c | d) & e)"),
            ("oai222", "!((a | b) & (c | d) & (e | f))"),
            ("oai31", "!((a | b | c) & d)"),
            ("oai32", "!((a | b | c) & (d | e))"),
            ("oai33", "!((a | b | c) & (d | e | f))"),
        ];
        for (name, expected) in cases {
            assert_eq!(text(name), expected, "{name}");
        }
    }

    #[test]
    fn unknown_names_say_why() {
        for name in ["nand1", "nand9", "nand02", "nor", "aoi2", "aoi11", "aoi20", "oai123456789", "and2", "x", "buf"] {
            let error = expand(name, Span::new(3, 3 + name.len()), &|_| false).unwrap_err();
            assert!(matches!(error, ExprError::UnknownShorthand { .. }), "{name}");
            assert_eq!(error.span().start, 3);
            assert!(error.to_string().contains(&format!("'{name}'")), "{error}");
        }
    }

    #[test]
    fn input_names_run_past_z() {
        assert_eq!(input_name(0), "a");
        assert_eq!(input_name(25), "z");
        assert_eq!(input_name(26), "a1");
    }

    #[test]
    fn input_names_skip_the_taken_ones() {
        // 25 inputs reach the 25th letter, y, the default output: it is skipped, so z follows x.
        let wide = expand("aoi8881", Span::default(), &|name| name == "y").unwrap().to_text();
        assert!(wide.ends_with("w & x | z)") && !wide.contains(" y "), "{wide}");
        let named = expand("nand3", Span::default(), &|name| name.eq_ignore_ascii_case("b")).unwrap();
        assert_eq!(named.to_text(), "!(a & c & d)");
        // The largest shorthand, 8 groups of 8, with several names taken.
        let largest = expand("oai88888888", Span::default(), &|name| ["a", "y", "b1"].contains(&name)).unwrap();
        let text = largest.to_text();
        assert!(text.starts_with("!((b | c") && text.contains("x | z) & (a1 | c1 |"), "{text}");
    }
}
