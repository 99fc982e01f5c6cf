//! Calibration in ngspice, measured: a few cells (NAND2, NOR2, AOI21) calibrated on the process's
//! level-1 models and on the demo short-channel card (`examples/demo130.lib`, 30 fF, 30 ps ramps),
//! several times each, printing the median simulator runs and seconds per calibrated cell (the
//! reference inverter's balancing included, as `size --calibrate` does it). Run with
//! `cargo bench --bench calibration`; it skips, saying so, where ngspice is missing.
//!
//! Each figure is a median over rounds (one calibration is seconds of simulator runs, so a best of
//! many short rounds, as the throughput bench takes, does not apply).

#![forbid(unsafe_code)]

use std::path::Path;
use std::sync::Arc;
use std::time::Instant;

use widthwise::calibrate::{self, BenchLoad, Setting};
use widthwise::commands::simulate::{self, Simulation};
use widthwise::ngspice;
use widthwise::output::deck::Models;
use widthwise::process::Process;
use widthwise::sizing::{Method, Plan};

/// Cells calibrated.
const CELLS: [&str; 3] = ["nand2", "nor2", "aoi21"];
/// Calibrations per cell and model set.
const ROUNDS: usize = 3;

fn median(values: &mut [f64]) -> f64 {
    values.sort_by(f64::total_cmp);
    values[values.len() / 2]
}

fn simulation(models: Models, load_ff: f64, slew_s: Option<f64>) -> Simulation {
    Simulation {
        models: String::new(),
        load: String::new(),
        library: None,
        options: calibrate::Options {
            setting: Setting { models, load: BenchLoad::Femtofarads(load_ff), slew_s },
            tolerance: calibrate::DEFAULT_TOLERANCE_PERCENT / 100.0,
            run_budget: calibrate::DEFAULT_RUN_BUDGET,
            area_cap: calibrate::DEFAULT_AREA_CAP,
            simulator: ngspice::Options::default(),
        },
    }
}

fn measure(what: &str, process: &Arc<Process>, simulation: &Simulation) {
    let (mut all_runs, mut all_seconds) = (Vec::new(), Vec::new());
    for cell in CELLS {
        let plan =
            Plan { process: process.clone(), ..Plan::new(Method::LongestPath, process.mobility_ratio, 1.0, None) };
        let sized = widthwise::size_text(cell, &plan).expect("the cell sizes");
        let (mut runs, mut seconds) = (Vec::new(), Vec::new());
        for _ in 0..ROUNDS {
            let started = Instant::now();
            let calibrated = simulate::calibrate_cell(&sized, simulation).expect("the cell calibrates");
            seconds.push(started.elapsed().as_secs_f64());
            runs.push(calibrated.runs as f64);
        }
        println!(
            "  {what:<28} {cell:<6} median {:>2} runs, {:.2} s per cell (of {ROUNDS}: {:.2} to {:.2} s)",
            median(&mut runs),
            median(&mut seconds),
            seconds[0],
            seconds[ROUNDS - 1]
        );
        all_runs.extend(runs);
        all_seconds.extend(seconds);
    }
    println!(
        "  {what:<28} all    median {:>2} runs, {:.2} s per cell",
        median(&mut all_runs),
        median(&mut all_seconds)
    );
}

fn main() {
    if let Err(error) = ngspice::check_installed(&ngspice::Options::default()) {
        println!("calibration bench skipped: {error}");
        return;
    }
    println!("calibration in ngspice, {ROUNDS} calibrations per cell, one at a time");
    let level1 = Arc::new(Process::default());
    let load_ff = level1.load_ff;
    measure(&format!("level 1, {load_ff} fF, steps"), &level1, &simulation(Models::Process, load_ff, None));
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples");
    let text = std::fs::read_to_string(root.join("demo130-process.toml")).expect("the demo process reads");
    let demo = Arc::new(Process::from_toml(&text).expect("the demo process is valid"));
    let library = root.join("demo130.lib").to_str().expect("a UTF-8 path").to_string();
    let models = Models::library(library, Some("typical".into()), demo.nmos_model.clone(), demo.pmos_model.clone())
        .expect("the demo library is named");
    measure("demo card, 30 fF, 30 ps", &demo, &simulation(models, 30.0, Some(30e-12)));
}
