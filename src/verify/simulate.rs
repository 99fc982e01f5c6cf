//! The simulation of verification: the expression compiled to postfix steps, and the reduced
//! netlist swept, 64 input vectors a machine word, each word's outcome checked.

use std::collections::HashMap;

use crate::expr::{Expr, ExprKind};
use crate::paths;
use crate::verify::error::VerifyError;
use crate::verify::netlist::{Combine, Edge, Netlist, OUTPUT, VDD, VSS};
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

    /// The expression on a block of words, input `i` read at `literals[2 i]`.
    pub(crate) fn evaluate(&self, literals: &[Block], stack: &mut Vec<Block>) -> Block {
        stack.clear();
        for step in &self.steps {
            match *step {
                Step::Input(i) => stack.push(literals[2 * i as usize]),
                Step::Not => {
                    if let Some(top) = stack.last_mut() {
                        *top = top.map(|w| !w);
                    }
                }
                Step::And(count) => fold(stack, count, [u64::MAX; LANES], |acc, w| acc & w),
                Step::Or(count) => fold(stack, count, [0; LANES], |acc, w| acc | w),
                Step::ExclusiveOr(count) => fold(stack, count, [0; LANES], |acc, w| acc ^ w),
            }
        }
        stack.pop().unwrap_or([0; LANES])
    }
}

/// Replace the top `count` blocks of `stack` by their lane-wise fold with `operation` from `start`.
fn fold(stack: &mut Vec<Block>, count: u32, start: Block, operation: impl Fn(u64, u64) -> u64) {
    let from = stack.len() - count as usize;
    let mut value = start;
    for block in &stack[from..] {
        for lane in 0..LANES {
            value[lane] = operation(value[lane], block[lane]);
        }
    }
    stack.truncate(from);
    stack.push(value);
}

/// Words evaluated together: each step of the netlist and the expression is taken once for this
/// many words, so its indexing and dispatch are shared and the word operations vectorise.
pub(crate) const LANES: usize = 16;

/// [`LANES`] consecutive words.
pub(crate) type Block = [u64; LANES];

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

/// What a block of words did: [`WordOutcome`]s side by side.
#[derive(Debug, Clone, Copy)]
pub(crate) struct BlockOutcome {
    up: Block,
    down: Block,
    shorted: Block,
    expected: Block,
    inner: [Block; 3],
}

impl BlockOutcome {
    /// The outcome of word `lane` of the block.
    pub(crate) fn lane(&self, lane: usize) -> WordOutcome {
        WordOutcome {
            up: self.up[lane],
            down: self.down[lane],
            shorted: self.shorted[lane],
            expected: self.expected[lane],
            inner: self.inner.map(|words| words[lane]),
        }
    }
}

/// One stage's netlist placed in the shared buffer of a [`Workspace`]: its switches read the literal
/// words of their inputs directly (a PMOS its input's complement), its reductions write the buffer
/// from `base` on, and what does not reduce reads it by absolute position.
struct Placed {
    combine: Vec<Combine>,
    base: usize,
    edges: Vec<Edge>,
    node_count: usize,
    order: [Vec<u32>; 2],
}

impl Placed {
    fn new(netlist: &Netlist, base: usize) -> Placed {
        let gated = netlist.gating.len() as u32;
        // Input slot s has its value at 2 s and its complement at 2 s + 1.
        let at = |slot: u32| {
            if slot < gated {
                let gating = netlist.gating[slot as usize];
                2 * gating.input + u32::from(gating.flip != 0)
            } else {
                base as u32 + slot - gated
            }
        };
        Placed {
            combine: netlist.combine.iter().map(|c| Combine { x: at(c.x), y: at(c.y), series: c.series }).collect(),
            base,
            edges: netlist.edges.iter().map(|e| Edge { a: e.a, b: e.b, slot: at(e.slot) }).collect(),
            node_count: netlist.node_count,
            order: netlist.order.clone(),
        }
    }

    /// Where the netlist ties its output to vdd, to vss, and where the rails meet, for the words of
    /// `values` (literals and earlier reductions already in place).
    fn switch(&self, values: &mut [Block], reach: &mut [Block]) -> (Block, Block, Block) {
        let (before, after) = values.split_at_mut(self.base);
        let own = &mut after[..self.combine.len()];
        for (k, combine) in self.combine.iter().enumerate() {
            let word = |slot: u32, own: &[Block]| {
                let slot = slot as usize;
                if slot < self.base { before[slot] } else { own[slot - self.base] }
            };
            let (x, y) = (word(combine.x, own), word(combine.y, own));
            own[k] = if combine.series { and(&x, &y) } else { or(&x, &y) };
        }
        self.reach(VDD, values, reach);
        let (up, shorted) = (reach[OUTPUT], reach[VSS]);
        self.reach(VSS, values, reach);
        (up, reach[OUTPUT], shorted)
    }

    /// Nodes reached from `rail` over the conducting edges, [`LANES`] words at a time, swept in
    /// breadth-first order forwards and backwards until nothing changes.
    fn reach(&self, rail: usize, values: &[Block], reach: &mut [Block]) {
        let reach = &mut reach[..self.node_count];
        reach.fill([0; LANES]);
        reach[rail] = [u64::MAX; LANES];
        let order = &self.order[usize::from(rail == VSS)];
        let mut forward = true;
        loop {
            let mut changed = 0;
            let mut step = |k: &u32| {
                let edge = self.edges[*k as usize];
                let (a, b) = (reach[edge.a as usize], reach[edge.b as usize]);
                let on = &values[edge.slot as usize];
                let mut joined = [0; LANES];
                for lane in 0..LANES {
                    joined[lane] = (a[lane] | b[lane]) & on[lane];
                    changed |= joined[lane] & !(a[lane] & b[lane]);
                }
                reach[edge.a as usize] = or(&a, &joined);
                reach[edge.b as usize] = or(&b, &joined);
            };
            if forward {
                order.iter().for_each(&mut step);
            } else {
                order.iter().rev().for_each(&mut step);
            }
            if changed == 0 {
                break;
            }
            forward = !forward;
        }
    }
}

