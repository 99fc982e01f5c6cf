//! Arbitrary text never panics the readers: an expression, a process file or a library file gives a
//! result or an error, and an accepted gate verifies. Also the regression inputs found by fuzzing
//! (fuzz/), and each fuzz target's own body (fuzz/src/lib.rs) on a few thousand seeded
//! pseudo-random inputs, so that plain `cargo test` runs what the fuzzer runs, without a fuzzer.

use proptest::prelude::*;

/// The fuzz targets' bodies, the very functions `cargo fuzz` calls (fuzz/src/bin).
#[path = "../fuzz/src/lib.rs"]
mod fuzz_targets;
use widthwise::commands::batch::write_batch;
use widthwise::diagnostic::{Diagnostic, Source as TextSource};
use widthwise::logic::synthesize_with_models;

use widthwise::figures::CellFigures;
use widthwise::io::InputError;
use widthwise::library::Library;
use widthwise::output::{Format, Rows};
use widthwise::process::Process;
use widthwise::size_text;
use widthwise::sizing::{Method, Plan};
use widthwise::verify::{VerifyOptions, verify};

fn options(method: Method) -> Plan {
    Plan::new(method, 2.0, 1.0, None)
}

/// Everything a reader of expression text does with it: read, size, render an error, verify.
fn read_everything(text: &str) {
    // Sizing reads with the process's model names reserved (the built-in process: nmos, pmos): a
    // function of one stage or several.
    let read = synthesize_with_models(text, &Process::default().model_names());
    for method in [Method::LongestPath, Method::MIN_AREA] {
        match size_text(text, &options(method)) {
            Ok(gate) => {
                assert!(read.is_ok(), "{text:?}");
                if gate.logic.inputs.len() <= 8 {
                    let options = VerifyOptions { threads: 1, ..VerifyOptions::default() };
                    let result = verify(&CellFigures::of(&gate), &options).unwrap();
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
                let source = TextSource::file("process.toml", text);
                assert!(Diagnostic::error(error.to_string()).at(&source, span).render().starts_with("error: "));
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
                    .unwrap();
            assert_eq!(outcome.failed == 0, diagnostics.is_empty(), "{text:?}");
        }
        Err(error) => assert!(error.diagnostic(&source).render().starts_with("error"), "{text:?}"),
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

/// A small deterministic generator (xorshift64*), so that every run tries the same inputs.
struct Generator(u64);

impl Generator {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545_f491_4f6c_dd1d)
    }

    fn below(&mut self, bound: usize) -> usize {
        (self.next() % bound.max(1) as u64) as usize
    }

    fn pick<'a, T>(&mut self, items: &'a [T]) -> &'a T {
        &items[self.below(items.len())]
    }
}

/// The committed seeds of a fuzz target (fuzz/seeds/TARGET), as text.
fn seeds(target: &str) -> Vec<String> {
    let directory = format!("{}/fuzz/seeds/{target}", env!("CARGO_MANIFEST_DIR"));
    let mut seeds: Vec<String> = std::fs::read_dir(directory)
        .unwrap()
        .filter_map(|entry| String::from_utf8(std::fs::read(entry.unwrap().path()).unwrap()).ok())
        .collect();
    seeds.sort();
    assert!(!seeds.is_empty(), "{target} has seeds");
    seeds
}

/// `count` inputs for a target: each a seed with one to three edits, each edit inserting a character
/// or a word of `words`, deleting, replacing or repeating a stretch, or splicing in part of another
/// seed, in the manner of a fuzzer's mutations.
fn mutations(target: &str, words: &[&str], count: usize, seed: u64) -> Vec<String> {
    const CHARACTERS: &[char] = &[
        'a',
        'b',
        'y',
        'Z',
        '_',
        '0',
        '1',
        '9',
        '!',
        '~',
        '\'',
        '&',
        '*',
        '.',
        '|',
        '+',
        '^',
        '(',
        ')',
        '=',
        ' ',
        '\t',
        '\n',
        '\r',
        '"',
        '[',
        ']',
        '{',
        '}',
        ',',
        '#',
        '-',
        'e',
        '\u{0}',
        '\u{7}',
        '\u{1b}',
        '\u{7f}',
        '\u{e9}',
        '\u{feff}',
        '\u{202e}',
        '\u{1F600}',
    ];
    let seeds: Vec<Vec<char>> = seeds(target).iter().map(|s| s.chars().collect()).collect();
    let mut generator = Generator(seed);
    (0..count)
        .map(|_| {
            let mut text = generator.pick(&seeds).clone();
            for _ in 0..1 + generator.below(3) {
                let at = generator.below(text.len() + 1);
                let stretch = 1 + generator.below(12);
                let end = (at + stretch).min(text.len());
                match generator.below(6) {
                    0 => text.insert(at, *generator.pick(CHARACTERS)),
                    1 => {
                        let word: Vec<char> = generator.pick(words).chars().collect();
                        text.splice(at..at, word);
                    }
                    2 => {
                        text.drain(at..end);
                    }
                    3 => {
                        if at < text.len() {
                            text[at] = *generator.pick(CHARACTERS);
                        }
                    }
                    4 => {
                        let repeated: Vec<char> = text[at..end].to_vec();
                        let times = 1 + generator.below(3);
                        for _ in 0..times {
                            text.splice(end..end, repeated.iter().copied());
                        }
                    }
                    _ => {
                        let other = generator.pick(&seeds);
                        let from = generator.below(other.len());
                        let to = (from + stretch).min(other.len());
                        text.splice(at..at, other[from..to].iter().copied());
                    }
                }
            }
            text.into_iter().collect()
        })
        .collect()
}

#[test]
fn the_expression_target_on_seeded_inputs() {
    let words = [
        "nand8", "nor3", "aoi8881", "oai222", "inv", "gnd", "vdd", "VSS", "nmos", "pmos", "y = ", "out = ", "!(",
        ") | ", " & ", "a'", "(((", ")))", "x1 x2 x3", "\u{feff}", "0",
    ];
    for text in mutations("expression", &words, 3000, 0x5eed_0001) {
        fuzz_targets::expression(&text);
    }
}

#[test]
fn the_process_file_target_on_seeded_inputs() {
    let words = [
        "= 1e300",
        "= 1e-308",
        "= 0.0",
        "= -5.0",
        "= nan",
        "= inf",
        "= \"gnd\"",
        "= \"nmos\"",
        "grid_nm",
        "length_nm",
        "mobility_ratio",
        "[x]",
        "a.b.c.d.e = 1",
        "= [1, 2]",
        "= { a = 1 }",
        "\n",
        "\u{feff}",
        "= 99999999999",
    ];
    for text in mutations("process_file", &words, 3000, 0x5eed_0002) {
        fuzz_targets::process_file(&text);
    }
}

#[test]
fn the_batch_file_target_on_seeded_inputs() {
    let words = [
        "[[gate]]\nname = \"g\"\nexpr = \"nand2\"\n",
        "[defaults]\n",
        "drive = [1, 2, 1e300]",
        "drive = 5e-324",
        "method = \"elmore\"",
        "stack_order = \"written\"",
        "critical = \"a\"",
        "name = \"gnd\"",
        "expr = \"!(gnd & a)\"",
        "expr = \"aoi8881\"",
        "process = \"x.toml\"",
        "[process]\nmobility_ratio = 2.0\n",
        "mobility_ratio = 1e300",
        "a.b.c.d.e.f = 1",
        "\"\\u0000\"",
        "\u{feff}",
    ];
    for text in mutations("batch_file", &words, 2000, 0x5eed_0003) {
        fuzz_targets::batch_file(&text);
    }
}
