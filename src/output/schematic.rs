//! Schematic writer: a cell of static CMOS stages drawn as an SVG transistor schematic, laid out by
//! computation from its series-parallel networks, never placed by hand per shape.
//!
//! The input is this module's own description of a cell ([`Schematic`]), so the writer depends on
//! nothing else of the crate; the command layer builds one from a sized cell.
//!
//! Layout rules, applied recursively to any series-parallel tree and any number of stages:
//! - a device is the textbook symbol drawn upright: channel and gate plate, the gate lead to the
//!   left (a bubble on it for a PMOS), the net on its gate written at the lead's end, and its name
//!   (bold) and label lines in a column to the right of its drain-source line (the "spine");
//! - series members stack on one spine from member 0 (the output side): downwards in a pull-down,
//!   upwards in a pull-up, with each named junction marked by a dot and its name to the right of
//!   the spine in the gap between members;
//! - parallel branches stand side by side, branch 0 on the spine, joined by a bus above and below,
//!   each far enough right of the previous one that its gate label clears the previous branch's
//!   label column; shorter branches are centred between the buses;
//! - each stage's pull-up stands above its pull-down on one spine, joined at the output node
//!   (a dot, the net name above the line); every stage's output node is on one horizontal line,
//!   each stage to the right of the one that drives it, so the output runs straight to an arrow
//!   before the next stage (whose gates name that net) or to the output pin;
//! - the pull-ups hang from the vdd rail at the top, the pull-downs stand on the vss rail at the
//!   bottom; the input pins stand in a column at the left, connected by name;
//! - devices on the worst path of their network are drawn in a heavy, darker-orange stroke with
//!   a filled diamond after their name (so black-and-white prints keep the mark), as the legend at
//!   the bottom says; title and notes are at the top.
//!
//! Every label and stroke keeps its box ([`Layout::labels`], [`Layout::wires`]), which is what the
//! tests check: no two labels overlap and no label crosses a stroke.

use std::io::{self, Write};

use thiserror::Error;

use super::svg::{Anchor, Drawing, FONT_SIZE, INK, Label, Rect, Segment, Shape, line_height, text_width};

/// Which transistor a symbol is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Channel {
    /// An n-channel device (no bubble on the gate).
    Nmos,
    /// A p-channel device (a bubble on the gate).
    Pmos,
}

/// One transistor as drawn.
#[derive(Debug, Clone, PartialEq)]
pub struct DeviceSymbol {
    /// Its name, e.g. `MN1`.
    pub name: String,
    /// NMOS or PMOS.
    pub channel: Channel,
    /// The net on its gate: an input pin or another stage's output.
    pub gate: String,
    /// Lines written under its name, e.g. `W/L 2.41`, `2.415 um`, `2 x 1.2 um`.
    pub lines: Vec<String>,
    /// Whether it lies on the worst path of its network (drawn so it stands out).
    pub on_worst_path: bool,
}

/// A series-parallel network of devices, between the stage output (top of the pull-down, bottom
/// of the pull-up) and a rail.
#[derive(Debug, Clone, PartialEq)]
pub enum Tree {
    /// One device.
    Device(DeviceSymbol),
    /// Members in series: member 0 is nearest the stage output.
    Series {
        /// The members, from the output side.
        members: Vec<Tree>,
        /// Names of the internal nodes between consecutive members (`members.len() - 1` of them;
        /// an empty name draws an unnamed node).
        junctions: Vec<String>,
    },
    /// Branches in parallel, drawn left to right in this order.
    Parallel(Vec<Tree>),
}

/// One static CMOS stage: its output net and the two networks that drive it.
#[derive(Debug, Clone, PartialEq)]
pub struct SchematicStage {
    /// Its name, written above it (e.g. `stage 1`).
    pub name: String,
    /// The net it drives.
    pub output: String,
    /// From vdd to the output.
    pub pull_up: Tree,
    /// From the output to vss.
    pub pull_down: Tree,
}

