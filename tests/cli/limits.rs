//! Every hard limit, in one table: just past it the command refuses with a clear message (exit 2)
//! or says what it does instead; at it, the command works. The limits are documented in --help.

use predicates::prelude::*;

use super::widthwise;

/// `!(x0 & x1 & ...)` with `count` literals over `distinct` inputs.
fn and_of(count: usize, distinct: usize) -> String {
    let names: Vec<String> = (0..count).map(|i| format!("x{}", i % distinct)).collect();
    format!("!({})", names.join(" & "))
}

/// `count` parallel pairs in series: 2^count paths of `count` devices in the pull-down.
fn pairs(count: usize) -> String {
    let groups: Vec<String> = (0..count).map(|i| format!("(a{i} | b{i})")).collect();
    format!("!({})", groups.join(" & "))
}

struct Case {
    limit: &'static str,
    /// Arguments after the command name; the expression comes on standard input.
    args: &'static [&'static str],
    over: String,
    at: String,
    message: &'static str,
}

#[test]
fn table_of_limits() {
    let mebibyte = 1 << 20;
    let padded = |text: &str, length: usize| format!("{text}{}", " ".repeat(length - text.len()));
    let cases = [
        Case {
            limit: "expression length, 1 MiB",
            args: &["size"],
            over: padded("nand2", mebibyte + 1),
            at: padded("nand2", mebibyte),
            message: "longer than 1048576 bytes",
        },
        Case {
            limit: "nesting, 256 levels of parentheses",
            args: &["size"],
            over: format!("!{}a & b{}", "(".repeat(257), ")".repeat(257)),
            at: format!("!{}a & b{}", "(".repeat(256), ")".repeat(256)),
            message: "nesting deeper than 256",
        },
        Case {
            limit: "input occurrences (transistors per network), 10000",
            args: &["size", "--format", "csv", "--rows", "gates"],
            over: and_of(10_001, 3),
            at: and_of(10_000, 3),
            message: "10001 input occurrences; the limit is 10000",
        },
        Case {
            limit: "distinct inputs, 10000",
            args: &["size", "--format", "csv", "--rows", "gates"],
            over: and_of(10_001, 10_001),
            at: and_of(10_000, 10_000),
            message: "10001 distinct inputs; the limit is 10000",
        },
        Case {
            limit: "device names in one path listing, 1000000",
            args: &["paths", "--limit", "10000", "--format", "csv"],
            over: pairs(101),
            at: pairs(100),
            message: "could name 1010000 devices; the limit is 1000000",
        },
        Case {
            limit: "shorthand stack, 8",
            args: &["size"],
            over: "nand9".into(),
            at: "nand8".into(),
            message: "nand takes 2 to 8 inputs",
        },
        Case {
            limit: "shorthand groups, 8",
            args: &["size"],
            over: "aoi222222222".into(),
            at: "aoi22222222".into(),
            message: "2 to 8 group sizes",
        },
    ];
    for case in cases {
        let mut args = case.args.to_vec();
        args.insert(1, "-");
        widthwise()
            .args(&args)
            .write_stdin(case.over.clone())
            .assert()
            .code(2)
            .stderr(predicate::str::contains(case.message).from_utf8())
            .stdout(predicate::str::is_empty());
        let at = widthwise().args(&args).write_stdin(case.at.clone()).output().unwrap();
        assert!(at.status.success(), "{}: {}", case.limit, String::from_utf8_lossy(&at.stderr));
    }
}

#[test]
fn limits_that_change_what_is_done_say_so() {
    // Past 16 inputs the exact worst case over vectors is not enumerated: JSON says null.
    let output = widthwise().args(["size", &and_of(18, 17), "--format", "json"]).output().unwrap();
    let json: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
    assert!(json["networks"][0]["exact_worst"].is_null());
    let output = widthwise().args(["size", &and_of(17, 16), "--format", "json"]).output().unwrap();
    let json: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
    assert!(json["networks"][0]["exact_worst"].is_object());
    widthwise()
        .args(["verify", &and_of(18, 17)])
        .assert()
        .success()
        .stdout(predicate::str::contains("more than 16 inputs: exact worst case not computed"));
    // Past 30 inputs verify samples instead of checking every vector (see verify.rs for the rest).
    widthwise()
        .args(["verify", &and_of(31, 31), "--random-vectors", "64"])
        .assert()
        .success()
        .stdout(predicate::str::contains("past the limit of 30"));
    widthwise().args(["paths", "nand2", "--limit", "10001"]).assert().code(2);
    widthwise().args(["paths", "nand2", "--limit", "10000"]).assert().success();
}

