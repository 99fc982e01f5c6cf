//! Paths and the worst case: the weakest conducting path and its input vector, the best case,
//! the number of paths (counted, never enumerated) and a listing of the weakest few.
//!
//! Resistances are in units of R, the on-resistance of the unit NMOS; `resistance[k]` is device
//! `k`'s. The weakest path comes from recursion (series: sum, parallel: max), so the work is
//! linear in the size of the network however many paths it has.

use std::cmp::Reverse;
use std::collections::BinaryHeap;

use num_bigint::BigUint;

use crate::network::{Network, NetworkKind, Node, NodeTable};

/// Most paths a listing returns.
pub const MAX_LISTED_PATHS: usize = 10_000;
/// Most inputs for which the exact worst case over input vectors is computed by enumeration.
pub const EXACT_WORST_MAX_INPUTS: usize = 16;

/// An input vector: one value per input, in input order.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Vector {
    /// Input names and values.
    pub values: Vec<(String, bool)>,
}

impl Vector {
    /// The vector giving `values[i]` to `inputs[i]`.
    pub fn new(inputs: &[String], values: &[bool]) -> Vector {
        Vector { values: inputs.iter().cloned().zip(values.iter().copied()).collect() }
    }
}

impl std::fmt::Display for Vector {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        for (index, (name, value)) in self.values.iter().enumerate() {
            if index > 0 {
                f.write_str(" ")?;
            }
            write!(f, "{name}={}", u8::from(*value))?;
        }
        Ok(())
    }
}

impl serde::Serialize for Vector {
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        use serde::ser::SerializeMap;
        let mut map = serializer.serialize_map(Some(self.values.len()))?;
        for (name, value) in &self.values {
            map.serialize_entry(name, &u8::from(*value))?;
        }
        map.end()
    }
}

/// One conducting path from the output to the rail.
#[derive(Debug, Clone, PartialEq)]
pub struct Path {
    /// Its resistance, in units of R.
    pub resistance: f64,
    /// Its devices, output side first.
    pub devices: Vec<usize>,
}

/// The weakest (highest-resistance) path; ties go to the first branch.
///
/// Each subtree's weakest path resistance is worked out once ([`weakest_table`]) and the path read
/// down the tree from it, so the work is linear in the network however deep it nests.
pub fn weakest(network: &Network, resistance: &[f64]) -> Path {
    let table = weakest_table(&network.root, resistance);
    let mut devices = Vec::new();
    weakest_in(&network.root, 0, &table, &mut devices);
    Path { resistance: table.get(0).path, devices }
}

/// A subtree's weakest path, as [`weakest_table`] holds it.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
struct Weakest {
    /// The highest resistance of a path through it (what [`highest`] gives): what a parallel group
    /// chooses its branch by.
    highest: f64,
    /// The resistance of the path the rule takes through it, summed along that path.
    path: f64,
}

/// Every subtree's weakest path, by node number: series members add, and a parallel group takes
/// the branch of the highest resistance (compared by [`key`]), the first of a tie.
fn weakest_table(root: &Node, resistance: &[f64]) -> NodeTable<Weakest> {
    NodeTable::of(root, |node, members: &[Weakest]| match node {
        Node::Device(index) => Weakest { highest: resistance[*index], path: resistance[*index] },
        Node::Series(_) => {
            Weakest { highest: members.iter().map(|m| m.highest).sum(), path: members.iter().map(|m| m.path).sum() }
        }
        Node::Parallel(_) => Weakest {
            highest: members.iter().map(|m| m.highest).fold(f64::NEG_INFINITY, f64::max),
            path: members.get(pick(members.iter().map(|m| m.highest))).map_or(f64::NEG_INFINITY, |m| m.path),
        },
    })
}

