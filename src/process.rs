//! The process: drawn length, unit width, grid and first-order device values that turn relative
//! W/L into physical sizes and give a simulation deck its models.
//!
//! A process file is TOML with the units in the key names; every key is checked and an error
//! names the key and its place in the file. [`Process::default`] is the built-in process, an
//! invented long-channel one (L = 1 um, unit NMOS 1 um wide) that serves when no file is given.

use std::fmt::Write as _;

use serde::Deserialize;
use thiserror::Error;
use toml::Spanned;

use crate::bounds::{Bound, show};
use crate::diagnostic::Span;

/// A process, as sizes, netlists and decks need it.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Process {
    /// A label for reports.
    pub name: String,
    /// Mobility ratio mu_n / mu_p the sizing uses.
    pub mobility_ratio: f64,
    /// Drawn channel length, nm.
    pub length_nm: f64,
    /// Width of the unit NMOS (relative W/L 1), nm.
    pub unit_width_nm: f64,
    /// Width grid, nm: widths snap up to a multiple of it.
    pub grid_nm: f64,
    /// Smallest drawn width, nm.
    pub min_width_nm: f64,
    /// Widest single finger, nm: wider devices are split into equal fingers.
    pub max_finger_width_nm: f64,
    /// Supply voltage, V.
    pub supply_v: f64,
    /// NMOS model name in netlists.
    pub nmos_model: String,
    /// PMOS model name in netlists.
    pub pmos_model: String,
    /// NMOS threshold voltage, V.
    pub nmos_threshold_v: f64,
    /// PMOS threshold voltage magnitude, V.
    pub pmos_threshold_v: f64,
    /// NMOS transconductance parameter KP = mu_n Cox, uA/V^2.
    pub nmos_kp_ua_per_v2: f64,
    /// PMOS transconductance parameter KP = mu_p Cox, uA/V^2.
    pub pmos_kp_ua_per_v2: f64,
    /// Body-effect coefficient of both types, sqrt(V); 0 turns it off.
    pub body_effect_sqrt_v: f64,
    /// Gate capacitance per um of width, fF/um.
    pub gate_cap_ff_per_um: f64,
    /// Diffusion capacitance per um of width of one source or drain, fF/um.
    pub diffusion_cap_ff_per_um: f64,
    /// Load on the output in decks, fF.
    pub load_ff: f64,
    /// Length of a contacted source or drain region, from the gate edge to the region's far end,
    /// nm; with it decks write AS, AD, PS and PD on every device, so that a model library's own
    /// junction model charges the diffusions. `None`: no geometry is written.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub diffusion_length_nm: Option<f64>,
    /// Length of the uncontacted region two series devices share, between their gates, nm
    /// (default: `diffusion_length_nm`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub shared_diffusion_length_nm: Option<f64>,
}

impl Default for Process {
    fn default() -> Process {
        Process {
            name: "built-in default (invented long-channel process)".to_string(),
            mobility_ratio: 2.0,
            length_nm: 1000.0,
            unit_width_nm: 1000.0,
            grid_nm: 5.0,
            min_width_nm: 500.0,
            max_finger_width_nm: 20000.0,
            supply_v: 3.3,
            nmos_model: "nmos".to_string(),
            pmos_model: "pmos".to_string(),
            nmos_threshold_v: 0.7,
            pmos_threshold_v: 0.7,
            nmos_kp_ua_per_v2: 100.0,
            pmos_kp_ua_per_v2: 50.0,
            body_effect_sqrt_v: 0.0,
            gate_cap_ff_per_um: 1.7,
            diffusion_cap_ff_per_um: 1.0,
            load_ff: 20.0,
            diffusion_length_nm: None,
            shared_diffusion_length_nm: None,
        }
    }
}

/// A bad process file: what is wrong, with which key, where.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum ProcessError {
    /// Not TOML, a missing or unknown key, or a value of the wrong type.
    #[error("{message}")]
    Syntax {
        /// The TOML reader's message.
        message: String,
        /// Where, when known.
        span: Option<Span>,
    },
    /// A value out of range.
    #[error("{key} = {value}: {why}")]
    Value {
        /// The key.
        key: &'static str,
        /// The value as written.
        value: String,
        /// What it must be.
        why: String,
        /// Where.
        span: Span,
    },
}

