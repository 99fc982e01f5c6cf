//! Tests of the schematic of a sized cell: every shorthand and random gates of up to 12 inputs lay
//! out with no overlapping labels and no label crossed by a stroke, as well-formed, passive SVG
//! that names every device with its W/L; the drawn tree is the netlist's; the marked devices are
//! a weakest path, found here by enumerating every path.

use std::sync::Arc;

use proptest::prelude::*;

use super::*;
use crate::expr::shorthand::CELL_HELP;
use crate::figures::Transistor;
use crate::output::svg::checks;
use crate::process::Process;
use crate::sizing::plan::{Method, Plan};

fn plan() -> Plan {
    Plan::new(Method::LongestPath, 2.0, 1.0, None)
}

fn sized(text: &str, plan: &Plan) -> (SizedCell, CellFigures) {
    let cell = crate::size_text(text, plan).unwrap_or_else(|e| panic!("{text}: {e}"));
    let figures = CellFigures::of(&cell);
    (cell, figures)
}

/// The group-size suffixes the tests take for the AOI/OAI/AO/OA families: every one of two groups
/// of 1 to 4 and of three groups of 1 to 3 (at least one group above 1), and a few large ones.
fn group_sizes() -> Vec<String> {
    let mut out = Vec::new();
    for a in 1..=4 {
        for b in 1..=4 {
            if a > 1 || b > 1 {
                out.push(format!("{a}{b}"));
            }
        }
    }
    for a in 1..=3 {
        for b in 1..=3 {
            for c in 1..=3 {
                if a > 1 || b > 1 || c > 1 {
                    out.push(format!("{a}{b}{c}"));
                }
            }
        }
    }
    out.extend(["2222", "88", "21111111", "22222222"].map(String::from));
    out
}

/// Every shorthand of `CELL_HELP` (the one-stage gates and the cells of several stages), the
/// numbered families over their whole range and the group families over [`group_sizes`].
fn shorthands() -> Vec<String> {
    let mut out: Vec<String> =
        ["inv", "buf", "xor2", "xnor2", "xor3", "mux2", "mux2i", "maj3"].map(String::from).into();
    for family in ["nand", "nor", "and", "or"] {
        out.extend((2..=8).map(|n| format!("{family}{n}")));
    }
    for family in ["aoi", "oai", "ao", "oa"] {
        out.extend(group_sizes().iter().map(|sizes| format!("{family}{sizes}")));
    }
    out
}

#[test]
fn the_list_holds_every_name_the_help_gives() {
    // Each name in the first column of CELL_HELP (`nand2 .. nand8`, `aoi21, aoi22, aoi211 ...`).
    let listed = shorthands();
    let mut named = 0;
    for line in CELL_HELP.lines() {
        let column: String = line.chars().take(25).collect();
        for word in column.split([' ', ',']).filter(|w| w.len() > 1 && w.chars().all(|c| c.is_ascii_alphanumeric())) {
            named += 1;
            assert!(listed.iter().any(|s| s == word), "CELL_HELP names {word}, which the tests do not draw");
        }
    }
    assert!(named >= 25, "only {named} names read from CELL_HELP");
}

/// The drawn tree's devices with the nodes above and below them (from the output towards the
/// rail), by walking the tree from the stage output to `rail`.
fn placed<'a>(tree: &'a Tree, upper: &'a str, lower: &'a str, out: &mut Vec<(&'a DeviceSymbol, &'a str, &'a str)>) {
    match tree {
        Tree::Device(device) => out.push((device, upper, lower)),
        Tree::Series { members, junctions } => {
            for (i, member) in members.iter().enumerate() {
                let above = if i == 0 { upper } else { junctions[i - 1].as_str() };
                let below = junctions.get(i).map_or(lower, String::as_str);
                placed(member, above, below, out);
            }
        }
        Tree::Parallel(branches) => branches.iter().for_each(|b| placed(b, upper, lower, out)),
    }
}

/// Every path from the output side to the rail side of `tree`, as device lists.
fn paths(tree: &Tree) -> Vec<Vec<&DeviceSymbol>> {
    match tree {
        Tree::Device(device) => vec![vec![device]],
        Tree::Parallel(branches) => branches.iter().flat_map(paths).collect(),
        Tree::Series { members, .. } => members.iter().fold(vec![Vec::new()], |prefixes, member| {
            let tails = paths(member);
            prefixes
                .iter()
                .flat_map(|prefix| tails.iter().map(move |tail| prefix.iter().chain(tail).copied().collect()))
                .collect()
        }),
    }
}