/// A cell to draw.
#[derive(Debug, Clone, PartialEq)]
pub struct Schematic {
    /// The heading.
    pub title: String,
    /// Lines under the heading (how it was sized, what the figures mean).
    pub notes: Vec<String>,
    /// Input pins, drawn in this order at the left.
    pub inputs: Vec<String>,
    /// The output pin, drawn at the right.
    pub output: String,
    /// The stages in order: each is drawn to the right of the one that drives it.
    pub stages: Vec<SchematicStage>,
}

/// Most devices in one schematic (beyond it the picture is unreadable and the layout large).
pub const MAX_DEVICES: usize = 1024;

/// Deepest nesting of series and parallel groups in one network.
pub const MAX_DEPTH: usize = 64;

/// Why a schematic cannot be drawn.
#[derive(Debug, Clone, PartialEq, Eq, Error)]
pub enum SchematicError {
    /// There is nothing to draw.
    #[error("a schematic needs at least one stage")]
    NoStages,
    /// A series or parallel group with no members.
    #[error("stage `{stage}`: a series or parallel group has no members")]
    EmptyGroup {
        /// The stage's name.
        stage: String,
    },
    /// A series group whose junction names do not match its members.
    #[error("stage `{stage}`: a series group of {members} members names {junctions} junctions, expected {}", members - 1)]
    Junctions {
        /// The stage's name.
        stage: String,
        /// Members of the group.
        members: usize,
        /// Junction names given.
        junctions: usize,
    },
    /// Past [`MAX_DEVICES`] or [`MAX_DEPTH`].
    #[error(
        "the schematic is too large to draw: at most {MAX_DEVICES} devices, groups nested at most {MAX_DEPTH} deep"
    )]
    TooLarge,
}

/// Stroke of wires and symbols.
const STROKE: f64 = 1.5;
/// Stroke of devices on a worst path.
const HEAVY: f64 = 3.2;
/// Stroke of the rails.
const RAIL_STROKE: f64 = 2.5;
/// Colour of the worst path: a dark orange, distinct from the ink in colour and about 40% grey
/// when printed in black and white.
const HIGHLIGHT: &str = "#c2410c";
/// Colour of net and node names: a dark blue (prints dark).
const NET: &str = "#1d4e89";
/// Colour of device label lines and stage names.
const MUTED: &str = "#3a3a3a";
/// Vertical pitch of stacked text lines.
const PITCH: f64 = 16.0;
/// Space above and below a device's symbol or text column, inside its cell.
const CELL_PAD: f64 = 6.0;
/// Height of the symbol itself (leads excluded).
const SYMBOL: f64 = 40.0;
/// From the spine to the end of the gate lead.
const GATE_REACH: f64 = 40.0;
/// Between a label and what it labels.
const LABEL_GAP: f64 = 4.0;
/// From the spine to the right-hand text column.
const RIGHT_TEXT: f64 = 8.0;
/// Spare room after text, so that neighbours do not touch it.
const TEXT_SLACK: f64 = 3.0;
/// Between one parallel branch's right edge and the next one's left edge.
const BRANCH_GAP: f64 = 22.0;
/// Between series members joined at a named node (room for the name).
const NAMED_GAP: f64 = 28.0;
/// Between series members joined at an unnamed node.
const UNNAMED_GAP: f64 = 12.0;
/// Between a parallel group's bus and its tallest branch.
const BUS_GAP: f64 = 10.0;
/// Between the pull-up's bottom and the output line (room for the net name).
const OUT_ABOVE: f64 = 28.0;
/// Between the output line and the pull-down's top.
const OUT_BELOW: f64 = 16.0;
/// Between a rail and the nearest network.
const RAIL_GAP: f64 = 14.0;
/// Between one stage's right edge and the next one's left edge.
const STAGE_GAP: f64 = 44.0;
/// Margin around the whole drawing.
const MARGIN: f64 = 20.0;
/// Radius of a connection dot.
const DOT: f64 = 2.6;

/// A computed schematic: every shape in place, with the boxes the tests check.
#[derive(Debug, Clone)]
pub struct Layout {
    drawing: Drawing,
    width: f64,
    height: f64,
    title: String,
}

