//! What each command does: read arguments, run the stages, write the output where asked.
//!
//! This and `main.rs` are the only places that touch files and streams.

use std::ffi::OsString;
use std::fs;
use std::io::{self, BufWriter, Read, Write};
use std::path::{Path, PathBuf};
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
    let text = read_text(path, crate::process::MAX_PROCESS_FILE_BYTES, "the process file")?;
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
            let unreadable = |source| Error::File { action: "read", path: path.clone(), source };
            let absolute = fs::canonicalize(path).map_err(unreadable)?;
            open_regular(&absolute, "the --models file", "")?;
            let include = String::from_utf8(absolute.into_os_string().into_encoded_bytes()).map_err(|error| {
                Error::NotUtf8 { what: "the --models path".to_string(), byte: error.utf8_error().valid_up_to() }
            })?;
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
        read_bounded(io::stdin().lock(), MAX_EXPRESSION_BYTES, "the expression on standard input", Path::new("-"))?
    } else {
        argument.as_encoded_bytes().to_vec()
    };
    let text = String::from_utf8(bytes).map_err(|error| Error::NotUtf8 {
        what: "the expression".to_string(),
        byte: error.utf8_error().valid_up_to(),
    })?;
    // A leading byte-order mark is dropped here, so that columns count from what follows it.
    Ok(match text.strip_prefix('\u{feff}') {
        Some(rest) => rest.to_string(),
        None => text,
    })
}

/// Standard error for diagnostics. A write that fails (the reader closed the pipe) is dropped: there
/// is nowhere left to report it, and a diagnostic never costs the output or changes the exit code.
#[derive(Debug, Clone, Copy, Default)]
pub struct Diagnostics;

impl Write for Diagnostics {
    fn write(&mut self, buffer: &[u8]) -> io::Result<usize> {
        let _ = io::stderr().lock().write_all(buffer);
        Ok(buffer.len())
    }

    fn flush(&mut self) -> io::Result<()> {
        let _ = io::stderr().lock().flush();
        Ok(())
    }
}

/// Write `text` to standard error through [`Diagnostics`]: never fails, never panics.
pub fn diagnose(text: &str) {
    let _ = Diagnostics.write_all(text.as_bytes());
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

/// Write `path` through a temporary file in the same directory as the file written, renamed into
/// place when complete.
///
/// A symbolic link is followed: its target is written (and the link stays). An existing target must
/// be a regular file, and keeps its permissions; a new file gets 0666 less the umask, as any file a
/// program creates. A FIFO, a device node, a directory or a socket is refused, never replaced. If
/// the process is told to stop (SIGTERM, SIGINT, SIGHUP) while the temporary file exists, the file
/// is removed and the process then stops the way the signal would have stopped it.
pub fn write_atomically(path: &Path, write: impl FnOnce(&mut dyn Write) -> io::Result<()>) -> Result<(), Error> {
    let file_error = |source| Error::File { action: "write", path: path.to_path_buf(), source };
    let (target, existing) = output_target(path)?;
    let directory = match target.parent() {
        Some(parent) if !parent.as_os_str().is_empty() => parent,
        _ => Path::new("."),
    };
    let mut builder = tempfile::Builder::new();
    builder.prefix(".widthwise-").suffix(".tmp");
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        // The mode goes to open(2), which takes the umask off it.
        builder.permissions(fs::Permissions::from_mode(0o666));
    }
    let cleanup = signal_cleanup::Guard::new().map_err(file_error)?;
    let temporary = cleanup.create(|| builder.tempfile_in(directory)).map_err(file_error)?;
    if let Some(permissions) = existing {
        temporary.as_file().set_permissions(permissions).map_err(file_error)?;
    }
    let mut out = BufWriter::new(temporary);
    write(&mut out).map_err(file_error)?;
    let temporary = out.into_inner().map_err(|e| file_error(e.into_error()))?;
    temporary.as_file().sync_all().map_err(file_error)?;
    cleanup.persist(temporary, &target).map_err(file_error)?;
    Ok(())
}

