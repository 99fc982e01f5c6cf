//! The performance figures the README quotes, measured in-process with `Instant`:
//! sizing throughput per core for typical library gates (both methods), one 2,000-literal
//! expression, and `verify` of 24-input gates. Run with `cargo bench --bench throughput`.
//!
//! Each figure is the best of many short timed rounds (the least disturbed by other work on the
//! machine), after a warm-up round.

#![forbid(unsafe_code)]

/// The binary's allocator, so that the figures are the binary's.
#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;

mod support;

use std::hint::black_box;

use support::{best_of, big_expression};
use widthwise::figures::CellFigures;
use widthwise::size_text;
use widthwise::sizing::{Method, Plan};
use widthwise::verify::{VerifyOptions, verify};

/// Typical library gates of 2 to 8 inputs: shorthands and written expressions.
const LIBRARY: [&str; 24] = [
    "nand2",
    "nand3",
    "nand4",
    "nand8",
    "nor2",
    "nor3",
    "nor4",
    "nor8",
    "aoi21",
    "aoi22",
    "aoi211",
    "aoi221",
    "aoi222",
    "aoi33",
    "oai21",
    "oai22",
    "oai211",
    "oai222",
    "!(a & (b | c))",
    "y = !(a*b + c*(d + e))",
    "!((a | b) & (c | d) & e)",
    "(a b + c d + e f g)'",
    "!a & !b | !c",
    "!(a & b | a & c | d)",
];

fn options(method: Method) -> Plan {
    Plan::new(method, 2.0, 1.0, None)
}

/// Size a gate and work out its figures: what every writer takes.
fn sized(text: &str, plan: &Plan) -> CellFigures {
    CellFigures::of(&size_text(text, plan).expect("the gate sizes"))
}

fn sizing_throughput() {
    println!("sizing throughput, one thread, {} library gates (2 to 8 inputs) in turn", LIBRARY.len());
    for method in [Method::LongestPath, Method::MIN_AREA] {
        let options = options(method);
        let passes = 200;
        let time = best_of(40, || {
            for _ in 0..passes {
                for text in LIBRARY {
                    black_box(sized(black_box(text), &options));
                }
            }
        });
        let gates = (passes * LIBRARY.len()) as f64;
        println!(
            "  {:<13} {:>9.0} gates/s per core ({:.2} us per gate; target 200000 gates/s)",
            method.name(),
            gates / time.as_secs_f64(),
            time.as_secs_f64() * 1e6 / gates
        );
    }
    // Both cores at once, each sizing the library on its own.
    let threads = std::thread::available_parallelism().map_or(1, |n| n.get());
    let passes = 200;
    let options = options(Method::LongestPath);
    let time = best_of(40, || {
        std::thread::scope(|scope| {
            for _ in 0..threads {
                scope.spawn(|| {
                    for _ in 0..passes {
                        for text in LIBRARY {
                            black_box(sized(black_box(text), &options));
                        }
                    }
                });
            }
        });
    });
    let gates = (threads * passes * LIBRARY.len()) as f64;
    println!("  longest-path on {threads} threads: {:.0} gates/s in all", gates / time.as_secs_f64());
}

fn large_expression() {
    println!("\none expression of 2000 literal occurrences: size, worst case, path count (target < 50 ms)");
    for (inputs, label) in [(2000, "2000 distinct inputs"), (200, "200 inputs, repeated"), (16, "16 inputs, repeated")]
    {
        let text = big_expression(2000, inputs);
        for method in [Method::LongestPath, Method::MIN_AREA] {
            let options = options(method);
            let mut counts = (String::new(), String::new());
            let time = best_of(5, || {
                let gate = sized(&text, &options);
                counts = (gate.networks[0].path_count.clone(), gate.networks[1].path_count.clone());
                black_box(gate);
            });
            let digits =
                |count: &str| if count.len() > 12 { format!("{} digits", count.len()) } else { count.to_string() };
            println!(
                "  {label:<22} {:<13} {:>8.2} ms  (paths: pull-down {}, pull-up {})",
                method.name(),
                time.as_secs_f64() * 1e3,
                digits(&counts.0),
                digits(&counts.1)
            );
        }
    }
}

