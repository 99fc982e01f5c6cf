//! The SVG writers checked as a person would see them: schematics of NAND2, AOI21, the carry
//! `!(a & b | c & (a | b))` (repeated inputs), AOI222, AOI22 with drawn widths and multi-stage
//! cells, and a trade-off plot,
//! rendered to PNG by headless Chromium (Debian's package) and checked not to be blank.
//!
//! Where Chromium is missing the checks skip with a note on stderr; with
//! `WIDTHWISE_REQUIRE_CHROMIUM=1` a missing Chromium fails them instead. With
//! `WIDTHWISE_RENDER_DIR=DIR` the SVG and PNG of each picture are kept in DIR to look at.
//!
//! The trees are written out by hand here; device sizes are the longest-path rule's with a
//! mobility ratio of 2 (reference inverter NMOS 1, PMOS 2 W/L): each device takes the reference
//! times the longest series chain through it (common practice, no source).

use std::path::Path;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use widthwise::output::plot::{MarkedPoint, PlotLayout, PlotPoint, TradeoffPlot};
use widthwise::output::schematic::{Channel, DeviceSymbol, Layout, Schematic, SchematicStage, Tree};

use crate::support::note;

/// The environment variable that turns a missing Chromium into a failure.
pub const REQUIRE_CHROMIUM: &str = "WIDTHWISE_REQUIRE_CHROMIUM";

/// The environment variable naming a directory to keep the renders in.
pub const RENDER_DIR: &str = "WIDTHWISE_RENDER_DIR";

/// Colour of worst-path devices in the schematic (the writer's highlight), to find in the render.
const HIGHLIGHT: [u8; 3] = [0xc2, 0x41, 0x0c];

/// Whether Chromium runs here. If not: a note on stderr naming `check` and `false`, or a panic
/// when `WIDTHWISE_REQUIRE_CHROMIUM=1`.
fn chromium_available(check: &str) -> bool {
    let runs = Command::new("chromium").arg("--version").output().is_ok_and(|o| o.status.success());
    if !runs {
        if std::env::var(REQUIRE_CHROMIUM).is_ok_and(|v| v == "1") {
            panic!("{check}: chromium is missing and {REQUIRE_CHROMIUM}=1 (install Debian's chromium package)");
        }
        note(&format!("{check}: skipped, chromium is not installed (Debian package chromium)"));
    }
    runs
}

/// Render an SVG document of `width` x `height` px to PNG with headless Chromium, in a fresh
/// directory with a fresh profile; the PNG's bytes.
fn render(svg: &[u8], width: f64, height: f64) -> Vec<u8> {
    let directory = tempfile::tempdir().expect("a temporary directory");
    let page = directory.path().join("picture.svg");
    let shot = directory.path().join("picture.png");
    std::fs::write(&page, svg).expect("the SVG is written");
    let mut child = Command::new("chromium")
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-quic",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            "--hide-scrollbars",
        ])
        .arg(format!("--user-data-dir={}", directory.path().join("profile").display()))
        .arg(format!("--screenshot={}", shot.display()))
        .arg(format!("--window-size={},{}", width.ceil() as u32, height.ceil() as u32))
        .arg(format!("file://{}", page.display()))
        .stdin(Stdio::null())
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .expect("chromium starts");
    let started = Instant::now();
    let status = loop {
        if let Some(status) = child.try_wait().expect("chromium can be waited for") {
            break status;
        }
        if started.elapsed() > Duration::from_secs(120) {
            let _ = child.kill();
            let _ = child.wait();
            panic!("chromium did not finish a screenshot in 120 s");
        }
        std::thread::sleep(Duration::from_millis(100));
    };
    assert!(status.success(), "chromium failed: {status}");
    std::fs::read(&shot).expect("chromium wrote the screenshot")
}

/// What a render shows, in shares of its pixels.
#[derive(Debug)]
struct Ink {
    width: u32,
    height: u32,
    /// Dark pixels (luma below 110 of 255): strokes and text.
    dark: f64,
    /// Pixels not near white.
    marked: f64,
    /// Pixels near the highlight colour (a count: the plot's markers are small).
    highlight: usize,
}

