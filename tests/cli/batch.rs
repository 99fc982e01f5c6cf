//! `widthwise batch`: the example library against single-gate sizing, a 20,000-gate batch,
//! published figures through the batch, bad gates among good ones, name clashes, stdin and `-o`.

use std::collections::{HashMap, HashSet};
use std::path::{Path, PathBuf};

use predicates::prelude::*;

use super::{fixture, widthwise};

fn example(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("examples").join(name)
}

/// CSV text as a header and rows of named cells.
pub(crate) fn records(csv_text: &[u8]) -> (Vec<String>, Vec<HashMap<String, String>>) {
    let mut reader = csv::Reader::from_reader(csv_text);
    let headers: Vec<String> = reader.headers().expect("a header row").iter().map(str::to_string).collect();
    let rows = reader
        .records()
        .map(|record| {
            let record = record.expect("a well-formed CSV row");
            headers.iter().cloned().zip(record.iter().map(str::to_string)).collect()
        })
        .collect();
    (headers, rows)
}

/// Run the batch and return its CSV in `rows` view.
fn batch_csv(library: &Path, rows: &str) -> (Vec<String>, Vec<HashMap<String, String>>) {
    let output = widthwise().arg("batch").arg(library).args(["--format", "csv", "--rows", rows]).output().unwrap();
    assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    records(&output.stdout)
}

/// How one variant is sized, as the library file says.
#[derive(Debug, Clone)]
struct Expected {
    expression: String,
    method: String,
    drive: f64,
    critical: Option<String>,
}

fn drives(value: Option<&toml::Value>) -> Option<Vec<f64>> {
    let number = |v: &toml::Value| v.as_float().or_else(|| v.as_integer().map(|i| i as f64)).unwrap();
    value.map(|v| match v.as_array() {
        Some(list) => list.iter().map(number).collect(),
        None => vec![number(v)],
    })
}

/// Every variant a library file asks for, by variant name, read from the file with the `toml`
/// crate on its own (the precedence rules as documented: gate, then [defaults], then built-in).
fn expected_variants(text: &str) -> Vec<(String, Expected)> {
    let file: toml::Table = text.parse().unwrap();
    let defaults = file.get("defaults").and_then(|d| d.as_table()).cloned().unwrap_or_default();
    let default_method = defaults.get("method").and_then(|m| m.as_str()).unwrap_or("longest-path").to_string();
    let default_drives = drives(defaults.get("drive")).unwrap_or(vec![1.0]);
    let mut variants = Vec::new();
    for gate in file["gate"].as_array().unwrap() {
        let name = gate["name"].as_str().unwrap();
        for drive in drives(gate.get("drive")).unwrap_or(default_drives.clone()) {
            let suffix = drive.to_string().replace('.', "p");
            variants.push((
                format!("{name}_x{suffix}"),
                Expected {
                    expression: gate["expr"].as_str().unwrap().to_string(),
                    method: gate.get("method").and_then(|m| m.as_str()).unwrap_or(&default_method).to_string(),
                    drive,
                    critical: gate.get("critical").and_then(|c| c.as_str()).map(str::to_string),
                },
            ));
        }
    }
    variants
}

/// `widthwise size` of one variant, in a CSV view.
fn size_csv(
    name: &str,
    expected: &Expected,
    mobility_ratio: f64,
    process: Option<&Path>,
    rows: &str,
) -> Vec<HashMap<String, String>> {
    let mut command = widthwise();
    command.args(["size", &expected.expression, "--method", &expected.method, "--name", name]);
    if let Some(process) = process {
        command.arg("--process").arg(process);
    }
    command.args(["--drive", &expected.drive.to_string(), "--mobility-ratio", &mobility_ratio.to_string()]);
    if let Some(critical) = &expected.critical {
        command.args(["--critical", critical]);
    }
    let output = command.args(["--format", "csv", "--rows", rows]).output().unwrap();
    assert!(output.status.success(), "{name}: {}", String::from_utf8_lossy(&output.stderr));
    records(&output.stdout).1
}

fn close(a: &str, b: &str) -> bool {
    match (a.parse::<f64>(), b.parse::<f64>()) {
        (Ok(x), Ok(y)) => (x - y).abs() <= 1e-12 * x.abs().max(y.abs()).max(1.0),
        _ => a == b,
    }
}

/// Two numbers each written to ten significant digits (README, "Numbers": within 5e-10 relative
/// of the value), the second worked out here from other written numbers: within 1e-9 relative.
fn close_as_written(a: &str, b: f64) -> bool {
    let a: f64 = a.parse().unwrap();
    (a - b).abs() <= 1e-9 * a.abs().max(b.abs())
}

/// Compare a batch row with the same row from `size`, every column.
fn assert_same_row(batch: &HashMap<String, String>, single: &HashMap<String, String>, what: &str) {
    assert_eq!(batch.len(), single.len(), "{what}: same columns");
    for (column, value) in single {
        assert!(close(&batch[column], value), "{what}: {column}: batch {} but size {value}", batch[column]);
    }
}

#[test]
fn example_library_matches_single_gate_sizing_row_by_row() {
    let library = example("tern8-cells.toml");
    let text = std::fs::read_to_string(&library).unwrap();
    let expected = expected_variants(&text);
    let process_file = example("tern8-process.toml");
    let process: toml::Table = std::fs::read_to_string(&process_file).unwrap().parse().unwrap();
    let mobility_ratio = process["mobility_ratio"].as_float().unwrap();
    let unit_width_um = process["unit_width_nm"].as_float().unwrap() / 1000.0;
    let length_um = process["length_nm"].as_float().unwrap() / 1000.0;

    let (_, gates) = batch_csv(&library, "gates");
    let (_, devices) = batch_csv(&library, "devices");
    let names: Vec<&str> = gates.iter().map(|row| row["gate"].as_str()).collect();
    let wanted: Vec<&str> = expected.iter().map(|(name, _)| name.as_str()).collect();
    assert_eq!(names, wanted, "one row per variant, in file order");

    for (name, variant) in &expected {
        let row = gates.iter().find(|row| &row["gate"] == name).unwrap();
        // Against the same gate sized on its own by `widthwise size` (the single-gate path, which
        // its own tests check against published tables), with the options the library file gives.
        let single = size_csv(name, variant, mobility_ratio, Some(&process_file), "gates");
        assert_same_row(row, &single[0], name);
        // physical width = W/L x the process's unit width (the process file read on its own)
        let total: f64 = row["total_w_over_l"].parse().unwrap();
        assert!(close_as_written(&row["total_width_um"], total * unit_width_um), "{name}: width");
        assert!(close(&row["length_um"], &length_um.to_string()));

        let batch_devices: Vec<_> = devices.iter().filter(|d| &d["gate"] == name).collect();
        let single_devices = size_csv(name, variant, mobility_ratio, Some(&process_file), "devices");
        assert_eq!(batch_devices.len(), single_devices.len(), "{name}: devices");
        for (batch, single) in batch_devices.iter().zip(&single_devices) {
            assert_same_row(batch, single, &format!("{name} {}", single["device"]));
            let w_over_l: f64 = batch["w_over_l"].parse().unwrap();
            assert!(close_as_written(&batch["width_um"], w_over_l * unit_width_um));
        }
    }
}

