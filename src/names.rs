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
    format!("x{}", drive.to_string().replace('.', "p"))
}

/// A cell's name at a drive: `<base>_x<drive>` (`nand2_x2`, `carry_x1p5`), as a library names each
/// variant and as a gate sized without `--name` is named.
pub fn variant_name(base: &str, drive: f64) -> String {
    format!("{base}_{}", drive_suffix(drive))
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