impl ProcessError {
    /// Where in the file the error is.
    pub fn span(&self) -> Option<Span> {
        match self {
            ProcessError::Syntax { span, .. } => *span,
            ProcessError::Value { span, .. } => Some(*span),
        }
    }
}

/// A process file (or a `[process]` table) as written, every value with its place.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ProcessFile {
    /// A label for reports.
    pub name: Option<Spanned<String>>,
    /// See [`Process::mobility_ratio`].
    pub mobility_ratio: Spanned<f64>,
    /// See [`Process::length_nm`].
    pub length_nm: Spanned<f64>,
    /// See [`Process::unit_width_nm`].
    pub unit_width_nm: Spanned<f64>,
    /// See [`Process::grid_nm`].
    pub grid_nm: Spanned<f64>,
    /// See [`Process::min_width_nm`].
    pub min_width_nm: Spanned<f64>,
    /// See [`Process::max_finger_width_nm`].
    pub max_finger_width_nm: Spanned<f64>,
    /// See [`Process::supply_v`].
    pub supply_v: Spanned<f64>,
    /// See [`Process::nmos_model`].
    pub nmos_model: Spanned<String>,
    /// See [`Process::pmos_model`].
    pub pmos_model: Spanned<String>,
    /// See [`Process::nmos_threshold_v`].
    pub nmos_threshold_v: Spanned<f64>,
    /// See [`Process::pmos_threshold_v`].
    pub pmos_threshold_v: Spanned<f64>,
    /// See [`Process::nmos_kp_ua_per_v2`].
    pub nmos_kp_ua_per_v2: Spanned<f64>,
    /// See [`Process::pmos_kp_ua_per_v2`].
    pub pmos_kp_ua_per_v2: Spanned<f64>,
    /// See [`Process::body_effect_sqrt_v`]; optional, default 0.
    pub body_effect_sqrt_v: Option<Spanned<f64>>,
    /// See [`Process::gate_cap_ff_per_um`].
    pub gate_cap_ff_per_um: Spanned<f64>,
    /// See [`Process::diffusion_cap_ff_per_um`].
    pub diffusion_cap_ff_per_um: Spanned<f64>,
    /// See [`Process::load_ff`].
    pub load_ff: Spanned<f64>,
    /// See [`Process::diffusion_length_nm`]; optional.
    pub diffusion_length_nm: Option<Spanned<f64>>,
    /// See [`Process::shared_diffusion_length_nm`]; optional, needs `diffusion_length_nm`.
    pub shared_diffusion_length_nm: Option<Spanned<f64>>,
}

fn span_of<T>(value: &Spanned<T>) -> Span {
    let range = value.span();
    Span::new(range.start, range.end)
}

/// A value within its bound ([`crate::bounds`]), or an error naming the key and its place.
fn check(key: &'static str, value: &Spanned<f64>, bound: Bound) -> Result<f64, ProcessError> {
    let number = *value.get_ref();
    bound.check(number).map_err(|why| ProcessError::Value { key, value: show(number), why, span: span_of(value) })
}

/// A process name goes into reports and into a CSV column: no control characters, and no first
/// character a spreadsheet would read as the start of a formula.
fn label(value: &Spanned<String>) -> Result<String, ProcessError> {
    let text = value.get_ref();
    let formula = text.starts_with(['=', '+', '-', '@']);
    if formula || text.chars().any(char::is_control) {
        return Err(ProcessError::Value {
            key: "name",
            value: format!("{text:?}"),
            why: "a process name may not start with =, +, - or @ (a spreadsheet would read its CSV cell as a \
                  formula) nor hold control characters"
                .into(),
            span: span_of(value),
        });
    }
    Ok(text.clone())
}

fn model_name(key: &'static str, value: &Spanned<String>) -> Result<String, ProcessError> {
    let text = value.get_ref();
    let why = check_model_name(text).err();
    if let Some(why) = why {
        return Err(ProcessError::Value { key, value: format!("'{text}'"), why, span: span_of(value) });
    }
    Ok(text.clone())
}

