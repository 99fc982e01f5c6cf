//! Paths and the worst case: the weakest conducting path and its input vector, the best case,
//! the number of paths (counted, never enumerated) and a listing of the weakest few.
//!
//! Resistances are in units of R, the on-resistance of the unit NMOS; `resistance[k]` is device
//! `k`'s. The weakest path comes from recursion (series: sum, parallel: max), so the work is
//! linear in the size of the network however many paths it has.

use std::cmp::Reverse;
use std::collections::BinaryHeap;

use num_bigint::BigUint;

use crate::network::{Network, NetworkKind, Node};

/// Most paths a listing returns.
pub const MAX_LISTED_PATHS: usize = 10_000;
/// Most inputs for which the exact worst case over input vectors is computed by enumeration.
pub const EXACT_WORST_MAX_INPUTS: usize = 16;

/// One conducting path from the output to the rail.
#[derive(Debug, Clone, PartialEq)]
pub struct Path {
    /// Its resistance, in units of R.
    pub resistance: f64,
    /// Its devices, output side first.
    pub devices: Vec<usize>,
}

/// The weakest (highest-resistance) path; ties go to the first branch.
pub fn weakest(network: &Network, resistance: &[f64]) -> Path {
    fn walk(node: &Node, resistance: &[f64], devices: &mut Vec<usize>) -> f64 {
        match node {
            Node::Device(index) => {
                devices.push(*index);
                resistance[*index]
            }
            Node::Series(members) => members.iter().map(|m| walk(m, resistance, devices)).sum(),
            Node::Parallel(branches) => {
                let best = branches
                    .iter()
                    .enumerate()
                    .map(|(i, b)| (i, highest(b, resistance)))
                    .fold((0, f64::NEG_INFINITY), |acc, (i, r)| if key(r) > key(acc.1) { (i, r) } else { acc });
                walk(&branches[best.0], resistance, devices)
            }
        }
    }
    let mut devices = Vec::new();
    let resistance = walk(&network.root, resistance, &mut devices);
    Path { resistance, devices }
}

/// The weakest path's resistance alone.
pub fn highest(node: &Node, resistance: &[f64]) -> f64 {
    match node {
        Node::Device(index) => resistance[*index],
        Node::Series(members) => members.iter().map(|m| highest(m, resistance)).sum(),
        Node::Parallel(branches) => branches.iter().map(|b| highest(b, resistance)).fold(f64::NEG_INFINITY, f64::max),
    }
}

/// The weakest path that goes through `device`, or `None` if the network has no such device.
pub fn weakest_through(network: &Network, resistance: &[f64], device: usize) -> Option<Path> {
    fn contains(node: &Node, device: usize) -> bool {
        match node {
            Node::Device(index) => *index == device,
            Node::Series(children) | Node::Parallel(children) => children.iter().any(|c| contains(c, device)),
        }
    }
    fn walk(node: &Node, resistance: &[f64], device: usize, devices: &mut Vec<usize>) -> f64 {
        match node {
            Node::Device(index) => {
                devices.push(*index);
                resistance[*index]
            }
            Node::Series(members) => members
                .iter()
                .map(|m| {
                    if contains(m, device) {
                        walk(m, resistance, device, devices)
                    } else {
                        let path = weakest(&Network { kind: NetworkKind::PullDown, root: m.clone() }, resistance);
                        devices.extend(path.devices);
                        path.resistance
                    }
                })
                .sum(),
            Node::Parallel(branches) => {
                let branch = branches.iter().find(|b| contains(b, device)).expect("the device is in one branch");
                walk(branch, resistance, device, devices)
            }
        }
    }
    if !contains(&network.root, device) {
        return None;
    }
    let mut devices = Vec::new();
    let resistance = walk(&network.root, resistance, device, &mut devices);
    Some(Path { resistance, devices })
}

/// Resistance with every device on: series sum, parallel `1 / sum(1/r)`.
pub fn best_case(network: &Network, resistance: &[f64]) -> f64 {
    let on = vec![true; resistance.len()];
    effective_resistance(network, resistance, &on).unwrap_or(f64::INFINITY)
}

