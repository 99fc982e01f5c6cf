//! `widthwise size --method min-area` against an independent solver: scipy's SLSQP (from PyPI) on
//! the same problem, run by benches/scipy_min_area.py (variables W/L per device, every listed path
//! at most the target). Skips, saying so, where python3 or scipy is missing; with
//! WIDTHWISE_REQUIRE_SCIPY=1 a missing tool fails.

use std::path::PathBuf;
use std::process::Command;

#[test]
fn min_area_matches_scipy_slsqp() {
    let require = std::env::var("WIDTHWISE_REQUIRE_SCIPY").is_ok_and(|v| v == "1");
    let script = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("benches").join("scipy_min_area.py");
    let output = match Command::new("python3")
        .arg(&script)
        .args(["--quick", "--check", "--widthwise", env!("CARGO_BIN_EXE_widthwise")])
        .output()
    {
        Ok(output) => output,
        Err(error) => {
            assert!(!require, "WIDTHWISE_REQUIRE_SCIPY=1 but python3 cannot be run: {error}");
            eprintln!("python3 not found ({error}): min-area check against scipy skipped");
            return;
        }
    };
    let stdout = String::from_utf8_lossy(&output.stdout);
    let stderr = String::from_utf8_lossy(&output.stderr);
    eprint!("{stderr}");
    assert!(output.status.success(), "{stdout}\n{stderr}");
    if stdout.is_empty() {
        // The script said on stderr that scipy is missing, and WIDTHWISE_REQUIRE_SCIPY is not set.
        return;
    }
    // The script's --check already holds the difference to 1e-5; the line must be there.
    assert!(stdout.contains("largest relative difference in optimum area"), "{stdout}");
}
