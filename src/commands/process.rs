//! `widthwise process`: print the built-in process as a commented process file to start from.

use std::path::PathBuf;

use crate::error::Error;
use crate::process::Process;

/// Print the built-in process as a commented process file to start from.
#[derive(Debug, Clone, clap::Args)]
#[command(after_help = super::AFTER_HELP)]
pub struct Args {
    /// Write to FILE (atomically) instead of standard output.
    #[arg(short, long, value_name = "FILE")]
    pub output: Option<PathBuf>,
}

/// Write the built-in process as a process file.
pub fn run(args: Args) -> Result<(), Error> {
    let text = Process::default().to_commented_toml();
    crate::io::write_output(args.output.as_deref(), |out| out.write_all(text.as_bytes()))?;
    Ok(())
}
