//! Every number every command writes: at most ten significant digits, no trailing zeros, in every
//! format and view (README, "Numbers"), on the shorthands and on random gates with awkward options
//! (a min-area square root, a mobility ratio of 2.37, a drive of 1.5, a process of 0.25 um devices).

use proptest::prelude::*;

use super::widthwise;

/// Most significant digits of a written number (README, "Numbers").
const MOST_DIGITS: usize = 10;

/// Every number in `text`: runs of digits with an optional fraction and exponent that do not
/// continue a name (`MN12`, `n1`, `nand2_x1p5`, `x3` are names, not numbers).
fn numbers(text: &str) -> Vec<&str> {
    let bytes = text.as_bytes();
    let mut found = Vec::new();
    let mut index = 0;
    while index < bytes.len() {
        let starts = bytes[index].is_ascii_digit()
            && (index == 0 || !(bytes[index - 1].is_ascii_alphanumeric() || b"_.".contains(&bytes[index - 1])));
        if !starts {
            index += 1;
            continue;
        }
        let start = index;
        let digits = |mut at: usize| {
            while at < bytes.len() && bytes[at].is_ascii_digit() {
                at += 1;
            }
            at
        };
        index = digits(index);
        if index + 1 < bytes.len() && bytes[index] == b'.' && bytes[index + 1].is_ascii_digit() {
            index = digits(index + 1);
        }
        if index + 1 < bytes.len() && (bytes[index] == b'e' || bytes[index] == b'E') {
            let sign = usize::from(bytes[index + 1] == b'-' || bytes[index + 1] == b'+');
            if index + 1 + sign < bytes.len() && bytes[index + 1 + sign].is_ascii_digit() {
                index = digits(index + 1 + sign);
            }
        }
        // A number glued to a name's letters (`2a`) is not one: skip the rest of that word.
        if index < bytes.len() && (bytes[index] == b'_' || bytes[index].is_ascii_digit()) {
            while index < bytes.len() && (bytes[index].is_ascii_alphanumeric() || bytes[index] == b'_') {
                index += 1;
            }
            continue;
        }
        found.push(&text[start..index]);
    }
    found
}

/// The significant digits of a written number's mantissa (`0.00125` has 3, `1200` has 2, `1.5e-11` 2).
fn significant_digits(number: &str) -> usize {
    let mantissa = number.split(['e', 'E']).next().unwrap_or(number);
    let digits: String = mantissa.chars().filter(char::is_ascii_digit).collect();
    digits.trim_start_matches('0').trim_end_matches('0').len()
}

/// Check every number of a command's output; `what` names the run in a failure.
fn check_numbers(text: &str, what: &str) -> Result<(), String> {
    for number in numbers(text) {
        if significant_digits(number) > MOST_DIGITS {
            return Err(format!("{what}: '{number}' has more than {MOST_DIGITS} significant digits"));
        }
        let mantissa = number.split(['e', 'E']).next().unwrap_or(number);
        if mantissa.contains('.') && mantissa.ends_with('0') {
            return Err(format!("{what}: '{number}' keeps a trailing zero"));
        }
    }
    Ok(())
}

fn example(name: &str) -> String {
    format!("{}/examples/{name}", env!("CARGO_MANIFEST_DIR"))
}

/// Run widthwise with `args` (and `stdin`), which must succeed; its standard output.
fn run(args: &[String], stdin: Option<&str>) -> Result<String, String> {
    let mut command = widthwise();
    command.args(args);
    if let Some(text) = stdin {
        command.write_stdin(text.to_string());
    }
    let output = command.output().map_err(|e| e.to_string())?;
    if !output.status.success() {
        return Err(format!("{args:?}: {}", String::from_utf8_lossy(&output.stderr)));
    }
    String::from_utf8(output.stdout).map_err(|e| e.to_string())
}

