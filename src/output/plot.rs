//! Trade-off plot writer: the curve of least total W/L against the delay ratio as an SVG line plot,
//! with its special points (e.g. the longest-path rule, min-area) marked and labelled, so a
//! designer reads the knee at a glance.
//!
//! The input is this module's own description ([`TradeoffPlot`]), so the writer depends on
//! nothing else of the crate. The layout is computed:
//! - both axes run between round ticks (steps of 1, 2 or 5 times a power of ten, about six of
//!   them) that hold every point with a little room (a tenth of the range above the highest, for
//!   its label); the y axis starts at 0 when no value is negative, so areas compare honestly;
//! - tick labels have as many decimals as the step needs; the x axis title is centred below its
//!   tick labels, the y axis title stands above the axis, unrotated;
//! - the curve is a polyline with a dot at each point; each marked point is an open diamond, with
//!   its label and its values placed at the first of a list of spots around it (nearest first,
//!   above-right first: a falling curve leaves that side free) where the label overlaps no other
//!   label and no stroke crosses it, joined to it by a thin leader when it stands off; a label that
//!   fits nowhere is numbered there and written in full in a list under the plot;
//! - a legend under the plot says what the line and the diamonds are; title and notes on top.
//!
//! Every label and stroke keeps its box ([`PlotLayout::labels`], [`PlotLayout::wires`]), which is
//! what the tests check.

use std::io::{self, Write};

use thiserror::Error;

use super::svg::{Anchor, Drawing, FONT_SIZE, INK, Label, Rect, Segment, Shape, text_width};

/// One point of the curve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlotPoint {
    /// Delay ratio (unit-less).
    pub x: f64,
    /// Total W/L.
    pub y: f64,
}

/// A point to mark and label, e.g. `longest-path rule` or `min-area`.
#[derive(Debug, Clone, PartialEq)]
pub struct MarkedPoint {
    /// Delay ratio (unit-less).
    pub x: f64,
    /// Total W/L.
    pub y: f64,
    /// What the point is.
    pub label: String,
}

/// A trade-off curve to plot.
#[derive(Debug, Clone, PartialEq)]
pub struct TradeoffPlot {
    /// The heading.
    pub title: String,
    /// Lines under the heading.
    pub notes: Vec<String>,
    /// Title of the x axis, with its unit, e.g. `delay ratio: worst Elmore delay / reference
    /// inverter's (unit-less)`.
    pub x_title: String,
    /// Title of the y axis, with its unit, e.g. `total W/L (unit-NMOS widths)`.
    pub y_title: String,
    /// What the curve is, for the legend.
    pub curve: String,
    /// The curve's points, in the order they are joined.
    pub points: Vec<PlotPoint>,
    /// Points to mark and label.
    pub marked: Vec<MarkedPoint>,
}

/// Largest magnitude of a plotted value.
pub const MAX_VALUE: f64 = 1e12;

/// Most points on one curve.
pub const MAX_POINTS: usize = 10_000;

/// Why a plot cannot be drawn.
#[derive(Debug, Clone, PartialEq, Eq, Error)]
pub enum PlotError {
    /// No point to plot.
    #[error("a plot needs at least one point")]
    Empty,
    /// A value that is not a finite number of at most [`MAX_VALUE`] in magnitude, or too many
    /// points.
    #[error("a plot takes at most {MAX_POINTS} points of finite values up to {MAX_VALUE:e} in magnitude")]
    OutOfRange,
}

/// Width and height of the plotting area.
const AREA_WIDTH: f64 = 560.0;
const AREA_HEIGHT: f64 = 340.0;
/// Margin around the whole picture.
const MARGIN: f64 = 20.0;
/// Length of a tick mark.
const TICK: f64 = 5.0;
/// Stroke of axes and ticks.
const AXIS_STROKE: f64 = 1.5;
/// Stroke of the curve.
const CURVE_STROKE: f64 = 2.0;
/// Colour of the curve: a dark blue, prints dark.
const CURVE: &str = "#1d4e89";
/// Colour of marked points: a dark orange, about 40% grey in black and white (the diamond shape
/// carries the meaning there).
const MARK: &str = "#c2410c";
/// Colour of notes, values and leaders.
const MUTED: &str = "#3a3a3a";
/// Half the diagonal of a marked point's diamond.
const DIAMOND: f64 = 7.0;
/// Radius of a curve point's dot.
const POINT: f64 = 2.6;
/// Vertical pitch of stacked text lines.
const PITCH: f64 = 16.0;

