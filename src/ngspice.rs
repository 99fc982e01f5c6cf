//! ngspice run as a child process on a deck given as text: batch mode, one thread, a time limit,
//! and the deck's `.meas` results read from what it prints.
//!
//! Each run gets a fresh temporary directory holding the deck and a `.spiceinit` with
//! `set num_threads=1`; the child also gets `OMP_NUM_THREADS=1` and `OMP_WAIT_POLICY=passive`.
//! Without them the Debian build of ngspice-39 spins OpenMP threads, and two runs at once took
//! 16 to 38 s each instead of well under a second. Standard output and error are captured (up to
//! [`MAX_CAPTURED_BYTES`] each); past the time limit the child is killed.
//!
//! ngspice-39 prints a measurement as `name = 6.931090e-10 targ= ... trig= ...` on standard output
//! (names lowercased), and a failed one on standard error as `Error: measure  name  trig(TARG) :
//! out of interval` followed by the `.meas` line and `failed!`. A deck it cannot read makes it exit
//! with status 1 and its reasons on standard error.

use std::collections::BTreeMap;
use std::ffi::OsString;
use std::io::Read;
use std::process::{Command, ExitStatus, Stdio};
use std::thread;
use std::time::{Duration, Instant};

use thiserror::Error;

/// The program run unless the options name another.
pub const PROGRAM: &str = "ngspice";

/// The time limit unless the options set another: generous for the small decks widthwise writes
/// (one run takes 0.04 to 0.65 s).
pub const DEFAULT_TIME_LIMIT: Duration = Duration::from_secs(60);

/// Most bytes kept of each of standard output and error; the rest is read and dropped.
pub const MAX_CAPTURED_BYTES: usize = 16 << 20;

/// Most lines of ngspice's own messages an error quotes.
pub const MAX_ERROR_LINES: usize = 20;

/// The `.spiceinit` written beside each deck.
const SPICEINIT: &str = "* written by widthwise: one thread per simulator run\nset num_threads=1\n";

/// How to run ngspice.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Options {
    /// The program, looked up on PATH unless it is a path.
    pub program: OsString,
    /// The longest a run may take before it is killed.
    pub time_limit: Duration,
}

impl Default for Options {
    fn default() -> Options {
        Options { program: PROGRAM.into(), time_limit: DEFAULT_TIME_LIMIT }
    }
}

/// Why a simulation gave no result.
#[derive(Debug, Error)]
pub enum SimulationError {
    /// The program is not there.
    #[error(
        "ngspice is not installed or not on PATH (cannot run '{program}'); install it (Debian or Ubuntu: \
         apt-get install ngspice) or put it on PATH"
    )]
    NotInstalled {
        /// The program as named.
        program: String,
    },
    /// The program is there but could not be started.
    #[error("cannot start '{program}': {source}")]
    Start {
        /// The program as named.
        program: String,
        /// Why.
        source: std::io::Error,
    },
    /// The run's directory or deck could not be written, or its output not read.
    #[error("cannot {action} for the simulation: {source}")]
    Workspace {
        /// What failed.
        action: &'static str,
        /// Why.
        source: std::io::Error,
    },
    /// ngspice exited with an error.
    #[error("ngspice failed ({status}){}", quoted(errors))]
    Failed {
        /// The exit status, in words.
        status: String,
        /// ngspice's messages (at most [`MAX_ERROR_LINES`]).
        errors: Vec<String>,
    },
    /// The run took longer than allowed.
    #[error("ngspice ran longer than the time limit of {} s and was stopped", limit.as_secs_f64())]
    TimedOut {
        /// The limit.
        limit: Duration,
    },
    /// ngspice says a measurement failed.
    #[error("measurement '{name}' failed: {reason}")]
    MeasurementFailed {
        /// The measurement.
        name: String,
        /// ngspice's reason.
        reason: String,
    },
    /// ngspice printed nothing for a measurement.
    #[error("ngspice printed no measurement '{name}'{}", quoted(errors))]
    MeasurementMissing {
        /// The measurement.
        name: String,
        /// ngspice's messages, if it printed any.
        errors: Vec<String>,
    },
}

fn quoted(lines: &[String]) -> String {
    if lines.is_empty() { String::new() } else { format!("; ngspice said:\n  {}", lines.join("\n  ")) }
}

