//! The cell-level vector choice, worked by hand (docs/model.md sections 7 and 9).

use super::*;
use crate::sizing::plan::{Method, Plan};

fn transitions(text: &str, load: Load) -> (SizedCell, Vec<CellTransition>) {
    let plan = Plan {
        conditions: Conditions { load, diffusion_ratio: 1.0 },
        ..Plan::new(Method::LongestPath, 2.0, 1.0, None)
    };
    let cell = crate::sizing::size_best(&crate::logic::synthesize(text).unwrap(), &plan).unwrap();
    let found = cell_transitions(&cell, &plan.conditions, &Meter::unlimited()).unwrap();
    (cell, found)
}

fn find(found: &[CellTransition], pin: usize, edge: Edge) -> &CellTransition {
    found.iter().find(|t| t.pin == pin && t.edge == edge).unwrap()
}

#[test]
fn and2_b_falls_with_a_held_at_1() {
    // and2 at drive 1, mu = 2, diffusion ratio 1, fan-out 1: the NAND2 at drive 1/4 (every device
    // W/L 0.5: NMOS 2 R, PMOS 4 R) drives the inverter's 3 C. b toggles the output only with a = 1
    // (AND). b falling: y_n rises through MP2 (4 R) charging y_n (3 C + 1.5 C of drains) and the
    // node under MN1 (0.5 C): 20 RC; y falls through the inverter's NMOS (1 R) with 3 C of drains
    // and the 1 C load: 4 RC. 24 RC (the worked example of docs/model.md section 9).
    let (_, found) = transitions("and2", Load::Fanout(1.0));
    assert_eq!(found.len(), 4, "every pin on both edges");
    let fall = find(&found, 1, Edge::Fall);
    assert!(!fall.pin_rises());
    assert_eq!(fall.after, [true, false]);
    let steps: Vec<(usize, Edge, f64)> = fall.steps.iter().map(|s| (s.stage, s.edge, s.elmore)).collect();
    assert_eq!(steps.len(), 2);
    assert_eq!((steps[0].0, steps[0].1), (0, Edge::Rise));
    assert!((steps[0].2 - 20.0).abs() < 1e-9 && (steps[1].2 - 4.0).abs() < 1e-9, "{steps:?}");
    assert_eq!(fall.steps[0].conducting, ["MP2_y_n"]);
    assert!((fall.elmore - 24.0).abs() < 1e-9);
    assert!((fall.reference_elmore - 4.0).abs() < 1e-9);
    // NAND f = 3 / 0.75 = 4, p = 1.5 / 0.75 = 2; inverter f = 1 / 3, p = 1: 22/3 tau.
    assert!((fall.estimate_tau - 22.0 / 3.0).abs() < 1e-9);
    // b rising, a = 1: y_n falls through MN1 and MN2 (4 R), its 4.5 C through both and the node
    // between them (0.5 C) through MN2 (2 R): 19 RC; y rises through the PMOS (1 R), 4 C: 4 RC.
    let rise = find(&found, 1, Edge::Rise);
    assert!(rise.pin_rises());
    assert!((rise.elmore - 23.0).abs() < 1e-9, "{rise:?}");
    // Agrees with the per-stage worst rule where each stage has one vector that switches it.
    let timing = crate::timing::cell::time_cell(
        &transitions("and2", Load::Fanout(1.0)).0,
        &Conditions { load: Load::Fanout(1.0), diffusion_ratio: 1.0 },
        None,
        &Meter::unlimited(),
    )
    .unwrap();
    for delay in &timing.delays {
        let pin = if delay.input == "a" { 0 } else { 1 };
        assert!((find(&found, pin, delay.edge).elmore - delay.elmore_rc).abs() < 1e-9);
    }
}