/// What is wrong with the schematic of `cell`, against its figures: the layout (overlaps,
/// crossings), the SVG (not well-formed or not passive, a device or its W/L not written right
/// after its name), a device between other nodes than its netlist's, marked devices that are not
/// one weakest path.
fn problems(cell: &SizedCell, figures: &CellFigures) -> Vec<String> {
    let schematic = schematic(cell, figures);
    let layout = Layout::new(&schematic).expect("a cell of the tests is drawable");
    let mut out = checks::layout_problems(&layout.labels(), &layout.wires(), layout.shapes(), layout.size());
    let mut svg = Vec::new();
    layout.write_svg(&mut svg).expect("writing to memory succeeds");
    let texts = match checks::svg_texts(&String::from_utf8(svg).expect("UTF-8")) {
        Ok(texts) => texts,
        Err(problems) => return problems,
    };
    let by_name = |name: &str| figures.transistors.iter().find(|t| t.name == name);
    for transistor in &figures.transistors {
        // The name, then its W/L on the next line (common practice, no source: a schematic names
        // each device with its size).
        let at = texts.iter().position(|t| *t == transistor.name);
        let w_over_l = format!("W/L {}", number(transistor.w_over_l));
        if at.and_then(|i| texts.get(i + 1)) != Some(&w_over_l) {
            out.push(format!("{} is not drawn with `{w_over_l}` under its name", transistor.name));
        }
    }
    let mut drawn = 0;
    for stage in &schematic.stages {
        for (tree, rail) in [(&stage.pull_down, "vss"), (&stage.pull_up, "vdd")] {
            let mut devices = Vec::new();
            placed(tree, &stage.output, rail, &mut devices);
            drawn += devices.len();
            for (device, upper, lower) in devices {
                match by_name(&device.name) {
                    Some(Transistor { drain, source, input, .. })
                        if drain == upper && source == lower && *input == device.gate => {}
                    other => out.push(format!(
                        "{} drawn between {upper} and {lower}, gate {}; the netlist has {:?}",
                        device.name,
                        device.gate,
                        other.map(|t| (&t.drain, &t.source, &t.input))
                    )),
                }
            }
            // The weakest path by enumeration: resistance in proportion to 1 / (W/L) within one
            // network (common practice, no source).
            let resistance =
                |path: &[&DeviceSymbol]| path.iter().map(|d| 1.0 / by_name(&d.name).map_or(1.0, |t| t.w_over_l)).sum();
            let all = paths(tree);
            let weakest: f64 = all.iter().map(|p| resistance(p)).fold(0.0, f64::max);
            let marked: Vec<&str> = all.iter().flatten().filter(|d| d.on_worst_path).map(|d| d.name.as_str()).collect();
            let is_weakest = |p: &Vec<&DeviceSymbol>| {
                let mut names: Vec<&str> = p.iter().map(|d| d.name.as_str()).collect();
                let mut wanted = marked.clone();
                names.sort_unstable();
                wanted.sort_unstable();
                wanted.dedup();
                names == wanted && (resistance(p) - weakest).abs() <= 1e-9 * weakest
            };
            if !all.iter().any(is_weakest) {
                out.push(format!("stage {}: the marked devices {marked:?} are not a weakest path", stage.name));
            }
        }
    }
    if drawn != figures.transistors.len() {
        out.push(format!("{drawn} devices drawn, {} in the netlist", figures.transistors.len()));
    }
    out
}

#[test]
fn every_shorthand_draws_cleanly_and_names_every_device_with_its_size() {
    let plan = plan();
    let mut checked = 0;
    for name in shorthands() {
        let (cell, figures) = sized(&name, &plan);
        let found = problems(&cell, &figures);
        assert!(found.is_empty(), "{name}:\n{}", found.join("\n"));
        checked += 1;
    }
    assert!(checked > 180, "{checked}");
}

#[test]
fn stages_stand_left_to_right_and_pull_ups_above_pull_downs() {
    // and2: a NAND2, then an output inverter (common practice, no source).
    let (cell, figures) = sized("and2", &plan());
    let schematic = schematic(&cell, &figures);
    let outputs: Vec<&str> = schematic.stages.iter().map(|s| s.output.as_str()).collect();
    assert_eq!(outputs, ["y_n", "y"]);
    let layout = Layout::new(&schematic).unwrap();
    let at = |name: &str| {
        let label = layout.labels().into_iter().find(|l| l.text == name).unwrap_or_else(|| panic!("{name}"));
        (label.x, label.y)
    };
    assert!(at("MN1_y_n").0 < at("MN1_y").0);
    assert!(at("MP1_y_n").1 < at("MN1_y_n").1 && at("MP1_y").1 < at("MN1_y").1);
    // The NAND2's output-side NMOS (drain y_n) above the rail-side one.
    assert!(at("MN1_y_n").1 < at("MN2_y_n").1);
    // AOI21: MP3 (gate c, drain y) nearest the output, below the pair at vdd (docs/model.md
    // section 6: the least diffusion width faces the output; Weste & Harris's AOI21 puts the OR
    // input's PMOS there too, from memory).
    let (cell, figures) = sized("aoi21", &plan());
    let layout = Layout::new(&super::schematic(&cell, &figures)).unwrap();
    let y = |name: &str| layout.labels().into_iter().find(|l| l.text == name).unwrap().y;
    assert!(y("MP1") < y("MP3") && y("MP2") < y("MP3") && y("MP3") < y("MN1"));
}

