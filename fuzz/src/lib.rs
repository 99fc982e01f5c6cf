//! What each fuzz target asserts, kept here so that a target is one short file and a new one is a
//! copy of it. Every function takes arbitrary text and must return; a panic is the failure.

#![forbid(unsafe_code)]

use widthwise::commands::batch::write_batch;
use widthwise::diagnostic::Source as TextSource;
use widthwise::figures::{self, CellFigures};
use widthwise::io::InputError;
use widthwise::library::Library;
use widthwise::logic;
use widthwise::output::CellReport;
use widthwise::output::{self, Format, Rows};
use widthwise::process::Process;
use widthwise::size_text;
use widthwise::sizing::{Method, Plan};
use widthwise::verify::{VerifyOptions, verify};

/// Inputs up to which an accepted gate is also verified on every vector (fast enough per run).
const VERIFY_INPUTS: usize = 10;

/// Read a gate, size it both ways, write it in every format and, when small, verify it: an accepted
/// expression must give a netlist that passes every check.
pub fn expression(text: &str) {
    // Sizing reads with the process's model names reserved (the built-in process: nmos, pmos).
    let read = logic::synthesize_with_models(text, &Process::default().model_names());
    for method in [Method::LongestPath, Method::MIN_AREA] {
        let sized = size_text(text, &Plan::new(method, 2.0, 1.0, None));
        assert_eq!(read.is_ok(), sized.is_ok(), "synthesize and size_text disagree on {text:?}");
        let gate = match sized {
            Ok(gate) => gate,
            Err(error) => {
                assert!(error.render().starts_with("error: "));
                continue;
            }
        };
        let report = CellReport::of(&gate);
        for format in [Format::Table, Format::Csv, Format::Json, Format::Spice] {
            output::write_gates(std::slice::from_ref(&report), format, Rows::Devices, &mut std::io::sink())
                .expect("writing to a sink succeeds");
        }
        let listings = figures::path_listings(&gate, 8);
        output::write_paths(&report.figures, &listings, Format::Table, &mut std::io::sink()).expect("sink");
        if gate.logic.inputs.len() <= VERIFY_INPUTS {
            let options = VerifyOptions { threads: 1, ..VerifyOptions::default() };
            let result = verify(&CellFigures::of(&gate), &options).expect("a sized gate's netlist reads");
            assert!(result.passed, "{text:?} fails verification: {:?}", result.failure);
        }
    }
}

/// Read a process file; an accepted one must write back as a file that reads as itself.
pub fn process_file(text: &str) {
    match Process::from_toml(text) {
        Ok(process) => {
            let again = Process::from_toml(&process.to_commented_toml()).expect("the written file reads back");
            assert_eq!(again, process, "round trip of {text:?}");
        }
        Err(error) => {
            if let Some(span) = error.span() {
                let source = TextSource::file("process.toml", text);
                let shown = widthwise::diagnostic::Diagnostic::error(error.to_string()).at(&source, span).render();
                assert!(shown.starts_with("error: "));
            }
        }
    }
}

/// Read a library file and size it: the file is read or refused with a rendered message, and every
/// gate of a read file is sized and written, or reported with its place.
pub fn batch_file(text: &str) {
    // A directory that does not exist, so a `process = "..."` path reads no file of the machine's.
    // No file of the machine's is read: a `process = "..."` path is an error naming it.
    let source = TextSource::file("library.toml", text);
    let mut no_files = |path: &std::path::Path| {
        Err(InputError::Unreadable { path: path.to_path_buf(), source: std::io::ErrorKind::NotFound.into() })
    };
    match Library::read(
        &source,
        Some(std::path::Path::new(".")),
        &widthwise::library::Overrides::default(),
        &mut no_files,
    ) {
        Ok(library) => {
            let mut diagnostics = Vec::new();
            let outcome =
                write_batch(&library, &source, Format::Csv, Rows::Gates, None, &mut std::io::sink(), &mut diagnostics)
                    .expect("writing to a sink succeeds");
            assert_eq!(outcome.failed == 0, diagnostics.is_empty(), "{text:?}");
            assert!(outcome.failed <= outcome.gates);
        }
        Err(error) => assert!(error.diagnostic(&source).render().starts_with("error"), "{text:?}"),
    }
}
