//! The delays `deck --run` measured, per transition beside the reference inverter's: a table, CSV
//! (one row per transition) or JSON. Times in ps, loads in fF, every number by [`crate::number`].

use std::io::{self, Write};

use serde::Serialize;

use crate::measure::Measured;
use crate::number::format as number;

/// Picoseconds from seconds.
fn ps(seconds: f64) -> f64 {
    seconds * 1e12
}

/// The measured delays as an aligned table with a heading.
pub fn write_table(measured: &Measured, out: &mut dyn Write) -> io::Result<()> {
    writeln!(out, "{}: delays simulated by {}", measured.cell, measured.simulator)?;
    writeln!(out, "models: {}", measured.models)?;
    let slew = match measured.slew_s {
        Some(slew) => format!("inputs ramp rail to rail in {} ps", number(ps(slew))),
        None => "inputs step".to_string(),
    };
    writeln!(
        out,
        "reference inverter: fall {} ps, rise {} ps at {} fF; {slew}{}",
        number(ps(measured.reference_s[0])),
        number(ps(measured.reference_s[1])),
        number(measured.reference_load_ff),
        if measured.calibrated { "; time window from a calibration run" } else { "" }
    )?;
    if measured.delays.iter().any(|d| d.stages.is_some()) {
        return write_stages_table(measured, out);
    }
    let header = ["transition", "input", "output", "held", "load_fF", "delay_ps", "reference_ps", "ratio"];
    let rows: Vec<Vec<String>> = measured
        .delays
        .iter()
        .map(|d| {
            vec![
                d.tag.clone(),
                format!("{} {}", d.input, d.input_edge),
                d.output_edge.to_string(),
                if d.held.is_empty() { "-".to_string() } else { d.held.clone() },
                number(d.load_ff),
                number(ps(d.delay_s)),
                number(ps(d.reference_s)),
                number(d.delay_s / d.reference_s),
            ]
        })
        .collect();
    super::table::write_headed(&header, &rows, out)
}

/// The table of a cell of several stages: per transition the cell's delay beside its Elmore
/// delay and its logical-effort estimate, then the output stage's delay beside the reference
/// inverter's.
fn write_stages_table(measured: &Measured, out: &mut dyn Write) -> io::Result<()> {
    writeln!(
        out,
        "cell delay: pin to output, against the logical-effort estimate sum(g h + p); output stage: from the net it \
         switches on, against the reference inverter"
    )?;
    let header = [
        "transition",
        "input",
        "output",
        "held",
        "load_fF",
        "delay_ps",
        "elmore_ps",
        "estimate_ps",
        "delay/estimate",
        "stage_ps",
        "reference_ps",
        "stage/reference",
    ];
    let rows: Vec<Vec<String>> = measured
        .delays
        .iter()
        .map(|d| {
            let (stage, elmore, estimate) =
                d.stages.as_ref().map_or((f64::NAN, f64::NAN, f64::NAN), |s| (s.stage_s, s.elmore_s, s.estimate_s));
            vec![
                d.tag.clone(),
                format!("{} {}", d.input, d.input_edge),
                d.output_edge.to_string(),
                if d.held.is_empty() { "-".to_string() } else { d.held.clone() },
                number(d.load_ff),
                number(ps(d.delay_s)),
                number(ps(elmore)),
                number(ps(estimate)),
                number(d.delay_s / estimate),
                number(ps(stage)),
                number(ps(d.reference_s)),
                number(stage / d.reference_s),
            ]
        })
        .collect();
    super::table::write_headed(&header, &rows, out)
}

