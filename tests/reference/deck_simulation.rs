//! ngspice confirms the sizing: every worst-case transition in a deck from `widthwise deck`,
//! simulated with the deck's level-1 models, against the reference inverter.
//!
//! Why it must hold (docs/model.md section 8): in the Shichman-Hodges model (SPICE level 1) with
//! gamma = 0 and lambda = 0, devices in series with a common gate voltage combine exactly like
//! resistors, `(L/W)_eq = sum L_i / W_i`, in the linear and saturated regions alike; a single
//! conducting path after a step input is then one equivalent transistor, and with only a load
//! capacitor its delay is proportional to its `L/W`. So a transition through a path of resistance
//! `r` takes `r / target` times the reference inverter's delay: exactly 1 on every network's
//! worst path, and on every path of a min-area gate.
//!
//! The process is the built-in one with a 0.001 nm grid, so snapping moves no resistance by more
//! than about 1e-6 and cannot spoil the 1 % (the built-in 5 nm grid alone could move a path by up
//! to 0.5 %). Inputs step in a thousandth of the expected delay. One ngspice run per gate and
//! method, two at a time.

use std::sync::Mutex;
use std::sync::atomic::{AtomicUsize, Ordering};

use widthwise::cell::SizedCell;
use widthwise::output::deck::{edge, gate_measure, reference_measure, transitions};
use widthwise::process::Process;
use widthwise::size_text;
use widthwise::sizing::{Method, Plan};

use crate::support::{measurements, ngspice_available, note, process_with, run_ngspice, summary_ratios, widthwise};

/// The built-in process with a grid too fine to matter and the given body-effect coefficient.
fn fine_process(body_effect: f64) -> String {
    process_with(&[("grid_nm", "0.001".into()), ("body_effect_sqrt_v", format!("{body_effect:?}"))])
}

/// A small deterministic generator (xorshift64*), so the random gates are the same on every run.
struct Generator(u64);

impl Generator {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545_f491_4f6c_dd1d)
    }

    fn below(&mut self, bound: usize) -> usize {
        (self.next() % bound as u64) as usize
    }
}

/// A random single-stage gate over `count` distinct inputs: groups of 2 or 3 alternating between
/// AND and OR, so every gate mixes series and parallel.
fn random_gate(generator: &mut Generator, count: usize) -> String {
    fn build(generator: &mut Generator, names: &[String], and: bool) -> String {
        if names.len() == 1 {
            return names[0].clone();
        }
        let groups = 2 + generator.below(names.len().min(3) - 1);
        let mut cuts: Vec<usize> = Vec::new();
        while cuts.len() < groups - 1 {
            let cut = 1 + generator.below(names.len() - 1);
            if !cuts.contains(&cut) {
                cuts.push(cut);
            }
        }
        cuts.sort_unstable();
        cuts.push(names.len());
        let mut start = 0;
        let mut members = Vec::new();
        for cut in cuts {
            members.push(build(generator, &names[start..cut], !and));
            start = cut;
        }
        format!("({})", members.join(if and { " & " } else { " | " }))
    }
    let names: Vec<String> = (0..count).map(|i| ((b'a' + i as u8) as char).to_string()).collect();
    let and = generator.below(2) == 0;
    format!("!{}", build(generator, &names, and))
}

/// The gates checked: the trade's named gates and three random complex ones from a fixed seed.
fn gates() -> Vec<String> {
    let mut generator = Generator(0x5eed_0fc0_ffee);
    let mut gates: Vec<String> = ["nand2", "nand3", "nor3", "aoi21", "oai22"].map(String::from).to_vec();
    for count in [4, 5, 6] {
        gates.push(random_gate(&mut generator, count));
    }
    gates
}

/// One transition's outcome.
struct Outcome {
    /// `input edge`.
    what: String,
    /// Simulated gate delay / reference delay of the same edge.
    ratio: f64,
    /// Drawn path resistance / target.
    predicted: f64,
    /// What the deck's ngspice summary printed for the ratio.
    summary: Option<f64>,
}

