//! The deck's transitions: timing's one worst-transition rule at the deck's own load and diffusion
//! capacitance, with what the deck says of each (resistances sized and drawn, what conducts).

use crate::budget::Meter;
use crate::cell::{SizedCell, device_name};
use crate::network::NetworkKind;
use crate::paths;
use crate::sizing::plan::{Conditions, Load};
use crate::timing::TimingError;
use crate::timing::circuit::{chain, conducting_devices};
use crate::timing::delays::worst_transitions;

/// One worst-case transition of the gate: `input` toggles, the output moves through `kind`'s network.
#[derive(Debug, Clone, PartialEq)]
pub struct Transition {
    /// The toggling input (index into the gate's inputs).
    pub input: usize,
    /// Pull-down: the output falls; pull-up: it rises.
    pub kind: NetworkKind,
    /// Every input's value after the toggle (the input at its on-level, side inputs held).
    pub vector: Vec<bool>,
    /// Resistance of what conducts after the toggle, units of R (sizing widths).
    pub resistance: f64,
    /// The same with the drawn (snapped) widths, which is what a simulator sees.
    pub drawn_resistance: f64,
    /// The devices of the toggling network that conduct after the toggle, output side first.
    pub conducting: Vec<String>,
    /// Whether they are one chain from the output to the rail (else side branches or parallel paths
    /// conduct too).
    pub one_path: bool,
    /// How the rule found it ([`crate::timing::transition::EVERY_VECTOR`], or past 16 inputs its
    /// fallback, the weakest path alone).
    pub search: &'static str,
}

/// Every input's worst-case transition, input by input, output falling then rising: the one rule
/// of the delays ([`crate::timing::transition`]) with the deck's own capacitance model (the
/// process's diffusion capacitance over its gate capacitance per um, whether or not the deck writes
/// the diffusion capacitors, and the deck's load `load_ff`, in C); an input with no transition
/// (its toggling never moves the output) is left out. Where the process's gate capacitance is 0,
/// so neither has a value in C, the transitions are ranked by resistance alone.
pub fn transitions(cell: &SizedCell, load_ff: f64) -> Result<Vec<Transition>, TimingError> {
    transitions_under(cell, Load::Femtofarads(load_ff))
}

/// The deck's capacitance model under `load`: the process's diffusion capacitance over its gate
/// capacitance per um, and the load in C; where the process's gate capacitance is 0, so neither
/// has a value in C, no diffusion and a unit load (transitions ranked by resistance alone).
pub(super) fn deck_conditions(cell: &SizedCell, load: Load) -> Conditions {
    let process = &cell.plan.process;
    let ratio = process.diffusion_cap_ff_per_um / process.gate_cap_ff_per_um;
    let load = match load {
        Load::Femtofarads(load_ff) => Load::Units(load_ff / process.unit_capacitance_ff()),
        other => other,
    };
    let finite = match load {
        Load::Units(value) | Load::Fanout(value) | Load::Femtofarads(value) => value.is_finite(),
    };
    if ratio.is_finite() && finite {
        Conditions { load, diffusion_ratio: ratio }
    } else {
        Conditions { load: Load::Units(1.0), diffusion_ratio: 0.0 }
    }
}

/// The same under any load: a capacitance (fF or C) on every copy, or a fan-out of the toggling
/// input's own capacitance.
pub fn transitions_under(cell: &SizedCell, load: Load) -> Result<Vec<Transition>, TimingError> {
    let plan = &cell.plan;
    let process = &plan.process;
    let stage = cell.stage();
    let conditions = deck_conditions(cell, load);
    let (circuit, found) = worst_transitions(stage, plan, &conditions, &Meter::new(plan.budget))?;
    let mut out = Vec::new();
    for (input, edge, _, transition) in found {
        let Some(transition) = transition else { continue };
        let kind = edge.network();
        let sized = &stage.networks[kind];
        let on = sized.network.on_devices(&transition.after);
        let effective = |widths: &[f64]| {
            let resistance = plan.resistances(kind, widths);
            paths::effective_resistance(&sized.network, &resistance, &on).unwrap_or(f64::INFINITY)
        };
        let conducting = conducting_devices(&circuit, &transition.shape, kind);
        let chain = if transition.tree { chain(&circuit, &transition.shape) } else { None };
        let one_path = chain.is_some_and(|chain| chain.len() == conducting.len());
        out.push(Transition {
            input,
            kind,
            resistance: effective(&sized.widths),
            drawn_resistance: effective(&sized.drawn_widths(process)),
            conducting: conducting.iter().map(|&d| device_name(kind, circuit.devices[d].index)).collect(),
            one_path,
            search: transition.search,
            vector: transition.after,
        });
    }
    Ok(out)
}
