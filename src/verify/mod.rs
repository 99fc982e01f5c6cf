//! Verification: prove a sized gate's netlist right by switch-level simulation of every input
//! vector (or, past [`MAX_EXHAUSTIVE_INPUTS`] inputs, of a fixed pseudo-random sample).
//!
//! The check reads the gate the way a netlist reader would: the transistor list with its drain,
//! source, gate input and device type, never the series-parallel trees it was built from. An NMOS
//! conducts when its input is 1, a PMOS when it is 0; what is connected to each rail is found by
//! bit-parallel reachability over the conducting devices until nothing changes, 64 input vectors per
//! machine word. The expected output comes from the expression itself (the canonical text parsed
//! again, NOTs and all, so the negation-normal form is checked too), evaluated on the same words.
//! For every vector: the output must not be tied to both rails (the networks overlap), must be tied
//! to one (they leave a gap), the rails must never meet, and the level must equal the expression.

pub mod error;
mod netlist;
pub mod report;
mod simulate;

use std::collections::HashMap;
use std::sync::atomic::{AtomicU64, Ordering};

use crate::budget::{DEFAULT_WORK_BUDGET, Estimate, Meter, Work};
use crate::expr::parser;
use crate::figures::CellFigures;
use crate::network::NetworkKind;
use crate::paths::{EXACT_WORST_MAX_INPUTS, Vector};
use crate::sizing::WorstCase;

pub use error::VerifyError;
use netlist::Netlist;
pub use report::{Check, Coverage, Failure, NetworkBound, Verification, VerifyFailed};
use simulate::{InnerStage, LANES, Program, Simulator, WORD, WordOutcome};

/// Most inputs checked exhaustively (2^30 vectors, about a billion); past it a pseudo-random sample.
pub const MAX_EXHAUSTIVE_INPUTS: usize = 30;
/// Pseudo-random vectors checked past [`MAX_EXHAUSTIVE_INPUTS`] inputs, unless asked otherwise.
pub const DEFAULT_RANDOM_VECTORS: u64 = 1 << 20;
/// Most pseudo-random vectors one may ask for (as many as the largest exhaustive check).
pub const MAX_RANDOM_VECTORS: u64 = 1 << MAX_EXHAUSTIVE_INPUTS;
/// The fixed seed of the pseudo-random sample, so that a run can be repeated.
pub const DEFAULT_SEED: u64 = 0x005e_ed0f_ca11_ab1e;

/// Words per unit of work handed to a thread.
const CHUNK_WORDS: u64 = 1024;

/// How to verify.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct VerifyOptions {
    /// How many pseudo-random vectors to check past the exhaustive limit.
    pub random_vectors: u64,
    /// Seed of the pseudo-random sample.
    pub seed: u64,
    /// Threads to use (at least 1); small vector spaces use one whatever this says.
    pub threads: usize,
    /// The work budget: vectors / 64 x input occurrences ([`verify_work`]) may not pass it.
    pub work_budget: u64,
}

impl Default for VerifyOptions {
    fn default() -> VerifyOptions {
        VerifyOptions {
            random_vectors: DEFAULT_RANDOM_VECTORS,
            seed: DEFAULT_SEED,
            threads: std::thread::available_parallelism().map_or(1, |n| n.get()),
            work_budget: DEFAULT_WORK_BUDGET,
        }
    }
}

/// The vectors verification checks: every one up to [`MAX_EXHAUSTIVE_INPUTS`] inputs, else the sample.
pub fn planned_vectors(inputs: usize, options: &VerifyOptions) -> u64 {
    if inputs <= MAX_EXHAUSTIVE_INPUTS { 1u64 << inputs } else { options.random_vectors }
}

/// The work units of verifying a gate of `inputs` inputs and `occurrences` input occurrences: each
/// 64-vector word takes every occurrence through both its transistors and the expression.
pub fn verify_work(inputs: usize, occurrences: usize, options: &VerifyOptions) -> u128 {
    u128::from(planned_vectors(inputs, options).div_ceil(WORD)) * occurrences as u128
}

