//! The written SPICE netlist of every cell, of one stage or several, computes its function: each
//! shorthand's `size X --format spice` and random binate and non-inverting functions of up to 10
//! inputs, read back from the netlist text and evaluated here at switch level (NMOS on when its gate
//! is 1, PMOS when 0; node values resolved from vdd and vss through conducting devices, stage after
//! stage), with no floating and no fighting node. The expected function is worked out here too,
//! from the shorthand's published definition or from the random tree, never by the library.

use std::process::Command;

use proptest::prelude::*;
use widthwise::figures::CellFigures;
use widthwise::logic::synthesize;
use widthwise::output::spice;
use widthwise::sizing::{self, Method, Plan};

/// One MOSFET line of a `.subckt`, its nodes as indices into [`Netlist::nodes`].
#[derive(Debug)]
struct Device {
    name: String,
    drain: usize,
    gate: usize,
    source: usize,
    pmos: bool,
}

/// A `.subckt` read back from its text.
#[derive(Debug)]
struct Netlist {
    nodes: Vec<String>,
    /// Input ports, in port order, as node indices.
    inputs: Vec<usize>,
    output: usize,
    devices: Vec<Device>,
}

const VDD: usize = 0;
const VSS: usize = 1;

impl Netlist {
    /// The first `.subckt` of `text`: ports `inputs... output vdd vss`, then `NAME d g s b MODEL ...`
    /// lines up to `.ends`. The model names the device type (`nmos`/`pmos`, the built-in process),
    /// and its bulk must be the rail of that type.
    fn parse(text: &str) -> Netlist {
        let mut lines = text.lines().map(str::trim).skip_while(|l| !l.starts_with(".subckt"));
        let header: Vec<&str> = lines.next().expect("a .subckt line").split_whitespace().collect();
        let ports = &header[2..];
        assert!(ports.len() >= 3 && ports[ports.len() - 2..] == ["vdd", "vss"], "ports end in vdd vss: {ports:?}");
        let mut nodes = vec!["vdd".to_string(), "vss".to_string()];
        let index = |nodes: &mut Vec<String>, name: &str| match nodes.iter().position(|n| n == name) {
            Some(i) => i,
            None => {
                nodes.push(name.to_string());
                nodes.len() - 1
            }
        };
        let signals = &ports[..ports.len() - 2];
        let inputs: Vec<usize> = signals[..signals.len() - 1].iter().map(|p| index(&mut nodes, p)).collect();
        let output = index(&mut nodes, signals[signals.len() - 1]);
        let mut devices = Vec::new();
        for line in lines.by_ref() {
            if line.starts_with(".ends") {
                break;
            }
            if line.is_empty() || line.starts_with('*') {
                continue;
            }
            let words: Vec<&str> = line.split_whitespace().collect();
            assert!(words[0].starts_with('M') && words.len() >= 6, "a MOSFET line: {line}");
            let pmos = match words[5] {
                "nmos" => false,
                "pmos" => true,
                other => panic!("unknown model {other} in {line}"),
            };
            assert_eq!(words[4], if pmos { "vdd" } else { "vss" }, "bulk of {line}");
            devices.push(Device {
                name: words[0].to_string(),
                drain: index(&mut nodes, words[1]),
                gate: index(&mut nodes, words[2]),
                source: index(&mut nodes, words[3]),
                pmos,
            });
        }
        Netlist { nodes, inputs, output, devices }
    }

    /// The output under `vector` (bit k the k-th input port), or why the netlist fails: a node that
    /// gates a device, or the output, left undriven (floating), or a conducting path joining vdd and
    /// vss (fighting). Values are resolved in rounds: each round joins the nodes connected through
    /// devices whose gate value is known and conducting, and gives every still unknown node the
    /// rail its group reaches; a later stage resolves once the nodes gating it are known.
    fn evaluate(&self, vector: u32) -> Result<bool, String> {
        let count = self.nodes.len();
        let mut value: Vec<Option<bool>> = vec![None; count];
        value[VDD] = Some(true);
        value[VSS] = Some(false);
        for (k, &input) in self.inputs.iter().enumerate() {
            value[input] = Some(vector >> k & 1 == 1);
        }
        let mut parent: Vec<usize> = Vec::with_capacity(count);
        loop {
            parent.clear();
            parent.extend(0..count);
            for device in &self.devices {
                if let Some(gate) = value[device.gate]
                    && gate != device.pmos
                {
                    let (a, b) = (root(&mut parent, device.drain), root(&mut parent, device.source));
                    parent[a] = b;
                }
            }
            let (high, low) = (root(&mut parent, VDD), root(&mut parent, VSS));
            if high == low {
                let joined: Vec<&str> =
                    (0..count).filter(|&n| root(&mut parent, n) == high).map(|n| self.nodes[n].as_str()).collect();
                return Err(format!("vdd and vss joined through {joined:?}"));
            }
            let mut changed = false;
            for (node, slot) in value.iter_mut().enumerate() {
                if slot.is_none() {
                    let group = root(&mut parent, node);
                    if group == high || group == low {
                        *slot = Some(group == high);
                        changed = true;
                    }
                }
            }
            if !changed {
                break;
            }
        }
        for device in &self.devices {
            if value[device.gate].is_none() {
                return Err(format!("{} floats (gate of {})", self.nodes[device.gate], device.name));
            }
        }
        value[self.output].ok_or_else(|| format!("the output {} floats", self.nodes[self.output]))
    }

