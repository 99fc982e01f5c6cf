//! `widthwise batch` on libraries read a gate table at a time: a bad table costs only itself, text
//! like a header inside a string is no table, places point into the file, and variants that differ
//! only in their names are written as each would be alone.

use predicates::prelude::*;

use super::batch::records;
use super::widthwise;

/// The batch's CSV of `text` on standard input: exit code, gate column of every row, stderr.
fn batch_stdin(text: &str) -> (Option<i32>, Vec<String>, String) {
    let output = widthwise().args(["batch", "-", "--format", "csv"]).write_stdin(text).output().unwrap();
    let (_, rows) = if output.stdout.is_empty() { (Vec::new(), Vec::new()) } else { records(&output.stdout) };
    let names = rows.iter().map(|row| row["gate"].clone()).collect();
    (output.status.code(), names, String::from_utf8(output.stderr).unwrap())
}

#[test]
fn a_toml_error_in_one_gate_table_costs_only_that_gate() {
    // Key/value pairs are one to a line: a second pair on the line is an error (TOML 1.0
    // specification (toml.io), from memory).
    let text = "[defaults]\ndrive = [1, 2]\n\n[[gate]]\nname = \"one\"\nexpr = \"nand2\"\n\n\
                [[gate]]\nname = \"two\"\nexpr = \"nor2\" drive = 4\n\n[[gate]]\nname = \"three\"\nexpr = \"aoi21\"\n";
    let (code, names, stderr) = batch_stdin(text);
    assert_eq!(code, Some(2), "{stderr}");
    assert_eq!(names, ["one_x1", "one_x2", "three_x1", "three_x2"]);
    assert!(stderr.starts_with("error: gate 'two': "), "{stderr}");
    // The place is the file's: line 10, the caret under the second pair.
    assert!(
        stderr
            .contains("  at standard input, line 10, column 15:\n    expr = \"nor2\" drive = 4\n                  ^\n"),
        "{stderr}"
    );
    assert!(stderr.trim_end().ends_with("error: 1 of 3 gates could not be sized (reported above); gates written: 2"));
    // An unclosed array in a gate ends at the next [[gate]] header (no value is a bare word): the
    // gate after it is still written.
    let text = "[[gate]]\nname = \"one\"\nexpr = \"inv\"\ndrive = [1, 2\n\n[[gate]]\nname = \"two\"\nexpr = \"inv\"\n";
    let (code, names, stderr) = batch_stdin(text);
    assert_eq!((code, names), (Some(2), vec!["two_x1".to_string()]), "{stderr}");
    assert!(stderr.starts_with("error: gate 'one': ") && stderr.contains("line 4, column"), "{stderr}");
}

#[test]
fn text_like_a_header_inside_a_string_or_an_array_is_no_table() {
    // A multi-line string runs to its closing quotes and an array to its closing bracket, so a
    // `[[gate]]` inside either is text (or a comment), not a header (TOML 1.0 specification
    // (toml.io), from memory): the file has three gates, the second with a bad expression.
    let text = "[[gate]]\nname = \"one\"\nexpr = \"nand2\"\n\n[[gate]]\nname = \"two\"\nexpr = '''\n[[gate]]\n\
                name = \"x\"\n'''\n\n[[gate]]\nname = \"three\"\nexpr = \"inv\"\ndrive = [\n  1,\n  2, # [[gate]]\n]\n\
                reference = \"\"\"1:\\\n[[gate]]\"\"\"\n";
    let (code, names, stderr) = batch_stdin(text);
    assert_eq!(code, Some(2), "{stderr}");
    assert_eq!(names, ["one_x1"], "{stderr}");
    assert!(stderr.contains("error: gate 'two': "), "{stderr}");
    // A line-ending backslash joins the lines of a multi-line basic string (TOML 1.0
    // specification (toml.io), from memory).
    assert!(stderr.contains("error: gate 'three': invalid value: string \"1:[[gate]]\""), "{stderr}");
    assert!(stderr.trim_end().ends_with("error: 2 of 3 gates could not be sized (reported above); gates written: 1"));
    // Without the bad values, all three are written, and nothing called x.
    let good =
        text.replace("'''\n[[gate]]\nname = \"x\"\n'''", "'''nor2'''").replace("\"\"\"1:\\\n[[gate]]\"\"\"", "\"1:2\"");
    let (code, names, stderr) = batch_stdin(&good);
    assert_eq!(code, Some(0), "{stderr}");
    assert_eq!(names, ["one_x1", "two_x1", "three_x1", "three_x2"]);
}

