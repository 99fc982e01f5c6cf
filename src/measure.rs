//! A cell's deck run through ngspice ([`crate::ngspice`]) and each transition's delay read back:
//! what `widthwise deck --run` prints.
//!
//! With the process's level-1 models the deck is the one `deck` writes. With a model library, whose
//! devices the process's level-1 values may not describe, a short calibration run first measures
//! the reference inverter alone in a long window (1000 times the level-1 estimate, coarse steps
//! that ngspice refines where the circuit moves); the deck then runs 50 times that delay, scaled to
//! its largest load ([`Window::Measured`]). A measurement ngspice reports failed, or does not
//! report, is an error that names the transition: never a blank.

use thiserror::Error;

use crate::cell::SizedCell;
use crate::network::NetworkKind;
use crate::ngspice::{self, SimulationError};
use crate::output::deck::{
    self, DeckOptions, Models, PinTransition, Transition, Window, edge, gate_measure, reference_measure, stage_measure,
};

/// One transition's simulated delay beside the reference inverter's on the same output edge.
#[derive(Debug, Clone, PartialEq)]
pub struct MeasuredDelay {
    /// The deck's tag (`t1`, `t2` ...).
    pub tag: String,
    /// The toggling input.
    pub input: String,
    /// The input's edge: `rise` or `fall`.
    pub input_edge: &'static str,
    /// The output's edge: `fall` (pull-down) or `rise` (pull-up).
    pub output_edge: &'static str,
    /// The side inputs held, `b=1 c=0`, or empty.
    pub held: String,
    /// The load on this copy, fF.
    pub load_ff: f64,
    /// Input crossing half the supply to output crossing it, s.
    pub delay_s: f64,
    /// The reference inverter's delay on the same output edge, s.
    pub reference_s: f64,
    /// In a cell of several stages: the output stage's delay and the cell's estimates.
    pub stages: Option<StagesMeasured>,
}

/// What a transition through a cell of several stages adds: the output stage measured alone
/// (from the net it switches on), and the cell's delay estimates.
#[derive(Debug, Clone, PartialEq)]
pub struct StagesMeasured {
    /// The output stage's delay: its switching input crossing half the supply to the output
    /// crossing it, s.
    pub stage_s: f64,
    /// The Elmore delay from the pin through the stages, s.
    pub elmore_s: f64,
    /// The logical-effort estimate sum(g h + p) of the same stages, s.
    pub estimate_s: f64,
    /// The same in tau.
    pub estimate_tau: f64,
}

/// What a run measured.
#[derive(Debug, Clone, PartialEq)]
pub struct Measured {
    /// The cell's name.
    pub cell: String,
    /// The simulator's version line.
    pub simulator: String,
    /// The models: `level 1 from the process` or the library (and section).
    pub models: String,
    /// Every transition, in the deck's order.
    pub delays: Vec<MeasuredDelay>,
    /// The reference inverter's delays, output falling and rising, s.
    pub reference_s: [f64; 2],
    /// The reference inverter's load, fF.
    pub reference_load_ff: f64,
    /// How long the inputs took to ramp, s, when given.
    pub slew_s: Option<f64>,
    /// Whether a calibration run set the time window.
    pub calibrated: bool,
}

/// Why a deck gave no delays.
#[derive(Debug, Error)]
pub enum MeasureError {
    /// ngspice is missing, could not run, or rejected the deck.
    #[error(transparent)]
    Simulation(#[from] SimulationError),
    /// The calibration run did not measure the reference inverter.
    #[error(
        "the calibration run (the reference inverter alone, in a window 1000 times the process's level-1 estimate) \
         did not measure its output {edge} edge: {source}"
    )]
    Calibration {
        /// `fall` or `rise`.
        edge: &'static str,
        /// ngspice's reason.
        source: SimulationError,
    },
    /// A transition was not measured.
    #[error("transition {tag} ({what}) was not measured: {source}")]
    Transition {
        /// The deck's tag.
        tag: String,
        /// The transition in words.
        what: String,
        /// ngspice's reason.
        source: SimulationError,
    },
    /// The deck's text could not be made (a bug: it is written to memory).
    #[error("the deck could not be written to memory: {0}")]
    Write(std::io::Error),
}

impl MeasureError {
    /// The exit code: ngspice missing or not startable is 2; a simulation that ran and failed 1.
    pub fn exit_code(&self) -> u8 {
        match self {
            MeasureError::Simulation(error) => error.exit_code(),
            MeasureError::Calibration { .. } | MeasureError::Transition { .. } | MeasureError::Write(_) => {
                crate::exit::EXIT_CHECK_FAILED
            }
        }
    }
}

