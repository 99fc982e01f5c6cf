//! Networks: the pull-down follows `f` (AND in series, OR in parallel), the pull-up is its dual.
//!
//! Devices are literal occurrences: device `k` of either network is gated by literal `k`, so the
//! NMOS and PMOS of one occurrence share an index. Series members are listed from the output side
//! (member 0 touches the output), which is what [`Network::ordered`] chooses and [`Network::nodes`]
//! names.

use std::ops::{Index, IndexMut};

use crate::expr::{Function, GateFunction};

/// Which network of a static gate.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum NetworkKind {
    /// NMOS from the output to ground (`vss`).
    PullDown,
    /// PMOS from the output to the supply (`vdd`).
    PullUp,
}

impl NetworkKind {
    /// Both, pull-down first.
    pub const BOTH: [NetworkKind; 2] = [NetworkKind::PullDown, NetworkKind::PullUp];

    /// `"pull-down"` or `"pull-up"`.
    pub fn name(self) -> &'static str {
        match self {
            NetworkKind::PullDown => "pull-down",
            NetworkKind::PullUp => "pull-up",
        }
    }

    /// The device type: `"nmos"` or `"pmos"`.
    pub fn device_type(self) -> &'static str {
        match self {
            NetworkKind::PullDown => "nmos",
            NetworkKind::PullUp => "pmos",
        }
    }

    /// The rail the network connects the output to.
    pub fn rail(self) -> &'static str {
        match self {
            NetworkKind::PullDown => "vss",
            NetworkKind::PullUp => "vdd",
        }
    }

    /// Whether a device of this network conducts when its input is at `value`.
    pub fn conducts(self, value: bool) -> bool {
        match self {
            NetworkKind::PullDown => value,
            NetworkKind::PullUp => !value,
        }
    }
}

/// One value per network of a stage, pull-down and pull-up, reached by [`NetworkKind`]: what every
/// per-side figure, width list or tree is held in.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Hash)]
pub struct Sides<T> {
    /// The pull-down's.
    pub pull_down: T,
    /// The pull-up's.
    pub pull_up: T,
}

impl<T> Sides<T> {
    /// Both values, pull-down first.
    pub fn new(pull_down: T, pull_up: T) -> Sides<T> {
        Sides { pull_down, pull_up }
    }

    /// Each side's value from its kind.
    pub fn from_fn(mut make: impl FnMut(NetworkKind) -> T) -> Sides<T> {
        Sides { pull_down: make(NetworkKind::PullDown), pull_up: make(NetworkKind::PullUp) }
    }

    /// Each value mapped, with its side's kind.
    pub fn map<U>(self, mut f: impl FnMut(NetworkKind, T) -> U) -> Sides<U> {
        Sides { pull_down: f(NetworkKind::PullDown, self.pull_down), pull_up: f(NetworkKind::PullUp, self.pull_up) }
    }

    /// Both by reference.
    pub fn as_ref(&self) -> Sides<&T> {
        Sides { pull_down: &self.pull_down, pull_up: &self.pull_up }
    }

    /// Both sides with their kinds, pull-down first.
    pub fn iter(&self) -> impl Iterator<Item = (NetworkKind, &T)> {
        [(NetworkKind::PullDown, &self.pull_down), (NetworkKind::PullUp, &self.pull_up)].into_iter()
    }

    /// Both values, pull-down first.
    pub fn values(&self) -> impl Iterator<Item = &T> {
        [&self.pull_down, &self.pull_up].into_iter()
    }

    /// Both values, mutably, pull-down first.
    pub fn values_mut(&mut self) -> impl Iterator<Item = &mut T> {
        [&mut self.pull_down, &mut self.pull_up].into_iter()
    }
}

impl<T> Index<NetworkKind> for Sides<T> {
    type Output = T;

    fn index(&self, kind: NetworkKind) -> &T {
        match kind {
            NetworkKind::PullDown => &self.pull_down,
            NetworkKind::PullUp => &self.pull_up,
        }
    }
}

