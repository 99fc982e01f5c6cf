//! The simulation deck: a self-contained SPICE file that makes a simulator measure every input's
//! worst-case delay against the reference inverter's, so the sizing can be checked outside widthwise.
//!
//! Layout: header comments; models (level 1 from the process, or `.include` of a user library, or
//! `.lib` of one of its sections);
//! the gate's `.subckt` and the reference inverter's (drawn sizes, optional diffusion capacitors);
//! the supply; then one block per transition, each its own copy of the gate (or the reference)
//! with its own sources, load and `.meas`; `.tran`; an optional ngspice `.control` summary.
//! Nothing here runs a simulator (the measure module does, on the text written here).

use std::io::{self, Write};

use crate::cell::SizedCell;
use crate::diagnostic::escaped;
use crate::figures::{CellFigures, node_diffusions};
use crate::network::NetworkKind;
use crate::process::Process;
use crate::timing::transition::WEAKEST_PATH;

use super::number;
use super::spice::{mosfet_line, transistor_line};

mod cell;
pub(crate) mod geometry;
mod library;
mod physics;
mod transitions;

pub use cell::{PinTransition, pin_transitions, stage_measure};
use geometry::Device;
pub use library::device_uses;
pub use physics::{DeckLoad, Window};
use physics::{femtofarads, reference_devices, seconds};
pub use transitions::{Transition, transitions, transitions_under};

/// Where the deck's device models come from.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Models {
    /// Level-1 models written from the process's device values.
    Process,
    /// A user's library, included by path (or one of its sections), with the names of its two
    /// models.
    Library {
        /// The path as written in `.include` or `.lib` (absolute).
        include: String,
        /// The section read (`.lib PATH SECTION`), or `None` for the whole file (`.include PATH`).
        section: Option<String>,
        /// The NMOS model's name.
        nmos: String,
        /// The PMOS model's name.
        pmos: String,
    },
}

impl Models {
    /// A user's library at `include` (an absolute path), or its `section`, with its NMOS and PMOS
    /// models' names: refused when a SPICE `.include` (or `.lib`) line cannot hold the path or the
    /// section, or when the two names are one.
    pub fn library(include: String, section: Option<String>, nmos: String, pmos: String) -> Result<Models, DeckError> {
        if include.chars().any(|c| c == '"' || c.is_control()) {
            return Err(DeckError::UnquotablePath { path: include });
        }
        if let Some(section) = &section {
            // `.lib PATH SECTION` cannot quote: the path takes the stricter rule of a `.lib` word.
            crate::models::check_deck_path(std::path::Path::new(&include)).map_err(DeckError::Unwritable)?;
            crate::models::check_section_name(section).map_err(DeckError::Unwritable)?;
        }
        if nmos.eq_ignore_ascii_case(&pmos) {
            return Err(DeckError::SameModels { name: nmos });
        }
        Ok(Models::Library { include, section, nmos, pmos })
    }
}

/// Why a deck is not written.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DeckError {
    /// A cell of several stages with more pins than its transitions are chosen over.
    #[error(
        "a deck of a cell of several stages chooses each pin's transition over every vector of its pins, for cells \
         of up to {limit} pins; this one has {count}"
    )]
    TooManyPins {
        /// The cell's pins.
        count: usize,
        /// The limit.
        limit: usize,
    },
    /// A model-library path with a character a `.include` line cannot hold.
    #[error(
        "the --models path '{}' holds a double quote or a control character, which a SPICE .include line \
         cannot hold: link or copy the library to a plainer path",
        escaped(path)
    )]
    UnquotablePath {
        /// The absolute path.
        path: String,
    },
    /// A path or section name a `.lib` line cannot hold.
    #[error("{0}")]
    Unwritable(crate::models::Unwritable),
    /// Explicit diffusion capacitors beside a model library's own junctions, not asked for both.
    #[error(
        "--diffusion-capacitance adds a capacitor for every diffusion, which a model library's own junction model \
         charges too (from AS/AD/PS/PD when the process sets diffusion_length_nm, else from its defaults): the \
         deck would count them twice; give --count-diffusion-twice to write both anyway"
    )]
    DoubleDiffusion,
    /// The NMOS and PMOS models have one name (netlists ignore case).
    #[error(
        "the NMOS and PMOS models must differ (netlists ignore case): both are '{name}'; give --nmos-model and \
         --pmos-model"
    )]
    SameModels {
        /// The NMOS model's name.
        name: String,
    },
    /// A load that is no capacitance (a load in C with a process whose gate capacitance is 0).
    #[error(
        "the deck's load comes to {} fF: a deck needs a positive load (a fan-out above 0; with a gate capacitance \
         of 0 per um, give --load-ff)",
        crate::number::format(*load_ff)
    )]
    NoLoad {
        /// The load, fF.
        load_ff: f64,
    },
    /// A gate with more input occurrences than [`MAX_DECK_OCCURRENCES`].
    #[error(
        "a deck holds every transition with a source per input, so it is written for gates of up to {limit} input \
         occurrences per network; this one has {count}"
    )]
    TooLarge {
        /// Input occurrences of the gate.
        count: usize,
        /// The limit.
        limit: usize,
    },
}

