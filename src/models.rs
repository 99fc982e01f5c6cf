//! SPICE model libraries as ngspice reads them: which `.model`s a library defines (through its
//! `.include`d files and `.lib` sections), their bins, and whether a device of a given size finds
//! a model, checked before a deck is written.
//!
//! The scan is pure: the caller (the I/O layer) passes the entry file's path and text and a reader
//! for every other file the library names; nothing here touches the file system. The rules follow
//! ngspice-39's reader:
//! - a line whose first character (after blanks) is `*` or `$`, or one of ``= [ ] ? ( ) & % " ! :
//!   , ;`` and form feed, is a comment; an end-of-line comment starts at `;`, at `//`, or at `$`
//!   after a blank or a comma; a line that starts with `+` continues the card before it (comment
//!   and blank lines may stand between), and so does a line after one that ends in `\\`;
//! - `.include FILE` (any keyword starting `.inc`, the name possibly quoted) reads FILE, relative to
//!   the including file, wherever it stands, sections or not;
//! - `.lib FILE SECTION` reads the lines between `.lib SECTION` and the next `.endl` of FILE;
//!   references inside that section resolve relative to FILE's directory, and a reference in a file
//!   that is read whole resolves relative to the deck's directory, which this scan does not know;
//! - a library read whole (no section named) must not define sections: ngspice rejects `.lib NAME`
//!   there as an unknown control card;
//! - keywords, model names and section names are case-insensitive (ngspice lowercases them), file
//!   names are not; a `.model` inside `.subckt` ... `.ends` is visible only inside it; of two models
//!   of one name, ngspice uses the first;
//! - a binned model `NAME.N` (N digits) serves an instance of `NAME` when its `lmin <= L <= lmax`
//!   and `wmin <= W <= wmax`, each end with a tolerance of 1 nm, in metres, the first such bin in
//!   the order of definition; only BSIM3, BSIM4 and HiSIM levels are binned; a plain model `NAME`
//!   is used before any bin.
//!
//! Bin limits are recorded when they are plain numbers with an optional SPICE scale suffix; an
//! expression (`{...}`, a parameter name) is recorded as such and the bin then cannot be checked.
//! The scan stops at [`MAX_NESTING`] levels of files and sections, at [`MAX_LIBRARY_BYTES`] bytes
//! read, and at a file that includes itself.

use std::collections::HashMap;
use std::fmt;
use std::path::{Component, Path, PathBuf};
use std::rc::Rc;

use thiserror::Error;

use crate::diagnostic::{Diagnostic, Severity, Source as DiagnosticSource, Span};

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
    fn distance(&self, size_m: f64) -> Option<f64> {
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
fn micrometres(metres: f64) -> String {
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

/// What a scan found: the files it read, the models, and what went wrong.
#[derive(Debug, Clone)]
pub struct Library {
    /// Every file read, the entry file first; [`FileId`] indexes it.
    pub files: Vec<SourceFile>,
    /// The section read, as asked for; `None` when the library was read whole.
    pub section: Option<String>,
    /// The models in the order ngspice defines them.
    pub models: Vec<Model>,
    /// The subcircuits defined outside any other, lowercased, with their names' places.
    pub subcircuits: Vec<(String, Location)>,
    /// Where an `.option` sets `scale`, which multiplies every W and L before ngspice picks a bin.
    pub scale: Option<Location>,
    /// Errors: ngspice would not read the library as asked.
    pub errors: Vec<Problem>,
    /// Warnings: ngspice reads the library, but perhaps not as its author meant.
    pub warnings: Vec<Problem>,
}

/// A model name and the models an instance of it can get.
#[derive(Debug, Clone, PartialEq)]
pub enum ModelSet<'a> {
    /// A plain model: every size.
    Single(&'a Model),
    /// Binned models `NAME.N`, in the order ngspice tries them.
    Binned(Vec<&'a Model>),
}

/// How a device size is served.
#[derive(Debug, Clone, PartialEq)]
pub enum Served<'a> {
    /// By a plain model, at any size.
    Plain(&'a Model),
    /// By this bin.
    Bin(&'a Model),
    /// The scan cannot tell; why.
    Unchecked(String),
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
            LookupError::NotFound { .. } | LookupError::Uncovered { .. } => None,
        }
    }
}

impl Library {
    /// The model set an instance named `name` of type `device` gets, as ngspice looks it up: a plain
    /// model of that name first, then the bins `name.N`.
    pub fn lookup(&self, name: &str, device: DeviceType) -> Result<ModelSet<'_>, LookupError> {
        let name = name.to_ascii_lowercase();
        let visible = || self.models.iter().filter(|model| model.subcircuit.is_none());
        let check_type = |model: &Model| {
            if model.model_type == ModelType::Device(device) {
                Ok(())
            } else {
                Err(LookupError::WrongType {
                    name: model.name.clone(),
                    found: model.model_type.clone(),
                    wanted: device,
                    at: model.at,
                })
            }
        };
        if let Some(model) = visible().find(|model| model.name == name) {
            check_type(model)?;
            return Ok(ModelSet::Single(model));
        }
        let bins: Vec<&Model> = visible().filter(|model| model.bin.as_ref().is_some_and(|b| b.base == name)).collect();
        if !bins.is_empty() {
            for model in &bins {
                check_type(model)?;
                if model.level.is_binned() == Some(false) {
                    return Err(LookupError::NotBinned {
                        name: model.name.clone(),
                        base: name,
                        level: model.level.to_string(),
                        at: model.at,
                    });
                }
            }
            return Ok(ModelSet::Binned(bins));
        }
        if let Some(model) = self.models.iter().find(|model| model.subcircuit.is_some() && model.name == name) {
            return Err(LookupError::InsideSubcircuit {
                name,
                subcircuit: model.subcircuit.clone().unwrap_or_default(),
                at: model.at,
            });
        }
        if let Some((_, at)) = self.subcircuits.iter().find(|(subcircuit, _)| *subcircuit == name) {
            return Err(LookupError::Subcircuit { name, at: *at });
        }
        let mut known: Vec<String> = Vec::new();
        for model in visible().filter(|model| model.model_type == ModelType::Device(device)) {
            let shown = model.bin.as_ref().map_or(&model.name, |bin| &bin.base);
            if !known.contains(shown) {
                known.push(shown.clone());
            }
        }
        let scope = match &self.section {
            Some(section) => format!("section '{section}' of the library"),
            None => "the library".to_string(),
        };
        Err(LookupError::NotFound { name, device, scope, known })
    }

    /// Whether an instance of `name` (type `device`) with finger width `width_m` and length
    /// `length_m` (metres, as on the instance line) finds a model.
    pub fn check_device(
        &self,
        name: &str,
        device: DeviceType,
        width_m: f64,
        length_m: f64,
    ) -> Result<Served<'_>, LookupError> {
        let bins = match self.lookup(name, device)? {
            ModelSet::Single(model) => return Ok(Served::Plain(model)),
            ModelSet::Binned(bins) => bins,
        };
        if let Some(at) = self.scale {
            return Ok(Served::Unchecked(format!(
                "the library sets option 'scale' ({}), which multiplies W and L before ngspice picks a bin",
                self.place(at)
            )));
        }
        let mut unchecked = None;
        for &model in &bins {
            let Some(bin) = &model.bin else { continue };
            match (bin.length.contains(length_m), bin.width.contains(width_m)) {
                (Some(true), Some(true)) => return Ok(Served::Bin(model)),
                (Some(_), Some(_)) => {}
                _ => {
                    let missing = [&bin.length.min, &bin.length.max, &bin.width.min, &bin.width.max]
                        .iter()
                        .any(|limit| **limit == Limit::Missing);
                    if !missing && unchecked.is_none() {
                        unchecked = Some(model);
                    }
                }
            }
        }
        if let Some(model) = unchecked {
            let bin = model.bin.as_ref().map(ToString::to_string).unwrap_or_default();
            return Ok(Served::Unchecked(format!(
                "bin '{}' ({bin}) has a limit widthwise does not evaluate ({})",
                model.name,
                self.place(model.at)
            )));
        }
        let mut nearest: Vec<(f64, &Model)> = bins
            .iter()
            .filter_map(|&model| {
                let bin = model.bin.as_ref()?;
                Some((bin.length.distance(length_m)?.hypot(bin.width.distance(width_m)?), model))
            })
            .collect();
        nearest.sort_by(|a, b| a.0.total_cmp(&b.0));
        Err(LookupError::Uncovered {
            name: name.to_ascii_lowercase(),
            width_m,
            length_m,
            nearest: nearest
                .iter()
                .take(2)
                .map(|(_, model)| {
                    format!("{} ({})", model.name, model.bin.as_ref().map(ToString::to_string).unwrap_or_default())
                })
                .collect(),
        })
    }

    /// The file of a location.
    pub fn file(&self, id: FileId) -> &SourceFile {
        &self.files[id.0]
    }

    /// `path:line` of a location.
    pub fn place(&self, at: Location) -> String {
        let file = self.file(at.file);
        let line = crate::diagnostic::line_and_column(&file.text, at.span.start).0;
        format!("{}:{line}", file.path.display())
    }

    /// A problem of the scan as a diagnostic, for the one renderer ([`Diagnostic::render`]):
    /// pointing at its card, or naming the entry file where it has no place.
    pub fn diagnostic(&self, message: impl Into<String>, at: Option<Location>, severity: Severity) -> Diagnostic {
        let diagnostic = Diagnostic { severity, ..Diagnostic::error(message) };
        match at {
            Some(at) => {
                let file = self.file(at.file);
                diagnostic.at(&DiagnosticSource::file(file.path.display().to_string(), file.text.as_str()), at.span)
            }
            None => match self.files.first() {
                Some(entry) => diagnostic.within(&DiagnosticSource::file(entry.path.display().to_string(), "")),
                None => diagnostic,
            },
        }
    }
}

