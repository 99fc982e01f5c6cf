//! `widthwise verify`: exhaustive and sampled checks, formats and exit codes.

use predicates::prelude::*;

use super::widthwise;

#[test]
fn a_sized_gate_verifies_on_every_vector() {
    // AOI21 has 3 inputs, so 2^3 = 8 vectors (common practice, no source).
    widthwise()
        .args(["verify", "aoi21"])
        .assert()
        .success()
        .stdout(predicate::str::contains("all 8 input vectors"))
        .stdout(predicate::str::contains("never both conduct"))
        .stdout(predicate::str::contains("verified"));
}

#[test]
fn json_reports_the_count_and_the_bounds() {
    let output = widthwise().args(["verify", "!(a & b | b & c | a & c)", "--format", "json"]).output().unwrap();
    assert!(output.status.success());
    let json: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
    assert_eq!(json["vectors_checked"], 8);
    assert_eq!(json["passed"], true);
    assert!(json["failure"].is_null());
    assert_eq!(json["coverage"]["kind"], "exhaustive");
    // Pull-up: every weakest path has a partner device on the same input in parallel (derived by hand).
    assert_eq!(json["networks"][1]["below_bound"], true);
    assert!(json["networks"][1]["exact_worst"].as_f64().unwrap() < json["networks"][1]["path_bound"].as_f64().unwrap());
}

#[test]
fn past_the_exhaustive_limit_it_says_what_it_checked() {
    let names: Vec<String> = (0..31).map(|i| format!("x{i}")).collect();
    let text = format!("!({})", names.join(" & "));
    widthwise()
        .args(["verify", &text, "--random-vectors", "5000", "--format", "csv"])
        .assert()
        .success()
        .stdout(predicate::str::contains(",31,62,random,26719299881249566,5000,5000,true,"));
    widthwise()
        .args(["verify", &text, "--random-vectors", "640", "--seed", "9"])
        .assert()
        .success()
        .stdout(predicate::str::contains("31 inputs is past the limit of 30, so 640 pseudo-random vectors"))
        .stdout(predicate::str::contains("seed 0x9"));
}

#[test]
fn bad_requests_exit_2() {
    widthwise().args(["verify", "nand2", "--format", "spice"]).assert().code(2);
    widthwise().args(["verify", "nand2", "--random-vectors", "0"]).assert().code(2);
    widthwise().args(["verify", "nand2", "--random-vectors", "1073741825"]).assert().code(2);
    widthwise()
        .args(["verify", "xor2", "--pull-up", "!a"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("'!' is refused"));
}

#[test]
fn help_states_the_limits_and_the_caution() {
    widthwise()
        .args(["verify", "--help"])
        .assert()
        .success()
        .stdout(predicate::str::contains("up to 30 inputs"))
        .stdout(predicate::str::contains("26719299881249566"))
        .stdout(predicate::str::contains("foundry"));
}
