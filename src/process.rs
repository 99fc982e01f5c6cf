//! The process: drawn length, unit width and model names that turn relative W/L into physical sizes.
//!
//! The built-in default serves until a process file is given: L = 1 um, the unit NMOS 1 um wide,
//! models `nmos` and `pmos`.

/// A process, as far as sizes and netlists need it.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Process {
    /// A label for reports.
    pub name: String,
    /// Drawn channel length, nm.
    pub length_nm: f64,
    /// Width of the unit NMOS (relative W/L 1), nm.
    pub unit_width_nm: f64,
    /// NMOS model name in netlists.
    pub nmos_model: String,
    /// PMOS model name in netlists.
    pub pmos_model: String,
}

impl Default for Process {
    fn default() -> Process {
        Process {
            name: "built-in default".to_string(),
            length_nm: 1000.0,
            unit_width_nm: 1000.0,
            nmos_model: "nmos".to_string(),
            pmos_model: "pmos".to_string(),
        }
    }
}

impl Process {
    /// Physical width in nm of a device of relative size `w_over_l`.
    pub fn width_nm(&self, w_over_l: f64) -> f64 {
        w_over_l * self.unit_width_nm
    }
}