/// Scan the library `entry` (path and text) as ngspice reads it: the whole file, as by
/// `.include ENTRY`, or with a section, as by `.lib ENTRY SECTION`. `read` fetches every other
/// file by its path (relative names joined to the including file's directory).
pub fn scan(entry: &Path, text: &str, section: Option<&str>, read: &mut Reader<'_>) -> Library {
    let mut scanner = Scanner {
        read,
        files: Vec::new(),
        by_path: HashMap::new(),
        loaded: HashMap::new(),
        bytes: 0,
        stopped: false,
        errors: Vec::new(),
        warnings: Vec::new(),
        include_stack: Vec::new(),
        section_stack: Vec::new(),
    };
    let id = scanner.add_file(entry.to_path_buf(), text.to_string());
    let mut deck = Vec::new();
    if let Some(loaded) = scanner.load(id, 0, None) {
        match section {
            Some(name) => {
                if let Err(problem) = scanner.expand_section(id, &loaded.cards, name, 0, &mut deck) {
                    scanner.error(problem.error, problem.at);
                }
            }
            None => scanner.expand_references(&loaded.cards, None, 0, &mut deck),
        }
    }
    let mut library = Library {
        files: Vec::new(),
        section: section.map(str::to_string),
        models: Vec::new(),
        subcircuits: Vec::new(),
        scale: None,
        errors: Vec::new(),
        warnings: Vec::new(),
    };
    scanner.emit(&deck, section.is_some(), &mut library);
    library.files = scanner.files;
    library.errors = scanner.errors;
    library.warnings = scanner.warnings;
    library
}

/// A logical line: its pieces (the first line, then each continuation after its `+`), comments
/// stripped, as spans of one file.
#[derive(Debug, Clone)]
struct Card {
    file: FileId,
    pieces: Vec<Span>,
}

impl Card {
    fn first<'t>(&self, files: &'t [SourceFile]) -> &'t str {
        let span = self.pieces[0];
        &files[self.file.0].text[span.start..span.end]
    }

    fn location(&self) -> Location {
        let first = self.pieces[0];
        let last = self.pieces[self.pieces.len() - 1];
        Location { file: self.file, span: Span::new(first.start, last.end) }
    }

    fn first_location(&self) -> Location {
        Location { file: self.file, span: self.pieces[0] }
    }
}

/// A file's cards with its includes in place, and what that took.
#[derive(Clone)]
struct Loaded {
    cards: Rc<Vec<Card>>,
    /// Deepest include nesting below the file.
    height: usize,
    /// Bytes of the file and everything it includes, each inclusion counted.
    bytes: usize,
}

struct Scanner<'r, 'a> {
    read: &'r mut Reader<'a>,
    files: Vec<SourceFile>,
    by_path: HashMap<PathBuf, FileId>,
    loaded: HashMap<FileId, Loaded>,
    bytes: usize,
    stopped: bool,
    errors: Vec<Problem>,
    warnings: Vec<Problem>,
    include_stack: Vec<FileId>,
    section_stack: Vec<(FileId, String)>,
}

/// What the keyword of a card says it is.
#[derive(Debug, PartialEq)]
enum Kind {
    Include,
    Lib,
    EndLib,
    Model,
    Subcircuit,
    EndSubcircuit,
    Options,
    Other,
}

fn starts_with_ignore_case(text: &str, prefix: &str) -> bool {
    text.len() >= prefix.len() && text.as_bytes()[..prefix.len()].eq_ignore_ascii_case(prefix.as_bytes())
}

fn kind(first: &str) -> Kind {
    let keyword = first.split(|c: char| c.is_ascii_whitespace()).next().unwrap_or("");
    let is = |word: &str| keyword.eq_ignore_ascii_case(word);
    if starts_with_ignore_case(first, ".lib") {
        Kind::Lib
    } else if starts_with_ignore_case(first, ".inc") {
        Kind::Include
    } else if starts_with_ignore_case(first, ".endl") {
        Kind::EndLib
    } else if is(".model") {
        Kind::Model
    } else if is(".subckt") || is(".macro") {
        Kind::Subcircuit
    } else if is(".ends") || is(".eom") {
        Kind::EndSubcircuit
    } else if starts_with_ignore_case(keyword, ".opt") {
        Kind::Options
    } else {
        Kind::Other
    }
}

/// What a `.lib` card says.
enum LibCard<'t> {
    Reference { path: &'t str, section: &'t str },
    Definition { name: &'t str },
}

/// A `.lib` line as ngspice splits it: words separated by blanks and quotes, with where the first
/// word starts in the line; `None` for `.lib` alone.
fn lib_card(first: &str) -> Option<(usize, LibCard<'_>)> {
    let bytes = first.as_bytes();
    let separator = |c: u8| c.is_ascii_whitespace() || c == b'"' || c == b'\'';
    let mut i = first.find(|c: char| c.is_ascii_whitespace())?;
    let mut word = || {
        while i < bytes.len() && separator(bytes[i]) {
            i += 1;
        }
        let start = i;
        while i < bytes.len() && !separator(bytes[i]) {
            i += 1;
        }
        (i > start).then_some((start, i))
    };
    let (start, end) = word()?;
    Some(match word() {
        Some((section_start, section_end)) => {
            (start, LibCard::Reference { path: &first[start..end], section: &first[section_start..section_end] })
        }
        None => (start, LibCard::Definition { name: &first[start..end] }),
    })
}

/// The file name of an `.include` line: quoted (up to the same quote) or up to a blank; its span
/// within the line.
fn include_path(first: &str) -> Result<(usize, &str), ScanError> {
    let keyword_end = first.find(|c: char| c.is_ascii_whitespace()).unwrap_or(first.len());
    let rest = &first[keyword_end..];
    let start = keyword_end + (rest.len() - rest.trim_start().len());
    let rest = rest.trim_start();
    let keyword = || ScanError::MissingFileName { keyword: first[..keyword_end].to_string() };
    match rest.chars().next() {
        None => Err(keyword()),
        Some(quote @ ('"' | '\'')) => match rest[1..].find(quote) {
            Some(0) => Err(keyword()),
            Some(end) => Ok((start + 1, &rest[1..=end])),
            None => Err(ScanError::UnclosedQuote),
        },
        Some(_) => {
            let end = rest.find(|c: char| c.is_ascii_whitespace()).unwrap_or(rest.len());
            Ok((start, &rest[..end]))
        }
    }
}

/// `path` with `.` dropped and `..` taken against the component before it, without the file system.
fn normalize(path: &Path) -> PathBuf {
    let mut out = PathBuf::new();
    for component in path.components() {
        match component {
            Component::CurDir => {}
            Component::ParentDir => {
                if matches!(out.components().next_back(), Some(Component::Normal(_))) {
                    out.pop();
                } else {
                    out.push("..");
                }
            }
            other => out.push(other.as_os_str()),
        }
    }
    out
}