/// A small deterministic generator, so the sample is the same on every run.
struct Sequence(u64);

impl Sequence {
    fn next(&mut self, below: usize) -> usize {
        self.0 = self.0.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
        ((self.0 >> 33) % below as u64) as usize
    }
}

#[test]
fn twenty_thousand_gates_are_sized_and_a_sample_matches_single_gate_sizing() {
    const SHORTHANDS: [&str; 10] =
        ["inv", "nand2", "nand3", "nor2", "nor4", "aoi21", "aoi22", "oai21", "oai33", "aoi211"];
    const EXPRESSIONS: [&str; 5] = [
        "!(a & (b | c))",
        "y = !(a*b + c*d + e)",
        "co_n = !(a & b | ci & (a | b))",
        "(p q + r)'",
        "!((a | b) & (c | d) & e)",
    ];
    const DRIVES: [&str; 4] = ["", "drive = 2\n", "drive = [1, 2, 4]\n", "drive = 1.5\n"];
    let mut sequence = Sequence(7);
    let mut text = String::from("[defaults]\nmobility_ratio = 2.5\n\n");
    for index in 0..20_000 {
        let expr = if sequence.next(3) == 0 {
            EXPRESSIONS[sequence.next(EXPRESSIONS.len())]
        } else {
            SHORTHANDS[sequence.next(SHORTHANDS.len())]
        };
        let method = if sequence.next(4) == 0 { "method = \"min-area\"\n" } else { "" };
        let drive = DRIVES[sequence.next(DRIVES.len())];
        text.push_str(&format!("[[gate]]\nname = \"cell{index}\"\nexpr = \"{expr}\"\n{method}{drive}\n"));
    }
    let directory = tempfile::tempdir().unwrap();
    let library = directory.path().join("generated.toml");
    std::fs::write(&library, &text).unwrap();
    let expected = expected_variants(&text);

    let (_, rows) = batch_csv(&library, "gates");
    assert_eq!(rows.len(), expected.len(), "one row per variant");
    let names: HashSet<&str> = rows.iter().map(|row| row["gate"].as_str()).collect();
    assert_eq!(names.len(), rows.len(), "variant names are unique");
    for _ in 0..20 {
        let index = sequence.next(expected.len());
        let (name, variant) = &expected[index];
        assert_eq!(&rows[index]["gate"], name, "file order");
        // Against `widthwise size` of the same gate with the same options (the single-gate path)
        let single = size_csv(name, variant, 2.5, None, "gates");
        assert_same_row(&rows[index], &single[0], name);
    }
}

#[test]
fn published_figures_come_through_the_batch() {
    let library = fixture("batch-published.toml");
    let (_, gates) = batch_csv(&library, "gates");
    let (_, inputs) = batch_csv(&library, "inputs");
    let number = |text: &str| text.parse::<f64>().unwrap();
    // (cell, logical effort per input, parasitic delay) at mu = 2, longest-path sizing.
    // inv g = 1, p = 1 (common practice, no source); NAND n: g = (n+2)/3, p = n; NOR n: g = (2n+1)/3,
    // p = n (Sutherland, Sproull & Harris, "Logical Effort", 1999, ch. 4); AOI21: g = 2, 2, 5/3,
    // p = 7/3; AOI22: g = 2, p = 4 (Weste & Harris, "CMOS VLSI Design", logical-effort table; from memory)
    let published: [(&str, &[f64], f64); 8] = [
        ("inv", &[1.0], 1.0),
        ("nand2", &[4.0 / 3.0; 2], 2.0),
        ("nand3", &[5.0 / 3.0; 3], 3.0),
        ("nand4", &[2.0; 4], 4.0),
        ("nor2", &[5.0 / 3.0; 2], 2.0),
        ("nor3", &[7.0 / 3.0; 3], 3.0),
        ("aoi21", &[2.0, 2.0, 5.0 / 3.0], 7.0 / 3.0),
        ("aoi22", &[2.0; 4], 4.0),
    ];
    assert_eq!(gates.len(), 2 * published.len());
    for (cell, efforts, parasitic) in published {
        for drive in [1.0, 2.0] {
            let name = format!("{cell}_x{drive}");
            let row = gates.iter().find(|row| row["gate"] == name).unwrap_or_else(|| panic!("{name}"));
            assert!((number(&row["parasitic_delay"]) - parasitic).abs() < 1e-9, "{name} p");
            // Drive d pulls with R / d on both sides (docs/model.md section 2; common practice, no source)
            for column in ["worst_pull_down_r", "worst_pull_up_r"] {
                assert!((number(&row[column]) - 1.0 / drive).abs() < 1e-9, "{name} {column}");
            }
            let found: Vec<f64> =
                inputs.iter().filter(|row| row["gate"] == name).map(|row| number(&row["logical_effort"])).collect();
            assert_eq!(found.len(), efforts.len(), "{name} inputs");
            for (g, expected) in found.iter().zip(efforts) {
                assert!((g - expected).abs() < 1e-9, "{name}: g {g} against {expected}");
            }
        }
    }
}

#[test]
fn csv_views_have_the_documented_columns() {
    let library = fixture("batch-published.toml");
    // The column order of each view, as the README lists it.
    let gates = "gate,expression,output,drive,method,transistors,area_um2,max_input_cap_c,max_input_cap_ff,\
                 max_logical_effort,min_logical_effort,parasitic_delay,total_w_over_l,total_width_um,\
                 total_drawn_width_um,length_um,mobility_ratio,reference_nmos_w_over_l,reference_pmos_w_over_l,\
                 pull_down_target_r,worst_pull_down_r,pull_down_vector,best_pull_down_r,pull_down_paths,\
                 drawn_worst_pull_down_r,pull_down_error_percent,pull_up_target_r,worst_pull_up_r,pull_up_vector,\
                 best_pull_up_r,pull_up_paths,drawn_worst_pull_up_r,pull_up_error_percent,process,\
                 drawn_change_percent,drawn_max_input_cap_c,drawn_parasitic_delay,drawn_total_w_over_l,stages,form";
    let devices = "gate,drive,method,device,stage,type,network,input,drain,source,w_over_l,width_um,drawn_w_over_l,\
                   drawn_width_um,fingers,per_finger_width_um,area_um2,gate_cap_c,gate_cap_ff";
    let inputs = "gate,drive,method,input,input_cap_c,input_cap_ff,logical_effort,drawn_input_cap_c,\
                  drawn_logical_effort";
    for (rows, header) in [("gates", gates), ("devices", devices), ("inputs", inputs)] {
        let (found, records) = batch_csv(&library, rows);
        assert_eq!(found.join(","), header, "{rows}");
        assert!(!records.is_empty());
    }
}

/// Sum `column` of the rows whose `key` columns equal `keys`.
fn sum_where(rows: &[HashMap<String, String>], keys: &[(&str, &str)], column: &str) -> f64 {
    rows.iter()
        .filter(|row| keys.iter().all(|(key, value)| row[*key] == *value))
        .map(|row| row[column].parse::<f64>().unwrap_or_else(|_| panic!("{column}: {}", row[column])))
        .sum()
}

