//! The simulation of verification: the expression compiled to postfix steps, and the reduced
//! netlist swept, 64 input vectors a machine word, each word's outcome checked.

use std::collections::HashMap;

use crate::expr::{Expr, ExprKind};
use crate::paths;
use crate::verify::error::VerifyError;
use crate::verify::netlist::{Netlist, OUTPUT, VDD, VSS};
use crate::verify::report::{Check, Coverage};

/// Vectors per machine word.
pub(crate) const WORD: u64 = 64;

/// One step of the expression, in postfix order over a stack of words.
#[derive(Debug, Clone, Copy)]
pub(crate) enum Step {
    Input(u32),
    Not,
    And(u32),
    Or(u32),
    ExclusiveOr(u32),
}

/// The expression compiled to postfix steps, evaluated 64 vectors at a time.
pub(crate) struct Program {
    pub(crate) steps: Vec<Step>,
}

impl Program {
    pub(crate) fn new(expr: &Expr, input_index: &HashMap<&str, usize>) -> Result<Program, VerifyError> {
        fn walk(expr: &Expr, index: &HashMap<&str, usize>, steps: &mut Vec<Step>) -> Result<(), VerifyError> {
            match &expr.kind {
                ExprKind::Input(name) => {
                    let input = *index
                        .get(name.as_str())
                        .ok_or_else(|| VerifyError::ExpressionInput { input: name.clone() })?;
                    steps.push(Step::Input(input as u32));
                }
                ExprKind::Not(inner) => {
                    walk(inner, index, steps)?;
                    steps.push(Step::Not);
                }
                ExprKind::And(operands) | ExprKind::Or(operands) => {
                    for operand in operands {
                        walk(operand, index, steps)?;
                    }
                    let count = operands.len() as u32;
                    steps.push(if matches!(expr.kind, ExprKind::And(_)) { Step::And(count) } else { Step::Or(count) });
                }
                ExprKind::ExclusiveOr { operands, .. } => {
                    // Never reaches a sized gate (no single stage builds it); evaluated all the same.
                    for operand in operands {
                        walk(operand, index, steps)?;
                    }
                    steps.push(Step::ExclusiveOr(operands.len() as u32));
                }
            }
            Ok(())
        }
        let mut steps = Vec::new();
        walk(expr, input_index, &mut steps)?;
        Ok(Program { steps })
    }

    pub(crate) fn evaluate(&self, inputs: &[u64], stack: &mut Vec<u64>) -> u64 {
        stack.clear();
        for step in &self.steps {
            match *step {
                Step::Input(i) => stack.push(inputs[i as usize]),
                Step::Not => {
                    let top = stack.len() - 1;
                    stack[top] = !stack[top];
                }
                Step::And(count) => {
                    let start = stack.len() - count as usize;
                    let value = stack[start..].iter().fold(u64::MAX, |acc, w| acc & w);
                    stack.truncate(start);
                    stack.push(value);
                }
                Step::Or(count) => {
                    let start = stack.len() - count as usize;
                    let value = stack[start..].iter().fold(0, |acc, w| acc | w);
                    stack.truncate(start);
                    stack.push(value);
                }
                Step::ExclusiveOr(count) => {
                    let start = stack.len() - count as usize;
                    let value = stack[start..].iter().fold(0, |acc, w| acc ^ w);
                    stack.truncate(start);
                    stack.push(value);
                }
            }
        }
        stack.pop().unwrap_or(0)
    }
}

/// What one word of vectors did.
#[derive(Debug, Clone, Copy, Default)]
pub(crate) struct WordOutcome {
    pub(crate) up: u64,
    pub(crate) down: u64,
    pub(crate) shorted: u64,
    pub(crate) expected: u64,
    /// Bits where some earlier stage of a cell fails: its output tied to both rails, its rails
    /// meeting, its output tied to neither (one word each, ORed over the stages).
    pub(crate) inner: [u64; 3],
}

impl WordOutcome {
    /// Bits failing each check, in [`Check::ALL`] order.
    pub(crate) fn failing(&self) -> [u64; 4] {
        let both = self.up & self.down;
        let neither = !self.up & !self.down;
        let wrong = (self.up & !self.down & !self.expected) | (self.down & !self.up & self.expected);
        let [inner_both, inner_shorted, inner_neither] = self.inner;
        let both = both | inner_both;
        [both, (self.shorted | inner_shorted) & !both, neither | inner_neither, wrong]
    }
}

/// Reusable buffers of one thread.
pub(crate) struct Workspace {
    pub(crate) inputs: Vec<u64>,
    pub(crate) words: Vec<u64>,
    pub(crate) reach: Vec<u64>,
    pub(crate) stack: Vec<u64>,
    /// Switch words and reach of each earlier stage.
    pub(crate) inner: Vec<(Vec<u64>, Vec<u64>)>,
}

/// An earlier stage of a cell: its netlist, and the slot after the pins its output's word takes.
pub(crate) struct InnerStage {
    /// The net it drives, which names it.
    pub(crate) name: String,
    pub(crate) netlist: Netlist,
    pub(crate) slot: usize,
}

