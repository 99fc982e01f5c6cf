//! Timing: the Elmore delay of every input's worst transition on both output edges of a sized cell
//! at a load, with the cell's own diffusion capacitance, the reference inverter's delay at the same
//! load and the logical-effort view beside each (docs/model.md section 7). Timing takes a sized cell
//! and never sizes one; the sizing strategies that need delays (the elmore method, the stack-order
//! search) call it.
//!
//! Units: delays in RC, where R is the on-resistance of the unit NMOS (W/L = 1) and C the gate
//! capacitance of a unit transistor; a process turns RC into picoseconds ([`units`]).

pub mod cell;
pub mod cell_vectors;
pub mod circuit;
pub mod composed;
pub mod delays;
pub mod error;
pub mod posynomial;
pub mod rc;
pub mod report;
pub mod transition;
pub mod units;

use crate::budget::Meter;
use crate::cell::SizedCell;
use crate::sizing::plan::Conditions;

pub use cell::{CellDelay, CellTiming, StageStep};
pub use cell_vectors::{CellStep, CellTransition, MAX_CELL_PINS, cell_transitions};
pub use delays::MAX_TIMED_OCCURRENCES;
pub use error::{NetworkFault, TimingError};
pub use report::{
    Delay, DelayModel, DelayReport, Edge, EffortView, MethodDelay, ProcessUnits, RESISTANCE_FORMULA, Timing,
    Unavailable,
};

/// The delays of `cell` under `conditions` (the load and the diffusion ratio), in RC and in the
/// picoseconds of the cell's process, their work counted on `meter`.
pub fn time(cell: &SizedCell, conditions: &Conditions, meter: &Meter) -> Result<Timing, TimingError> {
    let units = ProcessUnits::of(&cell.plan.process)?;
    delays::time_stage(cell.stage(), &cell.plan, conditions, Some(units), meter)
}

/// The delays of `cell`, a cell of several stages, through all its stages (`cell`), in RC and in
/// the picoseconds of its process.
pub fn time_stages(cell: &SizedCell, conditions: &Conditions, meter: &Meter) -> Result<CellTiming, TimingError> {
    let units = ProcessUnits::of(&cell.plan.process)?;
    cell::time_cell(cell, conditions, Some(units), meter)
}

/// [`time`] without the picoseconds: what the sizing strategies compare.
pub fn time_in_rc(cell: &SizedCell, conditions: &Conditions, meter: &Meter) -> Result<Timing, TimingError> {
    delays::time_stage(cell.stage(), &cell.plan, conditions, None, meter)
}