impl SimulationError {
    /// The exit code the binary gives: 2 when ngspice is missing or the run could not be set up,
    /// 1 when a simulation ran and failed (exit status, time limit, a measurement).
    pub fn exit_code(&self) -> u8 {
        match self {
            SimulationError::NotInstalled { .. }
            | SimulationError::Start { .. }
            | SimulationError::Workspace { .. } => crate::exit::EXIT_BAD_INPUT,
            SimulationError::Failed { .. }
            | SimulationError::TimedOut { .. }
            | SimulationError::MeasurementFailed { .. }
            | SimulationError::MeasurementMissing { .. } => crate::exit::EXIT_CHECK_FAILED,
        }
    }
}

/// One measurement's result.
#[derive(Debug, Clone, PartialEq)]
pub enum Measurement {
    /// The value printed.
    Value(f64),
    /// ngspice's reason for failing.
    Failed(String),
}

/// The measurements of a run, by lowercased name.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Measurements(pub BTreeMap<String, Measurement>);

impl Measurements {
    /// Read the measurements from ngspice's standard output and error.
    pub fn parse(stdout: &str, stderr: &str) -> Measurements {
        let mut out = BTreeMap::new();
        let mut reasons: BTreeMap<String, String> = BTreeMap::new();
        for line in stderr.lines().map(str::trim) {
            if let Some(rest) = line.strip_prefix("Error: measure") {
                let rest = rest.trim_start();
                let (name, reason) = rest.split_once(char::is_whitespace).unwrap_or((rest, ""));
                let reason = reason.trim().trim_start_matches(':').trim();
                reasons.insert(name.to_ascii_lowercase(), reason.to_string());
            } else if line.get(..5).is_some_and(|start| start.eq_ignore_ascii_case(".meas"))
                && line.ends_with("failed!")
            {
                if let Some(name) = line.split_whitespace().nth(2) {
                    let name = name.to_ascii_lowercase();
                    let reason = reasons.get(&name).cloned().unwrap_or_else(|| "failed".to_string());
                    out.insert(name, Measurement::Failed(reason));
                }
            }
        }
        for line in stdout.lines() {
            let Some((name, rest)) = line.split_once('=') else { continue };
            let name = name.trim();
            let plain = !name.is_empty()
                && !name.starts_with(|c: char| c.is_ascii_digit())
                && name.chars().all(|c| c.is_ascii_graphic() && !c.is_ascii_uppercase());
            if !plain {
                continue;
            }
            let Some(value) = rest.split_whitespace().next() else { continue };
            let Ok(number) = value.parse::<f64>() else { continue };
            let result = if number.is_finite() {
                Measurement::Value(number)
            } else {
                Measurement::Failed(format!("ngspice printed '{value}'"))
            };
            out.insert(name.to_string(), result);
        }
        Measurements(out)
    }

    /// A measurement by name (any case).
    pub fn get(&self, name: &str) -> Option<&Measurement> {
        self.0.get(&name.to_ascii_lowercase())
    }
}

/// What a run printed and measured.
#[derive(Debug, Clone)]
pub struct Run {
    /// Standard output.
    pub stdout: String,
    /// Standard error.
    pub stderr: String,
    /// The measurements.
    pub measurements: Measurements,
    /// ngspice's messages on standard error (at most [`MAX_ERROR_LINES`]).
    pub errors: Vec<String>,
    /// How long the run took.
    pub elapsed: Duration,
}

impl Run {
    /// The value of measurement `name`, or why there is none.
    pub fn value(&self, name: &str) -> Result<f64, SimulationError> {
        match self.measurements.get(name) {
            Some(Measurement::Value(value)) => Ok(*value),
            Some(Measurement::Failed(reason)) => {
                Err(SimulationError::MeasurementFailed { name: name.to_ascii_lowercase(), reason: reason.clone() })
            }
            None => Err(SimulationError::MeasurementMissing {
                name: name.to_ascii_lowercase(),
                errors: self.errors.clone(),
            }),
        }
    }

    /// The values of several measurements, in order; the first that has none is the error.
    pub fn values(&self, names: &[&str]) -> Result<Vec<f64>, SimulationError> {
        names.iter().map(|name| self.value(name)).collect()
    }
}

