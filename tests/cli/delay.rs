//! `widthwise size` with delays: JSON keys, CSV rows, the table, the elmore method's exit codes.

use predicates::prelude::*;

use super::batch::records;
use super::widthwise;

fn json(args: &[&str]) -> serde_json::Value {
    let output = widthwise().args(args).output().unwrap();
    assert!(output.status.success(), "{args:?}: {}", String::from_utf8_lossy(&output.stderr));
    serde_json::from_slice(&output.stdout).unwrap()
}

/// The CSV a successful run writes: its header and its rows by column name.
fn csv(args: &[&str]) -> (Vec<String>, Vec<std::collections::HashMap<String, String>>) {
    let output = widthwise().args(args).output().unwrap();
    assert!(output.status.success(), "{args:?}: {}", String::from_utf8_lossy(&output.stderr));
    records(&output.stdout)
}

#[test]
fn json_delays_carry_input_edge_and_elmore_rc() {
    let gate = json(&["size", "nand3", "--fanout", "4", "--format", "json"]);
    let delays = gate["delays"].as_array().unwrap();
    assert_eq!(delays.len(), 6);
    for delay in delays {
        assert!(delay["input"].is_string() && delay["elmore_rc"].is_number());
        assert!(delay["edge"] == "rise" || delay["edge"] == "fall");
        assert!(delay["elmore_ps"].is_number(), "the built-in process gives picoseconds");
    }
    // Unit NAND3 driving 4 copies, input nearest the rail falling: (12 + 5 x 4) RC
    // (Weste & Harris, "CMOS VLSI Design", ch. 4; from memory)
    let fall = delays.iter().find(|d| d["input"] == "c" && d["edge"] == "fall").unwrap();
    assert!((fall["elmore_rc"].as_f64().unwrap() - 32.0).abs() < 1e-9);
    assert_eq!(fall["internal_nodes"], serde_json::json!(["n1", "n2"]));
    let methods: Vec<&str> =
        gate["method_comparison"].as_array().unwrap().iter().map(|m| m["method"].as_str().unwrap()).collect();
    assert_eq!(methods, ["longest-path", "min-area", "elmore"]);
}

#[test]
fn without_delay_options_the_output_is_unchanged() {
    let gate = json(&["size", "nand2", "--format", "json"]);
    assert!(gate.get("delays").is_none());
    assert!(gate.get("method_comparison").is_none());
}

#[test]
fn elmore_method_sizes_or_says_it_cannot() {
    let gate =
        json(&["size", "nand3", "--method", "elmore", "--delay-target", "1", "--load", "50", "--format", "json"]);
    assert_eq!(gate["method"], "elmore");
    for delay in gate["delays"].as_array().unwrap() {
        assert!(delay["delay_ratio"].as_f64().unwrap() <= 1.0 + 1e-6);
    }
    // A unit NAND3 driving 5 C (one copy of its own input at longest-path sizes): its falling delay's
    // parasitic part alone stays above the reference inverter's, whatever the widths.
    widthwise()
        .args(["size", "nand3", "--method", "elmore", "--delay-target", "1", "--load", "5"])
        .assert()
        .code(1)
        .stdout(predicate::str::is_empty())
        .stderr(predicate::str::contains("make every Elmore delay at most 1 times"))
        .stderr(predicate::str::contains("the best ratio reached within it is"));
}

#[test]
fn csv_delay_rows_one_per_input_and_edge() {
    let (headers, rows) = csv(&["size", "aoi21", "--format", "csv", "--rows", "delays"]);
    assert_eq!(&headers[5], "elmore_rc");
    assert_eq!(rows.len(), 6);
}

