//! Diffusion geometry on a deck's device lines (AS, AD, PS, PD), from the process's
//! `diffusion_length_nm` and `shared_diffusion_length_nm`, so that a model library's own junction
//! model charges each source and drain (docs/model.md section 11).
//!
//! A terminal on a node that two series devices share (the rule of the delays and of the
//! diffusion capacitors: [`crate::figures::node_diffusions`]) gets half of one region as wide as
//! the wider device and `shared_diffusion_length_nm` long; every other terminal its own contacted
//! region, as wide as the device and `diffusion_length_nm` long. Perimeters count every edge of
//! the region, the gate's included (BSIM4's default `permod = 1`). A device of `m` fingers is one
//! instance line with `m=`, which ngspice multiplies out, so each value is per finger.

use crate::figures::{NodeDiffusion, node_diffusions};
use crate::number;
use crate::process::Process;

/// One device of a netlist as its geometry needs it: drain and source nodes, finger width (um)
/// and fingers.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Device<'a> {
    /// The drain's node.
    pub drain: &'a str,
    /// The source's node.
    pub source: &'a str,
    /// The width of one finger, um.
    pub finger_um: f64,
    /// Fingers.
    pub fingers: usize,
}

impl Device<'_> {
    fn total_um(&self) -> f64 {
        self.finger_um * self.fingers as f64
    }
}

/// One terminal's region per finger: area um^2 and perimeter um.
fn terminal(
    devices: &[Device<'_>],
    nodes: &[(String, NodeDiffusion)],
    index: usize,
    node: &str,
    process: &Process,
) -> (f64, f64) {
    let device = &devices[index];
    let contacted = process.diffusion_length_nm.unwrap_or(0.0) / 1000.0;
    let shared = process.shared_diffusion_length_nm.map_or(contacted, |length| length / 1000.0);
    let fingers = device.fingers.max(1) as f64;
    match nodes.iter().find(|(name, _)| name == node).map(|(_, rule)| rule) {
        Some(NodeDiffusion::Shared(first, second)) => {
            let width = devices[*first].total_um().max(devices[*second].total_um());
            (width * shared / 2.0 / fingers, (width + shared) / fingers)
        }
        _ => (device.finger_um * contacted, 2.0 * (device.finger_um + contacted)),
    }
}

/// The ` AD=.. AS=.. PD=.. PS=..` each device's line ends with, in order; `None` when the process
/// has no `diffusion_length_nm`.
pub fn suffixes(devices: &[Device<'_>], output: &str, process: &Process) -> Option<Vec<String>> {
    process.diffusion_length_nm?;
    let terminals: Vec<(&str, &str)> = devices.iter().map(|d| (d.drain, d.source)).collect();
    let nodes = node_diffusions(&terminals, output);
    Some(
        devices
            .iter()
            .enumerate()
            .map(|(index, device)| {
                let (drain_area, drain_perimeter) = terminal(devices, &nodes, index, device.drain, process);
                let (source_area, source_perimeter) = terminal(devices, &nodes, index, device.source, process);
                format!(
                    " AD={}p AS={}p PD={}u PS={}u",
                    number::format(drain_area),
                    number::format(source_area),
                    number::format(drain_perimeter),
                    number::format(source_perimeter)
                )
            })
            .collect(),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn contacted_and_shared_regions() {
        // NAND2's pull-down (MN1 y-n1, MN2 n1-vss, 2 um each) with contacted regions 0.3 um and
        // shared ones 0.2 um long: y and vss get 2 x 0.3 = 0.6 um^2 and 2 (2 + 0.3) = 4.6 um;
        // n1 is one region 2 um x 0.2 um, half to each device: 0.2 um^2 and (2 + 0.2) um (rectangle
        // area and perimeter, common practice, no source).
        let process =
            Process { diffusion_length_nm: Some(300.0), shared_diffusion_length_nm: Some(200.0), ..Process::default() };
        let devices = [
            Device { drain: "y", source: "n1", finger_um: 2.0, fingers: 1 },
            Device { drain: "n1", source: "vss", finger_um: 2.0, fingers: 1 },
        ];
        let lines = suffixes(&devices, "y", &process).unwrap();
        assert_eq!(lines, [" AD=0.6p AS=0.2p PD=4.6u PS=2.2u", " AD=0.2p AS=0.6p PD=2.2u PS=4.6u"]);
        // Two fingers of 1 um: each finger's own region, ngspice multiplies by m.
        let folded = [Device { drain: "y", source: "vss", finger_um: 1.0, fingers: 2 }];
        assert_eq!(suffixes(&folded, "y", &process).unwrap(), [" AD=0.3p AS=0.3p PD=2.6u PS=2.6u"]);
        assert_eq!(suffixes(&folded, "y", &Process::default()), None);
    }
}