/// ngspice's messages: standard error without blank lines and notes (or, if that is empty, the
/// lines of standard output that mention an error), at most [`MAX_ERROR_LINES`].
pub fn error_lines(stdout: &str, stderr: &str) -> Vec<String> {
    let keep = |line: &&str| !line.trim().is_empty() && !line.trim_start().starts_with("Note:");
    let mut lines: Vec<String> = stderr.lines().filter(keep).map(|line| line.trim_end().to_string()).collect();
    if lines.is_empty() {
        lines = stdout
            .lines()
            .filter(|line| line.to_ascii_lowercase().contains("error"))
            .map(|line| line.trim_end().to_string())
            .collect();
    }
    if lines.len() > MAX_ERROR_LINES {
        let more = lines.len() - (MAX_ERROR_LINES - 1);
        lines.truncate(MAX_ERROR_LINES - 1);
        lines.push(format!("... and {more} more lines"));
    }
    lines
}

fn command(options: &Options) -> Command {
    let mut command = Command::new(&options.program);
    command
        .env("OMP_NUM_THREADS", "1")
        .env("OMP_WAIT_POLICY", "passive")
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped());
    command
}

fn start_error(options: &Options, source: std::io::Error) -> SimulationError {
    let program = options.program.to_string_lossy().into_owned();
    if source.kind() == std::io::ErrorKind::NotFound {
        SimulationError::NotInstalled { program }
    } else {
        SimulationError::Start { program, source }
    }
}

/// Check that ngspice runs (`ngspice --version`), so that a missing simulator is one clear error
/// before any work; its first line that names a version.
pub fn check_installed(options: &Options) -> Result<String, SimulationError> {
    let output = command(options).arg("--version").output().map_err(|source| start_error(options, source))?;
    let stdout = String::from_utf8_lossy(&output.stdout);
    if !output.status.success() {
        return Err(SimulationError::Failed {
            status: describe(output.status),
            errors: error_lines(&stdout, &String::from_utf8_lossy(&output.stderr)),
        });
    }
    let version = stdout.lines().find(|line| line.contains("ngspice")).unwrap_or("").trim_matches([' ', '*']);
    Ok(version.to_string())
}

fn describe(status: ExitStatus) -> String {
    match status.code() {
        Some(code) => format!("exit status {code}"),
        None => format!("{status}"),
    }
}

/// Read `source` to its end, keeping the first [`MAX_CAPTURED_BYTES`].
fn capture(mut source: impl Read + Send + 'static) -> thread::JoinHandle<std::io::Result<Vec<u8>>> {
    thread::spawn(move || {
        let mut kept = Vec::new();
        let mut buffer = [0u8; 1 << 14];
        loop {
            let read = match source.read(&mut buffer) {
                Ok(0) => return Ok(kept),
                Ok(read) => read,
                Err(error) if error.kind() == std::io::ErrorKind::Interrupted => continue,
                Err(error) => return Err(error),
            };
            let room = MAX_CAPTURED_BYTES.saturating_sub(kept.len());
            kept.extend_from_slice(&buffer[..read.min(room)]);
        }
    })
}

fn joined(handle: Option<thread::JoinHandle<std::io::Result<Vec<u8>>>>) -> Result<String, SimulationError> {
    let bytes = match handle.map(thread::JoinHandle::join) {
        Some(Ok(Ok(bytes))) => bytes,
        Some(Ok(Err(source))) => return Err(SimulationError::Workspace { action: "read ngspice's output", source }),
        Some(Err(_)) | None => Vec::new(),
    };
    Ok(String::from_utf8_lossy(&bytes).into_owned())
}