impl Layout {
    /// Lay out `schematic`.
    pub fn new(schematic: &Schematic) -> Result<Layout, SchematicError> {
        check(schematic)?;
        Ok(lay_out(schematic))
    }

    /// Every label, with its text and its estimated box ([`Label::bounds`]).
    pub fn labels(&self) -> Vec<&Label> {
        self.drawing.labels()
    }

    /// Every stroke drawn (wires, rails, symbol strokes, marker and pin outlines) as segments
    /// with their widths.
    pub fn wires(&self) -> Vec<Segment> {
        self.drawing.strokes()
    }

    /// Every shape in drawing order.
    pub fn shapes(&self) -> &[Shape] {
        &self.drawing.shapes
    }

    /// Width and height of the picture in px.
    pub fn size(&self) -> (f64, f64) {
        (self.width, self.height)
    }

    /// Write the picture as a standalone SVG 1.1 document.
    pub fn write_svg(&self, out: &mut dyn Write) -> io::Result<()> {
        self.drawing.write_svg(self.width, self.height, &self.title, out)
    }
}

/// Lay out `schematic` and write it as SVG; a schematic that cannot be drawn is an
/// `InvalidInput` error naming why.
pub fn write_schematic(schematic: &Schematic, out: &mut dyn Write) -> io::Result<()> {
    let layout = Layout::new(schematic).map_err(|e| io::Error::new(io::ErrorKind::InvalidInput, e.to_string()))?;
    layout.write_svg(out)
}

fn check(schematic: &Schematic) -> Result<(), SchematicError> {
    fn walk(tree: &Tree, stage: &str, depth: usize, devices: &mut usize) -> Result<(), SchematicError> {
        if depth > MAX_DEPTH || *devices > MAX_DEVICES {
            return Err(SchematicError::TooLarge);
        }
        match tree {
            Tree::Device(_) => {
                *devices += 1;
                Ok(())
            }
            Tree::Series { members, junctions } => {
                if members.is_empty() {
                    return Err(SchematicError::EmptyGroup { stage: stage.to_string() });
                }
                if junctions.len() + 1 != members.len() {
                    return Err(SchematicError::Junctions {
                        stage: stage.to_string(),
                        members: members.len(),
                        junctions: junctions.len(),
                    });
                }
                members.iter().try_for_each(|m| walk(m, stage, depth + 1, devices))
            }
            Tree::Parallel(branches) => {
                if branches.is_empty() {
                    return Err(SchematicError::EmptyGroup { stage: stage.to_string() });
                }
                branches.iter().try_for_each(|b| walk(b, stage, depth + 1, devices))
            }
        }
    }
    if schematic.stages.is_empty() {
        return Err(SchematicError::NoStages);
    }
    let mut devices = 0;
    for stage in &schematic.stages {
        walk(&stage.pull_up, &stage.name, 0, &mut devices)?;
        walk(&stage.pull_down, &stage.name, 0, &mut devices)?;
    }
    if devices > MAX_DEVICES { Err(SchematicError::TooLarge) } else { Ok(()) }
}

/// A tree with its measured extent: `left` and `right` of its spine, and its `height`; the
/// extents of its children, and for a parallel group each branch's spine offset.
struct Block<'a> {
    tree: &'a Tree,
    left: f64,
    right: f64,
    height: f64,
    children: Vec<Block<'a>>,
    offsets: Vec<f64>,
}

fn width(text: &str) -> f64 {
    text_width(text, FONT_SIZE)
}

fn junction_gap(name: &str) -> f64 {
    if name.is_empty() { UNNAMED_GAP } else { NAMED_GAP }
}

/// The diamond drawn after the name of a device on a worst path (and in the legend).
const MARKER: f64 = 5.0;