/// Refuse a gate too large for a deck ([`MAX_DECK_OCCURRENCES`]).
pub fn check_size(cell: &SizedCell) -> Result<(), DeckError> {
    let pins = cell.logic.inputs.len();
    if !cell.is_single_stage() && pins > crate::timing::MAX_CELL_PINS {
        return Err(DeckError::TooManyPins { count: pins, limit: crate::timing::MAX_CELL_PINS });
    }
    for stage in &cell.stages {
        let count = stage.function.literals.len();
        if count > MAX_DECK_OCCURRENCES {
            return Err(DeckError::TooLarge { count, limit: MAX_DECK_OCCURRENCES });
        }
    }
    Ok(())
}

/// What the deck holds besides the gate and its transitions.
#[derive(Debug, Clone, PartialEq)]
pub struct DeckOptions {
    /// Device models.
    pub models: Models,
    /// Explicit diffusion capacitors on every node (see [`node_diffusion_um`]).
    pub diffusion_capacitance: bool,
    /// An ngspice `.control` block that prints every delay, its reference and their ratio.
    pub summary: bool,
    /// The load on every copy's output.
    pub load: DeckLoad,
    /// How long the inputs take to ramp rail to rail, s (default: a thousandth of the time scale,
    /// a step).
    pub slew_s: Option<f64>,
    /// How the run's time window is chosen.
    pub window: Window,
}

/// Most input occurrences per network a deck is written for: each of the 2n transitions holds a
/// source per input, so the deck grows with the square of the gate (256 occurrences: about 5 MB).
pub const MAX_DECK_OCCURRENCES: usize = 256;

/// The output's edge through a network: `"fall"` (pull-down) or `"rise"` (pull-up).
pub fn edge(kind: NetworkKind) -> &'static str {
    match kind {
        NetworkKind::PullDown => "fall",
        NetworkKind::PullUp => "rise",
    }
}

/// The `.meas` name of the gate's delay for `input` on the output's edge through `kind`.
pub fn gate_measure(input: &str, kind: NetworkKind) -> String {
    format!("tpd_{}_{}_gate", input.to_ascii_lowercase(), edge(kind))
}

/// The `.meas` name of the reference inverter's delay on the output's edge through `kind`.
pub fn reference_measure(kind: NetworkKind) -> String {
    format!("tpd_{}_ref", edge(kind))
}

/// Diffusion width on every node that is not a rail, in um, in order of first appearance, by the
/// rule the delay stage uses too ([`crate::figures::NodeDiffusion`]): each device has a drain and a
/// source diffusion as wide as its drawn width; a node joining exactly two devices (not the output)
/// is one diffusion shared by the two series devices and counts once, as wide as the wider; any
/// other node counts every diffusion on it. `devices` are `(drain, source, drawn width in um)`.
pub fn node_diffusion_um(devices: &[(&str, &str, f64)], output: &str) -> Vec<(String, f64)> {
    let terminals: Vec<(&str, &str)> = devices.iter().map(|&(drain, source, _)| (drain, source)).collect();
    let widths: Vec<f64> = devices.iter().map(|&(_, _, width)| width).collect();
    node_diffusions(&terminals, output).into_iter().map(|(name, rule)| (name, rule.width(&widths))).collect()
}

