//! `batch --calibrate` checked against `size --calibrate` of the same cells, and its failures: a
//! small library (three cells) with level-1 models and body effect (GAMMA 0.4, so that calibration
//! moves widths: a stack's upper devices see a raised threshold), calibrated two at a time.
//! ngspice from Debian's packages runs in the loop; `calibrate.rs` checks the calibrated sizes
//! themselves in testbenches written there.

use std::process::{Command, Output};

use crate::support::{ngspice_available, process_with, widthwise};

/// The library, in an order that is neither alphabetical nor by size: one variant per gate.
const LIBRARY: &str = "[[gate]]\nname = \"zz_nor2\"\nexpr = \"nor2\"\n\n[[gate]]\nname = \"aa_aoi21\"\nexpr = \
                       \"aoi21\"\n\n[[gate]]\nname = \"mm_nand2\"\nexpr = \"nand2\"\n";

/// The shorthand of each library gate, in order.
const CELLS: [(&str, &str); 3] = [("zz_nor2_x1", "nor2"), ("aa_aoi21_x1", "aoi21"), ("mm_nand2_x1", "nand2")];

struct Setup {
    _directory: tempfile::TempDir,
    process: String,
    library: String,
}

fn setup(library: &str) -> Setup {
    let directory = tempfile::tempdir().unwrap();
    let process = directory.path().join("gamma.toml");
    std::fs::write(&process, process_with(&[("body_effect_sqrt_v", "0.4".into()), ("grid_nm", "1.0".into())])).unwrap();
    let path = directory.path().join("cells.toml");
    std::fs::write(&path, library).unwrap();
    Setup {
        process: process.to_str().unwrap().to_string(),
        library: path.to_str().unwrap().to_string(),
        _directory: directory,
    }
}

fn batch(setup: &Setup, path: Option<&str>) -> Output {
    let mut command = Command::new(env!("CARGO_BIN_EXE_widthwise"));
    command.args([
        "batch",
        &setup.library,
        "--calibrate",
        "--process",
        &setup.process,
        "--load-ff",
        "20",
        "--jobs",
        "2",
        "--format",
        "json",
    ]);
    if let Some(path) = path {
        command.env("PATH", path);
    }
    command.output().unwrap()
}

/// The variants of a library's JSON (`{"process": ..., "gates": [...]}`).
fn gates(stdout: &[u8]) -> Vec<serde_json::Value> {
    let json: serde_json::Value = serde_json::from_slice(stdout).unwrap();
    json["gates"].as_array().unwrap().clone()
}

fn widths(cell: &serde_json::Value) -> Vec<(String, f64)> {
    cell["transistors"]
        .as_array()
        .unwrap()
        .iter()
        .map(|t| (t["name"].as_str().unwrap().to_string(), t["w_over_l"].as_f64().unwrap()))
        .collect()
}

/// Every cell written in the library's order, at the widths `size --calibrate` gives the same
/// cell alone (the same reference inverter, balanced once for the batch and shared).
#[test]
fn cells_come_in_library_order_at_the_widths_size_calibrates() {
    if !ngspice_available("batch --calibrate order and widths") {
        return;
    }
    let setup = setup(LIBRARY);
    let output = batch(&setup, None);
    assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    let cells = gates(&output.stdout);
    let names: Vec<&str> = cells.iter().map(|c| c["name"].as_str().unwrap()).collect();
    assert_eq!(names, CELLS.map(|(name, _)| name));
    let mut moved = 0.0f64;
    for (cell, (_, shorthand)) in cells.iter().zip(CELLS) {
        let alone: serde_json::Value = serde_json::from_str(&widthwise(&[
            "size",
            shorthand,
            "--calibrate",
            "--process",
            &setup.process,
            "--load-ff",
            "20",
            "--format",
            "json",
        ]))
        .unwrap();
        assert_eq!(widths(cell), widths(&alone), "{shorthand}");
        for device in cell["calibration"]["devices"].as_array().unwrap() {
            moved = moved.max(device["change_percent"].as_f64().unwrap().abs());
        }
    }
    // Body effect slows the stacks, so the comparison is of widths that calibration moved.
    assert!(moved > 1.0, "no width moved by more than 1 %: {moved}");
}

/// A cell whose time limit no calibration meets is reported and left out; the others are written
/// and the exit code is 1.
#[test]
fn a_cell_past_its_time_limit_fails_alone() {
    if !ngspice_available("batch --calibrate time limit") {
        return;
    }
    let library = LIBRARY.replace("expr = \"aoi21\"\n", "expr = \"aoi21\"\ncell_time_limit = 0.001\n");
    let setup = setup(&library);
    let output = batch(&setup, None);
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(1), "{stderr}");
    assert!(stderr.contains("variant 'aa_aoi21_x1' was not calibrated") && stderr.contains("time limit"), "{stderr}");
    assert!(stderr.contains("1 of 3 variants were not calibrated"), "{stderr}");
    let cells = gates(&output.stdout);
    let names: Vec<&str> = cells.iter().map(|c| c["name"].as_str().unwrap()).collect();
    assert_eq!(names, ["zz_nor2_x1", "mm_nand2_x1"]);
}

/// Without ngspice on PATH: one error, exit 2, nothing written.
#[test]
fn a_missing_ngspice_is_one_error_before_any_work() {
    let setup = setup(LIBRARY);
    let empty = tempfile::tempdir().unwrap();
    let output = batch(&setup, Some(empty.path().to_str().unwrap()));
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{stderr}");
    assert!(output.stdout.is_empty(), "{}", String::from_utf8_lossy(&output.stdout));
    assert_eq!(stderr.matches("error:").count(), 1, "{stderr}");
    assert!(stderr.contains("ngspice is not installed"), "{stderr}");
}