/// Verify a sized gate: simulate its netlist on every input vector (or a pseudo-random sample past
/// [`MAX_EXHAUSTIVE_INPUTS`] inputs) and compare with the expression. Refused before it starts when
/// its work ([`verify_work`]) would pass the budget.
pub fn verify(gate: &CellFigures, options: &VerifyOptions) -> Result<Verification, VerifyError> {
    if options.random_vectors > MAX_RANDOM_VECTORS {
        return Err(VerifyError::TooManyVectors { requested: options.random_vectors, limit: MAX_RANDOM_VECTORS });
    }
    let inputs: Vec<String> = gate.inputs.iter().map(|i| i.name.clone()).collect();
    let work = verify_work(inputs.len(), occurrences(gate), options);
    Meter::new(options.work_budget).require(work, Estimate::Exactly, Work::Verify).map_err(VerifyError::OverBudget)?;
    let input_index: HashMap<&str, usize> = inputs.iter().enumerate().map(|(i, n)| (n.as_str(), i)).collect();
    let (inner, netlist) = stage_netlists(gate, &inputs)?;
    let text = &gate.expression;
    // The canonical text of an accepted gate: its spaces may take it past the limit written text has.
    let parsed = parser::parse_within(text, text.len())
        .map_err(|error| VerifyError::Expression { text: text.clone(), error })?;
    let program = Program::new(&parsed.expr, &input_index)?;

    let planned = planned_vectors(inputs.len(), options);
    let coverage = if inputs.len() <= MAX_EXHAUSTIVE_INPUTS {
        Coverage::Exhaustive
    } else {
        Coverage::Random { seed: options.seed }
    };
    let simulator = Simulator::new(&inner, &netlist, &program, inputs.len(), coverage);
    let first = first_failure(&simulator, planned, options.threads.max(1));

    let failure = first.map(|(index, check, outcome)| {
        let bit = index % WORD;
        // A cell of several stages: the first stage, in order, that fails the check there.
        let stage = (!inner.is_empty()).then(|| {
            let failing = simulator.failing_stage(index / WORD, bit, check, &mut simulator.workspace());
            failing.map_or_else(|| gate.output.clone(), |s| inner[s].name.clone())
        });
        let mut words = vec![0; inputs.len()];
        simulator.inputs(index / WORD, &mut words);
        let values: Vec<(String, bool)> =
            inputs.iter().zip(&words).map(|(name, w)| (name.clone(), w >> bit & 1 == 1)).collect();
        Failure {
            check,
            vector: Vector { values },
            index,
            pull_down_conducts: outcome.down >> bit & 1 == 1,
            pull_up_conducts: outcome.up >> bit & 1 == 1,
            expected_output: outcome.expected >> bit & 1 == 1,
            stage,
        }
    });
    Ok(Verification {
        name: gate.name.clone(),
        expression: gate.expression.clone(),
        output: gate.output.clone(),
        input_count: inputs.len(),
        transistor_count: gate.transistors.len(),
        coverage,
        exhaustive_limit: MAX_EXHAUSTIVE_INPUTS,
        vectors_checked: failure.as_ref().map_or(planned, |f| f.index + 1),
        vectors_planned: planned,
        passed: failure.is_none(),
        failure,
        networks: bounds(gate),
    })
}

/// The netlist of each stage of the gate, the transistors grouped by the stage they name in order of
/// first appearance: every stage before the last with the slot (after the pins) of its output's word,
/// and the last's, which drives the output. A one-stage gate is one netlist, as a reader takes it.
fn stage_netlists(gate: &CellFigures, inputs: &[String]) -> Result<(Vec<InnerStage>, Netlist), VerifyError> {
    let mut stages: Vec<&str> = Vec::new();
    for transistor in &gate.transistors {
        if !stages.contains(&transistor.stage.as_str()) {
            stages.push(&transistor.stage);
        }
    }
    let mut index: HashMap<&str, usize> = inputs.iter().enumerate().map(|(i, n)| (n.as_str(), i)).collect();
    let Some((_, earlier)) = stages.split_last() else {
        return Ok((Vec::new(), Netlist::new(gate, &index)?));
    };
    let mut inner = Vec::with_capacity(earlier.len());
    for &stage in earlier {
        let transistors: Vec<&crate::figures::Transistor> =
            gate.transistors.iter().filter(|t| t.stage == stage).collect();
        let netlist = Netlist::of(stage, transistors.iter().copied(), &index)?;
        let slot = inputs.len() + inner.len();
        inner.push(InnerStage { name: stage.to_string(), netlist, slot });
        index.insert(stage, slot);
    }
    let last: Vec<&crate::figures::Transistor> =
        gate.transistors.iter().filter(|t| !earlier.contains(&t.stage.as_str())).collect();
    Ok((inner, Netlist::of(&gate.output, last.iter().copied(), &index)?))
}

