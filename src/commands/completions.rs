//! `widthwise completions SHELL`: the shell's completion script for every command and option, made
//! from the command line's own definition (clap_complete), so it never falls behind it.

use std::path::PathBuf;

use clap::ValueEnum;
use clap_complete::Shell as Generator;

use crate::error::Error;

/// Help shown after `widthwise completions --help`.
pub const AFTER_HELP: &str = concat!(
    "\
Install, for example:
  bash: widthwise completions bash -o ~/.local/share/bash-completion/completions/widthwise
  zsh:  widthwise completions zsh -o ~/.zfunc/_widthwise   (with fpath+=(~/.zfunc) before compinit)
  fish: widthwise completions fish -o ~/.config/fish/completions/widthwise.fish

",
    super::estimates_note!()
);

/// Write the completion script of a shell: every command, option and value widthwise takes.
#[derive(Debug, Clone, clap::Args)]
#[command(after_help = AFTER_HELP)]
pub struct Args {
    /// The shell.
    #[arg(value_enum)]
    pub shell: Shell,
    /// Write to FILE (atomically) instead of standard output.
    #[arg(short, long, value_name = "FILE")]
    pub output: Option<PathBuf>,
}

/// The shells a script is written for.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Shell {
    /// GNU Bash.
    Bash,
    /// Z shell.
    Zsh,
    /// fish.
    Fish,
}

/// Write the script for `command`, the whole command line (the binary passes it in: this module
/// does not import the command line, which imports it).
pub fn run(args: Args, mut command: clap::Command) -> Result<(), Error> {
    let generator = match args.shell {
        Shell::Bash => Generator::Bash,
        Shell::Zsh => Generator::Zsh,
        Shell::Fish => Generator::Fish,
    };
    let name = command.get_name().to_string();
    crate::io::write_output(args.output.as_deref(), |out| {
        clap_complete::generate(generator, &mut command, name, out);
        Ok(())
    })?;
    Ok(())
}