#[test]
fn mux2_data_input_switches_with_the_select_holding_it_through() {
    // mux2 (y = a when s = 0, b when s = 1): s_n = !s; y_n = !(a & s_n | b & s); y = !y_n. Every
    // device of the logic stage W/L 0.5 (NMOS 2 R) or 1 (PMOS 2 R). a moves y only with s = 0.
    let (cell, found) = transitions("mux2", Load::Fanout(1.0));
    assert_eq!(cell.logic.inputs, ["a", "b", "s"]);
    for transition in found.iter().filter(|t| t.pin == 0) {
        assert!(!transition.after[2], "a passes only with s = 0: {transition:?}");
    }
    for transition in found.iter().filter(|t| t.pin == 1) {
        assert!(transition.after[2], "b passes only with s = 1: {transition:?}");
    }
    // a rising, s = 0: y_n falls through MN1 and MN2 (4 R from y_n to the rail). y_n holds the
    // inverter's 3 C and 3 C of drains (MN1, MN3 0.5; MP1, MP2 1): 24 RC. The node between MN1 and
    // MN2 already sits at 0 (MN2 is on before the switch) and adds nothing. With b = 1 the node
    // under MN3 (0.5 C, charged through MN3 before) hangs off y_n and discharges through its 4 R:
    // 2 RC more, so b = 1 is the worse vector (the side branch of docs/model.md section 7): 26 RC.
    // Then y rises through the PMOS (1 R): 3 C of drains and the 1.5 C load of a's pin: 4.5 RC.
    let rise = find(&found, 0, Edge::Rise);
    assert!(rise.pin_rises());
    assert_eq!(rise.after, [true, true, false]);
    assert!((rise.steps[0].elmore - 26.0).abs() < 1e-9, "{rise:?}");
    assert!((rise.elmore - 30.5).abs() < 1e-9, "{rise:?}");
    // The select, output falling: s rising with a = 1, b = 0 moves y from 1 to 0, but y_n changes
    // only when s_n falls (with s = 1 and s_n still 1, a & s_n holds it): the input inverter's step
    // comes first, three steps. s falling with a = 0, b = 1 also makes y fall, switching y_n at once
    // on s through MP1 and MP4, two steps: faster here.
    let fall = find(&found, 2, Edge::Fall);
    assert_eq!(fall.after, [true, false, true], "{fall:?}");
    assert_eq!(fall.steps.iter().map(|s| s.stage).collect::<Vec<_>>(), [0, 1, 2]);
    assert_eq!(cell.stages[1].function.inputs[fall.steps[1].input], "s_n");
    // Output rising: s rising with a = 0, b = 1 switches y_n at once on s, through MN3 and MN4
    // (4 R): y_n's 6 C, 24 RC; the node between MP1 and the parallel MP3 | MP4 (four drains of
    // W/L 1: 4 C, at the supply before the switch) joins y_n through MP1 (a = 0) and discharges
    // through the same 4 R, 16 RC; the node between MN3 and MN4 (0.5 C, charged through MN3
    // before) through MN4 (2 R), 1 RC: 41 RC, more than the three-step chain of s falling with
    // a = 1, b = 0, whose logic stage falls through MN1 and MN2 with no side node (24 RC) after
    // the inverter's step.
    let rise = find(&found, 2, Edge::Rise);
    assert_eq!(rise.after, [false, true, true], "{rise:?}");
    assert_eq!(rise.steps.len(), 2);
    assert!((rise.steps[0].elmore - 41.0).abs() < 1e-9, "{rise:?}");
}

#[test]
fn xor2_steps_add_up_and_end_at_the_output() {
    // Every pin of an XOR toggles the output under every vector of the other (Boolean algebra;
    // common practice, no source): both edges of both pins, each a chain ending at the output stage.
    let (cell, found) = transitions("xor2", Load::Units(4.0));
    assert_eq!(found.len(), 4);
    for transition in &found {
        let sum: f64 = transition.steps.iter().map(|s| s.elmore).sum();
        assert!((sum - transition.elmore).abs() < 1e-9);
        assert_eq!(transition.output_step().stage, cell.stages.len() - 1);
        assert!(transition.steps.windows(2).all(|w| w[0].stage < w[1].stage));
    }
}

#[test]
fn too_many_pins_are_refused() {
    let plan = Plan::new(Method::LongestPath, 2.0, 1.0, None);
    let wide = crate::logic::synthesize("a&b&c&d&e&f&g&h&i&j&k&l&m&n&o&p&q").unwrap();
    let cell = crate::sizing::size_best(&wide, &plan).unwrap();
    let error = cell_transitions(&cell, &plan.conditions, &Meter::unlimited()).unwrap_err();
    assert_eq!(error, TimingError::TooManyPins { count: 17, limit: MAX_CELL_PINS });
}

#[test]
fn one_vector_is_never_slower_than_the_per_stage_bound() {
    // Each step is one of its stage's switching vectors for that input and edge, at the same load,
    // so its delay is at most the stage's worst, and the chain is one of the paths the bound takes
    // the largest sum over (docs/model.md section 9).
    for text in ["xor2", "mux2", "maj3", "a ^ b ^ c", "ao22"] {
        let conditions = Conditions { load: Load::Fanout(2.0), diffusion_ratio: 1.0 };
        let plan = Plan { conditions, ..Plan::new(Method::LongestPath, 2.0, 1.0, None) };
        let cell = crate::sizing::size_best(&crate::logic::synthesize(text).unwrap(), &plan).unwrap();
        let found = cell_transitions(&cell, &conditions, &Meter::unlimited()).unwrap();
        let bound = crate::timing::cell::time_cell(&cell, &conditions, None, &Meter::unlimited()).unwrap();
        assert_eq!(found.len(), bound.delays.len(), "{text}");
        for transition in &found {
            let pin = &cell.logic.inputs[transition.pin];
            let held = bound.delays.iter().find(|d| &d.input == pin && d.edge == transition.edge).unwrap();
            assert!(transition.elmore <= held.elmore_rc * (1.0 + 1e-9), "{text} {pin}: {transition:?} above {held:?}");
        }
    }
}
