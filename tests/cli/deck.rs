//! `widthwise deck`: what the deck holds, its options and its bad input. Simulating it is in
//! `tests/reference/`.

use predicates::prelude::*;

use super::widthwise;

fn deck(args: &[&str]) -> String {
    let output = widthwise().arg("deck").args(args).output().unwrap();
    assert!(output.status.success(), "{args:?}: {}", String::from_utf8_lossy(&output.stderr));
    String::from_utf8(output.stdout).unwrap()
}

#[test]
fn a_deck_measures_every_input_on_both_edges_against_the_reference() {
    let text = deck(&["aoi21"]);
    for measure in [
        "tpd_a_fall_gate",
        "tpd_a_rise_gate",
        "tpd_b_fall_gate",
        "tpd_b_rise_gate",
        "tpd_c_fall_gate",
        "tpd_c_rise_gate",
        "tpd_fall_ref",
        "tpd_rise_ref",
    ] {
        assert_eq!(text.matches(&format!(".meas tran {measure} ")).count(), 1, "{measure}");
    }
    // One copy of the gate per transition, one reference per edge; the cell named with its drive.
    assert_eq!(text.lines().filter(|l| l.starts_with('X') && l.ends_with(" aoi21_x1")).count(), 6);
    assert_eq!(text.lines().filter(|l| l.starts_with('X') && l.ends_with(" aoi21_x1_reference")).count(), 2);
    assert!(text.contains(".model nmos NMOS (LEVEL=1 VTO=0.7 KP=100u GAMMA=0 LAMBDA=0)"));
    assert!(text.contains(".subckt aoi21_x1 a b c y vdd vss"));
    assert!(text.contains(".subckt aoi21_x1_reference a y vdd vss"));
    assert!(text.contains("\n.tran "));
    assert!(text.ends_with(".end\n"));
    assert!(!text.contains(".control"));
    assert!(!text.contains("\nCD"));
    // AOI21, input a falling: the pull-up path through a is a's PMOS and c's (docs/model.md
    // section 3: the pull-up is the dual), with b held off at 1 and c on at 0.
    assert!(text.contains("* t2: a falling, output rising; held b=1 c=0; path MP3 MP1"), "{text}");
}

#[test]
fn options_add_diffusion_capacitors_and_a_summary() {
    let text = deck(&["nand2", "--diffusion-capacitance", "--summary"]);
    // NAND2, longest-path: every device 2 um, 1 fF/um. y: MN1, MP1, MP2 drains = 6 fF; n1 is shared
    // by the two series NMOS and counts once = 2 fF. Reference: y = 1 + 2 um = 3 fF.
    assert!(text.contains("CD1 y vss 6f\nCD2 n1 vss 2f\n.ends nand2_x1\n"), "{text}");
    assert!(text.contains("CD1 y vss 3f\n.ends nand2_x1_reference\n"), "{text}");
    assert!(text.contains(".control\nrun\n"));
    assert!(text.contains("let ratio_a_fall = tpd_a_fall_gate / tpd_fall_ref"));
    assert!(text.contains("quit\n.endc\n.end\n"));
}

#[test]
fn a_model_library_is_included_by_absolute_path() {
    let directory = tempfile::tempdir().unwrap();
    let library = directory.path().join("my models.lib");
    std::fs::write(&library, "* models\n.model nch nmos\n.model pch pmos\n").unwrap();
    let text = deck(&["nand2", "--models", library.to_str().unwrap(), "--nmos-model", "nch", "--pmos-model", "pch"]);
    let absolute = std::fs::canonicalize(&library).unwrap();
    assert!(text.contains(&format!(".include \"{}\"", absolute.display())), "{text}");
    assert!(!text.contains(".model"));
    assert!(text.contains("MN1 y a n1 vss nch W=2u L=1u m=1"));
    assert!(text.contains("MP1 y a vdd vdd pch W=2u L=1u m=1"));
}

#[test]
fn a_missing_model_library_writes_nothing() {
    let directory = tempfile::tempdir().unwrap();
    let target = directory.path().join("deck.sp");
    widthwise()
        .args(["deck", "nand2", "--models", "/nonexistent/widthwise/models.lib", "-o"])
        .arg(&target)
        .assert()
        .code(2)
        .stdout(predicate::str::is_empty())
        .stderr(predicate::str::contains("models.lib"));
    assert!(!target.exists());
    assert_eq!(std::fs::read_dir(directory.path()).unwrap().count(), 0, "no temporary file left behind");
    // Model names without a library are a usage error.
    widthwise().args(["deck", "nand2", "--nmos-model", "nch"]).assert().code(2);
}

#[test]
fn model_names_of_a_library_are_reserved_and_must_differ() {
    let directory = tempfile::tempdir().unwrap();
    let library = directory.path().join("models.lib");
    std::fs::write(&library, "* models\n").unwrap();
    let library = library.to_str().unwrap();
    widthwise()
        .args(["deck", "!(mine & a)", "--models", library, "--nmos-model", "mine", "--pmos-model", "yours"])
        .assert()
        .code(2)
        .stdout(predicate::str::is_empty())
        .stderr(predicate::str::contains("input 'mine' takes a reserved name"));
    widthwise()
        .args(["deck", "nand2", "--models", library, "--nmos-model", "same", "--pmos-model", "SAME"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("must differ"));
    widthwise()
        .args(["deck", "nand2", "--models", library, "--nmos-model", "gnd"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("reserved"));
}

#[test]
fn a_model_library_path_a_deck_cannot_hold_is_refused() {
    // A line break or a double quote in the path would break the .include line.
    let directory = tempfile::tempdir().unwrap();
    for name in ["two\nlines.lib", "quote\"d.lib"] {
        let library = directory.path().join(name);
        std::fs::write(&library, "* models\n").unwrap();
        widthwise()
            .args(["deck", "nand2", "--models"])
            .arg(&library)
            .assert()
            .code(2)
            .stdout(predicate::str::is_empty())
            .stderr(predicate::str::contains("cannot hold"));
    }
}
