//! The library reader's tests: precedence, places of errors, clashes and limits, the work of verify.

use super::*;
use crate::io::InputError;
use crate::sizing::Method;

/// The reader the command supplies: process files through the I/O layer.
fn read_file(path: &Path) -> Result<String, InputError> {
    crate::io::read_text(path, crate::process::MAX_PROCESS_FILE_BYTES, "the process file")
}

fn read(source: &Source) -> Result<Library, LibraryError> {
    Library::read(source, Some(Path::new(".")), &Overrides::default(), &mut read_file)
}

/// Every variant of a gate, sized in the built-in process, or the gate's problem.
fn size_gate(plan: &GatePlan) -> Result<Vec<SizedCell>, GateProblem> {
    let process = Arc::new(Process::default());
    let forms = Forms::new(&process).of(plan)?;
    plan.drives.iter().map(|&drive| size_form(plan, &forms, drive, &process)).collect()
}

/// The library `text`, read as the command reads it (a file `lib.toml`, process files from `.`).
pub(super) fn library(text: &str) -> Library {
    read(&Source::file("lib.toml", text)).unwrap()
}

fn read_error(text: &str) -> String {
    let source = Source::file("lib.toml", text);
    read(&source).unwrap_err().diagnostic(&source).render()
}

fn problem(text: &str, index: usize) -> String {
    let source = Source::file("lib.toml", text);
    let library = read(&source).unwrap();
    let problem = match library.gate(index) {
        Err(problem) => problem,
        Ok(plan) => size_gate(&plan).unwrap_err(),
    };
    problem.render(&source)
}

#[test]
fn drive_suffixes_keep_the_drive() {
    assert_eq!(names::drive_suffix(1.0), "x1");
    assert_eq!(names::drive_suffix(1.5), "x1p5");
    assert_eq!(names::drive_suffix(0.25), "x0p25");
    assert_eq!(names::drive_suffix(16.0), "x16");
}

#[test]
fn precedence_is_gate_then_defaults_then_process() {
    let lib = library(
        "[defaults]\nmethod = \"min-area\"\ndrive = [1, 2]\n\n\
         [[gate]]\nname = \"a\"\nexpr = \"nand2\"\n\n\
         [[gate]]\nname = \"b\"\nexpr = \"nor2\"\nmethod = \"longest-path\"\ndrive = 4\n",
    );
    let a = lib.gate(0).unwrap();
    assert_eq!((a.method, a.drives.clone(), a.mobility_ratio), (Method::MIN_AREA, vec![1.0, 2.0], 2.0));
    let b = lib.gate(1).unwrap();
    assert_eq!((b.method, b.drives.clone()), (Method::LongestPath, vec![4.0]));
    assert_eq!(a.variant_name(2.0), "a_x2");
}

#[test]
fn expression_errors_point_into_the_file_line() {
    let text = "[[gate]]\nname = \"ok\"\nexpr = \"nand2\"\n\n[[gate]]\nname = \"bad\"\nexpr = \"!(a & )\"\n";
    let rendered = problem(text, 1);
    let lines: Vec<&str> = rendered.lines().collect();
    assert!(lines[0].starts_with("error: gate 'bad': expected"), "{rendered}");
    assert_eq!(lines[1], "  at lib.toml, line 7, column 15:");
    assert_eq!(lines[2], "    expr = \"!(a & )\"");
    assert_eq!(lines[3], "                  ^");
}

#[test]
fn escaped_expressions_are_shown_on_their_own() {
    let text = "[[gate]]\nname = \"bad\"\nexpr = \"!(a \\u0026 )\"\n";
    let rendered = problem(text, 0);
    assert!(rendered.contains("the expr string (lib.toml, line 3)"), "{rendered}");
    assert!(rendered.contains("    !(a & )\n          ^"), "{rendered}");
}

#[test]
fn schema_errors_in_one_gate_name_it_and_its_line() {
    let text = "[[gate]]\nname = \"ok\"\nexpr = \"nand2\"\n\n[[gate]]\nname = \"odd\"\nexpr = \"nor2\"\nsize = 3\n";
    let lib = library(text);
    assert!(lib.gate(0).is_ok());
    let rendered = problem(text, 1);
    assert!(rendered.starts_with("error: gate 'odd': unknown field `size`"), "{rendered}");
    assert!(rendered.contains("lib.toml, line 8"), "{rendered}");
    let missing = problem("[[gate]]\nname = \"m\"\n", 0);
    assert!(missing.contains("missing field `expr`") && missing.contains("line 1"), "{missing}");
}

#[test]
fn bad_names_say_why() {
    for name in ["=cmd", "+x", "-x", "@x", "1x", ""] {
        let rendered = problem(&format!("[[gate]]\nname = \"{name}\"\nexpr = \"inv\"\n"), 0);
        assert!(rendered.contains("spreadsheet"), "{rendered}");
        assert!(rendered.contains("line 2"), "{rendered}");
    }
}