impl<T> IndexMut<NetworkKind> for Sides<T> {
    fn index_mut(&mut self, kind: NetworkKind) -> &mut T {
        match kind {
            NetworkKind::PullDown => &mut self.pull_down,
            NetworkKind::PullUp => &mut self.pull_up,
        }
    }
}

impl<T> IntoIterator for Sides<T> {
    type Item = T;
    type IntoIter = std::array::IntoIter<T, 2>;

    /// Both values, pull-down first.
    fn into_iter(self) -> Self::IntoIter {
        [self.pull_down, self.pull_up].into_iter()
    }
}

/// A series-parallel tree of devices.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Node {
    /// One transistor, by device (literal occurrence) index.
    Device(usize),
    /// Members in series, member 0 on the output side.
    Series(Vec<Node>),
    /// Branches in parallel.
    Parallel(Vec<Node>),
}

impl Node {
    /// Devices on the longest path through the subtree.
    pub fn depth(&self) -> usize {
        match self {
            Node::Device(_) => 1,
            Node::Series(members) => members.iter().map(Node::depth).sum(),
            Node::Parallel(branches) => branches.iter().map(Node::depth).max().unwrap_or(0),
        }
    }
}

/// Per-node values of a tree, each worked out once from its members' values in one post-order pass,
/// so that a rule that needs a subtree's figure at every level (its depth, its area constant, its
/// weakest path) reads it instead of recomputing the subtree: linear in the tree, however deep.
///
/// Nodes are numbered in pre-order: the root is 0, and a node's members follow it, each member's
/// subtree before the next member; [`NodeTable::members`] gives a node's members with their numbers.
#[derive(Debug, Clone, PartialEq)]
pub struct NodeTable<T> {
    /// Each node's value, by number.
    values: Vec<T>,
    /// Each node's subtree size in nodes (itself included), by number.
    sizes: Vec<usize>,
}

impl<T: Copy + Default> NodeTable<T> {
    /// The table of `root`'s tree, where `value` gives a node's value from its members' (none for a
    /// device), members in order.
    pub fn of(root: &Node, mut value: impl FnMut(&Node, &[T]) -> T) -> NodeTable<T> {
        fn walk<T: Copy + Default>(
            node: &Node,
            value: &mut impl FnMut(&Node, &[T]) -> T,
            table: &mut NodeTable<T>,
        ) -> T {
            let id = table.values.len();
            table.values.push(T::default());
            table.sizes.push(1);
            let own = match node {
                Node::Device(_) => value(node, &[]),
                Node::Series(members) | Node::Parallel(members) => {
                    let values: Vec<T> = members.iter().map(|m| walk(m, value, table)).collect();
                    value(node, &values)
                }
            };
            table.values[id] = own;
            table.sizes[id] = table.values.len() - id;
            own
        }
        let mut table = NodeTable { values: Vec::new(), sizes: Vec::new() };
        walk(root, &mut value, &mut table);
        table
    }

    /// The value of node `id`.
    pub fn get(&self, id: usize) -> T {
        self.values[id]
    }

    /// The members of `node` (numbered `id` in this table's tree), each with its number.
    pub fn members<'a>(&'a self, node: &'a Node, id: usize) -> impl Iterator<Item = (usize, &'a Node)> + 'a {
        let members: &[Node] = match node {
            Node::Device(_) => &[],
            Node::Series(members) | Node::Parallel(members) => members,
        };
        members.iter().scan(id + 1, move |next, member| {
            let here = *next;
            *next += self.sizes[here];
            Some((here, member))
        })
    }
}

/// One network of a stage, with its own device list: device `k` of the tree is gated by stage
/// input `inputs[k]`. The two networks of a stage built from one function share their device
/// numbering (literal occurrences); a pull-up written by the user has a list of its own.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Network {
    /// Pull-down or pull-up.
    pub kind: NetworkKind,
    /// Its tree.
    pub root: Node,
    /// The stage input on each device's gate, by device index.
    pub inputs: Vec<usize>,
}

