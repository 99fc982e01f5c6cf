//! The elmore method's trade-off (docs/model.md section 12): the least total W/L against the delay
//! target, from the ratio the longest-path rule reaches down to the least ratio reachable within the
//! cap, with the longest-path and min-area points beside it, so a designer picks the knee.

use crate::budget::Meter;
use crate::cell::SizedStage;
use crate::logic::CellLogic;
use crate::sizing::elmore;
use crate::sizing::error::SizingError;
use crate::sizing::plan::{Method, Plan};
use crate::sizing::target::{self, Goal, Optimum};

/// Points of the curve between the least ratio and longest-path's, both ends included.
pub const POINTS: usize = 12;

/// One point of the curve.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct TradeoffPoint {
    /// The delay target the program was solved for (at the fast end, the least ratio it reached).
    pub delay_target: f64,
    /// The least total W/L that meets it.
    pub total_w_over_l: f64,
    /// The worst ratio of the widths found, by the one worst-transition rule over every input vector:
    /// the target, or above it where the worst transition is one the program leaves out (several
    /// paths conducting at once, with repeated inputs).
    pub worst_delay_ratio: f64,
}

/// A sizing rule's point beside the curve.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct MethodPoint {
    /// The method.
    pub method: Method,
    /// Its total W/L.
    pub total_w_over_l: f64,
    /// Its worst delay ratio (the one rule).
    pub worst_delay_ratio: f64,
}

/// The curve and its marked points.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Tradeoff {
    /// The cap on the total W/L: [`target::CAP`] times longest-path's.
    pub cap_w_over_l: f64,
    /// The curve, fastest first.
    pub points: Vec<TradeoffPoint>,
    /// Longest-path and min-area, on the same stack order.
    pub methods: Vec<MethodPoint>,
}

fn point(structure: &SizedStage, optimum: &Optimum, plan: &Plan, meter: &Meter) -> Result<TradeoffPoint, SizingError> {
    let sized = elmore::stage_at(structure, &optimum.widths, plan)?;
    Ok(TradeoffPoint {
        delay_target: optimum.ratio,
        total_w_over_l: optimum.total,
        worst_delay_ratio: target::worst_ratio(&sized, plan, meter)?,
    })
}

/// The trade-off of a one-stage cell under `plan` (its load, diffusion ratio and stack order; the
/// method and target are the curve's own), its work counted on `meter`.
pub fn tradeoff(logic: &CellLogic, plan: &Plan, meter: &Meter) -> Result<Tradeoff, SizingError> {
    if !logic.is_single_stage() {
        return Err(SizingError::SeveralStages { what: "the trade-off (--tradeoff)", stages: logic.stages.len() });
    }
    let classic_plan = Plan { method: Method::LongestPath, delay_target: None, ..plan.clone() };
    let classic = crate::sizing::size_within(logic, &classic_plan, meter)?;
    let structure = classic.stage();
    let total = |stage: &SizedStage| stage.networks.values().flat_map(|n| &n.widths).sum::<f64>();
    let classic_ratio = target::worst_ratio(structure, plan, meter)?;
    let mut methods = vec![MethodPoint {
        method: Method::LongestPath,
        total_w_over_l: total(structure),
        worst_delay_ratio: classic_ratio,
    }];
    let min_area = crate::sizing::resize(&classic, Method::MIN_AREA, meter)?;
    methods.push(MethodPoint {
        method: Method::MIN_AREA,
        total_w_over_l: total(min_area.stage()),
        worst_delay_ratio: target::worst_ratio(min_area.stage(), plan, meter)?,
    });
    let elmore_plan = Plan { method: Method::ELMORE, ..plan.clone() };
    let fastest = elmore::optimum(structure, &elmore_plan, Goal::Ratio, None, meter)?;
    let first = point(structure, &fastest, &elmore_plan, meter)?;
    // With a fan-out load the program's ratio is against bounds condensed below the true ones: the
    // curve starts from the ratio the fastest widths really reach, and every point's bounds are
    // first condensed at those widths, which meet every target above it.
    let low = first.worst_delay_ratio.max(fastest.ratio.min(first.worst_delay_ratio));
    let mut points = vec![TradeoffPoint { delay_target: low, ..first }];
    if classic_ratio > low * (1.0 + 1e-6) {
        for k in 1..POINTS {
            let ratio = low + (classic_ratio - low) * k as f64 / (POINTS - 1) as f64;
            let goal = Goal::Area { ratio };
            let optimum = elmore::optimum(structure, &elmore_plan, goal, Some(&fastest.widths), meter)?;
            points.push(point(structure, &optimum, &elmore_plan, meter)?);
        }
    }
    Ok(Tradeoff { cap_w_over_l: fastest.cap, points, methods })
}
