//! `size --calibrate` checked in testbenches written here, not by widthwise: ngspice from Debian's
//! packages simulates the calibrated cell (its transistors as `size --calibrate --format json`
//! reports them) beside the reference inverter the calibration matched, on every input, both
//! edges and every side-input combination that lets the input switch the output (enumerated here
//! from the gate's function, written out in each check), and the worst transition on each output
//! edge is compared with the reference's.
//!
//! One test per gate and model set, so the harness runs them two at a time; each is a calibration
//! of a few ngspice runs and one testbench run.

use std::fmt::Write as _;
use std::path::Path;

use crate::support::{measurements, ngspice_available, note, process_with, run_ngspice, widthwise};

/// A gate under test: its shorthand, its inputs in order and its function.
struct Gate {
    shorthand: &'static str,
    inputs: &'static [&'static str],
    function: fn(&[bool]) -> bool,
}

const NAND2: Gate = Gate { shorthand: "nand2", inputs: &["a", "b"], function: |v| !(v[0] && v[1]) };
const NAND3: Gate = Gate { shorthand: "nand3", inputs: &["a", "b", "c"], function: |v| !(v[0] && v[1] && v[2]) };
const NOR2: Gate = Gate { shorthand: "nor2", inputs: &["a", "b"], function: |v| !(v[0] || v[1]) };
const NOR3: Gate = Gate { shorthand: "nor3", inputs: &["a", "b", "c"], function: |v| !(v[0] || v[1] || v[2]) };
const AOI21: Gate = Gate { shorthand: "aoi21", inputs: &["a", "b", "c"], function: |v| !(v[0] && v[1] || v[2]) };
const OAI22: Gate =
    Gate { shorthand: "oai22", inputs: &["a", "b", "c", "d"], function: |v| !((v[0] || v[1]) && (v[2] || v[3])) };

/// How the testbench models the devices and drives the inputs.
struct Bench<'a> {
    /// The `.model` lines or the `.lib` line.
    models: String,
    /// The NMOS and PMOS model names.
    names: [&'a str; 2],
    /// The load, fF.
    load_ff: f64,
    /// The input ramp, s.
    slew_s: f64,
    /// The supply, V.
    supply: f64,
    /// The unit width, um (the reference inverter's W = W/L x it).
    unit_um: f64,
    /// The channel length, um.
    length_um: f64,
    /// Diffusion lengths, um, contacted and shared between two series devices, when given.
    diffusion_um: Option<(f64, f64)>,
}

/// The diffusion of one terminal, per finger (docs/model.md section 11): a node two series
/// devices share alone (not the output, not a rail) is one uncontacted region `shared` long, as wide
/// as the wider device, half to each; any other terminal a contacted region of its own.
fn terminal(bench: &Bench, width_um: f64, fingers: f64, shared: Option<f64>) -> (f64, f64) {
    let (contacted, between) = bench.diffusion_um.unwrap_or_default();
    match shared {
        Some(widest) => (widest * between / 2.0 / fingers, (widest + between) / fingers),
        None => (width_um * contacted, 2.0 * (width_um + contacted)),
    }
}

