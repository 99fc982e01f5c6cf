//! The final error of a run, as the binary sees it: each stage's typed error, gathered.
//!
//! Each stage returns its own error type, next to the stage ([`ExprError`], [`ProcessError`],
//! [`SizingError`], [`TimingError`] ...). [`Error`] wraps them without flattening them to text, knows
//! the exit code of each ([`Error::exit_code`], codes in [`crate::exit`]) and renders each through
//! the one diagnostic renderer ([`Error::render`]), pointing into its source where it has a place.
//! This module imports the stages; no stage imports it.

use thiserror::Error;

use crate::budget::OverBudget;
use crate::calibrate::CalibrateError;
use crate::diagnostic::{Diagnostic, Source};
use crate::exit::{EXIT_BAD_INPUT, EXIT_CHECK_FAILED};
use crate::expr::error::ExprError;
use crate::io::{InputError, OutputError};
use crate::library::LibraryError;
use crate::logic::{LogicError, PullUpError};
use crate::measure::MeasureError;
use crate::models::{Library as ModelLibrary, ModelCheckError};
use crate::ngspice::SimulationError;
use crate::output::deck::DeckError;
use crate::output::schematic::SchematicError;
use crate::paths::ListingError;
use crate::process::ProcessError;
use crate::sizing::SizingError;
use crate::timing::TimingError;
use crate::verify::{VerifyError, VerifyFailed};

