//! ngspice ranks the inputs as the Elmore delays do: with the level-1 deck and its diffusion
//! capacitors, for every output edge, the order of the inputs by simulated delay is the order by
//! Elmore delay (issue 6's last check), for NAND3, AOI22 and OAI22.
//!
//! Like with like: one process file for both. The deck's capacitors are diffusion_cap_ff_per_um x
//! drawn width on every node, by the rule the delay stage uses too (a shared series diffusion as wide
//! as the wider device), and its load is load_ff; the Elmore delays take C = gate_cap_ff_per_um x
//! unit width, the diffusion ratio diffusion_cap / gate_cap (the default with a process file) and
//! `--load load_ff / C`. Both time the same transition per input and edge (the worst-case vector,
//! checked equal here), and both start from the same state: the deck's inputs are PWL sources at
//! their before-level at t = 0, so ngspice's operating point is the state before the switch, which
//! is read back here node by node against what the Elmore model assumes (charged nodes at the
//! output's old level, others at the new rail's).
//!
//! What differs, and is reported: level 1 has no gate or overlap capacitance (no Miller coupling)
//! and an internal node reached through an NMOS from the output only charges to VDD - Vt, where the
//! Elmore model counts it charged to VDD; the simulated 50% delay is compared with ln 2 x the
//! Elmore delay (the single-RC relation).

use std::collections::BTreeMap;
use std::fmt::Write as _;

use widthwise::cell::SizedCell;
use widthwise::network::NetworkKind;
use widthwise::output::deck::{edge, gate_measure, transitions};
use widthwise::process::Process;
use widthwise::size_text;
use widthwise::sizing::{Method, Plan};

use crate::support::{measurements, ngspice_available, note, process_with, run_ngspice, widthwise};

/// Delays within this relative difference of each other are tied.
const TIE: f64 = 0.02;

/// The load of the test process, fF: about 6 unit gate capacitances, small enough that the
/// diffusions (about 9 C on a NAND3's output) move the delays by more than the tie tolerance.
const LOAD_FF: f64 = 10.0;

/// The built-in process with a grid too fine to matter (0.001 nm), no body effect (the deck's
/// models have LAMBDA = 0 always) and a [`LOAD_FF`] load.
fn test_process() -> String {
    process_with(&[
        ("grid_nm", "0.001".into()),
        ("body_effect_sqrt_v", "0.0".into()),
        ("load_ff", format!("{LOAD_FF:?}")),
    ])
}

/// One input on one edge, by both.
struct Row {
    input: String,
    edge: &'static str,
    elmore_rc: f64,
    elmore_ps: f64,
    ngspice_ps: f64,
}