impl Scanner<'_, '_> {
    fn error(&mut self, error: ScanError, at: Option<Location>) {
        if self.errors.len() < MAX_PROBLEMS {
            self.errors.push(Problem { error, at });
        }
    }

    fn warning(&mut self, error: ScanError, at: Option<Location>) {
        if self.warnings.len() < MAX_PROBLEMS {
            self.warnings.push(Problem { error, at });
        }
    }

    fn add_file(&mut self, path: PathBuf, text: String) -> FileId {
        let id = FileId(self.files.len());
        self.by_path.insert(normalize(&path), id);
        self.files.push(SourceFile { path, text });
        id
    }

    /// Count `bytes` against the budget; false (and one error) once it is spent.
    fn spend(&mut self, bytes: usize, at: Option<Location>) -> bool {
        if self.stopped {
            return false;
        }
        self.bytes = self.bytes.saturating_add(bytes);
        if self.bytes > MAX_LIBRARY_BYTES {
            self.stopped = true;
            self.error(ScanError::TooLarge { limit: MAX_LIBRARY_BYTES }, at);
            return false;
        }
        true
    }

    /// The file at `path` (read once, then remembered), or an error at `at`.
    fn open(&mut self, path: PathBuf, at: Location) -> Option<FileId> {
        if let Some(&id) = self.by_path.get(&normalize(&path)) {
            return Some(id);
        }
        match (self.read)(&path) {
            Ok(text) => Some(self.add_file(path, text)),
            Err(error) => {
                self.error(ScanError::Unreadable { path, message: error.to_string() }, Some(at));
                None
            }
        }
    }

    /// Resolve a file name written in `from`: absolute as is, relative to `base` (a directory);
    /// `None` for `base` means the deck's directory, which the scan does not know.
    fn resolve(&mut self, written: &str, base: Option<&Path>, at: Location) -> Option<PathBuf> {
        if written.starts_with('~') {
            self.error(ScanError::HomePath { path: written.to_string() }, Some(at));
            return None;
        }
        let path = Path::new(written);
        if path.is_absolute() {
            return Some(path.to_path_buf());
        }
        match base {
            Some(base) => Some(base.join(path)),
            None => {
                self.error(ScanError::FromDeckDirectory { path: written.to_string() }, Some(at));
                None
            }
        }
    }

    fn directory_of(&self, id: FileId) -> PathBuf {
        self.files[id.0].path.parent().map(Path::to_path_buf).unwrap_or_default()
    }

    /// The cards of file `id` with its `.include`s in place, at nesting `depth`; `None` once the
    /// budget is spent or the nesting too deep. An include that fails is an error and is left out,
    /// and the scan goes on to find further problems (ngspice would stop at the first).
    fn load(&mut self, id: FileId, depth: usize, at: Option<Location>) -> Option<Loaded> {
        if let Some(loaded) = self.loaded.get(&id).cloned() {
            if depth + loaded.height > MAX_NESTING {
                self.error(ScanError::TooDeep { limit: MAX_NESTING }, at);
                return None;
            }
            return self.spend(loaded.bytes, at).then_some(loaded);
        }
        if !self.spend(self.files[id.0].text.len(), at) {
            return None;
        }
        let (cards, problems) = split_cards(id, &self.files[id.0].text);
        for problem in problems {
            self.warning(problem.error, problem.at);
        }
        self.include_stack.push(id);
        let mut out = Vec::with_capacity(cards.len());
        let mut height = 0;
        let mut bytes = self.files[id.0].text.len();
        for card in cards {
            let first = card.first(&self.files);
            if kind(first) != Kind::Include {
                out.push(card);
                continue;
            }
            let (offset, written) = match include_path(first) {
                Ok((offset, written)) => (offset, written.to_string()),
                Err(error) => {
                    self.error(error, Some(card.first_location()));
                    continue;
                }
            };
            let start = card.pieces[0].start + offset;
            let at_path = Location { file: id, span: Span::new(start, start + written.len()) };
            let directory = self.directory_of(id);
            let Some(path) = self.resolve(&written, Some(&directory), at_path) else { continue };
            if depth + 1 > MAX_NESTING {
                self.error(ScanError::TooDeep { limit: MAX_NESTING }, Some(at_path));
                continue;
            }
            let Some(child) = self.open(path, at_path) else { continue };
            if self.include_stack.contains(&child) {
                let path = self.files[child.0].path.clone();
                self.error(ScanError::IncludeCycle { path }, Some(at_path));
                continue;
            }
            if let Some(loaded) = self.load(child, depth + 1, Some(at_path)) {
                height = height.max(loaded.height + 1);
                bytes = bytes.saturating_add(loaded.bytes);
                out.extend(loaded.cards.iter().cloned());
            }
        }
        self.include_stack.pop();
        let loaded = Loaded { cards: Rc::new(out), height, bytes };
        self.loaded.insert(id, loaded.clone());
        Some(loaded)
    }

    /// Copy `cards` to `deck`, replacing each `.lib FILE SECTION` by that section's cards; relative
    /// files resolve against `base` (`None`: the deck's directory).
    fn expand_references(&mut self, cards: &[Card], base: Option<&Path>, depth: usize, deck: &mut Vec<Card>) {
        for card in cards {
            if self.stopped {
                return;
            }
            let first = card.first(&self.files);
            if kind(first) != Kind::Lib {
                deck.push(card.clone());
                continue;
            }
            let Some((offset, LibCard::Reference { path, section })) = lib_card(first) else {
                deck.push(card.clone());
                continue;
            };
            let (path, section) = (path.to_string(), section.to_string());
            let start = card.pieces[0].start + offset;
            let at = Location { file: card.file, span: Span::new(start, start + path.len()) };
            if let Err(problem) = self.reference(&path, &section, base, at, depth, deck) {
                self.error(problem.error, problem.at);
            }
        }
    }

    /// Expand `.lib PATH SECTION` written at `at`.
    fn reference(
        &mut self,
        written: &str,
        section: &str,
        base: Option<&Path>,
        at: Location,
        depth: usize,
        deck: &mut Vec<Card>,
    ) -> Result<(), Problem> {
        let Some(path) = self.resolve(written, base, at) else { return Ok(()) };
        if depth + 1 > MAX_NESTING {
            return Err(Problem { error: ScanError::TooDeep { limit: MAX_NESTING }, at: Some(at) });
        }
        let Some(id) = self.open(path, at) else { return Ok(()) };
        let Some(loaded) = self.load(id, depth + 1, Some(at)) else { return Ok(()) };
        self.expand_section(id, &loaded.cards, section, depth + 1, deck).map_err(|mut problem| {
            problem.at = problem.at.or(Some(at));
            problem
        })
    }

    /// The cards of section `name` of file `id` (whose cards are `cards`), references expanded.
    fn expand_section(
        &mut self,
        id: FileId,
        cards: &[Card],
        name: &str,
        depth: usize,
        deck: &mut Vec<Card>,
    ) -> Result<(), Problem> {
        let path = self.files[id.0].path.clone();
        let mut known = Vec::new();
        let mut found = None;
        for (index, card) in cards.iter().enumerate() {
            let first = card.first(&self.files);
            if kind(first) != Kind::Lib {
                continue;
            }
            if let Some((_, LibCard::Definition { name: defined })) = lib_card(first) {
                if found.is_none() && defined.eq_ignore_ascii_case(name) {
                    found = Some(index);
                }
                if !known.iter().any(|k: &String| k.eq_ignore_ascii_case(defined)) {
                    known.push(defined.to_string());
                }
            }
        }
        let Some(start) = found else {
            return Err(Problem {
                error: ScanError::UnknownSection { section: name.to_string(), path, known },
                at: None,
            });
        };
        let definition = cards[start].first_location();
        let Some(length) = cards[start + 1..].iter().position(|card| kind(card.first(&self.files)) == Kind::EndLib)
        else {
            return Err(Problem {
                error: ScanError::UnclosedSection { section: name.to_string() },
                at: Some(definition),
            });
        };
        let key = (id, name.to_ascii_lowercase());
        if self.section_stack.contains(&key) {
            return Err(Problem { error: ScanError::SectionCycle { section: name.to_string(), path }, at: None });
        }
        let section_cards = &cards[start + 1..start + 1 + length];
        let bytes = section_cards.iter().map(|card| card.location().span.end - card.location().span.start).sum();
        if !self.spend(bytes, Some(definition)) {
            return Ok(());
        }
        self.section_stack.push(key);
        let base = self.directory_of(id);
        self.expand_references(section_cards, Some(&base), depth, deck);
        self.section_stack.pop();
        Ok(())
    }

