//! `biasjig demo`: the README's first command runs the whole job on the demo scenario.

use std::process::Command;

#[test]
fn demo_runs_the_whole_job() {
    let dir = std::env::temp_dir().join(format!("biasjig-demo-test-{}", std::process::id()));
    let out = Command::new(env!("CARGO_BIN_EXE_biasjig"))
        .args(["demo", "--out"])
        .arg(&dir)
        .output()
        .expect("run biasjig demo");
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        out.status.success(),
        "{}\n{}",
        text,
        String::from_utf8_lossy(&out.stderr)
    );
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
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn demo_refuses_json() {
    let out = Command::new(env!("CARGO_BIN_EXE_biasjig"))
        .args(["demo", "--json"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
}