/// A device model's name: one a SPICE instance line can hold ([`crate::models::check_model_name`]:
/// binned libraries' names such as `nch.1` included), not a reserved name (a rail or ground).
pub fn check_model_name(text: &str) -> Result<(), String> {
    if let Some(why) = crate::names::reserved_reason(text, &[]) {
        return Err(format!("a model may not take a reserved name: {why}"));
    }
    crate::models::check_model_name(text).map_err(|why| why.to_string())
}

impl ProcessFile {
    /// Check every value and build the process.
    pub fn validate(&self) -> Result<Process, ProcessError> {
        use crate::bounds::{BODY_EFFECT, CAPACITANCE_PER_UM, GRID_NM, KP, LENGTH_NM, LOAD_FF, SIZING, VOLTAGE};
        let process = Process {
            name: match &self.name {
                Some(name) => label(name)?,
                None => "unnamed process".to_string(),
            },
            mobility_ratio: check("mobility_ratio", &self.mobility_ratio, SIZING)?,
            length_nm: check("length_nm", &self.length_nm, LENGTH_NM)?,
            unit_width_nm: check("unit_width_nm", &self.unit_width_nm, LENGTH_NM)?,
            grid_nm: check("grid_nm", &self.grid_nm, GRID_NM)?,
            min_width_nm: check("min_width_nm", &self.min_width_nm, LENGTH_NM)?,
            max_finger_width_nm: check("max_finger_width_nm", &self.max_finger_width_nm, LENGTH_NM)?,
            supply_v: check("supply_v", &self.supply_v, VOLTAGE)?,
            nmos_model: model_name("nmos_model", &self.nmos_model)?,
            pmos_model: model_name("pmos_model", &self.pmos_model)?,
            nmos_threshold_v: check("nmos_threshold_v", &self.nmos_threshold_v, VOLTAGE)?,
            pmos_threshold_v: check("pmos_threshold_v", &self.pmos_threshold_v, VOLTAGE)?,
            nmos_kp_ua_per_v2: check("nmos_kp_ua_per_v2", &self.nmos_kp_ua_per_v2, KP)?,
            pmos_kp_ua_per_v2: check("pmos_kp_ua_per_v2", &self.pmos_kp_ua_per_v2, KP)?,
            body_effect_sqrt_v: match &self.body_effect_sqrt_v {
                Some(value) => check("body_effect_sqrt_v", value, BODY_EFFECT)?,
                None => 0.0,
            },
            gate_cap_ff_per_um: check("gate_cap_ff_per_um", &self.gate_cap_ff_per_um, CAPACITANCE_PER_UM)?,
            diffusion_cap_ff_per_um: check(
                "diffusion_cap_ff_per_um",
                &self.diffusion_cap_ff_per_um,
                CAPACITANCE_PER_UM,
            )?,
            load_ff: check("load_ff", &self.load_ff, LOAD_FF)?,
            diffusion_length_nm: match &self.diffusion_length_nm {
                Some(value) => Some(check("diffusion_length_nm", value, LENGTH_NM)?),
                None => None,
            },
            shared_diffusion_length_nm: match &self.shared_diffusion_length_nm {
                Some(value) => Some(check("shared_diffusion_length_nm", value, LENGTH_NM)?),
                None => None,
            },
        };
        if let (Some(shared), None) = (&self.shared_diffusion_length_nm, &self.diffusion_length_nm) {
            return Err(ProcessError::Value {
                key: "shared_diffusion_length_nm",
                value: show(*shared.get_ref()),
                why: "needs diffusion_length_nm, the length of a contacted region, beside it".to_string(),
                span: span_of(shared),
            });
        }
        if process.nmos_model.eq_ignore_ascii_case(&process.pmos_model) {
            return Err(ProcessError::Value {
                key: "pmos_model",
                value: format!("'{}'", process.pmos_model),
                why: format!(
                    "the NMOS and PMOS models must differ (netlists ignore case): nmos_model is '{}'",
                    process.nmos_model
                ),
                span: span_of(&self.pmos_model),
            });
        }
        let out_of_range = |key, value: &Spanned<f64>, why: String| ProcessError::Value {
            key,
            value: value.get_ref().to_string(),
            why,
            span: span_of(value),
        };
        if process.grid_nm > process.min_width_nm {
            return Err(out_of_range(
                "grid_nm",
                &self.grid_nm,
                format!("the grid must not be larger than min_width_nm ({})", process.min_width_nm),
            ));
        }
        if process.max_finger_width_nm < process.min_width_nm {
            return Err(out_of_range(
                "max_finger_width_nm",
                &self.max_finger_width_nm,
                format!("must be at least min_width_nm ({})", process.min_width_nm),
            ));
        }
        if process.widest_finger_nm() < process.narrowest_width_nm() {
            return Err(out_of_range(
                "max_finger_width_nm",
                &self.max_finger_width_nm,
                format!(
                    "no width on the {} nm grid lies between min_width_nm ({}) and it",
                    process.grid_nm, process.min_width_nm
                ),
            ));
        }
        let kp_ratio = process.nmos_kp_ua_per_v2 / process.pmos_kp_ua_per_v2;
        if (kp_ratio / process.mobility_ratio - 1.0).abs() > 1e-3 {
            return Err(out_of_range(
                "mobility_ratio",
                &self.mobility_ratio,
                format!(
                    "disagrees with nmos_kp_ua_per_v2 / pmos_kp_ua_per_v2 = {kp_ratio}; the device values must match \
                     the ratio the sizing uses"
                ),
            ));
        }
        if process.supply_v <= process.nmos_threshold_v.max(process.pmos_threshold_v) {
            return Err(out_of_range(
                "supply_v",
                &self.supply_v,
                "must be above both threshold voltages, or no device turns on".to_string(),
            ));
        }
        Ok(process)
    }
}

