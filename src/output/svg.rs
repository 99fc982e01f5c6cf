//! Shared pieces of the SVG writers: shapes that know their bounding boxes, a conservative estimate
//! of text width, escaping, and one way to write a finished drawing as plain SVG 1.1 (no scripts,
//! no external references, generic font families, a white background).
//!
//! The writers compute where everything goes before anything is written, so the boxes kept here
//! are what their tests check: no two labels overlap and no label crosses a stroke.

use std::io::{self, Write};

/// Size of ordinary text, in px (the drawing's user units are px at 100%).
pub const FONT_SIZE: f64 = 12.0;

/// Estimated advance of one ASCII character, as a share of the font size. The generic monospace
/// families advance 0.6 em (DejaVu Sans Mono 0.602, Liberation Mono 0.6, Courier 0.6); 0.64 leaves
/// room for a wider substitute.
const ASCII_ADVANCE: f64 = 0.64;

/// Estimated advance of any other character (it may be a full-width one), as a share of the font
/// size.
const WIDE_ADVANCE: f64 = 1.1;

/// Height above the baseline that a label's box covers, as a share of the font size (generic
/// fonts' ascenders reach about 0.93 em).
const ASCENT: f64 = 0.96;

/// Depth below the baseline that a label's box covers, as a share of the font size (descenders
/// reach about 0.24 em).
const DESCENT: f64 = 0.3;

/// Colour of ordinary strokes and text: near black, prints dark.
pub const INK: &str = "#1a1a1a";

/// An axis-aligned box, in px, y growing downwards.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Rect {
    /// Left edge.
    pub left: f64,
    /// Top edge.
    pub top: f64,
    /// Right edge.
    pub right: f64,
    /// Bottom edge.
    pub bottom: f64,
}

impl Rect {
    /// The box spanning two corners, in any order.
    pub fn spanning(x1: f64, y1: f64, x2: f64, y2: f64) -> Rect {
        Rect { left: x1.min(x2), top: y1.min(y2), right: x1.max(x2), bottom: y1.max(y2) }
    }

    /// Width.
    pub fn width(&self) -> f64 {
        self.right - self.left
    }

    /// Height.
    pub fn height(&self) -> f64 {
        self.bottom - self.top
    }

    /// Whether the two boxes share some area (boxes that only touch along an edge do not).
    pub fn overlaps(&self, other: &Rect) -> bool {
        self.left < other.right && other.left < self.right && self.top < other.bottom && other.top < self.bottom
    }

    /// The smallest box holding both.
    pub fn union(&self, other: &Rect) -> Rect {
        Rect {
            left: self.left.min(other.left),
            top: self.top.min(other.top),
            right: self.right.max(other.right),
            bottom: self.bottom.max(other.bottom),
        }
    }

    /// The box grown by `by` on every side.
    pub fn grown(&self, by: f64) -> Rect {
        Rect { left: self.left - by, top: self.top - by, right: self.right + by, bottom: self.bottom + by }
    }

    /// Whether the point lies inside or on the edge.
    pub fn contains(&self, x: f64, y: f64) -> bool {
        self.left <= x && x <= self.right && self.top <= y && y <= self.bottom
    }
}

/// A straight stroke: a wire, an edge of a symbol or of a marker.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Segment {
    /// Start x.
    pub x1: f64,
    /// Start y.
    pub y1: f64,
    /// End x.
    pub x2: f64,
    /// End y.
    pub y2: f64,
    /// Stroke width.
    pub width: f64,
}

impl Segment {
    /// The box the stroke covers, its width included.
    pub fn bounds(&self) -> Rect {
        Rect::spanning(self.x1, self.y1, self.x2, self.y2).grown(self.width / 2.0)
    }

