//! The command line: the top-level [`Cli`] and its [`Command`]s, each holding the arguments of
//! one command module ([`crate::commands`]), where the options, their checks and `run` live.

use clap::{Parser, Subcommand};

use crate::commands::{AFTER_HELP, batch, deck, paths, process, size, verify};

const ABOUT: &str = "Size the transistors of static CMOS gates so that each gate's worst case drives like a \
reference inverter, and report what that costs.";

/// The whole command line.
#[derive(Debug, Parser)]
#[command(name = "widthwise", version, about = ABOUT, after_help = AFTER_HELP)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// The commands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Size one gate and report every transistor, input and network.
    #[command(after_help = AFTER_HELP)]
    Size(size::Args),
    /// List the conducting paths of each network, weakest first, and count them all.
    #[command(after_help = AFTER_HELP)]
    Paths(paths::Args),
    /// Write a self-contained SPICE simulation deck: models, the gate, the reference inverter at the
    /// same drive, and every input's worst-case transition on both output edges, with .tran and .meas.
    ///
    /// The deck has one copy of the gate per worst-case transition (an input toggling with the side
    /// inputs held so that its weakest path is the only one that conducts), each with its own sources
    /// and load (the process's load_ff), and one copy of the reference inverter per output edge; one
    /// transient run measures them all. Measurements: tpd_<input>_fall_gate and tpd_<input>_rise_gate
    /// (named by the output's edge), tpd_fall_ref and tpd_rise_ref, each from the input crossing
    /// supply/2 to the output crossing supply/2. Run it with, e.g., 'ngspice -b deck.sp'; widthwise
    /// never runs a simulator. Devices are written as W=<finger width> with SPICE multiplicity
    /// m=<fingers>. The built-in models are level 1 from the process (threshold, KP, body effect as
    /// GAMMA, LAMBDA=0, no parasitic capacitance).
    #[command(after_help = AFTER_HELP)]
    Deck(deck::Args),
    /// Print the built-in process as a commented process file to start from.
    #[command(after_help = AFTER_HELP)]
    Process(process::Args),
    /// Size every gate of a library file, in every drive it lists, into one table, CSV, JSON or
    /// SPICE library.
    #[command(after_help = batch::AFTER_HELP)]
    Batch(batch::Args),
    /// Prove the sized netlist right: simulate its switches on every input vector and check that
    /// pull-up and pull-down never both conduct, are never both off, and give the expression.
    #[command(after_help = verify::AFTER_HELP)]
    Verify(verify::Args),
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn command_line_is_consistent() {
        use clap::CommandFactory;
        Cli::command().debug_assert();
    }

    #[test]
    fn formats_and_rows_that_do_not_apply_are_refused() {
        for args in [
            ["widthwise", "paths", "nand2", "--format", "spice"],
            ["widthwise", "verify", "nand2", "--format", "spice"],
            ["widthwise", "batch", "lib.toml", "--rows", "delays"],
        ] {
            let error = Cli::try_parse_from(args).unwrap_err();
            assert_eq!(error.kind(), clap::error::ErrorKind::InvalidValue, "{args:?}");
        }
        assert!(Cli::try_parse_from(["widthwise", "size", "nand2", "--format", "spice", "--rows", "delays"]).is_ok());
    }
}
