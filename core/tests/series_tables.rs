//! IEC 60063 tables, look-ups across decades and IEC 60062 colour bands.

use biasjig_core::series::{colour_bands, BandCount, BandError, Colour, Series, SeriesError};
use std::path::PathBuf;

/// The transcribed IEC 60063:2015 tables: `tests/data/iec60063.txt` at the workspace root
/// (or the file named by `BIASJIG_IEC60063`, or `reference/iec60063.txt`).
fn reference_text() -> String {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("..");
    let mut candidates = vec![root.join("tests/data/iec60063.txt")];
    if let Ok(p) = std::env::var("BIASJIG_IEC60063") {
        candidates.insert(0, PathBuf::from(p));
    }
    candidates.push(root.join("reference/iec60063.txt"));
    for c in &candidates {
        if let Ok(text) = std::fs::read_to_string(c) {
            return text;
        }
    }
    panic!("IEC 60063 reference table not found; tried {candidates:?}");
}

/// (series name, values ×100) for every table line of the reference file.
fn reference_tables() -> Vec<(String, Vec<u16>)> {
    reference_text()
        .lines()
        .map(str::trim)
        .filter(|l| !l.is_empty() && !l.starts_with('#'))
        .map(|l| {
            let mut words = l.split_whitespace();
            let name = words.next().unwrap().to_string();
            let values = words
                .map(|w| {
                    let v: f64 = w.parse().unwrap();
                    (v * 100.0).round() as u16
                })
                .collect();
            (name, values)
        })
        .collect()
}

#[test]
fn every_table_matches_the_reference_file() {
    // Source: IEC 60063:2015 tables, transcribed in tests/data/iec60063.txt.
    let tables = reference_tables();
    assert_eq!(tables.len(), 7);
    for s in Series::ALL {
        let (_, values) = tables
            .iter()
            .find(|(name, _)| name == s.name())
            .unwrap_or_else(|| panic!("{} missing from the reference file", s.name()));
        assert_eq!(s.mantissas(), values.as_slice(), "{}", s.name());
    }
}

#[test]
fn table_lengths_and_order() {
    // IEC 60063: series En has n values per decade.
    let lens: Vec<usize> = Series::ALL.iter().map(|s| s.mantissas().len()).collect();
    assert_eq!(lens, [3, 6, 12, 24, 48, 96, 192]);
    for s in Series::ALL {
        let m = s.mantissas();
        assert!(m.windows(2).all(|w| w[0] < w[1]), "{} ascending", s.name());
        assert_eq!(m.first(), Some(&100));
        assert!(*m.last().unwrap() < 1000);
    }
}

#[test]
fn non_geometric_values() {
    // IEC 60063:2015 E24 and E192 tables (tests/data/iec60063.txt header): these differ from
    // round(10^(i/n)), which gives 2.6 2.9 3.2 3.5 3.8 4.2 4.6 8.3 and 9.19.
    let e24 = Series::E24.mantissas();
    for v in [270, 300, 330, 360, 390, 430, 470, 820] {
        assert!(e24.contains(&v), "E24 has {v}");
    }
    for v in [260, 290, 320, 350, 380, 420, 460, 830] {
        assert!(!e24.contains(&v), "E24 lacks {v}");
    }
    assert!(Series::E192.mantissas().contains(&920));
    assert!(!Series::E192.mantissas().contains(&919));
    // Check the claim itself: the formula would give other values at those places.
    let formula =
        |n: i32, i: i32| (10f64.powf(f64::from(i) / f64::from(n)) * 10.0).round() as u16 * 10;
    assert_eq!(formula(24, 10), 260);
    assert_eq!(e24[10], 270);
}

#[test]
fn names_parse_and_tolerances() {
    for s in Series::ALL {
        assert_eq!(Series::parse(s.name()), Ok(s));
        assert_eq!(Series::parse(&s.name().to_lowercase()), Ok(s));
        assert_eq!(Series::parse(&s.name()[1..]), Ok(s));
        assert_eq!(s.to_string(), s.name());
    }
    assert_eq!(Series::parse(" E24 "), Ok(Series::E24));
    assert_eq!("e96".parse::<Series>(), Ok(Series::E96));
    assert_eq!(Series::parse("E25"), Err(SeriesError::Unknown));
    assert_eq!(Series::parse("X24"), Err(SeriesError::Unknown));
    assert_eq!(Series::parse(""), Err(SeriesError::Unknown));
    assert_eq!(Series::parse("E0"), Err(SeriesError::NotPositive));
    assert_eq!(Series::parse("-24"), Err(SeriesError::NotPositive));
    assert!(!SeriesError::Unknown.to_string().is_empty());
    // Usual tolerances: common practice, as listed in the reference file header.
    let tols: Vec<f64> = Series::ALL.iter().map(|s| s.tolerance()).collect();
    assert_eq!(tols, [0.20, 0.20, 0.10, 0.05, 0.02, 0.01, 0.005]);
}