    /// Whether the stroke (its width included) passes through the inside of `rect`: the segment
    /// is clipped against the box grown by half the stroke width (Liang-Barsky), so a diagonal
    /// stroke that only passes near a corner does not count.
    pub fn crosses(&self, rect: &Rect) -> bool {
        let area = rect.grown(self.width / 2.0);
        let (dx, dy) = (self.x2 - self.x1, self.y2 - self.y1);
        if dx == 0.0 && dy == 0.0 {
            return area.left < self.x1 && self.x1 < area.right && area.top < self.y1 && self.y1 < area.bottom;
        }
        let mut enter: f64 = 0.0;
        let mut leave: f64 = 1.0;
        for (p, q) in [
            (-dx, self.x1 - area.left),
            (dx, area.right - self.x1),
            (-dy, self.y1 - area.top),
            (dy, area.bottom - self.y1),
        ] {
            if p == 0.0 {
                // Parallel to this edge: outside (or exactly on it) means no crossing.
                if q <= 0.0 {
                    return false;
                }
            } else {
                let t = q / p;
                if p < 0.0 {
                    enter = enter.max(t);
                } else {
                    leave = leave.min(t);
                }
            }
        }
        // A crossing has some length inside, not just a touch at a corner.
        enter < leave
    }
}

/// Where a label's x is: its start, middle or end.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Anchor {
    /// Text starts at x.
    Start,
    /// Text is centred on x.
    Middle,
    /// Text ends at x.
    End,
}

/// A line of text with the box it covers.
#[derive(Debug, Clone, PartialEq)]
pub struct Label {
    /// Anchor x.
    pub x: f64,
    /// Baseline y.
    pub y: f64,
    /// The text, as given (escaped when written).
    pub text: String,
    /// Font size in px.
    pub size: f64,
    /// Which point of the text x is.
    pub anchor: Anchor,
    /// Bold.
    pub bold: bool,
    /// Italic.
    pub italic: bool,
    /// Fill colour.
    pub colour: &'static str,
}

impl Label {
    /// A label at (`x`, baseline `y`) in the ordinary size, ink colour, upright.
    pub fn new(x: f64, y: f64, text: impl Into<String>, anchor: Anchor) -> Label {
        Label { x, y, text: text.into(), size: FONT_SIZE, anchor, bold: false, italic: false, colour: INK }
    }

    /// The estimated box of the text (conservative: see [`text_width`]).
    pub fn bounds(&self) -> Rect {
        let width = text_width(&self.text, self.size);
        let left = match self.anchor {
            Anchor::Start => self.x,
            Anchor::Middle => self.x - width / 2.0,
            Anchor::End => self.x - width,
        };
        Rect { left, top: self.y - ASCENT * self.size, right: left + width, bottom: self.y + DESCENT * self.size }
    }
}

/// Estimated width of `text` at `size` px: at least what a generic monospace family needs, so
/// boxes never come out smaller than the drawn text.
pub fn text_width(text: &str, size: f64) -> f64 {
    text.chars().map(|c| if c.is_ascii() { ASCII_ADVANCE } else { WIDE_ADVANCE }).sum::<f64>() * size
}

/// Height of one line of text at `size` px: the box height of a label.
pub fn line_height(size: f64) -> f64 {
    (ASCENT + DESCENT) * size
}

/// One thing drawn.
#[derive(Debug, Clone, PartialEq)]
pub enum Shape {
    /// A straight stroke.
    Line {
        /// Where it runs and how wide.
        segment: Segment,
        /// Stroke colour.
        colour: &'static str,
        /// Dashed rather than solid.
        dashed: bool,
    },
    /// A circle.
    Circle {
        /// Centre x.
        cx: f64,
        /// Centre y.
        cy: f64,
        /// Radius.
        r: f64,
        /// Fill colour (`None` for white: a hollow circle).
        fill: Option<&'static str>,
        /// Stroke colour.
        colour: &'static str,
        /// Stroke width.
        width: f64,
    },
    /// A closed polygon.
    Polygon {
        /// Its corners.
        points: Vec<(f64, f64)>,
        /// Fill colour (`None` for white).
        fill: Option<&'static str>,
        /// Stroke colour.
        colour: &'static str,
        /// Stroke width.
        width: f64,
    },
    /// A connected run of strokes (a plotted curve).
    Polyline {
        /// Its points, in order.
        points: Vec<(f64, f64)>,
        /// Stroke colour.
        colour: &'static str,
        /// Stroke width.
        width: f64,
    },
    /// A line of text.
    Text(Label),
}

impl Shape {
    /// The box the shape covers.
    pub fn bounds(&self) -> Rect {
        match self {
            Shape::Line { segment, .. } => segment.bounds(),
            Shape::Circle { cx, cy, r, width, .. } => Rect::spanning(cx - r, cy - r, cx + r, cy + r).grown(width / 2.0),
            Shape::Polygon { points, width, .. } | Shape::Polyline { points, width, .. } => points
                .iter()
                .map(|&(x, y)| Rect::spanning(x, y, x, y))
                .reduce(|a, b| a.union(&b))
                .unwrap_or(Rect::spanning(0.0, 0.0, 0.0, 0.0))
                .grown(width / 2.0),
            Shape::Text(label) => label.bounds(),
        }
    }