    /// Read the deck's cards: models, subcircuits, the `scale` option, and cards ngspice rejects.
    fn emit(&mut self, deck: &[Card], sectioned: bool, library: &mut Library) {
        let mut subcircuits: Vec<String> = Vec::new();
        let mut sections: Vec<(String, Location)> = Vec::new();
        for card in deck {
            let first = card.first(&self.files);
            match kind(first) {
                Kind::Model => match model(card, &self.files) {
                    Ok(mut model) => {
                        model.subcircuit = subcircuits.last().cloned();
                        library.models.push(model);
                    }
                    Err(error) => self.error(error, Some(card.first_location())),
                },
                Kind::Subcircuit => {
                    let tokens = tokens(card, &self.files);
                    let name = tokens.get(1).map_or(String::new(), |t| t.text.to_ascii_lowercase());
                    if subcircuits.is_empty()
                        && let Some(token) = tokens.get(1)
                    {
                        library.subcircuits.push((name.clone(), Location { file: card.file, span: token.span }));
                    }
                    subcircuits.push(name);
                }
                Kind::EndSubcircuit => {
                    subcircuits.pop();
                }
                Kind::Options => {
                    let scale = tokens(card, &self.files).into_iter().find(|t| t.text.eq_ignore_ascii_case("scale"));
                    if let (Some(token), None) = (scale, library.scale) {
                        library.scale = Some(Location { file: card.file, span: token.span });
                    }
                }
                Kind::Lib => match lib_card(first) {
                    Some((_, LibCard::Definition { name })) => sections.push((name.to_string(), card.first_location())),
                    Some((_, LibCard::Reference { .. })) => {}
                    None => self.error(ScanError::MissingSectionName, Some(card.first_location())),
                },
                Kind::EndLib => {
                    if !sectioned && sections.is_empty() {
                        self.error(ScanError::StrayEndl, Some(card.first_location()));
                    }
                }
                Kind::Include | Kind::Other => {}
            }
        }
        if let Some((_, at)) = sections.first() {
            if sectioned {
                for (name, at) in &sections {
                    self.error(ScanError::NestedSection { section: name.clone() }, Some(*at));
                }
            } else {
                let names = sections.iter().map(|(name, _)| name.clone()).collect();
                self.error(ScanError::SectionsNeedName { sections: names }, Some(*at));
            }
        }
        let mut first_of: HashMap<&str, Location> = HashMap::new();
        for model in library.models.iter().filter(|model| model.subcircuit.is_none()) {
            match first_of.get(model.name.as_str()) {
                Some(&first) => {
                    let file = &self.files[first.file.0];
                    let line = crate::diagnostic::line_and_column(&file.text, first.span.start).0;
                    let first = format!("{}:{line}", file.path.display());
                    self.warning(ScanError::DuplicateModel { name: model.name.clone(), first }, Some(model.at));
                }
                None => {
                    first_of.insert(&model.name, model.at);
                }
            }
        }
    }
}

/// Characters that make a line a comment when they stand first (ngspice-39 replaces them by `*`).
const COMMENT_LEADERS: &[u8] = b"*$=[]?()&%\"!:,;\x0c";

/// Where an end-of-line comment starts in `line` (ngspice's rule), or its length.
fn comment_start(line: &[u8]) -> usize {
    for i in 0..line.len() {
        let c = line[i];
        if c == b';' && i > 0 {
            return i;
        }
        if c == b'$' && i > 0 && matches!(line[i - 1], b' ' | b',' | b'\t') {
            return i;
        }
        if c == b'/' && line.get(i + 1) == Some(&b'/') {
            return i;
        }
    }
    line.len()
}

/// Split a file's text into cards: comments stripped, continuation lines joined.
fn split_cards(file: FileId, text: &str) -> (Vec<Card>, Vec<Problem>) {
    let mut cards: Vec<Card> = Vec::new();
    let mut problems = Vec::new();
    let mut continued = false;
    let mut offset = 0;
    for raw in text.split_inclusive('\n') {
        let line_start = offset;
        offset += raw.len();
        let line = raw.strip_suffix('\n').unwrap_or(raw);
        let line = line.strip_suffix('\r').unwrap_or(line);
        let content = line.trim_start_matches([' ', '\t']);
        let start = line_start + (line.len() - content.len());
        if content.is_empty() {
            continue;
        }
        let bytes = content.as_bytes();
        let shell_continuation = continued;
        // A line that ends in `\\` continues on the next one (checked before comments, as ngspice does).
        let trimmed_end = content.trim_end_matches([' ', '\t']);
        continued = bytes[0] != b'*' && bytes[0] != b'$' && trimmed_end.ends_with("\\\\");
        let content = if continued { &trimmed_end[..trimmed_end.len() - 2] } else { content };
        if !shell_continuation && COMMENT_LEADERS.contains(&bytes[0]) {
            continue;
        }
        let kept = content[..comment_start(content.as_bytes())].trim_end_matches([' ', '\t']);
        if kept.is_empty() {
            continue;
        }
        let (is_continuation, piece_start) = if shell_continuation {
            (true, start)
        } else if let Some(rest) = kept.strip_prefix('+') {
            (true, start + (kept.len() - rest.len()))
        } else {
            (false, start)
        };
        let piece = Span::new(piece_start, start + kept.len());
        if is_continuation {
            match cards.last_mut() {
                Some(card) => card.pieces.push(piece),
                None => problems.push(Problem {
                    error: ScanError::ContinuationFirst,
                    at: Some(Location { file, span: Span::new(start, start + kept.len()) }),
                }),
            }
        } else {
            cards.push(Card { file, pieces: vec![piece] });
        }
    }
    (cards, problems)
}

/// A word of a card with its place in the file.
#[derive(Debug, Clone, PartialEq)]
struct Token {
    text: String,
    span: Span,
}

/// A card's words, split at blanks, `=`, `(`, `)` and `,` as ngspice splits a model card; an
/// expression in braces or single quotes is one word.
fn tokens(card: &Card, files: &[SourceFile]) -> Vec<Token> {
    let text = &files[card.file.0].text;
    // The pieces joined by one blank, with where each starts in the joined text and in the file.
    let mut joined = String::new();
    let mut map: Vec<(usize, usize)> = Vec::new();
    for (index, piece) in card.pieces.iter().enumerate() {
        if index > 0 {
            joined.push(' ');
        }
        map.push((joined.len(), piece.start));
        joined.push_str(&text[piece.start..piece.end]);
    }
    let to_file = |virtual_offset: usize| {
        let (joined_start, file_start) =
            map.iter().rev().find(|(j, _)| *j <= virtual_offset).copied().unwrap_or((0, 0));
        file_start + (virtual_offset - joined_start)
    };
    let bytes = joined.as_bytes();
    let separator = |c: u8| c.is_ascii_whitespace() || matches!(c, b'=' | b'(' | b')' | b',');
    let mut out = Vec::new();
    let mut i = 0;
    while i < bytes.len() {
        if separator(bytes[i]) {
            i += 1;
            continue;
        }
        let start = i;
        while i < bytes.len() && !separator(bytes[i]) {
            match bytes[i] {
                b'{' => {
                    let mut depth = 0usize;
                    while i < bytes.len() {
                        match bytes[i] {
                            b'{' => depth += 1,
                            b'}' => {
                                depth -= 1;
                                if depth == 0 {
                                    break;
                                }
                            }
                            _ => {}
                        }
                        i += 1;
                    }
                    i = (i + 1).min(bytes.len());
                }
                b'\'' => {
                    i += 1;
                    while i < bytes.len() && bytes[i] != b'\'' {
                        i += 1;
                    }
                    i = (i + 1).min(bytes.len());
                }
                _ => i += 1,
            }
        }
        // Each piece ends at a blank or the end, so a word that crosses pieces does so only inside
        // an expression; its end maps through the piece it ends in.
        let end_file = to_file(i.saturating_sub(1)) + 1;
        out.push(Token { text: joined[start..i].to_string(), span: Span::new(to_file(start), end_file) });
    }
    out
}

