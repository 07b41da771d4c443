//! Parsing and printing of engineering values and IEC 60062 value codes.

use biasjig_core::units::{
    capacitor_code, parse_percent, parse_signed, parse_value, resistor_code, Eng, ValueError,
};
use proptest::prelude::*;

/// Each text parses to exactly its value.
fn parse_to(parse: fn(&str) -> Result<f64, ValueError>, cases: &[(&str, f64)]) {
    for &(text, want) in cases {
        assert_eq!(parse(text), Ok(want), "{text:?}");
    }
}

fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * b.abs().max(f64::MIN_POSITIVE)
}

#[test]
fn plain_and_exponent_numbers_parse() {
    #[rustfmt::skip]
    let cases = [
        ("4700", 4700.0), ("0.5", 0.5), (".5", 0.5), ("5.", 5.0), ("+12", 12.0), ("0", 0.0),
        ("4.2e-05", 4.2e-5), ("1E3", 1000.0), ("1e+3", 1000.0), ("  4700\t", 4700.0),
        ("1e15", 1e15), ("1e-15", 1e-15), ("0.000000000047k", 4.7e-8),
    ];
    parse_to(parse_value, &cases);
}

#[test]
fn signed_values_parse_and_plain_values_refuse_a_sign() {
    // Contract: measured readings may be negative (`--ve -0.0012`).
    #[rustfmt::skip]
    let cases = [
        ("-0.0012", -0.0012), ("-1.2m", -1.2e-3), ("-4k7", -4700.0), ("-0", 0.0),
    ];
    parse_to(parse_signed, &cases);
    assert_eq!(parse_value("-0"), Ok(0.0));
    assert_eq!(parse_value("-0.0012"), Err(ValueError::Negative));
    assert_eq!(parse_value("-1.2m"), Err(ValueError::Negative));
}

#[test]
fn si_prefixes_and_units_parse() {
    // SI prefixes (SI Brochure, 9th edition, from memory): p n µ m k M G.
    #[rustfmt::skip]
    let cases = [
        ("100p", 1e-10), ("100n", 1e-7), ("10u", 1e-5), ("10\u{00B5}", 1e-5),
        ("10\u{03BC}", 1e-5), ("2m", 2e-3), ("4.7k", 4700.0), ("4.7K", 4700.0), ("2.2M", 2.2e6),
        ("1G", 1e9), ("4.7kΩ", 4700.0), ("4.7 kohm", 4700.0), ("470 ohms", 470.0),
        ("100nF", 1e-7), ("2mA", 2e-3), ("10 µF", 1e-5), ("12 V", 12.0), ("12V", 12.0),
        ("5 Hz", 5.0), ("300mW", 0.3), ("1e3k", 1e6), ("15 k", 15e3),
    ];
    parse_to(parse_value, &cases);
}

#[test]
fn iec_60062_codes_parse() {
    // IEC 60062:2016 RKM value code (letter as decimal point), from memory.
    #[rustfmt::skip]
    let cases = [
        ("4k7", 4700.0), ("4K7", 4700.0), ("2M2", 2.2e6), ("470R", 470.0), ("R47", 0.47),
        ("4n7", 4.7e-9), ("2u2", 2.2e-6), ("2µ2", 2.2e-6), ("1p5", 1.5e-12), ("0R1", 0.1),
        ("4R7", 4.7), ("1G0", 1e9), ("1R0", 1.0), ("4k75", 4750.0), ("n47", 4.7e-10),
        ("4n7F", 4.7e-9), ("4k7Ω", 4700.0),
    ];
    parse_to(parse_value, &cases);
}

#[test]
fn percentages_parse_with_or_without_the_sign() {
    #[rustfmt::skip]
    let cases = [
        ("5", 5.0), ("5%", 5.0), ("0.5 %", 0.5), (" 1e-1% ", 0.1), ("0", 0.0),
    ];
    parse_to(parse_percent, &cases);
    assert_eq!(parse_percent(""), Err(ValueError::Empty));
    assert_eq!(parse_percent("%"), Err(ValueError::Malformed));
    assert_eq!(parse_percent("5  %"), Err(ValueError::Malformed));
    assert_eq!(parse_percent("5k"), Err(ValueError::Malformed));
    assert_eq!(parse_percent("5%%"), Err(ValueError::Malformed));
    assert_eq!(parse_percent("-5%"), Err(ValueError::Negative));
    assert_eq!(parse_percent("nan"), Err(ValueError::NotFinite));
}