/// Simulate `text`'s deck and time it by Elmore; every transition's row, and lines on the initial
/// state. Asserts that both time the same vector and that ngspice starts from the state the Elmore
/// model assumes.
fn compare(text: &str, path: &str, process: &Process) -> (Vec<Row>, Vec<String>) {
    // C and the ratio from the process's own values (docs/model.md section 7, with the process's units).
    let unit_ff = process.gate_cap_ff_per_um * process.unit_width_nm / 1000.0;
    let ratio = process.diffusion_cap_ff_per_um / process.gate_cap_ff_per_um;
    let load_c = format!("{}", process.load_ff / unit_ff);
    let timed: serde_json::Value =
        serde_json::from_str(&widthwise(&["size", text, "--process", path, "--load", &load_c, "--format", "json"]))
            .unwrap();
    let model = &timed["delay_model"];
    // JSON numbers carry ten significant digits: within 5e-10 relative (README, "Numbers").
    assert!((model["diffusion_ratio"].as_f64().unwrap() / ratio - 1.0).abs() <= 5e-10, "{text}: {model}");
    assert!((model["process"]["unit_capacitance_ff"].as_f64().unwrap() / unit_ff - 1.0).abs() <= 5e-10);
    let delays = timed["delays"].as_array().unwrap();

    let plan = Plan {
        process: std::sync::Arc::new(process.clone()),
        ..Plan::new(Method::LongestPath, process.mobility_ratio, 1.0, None)
    };
    let gate: SizedCell = size_text(text, &plan).unwrap();
    let supply = process.supply_v;

    // The deck, with the operating point of every node the Elmore delay names read back at t = 0.
    let deck = widthwise(&["deck", text, "--process", path, "--diffusion-capacitance"]);
    let mut probes = String::new();
    let mut expected = Vec::new();
    let transitions = transitions(&gate, process.load_ff).unwrap();
    for (index, transition) in transitions.iter().enumerate() {
        let tag = format!("t{}", index + 1);
        let input = &gate.logic.inputs[transition.input];
        let edge = edge(transition.kind);
        let delay = delays
            .iter()
            .find(|d| d["input"] == input.as_str() && d["edge"] == edge)
            .unwrap_or_else(|| panic!("{text}: no Elmore delay for {input} {edge}"));
        // The same transition: the worst-case vector after the switch, input by input.
        for (position, value) in transition.vector.iter().enumerate() {
            let name = &gate.logic.inputs[position];
            assert_eq!(delay["vector"][name], u8::from(*value), "{text} {input} {edge}: {name} differs");
        }
        let falling = transition.kind == NetworkKind::PullDown;
        let (old, new) = if falling { (supply, 0.0) } else { (0.0, supply) };
        let mut probe = |node: String, name: &str, level: f64, charged: bool| {
            let measure = format!("init_{tag}_{}", name.to_ascii_lowercase());
            let _ = writeln!(probes, ".meas tran {measure} FIND v({node}) AT=0");
            expected.push((measure, format!("{input} {edge} {name}"), level, charged));
        };
        probe(format!("{tag}_out"), "output", old, true);
        for node in delay["internal_nodes"].as_array().unwrap() {
            let name = node.as_str().unwrap();
            probe(format!("x{tag}.{name}"), name, old, true);
        }
        for node in delay["nodes_at_final_level"].as_array().unwrap() {
            let name = node.as_str().unwrap();
            probe(format!("x{tag}.{name}"), name, new, false);
        }
    }
    let deck = deck.strip_suffix(".end\n").expect("the deck ends with .end").to_string() + &probes + ".end\n";
    let output = run_ngspice(&deck);
    let measured = measurements(&output);
    let found = |name: &str| -> f64 {
        *measured.get(name).unwrap_or_else(|| panic!("{text}: no measurement {name} in\n{output}"))
    };

    let mut state = Vec::new();
    for (measure, what, level, charged) in expected {
        let volts = found(&measure);
        // Starting state, as the Elmore model takes it (delay.rs): a node the transition connects to
        // the output starts at the output's old level when it was tied to the output or the old rail,
        // at the new rail's when it was tied to that. Level 1 passes a high level through an NMOS only
        // to VDD - Vt (no subthreshold current), a low one through a PMOS only to |Vt|: a charged node
        // must sit on the old level's side of VDD/2; a node at its final level must sit at the rail.
        if charged {
            assert!((volts - level).abs() < supply / 2.0, "{text} {what}: starts at {volts} V, old level {level} V");
        } else {
            assert!((volts - level).abs() < 1e-3, "{text} {what}: starts at {volts} V, not at the rail {level} V");
        }
        if !what.ends_with("output") {
            state.push(format!("{what} {volts:.3} V ({})", if charged { "charged" } else { "at final level" }));
        }
    }

    let rows = transitions
        .iter()
        .map(|transition| {
            let input = gate.logic.inputs[transition.input].clone();
            let edge = edge(transition.kind);
            let delay = delays.iter().find(|d| d["input"] == input.as_str() && d["edge"] == edge).unwrap();
            Row {
                elmore_rc: delay["elmore_rc"].as_f64().unwrap(),
                elmore_ps: delay["elmore_ps"].as_f64().unwrap(),
                ngspice_ps: found(&gate_measure(&input, transition.kind)) * 1e12,
                input,
                edge,
            }
        })
        .collect();
    (rows, state)
}

