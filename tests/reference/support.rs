//! Shared support of the reference checks: the widthwise binary, and ngspice run in batch mode.
//!
//! Where ngspice is missing, [`ngspice_available`] says so on stderr and the check skips; with
//! `WIDTHWISE_REQUIRE_NGSPICE=1` a missing ngspice fails the check instead.

use std::collections::BTreeMap;
use std::process::Command;

/// The environment variable that turns a missing ngspice into a failure.
pub const REQUIRE_NGSPICE: &str = "WIDTHWISE_REQUIRE_NGSPICE";

/// Run the built `widthwise` on `args`; its standard output (panics, with its stderr, on failure).
pub fn widthwise(args: &[&str]) -> String {
    let output = Command::new(env!("CARGO_BIN_EXE_widthwise")).args(args).output().expect("widthwise runs");
    assert!(output.status.success(), "widthwise {args:?}: {}", String::from_utf8_lossy(&output.stderr));
    String::from_utf8(output.stdout).expect("UTF-8 output")
}

/// Whether ngspice runs here. If not: a note on stderr naming `check` and `false`, or a panic
/// when `WIDTHWISE_REQUIRE_NGSPICE=1`.
pub fn ngspice_available(check: &str) -> bool {
    let runs = Command::new("ngspice").arg("--version").output().is_ok_and(|o| o.status.success());
    if !runs {
        if std::env::var(REQUIRE_NGSPICE).is_ok_and(|v| v == "1") {
            panic!("{check}: ngspice is missing and {REQUIRE_NGSPICE}=1 (install Debian's ngspice package)");
        }
        note(&format!("{check}: skipped, ngspice is not installed (Debian package ngspice)"));
    }
    runs
}

/// The environment variable that turns a missing scipy into a failure.
pub const REQUIRE_SCIPY: &str = "WIDTHWISE_REQUIRE_SCIPY";

/// Whether python3 can import scipy and numpy here. If not: a note on stderr naming `check` and
/// `false`, or a panic when `WIDTHWISE_REQUIRE_SCIPY=1`.
pub fn scipy_available(check: &str) -> bool {
    let imports =
        Command::new("python3").args(["-c", "import scipy, numpy"]).output().is_ok_and(|o| o.status.success());
    if !imports {
        if std::env::var(REQUIRE_SCIPY).is_ok_and(|v| v == "1") {
            panic!("{check}: python3 cannot import scipy and {REQUIRE_SCIPY}=1 (pip install scipy)");
        }
        note(&format!("{check}: skipped, python3 cannot import scipy (pip install scipy)"));
    }
    imports
}

/// A line on stderr that the test harness does not capture, so that it shows in every run.
pub fn note(line: &str) {
    use std::io::Write;
    let _ = writeln!(std::io::stderr(), "{line}");
}

/// Simulate a deck with `ngspice -b` in a fresh directory; ngspice's standard output.
pub fn run_ngspice(deck: &str) -> String {
    let output = ngspice_output(deck);
    let stdout = String::from_utf8_lossy(&output.stdout).into_owned();
    assert!(
        output.status.success(),
        "ngspice failed: {}\n{stdout}\n{}",
        output.status,
        String::from_utf8_lossy(&output.stderr)
    );
    stdout
}

/// Run `ngspice -b` on a deck in a fresh directory, whatever its outcome (ngspice exits 0 even when
/// it rejects a line or a measurement: its messages start with `Error`).
pub fn ngspice_output(deck: &str) -> std::process::Output {
    let directory = tempfile::tempdir().expect("a temporary directory");
    let path = directory.path().join("deck.sp");
    std::fs::write(&path, deck).expect("the deck is written");
    // One thread: the Debian build spins OpenMP threads, and two runs at once then take many times longer.
    Command::new("ngspice")
        .arg("-b")
        .arg(&path)
        .current_dir(directory.path())
        .env("OMP_NUM_THREADS", "1")
        .env("OMP_WAIT_POLICY", "passive")
        .output()
        .expect("ngspice runs")
}

/// Measurement results from ngspice's output: lines `name = value ...` with a lowercase name and a
/// number for value (ngspice prints a `.meas` result as `tpd_a_fall_gate     =  1.003736e-10 targ=
/// ... trig= ...`, names lowercased; its statistics lines such as `Stack = 0 bytes.` are capitalised).
pub fn measurements(output: &str) -> BTreeMap<String, f64> {
    let mut out = BTreeMap::new();
    for line in output.lines() {
        let Some((name, rest)) = line.split_once('=') else { continue };
        let name = name.trim();
        if name.is_empty() || !name.chars().all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || c == '_') {
            continue;
        }
        if let Some(value) = rest.split_whitespace().next().and_then(|v| v.parse::<f64>().ok()) {
            out.insert(name.to_string(), value);
        }
    }
    out
}

/// The deck's `--summary` lines, `delay <input> <edge>: <gate> <reference> <ratio>`, as
/// `("<input> <edge>", ratio)`.
pub fn summary_ratios(output: &str) -> BTreeMap<String, f64> {
    output
        .lines()
        .filter_map(|line| {
            let (what, values) = line.strip_prefix("delay ")?.split_once(':')?;
            let ratio = values.split_whitespace().nth(2)?.parse::<f64>().ok()?;
            Some((what.to_string(), ratio))
        })
        .collect()
}

/// The built-in process file (`widthwise process`) with the given keys set to the given values.
pub fn process_with(values: &[(&str, String)]) -> String {
    widthwise(&["process"])
        .lines()
        .map(|line| {
            let key = line.split(" =").next().unwrap_or("");
            match values.iter().find(|(k, _)| *k == key) {
                Some((key, value)) => format!("{key} = {value}"),
                None => line.to_string(),
            }
        })
        .collect::<Vec<_>>()
        .join("\n")
        + "\n"
}

/// Run the scipy script `tests/reference/<script>` with `input` on its standard input; each line it
/// prints, as JSON (panics, with its stderr, when it fails).
pub fn run_scipy(script: &str, input: &[u8]) -> Vec<serde_json::Value> {
    use std::io::Write as _;
    use std::process::Stdio;
    let path = format!("{}/tests/reference/{script}", env!("CARGO_MANIFEST_DIR"));
    let child =
        Command::new("python3").arg(path).stdin(Stdio::piped()).stdout(Stdio::piped()).stderr(Stdio::piped()).spawn();
    let mut child = child.expect("python3 runs (it imported scipy above)");
    child.stdin.take().unwrap().write_all(input).unwrap();
    let output = child.wait_with_output().unwrap();
    assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    String::from_utf8(output.stdout).unwrap().lines().map(|l| serde_json::from_str(l).unwrap()).collect()
}
