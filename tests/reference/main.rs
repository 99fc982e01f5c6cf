//! Checks against published tables, worked examples and reference tools (scipy from PyPI, ngspice
//! from Debian's packages), a module per topic.

mod delay;

use std::process::Command;

/// Whether python3 can import scipy (and numpy). Where it cannot, say so on stderr and skip, unless
/// `WIDTHWISE_REQUIRE_SCIPY=1`, which turns the missing tool into a failure.
pub fn scipy_available() -> bool {
    let found = Command::new("python3")
        .args(["-c", "import scipy, numpy"])
        .output()
        .map(|output| output.status.success())
        .unwrap_or(false);
    if !found {
        assert!(
            std::env::var("WIDTHWISE_REQUIRE_SCIPY").as_deref() != Ok("1"),
            "WIDTHWISE_REQUIRE_SCIPY=1 but python3 cannot import scipy"
        );
        eprintln!("skipping: python3 cannot import scipy (install it from PyPI to run this check)");
    }
    found
}

/// Whether ngspice runs. Where it does not, say so on stderr and skip, unless
/// `WIDTHWISE_REQUIRE_NGSPICE=1`, which turns the missing tool into a failure.
pub fn ngspice_available() -> bool {
    let found = Command::new("ngspice").arg("--version").output().map(|o| o.status.success()).unwrap_or(false);
    if !found {
        assert!(
            std::env::var("WIDTHWISE_REQUIRE_NGSPICE").as_deref() != Ok("1"),
            "WIDTHWISE_REQUIRE_NGSPICE=1 but ngspice does not run"
        );
        eprintln!("skipping: ngspice is not installed (apt-get install ngspice to run this check)");
    }
    found
}
