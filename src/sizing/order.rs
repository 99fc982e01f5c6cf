//! The stack-order search, a sizing strategy that calls timing: choose each series stack's order
//! (which member touches the output) to minimise the worst Elmore delay, or the worst of one named
//! critical input, and report the gain against the default order of
//! [`crate::network::Network::ordered`]. For the elmore method, whose delays all meet the bound
//! whatever the order, the order that needs the least total W/L is chosen instead.
//!
//! Every combination is tried when there are few; otherwise a local search moves one member of one
//! stack at a time to every other position and keeps any move that helps, until none does or the
//! budget of evaluated orders is spent. The work is counted ([`crate::budget`]): after the default
//! order, the orders still to try times the work that one took must fit in what is left of the
//! work budget, or the search is refused before it starts.

use crate::budget::{Estimate, Meter, Work};
use crate::cell::{SizedStage, StackOrderReport, describe};
use crate::logic::{CellLogic, StageLogic};
use crate::network::{Network, NetworkKind, Node, Sides};
use crate::sizing::build;
use crate::sizing::error::SizingError;
use crate::sizing::plan::Plan;
use crate::sizing::stage::{Arrangement, size_stage};
use crate::timing::time_in_rc;

/// Most combinations tried one by one (the elmore method solves a program for each, so fewer).
const EXHAUSTIVE_LIMIT: usize = 720;
const EXHAUSTIVE_LIMIT_ELMORE: usize = 24;
/// Most rounds of the local search.
const ROUNDS: usize = 10;
/// Most orders evaluated in all (the elmore method: fewer, each is a program to solve).
const BUDGET: usize = 2000;
const BUDGET_ELMORE: usize = 200;
/// Most input occurrences (transistors per network) of a gate whose orders are searched.
pub const MAX_SEARCH_OCCURRENCES: usize = 64;

/// The series stacks in pre-order: (network, member count).
fn stacks(node: &Node, side: NetworkKind, out: &mut Vec<(NetworkKind, usize)>) {
    match node {
        Node::Device(_) => {}
        Node::Parallel(branches) => branches.iter().for_each(|b| stacks(b, side, out)),
        Node::Series(members) => {
            out.push((side, members.len()));
            members.iter().for_each(|m| stacks(m, side, out));
        }
    }
}

/// `node` with stack `k` (pre-order) in the order `orders[k]` of its members.
fn apply(node: &Node, orders: &[Vec<usize>], next: &mut usize) -> Node {
    match node {
        Node::Device(_) => node.clone(),
        Node::Parallel(branches) => Node::Parallel(branches.iter().map(|b| apply(b, orders, next)).collect()),
        Node::Series(members) => {
            let id = *next;
            *next += 1;
            // Each member moved once into its place (an order is a permutation), never copied.
            let mut rebuilt: Vec<Node> = members.iter().map(|m| apply(m, orders, next)).collect();
            Node::Series(
                orders[id].iter().map(|&i| std::mem::replace(&mut rebuilt[i], Node::Series(Vec::new()))).collect(),
            )
        }
    }
}

fn next_permutation(order: &mut [usize]) -> bool {
    let Some(pivot) = (1..order.len()).rev().find(|&i| order[i - 1] < order[i]) else {
        return false;
    };
    let successor = (pivot..order.len()).rev().find(|&i| order[i] > order[pivot - 1]).unwrap_or(pivot);
    order.swap(pivot - 1, successor);
    order[pivot..].reverse();
    true
}

struct Search<'a> {
    meter: &'a Meter,
    logic: &'a CellLogic,
    stage: &'a StageLogic,
    plan: &'a Plan,
    critical: Option<&'a str>,
    base: Sides<Network>,
    tried: usize,
}

impl Search<'_> {
    fn trees(&self, orders: &[Vec<usize>]) -> Sides<Network> {
        let mut next = 0;
        self.base.clone().map(|_, network| Network { root: apply(&network.root, orders, &mut next), ..network })
    }

    /// The score of an order (lower is better) and its stage; `None` where the elmore method finds
    /// no widths for it.
    fn score(&mut self, orders: &[Vec<usize>]) -> Result<Option<(f64, SizedStage)>, SizingError> {
        self.tried += 1;
        let arrangement = Arrangement::Given(self.trees(orders));
        let elmore = self.plan.method.sizes_by_delay();
        let stage = match size_stage(self.stage, self.plan, &arrangement, self.meter) {
            Ok(stage) => stage,
            Err(error) if error.is_infeasible() && elmore => return Ok(None),
            Err(error) => return Err(error),
        };
        if elmore {
            let total = stage.networks.values().flat_map(|n| &n.widths).sum();
            return Ok(Some((total, stage)));
        }
        let cell = build::cell(self.logic, self.plan, stage, None);
        let timing = time_in_rc(&cell, &self.plan.conditions, self.meter)?;
        let worst = timing.worst_delay(self.critical).map_or(0.0, |d| d.elmore_rc);
        let stage = cell.stages.into_iter().next().expect("one stage");
        Ok(Some((worst, stage)))
    }
}

