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