#[test]
fn places_in_a_late_gate_table_are_the_file_lines() {
    // Forty good gates, then three bad ones: each message names its own line and column.
    let mut text = String::from("# a long library\n[defaults]\nmethod = \"min-area\"\n");
    for index in 0..40 {
        text.push_str(&format!("\n[[gate]]\nname = \"g{index}\"\nexpr = \"nand3\"\n"));
    }
    let line_of = |text: &str| text.lines().count() + 1;
    text.push_str("\n[[gate]]\nname = \"late_value\"\nexpr = \"nor2\"\n");
    let value_line = line_of(&text);
    text.push_str("stage_effort = -4\n\n[[gate]]\nname = \"late_key\"\n");
    let key_line = line_of(&text);
    text.push_str("  size = 3\nexpr = \"inv\"\n\n[[gate]]\nname = \"late_syntax\"\n");
    let syntax_line = line_of(&text);
    text.push_str("expr = = \"inv\"\n");
    let (code, names, stderr) = batch_stdin(&text);
    assert_eq!(code, Some(2), "{stderr}");
    assert_eq!(names.len(), 40);
    for (name, line, column) in
        [("late_value", value_line, 16), ("late_key", key_line, 3), ("late_syntax", syntax_line, 8)]
    {
        let at = stderr.find(&format!("error: gate '{name}': ")).unwrap_or_else(|| panic!("{name}: {stderr}"));
        let place = format!("  at standard input, line {line}, column {column}:");
        assert_eq!(stderr[at..].lines().nth(1), Some(place.as_str()), "{name}: {stderr}");
    }
}

#[test]
fn a_name_clash_stops_the_run_whatever_lies_between() {
    // The first pass reads every gate for its name before anything is written: a clash far apart,
    // with a gate table the TOML reader refuses between, still stops the run.
    let mut text = String::from("[[gate]]\nname = \"twin\"\nexpr = \"nand2\"\n");
    for index in 0..50 {
        text.push_str(&format!("[[gate]]\nname = \"g{index}\"\nexpr = \"inv\"\n"));
    }
    text.push_str("[[gate]]\nname = \"broken\"\nexpr = \"inv\" x\n[[gate]]\nname = \"Twin\"\nexpr = \"nor2\"\n");
    for format in ["csv", "table", "json", "spice"] {
        widthwise()
            .args(["batch", "-", "--format", format])
            .write_stdin(text.clone())
            .assert()
            .code(2)
            .stdout(predicate::str::is_empty())
            .stderr(predicate::str::contains("error: gate 'Twin': the name is already used by gate 1 as 'twin'"))
            .stderr(predicate::str::contains("line 158, column 8"))
            .stderr(predicate::str::contains("nothing was written"));
    }
}

#[test]
fn gates_after_a_table_of_defaults_and_as_an_inline_list() {
    // `[defaults]` may follow gates (a table is a table wherever it is; TOML 1.0 specification
    // (toml.io), from memory); gates may be an inline list; both forms at once are refused.
    let after =
        "[[gate]]\nname = \"a\"\nexpr = \"inv\"\n[defaults]\ndrive = 2\n[[gate]]\nname = \"b\"\nexpr = \"inv\"\n";
    let (code, names, stderr) = batch_stdin(after);
    assert_eq!((code, names), (Some(0), vec!["a_x2".to_string(), "b_x2".to_string()]), "{stderr}");
    let inline = "gate = [\n  { name = \"a\", expr = \"inv\" },\n  { name = \"b\", expr = \"nand2\", size = 1 },\n]\n";
    let (code, names, stderr) = batch_stdin(inline);
    assert_eq!((code, names), (Some(2), vec!["a_x1".to_string()]), "{stderr}");
    assert!(stderr.contains("unknown field `size`") && stderr.contains("line 3, column 33"), "{stderr}");
    let both = "gate = []\n[[gate]]\nname = \"a\"\nexpr = \"inv\"\n";
    let (code, names, stderr) = batch_stdin(both);
    assert_eq!((code, names.len()), (Some(2), 0));
    assert!(stderr.contains("gate is written here and as [[gate]] tables (the first at line 2)"), "{stderr}");
    assert!(stderr.contains("line 1, column 1"), "{stderr}");
}