/// Longest process file read, in bytes (a real one is about a kilobyte).
pub const MAX_PROCESS_FILE_BYTES: usize = 1 << 20;

impl Process {
    /// Read a process file's text.
    pub fn from_toml(text: &str) -> Result<Process, ProcessError> {
        // A leading byte-order mark is skipped (TOML allows it); spans count from after it, as
        // the readers that call this drop it too.
        let text = text.strip_prefix('\u{feff}').unwrap_or(text);
        if text.len() > MAX_PROCESS_FILE_BYTES {
            return Err(ProcessError::Syntax {
                message: format!(
                    "the process file is {} bytes long; the limit is {MAX_PROCESS_FILE_BYTES}",
                    text.len()
                ),
                span: None,
            });
        }
        let file: ProcessFile = toml::from_str(text).map_err(|error| {
            let span = error.span().map(|r| Span::new(r.start, r.end));
            let (mut message, span) = crate::diagnostic::toml_error_place(text, error.message(), span);
            // A wrong type ("invalid type: string ...") does not say whose value it is: name the key.
            if let Some(key) = span.and_then(|span| key_on_line(text, span.start))
                && !message.contains(key)
            {
                message = format!("{key}: {message}");
            }
            ProcessError::Syntax { message, span }
        })?;
        file.validate()
    }

    /// `width_nm` snapped up to the next multiple of the grid (a width already on the grid, to
    /// within a billionth of a grid step, stays).
    pub fn snap_up_nm(&self, width_nm: f64) -> f64 {
        (width_nm / self.grid_nm - GRID_TOLERANCE).ceil() * self.grid_nm
    }

    /// The widest finger on the grid that is at most `max_finger_width_nm`.
    pub fn widest_finger_nm(&self) -> f64 {
        (self.max_finger_width_nm / self.grid_nm + GRID_TOLERANCE).floor() * self.grid_nm
    }

    /// The narrowest width a device can be drawn at: `min_width_nm` snapped up to the grid.
    pub fn narrowest_width_nm(&self) -> f64 {
        self.snap_up_nm(self.min_width_nm)
    }

    /// How a device of relative size `w_over_l` is drawn. Its physical width `w_over_l x
    /// unit_width_nm` is raised to `min_width_nm`; up to the widest on-grid finger it is one finger
    /// snapped up to the grid; wider, it is split into `n = ceil(W / widest finger)` equal fingers,
    /// each `W / n` snapped up to the grid (and at least the narrowest width), so the total
    /// `n x finger` is never below `W`.
    pub fn draw(&self, w_over_l: f64) -> Drawn {
        let wanted = self.width_nm(w_over_l).max(self.min_width_nm);
        let fingers = (wanted / self.widest_finger_nm() - GRID_TOLERANCE).ceil().max(1.0);
        let finger_width_nm = self.snap_up_nm(wanted / fingers).max(self.narrowest_width_nm());
        // A float to integer cast saturates, so absurd sizes give a huge count, never a panic.
        Drawn { fingers: fingers as usize, finger_width_nm }
    }

