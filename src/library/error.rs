//! Why a library file cannot be sized at all (a bad gate is that gate's problem instead).

use std::ops::Range;

use thiserror::Error;

use crate::diagnostic::{Diagnostic, Source, Span};
use crate::io::InputError;
use crate::process::ProcessError;

/// Why a library file cannot be sized at all (a bad gate is that gate's [`GateProblem`] instead).
#[derive(Debug, Error)]
pub enum LibraryError {
    /// Something wrong in the library file: what, and where when known.
    #[error("{message}")]
    File {
        /// What is wrong.
        message: String,
        /// Where in the library file.
        span: Option<Span>,
    },
    /// The process file the library names cannot be read.
    #[error("cannot read the process file: {error}")]
    ProcessUnreadable {
        /// Why.
        error: InputError,
        /// The `process = "..."` value in the library file.
        span: Span,
    },
    /// The process file the library names is bad.
    #[error("{error}")]
    ProcessFile {
        /// What is wrong, with the key and its place in that file.
        error: ProcessError,
        /// The process file.
        file: Source,
    },
}

impl LibraryError {
    /// A problem in the library file at `span`.
    pub(crate) fn at(message: impl Into<String>, span: Option<Range<usize>>) -> LibraryError {
        LibraryError::File { message: message.into(), span: span.map(Span::from) }
    }

    /// The error as a diagnostic, `library` being the library file it was read from.
    pub fn diagnostic(&self, library: &Source) -> Diagnostic {
        let message = Diagnostic::error(self.to_string());
        match self {
            LibraryError::File { span, .. } => message.at_or_within(library, *span),
            LibraryError::ProcessUnreadable { span, .. } => message.at(library, *span),
            LibraryError::ProcessFile { error, file } => message.at_or_within(file, error.span()),
        }
    }
}