fn ink(png_bytes: &[u8]) -> Ink {
    let mut decoder = png::Decoder::new(std::io::Cursor::new(png_bytes));
    decoder.set_transformations(png::Transformations::EXPAND | png::Transformations::STRIP_16);
    let mut reader = decoder.read_info().expect("a PNG");
    let mut buffer = vec![0; reader.output_buffer_size().expect("a PNG of sane size")];
    let frame = reader.next_frame(&mut buffer).expect("the PNG decodes");
    let channels = frame.color_type.samples();
    let pixels = &buffer[..frame.buffer_size()];
    let (mut dark, mut marked, mut highlight) = (0usize, 0usize, 0usize);
    let total = pixels.len() / channels;
    for pixel in pixels.chunks(channels) {
        let (r, g, b) = if channels >= 3 { (pixel[0], pixel[1], pixel[2]) } else { (pixel[0], pixel[0], pixel[0]) };
        let luma = 0.299 * f64::from(r) + 0.587 * f64::from(g) + 0.114 * f64::from(b);
        if luma < 110.0 {
            dark += 1;
        }
        if luma < 235.0 {
            marked += 1;
        }
        if [r, g, b].iter().zip(HIGHLIGHT).all(|(c, h)| c.abs_diff(h) < 40) {
            highlight += 1;
        }
    }
    Ink {
        width: frame.width,
        height: frame.height,
        dark: dark as f64 / total as f64,
        marked: marked as f64 / total as f64,
        highlight,
    }
}

/// Render `svg` and check it is a picture: the size asked for, some ink but mostly white paper,
/// and (where `highlighted`) the worst-path colour somewhere. Keeps the files in
/// `WIDTHWISE_RENDER_DIR` when set.
fn check_render(name: &str, svg: &[u8], size: (f64, f64), highlighted: bool) {
    let png_bytes = render(svg, size.0, size.1);
    if let Ok(directory) = std::env::var(RENDER_DIR) {
        std::fs::create_dir_all(&directory).expect("the render directory can be made");
        std::fs::write(Path::new(&directory).join(format!("{name}.svg")), svg).expect("the SVG is kept");
        std::fs::write(Path::new(&directory).join(format!("{name}.png")), &png_bytes).expect("the PNG is kept");
    }
    let ink = ink(&png_bytes);
    // Chromium may add a pixel for rounding; the picture must fill the window.
    assert!(
        ink.width + 2 >= size.0 as u32 && ink.height + 2 >= size.1 as u32,
        "{name}: a {} x {} render of a {:?} picture",
        ink.width,
        ink.height,
        size
    );
    // Line art with text on white paper: a few percent of the pixels dark, most of them white
    // (common practice, no source: a blank page has none, a failed render is all one colour).
    assert!(ink.dark > 0.005, "{name}: only {:.4} of the pixels are dark: blank?", ink.dark);
    assert!(ink.marked < 0.5, "{name}: {:.2} of the pixels are not white: not on white paper", ink.marked);
    if highlighted {
        assert!(ink.highlight > 100, "{name}: only {} pixels in the highlight colour", ink.highlight);
    }
}

fn device(name: &str, channel: Channel, gate: &str, w_over_l: f64, worst: bool) -> Tree {
    Tree::Device(DeviceSymbol {
        name: name.to_string(),
        channel,
        gate: gate.to_string(),
        lines: vec![format!("W/L {w_over_l}")],
        on_worst_path: worst,
    })
}

fn n(name: &str, gate: &str, w_over_l: f64, worst: bool) -> Tree {
    device(name, Channel::Nmos, gate, w_over_l, worst)
}

fn p(name: &str, gate: &str, w_over_l: f64, worst: bool) -> Tree {
    device(name, Channel::Pmos, gate, w_over_l, worst)
}

fn series(members: Vec<Tree>, junctions: &[&str]) -> Tree {
    Tree::Series { members, junctions: junctions.iter().map(|j| j.to_string()).collect() }
}

fn stage(name: &str, output: &str, pull_up: Tree, pull_down: Tree) -> SchematicStage {
    SchematicStage { name: name.to_string(), output: output.to_string(), pull_up, pull_down }
}

fn cell(title: &str, inputs: &[&str], stages: Vec<SchematicStage>) -> Schematic {
    Schematic {
        title: title.to_string(),
        notes: vec!["longest-path sizing, mobility ratio 2, reference inverter NMOS 1 PMOS 2 (W/L)".to_string()],
        inputs: inputs.iter().map(|i| i.to_string()).collect(),
        output: "y".to_string(),
        stages,
    }
}

fn inverter(name: &str, input: &str, output: &str, number: usize) -> SchematicStage {
    stage(name, output, p(&format!("MP{number}"), input, 2.0, true), n(&format!("MN{number}"), input, 1.0, true))
}

/// Add the drawn width and fingers under each device's W/L, as a process would give them: a unit
/// NMOS 0.12 um wide (an example value for the drawing), fingers at most 0.5 um wide.
fn with_drawn(tree: Tree) -> Tree {
    match tree {
        Tree::Device(mut device) => {
            let w_over_l: f64 = device.lines[0].trim_start_matches("W/L ").parse().expect("a W/L line");
            let width = w_over_l * 0.12;
            let fingers = (width / 0.5).ceil();
            device.lines.push(format!("W {width:.3} um"));
            device.lines.push(format!("{fingers} x {:.3} um", width / fingers));
            Tree::Device(device)
        }
        Tree::Series { members, junctions } => {
            Tree::Series { members: members.into_iter().map(with_drawn).collect(), junctions }
        }
        Tree::Parallel(branches) => Tree::Parallel(branches.into_iter().map(with_drawn).collect()),
    }
}

