//! The simulation of verification: the expression compiled to postfix steps, and the reduced
//! netlist swept, 64 input vectors a machine word, each word's outcome checked.

use std::collections::HashMap;

use crate::expr::{Expr, ExprKind};
use crate::paths;
use crate::verify::error::VerifyError;
use crate::verify::netlist::{Netlist, OUTPUT, VDD, VSS};
use crate::verify::report::Coverage;

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
}

impl WordOutcome {
    /// Bits failing each check, in [`Check::ALL`] order.
    pub(crate) fn failing(&self) -> [u64; 4] {
        let both = self.up & self.down;
        let neither = !self.up & !self.down;
        let wrong = (self.up & !self.down & !self.expected) | (self.down & !self.up & self.expected);
        [both, self.shorted & !both, neither, wrong]
    }
}

/// Reusable buffers of one thread.
pub(crate) struct Workspace {
    pub(crate) inputs: Vec<u64>,
    pub(crate) words: Vec<u64>,
    pub(crate) reach: Vec<u64>,
    pub(crate) stack: Vec<u64>,
}

pub(crate) struct Simulator<'a> {
    pub(crate) netlist: &'a Netlist,
    pub(crate) program: &'a Program,
    pub(crate) input_count: usize,
    pub(crate) coverage: Coverage,
}

impl Simulator<'_> {
    pub(crate) fn workspace(&self) -> Workspace {
        Workspace {
            inputs: vec![0; self.input_count],
            words: vec![0; self.netlist.gating.len() + self.netlist.combine.len()],
            reach: vec![0; self.netlist.node_count],
            stack: Vec::with_capacity(self.program.steps.len()),
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

    pub(crate) fn word(&self, word: u64, space: &mut Workspace) -> WordOutcome {
        self.inputs(word, &mut space.inputs);
        let netlist = self.netlist;
        let (gated, combined) = space.words.split_at_mut(netlist.gating.len());
        for (on, gating) in gated.iter_mut().zip(&netlist.gating) {
            *on = space.inputs[gating.input as usize] ^ gating.flip;
        }
        for (k, combine) in netlist.combine.iter().enumerate() {
            let word = |slot: u32| {
                let slot = slot as usize;
                if slot < gated.len() { gated[slot] } else { combined[slot - gated.len()] }
            };
            let (x, y) = (word(combine.x), word(combine.y));
            combined[k] = if combine.series { x & y } else { x | y };
        }
        netlist.reach(VDD, &space.words, &mut space.reach);
        let up = space.reach[OUTPUT];
        let shorted = space.reach[VSS];
        netlist.reach(VSS, &space.words, &mut space.reach);
        let down = space.reach[OUTPUT];
        // The gate computes the expression: high when it is true.
        let expected = self.program.evaluate(&space.inputs, &mut space.stack);
        WordOutcome { up, down, shorted, expected }
    }
}

/// SplitMix64's output function: a fast, well-mixed 64-bit hash (common practice, no source).
pub(crate) fn mix(mut z: u64) -> u64 {
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}
