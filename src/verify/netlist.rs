//! The gate as a switch netlist, reduced once (series-parallel reduction, then reachability sweeps
//! over whatever does not reduce), for the bit-parallel simulation of verification.

use std::collections::HashMap;

use crate::figures::{CellFigures, Transistor};
use crate::network::NetworkKind;
use crate::verify::error::VerifyError;

/// What turns one switch on: its input word, XORed with `flip` (0 for NMOS, on at 1; all ones for
/// PMOS, on at 0).
#[derive(Debug, Clone, Copy)]
pub(crate) struct Gating {
    pub(crate) input: u32,
    pub(crate) flip: u64,
}

/// A switch between nodes `a` and `b`, on where word `slot` has a 1.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Edge {
    pub(crate) a: u32,
    pub(crate) b: u32,
    pub(crate) slot: u32,
}

/// A word computed from two others: a series pair conducts where both do (AND), a parallel pair
/// where either does (OR).
#[derive(Debug, Clone, Copy)]
pub(crate) struct Combine {
    pub(crate) x: u32,
    pub(crate) y: u32,
    pub(crate) series: bool,
}

/// Node numbers of the rails and the output in the reduced netlist.
pub(crate) const VDD: usize = 0;
pub(crate) const VSS: usize = 1;
pub(crate) const OUTPUT: usize = 2;

/// The gate as a switch netlist, reduced once for fast simulation.
///
/// Reduction keeps exactly the connectivity between the rails and the output: two switches between
/// the same nodes become one that conducts where either does; a node other than the rails and the
/// output with two switches becomes one switch that conducts where both do; one with a single switch
/// is a dead end and goes. A correct static gate reduces to one switch per network; whatever does not
/// reduce (a bridge, a broken netlist) stays as switches, and reachability from each rail is swept
/// over them until nothing changes.
pub(crate) struct Netlist {
    /// The gating of every transistor: words `0..gating.len()`.
    pub(crate) gating: Vec<Gating>,
    /// Reductions, in order: word `gating.len() + k` is `combine[k]`.
    pub(crate) combine: Vec<Combine>,
    /// What remains after reduction, between nodes numbered from [`VDD`], [`VSS`], [`OUTPUT`].
    pub(crate) edges: Vec<Edge>,
    /// Nodes of the reduced netlist.
    pub(crate) node_count: usize,
    /// Edge indices by breadth-first distance from vdd, then from vss.
    pub(crate) order: [Vec<u32>; 2],
}

impl Netlist {
    pub(crate) fn new(gate: &CellFigures, input_index: &HashMap<&str, usize>) -> Result<Netlist, VerifyError> {
        Netlist::of(&gate.output, gate.transistors.iter(), input_index)
    }

    /// The netlist of the transistors `transistors` driving `output` (one stage of a cell), each
    /// gated by the word `input_index` gives its input net.
    pub(crate) fn of<'t>(
        output: &str,
        transistors: impl ExactSizeIterator<Item = &'t Transistor> + Clone,
        input_index: &HashMap<&str, usize>,
    ) -> Result<Netlist, VerifyError> {
        fn node<'a>(name: &'a str, nodes: &mut HashMap<&'a str, u32>) -> u32 {
            let next = nodes.len() as u32;
            *nodes.entry(name).or_insert(next)
        }
        let mut nodes: HashMap<&str, u32> = HashMap::new();
        for (name, number) in [(NetworkKind::PullUp.rail(), VDD), (NetworkKind::PullDown.rail(), VSS), (output, OUTPUT)]
        {
            let given = node(name, &mut nodes);
            debug_assert_eq!(given as usize, number);
        }
        let mut gating = Vec::with_capacity(transistors.len());
        let mut ends = Vec::with_capacity(transistors.len());
        for transistor in transistors.clone() {
            let input = *input_index.get(transistor.input.as_str()).ok_or_else(|| VerifyError::UnknownInput {
                device: transistor.name.clone(),
                input: transistor.input.clone(),
            })?;
            let flip = match transistor.device_type {
                "nmos" => 0,
                "pmos" => u64::MAX,
                other => {
                    return Err(VerifyError::UnknownType {
                        device: transistor.name.clone(),
                        device_type: other.to_string(),
                    });
                }
            };
            gating.push(Gating { input: input as u32, flip });
            ends.push((node(&transistor.drain, &mut nodes), node(&transistor.source, &mut nodes)));
        }
        let (combine, remaining) = reduce(nodes.len(), &ends);
        // Number the nodes that remain compactly, rails and output first.
        let mut number: HashMap<u32, u32> = (0..3).map(|n| (n, n)).collect();
        let mut edges = Vec::with_capacity(remaining.len());
        for edge in remaining {
            let mut renumber = |n: u32| {
                let next = number.len() as u32;
                *number.entry(n).or_insert(next)
            };
            edges.push(Edge { a: renumber(edge.a), b: renumber(edge.b), slot: edge.slot });
        }
        let node_count = number.len();
        let order = [VDD, VSS].map(|rail| breadth_first_order(node_count, &edges, rail as u32));
        Ok(Netlist { gating, combine, edges, node_count, order })
    }
}