    /// The strokes of the shape as segments: a line itself, a polygon's or polyline's edges, the
    /// four sides of the box around a circle (conservative).
    pub fn strokes(&self) -> Vec<Segment> {
        let edges = |points: &[(f64, f64)], width: f64, closed: bool| {
            let mut out: Vec<Segment> = points
                .windows(2)
                .map(|pair| Segment { x1: pair[0].0, y1: pair[0].1, x2: pair[1].0, y2: pair[1].1, width })
                .collect();
            if let (true, Some(first), Some(last)) = (closed && points.len() > 2, points.first(), points.last()) {
                out.push(Segment { x1: last.0, y1: last.1, x2: first.0, y2: first.1, width });
            }
            out
        };
        match self {
            Shape::Line { segment, .. } => vec![*segment],
            Shape::Circle { cx, cy, r, width, .. } => {
                let (l, t, r_, b) = (cx - r, cy - r, cx + r, cy + r);
                edges(&[(l, t), (r_, t), (r_, b), (l, b)], *width, true)
            }
            Shape::Polygon { points, width, .. } => edges(points, *width, true),
            Shape::Polyline { points, width, .. } => edges(points, *width, false),
            Shape::Text(_) => Vec::new(),
        }
    }
}

/// Shapes in drawing order (later ones on top).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Drawing {
    /// Everything drawn.
    pub shapes: Vec<Shape>,
}

impl Drawing {
    /// Add a solid line.
    pub fn line(&mut self, x1: f64, y1: f64, x2: f64, y2: f64, width: f64, colour: &'static str) {
        self.shapes.push(Shape::Line { segment: Segment { x1, y1, x2, y2, width }, colour, dashed: false });
    }

    /// Add a label.
    pub fn text(&mut self, label: Label) {
        self.shapes.push(Shape::Text(label));
    }

    /// The box around everything drawn, if anything is.
    pub fn bounds(&self) -> Option<Rect> {
        self.shapes.iter().map(Shape::bounds).reduce(|a, b| a.union(&b))
    }

    /// Move everything by (`dx`, `dy`).
    pub fn translate(&mut self, dx: f64, dy: f64) {
        let moved = |points: &mut Vec<(f64, f64)>| {
            for point in points {
                point.0 += dx;
                point.1 += dy;
            }
        };
        for shape in &mut self.shapes {
            match shape {
                Shape::Line { segment, .. } => {
                    segment.x1 += dx;
                    segment.x2 += dx;
                    segment.y1 += dy;
                    segment.y2 += dy;
                }
                Shape::Circle { cx, cy, .. } => {
                    *cx += dx;
                    *cy += dy;
                }
                Shape::Polygon { points, .. } | Shape::Polyline { points, .. } => moved(points),
                Shape::Text(label) => {
                    label.x += dx;
                    label.y += dy;
                }
            }
        }
    }

    /// Every label, in drawing order.
    pub fn labels(&self) -> Vec<&Label> {
        self.shapes
            .iter()
            .filter_map(|shape| match shape {
                Shape::Text(label) => Some(label),
                _ => None,
            })
            .collect()
    }

    /// Every stroke, as segments (see [`Shape::strokes`]).
    pub fn strokes(&self) -> Vec<Segment> {
        self.shapes.iter().flat_map(Shape::strokes).collect()
    }