#[test]
fn delay_rows_list_the_side_inputs_only() {
    // A NAND2 input switches the output on either edge only with the other input at 1 (common
    // practice, no source): each row names that side input; the switching input's own level is
    // the edge's (docs/model.md section 7). JSON keeps the whole vector.
    let (headers, rows) = csv(&["size", "nand2", "--format", "csv", "--rows", "delays"]);
    assert!(["input", "side_inputs"].iter().all(|name| headers.iter().any(|h| h == name)), "{headers:?}");
    assert_eq!(rows.len(), 4);
    for row in &rows {
        assert_eq!(row["side_inputs"], if row["input"] == "a" { "b=1" } else { "a=1" });
    }
    let gate = json(&["size", "nand2", "--delays", "--format", "json"]);
    let a_fall = gate["delays"].as_array().unwrap().iter().find(|d| d["input"] == "a" && d["edge"] == "fall").unwrap();
    assert_eq!((a_fall["vector"]["a"].as_u64(), a_fall["vector"]["b"].as_u64()), (Some(1), Some(1)));
    // An inverter has no side input: an empty CSV cell, a dash in the table.
    let (headers, rows) = csv(&["size", "inv", "--format", "csv", "--rows", "delays"]);
    assert!(headers.iter().any(|h| h == "side_inputs"), "{headers:?}");
    assert!(rows.iter().all(|row| row["side_inputs"].is_empty()));
    let table = widthwise().args(["size", "nand2", "--delays"]).output().unwrap();
    let table = String::from_utf8(table.stdout).unwrap();
    let rows = table.split_once("side inputs").map(|(_, rows)| rows).unwrap_or_default();
    let a_fall = rows.lines().find(|l| l.split_whitespace().take(2).eq(["a", "fall"])).unwrap_or_default();
    assert!(a_fall.trim_end().ends_with("  b=1"), "{table}");
}

#[test]
fn table_shows_delays_effort_view_methods_and_order() {
    widthwise()
        .args(["size", "oai21", "--stack-order", "search", "--fanout", "4"])
        .assert()
        .success()
        .stdout(predicate::str::contains("delays (Elmore"))
        .stdout(predicate::str::contains("p Elmore"))
        .stdout(predicate::str::contains("methods (delay ratio"))
        // 40 -> 38 RC: see the worked example in tests/reference/delay.rs
        .stdout(predicate::str::contains("worst Elmore delay 40 -> 38"));
}

#[test]
fn bad_delay_options_exit_2() {
    let cases: [&[&str]; 4] = [
        &["size", "nand2", "--fanout", "1", "--load", "2"],
        &["size", "nand2", "--diffusion-ratio", "-1"],
        &["size", "nand2", "--load", "inf"],
        &["size", "nand2", "--stack-order", "sideways"],
    ];
    for args in cases {
        widthwise().args(args).assert().code(2).stdout(predicate::str::is_empty());
    }
}

#[test]
fn paths_accept_the_elmore_method() {
    // The inverter meets its own bound exactly: the elmore widths are the reference's, so each
    // network's one path has the reference's resistance, R (docs/model.md section 2).
    let output = widthwise().args(["paths", "inv", "--method", "elmore", "--format", "json"]).output().unwrap();
    assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    let json: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
    for network in json["networks"].as_array().unwrap() {
        let resistance = network["paths"][0]["resistance"].as_f64().unwrap();
        assert!((resistance - 1.0).abs() < 1e-6, "{network}");
    }
}

/// The built-in process as a file, with `key` set to `value`, written under `directory`.
fn process_file(directory: &std::path::Path, key: &str, value: &str) -> String {
    let output = widthwise().arg("process").output().unwrap();
    let text: String = String::from_utf8(output.stdout)
        .unwrap()
        .lines()
        .map(
            |line| {
                if line.starts_with(&format!("{key} =")) { format!("{key} = {value}\n") } else { format!("{line}\n") }
            },
        )
        .collect();
    let path = directory.join(format!("{key}.toml"));
    std::fs::write(&path, text).unwrap();
    path.to_str().unwrap().to_string()
}