/// Every command, format and view on one gate with `options`, and a library of it in `batch`.
fn every_output(expression: &str, options: &[&str]) -> Result<(), String> {
    let strings = |list: &[&str]| list.iter().map(|s| s.to_string()).collect::<Vec<String>>();
    let mut runs: Vec<Vec<String>> = Vec::new();
    for format in ["table", "json", "spice"] {
        runs.push(strings(&["size", expression, "--format", format]));
    }
    for rows in ["gates", "devices", "inputs", "delays"] {
        runs.push(strings(&["size", expression, "--format", "csv", "--rows", rows]));
    }
    for format in ["table", "json"] {
        runs.push(strings(&["size", expression, "--fanout", "2.3", "--format", format]));
    }
    for format in ["table", "csv", "json"] {
        runs.push(strings(&["paths", expression, "--format", format]));
        runs.push(strings(&["verify", expression, "--format", format]));
    }
    runs.push(strings(&["deck", expression, "--summary", "--diffusion-capacitance"]));
    for run_args in &mut runs {
        run_args.extend(strings(options));
        let text = run(run_args, None)?;
        check_numbers(&text, &run_args.join(" "))?;
    }
    // The same gate in a library, at two drives, through every format and view of `batch`.
    let escaped = expression.replace('\\', "\\\\").replace('"', "\\\"");
    let mut library = format!("[defaults]\ndrive = [1, 1.5]\n\n[[gate]]\nname = \"g\"\nexpr = \"{escaped}\"\n");
    library.push_str("\n[[gate]]\nname = \"n3\"\nexpr = \"nand3\"\nmethod = \"min-area\"\n");
    for (format, rows) in [
        ("table", "gates"),
        ("table", "devices"),
        ("table", "inputs"),
        ("csv", "gates"),
        ("csv", "devices"),
        ("csv", "inputs"),
        ("json", ""),
        ("spice", ""),
    ] {
        let mut args = strings(&["batch", "-", "--format", format]);
        args.extend(strings(options));
        if !rows.is_empty() {
            args.extend(strings(&["--rows", rows]));
        }
        let text = run(&args, Some(&library))?;
        check_numbers(&text, &format!("{} on {library:?}", args.join(" ")))?;
    }
    Ok(())
}

#[test]
fn the_number_scanner_finds_numbers_and_skips_names() {
    let text = "MN12 y a n1 vss nmos W=3.0240000000000005u L=0.25u m=1\nnand2_x1p5,2.5,-1.5e-11,x3,1200 0.5";
    assert_eq!(numbers(text), ["3.0240000000000005", "0.25", "1", "2.5", "1.5e-11", "1200", "0.5"]);
    assert_eq!(significant_digits("3.0240000000000005"), 17);
    assert!(check_numbers(text, "sample").is_err(), "the scanner sees the noise the issue quotes");
    assert!(check_numbers("W=2.50u", "sample").is_err(), "and a trailing zero");
    assert!(check_numbers("W=1.333333333u p 2.804737854 t 1.234e-11", "sample").is_ok());
}

#[test]
fn shorthands_write_no_number_past_ten_digits() {
    for expression in ["inv", "nand3", "nor4", "aoi21", "oai221", "aoi33"] {
        for options in [
            &["--method", "min-area", "--mobility-ratio", "2.37"][..],
            &["--drive", "1.5", "--process", &example("tern8-process.toml")],
            &["--reference", "1:3.1", "--method", "min-area"],
        ] {
            every_output(expression, options).unwrap();
        }
    }
    for args in [&["man-page"][..], &["man-page", "batch"], &["completions", "bash"], &["--help"], &["batch", "--help"]]
    {
        let args: Vec<String> = args.iter().map(|a| a.to_string()).collect();
        check_numbers(&run(&args, None).unwrap(), &args.join(" ")).unwrap();
    }
    check_numbers(&run(&["process".to_string()], None).unwrap(), "process").unwrap_or_else(|e| {
        // The process file is TOML, where a float keeps its '.0' (a TOML float literal); only the
        // digit count applies to it.
        assert!(e.contains("trailing zero"), "{e}");
    });
}

/// A random one-stage expression over inputs a..f (repeats allowed), as a string.
fn expression() -> impl Strategy<Value = String> {
    let leaf = prop::sample::select(vec!["a", "b", "c", "d", "e", "f"]).prop_map(str::to_string);
    let tree = leaf.prop_recursive(3, 10, 3, |inner| {
        (prop::collection::vec(inner, 2..4), any::<bool>())
            .prop_map(|(parts, and)| format!("({})", parts.join(if and { " & " } else { " | " })))
    });
    tree.prop_map(|f| format!("!{f}"))
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(8))]

    #[test]
    fn random_gates_write_no_number_past_ten_digits(
        text in expression(),
        min_area in any::<bool>(),
        mobility in 1.5f64..3.5,
        drive in prop::sample::select(vec!["1", "1.5", "3.3"]),
        process in any::<bool>(),
    ) {
        let mobility = format!("{mobility:.3}");
        let mut options = vec!["--drive", drive, "--mobility-ratio", &mobility];
        if min_area {
            options.extend(["--method", "min-area"]);
        }
        let process_file = example("tern8-process.toml");
        if process {
            options.extend(["--process", &process_file]);
        }
        let outcome = every_output(&text, &options);
        prop_assert!(outcome.is_ok(), "{}", outcome.unwrap_err());
    }
}