#[test]
fn lookups_across_decades() {
    // Expected members from the IEC 60063:2015 E24/E12/E96 tables (tests/data/iec60063.txt).
    let e24 = Series::E24;
    assert_eq!(e24.next_up(9100.0), Some(10_000.0));
    assert_eq!(e24.next_down(1000.0), Some(910.0));
    assert_eq!(e24.nearest(9.6e3), Some(10_000.0));
    assert_eq!(e24.nearest(9.4e3), Some(9100.0));
    assert_eq!(e24.nearest(4800.0), Some(4700.0));
    assert_eq!(e24.next_up(4700.0), Some(5100.0));
    assert_eq!(e24.next_down(4700.0), Some(4300.0));
    assert_eq!(e24.next_up(4700.0000001), Some(5100.0));
    assert_eq!(e24.ceil(4700.0), Some(4700.0));
    assert_eq!(e24.ceil(4701.0), Some(5100.0));
    assert_eq!(e24.floor(4699.0), Some(4300.0));
    assert_eq!(e24.floor(4700.0), Some(4700.0));
    assert_eq!(e24.ceil(9200.0), Some(10_000.0));
    assert_eq!(e24.floor(1050.0), Some(1000.0));
    assert_eq!(e24.floor(999.0), Some(910.0));
    assert_eq!(e24.step(4700.0, 1), Some(5100.0));
    assert_eq!(e24.step(9100.0, 2), Some(11_000.0));
    assert_eq!(e24.step(1000.0, -1), Some(910.0));
    assert_eq!(e24.step(1000.0, -24), Some(100.0));
    assert_eq!(e24.step(1000.0, 48), Some(100_000.0));
    assert_eq!(e24.step(1000.0, 0), Some(1000.0));
    assert_eq!(Series::E12.next_up(8.2e-3), Some(1.0e-2));
    assert_eq!(Series::E12.next_down(1.0e-3), Some(8.2e-4));
    assert_eq!(Series::E96.nearest(1.0e12), Some(1.0e12));
    assert_eq!(Series::E96.next_down(1.0e12), Some(9.76e11));
    assert_eq!(Series::E96.next_up(9.76e11), Some(1.0e12));
    assert_eq!(Series::E3.nearest(3.3), Some(4.7));
    assert_eq!(Series::E3.nearest(3.2), Some(2.2));
    assert!(e24.contains(0.47));
    assert!(e24.contains(4.7e-9));
    assert!(e24.contains(2.7e11));
    assert!(!e24.contains(2.6e3));
    assert!(Series::E192.contains(9.2e3));
    assert!(!Series::E192.contains(9.19e3));
}

#[test]
fn lookups_reject_bad_input() {
    for s in Series::ALL {
        for x in [0.0, -1.0, f64::NAN, f64::INFINITY, f64::NEG_INFINITY] {
            assert_eq!(s.nearest(x), None);
            assert_eq!(s.next_up(x), None);
            assert_eq!(s.next_down(x), None);
            assert_eq!(s.ceil(x), None);
            assert_eq!(s.floor(x), None);
            assert_eq!(s.step(x, 1), None);
            assert!(!s.contains(x));
        }
        // Extremes must not panic.
        let _ = s.step(1.0, i32::MAX);
        let _ = s.step(1.0, i32::MIN);
        let _ = s.nearest(f64::MIN_POSITIVE);
        let _ = s.nearest(5e-324);
        let _ = s.next_up(f64::MAX);
        let _ = s.next_down(5e-324);
    }
    assert_eq!(Series::E24.step(1.0, i32::MAX), None);
}

#[test]
fn every_member_in_every_decade() {
    // Members of every table from 1e-3 to 1e12: look-ups are consistent with the table order.
    for s in Series::ALL {
        let n = s.mantissas().len();
        let members: Vec<f64> = (-5..=10)
            .flat_map(|e| {
                s.mantissas()
                    .iter()
                    .map(move |&m| f64::from(m) * 10f64.powi(e))
            })
            .collect();
        for (i, &m) in members.iter().enumerate() {
            assert!(s.contains(m), "{} {m}", s.name());
            let near = s.nearest(m).unwrap();
            assert!((near - m).abs() <= 1e-9 * m, "{} nearest {m}", s.name());
            let rel = |a: Option<f64>, b: f64| (a.unwrap() - b).abs() <= 1e-9 * b;
            if let Some(&up) = members.get(i + 1) {
                assert!(rel(s.next_up(m), up), "{} next_up {m}", s.name());
                assert!(rel(s.ceil(m * 1.000_001), up), "{} ceil {m}", s.name());
                assert!(rel(s.step(m, 1), up), "{} step {m}", s.name());
            }
            if i > 0 {
                let down = members[i - 1];
                assert!(rel(s.next_down(m), down), "{} next_down {m}", s.name());
                assert!(rel(s.floor(m * 0.999_999), down), "{} floor {m}", s.name());
                assert!(rel(s.step(m, -1), down), "{} step -1 {m}", s.name());
            }
            if let Some(&far) = members.get(i + n) {
                assert!(rel(s.step(m, n as i32), far), "{} step n {m}", s.name());
            }
        }
    }
}