/// The lowest-indexed failing vector among the first `planned`, with its check and word outcome.
fn first_failure(simulator: &Simulator, planned: u64, threads: usize) -> Option<(u64, Check, WordOutcome)> {
    let words = planned.div_ceil(WORD);
    let chunks = words.div_ceil(CHUNK_WORDS);
    let next_chunk = AtomicU64::new(0);
    let first_bad = AtomicU64::new(u64::MAX);
    let found: std::sync::Mutex<Option<(u64, Check, WordOutcome)>> = std::sync::Mutex::new(None);
    let work = || {
        let mut space = simulator.workspace();
        loop {
            let chunk = next_chunk.fetch_add(1, Ordering::Relaxed);
            if chunk >= chunks || chunk * CHUNK_WORDS * WORD > first_bad.load(Ordering::Relaxed) {
                break;
            }
            let end = ((chunk + 1) * CHUNK_WORDS).min(words);
            'blocks: for first in (chunk * CHUNK_WORDS..end).step_by(LANES) {
                let outcome = simulator.block(first, &mut space);
                for (lane, word) in (first..end.min(first + LANES as u64)).enumerate() {
                    let outcome = outcome.lane(lane);
                    let valid =
                        if (word + 1) * WORD > planned { (1u64 << (planned - word * WORD)) - 1 } else { u64::MAX };
                    let failing = outcome.failing().map(|bits| bits & valid);
                    let any = failing.iter().fold(0, |acc, bits| acc | bits);
                    if any != 0 {
                        let bit = any.trailing_zeros() as u64;
                        let check = Check::ALL[failing.iter().position(|bits| bits >> bit & 1 == 1).unwrap_or(0)];
                        let index = word * WORD + bit;
                        first_bad.fetch_min(index, Ordering::Relaxed);
                        let mut found = found.lock().unwrap_or_else(|e| e.into_inner());
                        if found.is_none_or(|(other, _, _)| index < other) {
                            *found = Some((index, check, outcome));
                        }
                        break 'blocks;
                    }
                }
            }
        }
    };
    let threads = threads.min(chunks as usize).max(1);
    if threads == 1 {
        work();
    } else {
        std::thread::scope(|scope| {
            for _ in 0..threads {
                scope.spawn(work);
            }
        });
    }
    found.into_inner().unwrap_or_else(|e| e.into_inner())
}

/// Input occurrences of the gate: its pull-down's transistors.
fn occurrences(gate: &CellFigures) -> usize {
    gate.transistors.iter().filter(|t| t.network == NetworkKind::PullDown).count()
}

