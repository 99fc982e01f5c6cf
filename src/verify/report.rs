//! What verification reports: the checks, how the vectors were chosen, the first failure, each
//! network's path bound and exact worst case.

use thiserror::Error;

use crate::network::NetworkKind;
use crate::paths::Vector;

/// A gate that fails verification: its name and the first failing vector.
#[derive(Debug, Clone, PartialEq, Error)]
#[error(
    "'{name}' fails verification: {} does not hold at vector {} ({}){}",
    failure.check.describe(),
    failure.index,
    failure.vector,
    failure.stage.as_ref().map_or_else(String::new, |stage| format!(", in stage {stage}"))
)]
pub struct VerifyFailed {
    /// The gate.
    pub name: String,
    /// The check and the vector.
    pub failure: Failure,
}

/// Which check a vector failed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Check {
    /// The output is tied to both rails: pull-up and pull-down conduct together.
    BothConduct,
    /// A path of conducting devices joins vdd and vss without the output being tied to them.
    RailsShorted,
    /// The output is tied to neither rail: both networks are off and it floats.
    NeitherConducts,
    /// The output is driven to the wrong level.
    WrongOutput,
}

impl Check {
    /// Every check, in the order they are judged for one vector.
    pub const ALL: [Check; 4] = [Check::BothConduct, Check::RailsShorted, Check::NeitherConducts, Check::WrongOutput];

    /// What the check asks, for reports.
    pub fn describe(self) -> &'static str {
        match self {
            Check::BothConduct => "pull-up and pull-down never both conduct",
            Check::RailsShorted => "no conducting path joins vdd and vss",
            Check::NeitherConducts => "pull-up and pull-down are never both off",
            Check::WrongOutput => "the output equals the expression",
        }
    }

    /// The short name used in JSON and CSV.
    pub fn name(self) -> &'static str {
        match self {
            Check::RailsShorted => "rails-shorted",
            Check::BothConduct => "both-conduct",
            Check::NeitherConducts => "neither-conducts",
            Check::WrongOutput => "wrong-output",
        }
    }
}

/// How the vectors were chosen.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case", tag = "kind")]
pub enum Coverage {
    /// Every one of the 2^n input vectors.
    Exhaustive,
    /// A pseudo-random sample (more inputs than [`MAX_EXHAUSTIVE_INPUTS`]): vector 0 is all zeros,
    /// vector 1 all ones, the rest from a counter-based generator with this seed.
    Random {
        /// The seed.
        seed: u64,
    },
}

/// The first vector that failed, and what the switches did there.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Failure {
    /// Which check.
    pub check: Check,
    /// The input vector.
    pub vector: Vector,
    /// Its place in the order vectors are checked (for exhaustive checks, the vector read as a
    /// binary number with the first input as bit 0).
    pub index: u64,
    /// Whether the output is tied to vss.
    pub pull_down_conducts: bool,
    /// Whether the output is tied to vdd.
    pub pull_up_conducts: bool,
    /// The output the expression gives.
    pub expected_output: bool,
    /// In a cell of several stages, the first stage (by the net it drives) that fails the check at
    /// this vector: an earlier stage's output tied to both rails or to neither, or the output
    /// stage's; absent for a one-stage gate.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub stage: Option<String>,
}

/// The path bound and the exact worst case of one network.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct NetworkBound {
    /// Which network.
    pub network: NetworkKind,
    /// The weakest path's resistance (an upper bound on the worst case), in units of R.
    pub path_bound: f64,
    /// The exact worst case over input vectors, where known, in units of R.
    pub exact_worst: Option<f64>,
    /// A vector that reaches it, where it was computed by enumeration.
    pub exact_worst_vector: Option<Vector>,
    /// Whether the exact worst case is below the path bound (only repeated inputs make it so).
    pub below_bound: bool,
    /// How the exact worst case was found, or why it was not.
    pub note: String,
}

/// The outcome of verifying one gate.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Verification {
    /// Cell name.
    pub name: String,
    /// The expression in canonical form.
    pub expression: String,
    /// Output node.
    pub output: String,
    /// Number of distinct inputs.
    pub input_count: usize,
    /// Number of transistors simulated.
    pub transistor_count: usize,
    /// How the vectors were chosen.
    pub coverage: Coverage,
    /// The most inputs checked exhaustively.
    pub exhaustive_limit: usize,
    /// Vectors the check covers: all of them when it passed, up to and including the failing one
    /// otherwise (every vector before it passed).
    pub vectors_checked: u64,
    /// Vectors planned (2^n, or the sample size).
    pub vectors_planned: u64,
    /// Whether every check held for every vector checked.
    pub passed: bool,
    /// The first failing vector, if any.
    pub failure: Option<Failure>,
    /// Path bound and exact worst case, pull-down then pull-up.
    pub networks: Vec<NetworkBound>,
}

impl Verification {
    /// `Ok` when every check held, else which check failed and the first failing vector (exit
    /// code 1).
    pub fn outcome(&self) -> Result<(), VerifyFailed> {
        match &self.failure {
            None => Ok(()),
            Some(failure) => Err(VerifyFailed { name: self.name.clone(), failure: failure.clone() }),
        }
    }
}
