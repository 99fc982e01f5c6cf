//! `cargo bench --bench batch_floor [FORMAT]`: the CPU time of `widthwise batch` on a 20,000-gate
//! library against an I/O floor, a small program that only reads the same TOML with the toml crate
//! and writes as many rows and cells as the devices view with the csv crate, numbers made with the
//! ryu crate (shortest round-trip digits). Both run as whole processes, paired (the order of a pair
//! alternates), five times; each figure is the median CPU time (user + system, GNU time's %U and
//! %S, resolution 10 ms) and the ratio of the medians.
//!
//! The library: 20,000 gates, half the trade's shorthands, half seeded pseudo-random
//! series-parallel expressions of 2 to 8 inputs (`!(...)`, each input once: one stage, two devices
//! per input), one gate in five min-area, one in three in three drives (the same file on every run).
//! The floor is this bench binary run as `batch_floor floor LIBRARY`; widthwise is the release
//! binary (`batch_floor library FILE` writes the library alone, for profilers). The widthwise formats besides the devices CSV are set against the same floor, for scale.

#![forbid(unsafe_code)]

/// The binary's allocator, so that the floor allocates as widthwise does.
#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;

use std::fs::File;
use std::io::{self, Write};
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};

use widthwise::output::csv::DEVICE_COLUMNS;

/// Gates in the library.
const GATES: usize = 20_000;
/// Paired runs per format.
const RUNS: usize = 5;
/// The generator's seed (the same library on every run).
const SEED: u64 = 0x9e37_79b9_7f4a_7c15;

/// The shorthands of the library's first half (each gate of one stage).
const SHORTHANDS: [&str; 22] = [
    "inv", "nand2", "nand3", "nand4", "nor2", "nor3", "nor4", "aoi21", "aoi22", "aoi211", "aoi221", "aoi222", "aoi31",
    "aoi32", "aoi33", "oai21", "oai22", "oai211", "oai221", "oai222", "oai31", "oai32",
];

/// Inputs of expressions, in order (never `y`, the output).
const INPUT_NAMES: [&str; 8] = ["a", "b", "c", "d", "e", "f", "g", "h"];

/// A xorshift generator: deterministic, seeded.
struct Random(u64);

impl Random {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        self.0
    }

    /// A number in `low..=high`.
    fn between(&mut self, low: usize, high: usize) -> usize {
        low + (self.next() % (high - low + 1) as u64) as usize
    }
}

/// A series-parallel expression of `inputs`, each once: AND at the top if `and`, alternating below.
fn tree(inputs: &[&str], and: bool, random: &mut Random) -> String {
    if inputs.len() == 1 {
        return inputs[0].to_string();
    }
    let groups = random.between(2, inputs.len().min(3));
    // Cut points: groups - 1 distinct places between inputs.
    let mut cuts: Vec<usize> = Vec::new();
    while cuts.len() < groups - 1 {
        let cut = random.between(1, inputs.len() - 1);
        if !cuts.contains(&cut) {
            cuts.push(cut);
        }
    }
    cuts.sort_unstable();
    cuts.push(inputs.len());
    let mut start = 0;
    let mut terms = Vec::new();
    for cut in cuts {
        let group = &inputs[start..cut];
        start = cut;
        terms.push(if group.len() == 1 {
            tree(group, !and, random)
        } else {
            format!("({})", tree(group, !and, random))
        });
    }
    terms.join(if and { " & " } else { " | " })
}

/// The library's TOML text.
fn library() -> String {
    let mut random = Random(SEED);
    let mut text = String::from("[defaults]\nmethod = \"longest-path\"\n\n");
    for index in 0..GATES {
        let expression = if index % 2 == 0 {
            SHORTHANDS[random.between(0, SHORTHANDS.len() - 1)].to_string()
        } else {
            let inputs = random.between(2, 8);
            let and = random.next() % 2 == 0;
            format!("!({})", tree(&INPUT_NAMES[..inputs], and, &mut random))
        };
        let method = if index % 5 == 0 { "method = \"min-area\"\n" } else { "" };
        let drive = if index % 3 == 0 { "drive = [1, 2, 4]\n" } else { "" };
        text.push_str(&format!("[[gate]]\nname = \"g{index}\"\nexpr = \"{expression}\"\n{method}{drive}\n"));
    }
    text
}

/// The library file as the floor reads it (the keys the generator writes).
#[derive(serde::Deserialize)]
struct FloorLibrary {
    defaults: Option<FloorGateKeys>,
    gate: Vec<FloorGate>,
}

#[derive(serde::Deserialize)]
struct FloorGateKeys {
    method: Option<String>,
}

#[derive(serde::Deserialize)]
struct FloorGate {
    name: String,
    expr: String,
    method: Option<String>,
    drive: Option<Drives>,
}

#[derive(serde::Deserialize)]
#[serde(untagged)]
enum Drives {
    One(f64),
    Many(Vec<f64>),
}