/// Which of parallel branches of these highest resistances the weakest path takes: the highest
/// (compared by [`key`]), the first of a tie.
fn pick(branches: impl Iterator<Item = f64>) -> usize {
    branches.enumerate().fold((0, f64::NEG_INFINITY), |acc, (i, r)| if key(r) > key(acc.1) { (i, r) } else { acc }).0
}

/// The weakest path of a subtree (node `id` of `table`): its devices pushed onto `devices`.
fn weakest_in(node: &Node, id: usize, table: &NodeTable<Weakest>, devices: &mut Vec<usize>) {
    match node {
        Node::Device(index) => devices.push(*index),
        Node::Series(_) => {
            for (member_id, member) in table.members(node, id) {
                weakest_in(member, member_id, table, devices);
            }
        }
        Node::Parallel(_) => {
            let chosen = pick(table.members(node, id).map(|(member_id, _)| table.get(member_id).highest));
            if let Some((member_id, branch)) = table.members(node, id).nth(chosen) {
                weakest_in(branch, member_id, table, devices);
            }
        }
    }
}

/// The weakest path's resistance alone (one recursion over the tree).
pub fn highest(node: &Node, resistance: &[f64]) -> f64 {
    match node {
        Node::Device(index) => resistance[*index],
        Node::Series(members) => members.iter().map(|m| highest(m, resistance)).sum(),
        Node::Parallel(branches) => branches.iter().map(|b| highest(b, resistance)).fold(f64::NEG_INFINITY, f64::max),
    }
}

/// The weakest path that goes through `device`, or `None` if the network has no such device.
///
/// Which subtrees hold the device, and each subtree's weakest path, are worked out once; the path is
/// then read down the tree, so the work is linear in the network however deep it nests.
pub fn weakest_through(network: &Network, resistance: &[f64], device: usize) -> Option<Path> {
    let weakest = weakest_table(&network.root, resistance);
    let holds = NodeTable::of(&network.root, |node, members: &[bool]| match node {
        Node::Device(index) => *index == device,
        Node::Series(_) | Node::Parallel(_) => members.iter().any(|&m| m),
    });
    fn walk(
        node: &Node,
        id: usize,
        holds: &NodeTable<bool>,
        weakest: &NodeTable<Weakest>,
        devices: &mut Vec<usize>,
    ) -> f64 {
        match node {
            Node::Device(index) => {
                devices.push(*index);
                weakest.get(id).path
            }
            Node::Series(_) => holds
                .members(node, id)
                .map(|(member_id, member)| {
                    if holds.get(member_id) {
                        walk(member, member_id, holds, weakest, devices)
                    } else {
                        weakest_in(member, member_id, weakest, devices);
                        weakest.get(member_id).path
                    }
                })
                .sum(),
            Node::Parallel(_) => match holds.members(node, id).find(|&(member_id, _)| holds.get(member_id)) {
                Some((member_id, branch)) => walk(branch, member_id, holds, weakest, devices),
                None => f64::NAN,
            },
        }
    }
    if !holds.get(0) {
        return None;
    }
    let mut devices = Vec::new();
    let resistance = walk(&network.root, 0, &holds, &weakest, &mut devices);
    Some(Path { resistance, devices })
}

/// Resistance with every device on: series sum, parallel `1 / sum(1/r)`.
pub fn best_case(network: &Network, resistance: &[f64]) -> f64 {
    fn walk(node: &Node, resistance: &[f64]) -> f64 {
        match node {
            Node::Device(index) => resistance[*index],
            Node::Series(members) => members.iter().map(|m| walk(m, resistance)).sum(),
            Node::Parallel(branches) => 1.0 / branches.iter().map(|b| 1.0 / walk(b, resistance)).sum::<f64>(),
        }
    }
    walk(&network.root, resistance)
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
    match count_small(&network.root) {
        Some(count) => BigUint::from(count),
        None => walk(&network.root),
    }
}

