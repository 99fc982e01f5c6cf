//! The path rules: every device's W/L so that every conducting path is at most the network's
//! target, by the longest-path rule or the exact min-area optimum (docs/model.md section 5).
//!
//! Sizes are relative W/L: 1 is the unit NMOS. `reference` is the reference inverter's W/L on the
//! network's side at the drive; a device with W/L `reference` pulls with the target resistance.

use crate::network::{Network, Node, NodeTable};

/// A path rule.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Rule {
    /// Each device: reference W/L x the number of devices on the longest path through it.
    LongestPath,
    /// Least total W/L with every path at most the target (exact closed form).
    MinArea,
}

/// W/L of every device of `network` (indexed by device) by `rule`, where `reference` is the
/// reference inverter's W/L on the network's side.
///
/// Each rule needs a figure of every subtree (its depth, its area constant): those are worked out
/// once, bottom-up, into a [`NodeTable`], and the widths handed down in a second pass, so the work is
/// linear in the network however deep it nests.
pub fn widths(network: &Network, rule: Rule, reference: f64) -> Vec<f64> {
    let mut widths = vec![0.0; network.device_count()];
    match rule {
        Rule::LongestPath => {
            let depths = depths(&network.root);
            longest_path(&network.root, 0, &depths, 0, reference, &mut widths);
        }
        // Budgets are fractions of the target; a device with budget b gets reference x (1 / b).
        Rule::MinArea => {
            let constants = area_constants(&network.root);
            min_area(&network.root, 0, &constants, 1.0, reference, &mut widths);
        }
    }
    widths
}

/// The total W/L `rule` gives the network.
pub fn total(network: &Network, rule: Rule, reference: f64) -> f64 {
    widths(network, rule, reference).iter().sum()
}

/// Every subtree's depth (devices on its longest path), by node number.
fn depths(root: &Node) -> NodeTable<usize> {
    NodeTable::of(root, |node, members: &[usize]| match node {
        Node::Device(_) => 1,
        Node::Series(_) => members.iter().sum(),
        Node::Parallel(_) => members.iter().copied().max().unwrap_or(0),
    })
}

/// `outside`: devices the longest path through this node (number `id`) has outside it.
fn longest_path(node: &Node, id: usize, depths: &NodeTable<usize>, outside: usize, reference: f64, widths: &mut [f64]) {
    match node {
        Node::Device(index) => widths[*index] = reference * (outside + 1) as f64,
        Node::Parallel(_) => {
            for (member_id, branch) in depths.members(node, id) {
                longest_path(branch, member_id, depths, outside, reference, widths);
            }
        }
        Node::Series(_) => {
            let total = depths.get(id);
            for (member_id, member) in depths.members(node, id) {
                longest_path(member, member_id, depths, outside + total - depths.get(member_id), reference, widths);
            }
        }
    }
}

/// The area constant `K` of a subtree: its total W/L is `K x reference / budget`. The plain
/// recursive definition, for one subtree; [`area_constants`] gives every subtree's at once.
pub fn area_constant(node: &Node) -> f64 {
    match node {
        Node::Device(_) => 1.0,
        Node::Parallel(branches) => branches.iter().map(area_constant).sum(),
        Node::Series(members) => members.iter().map(|m| area_constant(m).sqrt()).sum::<f64>().powi(2),
    }
}

/// Every subtree's area constant `K`, by node number, in one pass: the same sums, in the same
/// order, as [`area_constant`].
fn area_constants(root: &Node) -> NodeTable<f64> {
    NodeTable::of(root, |node, members: &[f64]| match node {
        Node::Device(_) => 1.0,
        Node::Parallel(_) => members.iter().sum(),
        Node::Series(_) => members.iter().map(|k| k.sqrt()).sum::<f64>().powi(2),
    })
}

