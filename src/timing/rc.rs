//! RC networks and their first moments: a sparse symmetric elimination in minimum-degree order
//! solves `G m = C d` for any network (parallel branches included), and the tree formula gives the
//! same number where the network is a tree, for cross-checks.
//!
//! The rail is the ground of the linear system. `d[k]` is how far node `k` starts from its final
//! voltage, as a fraction of the output's swing (1: it starts at the old level, 0: it is already at
//! the new one), so `m[k]` is the first moment of node `k`'s response and `m[output]` the output's
//! Elmore delay when `d[output] = 1`.

// Matrix code reads best with explicit indices.
#![allow(clippy::needless_range_loop)]

use thiserror::Error;

/// One end of a resistor: a node of the network or the rail.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum End {
    /// Node `k` (0-based).
    Node(usize),
    /// The rail the transition connects the output to (ground of the linear system).
    Rail,
}

/// A resistor between two ends.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Resistor {
    /// One end.
    pub from: End,
    /// The other end.
    pub to: End,
    /// Resistance, positive and finite.
    pub resistance: f64,
}

/// A linear RC network: a capacitance to ground on every node, resistors between nodes and the rail.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct RcNetwork {
    /// Capacitance of each node.
    pub capacitance: Vec<f64>,
    /// The resistors.
    pub resistors: Vec<Resistor>,
}

/// Why a network has no first moments.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum RcError {
    /// A node with no resistive path to the rail: its voltage never settles.
    #[error("node {node} has no resistive path to the rail")]
    Floating {
        /// The node.
        node: usize,
    },
    /// A resistance that is not positive and finite.
    #[error("resistor {index} has resistance {value}; it must be positive and finite")]
    BadResistance {
        /// Which resistor.
        index: usize,
        /// Its value.
        value: f64,
    },
    /// A resistor that names a node the network does not have.
    #[error("resistor {index} names node {node}, but the network has {count} nodes")]
    UnknownNode {
        /// Which resistor.
        index: usize,
        /// The node it names.
        node: usize,
        /// How many nodes there are.
        count: usize,
    },
    /// An initial-deviation vector of the wrong length.
    #[error("{given} initial values for a network of {count} nodes")]
    WrongLength {
        /// How many were given.
        given: usize,
        /// How many nodes there are.
        count: usize,
    },
}

impl RcNetwork {
    fn check(&self, initial: &[f64]) -> Result<(), RcError> {
        let count = self.capacitance.len();
        if initial.len() != count {
            return Err(RcError::WrongLength { given: initial.len(), count });
        }
        self.check_resistors()?;
        self.check_joined()
    }

    /// Every resistance positive and finite, between nodes the network has.
    fn check_resistors(&self) -> Result<(), RcError> {
        let count = self.capacitance.len();
        for (index, resistor) in self.resistors.iter().enumerate() {
            if !(resistor.resistance.is_finite() && resistor.resistance > 0.0) {
                return Err(RcError::BadResistance { index, value: resistor.resistance });
            }
            for end in [resistor.from, resistor.to] {
                if let End::Node(node) = end
                    && node >= count
                {
                    return Err(RcError::UnknownNode { index, node, count });
                }
            }
        }
        Ok(())
    }

    /// Every node joined to the rail (the resistors checked first).
    fn check_joined(&self) -> Result<(), RcError> {
        let count = self.capacitance.len();
        // Every node must reach the rail, or G is singular: the rail's set of joined nodes (the
        // rail is node `count`), each set by its root.
        let mut root: Vec<usize> = (0..=count).collect();
        fn find(root: &mut [usize], mut node: usize) -> usize {
            while root[node] != node {
                root[node] = root[root[node]];
                node = root[node];
            }
            node
        }
        for resistor in &self.resistors {
            let index = |end: End| match end {
                End::Node(k) => k,
                End::Rail => count,
            };
            let (a, b) = (find(&mut root, index(resistor.from)), find(&mut root, index(resistor.to)));
            root[a] = b;
        }
        let rail = find(&mut root, count);
        match (0..count).find(|&node| find(&mut root, node) != rail) {
            Some(node) => Err(RcError::Floating { node }),
            None => Ok(()),
        }
    }
}