/// The transitions of a deck: one stage's or a cell's of several stages.
#[derive(Debug, Clone, Copy)]
enum Blocks<'a> {
    Stage(&'a [Transition]),
    Cell(&'a [PinTransition]),
}

fn deck_text(cell: &SizedCell, blocks: Blocks<'_>, options: &DeckOptions) -> Result<String, MeasureError> {
    let mut bytes = Vec::new();
    match blocks {
        Blocks::Stage(transitions) => deck::write_deck(cell, transitions, options, &mut bytes),
        Blocks::Cell(transitions) => deck::write_cell_deck(cell, transitions, options, &mut bytes),
    }
    .map_err(MeasureError::Write)?;
    String::from_utf8(bytes).map_err(|error| MeasureError::Write(std::io::Error::other(error)))
}

/// The reference inverter's slower delay in a calibration run of `options`' deck without the gate.
fn calibrate(cell: &SizedCell, options: &DeckOptions, simulator: &ngspice::Options) -> Result<f64, MeasureError> {
    let calibration = DeckOptions { window: Window::Calibration, summary: false, ..options.clone() };
    let run = ngspice::run(&deck_text(cell, Blocks::Stage(&[]), &calibration)?, simulator)?;
    let mut slowest: f64 = 0.0;
    for kind in NetworkKind::BOTH {
        let delay = run
            .value(&reference_measure(kind))
            .map_err(|source| MeasureError::Calibration { edge: edge(kind), source })?;
        slowest = slowest.max(delay);
    }
    Ok(slowest)
}

/// Run the deck of `cell` (its `transitions`, under `options`) through ngspice and read every
/// transition's delay and the reference inverter's.
pub fn measure(
    cell: &SizedCell,
    transitions: &[Transition],
    options: &DeckOptions,
    simulator: &ngspice::Options,
) -> Result<Measured, MeasureError> {
    run(cell, Blocks::Stage(transitions), options, simulator)
}

/// The same for a cell of several stages: each pin's delay to the output, the output stage's
/// delay from the net it switches on, and the cell's estimates beside them.
pub fn measure_cell(
    cell: &SizedCell,
    transitions: &[PinTransition],
    options: &DeckOptions,
    simulator: &ngspice::Options,
) -> Result<Measured, MeasureError> {
    run(cell, Blocks::Cell(transitions), options, simulator)
}

fn run(
    cell: &SizedCell,
    blocks: Blocks<'_>,
    options: &DeckOptions,
    simulator: &ngspice::Options,
) -> Result<Measured, MeasureError> {
    let version = ngspice::check_installed(simulator)?;
    // `ngspice-39 : Circuit level simulation program`: the version alone.
    let version = version.split(" : ").next().unwrap_or(&version).trim().to_string();
    let library = matches!(options.models, Models::Library { .. });
    let window =
        if library { Window::Measured { reference_s: calibrate(cell, options, simulator)? } } else { options.window };
    let options = DeckOptions { window, summary: false, ..options.clone() };
    let run = ngspice::run(&deck_text(cell, blocks, &options)?, simulator)?;
    let gate = crate::figures::CellFigures::of(cell);
    let mut reference_s = [0.0; 2];
    for (slot, kind) in NetworkKind::BOTH.into_iter().enumerate() {
        reference_s[slot] = run.value(&reference_measure(kind)).map_err(|source| MeasureError::Transition {
            tag: format!("r{}", edge(kind)),
            what: format!("the reference inverter, output {}", falling_or_rising(kind)),
            source,
        })?;
    }
    // Each transition as (pin, its vector after the toggle, output network, cell figures).
    let rows: Vec<(usize, &[bool], NetworkKind, Option<&PinTransition>)> = match blocks {
        Blocks::Stage(transitions) => transitions.iter().map(|t| (t.input, &t.vector[..], t.kind, None)).collect(),
        Blocks::Cell(transitions) => transitions.iter().map(|t| (t.pin, &t.vector[..], t.kind, Some(t))).collect(),
    };
    let mut delays = Vec::new();
    for (index, &(pin, vector, kind, through)) in rows.iter().enumerate() {
        let tag = format!("t{}", index + 1);
        let input = gate.inputs[pin].name.clone();
        let rising = vector[pin];
        let held: Vec<String> = vector
            .iter()
            .enumerate()
            .filter(|&(i, _)| i != pin)
            .map(|(i, &v)| format!("{}={}", gate.inputs[i].name, u8::from(v)))
            .collect();
        let held = held.join(" ");
        let failed = |source| {
            let side = if held.is_empty() { String::new() } else { format!(", held {held}") };
            MeasureError::Transition {
                tag: tag.clone(),
                what: format!(
                    "{input} {}, output {}{side}",
                    if rising { "rising" } else { "falling" },
                    falling_or_rising(kind)
                ),
                source,
            }
        };
        let delay_s = run.value(&gate_measure(&input, kind)).map_err(failed)?;
        let stages = match through {
            None => None,
            Some(transition) => Some(StagesMeasured {
                stage_s: run.value(&stage_measure(&input, kind)).map_err(failed)?,
                elmore_s: transition.elmore_s,
                estimate_s: transition.estimate_s,
                estimate_tau: transition.estimate_tau,
            }),
        };
        let slot = usize::from(kind == NetworkKind::PullUp);
        delays.push(MeasuredDelay {
            tag,
            input,
            input_edge: if rising { "rise" } else { "fall" },
            output_edge: edge(kind),
            held,
            load_ff: options.load.gate_ff(&gate, pin),
            delay_s,
            reference_s: reference_s[slot],
            stages,
        });
    }
    let models = match &options.models {
        Models::Process => "level 1 from the process".to_string(),
        Models::Library { include, section: Some(section), .. } => format!("{include}, section {section}"),
        Models::Library { include, section: None, .. } => include.clone(),
    };
    Ok(Measured {
        cell: gate.name.clone(),
        simulator: version,
        models,
        delays,
        reference_s,
        reference_load_ff: options.load.reference_ff(&gate),
        slew_s: options.slew_s,
        calibrated: library,
    })
}

fn falling_or_rising(kind: NetworkKind) -> &'static str {
    match kind {
        NetworkKind::PullDown => "falling",
        NetworkKind::PullUp => "rising",
    }
}

