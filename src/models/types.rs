//! The model library's vocabulary: files and places of a scan, device and model types, levels,
//! bins and their ranges, and the limits of a scan.

use std::fmt;
use std::path::{Path, PathBuf};

use crate::diagnostic::Span;

/// Deepest nesting of `.include`d files and `.lib` sections (a real library nests 3 to 5 deep).
pub const MAX_NESTING: usize = 16;

/// Most bytes a scan reads, counting a file once each time it is included or a section each time
/// it is used (corner libraries of a foundry kit run to tens of megabytes).
pub const MAX_LIBRARY_BYTES: usize = 128 << 20;

/// Most errors and warnings a scan collects before it stops reporting.
pub const MAX_PROBLEMS: usize = 100;

/// ngspice's tolerance at the ends of a bin, metres: a size within it of a limit is inside.
pub const BIN_TOLERANCE_M: f64 = 1e-9;

/// Levels ngspice bins: BSIM3 (8, 49), BSIM4 (14, 54), HiSIM2 (68) and HiSIM_HV (73).
pub const BINNED_LEVELS: [u32; 6] = [8, 49, 14, 54, 68, 73];

/// How the scan reads a file the library names: its text, or why not.
pub type Reader<'a> = dyn FnMut(&Path) -> Result<String, std::io::Error> + 'a;

/// A file of the scan: an index into [`Library::files`].
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct FileId(pub usize);

/// A place in one of the scanned files.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Location {
    /// The file.
    pub file: FileId,
    /// The bytes.
    pub span: Span,
}

/// A file the scan read: its path as the scan resolved it, and its text.
#[derive(Debug, Clone)]
pub struct SourceFile {
    /// The path, the entry file's as given, others joined to their including file's directory.
    pub path: PathBuf,
    /// The text.
    pub text: String,
}

/// The two device types a deck needs.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum DeviceType {
    /// An n-channel MOSFET.
    Nmos,
    /// A p-channel MOSFET.
    Pmos,
}

impl fmt::Display for DeviceType {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            DeviceType::Nmos => "nmos",
            DeviceType::Pmos => "pmos",
        })
    }
}

/// A model's type as its card names it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum ModelType {
    /// `nmos` or `pmos`.
    Device(DeviceType),
    /// Any other type (`d`, `npn`, `r` ...), lowercased.
    Other(String),
}

impl fmt::Display for ModelType {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ModelType::Device(device) => device.fmt(f),
            ModelType::Other(other) => f.write_str(other),
        }
    }
}

/// A model's `level`.
#[derive(Debug, Clone, PartialEq)]
pub enum Level {
    /// Not given: ngspice takes level 1.
    Default,
    /// A number.
    Number(f64),
    /// An expression the scan does not evaluate.
    Expression(String),
}

impl Level {
    /// Whether ngspice bins models of this level; `None` for an expression.
    pub fn is_binned(&self) -> Option<bool> {
        match self {
            Level::Default => Some(false),
            Level::Number(level) => Some(BINNED_LEVELS.iter().any(|&binned| f64::from(binned) == *level)),
            Level::Expression(_) => None,
        }
    }
}

impl fmt::Display for Level {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Level::Default => f.write_str("1 (not given)"),
            Level::Number(level) => write!(f, "{level}"),
            Level::Expression(text) => f.write_str(text),
        }
    }
}

/// One end of a bin's range.
#[derive(Debug, Clone, PartialEq)]
pub enum Limit {
    /// A number, metres.
    Metres(f64),
    /// An expression or parameter the scan does not evaluate, as written.
    Expression(String),
    /// Not on the card: ngspice never selects the bin.
    Missing,
}

/// A bin's range in length or width.
#[derive(Debug, Clone, PartialEq)]
pub struct Range {
    /// `lmin` or `wmin`.
    pub min: Limit,
    /// `lmax` or `wmax`.
    pub max: Limit,
}

impl Range {
    /// Both ends as numbers, if they are.
    pub fn metres(&self) -> Option<(f64, f64)> {
        match (&self.min, &self.max) {
            (Limit::Metres(min), Limit::Metres(max)) => Some((*min, *max)),
            _ => None,
        }
    }

    /// Whether `size` lies inside, as ngspice decides it; `None` if an end is not a number.
    pub fn contains(&self, size_m: f64) -> Option<bool> {
        let (min, max) = self.metres()?;
        let near = |limit: f64| (size_m - limit).abs() < BIN_TOLERANCE_M;
        Some(near(min) || near(max) || (min < size_m && size_m < max))
    }

    /// How far `size` lies outside (0 inside), metres; `None` if an end is not a number.
    pub(crate) fn distance(&self, size_m: f64) -> Option<f64> {
        let (min, max) = self.metres()?;
        Some((min - size_m).max(size_m - max).max(0.0))
    }
}

/// The bin of a model named `BASE.N`.
#[derive(Debug, Clone, PartialEq)]
pub struct Bin {
    /// The name an instance uses, lowercased.
    pub base: String,
    /// `lmin` .. `lmax`.
    pub length: Range,
    /// `wmin` .. `wmax`.
    pub width: Range,
}

impl fmt::Display for Bin {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "L {}, W {}", RangeText(&self.length), RangeText(&self.width))
    }
}

struct RangeText<'a>(&'a Range);

impl fmt::Display for RangeText<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let end = |limit: &Limit| match limit {
            Limit::Metres(metres) => micrometres(*metres),
            Limit::Expression(text) => text.clone(),
            Limit::Missing => "(none)".to_string(),
        };
        match self.0.metres() {
            Some(_) => write!(f, "{}-{} um", end(&self.0.min), end(&self.0.max)),
            None => write!(f, "{} to {}", end(&self.0.min), end(&self.0.max)),
        }
    }
}

/// A length in metres as micrometres, without trailing zeros.
pub(crate) fn micrometres(metres: f64) -> String {
    let text = format!("{:.4}", metres * 1e6);
    let text = text.trim_end_matches('0').trim_end_matches('.');
    if text == "-0" { "0".to_string() } else { text.to_string() }
}

/// A `.model` card.
#[derive(Debug, Clone, PartialEq)]
pub struct Model {
    /// Its name, lowercased as ngspice compares it.
    pub name: String,
    /// Its type.
    pub model_type: ModelType,
    /// Its level.
    pub level: Level,
    /// Its bin, when the name is `BASE.N`.
    pub bin: Option<Bin>,
    /// The subcircuit it is defined in (lowercased), which alone sees it.
    pub subcircuit: Option<String>,
    /// Its name on the card.
    pub at: Location,
    /// The whole card, continuation lines included.
    pub card: Location,
}