fn and(x: &Block, y: &Block) -> Block {
    std::array::from_fn(|lane| x[lane] & y[lane])
}

fn or(x: &Block, y: &Block) -> Block {
    std::array::from_fn(|lane| x[lane] | y[lane])
}

/// Reusable buffers of one thread.
pub(crate) struct Workspace {
    /// Literal words (each input slot's value, then its complement), then every stage's reductions.
    values: Vec<Block>,
    reach: Vec<Block>,
    stack: Vec<Block>,
    /// One word per input: a pseudo-random word's inputs before they are spread over the lanes.
    words: Vec<u64>,
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
    pub(crate) program: &'a Program,
    pub(crate) input_count: usize,
    pub(crate) coverage: Coverage,
    /// The earlier stages, then the stage that drives the output, placed in the buffer.
    placed: Vec<Placed>,
    /// Words of the buffer.
    size: usize,
}

impl<'a> Simulator<'a> {
    /// The simulator of the earlier stages `inner` and the output stage `netlist`.
    pub(crate) fn new(
        inner: &'a [InnerStage],
        netlist: &'a Netlist,
        program: &'a Program,
        input_count: usize,
        coverage: Coverage,
    ) -> Simulator<'a> {
        let mut size = 2 * (input_count + inner.len());
        let mut placed = Vec::with_capacity(inner.len() + 1);
        for stage in inner.iter().map(|s| &s.netlist).chain([netlist]) {
            placed.push(Placed::new(stage, size));
            size += stage.combine.len();
        }
        Simulator { inner, program, input_count, coverage, placed, size }
    }

    pub(crate) fn workspace(&self) -> Workspace {
        let nodes = self.placed.iter().map(|p| p.node_count).max().unwrap_or(0);
        Workspace {
            values: vec![[0; LANES]; self.size],
            reach: vec![[0; LANES]; nodes],
            stack: Vec::with_capacity(self.program.steps.len()),
            words: vec![0; self.input_count],
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

    /// The literal words of the pins for the block of words from `first` into `space.values`.
    fn literals(&self, first: u64, space: &mut Workspace) {
        let values = &mut space.values;
        match self.coverage {
            Coverage::Exhaustive => {
                for input in 0..self.input_count {
                    // The first six inputs take the same pattern in every word; the rest are one bit
                    // of the word's index, all ones or all zeros.
                    let block: Block = std::array::from_fn(|lane| paths::vector_word(first + lane as u64, input));
                    values[2 * input] = block;
                    values[2 * input + 1] = block.map(|w| !w);
                }
            }
            Coverage::Random { .. } => {
                let words = &mut space.words;
                for (lane, word) in (first..first + LANES as u64).enumerate() {
                    self.inputs(word, words);
                    for (input, word) in words.iter().enumerate() {
                        values[2 * input][lane] = *word;
                        values[2 * input + 1][lane] = !*word;
                    }
                }
            }
        }
    }

    /// The first earlier stage (its index) whose own check `check` fails at vector `bit` of word
    /// `word`, in the order the stages compute; `None` where no earlier stage fails it (the output
    /// stage does).
    pub(crate) fn failing_stage(&self, word: u64, bit: u64, check: Check, space: &mut Workspace) -> Option<usize> {
        self.literals(word, space);
        for (index, (stage, placed)) in self.inner.iter().zip(&self.placed).enumerate() {
            let (up, down, shorted) = placed.switch(&mut space.values, &mut space.reach);
            let (up, down, shorted) = (up[0], down[0], shorted[0]);
            let failing = match check {
                Check::BothConduct => up & down,
                Check::RailsShorted => shorted & !(up & down),
                Check::NeitherConducts => !up & !down,
                Check::WrongOutput => 0,
            };
            if failing >> bit & 1 == 1 {
                return Some(index);
            }
            space.values[2 * stage.slot][0] = up;
            space.values[2 * stage.slot + 1][0] = !up;
        }
        None
    }

    /// The outcome of the [`LANES`] words from `first`.
    pub(crate) fn block(&self, first: u64, space: &mut Workspace) -> BlockOutcome {
        self.literals(first, space);
        // Each earlier stage in order: its output's word is where its pull-up ties it to vdd.
        let mut inner = [[0u64; LANES]; 3];
        let (last, earlier) = self.placed.split_last().expect("the output stage");
        for (stage, placed) in self.inner.iter().zip(earlier) {
            let (up, down, shorted) = placed.switch(&mut space.values, &mut space.reach);
            for lane in 0..LANES {
                inner[0][lane] |= up[lane] & down[lane];
                inner[1][lane] |= shorted[lane];
                inner[2][lane] |= !up[lane] & !down[lane];
            }
            space.values[2 * stage.slot] = up;
            space.values[2 * stage.slot + 1] = up.map(|w| !w);
        }
        let (up, down, shorted) = last.switch(&mut space.values, &mut space.reach);
        // The gate computes the expression: high when it is true.
        let expected = self.program.evaluate(&space.values, &mut space.stack);
        BlockOutcome { up, down, shorted, expected, inner }
    }
}

/// SplitMix64's output function: a fast, well-mixed 64-bit hash (common practice, no source).
pub(crate) fn mix(mut z: u64) -> u64 {
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}