#[test]
fn help_lists_every_limit() {
    let output = widthwise().args(["size", "--help"]).output().unwrap();
    let help = String::from_utf8(output.stdout).unwrap().replace('\n', " ");
    for limit in ["1 MiB", "256 levels", "10000 input occurrences", "10000 distinct inputs", "10000 listed paths"] {
        assert!(help.contains(limit), "{limit}");
    }
    for limit in ["1000000 device names", "16 inputs", "30 inputs"] {
        assert!(help.contains(limit), "{limit}");
    }
    for limit in ["1e-6 to 1e6", "1000000 fingers per device", "--work-budget UNITS, default 2^30 = 1073741824"] {
        assert!(help.contains(limit), "{limit}");
    }
    let output = widthwise().args(["batch", "--help"]).output().unwrap();
    let help = String::from_utf8(output.stdout).unwrap().replace('\n', " ");
    for limit in ["100000 drives per gate", "200000 variants per library", "--work-budget UNITS"] {
        assert!(help.contains(limit), "{limit}");
    }
}

#[test]
fn library_limits_past_the_command_line() {
    use widthwise::expr::parser::{MAX_EXPRESSION_BYTES, parse};
    use widthwise::process::{MAX_PROCESS_FILE_BYTES, Process};
    // Expression text through the library (an argument cannot be this long; standard input is
    // checked before parsing, above).
    let padded = |text: &str, length: usize| format!("{text}{}", " ".repeat(length - text.len()));
    let error = parse(&padded("nand2", MAX_EXPRESSION_BYTES + 1)).unwrap_err();
    assert!(error.to_string().contains("1048577 bytes long; the limit is 1048576"), "{error}");
    assert!(parse(&padded("nand2", MAX_EXPRESSION_BYTES)).is_ok());
    // A process file: a comment pads the default file past the limit, then to it exactly.
    let file = Process::default().to_commented_toml();
    let pad = |length: usize| format!("{file}#{}", "x".repeat(length - file.len() - 1));
    let error = Process::from_toml(&pad(MAX_PROCESS_FILE_BYTES + 1)).unwrap_err();
    assert!(error.to_string().contains("the limit is 1048576"), "{error}");
    assert_eq!(Process::from_toml(&pad(MAX_PROCESS_FILE_BYTES)).unwrap(), Process::default());
}

#[test]
fn listing_work_is_bounded_before_it_starts() {
    // 50 branches of 100 parallel pairs in series: 10,000 devices, within every expression limit, but
    // 10,000 paths would build about 5e7 partial paths. Refused at once; 100 paths are fine.
    let branches: Vec<String> = (0..50)
        .map(|b| {
            let pairs: Vec<String> = (0..100).map(|i| format!("(x{b}_{i}a | x{b}_{i}b)")).collect();
            pairs.join(" & ")
        })
        .collect();
    let text = format!("!({})", branches.join(" | "));
    widthwise()
        .args(["paths", "-", "--limit", "10000"])
        .write_stdin(text.clone())
        .assert()
        .code(2)
        .stderr(predicate::str::contains("partial paths"));
    widthwise().args(["paths", "-", "--limit", "10", "--format", "csv"]).write_stdin(text).assert().success();
}

#[test]
fn endless_files_are_refused_not_read_whole() {
    // /dev/zero never ends: a device is not read at all (only regular files are), and standard input
    // is read one byte past its limit and no further.
    widthwise().args(["batch", "/dev/zero"]).assert().code(2).stderr(predicate::str::contains("a device node"));
    widthwise()
        .args(["size", "nand2", "--process", "/dev/zero"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("a device node"));
    let endless = "#".repeat(widthwise::library::MAX_LIBRARY_BYTES + 1);
    widthwise()
        .args(["batch", "-"])
        .write_stdin(endless)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("the limit"));
}

