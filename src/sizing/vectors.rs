//! The min-area method against the worst case over input vectors (docs/model.md section 10): each
//! network of a stage sized by the exact program of `crate::exact`, its work counted on the run's
//! meter. A network without repeated inputs needs no program: each of its minimal vectors turns on
//! one lone path, so the path rule's closed form is the optimum, and it is taken as is.

use crate::budget::{Meter, OverBudget, Work};
use crate::exact::{self, ExactError};
use crate::network::{Network, Sides};
use crate::optimize::Budget;
use crate::sizing::error::SizingError;
use crate::sizing::plan::Plan;
use crate::sizing::rules::{self, Rule};

/// Whether some input gates more than one device of `network`.
pub fn has_repeated_inputs(network: &Network) -> bool {
    let mut seen = std::collections::HashSet::with_capacity(network.inputs.len());
    !network.inputs.iter().all(|input| seen.insert(*input))
}

/// The least W/L of each device: the process's minimum width as W/L, or the path rule's width
/// where that is smaller (so that a device no vector needs keeps a drawable width, and the exact
/// optimum is never above the path rule's total: the closed form stays feasible).
pub fn lower_bounds(closed: &[f64], plan: &Plan) -> Vec<f64> {
    let minimum = plan.process.min_width_nm / plan.process.unit_width_nm;
    closed.iter().map(|&w| w.min(minimum)).collect()
}

/// The multiply-adds of one Newton step of a network's program, in work units: for each minimal
/// vector the Hessian block of the devices it turns on (at most the network's devices, squared),
/// then the dense factorisation of the devices' Newton system.
fn step_units(devices: usize, vectors: usize) -> u128 {
    let n = devices as u128;
    vectors as u128 * (n * n + n) + n * n * n / 3 + n * n
}

/// W/L of every device of each network of one stage (`input_count` inputs), sized against every
/// input vector, within the work left on `meter`.
pub fn widths(
    networks: &Sides<Network>,
    input_count: usize,
    plan: &Plan,
    meter: &Meter,
) -> Result<Sides<Vec<f64>>, SizingError> {
    let pull_down = network_widths(&networks.pull_down, input_count, plan, meter)?;
    let pull_up = network_widths(&networks.pull_up, input_count, plan, meter)?;
    Ok(Sides::new(pull_down, pull_up))
}

/// One network sized against every input vector.
pub fn network_widths(
    network: &Network,
    input_count: usize,
    plan: &Plan,
    meter: &Meter,
) -> Result<Vec<f64>, SizingError> {
    let kind = network.kind;
    let closed = rules::widths(network, Rule::MinArea, plan.reference_width(kind));
    if !has_repeated_inputs(network) {
        return Ok(closed);
    }
    let refused = |error: ExactError| SizingError::Exact { network: kind.name(), error };
    // Which vectors conduct: each device once per word of 64 vectors.
    let words = (1u128 << input_count.min(exact::MAX_INPUTS)).div_ceil(64);
    if input_count <= exact::MAX_INPUTS {
        meter.charge(words * network.device_count() as u128, Work::Exact)?;
    }
    let vectors = exact::minimal_on_sets(network, input_count).map_err(refused)?.len();
    let step = step_units(network.device_count(), vectors);
    // The solver counts Newton iterations x (variables + constraints + 1); the meter counts their
    // multiply-adds: the iterations the work left allows, in the solver's units.
    let left = u128::from(meter.budget()).saturating_sub(meter.spent());
    let iterations = left / step.max(1);
    let per_iteration = (network.device_count() + vectors + 1) as u128;
    let budget = Budget { work: u64::try_from(iterations.saturating_mul(per_iteration)).unwrap_or(u64::MAX) };
    let lower = lower_bounds(&closed, plan);
    let target = plan.target(kind);
    let sizing = match exact::size_network(network, input_count, plan.unit_resistance(kind), target, &lower, budget) {
        Ok(sizing) => sizing,
        Err(ExactError::OverBudget { .. }) => {
            meter.charge(left, Work::Exact)?;
            return Err(OverBudget { work: Work::Exact, needed: None, budget: meter.budget() }.into());
        }
        Err(error) => return Err(refused(error)),
    };
    meter.charge(sizing.iterations as u128 * step, Work::Exact)?;
    // The solver's point lies strictly inside every constraint; scaling every width by s divides
    // every resistance by s, so scaled by worst / target the worst vector sits on the target (a
    // device held at its lower bound stays there, which only lowers resistances).
    let scale = sizing.worst_resistance / target;
    Ok(if scale < 1.0 && scale > 0.0 {
        sizing.widths.iter().zip(&lower).map(|(w, l)| (w * scale).max(*l)).collect()
    } else {
        sizing.widths
    })
}

/// The total W/L the min-area method over input vectors gives the networks (the comparison a cell
/// sized otherwise reports), within `meter`.
pub fn total(networks: &Sides<Network>, input_count: usize, plan: &Plan, meter: &Meter) -> Result<f64, SizingError> {
    let widths = widths(networks, input_count, plan, meter)?;
    Ok(widths.values().flatten().sum())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::budget::DEFAULT_WORK_BUDGET;
    use crate::expr::read_gate;
    use crate::sizing::plan::{Method, MethodName, WorstCase};

    fn plan() -> Plan {
        Plan::new(Method::with(MethodName::MinArea, WorstCase::Vectors).unwrap(), 2.0, 1.0, None)
    }

    #[test]
    fn the_carry_pull_up_takes_the_exact_optimum() {
        // 22.662905 W/L for the pull-up of !(a & b | c & (a | b)) at mobility ratio 2: scipy's SLSQP
        // on the same convex program (scipy from PyPI, re-solved by tests/reference/vectors.rs).
        let gate = read_gate("!(a & b | c & (a | b))").unwrap();
        let networks = Network::pair(&gate);
        let meter = Meter::new(DEFAULT_WORK_BUDGET);
        let widths = widths(&networks, 3, &plan(), &meter).unwrap();
        let total: f64 = widths.pull_up.iter().sum();
        assert!((total - 22.662905).abs() < 5e-6, "{total}");
        assert!(meter.spent() > 0);
    }

    #[test]
    fn past_the_budget_the_meter_names_it() {
        let gate = read_gate("!(a & b | c & (a | b))").unwrap();
        let meter = Meter::new(2_000);
        let error = widths(&Network::pair(&gate), 3, &plan(), &meter).unwrap_err();
        assert!(matches!(&error, SizingError::OverBudget(over) if over.work == Work::Exact), "{error}");
        assert!(error.to_string().contains("--work-budget"), "{error}");
    }

    #[test]
    fn without_repeated_inputs_the_closed_form_as_is() {
        // aoi21: every minimal vector turns on one lone path (docs/model.md section 10).
        let gate = read_gate("aoi21").unwrap();
        let networks = Network::pair(&gate);
        let meter = Meter::new(1);
        let exact = widths(&networks, 3, &plan(), &meter).unwrap();
        for (kind, network) in networks.iter() {
            assert_eq!(exact[kind], rules::widths(network, Rule::MinArea, plan().reference_width(kind)));
        }
        assert_eq!(meter.spent(), 0);
    }
}