/// One eliminated node, for the back substitution.
#[derive(Debug)]
struct Step {
    node: usize,
    pivot: f64,
    neighbours: Vec<(usize, f64)>,
}

/// Add `value` to the entry for `key` of a short adjacency list.
fn add_entry(list: &mut Vec<(usize, f64)>, key: usize, value: f64) {
    match list.iter_mut().find(|(k, _)| *k == key) {
        Some(entry) => entry.1 += value,
        None => list.push((key, value)),
    }
}

/// First moments `m` with `G m = C d`: see [`solve`].
pub fn first_moments(network: &RcNetwork, initial: &[f64]) -> Result<Vec<f64>, RcError> {
    network.check(initial)?;
    let right = network.capacitance.iter().zip(initial).map(|(c, d)| c * d).collect();
    Ok(solve(network, vec![right])?.remove(0))
}

/// Solve `G x = b` for each right-hand side `b`: sparse elimination, the node of least degree first
/// ([`factor`]), then each right-hand side through it ([`Factored::solve`]).
pub fn solve(network: &RcNetwork, mut rights: Vec<Vec<f64>>) -> Result<Vec<Vec<f64>>, RcError> {
    let factored = factor(network)?;
    if let Some(bad) = rights.iter().find(|r| r.len() != factored.count) {
        return Err(RcError::WrongLength { given: bad.len(), count: factored.count });
    }
    for right in &mut rights {
        factored.solve(right);
    }
    Ok(rights)
}

/// One update of a right-hand side during the elimination: `right[first] -= a x right[node] / pivot`.
#[derive(Debug, Clone, Copy)]
struct Update {
    first: usize,
    node: usize,
    a: f64,
    pivot: f64,
}

/// A network's conductance matrix eliminated once, to solve for any number of right-hand sides:
/// each goes through the same updates in the same order as in one elimination, so its solution is
/// the same to the last bit.
#[derive(Debug)]
pub struct Factored {
    /// Nodes of the network.
    count: usize,
    /// The forward updates, in elimination order.
    forward: Vec<Update>,
    /// The eliminated nodes, for the back substitution.
    steps: Vec<Step>,
}

impl Factored {
    /// Solve `G x = right` in place. `right` has one entry per node of the network.
    pub fn solve(&self, right: &mut [f64]) {
        for update in &self.forward {
            right[update.first] -= update.a * right[update.node] / update.pivot;
        }
        for step in self.steps.iter().rev() {
            let coupled: f64 = step.neighbours.iter().map(|&(other, a)| a * right[other]).sum();
            right[step.node] = (right[step.node] - coupled) / step.pivot;
        }
    }
}

/// Eliminate `network`'s conductance matrix: the node of least degree first.
///
/// A series-parallel network (every static CMOS network is one) always has a node of degree two or
/// less, and eliminating it joins only its two neighbours, so the work is linear in its size up to
/// a scan of the queue's words (a bit set of the nodes of each degree).
fn factor(network: &RcNetwork) -> Result<Factored, RcError> {
    network.check_resistors()?;
    network.check_joined()?;
    Ok(eliminate(network))
}

/// [`factor`] of a network whose every node is known to reach the rail (a component searched from
/// the output that reached the rail): its resistances checked, its connectivity not searched again.
pub fn factor_joined(network: &RcNetwork) -> Result<Factored, RcError> {
    network.check_resistors()?;
    debug_assert_eq!(network.check_joined(), Ok(()), "a node does not reach the rail");
    Ok(eliminate(network))
}

