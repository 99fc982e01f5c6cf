//! The scanner's unit tests: cards, sections, includes, bins, lookups and names, each against
//! what ngspice-39 does with the same text.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use super::scan::normalize;
use super::*;
use crate::diagnostic::Severity;

/// Scan `files[0]` (with `section`) in a file system of `files`.
fn scan_files(files: &[(&str, &str)], section: Option<&str>) -> Library {
    let map: HashMap<PathBuf, String> =
        files.iter().map(|(path, text)| (normalize(Path::new(path)), text.to_string())).collect();
    let mut read = |path: &Path| {
        map.get(&normalize(path))
            .cloned()
            .ok_or_else(|| std::io::Error::new(std::io::ErrorKind::NotFound, "no such file"))
    };
    scan(Path::new(files[0].0), files[0].1, section, &mut read)
}

fn text_at(library: &Library, at: Location) -> &str {
    &library.file(at.file).text[at.span.start..at.span.end]
}

fn clean(library: &Library) {
    assert!(library.errors.is_empty(), "{:?}", library.errors);
}

#[test]
fn model_cards_read_like_ngspice() {
    // (library text, expected models as "name type level", where the first model's name stands)
    let cases: &[(&str, &[&str])] = &[
        (".model n1 nmos level=54 lmin=0.1u", &["n1 nmos 54"]),
        (".MODEL N2 PMOS (LEVEL=14 VTH0=-0.4)", &["n2 pmos 14"]),
        (".model n3 nmos(level=8)", &["n3 nmos 8"]),
        (".model d1 d (is=1e-14)", &["d1 d 1 (not given)"]),
        ("  .model n4\n+ nmos\n* a comment between\n\n+ level = 54", &["n4 nmos 54"]),
        (".model n5 nmos $ comment level=8\n+ level=49 ; level=8", &["n5 nmos 49"]),
        (".model n6 nmos level=54 vth0=0.4$nospace", &["n6 nmos 54"]),
        (".model n7 nmos // .model fake nmos\n.model n8 pmos level=54,", &["n7 nmos 1 (not given)", "n8 pmos 54"]),
        (".model n9 nmos \\\\\nlevel=54", &["n9 nmos 54"]),
        (".model n10 nmos level={lv}", &["n10 nmos {lv}"]),
        (".model n11 nmos level='2*27'", &["n11 nmos '2*27'"]),
        ("* .model c1 nmos\n$ .model c2 nmos\n; .model c3 nmos\n  // .model c4 nmos\n! .model c5 nmos", &[]),
        (".model n12 nmos\r\n+ level=54\r\n", &["n12 nmos 54"]),
        (".model n13 nmos vth0={0.4 +\n+ dvth} level=14", &["n13 nmos 14"]),
    ];
    for (text, expected) in cases {
        let library = scan_files(&[("lib.l", text)], None);
        clean(&library);
        let found: Vec<String> =
            library.models.iter().map(|m| format!("{} {} {}", m.name, m.model_type, m.level)).collect();
        assert_eq!(&found, expected, "{text:?}");
        if let Some(model) = library.models.first() {
            assert!(text_at(&library, model.at).eq_ignore_ascii_case(&model.name), "{text:?}");
        }
    }
}

#[test]
fn a_card_spans_its_continuation_lines() {
    let text = "* head\n.model n nmos\n+ level=54\n* tail\n";
    let library = scan_files(&[("lib.l", text)], None);
    assert_eq!(text_at(&library, library.models[0].card), ".model n nmos\n+ level=54");
}