/// Most symbolic links followed from an output path (as many as Linux follows).
const MAX_LINKS: usize = 40;

/// Where `-o path` writes: `path` with every symbolic link followed, and the permissions of the file
/// there, if there is one. Anything there but a regular file is refused.
fn output_target(path: &Path) -> Result<(PathBuf, Option<fs::Permissions>), Error> {
    let file_error = |source| Error::File { action: "write", path: path.to_path_buf(), source };
    let mut target = path.to_path_buf();
    for _ in 0..MAX_LINKS {
        let metadata = match fs::symlink_metadata(&target) {
            Ok(metadata) => metadata,
            Err(error) if error.kind() == io::ErrorKind::NotFound => return Ok((target, None)),
            Err(error) => return Err(file_error(error)),
        };
        if metadata.file_type().is_symlink() {
            let link = fs::read_link(&target).map_err(file_error)?;
            // A relative link is relative to the directory holding it; `join` keeps an absolute one.
            target = target.parent().map_or_else(|| link.clone(), |parent| parent.join(&link));
            continue;
        }
        if metadata.is_file() {
            return Ok((target, Some(metadata.permissions())));
        }
        return Err(Error::Usage(format!(
            "cannot write '{}': {} is {}, not a regular file; -o writes a regular file (or creates one)",
            path.display(),
            if target == path { "it".to_string() } else { format!("its target '{}'", target.display()) },
            file_kind(&metadata.file_type())
        )));
    }
    Err(Error::Usage(format!("cannot write '{}': more than {MAX_LINKS} symbolic links to follow", path.display())))
}

/// What a file that is not a regular one is, for messages.
fn file_kind(file_type: &fs::FileType) -> &'static str {
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        if file_type.is_fifo() {
            return "a FIFO (a named pipe)";
        }
        if file_type.is_char_device() || file_type.is_block_device() {
            return "a device node";
        }
        if file_type.is_socket() {
            return "a socket";
        }
    }
    if file_type.is_dir() { "a directory" } else { "not a regular file" }
}

/// Open `path` (symbolic links followed) for reading if it is a regular file; `what` names it for
/// messages and `hint` says what to do instead. Anything else is refused before it is opened:
/// opening a FIFO blocks until some writer comes, and a device may never end. Process substitution
/// (`<(command)`) gives a pipe, so it is refused too.
pub fn open_regular(path: &Path, what: &str, hint: &str) -> Result<fs::File, Error> {
    let unreadable = |source| Error::File { action: "read", path: path.to_path_buf(), source };
    let refuse = |file_type: &fs::FileType| {
        Error::Usage(format!(
            "{what} '{}' is {}, not a regular file: only a regular file is read (process substitution, \
             <(...), gives a pipe){hint}",
            path.display(),
            file_kind(file_type)
        ))
    };
    let metadata = fs::metadata(path).map_err(unreadable)?;
    if !metadata.is_file() {
        return Err(refuse(&metadata.file_type()));
    }
    let file = fs::File::open(path).map_err(unreadable)?;
    // Checked again on what was opened, in case the path changed in between.
    let metadata = file.metadata().map_err(unreadable)?;
    if !metadata.is_file() {
        return Err(refuse(&metadata.file_type()));
    }
    Ok(file)
}

/// Removing the temporary file of `-o` when a signal stops the process (unix: SIGTERM, SIGINT,
/// SIGHUP, through the signal-hook crate's iterator, whose thread does the work outside the signal
/// handler). The signals are taken once, on the first write, for the rest of the run: the thread
/// removes the temporary file of the write under way, if any, then stops the process the way the
/// signal's default action would. Elsewhere the guard only notes the path.
mod signal_cleanup {
    use std::io;
    use std::path::{Path, PathBuf};
    use std::sync::{Mutex, PoisonError};