fn verify_24_inputs() {
    println!("\nverify of 24-input gates, all 2^24 vectors (target < 1 s)");
    let groups = |size: usize, inner: &str, outer: &str| {
        let groups: Vec<String> = (0..24 / size)
            .map(|g| format!("({})", (0..size).map(|i| format!("x{}", g * size + i)).collect::<Vec<_>>().join(inner)))
            .collect();
        format!("!({})", groups.join(outer))
    };
    let gates = [
        ("8 AND3 groups ORed (aoi333...)", groups(3, " & ", " | ")),
        ("12 OR2 groups ANDed (oai22...)", groups(2, " | ", " & ")),
        ("24-input random tree, 48 literals", big_expression(48, 24)),
    ];
    let threads = VerifyOptions::default().threads;
    for (label, text) in gates {
        let gate = sized(&text, &options(Method::LongestPath));
        assert_eq!(gate.inputs.len(), 24, "{label}");
        for use_threads in [1, threads] {
            let options = VerifyOptions { threads: use_threads, ..VerifyOptions::default() };
            let time = best_of(3, || {
                let result = verify(&gate, &options).expect("verifies");
                assert!(result.passed && result.vectors_checked == 1 << 24);
            });
            println!(
                "  {label:<36} {:>3} transistors, {use_threads} thread(s): {:>7.1} ms",
                gate.transistor_count,
                time.as_secs_f64() * 1e3
            );
        }
    }
}

/// `verify` of a 30-input gate of 60 input occurrences (2^30 vectors), the size the work budget
/// allows, on one thread and on every core.
fn verify_30_inputs() {
    println!("\nverify of a 30-input random tree, 60 literals, all 2^30 vectors (target < 4 s on two cores)");
    let gate = sized(&big_expression(60, 30), &options(Method::LongestPath));
    assert_eq!(gate.inputs.len(), 30);
    let threads = VerifyOptions::default().threads;
    for use_threads in [1, threads] {
        let options = VerifyOptions { threads: use_threads, ..VerifyOptions::default() };
        let time = best_of(1, || {
            let result = verify(&gate, &options).expect("verifies");
            assert!(result.passed && result.vectors_checked == 1 << 30);
        });
        println!("  {:>3} transistors, {use_threads} thread(s): {:>7.2} s", gate.transistor_count, time.as_secs_f64());
    }
}

/// The gates of benches/scipy_min_area.py, in the same order.
const SCIPY_SET: [&str; 15] = [
    "nand3",
    "nor3",
    "aoi21",
    "aoi22",
    "aoi221",
    "aoi32",
    "oai21",
    "oai22",
    "oai321",
    "!(a & (b | c))",
    "!(a & b | c & (d | e))",
    "!((a | b) & (c | d) & e)",
    "!(a & (b | c & (d | e)))",
    "!((a | b & c) & (d | e & (f | g)))",
    "!(a & b | a & c)",
];

fn scipy_set() {
    println!(
        "
min-area sizing in-process, the gates of benches/scipy_min_area.py (compare its scipy solve times)"
    );
    let options = options(Method::MIN_AREA);
    let mut times = Vec::new();
    for text in SCIPY_SET {
        let time = best_of(20, || {
            for _ in 0..100 {
                black_box(sized(black_box(text), &options));
            }
        }) / 100;
        times.push(time);
        println!("  {text:<40} {:>7.2} us", time.as_secs_f64() * 1e6);
    }
    times.sort();
    println!("  median {:.2} us per gate", times[times.len() / 2].as_secs_f64() * 1e6);
}

/// The library of the batch figures, `gates` gates: shorthands and expressions, a third of the gates
/// in three drives (invented, generated; the same file on every run). 20,000 gates are 33,334
/// variants.
fn batch_library(gates: usize) -> String {
    const EXPRESSIONS: [&str; 12] = [
        "inv",
        "nand2",
        "nand3",
        "nor2",
        "aoi21",
        "aoi22",
        "oai21",
        "oai221",
        "!(a & (b | c))",
        "co_n = !(a & b | ci & (a | b))",
        "!((a | b) & (c | d) & e)",
        "(p q + r)'",
    ];
    let mut text = String::from("[defaults]\nmethod = \"longest-path\"\n\n");
    for index in 0..gates {
        let expression = EXPRESSIONS[index % EXPRESSIONS.len()];
        let method = if index % 5 == 0 { "method = \"min-area\"\n" } else { "" };
        let drive = if index % 3 == 0 { "drive = [1, 2, 4]\n" } else { "" };
        text.push_str(&format!("[[gate]]\nname = \"g{index}\"\nexpr = \"{expression}\"\n{method}{drive}\n"));
    }
    text
}

/// One gate of `drives` drives, 1 to `drives`: a library of one gate's variants.
fn one_gate_library(drives: usize) -> String {
    let list: Vec<String> = (1..=drives).map(|drive| drive.to_string()).collect();
    format!("[[gate]]\nname = \"n\"\nexpr = \"nand2\"\ndrive = [{}]\n", list.join(", "))
}

/// What GNU time says of one run: wall, user and system seconds, peak resident MB.
struct Run {
    wall: f64,
    user: f64,
    system: f64,
    peak_mb: f64,
}