/// Size `text`, write its deck with `widthwise deck`, simulate it, and pair every transition's
/// measured ratio with the predicted one.
fn simulate(text: &str, method: Method, process_path: &str, process: &Process, extra: &[&str]) -> Vec<Outcome> {
    let mut args = vec!["deck", text, "--method", method.name(), "--process", process_path, "--summary"];
    args.extend_from_slice(extra);
    let deck = widthwise(&args);
    let output = run_ngspice(&deck);
    let measured = measurements(&output);
    let summary = summary_ratios(&output);
    let plan =
        Plan { process: std::sync::Arc::new(process.clone()), ..Plan::new(method, process.mobility_ratio, 1.0, None) };
    let gate: SizedCell = size_text(text, &plan).expect("the gate sizes");
    let found = |name: &str| -> f64 {
        *measured.get(name).unwrap_or_else(|| panic!("{text} ({}): no measurement {name} in\n{output}", method.name()))
    };
    transitions(&gate, process.load_ff)
        .expect("the deck's transitions")
        .into_iter()
        .map(|transition| {
            let input = &gate.logic.inputs[transition.input];
            let what = format!("{input} {}", edge(transition.kind));
            let ratio = found(&gate_measure(input, transition.kind)) / found(&reference_measure(transition.kind));
            Outcome {
                predicted: transition.drawn_resistance / gate.plan.target(transition.kind),
                summary: summary.get(&what).copied(),
                what,
                ratio,
            }
        })
        .collect()
}

/// Run `simulate` for every gate and both methods, two ngspice runs at a time.
fn simulate_all(process_text: &str, extra: &[&str]) -> Vec<(String, Method, Vec<Outcome>)> {
    let directory = tempfile::tempdir().unwrap();
    let path = directory.path().join("process.toml");
    std::fs::write(&path, process_text).unwrap();
    let path = path.to_str().unwrap().to_string();
    let process = Process::from_toml(process_text).expect("the test process is valid");
    let jobs: Vec<(String, Method)> = gates()
        .into_iter()
        .flat_map(|gate| [Method::LongestPath, Method::MIN_AREA].map(|method| (gate.clone(), method)))
        .collect();
    let next = AtomicUsize::new(0);
    let results = Mutex::new(Vec::new());
    std::thread::scope(|scope| {
        for _ in 0..2 {
            scope.spawn(|| {
                while let Some((gate, method)) = jobs.get(next.fetch_add(1, Ordering::SeqCst)) {
                    let outcomes = simulate(gate, *method, &path, &process, extra);
                    results.lock().unwrap().push((gate.clone(), *method, outcomes));
                }
            });
        }
    });
    let mut results = results.into_inner().unwrap();
    results.sort_by(|a, b| (&a.0, a.1.name()).cmp(&(&b.0, b.1.name())));
    results
}

/// Every ratio (with `--nocapture`), and per gate and method the range on each edge (always shown).
fn report(label: &str, results: &[(String, Method, Vec<Outcome>)]) {
    eprintln!("{label}: simulated gate delay / reference inverter delay, per input and output edge");
    for (gate, method, outcomes) in results {
        let cells: Vec<String> =
            outcomes.iter().map(|o| format!("{} {:.4} (predicted {:.4})", o.what, o.ratio, o.predicted)).collect();
        eprintln!("  {gate} [{}]: {}", method.name(), cells.join(", "));
    }
    note(&format!("{label}: gate delay / reference delay, lowest..highest over the inputs"));
    for (gate, method, outcomes) in results {
        let range = |edge: &str| {
            let ratios = outcomes.iter().filter(|o| o.what.ends_with(edge)).map(|o| o.ratio);
            let (low, high) = ratios.fold((f64::INFINITY, 0.0f64), |(l, h), r| (l.min(r), h.max(r)));
            format!("{edge} {low:.4}..{high:.4}")
        };
        note(&format!("  {gate} [{}]: {}, {}", method.name(), range("fall"), range("rise")));
    }
}