pub(crate) struct Simulator<'a> {
    /// The earlier stages of a cell, in order (none for a one-stage gate).
    pub(crate) inner: &'a [InnerStage],
    /// The stage that drives the output.
    pub(crate) netlist: &'a Netlist,
    pub(crate) program: &'a Program,
    pub(crate) input_count: usize,
    pub(crate) coverage: Coverage,
}

impl Simulator<'_> {
    pub(crate) fn workspace(&self) -> Workspace {
        Workspace {
            inputs: vec![0; self.input_count + self.inner.len()],
            words: vec![0; self.netlist.gating.len() + self.netlist.combine.len()],
            reach: vec![0; self.netlist.node_count],
            stack: Vec::with_capacity(self.program.steps.len()),
            inner: self
                .inner
                .iter()
                .map(|s| (vec![0; s.netlist.gating.len() + s.netlist.combine.len()], vec![0; s.netlist.node_count]))
                .collect(),
        }
    }

    /// Fill the input words of word `word` (vectors `64 word ..`).
    pub(crate) fn inputs(&self, word: u64, inputs: &mut [u64]) {
        match self.coverage {
            Coverage::Exhaustive => {
                for (i, value) in inputs.iter_mut().enumerate() {
                    *value = paths::vector_word(word, i);
                }
            }
            Coverage::Random { seed } => {
                let base = seed ^ word.wrapping_mul(0x9E37_79B9_7F4A_7C15);
                for (i, value) in inputs.iter_mut().enumerate() {
                    *value = mix(base.wrapping_add((i as u64 + 1).wrapping_mul(0xD1B5_4A32_D192_ED03)));
                    if word == 0 {
                        // vector 0: all zeros; vector 1: all ones.
                        *value = (*value & !0b11) | 0b10;
                    }
                }
            }
        }
    }

    /// The first earlier stage (its index) whose own check `check` fails at vector `bit` of word
    /// `word`, in the order the stages compute; `None` where no earlier stage fails it (the output
    /// stage does).
    pub(crate) fn failing_stage(&self, word: u64, bit: u64, check: Check, space: &mut Workspace) -> Option<usize> {
        self.inputs(word, &mut space.inputs[..self.input_count]);
        for (index, (stage, (words, reach))) in self.inner.iter().zip(&mut space.inner).enumerate() {
            let (up, down, shorted) = switch(&stage.netlist, &space.inputs, words, reach);
            let failing = match check {
                Check::BothConduct => up & down,
                Check::RailsShorted => shorted & !(up & down),
                Check::NeitherConducts => !up & !down,
                Check::WrongOutput => 0,
            };
            if failing >> bit & 1 == 1 {
                return Some(index);
            }
            space.inputs[stage.slot] = up;
        }
        None
    }

    pub(crate) fn word(&self, word: u64, space: &mut Workspace) -> WordOutcome {
        self.inputs(word, &mut space.inputs[..self.input_count]);
        // Each earlier stage in order: its output's word is where its pull-up ties it to vdd.
        let mut inner = [0u64; 3];
        for (stage, (words, reach)) in self.inner.iter().zip(&mut space.inner) {
            let (up, down, shorted) = switch(&stage.netlist, &space.inputs, words, reach);
            inner[0] |= up & down;
            inner[1] |= shorted;
            inner[2] |= !up & !down;
            space.inputs[stage.slot] = up;
        }
        let (up, down, shorted) = switch(self.netlist, &space.inputs, &mut space.words, &mut space.reach);
        // The gate computes the expression: high when it is true.
        let expected = self.program.evaluate(&space.inputs[..self.input_count], &mut space.stack);
        WordOutcome { up, down, shorted, expected, inner }
    }
}

/// One stage's netlist on one word of input values: where its output is tied to vdd, to vss, and
/// where the rails meet.
fn switch(netlist: &Netlist, inputs: &[u64], words: &mut [u64], reach: &mut [u64]) -> (u64, u64, u64) {
    let (gated, combined) = words.split_at_mut(netlist.gating.len());
    for (on, gating) in gated.iter_mut().zip(&netlist.gating) {
        *on = inputs[gating.input as usize] ^ gating.flip;
    }
    for (k, combine) in netlist.combine.iter().enumerate() {
        let word = |slot: u32| {
            let slot = slot as usize;
            if slot < gated.len() { gated[slot] } else { combined[slot - gated.len()] }
        };
        let (x, y) = (word(combine.x), word(combine.y));
        combined[k] = if combine.series { x & y } else { x | y };
    }
    netlist.reach(VDD, words, reach);
    let up = reach[OUTPUT];
    let shorted = reach[VSS];
    netlist.reach(VSS, words, reach);
    (up, reach[OUTPUT], shorted)
}

/// SplitMix64's output function: a fast, well-mixed 64-bit hash (common practice, no source).
pub(crate) fn mix(mut z: u64) -> u64 {
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}
