//! What each command does: read arguments, run the stages, write the output where asked.
//!
//! Files and streams are touched through the I/O layer ([`crate::io`]) only.

use std::ffi::OsString;

use std::io::{self, Write};
use std::path::Path;
use std::sync::Arc;

use crate::cli::{Cli, Command, DeckArgs, GateArgs, OutputArgs};
use crate::delay::{self, DelayOptions};
use crate::error::Error;
use crate::expr::parser::MAX_EXPRESSION_BYTES;
use crate::gate::GateOptions;
use crate::output::deck::{DeckOptions, Models};
use crate::output::{self, Format, Rows};
use crate::paths;
use crate::process::Process;
use crate::sizing::{Method, SizingOptions};
use crate::verify::{self, VerifyOptions};

/// Run a parsed command line.
pub fn run(cli: Cli) -> Result<(), Error> {
    match cli.command {
        Command::Size { expression, gate, delay, output, rows } => {
            let options = gate_options(&gate)?;
            let text = expression_text(&expression)?;
            let sized = if delay.wanted() || gate.method == Method::Elmore || rows == Rows::Delays {
                let delay =
                    DelayOptions { work_budget: gate.work_budget, ..delay.options(process_file(&gate, &options))? };
                delay::size_and_time(&text, &options, &delay, Some(&options.process))?
            } else {
                // Untimed: only the stack order of the delay options matters.
                let order = DelayOptions {
                    stack_order: delay.stack_order.unwrap_or_default(),
                    work_budget: gate.work_budget,
                    ..DelayOptions::default()
                };
                delay::size_gate(&text, &options, &order)?
            };
            write_output(&output, |out| output::write_gates(std::slice::from_ref(&sized), output.format, rows, out))
        }
        Command::Paths { expression, gate, output, limit } => {
            if output.format == Format::Spice {
                return Err(Error::Usage("paths are written as table, csv or json, not spice".into()));
            }
            let options = gate_options(&gate)?;
            let text = expression_text(&expression)?;
            let sized = delay::size_gate(&text, &options, &sizing_delay(&gate, &options)?)?;
            for network in &sized.trees {
                let work = paths::listing_work(network, limit);
                if work > paths::MAX_LISTING_WORK {
                    return Err(Error::Usage(format!(
                        "listing {limit} paths of the {} would build {work} partial paths; the limit is {}: ask for \
                         fewer with --limit",
                        network.kind.name(),
                        paths::MAX_LISTING_WORK
                    )));
                }
                let size = paths::listing_size(network, limit);
                if size > paths::MAX_LISTED_DEVICES {
                    return Err(Error::Usage(format!(
                        "listing {limit} paths of the {} with up to {} devices each could name {size} devices; the \
                         limit is {}: ask for fewer with --limit",
                        network.kind.name(),
                        paths::longest_path_devices(network),
                        paths::MAX_LISTED_DEVICES
                    )));
                }
            }
            let listings = sized.list_paths(limit);
            write_output(&output, |out| output::write_paths(&sized, &listings, output.format, out))
        }
        Command::Deck { expression, gate, deck, output } => {
            let mut options = gate_options(&gate)?;
            // Every input is checked before anything is written.
            let deck = deck_options(&deck, &options.process)?;
            if let Models::Library { nmos, pmos, .. } = &deck.models {
                // The deck's models are the ones in use: no name of the gate may take theirs.
                let process =
                    Process { nmos_model: nmos.clone(), pmos_model: pmos.clone(), ..(*options.process).clone() };
                options.process = Arc::new(process);
            }
            let text = expression_text(&expression)?;
            // The elmore method sizes at the default load (fan-out 1) and ratio, as `paths` does.
            let sized = delay::size_gate(&text, &options, &sizing_delay(&gate, &options)?)?;
            let occurrences = sized.function.literals.len();
            if occurrences > output::deck::MAX_DECK_OCCURRENCES {
                return Err(Error::Usage(format!(
                    "a deck holds every transition with a source per input, so it is written for gates of up to {} \
                     input occurrences per network; this one has {occurrences}",
                    output::deck::MAX_DECK_OCCURRENCES
                )));
            }
            let target = OutputArgs { format: Format::Spice, output };
            write_output(&target, |out| output::deck::write_deck(&sized, &deck, out))
        }
        Command::Process { output } => {
            let target = OutputArgs { format: Format::Table, output };
            write_output(&target, |out| out.write_all(Process::default().to_commented_toml().as_bytes()))
        }
        Command::Batch { library, output, rows, verify, work_budget } => {
            let verify = verify.then_some(VerifyOptions { work_budget, ..VerifyOptions::default() });
            crate::batch::run(&library, &output, rows, verify)
        }
        Command::Verify { expression, gate, output, random_vectors, seed } => {
            if output.format == Format::Spice {
                return Err(Error::Usage("verification is written as table, csv or json, not spice".into()));
            }
            let text = expression_text(&expression)?;
            let options = gate_options(&gate)?;
            let sized = delay::size_gate(&text, &options, &sizing_delay(&gate, &options)?)?;
            let options =
                VerifyOptions { random_vectors, seed, work_budget: gate.work_budget, ..VerifyOptions::default() };
            let result = verify::verify(&sized, &options)?;
            write_output(&output, |out| {
                output::verify::write_verifications(std::slice::from_ref(&result), output.format, out)
            })?;
            result.outcome()
        }
    }
}

