//! The one I/O layer: bounded reads of regular files and standard input (UTF-8, a leading
//! byte-order mark dropped), the atomic `-o` writer, standard output, and a standard-error writer
//! that never fails. The command modules call it; no stage module opens a file or a stream.
//!
//! Only regular files are read: opening a FIFO blocks until some writer comes, and a device may
//! never end (process substitution, `<(command)`, gives a pipe, so it is refused too). Every read
//! stops one byte past its limit, so an endless stream never fills memory.

use std::fs;
use std::io::{self, BufWriter, Read, Write};
use std::path::{Path, PathBuf};

use thiserror::Error;

/// Why an input (a file, standard input or a command-line argument) could not be read as text.
#[derive(Debug, Error)]
pub enum InputError {
    /// The file could not be opened or read.
    #[error("cannot read '{}': {source}", path.display())]
    Unreadable {
        /// The file (`-` for standard input).
        path: PathBuf,
        /// Why.
        source: io::Error,
    },
    /// Not a regular file: refused before it is opened.
    #[error(
        "{what} '{}' is {kind}, not a regular file: only a regular file is read (process substitution, \
         <(...), gives a pipe){hint}",
        path.display()
    )]
    NotRegular {
        /// What the file is for (`the process file` ...).
        what: String,
        /// The file.
        path: PathBuf,
        /// What it is instead (`a FIFO (a named pipe)`, `a directory` ...).
        kind: &'static str,
        /// What to do instead, starting `; `, or empty.
        hint: &'static str,
    },
    /// Longer than the reader's limit.
    #[error("{what} is longer than {limit} bytes, the limit")]
    TooLong {
        /// What was read.
        what: String,
        /// The limit, in bytes.
        limit: usize,
    },
    /// Not UTF-8.
    #[error("{what} is not valid UTF-8 (first bad byte at byte {byte})")]
    NotUtf8 {
        /// What was read.
        what: String,
        /// Index of the first invalid byte.
        byte: usize,
    },
}

/// Why the output could not be written.
#[derive(Debug, Error)]
pub enum OutputError {
    /// Standard output refused a write (a closed pipe is handled by the binary: not an error).
    #[error("cannot write the output: {0}")]
    Stdout(io::Error),
    /// The `-o` file could not be written.
    #[error("cannot write '{}': {source}", path.display())]
    Unwritable {
        /// The file as given.
        path: PathBuf,
        /// Why.
        source: io::Error,
    },
    /// The `-o` path, or the target of its links, is not a regular file.
    #[error(
        "cannot write '{}': {} is {kind}, not a regular file; -o writes a regular file (or creates one)",
        path.display(),
        match target { None => "it".to_string(), Some(target) => format!("its target '{}'", target.display()) }
    )]
    NotRegular {
        /// The file as given.
        path: PathBuf,
        /// Where its symbolic links lead, if they lead elsewhere.
        target: Option<PathBuf>,
        /// What is there instead.
        kind: &'static str,
    },
    /// The folder the `-o` file would go in does not exist.
    #[error("cannot write '{}': its folder '{}' does not exist", path.display(), folder.display())]
    NoFolder {
        /// The file as given.
        path: PathBuf,
        /// Its folder (after following symbolic links).
        folder: PathBuf,
    },
    /// The `-o` folder of a batch's schematics is something other than a folder.
    #[error(
        "cannot write into '{}': it is {kind}, not a folder; batch --format svg -o DIR writes one file per \
         variant in the folder DIR (created if missing)",
        path.display()
    )]
    NotAFolder {
        /// The folder as given.
        path: PathBuf,
        /// What is there instead.
        kind: &'static str,
    },
    /// Too many symbolic links from the `-o` path.
    #[error("cannot write '{}': more than {MAX_LINKS} symbolic links to follow", path.display())]
    TooManyLinks {
        /// The file as given.
        path: PathBuf,
    },
}

impl OutputError {
    /// Whether standard output was closed by its reader (`| head`): not an error for the binary.
    pub fn is_closed_pipe(&self) -> bool {
        matches!(self, OutputError::Stdout(error) if error.kind() == io::ErrorKind::BrokenPipe)
    }
}

/// The text of `bytes` read as `what`: UTF-8, or an error naming the first bad byte; a leading
/// byte-order mark is dropped, so that columns count from what follows it.
pub fn utf8_text(bytes: Vec<u8>, what: &str) -> Result<String, InputError> {
    let mut text = String::from_utf8(bytes)
        .map_err(|error| InputError::NotUtf8 { what: what.to_string(), byte: error.utf8_error().valid_up_to() })?;
    if text.starts_with('\u{feff}') {
        text.drain(..'\u{feff}'.len_utf8());
    }
    Ok(text)
}

