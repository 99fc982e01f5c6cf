//! `widthwise size`: formats, options, bad input and exit codes.

use predicates::prelude::*;

use super::widthwise;

#[test]
fn every_accepted_spelling_sizes_the_same_gate() {
    let expected = widthwise().args(["size", "aoi21", "--format", "json"]).output().unwrap();
    let expected: serde_json::Value = serde_json::from_slice(&expected.stdout).unwrap();
    for text in ["y = !(a*b + c)", "!(a & b | c)", "(a b + c)'", "~(a.b | c)", "!(a & b) & !c"] {
        let output = widthwise().args(["size", text, "--format", "json"]).output().unwrap();
        assert!(output.status.success(), "{text}");
        let json: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
        assert_eq!(json["transistors"], expected["transistors"], "{text}");
        assert_eq!(json["parasitic_delay"], expected["parasitic_delay"], "{text}");
    }
}

#[test]
fn json_keys_scripts_rely_on() {
    let output = widthwise().args(["size", "nand2", "--format", "json"]).output().unwrap();
    let json: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
    let transistor = &json["transistors"][0];
    for key in ["name", "type", "input", "drain", "source", "w_over_l"] {
        assert!(!transistor[key].is_null(), "transistors[0].{key}");
    }
    assert_eq!(transistor["type"], "nmos");
    assert_eq!(json["transistors"][3]["type"], "pmos");
    assert!(json["inputs"][0]["name"].is_string());
    assert!(json["inputs"][0]["logical_effort"].is_number());
    assert_eq!(json["parasitic_delay"], 2.0);
}

#[test]
fn table_names_the_worst_case_and_the_other_method() {
    widthwise()
        .args(["size", "!(a & (b | c))"])
        .assert()
        .success()
        .stdout(predicate::str::contains("a=1 b=1 c=0"))
        // pull-down 6 -> (1 + sqrt 2)^2 = 5.8284, pull-up 10 -> 10: 16 -> 15.8284 in all, 1.0723% less
        // (the closed form, docs/model.md section 5), written to ten significant digits
        .stdout(predicate::str::contains("min-area would save 1.07233047%"));
}

#[test]
fn spice_subcircuit_lists_inputs_output_and_rails() {
    widthwise()
        .args(["size", "aoi21", "--format", "spice"])
        .assert()
        .success()
        .stdout(predicate::str::contains(".subckt aoi21_x1 a b c y vdd vss"))
        .stdout(predicate::str::contains("MN3 y c vss vss nmos W=1u L=1u"))
        .stdout(predicate::str::contains(".ends aoi21_x1"));
}

#[test]
fn a_default_cell_name_carries_its_drive_and_a_given_name_is_used_as_given() {
    // As a library names its variants (<name>_x<drive>, p for a decimal point).
    for (args, subcircuit) in [
        (&["nand2", "--drive", "2"][..], ".subckt nand2_x2 a b y vdd vss"),
        (&["!(a & b)", "--drive", "1.5"], ".subckt cell_x1p5 a b y vdd vss"),
        (&["!(a & b)"], ".subckt cell_x1 a b y vdd vss"),
        (&["nand2", "--drive", "2", "--name", "my_nand"], ".subckt my_nand a b y vdd vss"),
    ] {
        let output = widthwise().arg("size").args(args).args(["--format", "spice"]).output().unwrap();
        let text = String::from_utf8(output.stdout).unwrap();
        assert!(text.contains(subcircuit), "{args:?}: {text}");
    }
}

#[test]
fn options_that_do_not_apply_are_refused() {
    for (args, message) in [
        (
            &["--format", "json", "--rows", "inputs"][..],
            "--rows does not apply with --format table, json, spice or svg",
        ),
        (&["--rows", "gates"], "--rows does not apply"),
        (&["--format", "spice", "--rows", "delays"], "--rows does not apply"),
        (&["--format", "spice", "--delays"], "--delays does not apply with --format spice"),
        (&["--format", "spice", "--fanout", "4"], "--fanout does not apply with --format spice"),
    ] {
        widthwise()
            .args(["size", "nand2"])
            .args(args)
            .assert()
            .code(2)
            .stdout(predicate::str::is_empty())
            .stderr(predicate::str::contains(message));
    }
    // Where the load sizes the gate, it applies to the netlist too.
    widthwise().args(["size", "nand2", "--format", "spice", "--method", "elmore", "--fanout", "4"]).assert().success();
    widthwise().args(["size", "nand2", "--format", "csv", "--rows", "inputs"]).assert().success();
}

