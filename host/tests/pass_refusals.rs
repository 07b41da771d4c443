//! Issue 11: a PASS means what it says; here, what cannot be judged is refused (a stage that
//! does not work, a value in a unit that does not fit its field, an endless design file) and
//! what judged a board is on record (the settings digest, the overrides in force). Each test
//! names the finding of the issue it pins (it fails on the code before the fix). Stages are
//! invented.

mod common;

use common::console::replies;
use common::{demo, json, run, stderr, strs, temp};
use serde_json::Value;

/// The scratch folder of this file.
const TAG: &str = "pass-refusals";

/// Issue 11, third finding: windows were given (VCE 18..53 mV), and boards passed, for a stage
/// saturated at its nominal point. `limits` and `check` now exit 2 naming the region.
#[test]
fn a_saturated_stage_gets_no_windows() {
    let flags = strs(&[
        "--vcc", "12", "--r1", "47k", "--r2", "10k", "--rc", "47k", "--re1", "220", "--re2", "820",
    ]);
    let mut l = strs(&["limits"]);
    l.extend(flags.iter().cloned());
    let o = run(&l);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("saturation"), "{}", stderr(&o));
    let mut c = strs(&["check", "--vb", "1.9", "--ve", "1.25", "--vc", "1.3"]);
    c.extend(flags.iter().cloned());
    let o = run(&c);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("saturation"), "{}", stderr(&o));
    // The console warns after the `set` that saturates the stage (a data line, then ok).
    let r = replies(&strs(&[
        "mode machine",
        "*RST",
        "set rc 47k",
        "set tol 20",
        "limits",
    ]));
    assert_eq!(
        r[2],
        vec![
            "warning=not_active region=saturation".to_string(),
            "ok".into()
        ]
    );
    assert!(
        r[3].iter()
            .any(|l| l.starts_with("warning=unusual_tolerance part=R1")),
        "{:?}",
        r[3]
    );
    assert!(r[4].last().unwrap().starts_with("err RANGE"), "{:?}", r[4]);
}

/// Issue 11, third finding: `--rc 3.3mA` was read as 3.3 mΩ, `--cin 10uV` and `--vcc 12A`
/// accepted. A unit that does not fit is refused naming the field, the value and the allowed
/// units; the field's own unit is accepted.
#[test]
fn units_that_do_not_fit_the_field_are_refused() {
    let base = [
        "analyze", "--vcc", "12", "--r1", "47k", "--r2", "10k", "--rc", "4k7", "--re1", "220",
        "--re2", "820",
    ];
    let with = |flag: &str, value: &str| {
        let mut a: Vec<String> = strs(&base);
        if let Some(k) = a.iter().position(|x| x == flag) {
            a[k + 1] = value.into();
        } else {
            a.extend(strs(&[flag, value]));
        }
        a.push("--json".into());
        run(&a)
    };
    for (flag, value, allowed) in [
        ("--rc", "3.3mA", "Ω"),
        ("--cin", "10uV", "F"),
        ("--vcc", "12A", "V"),
        ("--beta", "200V", "no unit"),
    ] {
        let o = with(flag, value);
        assert_eq!(o.status.code(), Some(2), "{flag} {value}");
        let e = stderr(&o);
        assert!(
            e.contains(flag) && e.contains(value) && e.contains(allowed),
            "{e}"
        );
    }
    let plain = json(&with("--rc", "4k7"));
    for (flag, value) in [
        ("--rc", "4.7kΩ"),
        ("--rc", "4.7kohm"),
        ("--rc", "4k7"),
        ("--vcc", "12V"),
        ("--cin", "10uF"),
    ] {
        let o = with(flag, value);
        assert_eq!(o.status.code(), Some(0), "{flag} {value}: {}", stderr(&o));
        if flag == "--rc" {
            assert_eq!(json(&o)["dc"], plain["dc"]);
        }
    }
    // The console refuses them too, naming the allowed units, and changes nothing.
    let r = replies(&strs(&[
        "mode machine",
        "set rc 3.3mA",
        "set cin 10uV",
        "set vcc 12A",
        "set rc 4.7kohm",
        "stage",
    ]));
    assert!(
        r[1][0].starts_with("err VALUE") && r[1][0].contains("Ω"),
        "{:?}",
        r[1]
    );
    assert!(
        r[2][0].starts_with("err VALUE") && r[2][0].contains("F"),
        "{:?}",
        r[2]
    );
    assert!(r[3][0].starts_with("err VALUE"), "{:?}", r[3]);
    assert_eq!(r[4], vec!["ok".to_string()]);
    assert!(r[5].iter().any(|l| l.starts_with("rc=4700 ")), "{:?}", r[5]);
    // Meter settings name their range.
    let o = run(strs(&[
        "limits", "--vcc", "12", "--r1", "47k", "--r2", "10k", "--rc", "4k7", "--re1", "220",
        "--meter", "30",
    ]));
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("--meter") && stderr(&o).contains("20 %"),
        "{}",
        stderr(&o)
    );
}

/// Issue 11, item 8: flags given with `--design` changed the windows while the log kept the
/// file's hash. Now each record stores the settings digest of what judged the board and the
/// overrides in force.
#[test]
fn overrides_and_the_digest_are_on_record() {
    let f = demo::first_round(TAG, "rec.toml");
    let d = f.to_str().unwrap();
    let lj = json(&run(strs(&["limits", "--json", "--design", d])));
    let mid = |n: &str| (lj[n]["low"].as_f64().unwrap() + lj[n]["high"].as_f64().unwrap()) / 2.0;
    let log = temp(TAG, "rec.jsonl");
    let args = |extra: &[&str]| {
        let mut a = strs(&[
            "check",
            "--design",
            d,
            "--vcc",
            "12",
            "--vb",
            &mid("vb").to_string(),
            "--ve",
            &mid("ve").to_string(),
            "--vc",
            &mid("vc").to_string(),
            "--log",
            log.to_str().unwrap(),
        ]);
        a.extend(strs(extra));
        a
    };
    assert_eq!(run(args(&[])).status.code(), Some(0));
    let o = run(args(&["--tol", "20", "--meter", "3"]));
    assert!(stderr(&o).contains("override"), "{}", stderr(&o));
    let recs: Vec<Value> = std::fs::read_to_string(&log)
        .unwrap()
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    assert_eq!(recs.len(), 2);
    assert_eq!(recs[0]["overrides"], serde_json::json!({}));
    assert_eq!(recs[1]["overrides"]["--tol"], 20.0);
    assert_eq!(recs[1]["overrides"]["--meter"], 3.0);
    assert_eq!(
        recs[0]["digest"], lj["digest"],
        "no override: the digest limits gives"
    );
    assert_ne!(
        recs[1]["digest"], recs[0]["digest"],
        "the overrides change the digest"
    );
    assert_eq!(recs[0]["design"]["digest"], recs[1]["design"]["digest"]);
    assert_eq!(recs[0]["design"]["digest"].as_str().unwrap().len(), 64);
}

/// Issue 11, item 9 (size limits): `--design /dev/zero` grew to 1.4 GB; it is refused at once.
#[test]
fn an_endless_design_file_is_refused() {
    let o = run(strs(&["analyze", "--design", "/dev/zero"]));
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("at most"), "{}", stderr(&o));
}