fn bands(ohms: f64, tol: f64, count: BandCount) -> Result<Vec<Colour>, BandError> {
    colour_bands(ohms, tol, count).map(|v| v.to_vec())
}

#[test]
fn colour_bands_follow_iec_60062() {
    use Colour::*;
    // Source: IEC 60062:2016 colour code, from memory.
    let four: &[(f64, f64, &[Colour])] = &[
        (4700.0, 0.05, &[Yellow, Violet, Red, Gold]),
        (0.47, 0.05, &[Yellow, Violet, Silver, Gold]),
        (10.0, 0.05, &[Brown, Black, Black, Gold]),
        (1.0, 0.05, &[Brown, Black, Gold, Gold]),
        (100e3, 0.10, &[Brown, Black, Yellow, Silver]),
        (2.2e6, 0.20, &[Red, Red, Green, None]),
        (0.047, 0.02, &[Yellow, Violet, Pink, Red]),
        (99e9, 0.01, &[White, White, White, Brown]),
        (1e3, 0.0025, &[Brown, Black, Red, Blue]),
        (1e3, 0.001, &[Brown, Black, Red, Violet]),
        (1e3, 0.0005, &[Brown, Black, Red, Grey]),
        // Float noise is rounded away (4700.0000001 is 4k7).
        (4_700.000_000_1, 0.05, &[Yellow, Violet, Red, Gold]),
        (0.1 + 0.2, 0.05, &[Orange, Black, Silver, Gold]),
    ];
    let five: &[(f64, f64, &[Colour])] = &[
        (4700.0, 0.01, &[Yellow, Violet, Black, Brown, Brown]),
        (4750.0, 0.01, &[Yellow, Violet, Green, Brown, Brown]),
        (12.1, 0.005, &[Brown, Red, Brown, Gold, Green]),
    ];
    for (count, cases) in [(BandCount::Four, four), (BandCount::Five, five)] {
        for &(ohms, tol, want) in cases {
            assert_eq!(bands(ohms, tol, count), Ok(want.to_vec()), "{ohms} {tol}");
        }
    }
}

#[test]
fn colour_band_errors() {
    for (ohms, tol, count, want) in [
        (4750.0, 0.05, BandCount::Four, BandError::TooManyDigits),
        (4753.0, 0.01, BandCount::Five, BandError::TooManyDigits),
        (0.0, 0.05, BandCount::Four, BandError::NotPositive),
        (-10.0, 0.05, BandCount::Four, BandError::NotPositive),
        (f64::NAN, 0.05, BandCount::Four, BandError::NotPositive),
        (f64::INFINITY, 0.05, BandCount::Four, BandError::OutOfRange),
        (100e9, 0.05, BandCount::Four, BandError::OutOfRange),
        (0.001, 0.05, BandCount::Four, BandError::OutOfRange),
        (0.01, 0.05, BandCount::Five, BandError::OutOfRange),
        (4700.0, 0.03, BandCount::Four, BandError::NoToleranceColour),
        (
            4700.0,
            f64::NAN,
            BandCount::Four,
            BandError::NoToleranceColour,
        ),
    ] {
        assert_eq!(bands(ohms, tol, count), Err(want), "{ohms} {tol}");
    }
    assert!(!BandError::TooManyDigits.to_string().is_empty());
}

#[test]
fn colour_names_are_lower_case_english() {
    use Colour::*;
    let all = [
        Black, Brown, Red, Orange, Yellow, Green, Blue, Violet, Grey, White, Gold, Silver, Pink,
        None,
    ];
    let names: Vec<&str> = all.iter().map(|c| c.name()).collect();
    assert_eq!(
        names,
        [
            "black", "brown", "red", "orange", "yellow", "green", "blue", "violet", "grey",
            "white", "gold", "silver", "pink", "none"
        ]
    );
    assert_eq!(Colour::Grey.to_string(), "grey");
}

#[test]
fn every_e24_and_e96_member_has_bands() {
    // E24 values fit 4 bands, E96 values fit 5 bands (IEC 60062 practice, from memory).
    for e in -1..=9 {
        for &m in Series::E24.mantissas() {
            let v = f64::from(m) * 10f64.powi(e - 2);
            assert!(colour_bands(v, 0.05, BandCount::Four).is_ok(), "{v}");
        }
        for &m in Series::E96.mantissas() {
            let v = f64::from(m) * 10f64.powi(e - 2);
            assert!(colour_bands(v, 0.01, BandCount::Five).is_ok(), "{v}");
        }
    }
}