    /// The names of the NMOS and PMOS models, which netlists reserve.
    pub fn model_names(&self) -> [&str; 2] {
        [&self.nmos_model, &self.pmos_model]
    }

    /// Physical width in nm of a device of relative size `w_over_l`, before snapping.
    pub fn width_nm(&self, w_over_l: f64) -> f64 {
        w_over_l * self.unit_width_nm
    }

    /// C, the gate capacitance of the unit NMOS, fF: gate_cap_ff_per_um x unit width.
    pub fn unit_capacitance_ff(&self) -> f64 {
        self.gate_cap_ff_per_um * self.unit_width_nm / 1000.0
    }

    /// The process as a commented TOML file a user can start from; it reads back as itself.
    pub fn to_commented_toml(&self) -> String {
        let mut out = String::new();
        // A key with its comment; an optional key not set is written commented out, with an example.
        let mut line = |comment: &str, key: &str, value: String| {
            let _ = if let Some(example) = value.strip_prefix('#') {
                writeln!(out, "# {comment}\n# {key} = {example}\n")
            } else {
                writeln!(out, "# {comment}\n{key} = {value}\n")
            };
        };
        line("A label for reports.", "name", toml_string(&self.name));
        line(
            "Mobility ratio mu_n / mu_p used for sizing; must equal nmos_kp / pmos_kp.",
            "mobility_ratio",
            float(self.mobility_ratio),
        );
        line("Drawn channel length of every device, nm.", "length_nm", float(self.length_nm));
        line(
            "Width of the unit NMOS (relative W/L = 1), nm: physical width = size x this.",
            "unit_width_nm",
            float(self.unit_width_nm),
        );
        line("Width grid, nm: every width snaps up to a multiple of it.", "grid_nm", float(self.grid_nm));
        line("Smallest drawn width, nm; must be at least the grid.", "min_width_nm", float(self.min_width_nm));
        line(
            "Widest single finger, nm: a wider device is split into equal fingers.",
            "max_finger_width_nm",
            float(self.max_finger_width_nm),
        );
        line("Supply voltage, V.", "supply_v", float(self.supply_v));
        line("NMOS model name in netlists and decks.", "nmos_model", toml_string(&self.nmos_model));
        line("PMOS model name in netlists and decks.", "pmos_model", toml_string(&self.pmos_model));
        line("NMOS threshold voltage (level-1 VTO), V.", "nmos_threshold_v", float(self.nmos_threshold_v));
        line("PMOS threshold voltage magnitude, V.", "pmos_threshold_v", float(self.pmos_threshold_v));
        line(
            "NMOS transconductance parameter KP = mu_n Cox, uA/V^2.",
            "nmos_kp_ua_per_v2",
            float(self.nmos_kp_ua_per_v2),
        );
        line(
            "PMOS transconductance parameter KP = mu_p Cox, uA/V^2.",
            "pmos_kp_ua_per_v2",
            float(self.pmos_kp_ua_per_v2),
        );
        line(
            "Body-effect coefficient (level-1 GAMMA) of both types, sqrt(V); optional, 0 turns it off.",
            "body_effect_sqrt_v",
            float(self.body_effect_sqrt_v),
        );
        line("Gate capacitance per um of width, fF/um.", "gate_cap_ff_per_um", float(self.gate_cap_ff_per_um));
        line(
            "Diffusion capacitance per um of width of one source or drain, fF/um.",
            "diffusion_cap_ff_per_um",
            float(self.diffusion_cap_ff_per_um),
        );
        line("Load on the output in simulation decks, fF.", "load_ff", float(self.load_ff));
        let geometry = "Optional: length of a contacted source or drain region (gate edge to far end), nm; with it \
                        decks write AS, AD, PS and PD on every device for a model library's junctions.";
        let shared = "Optional: length of the region two series devices share between their gates, nm \
                      (default: diffusion_length_nm).";
        line(geometry, "diffusion_length_nm", self.diffusion_length_nm.map_or("#300.0".to_string(), float));
        line(shared, "shared_diffusion_length_nm", self.shared_diffusion_length_nm.map_or("#200.0".to_string(), float));
        let header = "# widthwise process file. Every key is required unless marked optional.\n\
                      # First-order values: sign-off needs the foundry's models and design rules.\n\n";
        format!("{header}{}", out.trim_end()) + "\n"
    }
}

