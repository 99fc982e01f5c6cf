//! `widthwise process` and `--process FILE`: the built-in file, bad files, snapping and folding.

use predicates::prelude::*;

use super::widthwise;

/// The built-in process as `widthwise process` prints it.
fn default_process_text() -> String {
    let output = widthwise().arg("process").output().unwrap();
    assert!(output.status.success());
    String::from_utf8(output.stdout).unwrap()
}

/// `text` with the value of `key` replaced.
fn with_value(text: &str, key: &str, value: &str) -> String {
    let prefix = format!("{key} = ");
    let mut found = false;
    let lines: Vec<String> = text
        .lines()
        .map(|line| {
            if line.starts_with(&prefix) {
                found = true;
                format!("{prefix}{value}")
            } else {
                line.to_string()
            }
        })
        .collect();
    assert!(found, "{key} is in the file");
    lines.join("\n") + "\n"
}

/// Line and column (1-based) of the first `needle` on the line that starts with `line_start`.
fn position(text: &str, line_start: &str, needle: &str) -> (usize, usize) {
    let (index, line) = text.lines().enumerate().find(|(_, l)| l.starts_with(line_start)).expect("the line");
    (index + 1, line.find(needle).expect("the needle") + 1)
}

fn json(args: &[&str]) -> serde_json::Value {
    let output = widthwise().args(args).output().unwrap();
    assert!(output.status.success(), "{args:?}: {}", String::from_utf8_lossy(&output.stderr));
    serde_json::from_slice(&output.stdout).unwrap()
}

#[test]
fn the_printed_default_reads_back_as_the_default() {
    let directory = tempfile::tempdir().unwrap();
    let path = directory.path().join("default.toml");
    std::fs::write(&path, default_process_text()).unwrap();
    let with_file = json(&["size", "aoi21", "--format", "json", "--process", path.to_str().unwrap()]);
    let without = json(&["size", "aoi21", "--format", "json"]);
    assert_eq!(with_file, without);
}

#[test]
fn the_mobility_ratio_comes_from_the_process_unless_given() {
    let directory = tempfile::tempdir().unwrap();
    let path = directory.path().join("mu25.toml");
    // KP ratio 100 / 40 = 2.5 agrees with the mobility ratio, as the file format requires.
    let text = with_value(&with_value(&default_process_text(), "mobility_ratio", "2.5"), "pmos_kp_ua_per_v2", "40.0");
    std::fs::write(&path, text).unwrap();
    let file = path.to_str().unwrap();
    // NAND2 PMOS: reference PMOS W/L = mu (docs/model.md section 2), one device per path.
    let gate = json(&["size", "nand2", "--format", "json", "--process", file]);
    assert_eq!(gate["mobility_ratio"], 2.5);
    assert_eq!(gate["transistors"][2]["w_over_l"], 2.5);
    let overridden = json(&["size", "nand2", "--format", "json", "--process", file, "--mobility-ratio", "3"]);
    assert_eq!(overridden["transistors"][2]["w_over_l"], 3.0);
}

#[test]
fn bad_process_files_name_the_key_and_its_line_and_column() {
    let directory = tempfile::tempdir().unwrap();
    let text = default_process_text();
    let missing: String = text.lines().filter(|l| !l.starts_with("grid_nm")).map(|l| format!("{l}\n")).collect();
    let unknown = format!("{text}width_fudge = 1.0\n");
    let mut cases: Vec<(&str, String, &str, (usize, usize))> = vec![
        // A missing key is reported at the start of the file.
        ("missing", missing, "grid_nm", (1, 1)),
        ("unknown", unknown.clone(), "width_fudge", position(&unknown, "width_fudge", "width_fudge")),
    ];
    for (name, key, value) in [
        ("negative", "grid_nm", "-5.0"),
        ("zero", "load_ff", "0.0"),
        ("not finite", "supply_v", "inf"),
        ("not a number", "min_width_nm", "nan"),
        ("grid above minimum width", "grid_nm", "600.0"),
        ("zero length", "length_nm", "0.0"),
    ] {
        let bad = with_value(&text, key, value);
        let at = position(&bad, &format!("{key} ="), value);
        cases.push((name, bad, key, at));
    }
    for (name, bad, key, (line, column)) in cases {
        let path = directory.path().join("bad.toml");
        std::fs::write(&path, &bad).unwrap();
        let output = widthwise().args(["size", "nand2", "--process"]).arg(&path).output().unwrap();
        let stderr = String::from_utf8(output.stderr).unwrap();
        assert_eq!(output.status.code(), Some(2), "{name}: {stderr}");
        assert!(output.stdout.is_empty(), "{name}");
        let first = stderr.lines().next().unwrap();
        assert!(first.starts_with("error: ") && first.contains(key), "{name}: {stderr}");
        let place = format!("at {}, line {line}, column {column}:", path.display());
        assert!(stderr.contains(&place), "{name}: expected '{place}' in\n{stderr}");
    }
}

