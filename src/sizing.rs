//! Sizing: targets from the reference inverter, then every device's W/L so that every
//! conducting path is at most the target, by the longest-path rule or the exact min-area optimum.
//!
//! Sizes are relative W/L: 1 is the unit NMOS, the reference inverter's NMOS at drive 1 when the
//! reference is balanced. Resistances are in units of R, the unit NMOS's on-resistance.

use crate::network::{Network, NetworkKind, Node};

/// How widths are chosen.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize, serde::Deserialize, clap::ValueEnum)]
#[serde(rename_all = "kebab-case")]
pub enum Method {
    /// Each device: reference W/L x the number of devices on the longest path through it.
    LongestPath,
    /// Least total W/L with every path at most the target (exact closed form).
    MinArea,
    /// Least total W/L with every worst-case Elmore delay at most the reference inverter's driving the
    /// same load (a geometric program).
    // Solved by the delay stage (`delay::size_gate`), which knows the load; `size` gives its start.
    Elmore,
}

impl Method {
    /// Every method, default first.
    pub const ALL: [Method; 3] = [Method::LongestPath, Method::MinArea, Method::Elmore];

    /// `"longest-path"`, `"min-area"` or `"elmore"`.
    pub fn name(self) -> &'static str {
        match self {
            Method::LongestPath => "longest-path",
            Method::MinArea => "min-area",
            Method::Elmore => "elmore",
        }
    }

    /// The path-constrained method to compare with: longest-path and min-area each other; the elmore
    /// method min-area, the least area that meets the path constraint alone. The delay stage compares
    /// all three.
    pub fn other(self) -> Method {
        match self {
            Method::LongestPath | Method::Elmore => Method::MinArea,
            Method::MinArea => Method::LongestPath,
        }
    }
}

/// The reference inverter: NMOS and PMOS W/L at drive 1. Drive scales both.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Reference {
    /// NMOS W/L at drive 1.
    pub nmos: f64,
    /// PMOS W/L at drive 1.
    pub pmos: f64,
}

impl Reference {
    /// The balanced reference: NMOS 1, PMOS `mu`, both pulling with resistance R.
    pub fn balanced(mobility_ratio: f64) -> Reference {
        Reference { nmos: 1.0, pmos: mobility_ratio }
    }

    /// Gate capacitance of the unit (drive 1) reference, `C_inv`, in units of the unit NMOS's.
    pub fn input_capacitance(&self) -> f64 {
        self.nmos + self.pmos
    }
}

/// Everything sizing needs to know.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct SizingOptions {
    /// Longest-path or min-area.
    pub method: Method,
    /// Mobility ratio mu_n / mu_p.
    pub mobility_ratio: f64,
    /// Drive strength: multiple of the unit reference inverter.
    pub drive: f64,
    /// The unit reference inverter (balanced unless skewed on purpose).
    pub reference: Reference,
}

impl SizingOptions {
    /// Defaults: longest-path, mu = 2, drive 1, balanced reference.
    pub fn new(method: Method, mobility_ratio: f64, drive: f64, reference: Option<Reference>) -> SizingOptions {
        SizingOptions {
            method,
            mobility_ratio,
            drive,
            reference: reference.unwrap_or_else(|| Reference::balanced(mobility_ratio)),
        }
    }

    /// The reference W/L of a device in `kind`'s network, at this drive.
    pub fn reference_width(&self, kind: NetworkKind) -> f64 {
        self.drive
            * match kind {
                NetworkKind::PullDown => self.reference.nmos,
                NetworkKind::PullUp => self.reference.pmos,
            }
    }

    /// Resistance of one device of W/L 1 in `kind`'s network, in units of R.
    pub fn unit_resistance(&self, kind: NetworkKind) -> f64 {
        match kind {
            NetworkKind::PullDown => 1.0,
            NetworkKind::PullUp => self.mobility_ratio,
        }
    }

    /// The network's target: the reference inverter's resistance on that side, in units of R.
    pub fn target(&self, kind: NetworkKind) -> f64 {
        self.unit_resistance(kind) / self.reference_width(kind)
    }

    /// Resistances of devices of the given widths in `kind`'s network.
    pub fn resistances(&self, kind: NetworkKind, widths: &[f64]) -> Vec<f64> {
        let unit = self.unit_resistance(kind);
        widths.iter().map(|w| unit / w).collect()
    }
}