#[test]
fn a_process_adds_the_drawn_width_and_fingers() {
    // examples/demo130-process.toml: unit NMOS 0.4 um wide, fingers at most 5 um. AOI22 at drive 8,
    // mobility ratio 2.25: each PMOS W/L 2 x 18 = 36 (longest path: two in series at the reference
    // PMOS 18), 36 x 0.4 = 14.4 um in ceil(14.4 / 5) = 3 fingers of 4.8 um; each NMOS W/L 2 x 8 =
    // 16, 6.4 um in 2 fingers of 3.2 um (the longest-path rule by hand, common practice, no source).
    let process = Process::from_toml(include_str!("../../../examples/demo130-process.toml")).unwrap();
    let plan = Plan { process: Arc::new(process), ..Plan::new(Method::LongestPath, 2.25, 8.0, None) };
    let (cell, figures) = sized("aoi22", &plan);
    let schematic = schematic(&cell, &figures);
    let mut devices = Vec::new();
    placed(&schematic.stages[0].pull_up, "y", "vdd", &mut devices);
    placed(&schematic.stages[0].pull_down, "y", "vss", &mut devices);
    for (device, _, _) in devices {
        let expected = match device.channel {
            Channel::Pmos => ["W/L 36", "W 14.4 um", "3 fingers x 4.8 um"],
            Channel::Nmos => ["W/L 16", "W 6.4 um", "2 fingers x 3.2 um"],
        };
        assert_eq!(device.lines, expected, "{}", device.name);
    }
    assert!(schematic.notes.iter().any(|n| n.contains("L 0.13 um")), "{:?}", schematic.notes);
    assert!(problems(&cell, &figures).is_empty(), "{:?}", problems(&cell, &figures));
    // The built-in process draws each device at its W/L in um: no drawn lines.
    let (cell, figures) = sized("aoi22", &self::plan());
    let schematic = super::schematic(&cell, &figures);
    let mut devices = Vec::new();
    placed(&schematic.stages[0].pull_down, "y", "vss", &mut devices);
    assert!(devices.iter().all(|(d, _, _)| d.lines == ["W/L 2"]));
}

/// A random gate function over up to 12 inputs.
#[derive(Debug, Clone)]
enum Random {
    Leaf(usize, bool),
    And(Vec<Random>),
    Or(Vec<Random>),
}

impl Random {
    fn text(&self) -> String {
        let join = |c: &[Random], op: &str| c.iter().map(|t| format!("({})", t.text())).collect::<Vec<_>>().join(op);
        match self {
            Random::Leaf(i, true) => format!("!x{i}"),
            Random::Leaf(i, false) => format!("x{i}"),
            Random::And(c) => join(c, " & "),
            Random::Or(c) => join(c, " | "),
        }
    }
}

fn random_gate() -> impl Strategy<Value = Random> {
    // Mostly plain inputs (one stage), sometimes a complemented one (input inverters).
    let leaf = (0..12usize, prop::bool::weighted(0.1)).prop_map(|(i, not)| Random::Leaf(i, not));
    leaf.prop_recursive(4, 16, 4, |inner| {
        prop_oneof![
            prop::collection::vec(inner.clone(), 2..4).prop_map(Random::And),
            prop::collection::vec(inner, 2..4).prop_map(Random::Or),
        ]
    })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(200))]

    /// 200 random gates of up to 12 inputs, inverting (one stage) or not (an output inverter
    /// after), some with complemented inputs (input inverters): drawn cleanly, every device with
    /// its W/L, the netlist's tree, a weakest path marked in each network.
    #[test]
    fn random_gates_draw_cleanly(gate in random_gate(), inverting in prop::bool::weighted(0.7)) {
        // A lone input would read as a shorthand's name: it is always inverted.
        let inverting = inverting || matches!(gate, Random::Leaf(..));
        let text = if inverting { format!("!({})", gate.text()) } else { gate.text() };
        let (cell, figures) = sized(&text, &plan());
        let found = problems(&cell, &figures);
        prop_assert!(found.is_empty(), "{text}:\n{}", found.join("\n"));
    }
}