/// Drain (output side) and source (rail side) node of one device.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Terminals {
    /// Output-side node.
    pub drain: String,
    /// Rail-side node.
    pub source: String,
}

impl Network {
    /// The network of `kind` for the stage's `f`, series members in written order, device `k`
    /// gated by literal occurrence `k`.
    pub fn build(gate: &GateFunction, kind: NetworkKind) -> Network {
        fn walk(function: &Function, kind: NetworkKind) -> Node {
            match function {
                Function::Literal(index) => Node::Device(*index),
                Function::And(children) | Function::Or(children) => {
                    let members = children.iter().map(|c| walk(c, kind)).collect();
                    let series = matches!(function, Function::And(_)) == (kind == NetworkKind::PullDown);
                    if series { Node::Series(members) } else { Node::Parallel(members) }
                }
            }
        }
        Network { kind, root: walk(&gate.function, kind), inputs: gate.input_of() }
    }

    /// Both networks of a stage (the pull-up the dual of the pull-down).
    pub fn pair(gate: &GateFunction) -> Sides<Network> {
        Sides::from_fn(|kind| Network::build(gate, kind))
    }

    /// How many devices the network has.
    pub fn device_count(&self) -> usize {
        self.inputs.len()
    }

    /// The same network with every series stack reordered: members holding `critical` (a stage
    /// input) first, then the least diffusion width facing the output; ties keep the written order.
    pub fn ordered(&self, widths: &[f64], critical: Option<usize>) -> Network {
        let input_of = &self.inputs;
        fn walk(node: &Node, widths: &[f64], input_of: &[usize], critical: Option<usize>) -> (Node, f64, bool) {
            match node {
                Node::Device(index) => (node.clone(), widths[*index], Some(input_of[*index]) == critical),
                Node::Parallel(branches) => {
                    let mut facing = 0.0;
                    let mut holds = false;
                    let branches = branches
                        .iter()
                        .map(|b| {
                            let (node, width, has) = walk(b, widths, input_of, critical);
                            facing += width;
                            holds |= has;
                            node
                        })
                        .collect();
                    (Node::Parallel(branches), facing, holds)
                }
                Node::Series(members) => {
                    let mut walked: Vec<(Node, f64, bool)> =
                        members.iter().map(|m| walk(m, widths, input_of, critical)).collect();
                    walked.sort_by(|a, b| b.2.cmp(&a.2).then(a.1.total_cmp(&b.1)));
                    let facing = walked[0].1;
                    let holds = walked.iter().any(|m| m.2);
                    (Node::Series(walked.into_iter().map(|m| m.0).collect()), facing, holds)
                }
            }
        }
        Network { kind: self.kind, root: walk(&self.root, widths, input_of, critical).0, inputs: self.inputs.clone() }
    }

    /// Drain and source of every device (indexed by device), given the output name and the
    /// prefix for internal nodes (numbered from 1 in order from the output).
    pub fn nodes(&self, output: &str, prefix: &str) -> Vec<Terminals> {
        let device_count = self.device_count();
        fn walk(node: &Node, top: &str, bottom: &str, prefix: &str, counter: &mut usize, out: &mut [Terminals]) {
            match node {
                Node::Device(index) => out[*index] = Terminals { drain: top.to_string(), source: bottom.to_string() },
                Node::Parallel(branches) => {
                    for branch in branches {
                        walk(branch, top, bottom, prefix, counter, out);
                    }
                }
                Node::Series(members) => {
                    // Only the internal nodes are new names; the ends are borrowed.
                    let mut upper: Option<String> = None;
                    for (position, member) in members.iter().enumerate() {
                        let lower = if position + 1 == members.len() {
                            None
                        } else {
                            *counter += 1;
                            let mut name = String::with_capacity(prefix.len() + 4);
                            name.push_str(prefix);
                            name.push_str(&counter.to_string());
                            Some(name)
                        };
                        walk(
                            member,
                            upper.as_deref().unwrap_or(top),
                            lower.as_deref().unwrap_or(bottom),
                            prefix,
                            counter,
                            out,
                        );
                        upper = lower;
                    }
                }
            }
        }
        let mut out = vec![Terminals { drain: String::new(), source: String::new() }; device_count];
        let mut counter = 0;
        walk(&self.root, output, self.kind.rail(), prefix, &mut counter, &mut out);
        out
    }