/// The path count in machine integers, or `None` if it does not fit in 128 bits.
fn count_small(node: &Node) -> Option<u128> {
    match node {
        Node::Device(_) => Some(1),
        Node::Series(members) => members.iter().try_fold(1u128, |product, m| product.checked_mul(count_small(m)?)),
        Node::Parallel(branches) => branches.iter().try_fold(0u128, |sum, b| sum.checked_add(count_small(b)?)),
    }
}

/// The path count as decimal text (what reports show), without big integers when it fits in 128 bits.
pub fn count_text(network: &Network) -> String {
    match count_small(&network.root) {
        Some(count) => count.to_string(),
        None => count(network).to_string(),
    }
}

/// The `limit` weakest paths, weakest first (ties in tree order), without enumerating the rest.
///
/// Partial paths are kept as pieces joined by reference (a device, or two partial paths in series),
/// so a series stack of `m` members costs `O(m limit log limit)` however long its paths are; only the
/// paths returned are written out, device by device.
pub fn list(network: &Network, resistance: &[f64], limit: usize) -> Vec<Path> {
    fn walk(node: &Node, resistance: &[f64], limit: usize, pieces: &mut Vec<Piece>) -> Vec<(f64, u32)> {
        match node {
            Node::Device(index) => {
                pieces.push(Piece::Device(*index));
                vec![(resistance[*index], (pieces.len() - 1) as u32)]
            }
            Node::Parallel(branches) => {
                let mut all: Vec<(f64, u32)> =
                    branches.iter().flat_map(|b| walk(b, resistance, limit, pieces)).collect();
                all.sort_by_key(|p| Reverse(key(p.0)));
                all.truncate(limit);
                all
            }
            Node::Series(members) => {
                let mut upper = match members.first() {
                    Some(first) => walk(first, resistance, limit, pieces),
                    None => Vec::new(),
                };
                for member in &members[1..] {
                    let lower = walk(member, resistance, limit, pieces);
                    upper = combine(&upper, &lower, limit, pieces);
                }
                upper
            }
        }
    }
    if limit == 0 {
        return Vec::new();
    }
    let mut pieces = Vec::new();
    let partial = walk(&network.root, resistance, limit.min(MAX_LISTED_PATHS), &mut pieces);
    let mut stack = Vec::new();
    partial
        .into_iter()
        .map(|(resistance, piece)| {
            let mut devices = Vec::new();
            stack.push(piece);
            while let Some(piece) = stack.pop() {
                match pieces[piece as usize] {
                    Piece::Device(index) => devices.push(index),
                    Piece::Join(upper, lower) => {
                        stack.push(lower);
                        stack.push(upper);
                    }
                }
            }
            Path { resistance, devices }
        })
        .collect()
}

/// Part of a listed path: one device, or an upper part followed by a lower part.
#[derive(Debug, Clone, Copy)]
enum Piece {
    Device(usize),
    Join(u32, u32),
}