#[test]
fn malformed_non_finite_and_out_of_range_texts_are_refused() {
    assert_eq!(parse_value(""), Err(ValueError::Empty));
    assert_eq!(parse_value("   "), Err(ValueError::Empty));
    for junk in [
        "4k7k", "abc", "1..2", "k", "4 7", "R", "-", "+", ".", "1e", "1e+", "e5", "4.7k3", "4.7R",
        "4 k7", "4.7  k", "4.7 k Ω", "1mm", "--5", "- 5", "4k7 ", "4,7", "0x10", "1e3R", "4kk",
        "E24", "5 ", "4.7 ",
    ] {
        let expected = if junk.trim() == junk || !junk.trim().is_empty() {
            // Trailing whitespace is trimmed, so "4k7 " and "5 " are fine.
            match junk {
                "4k7 " => Ok(4700.0),
                "5 " => Ok(5.0),
                "4.7 " => Ok(4.7),
                _ => Err(ValueError::Malformed),
            }
        } else {
            Err(ValueError::Empty)
        };
        assert_eq!(parse_value(junk), expected, "{junk:?}");
    }
    for nf in [
        "nan",
        "NaN",
        "inf",
        "-inf",
        "+Infinity",
        "1e400",
        "1e99999999999999",
        "1e308k",
    ] {
        assert_eq!(parse_signed(nf), Err(ValueError::NotFinite), "{nf:?}");
    }
    for oor in ["1e16", "2e15", "1e-16", "0.0001p", "-1e20", "1e-400"] {
        assert_eq!(parse_signed(oor), Err(ValueError::OutOfRange), "{oor:?}");
    }
    assert_eq!(parse_value("-5"), Err(ValueError::Negative));
    for e in [
        ValueError::Empty,
        ValueError::Malformed,
        ValueError::NotFinite,
        ValueError::Negative,
        ValueError::OutOfRange,
    ] {
        assert!(!e.to_string().is_empty());
    }
}

#[test]
fn long_inputs_parse() {
    let long = format!("{}1", "0".repeat(200));
    assert_eq!(parse_value(&long), Ok(1.0));
    let long = format!("0.{}1k", "0".repeat(10));
    assert_eq!(parse_value(&long), Ok(1e-8));
    let many = format!("1.{}", "1".repeat(300));
    assert!(close(
        parse_value(&many).unwrap(),
        1.111_111_111_111_111,
        1e-15
    ));
    let big = format!("1{}", "0".repeat(15));
    assert_eq!(parse_value(&big), Ok(1e15));
}

fn eng(value: f64, unit: &'static str) -> String {
    format!("{}", Eng { value, unit })
}

#[test]
fn eng_prints_three_significant_digits_with_si_prefixes() {
    // SI prefixes (SI Brochure, from memory); 3 significant digits by default.
    #[rustfmt::skip]
    let cases = [
        (4700.0, "Ω", "4.7 kΩ"), (0.00123, "A", "1.23 mA"), (12.0, "V", "12 V"),
        (1.0e-7, "F", "100 nF"), (0.0, "V", "0 V"), (-0.0, "V", "0 V"), (-0.0012, "V", "-1.2 mV"),
        (2.2e6, "Ω", "2.2 MΩ"), (1.0e-5, "F", "10 µF"), (4.7e-12, "F", "4.7 pF"),
        (1.5e9, "Hz", "1.5 GHz"), (999.6, "V", "1 kV"), (999.4, "V", "999 V"),
        (123_456.0, "Ω", "123 kΩ"), (0.5, "W", "500 mW"), (1e12, "Ω", "1000 GΩ"),
        (1e-13, "F", "0.1 pF"), (1.23e20, "V", "1.23e20 V"), (1e-20, "F", "1e-20 F"),
        (f64::NAN, "V", "n/a"), (f64::INFINITY, "V", "n/a"), (4700.0, "", "4.7k"),
        (12.0, "", "12"),
    ];
    for (value, unit, want) in cases {
        assert_eq!(eng(value, unit), want, "{value} {unit}");
    }
    for (digits, value, want) in [
        (4, 4750.0, "4.75 kΩ"),
        (4, 4751.26, "4.751 kΩ"),
        (1, 4751.26, "5 kΩ"),
        (0, 4751.26, "5 kΩ"),
    ] {
        let text = format!("{:.*}", digits, Eng { value, unit: "Ω" });
        assert_eq!(text, want, "{value} to {digits} digits");
    }
    let twelve = Eng {
        value: 12.0,
        unit: "V",
    };
    assert_eq!(format!("{twelve:>8}"), "    12 V");
    assert_eq!(format!("{twelve:<6}|"), "12 V  |");
    let long_unit = Eng {
        value: 1.0,
        unit:
            "a-very-long-unit-name-that-does-not-fit-in-the-local-buffer-of-ninety-six-bytes-at-all",
    };
    assert!(format!("{long_unit:>4}").starts_with("1 a-very"));
}