/// Series-parallel reduction of switches `ends[k]` (word `k` each) over `node_count` nodes, keeping
/// the connectivity between nodes 0, 1 and 2: the combinations made and the edges that remain.
pub(crate) fn reduce(node_count: usize, ends: &[(u32, u32)]) -> (Vec<Combine>, Vec<Edge>) {
    struct State {
        edges: Vec<Option<Edge>>,
        between: HashMap<(u32, u32), usize>,
        incident: Vec<Vec<usize>>,
        combine: Vec<Combine>,
        first_combined: u32,
    }
    impl State {
        fn word(&mut self, x: u32, y: u32, series: bool) -> u32 {
            self.combine.push(Combine { x, y, series });
            self.first_combined + self.combine.len() as u32 - 1
        }
        fn add(&mut self, a: u32, b: u32, slot: u32) {
            if a == b {
                return; // a switch from a node to itself joins nothing
            }
            let key = (a.min(b), a.max(b));
            if let Some(&existing) = self.between.get(&key) {
                let old = self.edges[existing].expect("live edge").slot;
                let merged = self.word(old, slot, false);
                if let Some(edge) = self.edges[existing].as_mut() {
                    edge.slot = merged;
                }
                return;
            }
            self.edges.push(Some(Edge { a, b, slot }));
            let index = self.edges.len() - 1;
            self.between.insert(key, index);
            self.incident[a as usize].push(index);
            self.incident[b as usize].push(index);
        }
        fn remove(&mut self, index: usize) -> Edge {
            let edge = self.edges[index].take().expect("live edge");
            self.between.remove(&(edge.a.min(edge.b), edge.a.max(edge.b)));
            for end in [edge.a, edge.b] {
                let list = &mut self.incident[end as usize];
                if let Some(position) = list.iter().position(|&e| e == index) {
                    list.swap_remove(position);
                }
            }
            edge
        }
    }
    let mut state = State {
        edges: Vec::with_capacity(ends.len()),
        between: HashMap::new(),
        incident: vec![Vec::new(); node_count],
        combine: Vec::new(),
        first_combined: ends.len() as u32,
    };
    for (slot, &(a, b)) in ends.iter().enumerate() {
        state.add(a, b, slot as u32);
    }
    let mut queue: Vec<u32> = (3..node_count as u32).collect();
    while let Some(node) = queue.pop() {
        if node < 3 {
            continue;
        }
        match state.incident[node as usize].len() {
            1 => {
                let edge = state.remove(state.incident[node as usize][0]);
                queue.push(if edge.a == node { edge.b } else { edge.a });
            }
            2 => {
                let [first, second] = [0, 1].map(|i| state.incident[node as usize][i]);
                let (first, second) = (state.remove(first), state.remove(second));
                let far = |edge: Edge| if edge.a == node { edge.b } else { edge.a };
                let (a, b) = (far(first), far(second));
                if a != b {
                    let slot = state.word(first.slot, second.slot, true);
                    state.add(a, b, slot);
                }
                queue.extend([a, b]);
            }
            _ => {}
        }
    }
    (state.combine, state.edges.into_iter().flatten().collect())
}

/// Edges sorted by the breadth-first distance of their nearer end from `start`, so that one
/// forward sweep carries reachability outwards along every shortest path.
pub(crate) fn breadth_first_order(node_count: usize, edges: &[Edge], start: u32) -> Vec<u32> {
    let mut adjacent: Vec<Vec<u32>> = vec![Vec::new(); node_count];
    for edge in edges {
        adjacent[edge.a as usize].push(edge.b);
        adjacent[edge.b as usize].push(edge.a);
    }
    let mut distance = vec![u32::MAX; node_count];
    distance[start as usize] = 0;
    let mut queue = std::collections::VecDeque::from([start]);
    while let Some(node) = queue.pop_front() {
        for &next in &adjacent[node as usize] {
            if distance[next as usize] == u32::MAX {
                distance[next as usize] = distance[node as usize] + 1;
                queue.push_back(next);
            }
        }
    }
    let mut order: Vec<u32> = (0..edges.len() as u32).collect();
    order.sort_by_key(|&k| {
        let edge = edges[k as usize];
        (distance[edge.a as usize].min(distance[edge.b as usize]), k)
    });
    order
}