fn measure(tree: &Tree) -> Block<'_> {
    match tree {
        Tree::Device(device) => {
            let name = width(&device.name) + if device.on_worst_path { 2.0 * MARKER + 8.0 } else { 0.0 };
            let column = device.lines.iter().map(|l| width(l)).fold(name, f64::max);
            let lines = 1 + device.lines.len();
            Block {
                tree,
                left: GATE_REACH + LABEL_GAP + width(&device.gate) + TEXT_SLACK,
                right: RIGHT_TEXT + column + TEXT_SLACK,
                height: SYMBOL.max(lines as f64 * PITCH) + 2.0 * CELL_PAD,
                children: Vec::new(),
                offsets: Vec::new(),
            }
        }
        Tree::Series { members, junctions } => {
            let children: Vec<Block> = members.iter().map(measure).collect();
            let gaps: f64 = junctions.iter().map(|j| junction_gap(j)).sum();
            let names = junctions.iter().map(|j| RIGHT_TEXT + width(j) + TEXT_SLACK).fold(0.0, f64::max);
            Block {
                tree,
                left: children.iter().map(|c| c.left).fold(0.0, f64::max),
                right: children.iter().map(|c| c.right).fold(names, f64::max),
                height: children.iter().map(|c| c.height).sum::<f64>() + gaps,
                children,
                offsets: Vec::new(),
            }
        }
        Tree::Parallel(branches) => {
            let children: Vec<Block> = branches.iter().map(measure).collect();
            let mut offsets = Vec::with_capacity(children.len());
            let mut offset = 0.0;
            for (i, child) in children.iter().enumerate() {
                if i > 0 {
                    offset += children[i - 1].right + BRANCH_GAP + child.left;
                }
                offsets.push(offset);
            }
            let left = children.iter().zip(&offsets).map(|(c, o)| c.left - o).fold(0.0, f64::max);
            let right = children.iter().zip(&offsets).map(|(c, o)| c.right + o).fold(0.0, f64::max);
            let tallest = children.iter().map(|c| c.height).fold(0.0, f64::max);
            Block { tree, left, right, height: tallest + 2.0 * BUS_GAP, children, offsets }
        }
    }
}

fn dot(drawing: &mut Drawing, x: f64, y: f64) {
    drawing.shapes.push(Shape::Circle { cx: x, cy: y, r: DOT, fill: Some(INK), colour: INK, width: 1.0 });
}

fn net_label(x: f64, y: f64, text: &str, anchor: Anchor) -> Label {
    Label { colour: NET, ..Label::new(x, y, text, anchor) }
}

fn node_label(x: f64, y: f64, text: &str) -> Label {
    Label { colour: NET, italic: true, ..Label::new(x, y, text, Anchor::Start) }
}

/// A filled diamond centred at (`x`, `y`): the worst-path marker.
fn marker(x: f64, y: f64) -> Shape {
    Shape::Polygon {
        points: vec![(x, y - MARKER), (x + MARKER, y), (x, y + MARKER), (x - MARKER, y)],
        fill: Some(HIGHLIGHT),
        colour: HIGHLIGHT,
        width: 1.0,
    }
}

/// Draw a device whose cell spans `top..top + height` on the spine `x`.
/// A gate lead's end, where the net on it is named or wired: its net, x and y.
struct Gate<'a> {
    net: &'a str,
    x: f64,
    y: f64,
}

impl Gate<'_> {
    /// The net's name at the lead's end, or above the lead when a wire comes in along it.
    fn label(&self, wired: bool) -> Label {
        let y = if wired { self.y - 5.0 } else { self.y + 4.0 };
        net_label(self.x - LABEL_GAP, y, self.net, Anchor::End)
    }
}