/// Read at most `limit` bytes: one byte past it is an error naming `what`, so an endless stream
/// (`/dev/zero`, a runaway pipe) never fills memory. `path` names the input in a read error.
pub fn read_bounded(reader: impl Read, limit: usize, what: &str, path: &Path) -> Result<Vec<u8>, InputError> {
    let mut bytes = Vec::new();
    reader
        .take(limit as u64 + 1)
        .read_to_end(&mut bytes)
        .map_err(|source| InputError::Unreadable { path: path.to_path_buf(), source })?;
    if bytes.len() > limit {
        return Err(InputError::TooLong { what: what.to_string(), limit });
    }
    Ok(bytes)
}

/// Standard input, at most `limit` bytes, as `what` names it.
pub fn read_stdin(limit: usize, what: &str) -> Result<Vec<u8>, InputError> {
    read_bounded(io::stdin().lock(), limit, what, Path::new("-"))
}

/// Read a regular file of at most `limit` bytes as UTF-8 text, a leading byte-order mark dropped;
/// `what` names it for messages.
pub fn read_text(path: &Path, limit: usize, what: &str) -> Result<String, InputError> {
    let shown = format!("'{}'", path.display());
    let file = open_regular(path, what, "")?;
    utf8_text(read_bounded(file, limit, &shown, path)?, &shown)
}

