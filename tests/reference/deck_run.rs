//! `widthwise deck --run` on the shipped short-channel card (examples/demo130.lib, section typical,
//! with examples/demo130-process.toml): ngspice from Debian's packages measures every transition
//! of the trade's small gates and of and2 (two stages), none blank, and the run's own time window (set by its calibration
//! run) gives the delays that ngspice gives on the deck `deck` writes (its window from the
//! process's level-1 estimate, run here with `ngspice -b`).
//!
//! One test per gate, so the harness runs them two at a time; each is two or three small ngspice
//! runs of a few seconds at most.

use std::path::Path;

use crate::support::{measurements, ngspice_available, note, run_ngspice};

/// `deck GATE` on the demo card, with `extra` options.
fn demo_args<'a>(gate: &'a str, extra: &[&'a str]) -> Vec<String> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples");
    let mut args: Vec<String> = vec![
        "deck".into(),
        gate.into(),
        "--process".into(),
        root.join("demo130-process.toml").display().to_string(),
        "--models".into(),
        root.join("demo130.lib").display().to_string(),
        "--models-section".into(),
        "typical".into(),
    ];
    args.extend(extra.iter().map(|s| s.to_string()));
    args
}

fn widthwise(args: &[String]) -> String {
    let output = std::process::Command::new(env!("CARGO_BIN_EXE_widthwise")).args(args).output().unwrap();
    assert!(output.status.success(), "{args:?}: {}", String::from_utf8_lossy(&output.stderr));
    String::from_utf8(output.stdout).unwrap()
}

/// Run the gate's deck with `--run --format json`; every transition's (measure name, delay s).
fn measured(gate: &str) -> Vec<(String, f64, f64)> {
    let json: serde_json::Value =
        serde_json::from_str(&widthwise(&demo_args(gate, &["--run", "--format", "json"]))).unwrap();
    json["delays"]
        .as_array()
        .unwrap()
        .iter()
        .map(|d| {
            let name = format!("tpd_{}_{}_gate", d["input"].as_str().unwrap(), d["output_edge"].as_str().unwrap());
            (name, d["delay_ps"].as_f64().unwrap() * 1e-12, d["ratio"].as_f64().unwrap())
        })
        .collect()
}

/// Every input of `gate` (`inputs` of them) measured on both output edges, each delay a plausible
/// multiple of the reference inverter's.
fn check(gate: &str, inputs: usize) {
    if !ngspice_available(&format!("deck_run {gate}")) {
        return;
    }
    let delays = measured(gate);
    // Every input switches the output both ways in these gates: 2 transitions per input.
    assert_eq!(delays.len(), 2 * inputs, "{gate}: {delays:?}");
    let mut names: Vec<&str> = delays.iter().map(|(name, _, _)| name.as_str()).collect();
    names.dedup();
    assert_eq!(names.len(), 2 * inputs, "{gate}: one measurement per input and edge");
    for (name, delay, ratio) in &delays {
        assert!(delay.is_finite() && *delay > 0.0, "{gate} {name}: {delay}");
        // Sized to drive like the reference inverter, a gate's delay into the same load stays
        // within a small multiple of the reference's; its internal nodes and series stacks (which
        // the resistance rule leaves out) make it slower, never ten times (common practice, no source).
        assert!((0.5..4.0).contains(ratio), "{gate} {name}: {ratio} x the reference");
    }
    let worst = delays.iter().map(|d| d.2).fold(0.0, f64::max);
    note(&format!("deck --run {gate} on demo130: {} transitions, worst {worst:.3} x the reference", delays.len()));
}

#[test]
fn nand2_on_the_demo_card() {
    check("nand2", 2);
    if !ngspice_available("deck_run nand2 against the written deck") {
        return;
    }
    // The deck as written (no --run: a window of 100 x the level-1 estimate), simulated by
    // ngspice directly: the same delays within 1 %, so the calibrated window and step change no
    // result (ngspice's own timestep control, common practice, no source for the tolerance).
    let written = run_ngspice(&widthwise(&demo_args("nand2", &[])));
    let direct = measurements(&written);
    for (name, delay, _) in measured("nand2") {
        let other = direct.get(&name).unwrap_or_else(|| panic!("{name} in\n{written}"));
        assert!((other / delay - 1.0).abs() < 0.01, "{name}: --run {delay}, written deck {other}");
    }
}

#[test]
fn and2_on_the_demo_card() {
    // A cell of several stages (NAND2 then an inverter): every pin measured from the pin to the
    // output, the ratio its delay over the reference inverter's.
    check("and2", 2);
}

#[test]
fn nand3_on_the_demo_card() {
    check("nand3", 3);
}

#[test]
fn nor3_on_the_demo_card() {
    check("nor3", 3);
}

#[test]
fn aoi22_on_the_demo_card() {
    check("aoi22", 4);
}
