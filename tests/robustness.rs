//! Arbitrary text never panics the readers: an expression, a process file or a library file gives a
//! result or an error, and an accepted gate verifies. Also the regression inputs found by fuzzing (fuzz/).

use proptest::prelude::*;
use widthwise::batch::{Library, Source, write_batch};
use widthwise::error::render_at;
use widthwise::expr::read_gate;
use widthwise::gate::{GateOptions, size_text};
use widthwise::output::{Format, Rows};
use widthwise::process::Process;
use widthwise::sizing::{Method, SizingOptions};
use widthwise::verify::{VerifyOptions, verify};

fn options(method: Method) -> GateOptions {
    GateOptions::new(SizingOptions::new(method, 2.0, 1.0, None))
}

/// Everything a reader of expression text does with it: read, size, render an error, verify.
fn read_everything(text: &str) {
    let read = read_gate(text);
    for method in [Method::LongestPath, Method::MinArea] {
        match size_text(text, &options(method)) {
            Ok(gate) => {
                assert!(read.is_ok(), "{text:?}");
                if gate.function.inputs.len() <= 8 {
                    let result = verify(&gate, &VerifyOptions { threads: 1, ..VerifyOptions::default() }).unwrap();
                    assert!(result.passed, "{text:?}: {:?}", result.failure);
                }
            }
            Err(error) => {
                assert!(read.is_err(), "{text:?}");
                assert!(error.render().starts_with("error: "), "{text:?}");
            }
        }
    }
}

/// Everything a reader of a process file does with it: read, render an error, write back, read again.
fn read_process(text: &str) {
    match Process::from_toml(text) {
        Ok(process) => assert_eq!(Process::from_toml(&process.to_commented_toml()).unwrap(), process),
        Err(error) => {
            if let Some(span) = error.span() {
                assert!(render_at(&error.to_string(), "process.toml", text, span).starts_with("error: "));
            }
        }
    }
}

const KEYS: [&str; 19] = [
    "name",
    "mobility_ratio",
    "length_nm",
    "unit_width_nm",
    "grid_nm",
    "min_width_nm",
    "max_finger_width_nm",
    "supply_v",
    "nmos_model",
    "pmos_model",
    "nmos_threshold_v",
    "pmos_threshold_v",
    "nmos_kp_ua_per_v2",
    "pmos_kp_ua_per_v2",
    "body_effect_sqrt_v",
    "gate_cap_ff_per_um",
    "diffusion_cap_ff_per_um",
    "load_ff",
    "width_fudge",
];

/// A line of TOML-ish text: a real or made-up key, `=` or not, a number, a string, a table or junk.
fn toml_line() -> impl Strategy<Value = String> {
    let key = prop_oneof![prop::sample::select(KEYS.to_vec()).prop_map(String::from), "[a-z_\\[\\]. ]{0,12}"];
    let value = prop_oneof![
        any::<f64>().prop_map(|v| format!("{v:?}")),
        (-1e6f64..1e6).prop_map(|v| v.to_string()),
        any::<i64>().prop_map(|v| v.to_string()),
        "\"[a-zA-Z0-9_ é]{0,8}\"",
        Just("nan".to_string()),
        Just("-inf".to_string()),
        Just("{ a = 1 }".to_string()),
        Just("[1, 2".to_string()),
        "[^\\n]{0,16}",
    ];
    (key, prop_oneof![Just(" = "), Just("="), Just(" "), Just("== ")], value).prop_map(|(k, e, v)| format!("{k}{e}{v}"))
}

/// Mostly a valid process file with some lines replaced, dropped or repeated.
fn toml_text() -> impl Strategy<Value = String> {
    let base: Vec<String> = Process::default().to_commented_toml().lines().map(String::from).collect();
    (prop::collection::vec((any::<prop::sample::Index>(), toml_line(), 0..3u8), 0..6)).prop_map(move |edits| {
        let mut lines = base.clone();
        for (at, line, how) in edits {
            let index = at.index(lines.len().max(1));
            match how {
                0 => lines[index] = line,
                1 => {
                    lines.remove(index);
                }
                _ => lines.insert(index, line),
            }
        }
        lines.join("\n")
    })
}

/// Read a library file and size it: it is read or refused with a rendered message; every gate of a
/// read file is sized or reported.
fn read_library(text: &str) {
    let source = Source::new("library.toml", text, "/nonexistent/widthwise-robustness");
    match Library::read(&source) {
        Ok(library) => {
            let mut diagnostics = Vec::new();
            let outcome =
                write_batch(&library, &source, Format::Csv, Rows::Gates, None, &mut std::io::sink(), &mut diagnostics)
                    .unwrap();
            assert_eq!(outcome.failed == 0, diagnostics.is_empty(), "{text:?}");
        }
        Err(error) => assert!(error.render().starts_with("error"), "{text:?}"),
    }
}

/// Library-file-like text: lines drawn from the schema's keys with good, bad and odd values.
fn library_text() -> impl Strategy<Value = String> {
    let line = prop_oneof![
        Just("[defaults]".to_string()),
        Just("[[gate]]".to_string()),
        Just("[process]".to_string()),
        "(name|expr|method|drive|critical|stack_order|mobility_ratio|process|unknown) = \
         (\"[a-z!&|() =]{0,12}\"|-?[0-9]{1,3}(\\.[0-9])?|\\[[0-9, .]{0,8}\\]|nan|true|\"nand2\"|\"min-area\"|\"written\")",
    ];
    prop::collection::vec(line, 0..14).prop_map(|lines| lines.join("\n"))
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(256))]

    #[test]
    fn any_string_is_a_library_or_an_error(text in any::<String>()) {
        read_library(&text);
    }

    #[test]
    fn library_like_text_is_sized_or_refused(text in library_text()) {
        read_library(&text);
    }

    #[test]
    fn any_string_is_read_or_refused(text in any::<String>()) {
        read_everything(&text);
    }

    #[test]
    fn expression_like_text_is_read_or_refused(text in "[a-dA-D_0-9!~'&*.|+^()= \t\n\u{e9}]{0,48}") {
        read_everything(&text);
    }

    #[test]
    fn any_string_is_a_process_file_or_an_error(text in any::<String>()) {
        read_process(&text);
    }

    #[test]
    fn toml_like_text_is_a_process_file_or_an_error(text in toml_text()) {
        read_process(&text);
    }
}

/// Inputs the fuzz targets (fuzz/src/bin) found to fail, each now read or refused cleanly.
#[test]
fn fuzz_regressions() {
    for entry in std::fs::read_dir(concat!(env!("CARGO_MANIFEST_DIR"), "/fuzz/regressions")).unwrap() {
        let path = entry.unwrap().path();
        let bytes = std::fs::read(&path).unwrap();
        let Ok(text) = String::from_utf8(bytes) else { continue };
        let name = path.file_name().unwrap().to_string_lossy().to_string();
        if name.starts_with("expression") {
            read_everything(&text);
        } else if name.starts_with("process_file") {
            read_process(&text);
        } else if name.starts_with("batch_file") {
            read_library(&text);
        } else {
            panic!("{name}: a regression input's name starts with its target");
        }
    }
}
