//! Cells of several stages sized (docs/model.md section 9): the output stage by the plan's method at
//! the cell's drive, exactly as a one-stage cell; each earlier stage backwards, at the drive that
//! makes it bear the plan's stage effort driving what it drives, raised where a device would fall
//! below the process's minimum width. Of a function's forms, the one of least total W/L is kept.

use std::collections::HashMap;

use crate::budget::Meter;
use crate::cell::{OtherForm, SizedCell, SizedStage};
use crate::logic::CellLogic;
use crate::sizing::build;
use crate::sizing::error::SizingError;
use crate::sizing::plan::{Conditions, Load, Order, Plan};
use crate::sizing::stage::{Arrangement, size_stage};

/// Size every form in `forms` (the forms of one function, [`crate::logic::synthesize`]) under `plan`
/// and keep the one of least total W/L (the first on a tie); an error where the first form that fails
/// fails before any form is sized.
pub fn size_best(forms: &[CellLogic], plan: &Plan) -> Result<SizedCell, SizingError> {
    let mut sized = Vec::with_capacity(forms.len());
    for form in forms {
        let cell = super::size(form, plan)?;
        sized.push((cell.total_w_over_l(), cell));
    }
    let best = (0..sized.len()).fold(0, |best, i| if sized[i].0 < sized[best].0 { i } else { best });
    if sized.is_empty() {
        return Err(SizingError::SeveralStages { what: "sizing with no form", stages: 0 });
    }
    let others: Vec<OtherForm> = sized
        .iter()
        .enumerate()
        .filter(|(i, _)| *i != best)
        .map(|(_, (total, cell))| OtherForm { form: cell.logic.form.name(), total_w_over_l: *total })
        .collect();
    let mut cell = sized.swap_remove(best).1;
    cell.other_forms = others;
    Ok(cell)
}

/// Size `logic`, a cell of several stages, under `plan` (names and values already checked), its
/// work counted on `meter`.
pub fn size_stages(logic: &CellLogic, plan: &Plan, meter: &Meter) -> Result<SizedCell, SizingError> {
    // Both size the output stage against the cell's load, which under a fan-out is the cell's own
    // pin capacitance, set by the earlier stages, which are sized back from the output stage: the
    // load would depend on the sizing it drives (docs/model.md section 9).
    if matches!(plan.order, Order::Search { .. }) {
        return Err(SizingError::SeveralStages {
            what: "the stack-order search (--stack-order search)",
            stages: logic.stages.len(),
        });
    }
    if plan.method.sizes_by_delay() {
        return Err(SizingError::SeveralStages {
            what: "the elmore method (--method elmore)",
            stages: logic.stages.len(),
        });
    }
    if let Some(name) = plan.order.critical()
        && !logic.inputs.iter().any(|input| input == name)
    {
        return Err(SizingError::UnknownCritical { name: name.to_string(), inputs: logic.inputs.join(", ") });
    }
    let unit_inverter = plan.reference.input_capacitance();
    let least = plan.process.min_width_nm / plan.process.unit_width_nm;
    let count = logic.stages.len();
    let mut sized: Vec<Option<SizedStage>> = vec![None; count];
    // Gate capacitance on each net from the stages sized so far (the later ones), in C.
    let mut load: HashMap<&str, f64> = HashMap::new();
    for (index, stage) in logic.stages.iter().enumerate().rev() {
        let output_stage = index + 1 == count;
        let stage_plan = if output_stage {
            plan.clone()
        } else {
            let driven = load.get(stage.net()).copied().unwrap_or(0.0);
            Plan {
                drive: driven / (plan.stage_effort * unit_inverter),
                conditions: Conditions { load: Load::Units(driven), ..plan.conditions },
                ..plan.clone()
            }
        };
        let critical = plan.order.critical().and_then(|name| stage.function.inputs.iter().position(|i| i == name));
        let arrangement = match plan.order {
            Order::Written => Arrangement::Written,
            _ => Arrangement::Default(critical),
        };
        let mut done = size_stage(stage, &stage_plan, &arrangement, meter)?;
        if !output_stage {
            // Under a path rule widths scale with the drive, so the least drive that draws no device
            // below the minimum is the drive times the shortfall. Against every input vector a
            // device's lower bound is the smaller of the minimum and its path-rule width, which does
            // not scale with the drive: the raised stage can land a hair below, so raise again.
            let mut drive = stage_plan.drive;
            for _ in 0..MAX_RAISES {
                let smallest = smallest_width(&done);
                if smallest >= least * (1.0 - 1e-12) {
                    break;
                }
                drive *= least / smallest;
                let raised = Plan { drive, ..stage_plan.clone() };
                done = size_stage(stage, &raised, &arrangement, meter)?;
                done.clamped = true;
            }
            let smallest = smallest_width(&done);
            if smallest < least * (1.0 - 1e-9) {
                return Err(SizingError::BelowMinimum { stage: stage.net().to_string(), width: smallest, least });
            }
        }
        for network in done.networks.values() {
            for (&input, &width) in network.network.inputs.iter().zip(&network.widths) {
                *load.entry(stage.function.inputs[input].as_str()).or_insert(0.0) += width;
            }
        }
        sized[index] = Some(done);
    }
    let mut stages: Vec<SizedStage> = sized.into_iter().map(|s| s.expect("every stage sized")).collect();
    name_internal_nodes(logic, plan, &mut stages);
    Ok(SizedCell {
        name: build::cell_name(logic, plan),
        logic: logic.clone(),
        plan: plan.clone(),
        stages,
        search: None,
        other_forms: Vec::new(),
    })
}

