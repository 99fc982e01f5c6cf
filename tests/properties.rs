//! Property tests over random gates: the netlist computes the expression and its networks are
//! complementary (checked by switch-level evaluation of the transistor list), every path is within
//! the target, min-area never uses more than longest-path, and the worst case and path count agree
//! with brute-force enumeration done here, independently of the library's trees.

use proptest::prelude::*;
use widthwise::figures::{self, CellFigures};
use widthwise::{Method, Plan, size_text};

/// A random monotone function `f` over inputs x0..x11; the gate computes NOT f.
#[derive(Debug, Clone)]
enum Tree {
    Leaf(usize),
    And(Vec<Tree>),
    Or(Vec<Tree>),
}

fn tree() -> impl Strategy<Value = Tree> {
    let leaf = (0..12usize).prop_map(Tree::Leaf);
    leaf.prop_recursive(4, 20, 4, |inner| {
        prop_oneof![
            prop::collection::vec(inner.clone(), 2..4).prop_map(Tree::And),
            prop::collection::vec(inner, 2..4).prop_map(Tree::Or),
        ]
    })
}

impl Tree {
    fn evaluate(&self, value: &dyn Fn(usize) -> bool) -> bool {
        match self {
            Tree::Leaf(i) => value(*i),
            Tree::And(c) => c.iter().all(|t| t.evaluate(value)),
            Tree::Or(c) => c.iter().any(|t| t.evaluate(value)),
        }
    }

    /// Text in one of three spellings; leaves keep their order in all of them.
    fn text(&self, spelling: usize) -> String {
        match spelling {
            // !(f) with & and |
            0 => format!("!({})", self.plain("&", "|", false)),
            // De Morgan: complemented inputs, operators swapped
            1 => self.plain("|", "&", true),
            // postfix NOT with * and +
            _ => format!("({})'", self.plain("*", "+", false)),
        }
    }

    fn plain(&self, and: &str, or: &str, complement: bool) -> String {
        let join = |c: &[Tree], op: &str| {
            let parts: Vec<String> = c.iter().map(|t| format!("({})", t.plain(and, or, complement))).collect();
            parts.join(&format!(" {op} "))
        };
        match self {
            Tree::Leaf(i) if complement => format!("!x{i}"),
            Tree::Leaf(i) => format!("x{i}"),
            Tree::And(c) => join(c, and),
            Tree::Or(c) => join(c, or),
        }
    }

    /// Pull-down paths as lists of leaf positions (written order), enumerated here.
    fn paths(&self, series_on_and: bool, next: &mut usize) -> Vec<Vec<usize>> {
        match self {
            Tree::Leaf(_) => {
                *next += 1;
                vec![vec![*next - 1]]
            }
            Tree::And(c) | Tree::Or(c) => {
                let lists: Vec<Vec<Vec<usize>>> = c.iter().map(|t| t.paths(series_on_and, next)).collect();
                let series = matches!(self, Tree::And(_)) == series_on_and;
                if series {
                    lists.into_iter().fold(vec![vec![]], |acc, list| {
                        acc.iter()
                            .flat_map(|p| list.iter().map(move |q| p.iter().chain(q).copied().collect()))
                            .collect()
                    })
                } else {
                    lists.into_iter().flatten().collect()
                }
            }
        }
    }
}

/// Union-find over node names.
fn connected(gate: &CellFigures, values: &dyn Fn(&str) -> bool) -> (bool, bool) {
    let mut names: Vec<&str> = vec![gate.output.as_str(), "vdd", "vss"];
    for t in &gate.transistors {
        for node in [t.drain.as_str(), t.source.as_str()] {
            if !names.contains(&node) {
                names.push(node);
            }
        }
    }
    let index = |name: &str| names.iter().position(|n| *n == name).unwrap();
    let mut parent: Vec<usize> = (0..names.len()).collect();
    fn root(parent: &mut [usize], mut i: usize) -> usize {
        while parent[i] != i {
            parent[i] = parent[parent[i]];
            i = parent[i];
        }
        i
    }
    for t in &gate.transistors {
        let on = if t.device_type == "nmos" { values(&t.input) } else { !values(&t.input) };
        if on {
            let (a, b) = (root(&mut parent, index(&t.drain)), root(&mut parent, index(&t.source)));
            parent[a] = b;
        }
    }
    let out = root(&mut parent, 0);
    (out == root(&mut parent, 1), out == root(&mut parent, 2))
}

