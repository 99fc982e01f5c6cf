//! A deck's transitions through a cell of several stages (docs/model.md sections 9 and 11): each
//! pin's worst transition on each output edge chosen over whole vectors of the pins
//! ([`crate::timing::cell_vectors`]) at the deck's capacitance model, with what the deck writes of
//! it: the chain of stages it switches, its Elmore delay and its logical-effort estimate in
//! seconds, and the net the output stage switches on (its delay is measured against the reference
//! inverter's).

use std::io::{self, Write};

use crate::budget::Meter;
use crate::cell::SizedCell;
use crate::figures::CellFigures;
use crate::network::NetworkKind;
use crate::number::format as number;
use crate::sizing::plan::Load;
use crate::timing::circuit::tau;
use crate::timing::{ProcessUnits, TimingError, cell_transitions};

use super::physics::femtofarads;

/// One pin's worst transition through the cell on one output edge, as a deck holds it.
#[derive(Debug, Clone, PartialEq)]
pub struct PinTransition {
    /// The toggling pin (index into the cell's inputs).
    pub pin: usize,
    /// Pull-down of the output stage: the output falls; pull-up: it rises.
    pub kind: NetworkKind,
    /// Every pin's value after the toggle (the pin at its new value, the others held).
    pub vector: Vec<bool>,
    /// The stages it switches, first to last: `y_n rise (MP2_y_n)`.
    pub stages: Vec<String>,
    /// The net the output stage switches on: `None` where it is the pin itself, else an internal
    /// net of the cell, with whether it rises.
    pub stage_input: Option<(String, bool)>,
    /// The Elmore delay from the pin to the output through those stages, s.
    pub elmore_s: f64,
    /// The logical-effort estimate sum(g h + p) of the same stages, s (each stage's tau of its edge
    /// from the process).
    pub estimate_s: f64,
    /// The same estimate in tau.
    pub estimate_tau: f64,
    /// The Elmore delay over the reference inverter's at the same load.
    pub elmore_ratio: f64,
}

impl PinTransition {
    /// Whether the pin rises.
    pub fn pin_rises(&self) -> bool {
        self.vector[self.pin]
    }
}

/// Every pin's worst transition through `cell` (pin by pin, output falling then rising) at the
/// deck's capacitance model under `load` (see [`super::transitions_under`]).
pub fn pin_transitions(cell: &SizedCell, load: Load) -> Result<Vec<PinTransition>, TimingError> {
    let plan = &cell.plan;
    let units = ProcessUnits::of(&plan.process)?;
    let conditions = super::transitions::deck_conditions(cell, load);
    let found = cell_transitions(cell, &conditions, &Meter::new(plan.budget))?;
    Ok(found
        .into_iter()
        .map(|t| {
            let last = t.output_step();
            let net = &cell.stages[last.stage].function.inputs[last.input];
            let stage_input = (net != &cell.logic.inputs[t.pin])
                .then(|| (net.clone(), last.edge.opposite() == crate::timing::Edge::Rise));
            let estimate_rc: f64 = t.steps.iter().map(|s| s.estimate_tau * tau(plan, s.edge)).sum();
            PinTransition {
                pin: t.pin,
                kind: t.edge.network(),
                stages: t
                    .steps
                    .iter()
                    .map(|s| {
                        format!(
                            "{} {} ({})",
                            cell.stages[s.stage].function.output,
                            s.edge.name(),
                            s.conducting.join(" ")
                        )
                    })
                    .collect(),
                stage_input,
                elmore_s: t.elmore * units.rc_ps * 1e-12,
                estimate_s: estimate_rc * units.rc_ps * 1e-12,
                estimate_tau: t.estimate_tau,
                elmore_ratio: t.elmore / t.reference_elmore,
                vector: t.after,
            }
        })
        .collect())
}

/// The `.meas` name of the output stage's delay (from its switching input to the output) for
/// `input` on the output's edge through `kind`.
pub fn stage_measure(input: &str, kind: NetworkKind) -> String {
    format!("tpd_{}_{}_stage", input.to_ascii_lowercase(), super::edge(kind))
}

/// One capacitor to `vss` per internal net of the cell for the gates it drives (drawn width x
/// the process's gate capacitance per um): level-1 models carry no gate capacitance of their own.
pub(super) fn write_gate_capacitance(gate: &CellFigures, out: &mut dyn Write) -> io::Result<()> {
    let mut nets: Vec<(&str, f64)> = Vec::new();
    for stage in &gate.stages {
        let width: f64 =
            gate.transistors.iter().filter(|t| t.input == stage.stage).map(|t| t.drawn_width_um).sum::<f64>();
        if stage.stage != gate.output {
            nets.push((&stage.stage, width * gate.process.gate_cap_ff_per_um));
        }
    }
    if nets.is_empty() {
        return Ok(());
    }
    writeln!(out, "* The gates each internal net drives (level-1 models carry no gate capacitance).")?;
    for (index, (net, ff)) in nets.iter().enumerate() {
        writeln!(out, "CG{} {net} vss {}", index + 1, femtofarads(*ff))?;
    }
    Ok(())
}

/// The comment line of a transition: its stages, Elmore delay and estimate.
pub(super) fn describe(transition: &PinTransition) -> String {
    format!(
        "through {}; Elmore {} s ({} x the reference's), logical-effort estimate {} tau = {} s",
        transition.stages.join(", "),
        number(transition.elmore_s),
        number(transition.elmore_ratio),
        number(transition.estimate_tau),
        number(transition.estimate_s)
    )
}

