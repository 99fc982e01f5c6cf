//! How the work grows with the gate: sizing against nesting depth (time per literal occurrence
//! should stay flat), and the delay report against plain sizing on expressions of 100, 300 and
//! 1,000 literal occurrences over 16 repeated inputs (the ratio, and its growth in literals).
//! Run with `cargo bench --bench scaling [depth|delays]`.
//!
//! Each figure is the best of several timed rounds (the least disturbed by other work on the
//! machine), after a warm-up round.

#![forbid(unsafe_code)]

/// The binary's allocator, so that the figures are the binary's.
#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;

mod support;

use std::hint::black_box;

use support::{best_of, big_expression};
use widthwise::analysis::size_and_time;
use widthwise::figures::CellFigures;
use widthwise::logic::synthesize;
use widthwise::sizing::{Method, Plan, size_best};
use widthwise::{Error, size_text};

fn options(method: Method) -> Plan {
    Plan::new(method, 2.0, 1.0, None)
}

/// A pull-down `levels` deep (series and parallel alternating, one literal hanging off each level):
/// `!(a0 | b0 & (a1 | b1 & (... | aN)))`, two tree levels per pair of parentheses.
fn nested(levels: usize) -> String {
    let pairs = levels / 2;
    let mut text = format!("a{pairs}");
    for k in (0..pairs).rev() {
        text = format!("a{k} | b{k} & ({text})");
    }
    format!("!({text})")
}

/// Sizing and figures (what `size` writes without delays) against nesting depth.
fn depth() {
    println!("sizing against nesting depth: size and figures, time per literal occurrence (flat is linear)");
    for levels in [50, 100, 250, 500, 1000] {
        let text = nested(levels);
        let literals = levels / 2 * 2 + 1;
        for method in [Method::LongestPath, Method::MIN_AREA] {
            let plan = options(method);
            // Past the parser's nesting limit the expression is refused (an error, never a panic).
            let mut refused: Option<Error> = None;
            let rounds = if levels >= 500 { 5 } else { 20 };
            let time = best_of(rounds, || match size_text(&text, &plan) {
                Ok(cell) => {
                    black_box(CellFigures::of(&cell));
                }
                Err(error) => refused = Some(error),
            });
            match refused {
                Some(error) => println!("  depth {levels:>5} {:<13} refused: {error}", method.name()),
                None => println!(
                    "  depth {levels:>5} {:<13} {literals:>5} literals {:>9.3} ms  {:>7.2} us per literal",
                    method.name(),
                    time.as_secs_f64() * 1e3,
                    time.as_secs_f64() * 1e6 / literals as f64
                ),
            }
        }
    }
}

/// Plain sizing (size and figures) against the delay report (`size --delays`: the cell sized,
/// timed, the methods side by side, and its figures), in-process.
fn delays(sizes: &[usize]) {
    println!("\nthe delay report against plain sizing, 16 repeated inputs (longest-path, fan-out 1)");
    let plan = options(Method::LongestPath);
    for &literals in sizes {
        let text = big_expression(literals, 16);
        let rounds = if literals >= 1000 { 3 } else { 10 };
        let plain = best_of(rounds * 3, || {
            black_box(CellFigures::of(&size_text(&text, &plan).expect("the gate sizes")));
        });
        let mut rows = 0;
        let timed = best_of(rounds, || {
            let forms = synthesize(&text).expect("the expression reads");
            let untimed = size_best(&forms, &plan).expect("the gate sizes");
            let (cell, report) = size_and_time(&untimed.logic, &plan).expect("the gate is timed");
            rows = report.timing.delays.len();
            black_box((CellFigures::of(&cell), report));
        });
        println!(
            "  {literals:>5} literals  plain {:>9.3} ms  delays {:>10.3} ms ({rows} rows)  ratio {:>7.1}  delays per literal {:>8.2} us",
            plain.as_secs_f64() * 1e3,
            timed.as_secs_f64() * 1e3,
            timed.as_secs_f64() / plain.as_secs_f64(),
            timed.as_secs_f64() * 1e6 / literals as f64
        );
    }
}

fn main() {
    // `cargo bench` passes `--bench`; a section name picks one section, numbers pick the sizes
    // of the delays section.
    let wanted: Vec<String> = std::env::args().skip(1).filter(|a| !a.starts_with("--")).collect();
    let sizes: Vec<usize> = wanted.iter().filter_map(|w| w.parse().ok()).collect();
    let sections: Vec<&String> = wanted.iter().filter(|w| w.parse::<usize>().is_err()).collect();
    let run = |name: &str| sections.is_empty() || sections.iter().any(|w| *w == name);
    if run("depth") {
        depth();
    }
    if run("delays") {
        delays(if sizes.is_empty() { &[100, 300, 1000] } else { &sizes });
    }
}