/// Resistance of what conducts when the devices in `on` are on; `None` when nothing conducts.
pub fn effective_resistance(network: &Network, resistance: &[f64], on: &[bool]) -> Option<f64> {
    fn walk(node: &Node, resistance: &[f64], on: &[bool]) -> Option<f64> {
        match node {
            Node::Device(index) => on[*index].then_some(resistance[*index]),
            Node::Series(members) => members.iter().map(|m| walk(m, resistance, on)).sum(),
            Node::Parallel(branches) => {
                let conductance: f64 = branches.iter().filter_map(|b| walk(b, resistance, on)).map(|r| 1.0 / r).sum();
                (conductance > 0.0).then(|| 1.0 / conductance)
            }
        }
    }
    walk(&network.root, resistance, on)
}

/// How many paths the network has: series multiply, parallel add. Exact, for any size.
pub fn count(network: &Network) -> BigUint {
    fn walk(node: &Node) -> BigUint {
        match node {
            Node::Device(_) => BigUint::from(1u8),
            Node::Series(members) => members.iter().map(walk).product(),
            Node::Parallel(branches) => branches.iter().map(walk).sum(),
        }
    }
    walk(&network.root)
}

/// The `limit` weakest paths, weakest first (ties in tree order), without enumerating the rest.
pub fn list(network: &Network, resistance: &[f64], limit: usize) -> Vec<Path> {
    fn walk(node: &Node, resistance: &[f64], limit: usize) -> Vec<Path> {
        match node {
            Node::Device(index) => vec![Path { resistance: resistance[*index], devices: vec![*index] }],
            Node::Parallel(branches) => {
                let mut all: Vec<Path> = branches.iter().flat_map(|b| walk(b, resistance, limit)).collect();
                all.sort_by_key(|p| Reverse(key(p.resistance)));
                all.truncate(limit);
                all
            }
            Node::Series(members) => {
                let mut lists = members.iter().map(|m| walk(m, resistance, limit));
                let first = lists.next().unwrap_or_default();
                lists.fold(first, |upper, lower| combine(&upper, &lower, limit))
            }
        }
    }
    if limit == 0 {
        return Vec::new();
    }
    walk(&network.root, resistance, limit.min(MAX_LISTED_PATHS))
}

/// The `limit` largest sums of one path from each sorted list (the k-best pairs, by a heap).
fn combine(upper: &[Path], lower: &[Path], limit: usize) -> Vec<Path> {
    let mut out = Vec::with_capacity(limit.min(upper.len() * lower.len()));
    let mut heap = BinaryHeap::new();
    let mut seen = std::collections::HashSet::new();
    let sum = |i: usize, j: usize| upper[i].resistance + lower[j].resistance;
    heap.push((key(sum(0, 0)), Reverse((0usize, 0usize))));
    seen.insert((0, 0));
    while let Some((_, Reverse((i, j)))) = heap.pop() {
        let mut devices = upper[i].devices.clone();
        devices.extend_from_slice(&lower[j].devices);
        out.push(Path { resistance: sum(i, j), devices });
        if out.len() == limit {
            break;
        }
        for (a, b) in [(i + 1, j), (i, j + 1)] {
            if a < upper.len() && b < lower.len() && seen.insert((a, b)) {
                heap.push((key(sum(a, b)), Reverse((a, b))));
            }
        }
    }
    out
}

/// Resistances compared to 1e-9 R, so that equal paths tie whatever the rounding.
fn key(resistance: f64) -> i64 {
    (resistance * 1e9).round() as i64
}

/// The input vector that makes `path` the only conducting path of the network, or `None` where
/// repeated inputs make that impossible. `input_of[k]` is device `k`'s input.
///
/// The path's inputs go to their on-level and every other input to its off-level: turning a device
/// off never makes a path conduct, so if another path still conducts under this vector, it conducts
/// under every vector that turns this one on.
pub fn sensitize(network: &Network, path: &[usize], input_of: &[usize], input_count: usize) -> Option<Vec<bool>> {
    let on_level = network.kind.conducts(true);
    let mut values = vec![!on_level; input_count];
    for &device in path {
        values[input_of[device]] = on_level;
    }
    let on: Vec<bool> = input_of.iter().map(|&input| network.kind.conducts(values[input])).collect();
    (conducting_paths(&network.root, &on) == 1).then_some(values)
}

/// How many paths conduct when the devices in `on` are on (saturating).
fn conducting_paths(node: &Node, on: &[bool]) -> u64 {
    match node {
        Node::Device(index) => u64::from(on[*index]),
        Node::Series(members) => {
            members.iter().fold(1u64, |product, m| product.saturating_mul(conducting_paths(m, on)))
        }
        Node::Parallel(branches) => branches.iter().fold(0u64, |sum, b| sum.saturating_add(conducting_paths(b, on))),
    }
}

