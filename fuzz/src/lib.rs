//! The checks of biasjig's fuzz targets, as plain functions of the input bytes: the fuzz targets
//! (`cargo fuzz run NAME`, nightly) and the corpus harness (`cargo test`, stable, run by
//! tests/run-all.sh) call the same code. Each panics on a broken property.

use biasjig_core::console::{MAX_DATA_LINES, MAX_OUT_LINE};
use biasjig_core::units::{capacitor_code, parse_signed, resistor_code, Eng, Full};
use biasjig_testkit::session::{audit, bare_console, cmd, value, LineEnds};

/// The console's line assembler, parser and framing: the bytes after the first, split at the
/// point the first names, give exactly one status line per line (CR, LF or CRLF ended, or left
/// unfinished), bounded replies, and no panic.
pub fn console_lines(data: &[u8]) {
    let Some((&cut, bytes)) = data.split_first() else {
        return;
    };
    // Echo on changes what is written, not what is answered; keep it off for the count.
    if bytes.windows(4).any(|w| w.eq_ignore_ascii_case(b"echo")) {
        return;
    }
    let mut c = bare_console();
    let mut out = Vec::new();
    let at = usize::from(cut).min(bytes.len());
    let (a, b) = bytes.split_at(at);
    c.feed(a, &mut out).expect("memory never fails");
    c.feed(b, &mut out).expect("memory never fails");
    c.finish(&mut out).expect("memory never fails");
    let mut ends = LineEnds::default();
    ends.take(bytes);
    // `audit` checks MAX_OUT_LINE and MAX_DATA_LINES on every reply.
    let _ = (MAX_OUT_LINE, MAX_DATA_LINES);
    assert_eq!(audit(&out), ends.lines());
}

/// Units the printed values carry (and the bare number).
const UNITS: [&str; 7] = ["", "Ω", "F", "V", "A", "Hz", "W"];

/// Values: any text the value parser takes, printed and parsed again.
///
/// - in full ([`Full`]): read back as exactly the same number;
/// - in engineering form ([`Eng`], 1 to 10 significant digits, each unit): read back within half
///   a unit of the last digit printed, and printed again to the same text;
/// - as IEC 60062 resistor and capacitor codes (3 significant digits): read back within 0.5 %,
///   and coded again to the same code.
///
/// The first byte picks the digits and the unit; the rest is the text. Whether the text was a
/// value (and so the round trips were checked).
pub fn value_round_trip(data: &[u8]) -> bool {
    let Some((&pick, rest)) = data.split_first() else {
        return false;
    };
    let Ok(text) = std::str::from_utf8(rest) else {
        return false;
    };
    let Ok(v) = parse_signed(text) else {
        return false;
    };
    let full = Full(v).to_string();
    assert_eq!(parse_signed(&full), Ok(v), "{text:?} -> {full:?}");

    let digits = 1 + usize::from(pick % 10);
    let unit = UNITS[usize::from(pick / 10) % UNITS.len()];
    let eng = format!("{:.*}", digits, Eng { value: v, unit });
    let back = parse_signed(&eng).unwrap_or_else(|e| panic!("{text:?} -> {eng:?}: {e}"));
    let rel = 0.5 * 10f64.powi(1 - digits as i32) + 1e-12;
    assert!(
        (back - v).abs() <= rel * v.abs(),
        "{text:?} -> {eng:?} -> {back}"
    );
    let again = format!("{:.*}", digits, Eng { value: back, unit });
    assert_eq!(again, eng, "{text:?}: printed twice");

    for code in [resistor_code, capacitor_code] {
        let c = code(v);
        if c.as_str() == "n/a" {
            continue;
        }
        let back = parse_signed(&c).unwrap_or_else(|e| panic!("{text:?} -> {c:?}: {e}"));
        assert!(
            (back - v).abs() <= (0.005 + 1e-12) * v.abs(),
            "{text:?} -> {c:?} -> {back}"
        );
        assert_eq!(code(back), c, "{text:?}: coded twice");
    }
    true
}

/// The stage fields a `set` line takes, with the key `stage` prints them under.
const FIELDS: [&str; 8] = ["r1", "r2", "rc", "re1", "re2", "rl", "vcc", "temp"];

/// Console lines: a `set FIELD TEXT` line the console takes is printed back by `stage`; the
/// printed value set again is taken, leaves the stage (every line of it) and the design hash
/// as they were. A `check` line of four readings the console judges is printed back on its
/// first data line; those printed readings checked again give the same reply, line for line.
///
/// The first byte picks the field; the rest is the text (the four readings for `check`, split
/// at spaces). Whether the console took the line (and so the round trip was checked).
pub fn console_round_trip(data: &[u8]) -> bool {
    let Some((&pick, rest)) = data.split_first() else {
        return false;
    };
    let Ok(text) = std::str::from_utf8(rest) else {
        return false;
    };
    if text.chars().any(char::is_control) || text.len() > 100 {
        return false;
    }
    let mut c = bare_console();
    let _ = cmd(&mut c, "mode machine");
    if pick >= 128 {
        let (first, status) = cmd(&mut c, &format!("check {text}"));
        if !status.starts_with("ok") {
            return false;
        }
        let keys = ["vcc", "vb", "ve", "vc"];
        let printed: Vec<String> = keys.iter().map(|k| value(&first, k)).collect();
        let again = cmd(&mut c, &format!("check {}", printed.join(" ")));
        assert_eq!(again, (first, status), "check {text:?}");
        return true;
    }
    let field = FIELDS[usize::from(pick) % FIELDS.len()];
    let (_, status) = cmd(&mut c, &format!("set {field} {text}"));
    if !status.starts_with("ok") {
        return false;
    }
    let (stage, _) = cmd(&mut c, "stage");
    let (hash, _) = cmd(&mut c, "hash");
    let printed = value(&stage, field);
    let (_, again) = cmd(&mut c, &format!("set {field} {printed}"));
    assert!(
        again.starts_with("ok"),
        "set {field} {printed} (from {text:?}): {again}"
    );
    assert_eq!(cmd(&mut c, "stage").0, stage, "set {field} {text:?}");
    assert_eq!(cmd(&mut c, "hash").0, hash, "set {field} {text:?}");
    true
}