/// Run `ngspice -b` on `deck` in a fresh directory, held to one thread and to the time limit.
/// A non-zero exit status is an error; failed or missing measurements are left to [`Run::value`].
pub fn run(deck: &str, options: &Options) -> Result<Run, SimulationError> {
    let workspace = |action| move |source| SimulationError::Workspace { action, source };
    let directory = tempfile::Builder::new()
        .prefix("widthwise-ngspice-")
        .tempdir()
        .map_err(workspace("create a temporary directory"))?;
    std::fs::write(directory.path().join(".spiceinit"), SPICEINIT).map_err(workspace("write .spiceinit"))?;
    std::fs::write(directory.path().join("deck.sp"), deck).map_err(workspace("write the deck"))?;
    let started = Instant::now();
    let mut child = command(options)
        .arg("-b")
        .arg("deck.sp")
        .current_dir(directory.path())
        .spawn()
        .map_err(|source| start_error(options, source))?;
    let stdout = child.stdout.take().map(capture);
    let stderr = child.stderr.take().map(capture);
    let mut pause = Duration::from_millis(2);
    let status = loop {
        match child.try_wait() {
            Ok(Some(status)) => break status,
            Ok(None) if started.elapsed() >= options.time_limit => {
                let _ = child.kill();
                let _ = child.wait();
                let _ = (joined(stdout), joined(stderr));
                return Err(SimulationError::TimedOut { limit: options.time_limit });
            }
            Ok(None) => {
                let left = options.time_limit.saturating_sub(started.elapsed());
                thread::sleep(pause.min(left));
                pause = (pause * 2).min(Duration::from_millis(50));
            }
            Err(source) => {
                let _ = child.kill();
                let _ = child.wait();
                return Err(SimulationError::Workspace { action: "wait for ngspice", source });
            }
        }
    };
    let elapsed = started.elapsed();
    let (stdout, stderr) = (joined(stdout)?, joined(stderr)?);
    let errors = error_lines(&stdout, &stderr);
    if !status.success() {
        return Err(SimulationError::Failed { status: describe(status), errors });
    }
    let measurements = Measurements::parse(&stdout, &stderr);
    Ok(Run { stdout, stderr, measurements, errors, elapsed })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// ngspice-39's standard output for a deck with four `.meas` lines, two of which failed.
    const STDOUT: &str = "
Note: No compatibility mode selected!


Circuit: meas test

Doing analysis at TEMP = 27.000000 and TNOM = 27.000000

No. of Data Rows : 1020

  Measurements for Transient Analysis

tpd_ok              =  6.931090e-10 targ=  1.698109e-09 trig=  1.005000e-09
vmax                =  9.932962e-01 at=  6.010000e-09
twhen               =   1.36163e-09


Total analysis time (seconds) = 0.003

Total elapsed time (seconds) = 0.007 
Maximum ngspice program size =   21.859 MB.
Stack = 0 bytes.
";

    /// Its standard error.
    const STDERR: &str = "
Error: measure  tpd_fail  trig(TARG) : out of interval
 .meas tran tpd_fail trig v(a) val=0.5 rise=1 targ v(b) val=2 rise=1 failed!


Error: measure  tfail2  when(WHEN) : out of interval
 .meas tran tfail2 when v(b)=5 failed!
";

    #[test]
    fn measurements_are_read_from_both_streams() {
        let measurements = Measurements::parse(STDOUT, STDERR);
        let expected: BTreeMap<String, Measurement> = [
            ("tpd_ok", Measurement::Value(6.931090e-10)),
            ("vmax", Measurement::Value(9.932962e-01)),
            ("twhen", Measurement::Value(1.36163e-09)),
            ("tpd_fail", Measurement::Failed("trig(TARG) : out of interval".into())),
            ("tfail2", Measurement::Failed("when(WHEN) : out of interval".into())),
        ]
        .into_iter()
        .map(|(name, value)| (name.to_string(), value))
        .collect();
        assert_eq!(measurements.0, expected);
        assert_eq!(measurements.get("TPD_OK"), Some(&Measurement::Value(6.931090e-10)));
    }

    #[test]
    fn a_run_names_the_measurement_that_failed_or_is_missing() {
        let run = Run {
            stdout: STDOUT.into(),
            stderr: STDERR.into(),
            measurements: Measurements::parse(STDOUT, STDERR),
            errors: error_lines(STDOUT, STDERR),
            elapsed: Duration::ZERO,
        };
        assert_eq!(run.values(&["tpd_ok", "VMAX"]).unwrap(), [6.931090e-10, 9.932962e-01]);
        let failed = run.values(&["tpd_ok", "tpd_fail"]).unwrap_err();
        assert_eq!(failed.to_string(), "measurement 'tpd_fail' failed: trig(TARG) : out of interval");
        assert_eq!(failed.exit_code(), 1);
        let missing = run.value("tpd_other").unwrap_err().to_string();
        assert!(missing.starts_with("ngspice printed no measurement 'tpd_other'; ngspice said:\n  Error: measure"));
    }

    #[test]
    fn odd_lines_are_not_measurements() {
        let stdout = "Stack = 0 bytes.\nTotal analysis time (seconds) = 0.1\n= 3\n1x = 2\nname =\nv = nan\nw = 1e400\n";
        let measurements = Measurements::parse(stdout, ".meas tran\nError: measure\n");
        let names: Vec<&String> = measurements.0.keys().collect();
        assert_eq!(names, ["v", "w"]);
        assert!(matches!(measurements.get("v"), Some(Measurement::Failed(why)) if why.contains("nan")));
    }

    #[test]
    fn error_lines_skip_notes_and_are_capped() {
        let stderr = "\nwarning, can't find model 'nosuch' from line\n    m1 b a 0 0 nosuch\nError on line 4\n\
                      could not find a valid modelname\n\nNote: No \".plot\", \".print\", or \".fourier\" lines\n";
        assert_eq!(
            error_lines("", stderr),
            [
                "warning, can't find model 'nosuch' from line",
                "    m1 b a 0 0 nosuch",
                "Error on line 4",
                "could not find a valid modelname"
            ]
        );
        assert_eq!(error_lines("a\nERROR: fatal\n", ""), ["ERROR: fatal"]);
        let many = "x\n".repeat(50);
        let lines = error_lines("", &many);
        assert_eq!(lines.len(), MAX_ERROR_LINES);
        assert_eq!(lines[MAX_ERROR_LINES - 1], "... and 31 more lines");
    }

    #[test]
    fn a_missing_program_says_how_to_install_ngspice() {
        let options = Options { program: "widthwise-no-such-simulator".into(), ..Options::default() };
        for error in [run("* empty\n.end\n", &options).unwrap_err(), check_installed(&options).unwrap_err()] {
            assert!(matches!(error, SimulationError::NotInstalled { .. }), "{error}");
            assert!(error.to_string().contains("apt-get install ngspice"), "{error}");
            assert_eq!(error.exit_code(), 2);
        }
    }

    /// Whether ngspice runs here: if not, a note on stderr and `false`, or a panic when
    /// `WIDTHWISE_REQUIRE_NGSPICE=1` (as the reference checks do).
    fn ngspice_here(check: &str) -> bool {
        match check_installed(&Options::default()) {
            Ok(_) => true,
            Err(error) => {
                if std::env::var("WIDTHWISE_REQUIRE_NGSPICE").is_ok_and(|v| v == "1") {
                    panic!("{check}: {error} and WIDTHWISE_REQUIRE_NGSPICE=1");
                }
                use std::io::Write;
                let _ = writeln!(std::io::stderr(), "{check}: skipped, {error}");
                false
            }
        }
    }

    #[test]
    fn ngspice_measures_an_rc_delay() {
        if !ngspice_here("ngspice_measures_an_rc_delay") {
            return;
        }
        assert!(check_installed(&Options::default()).unwrap().contains("ngspice"));
        // A 1 kOhm, 1 pF low-pass driven by a 10 ps step reaches half its swing after RC ln 2 =
        // 0.693 ns (the first-order step response, common practice, no source); the ramp adds
        // about half its 10 ps.
        let deck = "rc\nvin a 0 pulse(0 1 1n 10p 10p 5n 20n)\nr1 a b 1k\nc1 b 0 1p\n.tran 1p 4n\n\
                    .meas tran tpd trig v(a) val=0.5 rise=1 targ v(b) val=0.5 rise=1\n\
                    .meas tran never trig v(a) val=0.5 rise=1 targ v(b) val=2 rise=1\n.end\n";
        let run = run(deck, &Options::default()).unwrap();
        let tpd = run.value("tpd").unwrap();
        assert!((tpd - 0.693e-9).abs() < 0.01e-9, "{tpd}");
        assert!(matches!(run.value("never"), Err(SimulationError::MeasurementFailed { .. })));
    }

    #[test]
    fn a_deck_ngspice_rejects_is_an_error_with_its_reasons() {
        if !ngspice_here("a_deck_ngspice_rejects_is_an_error_with_its_reasons") {
            return;
        }
        let deck = "bad\nvdd d 0 1\nm1 d d 0 0 nosuch w=1u l=1u\n.tran 1p 1n\n.end\n";
        let error = run(deck, &Options::default()).unwrap_err();
        assert!(matches!(error, SimulationError::Failed { .. }), "{error}");
        assert!(error.to_string().contains("could not find a valid modelname"), "{error}");
        assert_eq!(error.exit_code(), 1);
    }

    #[test]
    fn a_run_past_the_time_limit_is_stopped() {
        if !ngspice_here("a_run_past_the_time_limit_is_stopped") {
            return;
        }
        // A control loop of a billion steps runs far past a quarter second.
        let deck = "long\nr1 a 0 1k\n.control\nlet i = 0\nwhile i < 1e9\nlet i = i + 1\nend\n.endc\n.end\n";
        let options = Options { time_limit: Duration::from_millis(250), ..Options::default() };
        let started = Instant::now();
        let error = run(deck, &options).unwrap_err();
        assert!(matches!(error, SimulationError::TimedOut { .. }), "{error}");
        assert!(started.elapsed() < Duration::from_secs(10), "{:?}", started.elapsed());
    }
}