#[test]
fn with_a_process_file_the_diffusion_ratio_is_its_decks() {
    // The delay stage's capacitances must be the deck's capacitors in units of C (the unit gate
    // capacitance, gate_cap_ff_per_um x unit width): NAND2 with a 0.75 fF/um diffusion against the
    // built-in 1.7 fF/um gate capacitance. The deck's n1 capacitor (one shared diffusion of the 2 um
    // NMOS: 1.5 fF) over C = 1.7 fF must equal ratio x W/L = ratio x 2 (the rule both use:
    // src/figures.rs NodeDiffusion; units as docs/model.md section 7 defines them).
    let directory = tempfile::tempdir().unwrap();
    let process = process_file(directory.path(), "diffusion_cap_ff_per_um", "0.75");
    let gate = json(&["size", "nand2", "--delays", "--process", &process, "--format", "json"]);
    let ratio = gate["delay_model"]["diffusion_ratio"].as_f64().unwrap();
    // (the output's ten significant digits: within 5e-10 relative, README "Numbers")
    assert!((ratio / (0.75 / 1.7) - 1.0).abs() <= 5e-10, "{ratio}");
    let unit_ff = gate["delay_model"]["process"]["unit_capacitance_ff"].as_f64().unwrap();
    let deck = widthwise().args(["deck", "nand2", "--process", &process, "--diffusion-capacitance"]).output().unwrap();
    let deck = String::from_utf8(deck.stdout).unwrap();
    let line = deck.lines().find(|l| l.starts_with("CD") && l.contains(" n1 ")).expect("a capacitor on n1");
    let deck_ff: f64 = line.split_whitespace().last().unwrap().trim_end_matches('f').parse().unwrap();
    assert!((deck_ff / unit_ff - ratio * 2.0).abs() < 1e-9, "{line}: {deck_ff} fF, C = {unit_ff} fF");
    // An explicit ratio wins; without a process file the ratio stays 1 (the published examples').
    let given =
        json(&["size", "nand2", "--delays", "--process", &process, "--diffusion-ratio", "1", "--format", "json"]);
    assert_eq!(given["delay_model"]["diffusion_ratio"], 1.0);
    assert_eq!(json(&["size", "nand2", "--delays", "--format", "json"])["delay_model"]["diffusion_ratio"], 1.0);
    // A process with no gate capacitance gives no ratio: say so, unless one is given.
    let no_gate = process_file(directory.path(), "gate_cap_ff_per_um", "0.0");
    widthwise()
        .args(["size", "nand2", "--delays", "--process", &no_gate])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("give --diffusion-ratio"));
    widthwise()
        .args(["size", "nand2", "--delays", "--process", &no_gate, "--diffusion-ratio", "0.5"])
        .assert()
        .success();
    widthwise().args(["size", "nand2", "--process", &no_gate]).assert().success();
}