#[test]
fn deck_size_is_bounded() {
    // A deck has 2n transitions with a source per input: written up to 256 occurrences per network.
    widthwise()
        .args(["deck", "-"])
        .write_stdin(and_of(257, 257))
        .assert()
        .code(2)
        .stderr(predicate::str::contains("256"));
    let directory = tempfile::tempdir().unwrap();
    let deck = directory.path().join("deck.sp");
    widthwise().args(["deck", "-", "-o"]).arg(&deck).write_stdin(and_of(40, 40)).assert().success();
}

#[test]
fn sizing_values_are_bounded() {
    // One range per quantity wherever it is given (src/bounds.rs); past it, exit 2 and no output.
    for args in [
        ["--drive", "1e7"],
        ["--drive", "5e-324"],
        ["--mobility-ratio", "2e6"],
        ["--mobility-ratio", "1e-7"],
        ["--reference", "1:1e9"],
        ["--reference", "1e-300:1"],
        ["--fanout", "1e308"],
        ["--load", "1e308"],
        ["--diffusion-ratio", "1e308"],
        ["--fanout", "5e-324"],
    ] {
        widthwise()
            .args(["size", "nand2"])
            .args(args)
            .assert()
            .code(2)
            .stdout(predicate::str::is_empty())
            .stderr(predicate::str::contains("up to 1e6"));
    }
    // The ends are taken; 0 turns a load off.
    for args in [["--drive", "1e-6"], ["--drive", "1e6"], ["--fanout", "0"], ["--load", "1e6"]] {
        widthwise().args(["size", "nand2", "--format", "csv", "--rows", "delays"]).args(args).assert().success();
    }
    // A library's drives and [defaults] the same way (a bad gate is reported, nothing of it written).
    for (text, message) in [
        ("[[gate]]\nname = \"g\"\nexpr = \"inv\"\ndrive = [1, 5e-324]\n", "drive 5e-324: a drive must be"),
        ("[[gate]]\nname = \"g\"\nexpr = \"inv\"\ndrive = 1e300\n", "drive 1e300: a drive must be"),
        ("[defaults]\nmobility_ratio = 1e-9\n", "mobility_ratio = 1e-9: must be a number from 1e-6 up to 1e6"),
    ] {
        widthwise()
            .args(["batch", "-"])
            .write_stdin(text)
            .assert()
            .code(2)
            .stdout(predicate::str::contains("g_x").not())
            .stderr(predicate::str::contains(message));
    }
    // Sizes far past any cell are refused by their drawing: at most 1,000,000 fingers per device.
    widthwise()
        .args(["size", "!(a & b & c & d & e & f & g & h & i & j)", "--drive", "1e6", "--reference", "1e6:1e6"])
        .assert()
        .code(2)
        .stdout(predicate::str::is_empty())
        .stderr(predicate::str::contains("the limit is 1000000 fingers per device"));
    // Far from unit size the worst path is still found: ties are relative, not absolute.
    let output =
        widthwise().args(["size", "!(a & (b | c & d))", "--drive", "1e6", "--format", "json"]).output().unwrap();
    let json: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
    assert_eq!(json["networks"][0]["worst_path"], serde_json::json!(["MN1", "MN3", "MN4"]));
}

#[test]
fn a_long_stack_order_search_does_not_overflow() {
    // 22 members in one stack: 22! orders, more than a 64-bit count; the search is then local, and says so.
    let output = widthwise()
        .args(["size", "-", "--stack-order", "search", "--format", "json"])
        .write_stdin(and_of(22, 22))
        .output()
        .unwrap();
    assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    let json: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
    assert_eq!(json["stack_order"]["exhaustive"], false);
}

