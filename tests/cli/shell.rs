//! `widthwise completions` and `widthwise man-page`: made from the command line's own definition,
//! so every command and option is there; the scripts parse and the pages render.

use std::process::Command;

use clap::CommandFactory;
use predicates::prelude::*;
use widthwise::cli::Cli;

use super::widthwise;

fn stdout(args: &[&str]) -> String {
    let output = widthwise().args(args).output().unwrap();
    assert!(output.status.success(), "{args:?}: {}", String::from_utf8_lossy(&output.stderr));
    String::from_utf8(output.stdout).unwrap()
}

/// Every command's name, and every long option of `batch`.
fn names() -> (Vec<String>, Vec<String>) {
    let command = Cli::command();
    let commands = command.get_subcommands().map(|c| c.get_name().to_string()).collect();
    let batch = command.find_subcommand("batch").unwrap();
    let options = batch.get_arguments().filter_map(|a| a.get_long()).map(|l| format!("--{l}")).collect();
    (commands, options)
}

#[test]
fn completion_scripts_know_every_command_and_option() {
    let (commands, options) = names();
    assert!(commands.len() >= 8, "{commands:?}");
    for shell in ["bash", "zsh", "fish"] {
        let script = stdout(&["completions", shell]);
        for name in commands.iter() {
            assert!(script.contains(name.as_str()), "{shell}: command {name}");
        }
        for option in &options {
            let bare = option.trim_start_matches('-');
            assert!(script.contains(bare), "{shell}: batch {option}");
        }
    }
    // Bash reads its script without a syntax error (bash -n parses without running; common
    // practice, no source).
    let script = stdout(&["completions", "bash"]);
    let directory = tempfile::tempdir().unwrap();
    let path = directory.path().join("widthwise.bash");
    std::fs::write(&path, &script).unwrap();
    match Command::new("bash").arg("-n").arg(&path).output() {
        Ok(output) => assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr)),
        Err(_) => eprintln!("skipped: bash is not installed, the script's syntax is not checked"),
    }
    widthwise().args(["completions", "powershell"]).assert().code(2);
}

#[test]
fn man_pages_cover_every_command_and_render() {
    let (commands, _) = names();
    let top = stdout(&["man-page"]);
    assert!(top.starts_with(".ie") || top.contains(".TH widthwise 1"), "{top}");
    assert!(top.contains(".TH widthwise 1"));
    for name in &commands {
        // roff writes a hyphen as \-: the page of widthwise lists widthwise-NAME(1).
        assert!(top.contains(&format!("widthwise\\-{}(1)", name.replace('-', "\\-"))), "the top page lists {name}");
        let page = stdout(&["man-page", name]);
        assert!(page.contains(&format!(".TH widthwise-{name} 1")), "{name}: {}", &page[..200.min(page.len())]);
        // The caution rides along, as in --help (README, "Caution").
        assert!(page.contains("foundry"), "{name}: the caution");
    }
    // groff renders each page without a warning (-ww turns every warning on; -z writes nothing).
    for name in std::iter::once(None).chain(commands.iter().map(Some)) {
        let page = stdout(&name.map_or(vec!["man-page"], |n| vec!["man-page", n.as_str()]));
        let child = Command::new("groff")
            .args(["-man", "-Tutf8", "-ww", "-z"])
            .stdin(std::process::Stdio::piped())
            .stderr(std::process::Stdio::piped())
            .spawn();
        let Ok(mut child) = child else {
            eprintln!("skipped: groff is not installed, the pages are not rendered");
            break;
        };
        use std::io::Write;
        child.stdin.take().unwrap().write_all(page.as_bytes()).unwrap();
        let output = child.wait_with_output().unwrap();
        assert!(
            output.status.success() && output.stderr.is_empty(),
            "{name:?}: {}",
            String::from_utf8_lossy(&output.stderr)
        );
    }
    widthwise()
        .args(["man-page", "sizes"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("there is no command 'sizes': the commands are size, paths"));
}
