//! `widthwise man-page [COMMAND]`: the manual page (roff, section 1) of widthwise or of one of its
//! commands, made from the command line's own definition (clap_mangen): the same text as --help.

use std::path::PathBuf;

use crate::error::Error;

/// Help shown after `widthwise man-page --help`.
pub const AFTER_HELP: &str = concat!(
    "\
Read one: widthwise man-page batch | man -l -
Install every page, for example:
  for page in '' size paths deck process batch verify completions man-page; do
    widthwise man-page $page -o ~/.local/share/man/man1/widthwise${page:+-$page}.1
  done

",
    super::estimates_note!()
);

/// Write the manual page of widthwise, or of one command (widthwise-size(1) ...), in roff.
#[derive(Debug, Clone, clap::Args)]
#[command(after_help = AFTER_HELP)]
pub struct Args {
    /// The command whose page to write (size, paths, deck, process, batch, verify, completions,
    /// man-page); without it, the page of widthwise itself, which lists them.
    #[arg(value_name = "COMMAND")]
    pub command: Option<String>,
    /// Write to FILE (atomically) instead of standard output.
    #[arg(short, long, value_name = "FILE")]
    pub output: Option<PathBuf>,
}

/// The roff page of `command` (the whole command line, passed in by the binary), or of its
/// subcommand `name`: titled `widthwise-NAME`, as man pages of subcommands are.
pub fn page(command: clap::Command, name: Option<&str>) -> Result<Vec<u8>, Error> {
    let command = command.version(env!("CARGO_PKG_VERSION"));
    let page_of = match name {
        None => command,
        Some(name) => {
            let Some(sub) = command.find_subcommand(name).cloned() else {
                return Err(Error::NoSuchCommand {
                    name: name.to_string(),
                    commands: command
                        .get_subcommands()
                        .map(|c| c.get_name().to_string())
                        .collect::<Vec<_>>()
                        .join(", "),
                });
            };
            let title = format!("widthwise-{name}");
            sub.name(title.clone())
                .bin_name(format!("widthwise {name}"))
                .display_name(title)
                .version(env!("CARGO_PKG_VERSION"))
        }
    };
    let mut roff = Vec::new();
    clap_mangen::Man::new(page_of).render(&mut roff).map_err(crate::io::OutputError::Stdout)?;
    Ok(roff)
}

/// Write the page asked for.
pub fn run(args: Args, command: clap::Command) -> Result<(), Error> {
    let roff = page(command, args.command.as_deref())?;
    crate::io::write_output(args.output.as_deref(), |out| out.write_all(&roff))?;
    Ok(())
}