/// How many times an earlier stage's drive is raised toward the minimum width before giving up.
const MAX_RAISES: usize = 16;

/// The smallest W/L of a sized stage.
fn smallest_width(stage: &SizedStage) -> f64 {
    stage.networks.values().flat_map(|n| n.widths.iter().copied()).fold(f64::INFINITY, f64::min)
}

/// Internal nodes of stage `k` (from 1) are its own names (`n1`, `p1`) after a tag and `k`:
/// `s2n1`; the tag is `s`, longer (`ss` ...) while some net of the cell or model name could be
/// read as one of them, so no two stages share a node and no node takes a user's name.
fn name_internal_nodes(logic: &CellLogic, plan: &Plan, stages: &mut [SizedStage]) {
    let mut nets: Vec<String> = logic.inputs.clone();
    nets.extend(logic.stages.iter().map(|s| s.net().to_string()));
    nets.extend(plan.process.model_names().iter().map(|m| m.to_string()));
    let mut tag = "s".to_string();
    while nets.iter().any(|net| looks_internal(net, &tag)) {
        tag.insert(0, 's');
    }
    for (index, stage) in stages.iter_mut().enumerate() {
        let output = stage.function.output.clone();
        let inputs = stage.function.inputs.clone();
        let own = |node: &str| node != output && node != "vdd" && node != "vss" && !inputs.iter().any(|i| i == node);
        for network in stage.networks.values_mut() {
            for terminals in &mut network.terminals {
                for node in [&mut terminals.drain, &mut terminals.source] {
                    if own(node.as_str()) {
                        *node = format!("{tag}{}{node}", index + 1);
                    }
                }
            }
        }
    }
}

