//! The plain reader against the TOML reader: the same values, kinds and places on generated plain
//! tables, and the TOML reader left to read every other form. Syntax facts: TOML 1.0 specification
//! (toml.io), from memory; the expected values are what the `toml` crate's reader builds.

use proptest::prelude::*;

use super::*;
use crate::library::table::read_by_reader;

/// Every place, kind and value in `value`, keys included, in order.
fn dump(value: &Spanned<DeValue<'_>>, out: &mut Vec<String>) {
    let span = value.span();
    let line = match value.get_ref() {
        DeValue::String(text) => format!("string {text:?}"),
        DeValue::Integer(integer) => format!("integer {} radix {}", integer.as_str(), integer.radix()),
        DeValue::Float(float) => format!("float {}", float.as_str()),
        DeValue::Boolean(flag) => format!("boolean {flag}"),
        DeValue::Datetime(when) => format!("datetime {when}"),
        DeValue::Array(items) => {
            out.push(format!("{span:?} array of {}", items.len()));
            for item in items.iter() {
                dump(item, out);
            }
            return;
        }
        DeValue::Table(table) => {
            out.push(format!("{span:?} table of {}", table.len()));
            for (key, item) in table {
                out.push(format!("{:?} key {:?}", key.span(), key.get_ref()));
                dump(item, out);
            }
            return;
        }
    };
    out.push(format!("{span:?} {line}"));
}

fn dumped(value: &Spanned<DeValue<'_>>) -> Vec<String> {
    let mut out = Vec::new();
    dump(value, &mut out);
    out
}

/// The table after `prefix` in `prefix + table`, read both ways.
fn both(prefix: &str, table: &str) -> (Option<Vec<String>>, Vec<String>) {
    let text = format!("{prefix}{table}");
    let range = prefix.len()..text.len();
    let plain = read(&text, range.clone()).map(|value| dumped(&value));
    let reader = read_by_reader(&text, range, false).expect("the generated table is valid TOML");
    (plain, dumped(&reader))
}

const KEYS: &[&str] = &["name", "expr", "method", "drive", "critical", "pull_up", "pull-down", "load", "target", "x_1"];

fn blank() -> impl Strategy<Value = String> {
    prop::sample::select(vec!["", " ", "  ", "\t", " \t "]).prop_map(str::to_string)
}

fn comment() -> impl Strategy<Value = String> {
    prop_oneof![Just(String::new()), (blank(), "[ -~é→]{0,12}").prop_map(|(b, c)| format!("{b}# {c}"))]
}

fn number() -> impl Strategy<Value = String> {
    ("[+-]?", "0|[1-9][0-9]{0,20}", prop::option::of("[0-9]{1,6}"))
        .prop_map(|(sign, whole, part)| format!("{sign}{whole}{}", part.map(|p| format!(".{p}")).unwrap_or_default()))
}

fn value() -> impl Strategy<Value = String> {
    prop_oneof![
        "[ !#-\\[\\]-~é→']{0,16}".prop_map(|s| format!("\"{s}\"")),
        "[ -&(-~é→\"]{0,16}".prop_map(|s| format!("'{s}'")),
        Just("true".to_string()),
        Just("false".to_string()),
        number(),
        (prop::collection::vec((blank(), number(), blank()), 0..5), any::<bool>(), blank()).prop_map(
            |(items, trailing, inside)| {
                let mut text: Vec<String> = items.iter().map(|(a, n, b)| format!("{a}{n}{b}")).collect();
                if trailing && !text.is_empty() {
                    text.push(String::new());
                }
                if text.is_empty() { format!("[{inside}]") } else { format!("[{}]", text.join(",")) }
            }
        ),
    ]
}