/// Gate options from the command line: the process from `--process` (or the built-in one), and the
/// mobility ratio from `--mobility-ratio` if given, else from the process.
pub fn gate_options(args: &GateArgs) -> Result<GateOptions, Error> {
    let process = match &args.process {
        Some(path) => read_process(path)?,
        None => Process::default(),
    };
    let mobility_ratio = args.mobility_ratio.unwrap_or(process.mobility_ratio);
    Ok(GateOptions {
        sizing: SizingOptions::new(args.method, mobility_ratio, args.drive, args.reference),
        critical: args.critical.clone(),
        name: args.name.clone(),
        process: Arc::new(process),
        stack_order: None,
        fixed_widths: None,
    })
}

/// The process of `--process`, if it was given (the built-in one is not a process file).
fn process_file<'a>(args: &GateArgs, options: &'a GateOptions) -> Option<&'a Process> {
    args.process.as_ref().map(|_| &*options.process)
}

/// What `paths` and `deck` size the elmore method with: fan-out 1 and the default diffusion ratio
/// (the `--process` file's, else 1); the other methods need no delay options.
fn sizing_delay(args: &GateArgs, options: &GateOptions) -> Result<DelayOptions, Error> {
    let mut delay = DelayOptions { work_budget: args.work_budget, ..DelayOptions::default() };
    if args.method == Method::Elmore {
        delay.diffusion_ratio = delay::default_diffusion_ratio(process_file(args, options))?;
    }
    Ok(delay)
}

/// Read and check a process file; errors name the key and its line and column.
pub fn read_process(path: &Path) -> Result<Process, Error> {
    let text = crate::io::read_text(path, crate::process::MAX_PROCESS_FILE_BYTES, "the process file")?;
    Process::from_toml(&text).map_err(|error| Error::Process {
        error: Box::new(error),
        path: path.to_path_buf(),
        source_text: text,
    })
}

/// Deck options from the command line; a `--models` file must exist (it is named by its absolute path).
pub fn deck_options(args: &DeckArgs, process: &Process) -> Result<DeckOptions, Error> {
    let models = match &args.models {
        None => Models::Process,
        Some(path) => {
            let absolute = crate::io::absolute_regular(path, "the --models file")?;
            let include = crate::io::utf8_text(absolute.into_os_string().into_encoded_bytes(), "the --models path")?;
            if include.chars().any(|c| c == '"' || c.is_control()) {
                return Err(Error::Usage(format!(
                    "the --models path '{}' holds a double quote or a control character, which a SPICE .include \
                     line cannot hold: link or copy the library to a plainer path",
                    crate::error::escaped(&include)
                )));
            }
            let nmos = args.nmos_model.clone().unwrap_or_else(|| process.nmos_model.clone());
            let pmos = args.pmos_model.clone().unwrap_or_else(|| process.pmos_model.clone());
            if nmos.eq_ignore_ascii_case(&pmos) {
                return Err(Error::Usage(format!(
                    "the NMOS and PMOS models must differ (netlists ignore case): both are '{nmos}'; give \
                     --nmos-model and --pmos-model"
                )));
            }
            Models::Library { include, nmos, pmos }
        }
    };
    Ok(DeckOptions { models, diffusion_capacitance: args.diffusion_capacitance, summary: args.summary })
}

/// An expression argument as UTF-8 (`-` reads it from standard input), a leading byte-order mark
/// dropped, or an error naming the first bad byte.
pub fn expression_text(argument: &OsString) -> Result<String, Error> {
    let bytes = if argument == "-" {
        crate::io::read_stdin(MAX_EXPRESSION_BYTES, "the expression on standard input")?
    } else {
        argument.as_encoded_bytes().to_vec()
    };
    Ok(crate::io::utf8_text(bytes, "the expression")?)
}

/// Write to standard output, or atomically to `-o FILE`.
pub fn write_output(args: &OutputArgs, write: impl FnOnce(&mut dyn Write) -> io::Result<()>) -> Result<(), Error> {
    Ok(crate::io::write_output(args.output.as_deref(), write)?)
}