#[test]
fn device_columns_sum_to_the_gate_figures_and_the_rest_say_per_finger() {
    // Published gates, a min-area gate on the tern8 process (0.25 um devices, a 2.5 mobility ratio),
    // and a drive wide enough to be drawn in fingers (an inverter at drive 100: NMOS 50 um, PMOS
    // 125 um on that process, in 20 um fingers).
    let process = example("tern8-process.toml");
    let text = format!(
        "process = \"{}\"\n[defaults]\ndrive = [1, 100]\n\n\
         [[gate]]\nname = \"inv\"\nexpr = \"inv\"\n\n[[gate]]\nname = \"maj\"\nexpr = \"!(a & b | c & (a | b))\"\n\n\
         [[gate]]\nname = \"n2\"\nexpr = \"nand2\"\n\n\
         [[gate]]\nname = \"cla\"\nexpr = \"!(g1 | p1 & (g0 | p0 & ci))\"\nmethod = \"min-area\"\n",
        process.display()
    );
    let directory = tempfile::tempdir().unwrap();
    let library = directory.path().join("cells.toml");
    std::fs::write(&library, text).unwrap();
    let (_, gates) = batch_csv(&library, "gates");
    let (headers, devices) = batch_csv(&library, "devices");
    let (_, inputs) = batch_csv(&library, "inputs");
    let output = widthwise().arg("batch").arg(&library).args(["--format", "spice"]).output().unwrap();
    let netlist = String::from_utf8(output.stdout).unwrap();
    let process_values: toml::Table = std::fs::read_to_string(&process).unwrap().parse().unwrap();
    let unit_width_um = process_values["unit_width_nm"].as_float().unwrap() / 1000.0;
    // Keys to join on, then text; every other column is a number that sums, or says per finger.
    let keys = ["gate", "drive", "method", "device", "stage", "type", "network", "input", "drain", "source"];
    let mut checked = Vec::new();
    for gate in &gates {
        let name = gate["gate"].as_str();
        let of_gate = [("gate", name)];
        let gate_number = |column: &str| gate[column].parse::<f64>().unwrap();
        let agree = |sum: f64, figure: f64, what: &str| {
            // Each side written to ten significant digits (README, "Numbers"): within 1e-9 relative
            // per term, summed over at most a few devices.
            assert!((sum - figure).abs() <= 1e-8 * figure.abs(), "{name}: {what}: sum {sum}, gate {figure}");
        };
        // Totals of the gate: the sum over its devices (what a total is; common practice, no source).
        for (device_column, gate_column) in [
            ("w_over_l", "total_w_over_l"),
            ("width_um", "total_width_um"),
            ("drawn_width_um", "total_drawn_width_um"),
            ("area_um2", "area_um2"),
        ] {
            agree(sum_where(&devices, &of_gate, device_column), gate_number(gate_column), device_column);
            checked.push(device_column);
        }
        // Drawn W/L is drawn width over the unit width: its sum is the total drawn width over it.
        agree(
            sum_where(&devices, &of_gate, "drawn_w_over_l") * unit_width_um,
            gate_number("total_drawn_width_um"),
            "drawn W/L",
        );
        checked.push("drawn_w_over_l");
        // Fingers sum to the finger stripes the netlist draws: the multiplicities m= of its MOSFETs.
        let start = netlist.find(&format!(".subckt {name} ")).unwrap();
        let end = start + netlist[start..].find(".ends").unwrap();
        let stripes: f64 = netlist[start..end]
            .split_whitespace()
            .filter_map(|word| word.strip_prefix("m="))
            .map(|m| m.parse::<f64>().unwrap())
            .sum();
        agree(sum_where(&devices, &of_gate, "fingers"), stripes, "fingers");
        checked.push("fingers");
        // Gate capacitance per gate and input: that input's capacitance, in C and in fF (an input's
        // capacitance is the gate capacitance of the devices it drives; docs/model.md section 6).
        let mut largest_c = 0.0f64;
        for input in inputs.iter().filter(|row| row["gate"] == name) {
            let of_input = [("gate", name), ("input", input["input"].as_str())];
            for (device_column, input_column) in [("gate_cap_c", "input_cap_c"), ("gate_cap_ff", "input_cap_ff")] {
                let figure = input[input_column].parse::<f64>().unwrap();
                agree(sum_where(&devices, &of_input, device_column), figure, device_column);
            }
            largest_c = largest_c.max(input["input_cap_c"].parse().unwrap());
        }
        agree(largest_c, gate_number("max_input_cap_c"), "max_input_cap_c");
        checked.extend(["gate_cap_c", "gate_cap_ff"]);
    }
    // The majority cell's input a drives four devices: two NMOS of W/L 2 (two-device paths) and two
    // PMOS on three-device paths ((a | b) in series with (a & b)), 3 x 2.5 each on the tern8
    // process's mobility ratio: 19 C, not 4 x 19 as a per-device repeat of the total would sum
    // (longest-path rule, docs/model.md section 5).
    assert_eq!(sum_where(&devices, &[("gate", "maj_x1"), ("input", "a")], "gate_cap_c"), 19.0);
    // Per-finger values are named so; no other column is left unchecked.
    for column in &headers {
        let known = keys.contains(&column.as_str()) || checked.contains(&column.as_str());
        assert!(known || column.starts_with("per_finger_"), "device column {column}: neither summed nor per finger");
    }
    assert!(devices.iter().any(|row| row["fingers"] != "1"), "some device is drawn in fingers");
}

/// The gates-view row of `variant` in a batch of `library` (on standard input) with `args`.
fn batch_row(library: &str, args: &[&str], variant: &str) -> HashMap<String, String> {
    let output = widthwise().args(["batch", "-", "--format", "csv"]).args(args).write_stdin(library).output().unwrap();
    assert!(output.status.success(), "{args:?}: {}", String::from_utf8_lossy(&output.stderr));
    let (_, rows) = records(&output.stdout);
    rows.into_iter().find(|row| row["gate"] == variant).unwrap_or_else(|| panic!("{variant} in {args:?}"))
}

/// The gates-view row of `widthwise size` with `args`.
fn size_row(args: &[&str]) -> HashMap<String, String> {
    let output = widthwise().arg("size").args(args).args(["--format", "csv", "--rows", "gates"]).output().unwrap();
    assert!(output.status.success(), "{args:?}: {}", String::from_utf8_lossy(&output.stderr));
    records(&output.stdout).1.remove(0)
}

