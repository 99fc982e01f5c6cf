//! The elmore method's delay target and trade-off (docs/model.md section 12) against scipy's SLSQP
//! on the same geometric programs (scipy from PyPI, run by python3 through `delay::scipy`), and the
//! properties the model states: the default target never costs more than the longest-path rule, and
//! the curve falls as the target grows.

use widthwise::budget::Meter;
use widthwise::logic::read_cell;
use widthwise::optimize::geometric::Program;
use widthwise::size_text;
use widthwise::sizing::target::Goal;
use widthwise::sizing::tradeoff::tradeoff;
use widthwise::sizing::{Conditions, Load, Method, Plan, elmore};

use super::delay::scipy;
use super::support::{note, scipy_available};

/// Gates without repeated inputs (every path conducts alone, so the program is exactly the paths
/// one, no cuts), at fixed loads (the bound is a constant: a geometric program as it stands).
const CASES: [(&str, f64, f64); 6] = [
    ("nand2", 8.0, 1.0),
    ("nand3", 20.0, 1.0),
    ("nor2", 10.0, 0.5),
    ("aoi21", 12.0, 1.0),
    ("oai22", 30.0, 0.7),
    ("!(a & (b | c))", 15.0, 1.0),
];

fn plan(method: Method, load: f64, diffusion_ratio: f64) -> Plan {
    Plan { conditions: Conditions { load: Load::Units(load), diffusion_ratio }, ..Plan::new(method, 2.0, 1.0, None) }
}

fn total(cell: &widthwise::cell::SizedCell) -> f64 {
    cell.stage().networks.values().flat_map(|n| &n.widths).sum()
}

#[test]
fn the_default_target_never_costs_more_than_longest_path() {
    // The default target is the ratio the longest-path widths reach, so they are a feasible point of
    // the program and its optimum is at most their total (docs/model.md section 12). Fan-out loads
    // too: the bounds are condensed first at the longest-path widths.
    let loads = [Load::Fanout(0.1), Load::Fanout(1.0), Load::Fanout(4.0), Load::Units(5.0), Load::Units(50.0)];
    for text in ["nand2", "nand3", "nor2", "nor3", "aoi21", "aoi22", "oai221", "aoi222", "!(a & b | c & (a | b))"] {
        for load in loads {
            let conditions = Conditions { load, diffusion_ratio: 1.0 };
            let longest = size_text(text, &Plan { conditions, ..Plan::new(Method::LongestPath, 2.0, 1.0, None) });
            let elmore = size_text(text, &Plan { conditions, ..Plan::new(Method::ELMORE, 2.0, 1.0, None) });
            let (longest, elmore) = (longest.unwrap(), elmore.unwrap_or_else(|e| panic!("{text} {load:?}: {e}")));
            assert!(total(&elmore) <= total(&longest) * (1.0 + 1e-7), "{text} {load:?}: {}", total(&elmore));
        }
    }
}

#[test]
fn the_curve_falls_as_the_target_grows() {
    // Least total W/L is non-increasing in the target: a looser target keeps every point of a
    // tighter one feasible (common practice, no source). Its slow end is longest-path's ratio, its
    // fast end within the cap, 10 x longest-path's total.
    for (text, load) in [("nand2", Load::Fanout(1.0)), ("aoi222", Load::Fanout(4.0)), ("nor2", Load::Units(10.0))] {
        let plan =
            Plan { conditions: Conditions { load, diffusion_ratio: 1.0 }, ..Plan::new(Method::ELMORE, 2.0, 1.0, None) };
        let logic = read_cell(text, &[]).unwrap();
        let curve = tradeoff(&logic, &plan, &Meter::unlimited()).unwrap();
        assert_eq!(curve.points.len(), widthwise::sizing::tradeoff::POINTS, "{text}");
        for pair in curve.points.windows(2) {
            assert!(pair[1].delay_target > pair[0].delay_target, "{text}");
            assert!(pair[1].total_w_over_l <= pair[0].total_w_over_l * (1.0 + 1e-9), "{text}: {pair:?}");
        }
        let classic = &curve.methods[0];
        let slow = curve.points.last().unwrap();
        assert!((slow.delay_target / classic.worst_delay_ratio - 1.0).abs() < 1e-9, "{text}");
        assert!(slow.total_w_over_l <= classic.total_w_over_l * (1.0 + 1e-7), "{text}");
        assert!(curve.points[0].total_w_over_l <= curve.cap_w_over_l * (1.0 + 1e-7), "{text}");
        assert!((curve.cap_w_over_l / classic.total_w_over_l - 10.0).abs() < 1e-9, "{text}");
    }
}

