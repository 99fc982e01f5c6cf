//! Cells of several stages against published logical efforts and the trade's rules: the logic
//! stage's logical effort per true-plus-complement input pair, the output stage against the
//! reference inverter at the cell's drive, and the written netlist computing the function at switch
//! level.

use approx::assert_relative_eq;
use widthwise::cell::SizedCell;
use widthwise::figures::CellFigures;
use widthwise::logic::{CellLogic, Form, PullUpSpec, StageRole, synthesize};
use widthwise::sizing::{self, Method, Plan};
use widthwise::verify::{VerifyOptions, verify};

fn form(text: &str, which: Form) -> CellLogic {
    synthesize(text).unwrap().into_iter().find(|c| c.form == which).unwrap()
}

fn sized(logic: &CellLogic, drive: f64) -> SizedCell {
    sizing::size(logic, &Plan::new(Method::LongestPath, 2.0, drive, None)).unwrap()
}

/// Logical effort of the logic stage per input pin, its true and complement nets taken together
/// (complements supplied), at the stage's own drive.
fn pair_effort(cell: &SizedCell, pin: &str) -> f64 {
    let figures = CellFigures::of(cell);
    let logic = figures.stages.iter().find(|s| s.role == "logic").unwrap();
    let complement = cell.logic.complement_net(cell.logic.inputs.iter().position(|p| p == pin).unwrap());
    logic.inputs.iter().filter(|i| i.net == pin || Some(i.net.as_str()) == complement).map(|i| i.logical_effort).sum()
}

#[test]
fn logical_effort_per_input_pair_matches_the_published_table() {
    // Sutherland, Sproull & Harris 1999, "Logical Effort", table 4.1 (from memory): XOR2 4 and XOR3 12
    // per true-plus-complement pair with complements supplied (complementary sum-of-products pull-up);
    // the multiplexer's data input 2.
    for which in [Form::Direct, Form::Inverted] {
        let xor2 = sized(&form("xor2", which), 1.0);
        for pin in ["a", "b"] {
            assert_relative_eq!(pair_effort(&xor2, pin), 4.0, epsilon = 1e-12);
        }
    }
    // XOR3's pull-up as the sum of products of the odd-parity vectors (each PMOS on at 0): three in
    // series on every path, as the pull-down.
    let sop = "a_n & b & c | a & b_n & c | a & b & c_n | a_n & b_n & c_n";
    let xor3 = form("xor3", Form::Direct).with_pull_up(PullUpSpec::Written(sop)).unwrap();
    let xor3 = sized(&xor3, 1.0);
    for pin in ["a", "b", "c"] {
        assert_relative_eq!(pair_effort(&xor3, pin), 12.0, epsilon = 1e-12);
    }
    // The dual of the pull-down (four parallel groups in series) is not that pull-up: 44/3.
    let dual = sized(&form("xor3", Form::Direct), 1.0);
    assert_relative_eq!(pair_effort(&dual, "a"), 44.0 / 3.0, epsilon = 1e-12);
    let mux = sized(&form("mux2i", Form::Direct), 1.0);
    for pin in ["a", "b"] {
        assert_relative_eq!(pair_effort(&mux, pin), 2.0, epsilon = 1e-12);
    }
}

#[test]
fn a_complex_output_stage_drives_like_the_reference_inverter() {
    // Every conducting path of the output stage at most the reference inverter's resistance at the
    // cell's drive, 1/D in units of R on both sides (docs/model.md sections 2 and 5), and the
    // weakest equal to it (longest-path rule).
    let cases = [("xor2", Form::Direct), ("mux2i", Form::Direct), ("!(a & b | c & (a | b))", Form::Direct)];
    for (text, which) in cases {
        for drive in [1.0, 2.0] {
            let cell = sized(&form(text, which), drive);
            assert_eq!(cell.stage().role, StageRole::Logic, "{text}: the output stage is complex");
            let figures = CellFigures::of(&cell);
            for network in &figures.networks {
                assert_relative_eq!(network.target_resistance, 1.0 / drive, epsilon = 1e-12);
                assert_relative_eq!(network.worst_resistance, 1.0 / drive, epsilon = 1e-12);
            }
        }
    }
    // maj3 is non-inverting: its complex stage is the inverting majority, sized at its own drive d
    // (its load over F C_inv), where its weakest path is 1/d.
    let maj3 = sized(&form("maj3", Form::Inverted), 2.0);
    let logic = &maj3.stages[0];
    assert_eq!(logic.role, StageRole::Logic);
    let paths = widthwise::figures::path_listings(&maj3, 1);
    for listing in paths.iter().filter(|l| l.stage == logic.function.output) {
        assert_relative_eq!(listing.paths[0].resistance, 1.0 / logic.drive, epsilon = 1e-12);
    }
}

#[test]
fn an_earlier_stage_bears_the_stage_effort() {
    // C_in = g C_out / F (the stage-effort rule, docs/model.md section 9): each unclamped earlier
    // stage's effort f = g h is F, at F = 4 (common practice, no source) and at F = 3.
    for effort in [4.0, 3.0] {
        let plan = Plan { stage_effort: effort, ..Plan::new(Method::LongestPath, 2.0, 16.0, None) };
        for text in ["and2", "xor2", "mux2", "maj3", "a & !b | !a & b & c"] {
            for logic in synthesize(text).unwrap() {
                let cell = sizing::size(&logic, &plan).unwrap();
                let figures = CellFigures::of(&cell);
                for stage in &figures.stages[..figures.stages.len() - 1] {
                    assert!(!stage.clamped, "{text}: drive 16 clamps nothing");
                    assert_relative_eq!(stage.effort, effort, epsilon = 1e-9);
                    for input in &stage.inputs {
                        assert_relative_eq!(input.logical_effort * input.electrical_effort, effort, epsilon = 1e-9);
                    }
                }
            }
        }
    }
}

#[test]
fn every_shorthand_cell_passes_verification_of_its_written_netlist() {
    // Switch-level: every stage's output driven, never fighting, the output the function on every
    // vector (common practice, no source).
    for text in [
        "buf", "and2", "and8", "or2", "or8", "ao21", "ao22", "oa21", "oa22", "xor2", "xnor2", "xor3", "mux2", "mux2i",
        "maj3",
    ] {
        for logic in synthesize(text).unwrap() {
            let figures = CellFigures::of(&sized(&logic, 1.0));
            let options = VerifyOptions { threads: 1, ..VerifyOptions::default() };
            let result = verify(&figures, &options).unwrap();
            assert!(result.passed, "{text} {:?}: {:?}", logic.form, result.failure);
        }
    }
}
