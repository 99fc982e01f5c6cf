//! Every device a deck draws checked against a scanned library before the deck is written: its
//! model found by name and type, and, for a binned set, a bin whose W and L ranges hold the drawn
//! finger, as ngspice would pick it. What the scan cannot decide is a warning, never a pass.

use thiserror::Error;

use crate::models::error::{LookupError, Problem, ScanError};
use crate::models::library::{Library, Served};
use crate::models::types::{DeviceType, Location, micrometres};

/// One device of a deck as a library must serve it.
#[derive(Debug, Clone, PartialEq)]
pub struct DeviceUse {
    /// What the device is, for messages (`MN1 of nand2_x1`).
    pub label: String,
    /// The model name on its instance line.
    pub model: String,
    /// NMOS or PMOS.
    pub device: DeviceType,
    /// The drawn finger width, metres (the instance's W).
    pub width_m: f64,
    /// The drawn length, metres.
    pub length_m: f64,
}

/// Why a library does not serve a deck.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum ModelCheckError {
    /// The scan found something ngspice would reject (the first such problem; the rest follow it).
    #[error("the model library cannot be read as ngspice reads it: {error}{}", more(*others))]
    Scan {
        /// The first problem.
        error: ScanError,
        /// Where it is.
        at: Option<Location>,
        /// How many more problems the scan found.
        others: usize,
    },
    /// A device finds no model.
    #[error("{device}: {error}")]
    Device {
        /// The device's label.
        device: String,
        /// Its finger width, metres.
        width_m: f64,
        /// Its length, metres.
        length_m: f64,
        /// Why no model serves it.
        error: Box<LookupError>,
    },
}

fn more(others: usize) -> String {
    if others == 0 { String::new() } else { format!(" (and {others} more problems)") }
}

impl ModelCheckError {
    /// Where in the library the error is, when it has a place.
    pub fn at(&self) -> Option<Location> {
        match self {
            ModelCheckError::Scan { at, .. } => *at,
            ModelCheckError::Device { error, .. } => error.at(),
        }
    }
}

/// The library's first error, if the scan found any.
pub fn scan_errors(library: &Library) -> Result<(), ModelCheckError> {
    match library.errors.first() {
        Some(Problem { error, at }) => {
            Err(ModelCheckError::Scan { error: error.clone(), at: *at, others: library.errors.len() - 1 })
        }
        None => Ok(()),
    }
}

/// Check every device (the first that finds no model is the error); the warnings, one per device
/// size the scan cannot check (a bin limit it does not evaluate, a `scale` option).
pub fn check_devices(library: &Library, devices: &[DeviceUse]) -> Result<Vec<String>, ModelCheckError> {
    let mut warnings: Vec<String> = Vec::new();
    for use_ in devices {
        match library.check_device(&use_.model, use_.device, use_.width_m, use_.length_m) {
            Ok(Served::Plain(_) | Served::Bin(_)) => {}
            Ok(Served::Unchecked(why)) => {
                let warning = format!(
                    "cannot check that a model '{}' serves {} (W = {} um, L = {} um): {why}",
                    use_.model,
                    use_.label,
                    micrometres(use_.width_m),
                    micrometres(use_.length_m)
                );
                if !warnings.contains(&warning) {
                    warnings.push(warning);
                }
            }
            Err(error) => {
                return Err(ModelCheckError::Device {
                    device: use_.label.clone(),
                    width_m: use_.width_m,
                    length_m: use_.length_m,
                    error: Box::new(error),
                });
            }
        }
    }
    Ok(warnings)
}