fn draw_device<'a>(
    device: &'a DeviceSymbol,
    x: f64,
    top: f64,
    height: f64,
    drawing: &mut Drawing,
    gates: &mut Vec<Gate<'a>>,
) {
    let (colour, stroke) = if device.on_worst_path { (HIGHLIGHT, HEAVY) } else { (INK, STROKE) };
    let cy = top + height / 2.0;
    let (channel, plate, end) = (x - 14.0, x - 20.0, x - GATE_REACH);
    // Leads along the spine, stubs to the channel, the channel, the gate plate.
    drawing.line(x, top, x, cy - 10.0, stroke, colour);
    drawing.line(x, cy - 10.0, channel, cy - 10.0, stroke, colour);
    drawing.line(channel, cy - 14.0, channel, cy + 14.0, stroke, colour);
    drawing.line(channel, cy + 10.0, x, cy + 10.0, stroke, colour);
    drawing.line(x, cy + 10.0, x, top + height, stroke, colour);
    drawing.line(plate, cy - 10.0, plate, cy + 10.0, stroke, colour);
    match device.channel {
        Channel::Nmos => drawing.line(plate, cy, end, cy, stroke, colour),
        Channel::Pmos => {
            let r = 3.6;
            drawing.shapes.push(Shape::Circle {
                cx: plate - r - stroke / 2.0,
                cy,
                r,
                fill: None,
                colour,
                width: stroke,
            });
            drawing.line(plate - 2.0 * r - stroke, cy, end, cy, stroke, colour);
        }
    }
    gates.push(Gate { net: &device.gate, x: end, y: cy });
    // The text column, centred on the symbol: name, then the lines.
    let lines = 1 + device.lines.len();
    let first = cy - lines as f64 * PITCH / 2.0 + (PITCH + line_height(FONT_SIZE)) / 2.0 - 3.6;
    let column = x + RIGHT_TEXT;
    drawing.text(Label { bold: true, ..Label::new(column, first, &device.name, Anchor::Start) });
    if device.on_worst_path {
        drawing.shapes.push(marker(column + width(&device.name) + 4.0 + MARKER, first - 4.0));
    }
    for (i, line) in device.lines.iter().enumerate() {
        let y = first + (i + 1) as f64 * PITCH;
        drawing.text(Label { colour: MUTED, ..Label::new(column, y, line, Anchor::Start) });
    }
}

/// Where a block's ends go: `Some(y)` lands that end on the rail at `y` directly (each parallel
/// branch on its own, with a dot where it meets the rail), `None` ends it at the block's edge.
#[derive(Debug, Clone, Copy)]
struct Ends {
    top: Option<f64>,
    bottom: Option<f64>,
}

const OPEN: Ends = Ends { top: None, bottom: None };

/// Whether the tree's top (or bottom) end is a parallel group's bus, which carries its own dot.
fn bus_end(tree: &Tree, bottom: bool) -> bool {
    match tree {
        Tree::Device(_) => false,
        Tree::Parallel(branches) => branches.len() > 1 || branches.first().is_some_and(|b| bus_end(b, bottom)),
        Tree::Series { members, .. } => {
            let end = if bottom { members.last() } else { members.first() };
            end.is_some_and(|m| bus_end(m, bottom))
        }
    }
}