/// Inputs of a gate's expression in order: a shorthand's count, or every name written.
fn inputs_of(expression: &str) -> usize {
    let lower = expression.to_ascii_lowercase();
    if lower == "inv" {
        1
    } else if let Some(count) = lower.strip_prefix("nand").or_else(|| lower.strip_prefix("nor")) {
        count.parse().unwrap_or(2)
    } else if let Some(digits) = lower.strip_prefix("aoi").or_else(|| lower.strip_prefix("oai")) {
        digits.bytes().map(|d| (d - b'0') as usize).sum()
    } else {
        expression.bytes().filter(u8::is_ascii_lowercase).count()
    }
}

/// Append a number as the shortest text that reads back as it: an integer as one, else ryu's
/// digits. The floor's values are dyadic (k/4) and short, so this is widthwise's rule on them.
fn push_number(out: &mut Vec<u8>, value: f64, digits: &mut ryu::Buffer) {
    if value.fract() == 0.0 && value.abs() < 1e15 {
        if value < 0.0 {
            out.push(b'-');
        }
        let mut magnitude = value.abs() as u64;
        let start = out.len();
        loop {
            out.push(b'0' + (magnitude % 10) as u8);
            magnitude /= 10;
            if magnitude == 0 {
                break;
            }
        }
        out[start..].reverse();
    } else {
        out.extend_from_slice(digits.format_finite(value).as_bytes());
    }
}

/// Device names by network and place (at most 8 inputs a gate).
const DEVICE_NAMES: [[&str; 8]; 2] = [
    ["MN1", "MN2", "MN3", "MN4", "MN5", "MN6", "MN7", "MN8"],
    ["MP1", "MP2", "MP3", "MP4", "MP5", "MP6", "MP7", "MP8"],
];

/// The floor: read the library with the toml crate, write the devices view's rows and cells with
/// the csv crate to standard output.
fn floor(path: &Path) -> io::Result<()> {
    let text = std::fs::read_to_string(path)?;
    let library: FloorLibrary = toml::from_str(&text).map_err(io::Error::other)?;
    let default_method = library.defaults.and_then(|d| d.method).unwrap_or_else(|| "longest-path".to_string());
    let stdout = io::stdout();
    let mut writer = csv::Writer::from_writer(stdout.lock());
    writer.write_record(DEVICE_COLUMNS)?;
    let mut digits = ryu::Buffer::new();
    // A row's numbers, one after another, and where each ends.
    let mut numbers: Vec<u8> = Vec::with_capacity(128);
    let mut ends = [0usize; 7];
    for gate in &library.gate {
        let method = gate.method.as_deref().unwrap_or(&default_method);
        let drives = match &gate.drive {
            None => vec![1.0],
            Some(Drives::One(drive)) => vec![*drive],
            Some(Drives::Many(drives)) => drives.clone(),
        };
        let inputs = inputs_of(&gate.expr);
        let scale = if method == "min-area" { 1.25 } else { 1.0 };
        for drive in drives {
            let variant = format!("{}_x{}", gate.name, drive);
            for (side, (network, kind, rail)) in
                [("pull-down", "nmos", "vss"), ("pull-up", "pmos", "vdd")].into_iter().enumerate()
            {
                for k in 0..inputs {
                    let w = drive * scale * (1 + side) as f64 * (1 + k % 3) as f64;
                    let fingers = if w > 20.0 { 2.0 } else { 1.0 };
                    numbers.clear();
                    for (end, value) in ends.iter_mut().zip([w, w * 0.75, fingers, w / fingers, w * 1.75, drive, w]) {
                        push_number(&mut numbers, value, &mut digits);
                        *end = numbers.len();
                    }
                    let cell = |index: usize| &numbers[if index == 0 { 0 } else { ends[index - 1] }..ends[index]];
                    let (drain, source) = if k == 0 { ("y", "n1") } else { ("n1", rail) };
                    writer.write_record([
                        variant.as_bytes(),
                        cell(5),
                        method.as_bytes(),
                        DEVICE_NAMES[side][k % 8].as_bytes(),
                        b"y",
                        kind.as_bytes(),
                        network.as_bytes(),
                        INPUT_NAMES[k % INPUT_NAMES.len()].as_bytes(),
                        drain.as_bytes(),
                        source.as_bytes(),
                        cell(0),
                        cell(0),
                        cell(6),
                        cell(1),
                        cell(2),
                        cell(3),
                        cell(1),
                        cell(0),
                        cell(4),
                    ])?;
                }
            }
        }
    }
    writer.flush()
}

/// CPU seconds (user + system) of one run of `command`, its standard output to `output`, by GNU
/// time; `None` where GNU time is missing.
fn cpu_seconds(command: &[&std::ffi::OsStr], output: &Path, times: &Path) -> Option<f64> {
    let out = File::create(output).expect("the output file is created");
    let status = Command::new("/usr/bin/time")
        .arg("-f")
        .arg("%U %S")
        .arg("-o")
        .arg(times)
        .args(command)
        .stdout(Stdio::from(out))
        .stderr(Stdio::null())
        .status()
        .ok()?;
    assert!(status.success(), "{command:?} failed: {status}");
    let text = std::fs::read_to_string(times).ok()?;
    let line = text.lines().last()?;
    let mut fields = line.split_whitespace().map(|f| f.parse::<f64>());
    match (fields.next(), fields.next()) {
        (Some(Ok(user)), Some(Ok(system))) => Some(user + system),
        _ => None,
    }
}

