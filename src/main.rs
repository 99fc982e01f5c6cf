//! The `widthwise` binary: parse the command line, run it, map the outcome to an exit code.

#![forbid(unsafe_code)]

use std::process::ExitCode;

use clap::Parser;
use widthwise::cli::Cli;
use widthwise::error::{EXIT_BAD_INPUT, EXIT_OK, Error};

/// The binary allocates many small strings per gate (names, nodes, vectors); mimalloc serves them
/// about twice as fast as the system allocator, which is most of a batch's run time.
#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;

fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(error) => {
            let plain = error.render().to_string();
            if error.use_stderr() && plain.chars().any(|c| c.is_control() && c != '\n') {
                // clap quotes a bad argument as given: its control characters are written escaped.
                widthwise::io::diagnose(&widthwise::diagnostic::escaped_lines(&plain));
            } else {
                let _ = error.print();
            }
            return ExitCode::from(if error.use_stderr() { EXIT_BAD_INPUT } else { EXIT_OK });
        }
    };
    match widthwise::commands::run(cli) {
        Ok(()) => ExitCode::from(EXIT_OK),
        // A reader that closed the pipe early (`| head`) is not an error.
        Err(Error::Output(error)) if error.is_closed_pipe() => ExitCode::from(EXIT_OK),
        Err(error) => {
            // Through a writer that ignores a closed stderr: `eprint!` would panic (exit 101).
            widthwise::io::diagnose(&error.render());
            ExitCode::from(error.exit_code())
        }
    }
}
