//! Sizing: a cell's logic and a plan in, a sized cell out. [`size`] is the one way in; every
//! command, a library's variants and the strategies' candidates go through it (or, for another
//! method on a sized cell's own stack order, [`resize`]).
//!
//! The strategies: the path rules ([`rules`]: longest-path, min-area), the elmore method
//! ([`elmore`]) and the stack-order search ([`order`]); the last two call timing. Sizes are relative
//! W/L (1 is the unit NMOS); resistances are in units of R, the unit NMOS's on-resistance.

pub mod build;
pub mod cell;
pub mod elmore;
pub mod elmore_vectors;
pub mod error;
pub mod order;
pub mod plan;
pub mod rules;
pub mod stage;
pub mod target;
pub mod tradeoff;
pub mod vectors;

use crate::budget::Meter;
use crate::cell::SizedCell;
use crate::logic::CellLogic;

pub use cell::size_best;
pub use error::SizingError;
pub use plan::{
    Conditions, CriticalWithWrittenOrder, Load, Method, MethodName, Order, Plan, Reference, StackOrder, WorstCase,
    WorstCaseRefused,
};
use stage::{Arrangement, size_stage};

/// Size `logic` under `plan`: names and values checked, then the method in the plan's stack order
/// (searched for, when it asks), within the plan's work budget. A cell of several stages is sized
/// stage by stage from the output ([`cell`]).
pub fn size(logic: &CellLogic, plan: &Plan) -> Result<SizedCell, SizingError> {
    size_within(logic, plan, &Meter::new(plan.budget))
}

/// [`size`], its work counted on `meter` (shared with the timing of the same run).
pub fn size_within(logic: &CellLogic, plan: &Plan, meter: &Meter) -> Result<SizedCell, SizingError> {
    build::check_names(logic, plan)?;
    plan.check()?;
    plan.conditions.check()?;
    if !logic.is_single_stage() {
        return cell::size_stages(logic, plan, meter);
    }
    let stage = &logic.stages[0];
    let function = &stage.function;
    let critical = match plan.order.critical() {
        None => None,
        Some(name) => Some((
            function.inputs.iter().position(|i| i == name).ok_or_else(|| SizingError::UnknownCritical {
                name: name.to_string(),
                inputs: function.inputs.join(", "),
            })?,
            name,
        )),
    };
    let (sized, search) = match &plan.order {
        Order::Default { .. } => {
            let arrangement = Arrangement::Default(critical.map(|(index, _)| index));
            (size_stage(stage, plan, &arrangement, meter)?, None)
        }
        Order::Written => (size_stage(stage, plan, &Arrangement::Written, meter)?, None),
        Order::Search { .. } => {
            let (sized, report) = order::search(logic, plan, critical, meter)?;
            (sized, Some(report))
        }
    };
    Ok(build::cell(logic, plan, sized, search))
}

/// `cell` sized again by `method`, each stage in the stack order it has (the methods side by side),
/// its work counted on `meter`.
pub fn resize(cell: &SizedCell, method: Method, meter: &Meter) -> Result<SizedCell, SizingError> {
    let plan = Plan { method, ..cell.plan.clone() };
    if !cell.is_single_stage() {
        return cell::size_stages(&cell.logic, &plan, meter);
    }
    let stage = cell.stage();
    let networks = stage.networks.as_ref().map(|_, n| n.network.clone());
    let sized = size_stage(&cell.logic.stages[0], &plan, &Arrangement::Given(networks), meter)?;
    Ok(build::cell(&cell.logic, &plan, sized, None))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn unknown_critical_input_is_refused() {
        let plan = Plan {
            order: Order::Default { critical: Some("q".into()) },
            ..Plan::new(Method::LongestPath, 2.0, 1.0, None)
        };
        let error = crate::size_text("nand2", &plan).unwrap_err();
        assert!(error.to_string().contains("'q'"));
    }

    #[test]
    fn the_stack_order_search_takes_one_stage() {
        let cells = crate::logic::synthesize("xor2").unwrap();
        let plan = Plan { order: Order::Search { critical: None }, ..Plan::new(Method::LongestPath, 2.0, 1.0, None) };
        let error = size(&cells[0], &plan).unwrap_err();
        assert!(matches!(error, SizingError::SeveralStages { .. }), "{error}");
    }
}