#[test]
fn a_missing_process_file_is_bad_input() {
    widthwise()
        .args(["size", "nand2", "--process", "/nonexistent/widthwise/process.toml"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("cannot read"));
}

#[test]
fn snapping_reports_the_drawn_worst_path_and_its_error() {
    // min-area a in series with (b || c), mu = 2: a = 1 + sqrt 2, b = c = 1 + sqrt 2 / 2
    // (docs/model.md section 5). Built-in process: unit NMOS 1000 nm wide, grid 5 nm.
    let gate = json(&["size", "!(a & (b | c))", "--method", "min-area", "--format", "json"]);
    let snap = |nm: f64| (nm / 5.0).ceil() * 5.0;
    // a: 2414.21 nm -> 2415 nm; b, c: 1707.11 nm -> 1710 nm.
    let a_nm = snap(1000.0 * (1.0 + 2f64.sqrt()));
    let b_nm = snap(1000.0 * (1.0 + 2f64.sqrt() / 2.0));
    assert_eq!((a_nm, b_nm), (2415.0, 1710.0));
    let transistors = gate["transistors"].as_array().unwrap();
    assert_eq!(transistors[0]["drawn_width_um"], 2.415);
    assert_eq!(transistors[1]["drawn_width_um"], 1.71);
    assert_eq!(transistors[1]["fingers"], 1);
    // Worst pull-down path a + b: R x 1000/2415 + R x 1000/1710 = 0.414079 + 0.584795 = 0.998874 R;
    // against the target R: -0.1126 %. Resistance is inverse in width (common practice, no source).
    let worst = 1000.0 / a_nm + 1000.0 / b_nm;
    let error = (worst / 1.0 - 1.0) * 100.0;
    let down = &gate["networks"][0];
    // (the output's ten significant digits: within 5e-10 relative, README "Numbers")
    assert!((down["drawn_worst_resistance"].as_f64().unwrap() / worst - 1.0).abs() <= 5e-10);
    assert!((down["drawn_error_percent"].as_f64().unwrap() - error).abs() < 1e-9);
    assert!((error + 0.1126).abs() < 1e-4);
    // The pull-up (a || b - c: PMOS 2, 4, 4) is on the grid already: no error.
    assert_eq!(gate["networks"][1]["drawn_error_percent"], 0.0);

    // The same figures in the CSV: the drawn width per device, the error per gate.
    let csv_row = |rows: &str| {
        let output = widthwise()
            .args(["size", "!(a & (b | c))", "--method", "min-area", "--format", "csv", "--rows", rows])
            .output()
            .unwrap();
        let mut reader = csv::Reader::from_reader(output.stdout.as_slice());
        let headers = reader.headers().unwrap().clone();
        let row = reader.records().next().unwrap().unwrap();
        move |name: &str| row[headers.iter().position(|h| h == name).unwrap()].parse::<f64>().unwrap()
    };
    assert_eq!(csv_row("devices")("drawn_width_um"), 2.415);
    assert!((csv_row("gates")("pull_down_error_percent") - error).abs() < 1e-9);
}

#[test]
fn ten_times_the_widest_finger_is_ten_fingers() {
    // Built-in process: widest finger 20 um, unit NMOS 1 um. An inverter at drive 200 has an NMOS
    // of W/L 200, 200 um: 10 fingers of 20 um. Its PMOS (W/L 400, 400 um) is 20 of them.
    let gate = json(&["size", "inv", "--drive", "200", "--format", "json"]);
    let nmos = &gate["transistors"][0];
    assert_eq!(nmos["fingers"], 10);
    assert_eq!(nmos["finger_width_um"], 20.0);
    assert_eq!(nmos["drawn_width_um"], 200.0);
    assert_eq!(nmos["width_um"], 200.0);
    assert_eq!(gate["transistors"][1]["fingers"], 20);
    // In SPICE: W is one finger, m the number of fingers.
    widthwise()
        .args(["size", "inv", "--drive", "200", "--format", "spice"])
        .assert()
        .success()
        .stdout(predicate::str::contains("MN1 y a vss vss nmos W=20u L=1u m=10"))
        .stdout(predicate::str::contains("MP1 y a vdd vdd pmos W=20u L=1u m=20"));
}

#[test]
fn the_example_process_files_are_valid() {
    let directory = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("examples");
    let mut count = 0;
    for entry in std::fs::read_dir(directory).unwrap() {
        let path = entry.unwrap().path();
        if path.extension().is_some_and(|e| e == "toml")
            && path.file_name().unwrap().to_string_lossy().starts_with("process")
        {
            let gate = json(&["size", "aoi21", "--format", "json", "--process", path.to_str().unwrap()]);
            assert!(gate["process"]["name"].as_str().unwrap().contains("invented"), "{}", path.display());
            count += 1;
        }
    }
    assert_eq!(count, 2);
}

#[test]
fn model_names_may_not_be_reserved_or_equal() {
    for (nmos, pmos, message) in [
        ("\"gnd\"", "\"pmos\"", "nmos_model = 'gnd': a model may not take a reserved name"),
        ("\"nmos\"", "\"VSS\"", "pmos_model = 'VSS': a model may not take a reserved name"),
        ("\"dev\"", "\"DEV\"", "pmos_model = 'DEV': the NMOS and PMOS models must differ"),
    ] {
        let text = with_value(&with_value(&default_process_text(), "nmos_model", nmos), "pmos_model", pmos);
        let directory = tempfile::tempdir().unwrap();
        let path = directory.path().join("process.toml");
        std::fs::write(&path, text).unwrap();
        widthwise()
            .args(["size", "nand2", "--process"])
            .arg(&path)
            .assert()
            .code(2)
            .stderr(predicate::str::contains(message));
    }
}

#[test]
fn process_values_are_held_to_documented_ranges() {
    // Each once wrote a netlist no simulator takes: m=18446744073709551615, L=0u, W=infu.
    for (key, value, message) in [
        ("mobility_ratio", "1e300", "mobility_ratio = 1e300: must be a number from 1e-6 up to 1e6"),
        ("length_nm", "1e-4", "length_nm = 1e-4: must be a number from 1 up to 1e6 nm"),
        ("grid_nm", "1e-308", "grid_nm = 1e-308: must be a number from 0.001 up to 1e6 nm"),
        ("unit_width_nm", "1e7", "unit_width_nm = 1e7: must be a number from 1 up to 1e6 nm"),
        ("supply_v", "1e9", "supply_v = 1e9: must be a number from 0.001 up to 1000 V"),
        ("nmos_kp_ua_per_v2", "1e300", "nmos_kp_ua_per_v2 = 1e300: must be a number from 1e-6 up to 1e6 uA/V^2"),
        ("body_effect_sqrt_v", "1e-300", "body_effect_sqrt_v = 1e-300: must be 0, or a number"),
        ("gate_cap_ff_per_um", "1e300", "gate_cap_ff_per_um = 1e300: must be 0, or a number"),
        ("load_ff", "1e300", "load_ff = 1e300: must be a number from 1e-6 up to 1e6 fF"),
    ] {
        let directory = tempfile::tempdir().unwrap();
        let path = directory.path().join("process.toml");
        std::fs::write(&path, with_value(&default_process_text(), key, value)).unwrap();
        widthwise()
            .args(["size", "nand2", "--format", "spice", "--process"])
            .arg(&path)
            .assert()
            .code(2)
            .stdout(predicate::str::is_empty())
            .stderr(predicate::str::contains(message));
    }
}