#[test]
fn bins_record_their_limits_in_metres() {
    let text = "\
.model b.1 nmos level=54 lmin=0.1u lmax=1um wmin=2e-7 wmax = 10u
.model B.2 NMOS LEVEL=54 LMIN={lm} LMAX=1E-6 WMIN=0.2U
.model b.x nmos level=54 lmin=1
.model a.b.7 pmos level=54 lmin=1mil lmax=2meg wmin=1e-7*2 wmax=0";
    let library = scan_files(&[("lib.l", text)], None);
    clean(&library);
    let bins: Vec<Option<&Bin>> = library.models.iter().map(|m| m.bin.as_ref()).collect();
    let close = |range: &Range, min: f64, max: f64| {
        let (got_min, got_max) = range.metres().expect("numbers");
        (got_min - min).abs() <= 1e-12 * min.abs() && (got_max - max).abs() <= 1e-12 * max.abs()
    };
    let b1 = bins[0].unwrap();
    assert_eq!(b1.base, "b");
    assert!(close(&b1.length, 0.1e-6, 1e-6), "{b1:?}");
    assert!(close(&b1.width, 2e-7, 10e-6), "{b1:?}");
    let b2 = bins[1].unwrap();
    assert_eq!((b2.base.as_str(), &b2.length.min), ("b", &Limit::Expression("{lm}".into())));
    assert_eq!((&b2.length.max, &b2.width.max), (&Limit::Metres(1e-6), &Limit::Missing));
    assert_eq!(bins[2], None);
    let b7 = bins[3].unwrap();
    assert_eq!(b7.base, "a.b");
    assert!(close(&b7.length, 25.4e-6, 2e6), "{b7:?}");
    assert_eq!(b7.width.min, Limit::Expression("1e-7*2".into()));
}

#[test]
fn includes_resolve_from_the_including_file() {
    let files = [
        ("kit/top.l", ".include sub/a.inc\n.inc \"sub/b name.inc\"\n.model top nmos"),
        ("kit/sub/a.inc", ".include ../shared/c.inc\n.model a nmos"),
        ("kit/sub/b name.inc", ".model b pmos"),
        ("kit/shared/c.inc", ".model c nmos"),
    ];
    let library = scan_files(&files, None);
    clean(&library);
    let names: Vec<&str> = library.models.iter().map(|m| m.name.as_str()).collect();
    assert_eq!(names, ["c", "a", "b", "top"]);
    assert_eq!(library.file(library.models[0].at.file).path, Path::new("kit/sub/../shared/c.inc"));
}

#[test]
fn a_section_reads_its_lines_and_what_they_name() {
    let files = [
        (
            "kit/corners.l",
            "* corners\n.model outside nmos\n.lib TT\n.param x=1\n.include devices.inc\n.lib more/extra.l \
             fast_p\n.endl tt\n.lib ss\n.model ss_only nmos\n.endl",
        ),
        ("kit/devices.inc", ".model dev_n nmos level=54\n.model dev_p pmos level=54"),
        ("kit/more/extra.l", ".lib fast_p\n.model extra_p pmos\n.endl\n.lib other\n.model other nmos\n.endl"),
    ];
    let library = scan_files(&files, Some("tt"));
    clean(&library);
    let names: Vec<&str> = library.models.iter().map(|m| m.name.as_str()).collect();
    assert_eq!(names, ["dev_n", "dev_p", "extra_p"]);
    let ss = scan_files(&files, Some("SS"));
    clean(&ss);
    assert_eq!(ss.models.iter().map(|m| m.name.as_str()).collect::<Vec<_>>(), ["ss_only"]);
}

#[test]
fn references_in_a_section_resolve_from_the_library_not_the_included_file() {
    // ngspice expands `.lib` references of a section against the directory of the library that
    // holds the section, even when the reference came from a file it `.include`s.
    let files = [
        ("kit/lib.l", ".lib tt\n.include sub/inner.inc\n.endl"),
        ("kit/sub/inner.inc", ".lib corners.l x\n"),
        ("kit/corners.l", ".lib x\n.model found nmos\n.endl"),
    ];
    let library = scan_files(&files, Some("tt"));
    clean(&library);
    assert_eq!(library.models[0].name, "found");
}

#[test]
fn models_inside_subcircuits_are_local() {
    let text = ".subckt cell d g s b\n.model inner nmos\nm1 d g s b inner\n.ends\n.model outer nmos";
    let library = scan_files(&[("lib.l", text)], None);
    clean(&library);
    assert_eq!(library.models[0].subcircuit.as_deref(), Some("cell"));
    assert_eq!(library.models[1].subcircuit, None);
    assert_eq!(library.subcircuits[0].0, "cell");
}

/// (files, section, expected message fragment, text the error points at or "" for none)
type ErrorCase<'a> = (&'a [(&'a str, &'a str)], Option<&'a str>, &'a str, &'a str);