    /// Write the drawing as a standalone SVG 1.1 document of `width` x `height` px, with `title`
    /// as its `<title>`: a white background, then the shapes in order.
    pub fn write_svg(&self, width: f64, height: f64, title: &str, out: &mut dyn Write) -> io::Result<()> {
        let (w, h) = (number(width), number(height));
        writeln!(out, r#"<?xml version="1.0" encoding="UTF-8"?>"#)?;
        writeln!(
            out,
            r#"<svg xmlns="http://www.w3.org/2000/svg" version="1.1" width="{w}" height="{h}" viewBox="0 0 {w} {h}" font-family="monospace" font-size="{}">"#,
            number(FONT_SIZE)
        )?;
        writeln!(out, "<title>{}</title>", escape(title))?;
        writeln!(out, r##"<rect x="0" y="0" width="{w}" height="{h}" fill="#ffffff"/>"##)?;
        for shape in &self.shapes {
            write_shape(shape, out)?;
        }
        writeln!(out, "</svg>")
    }
}

fn write_shape(shape: &Shape, out: &mut dyn Write) -> io::Result<()> {
    let points = |points: &[(f64, f64)]| {
        points.iter().map(|&(x, y)| format!("{},{}", number(x), number(y))).collect::<Vec<_>>().join(" ")
    };
    match shape {
        Shape::Line { segment: s, colour, dashed } => writeln!(
            out,
            r#"<line x1="{}" y1="{}" x2="{}" y2="{}" stroke="{colour}" stroke-width="{}" stroke-linecap="round"{}/>"#,
            number(s.x1),
            number(s.y1),
            number(s.x2),
            number(s.y2),
            number(s.width),
            if *dashed { r#" stroke-dasharray="5,4""# } else { "" }
        ),
        Shape::Circle { cx, cy, r, fill, colour, width } => writeln!(
            out,
            r#"<circle cx="{}" cy="{}" r="{}" fill="{}" stroke="{colour}" stroke-width="{}"/>"#,
            number(*cx),
            number(*cy),
            number(*r),
            fill.unwrap_or("#ffffff"),
            number(*width)
        ),
        Shape::Polygon { points: p, fill, colour, width } => writeln!(
            out,
            r#"<polygon points="{}" fill="{}" stroke="{colour}" stroke-width="{}" stroke-linejoin="round"/>"#,
            points(p),
            fill.unwrap_or("#ffffff"),
            number(*width)
        ),
        Shape::Polyline { points: p, colour, width } => writeln!(
            out,
            r#"<polyline points="{}" fill="none" stroke="{colour}" stroke-width="{}" stroke-linejoin="round"/>"#,
            points(p),
            number(*width)
        ),
        Shape::Text(label) => {
            let anchor = match label.anchor {
                Anchor::Start => "",
                Anchor::Middle => r#" text-anchor="middle""#,
                Anchor::End => r#" text-anchor="end""#,
            };
            let size =
                if label.size == FONT_SIZE { String::new() } else { format!(r#" font-size="{}""#, number(label.size)) };
            writeln!(
                out,
                r#"<text x="{}" y="{}"{anchor}{size}{}{} fill="{}">{}</text>"#,
                number(label.x),
                number(label.y),
                if label.bold { r#" font-weight="bold""# } else { "" },
                if label.italic { r#" font-style="italic""# } else { "" },
                label.colour,
                escape(&label.text)
            )
        }
    }
}

/// A coordinate for the file: two decimals at most, trailing zeros dropped.
fn number(value: f64) -> String {
    let value = if value.is_finite() { value } else { 0.0 };
    let text = format!("{value:.2}");
    let text = text.trim_end_matches('0').trim_end_matches('.');
    if text == "-0" { "0".to_string() } else { text.to_string() }
}

/// Text made safe for XML character data and attribute values: markup characters escaped, and
/// characters XML 1.0 does not allow (most control characters) replaced by U+FFFD.
pub fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            '\t' | '\n' | '\r' => out.push(' '),
            c if (c as u32) < 0x20 || c == '\u{FFFE}' || c == '\u{FFFF}' => out.push('\u{FFFD}'),
            c => out.push(c),
        }
    }
    out
}

/// Checks both writers' tests make of a finished picture.
#[cfg(test)]
pub(crate) mod checks {
    use super::{Label, Segment, Shape};

    /// What a reader would find wrong in a layout: overlapping labels, a label crossed by a
    /// stroke, a shape outside the `width` x `height` picture.
    pub fn layout_problems(labels: &[&Label], wires: &[Segment], shapes: &[Shape], size: (f64, f64)) -> Vec<String> {
        let mut out = Vec::new();
        for (i, a) in labels.iter().enumerate() {
            let bounds = a.bounds();
            for b in &labels[i + 1..] {
                if bounds.overlaps(&b.bounds()) {
                    out.push(format!("labels `{}` and `{}` overlap", a.text, b.text));
                }
            }
            for wire in wires {
                if wire.crosses(&bounds) {
                    out.push(format!("label `{}` is crossed by {wire:?}", a.text));
                }
            }
        }
        let (width, height) = size;
        for shape in shapes {
            let b = shape.bounds();
            if b.left < 0.0 || b.top < 0.0 || b.right > width || b.bottom > height {
                out.push(format!("{shape:?} is outside the {width} x {height} picture"));
            }
        }
        out
    }

    /// What is wrong with an SVG text: not well-formed XML (parsed by roxmltree), a root without
    /// size and viewBox, an active or external element or reference; else its `<text>` contents.
    pub fn svg_texts(svg: &str) -> Result<Vec<String>, Vec<String>> {
        let document = roxmltree::Document::parse(svg).map_err(|e| vec![format!("not well-formed XML: {e}")])?;
        let mut out = Vec::new();
        let root = document.root_element();
        if !root.has_tag_name("svg") || ["width", "height", "viewBox"].iter().any(|a| root.attribute(*a).is_none()) {
            out.push("the root is not an <svg> with width, height and viewBox".to_string());
        }
        for node in document.descendants().filter(|n| n.is_element()) {
            let name = node.tag_name().name();
            if ["script", "image", "use", "foreignObject", "a", "style", "iframe"].contains(&name) {
                out.push(format!("<{name}> element"));
            }
            for attribute in node.attributes() {
                let value = attribute.value().to_ascii_lowercase();
                if ["href", "src"].contains(&attribute.name())
                    || attribute.name().starts_with("on")
                    || value.contains("url(")
                    || value.contains("javascript:")
                {
                    out.push(format!("attribute {}=\"{}\"", attribute.name(), attribute.value()));
                }
            }
        }
        if !out.is_empty() {
            return Err(out);
        }
        Ok(document
            .descendants()
            .filter(|n| n.has_tag_name("text"))
            .map(|n| n.text().unwrap_or_default().to_string())
            .collect())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn boxes_that_touch_do_not_overlap() {
        let a = Rect::spanning(0.0, 0.0, 10.0, 10.0);
        assert!(!a.overlaps(&Rect::spanning(10.0, 0.0, 20.0, 10.0)));
        assert!(a.overlaps(&Rect::spanning(9.0, 9.0, 20.0, 20.0)));
        assert!(!a.overlaps(&Rect::spanning(0.0, 11.0, 10.0, 20.0)));
    }

    #[test]
    fn strokes_cross_boxes_only_through_them() {
        let rect = Rect::spanning(0.0, 0.0, 10.0, 10.0);
        let through = Segment { x1: -5.0, y1: 5.0, x2: 15.0, y2: 5.0, width: 1.0 };
        let above = Segment { x1: -5.0, y1: -2.0, x2: 15.0, y2: -2.0, width: 1.0 };
        let grazing = Segment { x1: -5.0, y1: -0.4, x2: 15.0, y2: -0.4, width: 1.0 };
        let diagonal_past_corner = Segment { x1: 8.0, y1: -8.0, x2: 20.0, y2: 4.0, width: 1.0 };
        let diagonal_through = Segment { x1: -1.0, y1: -1.0, x2: 11.0, y2: 11.0, width: 1.0 };
        let inside = Segment { x1: 2.0, y1: 2.0, x2: 3.0, y2: 3.0, width: 1.0 };
        assert!(through.crosses(&rect));
        assert!(!above.crosses(&rect));
        assert!(grazing.crosses(&rect), "half the stroke width counts");
        assert!(!diagonal_past_corner.crosses(&rect));
        assert!(diagonal_through.crosses(&rect));
        assert!(inside.crosses(&rect));
    }

    #[test]
    fn text_boxes_cover_generic_monospace_text() {
        // Generic monospace fonts advance 0.6 em per character (common practice, no source): the
        // estimate must not be smaller.
        let label = Label::new(100.0, 50.0, "MN12", Anchor::End);
        let bounds = label.bounds();
        assert!(bounds.width() >= 4.0 * 0.6 * FONT_SIZE);
        assert_eq!(bounds.right, 100.0);
        assert!(bounds.top < 50.0 - 0.9 * FONT_SIZE && bounds.bottom > 50.0 + 0.2 * FONT_SIZE);
    }

    #[test]
    fn escaping_keeps_xml_well_formed() {
        assert_eq!(escape("a<b & \"c\"\u{1}"), "a&lt;b &amp; &quot;c&quot;\u{FFFD}");
    }
}