fn geometry(bench: &Bench, width_um: f64, fingers: f64, drain: Option<f64>, source: Option<f64>) -> String {
    if bench.diffusion_um.is_none() {
        return String::new();
    }
    let (ad, pd) = terminal(bench, width_um, fingers, drain);
    let (r#as, ps) = terminal(bench, width_um, fingers, source);
    format!(" AD={ad}p AS={as}p PD={pd}u PS={ps}u", r#as = r#as)
}

/// Simulate the calibrated cell `json` and its reference inverter; the worst ratio to the
/// reference on the output's fall and rise.
fn worst_ratios(gate: &Gate, json: &serde_json::Value, bench: &Bench) -> [f64; 2] {
    let calibration = &json["calibration"];
    let mut deck =
        format!("calibrated {}\n{}\n.subckt g {} y vdd vss\n", gate.shorthand, bench.models, gate.inputs.join(" "));
    let transistors = json["transistors"].as_array().unwrap();
    let node = |t: &serde_json::Value, key: &str| t[key].as_str().unwrap().to_string();
    // A node that exactly two terminals touch, neither rail nor output: the wider device's width.
    let shared = |name: &str| -> Option<f64> {
        if ["y", "vdd", "vss"].contains(&name) {
            return None;
        }
        let widths: Vec<f64> = transistors
            .iter()
            .flat_map(|t| [(node(t, "drain"), t), (node(t, "source"), t)])
            .filter(|(n, _)| n == name)
            .map(|(_, t)| t["drawn_width_um"].as_f64().unwrap())
            .collect();
        (widths.len() == 2).then(|| widths[0].max(widths[1]))
    };
    for t in transistors {
        let nmos = t["type"] == "nmos";
        let width = t["finger_width_um"].as_f64().unwrap();
        let fingers = t["fingers"].as_f64().unwrap();
        writeln!(
            deck,
            "{} {} {} {} {} {} W={width}u L={}u m={}{}",
            t["name"].as_str().unwrap(),
            t["drain"].as_str().unwrap(),
            t["input"].as_str().unwrap(),
            t["source"].as_str().unwrap(),
            if nmos { "vss" } else { "vdd" },
            bench.names[usize::from(!nmos)],
            t["length_um"].as_f64().unwrap(),
            t["fingers"].as_u64().unwrap(),
            geometry(bench, width, fingers, shared(&node(t, "drain")), shared(&node(t, "source")))
        )
        .unwrap();
    }
    deck.push_str(".ends g\n");
    let reference = &calibration["reference"];
    let wn = reference["nmos_w_over_l"].as_f64().unwrap() * bench.unit_um;
    let wp = reference["pmos_w_over_l"].as_f64().unwrap() * bench.unit_um;
    writeln!(
        deck,
        ".subckt inv a y vdd vss\nMN y a vss vss {} W={wn}u L={l}u{}\nMP y a vdd vdd {} W={wp}u L={l}u{}\n.ends inv",
        bench.names[0],
        geometry(bench, wn, 1.0, None, None),
        bench.names[1],
        geometry(bench, wp, 1.0, None, None),
        l = bench.length_um
    )
    .unwrap();
    let (v, start, slew) = (bench.supply, 100e-12, bench.slew_s);
    writeln!(deck, "vdd vdd 0 {v}").unwrap();
    let ramp = |rising: bool| {
        let (from, to) = if rising { (0.0, v) } else { (v, 0.0) };
        format!("PWL(0 {from} {start} {from} {} {to})", start + slew)
    };
    // The reference: input rising (output falling) and falling.
    let mut copies: Vec<(String, usize)> = Vec::new();
    for (slot, rising) in [(0, true), (1, false)] {
        writeln!(
            deck,
            "vr{slot} r{slot}i 0 {}\nxr{slot} r{slot}i r{slot}o vdd 0 inv\ncr{slot} r{slot}o 0 {}f",
            ramp(rising),
            bench.load_ff
        )
        .unwrap();
        let (a, b) = if rising { ("RISE", "FALL") } else { ("FALL", "RISE") };
        writeln!(
            deck,
            ".meas tran ref{slot} TRIG v(r{slot}i) VAL={} {a}=1 TARG v(r{slot}o) VAL={} {b}=1",
            v / 2.0,
            v / 2.0
        )
        .unwrap();
    }
    // Every input, both edges, every side combination that lets it switch the output.
    let n = gate.inputs.len();
    for input in 0..n {
        for bits in 0..1u32 << n {
            let values: Vec<bool> = (0..n).map(|i| bits >> i & 1 == 1).collect();
            if values[input] {
                continue;
            }
            let mut high = values.clone();
            high[input] = true;
            if (gate.function)(&values) == (gate.function)(&high) {
                continue;
            }
            for rising in [true, false] {
                let tag = format!("c{}", copies.len());
                let mut nodes = Vec::new();
                for (i, &value) in values.iter().enumerate() {
                    let node = format!("{tag}i{i}");
                    let source = if i == input { ramp(rising) } else { format!("DC {}", if value { v } else { 0.0 }) };
                    writeln!(deck, "v{tag}{i} {node} 0 {source}").unwrap();
                    nodes.push(node);
                }
                writeln!(deck, "x{tag} {} {tag}o vdd 0 g\nc{tag} {tag}o 0 {}f", nodes.join(" "), bench.load_ff)
                    .unwrap();
                // The output falls when the input rises (every gate here is inverting).
                let (a, b) = if rising { ("RISE", "FALL") } else { ("FALL", "RISE") };
                writeln!(
                    deck,
                    ".meas tran {tag} TRIG v({tag}i{input}) VAL={} {a}=1 TARG v({tag}o) VAL={} {b}=1",
                    v / 2.0,
                    v / 2.0
                )
                .unwrap();
                copies.push((tag, usize::from(!rising)));
            }
        }
    }
    writeln!(deck, ".tran 0.5p 3n 0 0.5p\n.end").unwrap();
    let measured = measurements(&run_ngspice(&deck));
    let get = |name: &str| *measured.get(name).unwrap_or_else(|| panic!("{name} not measured in\n{deck}"));
    let reference = [get("ref0"), get("ref1")];
    let mut worst = [0.0f64; 2];
    for (tag, slot) in &copies {
        worst[*slot] = worst[*slot].max(get(tag) / reference[*slot]);
    }
    worst
}

fn calibrated(gate: &Gate, extra: &[&str]) -> serde_json::Value {
    let mut args = vec!["size", gate.shorthand, "--calibrate", "--format", "json"];
    args.extend(extra);
    serde_json::from_str(&widthwise(&args)).unwrap()
}

fn level1_models(process: &serde_json::Value) -> String {
    format!(
        ".model {} NMOS (LEVEL=1 VTO={} KP={}u GAMMA={g} LAMBDA=0)\n.model {} PMOS (LEVEL=1 VTO=-{} KP={}u GAMMA={g} LAMBDA=0)",
        process["nmos_model"].as_str().unwrap(),
        process["nmos_threshold_v"],
        process["nmos_kp_ua_per_v2"],
        process["pmos_model"].as_str().unwrap(),
        process["pmos_threshold_v"],
        process["pmos_kp_ua_per_v2"],
        g = process["body_effect_sqrt_v"]
    )
}

/// With level-1 models and no body effect the first-order sizing is exact (docs/model.md section
/// 8): a calibration to 0.1 % moves no width by more than 0.5 %.
fn level1_exact(gate: &Gate) {
    if !ngspice_available(&format!("calibrate {} level 1", gate.shorthand)) {
        return;
    }
    let json = calibrated(gate, &["--tolerance", "0.1"]);
    for device in json["calibration"]["devices"].as_array().unwrap() {
        let change = device["change_percent"].as_f64().unwrap();
        assert!(change.abs() <= 0.5, "{} {}: {change} %", gate.shorthand, device["name"]);
    }
    // The balanced reference stays balanced at its first-order PMOS (level 1: W/L ratio = mobility ratio).
    let reference = &json["calibration"]["reference"];
    let pmos = reference["pmos_w_over_l"].as_f64().unwrap() / reference["pmos_first_order_w_over_l"].as_f64().unwrap();
    assert!((pmos - 1.0).abs() <= 0.005, "{}: reference PMOS moved {pmos}", gate.shorthand);
}

#[test]
fn level1_without_body_effect_nand3_is_left_as_sized() {
    level1_exact(&NAND3);
}

#[test]
fn level1_without_body_effect_aoi21_is_left_as_sized() {
    level1_exact(&AOI21);
}

/// With body effect (GAMMA 0.4) a stack's upper devices see a raised threshold, so first-order
/// sizes are slow on stacks; calibrated, every worst transition is within 1 % of the reference
/// in the testbench written here.
fn body_effect(gate: &Gate) {
    if !ngspice_available(&format!("calibrate {} body effect", gate.shorthand)) {
        return;
    }
    let directory = tempfile::tempdir().unwrap();
    let path = directory.path().join("gamma.toml");
    std::fs::write(&path, process_with(&[("body_effect_sqrt_v", "0.4".into()), ("grid_nm", "1.0".into())])).unwrap();
    let process = path.to_str().unwrap();
    let json = calibrated(gate, &["--process", process, "--tolerance", "0.5", "--load-ff", "20"]);
    let bench = Bench {
        models: level1_models(&json["process"]),
        names: [json["process"]["nmos_model"].as_str().unwrap(), json["process"]["pmos_model"].as_str().unwrap()],
        load_ff: 20.0,
        slew_s: 1e-12,
        supply: 3.3,
        unit_um: 1.0,
        length_um: 1.0,
        diffusion_um: None,
    };
    let worst = worst_ratios(gate, &json, &bench);
    let before = [
        json["calibration"]["worst_fall_before"].as_f64().unwrap(),
        json["calibration"]["worst_rise_before"].as_f64().unwrap(),
    ];
    note(&format!("calibrate {} gamma 0.4: first-order {before:?}, calibrated {worst:?}", gate.shorthand));
    for ratio in worst {
        assert!((ratio - 1.0).abs() <= 0.01, "{}: {worst:?}", gate.shorthand);
    }
}

#[test]
fn body_effect_nand3_calibrates_within_one_percent() {
    body_effect(&NAND3);
}

#[test]
fn body_effect_oai22_calibrates_within_one_percent() {
    body_effect(&OAI22);
}

/// On the shipped short-channel card at 30 fF with 30 ps ramps, every worst transition of the
/// calibrated gate within 3 % of the calibrated reference inverter, in the testbench written here
/// (diffusion geometry by the rule of docs/model.md section 11 and the process's 0.3 um contacted
/// and 0.2 um shared regions).
fn demo_card(gate: &Gate) {
    if !ngspice_available(&format!("calibrate {} demo card", gate.shorthand)) {
        return;
    }
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples");
    let (process, library) = (root.join("demo130-process.toml"), root.join("demo130.lib"));
    let json = calibrated(
        gate,
        &[
            "--process",
            process.to_str().unwrap(),
            "--models",
            library.to_str().unwrap(),
            "--models-section",
            "typical",
            "--load-ff",
            "30",
            "--slew-ps",
            "30",
        ],
    );
    let bench = Bench {
        models: format!(".lib {} typical", library.display()),
        names: ["demo130_n", "demo130_p"],
        load_ff: 30.0,
        slew_s: 30e-12,
        supply: 1.2,
        unit_um: 0.4,
        length_um: 0.13,
        diffusion_um: Some((0.3, 0.2)),
    };
    let worst = worst_ratios(gate, &json, &bench);
    let c = &json["calibration"];
    note(&format!(
        "calibrate {} on demo130 at 30 fF: first-order fall {} rise {}, calibrated {worst:?} in {} runs",
        gate.shorthand, c["worst_fall_before"], c["worst_rise_before"], c["runs"]
    ));
    for ratio in worst {
        assert!((ratio - 1.0).abs() <= 0.03, "{}: {worst:?}", gate.shorthand);
    }
}

#[test]
fn demo_card_nand2() {
    demo_card(&NAND2);
}

#[test]
fn demo_card_nand3() {
    demo_card(&NAND3);
}

#[test]
fn demo_card_nor2() {
    demo_card(&NOR2);
}

#[test]
fn demo_card_nor3() {
    demo_card(&NOR3);
}

#[test]
fn demo_card_aoi21() {
    demo_card(&AOI21);
}

#[test]
fn demo_card_oai22() {
    demo_card(&OAI22);
}

/// In a cell of several stages only the output stage is calibrated against the reference; the
/// earlier stages keep their stage-effort sizes (docs/model.md sections 9 and 14). With body effect
/// (GAMMA 0.4) the NAND stage of and2 would be slow in its stack, and still keeps its widths.
#[test]
fn a_cell_of_several_stages_calibrates_its_output_stage_only() {
    if !ngspice_available("calibrate and2 body effect") {
        return;
    }
    let directory = tempfile::tempdir().unwrap();
    let path = directory.path().join("gamma.toml");
    std::fs::write(&path, process_with(&[("body_effect_sqrt_v", "0.4".into()), ("grid_nm", "1.0".into())])).unwrap();
    let process = path.to_str().unwrap();
    let and2 = Gate { shorthand: "and2", inputs: &["a", "b"], function: |v| v[0] && v[1] };
    let json = calibrated(&and2, &["--process", process, "--load-ff", "20"]);
    let first_order: serde_json::Value =
        serde_json::from_str(&widthwise(&["size", "and2", "--process", process, "--format", "json"])).unwrap();
    let calibrated_devices: Vec<&str> =
        json["calibration"]["devices"].as_array().unwrap().iter().map(|d| d["name"].as_str().unwrap()).collect();
    assert_eq!(calibrated_devices, ["MN1_y", "MP1_y"]);
    let widths = |cell: &serde_json::Value, stage: &str| -> Vec<f64> {
        cell["transistors"]
            .as_array()
            .unwrap()
            .iter()
            .filter(|t| t["stage"] == stage)
            .map(|t| t["w_over_l"].as_f64().unwrap())
            .collect()
    };
    assert_eq!(widths(&json, "y_n").len(), 4);
    assert_eq!(widths(&json, "y_n"), widths(&first_order, "y_n"));
    let worst = [
        json["calibration"]["worst_fall_after"].as_f64().unwrap(),
        json["calibration"]["worst_rise_after"].as_f64().unwrap(),
    ];
    for ratio in worst {
        assert!((ratio - 1.0).abs() <= 0.01, "and2 output stage: {worst:?}");
    }
}