#[test]
fn bad_libraries_point_at_the_line() {
    let cases: &[ErrorCase] = &[
        (&[("lib.l", ".model ok nmos\n.include missing.inc")], None, "cannot read 'missing.inc'", "missing.inc"),
        (&[("lib.l", ".include   ")], None, "'.include' names no file", ".include"),
        (&[("lib.l", ".inc \"open.l")], None, "never closed", ".inc \"open.l"),
        (&[("lib.l", ".inc ''")], None, "'.inc' names no file", ".inc ''"),
        (&[("lib.l", ".include ~/x.l")], None, "starts with '~'", "~/x.l"),
        (&[("a.l", ".include b.l"), ("b.l", "* b\n.include a.l")], None, "'a.l' includes itself", "a.l"),
        (&[("lib.l", ".lib typical\n.model n nmos\n.endl")], None, "defines sections (typical)", ".lib typical"),
        (&[("lib.l", ".lib tt\n.model n nmos")], Some("tt"), "section 'tt' has no '.endl'", ".lib tt"),
        (
            &[("lib.l", ".lib tt\n.endl\n.lib ff\n.endl")],
            Some("ss"),
            "no section 'ss' in 'lib.l'; its sections are: tt, ff",
            "",
        ),
        (&[("lib.l", ".model n nmos")], Some("tt"), "it defines no sections", ""),
        (
            &[("lib.l", ".lib tt\n.lib other.l nope\n.endl"), ("other.l", ".lib yes\n.endl")],
            Some("tt"),
            "no section 'nope' in 'other.l'; its sections are: yes",
            "other.l",
        ),
        (&[("lib.l", "* x\n.lib corners.l tt")], None, "ngspice looks for it beside the deck", "corners.l"),
        (&[("lib.l", ".lib a\n.lib lib.l a\n.endl")], Some("a"), "section 'a' of 'lib.l' refers back", "lib.l"),
        (&[("lib.l", ".lib a\n.lib b\n.model n nmos\n.endl\n.endl")], Some("a"), "defines a section inside", ".lib b"),
        (&[("lib.l", ".model n nmos\n.endl")], None, "'.endl' ends no section", ".endl"),
        (&[("lib.l", ".lib\n")], None, "names neither a file nor a section", ".lib"),
        (&[("lib.l", "* x\n.model only_name")], None, "needs a name and a type", ".model only_name"),
    ];
    for (files, section, message, pointed) in cases {
        let library = scan_files(files, *section);
        let problem = library.errors.first().unwrap_or_else(|| panic!("{files:?}: no error"));
        assert!(problem.error.to_string().contains(message), "{files:?}: {}", problem.error);
        match problem.at {
            Some(at) => assert_eq!(text_at(&library, at), *pointed, "{files:?}"),
            None => assert_eq!(*pointed, "", "{files:?}"),
        }
        let rendered = library.diagnostic(problem.error.to_string(), problem.at, Severity::Error).render();
        assert!(rendered.starts_with("error: "), "{rendered}");
    }
}

#[test]
fn one_scan_reports_every_problem_it_meets() {
    let files = [
        ("kit/top.l", ".lib tt\n.include missing.l\n.lib inc.l fast\n.model after nmos\n.include missing.l\n.endl"),
        ("kit/inc.l", ".lib typical\n.model n nmos\n.endl"),
    ];
    let library = scan_files(&files, Some("tt"));
    let errors: Vec<String> = library.errors.iter().map(|p| p.error.to_string()).collect();
    assert_eq!(errors.len(), 3, "{errors:?}");
    assert!(errors[0].starts_with("cannot read 'kit/missing.l'"), "{errors:?}");
    assert!(errors[1].starts_with("cannot read 'kit/missing.l'"), "{errors:?}");
    assert_eq!(errors[2], "no section 'fast' in 'kit/inc.l'; its sections are: typical");
    assert_eq!(text_at(&library, library.errors[1].at.unwrap()), "missing.l");
    assert_eq!(library.models[0].name, "after");
}