fn median(values: &mut [f64]) -> f64 {
    values.sort_by(f64::total_cmp);
    let middle = values.len() / 2;
    if values.len() % 2 == 1 { values[middle] } else { (values[middle - 1] + values[middle]) / 2.0 }
}

/// Lines and commas of a CSV file without quoted fields: its rows and (rows + commas) its cells.
fn rows_and_cells(path: &Path) -> (usize, usize) {
    let bytes = std::fs::read(path).expect("the output is read");
    let rows = bytes.iter().filter(|&&b| b == b'\n').count();
    let commas = bytes.iter().filter(|&&b| b == b',').count();
    (rows, rows + commas)
}

fn measure(filter: Option<&str>) {
    println!(
        "batch of {GATES} gates against the I/O floor (toml + csv crates), whole processes, CPU time \
         (user + system) by GNU time, median of {RUNS} paired runs"
    );
    let directory = std::env::temp_dir().join(format!("widthwise-floor-{}", std::process::id()));
    std::fs::create_dir_all(&directory).expect("a temporary directory");
    let library_path = directory.join("library.toml");
    std::fs::write(&library_path, library()).expect("the library is written");
    let (floor_out, widthwise_out, times) =
        (directory.join("floor.csv"), directory.join("widthwise.out"), directory.join("times"));
    let this = std::env::current_exe().expect("the bench binary's path");
    let binary = PathBuf::from(env!("CARGO_BIN_EXE_widthwise"));
    let floor_command = [this.as_os_str(), "floor".as_ref(), library_path.as_os_str()];
    let formats: [(&str, &[&str]); 5] = [
        ("csv devices", &["--format", "csv", "--rows", "devices"]),
        ("csv gates", &["--format", "csv", "--rows", "gates"]),
        ("json", &["--format", "json"]),
        ("spice", &["--format", "spice"]),
        ("table", &["--format", "table", "--rows", "gates"]),
    ];
    for (name, options) in formats {
        if filter.is_some_and(|f| !name.contains(f)) {
            continue;
        }
        let mut command = vec![binary.as_os_str(), "batch".as_ref(), library_path.as_os_str()];
        command.extend(options.iter().map(std::ffi::OsStr::new));
        let (mut floor_cpu, mut widthwise_cpu) = (Vec::new(), Vec::new());
        for run in 0..RUNS {
            // The first of a pair runs with a warmer cache: alternate which one it is.
            let mut pair = [None, None];
            for which in [run % 2, 1 - run % 2] {
                pair[which] = if which == 0 {
                    cpu_seconds(&floor_command, &floor_out, &times)
                } else {
                    cpu_seconds(&command, &widthwise_out, &times)
                };
            }
            let [Some(floor), Some(widthwise)] = pair else {
                println!("  /usr/bin/time (GNU time) is not installed (apt-get install time): nothing measured");
                return;
            };
            floor_cpu.push(floor);
            widthwise_cpu.push(widthwise);
        }
        if name == "csv devices" {
            // The floor writes what the devices view writes: as many rows and cells.
            let (floor_shape, widthwise_shape) = (rows_and_cells(&floor_out), rows_and_cells(&widthwise_out));
            assert_eq!(floor_shape, widthwise_shape, "the floor's (rows, cells) differ from the devices view's");
            println!("  devices view: {} rows, {} cells", widthwise_shape.0, widthwise_shape.1);
        }
        let size = |path: &Path| std::fs::metadata(path).map_or(0.0, |m| m.len() as f64 / 1e6);
        let (floor, widthwise) = (median(&mut floor_cpu), median(&mut widthwise_cpu));
        println!(
            "  {name:<12} floor {floor:>5.2} s ({:>5.1} MB), widthwise {widthwise:>5.2} s ({:>5.1} MB), ratio {:>4.2}",
            size(&floor_out),
            size(&widthwise_out),
            widthwise / floor
        );
    }
    let _ = std::fs::remove_dir_all(&directory);
}

fn main() {
    let arguments: Vec<String> = std::env::args().skip(1).collect();
    if arguments.first().map(String::as_str) == Some("floor") {
        let path = arguments.get(1).expect("batch_floor floor LIBRARY");
        if let Err(error) = floor(Path::new(path)) {
            let _ = writeln!(io::stderr(), "floor: {error}");
            std::process::exit(2);
        }
        return;
    }
    if arguments.first().map(String::as_str) == Some("library") {
        // The library alone, for profiling: `batch_floor library FILE`.
        let path = arguments.get(1).expect("batch_floor library FILE");
        std::fs::write(path, library()).expect("the library is written");
        return;
    }
    // `cargo bench` passes `--bench`; a word narrows the formats (`devices`, `json` ...).
    let filter = arguments.iter().find(|a| !a.starts_with('-')).map(String::as_str);
    measure(filter);
}
