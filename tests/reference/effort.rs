//! `widthwise effort` against the published values: under level-1 models that carry gate
//! capacitance (TOX set, no body effect, LAMBDA = 0; a model file written here), the measured
//! logical effort of NAND2 and NOR2 at mobility ratio 2 is 4/3 and 5/3 (Sutherland, Sproull &
//! Harris, "Logical Effort", 1999, chapter 1 table 1.1; from memory), within 5 %. ngspice from
//! Debian's packages simulates.

use crate::support::{ngspice_available, note, widthwise};

fn check(gate: &str, expected: f64) {
    if !ngspice_available(&format!("effort {gate}")) {
        return;
    }
    let directory = tempfile::tempdir().unwrap();
    let models = directory.path().join("level1-tox.lib");
    // The built-in process's level-1 values (widthwise process), with a 20 nm oxide.
    std::fs::write(
        &models,
        "* level 1 with gate capacitance\n.model nmos NMOS (LEVEL=1 VTO=0.7 KP=100u GAMMA=0 LAMBDA=0 TOX=20n)\n\
         .model pmos PMOS (LEVEL=1 VTO=-0.7 KP=50u GAMMA=0 LAMBDA=0 TOX=20n)\n",
    )
    .unwrap();
    let json: serde_json::Value =
        serde_json::from_str(&widthwise(&["effort", gate, "--models", models.to_str().unwrap(), "--format", "json"]))
            .unwrap();
    let inputs = json["inputs"].as_array().unwrap();
    assert_eq!(inputs.len(), 4, "{gate}: two inputs, both edges");
    for input in inputs {
        let g = input["logical_effort"].as_f64().unwrap();
        note(&format!("effort {gate} {} {}: g = {g}", input["input"], input["output_edge"]));
        assert!((g / expected - 1.0).abs() <= 0.05, "{gate}: {input}");
        assert!((input["first_order_logical_effort"].as_f64().unwrap() - expected).abs() < 1e-9);
    }
    // tau and the FO4 delay: FO4 is about 5 tau (g h + p with h = 4, p about 1; the same source,
    // chapter 1), here with the level-1 parasitic delay of the models' own capacitance.
    let ratio = json["fo4_s"].as_f64().unwrap() / json["tau_s"].as_f64().unwrap();
    assert!((4.0..5.5).contains(&ratio), "{gate}: FO4 / tau = {ratio}");
}

#[test]
fn nand2_logical_effort_is_four_thirds() {
    check("nand2", 4.0 / 3.0);
}

#[test]
fn nor2_logical_effort_is_five_thirds() {
    check("nor2", 5.0 / 3.0);
}