#[test]
fn the_command_line_comes_before_gate_keys_before_defaults_before_the_process() {
    let process = example("tern8-process.toml");
    let process = process.to_str().unwrap();
    let library = format!(
        "process = \"{process}\"\n[defaults]\nmethod = \"min-area\"\ndrive = [1, 2]\nmobility_ratio = 3\n\
         reference = [1, 3]\n\n[[gate]]\nname = \"lp\"\nexpr = \"oai21\"\nmethod = \"longest-path\"\n\
         drive = 4\nreference = \"2:3\"\n\n[[gate]]\nname = \"plain\"\nexpr = \"oai21\"\n"
    );
    // Each variant against `widthwise size` of the same gate with the options the precedence gives
    // (README, "Precedence"), row by row (the single-gate path, checked against published tables).
    let cases: [(&[&str], &str, &[&str]); 6] = [
        // Gate keys over [defaults]; [defaults] over the process's mobility ratio (2.5).
        (&[], "lp_x4", &["--method", "longest-path", "--drive", "4", "--reference", "2:3", "--mobility-ratio", "3"]),
        (&[], "plain_x2", &["--method", "min-area", "--drive", "2", "--reference", "1:3", "--mobility-ratio", "3"]),
        // The command line over both.
        (
            &["--method", "min-area", "--mobility-ratio", "2.2"],
            "lp_x4",
            &["--method", "min-area", "--drive", "4", "--reference", "2:3", "--mobility-ratio", "2.2"],
        ),
        // --drive replaces every drive list: one variant per gate.
        (
            &["--drive", "3"],
            "plain_x3",
            &["--method", "min-area", "--drive", "3", "--reference", "1:3", "--mobility-ratio", "3"],
        ),
        (&["--reference", "1:2"], "lp_x4", &["--drive", "4", "--reference", "1:2", "--mobility-ratio", "3"]),
        // --process replaces the library's process: the built-in one, its mobility ratio 2 under [defaults]' 3.
        (
            &["--process", "PROCESS"],
            "plain_x1",
            &["--method", "min-area", "--reference", "1:3", "--mobility-ratio", "3", "--process", "PROCESS"],
        ),
    ];
    let directory = tempfile::tempdir().unwrap();
    let built_in = directory.path().join("built-in.toml");
    std::fs::write(&built_in, widthwise().arg("process").output().unwrap().stdout).unwrap();
    let built_in = built_in.to_str().unwrap();
    let with_file = |args: &[&str]| -> Vec<String> {
        args.iter().map(|a| if *a == "PROCESS" { built_in.to_string() } else { a.to_string() }).collect()
    };
    for (overrides, variant, single) in cases {
        let overrides = with_file(overrides);
        let overrides: Vec<&str> = overrides.iter().map(String::as_str).collect();
        let batch = batch_row(&library, &overrides, variant);
        let mut single = with_file(single);
        if !single.iter().any(|a| a == "--process") {
            single.extend(["--process".to_string(), process.to_string()]);
        }
        single.extend(["--name".to_string(), variant.to_string()]);
        let single: Vec<&str> = single.iter().map(String::as_str).collect();
        let expected = size_row(&[&["oai21"], &single[..]].concat());
        assert_same_row(&batch, &expected, &format!("{variant} with {overrides:?}"));
    }
    // --drive leaves one variant per gate.
    let output =
        widthwise().args(["batch", "-", "--format", "csv", "--drive", "3"]).write_stdin(library).output().unwrap();
    assert_eq!(records(&output.stdout).1.len(), 2);
}

#[test]
fn stage_effort_and_pull_up_keys_come_after_the_command_line_and_before_defaults() {
    // Cells of several stages: each variant against `widthwise size` with the options the precedence
    // gives (README, "Precedence"; the single-gate sizing is checked against docs/model.md section 9).
    let library = "[defaults]\nstage_effort = 2\n\n[[gate]]\nname = \"own\"\nexpr = \"and3\"\nstage_effort = 6\n\n\
                   [[gate]]\nname = \"plain\"\nexpr = \"and3\"\n\n\
                   [[gate]]\nname = \"carry\"\nexpr = \"maj3\"\npull_up = \"mirror\"\n";
    // The command line's pull-up applies to every gate (and3's would be refused): a library of maj3.
    let carry = "[defaults]\nstage_effort = 2\n\n[[gate]]\nname = \"carry\"\nexpr = \"maj3\"\n";
    let cases: [(&str, &[&str], &str, &[&str]); 5] = [
        (library, &[], "own_x1", &["and3", "--stage-effort", "6"]),
        (library, &[], "plain_x1", &["and3", "--stage-effort", "2"]),
        (library, &["--stage-effort", "3"], "own_x1", &["and3", "--stage-effort", "3"]),
        (library, &[], "carry_x1", &["maj3", "--stage-effort", "2", "--pull-up", "mirror"]),
        (carry, &["--pull-up", "mirror"], "carry_x1", &["maj3", "--stage-effort", "2", "--pull-up", "mirror"]),
    ];
    for (library, overrides, variant, single) in cases {
        let batch = batch_row(library, overrides, variant);
        let expected = size_row(&[single, &["--name", variant]].concat());
        assert_same_row(&batch, &expected, &format!("{variant} with {overrides:?}"));
    }
    // The stage effort changes the sizing (so the rows above can tell the keys apart).
    let (low, high) = (batch_row(library, &[], "plain_x1"), batch_row(library, &[], "own_x1"));
    assert_ne!(low["total_w_over_l"], high["total_w_over_l"]);
    // A mirror pull-up differs from the dual one.
    let dual = size_row(&["maj3", "--stage-effort", "2", "--name", "carry_x1"]);
    assert_ne!(batch_row(library, &[], "carry_x1")["total_w_over_l"], dual["total_w_over_l"]);
}

