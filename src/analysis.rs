//! The delay report of the `size` command: a cell sized under its plan, timed at its load, the three
//! methods side by side on its stack order, and what the stack-order search found. It composes the
//! sizing and timing stages, one work budget for all of it; neither stage calls the other through it.

use crate::budget::Meter;
use crate::cell::SizedCell;
use crate::logic::CellLogic;
use crate::network::Sides;
use crate::sizing::{self, Method, Plan, SizingError};
use crate::timing::{self, CellTiming, DelayReport, MethodDelay, Timing};

/// Size `logic` under `plan` and time it: the cell and its delay report, within the plan's work
/// budget (the sizing, the search, the delays and the comparison of methods share it).
pub fn size_and_time(logic: &CellLogic, plan: &Plan) -> Result<(SizedCell, DelayReport), SizingError> {
    if !logic.is_single_stage() {
        // The methods side by side and the search take one stage; a cell of several has
        // [`size_and_time_stages`].
        return Err(SizingError::SeveralStages {
            what: "the delay report of one stage (the methods side by side)",
            stages: logic.stages.len(),
        });
    }
    let meter = Meter::new(plan.budget);
    let cell = sizing::size_within(logic, plan, &meter)?;
    let timing = timing::time(&cell, &plan.conditions, &meter)?;
    let mut method_comparison = compare_methods(&cell, &timing, &meter)?;
    // The target: the plan's, else the ratio the longest-path rule reaches on this stack order.
    let classic = method_comparison.iter().find(|row| row.method == Method::LongestPath);
    let delay_target = match (cell.plan.delay_target, classic.and_then(|row| row.worst_delay_ratio)) {
        (Some(ratio), _) | (None, Some(ratio)) => ratio,
        (None, None) => 1.0,
    };
    for row in &mut method_comparison {
        row.meets_delay_target = row.worst_delay_ratio.is_some_and(|ratio| ratio <= delay_target * (1.0 + 1e-6));
    }
    let stack_order = cell.search.clone();
    let delay_target_is_default = cell.plan.delay_target.is_none();
    Ok((cell, DelayReport { timing, method_comparison, delay_target, delay_target_is_default, stack_order }))
}

/// Size `logic`, a cell of several stages, under `plan` and time it through all its stages, within
/// the plan's work budget.
pub fn size_and_time_stages(logic: &CellLogic, plan: &Plan) -> Result<(SizedCell, CellTiming), SizingError> {
    let meter = Meter::new(plan.budget);
    let cell = sizing::size_within(logic, plan, &meter)?;
    let timing = timing::time_stages(&cell, &plan.conditions, &meter)?;
    Ok((cell, timing))
}

fn widths(cell: &SizedCell) -> Sides<Vec<f64>> {
    cell.stage().networks.as_ref().map(|_, n| n.widths.clone())
}

/// Longest-path, min-area and elmore on the stack order of `cell` (whose own timing is `timing`),
/// with their worst delay ratio. An elmore sizing that fails (infeasible, past the budget) is a note
/// in its row.
pub fn compare_methods(cell: &SizedCell, timing: &Timing, meter: &Meter) -> Result<Vec<MethodDelay>, SizingError> {
    let mut rows = Vec::new();
    let own = widths(cell);
    // Widths already timed, so that equal sizings (NAND, NOR ...) are timed once.
    let mut timed: Vec<(Sides<Vec<f64>>, Timing)> = Vec::new();
    // The worst ratio the longest-path row reaches: the elmore method's default target on this
    // order (its structure is that row's sizing), so the elmore row need not time it again.
    let mut classic: Option<f64> = None;
    for method in Method::ALL {
        // The elmore row is the cell's own where it is sized by delay (over paths or every vector).
        let own_method = method == cell.plan.method || (method.sizes_by_delay() && cell.plan.method.sizes_by_delay());
        let sized = if own_method {
            Ok(cell.clone())
        } else if method.sizes_by_delay() && cell.plan.delay_target.is_none() && classic.is_some() {
            let mut at_target = cell.clone();
            at_target.plan.delay_target = classic;
            sizing::resize(&at_target, method, meter).map(|mut sized| {
                sized.plan.delay_target = None;
                sized
            })
        } else {
            sizing::resize(cell, method, meter)
        };
        match sized {
            Ok(sized) => {
                let sized_widths = widths(&sized);
                let index = if sized_widths == own {
                    None
                } else if let Some(index) = timed.iter().position(|(w, _)| *w == sized_widths) {
                    Some(index)
                } else {
                    timed.push((sized_widths, timing::time_in_rc(&sized, &cell.plan.conditions, meter)?));
                    Some(timed.len() - 1)
                };
                let own_timing = index.map_or(timing, |i| &timed[i].1);
                if method == Method::LongestPath {
                    classic = Some(own_timing.delays.iter().map(|d| d.delay_ratio).fold(0.0, f64::max));
                }
                let worst = own_timing.worst_ratio(None);
                rows.push(MethodDelay {
                    method,
                    total_w_over_l: Some(sized.stage().networks.values().flat_map(|n| &n.widths).sum()),
                    worst_delay_ratio: worst.map(|d| d.delay_ratio),
                    worst_transition: worst.map(|d| format!("{} {}", d.input, d.edge.name())),
                    // Set against the delay target once every row is in.
                    meets_delay_target: false,
                    note: None,
                });
            }
            Err(error) if method.sizes_by_delay() => rows.push(MethodDelay {
                method,
                total_w_over_l: None,
                worst_delay_ratio: None,
                worst_transition: None,
                meets_delay_target: false,
                note: Some(error.to_string()),
            }),
            Err(error) => return Err(error),
        }
    }
    Ok(rows)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sizing::plan::{Conditions, Load};

    #[test]
    fn the_elmore_row_sizes_to_the_longest_path_rows_ratio() {
        // The elmore method's default target is the worst ratio longest-path's widths reach on the
        // same order (docs/model.md section 12): the row that takes it from the longest-path row
        // is the elmore method sized on its own, which times those widths itself.
        for text in ["nand3", "aoi221", "!(a & b | b & c | a & c)", "!((a | b) & (c | d) & e)"] {
            let plan = Plan {
                conditions: Conditions { load: Load::Fanout(3.0), diffusion_ratio: 0.8 },
                ..Plan::new(Method::LongestPath, 2.0, 1.0, None)
            };
            let logic = crate::logic::read_cell(text, &[]).unwrap();
            let (cell, report) = size_and_time(&logic, &plan).unwrap();
            let row = report.method_comparison.iter().find(|r| r.method.sizes_by_delay()).unwrap();
            let alone = sizing::resize(&cell, Method::ELMORE, &Meter::unlimited()).unwrap();
            let total: f64 = alone.stage().networks.values().flat_map(|n| &n.widths).sum();
            assert_eq!(row.total_w_over_l.map(f64::to_bits), Some(total.to_bits()), "{text}");
            let timed = timing::time_in_rc(&alone, &plan.conditions, &Meter::unlimited()).unwrap();
            let worst = timed.worst_ratio(None).map(|d| d.delay_ratio.to_bits());
            assert_eq!(row.worst_delay_ratio.map(f64::to_bits), worst, "{text}");
        }
    }
}