fn line() -> impl Strategy<Value = (Option<usize>, String)> {
    prop_oneof![
        blank().prop_map(|b| (None, b)),
        (blank(), comment()).prop_map(|(b, c)| (None, format!("{b}{c}"))),
        (0..KEYS.len(), blank(), blank(), blank(), value(), comment())
            .prop_map(|(key, b0, b1, b2, value, c)| { (Some(key), format!("{b0}{}{b1}={b2}{value}{c}", KEYS[key])) }),
        (0..KEYS.len(), value()).prop_map(|(key, value)| (Some(key), format!("{} = {value}", KEYS[key]))),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(2_000))]

    #[test]
    fn plain_tables_read_as_the_toml_reader_reads_them(
        prefix in prop::sample::select(vec!["", "[defaults]\ndrive = 1\n", "[[gate]]\nname = \"first\"\n\n"]),
        header_comment in comment(),
        lines in prop::collection::vec(line(), 0..9),
        final_newline: bool,
    ) {
        let mut seen = Vec::new();
        let mut duplicate = false;
        for (key, _) in &lines {
            if let Some(key) = key {
                duplicate |= seen.contains(key);
                seen.push(*key);
            }
        }
        let body: Vec<&str> = lines.iter().map(|(_, text)| text.as_str()).collect();
        let mut table = format!("[[gate]]{header_comment}\n{}", body.join("\n"));
        if final_newline {
            table.push('\n');
        }
        if duplicate {
            // A key twice is the TOML reader's error to report.
            let text = format!("{prefix}{table}");
            prop_assert!(read(&text, prefix.len()..text.len()).is_none(), "{}", table);
            prop_assert!(read_by_reader(&text, prefix.len()..text.len(), false).is_err());
        } else {
            let (plain, reader) = both(prefix, &table);
            prop_assert_eq!(plain, Some(reader), "{}", table);
        }
    }
}

#[test]
fn the_places_are_the_toml_readers() {
    let prefix = "[defaults]\ndrive = 1\n";
    let table = "[[gate]] # first\nname = \"nand2\"\n\n  # a comment\ndrive=[1, 2.5 ,-4,]\nfast = true # yes\nexpr = '!(a & b)'\n";
    let (plain, reader) = both(prefix, table);
    let plain = plain.expect("a plain table");
    assert_eq!(plain, reader);
    // The table's place is its header's, as the toml crate gives it.
    assert_eq!(plain[0], format!("{:?} table of 4", prefix.len()..prefix.len() + 8));
    let text = format!("{prefix}{table}");
    let at = text.find("2.5").unwrap();
    assert!(plain.contains(&format!("{:?} float 2.5", at..at + 3)), "{plain:?}");
    let at = text.find("'!(a & b)'").unwrap();
    assert!(plain.contains(&format!("{:?} string \"!(a & b)\"", at..at + 10)), "{plain:?}");
}

#[test]
fn every_other_form_is_left_to_the_toml_reader() {
    let forms = [
        "a.b = 1",
        "\"name\" = \"x\"",
        "'name' = \"x\"",
        "pull_up = { expr = \"a\" }",
        "name = \"a\\nb\"",
        "name = \"\"\"x\"\"\"",
        "name = '''x'''",
        "name = \"a\tb\"",
        "when = 1979-05-27",
        "when = 07:32:00",
        "names = [\"a\", \"b\"]",
        "drive = [1,\n 2]",
        "drive = [[1], [2]]",
        "drive = 0x10",
        "drive = 0o17",
        "drive = 0b101",
        "drive = 1_000",
        "drive = 01",
        "drive = 1e3",
        "drive = 1.5E-2",
        "drive = inf",
        "drive = -nan",
        "drive = .5",
        "drive = 5.",
        "drive = +",
        "fast = True",
        "fast = truely",
        "name",
        "name = ",
        "name = \"x\" y",
        "name = \"x\"\r",
        "name = \"x\" # bell \u{7}",
        "name = \"unclosed",
        "name = \"x\"\nname = \"y\"",
        "[gate.sub]\nx = 1",
        "[other]",
        "[[gate]]",
    ];
    for form in forms {
        let text = format!("[[gate]]\nexpr = \"inv\"\n{form}\n");
        assert!(read(&text, 0..text.len()).is_none(), "read as plain: {form:?}");
    }
    for header in ["[[ gate ]]", "[gate]", "[[gate]] x", "[[gate]]\r", "[[\"gate\"]]"] {
        let text = format!("{header}\nname = \"a\"\n");
        assert!(read(&text, 0..text.len()).is_none(), "read as plain: {header:?}");
    }
    // The same table without the odd line is plain.
    let text = "[[gate]]\nexpr = \"inv\"\n";
    assert!(read(text, 0..text.len()).is_some());
}
