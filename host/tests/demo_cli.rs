//! `biasjig demo`: the README's first command runs the whole job on the demo scenario.

mod common;

use common::{run, stderr, stdout};

#[test]
fn demo_runs_every_step_and_fails_only_the_planted_faults() {
    let dir = common::scratch("demo-test").join("out");
    let out = run(["demo".as_ref(), "--out".as_ref(), dir.as_os_str()]);
    let text = stdout(&out);
    assert!(out.status.success(), "{text}\n{}", stderr(&out));
    for step in [
        "1. Design",
        "2. Spread",
        "3. Test limits",
        "4. A production lot",
        "5. Yield report",
        "6. One failed board",
    ] {
        assert!(text.contains(step), "missing step {step}");
    }
    // The three planted faults fail; every other board of the lot passes.
    assert!(
        text.contains("40 boards checked: 37 passed, 3 failed"),
        "{text}"
    );
    assert!(text.contains("decade slip"), "{text}");
    for f in ["preamp.toml", "lot.csv", "boards.jsonl", "yield.html"] {
        assert!(dir.join(f).exists(), "{f} not written");
    }
    // A second run in the same folder replaces the first run's files (the README's first
    // command may be typed twice).
    let again = run(["demo".as_ref(), "--out".as_ref(), dir.as_os_str()]);
    assert!(again.status.success(), "{}", stderr(&again));
    assert!(
        stdout(&again).contains("40 boards checked: 37 passed, 3 failed"),
        "{}",
        stdout(&again)
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn demo_refuses_json() {
    let out = run(["demo", "--json"]);
    assert_eq!(out.status.code(), Some(2));
}
