//! Names that reach netlists: identifiers, and the names no input, output or cell may take because a
//! netlist or a simulator gives them a meaning of their own.

/// The identifier rule in words, for messages.
pub const IDENTIFIER_RULE: &str = "a letter or '_' followed by letters, digits and '_'";

/// Whether `byte` may start an identifier: an ASCII letter or '_'.
pub fn is_identifier_start(byte: u8) -> bool {
    byte.is_ascii_alphabetic() || byte == b'_'
}

/// Whether `byte` may follow the first of an identifier: an ASCII letter, digit or '_'.
pub fn is_identifier_continue(byte: u8) -> bool {
    byte.is_ascii_alphanumeric() || byte == b'_'
}

/// Whether `text` is an identifier ([`IDENTIFIER_RULE`], ASCII): input and output names (as the
/// expression lexer reads them), cell, gate and model names all are.
pub fn is_identifier(text: &str) -> bool {
    let mut bytes = text.bytes();
    bytes.next().is_some_and(is_identifier_start) && bytes.all(is_identifier_continue)
}

/// The suffix a drive gives a cell's name: `x1`, `x2`, `x1p5`, `x0p25`.
///
/// The drive is written in its shortest exact decimal form, so distinct drives give distinct
/// suffixes; and since a suffix has no `_`, `<name>_<suffix>` names the cell and drive uniquely.
pub fn drive_suffix(drive: f64) -> String {
    let mut suffix = String::with_capacity(8);
    push_drive_suffix(&mut suffix, drive);
    suffix
}

/// [`drive_suffix`] at the end of `name`.
fn push_drive_suffix(name: &mut String, drive: f64) {
    use std::fmt::Write as _;
    name.push('x');
    if drive.fract() == 0.0 && (1.0..1e15).contains(&drive) {
        // A whole drive (most are) is its integer's digits, as Rust's shortest form writes it.
        name.push_str(crate::number::decimal_digits(drive as u64, &mut [0; 20]));
    } else {
        let start = name.len();
        let _ = write!(name, "{drive}");
        if let Some(point) = name[start..].find('.') {
            name.replace_range(start + point..start + point + 1, "p");
        }
    }
}

/// A cell's name at a drive: `<base>_x<drive>` (`nand2_x2`, `carry_x1p5`), as a library names each
/// variant and as a gate sized without `--name` is named.
pub fn variant_name(base: &str, drive: f64) -> String {
    let mut name = String::with_capacity(base.len() + 8);
    name.push_str(base);
    name.push('_');
    push_drive_suffix(&mut name, drive);
    name
}

/// Names no input, output or cell may take, compared without case: the supply rails of every
/// netlist (`vdd`, `vss`) and ground (`0`, and `gnd`, which ngspice reads as ground). The names of
/// the device models in use are reserved too (see [`reserved_reason`]).
pub const RESERVED: [&str; 4] = ["vdd", "vss", "gnd", "0"];

/// Why `name` is reserved, if it is: one of [`RESERVED`], or one of `models` (the device models the
/// netlists name), compared without case.
pub fn reserved_reason(name: &str, models: &[&str]) -> Option<String> {
    // Compared in place: this runs for every name of every gate sized, and most are not reserved.
    match RESERVED.iter().find(|reserved| reserved.eq_ignore_ascii_case(name)) {
        Some(&rail @ ("vdd" | "vss")) => Some(format!("'{rail}' is a supply rail of every netlist")),
        Some(ground) => Some(format!("'{ground}' is ground to a simulator (ngspice reads 0 and gnd as node 0)")),
        None => models.iter().find(|model| model.eq_ignore_ascii_case(name)).map(|model| {
            format!(
                "'{model}' names a device model in use (the process's nmos_model or pmos_model, or a deck's \
                 --nmos-model or --pmos-model)"
            )
        }),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn drive_suffixes_are_the_shortest_decimal_with_p_for_the_point() {
        // The rule written out: Rust's shortest round-trip decimal, '.' as 'p'.
        let rule = |drive: f64| format!("x{}", drive.to_string().replace('.', "p"));
        let drives =
            [1.0, 2.0, 16.0, 1e6, 999_999_999_999_999.0, 1e15, 1e16, 0.5, 1.5, 0.25, 1e-6, 3.0e-7, 123.456, 0.1 + 0.2];
        for drive in drives.into_iter().chain((1..2000).map(|i| f64::from(i) * 0.125)) {
            assert_eq!(drive_suffix(drive), rule(drive), "{drive}");
            assert_eq!(variant_name("nand2", drive), format!("nand2_{}", rule(drive)), "{drive}");
        }
    }

    #[test]
    fn reserved_names_ignore_case() {
        for name in RESERVED.iter().copied().chain(["VDD", "Vss", "GND"]) {
            assert!(reserved_reason(name, &[]).is_some(), "{name}");
        }
        assert!(reserved_reason("NMOS", &["nmos", "pmos"]).is_some());
        for free in ["vdd1", "gnd_a", "nmos", "v", "o"] {
            assert_eq!(reserved_reason(free, &[]), None, "{free}");
        }
    }

    #[test]
    fn identifiers() {
        for good in ["a", "_", "a1", "Nand_2"] {
            assert!(is_identifier(good), "{good}");
        }
        for bad in ["", "1a", "a-b", "a b", "=x", "\u{e9}"] {
            assert!(!is_identifier(bad), "{bad}");
        }
    }
}