/// `widthwise batch LIBRARY --format FORMAT [--rows ROWS] -o OUTPUT` under GNU time, the best wall
/// time of `rounds` runs; `None` where GNU time is not installed.
fn timed_batch(
    library: &std::path::Path,
    format: &str,
    rows: &str,
    output: &std::path::Path,
    rounds: usize,
) -> Option<Run> {
    let binary = env!("CARGO_BIN_EXE_widthwise");
    let mut best: Option<Run> = None;
    for _ in 0..rounds {
        // Rows are a table's and a CSV's (batch refuses them with JSON and SPICE).
        let rows_option: &[&str] = if matches!(format, "csv" | "table") { &["--rows", rows] } else { &[] };
        let run = std::process::Command::new("/usr/bin/time")
            .args(["-f", "%e %U %S %M", binary, "batch"])
            .arg(library)
            .args(["--format", format])
            .args(rows_option)
            .arg("-o")
            .arg(output)
            .output()
            .ok()?;
        assert!(run.status.success(), "{}", String::from_utf8_lossy(&run.stderr));
        let stderr = String::from_utf8_lossy(&run.stderr);
        let figures: Vec<f64> =
            stderr.lines().last().unwrap_or("").split_whitespace().map(|f| f.parse().unwrap_or(f64::NAN)).collect();
        let [wall, user, system, peak_kb] = figures[..] else { panic!("GNU time's line: {stderr}") };
        if best.as_ref().is_none_or(|b| wall < b.wall) {
            best = Some(Run { wall, user, system, peak_mb: peak_kb / 1024.0 });
        }
    }
    best
}

/// Every format and view of the batch.
const BATCH_FORMATS: [(&str, &str); 5] =
    [("csv", "gates"), ("csv", "devices"), ("json", "gates"), ("table", "gates"), ("spice", "gates")];

/// Write `text` as a library in a fresh temporary folder and run the batch on it in every format,
/// `rounds` runs each, printing GNU time's figures.
fn batch_figures(title: &str, text: &str, rounds: usize) {
    println!("\n{title}");
    let directory = std::env::temp_dir().join(format!("widthwise-bench-{}", std::process::id()));
    std::fs::create_dir_all(&directory).expect("a temporary directory");
    let library = directory.join("library.toml");
    std::fs::write(&library, text).expect("the library is written");
    let output = directory.join("out");
    for (format, rows) in BATCH_FORMATS {
        let Some(run) = timed_batch(&library, format, rows, &output, rounds) else {
            println!("  /usr/bin/time (GNU time) is not installed: batch figures skipped");
            break;
        };
        let size = std::fs::metadata(&output).map_or(0, |m| m.len());
        println!(
            "  {format:<5} {rows:<8} {:>6.2} s wall ({:.2} s user, {:.2} s system), peak {:>5.1} MB, {:>6.1} MB written",
            run.wall,
            run.user,
            run.system,
            run.peak_mb,
            size as f64 / 1e6
        );
    }
    let _ = std::fs::remove_dir_all(&directory);
}

/// The batch command on 20,000 gates, end to end as a user runs it: wall time and peak resident
/// memory of the process (GNU time's %e and %M), per output format, the best of three runs.
fn batch_end_to_end() {
    batch_figures(
        "batch of 20,000 gates (33,334 variants), the release binary end to end, output to a file",
        &batch_library(20_000),
        3,
    );
}

/// Memory against the library's size: 100,000 gates (166,667 variants), and one gate of 100,000
/// drives, every format, one run each (peak resident memory is the figure; target < 100 MB).
fn batch_memory() {
    batch_figures(
        "batch of 100,000 gates (166,667 variants): peak memory (target < 100 MB)",
        &batch_library(100_000),
        1,
    );
    batch_figures(
        "batch of one nand2 gate in 100,000 drives: peak memory (target < 100 MB)",
        &one_gate_library(100_000),
        1,
    );
}

fn main() {
    let cpu = std::fs::read_to_string("/proc/cpuinfo")
        .ok()
        .and_then(|info| info.lines().find(|l| l.starts_with("model name")).map(|l| l.to_string()))
        .unwrap_or_default();
    println!(
        "machine: {} logical cores; {}\n",
        std::thread::available_parallelism().map_or(1, |n| n.get()),
        cpu.split(':').nth(1).unwrap_or("unknown CPU").trim()
    );
    let filter = std::env::args().skip(1).find(|a| !a.starts_with('-'));
    let run = |name: &str| filter.as_deref().is_none_or(|f| name.contains(f) && f != "profile");
    if run("sizing") {
        sizing_throughput();
    }
    if run("large") {
        large_expression();
    }
    if run("verify") {
        verify_24_inputs();
        verify_30_inputs();
    }
    if run("scipy") {
        scipy_set();
    }
    if filter.as_deref() == Some("profile") {
        // A short fixed run for profilers (valgrind, perf): the library 1000 times, both methods.
        for method in [Method::LongestPath, Method::MIN_AREA] {
            for _ in 0..500 {
                for text in LIBRARY {
                    black_box(sized(text, &options(method)));
                }
            }
        }
        return;
    }
    if run("batch") {
        batch_end_to_end();
    }
    if run("batch memory") {
        batch_memory();
    }
}
