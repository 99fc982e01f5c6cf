//! Checks against something outside the project: here, decks written by `widthwise deck` and
//! simulated by ngspice (Debian's package), a module per subject.

mod deck_simulation;
mod support;
