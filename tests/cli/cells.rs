//! Cells of several stages on the command line: delays through the stages, the views that carry
//! the stages, what is refused and where the message points.

use predicates::prelude::*;

use crate::widthwise;

fn csv_rows(args: &[&str]) -> (Vec<String>, Vec<Vec<String>>) {
    let output = widthwise().args(args).output().unwrap();
    assert!(output.status.success(), "{args:?}: {}", String::from_utf8_lossy(&output.stderr));
    let mut reader = csv::Reader::from_reader(&output.stdout[..]);
    let headers = reader.headers().unwrap().iter().map(String::from).collect();
    let rows = reader.records().map(|r| r.unwrap().iter().map(String::from).collect()).collect();
    (headers, rows)
}

#[test]
fn delays_go_through_every_stage_in_every_format() {
    // The table: a section of its own, one row per pin and output edge (docs/model.md section 9).
    widthwise()
        .args(["size", "and2", "--delays"])
        .assert()
        .success()
        .stdout(predicate::str::contains("delays through the stages"))
        .stdout(predicate::str::contains("y_n -> y"));
    // The load options time it too.
    for load in [["--fanout", "4"], ["--load", "10"], ["--load-ff", "20"]] {
        widthwise().args(["size", "mux2"]).args(load).assert().success();
    }
    // CSV: the cell's own delays view, a row per pin and edge, the stage delays summing to the cell's.
    let (headers, rows) = csv_rows(&["size", "xor2", "--format", "csv", "--rows", "delays"]);
    let column = |name: &str| headers.iter().position(|h| h == name).unwrap();
    assert_eq!(rows.len(), 4);
    for row in &rows {
        let total: f64 = row[column("elmore_rc")].parse().unwrap();
        let sum: f64 = row[column("stage_elmore_rc")].split(' ').map(|v| v.parse::<f64>().unwrap()).sum();
        assert!((total - sum).abs() <= 1e-8 * total, "{row:?}");
        assert!(row[column("stages")].ends_with('y'));
    }
    // JSON: the same keys as a one-stage cell's delays, each delay with its stages.
    let output = widthwise().args(["size", "maj3", "--delays", "--format", "json"]).output().unwrap();
    let json: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
    assert_eq!(json["delays"].as_array().unwrap().len(), 6);
    assert!(json["delays"][0]["stages"].as_array().unwrap().len() == 2);
    assert!(json["delay_model"]["tau_fall_rc"].is_number());
}

#[test]
fn each_stage_row_lists_its_side_inputs_only() {
    // The stages table names the stage input that switches ("from"); its last column holds the other
    // inputs of that stage at their held levels, `name=value`, or "-" for an inverter.
    let output = widthwise().args(["size", "xor2", "--delays"]).output().unwrap();
    assert!(output.status.success());
    let text = String::from_utf8(output.stdout).unwrap();
    let section = &text[text.find("stages of each path").unwrap()..];
    let mut lines = section.lines().skip(1);
    let header = lines.next().unwrap();
    assert!(header.trim_end().ends_with("side inputs"), "{header}");
    let (mut held, mut alone) = (0, 0);
    for line in lines.take_while(|line| !line.trim().is_empty()) {
        let cells: Vec<&str> = line.split_whitespace().collect();
        let from = cells[3];
        let side: Vec<&str> = cells.iter().copied().filter(|cell| cell.contains('=')).collect();
        if side.is_empty() {
            assert_eq!(*cells.last().unwrap(), "-", "{line}");
            alone += 1;
        } else {
            held += 1;
        }
        for pair in side {
            let (name, value) = pair.split_once('=').unwrap();
            assert_ne!(name, from, "{line}");
            assert!(value == "0" || value == "1", "{line}");
        }
    }
    assert!(held > 0 && alone > 0, "{section}");
}

#[test]
fn the_gates_view_counts_the_stages_and_names_the_form() {
    for (text, stages, form) in [("nand2", "1", "direct"), ("and2", "2", "inverted"), ("buf", "2", "inverted")] {
        let (headers, rows) = csv_rows(&["size", text, "--format", "csv", "--rows", "gates"]);
        let column = |name: &str| headers.iter().position(|h| h == name).unwrap();
        assert_eq!(rows[0][column("stages")], stages, "{text}");
        assert_eq!(rows[0][column("form")], form, "{text}");
    }
}

#[test]
fn what_sizes_one_stage_by_delay_is_refused_with_the_reason() {
    for option in [["--method", "elmore"], ["--stack-order", "search"]] {
        widthwise()
            .args(["size", "and2", "--fanout", "2"])
            .args(option)
            .assert()
            .code(2)
            .stdout(predicate::str::is_empty())
            .stderr(predicate::str::contains("takes cells of one stage, and this one has 2 stages"));
    }
}

#[test]
fn past_the_limits_a_cell_is_refused_with_a_position() {
    // XOR expands to a sum of products: 16 variables give 2^15 products of 16, past 10,000
    // transistors per network (README, Limits): the caret at the innermost part that crosses it.
    let wide: Vec<String> = (0..16).map(|i| format!("x{i}")).collect();
    widthwise()
        .args(["size", &format!("y = {}", wide.join(" ^ "))])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("the limit is 10000 transistors per network"))
        .stderr(predicate::str::contains("column"))
        .stderr(predicate::str::contains("^"));
    // The pull-up check tries every vector: 30 inputs at most; the whole pull-up is pointed at.
    let pins: Vec<String> = (0..31).map(|i| format!("x{i}")).collect();
    widthwise()
        .args(["size", &format!("y = !({})", pins.join(" | ")), "--pull-up", "mirror"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("at most 30 inputs"))
        .stderr(predicate::str::contains("column 1:"));
    // A shorthand past its family's range, an unknown cell, a pull-up with '!' or not complementary.
    let cases: [(&[&str], &str); 5] = [
        (&["size", "and9"], "and takes 2 to 8 inputs"),
        (&["size", "mux3"], "unknown gate 'mux3'"),
        (&["size", "maj3", "--pull-up", "a & b | !c"], "column"),
        (&["size", "and2", "--pull-up", "a & b"], "neither conducts"),
        (&["size", "and3", "--pull-up", "mirror"], "column 1:"),
    ];
    for (args, message) in cases {
        widthwise()
            .args(args)
            .assert()
            .code(2)
            .stdout(predicate::str::is_empty())
            .stderr(predicate::str::contains(message))
            .stderr(predicate::str::contains("^"));
    }
}

#[test]
fn a_stage_below_h_1_is_warned_of_only_when_the_cell_is_timed_against_a_load() {
    // and2 at drive 1: the output inverter's input is 3 C and the cell's pin 1 C (docs/model.md
    // section 9), so a fan-out of 0.2 loads it with 0.2 C: h = 0.2 / 3.
    widthwise().args(["size", "and2"]).assert().success().stderr(predicate::str::is_empty());
    widthwise()
        .args(["size", "and2", "--fanout", "0.2"])
        .assert()
        .success()
        .stderr(predicate::str::contains("stage y (output-inverter) has h = 0.06666666667 below 1"));
}
