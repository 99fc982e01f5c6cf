//! The `widthwise` binary: parse the command line, dispatch to the command, map the final error to
//! an exit code (codes in `widthwise::exit`).

#![forbid(unsafe_code)]

use std::process::ExitCode;

use clap::{CommandFactory, Parser};
use widthwise::cli::{Cli, Command};
use widthwise::commands;
use widthwise::exit::{EXIT_BAD_INPUT, EXIT_OK};
use widthwise::io::diagnose;

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
                diagnose(&widthwise::diagnostic::escaped_lines(&plain));
            } else {
                let _ = error.print();
            }
            return ExitCode::from(if error.use_stderr() { EXIT_BAD_INPUT } else { EXIT_OK });
        }
    };
    let outcome = match cli.command {
        Command::Size(args) => commands::size::run(args),
        Command::Paths(args) => commands::paths::run(args),
        Command::Deck(args) => commands::deck::run(args),
        Command::Effort(args) => commands::effort::run(args),
        Command::Process(args) => commands::process::run(args),
        Command::Batch(args) => commands::batch::run(args),
        Command::Verify(args) => commands::verify::run(args),
        Command::Completions(args) => commands::completions::run(args, Cli::command()),
        Command::ManPage(args) => commands::man_page::run(args, Cli::command()),
    };
    match outcome {
        Ok(()) => ExitCode::from(EXIT_OK),
        // A reader that closed the pipe early (`| head`) is not an error.
        Err(error) if error.is_closed_pipe() => ExitCode::from(EXIT_OK),
        Err(error) => {
            // Through a writer that ignores a closed stderr: `eprint!` would panic (exit 101).
            diagnose(&error.render());
            ExitCode::from(error.exit_code())
        }
    }
}
