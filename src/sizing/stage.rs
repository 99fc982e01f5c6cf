//! One stage sized by the plan's method in a given stack order: the path rules' widths in that
//! order, or the elmore method's program on that order's structure.

use crate::budget::Meter;
use crate::cell::SizedStage;
use crate::logic::StageLogic;
use crate::network::{Network, Sides};
use crate::sizing::build;
use crate::sizing::elmore;
use crate::sizing::elmore_vectors;
use crate::sizing::error::SizingError;
use crate::sizing::plan::{Method, Plan, WorstCase};
use crate::sizing::rules::{self, Rule};
use crate::sizing::vectors;

/// Which order the stacks of a stage are sized in.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Arrangement {
    /// The default order ([`Network::ordered`]): the critical input (a stage input) first, then the
    /// least diffusion width facing the output.
    Default(Option<usize>),
    /// As the expression writes them.
    Written,
    /// These networks: the stage's own, reordered (a search's candidate, another method's order).
    Given(Sides<Network>),
}

/// The path rule's widths of each network, or `None` for the elmore method.
fn rule_widths(networks: &Sides<Network>, plan: &Plan, rule: Rule) -> Sides<Vec<f64>> {
    networks.as_ref().map(|kind, network| rules::widths(network, rule, plan.reference_width(kind)))
}

/// The networks in `arrangement`, from the written ones and the widths that choose the default order.
fn arrange(written: Sides<Network>, widths: &Sides<Vec<f64>>, arrangement: &Arrangement) -> Sides<Network> {
    match arrangement {
        Arrangement::Default(critical) => written.map(|kind, network| network.ordered(&widths[kind], *critical)),
        Arrangement::Written => written,
        Arrangement::Given(networks) => networks.clone(),
    }
}

/// Size `stage` (its pull-up the dual of its pull-down, or the one the user wrote) by the plan's
/// method in `arrangement`, the elmore method's work counted on `meter`.
pub fn size_stage(
    stage: &StageLogic,
    plan: &Plan,
    arrangement: &Arrangement,
    meter: &Meter,
) -> Result<SizedStage, SizingError> {
    let (function, role) = (&stage.function, stage.role);
    let written = stage.networks();
    match plan.method {
        Method::MinArea { worst_case: WorstCase::Vectors } => {
            // Resistances do not depend on the order of series members: the written networks are
            // sized, then arranged by those widths.
            let widths = vectors::widths(&written, function.inputs.len(), plan, meter)?;
            let networks = arrange(written, &widths, arrangement);
            build::stage(function, role, networks, widths, plan)
        }
        Method::LongestPath | Method::MinArea { .. } => {
            let rule = if plan.method == Method::LongestPath { Rule::LongestPath } else { Rule::MinArea };
            let widths = rule_widths(&written, plan, rule);
            let networks = arrange(written, &widths, arrangement);
            build::stage(function, role, networks, widths, plan)
        }
        Method::Elmore { worst_case } => {
            // The program runs on the structure the longest-path rule's order gives (or the order asked
            // for), starting from the min-area widths.
            let longest = rule_widths(&written, plan, Rule::LongestPath);
            let networks = arrange(written, &longest, arrangement);
            let structure = build::stage(function, role, networks.clone(), longest, plan)?;
            let widths = match worst_case {
                WorstCase::Paths => elmore::widths(&structure, plan, meter)?,
                WorstCase::Vectors => elmore_vectors::widths(&structure, plan, meter)?,
            };
            build::stage(function, role, networks, widths, plan)
        }
    }
}
