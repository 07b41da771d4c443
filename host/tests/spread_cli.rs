//! `biasjig spread` and `biasjig limits` through the binary: JSON keys of the machine interface,
//! reproducibility per seed, plots, and bad input with exit 2.

mod common;

use common::demo;
use common::stage::Flags;
use common::{assert_exit, json_ok, path_str, run, stderr, stdout};

/// An invented stage (12 V, 47k/10k divider, 4k7 collector, 220 + 1k emitter, 15k load, 600 Ω
/// source, hFE 100/180/300).
const STAGE: Flags = Flags(concat!(
    "--vcc 12 --r1 47k --r2 10k --rc 4k7 --re1 220 --re2 1k --rl 15k --rs 600 ",
    "--beta 180 --beta-min 100 --beta-max 300",
));

fn json_of(args: &[&str]) -> serde_json::Value {
    json_ok(args)
}

/// The subcommand (first of `extra`), the stage flags, then the rest of `extra`.
fn with<'a>(extra: &[&'a str]) -> Vec<&'a str> {
    let mut v: Vec<&'a str> = extra.iter().take(1).copied().collect();
    for w in STAGE.words() {
        v.push(w);
    }
    v.extend(extra.iter().skip(1).copied());
    v
}

#[test]
fn spread_json_has_the_contract_keys() {
    let v = json_of(&with(&[
        "spread",
        "--json",
        "--runs",
        "300",
        "--seed",
        "5",
        "--temp-min",
        "-10",
        "--temp-max",
        "55",
    ]));
    assert_eq!(v["monte_carlo"]["runs"], 300);
    for n in ["vb", "ve", "vc", "vce", "ic"] {
        let wc = &v["worst_case"][n];
        let mc = &v["monte_carlo"][n];
        let (lo, hi) = (wc["min"].as_f64().unwrap(), wc["max"].as_f64().unwrap());
        for k in ["mean", "std", "min", "max"] {
            assert!(mc[k].is_f64(), "{n}.{k}");
        }
        // The Monte Carlo lies inside the worst case.
        assert!(mc["min"].as_f64().unwrap() >= lo - 1e-9 * lo.abs(), "{n}");
        assert!(mc["max"].as_f64().unwrap() <= hi + 1e-9 * hi.abs(), "{n}");
        assert!(v["sensitivity"][n].is_array());
        assert_eq!(v["histogram"][n]["counts"].as_array().unwrap().len(), 40);
    }
    assert_eq!(v["temperature"]["min"], -10.0);
    assert!(v["yield"]["fraction"].is_f64());
}

#[test]
fn spread_gives_the_same_numbers_for_the_same_seed() {
    let a = json_of(&with(&["spread", "--json", "--runs", "200", "--seed", "9"]));
    let b = json_of(&with(&["spread", "--json", "--runs", "200", "--seed", "9"]));
    let c = json_of(&with(&[
        "spread", "--json", "--runs", "200", "--seed", "10",
    ]));
    assert_eq!(a, b);
    assert_ne!(
        a["monte_carlo"]["vc"]["mean"],
        c["monte_carlo"]["vc"]["mean"]
    );
}

#[test]
fn spread_default_ambient_is_temp_alone() {
    let v = json_of(&with(&["spread", "--json", "--runs", "50", "--temp", "40"]));
    assert_eq!(v["temperature"]["min"], 40.0);
    assert_eq!(v["temperature"]["max"], 40.0);
}