/// One CSV row per transition, with a header; a cell of several stages adds its estimates and
/// its output stage's delay after the one-stage columns (the ratio is the cell's delay over the
/// reference's).
pub fn write_csv(measured: &Measured, out: &mut dyn Write) -> io::Result<()> {
    let several = measured.delays.iter().any(|d| d.stages.is_some());
    let mut writer = csv::Writer::from_writer(out);
    let fail = |error: csv::Error| io::Error::other(error.to_string());
    let mut header = vec![
        "cell",
        "transition",
        "input",
        "input_edge",
        "output_edge",
        "held",
        "load_ff",
        "delay_ps",
        "reference_delay_ps",
        "ratio",
    ];
    if several {
        header.extend([
            "elmore_ps",
            "estimate_ps",
            "estimate_tau",
            "delay_over_estimate",
            "output_stage_delay_ps",
            "output_stage_ratio",
        ]);
    }
    writer.write_record(&header).map_err(fail)?;
    for d in &measured.delays {
        let mut row = vec![
            measured.cell.clone(),
            d.tag.clone(),
            d.input.clone(),
            d.input_edge.to_string(),
            d.output_edge.to_string(),
            d.held.clone(),
            number(d.load_ff),
            number(ps(d.delay_s)),
            number(ps(d.reference_s)),
            number(d.delay_s / d.reference_s),
        ];
        if let Some(stages) = &d.stages {
            row.extend([
                number(ps(stages.elmore_s)),
                number(ps(stages.estimate_s)),
                number(stages.estimate_tau),
                number(d.delay_s / stages.estimate_s),
                number(ps(stages.stage_s)),
                number(stages.stage_s / d.reference_s),
            ]);
        }
        writer.write_record(&row).map_err(fail)?;
    }
    writer.flush()
}

/// A transition through a cell of several stages, in JSON.
#[derive(Serialize)]
struct JsonStages {
    elmore_ps: f64,
    estimate_ps: f64,
    estimate_tau: f64,
    delay_over_estimate: f64,
    output_stage_delay_ps: f64,
    output_stage_ratio: f64,
}

#[derive(Serialize)]
struct JsonDelay<'a> {
    transition: &'a str,
    input: &'a str,
    input_edge: &'a str,
    output_edge: &'a str,
    held: &'a str,
    load_ff: f64,
    delay_ps: f64,
    reference_delay_ps: f64,
    ratio: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    stages: Option<JsonStages>,
}

#[derive(Serialize)]
struct JsonMeasured<'a> {
    cell: &'a str,
    simulator: &'a str,
    models: &'a str,
    reference_fall_ps: f64,
    reference_rise_ps: f64,
    reference_load_ff: f64,
    slew_ps: Option<f64>,
    calibrated: bool,
    delays: Vec<JsonDelay<'a>>,
}

/// One JSON object.
pub fn write_json(measured: &Measured, out: &mut dyn Write) -> io::Result<()> {
    let value = JsonMeasured {
        cell: &measured.cell,
        simulator: &measured.simulator,
        models: &measured.models,
        reference_fall_ps: ps(measured.reference_s[0]),
        reference_rise_ps: ps(measured.reference_s[1]),
        reference_load_ff: measured.reference_load_ff,
        slew_ps: measured.slew_s.map(ps),
        calibrated: measured.calibrated,
        delays: measured
            .delays
            .iter()
            .map(|d| JsonDelay {
                transition: &d.tag,
                input: &d.input,
                input_edge: d.input_edge,
                output_edge: d.output_edge,
                held: &d.held,
                load_ff: d.load_ff,
                delay_ps: ps(d.delay_s),
                reference_delay_ps: ps(d.reference_s),
                ratio: d.delay_s / d.reference_s,
                stages: d.stages.as_ref().map(|s| JsonStages {
                    elmore_ps: ps(s.elmore_s),
                    estimate_ps: ps(s.estimate_s),
                    estimate_tau: s.estimate_tau,
                    delay_over_estimate: d.delay_s / s.estimate_s,
                    output_stage_delay_ps: ps(s.stage_s),
                    output_stage_ratio: s.stage_s / d.reference_s,
                }),
            })
            .collect(),
    };
    let mut serializer = serde_json::Serializer::with_formatter(
        &mut *out,
        super::json::Numbers(serde_json::ser::PrettyFormatter::with_indent(b"  ")),
    );
    value.serialize(&mut serializer).map_err(io::Error::other)?;
    writeln!(out)
}
