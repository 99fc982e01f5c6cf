//! The command line: the top-level [`Cli`] and its [`Command`]s, each holding the arguments of
//! one command module ([`crate::commands`]), where the options, their checks and `run` live.

use clap::{Parser, Subcommand};

use crate::commands::{AFTER_HELP, batch, completions, deck, effort, man_page, paths, process, size, verify};

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

/// The commands: each variant holds its command's arguments, whose module describes it (its doc
/// comment is the command's help: a variant's own doc comment would replace it), checks its options
/// and runs it.
#[derive(Debug, Subcommand)]
pub enum Command {
    Size(size::Args),
    Paths(paths::Args),
    Deck(deck::Args),
    Effort(effort::Args),
    Process(process::Args),
    Batch(batch::Args),
    Verify(verify::Args),
    Completions(completions::Args),
    ManPage(man_page::Args),
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
