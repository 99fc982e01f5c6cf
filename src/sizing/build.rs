//! Turning chosen widths and stack orders into a sized stage and cell: each device drawn by the
//! process (snapped, folded into fingers), each node named, the cell named; and the name checks
//! every cell passes.

use std::borrow::Cow;

use crate::bounds;
use crate::cell::{SizedCell, SizedNetwork, SizedStage, StackOrderReport, device_name};
use crate::expr::GateFunction;
use crate::logic::{CellLogic, StageRole};
use crate::names::{reserved_reason, variant_name};
use crate::network::{Network, NetworkKind, Sides, internal_prefix};
use crate::sizing::error::SizingError;
use crate::sizing::plan::Plan;

/// A stage with these (ordered) networks and widths, each device drawn and each node named;
/// refused where a device would need more than [`bounds::MAX_FINGERS`] fingers.
pub fn stage(
    function: &GateFunction,
    role: StageRole,
    networks: Sides<Network>,
    widths: Sides<Vec<f64>>,
    plan: &Plan,
) -> Result<SizedStage, SizingError> {
    let process = &plan.process;
    // Internal nodes are named unlike every input, the output and the models.
    let mut names: Vec<&str> = function.inputs.iter().map(String::as_str).collect();
    names.push(&function.output);
    names.extend(process.model_names());
    let mut sized = Vec::with_capacity(2);
    for (network, widths) in networks.into_iter().zip(widths) {
        let kind = network.kind;
        let drawn: Vec<_> = widths.iter().map(|&w| process.draw(w)).collect();
        for (device, d) in drawn.iter().enumerate() {
            if d.fingers > bounds::MAX_FINGERS {
                return Err(SizingError::TooManyFingers {
                    device: device_name(kind, device),
                    w_over_l: widths[device],
                    fingers: d.fingers,
                    limit: bounds::MAX_FINGERS,
                });
            }
        }
        let base = if kind == NetworkKind::PullDown { "n" } else { "p" };
        let terminals = network.nodes(&function.output, &internal_prefix(base, &names));
        sized.push(SizedNetwork { network, widths, drawn, terminals });
    }
    let pull_up = sized.pop().expect("two networks");
    let pull_down = sized.pop().expect("two networks");
    Ok(SizedStage {
        role,
        function: function.clone(),
        networks: Sides::new(pull_down, pull_up),
        drive: plan.drive,
        clamped: false,
    })
}

/// The cell name `plan` gives a cell: the name given, as given; else the shorthand, or `cell` for an
/// expression, with the drive as a library's variants carry it (`nand2_x1`, `cell_x2`).
pub fn cell_name(logic: &CellLogic, plan: &Plan) -> String {
    plan.name.clone().unwrap_or_else(|| variant_name(logic.shorthand.as_deref().unwrap_or("cell"), plan.drive))
}

/// No name that reaches a netlist may be reserved: the cell's, and (for a function read without the
/// process's model names) the inputs' and the output's.
pub fn check_names(logic: &CellLogic, plan: &Plan) -> Result<(), SizingError> {
    check_cell_name(logic, plan)?;
    let models = plan.process.model_names();
    let inputs = logic.inputs.iter().map(|i| ("input", i));
    for (role, name) in inputs.chain([("the output", &logic.output)]) {
        if let Some(why) = reserved_reason(name, &models) {
            return Err(SizingError::ReservedName { role, name: name.clone(), why });
        }
    }
    Ok(())
}

/// The first of [`check_names`]: the cell's own name, where it is given (no copy), else as
/// [`cell_name`] makes it. Alone, it is what a renamed variant of a checked cell still needs.
pub fn check_cell_name(logic: &CellLogic, plan: &Plan) -> Result<(), SizingError> {
    let name = plan.name.as_deref().map_or_else(|| Cow::Owned(cell_name(logic, plan)), Cow::Borrowed);
    match reserved_reason(&name, &plan.process.model_names()) {
        Some(why) => Err(SizingError::ReservedCellName { name: name.into_owned(), why }),
        None => Ok(()),
    }
}

/// A cell of one sized stage.
pub fn cell(logic: &CellLogic, plan: &Plan, stage: SizedStage, search: Option<StackOrderReport>) -> SizedCell {
    SizedCell {
        name: cell_name(logic, plan),
        logic: logic.clone(),
        plan: plan.clone(),
        stages: vec![stage],
        search,
        other_forms: Vec::new(),
    }
}