/// The `limit` largest sums of one partial path from each sorted list (the k-best pairs, by a heap).
fn combine(upper: &[(f64, u32)], lower: &[(f64, u32)], limit: usize, pieces: &mut Vec<Piece>) -> Vec<(f64, u32)> {
    let mut out = Vec::with_capacity(limit.min(upper.len() * lower.len()));
    let mut heap = BinaryHeap::new();
    let mut seen = std::collections::HashSet::new();
    if upper.is_empty() || lower.is_empty() {
        return out;
    }
    let sum = |i: usize, j: usize| upper[i].0 + lower[j].0;
    heap.push((key(sum(0, 0)), Reverse((0usize, 0usize))));
    seen.insert((0, 0));
    while let Some((_, Reverse((i, j)))) = heap.pop() {
        pieces.push(Piece::Join(upper[i].1, lower[j].1));
        out.push((sum(i, j), (pieces.len() - 1) as u32));
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

/// Most device names one listing may hold (paths listed x devices on the longest path), so that a
/// request for many long paths is refused instead of writing gigabytes.
pub const MAX_LISTED_DEVICES: u128 = 1_000_000;

/// Devices on the longest path of the network.
pub fn longest_path_devices(network: &Network) -> usize {
    network.root.depth()
}

/// Most partial paths a listing may build (paths kept per series member x series members), so that
/// the work of a listing is bounded as well as its output.
pub const MAX_LISTING_WORK: u128 = 5_000_000;

/// The partial paths a listing of `limit` paths builds: up to `limit` per member of every series stack.
pub fn listing_work(network: &Network, limit: usize) -> u128 {
    fn members(node: &Node) -> u128 {
        match node {
            Node::Device(_) => 1,
            Node::Series(children) => children.len() as u128 + children.iter().map(members).sum::<u128>(),
            Node::Parallel(children) => children.iter().map(members).sum(),
        }
    }
    members(&network.root).saturating_mul(limit as u128)
}

/// The most device names a listing of `limit` paths can hold: paths listed x the longest path.
pub fn listing_size(network: &Network, limit: usize) -> u128 {
    let paths = count(network).min(BigUint::from(limit));
    let paths: u128 = paths.try_into().unwrap_or(u128::MAX);
    paths.saturating_mul(longest_path_devices(network) as u128)
}

/// A path listing past its limits, refused before it is built.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum ListingError {
    /// More partial paths than [`MAX_LISTING_WORK`].
    #[error(
        "listing {limit} paths of the {network} would build {work} partial paths; the limit is {most}: ask for \
         fewer with --limit"
    )]
    TooMuchWork {
        /// Paths asked for.
        limit: usize,
        /// `pull-down` or `pull-up`.
        network: &'static str,
        /// Partial paths the listing would build.
        work: u128,
        /// The limit.
        most: u128,
    },
    /// More device names than [`MAX_LISTED_DEVICES`].
    #[error(
        "listing {limit} paths of the {network} with up to {devices} devices each could name {size} devices; the \
         limit is {most}: ask for fewer with --limit"
    )]
    TooManyNames {
        /// Paths asked for.
        limit: usize,
        /// `pull-down` or `pull-up`.
        network: &'static str,
        /// Devices on the longest path.
        devices: usize,
        /// Device names the listing could hold.
        size: u128,
        /// The limit.
        most: u128,
    },
}

/// Refuse a listing of `limit` paths of `network` that would pass [`MAX_LISTING_WORK`] or
/// [`MAX_LISTED_DEVICES`].
pub fn check_listing(network: &Network, limit: usize) -> Result<(), ListingError> {
    let work = listing_work(network, limit);
    if work > MAX_LISTING_WORK {
        return Err(ListingError::TooMuchWork { limit, network: network.kind.name(), work, most: MAX_LISTING_WORK });
    }
    let size = listing_size(network, limit);
    if size > MAX_LISTED_DEVICES {
        return Err(ListingError::TooManyNames {
            limit,
            network: network.kind.name(),
            devices: longest_path_devices(network),
            size,
            most: MAX_LISTED_DEVICES,
        });
    }
    Ok(())
}

/// Resistances compared to a relative 1e-9 (on a log scale), so that equal paths tie whatever the
/// rounding and whatever the drive or units make their size.
fn key(resistance: f64) -> i64 {
    if resistance > 0.0 { (resistance.ln() * 1e9).round() as i64 } else { i64::MIN }
}