/// A number as SPICE writes it: optional sign, digits with an optional point and exponent, an
/// optional scale suffix (t g meg k m mil u n p f a, any case) and letters after it (units, which
/// ngspice ignores); `None` for anything else.
pub fn spice_number(text: &str) -> Option<f64> {
    let bytes = text.as_bytes();
    let mut i = 0;
    if matches!(bytes.first(), Some(b'+' | b'-')) {
        i += 1;
    }
    let digits_start = i;
    let mut digits = 0;
    while i < bytes.len() && bytes[i].is_ascii_digit() {
        i += 1;
        digits += 1;
    }
    if bytes.get(i) == Some(&b'.') {
        i += 1;
        while i < bytes.len() && bytes[i].is_ascii_digit() {
            i += 1;
            digits += 1;
        }
    }
    if digits == 0 || i == digits_start {
        return None;
    }
    if matches!(bytes.get(i), Some(b'e' | b'E')) {
        let mut j = i + 1;
        if matches!(bytes.get(j), Some(b'+' | b'-')) {
            j += 1;
        }
        let exponent_start = j;
        while j < bytes.len() && bytes[j].is_ascii_digit() {
            j += 1;
        }
        if j > exponent_start {
            i = j;
        }
    }
    let mantissa: f64 = text[..i].parse().ok()?;
    let rest = &text[i..];
    let lower = rest.to_ascii_lowercase();
    let (scale, used) = if lower.starts_with("meg") {
        (1e6, 3)
    } else if lower.starts_with("mil") {
        (25.4e-6, 3)
    } else {
        match lower.bytes().next() {
            Some(b't') => (1e12, 1),
            Some(b'g') => (1e9, 1),
            Some(b'k') => (1e3, 1),
            Some(b'm') => (1e-3, 1),
            Some(b'u') => (1e-6, 1),
            Some(b'n') => (1e-9, 1),
            Some(b'p') => (1e-12, 1),
            Some(b'f') => (1e-15, 1),
            Some(b'a') => (1e-18, 1),
            _ => (1.0, 0),
        }
    };
    if !rest[used..].bytes().all(|c| c.is_ascii_alphabetic()) {
        return None;
    }
    let value = mantissa * scale;
    value.is_finite().then_some(value)
}

/// A `.model` card read: name, type, level and (for `NAME.N`) the bin.
fn model(card: &Card, files: &[SourceFile]) -> Result<Model, ScanError> {
    let tokens = tokens(card, files);
    let (Some(name), Some(model_type)) = (tokens.get(1), tokens.get(2)) else {
        return Err(ScanError::MalformedModel);
    };
    let lowered = model_type.text.to_ascii_lowercase();
    let model_type = match lowered.as_str() {
        "nmos" => ModelType::Device(DeviceType::Nmos),
        "pmos" => ModelType::Device(DeviceType::Pmos),
        _ => ModelType::Other(lowered),
    };
    // The last value of each key counts, as in ngspice.
    let value_of = |key: &str| {
        tokens[3..]
            .windows(2)
            .rev()
            .find(|pair| pair[0].text.eq_ignore_ascii_case(key))
            .map(|pair| pair[1].text.clone())
    };
    let limit = |key: &str| match value_of(key) {
        None => Limit::Missing,
        Some(text) => spice_number(&text).map_or(Limit::Expression(text), Limit::Metres),
    };
    let level = match value_of("level") {
        None => Level::Default,
        Some(text) => spice_number(&text).map_or(Level::Expression(text), Level::Number),
    };
    let lowered_name = name.text.to_ascii_lowercase();
    let bin = lowered_name.rsplit_once('.').and_then(|(base, index)| {
        let numbered = !base.is_empty() && !index.is_empty() && index.bytes().all(|c| c.is_ascii_digit());
        numbered.then(|| Bin {
            base: base.to_string(),
            length: Range { min: limit("lmin"), max: limit("lmax") },
            width: Range { min: limit("wmin"), max: limit("wmax") },
        })
    });
    Ok(Model {
        name: lowered_name,
        model_type,
        level,
        bin,
        subcircuit: None,
        at: Location { file: card.file, span: name.span },
        card: card.location(),
    })
}

/// Why a model name or path cannot be written into a deck.
#[derive(Debug, Clone, PartialEq, Eq, Error)]
pub enum Unwritable {
    /// Nothing to write.
    #[error("the {what} is empty")]
    Empty {
        /// "model name" or "path".
        what: &'static str,
    },
    /// A character SPICE cannot take there.
    #[error("the {what} '{text}' holds {character:?}: {why}")]
    Character {
        /// "model name" or "path".
        what: &'static str,
        /// The name or path.
        text: String,
        /// The character.
        character: char,
        /// Why SPICE cannot take it.
        why: &'static str,
    },
    /// Not text.
    #[error("the path '{path}' is not valid UTF-8, so it cannot be written into a deck")]
    NotUtf8 {
        /// The path, lossily shown.
        path: String,
    },
    /// A model name SPICE reads as something else.
    #[error("the model name '{name}' {why}")]
    Reserved {
        /// The name.
        name: String,
        /// What ngspice makes of it.
        why: &'static str,
    },
}

/// Why ngspice cannot take `c` in a model name, if it cannot.
fn name_character(c: char) -> Option<&'static str> {
    Some(match c {
        c if c.is_whitespace() => "white space ends a SPICE word",
        '=' | '(' | ')' | ',' => "ngspice splits an instance line at '=', '(', ')' and ','",
        '\'' | '"' | '{' | '}' => "ngspice reads quotes and braces as an expression",
        ';' => "ngspice reads ';' as the start of a comment",
        c if c.is_control() || !c.is_ascii() => "widthwise writes only printable ASCII into decks",
        _ => return None,
    })
}

/// Check that `name` can stand as the model of an instance line in a deck ngspice reads.
pub fn check_model_name(name: &str) -> Result<(), Unwritable> {
    let what = "model name";
    let Some(first) = name.chars().next() else { return Err(Unwritable::Empty { what }) };
    if let Some((character, why)) = name.chars().find_map(|c| name_character(c).map(|why| (c, why))) {
        return Err(Unwritable::Character { what, text: name.to_string(), character, why });
    }
    if name.contains("//") {
        return Err(Unwritable::Character {
            what,
            text: name.to_string(),
            character: '/',
            why: "ngspice reads '//' as the start of a comment",
        });
    }
    if !(first.is_ascii_alphabetic() || first == '_') {
        return Err(Unwritable::Reserved {
            name: name.to_string(),
            why: "must start with a letter or '_': ngspice reads a word such as '1e5' where it looks for a model \
                  as a number, and a leading '$' as a comment",
        });
    }
    if name.eq_ignore_ascii_case("gnd") {
        return Err(Unwritable::Reserved { name: name.to_string(), why: "is read by ngspice as node 0 (ground)" });
    }
    if name.eq_ignore_ascii_case("off") {
        return Err(Unwritable::Reserved {
            name: name.to_string(),
            why: "is read by ngspice as the instance flag 'off', not as a model",
        });
    }
    Ok(())
}

/// Check that `path` can be written as the file of `.include PATH` or `.lib PATH SECTION`; the
/// text to write.
pub fn check_deck_path(path: &Path) -> Result<&str, Unwritable> {
    let Some(text) = path.to_str() else {
        return Err(Unwritable::NotUtf8 { path: path.to_string_lossy().into_owned() });
    };
    check_lib_word("path", text)?;
    if text.starts_with('~') {
        return Err(Unwritable::Character {
            what: "path",
            text: text.to_string(),
            character: '~',
            why: "ngspice expands a leading '~' to a home directory",
        });
    }
    Ok(text)
}

/// Check that `name` can be written as the section of `.lib PATH SECTION`.
pub fn check_section_name(name: &str) -> Result<(), Unwritable> {
    check_lib_word("section name", name)
}