/// Draw `block` with its spine at `x` and its top at `top`.
fn place<'a>(block: &Block<'a>, x: f64, top: f64, ends: Ends, drawing: &mut Drawing, gates: &mut Vec<Gate<'a>>) {
    let bottom = top + block.height;
    match block.tree {
        Tree::Device(device) => {
            for (rail, end) in [(ends.top, top), (ends.bottom, bottom)] {
                if let Some(rail) = rail {
                    drawing.line(x, rail, x, end, STROKE, INK);
                    dot(drawing, x, rail);
                }
            }
            draw_device(device, x, top, block.height, drawing, gates);
        }
        Tree::Series { members, junctions } => {
            let mut y = top;
            let last = block.children.len() - 1;
            for (i, child) in block.children.iter().enumerate() {
                let child_ends = Ends {
                    top: if i == 0 { ends.top } else { None },
                    bottom: if i == last { ends.bottom } else { None },
                };
                place(child, x, y, child_ends, drawing, gates);
                y += child.height;
                if let Some(name) = junctions.get(i) {
                    let gap = junction_gap(name);
                    drawing.line(x, y, x, y + gap, STROKE, INK);
                    if !name.is_empty() {
                        let middle = y + gap / 2.0;
                        // A bus next to the node already carries a dot.
                        if !bus_end(&members[i], true) && !bus_end(&members[i + 1], false) {
                            dot(drawing, x, middle);
                        }
                        drawing.text(node_label(x + RIGHT_TEXT, middle + 4.0, name));
                    }
                    y += gap;
                }
            }
        }
        Tree::Parallel(_) => {
            let inside = block.height - 2.0 * BUS_GAP;
            for (child, offset) in block.children.iter().zip(&block.offsets) {
                let branch = x + offset;
                let child_top = top + BUS_GAP + (inside - child.height) / 2.0;
                let child_bottom = child_top + child.height;
                if ends.top.is_none() {
                    drawing.line(branch, top, branch, child_top, STROKE, INK);
                }
                if ends.bottom.is_none() {
                    drawing.line(branch, child_bottom, branch, bottom, STROKE, INK);
                }
                place(child, branch, child_top, ends, drawing, gates);
            }
            if let Some(&last) = block.offsets.last().filter(|&&last| last > 0.0) {
                // A bus at each end that does not land on a rail, with a dot wherever three
                // wires meet: at every branch but the last.
                for (rail, y) in [(ends.top, top), (ends.bottom, bottom)] {
                    if rail.is_none() {
                        drawing.line(x, y, x + last, y, STROKE, INK);
                        for offset in &block.offsets[..block.offsets.len() - 1] {
                            dot(drawing, x + offset, y);
                        }
                    }
                }
            }
        }
    }
}

/// An input or output pin: a flag pointing right with its left end at `x`, centred on `y`.
fn pin(x: f64, y: f64) -> Shape {
    Shape::Polygon {
        points: vec![(x, y - 7.0), (x + 14.0, y - 7.0), (x + 21.0, y), (x + 14.0, y + 7.0), (x, y + 7.0)],
        fill: None,
        colour: INK,
        width: STROKE,
    }
}

/// Pins and flags are this wide.
const PIN: f64 = 21.0;