/// An error of any stage, as the binary sees it.
#[derive(Debug, Error)]
pub enum Error {
    /// A bad expression, with the text it came from.
    #[error("{error}")]
    Expression {
        /// The stage's error.
        error: ExprError,
        /// The expression.
        input: Source,
    },
    /// A function that has no cell (an XOR past the limits), with the text it came from.
    #[error("{error}")]
    Logic {
        /// The stage's error.
        error: LogicError,
        /// The expression.
        input: Source,
    },
    /// A pull-up that is refused, with its text (or, for a mirror, the cell's).
    #[error("{error}")]
    PullUp {
        /// Why.
        error: PullUpError,
        /// The pull-up as written, or the expression.
        input: Source,
    },
    /// A bad process file, with the file.
    #[error("{error}")]
    Process {
        /// What is wrong, with the key and its place.
        error: ProcessError,
        /// The file's name and text.
        file: Source,
    },
    /// A library file that cannot be sized at all, with the file.
    #[error("{error}")]
    Library {
        /// What is wrong, and where (in the library file or a process file it names).
        error: LibraryError,
        /// The library file's name and text.
        file: Source,
    },
    /// An input that could not be read: a file, standard input or an argument.
    #[error(transparent)]
    Input(#[from] InputError),
    /// The output could not be written (a closed pipe is handled by the binary).
    #[error(transparent)]
    Output(#[from] OutputError),
    /// A cell that cannot be sized under its plan (the elmore method and the stack-order search
    /// included).
    #[error(transparent)]
    Sizing(#[from] SizingError),
    /// Delays that could not be worked out.
    #[error(transparent)]
    Timing(#[from] TimingError),
    /// A path listing past its limits.
    #[error(transparent)]
    Listing(#[from] ListingError),
    /// A deck that cannot be written as asked.
    #[error(transparent)]
    Deck(#[from] DeckError),
    /// A schematic past the writer's limits.
    #[error(transparent)]
    Schematic(#[from] SchematicError),
    /// A netlist that verification cannot simulate, or a verification past its limits.
    #[error(transparent)]
    Verify(#[from] VerifyError),
    /// A netlist that fails verification.
    #[error(transparent)]
    VerifyFailed(#[from] VerifyFailed),
    /// A computation would pass its work budget ([`crate::budget`]).
    #[error(transparent)]
    OverBudget(#[from] OverBudget),
    /// A simulation that gave no result.
    #[error(transparent)]
    Simulation(#[from] SimulationError),
    /// A model library that does not serve a deck, with the library as scanned (its files, to
    /// point into them).
    #[error("{error}")]
    Models {
        /// What is wrong.
        error: Box<ModelCheckError>,
        /// The library as scanned.
        library: Box<ModelLibrary>,
    },
    /// A deck run through ngspice that gave no delays.
    #[error(transparent)]
    Measure(#[from] MeasureError),
    /// A calibration by simulation that did not succeed.
    #[error(transparent)]
    Calibrate(#[from] CalibrateError),
    /// A command name that is not one of widthwise's (`man-page NAME`).
    #[error("there is no command '{}': the commands are {commands}", crate::diagnostic::escaped(name))]
    NoSuchCommand {
        /// The name given.
        name: String,
        /// The commands, listed.
        commands: String,
    },
    /// An option given where it does not apply (refused rather than silently ignored).
    #[error("{option} does not apply {case}: {why}")]
    NotApplicable {
        /// The option, as written on the command line.
        option: &'static str,
        /// When it does not apply (`with --format json`).
        case: &'static str,
        /// Why, and what to do instead.
        why: &'static str,
    },
    /// Names in a batch clash: a gate name used twice, or a drive listed twice in one gate (each
    /// clash was reported as it was found); nothing was written.
    #[error("{count} name clash(es) among the gates and their variants (reported above); nothing was written")]
    NameClashes {
        /// How many clashes.
        count: usize,
    },
    /// Some gates of a batch could not be sized (each was reported as it was found); the others
    /// were written.
    #[error("{failed} of {total} gates could not be sized (reported above); gates written: {}", total - failed)]
    GatesFailed {
        /// Gates that failed.
        failed: usize,
        /// Gates in the file.
        total: usize,
    },
    /// Some variants of a batch fail verification (each was reported as it was found); every
    /// variant was written.
    #[error("{unverified} of {variants} variants fail verification (each named above); they are still written")]
    VariantsUnverified {
        /// Variants that fail.
        unverified: usize,
        /// Variants sized.
        variants: usize,
    },
    /// Some variants of a calibrated batch were not calibrated (each was reported as it was
    /// found); the others were written.
    #[error(
        "{failed} of {variants} variants were not calibrated (each named above); the {} others were written",
        variants - failed
    )]
    VariantsNotCalibrated {
        /// Variants not calibrated.
        failed: usize,
        /// Variants sized.
        variants: usize,
        /// The exit code: the largest of the failures' (2 where one was past a limit or the run
        /// budget, else 1).
        code: u8,
    },
}

impl Error {
    /// The documented exit code ([`crate::exit`]): 1 when a check or computation did not succeed
    /// (infeasible, not converged, verification failed, a simulation failed, an internal
    /// inconsistency); 2 for bad input or usage, an input past a limit or a work budget, and a file
    /// that cannot be read or written.
    pub fn exit_code(&self) -> u8 {
        let failed = match self {
            Error::Sizing(error) => error.is_check_failure() || error.is_internal(),
            Error::Timing(error) => error.is_internal(),
            Error::Verify(error) => error.is_internal(),
            Error::Simulation(error) => return error.exit_code(),
            Error::Measure(error) => return error.exit_code(),
            Error::Calibrate(error) => return error.exit_code(),
            Error::VariantsNotCalibrated { code, .. } => return *code,
            Error::VerifyFailed(_) | Error::VariantsUnverified { .. } => true,
            Error::Expression { .. }
            | Error::Logic { .. }
            | Error::PullUp { .. }
            | Error::Process { .. }
            | Error::Library { .. }
            | Error::Input(_)
            | Error::Output(_)
            | Error::Listing(_)
            | Error::Deck(_)
            | Error::Schematic(_)
            | Error::Models { .. }
            | Error::OverBudget(_)
            | Error::NotApplicable { .. }
            | Error::NoSuchCommand { .. }
            | Error::NameClashes { .. }
            | Error::GatesFailed { .. } => false,
        };
        if failed { EXIT_CHECK_FAILED } else { EXIT_BAD_INPUT }
    }

    /// Whether the error is an internal inconsistency: a bug, never the input's fault.
    pub fn is_internal(&self) -> bool {
        match self {
            Error::Sizing(error) => error.is_internal(),
            Error::Timing(error) => error.is_internal(),
            Error::Verify(error) => error.is_internal(),
            _ => false,
        }
    }

    /// Whether standard output was closed by its reader (`| head`): the binary exits 0, quietly.
    pub fn is_closed_pipe(&self) -> bool {
        matches!(self, Error::Output(error) if error.is_closed_pipe())
    }

    /// The message as printed on stderr, with source line and caret where there is a span.
    pub fn render(&self) -> String {
        self.diagnostic().render()
    }

    /// The error as a diagnostic: the message, and the text and place it is about.
    pub fn diagnostic(&self) -> Diagnostic {
        match self {
            Error::Expression { error, input } => Diagnostic::error(error.to_string()).at(input, error.span()),
            Error::Logic { error, input } => Diagnostic::error(error.to_string()).at(input, error.span()),
            // A pull-up refused as a whole (too large to check, or a mirror that does not fit) is
            // pointed at whole.
            Error::PullUp { error, input } => Diagnostic::error(error.to_string())
                .at_or_within(input, error.span().or(Some(crate::diagnostic::Span::new(0, input.text().len())))),
            Error::Process { error, file } => Diagnostic::error(error.to_string()).at_or_within(file, error.span()),
            Error::Library { error, file } => error.diagnostic(file),
            Error::Models { error, library } => {
                library.diagnostic(error.to_string(), error.at(), crate::diagnostic::Severity::Error)
            }
            other if other.is_internal() => {
                Diagnostic::error(format!("{other} (an internal inconsistency: a bug in widthwise, not in the input)"))
            }
            other => Diagnostic::error(other.to_string()),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn each_kind_of_error_has_its_exit_code() {
        let infeasible = SizingError::Infeasible {
            target: 1.0,
            best: 1.5,
            cap: 80.0,
            cap_factor: 10.0,
            input: "a".into(),
            edge: "fall",
        };
        assert_eq!(Error::from(infeasible).exit_code(), EXIT_CHECK_FAILED);
        let stalled = SizingError::Solver(crate::optimize::geometric::SolveError::Stalled);
        assert_eq!(Error::from(stalled).exit_code(), EXIT_CHECK_FAILED);
        let search = SizingError::TooLargeToSearch { count: 70, limit: 64 };
        assert_eq!(Error::from(search).exit_code(), EXIT_BAD_INPUT);
        let internal = Error::from(SizingError::DefaultOrderChanged);
        assert_eq!(internal.exit_code(), EXIT_CHECK_FAILED);
        assert!(internal.render().contains("an internal inconsistency"), "{}", internal.render());
        let reserved = SizingError::ReservedCellName { name: "vdd".into(), why: "a rail".into() };
        assert_eq!(Error::from(reserved).exit_code(), EXIT_BAD_INPUT);
        let fault = crate::timing::NetworkFault::NoRail;
        let network = TimingError::Network { input: "a".into(), edge: "fall", why: fault };
        assert_eq!(Error::from(network.clone()).exit_code(), EXIT_CHECK_FAILED);
        assert_eq!(Error::from(SizingError::Timing(network)).exit_code(), EXIT_CHECK_FAILED);
        assert_eq!(Error::from(DeckError::SameModels { name: "m".into() }).exit_code(), EXIT_BAD_INPUT);
        let too_long = InputError::TooLong { what: "the expression".into(), limit: 1 };
        assert_eq!(Error::from(too_long).exit_code(), EXIT_BAD_INPUT);
        assert_eq!(Error::VariantsUnverified { unverified: 1, variants: 2 }.exit_code(), EXIT_CHECK_FAILED);
    }

    #[test]
    fn an_expression_error_points_into_the_expression() {
        let error = crate::expr::read_gate("!(a & )").unwrap_err();
        let rendered = Error::Expression { error, input: Source::inline("the expression", "!(a & )") }.render();
        assert_eq!(
            rendered,
            "error: expected an input name, a NOT or '(', found ')'\n  at the expression, column 7:\n    !(a & )\n          ^\n"
        );
    }
}
