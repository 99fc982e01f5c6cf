//! The one integration binary: runs the real `widthwise` executable on arguments and fixture files,
//! a module per command.

mod batch;
mod batch_tables;
mod cells;
mod deck;
mod delay;
mod elmore;
mod limits;
mod numbers;
mod paths;
mod process;
mod shell;
mod size;
mod streams;
mod verify;

use std::path::PathBuf;

use assert_cmd::Command;

/// The built executable.
pub fn widthwise() -> Command {
    Command::cargo_bin("widthwise").expect("the binary is built")
}

/// A file under `tests/fixtures`.
pub fn fixture(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests").join("fixtures").join(name)
}