fn schematics() -> Vec<(&'static str, Schematic)> {
    let nand2 = cell(
        "NAND2 y = !(a & b)",
        &["a", "b"],
        vec![stage(
            "one stage",
            "y",
            Tree::Parallel(vec![p("MP1", "a", 2.0, true), p("MP2", "b", 2.0, false)]),
            series(vec![n("MN1", "a", 2.0, true), n("MN2", "b", 2.0, true)], &["n1"]),
        )],
    );
    let aoi21 = cell(
        "AOI21 y = !(a & b | c)",
        &["a", "b", "c"],
        vec![stage(
            "one stage",
            "y",
            series(
                vec![
                    Tree::Parallel(vec![p("MP1", "a", 4.0, true), p("MP2", "b", 4.0, false)]),
                    p("MP3", "c", 4.0, true),
                ],
                &["p1"],
            ),
            Tree::Parallel(vec![
                series(vec![n("MN1", "a", 2.0, true), n("MN2", "b", 2.0, true)], &["n1"]),
                n("MN3", "c", 1.0, false),
            ]),
        )],
    );
    let carry = cell(
        "carry y = !(a & b | c & (a | b))",
        &["a", "b", "c"],
        vec![stage(
            "one stage",
            "y",
            series(
                vec![
                    Tree::Parallel(vec![p("MP1", "a", 6.0, true), p("MP2", "b", 6.0, false)]),
                    Tree::Parallel(vec![
                        p("MP3", "c", 4.0, false),
                        series(vec![p("MP4", "a", 6.0, true), p("MP5", "b", 6.0, true)], &["p2"]),
                    ]),
                ],
                &["p1"],
            ),
            Tree::Parallel(vec![
                series(vec![n("MN1", "a", 2.0, true), n("MN2", "b", 2.0, true)], &["n1"]),
                series(
                    vec![
                        n("MN3", "c", 2.0, false),
                        Tree::Parallel(vec![n("MN4", "a", 2.0, false), n("MN5", "b", 2.0, false)]),
                    ],
                    &["n2"],
                ),
            ]),
        )],
    );
    let pairs = [("a", "b"), ("c", "d"), ("e", "f")];
    let aoi222 = cell(
        "AOI222 y = !(a & b | c & d | e & f)",
        &["a", "b", "c", "d", "e", "f"],
        vec![stage(
            "one stage",
            "y",
            series(
                pairs
                    .iter()
                    .enumerate()
                    .map(|(i, (x, y))| {
                        Tree::Parallel(vec![
                            p(&format!("MP{}", 2 * i + 1), x, 6.0, true),
                            p(&format!("MP{}", 2 * i + 2), y, 6.0, false),
                        ])
                    })
                    .collect(),
                &["p1", "p2"],
            ),
            Tree::Parallel(
                pairs
                    .iter()
                    .enumerate()
                    .map(|(i, (x, y))| {
                        series(
                            vec![
                                n(&format!("MN{}", 2 * i + 1), x, 2.0, i == 0),
                                n(&format!("MN{}", 2 * i + 2), y, 2.0, i == 0),
                            ],
                            &[&format!("n{}", i + 1)],
                        )
                    })
                    .collect(),
            ),
        )],
    );
    let buffered = cell(
        "input inverter, NOR2, output inverter: y = !(a & !b)",
        &["a", "b"],
        vec![
            inverter("input inverter", "a", "a_n", 1),
            stage(
                "NOR2",
                "x",
                series(vec![p("MP2", "a_n", 4.0, true), p("MP3", "b", 4.0, true)], &["p1"]),
                Tree::Parallel(vec![n("MN2", "a_n", 1.0, true), n("MN3", "b", 1.0, false)]),
            ),
            inverter("output inverter", "x", "y", 4),
        ],
    );
    let xor = cell(
        "XOR in two stages: y = !(a & b | nor_ab), nor_ab = !(a | b)",
        &["a", "b"],
        vec![
            stage(
                "NOR2",
                "nor_ab",
                series(vec![p("MP1", "a", 4.0, true), p("MP2", "b", 4.0, true)], &["p1"]),
                Tree::Parallel(vec![n("MN1", "a", 1.0, true), n("MN2", "b", 1.0, false)]),
            ),
            stage(
                "AOI21",
                "y",
                series(
                    vec![
                        Tree::Parallel(vec![p("MP3", "a", 4.0, true), p("MP4", "b", 4.0, false)]),
                        p("MP5", "nor_ab", 4.0, true),
                    ],
                    &["p2"],
                ),
                Tree::Parallel(vec![
                    series(vec![n("MN3", "a", 2.0, true), n("MN4", "b", 2.0, true)], &["n1"]),
                    n("MN5", "nor_ab", 1.0, false),
                ]),
            ),
        ],
    );
    let mut aoi22 = cell(
        "AOI22 y = !(a & b | c & d), drawn widths",
        &["a", "b", "c", "d"],
        vec![stage(
            "one stage",
            "y",
            series(
                vec![
                    Tree::Parallel(vec![p("MP1", "a", 4.0, true), p("MP2", "b", 4.0, false)]),
                    Tree::Parallel(vec![p("MP3", "c", 4.0, true), p("MP4", "d", 4.0, false)]),
                ],
                &["p1"],
            ),
            Tree::Parallel(vec![
                series(vec![n("MN1", "a", 2.0, true), n("MN2", "b", 2.0, true)], &["n1"]),
                series(vec![n("MN3", "c", 2.0, false), n("MN4", "d", 2.0, false)], &["n2"]),
            ]),
        )],
    );
    let only = &mut aoi22.stages[0];
    only.pull_up = with_drawn(only.pull_up.clone());
    only.pull_down = with_drawn(only.pull_down.clone());
    vec![
        ("aoi22-drawn", aoi22),
        ("nand2", nand2),
        ("aoi21", aoi21),
        ("carry", carry),
        ("aoi222", aoi222),
        ("three-stage", buffered),
        ("xor", xor),
    ]
}