#[test]
fn spread_prints_its_report_and_writes_svg_plots_without_a_progress_bar() {
    let dir = common::scratch("spread-plots");
    let d = path_str(&dir).to_string();
    let mut args = with(&[
        "spread",
        "--runs",
        "200",
        "--normal",
        "3",
        "--gain-min",
        "12",
        "--plot",
    ]);
    args.push(&d);
    let out = run(&args);
    assert_exit(&out, 0);
    let text = stdout(&out);
    for word in "worst min|mean|std|Yield|Sensitivity|Distributions".split('|') {
        assert!(text.contains(word), "{word} missing in:\n{text}");
    }
    for f in "histogram_vb.svg|histogram_ic.svg|load_lines.svg|sensitivity.svg".split('|') {
        let svg = std::fs::read_to_string(dir.join(f)).unwrap();
        assert!(svg.starts_with("<svg") && svg.contains("<text"), "{f}");
    }
    // No progress bar on a pipe.
    assert!(out.stderr.is_empty(), "{}", stderr(&out));
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn limits_json_has_the_contract_keys_and_moves_with_the_supply() {
    let v = json_of(&with(&["limits", "--json"]));
    for n in ["vb", "ve", "vc", "vce", "vbe", "ic"] {
        let (lo, hi) = (
            v[n]["low"].as_f64().unwrap(),
            v[n]["high"].as_f64().unwrap(),
        );
        assert!(lo < hi, "{n}");
    }
    assert_eq!(v["vcc"], 12.0);
    let low = json_of(&with(&["limits", "--json", "--at-vcc", "11.8"]));
    assert_eq!(low["vcc"], 11.8);
    assert!(low["vb"]["high"].as_f64() < v["vb"]["high"].as_f64());
    let poor = json_of(&with(&[
        "limits",
        "--json",
        "--meter",
        "2",
        "--meter-offset",
        "20m",
        "--divider-tol",
        "1%",
    ]));
    assert!(poor["vc"]["low"].as_f64() < v["vc"]["low"].as_f64());
    assert!(poor["vc"]["high"].as_f64() > v["vc"]["high"].as_f64());
}

#[test]
fn bad_input_exits_2_naming_the_field() {
    let cases: [(&[&str], &str); 6] = [
        (&["spread", "--runs", "0"], "--runs"),
        (
            &["spread", "--temp-min", "50", "--temp-max", "10"],
            "--temp-min",
        ),
        (&["spread", "--normal", "0.1"], "--normal"),
        (&["spread", "--runs", "ten"], "--runs"),
        (&["limits", "--at-vcc", "0.1"], "--at-vcc"),
        (&["limits", "--meter", "80"], "--meter"),
    ];
    for (extra, field) in cases {
        let out = run(with(extra));
        assert_eq!(out.status.code(), Some(2), "{extra:?}");
        let err = stderr(&out);
        assert!(err.contains(field), "{extra:?}: {err}");
        assert!(out.stdout.is_empty(), "{extra:?}");
    }
    let out = run(["spread", "--r1", "47k"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("--vcc"));
}

#[test]
fn spread_of_a_design_follows_its_ambient_and_requirement() {
    let file = common::temp("spread-design", "d.toml");
    let f = path_str(&file);
    let mut a = demo::design_args(&["--gain-tol", "12", "--temp-min", "-10", "--temp-max", "55"]);
    a.extend(common::strs(&["--beta", "180"]));
    a.extend(common::strs(&demo::HFE_SPREAD));
    a.extend(common::strs(&["--swing", "1", "-o", f]));
    assert_exit(&run(&a), 0);
    let spread_of = |extra: &[&str]| {
        let mut a = vec!["spread", "--design", f, "--runs", "400", "--json"];
        a.extend_from_slice(extra);
        json_of(&a)
    };
    let v = spread_of(&[]);
    // The design's ambient range, not 25 °C alone.
    assert_eq!(v["temperature"]["min"], -10.0);
    assert_eq!(v["temperature"]["max"], 55.0);
    // The design's requirement: the gain window, the swing and the budget, each and together.
    let y = &v["yield"];
    assert!((y["requirement"]["gain_min"].as_f64().unwrap() - 13.2).abs() < 1e-9);
    assert!((y["requirement"]["gain_max"].as_f64().unwrap() - 16.8).abs() < 1e-9);
    assert_eq!(y["requirement"]["swing_min"], 1.0);
    assert_eq!(y["requirement"]["ic_max"], 2e-3);
    for k in ["active", "gain", "swing", "ic"] {
        let f = y["each"][k].as_f64().unwrap();
        assert!(f >= y["fraction"].as_f64().unwrap(), "{k}");
    }
    // Held at every corner, so every sample meets it, the low corner included (the design's
    // capacitors drawn within its 20 % tolerance; the default low corner of 20 Hz).
    assert_eq!(y["fraction"], 1.0);
    assert_eq!(y["low_corner"]["held"], true);
    assert_eq!(y["requirement"]["f_low_max"], 20.0);
    assert_eq!(y["each"]["low_corner"], 1.0);
    // Wider capacitors (--cap-tol 50 %): the corners with the capacitors at their low end miss
    // the low corner, and the Monte Carlo counts the part of the draws that misses it, in the
    // yield of the low corner and in the yield together.
    let w = spread_of(&["--cap-tol", "50"]);
    let wy = &w["yield"];
    assert_eq!(wy["low_corner"]["held"], false);
    let lc = wy["each"]["low_corner"].as_f64().unwrap();
    assert!(lc > 0.0 && lc < 1.0, "{lc}");
    assert!(wy["fraction"].as_f64().unwrap() <= lc);
    // The same seed gives the same numbers.
    let again = spread_of(&["--cap-tol", "50"]);
    assert_eq!(again["yield"], w["yield"]);
    // A tighter window given on the command line replaces the design's; the text report draws
    // the requirement's lines under the histograms.
    let v = spread_of(&["--gain-min", "14.9"]);
    assert!(v["yield"]["fraction"].as_f64().unwrap() < 1.0);
    let text = stdout(&run(["spread", "--design", f, "--runs", "200"]));
    assert!(text.contains("requirement: "), "{text}");
    assert!(text.contains("each on its own"), "{text}");
    let _ = std::fs::remove_file(&file);
}