#[test]
fn variants_are_bounded_before_sizing() {
    // At most 100,000 drives per gate (each a variant) and 200,000 variants per library.
    let list = |count: usize| (1..=count).map(|d| d.to_string()).collect::<Vec<_>>().join(", ");
    let gate = format!("[[gate]]\nname = \"g\"\nexpr = \"inv\"\ndrive = [{}]\n", list(100_001));
    widthwise()
        .args(["batch", "-"])
        .write_stdin(gate)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("drive lists 100001 drives; the limit is 100000 per gate"));
    let defaults = format!("[defaults]\ndrive = [{}]\n", list(100_000));
    let gates: String = (0..3).map(|i| format!("[[gate]]\nname = \"g{i}\"\nexpr = \"nand2\"\n")).collect();
    widthwise()
        .args(["batch", "-", "--format", "csv"])
        .write_stdin(format!("{defaults}{gates}"))
        .assert()
        .code(2)
        .stdout(predicate::str::is_empty())
        .stderr(predicate::str::contains("asks for 300000 variants").and(predicate::str::contains("200000")));
}

/// `!(x0 & x1 & ...)` as `and_of`, on standard input, for `widthwise` with `args`.
fn past_the_budget(args: &[&str], expression: String, message: &str) {
    widthwise().args(args).write_stdin(expression).assert().code(2).stdout(predicate::str::is_empty()).stderr(
        predicate::str::contains(message)
            .and(predicate::str::contains("past the work budget of 1073741824: raise it with --work-budget N")),
    );
}

#[test]
fn work_budgets_bound_the_long_computations() {
    // Each of these ran for minutes within every other limit; each now stops at once, exit 2,
    // naming the budget and how to raise it. The counts are deterministic: nothing here is timed.
    // The stack-order search on six AND3 groups over 16 inputs: 7,776 orders, a local search of up
    // to 2,000, each timing every input's switching vectors on both edges (about 0.4 s an order):
    // 2,000 orders x the work of timing one.
    past_the_budget(
        &["size", "-", "--stack-order", "search"],
        "!(x0&x1&x2 | x3&x4&x5 | x6&x7&x8 | x9&x10&x11 | x12&x13&x14 | x15&x0&x1)".to_string(),
        "the stack-order search could take up to 3507488096 work units",
    );
    // The elmore method on 80 transistors, 4 groups of 10 in parallel (10,000 paths; ran 94 s, then
    // did not converge): its Newton steps would pass the budget before the program is half built.
    let groups: Vec<String> = (0..4)
        .map(|g| format!("({})", (0..10).map(|i| format!("x{}", 10 * g + i)).collect::<Vec<_>>().join(" | ")))
        .collect();
    past_the_budget(
        &["size", "-", "--method", "elmore"],
        format!("!({})", groups.join(" & ")),
        "the elmore method's solver could take more than",
    );
    // Verification of 30 inputs and 1,000 occurrences (took 191 s): 2^30 vectors / 64 x 1,000.
    past_the_budget(&["verify", "-"], and_of(1000, 30), "verification would take 16777216000 work units");
    // The same with a library: every variant's verification counts, before anything is written.
    let library = format!("[[gate]]\nname = \"wide\"\nexpr = \"{}\"\ndrive = [1, 2]\n", and_of(40, 30));
    past_the_budget(&["batch", "-", "--verify"], library, "verification would take 1342177280 work units");
}

#[test]
fn a_work_budget_can_be_raised_or_lowered() {
    // 20 inputs: 2^20 vectors / 64 x 20 occurrences = 327,680 units.
    let text = and_of(20, 20);
    widthwise()
        .args(["verify", "-", "--work-budget", "327679"])
        .write_stdin(text.clone())
        .assert()
        .code(2)
        .stderr(predicate::str::contains("verification would take 327680 work units"));
    widthwise().args(["verify", "-", "--work-budget", "327680"]).write_stdin(text).assert().success();
    widthwise().args(["size", "nand2", "--work-budget", "0"]).assert().code(2);
    // The delays of a gate count too: a budget of 10 units stops them.
    widthwise()
        .args(["size", "nand3", "--delays", "--work-budget", "10"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("timing the delays was stopped after 10 work units"));
}
