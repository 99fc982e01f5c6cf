//! The sized variants of a batch kept by what decides them, so that a variant repeated under
//! another name (a library lists the same gate in many names, or the same drive in many gates) is
//! sized, figured and verified once: its key is everything a variant's sizes and figures depend on
//! except its name, a bounded number kept at a time.
//!
//! The key is the gate's expression and pull-up as written (with the batch's process, which names
//! the models no pin may take, they decide the function's forms) and every field of the variant's
//! [`Plan`] but its name: the method and its worst case, the stack order and critical input, the
//! drive, the reference inverter, the mobility ratio, the load and diffusion ratio, the work
//! budget, the stage effort and the delay target. The plan's fields are taken apart without a rest
//! pattern, so a field added to [`Plan`] fails to compile here until the key has it. Only the
//! process is not in the key: the cells kept are the batch's process's, and a plan in another
//! process is never kept or found.

use std::sync::Arc;

use rustc_hash::FxHashMap;

use crate::cell::SizedCell;
use crate::figures::SharedCell;
use crate::library::plan::GatePlan;
use crate::process::Process;
use crate::sizing::{Conditions, Load, Method, Order, Plan, Reference, WorstCase};

/// Most sized cells kept at once.
pub const MAX_KEPT_CELLS: usize = 256;
/// Most devices (every stage's transistors) over the cells kept at once: a sized cell with its
/// figures takes about a kilobyte per device, so the cells kept stay within some 16 MB however
/// large the gates; a cell of more devices than this is not kept.
pub const MAX_KEPT_DEVICES: usize = 16 * 1024;

/// One cell kept.
struct Kept {
    shared: Arc<SharedCell>,
    devices: usize,
    /// Whether the cell passed verification (its result holds for every name it takes).
    verified: bool,
}

/// The sized variants of a batch, by what decides them.
pub(crate) struct Reuse {
    process: Arc<Process>,
    kept: FxHashMap<Box<[u8]>, Kept>,
    /// Devices over the cells kept.
    devices: usize,
    /// Most cells and devices kept ((0, 0): none, every variant sized afresh).
    limits: (usize, usize),
    next_id: u64,
    /// The key of the last variant looked up, where it has one.
    key: Vec<u8>,
    keyed: bool,
}

/// What a lookup found.
pub(crate) struct Found {
    /// The cell, sized for another variant of the same key.
    pub(crate) shared: Arc<SharedCell>,
    /// Whether it passed verification.
    pub(crate) verified: bool,
}

impl Reuse {
    /// Nothing kept yet, for variants sized in `process`, at most `limits` (cells, devices) kept.
    pub(crate) fn new(process: &Arc<Process>, limits: (usize, usize)) -> Reuse {
        Reuse {
            process: Arc::clone(process),
            kept: FxHashMap::default(),
            devices: 0,
            limits,
            next_id: 0,
            key: Vec::new(),
            keyed: false,
        }
    }

    /// The cell kept for `gate`'s variant under `plan`, if one is; the key stays for [`Reuse::keep`].
    pub(crate) fn find(&mut self, gate: &GatePlan, plan: &Plan) -> Option<Found> {
        self.keyed = self.limits.0 > 0 && Arc::ptr_eq(&plan.process, &self.process);
        if !self.keyed {
            return None;
        }
        key(gate, plan, &mut self.key);
        self.kept
            .get(self.key.as_slice())
            .map(|kept| Found { shared: Arc::clone(&kept.shared), verified: kept.verified })
    }

    /// Share `cell`, the variant last looked up, under a new id, and keep it where the limits allow
    /// (others dropped to make room).
    pub(crate) fn keep(&mut self, cell: SizedCell) -> Arc<SharedCell> {
        let devices = cell.stages.iter().flat_map(|s| s.networks.values()).map(|n| n.widths.len()).sum::<usize>();
        let shared = Arc::new(SharedCell::new(self.next_id, cell));
        self.next_id += 1;
        let (most_cells, most_devices) = self.limits;
        if !self.keyed || devices > most_devices {
            return shared;
        }
        while !self.kept.is_empty() && (self.kept.len() >= most_cells || self.devices + devices > most_devices) {
            let dropped = self.kept.keys().next().cloned().expect("a kept cell");
            if let Some(kept) = self.kept.remove(&dropped) {
                self.devices -= kept.devices;
            }
        }
        self.devices += devices;
        let kept = Kept { shared: Arc::clone(&shared), devices, verified: false };
        self.kept.insert(self.key.as_slice().into(), kept);
        shared
    }

    /// The variant last looked up passed verification: so do the others of its key.
    pub(crate) fn verified(&mut self) {
        if self.keyed
            && let Some(kept) = self.kept.get_mut(self.key.as_slice())
        {
            kept.verified = true;
        }
    }
}