    /// Which devices are on when the stage inputs take `values`.
    pub fn on_devices(&self, values: &[bool]) -> Vec<bool> {
        self.inputs.iter().map(|&input| self.kind.conducts(values[input])).collect()
    }

    /// Whether the network conducts, given which devices are on.
    pub fn conducts(&self, on: &[bool]) -> bool {
        fn walk(node: &Node, on: &[bool]) -> bool {
            match node {
                Node::Device(index) => on[*index],
                Node::Series(members) => members.iter().all(|m| walk(m, on)),
                Node::Parallel(branches) => branches.iter().any(|b| walk(b, on)),
            }
        }
        walk(&self.root, on)
    }
}

/// A prefix for internal node names that no input or output name can be mistaken for:
/// `base` unless some name is `base` followed by digits, then `base` with more of its first letter.
pub fn internal_prefix(base: &str, names: &[&str]) -> String {
    let mut prefix = base.to_string();
    let taken = |prefix: &str| {
        names.iter().any(|name| {
            name.len() > prefix.len()
                && name.as_bytes()[..prefix.len()].eq_ignore_ascii_case(prefix.as_bytes())
                && name.as_bytes()[prefix.len()..].iter().all(u8::is_ascii_digit)
        })
    };
    while taken(&prefix) {
        prefix.insert(0, base.chars().next().unwrap_or('x'));
    }
    prefix
}

/// Random series-parallel trees for the checks of per-node tables against plain recursion.
#[cfg(test)]
pub(crate) mod random_trees {
    use super::Node;
    use proptest::prelude::*;

    /// A tree of up to about `size` devices nested up to `depth` levels, series and parallel in any
    /// mix (groups of one included), its devices numbered 0.. in tree order; with its device count.
    pub(crate) fn trees(depth: u32, size: u32) -> impl Strategy<Value = (Node, usize)> {
        let leaf = Just(Node::Device(0));
        leaf.prop_recursive(depth, size, 4, |inner| {
            prop_oneof![
                proptest::collection::vec(inner.clone(), 1..4).prop_map(Node::Series),
                proptest::collection::vec(inner, 1..4).prop_map(Node::Parallel),
            ]
        })
        .prop_map(|mut node| {
            let count = number(&mut node, &mut 0);
            (node, count)
        })
    }

    /// Number the devices of `node` in tree order from `next`; gives the count after.
    pub(crate) fn number(node: &mut Node, next: &mut usize) -> usize {
        match node {
            Node::Device(index) => {
                *index = *next;
                *next += 1;
            }
            Node::Series(members) | Node::Parallel(members) => {
                for member in members {
                    number(member, next);
                }
            }
        }
        *next
    }

    /// `levels` levels alternating parallel and series, one device hanging off each:
    /// `P(d, S(d, P(d, S(d, ...))))`, its devices numbered in tree order.
    pub(crate) fn chain(levels: usize) -> (Node, usize) {
        let mut node = Node::Device(0);
        for level in 0..levels {
            let pair = vec![Node::Device(0), node];
            node = if level % 2 == 0 { Node::Series(pair) } else { Node::Parallel(pair) };
        }
        let count = number(&mut node, &mut 0);
        (node, count)
    }

