//! Verification reports: a readable block per gate, one CSV row per gate, or JSON.

use std::io::{self, Write};

use super::table::write_columns;
use super::{Format, number};
use crate::verify::{Check, Coverage, Verification};

/// Columns of the CSV, in order.
pub const VERIFY_COLUMNS: [&str; 16] = [
    "gate",
    "expression",
    "inputs",
    "transistors",
    "coverage",
    "seed",
    "vectors_checked",
    "vectors_planned",
    "passed",
    "failed_check",
    "failing_vector",
    "pull_down_path_bound_r",
    "pull_down_exact_worst_r",
    "pull_up_path_bound_r",
    "pull_up_exact_worst_r",
    "exact_below_bound",
];

/// Write verifications in `format` (SPICE has no form for them; the caller refuses it).
pub fn write_verifications(results: &[Verification], format: Format, out: &mut dyn Write) -> io::Result<()> {
    match format {
        Format::Table | Format::Spice => write_table(results, out),
        Format::Csv => write_csv(results, out),
        Format::Json => {
            match results {
                [one] => super::json::write_pretty(one, out)?,
                _ => super::json::write_pretty(results, out)?,
            }
            writeln!(out)
        }
    }
}

/// How the vectors were chosen, in words.
pub fn coverage_text(result: &Verification) -> String {
    match result.coverage {
        Coverage::Exhaustive => format!(
            "exhaustive: all {} input vectors of {} inputs (exhaustive up to {} inputs)",
            result.vectors_planned, result.input_count, result.exhaustive_limit
        ),
        Coverage::Random { seed } => format!(
            "not exhaustive: {} inputs is past the limit of {}, so {} pseudo-random vectors instead \
             (seed {seed:#x}; vector 0 all zeros, vector 1 all ones)",
            result.input_count, result.exhaustive_limit, result.vectors_planned
        ),
    }
}

fn write_table(results: &[Verification], out: &mut dyn Write) -> io::Result<()> {
    for (index, result) in results.iter().enumerate() {
        if index > 0 {
            writeln!(out)?;
        }
        writeln!(out, "{}: {} = {}", result.name, result.output, result.expression)?;
        writeln!(out, "  {}; {} transistors simulated", coverage_text(result), result.transistor_count)?;
        writeln!(out, "\nchecks, on the netlist (NMOS on at 1, PMOS on at 0)")?;
        let mut rows = vec![vec!["check".to_string(), "result".to_string()]];
        for check in Check::ALL {
            let cell = match &result.failure {
                None => format!("holds for all {} vectors", result.vectors_checked),
                Some(failure) if failure.check == check => match &failure.stage {
                    Some(stage) => format!("FAILS at vector {}: {}, in stage {stage}", failure.index, failure.vector),
                    None => format!("FAILS at vector {}: {}", failure.index, failure.vector),
                },
                Some(failure) => format!("holds for the {} vectors before it", failure.index),
            };
            rows.push(vec![check.describe().to_string(), cell]);
        }
        write_columns(&rows, out)?;
        if let Some(failure) = &result.failure {
            let state = |on: bool| if on { "conducts" } else { "off" };
            writeln!(
                out,
                "  at {}: pull-down {}, pull-up {}, the expression gives {}",
                failure.vector,
                state(failure.pull_down_conducts),
                state(failure.pull_up_conducts),
                u8::from(failure.expected_output)
            )?;
        }
        writeln!(out, "\nworst case (resistance in units of R, the unit NMOS)")?;
        let mut rows = vec![["network", "path bound", "exact worst", "at", "how"].map(String::from).to_vec()];
        for network in &result.networks {
            rows.push(vec![
                network.network.name().to_string(),
                number(network.path_bound),
                network.exact_worst.map_or_else(|| "not computed".to_string(), number),
                network.exact_worst_vector.as_ref().map_or_else(|| "-".to_string(), ToString::to_string),
                network.note.clone(),
            ]);
        }
        write_columns(&rows, out)?;
        for network in result.networks.iter().filter(|n| n.below_bound) {
            writeln!(
                out,
                "  {}: repeated inputs keep the weakest path from conducting alone; the exact worst {} is below the \
                 path bound {}",
                network.network.name(),
                number(network.exact_worst.unwrap_or(network.path_bound)),
                number(network.path_bound)
            )?;
        }
        let verdict = if result.passed { "verified" } else { "FAILED" };
        writeln!(out, "\n{verdict}")?;
    }
    Ok(())
}

fn write_csv(results: &[Verification], out: &mut dyn Write) -> io::Result<()> {
    let mut writer = csv::Writer::from_writer(out);
    writer.write_record(VERIFY_COLUMNS)?;
    for result in results {
        let (coverage, seed) = match result.coverage {
            Coverage::Exhaustive => ("exhaustive", String::new()),
            Coverage::Random { seed } => ("random", seed.to_string()),
        };
        let mut record = vec![
            result.name.clone(),
            result.expression.clone(),
            result.input_count.to_string(),
            result.transistor_count.to_string(),
            coverage.to_string(),
            seed,
            result.vectors_checked.to_string(),
            result.vectors_planned.to_string(),
            result.passed.to_string(),
            result.failure.as_ref().map(|f| f.check.name().to_string()).unwrap_or_default(),
            result.failure.as_ref().map(|f| f.vector.to_string()).unwrap_or_default(),
        ];
        for network in &result.networks {
            record.push(number(network.path_bound));
            record.push(network.exact_worst.map(number).unwrap_or_default());
        }
        record.push(result.networks.iter().any(|n| n.below_bound).to_string());
        writer.write_record(&record)?;
    }
    writer.flush()
}