/// -1, 0 or 1: `a` below, tied with or above `b` (ties within [`TIE`] of the larger).
fn order(a: f64, b: f64) -> i32 {
    if (a - b).abs() <= TIE * a.max(b) {
        0
    } else if a < b {
        -1
    } else {
        1
    }
}

/// Inputs from fastest to slowest, with `=` between tied neighbours.
fn ranking(rows: &[&Row], value: impl Fn(&Row) -> f64) -> String {
    let mut sorted: Vec<&Row> = rows.to_vec();
    sorted.sort_by(|a, b| value(a).total_cmp(&value(b)));
    let mut out = sorted[0].input.clone();
    for pair in sorted.windows(2) {
        out += if order(value(pair[0]), value(pair[1])) == 0 { " = " } else { " < " };
        out += &pair[1].input;
    }
    out
}

#[test]
fn elmore_and_ngspice_rank_the_inputs_alike() {
    if !ngspice_available("elmore_and_ngspice_rank_the_inputs_alike") {
        return;
    }
    let text = test_process();
    let process = Process::from_toml(&text).expect("the test process is valid");
    let directory = tempfile::tempdir().unwrap();
    let path = directory.path().join("process.toml");
    std::fs::write(&path, &text).unwrap();
    let path = path.to_str().unwrap();
    note(&format!(
        "delay ranking: built-in process, grid 0.001 nm, gamma 0, lambda 0, load {LOAD_FF} fF = {:.4} C, \
         diffusion ratio {:.4}; ties within {}%",
        LOAD_FF / (process.gate_cap_ff_per_um * process.unit_width_nm / 1000.0),
        process.diffusion_cap_ff_per_um / process.gate_cap_ff_per_um,
        TIE * 100.0
    ));
    for gate in ["nand3", "aoi22", "oai22"] {
        let (rows, state) = compare(gate, path, &process);
        note(&format!("  {gate}: initial state (ngspice operating point): {}", state.join(", ")));
        let mut by_edge: BTreeMap<&str, Vec<&Row>> = BTreeMap::new();
        for row in &rows {
            by_edge.entry(row.edge).or_default().push(row);
        }
        for (edge, rows) in &by_edge {
            note(&format!("  {gate} {edge}: input, elmore_rc, elmore ps, ngspice ps, ngspice / (ln 2 x elmore)"));
            for row in rows {
                note(&format!(
                    "    {} {:.4} {:.2} {:.2} {:.4}",
                    row.input,
                    row.elmore_rc,
                    row.elmore_ps,
                    row.ngspice_ps,
                    row.ngspice_ps / (std::f64::consts::LN_2 * row.elmore_ps)
                ));
            }
            let elmore = ranking(rows, |r| r.elmore_rc);
            let simulated = ranking(rows, |r| r.ngspice_ps);
            note(&format!("  {gate} {edge}: by Elmore {elmore}; by ngspice {simulated}"));
            // The check (issue 6): for every pair of inputs, an order in one is never the reverse
            // order in the other; a tie in either fits any order. Reference tool: ngspice-39 (Debian's
            // package) in batch mode on the deck's level-1 models.
            let mut strict = 0;
            for (i, a) in rows.iter().enumerate() {
                for b in &rows[i + 1..] {
                    let (by_elmore, by_ngspice) = (order(a.elmore_rc, b.elmore_rc), order(a.ngspice_ps, b.ngspice_ps));
                    assert!(
                        by_elmore * by_ngspice >= 0,
                        "{gate} {edge}: Elmore ranks {} {} {} ({:.4} vs {:.4} RC), ngspice the other way ({:.2} vs \
                         {:.2} ps)",
                        a.input,
                        if by_elmore < 0 { "before" } else { "after" },
                        b.input,
                        a.elmore_rc,
                        b.elmore_rc,
                        a.ngspice_ps,
                        b.ngspice_ps
                    );
                    strict += i32::from(by_elmore * by_ngspice > 0);
                }
            }
            // Not a vacuous pass: on every edge some pair is ordered, and alike, by both.
            assert!(strict > 0, "{gate} {edge}: every pair is tied in one of the two");
        }
    }
}