#[test]
fn nesting_and_size_are_limited() {
    // A chain of files, each including the next, one deeper than allowed.
    let names: Vec<String> = (0..=MAX_NESTING + 1).map(|i| format!("f{i}.l")).collect();
    let texts: Vec<String> = (0..=MAX_NESTING + 1)
        .map(|i| if i <= MAX_NESTING { format!(".include f{}.l", i + 1) } else { ".model deep nmos".into() })
        .collect();
    let files: Vec<(&str, &str)> = names.iter().map(String::as_str).zip(texts.iter().map(String::as_str)).collect();
    let library = scan_files(&files, None);
    assert!(matches!(library.errors[0].error, ScanError::TooDeep { limit: MAX_NESTING }), "{:?}", library.errors);
    // One deep less is read.
    let library = scan_files(&files[1..], None);
    clean(&library);
    assert_eq!(library.models[0].name, "deep");
    // Each file includes the next twice: 2^15 inclusions of a file of 1/2^14 of the limit pass it.
    let comment = format!("* {}\n", "x".repeat(MAX_LIBRARY_BYTES >> 14));
    let names: Vec<String> = (0..16).map(|i| format!("g{i}.l")).collect();
    let texts: Vec<String> =
        (0..16).map(|i| if i < 15 { format!(".inc g{0}.l\n.inc g{0}.l", i + 1) } else { comment.clone() }).collect();
    let files: Vec<(&str, &str)> = names.iter().map(String::as_str).zip(texts.iter().map(String::as_str)).collect();
    let library = scan_files(&files, None);
    assert!(library.errors.iter().any(|p| matches!(p.error, ScanError::TooLarge { .. })), "{:?}", library.errors);
}

#[test]
fn warnings_do_not_stop_the_scan() {
    let text = "+ level=1\n.model n nmos level=54\n.model N pmos";
    let library = scan_files(&[("lib.l", text)], None);
    clean(&library);
    let warnings: Vec<String> = library.warnings.iter().map(|w| w.error.to_string()).collect();
    assert!(warnings[0].contains("no card before it"), "{warnings:?}");
    assert!(warnings[1].contains("'n' is defined again; ngspice uses the first definition (lib.l:2)"), "{warnings:?}");
    assert_eq!(text_at(&library, library.warnings[1].at.unwrap()), "N");
    assert!(
        library
            .diagnostic(warnings[1].as_str(), library.warnings[1].at, Severity::Warning)
            .render()
            .starts_with("warning: ")
    );
    // The first definition is what a lookup finds.
    assert!(
        matches!(library.lookup("n", DeviceType::Nmos), Ok(ModelSet::Single(m)) if m.model_type == ModelType::Device(DeviceType::Nmos))
    );
}

const BINNED: &str = "\
.model plain nmos level=54
.model pl pmos level=54
.model bn.1 nmos level=54 lmin=0.12u lmax=10u wmin=0.15u wmax=1u
.model bn.2 nmos level=54 lmin=0.12u lmax=10u wmin=1u wmax=50u
.model old.1 nmos level=1 lmin=0 lmax=1 wmin=0 wmax=1
.model mixed.1 nmos level=54 lmin=0 lmax=1 wmin=0 wmax=1
.model mixed.2 pmos level=54 lmin=0 lmax=1 wmin=0 wmax=1
.model ex.1 nmos level=54 lmin={lm} lmax=1 wmin=0 wmax=1
.model half.1 nmos level=54 lmin=0 lmax=1
.model diode d
.subckt cell d g s b
.model hidden nmos level=54
.ends";