/// The transitions a deck holds: one stage's, or each pin's through a cell of several stages.
#[derive(Debug, Clone, Copy)]
enum Blocks<'a> {
    Stage(&'a [Transition]),
    Cell(&'a [PinTransition]),
}

/// Write the deck of a cell of one stage.
pub fn write_deck(
    cell: &SizedCell,
    transitions: &[Transition],
    options: &DeckOptions,
    out: &mut dyn Write,
) -> io::Result<()> {
    write(cell, Blocks::Stage(transitions), options, out)
}

/// Write the deck of a cell of several stages: each pin's transition through the cell, measured
/// from the pin and from the net the output stage switches on (docs/model.md section 11).
pub fn write_cell_deck(
    cell: &SizedCell,
    transitions: &[PinTransition],
    options: &DeckOptions,
    out: &mut dyn Write,
) -> io::Result<()> {
    write(cell, Blocks::Cell(transitions), options, out)
}

fn write(cell: &SizedCell, blocks: Blocks<'_>, options: &DeckOptions, out: &mut dyn Write) -> io::Result<()> {
    let gate = &CellFigures::of(cell);
    let process = &gate.process;
    let supply = process.supply_v;
    let half = number(supply / 2.0);
    let library = matches!(options.models, Models::Library { .. });
    let models: [&str; 2] = match &options.models {
        Models::Process => [&process.nmos_model, &process.pmos_model],
        Models::Library { nmos, pmos, .. } => [nmos, pmos],
    };
    let reference = reference_devices(gate);
    let reference_name = format!("{}_reference", gate.name);
    let gate_diffusion = {
        let devices: Vec<(&str, &str, f64)> =
            gate.transistors.iter().map(|t| (t.drain.as_str(), t.source.as_str(), t.drawn_width_um)).collect();
        node_diffusion_um(&devices, &gate.output)
    };
    let reference_diffusion = {
        let [n, p] = reference.map(|(fingers, finger)| fingers as f64 * finger / 1000.0);
        node_diffusion_um(&[("y", "vss", n), ("y", "vdd", p)], "y")
    };

    let gate_devices: Vec<Device<'_>> = gate
        .transistors
        .iter()
        .map(|t| Device { drain: &t.drain, source: &t.source, finger_um: t.finger_width_um, fingers: t.fingers })
        .collect();
    let gate_geometry = geometry::suffixes(&gate_devices, &gate.output, process);
    let reference_geometry = {
        let [(n_fingers, n_finger), (p_fingers, p_finger)] = reference;
        let devices = [
            Device { drain: "y", source: "vss", finger_um: n_finger / 1000.0, fingers: n_fingers },
            Device { drain: "y", source: "vdd", finger_um: p_finger / 1000.0, fingers: p_fingers },
        ];
        geometry::suffixes(&devices, "y", process)
    };
    let gate_loads: Vec<f64> = (0..gate.inputs.len()).map(|input| options.load.gate_ff(gate, input)).collect();
    let reference_load = options.load.reference_ff(gate);

    // The time scale: the reference inverter charging the largest load (plus, when asked, every
    // diffusion of the gate) at its saturation current, the slower edge, or as measured.
    let mut load_ff = match blocks {
        Blocks::Stage(transitions) => transitions.iter().map(|t| gate_loads[t.input]).fold(reference_load, f64::max),
        Blocks::Cell(transitions) => transitions.iter().map(|t| gate_loads[t.pin]).fold(reference_load, f64::max),
    };
    if options.diffusion_capacitance {
        load_ff += gate_diffusion.iter().map(|(_, w)| w).sum::<f64>() * process.diffusion_cap_ff_per_um;
    }
    if let Blocks::Cell(transitions) = blocks {
        // Several stages take longer than the reference: the window grows with the slowest
        // transition's Elmore delay over the reference inverter's.
        load_ff *= transitions.iter().map(|t| t.elmore_ratio).fold(1.0, f64::max);
    }
    let scale = options.window.scale(library, process, reference, load_ff / reference_load, load_ff, options.slew_s);
    let (rise, start, stop, step) = (scale.rise, scale.start, scale.stop, scale.step);

    writeln!(out, "* widthwise simulation deck: {}: {} = {}", gate.name, gate.output, gate.expression)?;
    writeln!(out, "* {}; process: {}", super::sizing_line(gate), process.name)?;
    writeln!(out, "* One copy of the gate per worst-case transition and one of the reference inverter per output")?;
    match options.load {
        DeckLoad::Femtofarads(load_ff) => writeln!(
            out,
            "* edge, each with its own sources and a {} fF load; one transient run measures them all.",
            number(load_ff)
        )?,
        DeckLoad::Fanout(h) => writeln!(
            out,
            "* edge, each with its own sources and a load of {} x the toggling input's capacitance (the \
             reference: {} x its own); one transient run measures them all.",
            number(h),
            number(h)
        )?,
    }
    writeln!(
        out,
        "* Delays: input crossing {half} V to output crossing {half} V; inputs {} {} s.",
        if options.slew_s.is_some() { "ramp rail to rail in" } else { "step in" },
        seconds(rise)
    )?;
    writeln!(out, "* Devices: W = finger width, m = fingers. First-order estimates: sign off with the foundry's")?;
    writeln!(out, "* models, design rules and licensed practice.")?;

    writeln!(out)?;
    match &options.models {
        Models::Process => {
            writeln!(out, "* Level-1 models from the process (LAMBDA=0, no parasitic capacitance).")?;
            for (name, kind, kp, threshold) in [
                (&process.nmos_model, "NMOS", process.nmos_kp_ua_per_v2, process.nmos_threshold_v),
                (&process.pmos_model, "PMOS", process.pmos_kp_ua_per_v2, -process.pmos_threshold_v),
            ] {
                writeln!(
                    out,
                    ".model {name} {kind} (LEVEL=1 VTO={} KP={}u GAMMA={} LAMBDA=0)",
                    number(threshold),
                    number(kp),
                    number(process.body_effect_sqrt_v)
                )?;
            }
        }
        Models::Library { include, section, nmos, pmos } => {
            writeln!(out, "* Models from the user's library: NMOS {nmos}, PMOS {pmos}.")?;
            match section {
                Some(section) => writeln!(out, ".lib {include} {section}")?,
                None => {
                    let quoted = if include.chars().any(char::is_whitespace) {
                        format!("\"{include}\"")
                    } else {
                        include.clone()
                    };
                    writeln!(out, ".include {quoted}")?;
                }
            }
        }
    }

    writeln!(out)?;
    let inputs: Vec<&str> = gate.inputs.iter().map(|i| i.name.as_str()).collect();
    writeln!(out, "* The gate, drawn sizes.")?;
    writeln!(out, ".subckt {} {} {} vdd vss", gate.name, inputs.join(" "), gate.output)?;
    for (index, transistor) in gate.transistors.iter().enumerate() {
        let geometry = gate_geometry.as_ref().map_or("", |lines| lines[index].as_str());
        writeln!(out, "{}{geometry}", transistor_line(transistor, models))?;
    }
    if matches!(blocks, Blocks::Cell(_)) && !library {
        cell::write_gate_capacitance(gate, out)?;
    }
    if options.diffusion_capacitance {
        write_diffusion(&gate_diffusion, process, out)?;
    }
    writeln!(out, ".ends {}", gate.name)?;

    writeln!(out)?;
    writeln!(out, "* The reference inverter at drive {}, drawn sizes.", number(gate.drive))?;
    writeln!(out, ".subckt {reference_name} a y vdd vss")?;
    for (index, (name, nodes, model, (fingers, finger))) in [
        ("MN1", ["y", "a", "vss", "vss"], models[0], reference[0]),
        ("MP1", ["y", "a", "vdd", "vdd"], models[1], reference[1]),
    ]
    .into_iter()
    .enumerate()
    {
        let geometry = reference_geometry.as_ref().map_or("", |lines| lines[index].as_str());
        writeln!(out, "{}{geometry}", mosfet_line(name, nodes, model, finger, process.length_nm, fingers))?;
    }
    if options.diffusion_capacitance {
        write_diffusion(&reference_diffusion, process, out)?;
    }
    writeln!(out, ".ends {reference_name}")?;

    writeln!(out)?;
    writeln!(out, "Vsupply vdd 0 DC {}", number(supply))?;
    let level = |value: bool| if value { number(supply) } else { "0".to_string() };
    let toggle = |from: bool| {
        let (before, after) = (level(from), level(!from));
        format!("PWL(0 {before} {} {before} {} {after})", seconds(start), seconds(start + rise))
    };
    let direction = |rising: bool| if rising { "RISE=1" } else { "FALL=1" };
    let mut measures: Vec<(String, String)> = Vec::new();
    let transitions = match blocks {
        Blocks::Stage(transitions) => transitions,
        Blocks::Cell(transitions) => {
            let writer = cell::Writer { gate, half: &half, toggle: &toggle, level: &level, direction: &direction };
            writer.write_blocks(transitions, &gate_loads, &mut measures, out)?;
            &[]
        }
    };
    if let Blocks::Stage(_) = blocks {
        // An input whose toggle never moves the output on an edge (repeated inputs can make it
        // redundant, e.g. b in !(a & (a | b))) has no transition there: say so rather than leave it out.
        for (input, name) in gate.inputs.iter().enumerate() {
            for kind in NetworkKind::BOTH {
                if !transitions.iter().any(|t| t.input == input && t.kind == kind) {
                    writeln!(
                        out,
                        "* {}: no transition on the output's {} edge: no side inputs let its toggle move the output",
                        name.name,
                        edge(kind)
                    )?;
                }
            }
        }

        for (index, transition) in transitions.iter().enumerate() {
            let tag = format!("t{}", index + 1);
            let name = &gate.inputs[transition.input].name;
            let on_level = transition.vector[transition.input];
            let held: Vec<String> = transition
                .vector
                .iter()
                .enumerate()
                .filter(|&(i, _)| i != transition.input)
                .map(|(i, &v)| format!("{}={}", gate.inputs[i].name, u8::from(v)))
                .collect();
            let devices = transition.conducting.join(" ");
            let how = match (transition.search, transition.one_path) {
                (WEAKEST_PATH, _) => {
                    format!("the weakest path alone, {devices} (side inputs not searched past 16 inputs)")
                }
                (_, true) => format!("path {devices}"),
                (_, false) => format!("conducting {devices}"),
            };
            writeln!(out)?;
            writeln!(
                out,
                "* {tag}: {name} {}, output {}; held {}; {how}: {} R sized, {} R drawn (target {} R)",
                if on_level { "rising" } else { "falling" },
                if transition.kind == NetworkKind::PullDown { "falling" } else { "rising" },
                if held.is_empty() { "nothing".to_string() } else { held.join(" ") },
                number(transition.resistance),
                number(transition.drawn_resistance),
                number(cell.plan.target(transition.kind)),
            )?;
            let mut nodes = Vec::new();
            for (input, &value) in transition.vector.iter().enumerate() {
                let node = format!("{tag}_in{}", input + 1);
                let source = if input == transition.input { toggle(!value) } else { format!("DC {}", level(value)) };
                writeln!(out, "V{tag}_{} {node} 0 {source}", input + 1)?;
                nodes.push(node);
            }
            writeln!(out, "X{tag} {} {tag}_out vdd 0 {}", nodes.join(" "), gate.name)?;
            writeln!(out, "C{tag} {tag}_out 0 {}", femtofarads(gate_loads[transition.input]))?;
            let measure = gate_measure(name, transition.kind);
            let statement = format!(
                "meas tran {measure} TRIG v({tag}_in{}) VAL={half} {} TARG v({tag}_out) VAL={half} {}",
                transition.input + 1,
                direction(on_level),
                direction(!on_level)
            );
            writeln!(out, ".{statement}")?;
            measures.push((measure, statement));
        }
    }

    for kind in NetworkKind::BOTH {
        let tag = format!("r{}", edge(kind));
        let rising_input = kind == NetworkKind::PullDown;
        writeln!(out)?;
        writeln!(
            out,
            "* {tag}: the reference inverter, input {}, output {}",
            if rising_input { "rising" } else { "falling" },
            if rising_input { "falling" } else { "rising" }
        )?;
        writeln!(out, "V{tag} {tag}_in 0 {}", toggle(!rising_input))?;
        writeln!(out, "X{tag} {tag}_in {tag}_out vdd 0 {reference_name}")?;
        writeln!(out, "C{tag} {tag}_out 0 {}", femtofarads(reference_load))?;
        let measure = reference_measure(kind);
        let statement = format!(
            "meas tran {measure} TRIG v({tag}_in) VAL={half} {} TARG v({tag}_out) VAL={half} {}",
            direction(rising_input),
            direction(!rising_input)
        );
        writeln!(out, ".{statement}")?;
        measures.push((measure, statement));
    }

    writeln!(out)?;
    writeln!(out, ".tran {} {} 0 {}", seconds(step), seconds(stop), seconds(step))?;
    if options.summary {
        writeln!(out)?;
        writeln!(out, "* ngspice: repeat the measurements as vectors, print each delay, its reference and the ratio.")?;
        writeln!(out, ".control")?;
        writeln!(out, "run")?;
        for (_, statement) in &measures {
            writeln!(out, "{statement}")?;
        }
        match blocks {
            Blocks::Stage(_) => {
                writeln!(
                    out,
                    "echo \"widthwise summary: transition, gate delay (s), reference delay (s), gate/reference\""
                )?;
                for transition in transitions {
                    let name = &gate.inputs[transition.input].name;
                    let measure = gate_measure(name, transition.kind);
                    let reference = reference_measure(transition.kind);
                    let ratio = format!("ratio_{}_{}", name.to_ascii_lowercase(), edge(transition.kind));
                    writeln!(out, "let {ratio} = {measure} / {reference}")?;
                    writeln!(
                        out,
                        "echo \"delay {} {}: $&{measure} $&{reference} $&{ratio}\"",
                        name.to_ascii_lowercase(),
                        edge(transition.kind)
                    )?;
                }
            }
            Blocks::Cell(transitions) => cell::write_summary(gate, transitions, out)?,
        }
        writeln!(out, "quit")?;
        writeln!(out, ".endc")?;
    }
    writeln!(out, ".end")
}

/// One capacitor to `vss` per node: diffusion_cap_ff_per_um x diffusion width.
fn write_diffusion(nodes: &[(String, f64)], process: &Process, out: &mut dyn Write) -> io::Result<()> {
    for (index, (node, width)) in nodes.iter().enumerate() {
        writeln!(out, "CD{} {node} vss {}", index + 1, femtofarads(width * process.diffusion_cap_ff_per_um))?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shared_series_diffusion_counts_once() {
        // NAND2 pull-down (MN1 y-n1, MN2 n1-vss, 2 um each) and two PMOS on y: n1 is one shared
        // diffusion of 2 um; y has three (common practice, no source).
        let devices = [("y", "n1", 2.0), ("n1", "vss", 2.0), ("y", "vdd", 2.0), ("y", "vdd", 2.0)];
        let nodes = node_diffusion_um(&devices, "y");
        assert_eq!(nodes, vec![("y".to_string(), 6.0), ("n1".to_string(), 2.0)]);
        // An inverter's output joins two devices but they are not one series stack.
        assert_eq!(node_diffusion_um(&[("y", "vss", 1.0), ("y", "vdd", 2.0)], "y"), vec![("y".to_string(), 3.0)]);
        // Unequal series devices: the shared region is as wide as the wider (3 um, not the mean 2.5).
        let tapered = [("y", "n1", 3.0), ("n1", "vss", 2.0), ("y", "vdd", 2.0), ("y", "vdd", 2.0)];
        assert_eq!(node_diffusion_um(&tapered, "y"), vec![("y".to_string(), 7.0), ("n1".to_string(), 3.0)]);
    }
}
