//! Streams and files: a closed standard error never costs output or changes the exit code; only
//! regular files are read; `-o` writes regular files only, through symbolic links, with the usual
//! permissions, and leaves no temporary file behind when a signal stops the run.

use std::io::{Read, Write};
use std::os::unix::fs::{FileTypeExt, PermissionsExt};
use std::os::unix::process::ExitStatusExt;
use std::path::Path;
use std::process::{Child, Command, Output, Stdio};
use std::time::{Duration, Instant};

use super::widthwise;

/// A library with a bad gate between two good ones: two reports on stderr, exit 2.
const MIXED: &str = "[[gate]]\nname = \"good\"\nexpr = \"nand2\"\n\n[[gate]]\nname = \"bad\"\nexpr = \"!(a & )\"\n\n\
                     [[gate]]\nname = \"also_good\"\nexpr = \"nor2\"\n";

/// Run widthwise with `input` on standard input and the read end of its standard error closed
/// before it writes anything: the library comes on standard input, which is written only after the
/// read end is dropped, so every write to stderr meets a closed pipe.
pub fn with_stderr_closed(args: &[&str], input: &str) -> Output {
    let mut child = Command::new(env!("CARGO_BIN_EXE_widthwise"))
        .args(args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("widthwise starts");
    drop(child.stderr.take());
    let mut stdin = child.stdin.take().expect("a stdin pipe");
    stdin.write_all(input.as_bytes()).expect("the input is written");
    drop(stdin);
    let mut stdout = Vec::new();
    child.stdout.take().expect("a stdout pipe").read_to_end(&mut stdout).expect("stdout is read");
    let status = child.wait().expect("widthwise ends");
    Output { status, stdout, stderr: Vec::new() }
}

#[test]
fn a_closed_stderr_keeps_the_good_gates_and_the_exit_code() {
    // To standard output: both good gates are written, and the exit code is the bad gate's 2.
    let output = with_stderr_closed(&["batch", "-", "--format", "csv"], MIXED);
    assert_eq!(output.status.code(), Some(2));
    let text = String::from_utf8(output.stdout).unwrap();
    assert!(text.contains("good_x1,") && text.contains("also_good_x1,"), "{text}");
    // To -o: the file is written.
    let directory = tempfile::tempdir().unwrap();
    let path = directory.path().join("out.csv");
    let output = with_stderr_closed(&["batch", "-", "--format", "csv", "-o", path.to_str().unwrap()], MIXED);
    assert_eq!(output.status.code(), Some(2));
    let written = std::fs::read_to_string(&path).expect("out.csv is written");
    assert!(written.contains("good_x1,") && written.contains("also_good_x1,"), "{written}");
}

#[test]
fn a_closed_stderr_keeps_the_closing_line_of_a_verified_batch_quiet() {
    let good = "[[gate]]\nname = \"good\"\nexpr = \"nand2\"\n";
    let output = with_stderr_closed(&["batch", "-", "--verify", "--format", "csv"], good);
    assert_eq!(output.status.code(), Some(0));
    assert!(String::from_utf8(output.stdout).unwrap().contains("good_x1,"));
}

#[test]
fn a_closed_stderr_keeps_the_exit_code_of_an_error() {
    let output = with_stderr_closed(&["size", "-"], "!(a & )");
    assert_eq!(output.status.code(), Some(2));
    let output = with_stderr_closed(&["batch", "-"], "[[gate]\n");
    assert_eq!(output.status.code(), Some(2));
    // A name clash is reported before any output; nothing is written.
    let clash = "[[gate]]\nname = \"g\"\nexpr = \"inv\"\n[[gate]]\nname = \"g\"\nexpr = \"nand2\"\n";
    let output = with_stderr_closed(&["batch", "-"], clash);
    assert_eq!(output.status.code(), Some(2));
    assert!(output.stdout.is_empty());
}

/// Make a FIFO (named pipe) at `path` with mkfifo(1).
fn mkfifo(path: &Path) {
    let status = Command::new("mkfifo").arg(path).status().expect("mkfifo runs");
    assert!(status.success());
}

/// Wait for `child` at most `seconds`: its output, or `None` (and the child killed) if it hangs.
fn finish_within(mut child: Child, seconds: u64) -> Option<Output> {
    let start = Instant::now();
    while start.elapsed() < Duration::from_secs(seconds) {
        if child.try_wait().expect("the child can be waited on").is_some() {
            return Some(child.wait_with_output().expect("its output"));
        }
        std::thread::sleep(Duration::from_millis(20));
    }
    let _ = child.kill();
    let _ = child.wait();
    None
}

/// Run widthwise with no input, its output captured; `None` if it hangs for 10 s.
fn run_briefly(args: &[&str]) -> Option<Output> {
    let child = Command::new(env!("CARGO_BIN_EXE_widthwise"))
        .args(args)
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("widthwise starts");
    finish_within(child, 10)
}

#[test]
fn inputs_that_are_not_regular_files_are_refused_not_waited_on() {
    // Opening a FIFO for reading waits for a writer: every file the commands read is refused unless
    // it is a regular file, before it is opened.
    let directory = tempfile::tempdir().unwrap();
    let fifo = directory.path().join("fifo");
    mkfifo(&fifo);
    let fifo_text = fifo.to_str().unwrap();
    let library = directory.path().join("lib.toml");
    std::fs::write(&library, "process = \"fifo\"\n[[gate]]\nname = \"g\"\nexpr = \"inv\"\n").unwrap();
    let library_text = library.to_str().unwrap();
    for args in [
        vec!["size", "nand2", "--process", fifo_text],
        vec!["batch", fifo_text],
        vec!["batch", library_text],
        vec!["deck", "nand2", "--models", fifo_text],
    ] {
        let output = run_briefly(&args).unwrap_or_else(|| panic!("{args:?} waits on the FIFO"));
        assert_eq!(output.status.code(), Some(2), "{args:?}");
        let stderr = String::from_utf8(output.stderr).unwrap();
        assert!(stderr.contains("is a FIFO (a named pipe), not a regular file"), "{args:?}: {stderr}");
        assert!(output.stdout.is_empty(), "{args:?}");
    }
    // A directory is refused the same way.
    let output = run_briefly(&["size", "nand2", "--process", directory.path().to_str().unwrap()]).unwrap();
    assert_eq!(output.status.code(), Some(2));
    assert!(String::from_utf8(output.stderr).unwrap().contains("is a directory"));
}

#[test]
fn output_onto_anything_but_a_regular_file_is_refused_and_left_alone() {
    let directory = tempfile::tempdir().unwrap();
    let fifo = directory.path().join("fifo");
    mkfifo(&fifo);
    let output = run_briefly(&["size", "nand2", "-o", fifo.to_str().unwrap()]).expect("no wait");
    assert_eq!(output.status.code(), Some(2));
    assert!(String::from_utf8(output.stderr).unwrap().contains("a FIFO (a named pipe), not a regular file"));
    assert!(std::fs::symlink_metadata(&fifo).unwrap().file_type().is_fifo());
    // A directory, and a symbolic link to a FIFO, likewise.
    let output = run_briefly(&["size", "nand2", "-o", directory.path().to_str().unwrap()]).unwrap();
    assert_eq!(output.status.code(), Some(2));
    let link = directory.path().join("to-fifo");
    std::os::unix::fs::symlink(&fifo, &link).unwrap();
    let output = run_briefly(&["size", "nand2", "-o", link.to_str().unwrap()]).unwrap();
    assert_eq!(output.status.code(), Some(2));
    assert!(std::fs::symlink_metadata(&link).unwrap().file_type().is_symlink());
    assert!(std::fs::symlink_metadata(&fifo).unwrap().file_type().is_fifo());
}

#[test]
fn output_errors_name_the_path_given_not_the_temporary_file() {
    let directory = tempfile::tempdir().unwrap();
    let missing = directory.path().join("no-such-folder").join("out.sp");
    let output = widthwise().args(["size", "nand2", "-o"]).arg(&missing).output().unwrap();
    assert_eq!(output.status.code(), Some(2));
    let stderr = String::from_utf8(output.stderr).unwrap();
    let folder = directory.path().join("no-such-folder");
    let expected = format!("cannot write '{}': its folder '{}' does not exist", missing.display(), folder.display());
    assert!(stderr.contains(&expected), "{stderr}");
    // A folder that is a file: the operating system's reason, with the user's path only.
    let file = directory.path().join("plain");
    std::fs::write(&file, "").unwrap();
    let inside = file.join("out.sp");
    let output = widthwise().args(["size", "nand2", "-o"]).arg(&inside).output().unwrap();
    let stderr = String::from_utf8(output.stderr).unwrap();
    assert!(stderr.contains(&format!("cannot write '{}': ", inside.display())), "{stderr}");
    assert!(!stderr.contains(".widthwise-"), "the temporary file is never named: {stderr}");
}

#[test]
fn output_through_a_symbolic_link_writes_its_target() {
    let directory = tempfile::tempdir().unwrap();
    let target = directory.path().join("cells.sp");
    std::fs::write(&target, "old\n").unwrap();
    let link = directory.path().join("link.sp");
    std::os::unix::fs::symlink("cells.sp", &link).unwrap();
    widthwise().args(["size", "nand2", "--format", "spice", "-o"]).arg(&link).assert().success();
    assert!(std::fs::symlink_metadata(&link).unwrap().file_type().is_symlink(), "the link stays a link");
    assert!(std::fs::read_to_string(&target).unwrap().contains(".subckt nand2"));
    // A link to a file that does not exist yet creates it.
    let dangling = directory.path().join("dangling.sp");
    std::os::unix::fs::symlink("new.sp", &dangling).unwrap();
    widthwise().args(["size", "nand2", "--format", "spice", "-o"]).arg(&dangling).assert().success();
    assert!(std::fs::read_to_string(directory.path().join("new.sp")).unwrap().contains(".subckt nand2"));
}

/// The permission bits of a file.
fn mode(path: &Path) -> u32 {
    std::fs::metadata(path).unwrap().permissions().mode() & 0o7777
}

#[test]
fn output_files_get_the_usual_permissions() {
    let directory = tempfile::tempdir().unwrap();
    let run_with_umask = |umask: &str, path: &Path| {
        let status = Command::new("sh")
            .arg("-c")
            .arg(format!("umask {umask} && exec \"$0\" size nand2 -o \"$1\""))
            .arg(env!("CARGO_BIN_EXE_widthwise"))
            .arg(path)
            .status()
            .unwrap();
        assert!(status.success());
    };
    // A new file: 0666 less the umask, as a program's new files are (common practice, no source).
    let new = directory.path().join("new.txt");
    run_with_umask("027", &new);
    assert_eq!(mode(&new), 0o640);
    let other = directory.path().join("other.txt");
    run_with_umask("002", &other);
    assert_eq!(mode(&other), 0o664);
    // An existing file keeps its own mode, whatever the umask.
    let existing = directory.path().join("existing.txt");
    std::fs::write(&existing, "old\n").unwrap();
    std::fs::set_permissions(&existing, std::fs::Permissions::from_mode(0o604)).unwrap();
    run_with_umask("077", &existing);
    assert_eq!(mode(&existing), 0o604);
    assert!(std::fs::read_to_string(&existing).unwrap().contains("nand2"));
}

#[test]
fn a_stopping_signal_leaves_no_temporary_file() {
    // A batch that verifies 40 gates of 22 inputs writes its output for a while: stopped by SIGTERM
    // once its temporary file exists, it removes the file and stops as SIGTERM stops a process.
    let directory = tempfile::tempdir().unwrap();
    let inputs: Vec<String> = (0..22).map(|i| format!("x{i}")).collect();
    let expression = format!("!({})", inputs.join(" & "));
    let mut library = String::new();
    for gate in 0..40 {
        library.push_str(&format!("[[gate]]\nname = \"g{gate}\"\nexpr = \"{expression}\"\n\n"));
    }
    let library_path = directory.path().join("lib.toml");
    std::fs::write(&library_path, library).unwrap();
    let out = directory.path().join("out.csv");
    let mut child = Command::new(env!("CARGO_BIN_EXE_widthwise"))
        .args(["batch", "--verify", "--format", "csv", "-o"])
        .arg(&out)
        .arg(&library_path)
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    // Whatever the batch has created beside the library: its temporary file, or the output.
    let temporary = |directory: &Path| {
        std::fs::read_dir(directory)
            .unwrap()
            .map(|entry| entry.unwrap().file_name().to_string_lossy().to_string())
            .filter(|name| name != "lib.toml")
            .collect::<Vec<_>>()
    };
    let start = Instant::now();
    while temporary(directory.path()).is_empty() {
        assert!(child.try_wait().unwrap().is_none(), "the batch ended before its temporary file was seen");
        assert!(start.elapsed() < Duration::from_secs(60), "no temporary file appeared");
        std::thread::sleep(Duration::from_millis(5));
    }
    let killed = Command::new("kill").args(["-TERM", &child.id().to_string()]).status().unwrap();
    assert!(killed.success());
    let status = child.wait().unwrap();
    assert_eq!(status.signal(), Some(15), "stopped by SIGTERM: {status:?}");
    assert_eq!(temporary(directory.path()), Vec::<String>::new(), "the temporary file is removed");
    assert!(!out.exists(), "no partial output");
}