#[test]
fn lookups_find_plain_and_binned_models() {
    let library = scan_files(&[("lib.l", BINNED)], None);
    clean(&library);
    assert!(matches!(library.lookup("PLAIN", DeviceType::Nmos), Ok(ModelSet::Single(m)) if m.name == "plain"));
    let Ok(ModelSet::Binned(bins)) = library.lookup("bn", DeviceType::Nmos) else { panic!("bins") };
    assert_eq!(bins.iter().map(|m| m.name.as_str()).collect::<Vec<_>>(), ["bn.1", "bn.2"]);
    // A bin can be named directly, as ngspice matches a plain name first.
    assert!(matches!(library.lookup("bn.2", DeviceType::Nmos), Ok(ModelSet::Single(_))));
    let message = |name: &str, device| library.lookup(name, device).unwrap_err().to_string();
    assert_eq!(message("pl", DeviceType::Nmos), "model 'pl' is a pmos model, not nmos");
    assert_eq!(message("diode", DeviceType::Nmos), "model 'diode' is a d model, not nmos");
    assert_eq!(message("mixed", DeviceType::Nmos), "model 'mixed.2' is a pmos model, not nmos");
    assert!(message("old", DeviceType::Nmos).starts_with("'old.1' is a level-1 model, and ngspice bins only"));
    assert!(message("hidden", DeviceType::Nmos).contains("inside subcircuit 'cell'"));
    assert!(message("cell", DeviceType::Nmos).starts_with("'cell' is a subcircuit, not a model"));
    assert_eq!(message("nch", DeviceType::Pmos), "no model 'nch' in the library; its pmos models are: pl, mixed");
    assert_eq!(
        message("nch", DeviceType::Nmos),
        "no model 'nch' in the library; its nmos models are: plain, bn, old, mixed, ex, half"
    );
}

#[test]
fn bins_cover_devices_as_ngspice_picks_them() {
    let library = scan_files(&[("lib.l", BINNED)], None);
    let served = |name: &str, w: f64, l: f64| library.check_device(name, DeviceType::Nmos, w, l);
    assert!(matches!(served("plain", 1.0, 1.0), Ok(Served::Plain(_))));
    assert!(matches!(served("bn", 0.5e-6, 0.13e-6), Ok(Served::Bin(m)) if m.name == "bn.1"));
    assert!(matches!(served("bn", 2e-6, 0.13e-6), Ok(Served::Bin(m)) if m.name == "bn.2"));
    // At a shared limit the first bin wins; within 1 nm of a limit counts as inside.
    assert!(matches!(served("bn", 1e-6, 0.13e-6), Ok(Served::Bin(m)) if m.name == "bn.1"));
    assert!(matches!(served("bn", 50.0009e-6, 0.13e-6), Ok(Served::Bin(m)) if m.name == "bn.2"));
    assert!(matches!(served("bn", 0.5e-6, 0.1191e-6), Ok(Served::Bin(m)) if m.name == "bn.1"));
    let error = served("bn", 60e-6, 0.13e-6).unwrap_err().to_string();
    assert_eq!(
        error,
        "no bin of 'bn' covers a device of W = 60 um, L = 0.13 um; nearest: bn.2 (L 0.12-10 um, W 1-50 um); \
         bn.1 (L 0.12-10 um, W 0.15-1 um)"
    );
    assert!(served("bn", 0.5e-6, 0.1189e-6).is_err());
    assert!(matches!(served("ex", 0.5, 0.5), Ok(Served::Unchecked(why)) if why.contains("'ex.1'")));
    let error = served("half", 0.5, 0.5).unwrap_err().to_string();
    assert!(error.ends_with("none of its bins sets all of lmin, lmax, wmin and wmax as numbers"), "{error}");
    let scaled = scan_files(&[("lib.l", &format!("{BINNED}\n.options scale=1e-6"))], None);
    let served = scaled.check_device("bn", DeviceType::Nmos, 60e-6, 0.13e-6);
    assert!(matches!(served, Ok(Served::Unchecked(why)) if why.contains("option 'scale' (lib.l:14)")));
}

#[test]
fn spice_numbers_with_scale_suffixes() {
    let cases: &[(&str, Option<f64>)] = &[
        ("1", Some(1.0)),
        ("0.13u", Some(0.13e-6)),
        ("0.13UM", Some(0.13e-6)),
        ("1meg", Some(1e6)),
        ("2MIL", Some(50.8e-6)),
        ("1e-6", Some(1e-6)),
        ("-2.5e3k", Some(-2.5e6)),
        (".5n", Some(0.5e-9)),
        ("5.", Some(5.0)),
        ("3m", Some(3e-3)),
        ("7f", Some(7e-15)),
        ("", None),
        ("u", None),
        ("{x}", None),
        ("1e-7*2", None),
        ("lmin", None),
        (".", None),
        ("+", None),
        ("1u2", None),
    ];
    for (text, expected) in cases {
        let got = spice_number(text);
        match (got, expected) {
            (Some(got), Some(expected)) => {
                assert!((got - expected).abs() <= 1e-12 * expected.abs(), "{text}: {got}")
            }
            _ => assert_eq!(got, *expected, "{text}"),
        }
    }
}