#[test]
fn worst_case_delays_match_the_reference_inverter() {
    if !ngspice_available("worst_case_delays_match_the_reference_inverter") {
        return;
    }
    for gate in &gates()[5..] {
        note(&format!("random gate (fixed seed): {gate}"));
    }
    let results = simulate_all(&fine_process(0.0), &[]);
    report("gamma = 0", &results);
    for (gate, method, outcomes) in &results {
        let context = format!("{gate} [{}]", method.name());
        assert!(!outcomes.is_empty(), "{context}: no transitions");
        for outcome in outcomes {
            // Shichman-Hodges, gamma = 0, lambda = 0: the delay scales with the path's L/W
            // (docs/model.md section 8; ngspice-39 level 1 via `ngspice -b`).
            assert!(
                (outcome.ratio / outcome.predicted - 1.0).abs() < 0.01,
                "{context} {}: ratio {} but the path predicts {}",
                outcome.what,
                outcome.ratio,
                outcome.predicted
            );
            // min-area puts every path exactly at the target (docs/model.md section 5).
            if *method == Method::MIN_AREA {
                assert!((outcome.predicted - 1.0).abs() < 1e-5, "{context} {}", outcome.what);
            }
            let summary = outcome.summary.unwrap_or_else(|| panic!("{context} {}: no summary line", outcome.what));
            assert!((summary / outcome.ratio - 1.0).abs() < 1e-4, "{context} {}: summary {summary}", outcome.what);
        }
        // Each network's worst case, whatever the method, drives like the reference (within 1 %).
        for edge in ["fall", "rise"] {
            let worst = outcomes.iter().filter(|o| o.what.ends_with(edge)).map(|o| o.ratio).fold(0.0, f64::max);
            assert!((worst - 1.0).abs() < 0.01, "{context}: worst {edge} ratio {worst}");
        }
    }
}

#[test]
fn body_effect_ratios_are_reported() {
    if !ngspice_available("body_effect_ratios_are_reported") {
        return;
    }
    // With body effect (GAMMA = 0.4 sqrt(V)) a stacked device's threshold rises with its source
    // voltage, so stacks come out slower than the equal-resistance model says; the size of the gap
    // is the figure of interest, reported here. The reference inverter's sources sit on the rails,
    // so body effect can only slow the gate against it: every ratio is at least the one without body
    // effect (common practice, no source), and stays sane.
    let results = simulate_all(&fine_process(0.4), &[]);
    let plain = simulate_all(&fine_process(0.0), &[]);
    report("gamma = 0.4", &results);
    let mut slower = 0;
    for ((gate, method, outcomes), (_, _, without)) in results.iter().zip(&plain) {
        for (outcome, base) in outcomes.iter().zip(without) {
            assert_eq!(outcome.what, base.what);
            assert!(
                (0.5..3.0).contains(&outcome.ratio) && outcome.ratio >= base.ratio * (1.0 - 1e-3),
                "{gate} [{}] {}: ratio {} with body effect, {} without",
                method.name(),
                outcome.what,
                outcome.ratio,
                base.ratio
            );
            slower += usize::from(outcome.ratio > base.ratio * 1.01);
        }
    }
    // Stacks exist in every gate here, so some transitions are measurably slower.
    assert!(slower > 0);
}

#[test]
fn diffusion_capacitors_slow_every_transition() {
    if !ngspice_available("diffusion_capacitors_slow_every_transition") {
        return;
    }
    // Added capacitance only slows an RC discharge (common practice, no source): with the deck's
    // diffusion capacitors every gate delay is longer than without them.
    let text = fine_process(0.0);
    let directory = tempfile::tempdir().unwrap();
    let path = directory.path().join("process.toml");
    std::fs::write(&path, &text).unwrap();
    let path = path.to_str().unwrap();
    let delays = |extra: &[&str]| {
        let mut args = vec!["deck", "nand3", "--process", path];
        args.extend_from_slice(extra);
        measurements(&run_ngspice(&widthwise(&args)))
    };
    let plain = delays(&[]);
    let loaded = delays(&["--diffusion-capacitance"]);
    assert_eq!(plain.len(), 8, "{plain:?}");
    let mut cells = Vec::new();
    for (name, &delay) in &plain {
        let with = loaded[name];
        assert!(with > delay, "{name}: {with} with diffusion, {delay} without");
        cells.push(format!("{name} x{:.3}", with / delay));
    }
    note(&format!("nand3 with diffusion capacitance, delay over the plain deck's: {}", cells.join(", ")));
    let ratios: Vec<String> = ["a", "b", "c"]
        .iter()
        .map(|input| format!("{input} fall {:.4}", loaded[&format!("tpd_{input}_fall_gate")] / loaded["tpd_fall_ref"]))
        .collect();
    note(&format!("nand3 with diffusion capacitance, gate / reference: {}", ratios.join(", ")));
}