    fn input_names(&self) -> Vec<&str> {
        self.inputs.iter().map(|&i| self.nodes[i].as_str()).collect()
    }
}

fn root(parent: &mut [usize], mut i: usize) -> usize {
    while parent[i] != i {
        parent[i] = parent[parent[i]];
        i = parent[i];
    }
    i
}

/// Every vector of the netlist's inputs against `expected` (given the vector, bit k the k-th port).
fn check_every_vector(what: &str, netlist: &Netlist, expected: &dyn Fn(u32) -> bool) -> Result<(), String> {
    for vector in 0u32..1 << netlist.inputs.len() {
        let got = netlist.evaluate(vector).map_err(|why| format!("{what}, vector {vector:b}: {why}"))?;
        if got != expected(vector) {
            return Err(format!(
                "{what}, inputs {:?} = {vector:b} (bit k the k-th): output {got}",
                netlist.input_names()
            ));
        }
    }
    Ok(())
}

/// A shorthand's function from its definition (the trade's names, common practice, no source; the
/// mux and majority as the issue defines them): `bits` lists the pins' values in pin order.
fn shorthand_function(name: &str, bits: &[bool]) -> bool {
    let groups = |digits: &str| -> Vec<Vec<bool>> {
        let mut next = 0;
        digits
            .chars()
            .map(|d| {
                let size = d.to_digit(10).unwrap() as usize;
                next += size;
                bits[next - size..next].to_vec()
            })
            .collect()
    };
    let and_or = |digits: &str| groups(digits).iter().any(|g| g.iter().all(|&b| b));
    let or_and = |digits: &str| groups(digits).iter().all(|g| g.iter().any(|&b| b));
    match name {
        "inv" => !bits[0],
        "buf" => bits[0],
        "xor2" | "xor3" => bits.iter().filter(|&&b| b).count() % 2 == 1,
        "xnor2" => bits[0] == bits[1],
        // Pins a, b, s: a when s = 0, b when s = 1.
        "mux2" => {
            if bits[2] {
                bits[1]
            } else {
                bits[0]
            }
        }
        "mux2i" => !shorthand_function("mux2", bits),
        "maj3" => bits.iter().filter(|&&b| b).count() >= 2,
        _ => {
            if let Some(n) = name.strip_prefix("nand") {
                assert_eq!(bits.len(), n.parse::<usize>().unwrap());
                !bits.iter().all(|&b| b)
            } else if let Some(n) = name.strip_prefix("nor") {
                assert_eq!(bits.len(), n.parse::<usize>().unwrap());
                !bits.iter().any(|&b| b)
            } else if let Some(n) = name.strip_prefix("and") {
                assert_eq!(bits.len(), n.parse::<usize>().unwrap());
                bits.iter().all(|&b| b)
            } else if let Some(n) = name.strip_prefix("or") {
                assert_eq!(bits.len(), n.parse::<usize>().unwrap());
                bits.iter().any(|&b| b)
            } else if let Some(digits) = name.strip_prefix("aoi") {
                !and_or(digits)
            } else if let Some(digits) = name.strip_prefix("oai") {
                !or_and(digits)
            } else if let Some(digits) = name.strip_prefix("ao") {
                and_or(digits)
            } else if let Some(digits) = name.strip_prefix("oa") {
                or_and(digits)
            } else {
                panic!("no definition of {name}")
            }
        }
    }
}

/// Every shorthand of `--help` (the group families by a spread of group sizes).
fn shorthands() -> Vec<String> {
    let mut names: Vec<String> =
        ["inv", "buf", "xor2", "xnor2", "xor3", "mux2", "mux2i", "maj3"].map(String::from).into();
    for n in 2..=8 {
        for family in ["nand", "nor", "and", "or"] {
            names.push(format!("{family}{n}"));
        }
    }
    for sizes in ["21", "22", "211", "221", "222", "31", "32", "33", "1111112"] {
        for family in ["aoi", "oai", "ao", "oa"] {
            names.push(format!("{family}{sizes}"));
        }
    }
    names
}

