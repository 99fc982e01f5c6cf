//! ngspice settles cells of several stages to the right rail: the written SPICE netlist of `and2`,
//! `xor2`, `mux2` and `maj3` (`size X --format spice`), one copy per input vector with its inputs
//! held at the rails, one DC operating point, every output within 5 % of the rail the function
//! names. Level-1 models with the built-in process's values (`widthwise process`).

use crate::support::{measurements, ngspice_available, note, run_ngspice, widthwise};

/// A value of the built-in process file (`key = value`).
fn process_value(process: &str, key: &str) -> f64 {
    let line = process.lines().find(|l| l.starts_with(&format!("{key} ="))).unwrap();
    line.split('=').nth(1).unwrap().trim().parse().unwrap()
}

/// The cells and their functions (pin values in pin order), as the issue defines them (common
/// practice, no source): AND, exclusive OR, the multiplexer (a when s = 0, b when s = 1), the
/// majority.
fn function(cell: &str, bits: &[bool]) -> bool {
    match cell {
        "and2" => bits[0] && bits[1],
        "xor2" => bits[0] != bits[1],
        "mux2" => {
            if bits[2] {
                bits[1]
            } else {
                bits[0]
            }
        }
        "maj3" => bits.iter().filter(|&&b| b).count() >= 2,
        _ => unreachable!("{cell}"),
    }
}

#[test]
fn cells_of_several_stages_settle_to_the_right_rail() {
    if !ngspice_available("cells_of_several_stages_settle_to_the_right_rail") {
        return;
    }
    let process = widthwise(&["process"]);
    let supply = process_value(&process, "supply_v");
    let models = format!(
        ".model nmos NMOS (LEVEL=1 VTO={} KP={}u)\n.model pmos PMOS (LEVEL=1 VTO=-{} KP={}u)\n",
        process_value(&process, "nmos_threshold_v"),
        process_value(&process, "nmos_kp_ua_per_v2"),
        process_value(&process, "pmos_threshold_v"),
        process_value(&process, "pmos_kp_ua_per_v2"),
    );
    let mut checked = 0;
    let mut farthest = 0.0f64;
    for cell in ["and2", "xor2", "mux2", "maj3"] {
        for drive in ["1", "3"] {
            let netlist = widthwise(&["size", cell, "--format", "spice", "--drive", drive]);
            let header: Vec<&str> =
                netlist.lines().find(|l| l.starts_with(".subckt")).unwrap().split_whitespace().collect();
            let name = header[1];
            let pins = &header[2..header.len() - 3];
            assert_eq!(pins, if cell == "mux2" { &["a", "b", "s"][..] } else { &["a", "b", "c"][..pins.len()] });
            let vectors = 1u32 << pins.len();
            let mut deck =
                format!("* {cell}: one copy per input vector, DC\n{models}{netlist}\nvdd vdd 0 DC {supply}\n");
            for vector in 0..vectors {
                let mut nodes = Vec::new();
                for (k, _) in pins.iter().enumerate() {
                    let level = if vector >> k & 1 == 1 { supply } else { 0.0 };
                    deck.push_str(&format!("v{vector}_{k} in{vector}_{k} 0 DC {level}\n"));
                    nodes.push(format!("in{vector}_{k}"));
                }
                deck.push_str(&format!("x{vector} {} out{vector} vdd 0 {name}\n", nodes.join(" ")));
            }
            deck.push_str(".op\n.control\nop\n");
            for vector in 0..vectors {
                deck.push_str(&format!("let out{vector} = v(out{vector})\nprint out{vector}\n"));
            }
            deck.push_str(".endc\n.end\n");
            let values = measurements(&run_ngspice(&deck));
            for vector in 0..vectors {
                let bits: Vec<bool> = (0..pins.len()).map(|k| vector >> k & 1 == 1).collect();
                let rail = if function(cell, &bits) { supply } else { 0.0 };
                let volts =
                    *values.get(&format!("out{vector}")).unwrap_or_else(|| panic!("{cell}: out{vector} printed"));
                assert!(
                    (volts - rail).abs() <= 0.05 * supply,
                    "{cell} at drive {drive}, pins {pins:?} = {bits:?}: output {volts} V, expected {rail} V"
                );
                checked += 1;
                farthest = farthest.max((volts - rail).abs());
            }
        }
    }
    note(&format!(
        "ngspice DC: and2, xor2, mux2, maj3 at drives 1 and 3, {checked} vectors at the right rail, farthest \
         {farthest:.2e} V from it"
    ));
}
