//! Streams and files: a closed standard error never costs output or changes the exit code.

use std::io::{Read, Write};
use std::process::{Command, Output, Stdio};

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