/// A computed plot: every shape in place, with the boxes the tests check.
#[derive(Debug, Clone)]
pub struct PlotLayout {
    drawing: Drawing,
    width: f64,
    height: f64,
    title: String,
}

impl PlotLayout {
    /// Lay out `plot`.
    pub fn new(plot: &TradeoffPlot) -> Result<PlotLayout, PlotError> {
        check(plot)?;
        Ok(lay_out(plot))
    }

    /// Every label, with its text and its estimated box.
    pub fn labels(&self) -> Vec<&Label> {
        self.drawing.labels()
    }

    /// Every stroke drawn (axes, ticks, the curve, markers, leaders, legend samples).
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

/// Lay out `plot` and write it as SVG; a plot that cannot be drawn is an `InvalidInput` error
/// naming why.
pub fn write_plot(plot: &TradeoffPlot, out: &mut dyn Write) -> io::Result<()> {
    let layout = PlotLayout::new(plot).map_err(|e| io::Error::new(io::ErrorKind::InvalidInput, e.to_string()))?;
    layout.write_svg(out)
}

fn check(plot: &TradeoffPlot) -> Result<(), PlotError> {
    if plot.points.is_empty() && plot.marked.is_empty() {
        return Err(PlotError::Empty);
    }
    let fine = |v: f64| v.is_finite() && v.abs() <= MAX_VALUE;
    let values = plot.points.iter().flat_map(|p| [p.x, p.y]).chain(plot.marked.iter().flat_map(|m| [m.x, m.y]));
    if plot.points.len() + plot.marked.len() > MAX_POINTS || !values.into_iter().all(fine) {
        return Err(PlotError::OutOfRange);
    }
    Ok(())
}

/// An axis: its ends (on round ticks), the step and the ticks.
#[derive(Debug, Clone, PartialEq)]
struct Axis {
    low: f64,
    high: f64,
    step: f64,
    ticks: Vec<f64>,
}

impl Axis {
    /// Round ticks, about six, over `low..high` (which may be one value).
    fn new(low: f64, high: f64) -> Axis {
        let (mut low, mut high) = (low, high);
        let span = high - low;
        if span <= high.abs().max(low.abs()) * 1e-9 {
            let pad = (high.abs() * 0.1).max(1e-3);
            low -= pad;
            high += pad;
        }
        let raw = (high - low) / 6.0;
        let magnitude = 10f64.powf(raw.log10().floor());
        let step = [1.0, 2.0, 5.0, 10.0].iter().map(|m| m * magnitude).find(|s| *s >= raw * (1.0 - 1e-12));
        let step = step.unwrap_or(10.0 * magnitude);
        let start = (low / step + 1e-9).floor() * step;
        let end = (high / step - 1e-9).ceil() * step;
        let count = ((end - start) / step).round().clamp(1.0, 20.0) as usize;
        let ticks = (0..=count).map(|i| start + i as f64 * step).collect();
        Axis { low: start, high: start + count as f64 * step, step, ticks }
    }

    /// Decimals a tick label needs.
    fn decimals(&self) -> usize {
        (-self.step.log10().floor()).clamp(0.0, 12.0) as usize
    }

