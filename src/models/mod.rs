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

mod cards;
pub mod check;
pub mod error;
pub mod library;
pub mod names;
pub mod scan;
pub mod types;

pub use cards::spice_number;
pub use check::{DeviceUse, ModelCheckError, check_devices, scan_errors};
pub use error::{LookupError, Problem, ScanError};
pub use library::{Library, ModelSet, Served};
pub use names::{Unwritable, check_deck_path, check_model_name, check_section_name};
pub use scan::scan;
pub use types::{
    BIN_TOLERANCE_M, BINNED_LEVELS, Bin, DeviceType, FileId, Level, Limit, Location, MAX_LIBRARY_BYTES, MAX_NESTING,
    MAX_PROBLEMS, Model, ModelType, Range, Reader, SourceFile,
};

#[cfg(test)]
mod tests;