#[test]
fn bad_stage_effort_and_pull_up_keys_are_reported_at_their_place() {
    let library = "[[gate]]\nname = \"slow\"\nexpr = \"and2\"\nstage_effort = 0\n\n\
                   [[gate]]\nname = \"odd\"\nexpr = \"and2\"\npull_up = \"a | !b\"\n\n\
                   [[gate]]\nname = \"wrong\"\nexpr = \"and2\"\npull_up = \"a & b\"\n\n\
                   [[gate]]\nname = \"fine\"\nexpr = \"and2\"\npull_up = \"a | b\"\n";
    let output = widthwise().args(["batch", "-", "--format", "csv"]).write_stdin(library).output().unwrap();
    assert_eq!(output.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert!(stderr.contains("gate 'slow': stage_effort = 0"), "{stderr}");
    assert!(stderr.contains("line 4, column 16"), "{stderr}");
    // `!` in a pull-up: at the `!` itself (line 9, the value starts at column 12).
    assert!(stderr.contains("gate 'odd': pull_up:"), "{stderr}");
    assert!(stderr.contains("line 9, column 16"), "{stderr}");
    assert!(stderr.contains("gate 'wrong': pull_up:"), "{stderr}");
    let (_, rows) = records(&output.stdout);
    let gates: Vec<&str> = rows.iter().map(|row| row["gate"].as_str()).collect();
    assert_eq!(gates, ["fine_x1"]);
}

#[test]
fn a_skewed_family_sizes_as_size_does_with_its_reference() {
    // A high-skew NAND2 (PMOS of the reference 4 at drive 1) and a low-skew one (NMOS 2): each
    // network's target is its reference device's resistance (docs/model.md section 2): pull-up
    // mu / 4 = 0.5 R, pull-down 1 / 2 = 0.5 R, the other side R.
    let library = "[defaults]\nreference = [1, 4]\n\n[[gate]]\nname = \"nand2_hi\"\nexpr = \"nand2\"\n\n\
                   [[gate]]\nname = \"nand2_lo\"\nexpr = \"nand2\"\nreference = \"2:2\"\n";
    let high = batch_row(library, &[], "nand2_hi_x1");
    let low = batch_row(library, &[], "nand2_lo_x1");
    assert_eq!((high["pull_down_target_r"].as_str(), high["pull_up_target_r"].as_str()), ("1", "0.5"));
    assert_eq!((low["pull_down_target_r"].as_str(), low["pull_up_target_r"].as_str()), ("0.5", "1"));
    assert_same_row(&high, &size_row(&["nand2", "--reference", "1:4", "--name", "nand2_hi_x1"]), "high skew");
    assert_same_row(&low, &size_row(&["nand2", "--reference", "2:2", "--name", "nand2_lo_x1"]), "low skew");
    // A bad reference is that gate's problem, at its place.
    let bad = "[[gate]]\nname = \"g\"\nexpr = \"inv\"\nreference = [1, 0]\n";
    let output = widthwise().args(["batch", "-"]).write_stdin(bad).output().unwrap();
    assert_eq!(output.status.code(), Some(2));
    let stderr = String::from_utf8(output.stderr).unwrap();
    assert!(stderr.contains("reference: the PMOS W/L 0 must be") && stderr.contains("line 4"), "{stderr}");
}

#[test]
fn a_library_on_standard_input_resolves_its_process_against_the_stated_folder() {
    let text = std::fs::read_to_string(example("tern8-cells.toml")).unwrap();
    let from_file =
        widthwise().arg("batch").arg(example("tern8-cells.toml")).args(["--format", "csv"]).output().unwrap();
    let folder = example("");
    let from_stdin = widthwise()
        .args(["batch", "-", "--format", "csv", "--base-dir"])
        .arg(&folder)
        .write_stdin(text.clone())
        .output()
        .unwrap();
    assert!(from_stdin.status.success(), "{}", String::from_utf8_lossy(&from_stdin.stderr));
    assert_eq!(from_stdin.stdout, from_file.stdout);
    // Without it the relative path is refused, naming the option; nothing is written.
    widthwise()
        .args(["batch", "-"])
        .write_stdin(text)
        .assert()
        .code(2)
        .stdout(predicate::str::is_empty())
        .stderr(predicate::str::contains("give --base-dir DIR"));
}

#[test]
fn batch_options_that_do_not_apply_are_refused() {
    let library = example("tern8-cells.toml");
    for (args, message) in [
        (&["--format", "json", "--rows", "devices"][..], "--rows does not apply with --format json, spice or svg"),
        (&["--format", "spice", "--rows", "gates"], "--rows does not apply"),
        (&["--base-dir", "."], "--base-dir does not apply to a library file"),
        (&["--method", "elmore"], "--method elmore does not apply to a library"),
        (&["--work-budget", "100"], "--verify"),
    ] {
        widthwise()
            .arg("batch")
            .arg(&library)
            .args(args)
            .assert()
            .code(2)
            .stdout(predicate::str::is_empty())
            .stderr(predicate::str::contains(message));
    }
}

#[test]
fn bad_gates_are_reported_and_good_ones_written() {
    let library = fixture("batch-mixed.toml");
    let output = widthwise().arg("batch").arg(&library).args(["--format", "csv"]).output().unwrap();
    assert_eq!(output.status.code(), Some(2));
    let (_, rows) = records(&output.stdout);
    let names: Vec<&str> = rows.iter().map(|row| row["gate"].as_str()).collect();
    assert_eq!(names, ["good_nand_x1", "good_nand_x2", "good_aoi_x1", "good_nor_x1", "good_nor_x2"]);
    let stderr = String::from_utf8(output.stderr).unwrap();
    let file = library.display().to_string();
    for (name, place) in [
        ("bad_syntax", "line 11, column 15"),
        ("bad_stage", "line 20, column 9"),
        ("bad_key", "line 25, column 1"),
        ("bad_critical", "line 30, column 12"),
    ] {
        let heading = format!("error: gate '{name}': ");
        let at = stderr.find(&heading).unwrap_or_else(|| panic!("{name} reported: {stderr}"));
        let location = format!("  at {file}, {place}:");
        assert!(stderr[at..].lines().nth(1) == Some(location.as_str()), "{name} at {place}: {stderr}");
    }
    // The caret sits under the ')' that has no operand.
    assert!(stderr.contains("    expr = \"!(a & )\"\n                  ^\n"), "{stderr}");
    assert!(stderr.contains("unknown gate 'xor9'"), "{stderr}");
    assert!(stderr.contains("unknown field `width`"), "{stderr}");
    assert!(stderr.trim_end().ends_with("error: 4 of 7 gates could not be sized (reported above); gates written: 3"));
}

#[test]
fn names_that_a_spreadsheet_would_run_are_refused() {
    let mut text = String::from("[[gate]]\nname = \"fine\"\nexpr = \"nand2\"\n");
    for name in ["=cmd", "+x", "-x", "@x", "=HYPERLINK(\\\"x\\\")"] {
        text.push_str(&format!("\n[[gate]]\nname = \"{name}\"\nexpr = \"inv\"\n"));
    }
    let output = widthwise().args(["batch", "-", "--format", "csv"]).write_stdin(text).output().unwrap();
    assert_eq!(output.status.code(), Some(2));
    let (_, rows) = records(&output.stdout);
    assert_eq!(rows.len(), 1);
    assert_eq!(rows[0]["gate"], "fine_x1");
    // No cell of the output starts a formula (OWASP, "CSV Injection": =, +, - and @ lead a
    // formula in common spreadsheets; from memory).
    for row in &rows {
        for cell in row.values() {
            assert!(!cell.starts_with(['=', '+', '@']), "{cell}");
        }
    }
    let stderr = String::from_utf8(output.stderr).unwrap();
    for (number, name) in [(2, "=cmd"), (3, "+x"), (4, "-x"), (5, "@x")] {
        let heading = format!("error: gate {number}: name '{name}' is refused: a gate name is an identifier");
        assert!(stderr.contains(&heading), "{heading}: {stderr}");
    }
    assert_eq!(stderr.matches("no spreadsheet reads its cell as a formula").count(), 5, "{stderr}");
    assert!(stderr.contains("at standard input, line 6, column 8:"), "{stderr}");
}

#[test]
fn duplicate_names_and_variant_names_stop_before_any_output() {
    let duplicate = "[[gate]]\nname = \"n2\"\nexpr = \"nand2\"\n\n[[gate]]\nname = \"n2\"\nexpr = \"nor2\"\n";
    let repeated = "[[gate]]\nname = \"n2\"\nexpr = \"nand2\"\ndrive = [1, 2, 2.0]\n";
    for (text, message, place) in [
        (duplicate, "error: gate 'n2': the name is already used by gate 1", "line 6, column 8"),
        (
            repeated,
            "error: gate 'n2': drive 2 is listed twice: both variants would be subcircuit 'n2_x2'",
            "line 4, column 16",
        ),
    ] {
        for format in ["csv", "table", "json", "spice"] {
            widthwise()
                .args(["batch", "-", "--format", format])
                .write_stdin(text)
                .assert()
                .code(2)
                .stdout(predicate::str::is_empty())
                .stderr(predicate::str::contains(message))
                .stderr(predicate::str::contains(place))
                .stderr(predicate::str::contains("nothing was written"));
        }
    }
}

#[test]
fn whole_file_errors_stop_with_one_message() {
    let cases = [
        ("[[gate]\nname = \"x\"\n", "line 1"),
        ("[[gate]]\nname = \"x\"\nexpr = \"inv\"\n[cells]\n", "unknown key 'cells'"),
        ("[defaults]\nmethod = \"fastest\"\n", "unknown variant `fastest`"),
        ("process = \"/no/such/folder/missing.toml\"\n", "cannot read the process file"),
        // A relative path from standard input has no folder to start from unless --base-dir says.
        ("process = \"missing.toml\"\n", "is a relative path, and a library read from standard input has no folder"),
        ("[process]\nmobility_ratio = 2.0\n", "missing field"),
    ];
    for (text, message) in cases {
        let output = widthwise().args(["batch", "-"]).write_stdin(text).output().unwrap();
        assert_eq!(output.status.code(), Some(2), "{text}");
        assert!(output.stdout.is_empty(), "{text}");
        let stderr = String::from_utf8(output.stderr).unwrap();
        assert!(stderr.starts_with("error: ") && stderr.contains(message), "{text}: {stderr}");
        assert_eq!(stderr.matches("error:").count(), 1, "{stderr}");
    }
}

#[test]
fn a_library_that_is_not_utf8_is_refused() {
    widthwise()
        .args(["batch", "-"])
        .write_stdin(b"[[gate]]\nname = \"a\xff\"\n".to_vec())
        .assert()
        .code(2)
        .stdout(predicate::str::is_empty())
        .stderr(predicate::str::contains("not valid UTF-8 (first bad byte at byte 18)"));
}

#[test]
fn an_inline_process_table_and_standard_input() {
    let process = std::fs::read_to_string(example("tern8-process.toml")).unwrap();
    let text = format!("[[gate]]\nname = \"n2\"\nexpr = \"nand2\"\n\n[process]\n{process}");
    let output = widthwise()
        .args(["batch", "-", "--format", "csv", "--rows", "devices"])
        .write_stdin(text.clone())
        .output()
        .unwrap();
    assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    let (_, rows) = records(&output.stdout);
    assert_eq!(rows.len(), 4);
    // mu = 2.5 from the process: NAND2 NMOS 2, PMOS 2.5 (longest-path rule; common practice, no source)
    // and physical width = W/L x 0.5 um, L = 0.25 um (the process file's unit width and length)
    assert_eq!((rows[0]["w_over_l"].as_str(), rows[0]["width_um"].as_str()), ("2", "1"));
    assert_eq!((rows[2]["w_over_l"].as_str(), rows[2]["width_um"].as_str()), ("2.5", "1.25"));
    // Area = W x L: 1 um x 0.25 um and 1.25 um x 0.25 um (the drawn widths are on the 5 nm grid already)
    assert_eq!((rows[0]["area_um2"].as_str(), rows[2]["area_um2"].as_str()), ("0.25", "0.3125"));
    let gates = widthwise().args(["batch", "-", "--format", "csv"]).write_stdin(text).output().unwrap();
    assert_eq!(records(&gates.stdout).1[0]["length_um"], "0.25");
}

#[test]
fn output_file_is_written_atomically_and_kept_on_a_file_error() {
    let directory = tempfile::tempdir().unwrap();
    let path = directory.path().join("cells.sp");
    widthwise()
        .arg("batch")
        .arg(example("tern8-cells.toml"))
        .args(["--format", "spice", "-o"])
        .arg(&path)
        .assert()
        .success()
        .stdout("");
    let netlist = std::fs::read_to_string(&path).unwrap();
    let subcircuits: Vec<&str> = netlist.lines().filter(|l| l.starts_with(".subckt ")).collect();
    let expected = expected_variants(&std::fs::read_to_string(example("tern8-cells.toml")).unwrap());
    assert_eq!(subcircuits.len(), expected.len());
    for ((name, _), line) in expected.iter().zip(&subcircuits) {
        assert!(line.starts_with(&format!(".subckt {name} ")), "{line}");
        assert!(netlist.contains(&format!(".ends {name}\n")));
    }
    assert_eq!(std::fs::read_dir(directory.path()).unwrap().count(), 1, "no temporary file left behind");

    // A broken library leaves the earlier output as it was.
    widthwise().args(["batch", "-", "-o"]).arg(&path).write_stdin("[[gate]\n").assert().code(2);
    assert_eq!(std::fs::read_to_string(&path).unwrap(), netlist);
    assert_eq!(std::fs::read_dir(directory.path()).unwrap().count(), 1);
}

#[test]
fn json_is_the_process_once_and_every_variant() {
    let output =
        widthwise().arg("batch").arg(fixture("batch-published.toml")).args(["--format", "json"]).output().unwrap();
    assert!(output.status.success());
    let text = String::from_utf8(output.stdout).unwrap();
    let json: serde_json::Value = serde_json::from_str(&text).unwrap();
    let gates = json["gates"].as_array().unwrap();
    assert_eq!(gates.len(), 16);
    assert_eq!(gates[3]["name"], "nand2_x2");
    assert_eq!(gates[3]["drive"], 2.0);
    assert_eq!(gates[3]["transistors"].as_array().unwrap().len(), 4);
    // The process once, at the top; each variant is `size`'s object for it less its process, on a
    // line of its own.
    assert!(gates.iter().all(|gate| gate.get("process").is_none()));
    assert_eq!(text.lines().count(), 16 + 2, "{text}");
    let alone = widthwise().args(["size", "nand2", "--drive", "2", "--format", "json"]).output().unwrap();
    let mut alone: serde_json::Value = serde_json::from_slice(&alone.stdout).unwrap();
    assert_eq!(json["process"], alone["process"]);
    alone.as_object_mut().unwrap().remove("process");
    alone["name"] = gates[3]["name"].clone();
    assert_eq!(gates[3], alone);
}

#[test]
fn the_default_table_summarises_every_variant() {
    let output = widthwise().arg("batch").arg(example("tern8-cells.toml")).output().unwrap();
    assert!(output.status.success());
    let table = String::from_utf8(output.stdout).unwrap();
    let lines: Vec<&str> = table.lines().collect();
    assert!(lines[0].ends_with("tern8-cells.toml: 12 of 12 gates sized, 25 variants"), "{}", lines[0]);
    assert_eq!(lines[1], "process: tern-demo-250 (invented); mobility ratio 2.5");
    let header = lines.iter().position(|l| l.trim_start().starts_with("gate ")).unwrap();
    assert_eq!(lines.len() - header - 1, 25, "a row per variant");
    assert!(lines[header + 1].trim_start().starts_with("inv_x1 "));
}

/// The ngspice executable, or `None` (said on stderr) where it is missing; with
/// `WIDTHWISE_REQUIRE_NGSPICE=1` a missing ngspice fails the test instead.
fn ngspice() -> Option<PathBuf> {
    let found = std::env::var_os("PATH")
        .and_then(|paths| std::env::split_paths(&paths).map(|dir| dir.join("ngspice")).find(|path| path.is_file()));
    if found.is_none() {
        assert!(std::env::var("WIDTHWISE_REQUIRE_NGSPICE").as_deref() != Ok("1"), "ngspice is required but missing");
        eprintln!("skipped: ngspice is not installed (Debian package ngspice)");
    }
    found
}

#[test]
fn the_spice_library_loads_in_ngspice_and_every_gate_inverts() {
    let Some(ngspice) = ngspice() else { return };
    let directory = tempfile::tempdir().unwrap();
    let library = directory.path().join("tern8.sp");
    widthwise()
        .arg("batch")
        .arg(example("tern8-cells.toml"))
        .args(["--format", "spice", "-o"])
        .arg(&library)
        .assert()
        .success();
    let netlist = std::fs::read_to_string(&library).unwrap();
    // Every subcircuit twice: all inputs low, then all high. A static inverting stage computes
    // NOT f with f monotone and f(0...0) = 0, f(1...1) = 1, so its output is at the supply with
    // every input low and at ground with every input high (common practice, no source). ngspice
    // (Debian's package) reads the netlist and solves the operating point.
    let mut deck = String::from("tern8 library check\n.include tern8.sp\n");
    deck.push_str(".model tern_n nmos level=1 vto=0.5 kp=125u\n.model tern_p pmos level=1 vto=-0.5 kp=50u\n");
    deck.push_str("vdd vdd 0 2.5\nvss vss 0 0\n");
    let mut prints = String::new();
    let subcircuits: Vec<&str> = netlist.lines().filter(|l| l.starts_with(".subckt ")).collect();
    for (index, line) in subcircuits.iter().enumerate() {
        let fields: Vec<&str> = line.split_whitespace().collect();
        let inputs = fields.len() - 5; // .subckt NAME inputs... output vdd vss
        for (level, rail) in [("low", "vss"), ("high", "vdd")] {
            let pins = vec![rail; inputs].join(" ");
            deck.push_str(&format!("x{level}{index} {pins} {level}{index} vdd vss {}\n", fields[1]));
            prints.push_str(&format!("print v({level}{index})\n"));
        }
    }
    deck.push_str(&format!(".control\nop\n{prints}quit\n.endc\n.end\n"));
    std::fs::write(directory.path().join("deck.cir"), deck).unwrap();
    let output =
        std::process::Command::new(ngspice).current_dir(directory.path()).args(["-b", "deck.cir"]).output().unwrap();
    let log = String::from_utf8_lossy(&output.stdout).to_string() + &String::from_utf8_lossy(&output.stderr);
    // ngspice can exit 0 after a bad card, so its log is read too.
    assert!(output.status.success() && !log.to_lowercase().contains("error"), "{log}");
    let voltage = |node: &str| -> f64 {
        let line =
            log.lines().find(|l| l.starts_with(&format!("v({node}) = "))).unwrap_or_else(|| panic!("{node}: {log}"));
        line.split(" = ").nth(1).unwrap().trim().parse().unwrap()
    };
    for (index, line) in subcircuits.iter().enumerate() {
        assert!((voltage(&format!("low{index}")) - 2.5).abs() < 1e-6, "{line}: inputs low");
        assert!(voltage(&format!("high{index}")).abs() < 1e-6, "{line}: inputs high");
    }
}

#[test]
fn stack_order_in_a_library_matches_single_gate_sizing() {
    let directory = tempfile::tempdir().unwrap();
    let library = directory.path().join("cells.toml");
    std::fs::write(
        &library,
        "[defaults]\nstack_order = \"written\"\n\n[[gate]]\nname = \"w\"\nexpr = \"aoi21\"\n\n\
         [[gate]]\nname = \"d\"\nexpr = \"aoi21\"\nstack_order = \"default\"\n",
    )
    .unwrap();
    let (_, rows) = batch_csv(&library, "gates");
    let single = |order: &str| {
        let output = widthwise()
            .args(["size", "aoi21", "--stack-order", order, "--format", "csv", "--rows", "gates"])
            .output()
            .unwrap();
        records(&output.stdout).1.remove(0)
    };
    assert_eq!(rows[0]["parasitic_delay"], single("written")["parasitic_delay"]);
    assert_eq!(rows[1]["parasitic_delay"], single("default")["parasitic_delay"]);
    assert_ne!(rows[0]["parasitic_delay"], rows[1]["parasitic_delay"]);

    std::fs::write(&library, "[defaults]\nstack_order = \"search\"\n\n[[gate]]\nname = \"g\"\nexpr = \"nand2\"\n")
        .unwrap();
    widthwise()
        .arg("batch")
        .arg(&library)
        .assert()
        .code(2)
        .stdout(predicate::str::is_empty())
        .stderr(predicate::str::contains("line 2").and(predicate::str::contains("search one gate")));
}

#[test]
fn verify_proves_every_variant() {
    // 25 variants in the example library (12 gates, the drives they list): every one is checked
    // switch by switch on all its input vectors.
    widthwise()
        .args(["batch", "--verify", "--format", "csv"])
        .arg(example("tern8-cells.toml"))
        .assert()
        .success()
        .stderr(predicate::str::contains("verified: all 25 variants pass"));
}

#[test]
fn names_that_differ_only_in_case_clash_and_elmore_is_refused() {
    let directory = tempfile::tempdir().unwrap();
    let library = directory.path().join("cells.toml");
    // Netlists ignore case (SPICE names; common practice, no source): Nand2 and nand2 are one subcircuit.
    std::fs::write(
        &library,
        "[[gate]]\nname = \"Nand2\"\nexpr = \"nand2\"\n\n[[gate]]\nname = \"nand2\"\nexpr = \"nand2\"\n",
    )
    .unwrap();
    widthwise()
        .arg("batch")
        .arg(&library)
        .assert()
        .code(2)
        .stdout(predicate::str::is_empty())
        .stderr(predicate::str::contains("netlists ignore case"));
    std::fs::write(&library, "[[gate]]\nname = \"g\"\nexpr = \"nand2\"\nmethod = \"elmore\"\n").unwrap();
    widthwise()
        .arg("batch")
        .arg(&library)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("--method elmore --fanout"));
}