#[test]
fn bad_drives() {
    for (drive, why) in [
        ("0", "from 1e-6 up to 1e6"),
        ("[1, -2]", "1e-6"),
        ("[1, 5e-324]", "1e-6"),
        ("[]", "empty"),
        ("\"x\"", "expected"),
    ] {
        let rendered = problem(&format!("[[gate]]\nname = \"g\"\nexpr = \"inv\"\ndrive = {drive}\n"), 0);
        assert!(rendered.contains(why) && rendered.contains("line 4"), "{drive}: {rendered}");
    }
    let error = read_error("[defaults]\ndrive = [2, 2]\n");
    assert!(error.contains("twice") && error.contains("line 2"), "{error}");
}

#[test]
fn whole_file_errors() {
    assert!(read_error("[[gate]\n").contains("line 1"));
    let unknown = read_error("gates = []\n");
    assert!(unknown.contains("unknown key 'gates'"), "{unknown}");
    let defaults = read_error("[defaults]\nmobility_ratio = -2\n");
    assert!(defaults.contains("mobility_ratio") && defaults.contains("line 2"), "{defaults}");
    let process = read_error("[process]\nmobility_ratio = 2.0\n");
    assert!(process.contains("[process]: missing field"), "{process}");
    let missing = read_error("process = \"no-such-process.toml\"\n");
    assert!(missing.contains("cannot read the process file"), "{missing}");
}

#[test]
fn duplicate_names_and_drives_are_clashes() {
    let lib = library("[[gate]]\nname = \"g\"\nexpr = \"inv\"\n[[gate]]\nname = \"g\"\nexpr = \"nand2\"\n");
    let clashes = lib.name_clashes();
    assert_eq!(clashes.len(), 1);
    assert!(clashes[0].message.contains("gate 1"));
    let text = "[[gate]]\nname = \"g\"\nexpr = \"inv\"\ndrive = [1, 2, 1.0]\n";
    let lib = library(text);
    let clashes = lib.name_clashes();
    assert_eq!(clashes.len(), 1);
    let rendered = clashes[0].render(&Source::file("lib.toml", text));
    assert!(rendered.contains("subcircuit 'g_x1'") && rendered.contains("line 4, column 16"), "{rendered}");
}

#[test]
fn variants_are_bounded_per_gate_and_per_library() {
    let list = |count: usize| (1..=count).map(|d| d.to_string()).collect::<Vec<_>>().join(", ");
    let gate = |drives: &str| format!("[[gate]]\nname = \"g\"\nexpr = \"inv\"\ndrive = [{drives}]\n");
    // At the gate's limit the file reads; one more drive is that gate's problem, at its list.
    let at = library(&gate(&list(MAX_DRIVES_PER_GATE)));
    assert_eq!(at.gate(0).unwrap().drives.len(), MAX_DRIVES_PER_GATE);
    let rendered = problem(&gate(&list(MAX_DRIVES_PER_GATE + 1)), 0);
    assert!(rendered.contains("drive lists 100001 drives; the limit is 100000 per gate"), "{rendered}");
    assert!(rendered.contains("line 4, column 9"), "{rendered}");
    // Two gates of the most drives are the library's limit; a third gate is past it.
    let defaults = format!("[defaults]\ndrive = [{}]\n", list(MAX_DRIVES_PER_GATE));
    let gates =
        |count: usize| (0..count).map(|i| format!("[[gate]]\nname = \"g{i}\"\nexpr = \"inv\"\n")).collect::<String>();
    assert_eq!(library(&format!("{defaults}{}", gates(2))).gate_count(), 2);
    let error = read_error(&format!("{defaults}{}", gates(3)));
    assert!(error.contains("asks for 300000 variants") && error.contains("the limit is 200000"), "{error}");
}

#[test]
fn unknown_critical_input_points_at_the_key() {
    let rendered = problem("[[gate]]\nname = \"g\"\nexpr = \"nand2\"\ncritical = \"q\"\n", 0);
    assert!(rendered.contains("'q'") && rendered.contains("line 4, column 12"), "{rendered}");
}

#[test]
fn verify_work_counts_every_stage() {
    // and2 is a NAND2 and an inverter: 3 pull-down devices on one word of 4 vectors, per drive;
    // verify charges the sized cell the same (its pull-down transistors of every stage).
    let options = VerifyOptions::default();
    let text = "[[gate]]\nname = \"a\"\nexpr = \"and2\"\ndrive = [1, 2]\n\n[[gate]]\nname = \"n\"\nexpr = \"nand2\"\n";
    let read = library(text);
    assert_eq!(read.verify_work(&options), (3 * 2 + 2, Estimate::Exactly));
    let plan = read.gate(0).unwrap();
    let sized = size_gate(&plan).unwrap();
    let charged: u128 = sized
        .iter()
        .map(|cell| {
            let figures = crate::figures::CellFigures::of(cell);
            let pull_down = figures.transistors.iter().filter(|t| t.network == crate::network::NetworkKind::PullDown);
            verify::verify_work(figures.inputs.len(), pull_down.count(), &options)
        })
        .sum();
    assert_eq!(charged, 3 * 2);
    // xor2 has two forms, 6 and 7 pull-down devices: the larger counts, as an upper bound.
    let xor = library("[[gate]]\nname = \"x\"\nexpr = \"xor2\"\n");
    assert_eq!(xor.verify_work(&options), (7, Estimate::UpTo));
}