#[test]
fn schematics_render_as_pictures_in_a_browser() {
    if !chromium_available("schematic renders") {
        return;
    }
    for (name, schematic) in schematics() {
        let layout = Layout::new(&schematic).expect("a well-formed schematic");
        let mut svg = Vec::new();
        layout.write_svg(&mut svg).expect("writing to memory succeeds");
        check_render(name, &svg, layout.size(), true);
    }
}

#[test]
fn a_tradeoff_plot_renders_as_a_picture_in_a_browser() {
    if !chromium_available("plot render") {
        return;
    }
    // A falling curve for the drawing check only (not a sizing result): area 1 / (ratio - 0.6)
    // plus a floor, from ratio 1 to 3.
    let points: Vec<PlotPoint> = (0..=20)
        .map(|i| {
            let x = 1.0 + 0.1 * f64::from(i);
            PlotPoint { x, y: 9.0 + 8.0 / (x - 0.6) }
        })
        .collect();
    let (first, last) = (points[0], points[points.len() - 1]);
    let plot = TradeoffPlot {
        title: "area against delay (drawing check)".to_string(),
        notes: vec!["each point: the least total W/L whose worst Elmore delay meets the ratio".to_string()],
        x_title: "delay ratio: worst Elmore delay / reference inverter's (unit-less)".to_string(),
        y_title: "total W/L (unit-NMOS widths)".to_string(),
        curve: "least total W/L at each delay ratio".to_string(),
        points,
        marked: vec![
            MarkedPoint { x: first.x, y: first.y, label: "longest-path rule".to_string() },
            MarkedPoint { x: last.x, y: last.y, label: "min-area".to_string() },
        ],
    };
    let layout = PlotLayout::new(&plot).expect("a well-formed plot");
    let mut svg = Vec::new();
    layout.write_svg(&mut svg).expect("writing to memory succeeds");
    check_render("tradeoff", &svg, layout.size(), true);
}

#[test]
fn sized_cells_render_as_pictures_in_a_browser() {
    if !chromium_available("sized cell renders") {
        return;
    }
    // What `widthwise size CELL --format svg` writes: NAND2, AOI21, the carry with repeated inputs
    // and a cell of two stages (a NAND2, then an output inverter).
    let plan = widthwise::sizing::plan::Plan::new(widthwise::sizing::plan::Method::LongestPath, 2.0, 1.0, None);
    for (name, text) in [
        ("cell-nand2", "nand2"),
        ("cell-aoi21", "aoi21"),
        ("cell-carry", "!(a & b | c & (a | b))"),
        ("cell-and2", "and2"),
    ] {
        let cell = widthwise::size_text(text, &plan).expect("the cell sizes");
        let figures = widthwise::figures::CellFigures::of(&cell);
        let layout = widthwise::output::schematic_cell::layout(&cell, &figures).expect("the cell is drawable");
        let mut svg = Vec::new();
        layout.write_svg(&mut svg).expect("writing to memory succeeds");
        check_render(name, &svg, layout.size(), true);
    }
}