/// Put the key of `gate`'s variant under `plan` in `key`: every field but the name (see the module's
/// note), numbers by their bits, texts after their lengths.
fn key(gate: &GatePlan, plan: &Plan, key: &mut Vec<u8>) {
    key.clear();
    text(key, Some(&gate.expression));
    text(key, gate.pull_up.as_ref().map(|p| p.text.as_str()));
    let Plan {
        method,
        order,
        drive,
        reference: Reference { nmos, pmos },
        mobility_ratio,
        conditions: Conditions { load, diffusion_ratio },
        process: _,
        name: _,
        budget,
        stage_effort,
        delay_target,
    } = plan;
    let worst_case = |worst_case: &WorstCase| match worst_case {
        WorstCase::Paths => 0u8,
        WorstCase::Vectors => 1,
    };
    match method {
        Method::LongestPath => key.push(0),
        Method::MinArea { worst_case: w } => key.extend([1, worst_case(w)]),
        Method::Elmore { worst_case: w } => key.extend([2, worst_case(w)]),
    }
    match order {
        Order::Default { critical } => {
            key.push(0);
            text(key, critical.as_deref());
        }
        Order::Written => key.push(1),
        Order::Search { critical } => {
            key.push(2);
            text(key, critical.as_deref());
        }
    }
    match load {
        Load::Fanout(value) => number(key, 0, *value),
        Load::Units(value) => number(key, 1, *value),
        Load::Femtofarads(value) => number(key, 2, *value),
    }
    for value in [drive, nmos, pmos, mobility_ratio, diffusion_ratio, stage_effort] {
        number(key, 0, *value);
    }
    key.extend_from_slice(&budget.to_le_bytes());
    match delay_target {
        None => key.push(0),
        Some(target) => number(key, 1, *target),
    }
}

/// A tag and a number's bits.
fn number(key: &mut Vec<u8>, tag: u8, value: f64) {
    key.push(tag);
    key.extend_from_slice(&value.to_bits().to_le_bytes());
}

/// A text or none: a tag, then the text after its length, so that no text runs into the next.
fn text(key: &mut Vec<u8>, text: Option<&str>) {
    match text {
        None => key.push(0),
        Some(text) => {
            key.push(1);
            key.extend_from_slice(&text.len().to_le_bytes());
            key.extend_from_slice(text.as_bytes());
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::library::plan::PullUpPlace;
    use crate::library::tests::library;

    fn gate() -> (GatePlan, Arc<Process>) {
        let library = library("[[gate]]\nname = \"g\"\nexpr = \"!(a & b | c)\"\n");
        (GatePlan::clone(&library.gate(0).unwrap()), Arc::clone(&library.process))
    }

    fn key_of(gate: &GatePlan, plan: &Plan) -> Vec<u8> {
        let mut bytes = Vec::new();
        key(gate, plan, &mut bytes);
        bytes
    }

    #[test]
    fn the_key_is_every_field_but_the_name() {
        let (gate, process) = gate();
        let plan = gate.plan(1.0, &process).unwrap();
        let base = key_of(&gate, &plan);
        // Another name: the same key.
        let renamed = Plan { name: Some("other_x1".to_string()), ..plan.clone() };
        assert_eq!(key_of(&gate, &renamed), base);
        // Any other field: another key.
        let changed: Vec<Plan> = vec![
            Plan { method: Method::MIN_AREA, ..plan.clone() },
            Plan { method: Method::MinArea { worst_case: WorstCase::Vectors }, ..plan.clone() },
            Plan { order: Order::Written, ..plan.clone() },
            Plan { order: Order::Default { critical: Some("a".to_string()) }, ..plan.clone() },
            Plan { drive: 2.0, ..plan.clone() },
            Plan { reference: Reference { nmos: 1.0, pmos: 3.0 }, ..plan.clone() },
            Plan { mobility_ratio: 2.5, ..plan.clone() },
            Plan { conditions: Conditions { load: Load::Units(1.0), ..plan.conditions }, ..plan.clone() },
            Plan { conditions: Conditions { diffusion_ratio: 0.5, ..plan.conditions }, ..plan.clone() },
            Plan { budget: plan.budget / 2, ..plan.clone() },
            Plan { stage_effort: 3.0, ..plan.clone() },
            Plan { delay_target: Some(1.0), ..plan.clone() },
        ];
        for other in &changed {
            assert_ne!(key_of(&gate, other), base, "{other:?}");
        }
        let expression = GatePlan { expression: "!(a & b | d)".to_string(), ..gate.clone() };
        assert_ne!(key_of(&expression, &plan), base);
        let pull_up = PullUpPlace { text: "mirror".to_string(), span: gate.name_span, verbatim_start: None };
        let mirrored = GatePlan { pull_up: Some(pull_up), ..gate.clone() };
        assert_ne!(key_of(&mirrored, &plan), base);
    }

    #[test]
    fn the_cells_kept_are_bounded_and_another_process_is_never_kept() {
        let (gate, process) = gate();
        let mut reuse = Reuse::new(&process, (3, 1_000));
        for drive in 1..=10 {
            let plan = gate.plan(f64::from(drive), &process).unwrap();
            assert!(reuse.find(&gate, &plan).is_none());
            let cell = crate::library::size_variant(&gate, f64::from(drive), &process).unwrap();
            reuse.keep(cell);
            assert!(reuse.find(&gate, &plan).is_some());
            assert!(reuse.kept.len() <= 3);
        }
        let other = Arc::new(Process::default());
        let plan = gate.plan(10.0, &other).unwrap();
        assert!(reuse.find(&gate, &plan).is_none());
    }
}