#[test]
fn reserved_names_in_a_library_are_bad_gates() {
    // A gate named like a rail, an expression with ground as an input, one with the process's model
    // as an input: each is reported with its place; the good gate is still written.
    let library = "[process]\nname = \"p\"\nmobility_ratio = 2.0\nlength_nm = 1000.0\nunit_width_nm = 1000.0\n\
                   grid_nm = 5.0\nmin_width_nm = 500.0\nmax_finger_width_nm = 20000.0\nsupply_v = 3.3\n\
                   nmos_model = \"nfet\"\npmos_model = \"pfet\"\nnmos_threshold_v = 0.7\npmos_threshold_v = 0.7\n\
                   nmos_kp_ua_per_v2 = 100.0\npmos_kp_ua_per_v2 = 50.0\ngate_cap_ff_per_um = 1.7\n\
                   diffusion_cap_ff_per_um = 1.0\nload_ff = 20.0\n\n\
                   [[gate]]\nname = \"Vss\"\nexpr = \"inv\"\n\n\
                   [[gate]]\nname = \"grounded\"\nexpr = \"!(a & gnd)\"\n\n\
                   [[gate]]\nname = \"modelled\"\nexpr = \"!(NFET | b)\"\n\n\
                   [[gate]]\nname = \"fine\"\nexpr = \"!(nmos | b)\"\n";
    let output = widthwise().args(["batch", "-", "--format", "spice"]).write_stdin(library).output().unwrap();
    assert_eq!(output.status.code(), Some(2));
    let stderr = String::from_utf8(output.stderr).unwrap();
    assert!(stderr.contains("gate 'Vss': the cell name 'Vss' is reserved") && stderr.contains("line 21"), "{stderr}");
    assert!(stderr.contains("gate 'grounded': input 'gnd' takes a reserved name"), "{stderr}");
    assert!(stderr.contains("gate 'modelled': input 'NFET' takes a reserved name"), "{stderr}");
    let stdout = String::from_utf8(output.stdout).unwrap();
    assert!(stdout.contains(".subckt fine_x1 nmos b y vdd vss"), "{stdout}");
}