/// Whether `net` (compared without case) is `tag`, digits, letters and digits: a name of the form
/// internal nodes take.
fn looks_internal(net: &str, tag: &str) -> bool {
    let net = net.to_ascii_lowercase();
    let Some(rest) = net.strip_prefix(tag) else { return false };
    let rest = rest.trim_start_matches(|c: char| c.is_ascii_digit());
    let digits = net.len() - tag.len() - rest.len();
    let letters = rest.trim_start_matches(|c: char| c.is_ascii_lowercase());
    digits > 0 && letters.len() < rest.len() && !letters.is_empty() && letters.chars().all(|c| c.is_ascii_digit())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sizing::plan::Method;
    use approx::assert_relative_eq;

    fn sized(text: &str, drive: f64) -> SizedCell {
        let forms = crate::logic::synthesize(text).unwrap();
        size_best(&forms, &Plan::new(Method::LongestPath, 2.0, drive, None)).unwrap()
    }

    #[test]
    fn and2_is_a_nand2_sized_back_from_its_output_inverter() {
        // AND2 at drive 4, mu = 2: the output inverter NMOS 4, PMOS 8 (C_in 12); the NAND2 bears
        // effort 4 driving 12, so its drive is 12 / (4 x 3) = 1: NMOS 2, PMOS 2 (the stage-effort rule
        // C_in = g C_out / F, docs/model.md section 9; NAND2 g = 4/3: 4 / 3 x 12 / 4 = 4 per input).
        let cell = sized("and2", 4.0);
        assert_eq!(cell.stages.len(), 2);
        let nand = &cell.stages[0];
        assert_relative_eq!(nand.drive, 1.0, epsilon = 1e-12);
        assert!(!nand.clamped);
        assert_eq!(nand.networks.pull_down.widths, [2.0, 2.0]);
        assert_eq!(nand.networks.pull_up.widths, [2.0, 2.0]);
        assert_eq!(cell.stages[1].networks.pull_down.widths, [4.0]);
        assert_eq!(cell.stages[1].networks.pull_up.widths, [8.0]);
    }

    #[test]
    fn a_stage_below_the_minimum_width_is_raised_to_it() {
        // buf at drive 0.25 (built-in process, minimum W/L 0.5): the output inverter 0.25 / 0.5 drives a
        // C_in of 0.75; its first inverter would take drive 0.75 / 12, NMOS 0.0625, so it is raised
        // to NMOS 0.5.
        let cell = sized("buf", 0.25);
        let first = &cell.stages[0];
        assert!(first.clamped);
        assert_relative_eq!(first.networks.pull_down.widths[0], 0.5, epsilon = 1e-12);
        assert_relative_eq!(first.drive, 0.5, epsilon = 1e-12);
    }

    #[test]
    fn a_stage_raised_against_every_input_vector_stays_at_the_minimum_width() {
        // maj3 by min-area over vectors: its logic stage is raised to the minimum width (0.5 W/L in
        // the built-in process); the vectors program's lower bounds do not scale with the drive,
        // so one raise once left a device a hair below. No width may be below the process minimum
        // (common practice, no source: a design rule).
        let forms = crate::logic::synthesize("maj3").unwrap();
        let plan = Plan::new(Method::MinArea { worst_case: crate::sizing::WorstCase::Vectors }, 2.0, 1.0, None);
        let cell = size_best(&forms, &plan).unwrap();
        assert!(cell.stages[0].clamped);
        let smallest = cell.stages.iter().map(smallest_width).fold(f64::INFINITY, f64::min);
        assert!(smallest >= 0.5 * (1.0 - 1e-12), "{smallest}");
        assert_relative_eq!(smallest, 0.5, epsilon = 1e-9);
    }

    #[test]
    fn internal_nodes_carry_their_stage_and_avoid_the_users_names() {
        // s1n1 and s2n1 are user pins here, so the tag grows.
        let cell = sized("y = s1n1 & s2n1 & c", 1.0);
        let nodes: Vec<&str> = cell.stages[0].networks.pull_down.terminals.iter().map(|t| t.source.as_str()).collect();
        assert_eq!(nodes, ["ss1n1", "ss1n2", "vss"]);
        assert!(looks_internal("S2N1", "s"));
        assert!(!looks_internal("s2_n1", "s"));
        assert!(!looks_internal("s_n", "s"));
    }

    #[test]
    fn the_smaller_form_is_kept() {
        let forms = crate::logic::synthesize("xor2").unwrap();
        let plan = Plan::new(Method::LongestPath, 2.0, 1.0, None);
        let totals: Vec<f64> = forms.iter().map(|f| crate::sizing::size(f, &plan).unwrap().total_w_over_l()).collect();
        let best = size_best(&forms, &plan).unwrap();
        assert_relative_eq!(best.total_w_over_l(), totals.iter().copied().fold(f64::INFINITY, f64::min));
    }
}