/// Gates that repeat under other names, each kind beside ones that differ from it in one key only
/// (method, worst case, drive, critical input, stack order, reference, stage effort), over [defaults]'
/// drives 1 and 2.
fn repeated_gates() -> Vec<String> {
    let kinds = [
        "expr = \"nand2\"",
        "expr = \"nand2\"\nmethod = \"min-area\"",
        "expr = \"!(a & b | a & c)\"\nmethod = \"min-area\"",
        "expr = \"!(a & b | a & c)\"\nmethod = \"min-area\"\nworst_case = \"vectors\"",
        "expr = \"aoi21\"\ncritical = \"c\"\ndrive = [1, 3.5]",
        "expr = \"aoi21\"\ndrive = [3.5, 1]",
        "expr = \"and2\"\nstage_effort = 3",
        "expr = \"and2\"",
        "expr = \"xor2\"\nmethod = \"min-area\"",
        "expr = \"nor3\"\nstack_order = \"written\"\nreference = [1, 3]",
        "expr = \"nor3\"\nstack_order = \"written\"",
    ];
    (0..3)
        .flat_map(|copy| kinds.iter().enumerate().map(move |(kind, keys)| format!("name = \"g{kind}_{copy}\"\n{keys}")))
        .collect()
}

/// Run `batch -` on `text` with `args`; its standard output.
fn batch_bytes(text: &str, args: &[&str]) -> Vec<u8> {
    let output = widthwise().args(["batch", "-"]).args(args).write_stdin(text.to_string()).output().unwrap();
    assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    output.stdout
}

#[test]
fn repeated_gates_under_other_names_write_what_each_writes_alone() {
    // A variant that differs from an earlier one only in its name is sized once and written under
    // each name: every byte must be what sizing the gate alone writes (common practice, no
    // source: a name is a label, never an input to sizing).
    let defaults = "[defaults]\ndrive = [1, 2]\n";
    let gates = repeated_gates();
    let whole: String = defaults.to_string() + &gates.iter().map(|g| format!("\n[[gate]]\n{g}\n")).collect::<String>();
    let alone = |gate: &str| format!("{defaults}\n[[gate]]\n{gate}\n");
    let lines =
        |bytes: &[u8]| String::from_utf8(bytes.to_vec()).unwrap().lines().map(str::to_string).collect::<Vec<_>>();
    for rows in ["gates", "devices", "inputs"] {
        let args = ["--format", "csv", "--rows", rows];
        let mut expected = lines(&batch_bytes(&whole, &args))[..1].to_vec();
        for gate in &gates {
            expected.extend(lines(&batch_bytes(&alone(gate), &args)).into_iter().skip(1));
        }
        assert_eq!(lines(&batch_bytes(&whole, &args)), expected, "csv {rows}");
    }
    // JSON: the process once, then a gate object per line.
    let objects = |bytes: &[u8]| {
        let all = lines(bytes);
        all[1..all.len() - 1].iter().map(|l| l.trim_end_matches(',').to_string()).collect::<Vec<_>>()
    };
    let json = batch_bytes(&whole, &["--format", "json"]);
    let expected: Vec<String> =
        gates.iter().flat_map(|g| objects(&batch_bytes(&alone(g), &["--format", "json"]))).collect();
    assert_eq!(objects(&json), expected, "json");
    // SPICE: one header, then each variant's subcircuit.
    let spice = batch_bytes(&whole, &["--format", "spice"]);
    let header = String::from_utf8(spice.clone()).unwrap().split("\n\n").next().unwrap().len() + 1;
    let mut expected = spice[..header].to_vec();
    for gate in &gates {
        expected.extend_from_slice(&batch_bytes(&alone(gate), &["--format", "spice"])[header..]);
    }
    assert_eq!(String::from_utf8(spice).unwrap(), String::from_utf8(expected).unwrap(), "spice");
    // The table: the same cells row by row (its columns are aligned over the whole table).
    for rows in ["gates", "devices", "inputs"] {
        let args = ["--format", "table", "--rows", rows];
        let body = |bytes: &[u8]| {
            let all = lines(bytes);
            let start = all.iter().position(|l| l.trim_start().starts_with("gate ")).unwrap() + 1;
            all[start..].iter().map(|l| l.split_whitespace().collect::<Vec<_>>().join(" ")).collect::<Vec<_>>()
        };
        let expected: Vec<String> = gates.iter().flat_map(|g| body(&batch_bytes(&alone(g), &args))).collect();
        assert_eq!(body(&batch_bytes(&whole, &args)), expected, "table {rows}");
    }
}