#[test]
fn csv_has_one_header_and_a_row_per_transistor() {
    let output = widthwise().args(["size", "nand3", "--format", "csv"]).output().unwrap();
    let mut reader = csv::Reader::from_reader(output.stdout.as_slice());
    let headers = reader.headers().unwrap().clone();
    assert_eq!(&headers[0], "gate");
    assert_eq!(reader.records().count(), 6);
}

#[test]
fn bad_input_exits_2_with_a_caret() {
    let cases: [&[&str]; 9] = [
        &["size", ""],
        &["size", "(a & b"],
        &["size", "a # b"],
        &["size", "&"],
        &["size", "nand9"],
        &["size", "xor2", "--pull-up", "a | b"],
        &["size", "nand2", "--drive", "-1"],
        &["size", "nand2", "--mobility-ratio", "nan"],
        &["size", "nand2", "--critical", "q"],
    ];
    for args in cases {
        widthwise()
            .args(args)
            .assert()
            .code(2)
            .stdout(predicate::str::is_empty())
            .stderr(predicate::str::starts_with("error"));
    }
    widthwise().args(["size", "!(a &)"]).assert().code(2).stderr(predicate::str::contains("    !(a &)\n         ^"));
}

#[test]
fn non_utf8_argument_is_refused() {
    use std::os::unix::ffi::OsStrExt;
    let argument = std::ffi::OsStr::from_bytes(b"!(a \xff b)");
    widthwise()
        .arg("size")
        .arg(argument)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("not valid UTF-8").and(predicate::str::contains("byte 4")));
}

#[test]
fn deep_nesting_is_an_error_not_a_crash() {
    // Too long for one command-line argument, so it comes on standard input.
    let deep = format!("{}a{}", "(".repeat(100_000), ")".repeat(100_000));
    widthwise()
        .args(["size", "-"])
        .write_stdin(deep)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("nesting deeper"));
}

#[test]
fn output_file_is_written_whole() {
    let directory = tempfile::tempdir().unwrap();
    let path = directory.path().join("nand2.json");
    widthwise().args(["size", "nand2", "--format", "json", "-o"]).arg(&path).assert().success().stdout("");
    let json: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(&path).unwrap()).unwrap();
    assert_eq!(json["transistor_count"], 4);
    assert_eq!(std::fs::read_dir(directory.path()).unwrap().count(), 1, "no temporary file left behind");
}

#[test]
fn help_states_the_caution() {
    widthwise()
        .args(["size", "--help"])
        .assert()
        .success()
        .stdout(predicate::str::contains("first-order estimates"))
        .stdout(predicate::str::contains("foundry"));
}

/// The words of a README command line: spaces split, double quotes group.
fn words(line: &str) -> Vec<String> {
    let mut words = Vec::new();
    let mut word = String::new();
    let mut quoted = false;
    let mut started = false;
    for c in line.chars() {
        match c {
            '"' => {
                quoted = !quoted;
                started = true;
            }
            ' ' if !quoted => {
                if started {
                    words.push(std::mem::take(&mut word));
                }
                started = false;
            }
            c => {
                word.push(c);
                started = true;
            }
        }
    }
    if started {
        words.push(word);
    }
    words
}

#[test]
fn readme_examples_are_what_the_tool_prints() {
    // Every ```console block of the README: `$ widthwise ARGS`, then exactly what it writes (a
    // message on stderr, exit 2, when it starts with "error:"), run from the repository's folder.
    let readme = std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/README.md")).unwrap();
    let mut examples = 0;
    for block in readme.split("```console\n").skip(1) {
        let block = &block[..block.find("```").expect("a closed block")];
        let (command, expected) = block.split_once('\n').unwrap();
        let words = words(command.strip_prefix("$ widthwise ").expect("a widthwise command"));
        let output = widthwise().current_dir(env!("CARGO_MANIFEST_DIR")).args(&words).output().unwrap();
        let (written, code) = if expected.starts_with("error:") { (&output.stderr, 2) } else { (&output.stdout, 0) };
        assert_eq!(output.status.code(), Some(code), "{command}");
        assert!(code == 0 || output.stdout.is_empty(), "{command}: nothing written on an error");
        assert_eq!(String::from_utf8_lossy(written), expected, "{command}");
        examples += 1;
    }
    assert!(examples >= 6, "the README's examples: {examples}");
    assert!(readme.contains("$ widthwise size aoi21\naoi21_x1: y = !(a & b | c)\n"));
}

