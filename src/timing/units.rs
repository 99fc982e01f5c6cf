//! Process units: what turns RC into picoseconds (R from the level-1 half-swing time of the unit
//! NMOS, C from the process's gate capacitance).

use crate::process::Process;
use crate::timing::error::TimingError;
use crate::timing::report::{ProcessUnits, RESISTANCE_FORMULA};

impl ProcessUnits {
    /// R and C of `process`. t50 integrates the level-1 drain current over the discharge, saturated
    /// then linear (the same expression as the propagation delay in Kang & Leblebici, "CMOS Digital
    /// Integrated Circuits", ch. 6; from memory), so a single RC stage's 50% delay, ln 2 x R C, is the
    /// level-1 one.
    pub fn of(process: &Process) -> Result<ProcessUnits, TimingError> {
        let supply = process.supply_v;
        let threshold = process.nmos_threshold_v;
        let overdrive = supply - threshold;
        let aspect = process.unit_width_nm / process.length_nm;
        let beta = process.nmos_kp_ua_per_v2 * 1e-6 * aspect;
        if !(overdrive > 0.0 && beta > 0.0 && beta.is_finite() && threshold >= 0.0) {
            return Err(TimingError::Process { supply_v: supply, threshold_v: threshold });
        }
        // t50 / C, seconds per farad.
        let per_capacitance = if threshold < supply / 2.0 {
            (2.0 * threshold / overdrive + ((4.0 * overdrive - supply) / supply).ln()) / (beta * overdrive)
        } else {
            supply / (beta * overdrive * overdrive)
        };
        let unit_resistance_ohm = per_capacitance / std::f64::consts::LN_2;
        let unit_capacitance_ff = process.unit_capacitance_ff();
        Ok(ProcessUnits {
            process: process.name.clone(),
            unit_resistance_ohm,
            unit_capacitance_ff,
            rc_ps: unit_resistance_ohm * unit_capacitance_ff * 1e-3,
            resistance_formula: RESISTANCE_FORMULA,
        })
    }
}