    /// Every subtree in pre-order (the numbering of a node table).
    pub(crate) fn pre_order(node: &Node) -> Vec<&Node> {
        let mut out = vec![node];
        if let Node::Series(members) | Node::Parallel(members) = node {
            for member in members {
                out.extend(pre_order(member));
            }
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::expr::read_gate;

    fn tree(node: &Node) -> String {
        match node {
            Node::Device(index) => index.to_string(),
            Node::Series(m) => format!("S({})", m.iter().map(tree).collect::<Vec<_>>().join(" ")),
            Node::Parallel(m) => format!("P({})", m.iter().map(tree).collect::<Vec<_>>().join(" ")),
        }
    }

    #[test]
    fn pull_up_is_the_dual() {
        // AND -> series in NMOS, parallel in PMOS (common practice, no source)
        let gate = read_gate("aoi21").unwrap();
        let networks = Network::pair(&gate);
        assert_eq!(tree(&networks[NetworkKind::PullDown].root), "P(S(0 1) 2)");
        assert_eq!(tree(&networks.pull_up.root), "S(P(0 1) 2)");
    }

    #[test]
    fn ordering_puts_least_facing_width_at_the_output() {
        let gate = read_gate("aoi21").unwrap();
        let up = Network::pair(&gate).pull_up;
        let ordered = up.ordered(&[4.0, 4.0, 4.0], None);
        assert_eq!(tree(&ordered.root), "S(2 P(0 1))");
        let critical = up.ordered(&[4.0, 4.0, 4.0], Some(0));
        assert_eq!(tree(&critical.root), "S(P(0 1) 2)");
    }

    #[test]
    fn nodes_run_from_output_to_rail() {
        let gate = read_gate("nand3").unwrap();
        let down = Network::pair(&gate).pull_down;
        let nodes = down.nodes("y", "n");
        let pairs: Vec<(&str, &str)> = nodes.iter().map(|t| (t.drain.as_str(), t.source.as_str())).collect();
        assert_eq!(pairs, [("y", "n1"), ("n1", "n2"), ("n2", "vss")]);
    }

    #[test]
    fn a_table_numbers_nodes_in_pre_order_and_finds_their_members() {
        // S(0, P(1, 2), 3): pre-order S, 0, P, 1, 2, 3; each node's value its subtree's device count.
        let tree = Node::Series(vec![
            Node::Device(0),
            Node::Parallel(vec![Node::Device(1), Node::Device(2)]),
            Node::Device(3),
        ]);
        let table = NodeTable::of(&tree, |_, members: &[usize]| members.iter().sum::<usize>().max(1));
        assert_eq!((0..6).map(|id| table.get(id)).collect::<Vec<_>>(), [4, 1, 2, 1, 1, 1]);
        let members: Vec<usize> = table.members(&tree, 0).map(|(id, _)| id).collect();
        assert_eq!(members, [1, 2, 5]);
        let Node::Series(children) = &tree else { unreachable!() };
        assert_eq!(table.members(&children[1], 2).map(|(id, _)| id).collect::<Vec<_>>(), [3, 4]);
        // every node's number is its place in pre-order, however the tree nests
        for (node, _) in [random_trees::chain(9), (tree.clone(), 4)] {
            let order = random_trees::pre_order(&node);
            let table = NodeTable::of(&node, |n, _: &[usize]| order.iter().position(|o| std::ptr::eq(*o, n)).unwrap());
            assert!((0..order.len()).all(|id| table.get(id) == id));
        }
    }

    #[test]
    fn sides_are_reached_by_kind() {
        let mut sides = Sides::new(1, 2);
        sides[NetworkKind::PullUp] += 10;
        assert_eq!((sides[NetworkKind::PullDown], sides.pull_up), (1, 12));
        assert_eq!(sides.map(|kind, v| (kind, v * 2)).pull_up, (NetworkKind::PullUp, 24));
        assert_eq!(Sides::from_fn(NetworkKind::name).into_iter().collect::<Vec<_>>(), ["pull-down", "pull-up"]);
    }

    #[test]
    fn prefixes_avoid_input_names() {
        assert_eq!(internal_prefix("n", &["a", "b"]), "n");
        assert_eq!(internal_prefix("n", &["n1", "b"]), "nn");
        assert_eq!(internal_prefix("n", &["N1", "nn2"]), "nnn");
        assert_eq!(internal_prefix("n", &["net", "n"]), "n");
    }
}