/// Path bound and exact worst case of each network, from the sized gate.
fn bounds(gate: &CellFigures) -> Vec<NetworkBound> {
    // The networks are the output stage's: its inputs repeat where it has more occurrences than inputs.
    let repeated = match gate.stages.last() {
        Some(last) if gate.stages.len() > 1 => {
            let own = gate.transistors.iter().filter(|t| t.stage == last.stage && t.network == NetworkKind::PullDown);
            own.count() > last.inputs.len()
        }
        _ => occurrences(gate) > gate.inputs.len(),
    };
    gate.networks
        .iter()
        .map(|network| {
            let path_bound = network.worst_resistance;
            let (exact_worst, exact_worst_vector, note) = match (&network.exact_worst, repeated) {
                (_, false) => (
                    Some(path_bound),
                    network.worst_vector.clone(),
                    "no repeated inputs: the weakest path conducts alone, so the bound is exact".to_string(),
                ),
                (Some(exact), true) if gate.worst_case == WorstCase::Vectors => (
                    Some(exact.resistance),
                    Some(exact.vector.clone()),
                    format!(
                        "sized against every input vector: its worst vector, enumerated, at the target {}",
                        crate::number::format(network.target_resistance)
                    ),
                ),
                (Some(exact), true) => (
                    Some(exact.resistance),
                    Some(exact.vector.clone()),
                    format!("repeated inputs: every input vector enumerated (up to {EXACT_WORST_MAX_INPUTS} inputs)"),
                ),
                (None, true) => (
                    None,
                    None,
                    format!(
                        "repeated inputs, but more than {EXACT_WORST_MAX_INPUTS} inputs: exact worst case not computed; \
                         the path bound holds"
                    ),
                ),
            };
            let below_bound = exact_worst.is_some_and(|exact| exact < path_bound - 1e-9 * path_bound.max(1.0));
            NetworkBound { network: network.network, path_bound, exact_worst, exact_worst_vector, below_bound, note }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::expr::GateFunction;
    use crate::figures::Transistor;
    use crate::size_text;
    use crate::sizing::{Method, Plan};
    use proptest::prelude::*;

    /// A sized gate's figures (what verify reads), with the function it was read from (what the
    /// plain reference below evaluates).
    struct Sized {
        figures: CellFigures,
        function: GateFunction,
    }

    impl std::ops::Deref for Sized {
        type Target = CellFigures;
        fn deref(&self) -> &CellFigures {
            &self.figures
        }
    }

    impl std::ops::DerefMut for Sized {
        fn deref_mut(&mut self) -> &mut CellFigures {
            &mut self.figures
        }
    }

    fn sized(text: &str, method: Method) -> Sized {
        let cell = size_text(text, &Plan::new(method, 2.0, 1.0, None)).unwrap();
        Sized { figures: CellFigures::of(&cell), function: cell.stage().function.clone() }
    }

    fn options(threads: usize) -> VerifyOptions {
        VerifyOptions { random_vectors: 4096, seed: DEFAULT_SEED, threads, ..VerifyOptions::default() }
    }

    fn transistor<'a>(gate: &'a mut CellFigures, name: &str) -> &'a mut Transistor {
        gate.transistors.iter_mut().find(|t| t.name == name).expect("the transistor exists")
    }

    /// The netlist as the tests expect it, so that each mutation below means what its comment says.
    fn terminals(gate: &CellFigures) -> Vec<(String, String, String, String)> {
        gate.transistors.iter().map(|t| (t.name.clone(), t.input.clone(), t.drain.clone(), t.source.clone())).collect()
    }

    #[test]
    fn verification_keeps_to_its_work_budget() {
        // 12 inputs: 2^12 vectors / 64 = 64 words, x 12 occurrences = 768 units.
        let gate = sized("!(a & b & c & d & e & f & g & h & i & j & k & l)", Method::LongestPath);
        assert_eq!(verify_work(12, 12, &VerifyOptions::default()), 768);
        let under = VerifyOptions { work_budget: 767, ..options(1) };
        let Err(VerifyError::OverBudget(over)) = verify(&gate, &under) else { panic!("refused") };
        assert_eq!(over.needed, Some((Estimate::Exactly, 768)));
        assert!(verify(&gate, &VerifyOptions { work_budget: 768, ..options(1) }).unwrap().passed);
        // Past 30 inputs the sample counts: 4096 vectors are 64 words.
        assert_eq!(verify_work(40, 100, &options(1)), 64 * 100);
    }

    #[test]
    fn the_trade_s_gates_pass_on_every_vector() {
        for text in ["inv", "nand2", "nand8", "nor2", "nor8", "aoi21", "aoi222", "oai33", "!(a & b | a & c)", "!a & !b"]
        {
            for method in [Method::LongestPath, Method::MIN_AREA] {
                let result = verify(&sized(text, method), &options(2)).unwrap();
                assert!(result.passed, "{text}: {:?}", result.failure);
                assert_eq!(result.coverage, Coverage::Exhaustive);
                // n inputs have 2^n vectors (common practice, no source)
                assert_eq!(result.vectors_checked, 1 << result.input_count, "{text}");
            }
        }
    }

    #[test]
    fn a_pull_up_device_on_the_wrong_input_leaves_the_output_floating() {
        let mut gate = sized("nand2", Method::LongestPath);
        assert_eq!(
            terminals(&gate)[..2],
            [
                ("MN1".into(), "a".into(), "y".into(), "n1".into()),
                ("MN2".into(), "b".into(), "n1".into(), "vss".into())
            ]
        );
        transistor(&mut gate, "MP2").input = "a".into();
        // Derived by hand: at a=1 b=0 (vector 1) MP1 and MP2 (now on a) are off, MN2 is off: y floats.
        let result = verify(&gate, &options(1)).unwrap();
        let failure = result.failure.clone().expect("the mutation is caught");
        assert_eq!(failure.check, Check::NeitherConducts);
        assert_eq!(failure.index, 1);
        assert_eq!(failure.vector.to_string(), "a=1 b=0");
        assert!(!failure.pull_up_conducts && !failure.pull_down_conducts && failure.expected_output);
        assert_eq!(result.vectors_checked, 2);
        let error = result.outcome().unwrap_err();
        assert_eq!(crate::Error::from(error.clone()).exit_code(), crate::exit::EXIT_CHECK_FAILED);
        assert!(error.to_string().contains("never both off"), "{error}");
        assert!(error.to_string().contains("a=1 b=0"), "{error}");
    }

    #[test]
    fn a_failure_in_a_cell_of_several_stages_names_its_stage() {
        let forms = crate::logic::synthesize("and2").unwrap();
        let cell = crate::sizing::size_best(&forms, &Plan::new(Method::LongestPath, 2.0, 1.0, None)).unwrap();
        let plain = CellFigures::of(&cell);
        assert!(verify(&plain, &options(1)).unwrap().passed);
        // The NAND stage's second PMOS moved to a: derived by hand, at a=1 b=0 (vector 1) its PMOS are
        // both off and b holds its NMOS stack off, so y_n floats.
        let mut gate = plain.clone();
        transistor(&mut gate, "MP2_y_n").input = "a".into();
        let failure = verify(&gate, &options(1)).unwrap().failure.expect("caught");
        assert_eq!((failure.check, failure.index), (Check::NeitherConducts, 1));
        assert_eq!(failure.stage.as_deref(), Some("y_n"));
        let error = verify(&gate, &options(1)).unwrap().outcome().unwrap_err();
        assert!(error.to_string().ends_with("(a=1 b=0), in stage y_n"), "{error}");
        // The output inverter's PMOS moved to a: at a=0 b=0 (vector 0) y_n is high, so its NMOS is on
        // beside the PMOS, now on: y is tied to both rails.
        let mut gate = plain.clone();
        transistor(&mut gate, "MP1_y").input = "a".into();
        let failure = verify(&gate, &options(1)).unwrap().failure.expect("caught");
        assert_eq!((failure.check, failure.index), (Check::BothConduct, 0));
        assert_eq!(failure.stage.as_deref(), Some("y"));
        // A one-stage gate names no stage.
        let mut gate = sized("nand2", Method::LongestPath);
        transistor(&mut gate, "MP2").input = "a".into();
        assert_eq!(verify(&gate, &options(1)).unwrap().failure.expect("caught").stage, None);
    }

    #[test]
    fn a_series_device_moved_to_the_rail_ties_the_output_to_both() {
        let mut gate = sized("nand2", Method::LongestPath);
        transistor(&mut gate, "MN1").source = "vss".into();
        // Derived by hand: MN1 now alone from y to vss; at a=1 b=0 it and MP2 conduct together.
        let failure = verify(&gate, &options(1)).unwrap().failure.expect("caught");
        assert_eq!((failure.check, failure.index), (Check::BothConduct, 1));
        assert!(failure.pull_up_conducts && failure.pull_down_conducts);
    }

    #[test]
    fn complementary_networks_of_the_wrong_function_are_caught() {
        let mut gate = sized("nand2", Method::LongestPath);
        transistor(&mut gate, "MN1").input = "b".into();
        transistor(&mut gate, "MP1").input = "b".into();
        // Derived by hand: the netlist is now !(b & b) = !b; at a=0 b=1 (vector 2) it gives 0, NAND gives 1.
        let failure = verify(&gate, &options(1)).unwrap().failure.expect("caught");
        assert_eq!((failure.check, failure.index), (Check::WrongOutput, 2));
        assert!(failure.expected_output && failure.pull_down_conducts && !failure.pull_up_conducts);
    }

    #[test]
    fn a_path_between_the_rails_is_caught_even_with_the_output_floating() {
        let mut gate = sized("nand2", Method::LongestPath);
        transistor(&mut gate, "MN1").drain = "vdd".into();
        // Derived by hand: MN1 and MN2 now join vdd to vss at a=b=1, where both PMOS are off and y floats.
        let failure = verify(&gate, &options(1)).unwrap().failure.expect("caught");
        assert_eq!((failure.check, failure.index), (Check::RailsShorted, 3));
    }

    #[test]
    fn a_wrong_device_type_is_caught() {
        let mut gate = sized("inv", Method::LongestPath);
        transistor(&mut gate, "MP1").device_type = "nmos";
        // Derived by hand: two NMOS on a: at a=0 nothing conducts.
        let failure = verify(&gate, &options(1)).unwrap().failure.expect("caught");
        assert_eq!((failure.check, failure.index), (Check::NeitherConducts, 0));
        transistor(&mut gate, "MP1").device_type = "bjt";
        assert!(matches!(verify(&gate, &options(1)), Err(VerifyError::UnknownType { .. })));
        transistor(&mut gate, "MP1").input = "q".into();
        assert!(matches!(verify(&gate, &options(1)), Err(VerifyError::UnknownInput { .. })));
    }

    #[test]
    fn a_bridge_that_does_not_reduce_is_simulated_to_a_fixpoint() {
        // The bridge pull-down y-n1 (a), y-n2 (b), n1-n2 (c), n1-vss (d), n2-vss (e) conducts for
        // ad | be | ace | bcd (the classic bridge network; common practice, no source). Put it in
        // place of the series-parallel pull-down of the same function.
        let mut gate = sized("!(a & d | b & e | a & c & e | b & c & d)", Method::LongestPath);
        let template = gate.transistors[0].clone();
        gate.transistors.retain(|t| t.device_type == "pmos");
        for (name, input, drain, source) in [
            ("MB1", "a", "y", "n1"),
            ("MB2", "b", "y", "n2"),
            ("MB3", "c", "n1", "n2"),
            ("MB4", "d", "n1", "vss"),
            ("MB5", "e", "n2", "vss"),
        ] {
            gate.transistors.push(Transistor {
                name: name.into(),
                input: input.into(),
                drain: drain.into(),
                source: source.into(),
                ..template.clone()
            });
        }
        let input_index: HashMap<&str, usize> =
            gate.function.inputs.iter().enumerate().map(|(i, n)| (n.as_str(), i)).collect();
        let netlist = Netlist::new(&gate, &input_index).unwrap();
        assert!(netlist.node_count > 3 && netlist.edges.len() >= 5, "the bridge stays unreduced");
        let result = verify(&gate, &options(1)).unwrap();
        assert!(result.passed, "{:?}", result.failure);
        assert_eq!(reference_first_failure(&gate), None);
        // With the bridging device on b instead of c: inputs are a, d, b, e, c (first appearance), so
        // vector 6 is d=1 b=1; MB2, MB3 and MB4 then join y to vss while f = 0 keeps the pull-up on
        // (derived by hand).
        transistor(&mut gate, "MB3").input = "b".into();
        let failure = verify(&gate, &options(1)).unwrap().failure.expect("caught");
        assert_eq!(Some((failure.index, failure.check)), reference_first_failure(&gate));
        assert_eq!((failure.index, failure.check), (6, Check::BothConduct));
    }

    #[test]
    fn the_first_failure_is_the_lowest_vector_whatever_the_threads() {
        // 20 inputs: a fault seen only when every input is 1, the last of 2^20 vectors.
        let names: Vec<String> = (0..20).map(|i| format!("x{i}")).collect();
        let mut gate = sized(&format!("!({})", names.join(" & ")), Method::LongestPath);
        let last = gate.transistors.iter().position(|t| t.source == "vss").unwrap();
        gate.transistors[last].source = "nowhere".into();
        for threads in [1, 2, 3] {
            let result = verify(&gate, &options(threads)).unwrap();
            let failure = result.failure.expect("caught");
            assert_eq!((failure.check, failure.index), (Check::NeitherConducts, (1 << 20) - 1), "{threads}");
            assert_eq!(result.vectors_checked, 1 << 20);
        }
    }

    #[test]
    fn past_the_limit_a_stated_sample_is_checked() {
        let names: Vec<String> = (0..=MAX_EXHAUSTIVE_INPUTS).map(|i| format!("x{i}")).collect();
        let mut gate = sized(&format!("!({})", names.join(" & ")), Method::LongestPath);
        let result = verify(&gate, &options(2)).unwrap();
        assert!(result.passed);
        assert_eq!(result.coverage, Coverage::Random { seed: DEFAULT_SEED });
        assert_eq!((result.vectors_checked, result.vectors_planned), (4096, 4096));
        // A pull-down that never reaches vss shows only at all ones, which the sample always holds.
        let last = gate.transistors.iter().position(|t| t.source == "vss").unwrap();
        gate.transistors[last].source = "nowhere".into();
        let first = verify(&gate, &options(1)).unwrap().failure.expect("caught");
        assert_eq!((first.check, first.index), (Check::NeitherConducts, 1));
        assert!(first.vector.values.iter().all(|(_, v)| *v));
        let too_many = VerifyOptions { random_vectors: MAX_RANDOM_VECTORS + 1, ..options(1) };
        assert!(matches!(verify(&gate, &too_many), Err(VerifyError::TooManyVectors { .. })));
    }

    #[test]
    fn random_vectors_are_repeatable_and_spread() {
        let names: Vec<String> = (0..40).map(|i| format!("x{i}")).collect();
        let gate = sized(&format!("!({})", names.join(" | ")), Method::LongestPath);
        let simulator_inputs = |word| {
            let input_index: HashMap<&str, usize> =
                gate.function.inputs.iter().enumerate().map(|(i, n)| (n.as_str(), i)).collect();
            let netlist = Netlist::new(&gate, &input_index).unwrap();
            let program = Program::new(&parser::parse(&gate.function.text).unwrap().expr, &input_index).unwrap();
            let simulator = Simulator::new(&[], &netlist, &program, 40, Coverage::Random { seed: 7 });
            let mut words = vec![0; 40];
            simulator.inputs(word, &mut words);
            words
        };
        assert_eq!(simulator_inputs(5), simulator_inputs(5));
        let ones: u32 = (1..64).map(|w| simulator_inputs(w).iter().map(|x| x.count_ones()).sum::<u32>()).sum();
        // About half the bits set: 63 words x 40 inputs x 64 bits / 2 = 80640 (fair coin; common practice)
        assert!((78_000..83_000).contains(&ones), "{ones}");
    }

    #[test]
    fn the_exact_worst_case_is_reported_where_it_is_below_the_bound() {
        // Majority-like !(ab | bc | ac), longest-path: every pull-up path of three 1/3 R devices has one
        // device doubled by its parallel partner on the same input, so the exact worst is 2.5 / 3 R
        // (derived by hand from the series-parallel rules).
        let result = verify(&sized("!(a & b | b & c | a & c)", Method::LongestPath), &options(1)).unwrap();
        let up = &result.networks[1];
        assert!((up.path_bound - 1.0).abs() < 1e-12);
        assert!((up.exact_worst.unwrap() - 2.5 / 3.0).abs() < 1e-12);
        assert!(up.below_bound && !result.networks[0].below_bound);
    }

    #[test]
    fn a_sizing_over_vectors_reports_each_network_at_its_target() {
        // Sized against every input vector, each network's worst vector sits on its target (scaling
        // every width by s divides every resistance by s, so the least area puts the worst vector
        // there; docs/model.md section 10); the carry's pull-up path bound stays above it.
        let method = Method::with(crate::sizing::MethodName::MinArea, WorstCase::Vectors).unwrap();
        let result = verify(&sized("!(a & b | c & (a | b))", method), &options(1)).unwrap();
        for network in &result.networks {
            assert!((network.exact_worst.unwrap() - 1.0).abs() < 1e-9, "{network:?}");
            assert!(network.note.starts_with("sized against every input vector"), "{}", network.note);
            assert!(network.exact_worst_vector.is_some());
        }
        assert!(result.networks[1].path_bound > 1.2 && result.networks[1].below_bound);
    }

    /// The plain reference: per vector, components of the conducting switches (union-find) and the
    /// expression from the gate function's tree (not the parsed text verify uses).
    fn reference_first_failure(gate: &Sized) -> Option<(u64, Check)> {
        fn find(parent: &mut [usize], mut x: usize) -> usize {
            while parent[x] != x {
                parent[x] = parent[parent[x]];
                x = parent[x];
            }
            x
        }
        let mut names: Vec<&str> = vec!["vdd", "vss", &gate.output];
        for t in &gate.transistors {
            for node in [&t.drain, &t.source] {
                if !names.contains(&node.as_str()) {
                    names.push(node);
                }
            }
        }
        let index = |name: &str| names.iter().position(|n| *n == name).unwrap();
        let inputs = &gate.function.inputs;
        for vector in 0..1u64 << inputs.len() {
            let values: Vec<bool> = (0..inputs.len()).map(|i| vector >> i & 1 == 1).collect();
            let mut parent: Vec<usize> = (0..names.len()).collect();
            for t in &gate.transistors {
                let value = values[inputs.iter().position(|n| *n == t.input).unwrap()];
                if value == (t.device_type == "nmos") {
                    let (a, b) = (find(&mut parent, index(&t.drain)), find(&mut parent, index(&t.source)));
                    parent[a] = b;
                }
            }
            let [vdd, vss, y] = [0, 1, 2].map(|n| find(&mut parent, n));
            let (up, down, expected) = (y == vdd, y == vss, !gate.function.evaluate(&values));
            let check = if up && down {
                Some(Check::BothConduct)
            } else if vdd == vss {
                Some(Check::RailsShorted)
            } else if !up && !down {
                Some(Check::NeitherConducts)
            } else if up != expected {
                Some(Check::WrongOutput)
            } else {
                None
            };
            if let Some(check) = check {
                return Some((vector, check));
            }
        }
        None
    }

    /// A random AND/OR tree over up to `inputs` names, as text.
    fn tree(inputs: usize) -> impl Strategy<Value = String> {
        let leaf = (0..inputs).prop_map(|i| format!("x{i}"));
        leaf.prop_recursive(4, 24, 4, |inner| {
            (prop::collection::vec(inner, 2..4), any::<bool>())
                .prop_map(|(children, and)| format!("({})", children.join(if and { " & " } else { " | " })))
        })
    }

    /// `!(t)`, or its De Morgan form with the NOTs pushed to the inputs.
    fn gate_text() -> impl Strategy<Value = String> {
        (1usize..=12).prop_flat_map(tree).prop_flat_map(|t| {
            let pushed = t.replace('&', "#").replace('|', "&").replace('#', "|").replace('x', "!x");
            prop_oneof![Just(format!("!{t}")), Just(pushed)]
        })
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(128))]

        #[test]
        fn every_sized_gate_verifies(text in gate_text(), min_area in any::<bool>()) {
            let method = if min_area { Method::MIN_AREA } else { Method::LongestPath };
            let gate = sized(&text, method);
            let result = verify(&gate, &options(2)).unwrap();
            prop_assert!(result.passed, "{}: {:?}", text, result.failure);
            prop_assert_eq!(result.vectors_checked, 1u64 << gate.function.inputs.len());
        }

        #[test]
        fn a_mutated_netlist_fails_where_the_plain_reference_says(
            text in gate_text(),
            device in any::<prop::sample::Index>(),
            other in any::<prop::sample::Index>(),
            kind in 0..4u8,
        ) {
            let mut gate = sized(&text, Method::LongestPath);
            let count = gate.transistors.len();
            let donor = gate.transistors[other.index(count)].clone();
            let target = &mut gate.transistors[device.index(count)];
            match kind {
                0 => target.input = donor.input,
                1 => target.drain = donor.source,
                2 => target.source = donor.drain,
                _ => target.device_type = if target.device_type == "nmos" { "pmos" } else { "nmos" },
            }
            let result = verify(&gate, &options(2)).unwrap();
            let found = result.failure.as_ref().map(|f| (f.index, f.check));
            prop_assert_eq!(found, reference_first_failure(&gate), "{}", text);
        }
    }
}
