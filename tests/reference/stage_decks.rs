//! Decks of cells of several stages: ngspice from Debian's packages simulates every pin's worst
//! transition through the whole cell (`widthwise deck and2` and `xor2`, the process's level-1
//! models), and each measured pin-to-output delay lies within a stated factor of the Elmore delay
//! widthwise chose the transition by (docs/model.md sections 7, 9 and 11).
//!
//! Why the factor [0.65, 1.05] (first-order, docs/model.md section 7): with `--diffusion-capacitance`
//! the deck carries the capacitances the Elmore delay counts (every diffusion, each internal net's
//! gate load written as a capacitor, the load), and the unit R is chosen so that a lone RC stage's
//! 50 % delay is ln 2 (0.69) of its first moment, the Elmore delay. The first moments of stages
//! in a chain add, and the 50 % point of a step response whose impulse response is unimodal lies
//! between ln 2 of its first moment and the first moment itself (the Elmore delay as an upper bound:
//! Gupta, Tutuianu and Pileggi, "The Elmore delay as a bound for RC trees with generalized input
//! signals", IEEE TCAD 1997; from memory). A chain of several stages moves towards the upper end,
//! as each stage is driven by the ramp of the one before. The transistors are not linear resistors
//! (level 1: saturated then linear), hence 0.05 of slack either side. One ngspice run per cell.

use crate::support::{measurements, ngspice_available, note, run_ngspice, widthwise};

/// `deck CELL --diffusion-capacitance` simulated: per transition, (measure name, measured s,
/// Elmore s), read from the deck's own comment lines.
fn simulated(cell: &str) -> Vec<(String, f64, f64)> {
    let deck = widthwise(&["deck", cell, "--diffusion-capacitance"]);
    let measured = measurements(&run_ngspice(&deck));
    let mut out = Vec::new();
    for line in deck.lines().filter(|l| l.starts_with("* t")) {
        // "* t1: a falling, output falling; held b=1; through ...; Elmore 3.5e-10 s (...)"
        let pin = line.split(": ").nth(1).unwrap().split(' ').next().unwrap();
        let edge = if line.contains("output falling") { "fall" } else { "rise" };
        let elmore: f64 = line.split("Elmore ").nth(1).unwrap().split(' ').next().unwrap().parse().unwrap();
        let name = format!("tpd_{pin}_{edge}_gate");
        let delay = *measured.get(&name).unwrap_or_else(|| panic!("{cell}: {name} not measured"));
        out.push((name, delay, elmore));
    }
    out
}

fn check(cell: &str, pins: usize) {
    if !ngspice_available(&format!("stage_decks {cell}")) {
        return;
    }
    let found = simulated(cell);
    // Every pin of an AND and of an XOR moves the output both ways (Boolean algebra; common
    // practice, no source).
    assert_eq!(found.len(), 2 * pins, "{cell}: {found:?}");
    let mut ratios = Vec::new();
    for (name, delay, elmore) in &found {
        let ratio = delay / elmore;
        assert!((0.65..=1.05).contains(&ratio), "{cell} {name}: measured {delay} s, Elmore {elmore} s: {ratio}");
        ratios.push(ratio);
    }
    let (low, high) = ratios.iter().fold((f64::MAX, 0.0_f64), |(l, h), &r| (l.min(r), h.max(r)));
    note(&format!("deck {cell} (level 1, diffusion capacitors): measured / Elmore {low:.3} to {high:.3}"));
}

#[test]
fn and2_through_its_stages() {
    check("and2", 2);
}

#[test]
fn xor2_through_its_stages() {
    check("xor2", 2);
}
