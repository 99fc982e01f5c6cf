//! Figures of a sized gate: input capacitance per input, logical effort, parasitic delay, totals.
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
}