/// A word of an `.include` or `.lib` line: no blank, quote or comment.
fn check_lib_word(what: &'static str, text: &str) -> Result<(), Unwritable> {
    if text.is_empty() {
        return Err(Unwritable::Empty { what });
    }
    let bad =
        |character: char, why: &'static str| Unwritable::Character { what, text: text.to_string(), character, why };
    for c in text.chars() {
        let why = match c {
            c if c.is_whitespace() => "ngspice ends a word of a '.lib' line at white space, and cannot quote it",
            c if c.is_control() => "a control character cannot be written into a deck",
            '"' | '\'' => "ngspice reads quotes on a '.lib' line as blanks",
            ';' => "ngspice reads ';' as the start of a comment",
            _ => continue,
        };
        return Err(bad(c, why));
    }
    if text.contains("//") {
        return Err(bad('/', "ngspice reads '//' as the start of a comment"));
    }
    if text.contains(",$") {
        return Err(bad('$', "ngspice reads '$' after ',' as the start of a comment"));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Scan `files[0]` (with `section`) in a file system of `files`.
    fn scan_files(files: &[(&str, &str)], section: Option<&str>) -> Library {
        let map: HashMap<PathBuf, String> =
            files.iter().map(|(path, text)| (normalize(Path::new(path)), text.to_string())).collect();
        let mut read = |path: &Path| {
            map.get(&normalize(path))
                .cloned()
                .ok_or_else(|| std::io::Error::new(std::io::ErrorKind::NotFound, "no such file"))
        };
        scan(Path::new(files[0].0), files[0].1, section, &mut read)
    }

    fn text_at(library: &Library, at: Location) -> &str {
        &library.file(at.file).text[at.span.start..at.span.end]
    }

    fn clean(library: &Library) {
        assert!(library.errors.is_empty(), "{:?}", library.errors);
    }

    #[test]
    fn model_cards_read_like_ngspice() {
        // (library text, expected models as "name type level", where the first model's name stands)
        let cases: &[(&str, &[&str])] = &[
            (".model n1 nmos level=54 lmin=0.1u", &["n1 nmos 54"]),
            (".MODEL N2 PMOS (LEVEL=14 VTH0=-0.4)", &["n2 pmos 14"]),
            (".model n3 nmos(level=8)", &["n3 nmos 8"]),
            (".model d1 d (is=1e-14)", &["d1 d 1 (not given)"]),
            ("  .model n4\n+ nmos\n* a comment between\n\n+ level = 54", &["n4 nmos 54"]),
            (".model n5 nmos $ comment level=8\n+ level=49 ; level=8", &["n5 nmos 49"]),
            (".model n6 nmos level=54 vth0=0.4$nospace", &["n6 nmos 54"]),
            (".model n7 nmos // .model fake nmos\n.model n8 pmos level=54,", &["n7 nmos 1 (not given)", "n8 pmos 54"]),
            (".model n9 nmos \\\\\nlevel=54", &["n9 nmos 54"]),
            (".model n10 nmos level={lv}", &["n10 nmos {lv}"]),
            (".model n11 nmos level='2*27'", &["n11 nmos '2*27'"]),
            ("* .model c1 nmos\n$ .model c2 nmos\n; .model c3 nmos\n  // .model c4 nmos\n! .model c5 nmos", &[]),
            (".model n12 nmos\r\n+ level=54\r\n", &["n12 nmos 54"]),
            (".model n13 nmos vth0={0.4 +\n+ dvth} level=14", &["n13 nmos 14"]),
        ];
        for (text, expected) in cases {
            let library = scan_files(&[("lib.l", text)], None);
            clean(&library);
            let found: Vec<String> =
                library.models.iter().map(|m| format!("{} {} {}", m.name, m.model_type, m.level)).collect();
            assert_eq!(&found, expected, "{text:?}");
            if let Some(model) = library.models.first() {
                assert!(text_at(&library, model.at).eq_ignore_ascii_case(&model.name), "{text:?}");
            }
        }
    }

    #[test]
    fn a_card_spans_its_continuation_lines() {
        let text = "* head\n.model n nmos\n+ level=54\n* tail\n";
        let library = scan_files(&[("lib.l", text)], None);
        assert_eq!(text_at(&library, library.models[0].card), ".model n nmos\n+ level=54");
    }

    #[test]
    fn bins_record_their_limits_in_metres() {
        let text = "\
.model b.1 nmos level=54 lmin=0.1u lmax=1um wmin=2e-7 wmax = 10u
.model B.2 NMOS LEVEL=54 LMIN={lm} LMAX=1E-6 WMIN=0.2U
.model b.x nmos level=54 lmin=1
.model a.b.7 pmos level=54 lmin=1mil lmax=2meg wmin=1e-7*2 wmax=0";
        let library = scan_files(&[("lib.l", text)], None);
        clean(&library);
        let bins: Vec<Option<&Bin>> = library.models.iter().map(|m| m.bin.as_ref()).collect();
        let close = |range: &Range, min: f64, max: f64| {
            let (got_min, got_max) = range.metres().expect("numbers");
            (got_min - min).abs() <= 1e-12 * min.abs() && (got_max - max).abs() <= 1e-12 * max.abs()
        };
        let b1 = bins[0].unwrap();
        assert_eq!(b1.base, "b");
        assert!(close(&b1.length, 0.1e-6, 1e-6), "{b1:?}");
        assert!(close(&b1.width, 2e-7, 10e-6), "{b1:?}");
        let b2 = bins[1].unwrap();
        assert_eq!((b2.base.as_str(), &b2.length.min), ("b", &Limit::Expression("{lm}".into())));
        assert_eq!((&b2.length.max, &b2.width.max), (&Limit::Metres(1e-6), &Limit::Missing));
        assert_eq!(bins[2], None);
        let b7 = bins[3].unwrap();
        assert_eq!(b7.base, "a.b");
        assert!(close(&b7.length, 25.4e-6, 2e6), "{b7:?}");
        assert_eq!(b7.width.min, Limit::Expression("1e-7*2".into()));
    }

    #[test]
    fn includes_resolve_from_the_including_file() {
        let files = [
            ("kit/top.l", ".include sub/a.inc\n.inc \"sub/b name.inc\"\n.model top nmos"),
            ("kit/sub/a.inc", ".include ../shared/c.inc\n.model a nmos"),
            ("kit/sub/b name.inc", ".model b pmos"),
            ("kit/shared/c.inc", ".model c nmos"),
        ];
        let library = scan_files(&files, None);
        clean(&library);
        let names: Vec<&str> = library.models.iter().map(|m| m.name.as_str()).collect();
        assert_eq!(names, ["c", "a", "b", "top"]);
        assert_eq!(library.file(library.models[0].at.file).path, Path::new("kit/sub/../shared/c.inc"));
    }

    #[test]
    fn a_section_reads_its_lines_and_what_they_name() {
        let files = [
            (
                "kit/corners.l",
                "* corners\n.model outside nmos\n.lib TT\n.param x=1\n.include devices.inc\n.lib more/extra.l \
                 fast_p\n.endl tt\n.lib ss\n.model ss_only nmos\n.endl",
            ),
            ("kit/devices.inc", ".model dev_n nmos level=54\n.model dev_p pmos level=54"),
            ("kit/more/extra.l", ".lib fast_p\n.model extra_p pmos\n.endl\n.lib other\n.model other nmos\n.endl"),
        ];
        let library = scan_files(&files, Some("tt"));
        clean(&library);
        let names: Vec<&str> = library.models.iter().map(|m| m.name.as_str()).collect();
        assert_eq!(names, ["dev_n", "dev_p", "extra_p"]);
        let ss = scan_files(&files, Some("SS"));
        clean(&ss);
        assert_eq!(ss.models.iter().map(|m| m.name.as_str()).collect::<Vec<_>>(), ["ss_only"]);
    }

    #[test]
    fn references_in_a_section_resolve_from_the_library_not_the_included_file() {
        // ngspice expands `.lib` references of a section against the directory of the library that
        // holds the section, even when the reference came from a file it `.include`s.
        let files = [
            ("kit/lib.l", ".lib tt\n.include sub/inner.inc\n.endl"),
            ("kit/sub/inner.inc", ".lib corners.l x\n"),
            ("kit/corners.l", ".lib x\n.model found nmos\n.endl"),
        ];
        let library = scan_files(&files, Some("tt"));
        clean(&library);
        assert_eq!(library.models[0].name, "found");
    }

    #[test]
    fn models_inside_subcircuits_are_local() {
        let text = ".subckt cell d g s b\n.model inner nmos\nm1 d g s b inner\n.ends\n.model outer nmos";
        let library = scan_files(&[("lib.l", text)], None);
        clean(&library);
        assert_eq!(library.models[0].subcircuit.as_deref(), Some("cell"));
        assert_eq!(library.models[1].subcircuit, None);
        assert_eq!(library.subcircuits[0].0, "cell");
    }

    /// (files, section, expected message fragment, text the error points at or "" for none)
    type ErrorCase<'a> = (&'a [(&'a str, &'a str)], Option<&'a str>, &'a str, &'a str);

    #[test]
    fn bad_libraries_point_at_the_line() {
        let cases: &[ErrorCase] = &[
            (&[("lib.l", ".model ok nmos\n.include missing.inc")], None, "cannot read 'missing.inc'", "missing.inc"),
            (&[("lib.l", ".include   ")], None, "'.include' names no file", ".include"),
            (&[("lib.l", ".inc \"open.l")], None, "never closed", ".inc \"open.l"),
            (&[("lib.l", ".inc ''")], None, "'.inc' names no file", ".inc ''"),
            (&[("lib.l", ".include ~/x.l")], None, "starts with '~'", "~/x.l"),
            (&[("a.l", ".include b.l"), ("b.l", "* b\n.include a.l")], None, "'a.l' includes itself", "a.l"),
            (&[("lib.l", ".lib typical\n.model n nmos\n.endl")], None, "defines sections (typical)", ".lib typical"),
            (&[("lib.l", ".lib tt\n.model n nmos")], Some("tt"), "section 'tt' has no '.endl'", ".lib tt"),
            (
                &[("lib.l", ".lib tt\n.endl\n.lib ff\n.endl")],
                Some("ss"),
                "no section 'ss' in 'lib.l'; its sections are: tt, ff",
                "",
            ),
            (&[("lib.l", ".model n nmos")], Some("tt"), "it defines no sections", ""),
            (
                &[("lib.l", ".lib tt\n.lib other.l nope\n.endl"), ("other.l", ".lib yes\n.endl")],
                Some("tt"),
                "no section 'nope' in 'other.l'; its sections are: yes",
                "other.l",
            ),
            (&[("lib.l", "* x\n.lib corners.l tt")], None, "ngspice looks for it beside the deck", "corners.l"),
            (&[("lib.l", ".lib a\n.lib lib.l a\n.endl")], Some("a"), "section 'a' of 'lib.l' refers back", "lib.l"),
            (
                &[("lib.l", ".lib a\n.lib b\n.model n nmos\n.endl\n.endl")],
                Some("a"),
                "defines a section inside",
                ".lib b",
            ),
            (&[("lib.l", ".model n nmos\n.endl")], None, "'.endl' ends no section", ".endl"),
            (&[("lib.l", ".lib\n")], None, "names neither a file nor a section", ".lib"),
            (&[("lib.l", "* x\n.model only_name")], None, "needs a name and a type", ".model only_name"),
        ];
        for (files, section, message, pointed) in cases {
            let library = scan_files(files, *section);
            let problem = library.errors.first().unwrap_or_else(|| panic!("{files:?}: no error"));
            assert!(problem.error.to_string().contains(message), "{files:?}: {}", problem.error);
            match problem.at {
                Some(at) => assert_eq!(text_at(&library, at), *pointed, "{files:?}"),
                None => assert_eq!(*pointed, "", "{files:?}"),
            }
            let rendered = library.diagnostic(problem.error.to_string(), problem.at, Severity::Error).render();
            assert!(rendered.starts_with("error: "), "{rendered}");
        }
    }

    #[test]
    fn one_scan_reports_every_problem_it_meets() {
        let files = [
            ("kit/top.l", ".lib tt\n.include missing.l\n.lib inc.l fast\n.model after nmos\n.include missing.l\n.endl"),
            ("kit/inc.l", ".lib typical\n.model n nmos\n.endl"),
        ];
        let library = scan_files(&files, Some("tt"));
        let errors: Vec<String> = library.errors.iter().map(|p| p.error.to_string()).collect();
        assert_eq!(errors.len(), 3, "{errors:?}");
        assert!(errors[0].starts_with("cannot read 'kit/missing.l'"), "{errors:?}");
        assert!(errors[1].starts_with("cannot read 'kit/missing.l'"), "{errors:?}");
        assert_eq!(errors[2], "no section 'fast' in 'kit/inc.l'; its sections are: typical");
        assert_eq!(text_at(&library, library.errors[1].at.unwrap()), "missing.l");
        assert_eq!(library.models[0].name, "after");
    }

    #[test]
    fn nesting_and_size_are_limited() {
        // A chain of files, each including the next, one deeper than allowed.
        let names: Vec<String> = (0..=MAX_NESTING + 1).map(|i| format!("f{i}.l")).collect();
        let texts: Vec<String> = (0..=MAX_NESTING + 1)
            .map(|i| if i <= MAX_NESTING { format!(".include f{}.l", i + 1) } else { ".model deep nmos".into() })
            .collect();
        let files: Vec<(&str, &str)> = names.iter().map(String::as_str).zip(texts.iter().map(String::as_str)).collect();
        let library = scan_files(&files, None);
        assert!(matches!(library.errors[0].error, ScanError::TooDeep { limit: MAX_NESTING }), "{:?}", library.errors);
        // One deep less is read.
        let library = scan_files(&files[1..], None);
        clean(&library);
        assert_eq!(library.models[0].name, "deep");
        // Each file includes the next twice: 2^15 inclusions of a file of 1/2^14 of the limit pass it.
        let comment = format!("* {}\n", "x".repeat(MAX_LIBRARY_BYTES >> 14));
        let names: Vec<String> = (0..16).map(|i| format!("g{i}.l")).collect();
        let texts: Vec<String> = (0..16)
            .map(|i| if i < 15 { format!(".inc g{0}.l\n.inc g{0}.l", i + 1) } else { comment.clone() })
            .collect();
        let files: Vec<(&str, &str)> = names.iter().map(String::as_str).zip(texts.iter().map(String::as_str)).collect();
        let library = scan_files(&files, None);
        assert!(library.errors.iter().any(|p| matches!(p.error, ScanError::TooLarge { .. })), "{:?}", library.errors);
    }

    #[test]
    fn warnings_do_not_stop_the_scan() {
        let text = "+ level=1\n.model n nmos level=54\n.model N pmos";
        let library = scan_files(&[("lib.l", text)], None);
        clean(&library);
        let warnings: Vec<String> = library.warnings.iter().map(|w| w.error.to_string()).collect();
        assert!(warnings[0].contains("no card before it"), "{warnings:?}");
        assert!(
            warnings[1].contains("'n' is defined again; ngspice uses the first definition (lib.l:2)"),
            "{warnings:?}"
        );
        assert_eq!(text_at(&library, library.warnings[1].at.unwrap()), "N");
        assert!(
            library
                .diagnostic(warnings[1].as_str(), library.warnings[1].at, Severity::Warning)
                .render()
                .starts_with("warning: ")
        );
        // The first definition is what a lookup finds.
        assert!(
            matches!(library.lookup("n", DeviceType::Nmos), Ok(ModelSet::Single(m)) if m.model_type == ModelType::Device(DeviceType::Nmos))
        );
    }

    const BINNED: &str = "\
.model plain nmos level=54
.model pl pmos level=54
.model bn.1 nmos level=54 lmin=0.12u lmax=10u wmin=0.15u wmax=1u
.model bn.2 nmos level=54 lmin=0.12u lmax=10u wmin=1u wmax=50u
.model old.1 nmos level=1 lmin=0 lmax=1 wmin=0 wmax=1
.model mixed.1 nmos level=54 lmin=0 lmax=1 wmin=0 wmax=1
.model mixed.2 pmos level=54 lmin=0 lmax=1 wmin=0 wmax=1
.model ex.1 nmos level=54 lmin={lm} lmax=1 wmin=0 wmax=1
.model half.1 nmos level=54 lmin=0 lmax=1
.model diode d
.subckt cell d g s b
.model hidden nmos level=54
.ends";

    #[test]
    fn lookups_find_plain_and_binned_models() {
        let library = scan_files(&[("lib.l", BINNED)], None);
        clean(&library);
        assert!(matches!(library.lookup("PLAIN", DeviceType::Nmos), Ok(ModelSet::Single(m)) if m.name == "plain"));
        let Ok(ModelSet::Binned(bins)) = library.lookup("bn", DeviceType::Nmos) else { panic!("bins") };
        assert_eq!(bins.iter().map(|m| m.name.as_str()).collect::<Vec<_>>(), ["bn.1", "bn.2"]);
        // A bin can be named directly, as ngspice matches a plain name first.
        assert!(matches!(library.lookup("bn.2", DeviceType::Nmos), Ok(ModelSet::Single(_))));
        let message = |name: &str, device| library.lookup(name, device).unwrap_err().to_string();
        assert_eq!(message("pl", DeviceType::Nmos), "model 'pl' is a pmos model, not nmos");
        assert_eq!(message("diode", DeviceType::Nmos), "model 'diode' is a d model, not nmos");
        assert_eq!(message("mixed", DeviceType::Nmos), "model 'mixed.2' is a pmos model, not nmos");
        assert!(message("old", DeviceType::Nmos).starts_with("'old.1' is a level-1 model, and ngspice bins only"));
        assert!(message("hidden", DeviceType::Nmos).contains("inside subcircuit 'cell'"));
        assert!(message("cell", DeviceType::Nmos).starts_with("'cell' is a subcircuit, not a model"));
        assert_eq!(message("nch", DeviceType::Pmos), "no model 'nch' in the library; its pmos models are: pl, mixed");
        assert_eq!(
            message("nch", DeviceType::Nmos),
            "no model 'nch' in the library; its nmos models are: plain, bn, old, mixed, ex, half"
        );
    }

    #[test]
    fn bins_cover_devices_as_ngspice_picks_them() {
        let library = scan_files(&[("lib.l", BINNED)], None);
        let served = |name: &str, w: f64, l: f64| library.check_device(name, DeviceType::Nmos, w, l);
        assert!(matches!(served("plain", 1.0, 1.0), Ok(Served::Plain(_))));
        assert!(matches!(served("bn", 0.5e-6, 0.13e-6), Ok(Served::Bin(m)) if m.name == "bn.1"));
        assert!(matches!(served("bn", 2e-6, 0.13e-6), Ok(Served::Bin(m)) if m.name == "bn.2"));
        // At a shared limit the first bin wins; within 1 nm of a limit counts as inside.
        assert!(matches!(served("bn", 1e-6, 0.13e-6), Ok(Served::Bin(m)) if m.name == "bn.1"));
        assert!(matches!(served("bn", 50.0009e-6, 0.13e-6), Ok(Served::Bin(m)) if m.name == "bn.2"));
        assert!(matches!(served("bn", 0.5e-6, 0.1191e-6), Ok(Served::Bin(m)) if m.name == "bn.1"));
        let error = served("bn", 60e-6, 0.13e-6).unwrap_err().to_string();
        assert_eq!(
            error,
            "no bin of 'bn' covers a device of W = 60 um, L = 0.13 um; nearest: bn.2 (L 0.12-10 um, W 1-50 um); \
             bn.1 (L 0.12-10 um, W 0.15-1 um)"
        );
        assert!(served("bn", 0.5e-6, 0.1189e-6).is_err());
        assert!(matches!(served("ex", 0.5, 0.5), Ok(Served::Unchecked(why)) if why.contains("'ex.1'")));
        let error = served("half", 0.5, 0.5).unwrap_err().to_string();
        assert!(error.ends_with("none of its bins sets all of lmin, lmax, wmin and wmax as numbers"), "{error}");
        let scaled = scan_files(&[("lib.l", &format!("{BINNED}\n.options scale=1e-6"))], None);
        let served = scaled.check_device("bn", DeviceType::Nmos, 60e-6, 0.13e-6);
        assert!(matches!(served, Ok(Served::Unchecked(why)) if why.contains("option 'scale' (lib.l:14)")));
    }

    #[test]
    fn spice_numbers_with_scale_suffixes() {
        let cases: &[(&str, Option<f64>)] = &[
            ("1", Some(1.0)),
            ("0.13u", Some(0.13e-6)),
            ("0.13UM", Some(0.13e-6)),
            ("1meg", Some(1e6)),
            ("2MIL", Some(50.8e-6)),
            ("1e-6", Some(1e-6)),
            ("-2.5e3k", Some(-2.5e6)),
            (".5n", Some(0.5e-9)),
            ("5.", Some(5.0)),
            ("3m", Some(3e-3)),
            ("7f", Some(7e-15)),
            ("", None),
            ("u", None),
            ("{x}", None),
            ("1e-7*2", None),
            ("lmin", None),
            (".", None),
            ("+", None),
            ("1u2", None),
        ];
        for (text, expected) in cases {
            let got = spice_number(text);
            match (got, expected) {
                (Some(got), Some(expected)) => {
                    assert!((got - expected).abs() <= 1e-12 * expected.abs(), "{text}: {got}")
                }
                _ => assert_eq!(got, *expected, "{text}"),
            }
        }
    }

    #[test]
    fn names_and_paths_a_deck_can_hold() {
        for name in ["nch", "NCH", "_n", "n.1", "n-ch", "n+ch", "a[1]", "p$x"] {
            assert_eq!(check_model_name(name), Ok(()), "{name}");
        }
        for (name, why) in [
            ("", "is empty"),
            ("a b", "white space"),
            ("a=b", "splits an instance line"),
            ("a(b", "splits an instance line"),
            ("a,b", "splits an instance line"),
            ("a'b", "quotes and braces"),
            ("a\"b", "quotes and braces"),
            ("{a}", "quotes and braces"),
            ("a;b", "comment"),
            ("a//b", "comment"),
            ("1e5", "must start with a letter"),
            ("$n", "must start with a letter"),
            ("gnd", "node 0"),
            ("OFF", "instance flag"),
            ("n\u{c4}", "printable ASCII"),
        ] {
            let error = check_model_name(name).unwrap_err().to_string();
            assert!(error.contains(why), "{name:?}: {error}");
        }
        for path in ["/home/x/lib.l", "/a,b/x.l", "/a$b.l", "/Ab/\u{c4}.l", "rel/x.l"] {
            assert_eq!(check_deck_path(Path::new(path)), Ok(path), "{path}");
        }
        for (path, why) in [
            ("", "is empty"),
            ("/a b/x", "white space"),
            ("/a;b", "comment"),
            ("/x//y", "comment"),
            ("/a,$b", "after ','"),
            ("~/x", "home directory"),
            ("/\"x\"", "quotes"),
            ("/a\tb", "white space"),
        ] {
            let error = check_deck_path(Path::new(path)).unwrap_err().to_string();
            assert!(error.contains(why), "{path:?}: {error}");
        }
        #[cfg(unix)]
        {
            use std::os::unix::ffi::OsStrExt;
            let path = Path::new(std::ffi::OsStr::from_bytes(b"/x/\xff.l"));
            assert!(check_deck_path(path).unwrap_err().to_string().contains("not valid UTF-8"));
        }
        assert_eq!(check_section_name("typical"), Ok(()));
        assert!(check_section_name("two words").is_err());
    }

    proptest::proptest! {
        /// Any text made of the reader's special characters scans without a panic, and every
        /// problem points inside its file.
        #[test]
        fn any_library_text_scans(text in r#"([-.+*$;/,'"{}()=~ \t\r\n\\]|model|lib|endl|inc|subckt|ends|nmos|a|1|u|e|\u{e9})*"#) {
            for section in [None, Some("a")] {
                let library = scan_files(&[("lib.l", &text)], section);
                for problem in library.errors.iter().chain(&library.warnings) {
                    if let Some(at) = problem.at {
                        let file = &library.file(at.file).text;
                        proptest::prop_assert!(at.span.start <= at.span.end && at.span.end <= file.len());
                        proptest::prop_assert!(file.is_char_boundary(at.span.start) && file.is_char_boundary(at.span.end));
                    }
                }
                for model in &library.models {
                    let file = &library.file(model.at.file).text;
                    proptest::prop_assert!(file.get(model.at.span.start..model.at.span.end).is_some());
                }
            }
        }
    }

    #[test]
    fn arbitrary_bytes_never_panic() {
        // Every prefix of a text dense in the reader's special characters.
        let text = ".model a.1 nmos (level='x lmin={1 {2}} wmax=1u\n+\\\\\n\"\n.lib\n.lib x\n.inc '\n.endl\n\
                    ;$//+ ; $\r\n.subckt\n.ends\n.ends\n.option scale\n.lib a b\n.model \u{e9} nmos\n{";
        for end in (0..=text.len()).filter(|&end| text.is_char_boundary(end)) {
            for section in [None, Some("x")] {
                let library = scan_files(&[("lib.l", &text[..end])], section);
                for problem in library.errors.iter().chain(&library.warnings) {
                    let _ = library.diagnostic(problem.error.to_string(), problem.at, Severity::Error).render();
                }
                let _ = library.check_device("a", DeviceType::Nmos, 1e-6, 1e-6);
            }
        }
    }
}
