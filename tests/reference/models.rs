//! The shipped short-channel demo library (`examples/demo130.lib`, an invented BSIM4 card) checked
//! with ngspice from Debian's packages against facts of the trade, and the model scanner checked
//! against what ngspice does with the same library: every model it finds is one ngspice accepts,
//! and what it refuses (an uncovered bin, an unknown section, a sectioned library read whole)
//! ngspice refuses too.
//!
//! Five small ngspice runs: a DC sweep (drive currents, and an instance of every model found), an
//! inverter chain (fan-out-of-4 delay), and three decks ngspice rejects at once.

use std::path::{Path, PathBuf};

use widthwise::models::{self, DeviceType, Library, LookupError, ModelSet, ScanError, Served};
use widthwise::ngspice::{self, Options, Run, SimulationError};
use widthwise::process::Process;

use crate::support::{ngspice_available, note};

/// Drawn channel length of the card's process, metres.
const LENGTH_M: f64 = 130e-9;

fn library_path() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("examples").join("demo130.lib")
}

/// The library's path as a deck writes it.
fn deck_path() -> String {
    let path = library_path();
    models::check_deck_path(&path)
        .unwrap_or_else(|error| panic!("the checkout's path cannot go into a deck: {error}"))
        .to_string()
}

/// The library scanned as the I/O layer would: files read from disk.
fn scan(section: Option<&str>) -> Library {
    let path = library_path();
    let text = std::fs::read_to_string(&path).expect("examples/demo130.lib is readable");
    models::scan(&path, &text, section, &mut |file: &Path| std::fs::read_to_string(file))
}

fn simulate(deck: &str) -> Result<Run, SimulationError> {
    ngspice::run(deck, &Options::default())
}

/// The models of the card, as its header lists them.
const MODELS: [&str; 6] = ["demo130_n", "demo130_p", "demo130w_n.1", "demo130w_n.2", "demo130w_p.1", "demo130w_p.2"];

#[test]
fn the_scanner_finds_every_model_of_every_section() {
    for section in ["typical", "slow", "fast", "TYPICAL"] {
        let library = scan(Some(section));
        assert!(library.errors.is_empty() && library.warnings.is_empty(), "{section}: {:?}", library.errors);
        let names: Vec<&str> = library.models.iter().map(|model| model.name.as_str()).collect();
        assert_eq!(names, MODELS, "{section}");
        // Both files were read: the corners and the cards they include.
        assert_eq!(library.files.len(), 2, "{section}");
    }
    let library = scan(Some("typical"));
    let Ok(ModelSet::Binned(bins)) = library.lookup("demo130w_n", DeviceType::Nmos) else { panic!("binned NMOS") };
    let ranges: Vec<String> = bins.iter().map(|model| model.bin.as_ref().unwrap().to_string()).collect();
    assert_eq!(ranges, ["L 0.12-10 um, W 0.15-1 um", "L 0.12-10 um, W 1-50 um"]);
    assert!(matches!(library.lookup("demo130_p", DeviceType::Pmos), Ok(ModelSet::Single(_))));
    let wrong = library.lookup("demo130w_p", DeviceType::Nmos).unwrap_err();
    assert!(matches!(wrong, LookupError::WrongType { .. }), "{wrong}");
}

/// `MODELS`' instances, each inside what the scanner says serves it, named `mx<k>`: for the binned
/// sets, at each bin's edges and 0.9 nm outside them (inside ngspice's 1 nm tolerance).
fn instances(library: &Library) -> Vec<String> {
    let mut lines = Vec::new();
    for (base, device) in [
        ("demo130_n", DeviceType::Nmos),
        ("demo130_p", DeviceType::Pmos),
        ("demo130w_n", DeviceType::Nmos),
        ("demo130w_p", DeviceType::Pmos),
    ] {
        let widths: Vec<f64> = match library.lookup(base, device).expect("the card has it") {
            ModelSet::Single(_) => vec![1e-6],
            ModelSet::Binned(bins) => bins
                .iter()
                .flat_map(|model| {
                    let (min, max) = model.bin.as_ref().unwrap().width.metres().unwrap();
                    [min - 0.9e-9, min, (min * max).sqrt(), max, max + 0.9e-9]
                })
                .collect(),
        };
        for width in widths {
            let served = library.check_device(base, device, width, LENGTH_M);
            assert!(matches!(served, Ok(Served::Plain(_) | Served::Bin(_))), "{base} W={width}: {served:?}");
            let nodes = if device == DeviceType::Nmos { "vdd vdd 0 0" } else { "0 0 vdd vdd" };
            lines.push(format!("mx{} {nodes} {base} w={width:e} l={LENGTH_M:e}", lines.len()));
        }
    }
    lines
}

