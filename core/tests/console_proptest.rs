//! Property tests of the line assembler, the parser and the framing: random and mutated lines,
//! delivered in random chunks. Per run: 2000 cases of 500 lines = 1 000 000 lines.
//!
//! Checked: nothing panics; every line (CR, LF or CRLF ended, or unfinished at the end of input)
//! gets exactly one status line; no output line is longer than MAX_OUT_LINE; no reply has more
//! than MAX_DATA_LINES data lines; the assembler never holds more than LINE_MAX bytes.

use biasjig_core::console::line::{Feed, LineBuf};
use biasjig_core::console::{parse, LINE_MAX};
use biasjig_testkit::rng::Rng as Gen;
use biasjig_testkit::session::{audit, bare_console, LineEnds};
use proptest::prelude::*;

const LINES_PER_CASE: usize = 500;

/// Valid lines the mutations start from (echo is left out: echoed input is not a reply).
const SEEDS: &[&str] = &[
    "",
    "help",
    "help set",
    "*IDN?",
    "identify",
    "*RST",
    "stage",
    "set r1 4k7",
    "set rc 3.3k 1%",
    "set rl none",
    "set beta 150",
    "set vbe 0.62",
    "set temp -10",
    "profile",
    "parts",
    "parts 5",
    "predict",
    "hash",
    "requirement",
    // The costly commands (design, spread, a judged check with its diagnosis) appear in forms
    // the parser or the plausibility check answer at once, so that a million lines stay quick;
    // their replies are covered by `judged_readings_keep_the_framing` and console_judge.rs.
    "design now",
    "pick 2",
    "spread 0",
    "spread 5000 1",
    "limits",
    "meter",
    "meter gain 1%",
    "measure",
    "measure 64",
    "check 3 2.05 1.39 5.7",
    "check 12 2.05 1.39",
    "test",
    "diagnose",
    "readings",
    "calibrate",
    "calibrate vb low 1",
    "inject r1 open",
    "lock 1234",
    "unlock 1234",
    "unlock 0000",
    "mode machine",
    "mode human",
    "save",
    "# note",
];

/// Mostly printable, some control bytes, some high bytes.
fn byte(g: &mut Gen) -> u8 {
    match g.below(10) {
        0 => g.below(32) as u8,
        1 => 0x80 + g.below(128) as u8,
        _ => 0x20 + g.below(95) as u8,
    }
}

/// One line body (may contain line ends of its own when random).
fn line(g: &mut Gen) -> Vec<u8> {
    match g.below(8) {
        0 => (0..g.below(40)).map(|_| byte(g)).collect(),
        1 => vec![b'x'; LINE_MAX - 2 + g.below(6)],
        2 => (0..LINE_MAX + g.below(300)).map(|_| byte(g)).collect(),
        3 | 4 => SEEDS[g.below(SEEDS.len())].as_bytes().to_vec(),
        _ => {
            let mut l = SEEDS[g.below(SEEDS.len())].as_bytes().to_vec();
            for _ in 0..1 + g.below(3) {
                let at = if l.is_empty() {
                    0
                } else {
                    g.below(l.len() + 1)
                };
                match g.below(3) {
                    0 => l.insert(at, byte(g)),
                    1 if at < l.len() => {
                        l.remove(at);
                    }
                    _ if at < l.len() => l[at] = byte(g),
                    _ => l.push(byte(g)),
                }
            }
            l
        }
    }
}

fn terminator(g: &mut Gen) -> &'static [u8] {
    match g.below(4) {
        0 => b"\r",
        1 => b"\r\n",
        _ => b"\n",
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 2000, ..ProptestConfig::default() })]

    #[test]
    fn one_status_line_per_line(seed in any::<u64>()) {
        let mut g = Gen::new(seed);
        let mut c = bare_console();
        let mut ends = LineEnds::default();
        let mut out = Vec::new();
        let mut statuses = 0;
        for _ in 0..LINES_PER_CASE {
            let mut bytes = line(&mut g);
            bytes.extend_from_slice(terminator(&mut g));
            ends.take(&bytes);
            let mut rest = &bytes[..];
            while !rest.is_empty() {
                let n = 1 + g.below(rest.len().min(80));
                let (chunk, tail) = rest.split_at(n);
                c.feed(chunk, &mut out).unwrap();
                rest = tail;
            }
            prop_assert!(!c.echo());
            statuses += audit(&out);
            out.clear();
        }
        if g.below(2) == 0 {
            let tail = line(&mut g);
            ends.take(&tail);
            c.feed(&tail, &mut out).unwrap();
        }
        c.finish(&mut out).unwrap();
        statuses += audit(&out);
        prop_assert_eq!(statuses, ends.lines());
    }

    #[test]
    fn echo_on_never_panics(seed in any::<u64>()) {
        let mut g = Gen::new(seed);
        let mut c = bare_console();
        c.set_echo(true);
        let mut out = Vec::new();
        for _ in 0..50 {
            let mut bytes = line(&mut g);
            bytes.extend_from_slice(terminator(&mut g));
            c.feed(&bytes, &mut out).unwrap();
            c.set_echo(true);
        }
        c.finish(&mut out).unwrap();
    }

    #[test]
    fn chunking_does_not_change_lines(bytes in proptest::collection::vec(any::<u8>(), 0..600), cuts in proptest::collection::vec(1usize..50, 1..40)) {
        fn run(bytes: &[u8], cuts: &[usize]) -> Vec<String> {
            let mut lb = LineBuf::<LINE_MAX>::new();
            let mut got = Vec::new();
            let mut rest = bytes;
            let mut k = 0;
            while !rest.is_empty() {
                let n = cuts.get(k % cuts.len().max(1)).copied().unwrap_or(rest.len()).min(rest.len());
                k += 1;
                let (chunk, tail) = rest.split_at(n);
                rest = tail;
                let mut c = chunk;
                loop {
                    assert!(lb.len() <= LINE_MAX);
                    match lb.feed(c) {
                        Feed::Pending => break,
                        Feed::Overfull { rest } => { got.push("<long>".to_owned()); c = rest; }
                        Feed::Line { line, rest } => { got.push(format!("{line:?}")); c = rest; }
                    }
                }
            }
            if let Some(l) = lb.finish() { got.push(format!("{l:?}")); }
            got
        }
        prop_assert_eq!(run(&bytes, &cuts), run(&bytes, &[bytes.len().max(1)]));
    }

    #[test]
    fn parser_never_panics_on_any_text(s in "\\PC{0,140}") {
        let _ = parse::parse(&s);
    }
}

proptest! {
    // Few cases: each may run the limits and a diagnosis (about 1000 solves).
    #![proptest_config(ProptestConfig { cases: 48, ..ProptestConfig::default() })]

    #[test]
    fn judged_readings_keep_the_framing(
        vb in -1.0f64..13.0,
        ve in -1.0f64..13.0,
        vc in -1.0f64..13.0,
        vcc in 8.0f64..16.0,
        machine in any::<bool>(),
    ) {
        let mut c = bare_console();
        let mut out = Vec::new();
        if machine {
            c.feed(b"mode machine\n", &mut out).unwrap();
        }
        let line = format!("check {vcc} {vb} {ve} {vc}\ndiagnose\n");
        c.feed(line.as_bytes(), &mut out).unwrap();
        prop_assert_eq!(audit(&out), 2 + usize::from(machine));
        let text = String::from_utf8(out).unwrap();
        prop_assert!(!text.contains("cut at the size limit"), "{}", text);
        if machine && !text.contains("err IMPLAUSIBLE") {
            prop_assert!(text.contains("verdict="), "{}", text);
        }
    }
}
