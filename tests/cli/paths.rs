//! `widthwise paths`: listing, limits and counts.

use predicates::prelude::*;

use super::widthwise;

#[test]
fn listing_is_limited_but_the_count_is_whole() {
    // 40 parallel pairs in series: 2^40 = 1099511627776 paths in the pull-down.
    let groups: Vec<String> = (0..40).map(|i| format!("(a{i} | b{i})")).collect();
    let text = format!("!({})", groups.join(" & "));
    let output = widthwise().args(["paths", &text, "--limit", "3", "--format", "json"]).output().unwrap();
    assert!(output.status.success());
    let json: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
    assert_eq!(json["networks"][0]["path_count"], "1099511627776");
    assert_eq!(json["networks"][0]["paths"].as_array().unwrap().len(), 3);
}

#[test]
fn paths_are_weakest_first_with_vectors() {
    widthwise()
        .args(["paths", "!(a & (b | c))", "--method", "min-area"])
        .assert()
        .success()
        .stdout(predicate::str::contains("pull-down: 2 paths"))
        .stdout(predicate::str::contains("a=1 b=1 c=0"));
}

#[test]
fn too_large_a_limit_is_refused() {
    widthwise().args(["paths", "nand2", "--limit", "10001"]).assert().code(2);
    widthwise().args(["paths", "nand2", "--format", "spice"]).assert().code(2);
}
