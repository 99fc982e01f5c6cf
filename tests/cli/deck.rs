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

/// `deck GATE` on the shipped demo card (examples/demo130.lib with its process file), `extra` after.
fn demo(gate: &str, extra: &[&str]) -> assert_cmd::Command {
    demo_with("examples/demo130-process.toml", gate, extra)
}

/// The same with another process file.
fn demo_with(process: &str, gate: &str, extra: &[&str]) -> assert_cmd::Command {
    let mut command = widthwise();
    command.current_dir(env!("CARGO_MANIFEST_DIR")).args([
        "deck",
        gate,
        "--process",
        process,
        "--models",
        "examples/demo130.lib",
    ]);
    command.args(extra);
    command
}

#[test]
fn a_library_that_does_not_serve_the_deck_is_refused_before_ngspice_runs() {
    // PATH without ngspice: had widthwise got as far as running it, it would say ngspice is
    // missing (the last case shows it would); each refusal comes first, exit 2, with a place.
    let nowhere = "/nonexistent-widthwise-path";
    let directory = tempfile::tempdir().unwrap();
    // L = 0.1 um is below every bin's lmin of 0.12 um (examples/demo130.lib's header).
    let short = std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/examples/demo130-process.toml"))
        .unwrap()
        .replace("length_nm = 130.0", "length_nm = 100.0");
    let short_process = directory.path().join("short.toml");
    std::fs::write(&short_process, short).unwrap();
    let short_process = short_process.to_str().unwrap();
    let demo130 = "examples/demo130-process.toml";
    for (process, extra, says, place) in [
        (
            demo130,
            vec!["--models-section", "typical", "--nmos-model", "nosuch"],
            "error: MN1 of nand2_x1: no model 'nosuch' in section 'typical' of the library; its nmos models are: \
             demo130_n, demo130w_n",
            "  in ",
        ),
        (demo130, vec!["--models-section", "nominal"], "no section 'nominal' in ", "  in "),
        (
            short_process,
            vec!["--models-section", "typical", "--nmos-model", "demo130w_n"],
            "no bin of 'demo130w_n' covers a device of W = 0.8 um, L = 0.1 um; nearest: demo130w_n.1 (L 0.12-10 um, W \
             0.15-1 um)",
            "demo130-devices.inc, line 74, column 8:",
        ),
        // The library read whole: ngspice rejects its section lines.
        (demo130, vec![], "name one section", "demo130.lib, line 26, column 1:"),
    ] {
        demo_with(process, "nand2", &extra)
            .args(["--run"])
            .env("PATH", nowhere)
            .assert()
            .code(2)
            .stdout(predicate::str::is_empty())
            .stderr(predicate::str::contains(says))
            .stderr(predicate::str::contains(place))
            .stderr(predicate::str::contains("ngspice is not installed").not());
    }
    demo("nand2", &["--models-section", "typical", "--run"])
        .env("PATH", nowhere)
        .assert()
        .code(2)
        .stdout(predicate::str::is_empty())
        .stderr(predicate::str::contains("error: ngspice is not installed or not on PATH"));
}

#[test]
fn a_section_binned_names_loads_slew_and_diffusion_geometry() {
    let output = demo(
        "nand2",
        &["--models-section", "typical", "--nmos-model", "demo130w_n", "--pmos-model", "demo130w_p", "--fanout", "4"],
    )
    .args(["--slew-ps", "20"])
    .output()
    .unwrap();
    assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    let text = String::from_utf8(output.stdout).unwrap();
    let library = std::fs::canonicalize(concat!(env!("CARGO_MANIFEST_DIR"), "/examples/demo130.lib")).unwrap();
    assert!(text.contains(&format!("\n.lib {} typical\n", library.display())), "{text}");
    // demo130: contacted regions 0.3 um, shared 0.2 um; NAND2 NMOS 0.8 um: y gets 0.8 x 0.3 =
    // 0.24 um^2 and 2 (0.8 + 0.3) = 2.2 um, the shared n1 half of 0.8 x 0.2 (rectangles, by hand).
    assert!(text.contains("MN1 y a n1 vss demo130w_n W=0.8u L=0.13u m=1 AD=0.24p AS=0.08p PD=2.2u PS=1u"), "{text}");
    // Fan-out 4: each copy drives 4 x its input's capacitance, C_in = 2 + 2.25 = 4.25 C of
    // 0.76 fF (1.9 fF/um x 0.4 um): 12.92 fF; the reference 4 x (1 + 2.25) C = 9.88 fF.
    assert!(text.contains("Ct1 t1_out 0 12.92f"), "{text}");
    assert!(text.contains("Crfall rfall_out 0 9.88f"), "{text}");
    // The inputs ramp in 20 ps.
    assert!(text.contains("inputs ramp rail to rail in 2e-11 s"), "{text}");
    let ramp = text.lines().find(|line| line.starts_with("Vt1_1 ")).unwrap();
    let times: Vec<f64> = ramp
        .trim_end_matches(')')
        .split_whitespace()
        .skip(3)
        .step_by(2)
        .map(|t| t.trim_start_matches("PWL(").parse().unwrap())
        .collect();
    // (stimulus times are written to four significant digits)
    assert!((times[2] - times[1] - 20e-12).abs() < 0.05e-12, "{ramp}");
    // Explicit diffusion capacitors beside the library's junctions only when asked for both.
    demo("nand2", &["--models-section", "typical", "--diffusion-capacitance"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("--count-diffusion-twice"));
    let both = demo("nand2", &["--models-section", "typical", "--diffusion-capacitance", "--count-diffusion-twice"])
        .output()
        .unwrap();
    assert!(both.status.success());
    assert!(String::from_utf8(both.stdout).unwrap().contains("\nCD1 y vss "));
    // --summary writes a deck for ngspice to print; --run prints the delays itself.
    demo("nand2", &["--models-section", "typical", "--run", "--summary"]).assert().code(2);
    widthwise().args(["deck", "nand2", "--format", "csv"]).assert().code(2);
}

#[test]
fn a_cell_of_several_stages_is_simulated_whole() {
    // and2: each pin on both output edges, measured from the pin and from the net the output stage
    // switches on (docs/model.md section 11); the internal net's gate load as a capacitor.
    let text = deck(&["and2", "--summary"]);
    for name in ["a", "b"] {
        for edge in ["fall", "rise"] {
            assert!(text.contains(&format!(".meas tran tpd_{name}_{edge}_gate TRIG v(")), "{name} {edge}\n{text}");
            assert!(text.contains(&format!(".meas tran tpd_{name}_{edge}_stage TRIG v(x")), "{name} {edge}\n{text}");
        }
    }
    assert!(text.contains("* t3: b falling, output falling; held a=1; through y_n rise (MP2_y_n), y fall (MN1_y)"));
    assert!(text.contains("\nCG1 y_n vss "), "{text}");
    assert!(text.contains("cell delay (s), logical-effort estimate (s)"));
    // More pins than the vectors are enumerated for: refused before anything is written.
    let pins: Vec<String> = (0..17).map(|i| format!("x{i}")).collect();
    widthwise()
        .args(["deck", &format!("y = {}", pins.join(" & "))])
        .assert()
        .code(2)
        .stdout("")
        .stderr(predicates::str::contains("for cells of up to 16 pins; this one has 17"));
}