#[test]
fn a_load_in_femtofarads_is_counted_in_unit_gate_capacitances() {
    // C is the process's gate capacitance per um x the unit width (docs/model.md section 7): 1.7 fF
    // on the built-in process (gate_cap_ff_per_um 1.7, unit width 1 um), so 17 fF is 10 C, and the
    // delays are those of --load 10.
    let in_ff = json(&["size", "aoi21", "--load-ff", "17", "--format", "json"]);
    let in_c = json(&["size", "aoi21", "--load", "10", "--format", "json"]);
    assert_eq!(in_ff["delay_model"]["load_ff"], 17);
    assert!((in_ff["delay_model"]["load_c"].as_f64().unwrap() - 10.0).abs() < 1e-9);
    assert!(in_c["delay_model"].get("load_ff").is_none());
    let delays = |gate: &serde_json::Value| -> Vec<f64> {
        gate["delays"].as_array().unwrap().iter().map(|d| d["elmore_rc"].as_f64().unwrap()).collect()
    };
    for (a, b) in delays(&in_ff).iter().zip(delays(&in_c)) {
        assert!((a - b).abs() < 1e-9 * b, "{a} vs {b}");
    }
    // With a process of its own: 8 fF over 1.6 fF/um x 0.5 um = 10 C (examples/tern8-process.toml).
    let process = concat!(env!("CARGO_MANIFEST_DIR"), "/examples/tern8-process.toml");
    let tern = json(&["size", "nand2", "--process", process, "--load-ff", "8", "--format", "json"]);
    assert!((tern["delay_model"]["load_c"].as_f64().unwrap() - 10.0).abs() < 1e-9);
    // The table says both.
    widthwise()
        .args(["size", "nand2", "--load-ff", "17"])
        .assert()
        .success()
        .stdout(predicate::str::contains("load 10 C (17 fF)"));
    // One load at a time.
    widthwise()
        .args(["size", "nand2", "--load-ff", "17", "--load", "3"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("cannot be used with"));
    widthwise()
        .args(["size", "nand2", "--load-ff", "17", "--format", "spice"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("--load-ff does not apply with --format spice"));
}

#[test]
fn the_fan_out_is_the_gates_own_electrical_effort() {
    // The fan-out h is C_out / C_in of the gate itself (Sutherland, Sproull & Harris, "Logical
    // Effort", 1999, ch. 1): the load is h times the timed input's capacitance in the gate as sized,
    // whatever the method, so the logical-effort view's h is the fan-out given.
    for method in ["longest-path", "min-area", "elmore"] {
        let gate = json(&["size", "!(a & (b | c))", "--fanout", "3", "--method", method, "--format", "json"]);
        let inputs = gate["inputs"].as_array().unwrap();
        for delay in gate["delays"].as_array().unwrap() {
            let view = &delay["logical_effort_view"];
            assert!((view["h"].as_f64().unwrap() - 3.0).abs() < 1e-9, "{method}: {view}");
            let input = inputs.iter().find(|i| i["name"] == delay["input"]).unwrap();
            let c_in = input["input_capacitance"].as_f64().unwrap();
            // Both written to ten significant digits (src/number.rs): their quotient to about 1e-9.
            assert!((delay["load_c"].as_f64().unwrap() / c_in - 3.0).abs() < 1e-8, "{method}");
        }
    }
}

#[test]
fn a_deck_takes_its_load_in_c_or_in_femtofarads() {
    let deck = |args: &[&str]| {
        let output = widthwise().args(["deck", "nand2"]).args(args).output().unwrap();
        assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
        String::from_utf8(output.stdout).unwrap()
    };
    // The default is the process's load_ff (20 fF on the built-in process).
    assert!(deck(&[]).contains("Ct1 t1_out 0 20f"));
    assert!(deck(&["--load-ff", "34"]).contains("Ct1 t1_out 0 34f"));
    // 3 C of 1.7 fF each (docs/model.md section 7).
    assert!(deck(&["--load", "3"]).contains("Ct1 t1_out 0 5.1f"));
}

#[test]
fn past_sixteen_inputs_each_input_gets_its_weakest_path_alone() {
    // The worst-transition rule enumerates side-input vectors up to 16 inputs (docs/model.md
    // section 7); past that its stated fallback is the weakest path through the input, alone.
    let names: Vec<String> = (0..17).map(|i| format!("x{i}")).collect();
    let text = format!("!({} | {})", names[..9].join(" & "), names[9..].join(" & "));
    let gate = json(&["size", &text, "--delays", "--format", "json"]);
    let delays = gate["delays"].as_array().unwrap();
    assert_eq!(delays.len(), 34);
    assert!(delays.iter().all(|d| d["search"] == "weakest path"));
    // x0 rising: its AND9 conducts alone, the other branch off (x9 = 0 ... x16 = 0).
    let x0 = delays.iter().find(|d| d["input"] == "x0" && d["edge"] == "fall").unwrap();
    assert_eq!(x0["vector"]["x0"], 1);
    assert_eq!(x0["vector"]["x16"], 0);
    widthwise()
        .args(["size", &text, "--delays"])
        .assert()
        .success()
        .stdout(predicate::str::contains("past 16 inputs the side inputs are not searched"));
    // At 16 inputs every side-input vector is searched.
    let text = format!("!({} | {})", names[..8].join(" & "), names[8..16].join(" & "));
    let gate = json(&["size", &text, "--delays", "--format", "json"]);
    assert!(gate["delays"].as_array().unwrap().iter().all(|d| d["search"] == "every vector"));
}