#[test]
fn the_card_drives_like_a_130_nm_process() {
    if !ngspice_available("the_card_drives_like_a_130_nm_process") {
        return;
    }
    let library = scan(Some("typical"));
    // Run 1: the saturation current of a 1 um NMOS (gate and drain at 1.2 V) and PMOS (gate and
    // drain at 0 V, source at 1.2 V), swept to the supply, beside an instance of every model the
    // scanner found: ngspice rejects a deck with an instance whose model or bin it cannot find.
    let deck = format!(
        "demo130 drive currents\n.lib {} typical\nvdd vdd 0 1.2\nvdn dn 0 0\nvdp dp 0 0\n\
         mn dn vdd 0 0 demo130_n w=1u l=0.13u\nmp dp 0 vdd vdd demo130_p w=1u l=0.13u\n{}\n\
         .dc vdn 0 1.2 0.05\n.meas dc idn min i(vdn)\n.meas dc idp max i(vdp)\n.end\n",
        deck_path(),
        instances(&library).join("\n")
    );
    let run = simulate(&deck).expect("ngspice reads every model the scanner found");
    let (idn, idp) = (-run.value("idn").unwrap() / 1e-6, run.value("idp").unwrap() / 1e-6);
    note(&format!("demo130 typical: Idsat NMOS {idn:.0} uA/um, PMOS {idp:.0} uA/um"));
    // Drive currents of a 130 nm process at 1.2 V: NMOS 500-700 uA/um, PMOS about half of it
    // (common practice, no source; "about half" taken as 0.35 to 0.6).
    assert!((500.0..=700.0).contains(&idn), "NMOS Idsat {idn} uA/um");
    assert!((0.35..=0.6).contains(&(idp / idn)), "PMOS/NMOS Idsat {idp} / {idn}");
    // The level-1 stand-in, examples/demo130-process.toml, draws the same currents at the full
    // supply: Idsat = KP/2 x W/L x (VDD - VTO)^2, SPICE level 1 with LAMBDA = 0 (the Shichman-Hodges
    // square law, common practice, no source), within 2 %.
    let process_file = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples").join("demo130-process.toml");
    let process = Process::from_toml(&std::fs::read_to_string(process_file).unwrap()).unwrap();
    let square_law =
        |kp: f64, threshold: f64| kp / 2.0 * (1000.0 / process.length_nm) * (process.supply_v - threshold).powi(2);
    let level1 = [
        square_law(process.nmos_kp_ua_per_v2, process.nmos_threshold_v),
        square_law(process.pmos_kp_ua_per_v2, process.pmos_threshold_v),
    ];
    for (simulated, level1) in [(idn, level1[0]), (idp, level1[1])] {
        assert!((level1 / simulated - 1.0).abs() < 0.02, "level 1 {level1} uA/um, card {simulated} uA/um");
    }

    // Run 2: a chain of inverters, each four times the one before, so every stage drives a fan-out
    // of 4 of its own kind and sees an input edge made by the same; the third stage is measured.
    // The PMOS is as much wider than the NMOS as the NMOS drives more (run 1), on a 10 nm grid.
    let wn = 0.4e-6;
    let wp = (wn * idn / idp / 10e-9).round() * 10e-9;
    let mut deck = format!(
        "demo130 fan-out of 4\n.lib {} typical\nvdd vdd 0 1.2\nvin n0 0 pulse(0 1.2 100p 30p 30p 1n 2n)\n",
        deck_path()
    );
    for stage in 0..5 {
        let m = 4usize.pow(stage);
        for (name, device, wide, rail) in [("mn", "demo130_n", wn, "0"), ("mp", "demo130_p", wp, "vdd")] {
            // Drain and source of 0.3 um each (common practice for 130 nm, no source).
            deck.push_str(&format!(
                "{name}{stage} n{} n{stage} {rail} {rail} {device} w={wide:e} l=0.13u ad={:e} as={:e} pd={:e} \
                 ps={:e} m={m}\n",
                stage + 1,
                wide * 0.3e-6,
                wide * 0.3e-6,
                2.0 * (wide + 0.3e-6),
                2.0 * (wide + 0.3e-6)
            ));
        }
    }
    deck.push_str(
        ".tran 0.2p 2.2n\n.meas tran fall trig v(n2) val=0.6 rise=1 targ v(n3) val=0.6 fall=1\n\
         .meas tran rise trig v(n2) val=0.6 fall=1 targ v(n3) val=0.6 rise=1\n.end\n",
    );
    let run = simulate(&deck).unwrap();
    let [fall, rise] = [run.value("fall").unwrap(), run.value("rise").unwrap()];
    let fo4 = (fall + rise) / 2.0;
    let per_nm = fo4 / 1e-12 / (LENGTH_M / 1e-9);
    note(&format!(
        "demo130 typical: FO4 {:.1} ps ({per_nm:.2} ps per nm), fall {:.1} ps, rise {:.1} ps, Wp/Wn {:.2}",
        fo4 / 1e-12,
        fall / 1e-12,
        rise / 1e-12,
        wp / wn
    ));
    // The fan-out-of-4 inverter delay runs at about 1/3 to 1/2 ps per nm of drawn channel length
    // (common practice, no source); the check allows 0.3 to 0.6 ps per nm for an invented card.
    assert!((0.3..=0.6).contains(&per_nm), "FO4 {fo4} s is {per_nm} ps per nm");
    // With widths in the ratio of the saturation currents both edges start from the same current
    // into the same load; only the shape of the current over the swing differs, which moves rise
    // against fall by well under 25 % (common practice, no source).
    assert!((0.8..=1.25).contains(&(rise / fall)), "rise {rise} s, fall {fall} s");
}

