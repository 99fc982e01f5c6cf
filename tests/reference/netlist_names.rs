//! ngspice reads every deck widthwise writes: a name that reaches a netlist is either one the
//! simulator takes as an ordinary node or cell, or refused by widthwise (exit 2) before anything is
//! written. A deck written with exit 0 that ngspice rejects, or simulates with an input tied to
//! ground, fails here.
//!
//! Checked by running `ngspice -b` on the deck (ngspice-39 from Debian's packages): it reports a
//! line it cannot read, or a measurement it cannot make, with a message starting `Error`, and exits
//! 0 all the same; so the check reads its output, and wants one delay per transition.

use std::process::Command;

use crate::support::{ngspice_available, ngspice_output, summary_ratios};

/// `widthwise deck` on `args`: the deck, or `None` when widthwise refuses (exit 2, a message).
fn deck(args: &[&str]) -> Option<String> {
    let output = Command::new(env!("CARGO_BIN_EXE_widthwise")).arg("deck").args(args).output().expect("it runs");
    match output.status.code() {
        Some(0) => Some(String::from_utf8(output.stdout).expect("UTF-8")),
        Some(2) => {
            let stderr = String::from_utf8_lossy(&output.stderr);
            assert!(stderr.contains("reserved"), "{args:?}: refused for another reason: {stderr}");
            None
        }
        other => panic!("{args:?}: exit {other:?}: {}", String::from_utf8_lossy(&output.stderr)),
    }
}

/// Whether ngspice reads `deck` without an error and reports `delays` transitions.
fn simulates_cleanly(deck: &str, delays: usize, what: &str) {
    let output = ngspice_output(deck);
    let text = format!("{}{}", String::from_utf8_lossy(&output.stdout), String::from_utf8_lossy(&output.stderr));
    let errors: Vec<&str> = text.lines().filter(|line| line.trim_start().starts_with("Error")).collect();
    assert!(errors.is_empty(), "{what}: ngspice reports {errors:?}");
    assert_eq!(summary_ratios(&text).len(), delays, "{what}: every transition measured\n{text}");
}

#[test]
fn every_deck_written_is_one_ngspice_reads() {
    if !ngspice_available("every_deck_written_is_one_ngspice_reads") {
        return;
    }
    // Inputs named like reserved names, like SPICE words, like the deck's own nodes, and the
    // reserved names themselves (common practice, no source: node 0 and gnd are ground in ngspice,
    // a MOSFET line finds its model by name). Each gate has four inputs: eight transitions.
    let mut refused = Vec::new();
    for names in [
        ["w", "l", "m", "x"],
        ["n1", "p1", "vdd_1", "gnd1"],
        ["nmos1", "pmos_x", "tpd", "ratio"],
        ["dc", "pwl", "params", "subckt"],
        ["t1_in1", "t1_out", "vsupply", "rfall_in"],
        ["gnd", "b", "c", "d"],
        ["a", "GND", "c", "d"],
        ["a", "b", "nmos", "d"],
        ["a", "b", "c", "PMOS"],
        ["a", "Vdd", "c", "d"],
    ] {
        let text = format!("!({})", names.join(" & "));
        match deck(&[&text, "--summary"]) {
            Some(written) => simulates_cleanly(&written, 8, &text),
            None => refused.push(text),
        }
    }
    // The five with a reserved name are the ones refused.
    assert_eq!(refused.len(), 5, "{refused:?}");
    // The output and the cell name too.
    assert!(deck(&["gnd = !(a & b)"]).is_none());
    assert!(deck(&["nand2", "--name", "nmos"]).is_none());
    // With a model library, its model names are the ones reserved.
    let directory = tempfile::tempdir().unwrap();
    let library = directory.path().join("models.lib");
    std::fs::write(
        &library,
        ".model fast_n NMOS (LEVEL=1 VTO=0.7 KP=100u LAMBDA=0)\n.model fast_p PMOS (LEVEL=1 VTO=-0.7 KP=50u LAMBDA=0)\n",
    )
    .unwrap();
    let models = ["--models", library.to_str().unwrap(), "--nmos-model", "fast_n", "--pmos-model", "fast_p"];
    for (text, ok) in [("!(nmos & pmos)", true), ("!(fast_n & b)", false), ("!(a & FAST_P)", false)] {
        let mut args = vec![text, "--summary"];
        args.extend(models);
        match deck(&args) {
            Some(written) => {
                assert!(ok, "{text}: written");
                simulates_cleanly(&written, 4, text);
            }
            None => assert!(!ok, "{text}: refused"),
        }
    }
}