/// Size the cell's one stage in the best stack order found, with the report against the default
/// order (which honours the critical input), its work counted on `meter`.
pub fn search(
    logic: &CellLogic,
    plan: &Plan,
    critical: Option<(usize, &str)>,
    meter: &Meter,
) -> Result<(SizedStage, StackOrderReport), SizingError> {
    let stage = &logic.stages[0];
    let function = &stage.function;
    let occurrences = function.literals.len();
    if occurrences > MAX_SEARCH_OCCURRENCES {
        return Err(SizingError::TooLargeToSearch { count: occurrences, limit: MAX_SEARCH_OCCURRENCES });
    }
    // The default order is the one the cell gets without a search.
    let default = Arrangement::Default(critical.map(|(index, _)| index));
    let default_stage = size_stage(stage, plan, &default, meter)?;
    let base = default_stage.networks.as_ref().map(|_, n| n.network.clone());
    let mut shape = Vec::new();
    for (side, network) in base.iter() {
        stacks(&network.root, side, &mut shape);
    }
    let identity: Vec<Vec<usize>> = shape.iter().map(|&(_, len)| (0..len).collect()).collect();
    let mut search = Search { meter, logic, stage, plan, critical: critical.map(|(_, name)| name), base, tried: 0 };
    meter.label(Work::OrderSearch);
    let before = meter.spent();
    let Some((default_value, default_stage)) = search.score(&identity)? else { unreachable_default()? };
    let per_order = meter.spent() - before;
    let mut best = (default_value, default_stage, identity.clone());
    let elmore = plan.method.sizes_by_delay();
    let limit = if elmore { EXHAUSTIVE_LIMIT_ELMORE } else { EXHAUSTIVE_LIMIT };
    let mut combinations: usize = 1;
    for &(_, len) in &shape {
        combinations = (1..=len).fold(combinations, usize::saturating_mul);
    }
    let exhaustive = combinations <= limit;
    let budget = if elmore { BUDGET_ELMORE } else { BUDGET };
    // Orders still to try, at most: every other combination, or the local search's rounds of
    // moves up to its budget of orders.
    let moves: usize = shape.iter().map(|&(_, len)| len * len.saturating_sub(1)).sum();
    let remaining = if exhaustive { combinations - 1 } else { (budget - 1).min(ROUNDS.saturating_mul(moves)) };
    meter.require(per_order.saturating_mul(remaining as u128), Estimate::UpTo, Work::OrderSearch)?;
    let better = |value: f64, best: f64| value < best - 1e-12 * best.abs();
    if exhaustive {
        let mut orders = identity.clone();
        loop {
            // Odometer over the stacks' permutations.
            let mut stack = 0;
            while stack < orders.len() && !next_permutation(&mut orders[stack]) {
                orders[stack].sort_unstable();
                stack += 1;
            }
            if stack == orders.len() {
                break;
            }
            if let Some((value, stage)) = search.score(&orders)?
                && better(value, best.0)
            {
                best = (value, stage, orders.clone());
            }
        }
    } else {
        'rounds: for _ in 0..ROUNDS {
            let mut improved = false;
            for stack in 0..shape.len() {
                let len = shape[stack].1;
                for from in 0..len {
                    for to in 0..len {
                        if from == to {
                            continue;
                        }
                        if search.tried >= budget {
                            break 'rounds;
                        }
                        let mut orders = best.2.clone();
                        let member = orders[stack].remove(from);
                        orders[stack].insert(to, member);
                        if let Some((value, stage)) = search.score(&orders)?
                            && better(value, best.0)
                        {
                            best = (value, stage, orders);
                            improved = true;
                        }
                    }
                }
            }
            if !improved {
                break;
            }
        }
    }
    let objective = if elmore {
        "total W/L (elmore method)".to_string()
    } else {
        match critical {
            Some((_, input)) => format!("worst Elmore delay of input {input}"),
            None => "worst Elmore delay".to_string(),
        }
    };
    let (chosen_value, stage, _) = best;
    let report = StackOrderReport {
        objective,
        default_value,
        chosen_value,
        gain_percent: if default_value > 0.0 { (default_value - chosen_value) / default_value * 100.0 } else { 0.0 },
        orders_tried: search.tried,
        exhaustive,
        networks: stage.networks.values().map(|n| describe(&n.network)).collect(),
    };
    Ok((stage, report))
}

/// The default order sized once already; a second failure is an internal inconsistency.
fn unreachable_default<T>() -> Result<T, SizingError> {
    Err(SizingError::DefaultOrderChanged)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_search_is_refused_when_its_orders_would_pass_the_budget() {
        use crate::budget::Estimate;
        use crate::sizing::plan::{Method, Order};
        // NAND4: one stack of 4 in the pull-down, 4! = 24 orders, each timed alike.
        let logic = crate::logic::read_cell("nand4", &[]).unwrap();
        let plan = Plan::new(Method::LongestPath, 2.0, 1.0, None);
        let meter = Meter::unlimited();
        let (_, report) = search(&logic, &plan, None, &meter).unwrap();
        assert_eq!((report.orders_tried, report.exhaustive), (24, true));
        // Each order took the same work: a budget one unit short of it all is refused before the
        // search, with the projection (the default order's sizing, then 24 orders of equal work).
        let spent = meter.spent();
        let searched =
            |budget: u128| Plan { order: Order::Search { critical: None }, budget: budget as u64, ..plan.clone() };
        let Err(SizingError::OverBudget(over)) = crate::sizing::size(&logic, &searched(spent - 1)) else {
            panic!("refused")
        };
        assert_eq!((over.work, over.needed), (Work::OrderSearch, Some((Estimate::UpTo, spent))));
        assert!(crate::sizing::size(&logic, &searched(spent)).is_ok());
    }

    #[test]
    fn permutations_in_order() {
        let mut order = vec![0, 1, 2];
        let mut seen = vec![order.clone()];
        while next_permutation(&mut order) {
            seen.push(order.clone());
        }
        assert_eq!(seen.len(), 6);
        assert_eq!(seen[5], vec![2, 1, 0]);
    }
}
