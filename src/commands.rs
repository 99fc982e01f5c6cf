//! What each command does: read arguments, run the stages, write the output where asked.
//!
//! This and `main.rs` are the only places that touch files and streams.

use std::ffi::OsString;
use std::fs;
use std::io::{self, BufWriter, Read, Write};
use std::path::Path;

use crate::cli::{Cli, Command, GateArgs, OutputArgs};
use crate::error::Error;
use crate::expr::parser::MAX_EXPRESSION_BYTES;
use crate::gate::{GateOptions, size_text};
use crate::output::{self, Format};
use crate::paths;
use crate::process::Process;
use crate::sizing::SizingOptions;
use crate::verify::{self, VerifyOptions};

/// Run a parsed command line.
pub fn run(cli: Cli) -> Result<(), Error> {
    match cli.command {
        Command::Size { expression, gate, output, rows } => {
            let text = expression_text(&expression)?;
            let sized = size_text(&text, &gate_options(&gate))?;
            let process = Process::default();
            write_output(&output, |out| {
                output::write_gates(std::slice::from_ref(&sized), output.format, rows, &process, out)
            })
        }
        Command::Paths { expression, gate, output, limit } => {
            if output.format == Format::Spice {
                return Err(Error::Usage("paths are written as table, csv or json, not spice".into()));
            }
            let text = expression_text(&expression)?;
            let sized = size_text(&text, &gate_options(&gate))?;
            for network in &sized.trees {
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
        Command::Verify { expression, gate, output, random_vectors, seed } => {
            if output.format == Format::Spice {
                return Err(Error::Usage("verification is written as table, csv or json, not spice".into()));
            }
            let text = expression_text(&expression)?;
            let sized = size_text(&text, &gate_options(&gate))?;
            let options = VerifyOptions { random_vectors, seed, ..VerifyOptions::default() };
            let result = verify::verify(&sized, &options)?;
            write_output(&output, |out| {
                output::verify::write_verifications(std::slice::from_ref(&result), output.format, out)
            })?;
            result.outcome()
        }
    }
}

/// Gate options from the command line.
pub fn gate_options(args: &GateArgs) -> GateOptions {
    GateOptions {
        sizing: SizingOptions::new(args.method, args.mobility_ratio, args.drive, args.reference),
        critical: args.critical.clone(),
        name: args.name.clone(),
    }
}

/// An expression argument as UTF-8 (`-` reads it from standard input), or an error naming the
/// first bad byte.
pub fn expression_text(argument: &OsString) -> Result<String, Error> {
    let bytes = if argument == "-" {
        // Read one byte past the limit, never the whole of an endless stream.
        let mut bytes = Vec::new();
        io::stdin()
            .lock()
            .take(MAX_EXPRESSION_BYTES as u64 + 1)
            .read_to_end(&mut bytes)
            .map_err(|source| Error::File { action: "read", path: "standard input".into(), source })?;
        if bytes.len() > MAX_EXPRESSION_BYTES {
            return Err(Error::Usage(format!(
                "the expression on standard input is longer than {MAX_EXPRESSION_BYTES} bytes, the limit"
            )));
        }
        bytes
    } else {
        argument.as_encoded_bytes().to_vec()
    };
    String::from_utf8(bytes)
        .map_err(|error| Error::NotUtf8 { what: "the expression".to_string(), byte: error.utf8_error().valid_up_to() })
}

/// Write to standard output, or atomically to `-o FILE`: a temporary file beside it, then a rename.
pub fn write_output(args: &OutputArgs, write: impl FnOnce(&mut dyn Write) -> io::Result<()>) -> Result<(), Error> {
    match &args.output {
        None => {
            let stdout = io::stdout();
            let mut out = BufWriter::new(stdout.lock());
            write(&mut out)?;
            out.flush()?;
            Ok(())
        }
        Some(path) => write_atomically(path, write),
    }
}

/// Write `path` through a temporary file in the same directory, renamed into place when complete.
pub fn write_atomically(path: &Path, write: impl FnOnce(&mut dyn Write) -> io::Result<()>) -> Result<(), Error> {
    let file_error = |source| Error::File { action: "write", path: path.to_path_buf(), source };
    let directory = match path.parent() {
        Some(parent) if !parent.as_os_str().is_empty() => parent,
        _ => Path::new("."),
    };
    let temporary = tempfile::NamedTempFile::new_in(directory).map_err(file_error)?;
    let mut out = BufWriter::new(temporary);
    write(&mut out).map_err(file_error)?;
    let temporary = out.into_inner().map_err(|e| file_error(e.into_error()))?;
    temporary.as_file().sync_all().map_err(file_error)?;
    temporary.persist(path).map_err(|e| file_error(e.error))?;
    Ok(())
}

/// Read a whole file as UTF-8 text.
pub fn read_text(path: &Path) -> Result<String, Error> {
    fs::read_to_string(path).map_err(|source| Error::File { action: "read", path: path.to_path_buf(), source })
}