fn lay_out(schematic: &Schematic) -> Layout {
    let mut body = Drawing::default();
    // A pull-up's member 0 is at the output, which is below it: drawn from the top down, its
    // series members come in reverse.
    let pull_ups: Vec<Tree> = schematic.stages.iter().map(|s| upside_down(&s.pull_up)).collect();
    let measured: Vec<(Block, Block)> =
        schematic.stages.iter().zip(&pull_ups).map(|(s, up)| (measure(up), measure(&s.pull_down))).collect();
    let tallest_up = measured.iter().map(|(up, _)| up.height).fold(0.0, f64::max);
    let tallest_down = measured.iter().map(|(_, down)| down.height).fold(0.0, f64::max);
    // The output line of every stage is y = 0.
    let vdd = -OUT_ABOVE - tallest_up - RAIL_GAP;
    let vss = OUT_BELOW + tallest_down + RAIL_GAP;

    // Input pins, a column centred on the output line, names to the left of their flags.
    let names = schematic.inputs.iter().map(|i| width(i)).fold(0.0, f64::max);
    let pin_x = names + LABEL_GAP + TEXT_SLACK;
    let pin_pitch = 24.0;
    for (i, input) in schematic.inputs.iter().enumerate() {
        let y = (i as f64 - (schematic.inputs.len() as f64 - 1.0) / 2.0) * pin_pitch;
        body.shapes.push(pin(pin_x, y));
        body.text(Label { bold: true, ..Label::new(pin_x - LABEL_GAP, y + 4.0, input, Anchor::End) });
    }
    let pins_right = if schematic.inputs.is_empty() { 0.0 } else { pin_x + PIN };

    // Rail names, then the rails' start.
    let rail_names = width("vdd").max(width("vss"));
    let rail_start = pins_right + 24.0 + rail_names + 8.0;
    body.text(Label { bold: true, ..Label::new(rail_start - 8.0, vdd + 4.0, "vdd", Anchor::End) });
    body.text(Label { bold: true, ..Label::new(rail_start - 8.0, vss + 4.0, "vss", Anchor::End) });

    let last = schematic.stages.len() - 1;
    let mut x = rail_start + 12.0;
    let mut spines = Vec::with_capacity(schematic.stages.len());
    let mut rights = Vec::with_capacity(schematic.stages.len());
    for (k, (stage, (up, down))) in schematic.stages.iter().zip(&measured).enumerate() {
        // The node names its net, unless the output pin beside it does.
        let node_name = if k == last && stage.output == schematic.output { "" } else { stage.output.as_str() };
        let left = up.left.max(down.left);
        let mut right = up.right.max(down.right).max(RIGHT_TEXT + width(node_name) + TEXT_SLACK);
        right = right.max(width(&stage.name) + TEXT_SLACK - left);
        let spine = x + left;
        let up_top = -OUT_ABOVE - up.height;
        let mut gates = Vec::new();
        place(up, spine, up_top, Ends { top: Some(vdd), ..OPEN }, &mut body, &mut gates);
        body.line(spine, -OUT_ABOVE, spine, OUT_BELOW, STROKE, INK);
        place(down, spine, OUT_BELOW, Ends { bottom: Some(vss), ..OPEN }, &mut body, &mut gates);
        if k > 0 {
            let driver = &schematic.stages[k - 1].output;
            connect(&mut body, &gates, driver, spines[k - 1], x - 14.0);
        } else {
            for gate in &gates {
                body.text(gate.label(false));
            }
        }
        dot(&mut body, spine, 0.0);
        if !node_name.is_empty() {
            body.text(node_label(spine + RIGHT_TEXT, -6.0, node_name));
        }
        body.text(Label { colour: MUTED, ..Label::new(x, vdd - 8.0, &stage.name, Anchor::Start) });
        spines.push(spine);
        rights.push(spine + right);
        x = spine + right + STAGE_GAP;
    }
    let output_pin = rights[last] + 24.0;
    body.line(spines[last], 0.0, output_pin, 0.0, STROKE, INK);
    body.shapes.push(pin(output_pin, 0.0));
    body.text(Label { bold: true, ..Label::new(output_pin + PIN + LABEL_GAP, 4.0, &schematic.output, Anchor::Start) });
    let rail_end = rights[last] + 8.0;
    body.line(rail_start, vdd, rail_end, vdd, RAIL_STROKE, INK);
    body.line(rail_start, vss, rail_end, vss, RAIL_STROKE, INK);

    frame(schematic, body)
}

/// The tree with every series group's members (and junctions) in reverse order.
fn upside_down(tree: &Tree) -> Tree {
    match tree {
        Tree::Device(_) => tree.clone(),
        Tree::Series { members, junctions } => Tree::Series {
            members: members.iter().rev().map(upside_down).collect(),
            junctions: junctions.iter().rev().cloned().collect(),
        },
        Tree::Parallel(branches) => Tree::Parallel(branches.iter().map(upside_down).collect()),
    }
}

