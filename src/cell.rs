//! A sized cell: the cell's logic, the plan it was sized under, and each stage's two networks as
//! sized, ordered and drawn. Only what sizing decides is held here; every figure (input
//! capacitance, logical effort, parasitic delay, worst and best case, totals) is worked out from it
//! by the figures stage (`figures.rs`), and delays by timing (`timing/`), both downstream of here.

use crate::expr::GateFunction;
use crate::logic::{CellLogic, StageRole};
use crate::network::{Network, NetworkKind, Sides, Terminals};
use crate::process::{Drawn, Process};
use crate::sizing::plan::Plan;

/// A cell with every device of every stage sized (today one stage; cells of several stages come
/// from [`crate::logic::synthesize`] the same way).
#[derive(Debug, Clone)]
pub struct SizedCell {
    /// Cell name.
    pub name: String,
    /// What the cell computes, as stages.
    pub logic: CellLogic,
    /// The plan it was sized under.
    pub plan: Plan,
    /// Its stages, in the order of [`CellLogic::stages`].
    pub stages: Vec<SizedStage>,
    /// What the stack-order search found, when the plan asked for one.
    pub search: Option<StackOrderReport>,
    /// The function's other forms, sized under the same plan and not kept (their total W/L is
    /// larger or equal); empty where the function has one form.
    pub other_forms: Vec<OtherForm>,
}

/// A form of the cell's function that was sized and not kept.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct OtherForm {
    /// `direct` or `inverted`.
    pub form: &'static str,
    /// Its total W/L.
    pub total_w_over_l: f64,
}

/// One stage, sized.
#[derive(Debug, Clone)]
pub struct SizedStage {
    /// What the stage is for.
    pub role: StageRole,
    /// What it computes, over its input nets.
    pub function: GateFunction,
    /// Its pull-down and pull-up.
    pub networks: Sides<SizedNetwork>,
    /// The drive it was sized at: the cell's for the output stage; for an earlier stage its load
    /// over the stage effort times the unit reference inverter's input capacitance, or more where
    /// that would draw a device below the process's minimum width.
    pub drive: f64,
    /// Whether the drive was raised so that no device is below the process's minimum width.
    pub clamped: bool,
}

/// One network of a stage, sized: the tree in its chosen stack order with its own device list, and
/// per device its W/L, how it is drawn and its two terminals.
#[derive(Debug, Clone)]
pub struct SizedNetwork {
    /// The series-parallel tree, stacks in their chosen order; its device `k` is gated by stage
    /// input `network.inputs[k]`.
    pub network: Network,
    /// W/L per device.
    pub widths: Vec<f64>,
    /// How each device is drawn (fingers, finger width).
    pub drawn: Vec<Drawn>,
    /// Drain and source node of each device.
    pub terminals: Vec<Terminals>,
}

impl SizedNetwork {
    /// Pull-down or pull-up.
    pub fn kind(&self) -> NetworkKind {
        self.network.kind
    }

    /// W/L as drawn (drawn width over the process's unit width), per device.
    pub fn drawn_widths(&self, process: &Process) -> Vec<f64> {
        self.drawn.iter().map(|d| d.width_nm() / process.unit_width_nm).collect()
    }
}

impl SizedCell {
    /// The cell's one stage: the one stage of a single-stage cell, the output stage of a cell of
    /// several stages. What times one stage (delays, decks of one stage, the stack-order search)
    /// takes only single-stage cells ([`SizedCell::is_single_stage`]).
    pub fn stage(&self) -> &SizedStage {
        self.stages.last().expect("a sized cell has a stage")
    }

    /// Sum of every device's W/L, every stage.
    pub fn total_w_over_l(&self) -> f64 {
        self.stages.iter().flat_map(|s| s.networks.values()).flat_map(|n| &n.widths).sum()
    }

    /// Whether the cell is one stage.
    pub fn is_single_stage(&self) -> bool {
        self.stages.len() == 1
    }

    /// The name of device `index` of `kind`'s network in stage `stage`: `MN1` in a single-stage
    /// cell, `MN1_a_n` (the stage's net after it) in a cell of several stages.
    pub fn device_name(&self, stage: usize, kind: NetworkKind, index: usize) -> String {
        let name = device_name(kind, index);
        if self.is_single_stage() { name } else { format!("{name}_{}", self.stages[stage].function.output) }
    }

    /// The output net.
    pub fn output(&self) -> &str {
        &self.logic.output
    }
}

/// What the stack-order search found.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct StackOrderReport {
    /// What was minimised.
    pub objective: String,
    /// Its value in the default order (RC for delays, W/L for area).
    pub default_value: f64,
    /// Its value in the chosen order.
    pub chosen_value: f64,
    /// `(default - chosen) / default`, in percent.
    pub gain_percent: f64,
    /// How many orders were evaluated.
    pub orders_tried: usize,
    /// Whether every order was tried (else a local search).
    pub exhaustive: bool,
    /// The chosen networks: series members output side first (`-`), parallel branches `|`.
    pub networks: Vec<String>,
}

/// Name of device `index` (0-based) of a network: `MN1`, `MP1` ...
pub fn device_name(kind: NetworkKind, index: usize) -> String {
    let mut name = String::with_capacity(8);
    name.push_str(match kind {
        NetworkKind::PullDown => "MN",
        NetworkKind::PullUp => "MP",
    });
    // Digits by hand: this runs for every device of every gate, and `format!` costs more than the rest.
    let number = index + 1;
    let digits = number.checked_ilog10().unwrap_or(0) + 1;
    for place in (0..digits).rev() {
        name.push(char::from(b'0' + (number / 10usize.pow(place) % 10) as u8));
    }
    name
}

/// A network as text: series ` - ` (output side first), parallel ` | `, devices by name.
pub fn describe(network: &Network) -> String {
    use crate::network::Node;
    fn walk(node: &Node, kind: NetworkKind, top: bool) -> String {
        match node {
            Node::Device(index) => device_name(kind, *index),
            Node::Series(members) => {
                let text = members.iter().map(|m| walk(m, kind, false)).collect::<Vec<_>>().join(" - ");
                if top { text } else { format!("({text})") }
            }
            Node::Parallel(branches) => {
                let text = branches.iter().map(|b| walk(b, kind, false)).collect::<Vec<_>>().join(" | ");
                if top { text } else { format!("({text})") }
            }
        }
    }
    format!("{}: {}", network.kind.name(), walk(&network.root, network.kind, true))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn device_names_count_from_one() {
        assert_eq!(device_name(NetworkKind::PullDown, 0), "MN1");
        assert_eq!(device_name(NetworkKind::PullUp, 9), "MP10");
        assert_eq!(device_name(NetworkKind::PullUp, 9_999), "MP10000");
    }
}
