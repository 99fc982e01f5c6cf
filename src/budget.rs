//! Work budgets: the long computations count their work in deterministic units and stop past a
//! documented budget (exit 2, naming the budget and how to raise it), so that no input within the
//! documented limits runs for long. Nothing is timed: one input gives one count on every machine.
//!
//! What one unit is depends on the computation ([`Work`]); each is about one elementary step (a
//! device visited, a multiply-add, one input occurrence on a 64-vector word), a few nanoseconds. The
//! README's table of limits gives each with the input size the default budget allows.

use std::cell::Cell;
use std::fmt;

/// The work budget when `--work-budget` is not given: 2^30 units, a few seconds of the slowest
/// counted work.
pub const DEFAULT_WORK_BUDGET: u64 = 1 << 30;

/// A counted computation, for messages.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Work {
    /// Timing every input's transitions (delays, and each order the search tries).
    Delays,
    /// The stack-order search.
    OrderSearch,
    /// The elmore method's interior-point solver.
    Elmore,
    /// Verification of a netlist on its input vectors.
    Verify,
    /// Min-area sizing against every input vector (its convex program's solver).
    Exact,
}

impl Work {
    /// What is counted, what one unit is, and what else to do.
    fn describe(self) -> (&'static str, &'static str, &'static str) {
        match self {
            Work::Delays => {
                ("timing the delays", "devices visited per transition timed and per input vector searched", "")
            }
            Work::OrderSearch => (
                "the stack-order search",
                "orders tried x the work of sizing and timing one order",
                ", or choose the order with --stack-order default or written",
            ),
            Work::Elmore => (
                "the elmore method's solver",
                "Newton iterations, at most 600, x the multiply-adds of one Newton step",
                ", or size the gate by longest-path or min-area",
            ),
            Work::Exact => (
                "min-area sizing over input vectors",
                "multiply-adds of the Newton steps: minimal vectors x devices^2 + devices^3 / 3 per step",
                ", or size against every path with --worst-case paths",
            ),
            Work::Verify => (
                "verification",
                "input vectors / 64 x input occurrences",
                ", or check fewer --random-vectors past 30 inputs",
            ),
        }
    }
}

/// How a count made before the work is done relates to the work.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Estimate {
    /// The work exactly.
    Exactly,
    /// The most it can take.
    UpTo,
    /// Less than it would take (counting stopped once past the budget).
    MoreThan,
}

/// A computation that needs more work than its budget.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct OverBudget {
    /// What ran out.
    pub work: Work,
    /// The units it would take, where counted before it ran (else it was stopped on the way).
    pub needed: Option<(Estimate, u128)>,
    /// The budget.
    pub budget: u64,
}

impl fmt::Display for OverBudget {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let (what, unit, advice) = self.work.describe();
        match self.needed {
            Some((Estimate::Exactly, needed)) => write!(f, "{what} would take {needed} work units ({unit})")?,
            Some((Estimate::UpTo, needed)) => write!(f, "{what} could take up to {needed} work units ({unit})")?,
            Some((Estimate::MoreThan, needed)) => {
                write!(f, "{what} could take more than {needed} work units ({unit})")?
            }
            None => write!(f, "{what} was stopped after {} work units ({unit})", self.budget)?,
        }
        write!(f, ", past the work budget of {}: raise it with --work-budget N{advice}", self.budget)
    }
}

impl std::error::Error for OverBudget {}

/// Counts the work of one computation against a budget.
#[derive(Debug)]
pub struct Meter {
    budget: u64,
    spent: Cell<u128>,
    /// The computation named in messages, when the counted parts run for a larger one.
    label: Cell<Option<Work>>,
}

impl Meter {
    /// A meter with `budget` units.
    pub fn new(budget: u64) -> Meter {
        Meter { budget, spent: Cell::new(0), label: Cell::new(None) }
    }

    /// A meter that never stops anything (for library calls that take no budget).
    pub fn unlimited() -> Meter {
        Meter::new(u64::MAX)
    }

    /// The budget.
    pub fn budget(&self) -> u64 {
        self.budget
    }

    /// Units spent so far.
    pub fn spent(&self) -> u128 {
        self.spent.get()
    }

    /// Name `work` in every message from here on (the search names itself while it times orders).
    pub fn label(&self, work: Work) {
        self.label.set(Some(work));
    }

    fn over(&self, work: Work, needed: Option<(Estimate, u128)>) -> OverBudget {
        OverBudget { work: self.label.get().unwrap_or(work), needed, budget: self.budget }
    }

    /// Refuse, before it starts, work of `units` (as `estimate` says) more than what is left.
    pub fn require(&self, units: u128, estimate: Estimate, work: Work) -> Result<(), OverBudget> {
        let total = self.spent.get().saturating_add(units);
        if total > u128::from(self.budget) { Err(self.over(work, Some((estimate, total)))) } else { Ok(()) }
    }

    /// Refuse work that would pass the whole budget on its own (work whose most is far above what
    /// it usually takes: it is then counted as it runs, with [`Meter::charge`]).
    pub fn fits(&self, units: u128, estimate: Estimate, work: Work) -> Result<(), OverBudget> {
        // Named as itself, whatever larger computation it runs for: its own size is the trouble.
        let over = OverBudget { work, needed: Some((estimate, units)), budget: self.budget };
        if units > u128::from(self.budget) { Err(over) } else { Ok(()) }
    }

    /// Count `units` done (or about to be); past the budget, stop.
    pub fn charge(&self, units: u128, work: Work) -> Result<(), OverBudget> {
        let total = self.spent.get().saturating_add(units);
        self.spent.set(total);
        if total > u128::from(self.budget) { Err(self.over(work, None)) } else { Ok(()) }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_meter_stops_past_its_budget() {
        let meter = Meter::new(100);
        assert!(meter.charge(60, Work::Delays).is_ok());
        assert!(meter.require(40, Estimate::Exactly, Work::Delays).is_ok());
        let refused = meter.require(41, Estimate::UpTo, Work::Delays).unwrap_err();
        assert_eq!(refused.needed, Some((Estimate::UpTo, 101)));
        assert_eq!(meter.spent(), 60);
        assert!(meter.charge(40, Work::Delays).is_ok());
        let stopped = meter.charge(1, Work::Delays).unwrap_err();
        assert_eq!((stopped.work, stopped.needed), (Work::Delays, None));
        meter.label(Work::OrderSearch);
        assert_eq!(meter.charge(1, Work::Delays).unwrap_err().work, Work::OrderSearch);
    }

    #[test]
    fn messages_name_the_budget_and_the_option() {
        let over = OverBudget { work: Work::Verify, needed: Some((Estimate::Exactly, 5000)), budget: 1000 };
        let text = over.to_string();
        assert!(text.starts_with("verification would take 5000 work units"), "{text}");
        assert!(text.contains("past the work budget of 1000: raise it with --work-budget N"), "{text}");
    }
}