/// Open `path` (symbolic links followed) for reading if it is a regular file; `what` names it for
/// messages and `hint` (starting `; `) says what to do instead. Anything else is refused before it
/// is opened.
pub fn open_regular(path: &Path, what: &str, hint: &'static str) -> Result<fs::File, InputError> {
    let unreadable = |source| InputError::Unreadable { path: path.to_path_buf(), source };
    let refuse = |file_type: &fs::FileType| InputError::NotRegular {
        what: what.to_string(),
        path: path.to_path_buf(),
        kind: file_kind(file_type),
        hint,
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

/// The absolute path of a regular file that another program will read (a deck's `.include`): every
/// symbolic link resolved; anything but a readable regular file refused, as [`open_regular`] does.
pub fn absolute_regular(path: &Path, what: &str) -> Result<PathBuf, InputError> {
    let absolute =
        fs::canonicalize(path).map_err(|source| InputError::Unreadable { path: path.to_path_buf(), source })?;
    open_regular(&absolute, what, "")?;
    Ok(absolute)
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

/// Standard error for diagnostics. A write that fails (the reader closed the pipe) is dropped: there
/// is nowhere left to report it, and a diagnostic never costs the output or changes the exit code.
/// (`eprint!` would panic there, exit 101.)
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

/// A progress bar of work done on standard error, drawn only where standard error is a terminal
/// (never on a pipe or a file, where it would be noise in a log). Diagnostics given while it is
/// drawn go through [`Progress::diagnose`], which lifts the bar, writes through [`diagnose`] and
/// draws it again; the bar's own drawing drops a failed write, as [`Diagnostics`] does.
pub struct Progress {
    bar: Option<indicatif::ProgressBar>,
}

impl Progress {
    /// A bar of `total` steps, each a `unit` (`cells`), where standard error is a terminal.
    pub fn start(total: u64, unit: &str) -> Progress {
        use std::io::IsTerminal;
        if !io::stderr().is_terminal() {
            return Progress { bar: None };
        }
        let bar = indicatif::ProgressBar::with_draw_target(Some(total), indicatif::ProgressDrawTarget::stderr());
        let template = format!("{{elapsed:>4}} [{{wide_bar}}] {{pos}}/{{len}} {unit} {{msg}}");
        if let Ok(style) = indicatif::ProgressStyle::with_template(&template) {
            bar.set_style(style.progress_chars("=> "));
        }
        bar.enable_steady_tick(std::time::Duration::from_millis(250));
        Progress { bar: Some(bar) }
    }

    /// One step done; `message` says what comes next.
    pub fn step(&self, message: &str) {
        if let Some(bar) = &self.bar {
            bar.inc(1);
            bar.set_message(message.to_string());
        }
    }

    /// Say what is at work now.
    pub fn say(&self, message: &str) {
        if let Some(bar) = &self.bar {
            bar.set_message(message.to_string());
        }
    }

    /// Write a diagnostic through [`diagnose`], the bar lifted while it is written.
    pub fn diagnose(&self, text: &str) {
        match &self.bar {
            Some(bar) => bar.suspend(|| diagnose(text)),
            None => diagnose(text),
        }
    }

    /// Take the bar off the terminal.
    pub fn finish(self) {
        if let Some(bar) = self.bar {
            bar.finish_and_clear();
        }
    }
}

/// Write to standard output, or atomically to `target` ([`write_atomically`]).
pub fn write_output(
    target: Option<&Path>,
    write: impl FnOnce(&mut dyn Write) -> io::Result<()>,
) -> Result<(), OutputError> {
    match target {
        None => {
            let stdout = io::stdout();
            let mut out = BufWriter::new(stdout.lock());
            write(&mut out).map_err(OutputError::Stdout)?;
            out.flush().map_err(OutputError::Stdout)
        }
        Some(path) => write_atomically(path, write),
    }
}

/// Make the folder `path` (and its parents) if it is missing; anything else there (a file, a
/// FIFO, a device) is refused. A symbolic link to a folder is a folder.
pub fn create_folder(path: &Path) -> Result<(), OutputError> {
    let unwritable = |source| OutputError::Unwritable { path: path.to_path_buf(), source };
    match fs::metadata(path) {
        Ok(metadata) if metadata.is_dir() => Ok(()),
        Ok(metadata) => {
            let kind = if metadata.is_file() { "a file" } else { file_kind(&metadata.file_type()) };
            Err(OutputError::NotAFolder { path: path.to_path_buf(), kind })
        }
        Err(error) if error.kind() == io::ErrorKind::NotFound => fs::create_dir_all(path).map_err(unwritable),
        Err(error) => Err(unwritable(error)),
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
pub fn write_atomically(path: &Path, write: impl FnOnce(&mut dyn Write) -> io::Result<()>) -> Result<(), OutputError> {
    // Errors name the user's path, never the temporary file's (which tempfile's errors carry).
    let file_error = |source| OutputError::Unwritable { path: path.to_path_buf(), source: without_file_name(source) };
    let (target, existing) = output_target(path)?;
    let directory = match target.parent() {
        Some(parent) if !parent.as_os_str().is_empty() => parent,
        _ => Path::new("."),
    };
    if !directory.exists() {
        return Err(OutputError::NoFolder { path: path.to_path_buf(), folder: directory.to_path_buf() });
    }
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

/// The operating system's reason for `error`, without the file name a wrapper (tempfile) put in it.
fn without_file_name(error: io::Error) -> io::Error {
    let code = error.raw_os_error().or_else(|| {
        let inner = error.get_ref()?.source()?;
        inner.downcast_ref::<io::Error>()?.raw_os_error()
    });
    match code {
        Some(code) => io::Error::from_raw_os_error(code),
        None => error,
    }
}

/// Most symbolic links followed from an output path (as many as Linux follows).
const MAX_LINKS: usize = 40;

/// Where `-o path` writes: `path` with every symbolic link followed, and the permissions of the file
/// there, if there is one. Anything there but a regular file is refused.
fn output_target(path: &Path) -> Result<(PathBuf, Option<fs::Permissions>), OutputError> {
    let file_error = |source| OutputError::Unwritable { path: path.to_path_buf(), source };
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
        return Err(OutputError::NotRegular {
            path: path.to_path_buf(),
            kind: file_kind(&metadata.file_type()),
            target: (target != path).then_some(target),
        });
    }
    Err(OutputError::TooManyLinks { path: path.to_path_buf() })
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reads_stop_one_byte_past_the_limit() {
        assert_eq!(read_bounded(&b"abc"[..], 3, "x", Path::new("-")).unwrap(), b"abc");
        let error = read_bounded(&b"abcd"[..], 3, "the text", Path::new("-")).unwrap_err();
        assert_eq!(error.to_string(), "the text is longer than 3 bytes, the limit");
    }

    #[test]
    fn text_is_utf8_without_its_byte_order_mark() {
        assert_eq!(utf8_text("\u{feff}a & b".as_bytes().to_vec(), "x").unwrap(), "a & b");
        let error = utf8_text(b"ab\xffc".to_vec(), "the expression").unwrap_err();
        assert_eq!(error.to_string(), "the expression is not valid UTF-8 (first bad byte at byte 2)");
    }

    #[test]
    fn only_regular_files_are_read_and_written() {
        let directory = tempfile::tempdir().unwrap();
        let error = read_text(directory.path(), 10, "the process file").unwrap_err();
        assert!(error.to_string().contains("is a directory, not a regular file"), "{error}");
        let error = write_atomically(directory.path(), |_| Ok(())).unwrap_err();
        assert!(
            error
                .to_string()
                .ends_with("it is a directory, not a regular file; -o writes a regular file (or creates one)")
        );
        let file = directory.path().join("out.txt");
        write_atomically(&file, |out| out.write_all(b"done")).unwrap();
        assert_eq!(fs::read_to_string(&file).unwrap(), "done");
    }
}