#[test]
fn resistor_codes_follow_iec_60062() {
    // IEC 60062:2016 RKM code, from memory; "1R0"/"10k" style is common practice.
    #[rustfmt::skip]
    let cases: &[(f64, &str)] = &[
        (4700.0, "4k7"), (470.0, "470R"), (0.47, "R47"), (2.2e6, "2M2"), (10_000.0, "10k"),
        (1.0, "1R0"), (100e3, "100k"), (4750.0, "4k75"), (4_700.000_000_1, "4k7"), (4.7, "4R7"),
        (0.1, "R1"), (0.047, "R047"), (1000.0, "1k0"), (1e9, "1G0"), (1e12, "1000G"),
        (12.0, "12R"), (0.0, "0R0"), (-4700.0, "-4k7"), (4751.0, "4k75"), (999.6, "1k0"),
    ];
    for &(x, code) in cases {
        assert_eq!(resistor_code(x).as_str(), code, "{x}");
    }
    assert_eq!(resistor_code(f64::NAN).as_str(), "n/a");
    assert_eq!(resistor_code(f64::INFINITY).as_str(), "n/a");
    assert_eq!(resistor_code(1e16).as_str(), "n/a");
    assert_eq!(resistor_code(1e-16).as_str(), "n/a");
}

#[test]
fn capacitor_codes_follow_iec_60062() {
    // IEC 60062:2016 capacitance code, from memory.
    #[rustfmt::skip]
    let cases: &[(f64, &str)] = &[
        (4.7e-9, "4n7"), (1e-7, "100n"), (2.2e-6, "2u2"), (47e-6, "47u"), (1e-12, "1p0"),
        (1.5e-12, "1p5"), (4.7e-10, "470p"), (1e-3, "1m0"), (1.0, "1R0"), (1e-15, "p001"),
        (0.0, "0p0"),
    ];
    for &(x, code) in cases {
        assert_eq!(capacitor_code(x).as_str(), code, "{x}");
    }
    assert_eq!(capacitor_code(f64::NAN).as_str(), "n/a");
}

#[test]
fn codes_parse_back_exactly_for_series_values() {
    use biasjig_core::series::Series;
    for s in Series::ALL {
        for e in -15..=12 {
            for &m in s.mantissas() {
                let v = f64::from(m) * 10f64.powi(e - 2);
                if !(1e-15..=1e15).contains(&v) {
                    continue;
                }
                let r = parse_value(&resistor_code(v)).unwrap();
                assert!(close(r, v, 1e-12), "{v} {}", resistor_code(v));
                let c = parse_value(&capacitor_code(v)).unwrap();
                assert!(close(c, v, 1e-12), "{v} {}", capacitor_code(v));
            }
        }
    }
}

const UNITS: [&str; 6] = ["Ω", "F", "V", "A", "Hz", "W"];

proptest! {
    #[test]
    fn resistor_and_capacitor_codes_round_trip(exp in -12.0f64..12.0) {
        let x = 10f64.powf(exp);
        for code in [resistor_code(x), capacitor_code(x)] {
            let back = parse_value(&code).unwrap();
            // 3 significant digits: error at most half a unit in the third digit.
            prop_assert!(close(back, x, 0.005 + 1e-12), "{} -> {} -> {}", x, code, back);
        }
    }

    #[test]
    fn eng_round_trip(exp in -12.0f64..12.0, neg in any::<bool>(), unit in 0usize..6, digits in 1usize..=10) {
        let x = if neg { -10f64.powf(exp) } else { 10f64.powf(exp) };
        let unit = UNITS[unit];
        let text = format!("{:.*}", digits, Eng { value: x, unit });
        let back = parse_signed(&text).unwrap();
        let rel = 0.5 * 10f64.powi(1 - digits as i32) + 1e-12;
        prop_assert!(close(back, x, rel), "{} -> {} -> {}", x, text, back);
        let bare = format!("{:.*}", digits, Eng { value: x, unit: "" });
        prop_assert!(close(parse_signed(&bare).unwrap(), x, rel), "{}", bare);
    }

    #[test]
    fn parse_never_panics_any(s in ".*") {
        let _ = parse_value(&s);
        let _ = parse_signed(&s);
        let _ = parse_percent(&s);
    }

    #[test]
    fn alphabet_texts_never_panic_and_parse_finite_and_in_range(s in "[0123456789.eE+\\-kKmMuµnpGRr %Ω ]{0,16}") {
        let a = parse_signed(&s);
        let _ = parse_value(&s);
        let _ = parse_percent(&s);
        if let Ok(v) = a {
            prop_assert!(v.is_finite());
            prop_assert!(v == 0.0 || (1e-15..=1e15 * (1.0 + 1e-12)).contains(&v.abs()));
        }
    }

    #[test]
    fn codes_never_panic(x in any::<f64>()) {
        let _ = resistor_code(x);
        let _ = capacitor_code(x);
        let _ = format!("{}", Eng { value: x, unit: "Ω" });
        let _ = format!("{:.17}", Eng { value: x, unit: "" });
    }
}