#[cfg(all(test, unix))]
mod tests {
    use std::os::unix::fs::PermissionsExt;

    use super::*;
    use crate::output::deck::DeckLoad;
    use crate::sizing::{Method, Plan};

    /// A stand-in for ngspice that prints what ngspice-39 prints for a deck whose measurement
    /// `tpd_a_rise_gate` failed (its format: src/ngspice.rs), and measures the rest.
    const FAKE: &str = "#!/bin/sh\n\
        if [ \"$1\" = --version ]; then echo '** ngspice-39 : Circuit level simulation program'; exit 0; fi\n\
        echo 'tpd_fall_ref = 1.0e-11 targ= 2e-11 trig= 1e-11'\n\
        echo 'tpd_rise_ref = 1.2e-11 targ= 2e-11 trig= 1e-11'\n\
        echo 'tpd_a_fall_gate = 1.1e-11 targ= 2e-11 trig= 1e-11'\n\
        echo 'tpd_b_fall_gate = 1.3e-11 targ= 2e-11 trig= 1e-11'\n\
        echo 'tpd_b_rise_gate = 1.4e-11 targ= 2e-11 trig= 1e-11'\n\
        echo 'Error: measure  tpd_a_rise_gate  trig(TARG) : out of interval' >&2\n\
        echo ' .meas tran tpd_a_rise_gate trig v(t2_in1) val=1.65 fall=1 targ v(t2_out) val=1.65 rise=1 failed!' >&2\n";

    #[test]
    fn a_failed_measurement_names_its_transition() {
        let directory = tempfile::tempdir().unwrap();
        let program = directory.path().join("fake-ngspice");
        std::fs::write(&program, FAKE).unwrap();
        std::fs::set_permissions(&program, std::fs::Permissions::from_mode(0o755)).unwrap();
        let simulator = ngspice::Options { program: program.into_os_string(), ..ngspice::Options::default() };
        let cell = crate::size_text("nand2", &Plan::new(Method::LongestPath, 2.0, 1.0, None)).unwrap();
        let transitions = deck::transitions(&cell, 20.0).unwrap();
        let options = DeckOptions {
            models: Models::Process,
            diffusion_capacitance: false,
            summary: false,
            load: DeckLoad::Femtofarads(20.0),
            slew_s: None,
            window: Window::Estimate,
        };
        let error = measure(&cell, &transitions, &options, &simulator).unwrap_err();
        assert_eq!(
            error.to_string(),
            "transition t2 (a falling, output rising, held b=1) was not measured: measurement 'tpd_a_rise_gate' \
             failed: trig(TARG) : out of interval"
        );
        assert_eq!(error.exit_code(), crate::exit::EXIT_CHECK_FAILED);
        // Measured in full, every transition is read, in the deck's order.
        let all = FAKE.replace("' >&2", "' >/dev/null").replace(
            "echo 'Error: measure",
            "echo 'tpd_a_rise_gate = 1.5e-11 targ= 2e-11 trig= 1e-11'\necho 'Error: measure",
        );
        std::fs::write(directory.path().join("fake-ngspice"), all).unwrap();
        let measured = measure(&cell, &transitions, &options, &simulator).unwrap();
        let delays: Vec<(&str, f64, f64)> =
            measured.delays.iter().map(|d| (d.tag.as_str(), d.delay_s, d.reference_s)).collect();
        assert_eq!(
            delays,
            [("t1", 1.1e-11, 1.0e-11), ("t2", 1.5e-11, 1.2e-11), ("t3", 1.3e-11, 1.0e-11), ("t4", 1.4e-11, 1.2e-11)]
        );
        assert_eq!(measured.simulator, "ngspice-39");
    }
}
