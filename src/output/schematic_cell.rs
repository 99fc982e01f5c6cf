//! A sized cell as the schematic writer's input: every stage's two networks as series-parallel
//! trees in their chosen stack order, each device named with its W/L (and, with a process file,
//! its drawn width and fingers), each internal node by its netlist name, the weakest path of each
//! network of each stage marked, the pins and the output named as the netlists name them.
//!
//! The writer (`schematic.rs`) lays the picture out; this file only says what is in it.

use super::schematic::{Channel, DeviceSymbol, Layout, Schematic, SchematicError, SchematicStage, Tree};
use super::{number, sizing_line};
use crate::cell::{SizedCell, SizedNetwork};
use crate::figures::{CellFigures, path_listings};
use crate::logic::StageRole;
use crate::network::{NetworkKind, Node, Terminals};
use crate::process::Process;

/// The schematic of `cell`, whose figures are `figures`.
pub fn schematic(cell: &SizedCell, figures: &CellFigures) -> Schematic {
    let process = &cell.plan.process;
    // The drawn widths say something of their own only where a process was given: the built-in
    // process draws every device at its W/L in um.
    let drawn = **process != Process::default();
    let mut notes = vec![sizing_line(figures)];
    if drawn {
        notes.push(format!("process {}: L {} um", process.name, number(process.length_nm / 1000.0)));
        notes.push("under each W/L: the drawn width W, then n fingers x the finger width where n > 1".to_string());
    }
    notes.push("W/L relative to the unit NMOS; estimates, not a sign-off".to_string());
    // The weakest path of each network of each stage, by device name.
    let worst: Vec<Vec<String>> = path_listings(cell, 1)
        .into_iter()
        .map(|l| l.paths.into_iter().next().map(|p| p.devices).unwrap_or_default())
        .collect();
    let several = cell.stages.len() > 1;
    let stages = cell
        .stages
        .iter()
        .enumerate()
        .map(|(index, stage)| {
            let tree = |kind: NetworkKind| {
                let sized = &stage.networks[kind];
                // path_listings lists each stage's pull-down, then its pull-up.
                let on_worst = &worst[2 * index + usize::from(kind == NetworkKind::PullUp)];
                let device = |k: usize| {
                    let name = cell.device_name(index, kind, k);
                    let mut lines = vec![format!("W/L {}", number(sized.widths[k]))];
                    if drawn {
                        let d = &sized.drawn[k];
                        lines.push(format!("W {} um", number(d.width_nm() / 1000.0)));
                        if d.fingers > 1 {
                            lines.push(format!("{} fingers x {} um", d.fingers, number(d.finger_width_nm / 1000.0)));
                        }
                    }
                    DeviceSymbol {
                        on_worst_path: on_worst.contains(&name),
                        name,
                        channel: match kind {
                            NetworkKind::PullDown => Channel::Nmos,
                            NetworkKind::PullUp => Channel::Pmos,
                        },
                        gate: stage.function.inputs[sized.network.inputs[k]].clone(),
                        lines,
                    }
                };
                convert(&sized.network.root, sized, &device)
            };
            let role = match stage.role {
                StageRole::Complement { .. } => "input inverter",
                StageRole::Logic => "logic",
                StageRole::OutputInverter => "output inverter",
            };
            let name = if several {
                format!("stage {}: {role}, drive {}", index + 1, number(stage.drive))
            } else {
                "one stage".to_string()
            };
            SchematicStage {
                name,
                output: stage.function.output.clone(),
                pull_up: tree(NetworkKind::PullUp),
                pull_down: tree(NetworkKind::PullDown),
            }
        })
        .collect();
    Schematic {
        title: format!("{}: {} = {}", figures.name, figures.output, figures.expression),
        notes,
        inputs: cell.logic.inputs.clone(),
        output: cell.output().to_string(),
        stages,
    }
}

/// The tree of `node`, devices made by `device`, each series junction named by the node between
/// its members.
fn convert(node: &Node, sized: &SizedNetwork, device: &dyn Fn(usize) -> DeviceSymbol) -> Tree {
    match node {
        Node::Device(k) => Tree::Device(device(*k)),
        Node::Series(members) => Tree::Series {
            members: members.iter().map(|m| convert(m, sized, device)).collect(),
            junctions: members[..members.len().saturating_sub(1)]
                .iter()
                .map(|m| rail_side(m, &sized.terminals).to_string())
                .collect(),
        },
        Node::Parallel(branches) => Tree::Parallel(branches.iter().map(|b| convert(b, sized, device)).collect()),
    }
}

/// The node at the rail side of `node`: where the next series member starts.
fn rail_side<'a>(node: &Node, terminals: &'a [Terminals]) -> &'a str {
    match node {
        Node::Device(k) => &terminals[*k].source,
        Node::Series(members) => members.last().map_or("", |m| rail_side(m, terminals)),
        Node::Parallel(branches) => branches.first().map_or("", |b| rail_side(b, terminals)),
    }
}

/// Lay out the schematic of `cell`; past the writer's limits, why it cannot be drawn.
pub fn layout(cell: &SizedCell, figures: &CellFigures) -> Result<Layout, SchematicError> {
    Layout::new(&schematic(cell, figures))
}

#[cfg(test)]
mod tests;
