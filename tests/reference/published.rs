//! Widths, logical effort and parasitic delay against published tables and facts of the trade.

use approx::assert_relative_eq;
use widthwise::figures::CellFigures;
use widthwise::network::NetworkKind;
use widthwise::{Method, Plan, size_text};

fn sized(text: &str, method: Method, mobility_ratio: f64) -> CellFigures {
    CellFigures::of(&size_text(text, &Plan::new(method, mobility_ratio, 1.0, None)).unwrap())
}

fn widths(gate: &CellFigures, kind: NetworkKind) -> Vec<f64> {
    gate.transistors.iter().filter(|t| t.network == kind).map(|t| t.w_over_l).collect()
}

#[test]
fn nand_and_nor_widths() {
    // mu = 2, drive 1: a series stack of n devices each n times wider; parallel devices sized for
    // one of them on alone (common practice, no source).
    let nand2 = sized("nand2", Method::LongestPath, 2.0);
    assert_eq!(widths(&nand2, NetworkKind::PullDown), [2.0, 2.0]);
    assert_eq!(widths(&nand2, NetworkKind::PullUp), [2.0, 2.0]);
    let nand3 = sized("nand3", Method::LongestPath, 2.0);
    assert_eq!(widths(&nand3, NetworkKind::PullDown), [3.0, 3.0, 3.0]);
    assert_eq!(widths(&nand3, NetworkKind::PullUp), [2.0, 2.0, 2.0]);
    let nor2 = sized("nor2", Method::LongestPath, 2.0);
    assert_eq!(widths(&nor2, NetworkKind::PullDown), [1.0, 1.0]);
    assert_eq!(widths(&nor2, NetworkKind::PullUp), [4.0, 4.0]);
    // Best case of the NAND2 pull-up: both PMOS on, R/2 (common practice, no source).
    assert_relative_eq!(nand2.networks[1].best_resistance, 0.5, epsilon = 1e-12);
}

#[test]
fn nand_logical_effort_and_parasitic_delay() {
    // NAND n, mu = 2: g = (n + 2) / 3, p = n (Sutherland, Sproull & Harris, "Logical Effort", 1999, ch. 4)
    for n in 2..=4 {
        let gate = sized(&format!("nand{n}"), Method::LongestPath, 2.0);
        for input in &gate.inputs {
            assert_relative_eq!(input.logical_effort, (n as f64 + 2.0) / 3.0, epsilon = 1e-12);
        }
        assert_relative_eq!(gate.parasitic_delay, n as f64, epsilon = 1e-12);
    }
}

#[test]
fn nor_logical_effort_and_parasitic_delay() {
    // NOR n, mu = 2: g = (2n + 1) / 3, p = n (Sutherland, Sproull & Harris, "Logical Effort", 1999, ch. 4)
    for n in 2..=4 {
        let gate = sized(&format!("nor{n}"), Method::LongestPath, 2.0);
        for input in &gate.inputs {
            assert_relative_eq!(input.logical_effort, (2.0 * n as f64 + 1.0) / 3.0, epsilon = 1e-12);
        }
        assert_relative_eq!(gate.parasitic_delay, n as f64, epsilon = 1e-12);
    }
}

#[test]
fn general_mobility_ratio_forms() {
    // NAND n: g = (n + mu) / (1 + mu); NOR n: g = (1 + n mu) / (1 + mu)
    // (Sutherland, Sproull & Harris, "Logical Effort", 1999, ch. 4; the mu form from memory)
    for mu in [2.5, 3.0] {
        for n in 2..=4 {
            let nf = n as f64;
            let nand = sized(&format!("nand{n}"), Method::LongestPath, mu);
            let nor = sized(&format!("nor{n}"), Method::LongestPath, mu);
            assert_relative_eq!(nand.inputs[0].logical_effort, (nf + mu) / (1.0 + mu), epsilon = 1e-12);
            assert_relative_eq!(nor.inputs[0].logical_effort, (1.0 + nf * mu) / (1.0 + mu), epsilon = 1e-12);
        }
    }
}

