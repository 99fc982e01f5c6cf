//! The exit codes of the binary, stated once (the contributor guide gives the same table): every
//! error type says which of these it ends a run with.
//!
//! A leaf module: it imports nothing of the crate.

/// Success; also a reader that closed standard output early (`| head`).
pub const EXIT_OK: u8 = 0;
/// A check or computation did not succeed: infeasible, not converged, verification failed, a
/// simulation failed, or an internal inconsistency (a bug, said so in the message).
pub const EXIT_CHECK_FAILED: u8 = 1;
/// Bad input or usage, including input past a documented limit or work budget, and a file that
/// cannot be read or written.
pub const EXIT_BAD_INPUT: u8 = 2;