/// The exact worst case: the highest resistance of what conducts over every input vector for which
/// the network conducts, with that vector. `None` past [`EXACT_WORST_MAX_INPUTS`] inputs.
pub fn exact_worst(
    network: &Network,
    resistance: &[f64],
    input_of: &[usize],
    input_count: usize,
) -> Option<(f64, Vec<bool>)> {
    if input_count > EXACT_WORST_MAX_INPUTS {
        return None;
    }
    let mut worst: Option<(f64, u64)> = None;
    let mut on = vec![false; input_of.len()];
    for vector in 0..(1u64 << input_count) {
        for (device, &input) in input_of.iter().enumerate() {
            on[device] = network.kind.conducts(vector >> input & 1 == 1);
        }
        if let Some(r) = effective_resistance(network, resistance, &on)
            && worst.is_none_or(|(w, _)| key(r) > key(w))
        {
            worst = Some((r, vector));
        }
    }
    worst.map(|(r, vector)| (r, (0..input_count).map(|i| vector >> i & 1 == 1).collect()))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::expr::read_gate;

    fn pull_down(text: &str) -> (Network, Vec<usize>, usize) {
        let gate = read_gate(text).unwrap();
        let [down, _] = Network::pair(&gate);
        (down, gate.literals.iter().map(|l| l.input).collect(), gate.inputs.len())
    }

    #[test]
    fn weakest_path_and_its_vector() {
        let (down, input_of, inputs) = pull_down("!(a & (b | c))");
        let r = [0.5, 1.0, 0.25];
        let path = weakest(&down, &r);
        assert_eq!(path.devices, vec![0, 1]);
        assert!((path.resistance - 1.5).abs() < 1e-12);
        assert_eq!(sensitize(&down, &path.devices, &input_of, inputs), Some(vec![true, true, false]));
        assert!((best_case(&down, &r) - (0.5 + 0.2)).abs() < 1e-12);
    }

    #[test]
    fn weakest_path_through_a_given_device() {
        let (down, _, _) = pull_down("!(a & (b | c) | d)");
        let r = [0.5, 1.0, 0.25, 2.0];
        let through_c = weakest_through(&down, &r, 2).unwrap();
        assert_eq!(through_c.devices, vec![0, 2]);
        assert!((through_c.resistance - 0.75).abs() < 1e-12);
        assert_eq!(weakest_through(&down, &r, 3).unwrap().devices, vec![3]);
        assert_eq!(weakest_through(&down, &r, 9), None);
    }

    #[test]
    fn path_count_is_exact_beyond_machine_words() {
        // 200 parallel pairs in series: 2^200 paths.
        let group: Vec<String> = (0..200).map(|i| format!("(a{i} | b{i})")).collect();
        let (down, _, _) = pull_down(&format!("!({})", group.join(" & ")));
        assert_eq!(count(&down), BigUint::from(1u8) << 200);
        let listed = list(&down, &vec![1.0; 400], 5);
        assert_eq!(listed.len(), 5);
    }

    #[test]
    fn listing_is_weakest_first() {
        let (down, _, _) = pull_down("!((a | b) & (c | d))");
        let r = [1.0, 3.0, 2.0, 5.0];
        let listed: Vec<f64> = list(&down, &r, 10).iter().map(|p| p.resistance).collect();
        assert_eq!(listed, vec![8.0, 6.0, 5.0, 3.0]);
    }

    #[test]
    fn repeated_inputs_can_block_a_path() {
        // !(a & b | a & c): a=1 b=1 c=0 turns on the second a too, but its path stays open at c,
        // so the first path still conducts alone.
        let (down, input_of, inputs) = pull_down("!(a & b | a & c)");
        assert_eq!(sensitize(&down, &[0, 1], &input_of, inputs), Some(vec![true, true, false]));
        let (exact, vector) = exact_worst(&down, &[0.5; 4], &input_of, inputs).unwrap();
        assert!((exact - 1.0).abs() < 1e-12);
        assert_eq!(vector, vec![true, true, false]);
        // !((a | b) & (a | c)): the pull-down path through the first a and c turns on the second a,
        // which closes the path a-a as well, so it never conducts alone.
        let (down, input_of, inputs) = pull_down("!((a | b) & (a | c))");
        assert_eq!(sensitize(&down, &[0, 3], &input_of, inputs), None);
        assert_eq!(sensitize(&down, &[0, 2], &input_of, inputs), Some(vec![true, false, false]));
    }
}
