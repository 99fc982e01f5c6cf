//! Tests of the schematic writer: the trade's shapes and random series-parallel networks lay
//! out with no overlapping labels and no label crossed by a stroke, as passive, well-formed SVG.

use super::*;
use crate::output::svg::checks;
use proptest::prelude::*;

/// A gate function for the fixtures: the pull-down follows it (AND in series, OR in
/// parallel), the pull-up is its dual, as static CMOS builds them (common practice, no source).
enum F {
    In(&'static str),
    And(Vec<F>),
    Or(Vec<F>),
}
use F::{And, In, Or};

fn ins(names: &[&'static str]) -> Vec<F> {
    names.iter().map(|n| In(n)).collect()
}

/// The network of `f` for `channel`, devices named by literal occurrence in written order
/// (`MN1`.. / `MP1`..), internal nodes numbered from the output side.
fn network(f: &F, channel: Channel, devices: &mut usize, nodes: &mut usize, prefix: &str) -> Tree {
    let series = matches!((f, channel), (And(_), Channel::Nmos) | (Or(_), Channel::Pmos));
    match f {
        In(input) => {
            *devices += 1;
            let letter = if channel == Channel::Nmos { 'N' } else { 'P' };
            Tree::Device(DeviceSymbol {
                name: format!("M{letter}{devices}"),
                channel,
                gate: input.to_string(),
                lines: Vec::new(),
                on_worst_path: false,
            })
        }
        And(members) | Or(members) => {
            let members: Vec<Tree> = members.iter().map(|m| network(m, channel, devices, nodes, prefix)).collect();
            if series {
                let junctions = (1..members.len())
                    .map(|_| {
                        *nodes += 1;
                        format!("{prefix}{nodes}")
                    })
                    .collect();
                Tree::Series { members, junctions }
            } else {
                Tree::Parallel(members)
            }
        }
    }
}

/// Longest series chain of a tree.
fn longest(tree: &Tree) -> usize {
    match tree {
        Tree::Device(_) => 1,
        Tree::Series { members, .. } => members.iter().map(longest).sum(),
        Tree::Parallel(branches) => branches.iter().map(longest).max().unwrap_or(0),
    }
}

/// Label every device with its longest-path size (the reference W/L times the longest series
/// chain through it: the classic rule, common practice, no source) and a drawn width, and
/// mark one longest chain as the worst path.
fn size(tree: &mut Tree, reference: f64, outside: usize, worst: bool) {
    match tree {
        Tree::Device(device) => {
            let ratio = reference * (outside + 1) as f64;
            device.lines = vec![format!("W/L {ratio}"), format!("{:.3} um", ratio * 0.12)];
            device.on_worst_path = worst;
        }
        Tree::Series { members, .. } => {
            let lengths: Vec<usize> = members.iter().map(longest).collect();
            let total: usize = lengths.iter().sum();
            for (member, length) in members.iter_mut().zip(lengths) {
                size(member, reference, outside + total - length, worst);
            }
        }
        Tree::Parallel(branches) => {
            let lengths: Vec<usize> = branches.iter().map(longest).collect();
            let deepest = lengths.iter().position(|&l| Some(&l) == lengths.iter().max());
            for (i, branch) in branches.iter_mut().enumerate() {
                size(branch, reference, outside, worst && Some(i) == deepest);
            }
        }
    }
}

fn stage(name: &str, output: &str, f: &F) -> SchematicStage {
    let (mut devices, mut nodes) = (0, 0);
    let mut pull_down = network(f, Channel::Nmos, &mut devices, &mut nodes, &format!("{output}_nd"));
    let (mut devices, mut nodes) = (0, 0);
    let mut pull_up = network(f, Channel::Pmos, &mut devices, &mut nodes, &format!("{output}_nu"));
    size(&mut pull_down, 1.0, 0, true);
    size(&mut pull_up, 2.0, 0, true);
    SchematicStage { name: name.to_string(), output: output.to_string(), pull_up, pull_down }
}

fn single(title: &str, inputs: &[&str], f: F) -> Schematic {
    Schematic {
        title: title.to_string(),
        notes: vec!["longest-path sizing, mobility ratio 2".to_string()],
        inputs: inputs.iter().map(|s| s.to_string()).collect(),
        output: "y".to_string(),
        stages: vec![stage("stage 1", "y", &f)],
    }
}

/// The shapes of the trade: inverter, NAND, NOR, AOI/OAI, a carry with repeated inputs, and
/// multi-stage cells.
fn fixtures() -> Vec<Schematic> {
    let mut out = vec![
        single("inverter", &["a"], In("a")),
        single("NAND2", &["a", "b"], And(ins(&["a", "b"]))),
        single("NAND3", &["a", "b", "c"], And(ins(&["a", "b", "c"]))),
        single("NAND4", &["a", "b", "c", "d"], And(ins(&["a", "b", "c", "d"]))),
        single("NOR2", &["a", "b"], Or(ins(&["a", "b"]))),
        single("NOR3", &["a", "b", "c"], Or(ins(&["a", "b", "c"]))),
        single("NOR4", &["a", "b", "c", "d"], Or(ins(&["a", "b", "c", "d"]))),
        single("AOI21", &["a", "b", "c"], Or(vec![And(ins(&["a", "b"])), In("c")])),
        single("AOI22", &["a", "b", "c", "d"], Or(vec![And(ins(&["a", "b"])), And(ins(&["c", "d"]))])),
        single("OAI22", &["a", "b", "c", "d"], And(vec![Or(ins(&["a", "b"])), Or(ins(&["c", "d"]))])),
        single(
            "AOI222",
            &["a", "b", "c", "d", "e", "f"],
            Or(vec![And(ins(&["a", "b"])), And(ins(&["c", "d"])), And(ins(&["e", "f"]))]),
        ),
        single(
            "carry !(a & b | c & (a | b))",
            &["a", "b", "c"],
            Or(vec![And(ins(&["a", "b"])), And(vec![In("c"), Or(ins(&["a", "b"]))])]),
        ),
    ];
    out.push(Schematic {
        title: "inverter, AOI21, inverter".to_string(),
        notes: vec!["three stages".to_string()],
        inputs: vec!["a".to_string(), "b".to_string(), "c".to_string()],
        output: "y".to_string(),
        stages: vec![
            stage("stage 1", "a_n", &In("a")),
            stage("stage 2", "x", &Or(vec![And(vec![In("a_n"), In("b")]), In("c")])),
            stage("stage 3", "y", &In("x")),
        ],
    });
    out.push(Schematic {
        title: "XOR in two stages".to_string(),
        notes: vec!["y = !(a & b | nor_ab), nor_ab = !(a | b)".to_string()],
        inputs: vec!["a".to_string(), "b".to_string()],
        output: "y".to_string(),
        stages: vec![
            stage("stage 1", "nor_ab", &Or(ins(&["a", "b"]))),
            stage("stage 2", "y", &Or(vec![And(ins(&["a", "b"])), In("nor_ab")])),
        ],
    });
    out
}

fn devices(tree: &Tree) -> Vec<&DeviceSymbol> {
    match tree {
        Tree::Device(device) => vec![device],
        Tree::Series { members, .. } => members.iter().flat_map(devices).collect(),
        Tree::Parallel(branches) => branches.iter().flat_map(devices).collect(),
    }
}

fn junctions(tree: &Tree) -> Vec<&str> {
    match tree {
        Tree::Device(_) => Vec::new(),
        Tree::Series { members, junctions: names } => names
            .iter()
            .map(String::as_str)
            .filter(|n| !n.is_empty())
            .chain(members.iter().flat_map(junctions))
            .collect(),
        Tree::Parallel(branches) => branches.iter().flat_map(junctions).collect(),
    }
}

fn layout_problems(layout: &Layout) -> Vec<String> {
    checks::layout_problems(&layout.labels(), &layout.wires(), layout.shapes(), layout.size())
}

/// What is wrong with the SVG text: see [`checks::svg_texts`]; and a name or label line of
/// the schematic missing from its text.
fn svg_problems(schematic: &Schematic, svg: &str) -> Vec<String> {
    let texts = match checks::svg_texts(svg) {
        Ok(texts) => texts,
        Err(problems) => return problems,
    };
    let mut wanted: Vec<&str> = vec![&schematic.title, &schematic.output, "vdd", "vss"];
    wanted.extend(schematic.notes.iter().map(String::as_str));
    wanted.extend(schematic.inputs.iter().map(String::as_str));
    for stage in &schematic.stages {
        wanted.push(&stage.name);
        for tree in [&stage.pull_up, &stage.pull_down] {
            for device in devices(tree) {
                wanted.push(&device.name);
                wanted.push(&device.gate);
                wanted.extend(device.lines.iter().map(String::as_str));
            }
            wanted.extend(junctions(tree));
        }
    }
    wanted.into_iter().filter(|w| !texts.iter().any(|t| t == w)).map(|w| format!("no <text> says `{w}`")).collect()
}

fn svg(layout: &Layout) -> String {
    let mut bytes = Vec::new();
    layout.write_svg(&mut bytes).expect("writing to memory succeeds");
    String::from_utf8(bytes).expect("the SVG is UTF-8")
}

#[test]
fn the_trades_shapes_lay_out_cleanly() {
    for schematic in fixtures() {
        let layout = Layout::new(&schematic).expect("a well-formed schematic");
        let problems = layout_problems(&layout);
        assert!(problems.is_empty(), "{}:\n{}", schematic.title, problems.join("\n"));
        let problems = svg_problems(&schematic, &svg(&layout));
        assert!(problems.is_empty(), "{}:\n{}", schematic.title, problems.join("\n"));
    }
}

#[test]
fn series_stack_downwards_and_parallel_branches_stand_side_by_side() {
    // NAND2: the pull-down's two NMOS on one vertical line, MN1 (the output side) above; the
    // pull-up's two PMOS at one height, MP1 left of MP2.
    let schematic = single("NAND2", &["a", "b"], And(ins(&["a", "b"])));
    let layout = Layout::new(&schematic).unwrap();
    let at = |name: &str| {
        let label = layout.labels().into_iter().find(|l| l.text == name).expect("the device is named");
        (label.x, label.y)
    };
    let (mn1, mn2, mp1, mp2) = (at("MN1"), at("MN2"), at("MP1"), at("MP2"));
    assert_eq!(mn1.0, mn2.0);
    assert!(mn1.1 < mn2.1);
    assert_eq!(mp1.1, mp2.1);
    assert!(mp1.0 < mp2.0);
    // The pull-up above the pull-down, the rails outside both.
    assert!(mp1.1 < mn1.1);
    let rail = |name: &str| layout.labels().into_iter().find(|l| l.text == name).unwrap().y;
    assert!(rail("vdd") < mp1.1 && rail("vss") > mn2.1);
}

#[test]
fn each_stage_stands_right_of_the_one_that_drives_it() {
    let schematic = fixtures().into_iter().find(|s| s.title == "inverter, AOI21, inverter").unwrap();
    let layout = Layout::new(&schematic).unwrap();
    let x = |name: &str| layout.labels().into_iter().find(|l| l.text == name).unwrap().x;
    assert!(x("stage 1") < x("stage 2") && x("stage 2") < x("stage 3"));
    // Input pins at the far left, the output pin at the far right.
    assert!(x("a") < x("stage 1"));
    let output = layout.labels().into_iter().filter(|l| l.text == "y").map(|l| l.x).fold(0.0, f64::max);
    assert!(output > x("stage 3"));
}

#[test]
fn worst_path_devices_stand_out_in_colour_stroke_and_marker() {
    let schematic = single("NAND2", &["a", "b"], And(ins(&["a", "b"])));
    let layout = Layout::new(&schematic).unwrap();
    let heavy = layout
        .shapes()
        .iter()
        .filter(|s| matches!(s, Shape::Line { colour, segment, .. } if *colour == HIGHLIGHT && segment.width == HEAVY))
        .count();
    let markers = layout
        .shapes()
        .iter()
        .filter(|s| matches!(s, Shape::Polygon { fill: Some(colour), .. } if *colour == HIGHLIGHT))
        .count();
    // Both NMOS and one PMOS are on a worst path; the legend holds one more sample of each.
    assert_eq!(markers, 3 + 1);
    // Seven strokes per device (two leads, two stubs, channel, plate, gate lead; a PMOS's
    // bubble is a circle besides), one in the legend.
    assert_eq!(heavy, 3 * 7 + 1);
    assert!(layout.labels().iter().any(|l| l.text.contains("worst path")), "the legend says what it means");
}

#[test]
fn markup_in_names_is_escaped() {
    let mut schematic = single("a < b & \"c\"", &["a<1>"], In("a<1>"));
    schematic.notes.push("x & y </text><script>".to_string());
    let layout = Layout::new(&schematic).unwrap();
    let text = svg(&layout);
    assert!(!text.contains("<script>"));
    assert!(svg_problems(&schematic, &text).is_empty(), "{:?}", svg_problems(&schematic, &text));
}

#[test]
fn malformed_schematics_are_refused_not_drawn() {
    let mut schematic = single("NAND2", &["a", "b"], And(ins(&["a", "b"])));
    if let Tree::Series { junctions, .. } = &mut schematic.stages[0].pull_down {
        junctions.push("extra".to_string());
    }
    assert_eq!(
        Layout::new(&schematic).unwrap_err(),
        SchematicError::Junctions { stage: "stage 1".to_string(), members: 2, junctions: 2 }
    );
    schematic.stages[0].pull_down = Tree::Parallel(Vec::new());
    assert!(matches!(Layout::new(&schematic), Err(SchematicError::EmptyGroup { .. })));
    schematic.stages.clear();
    assert_eq!(Layout::new(&schematic).unwrap_err(), SchematicError::NoStages);
    let mut deep = In("a");
    for _ in 0..=MAX_DEPTH {
        deep = And(vec![deep, In("b")]);
    }
    let schematic = single("deep", &["a", "b"], deep);
    assert_eq!(Layout::new(&schematic).unwrap_err(), SchematicError::TooLarge);
    let mut out = Vec::new();
    let error = write_schematic(&schematic, &mut out).unwrap_err();
    assert_eq!(error.kind(), io::ErrorKind::InvalidInput);
    assert!(out.is_empty());
}

/// A random series-parallel shape.
#[derive(Debug, Clone)]
enum Random {
    Device,
    Series(Vec<Random>),
    Parallel(Vec<Random>),
}

impl Random {
    fn count(&self) -> usize {
        match self {
            Random::Device => 1,
            Random::Series(members) | Random::Parallel(members) => members.iter().map(Random::count).sum(),
        }
    }
}

fn random_shape() -> impl Strategy<Value = Random> {
    Just(Random::Device)
        .prop_recursive(4, 12, 4, |inner| {
            prop_oneof![
                prop::collection::vec(inner.clone(), 1..5).prop_map(Random::Series),
                prop::collection::vec(inner, 1..5).prop_map(Random::Parallel),
            ]
        })
        .prop_filter("at most 12 devices", |shape| shape.count() <= 12)
}

/// Text of a random label: names, numbers, units, markup characters and a non-ASCII letter.
fn random_text() -> impl Strategy<Value = String> {
    "[a-zA-Z0-9_/.<&µ]{1,14}( [a-z0-9.]{1,6}){0,2}"
}

/// Turn a random shape into a tree, taking names and lines from `texts` in turn.
fn random_tree(shape: &Random, channel: Channel, texts: &[String], next: &mut usize) -> Tree {
    fn take(texts: &[String], next: &mut usize) -> String {
        *next += 1;
        texts[*next % texts.len()].clone()
    }
    match shape {
        Random::Device => {
            let name = take(texts, next);
            let gate = take(texts, next);
            let lines = (0..*next % 4).map(|_| take(texts, next)).collect();
            Tree::Device(DeviceSymbol { name, channel, gate, lines, on_worst_path: *next % 3 == 0 })
        }
        Random::Series(members) => {
            let junctions = (1..members.len())
                .map(|i| if (*next + i) % 5 == 0 { String::new() } else { take(texts, next) })
                .collect();
            let members = members.iter().map(|m| random_tree(m, channel, texts, next)).collect();
            Tree::Series { members, junctions }
        }
        Random::Parallel(branches) => {
            Tree::Parallel(branches.iter().map(|b| random_tree(b, channel, texts, next)).collect())
        }
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(200))]

    /// Any series-parallel networks (up to 12 devices each) in 1 to 3 stages lay out with no
    /// overlapping labels and no label crossed by a stroke, as well-formed, passive SVG that
    /// names every device and label line.
    #[test]
    fn random_networks_lay_out_cleanly(
        stages in prop::collection::vec((random_shape(), random_shape()), 1..=3),
        texts in prop::collection::vec(random_text(), 8..40),
        inputs in prop::collection::vec("[a-z][a-z0-9_]{0,5}", 0..12),
    ) {
        let mut next = 0;
        let stages = stages
            .iter()
            .enumerate()
            .map(|(k, (up, down))| SchematicStage {
                name: format!("stage {}", k + 1),
                output: texts[(k * 7) % texts.len()].clone(),
                pull_up: random_tree(up, Channel::Pmos, &texts, &mut next),
                pull_down: random_tree(down, Channel::Nmos, &texts, &mut next),
            })
            .collect();
        let schematic = Schematic {
            title: texts[0].clone(),
            notes: texts.iter().take(2).cloned().collect(),
            inputs,
            output: texts[1].clone(),
            stages,
        };
        let layout = Layout::new(&schematic).expect("a well-formed schematic");
        let problems = layout_problems(&layout);
        prop_assert!(problems.is_empty(), "{}", problems.join("\n"));
        let problems = svg_problems(&schematic, &svg(&layout));
        prop_assert!(problems.is_empty(), "{}", problems.join("\n"));
    }
}