#[test]
fn names_and_paths_a_deck_can_hold() {
    for name in ["nch", "NCH", "_n", "n.1", "n-ch", "n+ch", "a[1]", "p$x"] {
        assert_eq!(check_model_name(name), Ok(()), "{name}");
    }
    for (name, why) in [
        ("", "is empty"),
        ("a b", "white space"),
        ("a=b", "splits an instance line"),
        ("a(b", "splits an instance line"),
        ("a,b", "splits an instance line"),
        ("a'b", "quotes and braces"),
        ("a\"b", "quotes and braces"),
        ("{a}", "quotes and braces"),
        ("a;b", "comment"),
        ("a//b", "comment"),
        ("1e5", "must start with a letter"),
        ("$n", "must start with a letter"),
        ("gnd", "node 0"),
        ("OFF", "instance flag"),
        ("n\u{c4}", "printable ASCII"),
    ] {
        let error = check_model_name(name).unwrap_err().to_string();
        assert!(error.contains(why), "{name:?}: {error}");
    }
    for path in ["/home/x/lib.l", "/a,b/x.l", "/a$b.l", "/Ab/\u{c4}.l", "rel/x.l"] {
        assert_eq!(check_deck_path(Path::new(path)), Ok(path), "{path}");
    }
    for (path, why) in [
        ("", "is empty"),
        ("/a b/x", "white space"),
        ("/a;b", "comment"),
        ("/x//y", "comment"),
        ("/a,$b", "after ','"),
        ("~/x", "home directory"),
        ("/\"x\"", "quotes"),
        ("/a\tb", "white space"),
    ] {
        let error = check_deck_path(Path::new(path)).unwrap_err().to_string();
        assert!(error.contains(why), "{path:?}: {error}");
    }
    #[cfg(unix)]
    {
        use std::os::unix::ffi::OsStrExt;
        let path = Path::new(std::ffi::OsStr::from_bytes(b"/x/\xff.l"));
        assert!(check_deck_path(path).unwrap_err().to_string().contains("not valid UTF-8"));
    }
    assert_eq!(check_section_name("typical"), Ok(()));
    assert!(check_section_name("two words").is_err());
}

proptest::proptest! {
    /// Any text made of the reader's special characters scans without a panic, and every
    /// problem points inside its file.
    #[test]
    fn any_library_text_scans(text in r#"([-.+*$;/,'"{}()=~ \t\r\n\\]|model|lib|endl|inc|subckt|ends|nmos|a|1|u|e|\u{e9})*"#) {
        for section in [None, Some("a")] {
            let library = scan_files(&[("lib.l", &text)], section);
            for problem in library.errors.iter().chain(&library.warnings) {
                if let Some(at) = problem.at {
                    let file = &library.file(at.file).text;
                    proptest::prop_assert!(at.span.start <= at.span.end && at.span.end <= file.len());
                    proptest::prop_assert!(file.is_char_boundary(at.span.start) && file.is_char_boundary(at.span.end));
                }
            }
            for model in &library.models {
                let file = &library.file(model.at.file).text;
                proptest::prop_assert!(file.get(model.at.span.start..model.at.span.end).is_some());
            }
        }
    }
}

#[test]
fn arbitrary_bytes_never_panic() {
    // Every prefix of a text dense in the reader's special characters.
    let text = ".model a.1 nmos (level='x lmin={1 {2}} wmax=1u\n+\\\\\n\"\n.lib\n.lib x\n.inc '\n.endl\n\
                ;$//+ ; $\r\n.subckt\n.ends\n.ends\n.option scale\n.lib a b\n.model \u{e9} nmos\n{";
    for end in (0..=text.len()).filter(|&end| text.is_char_boundary(end)) {
        for section in [None, Some("x")] {
            let library = scan_files(&[("lib.l", &text[..end])], section);
            for problem in library.errors.iter().chain(&library.warnings) {
                let _ = library.diagnostic(problem.error.to_string(), problem.at, Severity::Error).render();
            }
            let _ = library.check_device("a", DeviceType::Nmos, 1e-6, 1e-6);
        }
    }
}