#[test]
fn written_stack_order_keeps_the_expression_order() {
    // AOI21 as written: the pull-up pair (a || b) touches the output, so its diffusion is
    // NMOS 2 (a) + 1 (c) + PMOS 4 + 4 = 11, over C_inv 3 (by hand; the default order gives 7/3).
    let output = widthwise().args(["size", "aoi21", "--stack-order", "written", "--format", "json"]).output().unwrap();
    assert!(output.status.success());
    let json: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
    // (the output's ten significant digits: within 5e-10 relative, README "Numbers")
    assert!((json["parasitic_delay"].as_f64().unwrap() / (11.0 / 3.0) - 1.0).abs() <= 5e-10);
    assert_eq!(json["output_devices"], serde_json::json!(["MN1", "MN3", "MP1", "MP2"]));
    assert!(json.get("delays").is_none(), "the written order alone does not time the gate");
    widthwise()
        .args(["size", "aoi21", "--stack-order", "written", "--critical", "c"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("both choose the order"));
}

#[test]
fn reserved_names_never_reach_a_netlist() {
    // Compared without case: the rails, ground (gnd, 0) and the models in use (the built-in
    // process's nmos and pmos).
    for (args, message) in [
        (vec!["!(gnd & a)"], "input 'gnd' takes a reserved name"),
        (vec!["!(a & Gnd)"], "input 'Gnd' takes a reserved name"),
        (vec!["GND = !(a & b)"], "the output 'GND' takes a reserved name"),
        (vec!["VDD = !(a & b)"], "the output 'VDD' takes a reserved name"),
        (vec!["!(nmos & a)"], "input 'nmos' takes a reserved name: 'nmos' names a device model"),
        (vec!["Pmos = !a"], "the output 'Pmos' takes a reserved name"),
        (vec!["nand2", "--name", "gnd"], "the cell name 'gnd' is reserved"),
        (vec!["nand2", "--name", "NMOS"], "the cell name 'NMOS' is reserved"),
    ] {
        widthwise()
            .arg("size")
            .args(&args)
            .args(["--format", "spice"])
            .assert()
            .code(2)
            .stdout(predicate::str::is_empty())
            .stderr(predicate::str::contains(message));
    }
    // With a process whose models are called fast_n and fast_p, nmos is an ordinary input again.
    let directory = tempfile::tempdir().unwrap();
    let process = directory.path().join("process.toml");
    let text = String::from_utf8(widthwise().arg("process").output().unwrap().stdout).unwrap();
    std::fs::write(&process, text.replace("\"nmos\"", "\"fast_n\"").replace("\"pmos\"", "\"fast_p\"")).unwrap();
    widthwise().args(["size", "!(nmos & a)", "--process"]).arg(&process).assert().success();
    widthwise()
        .args(["size", "!(FAST_N & a)", "--process"])
        .arg(&process)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("'fast_n' names a device model"));
}

#[test]
fn wide_shorthands_size() {
    // 25 and more inputs: the generated names skip y, the output.
    for name in ["aoi8881", "oai8881"] {
        let output = widthwise().args(["size", name, "--format", "csv", "--rows", "inputs"]).output().unwrap();
        assert!(output.status.success(), "{name}: {}", String::from_utf8_lossy(&output.stderr));
        let text = String::from_utf8(output.stdout).unwrap();
        assert_eq!(text.lines().count(), 26, "{name}: a header and 25 inputs");
        assert!(!text.contains(",y,") && text.contains(",z,"), "{text}");
    }
}

#[test]
fn control_characters_are_never_echoed_raw() {
    // A NUL in an expression (standard input, or a library's expr) is named escaped, and the
    // source line shows it escaped too.
    let output = widthwise().args(["size", "-"]).write_stdin("!(a \u{0} b)").output().unwrap();
    assert_eq!(output.status.code(), Some(2));
    let stderr = String::from_utf8(output.stderr).unwrap();
    assert!(!stderr.contains('\u{0}'), "{stderr:?}");
    assert!(stderr.contains("unknown character '\\u{0}'") && stderr.contains("    !(a \\u{0} b)"), "{stderr}");
    let library = "[[gate]]\nname = \"g\"\nexpr = \"!(a \\u0000 b)\"\ncritical = \"\\u001b[31m\"\n";
    let output = widthwise().args(["batch", "-"]).write_stdin(library).output().unwrap();
    let stderr = String::from_utf8(output.stderr).unwrap();
    assert!(!stderr.chars().any(|c| c.is_control() && c != '\n'), "{stderr:?}");
    assert!(stderr.contains("unknown character '\\u{0}'"), "{stderr}");
    // A bad option value with an escape character in it.
    let output = widthwise().args(["size", "nand2", "--critical", "q\u{7}"]).output().unwrap();
    let stderr = String::from_utf8(output.stderr).unwrap();
    assert!(stderr.contains("critical input 'q\\u{7}'") && !stderr.contains('\u{7}'), "{stderr:?}");
}

