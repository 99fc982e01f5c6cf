//! The min-area optimum against scipy's SLSQP (scipy from PyPI, run by
//! `tests/reference/scipy_min_area.py`, which finds the paths itself from the netlist).

use widthwise::figures::CellFigures;
use widthwise::{Method, Plan, size_text};

use super::support::{note, scipy_available};

/// Gates whose min-area optimum differs from longest-path (unequal parallel structure in series),
/// and some where they agree.
const GATES: [&str; 10] = [
    "!(a & (b | c))",
    "aoi21",
    "oai21",
    "aoi221",
    "oai211",
    "!((a | b | c) & (d | e) & f)",
    "!(a & (b | c & (d | e)))",
    "!((a & b | c) & (d | e & f))",
    "!(a & b & (c | d | e & f))",
    "!(a & (b | c) | d & (e | f | g))",
];

#[test]
fn min_area_matches_slsqp() {
    if !scipy_available("min_area_matches_slsqp") {
        return;
    }
    let plan = Plan::new(Method::MIN_AREA, 2.0, 1.0, None);
    let gates: Vec<_> = GATES.iter().map(|text| CellFigures::of(&size_text(text, &plan).unwrap())).collect();
    let input = serde_json::to_vec(&gates).unwrap();
    let lines = crate::support::run_scipy("scipy_min_area.py", &input);
    assert_eq!(lines.len(), 2 * GATES.len());
    let mut largest = 0.0f64;
    for (line, (gate, network)) in lines.iter().zip(gates.iter().flat_map(|g| g.networks.iter().map(move |n| (g, n)))) {
        assert_eq!(line["network"], network.network.name());
        assert!(line["scipy_success"].as_bool().unwrap(), "{line}");
        let scipy = line["scipy_area"].as_f64().unwrap();
        let ours = network.total_w_over_l;
        let difference = (ours - scipy) / scipy;
        largest = largest.max(difference.abs());
        // Ours is the exact optimum: never worse than the solver's by more than its tolerance,
        // and every path of scipy's answer within target.
        assert!(difference.abs() < 1e-5, "{} {}: ours {ours}, scipy {scipy}", gate.expression, line["network"]);
        assert!(line["scipy_worst_over_target"].as_f64().unwrap() < 1.0 + 1e-6);
        // Its path count, found from the netlist, matches ours.
        assert_eq!(line["paths"].as_u64().unwrap().to_string(), network.path_count);
    }
    note(&format!("min-area against scipy SLSQP: {} networks, largest relative difference {largest:.2e}", lines.len()));
}