/// The elimination of a checked network (see [`factor`]).
fn eliminate(network: &RcNetwork) -> Factored {
    let count = network.capacitance.len();
    let mut diagonal = vec![0.0; count];
    let mut off: Vec<Vec<(usize, f64)>> = vec![Vec::new(); count];
    for resistor in &network.resistors {
        let conductance = 1.0 / resistor.resistance;
        match (resistor.from, resistor.to) {
            (End::Node(a), End::Node(b)) if a != b => {
                diagonal[a] += conductance;
                diagonal[b] += conductance;
                add_entry(&mut off[a], b, -conductance);
                add_entry(&mut off[b], a, -conductance);
            }
            (End::Node(a), End::Rail) | (End::Rail, End::Node(a)) => diagonal[a] += conductance,
            _ => {}
        }
    }
    let mut queue = Queue::new(count);
    for (node, list) in off.iter().enumerate() {
        queue.insert(list.len(), node);
    }
    let mut degrees = Vec::new();
    let mut steps = Vec::with_capacity(count);
    let mut forward = Vec::with_capacity(2 * count);
    while let Some(node) = queue.pop() {
        let pivot = diagonal[node];
        let neighbours = std::mem::take(&mut off[node]);
        degrees.clear();
        for &(other, _) in &neighbours {
            degrees.push(off[other].len());
            off[other].retain(|(k, _)| *k != node);
        }
        for (position, &(first, a_first)) in neighbours.iter().enumerate() {
            diagonal[first] -= a_first * a_first / pivot;
            forward.push(Update { first, node, a: a_first, pivot });
            for &(second, a_second) in &neighbours[position + 1..] {
                let fill = a_first * a_second / pivot;
                add_entry(&mut off[first], second, -fill);
                add_entry(&mut off[second], first, -fill);
            }
        }
        for (&(other, _), &before) in neighbours.iter().zip(&degrees) {
            if off[other].len() != before {
                queue.remove(before, other);
                queue.insert(off[other].len(), other);
            }
        }
        steps.push(Step { node, pivot, neighbours });
    }
    Factored { count, forward, steps }
}

/// The nodes not yet eliminated, by degree: a bit set of node indices per degree, so that the next
/// node is the one of least degree and, among those, of least index.
struct Queue {
    /// Per degree: its nodes, 64 a word (allocated when a node first takes that degree).
    buckets: Vec<Vec<u64>>,
    /// Per degree: how many nodes have it.
    counts: Vec<usize>,
    /// Words per bucket.
    words: usize,
    /// No degree below this has a node.
    lowest: usize,
}

impl Queue {
    fn new(count: usize) -> Queue {
        Queue { buckets: Vec::new(), counts: Vec::new(), words: count.div_ceil(64), lowest: 0 }
    }

    fn insert(&mut self, degree: usize, node: usize) {
        if self.buckets.len() <= degree {
            self.buckets.resize_with(degree + 1, Vec::new);
            self.counts.resize(degree + 1, 0);
        }
        if self.buckets[degree].is_empty() {
            self.buckets[degree] = vec![0; self.words];
        }
        self.buckets[degree][node / 64] |= 1 << (node % 64);
        self.counts[degree] += 1;
        self.lowest = self.lowest.min(degree);
    }

    fn remove(&mut self, degree: usize, node: usize) {
        self.buckets[degree][node / 64] &= !(1 << (node % 64));
        self.counts[degree] -= 1;
    }

    /// The node of least degree, of least index among those, taken out.
    fn pop(&mut self) -> Option<usize> {
        while self.counts.get(self.lowest).is_some_and(|&count| count == 0) {
            self.lowest += 1;
        }
        let bucket = self.buckets.get_mut(self.lowest)?;
        let (word, bits) = bucket.iter_mut().enumerate().find(|(_, bits)| **bits != 0)?;
        let node = word * 64 + bits.trailing_zeros() as usize;
        *bits &= *bits - 1;
        self.counts[self.lowest] -= 1;
        Some(node)
    }
}