    fn label(&self, value: f64) -> String {
        format_value(value, self.decimals())
    }
}

fn format_value(value: f64, decimals: usize) -> String {
    let text = format!("{value:.decimals$}");
    if text.trim_start_matches('-').chars().all(|c| c == '0' || c == '.') {
        text.trim_start_matches('-').to_string()
    } else {
        text
    }
}

fn width(text: &str) -> f64 {
    text_width(text, FONT_SIZE)
}

/// Whether a box is free: inside `within`, clear of every label and not crossed by any stroke.
fn free(rect: &Rect, within: &Rect, drawing: &Drawing) -> bool {
    within.contains(rect.left, rect.top)
        && within.contains(rect.right, rect.bottom)
        && drawing.labels().iter().all(|l| !l.bounds().overlaps(rect))
        && drawing.strokes().iter().all(|s| !s.crosses(rect))
        && drawing
            .shapes
            .iter()
            .filter(|s| matches!(s, Shape::Circle { .. } | Shape::Polygon { .. }))
            .all(|s| !s.bounds().overlaps(rect))
}

fn diamond(x: f64, y: f64, size: f64) -> Shape {
    Shape::Polygon {
        points: vec![(x, y - size), (x + size, y), (x, y + size), (x - size, y)],
        fill: None,
        colour: MARK,
        width: 2.0,
    }
}

fn lay_out(plot: &TradeoffPlot) -> PlotLayout {
    let mut drawing = Drawing::default();
    let title_size = 15.0;
    let mut y = MARGIN + title_size;
    drawing.text(Label { bold: true, size: title_size, ..Label::new(MARGIN, y, &plot.title, Anchor::Start) });
    y += 6.0;
    for note in &plot.notes {
        y += PITCH;
        drawing.text(Label { colour: MUTED, ..Label::new(MARGIN, y, note, Anchor::Start) });
    }

    let all = || plot.points.iter().map(|p| (p.x, p.y)).chain(plot.marked.iter().map(|m| (m.x, m.y)));
    let (x_min, x_max) = all().fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), (x, _)| (l.min(x), h.max(x)));
    let (y_min, y_max) = all().fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), (_, y)| (l.min(y), h.max(y)));
    // A little room so that no point sits on the frame.
    let x_pad = (x_max - x_min) * 0.04;
    let x_axis = Axis::new(x_min - x_pad, x_max + x_pad);
    // Room above the highest point for its label: a tenth of the range shown.
    let y_low = if y_min >= 0.0 { 0.0 } else { y_min - (y_max - y_min) * 0.04 };
    let y_axis = Axis::new(y_low, y_max + (y_max - y_low) * 0.1);
    let y_labels: Vec<String> = y_axis.ticks.iter().map(|&t| y_axis.label(t)).collect();
    let y_label_width = y_labels.iter().map(|l| width(l)).fold(0.0, f64::max);

    let left = MARGIN + y_label_width + TICK + 8.0;
    let top = y + 44.0;
    let (right, bottom) = (left + AREA_WIDTH, top + AREA_HEIGHT);
    let area = Rect { left, top, right, bottom };
    let px = |x: f64| left + (x - x_axis.low) / (x_axis.high - x_axis.low) * AREA_WIDTH;
    let py = |y: f64| bottom - (y - y_axis.low) / (y_axis.high - y_axis.low) * AREA_HEIGHT;

    // Axes, ticks, tick labels, axis titles.
    drawing.line(left, top, left, bottom, AXIS_STROKE, INK);
    drawing.line(left, bottom, right, bottom, AXIS_STROKE, INK);
    for (&tick, label) in y_axis.ticks.iter().zip(&y_labels) {
        let y = py(tick);
        drawing.line(left - TICK, y, left, y, AXIS_STROKE, INK);
        drawing.text(Label::new(left - TICK - 4.0, y + 4.0, label, Anchor::End));
    }
    for &tick in &x_axis.ticks {
        let x = px(tick);
        drawing.line(x, bottom, x, bottom + TICK, AXIS_STROKE, INK);
        drawing.text(Label::new(x, bottom + TICK + 15.0, x_axis.label(tick), Anchor::Middle));
    }
    drawing.text(Label { bold: true, ..Label::new(MARGIN, top - 16.0, &plot.y_title, Anchor::Start) });
    let x_title =
        Label { bold: true, ..Label::new((left + right) / 2.0, bottom + TICK + 40.0, &plot.x_title, Anchor::Middle) };
    // A title wider than the area starts at the margin instead of leaving the picture.
    let x_title =
        if x_title.bounds().left < MARGIN { Label { x: MARGIN, anchor: Anchor::Start, ..x_title } } else { x_title };
    let mut below = x_title.y + 8.0;
    drawing.text(x_title);

    // The curve, its points, the marked points.
    let points: Vec<(f64, f64)> = plot.points.iter().map(|p| (px(p.x), py(p.y))).collect();
    if points.len() > 1 {
        drawing.shapes.push(Shape::Polyline { points: points.clone(), colour: CURVE, width: CURVE_STROKE });
    }
    for &(x, y) in &points {
        drawing.shapes.push(Shape::Circle { cx: x, cy: y, r: POINT, fill: Some(CURVE), colour: CURVE, width: 1.0 });
    }
    let marks: Vec<(f64, f64)> = plot.marked.iter().map(|m| (px(m.x), py(m.y))).collect();
    for &(x, y) in &marks {
        drawing.shapes.push(diamond(x, y, DIAMOND));
    }

    // Mark labels: the name, and its values under it in the axes' precision plus one decimal.
    let mut unplaced = Vec::new();
    for (number, (mark, &(x, y))) in plot.marked.iter().zip(&marks).enumerate() {
        let values =
            format!("{}, {}", format_value(mark.x, x_axis.decimals() + 1), format_value(mark.y, y_axis.decimals() + 1));
        if !place_mark_label(&mut drawing, &area, x, y, &[mark.label.as_str(), values.as_str()]) {
            let tag = format!("{}", number + 1);
            place_mark_label(&mut drawing, &area, x, y, &[tag.as_str()]);
            unplaced.push(format!("{}: {} ({values})", number + 1, mark.label));
        }
    }

    // The legend, and the labels that did not fit in the plot.
    below += 18.0;
    let sample = left;
    drawing.line(sample, below - 4.0, sample + 28.0, below - 4.0, CURVE_STROKE, CURVE);
    drawing.shapes.push(Shape::Circle {
        cx: sample + 14.0,
        cy: below - 4.0,
        r: POINT,
        fill: Some(CURVE),
        colour: CURVE,
        width: 1.0,
    });
    drawing.text(Label::new(sample + 40.0, below, &plot.curve, Anchor::Start));
    below += PITCH + 6.0;
    drawing.shapes.push(diamond(sample + 14.0, below - 4.0, DIAMOND - 1.0));
    drawing.text(Label::new(
        sample + 40.0,
        below,
        "marked point, its name and (delay ratio, total W/L)",
        Anchor::Start,
    ));
    for line in unplaced {
        below += PITCH;
        drawing.text(Label { colour: MUTED, ..Label::new(sample + 40.0, below, line, Anchor::Start) });
    }

    let bounds = drawing.bounds().unwrap_or(area);
    PlotLayout { drawing, width: bounds.right + MARGIN, height: bounds.bottom + MARGIN, title: plot.title.clone() }
}