#[test]
fn a_leading_byte_order_mark_is_skipped_everywhere() {
    // Standard input, an argument, a library file and a process file alike.
    let plain = widthwise().args(["size", "nand2", "--format", "csv"]).output().unwrap().stdout;
    let marked = widthwise().args(["size", "-", "--format", "csv"]).write_stdin("\u{feff}nand2").output().unwrap();
    assert!(marked.status.success(), "{}", String::from_utf8_lossy(&marked.stderr));
    assert_eq!(marked.stdout, plain);
    widthwise().args(["size", "\u{feff}!(a & b)"]).assert().success();
    // Its column counts are those of the text after it.
    let output = widthwise().args(["size", "-"]).write_stdin("\u{feff}!(a & )").output().unwrap();
    assert!(String::from_utf8(output.stderr).unwrap().contains("column 7"));
    widthwise()
        .args(["batch", "-", "--format", "csv"])
        .write_stdin("\u{feff}[[gate]]\nname = \"g\"\nexpr = \"inv\"\n")
        .assert()
        .success();
    let directory = tempfile::tempdir().unwrap();
    let process = directory.path().join("process.toml");
    let text = String::from_utf8(widthwise().arg("process").output().unwrap().stdout).unwrap();
    std::fs::write(&process, format!("\u{feff}{}", text.replace("grid_nm = 5.0", "grid_nm = -5.0"))).unwrap();
    let output = widthwise().args(["size", "inv", "--process"]).arg(&process).output().unwrap();
    let stderr = String::from_utf8(output.stderr).unwrap();
    assert!(stderr.contains("line 17, column 11"), "{stderr}");
}

#[test]
fn drawn_figures_stand_beside_the_sized_ones_where_snapping_moves_a_device() {
    // Min-area '!(a & (b | c))' on the tern8 process (0.5 um unit width, 10 nm grid): NMOS b and c
    // are 1 + sqrt 2 / 2 = 1.7071 (docs/model.md section 5), 853.6 nm, drawn 860 nm: 0.75% more.
    let process = concat!(env!("CARGO_MANIFEST_DIR"), "/examples/tern8-process.toml");
    let args = ["size", "!(a & (b | c))", "--method", "min-area", "--process", process];
    let output = widthwise().args(args).args(["--format", "json"]).output().unwrap();
    let gate: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
    let drawn = &gate["drawn"];
    let transistors = gate["transistors"].as_array().unwrap();
    let change = transistors
        .iter()
        .map(|t| (t["drawn_w_over_l"].as_f64().unwrap() / t["w_over_l"].as_f64().unwrap() - 1.0).abs() * 100.0)
        .fold(0.0, f64::max);
    assert!(change > 0.5 && (drawn["largest_change_percent"].as_f64().unwrap() - change).abs() < 1e-6, "{drawn}");
    // Each input's capacitance is the W/L of the devices it gates (docs/model.md section 6), here the
    // drawn W/L; the logical effort divides by the reference inverter's, 1 + 2.5 = 3.5 C.
    for input in drawn["inputs"].as_array().unwrap() {
        let gated: f64 = transistors
            .iter()
            .filter(|t| t["input"] == input["name"])
            .map(|t| t["drawn_w_over_l"].as_f64().unwrap())
            .sum();
        assert!((input["input_capacitance"].as_f64().unwrap() - gated).abs() < 1e-9, "{input}");
        assert!((input["logical_effort"].as_f64().unwrap() - gated / 3.5).abs() < 1e-9, "{input}");
    }
    let total: f64 = transistors.iter().map(|t| t["drawn_w_over_l"].as_f64().unwrap()).sum();
    assert!((drawn["total_w_over_l"].as_f64().unwrap() - total).abs() < 1e-9);
    // The table and the CSV views say the same.
    widthwise().args(args).assert().success().stdout(predicate::str::contains("\ndrawn (snapping moves"));
    let csv = widthwise().args(args).args(["--format", "csv", "--rows", "inputs"]).output().unwrap();
    let mut reader = csv::Reader::from_reader(csv.stdout.as_slice());
    for record in reader.records() {
        assert!(!record.unwrap()[7].is_empty(), "drawn_input_cap_c is filled");
    }
    // On the built-in process (1 um unit width, 5 nm grid) no device of a NAND2 moves: no drawn figures.
    let output = widthwise().args(["size", "nand2", "--format", "json"]).output().unwrap();
    let gate: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
    assert!(gate.get("drawn").is_none());
}

