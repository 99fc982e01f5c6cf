//! The elmore method's trade-off curve as a table, CSV, JSON or an SVG plot (through
//! [`super::plot`]): the least total W/L against the delay target, fastest first, with the
//! longest-path and min-area points beside it.

use std::io::{self, Write};

use serde::Serialize;

use super::number;
use super::plot::{MarkedPoint, PlotPoint, TradeoffPlot, write_plot};
use super::table::write_columns;
use crate::sizing::tradeoff::Tradeoff;

/// One cell's trade-off, with what it was computed under.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TradeoffReport {
    /// The cell's name.
    pub gate: String,
    /// Its expression.
    pub expression: String,
    /// The load, as a phrase (`fan-out 4`, `20 C`).
    pub load: String,
    /// The diffusion ratio.
    pub diffusion_ratio: f64,
    /// The curve.
    #[serde(flatten)]
    pub tradeoff: Tradeoff,
}

/// The x axis's meaning, with its unit, written wherever the ratio is.
pub const RATIO_MEANING: &str = "delay ratio: worst Elmore delay / the reference inverter's at the same load";

/// The table.
pub fn write_table(report: &TradeoffReport, out: &mut dyn Write) -> io::Result<()> {
    let t = &report.tradeoff;
    writeln!(out, "{}: {}", report.gate, report.expression)?;
    writeln!(
        out,
        "  elmore method, least total W/L against the delay target; load {}, diffusion ratio {}",
        report.load,
        number(report.diffusion_ratio)
    )?;
    writeln!(out, "  {RATIO_MEANING} (1 = as fast as the reference); total W/L in unit-NMOS W/L")?;
    writeln!(out, "  cap {} W/L (10 x longest-path's total)", number(t.cap_w_over_l))?;
    writeln!(out, "\ncurve (fastest within the cap first)")?;
    let mut rows = vec![["delay target", "total W/L", "worst delay ratio (every vector)"].map(String::from).to_vec()];
    for point in &t.points {
        rows.push(vec![number(point.delay_target), number(point.total_w_over_l), number(point.worst_delay_ratio)]);
    }
    write_columns(&rows, out)?;
    writeln!(out, "\nsizing rules on the same stack order")?;
    let mut rows = vec![["method", "total W/L", "worst delay ratio"].map(String::from).to_vec()];
    for method in &t.methods {
        rows.push(vec![
            method.method.name().to_string(),
            number(method.total_w_over_l),
            number(method.worst_delay_ratio),
        ]);
    }
    write_columns(&rows, out)
}

/// The CSV: one row per point, the curve's then the rules'.
pub fn write_csv(report: &TradeoffReport, out: &mut dyn Write) -> io::Result<()> {
    let mut writer = csv::Writer::from_writer(out);
    let write = |writer: &mut csv::Writer<&mut dyn Write>| -> csv::Result<()> {
        writer.write_record(["gate", "point", "delay_target", "total_w_over_l", "worst_delay_ratio"])?;
        for point in &report.tradeoff.points {
            writer.write_record([
                report.gate.as_str(),
                "curve",
                &number(point.delay_target),
                &number(point.total_w_over_l),
                &number(point.worst_delay_ratio),
            ])?;
        }
        for method in &report.tradeoff.methods {
            writer.write_record([
                report.gate.as_str(),
                method.method.name(),
                "",
                &number(method.total_w_over_l),
                &number(method.worst_delay_ratio),
            ])?;
        }
        writer.flush()?;
        Ok(())
    };
    write(&mut writer).map_err(super::csv::into_io)
}

/// The JSON object.
pub fn write_json(report: &TradeoffReport, out: &mut dyn Write) -> io::Result<()> {
    super::json::write_pretty(report, out)?;
    writeln!(out)
}

/// The plot: the curve, the fastest point within the cap, longest-path and min-area marked.
pub fn plot(report: &TradeoffReport) -> TradeoffPlot {
    let t = &report.tradeoff;
    let mut marked: Vec<MarkedPoint> = Vec::new();
    // Rules that land on the same point (NAND, NOR, AOI22 ...: both rules agree) share one mark.
    for method in &t.methods {
        let name = match method.method.name() {
            "longest-path" => "longest-path rule",
            name => name,
        };
        let same = |m: &MarkedPoint| {
            (m.x - method.worst_delay_ratio).abs() <= 1e-9 * m.x.abs().max(1.0)
                && (m.y - method.total_w_over_l).abs() <= 1e-9 * m.y.abs().max(1.0)
        };
        match marked.iter_mut().find(|m| same(m)) {
            Some(mark) => mark.label = format!("{} = {name}", mark.label),
            None => {
                marked.push(MarkedPoint { x: method.worst_delay_ratio, y: method.total_w_over_l, label: name.into() })
            }
        }
    }
    if let Some(default) = t.points.last().filter(|_| t.points.len() > 1) {
        marked.push(MarkedPoint {
            x: default.delay_target,
            y: default.total_w_over_l,
            label: "elmore, default target".to_string(),
        });
    }
    if let Some(fastest) = t.points.first() {
        marked.push(MarkedPoint {
            x: fastest.delay_target,
            y: fastest.total_w_over_l,
            label: "fastest within the cap".to_string(),
        });
    }
    TradeoffPlot {
        title: format!("{}: least total W/L for each delay target", report.gate),
        notes: vec![
            format!("{}; load {}, diffusion ratio {}", report.expression, report.load, number(report.diffusion_ratio)),
            format!(
                "cap {} W/L (10 x longest-path's total); the default target is longest-path's ratio",
                number(t.cap_w_over_l)
            ),
            "Elmore delays, first-order estimates; sign-off needs the foundry's models".to_string(),
        ],
        x_title: format!("{RATIO_MEANING} (unit-less)"),
        y_title: "total W/L (unit-NMOS W/L)".to_string(),
        curve: "elmore method: least total W/L meeting the target".to_string(),
        points: t.points.iter().map(|p| PlotPoint { x: p.delay_target, y: p.total_w_over_l }).collect(),
        marked,
    }
}

/// The SVG plot.
pub fn write_svg(report: &TradeoffReport, out: &mut dyn Write) -> io::Result<()> {
    write_plot(&plot(report), out)
}