/// The key of a `key = value` line holding byte `offset`, if the line is one.
fn key_on_line(text: &str, offset: usize) -> Option<&str> {
    let offset = offset.min(text.len());
    let start = text.get(..offset)?.rfind('\n').map_or(0, |i| i + 1);
    let line = text[start..].lines().next()?;
    let (key, _) = line.split_once('=')?;
    let key = key.trim();
    let valid = !key.is_empty() && key.chars().all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-');
    valid.then_some(key)
}

/// Widths within this fraction of a grid step of a grid line count as on it, so that rounding in
/// `size x unit width` never adds a grid step.
const GRID_TOLERANCE: f64 = 1e-9;

/// A device as drawn: `fingers` equal fingers of `finger_width_nm`, all of drawn length.
/// Netlists write it as one MOSFET of width `finger_width_nm` with SPICE multiplicity `m=fingers`.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Drawn {
    /// Number of fingers, 1 or more.
    pub fingers: usize,
    /// Width of each finger, nm, on the grid.
    pub finger_width_nm: f64,
}

impl Drawn {
    /// Total drawn width, nm: fingers x finger width.
    pub fn width_nm(&self) -> f64 {
        self.fingers as f64 * self.finger_width_nm
    }
}

/// A TOML basic string: quotes and backslashes escaped, control characters as `\uXXXX`, the rest
/// as written (Rust's `{:?}` is not TOML: it writes `\u{feff}`).
fn toml_string(text: &str) -> String {
    let mut out = String::with_capacity(text.len() + 2);
    out.push('"');
    for character in text.chars() {
        match character {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            '\n' => out.push_str("\\n"),
            '\t' => out.push_str("\\t"),
            '\r' => out.push_str("\\r"),
            c if c.is_control() => {
                let _ = write!(out, "\\u{:04X}", u32::from(c));
            }
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

/// A float as TOML writes it (always with a decimal point).
fn float(value: f64) -> String {
    let text = value.to_string();
    if text.contains(['.', 'e', 'E']) { text } else { format!("{text}.0") }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_default_round_trips_through_its_commented_file() {
        let text = Process::default().to_commented_toml();
        assert_eq!(Process::from_toml(&text).unwrap(), Process::default());
    }

    #[test]
    fn any_name_round_trips() {
        // Found by fuzzing: a byte-order mark in the name was written as Rust's `\u{feff}`, not TOML.
        for name in ["plain", "with \"quotes\" and \\", "bom\u{feff}", "\u{1F600}", "a=b+c"] {
            let process = Process { name: name.to_string(), ..Process::default() };
            assert_eq!(Process::from_toml(&process.to_commented_toml()).unwrap(), process, "{name:?}");
        }
        // Control characters, and a first character a spreadsheet reads as a formula, are refused.
        for name in ["tab\tnew\nline\r", "bell\u{7}del\u{7f}", "=HYPERLINK(1)", "+1", "-x", "@x"] {
            let process = Process { name: name.to_string(), ..Process::default() };
            let error = Process::from_toml(&process.to_commented_toml()).unwrap_err();
            assert!(error.to_string().starts_with("name = "), "{name:?}: {error}");
        }
    }

    fn with(key: &str, value: &str) -> String {
        let text = Process::default().to_commented_toml();
        text.lines()
            .map(
                |line| {
                    if line.starts_with(&format!("{key} =")) { format!("{key} = {value}") } else { line.to_string() }
                },
            )
            .collect::<Vec<_>>()
            .join("\n")
    }

    #[test]
    fn bad_values_name_the_key_and_place() {
        for (key, value) in [
            ("length_nm", "0.0"),
            ("grid_nm", "-5.0"),
            ("min_width_nm", "nan"),
            ("supply_v", "inf"),
            ("grid_nm", "600.0"),
            ("mobility_ratio", "2.5"),
        ] {
            let text = with(key, value);
            let error = Process::from_toml(&text).unwrap_err();
            let span = error.span().expect("a place");
            assert!(error.to_string().starts_with(key), "{key}: {error}");
            assert_eq!(&text[span.start..span.end], value, "{key}");
        }
    }

    #[test]
    fn widths_snap_up_to_the_grid_and_the_minimum() {
        let process = Process::default(); // unit width 1000 nm, grid 5 nm, minimum 500 nm
        // 1 + sqrt 2 = 2.41421...: 2414.21 nm is between grid lines 2410 and 2415, so 2415.
        assert_eq!(process.draw(1.0 + 2f64.sqrt()), Drawn { fingers: 1, finger_width_nm: 2415.0 });
        // On the grid but for rounding (3.0000000000000004): stays 3000 nm.
        assert_eq!(process.draw(0.1 * 30.0 + 4e-16).finger_width_nm, 3000.0);
        // Below the minimum width: 0.3 x 1000 nm = 300 nm becomes 500 nm.
        assert_eq!(process.draw(0.3).finger_width_nm, 500.0);
    }

    #[test]
    fn wide_devices_fold_into_equal_fingers() {
        let process = Process::default(); // widest finger 20000 nm
        // 10 x the widest finger: 10 fingers of exactly the widest, total the width.
        let drawn = process.draw(200.0);
        assert_eq!(drawn, Drawn { fingers: 10, finger_width_nm: 20000.0 });
        assert_eq!(drawn.width_nm(), 200_000.0);
        // 201000 nm: ceil(201000 / 20000) = 11 fingers of 201000 / 11 = 18272.7 nm, snapped up to 18275.
        assert_eq!(process.draw(201.0), Drawn { fingers: 11, finger_width_nm: 18275.0 });
    }

    #[test]
    fn a_finger_limit_without_a_grid_width_is_refused() {
        // min 502 nm snaps up to 505 nm, but fingers may be at most 503 nm wide.
        let text =
            with("min_width_nm", "502.0").replace("max_finger_width_nm = 20000.0", "max_finger_width_nm = 503.0");
        let error = Process::from_toml(&text).unwrap_err();
        assert!(error.to_string().starts_with("max_finger_width_nm"), "{error}");
    }

    #[test]
    fn model_names_are_identifiers_not_reserved_and_distinct() {
        for (nmos, pmos, start) in [
            ("\"n fet\"", "\"pmos\"", "nmos_model = 'n fet': the model name 'n fet' holds ' '"),
            ("\"Gnd\"", "\"pmos\"", "nmos_model = 'Gnd': a model may not take a reserved name"),
            ("\"nmos\"", "\"vdd\"", "pmos_model = 'vdd': a model may not take a reserved name"),
            ("\"fet\"", "\"FET\"", "pmos_model = 'FET': the NMOS and PMOS models must differ"),
        ] {
            let text = with("nmos_model", nmos);
            let text = text.replace("pmos_model = \"pmos\"", &format!("pmos_model = {pmos}"));
            let error = Process::from_toml(&text).unwrap_err();
            assert!(error.to_string().starts_with(start), "{error}");
        }
    }

    #[test]
    fn a_value_of_the_wrong_type_names_its_key() {
        let text = with("grid_nm", "\"five\"");
        let error = Process::from_toml(&text).unwrap_err();
        assert!(error.to_string().starts_with("grid_nm: invalid type"), "{error}");
        let span = error.span().unwrap();
        assert_eq!(&text[span.start..span.end], "\"five\"");
    }

    #[test]
    fn missing_and_unknown_keys_are_refused() {
        let text = Process::default().to_commented_toml();
        let missing: String = text.lines().filter(|l| !l.starts_with("grid_nm")).collect::<Vec<_>>().join("\n");
        assert!(Process::from_toml(&missing).unwrap_err().to_string().contains("grid_nm"));
        let unknown = format!("{text}\nwidth_fudge = 1.0\n");
        let error = Process::from_toml(&unknown).unwrap_err();
        assert!(error.to_string().contains("width_fudge"), "{error}");
        assert!(error.span().is_some());
    }
}