#[test]
fn a_renamed_variant_whose_name_is_reserved_is_still_refused() {
    // `twin` is sized as `one` was (same function and plan), so its cell is shared; its variant's
    // name `twin_x1` is the process's NMOS model, which no cell may take.
    let library = "[process]\nname = \"p\"\nmobility_ratio = 2.0\nlength_nm = 1000.0\nunit_width_nm = 1000.0\n\
                   grid_nm = 5.0\nmin_width_nm = 500.0\nmax_finger_width_nm = 20000.0\nsupply_v = 3.3\n\
                   nmos_model = \"twin_x1\"\npmos_model = \"pfet\"\nnmos_threshold_v = 0.7\npmos_threshold_v = 0.7\n\
                   nmos_kp_ua_per_v2 = 100.0\npmos_kp_ua_per_v2 = 50.0\ngate_cap_ff_per_um = 1.7\n\
                   diffusion_cap_ff_per_um = 1.0\nload_ff = 20.0\n\n\
                   [[gate]]\nname = \"one\"\nexpr = \"nand2\"\n\n\
                   [[gate]]\nname = \"twin\"\nexpr = \"nand2\"\n";
    let output = widthwise().args(["batch", "-", "--format", "spice"]).write_stdin(library).output().unwrap();
    assert_eq!(output.status.code(), Some(2));
    let stderr = String::from_utf8(output.stderr).unwrap();
    assert!(stderr.contains("gate 'twin': the cell name 'twin_x1' is reserved"), "{stderr}");
    let stdout = String::from_utf8(output.stdout).unwrap();
    assert!(stdout.contains(".subckt one_x1 ") && !stdout.contains(".subckt twin_x1 "), "{stdout}");
}