#[test]
fn optimum_and_curve_agree_with_scipy() {
    // Reference tool: scipy.optimize.minimize (SLSQP, from PyPI) on the same geometric program in
    // log variables. For each point of the curve, the program at that target: our least total W/L
    // against scipy's; at the fast end, the least worst ratio within the cap against scipy's.
    if !scipy_available("optimum_and_curve_agree_with_scipy") {
        return;
    }
    let mut programs: Vec<Program> = Vec::new();
    let mut ours: Vec<(String, f64)> = Vec::new();
    for (text, load, ratio) in CASES {
        let elmore_plan = plan(Method::ELMORE, load, ratio);
        let structure = size_text(text, &plan(Method::LongestPath, load, ratio)).unwrap();
        // The default optimum, as `size --method elmore` gives it, and the program it was last
        // solved on (the transitions of every path, and the cuts the worst-transition rule added).
        let default = size_text(text, &elmore_plan).unwrap();
        let meter = Meter::unlimited();
        let classic = widthwise::sizing::target::classic_ratio(structure.stage(), &elmore_plan, &meter).unwrap();
        let optimum = elmore::optimum(structure.stage(), &elmore_plan, Goal::Area { ratio: classic }, None, &meter);
        let optimum = optimum.unwrap();
        assert!((optimum.total / total(&default) - 1.0).abs() < 1e-12, "{text}");
        programs.push(optimum.program);
        ours.push((format!("{text} default"), optimum.total));
        let curve = tradeoff(&read_cell(text, &[]).unwrap(), &elmore_plan, &meter).unwrap();
        let fastest = elmore::optimum(structure.stage(), &elmore_plan, Goal::Ratio, None, &meter).unwrap();
        assert!((fastest.ratio / curve.points[0].delay_target - 1.0).abs() < 1e-9, "{text}");
        programs.push(fastest.program);
        ours.push((format!("{text} fastest"), fastest.ratio));
        for point in &curve.points[1..] {
            let goal = Goal::Area { ratio: point.delay_target };
            let optimum = elmore::optimum(structure.stage(), &elmore_plan, goal, None, &meter).unwrap();
            assert!((optimum.total / point.total_w_over_l - 1.0).abs() < 1e-12, "{text}");
            programs.push(optimum.program);
            ours.push((format!("{text} at {}", point.delay_target), point.total_w_over_l));
        }
    }
    let theirs = scipy(&programs, "optimum");
    let mut largest = 0.0f64;
    for ((what, value), answer) in ours.iter().zip(&theirs) {
        assert!(answer["success"].as_bool().unwrap(), "{what}: scipy did not converge");
        assert!(answer["worst"].as_f64().unwrap() <= 1.0 + 1e-6, "{what}: scipy's point is infeasible");
        let scipy_value = answer["objective"].as_f64().unwrap();
        let relative = (value / scipy_value - 1.0).abs();
        largest = largest.max(relative);
        assert!(relative < 1e-6, "{what}: ours {value}, scipy {scipy_value}");
    }
    note(&format!(
        "elmore target and trade-off against scipy SLSQP: {} programs, largest relative difference {largest:.2e}",
        ours.len()
    ));
}
