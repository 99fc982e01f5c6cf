//! The stage-effort sizing of a chain of stages against scipy: with the first stage's input
//! capacitance and the output stage fixed, scipy's minimisation of the path's sum(g h + p) over the
//! inner stages' sizes (run by `tests/reference/scipy_stage_effort.py`, which reads the written
//! netlist itself) lands on the tool's sizes.

use std::io::Write as _;
use std::sync::Arc;

use widthwise::figures::CellFigures;
use widthwise::logic::{StageRole, synthesize};
use widthwise::output::spice;
use widthwise::sizing::{self, Method, Plan};

use super::support::{note, scipy_available};

/// Chains of three stages (an input inverter, a logic stage, an output inverter): the cell and
/// the nets of the path from the pin through them (xnor2's other complement is off the path).
const CHAINS: [(&str, [&str; 4]); 4] = [
    ("mux2", ["s", "s_n", "y_n", "y"]),
    ("!a & b & c", ["a", "a_n", "y_n", "y"]),
    ("a & !b", ["b", "b_n", "y_n", "y"]),
    ("xnor2", ["a", "a_n", "y_n", "y"]),
];

#[test]
fn inner_stage_sizes_minimise_the_path_delay() {
    // Sutherland, Sproull & Harris 1999, "Logical Effort", ch. 1 (from memory): the delay of a path
    // of stages, sum(g h + p), is least when every stage bears the same effort; with the ends fixed
    // that is what sizing each earlier stage at the stage effort F gives. scipy (PyPI) minimises
    // the sum numerically from the written netlist.
    if !scipy_available("inner_stage_sizes_minimise_the_path_delay") {
        return;
    }
    let mut input = Vec::new();
    let mut cases = Vec::new();
    for (text, path) in CHAINS {
        for (drive, effort) in [(16.0, 4.0), (32.0, 3.0), (64.0, 5.0)] {
            let mut plan = Plan { stage_effort: effort, ..Plan::new(Method::LongestPath, 2.0, drive, None) };
            // The finest grid a process takes, so the written widths are the sized ones to 1e-7.
            let mut process = (*plan.process).clone();
            process.grid_nm = 0.001;
            plan.process = Arc::new(process);
            // The form that ends in an output inverter: the path runs complement, logic, output.
            let cell = synthesize(text)
                .unwrap()
                .iter()
                .map(|logic| sizing::size(logic, &plan).unwrap())
                .find(|cell| cell.stages.last().unwrap().role == StageRole::OutputInverter)
                .unwrap_or_else(|| panic!("{text} has a form with an output inverter"));
            let figures = CellFigures::of(&cell);
            let nets: Vec<&str> = figures.stages.iter().map(|s| s.stage.as_str()).collect();
            assert!(path[1..].iter().all(|net| nets.contains(net)), "{text}: stages {nets:?}");
            assert_eq!(figures.stages[0].role, "complement", "{text}");
            assert!(figures.stages.iter().all(|s| !s.clamped), "{text} at drive {drive}: no stage clamped");
            let mut netlist = Vec::new();
            spice::write_subcircuit(&figures, &plan.process, &mut netlist).unwrap();
            let problem = serde_json::json!({
                "netlist": String::from_utf8(netlist).unwrap(),
                "path": path,
                "mobility": 2.0,
            });
            writeln!(input, "{problem}").unwrap();
            cases.push(format!("{text} at drive {drive}, F = {effort}"));
        }
    }
    let lines = crate::support::run_scipy("scipy_stage_effort.py", &input);
    assert_eq!(lines.len(), cases.len());
    let mut largest = 0.0f64;
    for (line, case) in lines.iter().zip(&cases) {
        assert!(line["scipy_success"].as_bool().unwrap(), "{case}: {line}");
        let scales = line["scales"].as_array().unwrap();
        assert_eq!(scales.len(), 1, "{case}: one inner stage");
        for scale in scales {
            // The tool's inner stage is at scale 1: scipy's optimum within 1e-6 relative.
            let scale = scale.as_f64().unwrap();
            largest = largest.max((scale - 1.0).abs());
            assert!((scale - 1.0).abs() < 1e-6, "{case}: scipy's inner-stage scale {scale}, the tool's 1");
        }
        let (tool, scipy) = (line["delay_tool"].as_f64().unwrap(), line["delay_scipy"].as_f64().unwrap());
        assert!(tool <= scipy * (1.0 + 1e-9), "{case}: the tool's path delay {tool}, scipy's {scipy}");
    }
    note(&format!(
        "stage effort against scipy BFGS: {} chains, largest relative difference of an inner stage's size {largest:.2e}",
        cases.len()
    ));
}
