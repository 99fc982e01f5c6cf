//! What a scan or a lookup can find wrong: [`ScanError`] (with its place, a [`Problem`]) and
//! [`LookupError`].

use std::path::PathBuf;

use thiserror::Error;

use crate::models::types::{DeviceType, Location, ModelType, micrometres};

/// An error or warning of the scan.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum ScanError {
    /// A named file could not be read.
    #[error("cannot read '{}': {message}", path.display())]
    Unreadable {
        /// The path as resolved.
        path: PathBuf,
        /// Why.
        message: String,
    },
    /// An `.include` or `.lib` line without a file name.
    #[error("'{keyword}' names no file")]
    MissingFileName {
        /// The keyword as written.
        keyword: String,
    },
    /// A quoted file name without its closing quote.
    #[error("the quoted file name is never closed")]
    UnclosedQuote,
    /// A path starting with `~`.
    #[error("'{path}' starts with '~', which widthwise does not expand: write the path in full")]
    HomePath {
        /// The path as written.
        path: String,
    },
    /// A relative `.lib FILE SECTION` in a file read whole.
    #[error(
        "'.lib {path}' names a relative file in a library read whole: ngspice looks for it beside the deck, not \
         beside this file; write the path in full, or name a section of the library"
    )]
    FromDeckDirectory {
        /// The path as written.
        path: String,
    },
    /// Files and sections nested too deep.
    #[error("files and sections nest deeper than {limit} levels")]
    TooDeep {
        /// The limit.
        limit: usize,
    },
    /// A file that includes itself.
    #[error("'{}' includes itself (through the files that include it)", path.display())]
    IncludeCycle {
        /// The file.
        path: PathBuf,
    },
    /// A section that refers to itself.
    #[error("section '{section}' of '{}' refers back to itself", path.display())]
    SectionCycle {
        /// The section.
        section: String,
        /// Its file.
        path: PathBuf,
    },
    /// Too many bytes read.
    #[error(
        "the library and the files it names exceed {limit} bytes (counting a file each time it is included); \
         widthwise reads no further"
    )]
    TooLarge {
        /// The limit.
        limit: usize,
    },
    /// A section the file does not define.
    #[error("no section '{section}' in '{}'{}", path.display(), known_sections(known))]
    UnknownSection {
        /// The section asked for.
        section: String,
        /// The file.
        path: PathBuf,
        /// The sections it defines.
        known: Vec<String>,
    },
    /// A section without its `.endl`.
    #[error("section '{section}' has no '.endl'")]
    UnclosedSection {
        /// The section.
        section: String,
    },
    /// `.lib` with nothing after it.
    #[error("'.lib' names neither a file nor a section")]
    MissingSectionName,
    /// A library read whole that defines sections.
    #[error(
        "the library defines sections ({}); ngspice cannot read it whole (it rejects '.lib NAME' as an unknown \
         control card): name one section",
        sections.join(", ")
    )]
    SectionsNeedName {
        /// The sections, as written.
        sections: Vec<String>,
    },
    /// A section defined inside the section being read.
    #[error("'.lib {section}' defines a section inside the one being read; ngspice rejects it")]
    NestedSection {
        /// The inner section.
        section: String,
    },
    /// `.endl` where no section is open.
    #[error("'.endl' ends no section; ngspice rejects it")]
    StrayEndl,
    /// A `.model` card without name or type.
    #[error("a '.model' card needs a name and a type")]
    MalformedModel,
    /// A continuation line with no card before it (a warning: ngspice ignores it).
    #[error("a '+' continuation line with no card before it; ngspice ignores it")]
    ContinuationFirst,
    /// A model defined twice (a warning).
    #[error("model '{name}' is defined again; ngspice uses the first definition ({first})")]
    DuplicateModel {
        /// The name.
        name: String,
        /// Where the first one is, as `file:line`.
        first: String,
    },
}

fn known_sections(known: &[String]) -> String {
    if known.is_empty() {
        "; it defines no sections".to_string()
    } else {
        format!("; its sections are: {}", known.join(", "))
    }
}

/// An error or warning with its place, when it has one.
#[derive(Debug, Clone, PartialEq)]
pub struct Problem {
    /// What.
    pub error: ScanError,
    /// Where.
    pub at: Option<Location>,
}

/// Why a model name does not serve a device.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum LookupError {
    /// No model of that name.
    #[error("no model '{name}' in {scope}{}", known_models(*device, known))]
    NotFound {
        /// The name asked for.
        name: String,
        /// The type asked for.
        device: DeviceType,
        /// "the library" or "section 'x' of the library".
        scope: String,
        /// The names of the library's models of that type (binned sets by their base name).
        known: Vec<String>,
    },
    /// A model of another type.
    #[error("model '{name}' is a {found} model, not {wanted}")]
    WrongType {
        /// The model's name.
        name: String,
        /// Its type.
        found: ModelType,
        /// The type asked for.
        wanted: DeviceType,
        /// Where it is defined.
        at: Location,
    },
    /// A binned model of a level ngspice does not bin.
    #[error(
        "'{name}' is a level-{level} model, and ngspice bins only BSIM3, BSIM4 and HiSIM models (levels 8, 49, \
         14, 54, 68, 73): no instance of '{base}' would find it"
    )]
    NotBinned {
        /// The bin's name.
        name: String,
        /// Its base name.
        base: String,
        /// Its level.
        level: String,
        /// Where it is defined.
        at: Location,
    },
    /// A model visible only inside a subcircuit.
    #[error("model '{name}' is defined inside subcircuit '{subcircuit}' and is not visible outside it")]
    InsideSubcircuit {
        /// The name.
        name: String,
        /// The subcircuit.
        subcircuit: String,
        /// Where the model is defined.
        at: Location,
    },
    /// A subcircuit, not a model.
    #[error(
        "'{name}' is a subcircuit, not a model: widthwise writes M devices, which need a '.model' (use the model \
         the subcircuit instantiates, if the library has it outside the subcircuit)"
    )]
    Subcircuit {
        /// The name.
        name: String,
        /// Where it is defined.
        at: Location,
    },
    /// No bin covers the device.
    #[error(
        "no bin of '{name}' covers a device of W = {} um, L = {} um{}",
        micrometres(*width_m),
        micrometres(*length_m),
        nearest_bins(nearest)
    )]
    Uncovered {
        /// The model name.
        name: String,
        /// The finger width asked for, metres.
        width_m: f64,
        /// The length asked for, metres.
        length_m: f64,
        /// The nearest bins, each as `name (L a-b um, W c-d um)`.
        nearest: Vec<String>,
        /// Where the nearest bin is defined, if any bin has numeric limits.
        nearest_at: Option<Location>,
    },
}

fn known_models(device: DeviceType, known: &[String]) -> String {
    if known.is_empty() {
        format!("; it defines no {device} model")
    } else {
        format!("; its {device} models are: {}", known.join(", "))
    }
}

fn nearest_bins(nearest: &[String]) -> String {
    if nearest.is_empty() {
        "; none of its bins sets all of lmin, lmax, wmin and wmax as numbers".to_string()
    } else {
        format!("; nearest: {}", nearest.join("; "))
    }
}

impl LookupError {
    /// Where in the library the error is, when it is at a card.
    pub fn at(&self) -> Option<Location> {
        match self {
            LookupError::WrongType { at, .. }
            | LookupError::NotBinned { at, .. }
            | LookupError::InsideSubcircuit { at, .. }
            | LookupError::Subcircuit { at, .. } => Some(*at),
            LookupError::Uncovered { nearest_at, .. } => *nearest_at,
            LookupError::NotFound { .. } => None,
        }
    }
}
