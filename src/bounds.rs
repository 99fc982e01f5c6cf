//! One set of bounds for every number a user gives, wherever it is given (command line, process
//! file, library file), checked before any output.
//!
//! Each quantity has a documented range wide enough for any real cell or process and narrow enough
//! that nothing downstream leaves floating-point range: sizes, resistances, capacitances and delays
//! stay finite, SPICE lengths and widths (written to 1 pm) never print as 0 or inf, and a device's
//! finger count ([`MAX_FINGERS`]) stays a small integer. The README's table of limits lists them.

/// A closed range `min ..= max`, with or without 0 besides, for a quantity in `unit`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Bound {
    /// The smallest value other than 0.
    pub min: f64,
    /// The largest value.
    pub max: f64,
    /// Whether 0 is taken too (it turns something off: no load, no body effect).
    pub zero: bool,
    /// The unit, for messages (empty for ratios and multiples).
    pub unit: &'static str,
}

impl Bound {
    /// `value` if it is within the bound, else what it must be (`must be ...`).
    pub fn check(&self, value: f64) -> Result<f64, String> {
        let inside = value.is_finite() && ((self.zero && value == 0.0) || (self.min..=self.max).contains(&value));
        if inside { Ok(value) } else { Err(format!("must be {}", self.describe())) }
    }

    /// `value` if it is within the bound, else an error naming `what` it is.
    pub fn check_named(&self, what: &'static str, value: f64) -> Result<f64, OutOfBounds> {
        self.check(value).map_err(|rule| OutOfBounds { what, value, rule })
    }

    /// The range in words: `a number from 1e-6 up to 1e6`, `0, or a number from ...`.
    pub fn describe(&self) -> String {
        let unit = if self.unit.is_empty() { String::new() } else { format!(" {}", self.unit) };
        let range = format!("a number from {} up to {}{unit}", show(self.min), show(self.max));
        if self.zero { format!("0, or {range}") } else { range }
    }
}

/// A number outside its bound: what it is, the value and what it must be.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{what} {rule}, found '{}'", show(*value))]
pub struct OutOfBounds {
    /// What the number is (`the drive`).
    pub what: &'static str,
    /// The value.
    pub value: f64,
    /// What it must be (`must be ...`).
    pub rule: String,
}

/// A number as messages write it: plain near 1 (and 0), else in exponent form (`1e300`, never three
/// hundred digits).
pub fn show(value: f64) -> String {
    if value == 0.0 || (1e-3..1e5).contains(&value.abs()) { format!("{value}") } else { format!("{value:e}") }
}

/// Drive, mobility ratio and reference-inverter W/L (command line, library drives and
/// `[defaults]`, a process's `mobility_ratio`): relative sizes and ratios.
pub const SIZING: Bound = Bound { min: 1e-6, max: 1e6, zero: false, unit: "" };
/// Fan-out, load (in units of C) and diffusion ratio: 0 means none.
pub const LOAD: Bound = Bound { min: 1e-6, max: 1e6, zero: true, unit: "" };
/// A process's length_nm, unit_width_nm, min_width_nm and max_finger_width_nm: 1 nm to 1 mm.
pub const LENGTH_NM: Bound = Bound { min: 1.0, max: 1e6, zero: false, unit: "nm" };
/// A process's grid_nm: down to 1 pm, the resolution lengths are written with.
pub const GRID_NM: Bound = Bound { min: 1e-3, max: 1e6, zero: false, unit: "nm" };
/// A process's supply_v, nmos_threshold_v and pmos_threshold_v.
pub const VOLTAGE: Bound = Bound { min: 1e-3, max: 1e3, zero: false, unit: "V" };
/// A process's nmos_kp_ua_per_v2 and pmos_kp_ua_per_v2.
pub const KP: Bound = Bound { min: 1e-6, max: 1e6, zero: false, unit: "uA/V^2" };
/// A process's body_effect_sqrt_v (level-1 GAMMA): 0 turns it off.
pub const BODY_EFFECT: Bound = Bound { min: 1e-6, max: 100.0, zero: true, unit: "sqrt(V)" };
/// A process's gate_cap_ff_per_um and diffusion_cap_ff_per_um.
pub const CAPACITANCE_PER_UM: Bound = Bound { min: 1e-6, max: 1e6, zero: true, unit: "fF/um" };
/// A process's load_ff.
pub const LOAD_FF: Bound = Bound { min: 1e-6, max: 1e6, zero: false, unit: "fF" };

/// A calibration's tolerance, percent (`--tolerance`, a library's `tolerance`).
pub const TOLERANCE_PERCENT: Bound = Bound { min: 0.01, max: 50.0, zero: false, unit: "%" };
/// A calibration's simulator runs per cell (`--max-runs`, a library's `max_runs`): a whole number.
pub const RUNS: Bound = Bound { min: 2.0, max: 1000.0, zero: false, unit: "runs" };
/// A calibration's area cap over the first-order total W/L (`--area-cap`, a library's `area_cap`).
pub const AREA_CAP: Bound = Bound { min: 1.0, max: 1000.0, zero: false, unit: "" };
/// One cell's calibration time (`batch --cell-time-limit`, a library's `cell_time_limit`).
pub const TIME_LIMIT_S: Bound = Bound { min: 1e-3, max: 1e6, zero: false, unit: "s" };

/// Most fingers one device is drawn with (SPICE `m=`): the numbers above allow sizes far past any
/// real cell (a drive of 1e6 on a reference of 1e6), so the drawn result is bounded too.
pub const MAX_FINGERS: usize = 1_000_000;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ends_are_inside_and_beyond_is_not() {
        assert_eq!(SIZING.check(1e-6), Ok(1e-6));
        assert_eq!(SIZING.check(1e6), Ok(1e6));
        for bad in [0.0, 5e-324, 9.9e-7, 1.0000001e6, 1e308, f64::INFINITY, f64::NAN, -1.0] {
            assert!(SIZING.check(bad).is_err(), "{bad}");
        }
        assert_eq!(LOAD.check(0.0), Ok(0.0));
        assert!(LOAD.check(5e-324).is_err());
        assert!(LOAD.check(1e308).is_err());
    }

    #[test]
    fn numbers_in_messages_stay_short() {
        assert_eq!(show(2.5), "2.5");
        assert_eq!(show(-5.0), "-5");
        assert_eq!(show(1e300), "1e300");
        assert_eq!(show(1e-308), "1e-308");
        assert_eq!(show(f64::NAN), "NaN");
    }

    #[test]
    fn messages_give_the_range_and_unit() {
        assert_eq!(SIZING.check(0.0).unwrap_err(), "must be a number from 1e-6 up to 1e6");
        assert_eq!(LOAD.check(-1.0).unwrap_err(), "must be 0, or a number from 1e-6 up to 1e6");
        assert_eq!(GRID_NM.check(1e-308).unwrap_err(), "must be a number from 0.001 up to 1e6 nm");
        assert_eq!(LENGTH_NM.describe(), "a number from 1 up to 1e6 nm");
    }
}