/// Hand `budget` (a fraction of the target) down the tree from node `id`: parallel branches each
/// get all of it, series members shares in proportion to `sqrt(K_i)`.
fn min_area(node: &Node, id: usize, constants: &NodeTable<f64>, budget: f64, reference: f64, widths: &mut [f64]) {
    match node {
        Node::Device(index) => widths[*index] = reference / budget,
        Node::Parallel(_) => {
            for (member_id, branch) in constants.members(node, id) {
                min_area(branch, member_id, constants, budget, reference, widths);
            }
        }
        Node::Series(_) => {
            let total: f64 = constants.members(node, id).map(|(member_id, _)| constants.get(member_id).sqrt()).sum();
            for (member_id, member) in constants.members(node, id) {
                let share = budget * constants.get(member_id).sqrt() / total;
                min_area(member, member_id, constants, share, reference, widths);
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::expr::read_gate;
    use crate::network::NetworkKind;
    use approx::assert_relative_eq;

    /// Widths at mu = 2, drive 1, balanced reference (NMOS 1, PMOS 2).
    fn sized(text: &str, rule: Rule, kind: NetworkKind) -> Vec<f64> {
        let gate = read_gate(text).unwrap();
        let reference = if kind == NetworkKind::PullDown { 1.0 } else { 2.0 };
        widths(&Network::build(&gate, kind), rule, reference)
    }

    #[test]
    fn longest_path_counts_devices_on_the_longest_path() {
        // NAND3 (mu = 2): NMOS 3 each, PMOS 2 each (common practice, no source)
        assert_eq!(sized("nand3", Rule::LongestPath, NetworkKind::PullDown), [3.0; 3]);
        assert_eq!(sized("nand3", Rule::LongestPath, NetworkKind::PullUp), [2.0; 3]);
        // a in series with (b || c): 2, 2, 2
        assert_eq!(sized("!(a & (b | c))", Rule::LongestPath, NetworkKind::PullDown), [2.0; 3]);
    }

    #[test]
    fn min_area_closed_form() {
        // a in series with (b || c), mu = 2: a = 1 + sqrt 2, b = c = (2 + sqrt 2) / 2
        // (the series rule B_i = B sqrt(K_i) / sum sqrt(K_j); docs/model.md section 5, worked example)
        let w = sized("!(a & (b | c))", Rule::MinArea, NetworkKind::PullDown);
        assert_relative_eq!(w[0], 1.0 + 2f64.sqrt(), epsilon = 1e-12);
        assert_relative_eq!(w[1], 1.0 + 2f64.sqrt() / 2.0, epsilon = 1e-12);
        assert_relative_eq!(w[2], w[1], epsilon = 1e-12);
        assert_relative_eq!(w.iter().sum::<f64>(), (1.0 + 2f64.sqrt()).powi(2), epsilon = 1e-12);
        let network = Network::build(&read_gate("!(a & (b | c))").unwrap(), NetworkKind::PullDown);
        assert_relative_eq!(total(&network, Rule::MinArea, 1.0), w.iter().sum::<f64>(), epsilon = 1e-12);
    }

    /// The longest-path rule by its plain recursive definition (docs/model.md section 5): each
    /// device, reference x the devices on the longest path through it, the depth of every series
    /// member recounted at every level.
    fn plain_longest_path(node: &Node, outside: usize, reference: f64, widths: &mut [f64]) {
        match node {
            Node::Device(index) => widths[*index] = reference * (outside + 1) as f64,
            Node::Parallel(branches) => branches.iter().for_each(|b| plain_longest_path(b, outside, reference, widths)),
            Node::Series(members) => {
                let total: usize = members.iter().map(Node::depth).sum();
                for member in members {
                    plain_longest_path(member, outside + total - member.depth(), reference, widths);
                }
            }
        }
    }

    /// Min-area by its plain recursive definition (docs/model.md section 5): series members share
    /// the budget in proportion to sqrt(K_i), each K recounted at every level.
    fn plain_min_area(node: &Node, budget: f64, reference: f64, widths: &mut [f64]) {
        match node {
            Node::Device(index) => widths[*index] = reference / budget,
            Node::Parallel(branches) => branches.iter().for_each(|b| plain_min_area(b, budget, reference, widths)),
            Node::Series(members) => {
                let total: f64 = members.iter().map(|m| area_constant(m).sqrt()).sum();
                for member in members {
                    plain_min_area(member, budget * area_constant(member).sqrt() / total, reference, widths);
                }
            }
        }
    }

    /// The tables and the widths read from them equal the plain recursive definitions, to the bit.
    fn check_against_plain(root: Node, count: usize) {
        let network = Network { kind: NetworkKind::PullDown, root, inputs: (0..count).collect() };
        let subtrees = crate::network::random_trees::pre_order(&network.root);
        let (depths, constants) = (depths(&network.root), area_constants(&network.root));
        for (id, subtree) in subtrees.iter().enumerate() {
            assert_eq!(depths.get(id), subtree.depth(), "depth of node {id}");
            assert_eq!(constants.get(id).to_bits(), area_constant(subtree).to_bits(), "K of node {id}");
        }
        let mut plain = vec![0.0; count];
        plain_longest_path(&network.root, 0, 1.5, &mut plain);
        assert_eq!(widths(&network, Rule::LongestPath, 1.5), plain);
        plain_min_area(&network.root, 1.0, 1.5, &mut plain);
        assert_eq!(widths(&network, Rule::MinArea, 1.5), plain);
    }

    #[test]
    fn deep_chains_match_the_plain_definitions() {
        for levels in [1, 2, 7, 300] {
            let (root, count) = crate::network::random_trees::chain(levels);
            check_against_plain(root, count);
        }
    }

    proptest::proptest! {
        #[test]
        fn tables_match_the_plain_definitions_on_random_trees(
            (root, count) in crate::network::random_trees::trees(12, 80)
        ) {
            check_against_plain(root, count);
        }
    }
}