fn sized(text: &str, method: Method, mu: f64) -> CellFigures {
    CellFigures::of(&size_text(text, &Plan::new(method, mu, 1.0, None)).unwrap())
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(96))]

    #[test]
    fn netlist_computes_the_expression_and_networks_are_complementary(f in tree(), spelling in 0..3usize) {
        let gate = sized(&f.text(spelling), Method::LongestPath, 2.0);
        let inputs: Vec<String> = gate.inputs.iter().map(|i| i.name.clone()).collect();
        for vector in 0u32..(1 << inputs.len()) {
            let value_of = |name: &str| {
                let position = inputs.iter().position(|n| n == name).unwrap();
                vector >> position & 1 == 1
            };
            let (high, low) = connected(&gate, &value_of);
            prop_assert!(high != low, "vector {vector:b}: pull-up {high}, pull-down {low}");
            let expected = !f.evaluate(&|i| value_of(&format!("x{i}")));
            prop_assert_eq!(high, expected, "vector {:b}", vector);
        }
    }

    #[test]
    fn every_path_within_target_and_min_area_never_larger(f in tree(), mu in 1.5f64..3.5) {
        let text = f.text(0);
        let longest = sized(&text, Method::LongestPath, mu);
        let min = sized(&text, Method::MIN_AREA, mu);
        prop_assert!(min.total_w_over_l <= longest.total_w_over_l * (1.0 + 1e-12));
        for (gate, exact) in [(&longest, false), (&min, true)] {
            for (side, network) in gate.networks.iter().enumerate() {
                let kind = network.network;
                let unit = if side == 0 { 1.0 } else { mu };
                let widths: Vec<f64> = gate.transistors.iter().filter(|t| t.network == kind).map(|t| t.w_over_l).collect();
                let mut next = 0;
                let paths = f.paths(side == 0, &mut next);
                let resistances: Vec<f64> = paths.iter().map(|p| p.iter().map(|&d| unit / widths[d]).sum()).collect();
                let target = network.target_resistance;
                for r in &resistances {
                    prop_assert!(*r <= target * (1.0 + 1e-9), "{} path {} over target {}", kind.name(), r, target);
                    if exact {
                        // min-area: every path exactly at the target
                        prop_assert!((r - target).abs() <= 1e-9 * target, "min-area path {} vs {}", r, target);
                    }
                }
                // The worst case and path count against brute force over the enumerated paths.
                let brute = resistances.iter().copied().fold(f64::NEG_INFINITY, f64::max);
                prop_assert!((network.worst_resistance - brute).abs() <= 1e-9 * brute);
                prop_assert_eq!(network.path_count.clone(), paths.len().to_string());
            }
        }
    }

    #[test]
    fn worst_vector_makes_the_worst_path_the_only_one(f in tree()) {
        let gate = sized(&f.text(2), Method::MIN_AREA, 2.0);
        let inputs: Vec<String> = gate.inputs.iter().map(|i| i.name.clone()).collect();
        for (side, network) in gate.networks.iter().enumerate() {
            let Some(vector) = &network.worst_vector else { continue };
            let value_of = |name: &str| vector.values.iter().find(|(n, _)| n == name).unwrap().1;
            let devices: Vec<_> = gate.transistors.iter().filter(|t| t.network == network.network).collect();
            let on: Vec<bool> = devices
                .iter()
                .map(|t| if side == 0 { value_of(&t.input) } else { !value_of(&t.input) })
                .collect();
            let mut next = 0;
            let conducting: Vec<Vec<usize>> =
                f.paths(side == 0, &mut next).into_iter().filter(|p| p.iter().all(|&d| on[d])).collect();
            prop_assert_eq!(conducting.len(), 1, "{} under {}", network.network.name(), vector);
            let mut names: Vec<String> = conducting[0].iter().map(|&d| devices[d].name.clone()).collect();
            let mut expected = network.worst_path.clone();
            names.sort();
            expected.sort();
            prop_assert_eq!(names, expected);
            prop_assert_eq!(vector.values.len(), inputs.len());
        }
    }

    #[test]
    fn listing_agrees_with_enumeration(f in tree()) {
        let cell = size_text(&f.text(1), &Plan::new(Method::MIN_AREA, 2.0, 1.0, None)).unwrap();
        let listings = figures::path_listings(&cell, 10_000);
        for (side, listing) in listings.iter().enumerate() {
            let mut next = 0;
            let expected = f.paths(side == 0, &mut next).len();
            prop_assert_eq!(listing.paths.len(), expected.min(10_000));
            let weakest_first = listing.paths.windows(2).all(|w| w[0].resistance >= w[1].resistance - 1e-9);
            prop_assert!(weakest_first);
        }
    }

    #[test]
    fn arbitrary_text_never_panics(text in "\\PC{0,40}") {
        let _ = size_text(&text, &Plan::new(Method::MIN_AREA, 2.0, 1.0, None));
    }
}
