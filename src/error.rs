//! Typed errors of every stage, and their rendering like a compiler: where, the source line, a caret.
//!
//! Each stage returns its own error enum; [`Error`] gathers them for the binary, which maps each
//! kind to a fixed exit code ([`Error::exit_code`]).

use std::path::PathBuf;

use thiserror::Error;

use crate::diagnostic::{Diagnostic, Source};
use crate::process::ProcessError;

pub use crate::diagnostic::{Span, escaped, escaped_lines};
pub use crate::exit::{EXIT_BAD_INPUT, EXIT_CHECK_FAILED, EXIT_OK};
pub use crate::expr::error::ExprError;

/// An error of any stage, as the binary sees it.
#[derive(Debug, Error)]
pub enum Error {
    /// A bad expression, with the text it came from.
    #[error("{error}")]
    Expression {
        /// The stage's error.
        error: ExprError,
        /// The expression text.
        source_text: String,
    },
    /// Bad usage or an option value out of range.
    #[error("{0}")]
    Usage(String),
    /// An input that could not be read: a file, standard input or an argument.
    #[error("{0}")]
    Input(#[from] crate::io::InputError),
    /// The output could not be written (a closed pipe is handled by the binary).
    #[error("{0}")]
    Output(#[from] crate::io::OutputError),
    /// A bad process file, with its name and text.
    #[error("{}: {error}", path.display())]
    Process {
        /// What is wrong, with the key and its place.
        error: Box<ProcessError>,
        /// The file.
        path: PathBuf,
        /// The file's text.
        source_text: String,
    },
    /// A netlist that verification cannot simulate, or a verification past its work budget.
    #[error("{0}")]
    Verify(#[from] crate::verify::VerifyError),
    /// A check the user asked for failed; the message says which.
    #[error("{0}")]
    CheckFailed(String),
    /// A bad file (a library or process file): the message and where in which file.
    #[error("{message}")]
    InFile {
        /// What is wrong.
        message: String,
        /// The file's name as messages give it.
        origin: String,
        /// The file's text.
        source_text: String,
        /// Where, when known.
        span: Option<Span>,
    },
    /// Names in a batch clash: a gate name used twice, or a drive listed twice in one gate (each
    /// clash was reported as it was found); nothing was written.
    #[error("{count} name clash(es) among the gates and their variants (reported above); nothing was written")]
    NameClashes {
        /// How many clashes.
        count: usize,
    },
    /// A computation would pass its work budget ([`crate::budget`]).
    #[error("{0}")]
    OverBudget(#[from] crate::budget::OverBudget),
    /// Some gates of a batch could not be sized (each was reported as it was found); the others
    /// were written.
    #[error("{failed} of {total} gates could not be sized (reported above); gates written: {}", total - failed)]
    GatesFailed {
        /// Gates that failed.
        failed: usize,
        /// Gates in the file.
        total: usize,
    },
}

impl Error {
    /// The documented exit code: 1 for a failed check, 2 for bad input, usage or I/O.
    pub fn exit_code(&self) -> u8 {
        match self {
            Error::CheckFailed(_) => EXIT_CHECK_FAILED,
            _ => EXIT_BAD_INPUT,
        }
    }

    /// The message as printed on stderr, with source line and caret where there is a span.
    pub fn render(&self) -> String {
        self.diagnostic().render()
    }

    /// The error as a diagnostic: the message, and the text and place it is about.
    pub fn diagnostic(&self) -> Diagnostic {
        match self {
            Error::Expression { error, source_text } => Diagnostic::error(error.to_string())
                .at(&Source::inline("the expression", source_text.as_str()), error.span()),
            Error::Process { error, path, source_text } => Diagnostic::error(error.to_string())
                .at_or_within(&Source::file(path.display().to_string(), source_text.as_str()), error.span()),
            Error::InFile { message, origin, source_text, span } => Diagnostic::error(message.as_str())
                .at_or_within(&Source::file(origin.as_str(), source_text.as_str()), *span),
            other => Diagnostic::error(other.to_string()),
        }
    }
}