#[test]
fn aoi21_and_aoi22() {
    // AOI21: g = 2, 2, 5/3 and p = 7/3 with the OR input's PMOS at the output; AOI22: g = 2, p = 4
    // (Weste & Harris, "CMOS VLSI Design", logical-effort table; from memory)
    let aoi21 = sized("aoi21", Method::LongestPath, 2.0);
    let efforts: Vec<f64> = aoi21.inputs.iter().map(|i| i.logical_effort).collect();
    for (effort, expected) in efforts.iter().zip([2.0, 2.0, 5.0 / 3.0]) {
        assert_relative_eq!(*effort, expected, epsilon = 1e-12);
    }
    assert_relative_eq!(aoi21.parasitic_delay, 7.0 / 3.0, epsilon = 1e-12);
    let or_input_pmos = aoi21.transistors.iter().find(|t| t.device_type == "pmos" && t.input == "c").unwrap();
    assert_eq!(or_input_pmos.drain, "y");

    let aoi22 = sized("aoi22", Method::LongestPath, 2.0);
    for input in &aoi22.inputs {
        assert_relative_eq!(input.logical_effort, 2.0, epsilon = 1e-12);
    }
    assert_relative_eq!(aoi22.parasitic_delay, 4.0, epsilon = 1e-12);
}

#[test]
fn min_area_worked_example() {
    // mu = 2, pull-down a in series with (b || c): K = (1 + sqrt 2)^2 = 5.828; a = 2.414,
    // b = c = 1.707; longest-path gives 2, 2, 2 (worked example: Lagrange / Cauchy-Schwarz on
    // sum K_i / B_i with sum B_i = B; the figures to three decimals checked by hand)
    let gate = sized("!(a & (b | c))", Method::MIN_AREA, 2.0);
    let down = widths(&gate, NetworkKind::PullDown);
    assert_relative_eq!(down[0], 2.414, epsilon = 5e-4);
    assert_relative_eq!(down[1], 1.707, epsilon = 5e-4);
    assert_relative_eq!(down[2], 1.707, epsilon = 5e-4);
    assert_relative_eq!(gate.networks[0].total_w_over_l, 5.828, epsilon = 5e-4);
    let longest = sized("!(a & (b | c))", Method::LongestPath, 2.0);
    assert_eq!(widths(&longest, NetworkKind::PullDown), [2.0, 2.0, 2.0]);
}

#[test]
fn methods_agree_on_equal_parallel_structure() {
    // For series stacks of equal parallel structure (NAND, NOR, AOI22 ...) both methods agree
    // (follows from the closed form: equal K_i give equal budgets; common practice, no source).
    for text in ["nand2", "nand4", "nor3", "aoi22", "oai22", "aoi33", "oai222"] {
        let longest = sized(text, Method::LongestPath, 2.0);
        let min = sized(text, Method::MIN_AREA, 2.0);
        for (a, b) in longest.transistors.iter().zip(&min.transistors) {
            assert_relative_eq!(a.w_over_l, b.w_over_l, epsilon = 1e-12);
        }
    }
}

#[test]
fn drive_scales_widths_not_efforts() {
    // A gate of drive d is d unit gates in parallel: widths scale by d, logical effort and
    // parasitic delay do not (Sutherland, Sproull & Harris, "Logical Effort", 1999, ch. 1; from memory).
    let unit = sized("aoi21", Method::LongestPath, 2.0);
    let x4 = CellFigures::of(&size_text("aoi21", &Plan::new(Method::LongestPath, 2.0, 4.0, None)).unwrap());
    for (a, b) in unit.transistors.iter().zip(&x4.transistors) {
        assert_relative_eq!(4.0 * a.w_over_l, b.w_over_l, epsilon = 1e-12);
    }
    for (a, b) in unit.inputs.iter().zip(&x4.inputs) {
        assert_relative_eq!(a.logical_effort, b.logical_effort, epsilon = 1e-12);
    }
    assert_relative_eq!(unit.parasitic_delay, x4.parasitic_delay, epsilon = 1e-12);
    assert_relative_eq!(x4.networks[0].worst_resistance, 0.25, epsilon = 1e-12);
}
