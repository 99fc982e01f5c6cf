//! The elmore method's delay target and cap (docs/model.md section 12): the ratio every worst-case
//! Elmore delay may reach over the reference inverter's at the same load, by default the one the
//! longest-path rule reaches on the same stack order, and the most total W/L the method may spend,
//! a fixed multiple of the longest-path total.

use crate::budget::Meter;
use crate::cell::SizedStage;
use crate::optimize::geometric::Program;
use crate::sizing::error::SizingError;
use crate::sizing::plan::Plan;
use crate::timing::circuit::reference_delay;
use crate::timing::delays::worst_transitions;

/// The cap on the elmore method's total W/L, as a multiple of the longest-path total.
pub const CAP: f64 = 10.0;
/// Past this multiple of the longest-path total, a result carries a warning.
pub const WARN_AREA: f64 = 3.0;

/// What the elmore method's program asks.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Goal {
    /// The least total W/L with every worst-case delay at most `ratio` times the reference's.
    Area {
        /// The delay target.
        ratio: f64,
    },
    /// The least worst ratio of delay to the reference's, within the cap.
    Ratio,
}

/// An optimum of the elmore method's program.
#[derive(Debug, Clone, PartialEq)]
pub struct Optimum {
    /// Every device's W/L, pull-down first.
    pub widths: Vec<f64>,
    /// Their sum.
    pub total: f64,
    /// The target it was solved for ([`Goal::Area`]), or the least worst ratio it reached
    /// ([`Goal::Ratio`]; with a fan-out load, against the bounds as condensed).
    pub ratio: f64,
    /// The cap on the total W/L.
    pub cap: f64,
    /// The last program solved: the transitions it started from and every cut it took, its bounds
    /// as last condensed (what a reference solver checks the optimum against).
    pub program: Program,
}

/// The worst ratio, over every input and edge, of the worst-case Elmore delay (the one
/// worst-transition rule) to the reference inverter's at the same load, of `stage` as sized.
pub fn worst_ratio(stage: &SizedStage, plan: &Plan, meter: &Meter) -> Result<f64, SizingError> {
    let (_, found) = worst_transitions(stage, plan, &plan.conditions, meter)?;
    let diffusion_ratio = plan.conditions.diffusion_ratio;
    Ok(found
        .iter()
        .filter_map(|(_, edge, load, transition)| {
            transition.as_ref().map(|t| t.elmore / reference_delay(plan, diffusion_ratio, *edge, *load))
        })
        .fold(0.0, f64::max))
}

/// The default delay target: the worst ratio the longest-path widths reach, `structure` being the
/// stage sized by the longest-path rule in the order the elmore method sizes.
pub fn classic_ratio(structure: &SizedStage, plan: &Plan, meter: &Meter) -> Result<f64, SizingError> {
    worst_ratio(structure, plan, meter)
}
