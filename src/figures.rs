//! Figures of a sized gate: input capacitance per input, logical effort, parasitic delay, totals,
//! and the diffusion width of each node (shared by the delay stage and the simulation deck).
//!
//! Capacitances are in units of the gate capacitance of the unit NMOS (W/L = 1). Logical effort
//! and parasitic delay divide by the reference inverter's input capacitance at the same drive, which
//! is the unit gate against the unit inverter, so neither changes with drive.

use crate::network::Terminals;

/// One device as the figures see it.
#[derive(Debug, Clone, Copy)]
pub struct DeviceLoad<'a> {
    /// Gate input index.
    pub input: usize,
    /// W/L.
    pub w_over_l: f64,
    /// Its terminals.
    pub terminals: &'a Terminals,
}

/// Input capacitance of every input: the W/L of every device it gates, both networks.
pub fn input_capacitance(devices: &[DeviceLoad], input_count: usize) -> Vec<f64> {
    let mut capacitance = vec![0.0; input_count];
    for device in devices {
        capacitance[device.input] += device.w_over_l;
    }
    capacitance
}

/// Logical effort per input: input capacitance over the reference inverter's.
pub fn logical_effort(input_capacitance: &[f64], reference_capacitance: f64) -> Vec<f64> {
    input_capacitance.iter().map(|c| c / reference_capacitance).collect()
}

/// Diffusion width on the output node: the W/L of every device whose drain is the output.
pub fn output_diffusion(devices: &[DeviceLoad], output: &str) -> f64 {
    devices.iter().filter(|d| d.terminals.drain == output).map(|d| d.w_over_l).sum()
}

/// Parasitic delay in the simple model: output-node diffusion over the reference inverter's
/// input capacitance.
pub fn parasitic_delay(devices: &[DeviceLoad], output: &str, reference_capacitance: f64) -> f64 {
    output_diffusion(devices, output) / reference_capacitance
}

/// How the diffusions on one node make its diffusion width: the one rule the delay stage and the
/// simulation deck share, so that Elmore delays and simulated ones see the same capacitance.
///
/// Every device has a drain and a source diffusion as wide as the device. An internal node with
/// exactly two device terminals on it joins two devices in series, drawn as one diffusion region
/// shared by both and as wide as the wider of them (common practice, no source). Any other node
/// (the output, or a node with one or three and more terminals, such as a stack meeting a parallel
/// group) counts each terminal as its own diffusion. Rails count nothing: the supply holds them.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum NodeDiffusion {
    /// A rail: no capacitance counted.
    Rail,
    /// One diffusion shared by two series devices (by index), as wide as the wider.
    Shared(usize, usize),
    /// Separate diffusions, one per terminal (devices by index, a device once per terminal).
    Separate(Vec<usize>),
}

impl NodeDiffusion {
    /// The rule for a node whose device terminals are `terminals` (a device index per drain or
    /// source on the node), given whether the node is a rail and whether it is the output.
    pub fn of(terminals: &[usize], rail: bool, output: bool) -> NodeDiffusion {
        match terminals {
            _ if rail => NodeDiffusion::Rail,
            &[first, second] if !output => NodeDiffusion::Shared(first, second),
            _ => NodeDiffusion::Separate(terminals.to_vec()),
        }
    }

    /// The node's diffusion width, from every device's width (`widths[device]`), in the widths'
    /// unit (W/L for the delay stage, um for the deck).
    pub fn width(&self, widths: &[f64]) -> f64 {
        match self {
            NodeDiffusion::Rail => 0.0,
            NodeDiffusion::Shared(first, second) => widths[*first].max(widths[*second]),
            NodeDiffusion::Separate(devices) => devices.iter().map(|&d| widths[d]).sum(),
        }
    }
}

/// Every node of a netlist that is not a rail (`vss`, `vdd`), in order of first appearance, with
/// its diffusion rule. `devices` are `(drain, source)` node names, indexed like the widths.
pub fn node_diffusions(devices: &[(&str, &str)], output: &str) -> Vec<(String, NodeDiffusion)> {
    let mut nodes: Vec<(String, Vec<usize>)> = Vec::new();
    for (index, &(drain, source)) in devices.iter().enumerate() {
        for node in [drain, source] {
            if node == "vdd" || node == "vss" {
                continue;
            }
            match nodes.iter_mut().find(|(name, _)| name == node) {
                Some((_, terminals)) => terminals.push(index),
                None => nodes.push((node.to_string(), vec![index])),
            }
        }
    }
    nodes
        .into_iter()
        .map(|(name, terminals)| {
            let rule = NodeDiffusion::of(&terminals, false, name == output);
            (name, rule)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nand2_by_hand() {
        // NAND2, mu = 2: NMOS 2, 2 in series (the first at y), PMOS 2, 2 in parallel.
        // C_in = 4 per input, g = 4/3, output diffusion 2 + 2 + 2 = 6, p = 2 (common practice, no source)
        let t = |d: &str, s: &str| Terminals { drain: d.into(), source: s.into() };
        let terminals = [t("y", "n1"), t("n1", "vss"), t("y", "vdd"), t("y", "vdd")];
        let devices: Vec<DeviceLoad> = [(0, 2.0), (1, 2.0), (0, 2.0), (1, 2.0)]
            .iter()
            .zip(&terminals)
            .map(|(&(input, w_over_l), terminals)| DeviceLoad { input, w_over_l, terminals })
            .collect();
        let c = input_capacitance(&devices, 2);
        assert_eq!(c, [4.0, 4.0]);
        assert_eq!(logical_effort(&c, 3.0), [4.0 / 3.0, 4.0 / 3.0]);
        assert_eq!(parasitic_delay(&devices, "y", 3.0), 2.0);
    }

    #[test]
    fn a_shared_series_diffusion_is_as_wide_as_the_wider_device() {
        // NAND2 pull-down drawn as MN1 y-n1 (3 wide) over MN2 n1-vss (2 wide), two PMOS on y: n1 is one
        // region shared by the two series NMOS, as wide as the wider (3); the output keeps every drain
        // (3 + 2 + 2); rails count nothing (common practice, no source).
        let devices = [("y", "n1"), ("n1", "vss"), ("y", "vdd"), ("y", "vdd")];
        let widths = [3.0, 2.0, 2.0, 2.0];
        let nodes = node_diffusions(&devices, "y");
        assert_eq!(nodes[0], ("y".to_string(), NodeDiffusion::Separate(vec![0, 2, 3])));
        assert_eq!(nodes[1], ("n1".to_string(), NodeDiffusion::Shared(0, 1)));
        assert_eq!(nodes[0].1.width(&widths), 7.0);
        assert_eq!(nodes[1].1.width(&widths), 3.0);
        // Equal widths: the shared region is one device's width, as in the published NAND delays.
        assert_eq!(nodes[1].1.width(&[2.0, 2.0, 2.0, 2.0]), 2.0);
        // A node joining three terminals (a device over a parallel pair) keeps them all; a rail none.
        assert_eq!(NodeDiffusion::of(&[0, 1, 2], false, false).width(&widths), 7.0);
        assert_eq!(NodeDiffusion::of(&[0, 1], true, false).width(&widths), 0.0);
        // An inverter's output joins two devices but is the output: both drains count.
        assert_eq!(NodeDiffusion::of(&[0, 1], false, true).width(&widths), 5.0);
    }
}