/// The first moment of `node` by the tree formula: the sum over nodes `k` of `C_k d_k` times the
/// resistance that `k`'s path to the rail shares with `node`'s. `None` where the network is not a
/// tree rooted at the rail (a loop, a parallel pair, or a node that does not reach the rail).
pub fn tree_moment(network: &RcNetwork, initial: &[f64], node: usize) -> Option<f64> {
    let count = network.capacitance.len();
    if network.check(initial).is_err() || node >= count {
        return None;
    }
    let rail = count;
    let mut adjacent: Vec<Vec<(usize, f64)>> = vec![Vec::new(); count + 1];
    let mut edges = 0;
    for resistor in &network.resistors {
        let index = |end: End| match end {
            End::Node(k) => k,
            End::Rail => rail,
        };
        let (a, b) = (index(resistor.from), index(resistor.to));
        if a == b {
            continue;
        }
        edges += 1;
        adjacent[a].push((b, resistor.resistance));
        adjacent[b].push((a, resistor.resistance));
    }
    // Connected (checked above) with one edge fewer than its nodes (the rail included): a tree.
    if edges != count {
        return None;
    }
    let mut parent = vec![usize::MAX; count + 1];
    let mut depth = vec![0.0; count + 1];
    let mut order = vec![rail];
    let mut seen = vec![false; count + 1];
    seen[rail] = true;
    let mut position = 0;
    while position < order.len() {
        let here = order[position];
        position += 1;
        for &(next, resistance) in &adjacent[here] {
            if !seen[next] {
                seen[next] = true;
                parent[next] = here;
                depth[next] = depth[here] + resistance;
                order.push(next);
            }
        }
    }
    let mut on_path = vec![false; count + 1];
    let mut walk = node;
    while walk != rail {
        on_path[walk] = true;
        walk = parent[walk];
    }
    on_path[rail] = true;
    // Parents come before children in `order`: the shared resistance of a node off the path is its
    // parent's, of a node on it its own depth.
    let mut shared = vec![0.0; count + 1];
    let mut total = 0.0;
    for &k in &order[1..] {
        shared[k] = if on_path[k] { depth[k] } else { shared[parent[k]] };
        total += network.capacitance[k] * initial[k] * shared[k];
    }
    Some(total)
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn resistor(from: End, to: End, resistance: f64) -> Resistor {
        Resistor { from, to, resistance }
    }

    /// An independent dense solve for the checks: Gaussian elimination with partial pivoting on the
    /// full conductance matrix, written apart from the sparse code above.
    fn dense_solve(network: &RcNetwork, initial: &[f64]) -> Vec<f64> {
        let n = network.capacitance.len();
        let mut a = vec![vec![0.0; n + 1]; n];
        for r in &network.resistors {
            let g = 1.0 / r.resistance;
            match (r.from, r.to) {
                (End::Node(i), End::Node(j)) if i != j => {
                    a[i][i] += g;
                    a[j][j] += g;
                    a[i][j] -= g;
                    a[j][i] -= g;
                }
                (End::Node(i), End::Rail) | (End::Rail, End::Node(i)) => a[i][i] += g,
                _ => {}
            }
        }
        for i in 0..n {
            a[i][n] = network.capacitance[i] * initial[i];
        }
        for column in 0..n {
            let pivot_row = (column..n).max_by(|&x, &y| a[x][column].abs().total_cmp(&a[y][column].abs())).unwrap();
            a.swap(column, pivot_row);
            for row in 0..n {
                if row != column {
                    let factor = a[row][column] / a[column][column];
                    for k in column..=n {
                        a[row][k] -= factor * a[column][k];
                    }
                }
            }
        }
        (0..n).map(|i| a[i][n] / a[i][i]).collect()
    }

    #[test]
    fn ladder_by_hand() {
        // Two-stage RC ladder: rail -R1- n0 -R2- n1, both nodes charged: m1 = R1 (C0 + C1) + R2 C1
        // (Elmore's formula for a ladder; common practice, no source)
        let network = RcNetwork {
            capacitance: vec![2.0, 3.0],
            resistors: vec![resistor(End::Rail, End::Node(0), 1.0), resistor(End::Node(0), End::Node(1), 4.0)],
        };
        let m = first_moments(&network, &[1.0, 1.0]).unwrap();
        assert!((m[1] - (1.0 * 5.0 + 4.0 * 3.0)).abs() < 1e-12);
        assert!((tree_moment(&network, &[1.0, 1.0], 1).unwrap() - m[1]).abs() < 1e-12);
    }

    #[test]
    fn parallel_pair_is_not_a_tree_but_solves() {
        // Two resistors of 2 in parallel to the rail: 1 x C (common practice, no source)
        let network = RcNetwork {
            capacitance: vec![5.0],
            resistors: vec![resistor(End::Rail, End::Node(0), 2.0), resistor(End::Node(0), End::Rail, 2.0)],
        };
        assert_eq!(tree_moment(&network, &[1.0], 0), None);
        assert!((first_moments(&network, &[1.0]).unwrap()[0] - 5.0).abs() < 1e-12);
    }

    #[test]
    fn bad_networks_are_errors() {
        let floating =
            RcNetwork { capacitance: vec![1.0, 1.0], resistors: vec![resistor(End::Rail, End::Node(0), 1.0)] };
        assert_eq!(first_moments(&floating, &[1.0, 1.0]), Err(RcError::Floating { node: 1 }));
        let zero = RcNetwork { capacitance: vec![1.0], resistors: vec![resistor(End::Rail, End::Node(0), 0.0)] };
        assert!(matches!(first_moments(&zero, &[1.0]), Err(RcError::BadResistance { .. })));
        let unknown = RcNetwork { capacitance: vec![1.0], resistors: vec![resistor(End::Rail, End::Node(3), 1.0)] };
        assert!(matches!(first_moments(&unknown, &[1.0]), Err(RcError::UnknownNode { node: 3, .. })));
        assert!(matches!(first_moments(&unknown, &[]), Err(RcError::WrongLength { .. })));
    }

    /// A random connected network: a random tree to the rail, then extra resistors anywhere.
    fn network_strategy(extra: usize) -> impl Strategy<Value = (RcNetwork, Vec<f64>)> {
        (1usize..9).prop_flat_map(move |n| {
            (
                proptest::collection::vec(0usize..1000, n),
                proptest::collection::vec(0.01f64..100.0, n),
                proptest::collection::vec((0usize..=n, 0usize..=n, 0.01f64..100.0), 0..=extra),
                proptest::collection::vec(0.0f64..10.0, n),
                proptest::collection::vec(prop_oneof![Just(0.0), Just(1.0), 0.0f64..1.0], n),
            )
                .prop_map(move |(parents, tree_r, extras, capacitance, initial)| {
                    let end = |k: usize| if k == n { End::Rail } else { End::Node(k) };
                    // Node k hangs from a node of lower index or the rail.
                    let mut resistors: Vec<Resistor> = (0..n)
                        .map(|k| {
                            let choice = parents[k] % (k + 1);
                            let parent = if choice == k { End::Rail } else { End::Node(choice) };
                            resistor(parent, End::Node(k), tree_r[k])
                        })
                        .collect();
                    resistors.extend(extras.into_iter().map(|(a, b, r)| resistor(end(a), end(b), r)));
                    (RcNetwork { capacitance, resistors }, initial)
                })
        })
    }

    proptest! {
        #[test]
        fn sparse_elimination_matches_a_dense_solve((network, initial) in network_strategy(8)) {
            let sparse = first_moments(&network, &initial).unwrap();
            let dense = dense_solve(&network, &initial);
            for (s, d) in sparse.iter().zip(&dense) {
                prop_assert!((s - d).abs() <= 1e-9 * (1.0 + d.abs()), "{s} vs {d}");
            }
        }

        #[test]
        fn tree_formula_matches_the_solve_on_trees((network, initial) in network_strategy(0)) {
            let moments = first_moments(&network, &initial).unwrap();
            for node in 0..network.capacitance.len() {
                let tree = tree_moment(&network, &initial, node).expect("a tree");
                prop_assert!((tree - moments[node]).abs() <= 1e-9 * (1.0 + tree.abs()), "{tree} vs {}", moments[node]);
            }
        }
    }
}
