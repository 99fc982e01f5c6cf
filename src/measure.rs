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
use crate::output::deck::{self, DeckOptions, Models, Transition, Window, edge, gate_measure, reference_measure};

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

fn deck_text(cell: &SizedCell, transitions: &[Transition], options: &DeckOptions) -> Result<String, MeasureError> {
    let mut bytes = Vec::new();
    deck::write_deck(cell, transitions, options, &mut bytes).map_err(MeasureError::Write)?;
    String::from_utf8(bytes).map_err(|error| MeasureError::Write(std::io::Error::other(error)))
}

/// The reference inverter's slower delay in a calibration run of `options`' deck without the gate.
fn calibrate(cell: &SizedCell, options: &DeckOptions, simulator: &ngspice::Options) -> Result<f64, MeasureError> {
    let calibration = DeckOptions { window: Window::Calibration, summary: false, ..options.clone() };
    let run = ngspice::run(&deck_text(cell, &[], &calibration)?, simulator)?;
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
    let version = ngspice::check_installed(simulator)?;
    // `ngspice-39 : Circuit level simulation program`: the version alone.
    let version = version.split(" : ").next().unwrap_or(&version).trim().to_string();
    let library = matches!(options.models, Models::Library { .. });
    let window =
        if library { Window::Measured { reference_s: calibrate(cell, options, simulator)? } } else { options.window };
    let options = DeckOptions { window, summary: false, ..options.clone() };
    let run = ngspice::run(&deck_text(cell, transitions, &options)?, simulator)?;
    let gate = crate::figures::CellFigures::of(cell);
    let mut reference_s = [0.0; 2];
    for (slot, kind) in NetworkKind::BOTH.into_iter().enumerate() {
        reference_s[slot] = run.value(&reference_measure(kind)).map_err(|source| MeasureError::Transition {
            tag: format!("r{}", edge(kind)),
            what: format!("the reference inverter, output {}", falling_or_rising(kind)),
            source,
        })?;
    }
    let mut delays = Vec::new();
    for (index, transition) in transitions.iter().enumerate() {
        let tag = format!("t{}", index + 1);
        let input = gate.inputs[transition.input].name.clone();
        let rising = transition.vector[transition.input];
        let held: Vec<String> = transition
            .vector
            .iter()
            .enumerate()
            .filter(|&(i, _)| i != transition.input)
            .map(|(i, &v)| format!("{}={}", gate.inputs[i].name, u8::from(v)))
            .collect();
        let held = held.join(" ");
        let delay_s = run.value(&gate_measure(&input, transition.kind)).map_err(|source| {
            let side = if held.is_empty() { String::new() } else { format!(", held {held}") };
            MeasureError::Transition {
                tag: tag.clone(),
                what: format!(
                    "{input} {}, output {}{side}",
                    if rising { "rising" } else { "falling" },
                    falling_or_rising(transition.kind)
                ),
                source,
            }
        })?;
        let slot = usize::from(transition.kind == NetworkKind::PullUp);
        delays.push(MeasuredDelay {
            tag,
            input,
            input_edge: if rising { "rise" } else { "fall" },
            output_edge: edge(transition.kind),
            held,
            load_ff: options.load.gate_ff(&gate, transition.input),
            delay_s,
            reference_s: reference_s[slot],
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