/// Name the nets on a stage's `gates`, and run the previous stage's output (`driver`, from its
/// node on the spine `from`) to the stage: along a bus at `bus` into every gate on that net whose
/// lead can be reached from the left without crossing anything, else (none reachable) to an arrow
/// at the bus, the gates connected by name; nothing runs to a stage that does not read the net.
fn connect(body: &mut Drawing, gates: &[Gate], driver: &str, from: f64, bus: f64) {
    let mut labels: Vec<Label> = gates.iter().map(|g| g.label(false)).collect();
    let mut wired = Vec::new();
    for (i, gate) in gates.iter().enumerate().filter(|(_, g)| g.net == driver) {
        let wire = Rect::spanning(bus + 1.0, gate.y - STROKE, gate.x - 2.0, gate.y + STROKE);
        let moved = gate.label(true);
        let others = || labels.iter().enumerate().filter(|&(j, _)| j != i).map(|(_, l)| l.bounds());
        let clear = |rect: &Rect| {
            others().all(|b| !b.overlaps(rect))
                && body.labels().iter().all(|l| !l.bounds().overlaps(rect))
                && body.shapes.iter().all(|s| match s {
                    Shape::Text(_) => true,
                    Shape::Line { .. } | Shape::Polygon { .. } | Shape::Polyline { .. } => {
                        s.strokes().iter().all(|w| !w.crosses(rect))
                    }
                    Shape::Circle { .. } => !s.bounds().overlaps(rect),
                })
        };
        if clear(&wire) && clear(&moved.bounds()) {
            labels[i] = moved;
            wired.push(gate);
        }
    }
    for label in labels {
        body.text(label);
    }
    if wired.is_empty() {
        // A stage that does not read the net gets no arrow: it would say the net drives it.
        if gates.iter().all(|g| g.net != driver) {
            return;
        }
        body.line(from, 0.0, bus - 7.0, 0.0, STROKE, INK);
        body.shapes.push(Shape::Polygon {
            points: vec![(bus, 0.0), (bus - 9.0, -4.5), (bus - 9.0, 4.5)],
            fill: Some(INK),
            colour: INK,
            width: 1.0,
        });
        return;
    }
    body.line(from, 0.0, bus, 0.0, STROKE, INK);
    let top = wired.iter().map(|g| g.y).fold(0.0, f64::min);
    let bottom = wired.iter().map(|g| g.y).fold(0.0, f64::max);
    body.line(bus, top, bus, bottom, STROKE, INK);
    // Dots where three wires meet: where the output joins a bus running both ways, and where
    // a gate's wire leaves the bus short of its end.
    if top < 0.0 && bottom > 0.0 {
        dot(body, bus, 0.0);
    }
    for gate in wired {
        body.line(bus, gate.y, gate.x, gate.y, STROKE, INK);
        if gate.y > top && gate.y < bottom && gate.y != 0.0 {
            dot(body, bus, gate.y);
        }
    }
}

/// Put the title and notes above the body, the legend below it, and everything inside margins.
fn frame(schematic: &Schematic, mut body: Drawing) -> Layout {
    let title_size = 15.0;
    let mut header = Drawing::default();
    let mut y = MARGIN + title_size;
    header.text(Label { bold: true, size: title_size, ..Label::new(MARGIN, y, &schematic.title, Anchor::Start) });
    y += 6.0;
    for note in &schematic.notes {
        y += PITCH;
        header.text(Label { colour: MUTED, ..Label::new(MARGIN, y, note, Anchor::Start) });
    }
    let header_bottom = header.bounds().map_or(MARGIN, |b| b.bottom);

    let bounds = body.bounds().unwrap_or(Rect::spanning(0.0, 0.0, 0.0, 0.0));
    body.translate(MARGIN - bounds.left, header_bottom + 18.0 - bounds.top);
    let body_bottom = header_bottom + 18.0 + bounds.height();

    // The legend: a sample of the highlight, and how gates connect.
    let mut legend = Drawing::default();
    let y = body_bottom + 30.0;
    legend.line(MARGIN + 4.0, y - 13.0, MARGIN + 4.0, y + 3.0, HEAVY, HIGHLIGHT);
    legend.shapes.push(marker(MARGIN + 16.0, y - 5.0));
    legend.text(Label::new(
        MARGIN + 28.0,
        y,
        "heavy, with a diamond: a device on the worst path of its network (one path where several tie)",
        Anchor::Start,
    ));
    legend.text(Label {
        colour: NET,
        ..Label::new(
            MARGIN + 28.0,
            y + PITCH + 4.0,
            "a name at a gate lead is the net on that gate: the pin or node of that name",
            Anchor::Start,
        )
    });

    let mut drawing = header;
    drawing.shapes.extend(body.shapes);
    drawing.shapes.extend(legend.shapes);
    let all = drawing.bounds().unwrap_or(Rect::spanning(0.0, 0.0, 0.0, 0.0));
    Layout { drawing, width: all.right + MARGIN, height: all.bottom + MARGIN, title: schematic.title.clone() }
}

#[cfg(test)]
mod tests;
