//! `widthwise size --method elmore`, `--delay-target` and `--tradeoff` on the cases a new user
//! met (issue: the method refused repeated inputs and forced absurd sizes at light loads), and the
//! warnings and exit codes of docs/model.md section 12.

use predicates::prelude::*;

use super::widthwise;

fn json(args: &[&str]) -> serde_json::Value {
    let output = widthwise().args(args).output().unwrap();
    assert!(output.status.success(), "{args:?}: {}", String::from_utf8_lossy(&output.stderr));
    serde_json::from_slice(&output.stdout).unwrap()
}

/// Total W/L of each method in the size report, in the order longest-path, min-area, elmore.
fn totals(gate: &serde_json::Value) -> Vec<f64> {
    gate["method_comparison"].as_array().unwrap().iter().map(|m| m["total_w_over_l"].as_f64().unwrap()).collect()
}

#[test]
fn repeated_inputs_are_sized() {
    // The carry, the mirror adder's sum stage (its carry input as d) and !(a & b | a & c) were
    // refused: every path is now constrained as if it conducted alone (docs/model.md section 12).
    for text in ["!(a & b | c & (a | b))", "!(a & b & c | d & (a | b | c))", "!(a & b | a & c)"] {
        let gate = json(&["size", text, "--method", "elmore", "--format", "json"]);
        let totals = totals(&gate);
        // The default target is longest-path's ratio: never more area than longest-path.
        assert!(totals[2] <= totals[0] * (1.0 + 1e-7), "{text}: {totals:?}");
    }
}

#[test]
fn light_loads_no_longer_force_absurd_sizes() {
    // NAND2 at fan-out 1 took 159 W/L against longest-path's 8; AOI222 at fan-out 4, 1,249 against
    // 48 with a 20-finger PMOS; NOR2 at h = 0.1, 73 against 10. By default the target is the ratio
    // longest-path reaches, so longest-path's widths are feasible and the optimum is at most theirs.
    for (text, fanout) in [("nand2", "1"), ("aoi222", "4"), ("nor2", "0.1")] {
        let gate = json(&["size", text, "--method", "elmore", "--fanout", fanout, "--format", "json"]);
        let totals = totals(&gate);
        assert!(totals[2] <= totals[0] * (1.0 + 1e-7), "{text}: {totals:?}");
        assert!(gate["delay_target_is_default"].as_bool().unwrap());
        let elmore = &gate["method_comparison"][2];
        assert_eq!(elmore["meets_delay_target"], true, "{text}: {elmore}");
        for device in gate["transistors"].as_array().unwrap() {
            assert_eq!(device["fingers"], 1, "{text}: {device}");
        }
    }
    // NOR2 at h = 0.1 says its h is below 1.
    widthwise()
        .args(["size", "nor2", "--method", "elmore", "--fanout", "0.1"])
        .assert()
        .success()
        .stderr(predicate::str::contains("warning: h is below 1 (least 0.1, at inputs 'a', 'b')"));
}