#[test]
fn what_the_scanner_refuses_ngspice_refuses() {
    // An NMOS finger 60 um wide: outside both bins (the nearest ends at 50 um).
    let library = scan(Some("typical"));
    let uncovered = library.check_device("demo130w_n", DeviceType::Nmos, 60e-6, LENGTH_M).unwrap_err();
    assert!(matches!(uncovered, LookupError::Uncovered { .. }), "{uncovered}");
    assert!(uncovered.to_string().contains("nearest: demo130w_n.2 (L 0.12-10 um, W 1-50 um)"), "{uncovered}");
    // A section the library does not define.
    let unknown = scan(Some("nominal"));
    let error = &unknown.errors[0].error;
    assert!(matches!(error, ScanError::UnknownSection { .. }), "{error}");
    assert!(error.to_string().ends_with("its sections are: typical, slow, fast"), "{error}");
    // The whole library, as `.include` reads it: ngspice rejects its section lines.
    let whole = scan(None);
    assert!(matches!(&whole.errors[0].error, ScanError::SectionsNeedName { sections } if sections.len() == 3));

    if !ngspice_available("what_the_scanner_refuses_ngspice_refuses") {
        return;
    }
    let path = deck_path();
    let device = "vdd vdd 0 1.2\nm1 vdd vdd 0 0";
    for (deck, says) in [
        (
            format!("uncovered\n.lib {path} typical\n{device} demo130w_n w=60u l=0.13u\n.op\n.end\n"),
            "could not find a valid modelname",
        ),
        (format!("unknown section\n.lib {path} nominal\n{device} demo130_n w=1u l=0.13u\n.op\n.end\n"), "nominal"),
        (format!("whole\n.include {path}\n{device} demo130_n w=1u l=0.13u\n.op\n.end\n"), "unimplemented control card"),
    ] {
        match simulate(&deck) {
            Err(error @ SimulationError::Failed { .. }) => {
                assert!(error.to_string().contains(says), "{deck}: {error}")
            }
            other => panic!("{deck}: ngspice accepted what the scanner refused: {other:?}"),
        }
    }
}