    use tempfile::NamedTempFile;

    /// The temporary file of the write under way.
    static PENDING: Mutex<Option<PathBuf>> = Mutex::new(None);

    /// Take the stopping signals, once per run.
    #[cfg(unix)]
    fn listen() -> io::Result<()> {
        use signal_hook::consts::{SIGHUP, SIGINT, SIGTERM};
        static LISTENING: std::sync::OnceLock<Result<(), io::ErrorKind>> = std::sync::OnceLock::new();
        let started = LISTENING.get_or_init(|| {
            let mut signals = signal_hook::iterator::Signals::new([SIGTERM, SIGINT, SIGHUP]).map_err(|e| e.kind())?;
            std::thread::spawn(move || {
                for signal in signals.forever() {
                    if let Some(path) = PENDING.lock().unwrap_or_else(PoisonError::into_inner).take() {
                        let _ = std::fs::remove_file(path);
                    }
                    let _ = signal_hook::low_level::emulate_default_handler(signal);
                }
            });
            Ok(())
        });
        started.map_err(io::Error::from)
    }

    #[cfg(not(unix))]
    fn listen() -> io::Result<()> {
        Ok(())
    }

    /// One write's temporary file, removed if a stopping signal comes before it is renamed.
    pub struct Guard(());

    impl Guard {
        /// Listen for the stopping signals.
        pub fn new() -> io::Result<Guard> {
            listen()?;
            Ok(Guard(()))
        }

        /// Create the temporary file, its path noted before a signal can find it unnoted.
        pub fn create(&self, make: impl FnOnce() -> io::Result<NamedTempFile>) -> io::Result<NamedTempFile> {
            let mut pending = PENDING.lock().unwrap_or_else(PoisonError::into_inner);
            let file = make()?;
            *pending = Some(file.path().to_path_buf());
            Ok(file)
        }

        /// Rename the temporary file onto `target`; a signal from here on leaves the finished file.
        pub fn persist(&self, file: NamedTempFile, target: &Path) -> io::Result<()> {
            let mut pending = PENDING.lock().unwrap_or_else(PoisonError::into_inner);
            let persisted = file.persist(target).map_err(|error| error.error);
            // Renamed, or removed by its own drop on failure: either way nothing is left to remove.
            *pending = None;
            persisted.map(drop)
        }
    }

    impl Drop for Guard {
        fn drop(&mut self) {
            // A file not persisted is removed by its own drop (dropped before the guard).
            PENDING.lock().unwrap_or_else(PoisonError::into_inner).take();
        }
    }
}

/// Read at most `limit` bytes: one byte past it is an error naming `what`, so an endless stream
/// (`/dev/zero`, a runaway pipe) never fills memory.
pub fn read_bounded(reader: impl Read, limit: usize, what: &str, path: &Path) -> Result<Vec<u8>, Error> {
    let mut bytes = Vec::new();
    reader.take(limit as u64 + 1).read_to_end(&mut bytes).map_err(|source| Error::File {
        action: "read",
        path: path.to_path_buf(),
        source,
    })?;
    if bytes.len() > limit {
        return Err(Error::Usage(format!("{what} is longer than {limit} bytes, the limit")));
    }
    Ok(bytes)
}

/// Read a regular file of at most `limit` bytes as UTF-8 text, a leading byte-order mark dropped;
/// `what` names it for messages.
pub fn read_text(path: &Path, limit: usize, what: &str) -> Result<String, Error> {
    let file = open_regular(path, what, "")?;
    let bytes = read_bounded(file, limit, &format!("'{}'", path.display()), path)?;
    let mut text = String::from_utf8(bytes).map_err(|error| Error::NotUtf8 {
        what: format!("'{}'", path.display()),
        byte: error.utf8_error().valid_up_to(),
    })?;
    if text.starts_with('\u{feff}') {
        text.drain(..'\u{feff}'.len_utf8());
    }
    Ok(text)
}