#[test]
fn a_toml_recursion_limit_error_has_a_place() {
    // The TOML reader's recursion limit comes without a place: the message points at the deepest
    // nesting, line and column, in a library and in a process file.
    let key = vec!["x"; 300].join(".");
    let library = format!("[[gate]]\nname = \"g\"\nexpr = \"inv\"\n{key} = 1\n");
    let output = widthwise().args(["batch", "-"]).write_stdin(library).output().unwrap();
    assert_eq!(output.status.code(), Some(2));
    let stderr = String::from_utf8(output.stderr).unwrap();
    assert!(stderr.contains("recursion limit") && stderr.contains("at standard input, line 4, column 598"), "{stderr}");
    let directory = tempfile::tempdir().unwrap();
    let process = directory.path().join("process.toml");
    std::fs::write(&process, format!("# deep\n{key} = 1\n")).unwrap();
    let output = widthwise().args(["size", "inv", "--process"]).arg(&process).output().unwrap();
    assert_eq!(output.status.code(), Some(2));
    let stderr = String::from_utf8(output.stderr).unwrap();
    assert!(stderr.contains("recursion limit") && stderr.contains("line 2, column 598"), "{stderr}");
}

#[test]
fn worst_case_goes_command_line_then_gate_then_defaults() {
    // Each variant against `widthwise size` of the same gate with the worst case the precedence
    // gives (README, "Precedence"), row by row.
    let library = "[defaults]\nmethod = \"min-area\"\nworst_case = \"vectors\"\n\n\
                   [[gate]]\nname = \"carry\"\nexpr = \"!(a & b | c & (a | b))\"\n\n\
                   [[gate]]\nname = \"lone\"\nexpr = \"!(a & b | c & (a | b))\"\nworst_case = \"paths\"\n";
    let carry =
        size_row(&["!(a & b | c & (a | b))", "--name", "carry_x1", "--method", "min-area", "--worst-case", "vectors"]);
    let lone = size_row(&["!(a & b | c & (a | b))", "--name", "lone_x1", "--method", "min-area"]);
    assert_ne!(carry["total_w_over_l"], lone["total_w_over_l"]);
    assert_eq!(batch_row(library, &[], "carry_x1"), carry);
    assert_eq!(batch_row(library, &[], "lone_x1"), lone);
    let lone_as_vectors =
        size_row(&["!(a & b | c & (a | b))", "--name", "lone_x1", "--method", "min-area", "--worst-case", "vectors"]);
    assert_eq!(batch_row(library, &["--worst-case", "vectors"], "lone_x1"), lone_as_vectors);
}

#[test]
fn worst_case_vectors_with_longest_path_is_refused_at_its_key() {
    let library = "[[gate]]\nname = \"carry\"\nexpr = \"!(a & b | c & (a | b))\"\nworst_case = \"vectors\"\n";
    widthwise()
        .args(["batch", "-"])
        .write_stdin(library)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("gate 'carry': worst_case = \"vectors\": "))
        .stderr(predicate::str::contains("longest-path is a rule, not an optimum"))
        .stderr(predicate::str::contains("line 4"));
    widthwise()
        .args(["batch", "-", "--method", "longest-path", "--worst-case", "vectors"])
        .write_stdin(library)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("a rule, not an optimum"));
}

#[test]
fn svg_writes_a_schematic_per_variant_in_a_folder() {
    let directory = tempfile::tempdir().unwrap();
    let folder = directory.path().join("new").join("schematics");
    let library = directory.path().join("lib.toml");
    std::fs::write(
        &library,
        "[[gate]]\nname = \"n2\"\nexpr = \"nand2\"\ndrive = [1, 2]\n\n[[gate]]\nname = \"a2\"\nexpr = \"and2\"\n",
    )
    .unwrap();
    widthwise()
        .args(["batch", "--format", "svg", "-o"])
        .arg(&folder)
        .arg(&library)
        .assert()
        .success()
        .stdout("")
        .stderr(predicate::str::contains("wrote 3 schematics"));
    let mut names: Vec<String> =
        std::fs::read_dir(&folder).unwrap().map(|e| e.unwrap().file_name().to_string_lossy().into_owned()).collect();
    names.sort();
    assert_eq!(names, ["a2_x1.svg", "n2_x1.svg", "n2_x2.svg"]);
    // Drive 2 doubles every W/L of NAND2 (common practice, no source): NMOS 4 in series.
    let svg = std::fs::read_to_string(folder.join("n2_x2.svg")).unwrap();
    let document = roxmltree::Document::parse(&svg).expect("well-formed XML");
    let texts: Vec<&str> = document.descendants().filter(|n| n.has_tag_name("text")).filter_map(|n| n.text()).collect();
    let at = texts.iter().position(|t| *t == "MN1").unwrap();
    assert_eq!(texts[at + 1], "W/L 4");
    // Standard output, an existing file named DIR and rows are refused, exit 2.
    widthwise()
        .args(["batch", "--format", "svg"])
        .arg(&library)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("give -o DIR"));
    widthwise()
        .args(["batch", "--format", "svg", "-o"])
        .arg(&library)
        .arg(&library)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("it is a file, not a folder"));
    widthwise()
        .args(["batch", "--format", "svg", "--rows", "gates", "-o"])
        .arg(&folder)
        .arg(&library)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("--rows does not apply"));
}
