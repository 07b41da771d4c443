//! The fuzz targets' functions over their seeds (`fuzz/seeds/TARGET/`, kept in the repository),
//! the corpus cargo fuzz keeps in `fuzz/corpus/TARGET/` where there is one, and inputs drawn
//! from a seeded generator: the fuzz crate's
//! code built and run on stable Rust by the project's test command, where cargo fuzz (nightly)
//! is not available.

use std::path::Path;

use biasjig_fuzz::{console_lines, console_round_trip, value_round_trip};
use biasjig_testkit::rng::Rng;

/// Drawn inputs per target.
const DRAWN: usize = 3000;

/// The files of `fuzz/corpus/TARGET/` (none when it does not exist).
fn corpus(target: &str) -> Vec<Vec<u8>> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("corpus")
        .join(target);
    let Ok(entries) = std::fs::read_dir(&dir) else {
        return Vec::new();
    };
    let mut files: Vec<_> = entries.filter_map(|e| e.ok()).map(|e| e.path()).collect();
    files.sort();
    files
        .iter()
        .map(|p| std::fs::read(p).expect("a corpus file reads"))
        .collect()
}

/// Text made of what values are written with: digits, point, exponent, sign, SI prefixes, the
/// IEC 60062 letters, units and spaces.
fn value_text(rng: &mut Rng) -> String {
    const PIECES: &[&str] = &[
        "0", "1", "2", "3", "4", "5", "6", "7", "8", "9", ".", "e", "E", "+", "-", "k", "K", "m",
        "M", "u", "µ", "n", "p", "G", "R", "r", " ", "%", "Ω", "V", "F", "Hz", "e-", "e1", "47",
        "4k7", "1e15", "999.", "0.00",
    ];
    (0..1 + rng.below(8)).map(|_| rng.pick(PIECES)).collect()
}

/// Run `check` over the corpus of `target` and DRAWN inputs from `draw`: how many inputs, and
/// how many of them the property was checked on (the rest were refused before it).
/// A number between `lo` and `hi` written one of the ways a user writes it (plain, with a
/// milli prefix, exponent form, with the volt).
fn number(rng: &mut Rng, lo: f64, hi: f64) -> String {
    let x = rng.range(lo, hi);
    let d = rng.below(6);
    match rng.below(4) {
        0 => format!("{x:.d$}"),
        1 => format!("{:.d$}m", x * 1e3),
        2 => format!("{x:e}"),
        _ => format!("{x:.d$}V"),
    }
}

/// A resistance as a user writes it.
fn ohms(rng: &mut Rng) -> String {
    let d = rng.below(4);
    let suffix = rng.pick(&["", "k", "M", "Ω", " kΩ", "R"]);
    format!("{:.d$}{suffix}", rng.range(1.0, 999.0))
}

fn run(
    target: &str,
    check: fn(&[u8]) -> bool,
    draw: impl Fn(&mut Rng) -> Vec<u8>,
) -> (usize, usize) {
    let mut rng = Rng::new(0x00F0_22ED);
    let drawn = (0..DRAWN).map(|_| draw(&mut rng));
    let (mut n, mut checked) = (0, 0);
    for input in corpus(target).into_iter().chain(drawn) {
        checked += usize::from(check(&input));
        n += 1;
    }
    println!("{target}: {n} inputs, the property checked on {checked}");
    (n, checked)
}

#[test]
fn console_lines_frame_every_corpus_and_drawn_input() {
    let lines = [
        "help",
        "*IDN?",
        "set r1 4k7",
        "check 12 2 1.35 5.5",
        "stage",
        "x",
        "# c",
        "",
    ];
    let (n, _) = run(
        "console_lines",
        |d| {
            console_lines(d);
            true
        },
        |rng| {
            let mut v = vec![rng.below(256) as u8];
            for _ in 0..rng.below(6) {
                match rng.below(3) {
                    0 => v.extend((0..rng.below(40)).map(|_| rng.below(256) as u8)),
                    _ => v.extend_from_slice(rng.pick(&lines).as_bytes()),
                }
                v.extend_from_slice(rng.pick(&[&b"\r"[..], b"\n", b"\r\n"]));
            }
            v
        },
    );
    assert!(n >= DRAWN);
}

#[test]
fn values_round_trip_for_every_corpus_and_drawn_input() {
    let (n, checked) = run("value_round_trip", value_round_trip, |rng| {
        let mut v = vec![rng.below(256) as u8];
        v.extend_from_slice(value_text(rng).as_bytes());
        v
    });
    assert!(n >= DRAWN && checked >= n / 10, "{checked} of {n}");
    assert!(value_round_trip(b"\x2a4k7"));
}

#[test]
fn console_lines_round_trip_for_every_corpus_and_drawn_input() {
    let (n, checked) = run("console_round_trip", console_round_trip, |rng| {
        let pick = rng.below(256) as u8;
        let text = match (pick >= 128, rng.below(3)) {
            (_, 0) => value_text(rng),
            (true, _) => {
                let vcc = rng.range(8.0, 16.0);
                let vb = rng.range(0.5, 0.4 * vcc);
                let ve = vb - rng.range(0.5, 0.8);
                let vc = rng.range(vb, vcc);
                [
                    number(rng, vcc, vcc),
                    number(rng, vb, vb),
                    number(rng, ve, ve),
                    number(rng, vc, vc),
                ]
                .join(" ")
            }
            (false, _) => match usize::from(pick) % 8 {
                6 => number(rng, 5.0, 30.0),
                7 => number(rng, -20.0, 80.0),
                _ => ohms(rng),
            },
        };
        let mut v = vec![pick];
        v.extend_from_slice(text.as_bytes());
        v
    });
    assert!(n >= DRAWN && checked >= n / 20, "{checked} of {n}");
    // Both kinds of line reach their round trip: a typed `check` and a `set`.
    assert!(console_round_trip(b"\xc812 2.29 1.67 5.5"));
    assert!(console_round_trip(b"\x004k7"));
}