/// The input vector that makes `path` the only conducting path of the network, or `None` where
/// repeated inputs make that impossible. The network's device list gives each device's input.
///
/// The path's inputs go to their on-level and every other input to its off-level: turning a device
/// off never makes a path conduct, so if another path still conducts under this vector, it conducts
/// under every vector that turns this one on.
pub fn sensitize(network: &Network, path: &[usize], input_count: usize) -> Option<Vec<bool>> {
    let on_level = network.kind.conducts(true);
    let mut values = vec![!on_level; input_count];
    for &device in path {
        values[network.inputs[device]] = on_level;
    }
    let on = network.on_devices(&values);
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
///
/// Turning a device on never raises the resistance of what conducts (a series sum or a parallel
/// combination only falls when a branch's resistance falls from infinity to `r`), so the worst
/// case is reached where the set of inputs holding devices on is minimal: the network conducts, and
/// would not with any one of those inputs turned off. Which vectors conduct, and which are minimal,
/// is found 64 vectors per machine word; the resistance is evaluated only at the minimal ones. Of
/// several vectors with the same worst resistance, the lowest-numbered minimal one is given (input
/// 0 is bit 0).
pub fn exact_worst(network: &Network, resistance: &[f64], input_count: usize) -> Option<(f64, Vec<bool>)> {
    let input_of = &network.inputs;
    if input_count > EXACT_WORST_MAX_INPUTS {
        return None;
    }
    let vectors = 1u64 << input_count;
    // Over "on-sets" u: bit i of u says input i holds its devices on (1 for NMOS, 0 for PMOS).
    let conducts = conduction_by_on_set(network, input_count);
    let mut minimal = conducts.clone();
    for input in 0..input_count {
        for (word, bits) in minimal.iter_mut().enumerate() {
            // Where input is on, the network must stop conducting with it off.
            let without = if input < 6 {
                let shift = 1 << input;
                let mask = ON_SET_PATTERNS[input];
                ((conducts[word] & mask) >> shift) | ((conducts[word] & !mask) << shift)
            } else {
                conducts[word ^ (1 << (input - 6))]
            };
            *bits &= !(vector_word(word as u64, input) & without);
        }
    }
    let mut worst: Option<(f64, u64)> = None;
    let mut on = vec![false; input_of.len()];
    for (word, &bits) in minimal.iter().enumerate() {
        let mut bits = bits;
        while bits != 0 {
            let on_set = word as u64 * 64 + u64::from(bits.trailing_zeros());
            bits &= bits - 1;
            for (device, &input) in input_of.iter().enumerate() {
                on[device] = on_set >> input & 1 == 1;
            }
            let Some(r) = effective_resistance(network, resistance, &on) else { continue };
            let vector = match network.kind {
                NetworkKind::PullDown => on_set,
                NetworkKind::PullUp => !on_set & (vectors - 1),
            };
            if worst.is_none_or(|(w, v)| key(r) > key(w) || (key(r) == key(w) && vector < v)) {
                worst = Some((r, vector));
            }
        }
    }
    worst.map(|(r, vector)| (r, (0..input_count).map(|i| vector >> i & 1 == 1).collect()))
}

/// Bit `b` of word `w` is bit `i` of on-set `64 w + b`, for `i < 6`.
const ON_SET_PATTERNS: [u64; 6] = [
    0xAAAA_AAAA_AAAA_AAAA,
    0xCCCC_CCCC_CCCC_CCCC,
    0xF0F0_F0F0_F0F0_F0F0,
    0xFF00_FF00_FF00_FF00,
    0xFFFF_0000_FFFF_0000,
    0xFFFF_FFFF_0000_0000,
];

/// Bit-parallel input values: bit `b` of the result is input `input` of vector `64 word + b`, where
/// input `i` is bit `i` of a vector's number (so 64 consecutive vectors fill one word).
pub fn vector_word(word: u64, input: usize) -> u64 {
    if input < 6 { ON_SET_PATTERNS[input] } else { 0u64.wrapping_sub(word >> (input - 6) & 1) }
}

/// Words per block of the conduction evaluation: the tree is walked once per block.
const BLOCK: usize = 8;

/// Whether the network conducts, for every on-set of `input_count` inputs, as a bit set.
pub(crate) fn conduction_by_on_set(network: &Network, input_count: usize) -> Vec<u64> {
    let input_of = &network.inputs;
    fn walk(node: &Node, input_of: &[usize], inputs: &[[u64; BLOCK]]) -> [u64; BLOCK] {
        match node {
            Node::Device(index) => inputs[input_of[*index]],
            Node::Series(members) => members.iter().fold([u64::MAX; BLOCK], |acc, m| {
                let w = walk(m, input_of, inputs);
                std::array::from_fn(|k| acc[k] & w[k])
            }),
            Node::Parallel(branches) => branches.iter().fold([0; BLOCK], |acc, b| {
                let w = walk(b, input_of, inputs);
                std::array::from_fn(|k| acc[k] | w[k])
            }),
        }
    }
    let vectors = 1u64 << input_count;
    let words = vectors.div_ceil(64) as usize;
    let mut out = vec![0u64; words];
    let mut inputs = vec![[0u64; BLOCK]; input_count];
    for first in (0..words).step_by(BLOCK) {
        for (input, block) in inputs.iter_mut().enumerate() {
            *block = std::array::from_fn(|k| vector_word((first + k) as u64, input));
        }
        let block = walk(&network.root, input_of, &inputs);
        for (k, bits) in block.into_iter().enumerate().take(words - first) {
            out[first + k] = bits;
        }
    }
    if vectors < 64 {
        out[0] &= (1u64 << vectors) - 1;
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::expr::read_gate;

    fn pull_down(text: &str) -> (Network, usize) {
        let gate = read_gate(text).unwrap();
        (Network::pair(&gate).pull_down, gate.inputs.len())
    }

    #[test]
    fn weakest_path_and_its_vector() {
        let (down, inputs) = pull_down("!(a & (b | c))");
        let r = [0.5, 1.0, 0.25];
        let path = weakest(&down, &r);
        assert_eq!(path.devices, vec![0, 1]);
        assert!((path.resistance - 1.5).abs() < 1e-12);
        assert_eq!(sensitize(&down, &path.devices, inputs), Some(vec![true, true, false]));
        assert!((best_case(&down, &r) - (0.5 + 0.2)).abs() < 1e-12);
    }

    #[test]
    fn weakest_path_through_a_given_device() {
        let (down, _) = pull_down("!(a & (b | c) | d)");
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
        let (down, _) = pull_down(&format!("!({})", group.join(" & ")));
        assert_eq!(count(&down), BigUint::from(1u8) << 200);
        assert_eq!(count_text(&down), (BigUint::from(1u8) << 200usize).to_string());
        let (small, _) = pull_down("!((a | b | c) & (d | e) & f | g)");
        // (3 x 2 x 1) + 1 = 7 paths (series multiply, parallel add)
        assert_eq!((count(&small), count_text(&small)), (BigUint::from(7u8), "7".to_string()));
        let listed = list(&down, &vec![1.0; 400], 5);
        assert_eq!(listed.len(), 5);
        // each path takes one of every pair: 200 devices, one per group
        assert!(listed.iter().all(|p| p.devices.len() == 200 && p.devices.iter().zip(0..).all(|(d, g)| d / 2 == g)));
        assert_eq!(listing_size(&down, 5), 5 * 200);
        assert_eq!(listing_size(&down, MAX_LISTED_PATHS), 10_000 * 200);
    }

    #[test]
    fn listing_is_weakest_first() {
        let (down, _) = pull_down("!((a | b) & (c | d))");
        let r = [1.0, 3.0, 2.0, 5.0];
        let listed: Vec<f64> = list(&down, &r, 10).iter().map(|p| p.resistance).collect();
        assert_eq!(listed, vec![8.0, 6.0, 5.0, 3.0]);
    }

    #[test]
    fn listing_equals_every_path_enumerated_and_sorted() {
        fn every(node: &Node) -> Vec<Vec<usize>> {
            match node {
                Node::Device(index) => vec![vec![*index]],
                Node::Parallel(branches) => branches.iter().flat_map(every).collect(),
                Node::Series(members) => members.iter().fold(vec![Vec::new()], |paths, member| {
                    let lower = every(member);
                    paths.iter().flat_map(|p| lower.iter().map(move |q| [p.clone(), q.clone()].concat())).collect()
                }),
            }
        }
        let (down, _) = pull_down("!((a | b & c) & (d | e) | f & (g | h) & (i | j & k))");
        // powers of two: every path has its own sum, so the order is unique
        let r: Vec<f64> = (0..11).map(|k| f64::from(1 << k)).collect();
        let mut expected: Vec<(f64, Vec<usize>)> =
            every(&down.root).into_iter().map(|p| (p.iter().map(|&d| r[d]).sum(), p)).collect();
        expected.sort_by(|x, y| y.0.total_cmp(&x.0));
        let listed: Vec<(f64, Vec<usize>)> =
            list(&down, &r, 100).into_iter().map(|p| (p.resistance, p.devices)).collect();
        assert_eq!(listed, expected);
        assert_eq!(list(&down, &r, 3), list(&down, &r, 100)[..3].to_vec());
    }

    /// The plain definition: over every vector, the highest resistance of what conducts.
    fn exact_by_every_vector(network: &Network, r: &[f64], inputs: usize) -> Option<f64> {
        let mut worst: Option<f64> = None;
        for vector in 0..1u64 << inputs {
            let on: Vec<bool> = network.inputs.iter().map(|&i| network.kind.conducts(vector >> i & 1 == 1)).collect();
            if let Some(value) = effective_resistance(network, r, &on) {
                worst = Some(worst.map_or(value, |w: f64| w.max(value)));
            }
        }
        worst
    }

    #[test]
    fn exact_worst_equals_the_plain_definition() {
        let cases = [
            "!(a & b | b & c | a & c)",
            "!(a & (b | a) | c & a)",
            "!((a | b) & (a | c) & (b | d | a))",
            "!(a & b & c & d & e & f & g | a & h | b & (c | h))",
            "!(a | a | a)",
            "!(x0 & x1 & x2 & x3 & x4 & x5 & x6 & x7 | x0 & x8 | (x1 | x2) & x3 & (x4 | x9 | x0))",
        ];
        for text in cases {
            let gate = read_gate(text).unwrap();
            for network in Network::pair(&gate) {
                // uneven resistances, so that ties are rare
                let r: Vec<f64> = (0..network.device_count()).map(|k| 1.0 + (k as f64 * 0.37) % 1.3).collect();
                let (value, vector) = exact_worst(&network, &r, gate.inputs.len()).unwrap();
                let plain = exact_by_every_vector(&network, &r, gate.inputs.len()).unwrap();
                assert!((value - plain).abs() < 1e-12, "{text} {:?}: {value} vs {plain}", network.kind);
                let on = network.on_devices(&vector);
                let at_vector = effective_resistance(&network, &r, &on).unwrap();
                assert!((at_vector - value).abs() < 1e-12, "{text}: the vector reaches it");
            }
        }
    }

    #[test]
    fn repeated_inputs_can_block_a_path() {
        // !(a & b | a & c): a=1 b=1 c=0 turns on the second a too, but its path stays open at c,
        // so the first path still conducts alone.
        let (down, inputs) = pull_down("!(a & b | a & c)");
        assert_eq!(sensitize(&down, &[0, 1], inputs), Some(vec![true, true, false]));
        let (exact, vector) = exact_worst(&down, &[0.5; 4], inputs).unwrap();
        assert!((exact - 1.0).abs() < 1e-12);
        assert_eq!(vector, vec![true, true, false]);
        // !((a | b) & (a | c)): the pull-down path through the first a and c turns on the second a,
        // which closes the path a-a as well, so it never conducts alone.
        let (down, inputs) = pull_down("!((a | b) & (a | c))");
        assert_eq!(sensitize(&down, &[0, 3], inputs), None);
        assert_eq!(sensitize(&down, &[0, 2], inputs), Some(vec![true, false, false]));
    }

    /// The weakest path by its plain recursive definition (common practice, no source: series
    /// resistances add, a parallel group's weakest is its highest branch, the first of a tie), each
    /// branch's highest resistance recounted at every level.
    fn plain_weakest(node: &Node, resistance: &[f64], devices: &mut Vec<usize>) -> f64 {
        match node {
            Node::Device(index) => {
                devices.push(*index);
                resistance[*index]
            }
            Node::Series(members) => members.iter().map(|m| plain_weakest(m, resistance, devices)).sum(),
            Node::Parallel(branches) => {
                let best = branches
                    .iter()
                    .enumerate()
                    .map(|(i, b)| (i, highest(b, resistance)))
                    .fold((0, f64::NEG_INFINITY), |acc, (i, r)| if key(r) > key(acc.1) { (i, r) } else { acc });
                plain_weakest(&branches[best.0], resistance, devices)
            }
        }
    }

    /// The weakest path through `device` by its plain recursive definition: the member holding it
    /// followed down, every other member's weakest path taken (membership recounted at every level).
    fn plain_through(node: &Node, resistance: &[f64], device: usize, devices: &mut Vec<usize>) -> f64 {
        fn contains(node: &Node, device: usize) -> bool {
            match node {
                Node::Device(index) => *index == device,
                Node::Series(children) | Node::Parallel(children) => children.iter().any(|c| contains(c, device)),
            }
        }
        match node {
            Node::Device(index) => {
                devices.push(*index);
                resistance[*index]
            }
            Node::Series(members) => members
                .iter()
                .map(|m| {
                    if contains(m, device) {
                        plain_through(m, resistance, device, devices)
                    } else {
                        plain_weakest(m, resistance, devices)
                    }
                })
                .sum(),
            Node::Parallel(branches) => {
                let branch = branches.iter().find(|b| contains(b, device)).unwrap();
                plain_through(branch, resistance, device, devices)
            }
        }
    }

    /// The table-driven paths equal the plain recursive definitions, to the bit; resistances from
    /// a small set so that ties (to the first branch) are common.
    fn check_against_plain(root: Node, count: usize, seed: u64) {
        let network = Network { kind: NetworkKind::PullDown, root, inputs: (0..count).collect() };
        let r: Vec<f64> =
            (0..count as u64).map(|k| [0.5, 1.0, 1.5, 1.0 / 3.0][((k * 7 + seed) % 4) as usize]).collect();
        let mut devices = Vec::new();
        let resistance = plain_weakest(&network.root, &r, &mut devices);
        let path = weakest(&network, &r);
        assert_eq!((path.resistance.to_bits(), &path.devices), (resistance.to_bits(), &devices));
        assert_eq!(highest(&network.root, &r), weakest_table(&network.root, &r).get(0).highest);
        for device in 0..count {
            let mut devices = Vec::new();
            let resistance = plain_through(&network.root, &r, device, &mut devices);
            let path = weakest_through(&network, &r, device).unwrap();
            assert_eq!(
                (path.resistance.to_bits(), &path.devices),
                (resistance.to_bits(), &devices),
                "through {device}"
            );
        }
        assert_eq!(weakest_through(&network, &r, count), None);
    }

    #[test]
    fn deep_chains_match_the_plain_definitions() {
        for levels in [1, 2, 7, 300] {
            let (root, count) = crate::network::random_trees::chain(levels);
            check_against_plain(root, count, levels as u64);
        }
    }

    proptest::proptest! {
        #[test]
        fn tables_match_the_plain_definitions_on_random_trees(
            (root, count) in crate::network::random_trees::trees(12, 80), seed in 0u64..4
        ) {
            check_against_plain(root, count, seed);
        }
    }
}
