//! Why a sized cell could not be timed.

use thiserror::Error;

use crate::budget::OverBudget;
use crate::timing::rc::RcError;

/// Why timing did not give delays.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum TimingError {
    /// A process whose values give no unit resistance.
    #[error(
        "the process gives no unit resistance: supply {supply_v} V must exceed the NMOS threshold {threshold_v} V, \
         and KP, unit width and length must be positive"
    )]
    Process {
        /// Supply.
        supply_v: f64,
        /// NMOS threshold.
        threshold_v: f64,
    },
    /// A load in fF with a process whose gate capacitance is 0, so no unit capacitance to count it in.
    #[error("the process's gate capacitance per um is 0, so a load of {load_ff} fF has no value in units of C")]
    NoUnitCapacitance {
        /// The load, fF.
        load_ff: f64,
    },
    /// A cell too large to time: every input's report lists its vector and nodes.
    #[error("delays are worked out for gates of up to {limit} input occurrences per network; this one has {count}")]
    TooLargeToTime {
        /// Input occurrences (transistors per network).
        count: usize,
        /// The limit.
        limit: usize,
    },
    /// A cell of several stages with more pins than its transitions are chosen over.
    #[error(
        "the worst transitions of a cell of several stages are chosen over every vector of its pins, for cells of up \
         to {limit} pins; this one has {count}"
    )]
    TooManyPins {
        /// The cell's pins.
        count: usize,
        /// The limit.
        limit: usize,
    },
    /// More paths than the elmore method lists as constraints.
    #[error("the elmore method lists every conducting path as a constraint; the {network} has {count}, above {limit}")]
    TooManyPaths {
        /// Which network.
        network: &'static str,
        /// How many.
        count: String,
        /// The limit.
        limit: usize,
    },
    /// The conducting network of a transition could not be solved (an internal inconsistency).
    #[error("transition of input '{input}' ({edge}): {why}")]
    Network {
        /// The input.
        input: String,
        /// The edge.
        edge: &'static str,
        /// What went wrong.
        why: NetworkFault,
    },
    /// More work than the budget allows.
    #[error("{0}")]
    OverBudget(OverBudget),
}

impl From<OverBudget> for TimingError {
    fn from(over: OverBudget) -> TimingError {
        TimingError::OverBudget(over)
    }
}

impl TimingError {
    /// Whether the error is an internal inconsistency: a bug when the binary meets it.
    pub fn is_internal(&self) -> bool {
        matches!(self, TimingError::Network { .. })
    }
}

/// Why a transition's conducting network cannot be timed: an internal inconsistency (a vector the
/// worst-transition rule gives always switches the output through one network to one rail).
#[derive(Debug, Clone, PartialEq, Error)]
pub enum NetworkFault {
    /// The output would connect to both rails.
    #[error("the output would connect to both rails")]
    BothRails,
    /// The output reaches no rail.
    #[error("the output does not reach the rail")]
    NoRail,
    /// The output is at its new level before the switch.
    #[error("the output already sits at the new level")]
    AlreadySwitched,
    /// The RC network has no first moments.
    #[error("{0}")]
    Solve(RcError),
    /// A path transition that is not a chain of devices from the output.
    #[error("the path is not a chain from the output")]
    NotAChain,
    /// A path transition that does not end on the rail.
    #[error("the path does not end on the rail")]
    OffTheRail,
    /// A second path to the rail conducts beside the chain (the network is not a tree).
    #[error("more than the path conducts to the rail in the timed network")]
    MoreThanThePath,
}