#[test]
fn worst_case_vectors_takes_the_optimising_methods_only() {
    widthwise()
        .args(["size", "!(a & b | c & (a | b))", "--method", "longest-path", "--worst-case", "vectors"])
        .assert()
        .code(2)
        .stdout("")
        .stderr(predicate::str::contains("longest-path is a rule, not an optimum"));
    // The elmore method takes it (tests/cli/elmore.rs).
    widthwise()
        .args(["size", "!(a & b | c & (a | b))", "--method", "elmore", "--worst-case", "vectors"])
        .assert()
        .success();
    // Without --method, longest-path: refused the same way.
    widthwise()
        .args(["size", "nand2", "--worst-case", "vectors"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("a rule, not an optimum"));
}

#[test]
fn the_table_says_what_vectors_would_save_and_what_it_was_sized_to() {
    // The carry's pull-up: 22.662905 W/L over vectors against 26.65 over paths (scipy's SLSQP, see
    // tests/reference/worst_case.rs), the pull-down the same under both: 32.49133203 against
    // 36.47753777 in all, 10.93% less.
    widthwise().args(["size", "!(a & b | c & (a | b))", "--method", "min-area"]).assert().success().stdout(
        predicate::str::contains(
            "(longest-path would use 4.173697919% more; min-area over vectors would save 10.92783",
        ),
    );
    widthwise()
        .args(["size", "!(a & b | c & (a | b))", "--method", "min-area", "--worst-case", "vectors"])
        .assert()
        .success()
        .stdout(predicate::str::contains("min-area sizing against every input vector"))
        .stdout(predicate::str::contains("pull-up: sized to its exact worst over input vectors, 1 at"))
        .stdout(predicate::str::contains("min-area over paths would use 12.26852"));
    // Past the limit of 16 inputs, exit 2 naming it.
    let wide: Vec<String> = (0..17).map(|i| format!("x{i} & x{}", (i + 1) % 17)).collect();
    widthwise()
        .args(["size", &format!("!({})", wide.join(" | ")), "--method", "min-area", "--worst-case", "vectors"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("17 inputs: exact sizing over input vectors handles at most 16"));
}

#[test]
fn svg_is_the_cells_schematic() {
    // NAND2 with a mobility ratio of 2: NMOS W/L 2 in series, PMOS W/L 2 in parallel (longest-path
    // rule, common practice, no source).
    let output = widthwise().args(["size", "nand2", "--format", "svg"]).output().unwrap();
    assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    let svg = String::from_utf8(output.stdout).unwrap();
    let document = roxmltree::Document::parse(&svg).expect("well-formed XML");
    assert!(document.root_element().has_tag_name("svg"));
    let texts: Vec<&str> = document.descendants().filter(|n| n.has_tag_name("text")).filter_map(|n| n.text()).collect();
    for device in ["MN1", "MN2", "MP1", "MP2"] {
        let at = texts.iter().position(|t| *t == device).unwrap_or_else(|| panic!("{device} is not named"));
        assert_eq!(texts[at + 1], "W/L 2", "{device}");
    }
    for name in ["a", "b", "y", "vdd", "vss", "n1"] {
        assert!(texts.contains(&name), "{name} is not named");
    }
    assert!(!svg.contains("<script") && !svg.contains("href"), "plain SVG");
    // -o writes the same picture.
    let directory = tempfile::tempdir().unwrap();
    let file = directory.path().join("nand2.svg");
    widthwise().args(["size", "nand2", "--format", "svg", "-o"]).arg(&file).assert().success();
    assert_eq!(std::fs::read_to_string(&file).unwrap(), svg);
}

#[test]
fn svg_refuses_what_a_picture_cannot_show() {
    widthwise()
        .args(["size", "nand2", "--format", "svg", "--delays"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("--delays does not apply with --format spice or svg"));
    widthwise()
        .args(["size", "nand2", "--format", "svg", "--rows", "gates"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("--rows does not apply"));
    // Past the writer's limit of 1024 devices: a message, exit 2, nothing written.
    let wide = (0..600).map(|i| format!("x{i}")).collect::<Vec<_>>().join(" & ");
    widthwise()
        .args(["size", &format!("!({wide})"), "--format", "svg"])
        .assert()
        .code(2)
        .stdout("")
        .stderr(predicate::str::contains("too large to draw"));
}
