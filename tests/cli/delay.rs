//! `widthwise size` with delays: JSON keys, CSV rows, the table, the elmore method's exit codes.

use predicates::prelude::*;

use super::widthwise;

fn json(args: &[&str]) -> serde_json::Value {
    let output = widthwise().args(args).output().unwrap();
    assert!(output.status.success(), "{args:?}: {}", String::from_utf8_lossy(&output.stderr));
    serde_json::from_slice(&output.stdout).unwrap()
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
    let gate = json(&["size", "nand3", "--method", "elmore", "--load", "50", "--format", "json"]);
    assert_eq!(gate["method"], "elmore");
    for delay in gate["delays"].as_array().unwrap() {
        assert!(delay["delay_ratio"].as_f64().unwrap() <= 1.0 + 1e-6);
    }
    widthwise()
        .args(["size", "nand3", "--method", "elmore"])
        .assert()
        .code(1)
        .stdout(predicate::str::is_empty())
        .stderr(predicate::str::contains("no widths make every Elmore delay"));
}

#[test]
fn csv_delay_rows_one_per_input_and_edge() {
    let output = widthwise().args(["size", "aoi21", "--format", "csv", "--rows", "delays"]).output().unwrap();
    assert!(output.status.success());
    let mut reader = csv::Reader::from_reader(output.stdout.as_slice());
    let headers = reader.headers().unwrap().clone();
    assert_eq!(&headers[4], "elmore_rc");
    assert_eq!(reader.records().count(), 6);
}

#[test]
fn table_shows_delays_effort_view_methods_and_order() {
    widthwise()
        .args(["size", "oai21", "--stack-order", "search"])
        .assert()
        .success()
        .stdout(predicate::str::contains("delays (Elmore"))
        .stdout(predicate::str::contains("p Elmore"))
        .stdout(predicate::str::contains("methods (delay ratio"))
        // 22 -> 20 RC: see the worked example in tests/reference/delay.rs
        .stdout(predicate::str::contains("worst Elmore delay 22 -> 20"));
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
    // The inverter meets its own bound exactly: the elmore widths are the reference's.
    widthwise()
        .args(["paths", "inv", "--method", "elmore", "--format", "json"])
        .assert()
        .success()
        .stdout(predicate::str::contains("\"resistance\""));
}