#[test]
fn an_explicit_target_is_met_or_exit_1_names_the_best_ratio() {
    let gate = json(&["size", "nand2", "--method", "elmore", "--delay-target", "1.2", "--format", "json"]);
    assert!((gate["delay_target"].as_f64().unwrap() - 1.2).abs() < 1e-12);
    for delay in gate["delays"].as_array().unwrap() {
        assert!(delay["delay_ratio"].as_f64().unwrap() <= 1.2 * (1.0 + 1e-6), "{delay}");
    }
    // A tight target costs area: more than 3 x longest-path's carries a warning.
    widthwise()
        .args(["size", "nand2", "--method", "elmore", "--delay-target", "0.5"])
        .assert()
        .success()
        .stderr(predicate::str::contains("times longest-path's 8"));
    // Below what 10 x longest-path's area reaches: exit 1, the best ratio within the cap named, no
    // output.
    widthwise()
        .args(["size", "nand2", "--method", "elmore", "--delay-target", "0.1"])
        .assert()
        .code(1)
        .stdout(predicate::str::is_empty())
        .stderr(predicate::str::contains("within 10 times the longest-path total W/L (80 W/L)"))
        .stderr(predicate::str::contains("the best ratio reached within it is 0.24"));
    // The target belongs to the elmore method.
    widthwise()
        .args(["size", "nand2", "--delay-target", "2"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("--delay-target"));
    widthwise().args(["size", "nand2", "--method", "elmore", "--delay-target", "0"]).assert().code(2);
}

#[test]
fn the_tradeoff_in_every_format() {
    let table = widthwise().args(["size", "nand2", "--tradeoff"]).output().unwrap();
    assert!(table.status.success());
    let text = String::from_utf8(table.stdout).unwrap();
    assert!(text.contains("delay ratio: worst Elmore delay / the reference inverter's at the same load"), "{text}");
    assert!(text.contains("cap 80 W/L"), "{text}");
    let csv = widthwise().args(["size", "nand2", "--tradeoff", "--format", "csv"]).output().unwrap();
    let mut reader = csv::Reader::from_reader(csv.stdout.as_slice());
    assert_eq!(reader.headers().unwrap(), vec!["gate", "point", "delay_target", "total_w_over_l", "worst_delay_ratio"]);
    assert_eq!(reader.records().count(), 12 + 2);
    let curve = json(&["size", "aoi21", "--tradeoff", "--fanout", "4", "--format", "json"]);
    let points = curve["points"].as_array().unwrap();
    let methods = curve["methods"].as_array().unwrap();
    assert_eq!(methods[0]["method"], "longest-path");
    assert_eq!(methods[1]["method"], "min-area");
    // The slow end is longest-path's ratio, and the curve falls as the target grows.
    let last = points.last().unwrap();
    assert!(
        (last["delay_target"].as_f64().unwrap() / methods[0]["worst_delay_ratio"].as_f64().unwrap() - 1.0).abs() < 1e-9
    );
    for pair in points.windows(2) {
        assert!(
            pair[1]["total_w_over_l"].as_f64().unwrap() <= pair[0]["total_w_over_l"].as_f64().unwrap() * (1.0 + 1e-9)
        );
    }
    let svg = widthwise().args(["size", "nand2", "--tradeoff", "--format", "svg"]).output().unwrap();
    let svg = String::from_utf8(svg.stdout).unwrap();
    assert!(svg.starts_with("<?xml") && svg.contains("total W/L (unit-NMOS W/L)"));
    assert!(svg.contains("longest-path rule = min-area") && svg.contains("fastest within the cap"));
    // Without --tradeoff the SVG is the cell's schematic, not a plot.
    let schematic = widthwise().args(["size", "nand2", "--format", "svg"]).output().unwrap();
    let schematic = String::from_utf8(schematic.stdout).unwrap();
    assert!(schematic.starts_with("<?xml") && !schematic.contains("total W/L (unit-NMOS W/L)"));
    // What does not apply is refused.
    for args in [
        &["size", "nand2", "--tradeoff", "--format", "spice"][..],
        &["size", "nand2", "--tradeoff", "--method", "elmore", "--delay-target", "2"],
        &["size", "xor2", "--tradeoff"],
        &["size", "nand2", "--tradeoff", "--method", "elmore", "--worst-case", "vectors"],
    ] {
        widthwise().args(args).assert().code(2).stdout(predicate::str::is_empty());
    }
}

#[test]
fn a_device_drawn_well_above_its_sized_width_is_named() {
    // At drive 0.1 every device is sized 0.2 W/L and drawn at the process's minimum width, 0.5 um
    // over a unit width of 1 um: 150% above.
    widthwise()
        .args(["size", "nand2", "--drive", "0.1"])
        .assert()
        .success()
        .stderr(predicate::str::contains("warning: MN1 is drawn at W/L 0.5, 150% above its sized 0.2"));
    widthwise().args(["size", "nand2"]).assert().success().stderr(predicate::str::is_empty());
}

#[test]
fn the_deck_is_sized_for_its_own_load() {
    // deck --method elmore sizes against the load it simulates: its widths are size's at that load.
    let gate = json(&["size", "nand2", "--method", "elmore", "--fanout", "4", "--format", "json"]);
    let deck = widthwise().args(["deck", "nand2", "--method", "elmore", "--fanout", "4"]).output().unwrap();
    let deck = String::from_utf8(deck.stdout).unwrap();
    for device in gate["transistors"].as_array().unwrap() {
        let line = format!("{} ", device["name"].as_str().unwrap());
        let width = widthwise::number::format(device["drawn_width_um"].as_f64().unwrap());
        let found = deck.lines().find(|l| l.starts_with(&line)).unwrap();
        assert!(found.contains(&format!("W={width}u")), "{found} vs {width}");
    }
}

#[test]
fn against_every_vector_the_target_holds_on_every_vector() {
    // The sum stage of a mirror adder (its carry input as d): over paths, a transition where two
    // paths conduct at once is left out and ends at 4.49 against longest-path's 4.33. Against every
    // vector (a sequence of convex approximations, docs/model.md section 12) every worst transition
    // (section 7's rule over every vector) meets the target, and the area stays below longest-path's.
    let text = "!(a & b & c | d & (a | b | c))";
    let paths = json(&["size", text, "--method", "elmore", "--format", "json"]);
    let target = paths["delay_target"].as_f64().unwrap();
    let worst = |gate: &serde_json::Value| {
        gate["delays"].as_array().unwrap().iter().map(|d| d["delay_ratio"].as_f64().unwrap()).fold(0.0, f64::max)
    };
    assert!(worst(&paths) > target * 1.01, "{}", worst(&paths));
    let vectors = json(&["size", text, "--method", "elmore", "--worst-case", "vectors", "--format", "json"]);
    assert!(worst(&vectors) <= target * (1.0 + 1e-6), "{} against {target}", worst(&vectors));
    let totals = totals(&vectors);
    assert!(totals[2] <= totals[0], "{totals:?}");
    widthwise()
        .args(["size", text, "--method", "elmore", "--worst-case", "vectors"])
        .assert()
        .success()
        .stdout(predicate::str::contains("elmore sizing against every input vector (a local optimum)"));
}