#[test]
fn every_shorthands_written_netlist_computes_its_function() {
    // `size X --format spice`, the binary's own netlist, at two drives.
    for name in shorthands() {
        for drive in ["1", "4"] {
            let output = Command::new(env!("CARGO_BIN_EXE_widthwise"))
                .args(["size", &name, "--format", "spice", "--drive", drive])
                .output()
                .unwrap();
            assert!(output.status.success(), "{name}: {}", String::from_utf8_lossy(&output.stderr));
            let netlist = Netlist::parse(&String::from_utf8(output.stdout).unwrap());
            let pins: Vec<String> = netlist.input_names().iter().map(|p| p.to_string()).collect();
            // Pins a, b, c ... in order (the muxes a, b, s).
            let expected_pins: Vec<&str> = if name.starts_with("mux") {
                vec!["a", "b", "s"]
            } else {
                ["a", "b", "c", "d", "e", "f", "g", "h"][..pins.len()].to_vec()
            };
            assert_eq!(pins, expected_pins, "{name}");
            let expected = |vector: u32| {
                let bits: Vec<bool> = (0..pins.len()).map(|k| vector >> k & 1 == 1).collect();
                shorthand_function(&name, &bits)
            };
            if let Err(why) = check_every_vector(&format!("{name} at drive {drive}"), &netlist, &expected) {
                panic!("{why}");
            }
        }
    }
}

#[test]
fn the_evaluator_finds_a_fight_and_a_floating_node() {
    // The check can fail: a NAND whose pull-up is one PMOS short floats at a=0, b=1; one whose
    // lower NMOS is wired to the output fights there.
    let nand = ".subckt t a b y vdd vss\nMN1 y a n1 vss nmos\nMN2 n1 b vss vss nmos\nMP1 y a vdd vdd pmos\n\
                MP2 y b vdd vdd pmos\n.ends t\n";
    let good = Netlist::parse(nand);
    assert!(check_every_vector("nand2", &good, &|v| v != 0b11).is_ok());
    let short = Netlist::parse(&nand.replace("MP1 y a vdd vdd pmos\n", ""));
    assert!(short.evaluate(0b10).unwrap_err().contains("floats"));
    let wrong = Netlist::parse(&nand.replace("MN2 n1 b vss vss nmos", "MN2 y b vss vss nmos"));
    assert!(wrong.evaluate(0b10).unwrap_err().contains("joined"));
}

/// A random boolean function over x0..x9, with XOR and NOT anywhere: binate and non-inverting
/// functions as well as inverting unate ones.
#[derive(Debug, Clone)]
enum Tree {
    Leaf(usize),
    Not(Box<Tree>),
    And(Vec<Tree>),
    Or(Vec<Tree>),
    Xor(Vec<Tree>),
}

fn tree() -> impl Strategy<Value = Tree> {
    let leaf = (0..10usize).prop_map(Tree::Leaf);
    leaf.prop_recursive(4, 14, 3, |inner| {
        prop_oneof![
            2 => prop::collection::vec(inner.clone(), 2..4).prop_map(Tree::And),
            2 => prop::collection::vec(inner.clone(), 2..4).prop_map(Tree::Or),
            1 => prop::collection::vec(inner.clone(), 2..3).prop_map(Tree::Xor),
            1 => inner.prop_map(|t| Tree::Not(Box::new(t))),
        ]
    })
}

impl Tree {
    fn evaluate(&self, value: &dyn Fn(usize) -> bool) -> bool {
        match self {
            Tree::Leaf(i) => value(*i),
            Tree::Not(t) => !t.evaluate(value),
            Tree::And(c) => c.iter().all(|t| t.evaluate(value)),
            Tree::Or(c) => c.iter().any(|t| t.evaluate(value)),
            Tree::Xor(c) => c.iter().filter(|t| t.evaluate(value)).count() % 2 == 1,
        }
    }

    /// Fully parenthesised text; a lone input is written `x0 & x0` (a lone name would be read
    /// as a shorthand).
    fn text(&self) -> String {
        let join = |c: &[Tree], op: &str| c.iter().map(|t| format!("({})", t.text())).collect::<Vec<_>>().join(op);
        match self {
            Tree::Leaf(i) => format!("x{i}"),
            Tree::Not(t) => format!("!({})", t.text()),
            Tree::And(c) => join(c, " & "),
            Tree::Or(c) => join(c, " | "),
            Tree::Xor(c) => join(c, " ^ "),
        }
    }

    fn cell_text(&self) -> String {
        match self {
            Tree::Leaf(i) => format!("x{i} & x{i}"),
            _ => self.text(),
        }
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]

    #[test]
    fn random_functions_written_netlists_compute_them(f in tree(), drive in 1.0f64..8.0) {
        let text = f.cell_text();
        // Every form the function has (direct and inverted where both exist), each written by the
        // library's netlist writer.
        let plan = Plan::new(Method::LongestPath, 2.0, drive, None);
        for logic in synthesize(&text).unwrap() {
            let cell = sizing::size(&logic, &plan).unwrap();
            let mut written = Vec::new();
            spice::write_subcircuit(&CellFigures::of(&cell), &plan.process, &mut written).unwrap();
            let netlist = Netlist::parse(&String::from_utf8(written).unwrap());
            let inputs: Vec<usize> =
                netlist.input_names().iter().map(|p| p.strip_prefix('x').unwrap().parse().unwrap()).collect();
            let expected = |vector: u32| f.evaluate(&|i| vector >> inputs.iter().position(|&k| k == i).unwrap() & 1 == 1);
            let checked = check_every_vector(&format!("{text} ({:?})", logic.form), &netlist, &expected);
            prop_assert!(checked.is_ok(), "{}", checked.unwrap_err());
        }
    }
}