/// Place a block of label lines for the marked point at (`x`, `y`) at the first free spot near it,
/// with a leader when it stands off; `false` when no spot inside `area` is free.
fn place_mark_label(drawing: &mut Drawing, area: &Rect, x: f64, y: f64, lines: &[&str]) -> bool {
    let block_width = lines.iter().map(|l| width(l)).fold(0.0, f64::max);
    let block_height = lines.len() as f64 * PITCH;
    let inside = area.grown(-4.0);
    // Directions, above-right first; distances from the diamond's edge, nearest first.
    let directions =
        [(1.0, -1.0), (-1.0, 1.0), (1.0, 0.0), (0.0, -1.0), (-1.0, -1.0), (1.0, 1.0), (-1.0, 0.0), (0.0, 1.0)];
    for distance in [6.0, 18.0, 34.0, 56.0, 84.0, 120.0] {
        for &(dx, dy) in &directions {
            let reach = DIAMOND + distance;
            let (cx, cy) = (x + dx * reach, y + dy * reach);
            let left = match dx {
                d if d > 0.0 => cx,
                d if d < 0.0 => cx - block_width,
                _ => cx - block_width / 2.0,
            };
            let top = match dy {
                d if d > 0.0 => cy,
                d if d < 0.0 => cy - block_height,
                _ => cy - block_height / 2.0,
            };
            let block = Rect { left, top, right: left + block_width, bottom: top + block_height };
            if !free(&block.grown(2.0), &inside, drawing) {
                continue;
            }
            // A leader from the diamond towards the block, stopping short of both.
            let (nx, ny) = (x.clamp(block.left, block.right), y.clamp(block.top, block.bottom));
            let length = (nx - x).hypot(ny - y);
            let leader = if length > DIAMOND + 8.0 {
                let (ux, uy) = ((nx - x) / length, (ny - y) / length);
                let segment = Segment {
                    x1: x + ux * (DIAMOND + 2.0),
                    y1: y + uy * (DIAMOND + 2.0),
                    x2: nx - ux * 3.0,
                    y2: ny - uy * 3.0,
                    width: 1.0,
                };
                if drawing.labels().iter().any(|l| segment.crosses(&l.bounds())) {
                    continue;
                }
                Some(segment)
            } else {
                None
            };
            if let Some(segment) = leader {
                drawing.shapes.push(Shape::Line { segment, colour: MUTED, dashed: false });
            }
            for (i, line) in lines.iter().enumerate() {
                let baseline = top + i as f64 * PITCH + 12.0;
                let label = Label::new(left, baseline, *line, Anchor::Start);
                drawing.text(if i == 0 { Label { bold: true, ..label } } else { Label { colour: MUTED, ..label } });
            }
            return true;
        }
    }
    false
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::output::svg::checks;
    use proptest::prelude::*;

    /// A falling curve of `count` points from `(x0, y0)`: area shrinks as the delay ratio allowed
    /// grows, as a trade-off curve does (common practice, no source); the shape is for layout only.
    fn curve(x0: f64, y0: f64, count: usize) -> Vec<PlotPoint> {
        (0..count)
            .map(|i| {
                let t = i as f64 / (count.max(2) - 1) as f64;
                PlotPoint { x: x0 * (1.0 + 1.5 * t), y: y0 * (0.25 + 0.75 / (1.0 + 6.0 * t)) }
            })
            .collect()
    }

    fn tradeoff(points: Vec<PlotPoint>, marked: Vec<MarkedPoint>) -> TradeoffPlot {
        TradeoffPlot {
            title: "NAND3: least total W/L against the delay ratio".to_string(),
            notes: vec!["fan-out 4, mobility ratio 2".to_string()],
            x_title: "delay ratio: worst Elmore delay / reference inverter's (unit-less)".to_string(),
            y_title: "total W/L (unit-NMOS widths)".to_string(),
            curve: "least total W/L that meets the delay ratio".to_string(),
            points,
            marked,
        }
    }

    fn ends_marked(points: &[PlotPoint]) -> Vec<MarkedPoint> {
        let (first, last) = (points[0], points[points.len() - 1]);
        vec![
            MarkedPoint { x: first.x, y: first.y, label: "longest-path rule".to_string() },
            MarkedPoint { x: last.x, y: last.y, label: "min-area".to_string() },
        ]
    }

    fn problems(plot: &TradeoffPlot) -> Vec<String> {
        let layout = PlotLayout::new(plot).expect("a well-formed plot");
        let mut out = checks::layout_problems(&layout.labels(), &layout.wires(), layout.shapes(), layout.size());
        let mut bytes = Vec::new();
        layout.write_svg(&mut bytes).expect("writing to memory succeeds");
        match checks::svg_texts(&String::from_utf8(bytes).expect("UTF-8")) {
            Err(problems) => out.extend(problems),
            Ok(texts) => {
                let mut wanted = vec![&plot.title, &plot.x_title, &plot.y_title, &plot.curve];
                wanted.extend(&plot.notes);
                for text in wanted {
                    if !texts.contains(text) {
                        out.push(format!("no <text> says `{text}`"));
                    }
                }
                // Each marked point is named beside it or in the list under the plot.
                for mark in &plot.marked {
                    if !texts.iter().any(|t| t == &mark.label || t.contains(&format!(": {} (", mark.label))) {
                        out.push(format!("the marked point `{}` is not named", mark.label));
                    }
                }
            }
        }
        out
    }

    #[test]
    fn a_tradeoff_curve_lays_out_cleanly_with_its_points_named() {
        let points = curve(1.0, 30.0, 12);
        let plot = tradeoff(points.clone(), ends_marked(&points));
        let problems = problems(&plot);
        assert!(problems.is_empty(), "{}", problems.join("\n"));
        let layout = PlotLayout::new(&plot).unwrap();
        // The marked points are named next to them, not in the list: the plot has room.
        let texts: Vec<&str> = layout.labels().iter().map(|l| l.text.as_str()).collect();
        assert!(texts.contains(&"longest-path rule") && texts.contains(&"min-area"));
        // Their values under the names, one decimal finer than the ticks (x steps by 0.2, y by 5).
        assert!(texts.contains(&"1.00, 30.0"), "{texts:?}");
    }

    #[test]
    fn ticks_are_round_and_cover_the_data() {
        for (low, high) in [(1.0, 2.5), (0.93, 1.07), (7.5, 120.0), (0.0, 3e-4), (2.0, 2.0), (-3.0, 41.0), (1e9, 1.2e9)]
        {
            let axis = Axis::new(low, high);
            let magnitude = 10f64.powf(axis.step.log10().floor());
            let mantissa = axis.step / magnitude;
            // Steps of 1, 2 or 5 times a power of ten (common practice, no source).
            assert!([1.0, 2.0, 5.0].iter().any(|m| (mantissa - m).abs() < 1e-9), "{low}..{high}: step {}", axis.step);
            assert!(axis.low <= low && axis.high >= high, "{low}..{high} in {axis:?}");
            assert!((3..=12).contains(&axis.ticks.len()), "{low}..{high}: {axis:?}");
            for tick in &axis.ticks {
                let steps = tick / axis.step;
                assert!((steps - steps.round()).abs() < 1e-6, "{tick} is not a multiple of {}", axis.step);
                let label = axis.label(*tick);
                assert!((label.parse::<f64>().unwrap() - tick).abs() <= axis.step * 1e-6, "{label} for {tick}");
            }
        }
        assert_eq!(Axis::new(1.0, 2.5).label(1.4000000000000001), "1.4");
        assert_eq!(Axis::new(-3.0, 41.0).label(-0.0), "0");
    }

    #[test]
    fn the_y_axis_starts_at_zero_for_areas() {
        let points = curve(1.0, 300.0, 5);
        let layout = PlotLayout::new(&tradeoff(points, Vec::new())).unwrap();
        let ticks: Vec<&str> =
            layout.labels().iter().filter(|l| l.anchor == Anchor::End).map(|l| l.text.as_str()).collect();
        assert_eq!(ticks.first(), Some(&"0"), "{ticks:?}");
    }

    #[test]
    fn crowded_marks_fall_back_to_a_list_without_overlap() {
        let points = curve(1.0, 30.0, 6);
        let at = points[2];
        let marked = (0..6)
            .map(|i| MarkedPoint { x: at.x, y: at.y, label: format!("a long name for marked point number {i}") })
            .collect();
        let plot = tradeoff(points, marked);
        let problems = problems(&plot);
        assert!(problems.is_empty(), "{}", problems.join("\n"));
    }

    #[test]
    fn bad_values_are_refused() {
        let mut plot = tradeoff(Vec::new(), Vec::new());
        assert_eq!(PlotLayout::new(&plot).unwrap_err(), PlotError::Empty);
        plot.points = vec![PlotPoint { x: 1.0, y: f64::NAN }];
        assert_eq!(PlotLayout::new(&plot).unwrap_err(), PlotError::OutOfRange);
        plot.points = vec![PlotPoint { x: f64::INFINITY, y: 1.0 }];
        let mut out = Vec::new();
        assert_eq!(write_plot(&plot, &mut out).unwrap_err().kind(), io::ErrorKind::InvalidInput);
        assert!(out.is_empty());
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(200))]

        /// Falling curves at any scale, with up to four marked points anywhere on them (some on
        /// the same point), lay out with no overlapping labels and no label crossed by a stroke.
        #[test]
        fn random_curves_lay_out_cleanly(
            x0 in 0.01f64..100.0,
            y0 in 0.5f64..1e6,
            count in 1usize..40,
            marks in prop::collection::vec((0usize..40, "[a-z -]{1,24}"), 0..5),
        ) {
            let points = curve(x0, y0, count);
            let marked = marks
                .into_iter()
                .map(|(i, label)| {
                    let p = points[i % points.len()];
                    MarkedPoint { x: p.x, y: p.y, label }
                })
                .collect();
            let problems = problems(&tradeoff(points, marked));
            prop_assert!(problems.is_empty(), "{}", problems.join("\n"));
        }
    }
}