/// W/L of every device of `network` (indexed by device).
pub fn size(network: &Network, method: Method, options: &SizingOptions) -> Vec<f64> {
    let reference = options.reference_width(network.kind);
    let mut widths = vec![0.0; network.device_count()];
    match method {
        Method::LongestPath => longest_path(&network.root, 0, reference, &mut widths),
        // The elmore method's program starts from the min-area widths; the delay stage replaces them.
        Method::MinArea | Method::Elmore => {
            // Budgets are fractions of the target; a device with budget b gets reference x (1 / b).
            min_area(&network.root, 1.0, reference, &mut widths);
        }
    }
    widths
}

/// Devices on the longest path through the node's subtree.
pub fn depth(node: &Node) -> usize {
    match node {
        Node::Device(_) => 1,
        Node::Series(members) => members.iter().map(depth).sum(),
        Node::Parallel(branches) => branches.iter().map(depth).max().unwrap_or(0),
    }
}

/// `outside`: devices the longest path through this node has outside it.
fn longest_path(node: &Node, outside: usize, reference: f64, widths: &mut [f64]) {
    match node {
        Node::Device(index) => widths[*index] = reference * (outside + 1) as f64,
        Node::Parallel(branches) => branches.iter().for_each(|b| longest_path(b, outside, reference, widths)),
        Node::Series(members) => {
            let total: usize = members.iter().map(depth).sum();
            for member in members {
                longest_path(member, outside + total - depth(member), reference, widths);
            }
        }
    }
}

/// The area constant `K` of a subtree: its total W/L is `K x reference / budget`.
pub fn area_constant(node: &Node) -> f64 {
    match node {
        Node::Device(_) => 1.0,
        Node::Parallel(branches) => branches.iter().map(area_constant).sum(),
        Node::Series(members) => members.iter().map(|m| area_constant(m).sqrt()).sum::<f64>().powi(2),
    }
}

/// Hand `budget` (a fraction of the target) down the tree: parallel branches each get all of it,
/// series members shares in proportion to `sqrt(K_i)`.
fn min_area(node: &Node, budget: f64, reference: f64, widths: &mut [f64]) -> f64 {
    match node {
        Node::Device(index) => {
            widths[*index] = reference / budget;
            1.0
        }
        Node::Parallel(branches) => branches.iter().map(|b| min_area(b, budget, reference, widths)).sum(),
        Node::Series(members) => {
            let total: f64 = members.iter().map(|m| area_constant(m).sqrt()).sum();
            for member in members {
                min_area(member, budget * area_constant(member).sqrt() / total, reference, widths);
            }
            total * total
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::expr::read_gate;
    use approx::assert_relative_eq;

    fn widths(text: &str, method: Method, kind: NetworkKind) -> Vec<f64> {
        let gate = read_gate(text).unwrap();
        let network = Network::build(&gate, kind);
        let options = SizingOptions::new(method, 2.0, 1.0, None);
        size(&network, method, &options)
    }

    #[test]
    fn longest_path_counts_devices_on_the_longest_path() {
        // NAND3 (mu = 2): NMOS 3 each, PMOS 2 each (common practice, no source)
        assert_eq!(widths("nand3", Method::LongestPath, NetworkKind::PullDown), [3.0; 3]);
        assert_eq!(widths("nand3", Method::LongestPath, NetworkKind::PullUp), [2.0; 3]);
        // a in series with (b || c): 2, 2, 2
        assert_eq!(widths("!(a & (b | c))", Method::LongestPath, NetworkKind::PullDown), [2.0; 3]);
    }

    #[test]
    fn min_area_closed_form() {
        // a in series with (b || c), mu = 2: a = 1 + sqrt 2, b = c = (2 + sqrt 2) / 2
        // (the series rule B_i = B sqrt(K_i) / sum sqrt(K_j); derived by hand)
        let w = widths("!(a & (b | c))", Method::MinArea, NetworkKind::PullDown);
        assert_relative_eq!(w[0], 1.0 + 2f64.sqrt(), epsilon = 1e-12);
        assert_relative_eq!(w[1], 1.0 + 2f64.sqrt() / 2.0, epsilon = 1e-12);
        assert_relative_eq!(w[2], w[1], epsilon = 1e-12);
        assert_relative_eq!(w.iter().sum::<f64>(), (1.0 + 2f64.sqrt()).powi(2), epsilon = 1e-12);
    }

    #[test]
    fn skewed_reference_sets_each_side_its_own_target() {
        let options = SizingOptions::new(Method::LongestPath, 2.0, 2.0, Some(Reference { nmos: 1.0, pmos: 3.0 }));
        assert_relative_eq!(options.target(NetworkKind::PullDown), 0.5);
        assert_relative_eq!(options.target(NetworkKind::PullUp), 2.0 / 6.0);
    }
}