/// What the transition blocks share with the rest of the deck: the stimulus and measurement
/// spellings.
pub(super) struct Writer<'a> {
    /// The cell's figures.
    pub gate: &'a CellFigures,
    /// Half the supply, as written.
    pub half: &'a str,
    /// A source's PWL toggling from the given level.
    pub toggle: &'a dyn Fn(bool) -> String,
    /// A level as written.
    pub level: &'a dyn Fn(bool) -> String,
    /// `RISE=1` or `FALL=1`.
    pub direction: &'a dyn Fn(bool) -> &'static str,
}

impl Writer<'_> {
    /// One block per transition: its sources, its copy of the cell and load, and two measurements,
    /// pin to output and the output stage's input to output; each appended to `measures`.
    pub(super) fn write_blocks(
        &self,
        transitions: &[PinTransition],
        loads_ff: &[f64],
        measures: &mut Vec<(String, String)>,
        out: &mut dyn Write,
    ) -> io::Result<()> {
        let gate = self.gate;
        let half = self.half;
        for (pin, name) in gate.inputs.iter().enumerate() {
            for kind in NetworkKind::BOTH {
                if !transitions.iter().any(|t| t.pin == pin && t.kind == kind) {
                    writeln!(
                        out,
                        "* {}: no transition on the output's {} edge: no vector of the other pins lets its toggle move \
                         the output",
                        name.name,
                        super::edge(kind)
                    )?;
                }
            }
        }
        for (index, transition) in transitions.iter().enumerate() {
            let tag = format!("t{}", index + 1);
            let name = &gate.inputs[transition.pin].name;
            let rising = transition.pin_rises();
            let held: Vec<String> = transition
                .vector
                .iter()
                .enumerate()
                .filter(|&(i, _)| i != transition.pin)
                .map(|(i, &v)| format!("{}={}", gate.inputs[i].name, u8::from(v)))
                .collect();
            writeln!(out)?;
            writeln!(
                out,
                "* {tag}: {name} {}, output {}; held {}; {}",
                if rising { "rising" } else { "falling" },
                if transition.kind == NetworkKind::PullDown { "falling" } else { "rising" },
                if held.is_empty() { "nothing".to_string() } else { held.join(" ") },
                describe(transition)
            )?;
            let mut nodes = Vec::new();
            for (input, &value) in transition.vector.iter().enumerate() {
                let node = format!("{tag}_in{}", input + 1);
                let source =
                    if input == transition.pin { (self.toggle)(!value) } else { format!("DC {}", (self.level)(value)) };
                writeln!(out, "V{tag}_{} {node} 0 {source}", input + 1)?;
                nodes.push(node);
            }
            writeln!(out, "X{tag} {} {tag}_out vdd 0 {}", nodes.join(" "), gate.name)?;
            writeln!(out, "C{tag} {tag}_out 0 {}", femtofarads(loads_ff[transition.pin]))?;
            let output_rises = transition.kind == NetworkKind::PullUp;
            let measure = super::gate_measure(name, transition.kind);
            let statement = format!(
                "meas tran {measure} TRIG v({tag}_in{}) VAL={half} {} TARG v({tag}_out) VAL={half} {}",
                transition.pin + 1,
                (self.direction)(rising),
                (self.direction)(output_rises)
            );
            writeln!(out, ".{statement}")?;
            measures.push((measure, statement));
            // The output stage alone: from the net it switches on (inside this copy) to the output.
            let (trigger, trigger_rises) = match &transition.stage_input {
                Some((net, rises)) => (format!("x{tag}.{net}"), *rises),
                None => (format!("{tag}_in{}", transition.pin + 1), rising),
            };
            let measure = stage_measure(name, transition.kind);
            let statement = format!(
                "meas tran {measure} TRIG v({trigger}) VAL={half} {} TARG v({tag}_out) VAL={half} {}",
                (self.direction)(trigger_rises),
                (self.direction)(output_rises)
            );
            writeln!(out, ".{statement}")?;
            measures.push((measure, statement));
        }
        Ok(())
    }
}

/// The `.control` summary lines of a cell of several stages: per transition the cell's delay
/// against its logical-effort estimate, and the output stage's against the reference inverter's.
pub(super) fn write_summary(gate: &CellFigures, transitions: &[PinTransition], out: &mut dyn Write) -> io::Result<()> {
    writeln!(
        out,
        "echo \"widthwise summary: transition, cell delay (s), logical-effort estimate (s), cell/estimate, output \
         stage delay (s), reference delay (s), stage/reference\""
    )?;
    for transition in transitions {
        let name = gate.inputs[transition.pin].name.to_ascii_lowercase();
        let edge = super::edge(transition.kind);
        let measure = super::gate_measure(&name, transition.kind);
        let stage = stage_measure(&name, transition.kind);
        let reference = super::reference_measure(transition.kind);
        writeln!(out, "let estimate_{name}_{edge} = {}", number(transition.estimate_s))?;
        writeln!(out, "let effort_{name}_{edge} = {measure} / estimate_{name}_{edge}")?;
        writeln!(out, "let ratio_{name}_{edge} = {stage} / {reference}")?;
        writeln!(
            out,
            "echo \"delay {name} {edge}: $&{measure} $&estimate_{name}_{edge} $&effort_{name}_{edge} $&{stage} \
             $&{reference} $&ratio_{name}_{edge}\""
        )?;
    }
    Ok(())
}
