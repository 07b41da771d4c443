//! `biasjig station --manual` as a technician runs it (issue 11, item 6): a bad readings line
//! asks again for the readings, a serial already tested is said so and recorded as a retest,
//! refused readings are logged as refused with the reason, and the verdict screen names the
//! fault in the words of `biasjig check`.

use std::io::Write;
use std::process::{Command, Stdio};

fn biasjig(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_biasjig"))
        .args(args)
        .output()
        .expect("biasjig runs")
}

/// VB, VE, VC the engine predicts for the design file with `extra` flags (a faulty part).
fn predicted(design: &str, extra: &[&str]) -> [f64; 3] {
    let mut args = vec!["analyze", "--design", design, "--json"];
    args.extend_from_slice(extra);
    let out = biasjig(&args);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let dc = &v["dc"];
    ["vb", "ve", "vc"].map(|k| dc[k].as_f64().unwrap())
}

fn station(design: &str, log: &std::path::Path, input: &str) -> (String, i32) {
    let mut child = Command::new(env!("CARGO_BIN_EXE_biasjig"))
        .args(["station", "--manual", "--design", design, "--log"])
        .arg(log)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    child
        .stdin
        .take()
        .unwrap()
        .write_all(input.as_bytes())
        .unwrap();
    let out = child.wait_with_output().unwrap();
    (
        String::from_utf8_lossy(&out.stderr).into_owned(),
        out.status.code().unwrap_or(-1),
    )
}

#[test]
fn manual_loop_reasks_readings_marks_retests_logs_refusals_and_words_the_fault() {
    let dir = std::env::temp_dir().join(format!("biasjig-station-loop-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let design = dir.join("demo.toml");
    let log = dir.join("boards.jsonl");
    let _ = std::fs::remove_file(&log);
    let d = design.to_str().unwrap();
    // The demo scenario's requirement (invented).
    let out = biasjig(&[
        "design",
        "--vcc",
        "12",
        "--gain",
        "15",
        "--rl",
        "15k",
        "--rs",
        "600",
        "--f-low",
        "5",
        "--temp-min",
        "-10",
        "--temp-max",
        "55",
        "-o",
        d,
    ]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let file: toml::Table = std::fs::read_to_string(&design).unwrap().parse().unwrap();
    let rc = file["parts"]["rc"]["value"].as_float().unwrap();
    let good = predicted(d, &[]);
    let bad = predicted(d, &["--rc", &format!("{}", rc * 10.0)]);
    let line = |v: [f64; 3]| format!("12 {:?} {:?} {:?}", v[0], v[1], v[2]);
    // SN-2: first a line that is not readings, then a typo the unit refuses, then the readings.
    // SN-3: readings of an unpowered board (refused), then given up (empty line).
    // SN-1 again: a retest.
    let input = format!(
        "SN-1\n{}\nSN-2\nforgot the readings\n12 x 1 1\n{}\nSN-3\n0 0 0 0\n\nSN-1\n{}\n\n",
        line(good),
        line(bad),
        line(good)
    );
    let (screen, code) = station(d, &log, &input);
    assert_eq!(code, 0, "{screen}");
    let text = std::fs::read_to_string(&log).unwrap();
    let recs: Vec<serde_json::Value> = text
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    let summary: Vec<(String, String)> = recs
        .iter()
        .map(|r| {
            (
                r["serial"].as_str().unwrap().to_owned(),
                r["verdict"].as_str().unwrap().to_owned(),
            )
        })
        .collect();
    assert_eq!(
        summary,
        [
            ("SN-1", "pass"),
            ("SN-2", "fail"),
            ("SN-3", "refused"),
            ("SN-1", "pass")
        ]
        .map(|(a, b)| (a.to_owned(), b.to_owned())),
        "no readings line became a serial: {text}\n{screen}"
    );
    // Typing errors ask again and are not logged.
    assert_eq!(screen.matches("not readings").count(), 2, "{screen}");
    // The refusal is logged with its reason.
    let refused = &recs[2];
    assert!(
        refused["reason"]
            .as_str()
            .unwrap()
            .starts_with("IMPLAUSIBLE"),
        "{refused}"
    );
    assert_eq!(refused["typed"], "0 0 0 0");
    assert_eq!(refused["design"]["hash"], file["hash"].as_str().unwrap());
    // The retest is said and recorded.
    assert!(screen.contains("board SN-1 was tested before"), "{screen}");
    let retests: Vec<bool> = recs
        .iter()
        .map(|r| r["retest"].as_bool().unwrap())
        .collect();
    assert_eq!(retests, [false, false, false, true]);
    // The fault in words, as `biasjig check` says it; no machine text on the screen.
    assert!(screen.contains("F A I L"), "{screen}");
    assert!(
        screen.contains("RC reads like") && screen.contains("decade slip"),
        "{screen}"
    );
    assert!(
        !screen.contains("fault=") && !screen.contains("score="),
        "{screen}"
    );
    let (vb, ve, vc) = (
        format!("{:?}", bad[0]),
        format!("{:?}", bad[1]),
        format!("{:?}", bad[2]),
    );
    let check = biasjig(&[
        "check", "--design", d, "--vcc", "12", "--vb", &vb, "--ve", &ve, "--vc", &vc,
    ]);
    let check_text = String::from_utf8_lossy(&check.stdout);
    let first_fault = check_text
        .lines()
        .find(|l| l.trim_start().starts_with("1. "))
        .expect("check lists a fault")
        .trim();
    assert!(screen.contains(first_fault), "{first_fault:?} in\n{screen}");
    // The empty line after SN-3's refusal does not claim that nothing was logged.
    assert!(
        screen.contains("board SN-3: logged as refused; next board"),
        "{screen}"
    );
    assert!(
        !screen.contains("board SN-3: no readings, not logged"),
        "{screen}"
    );

    // Readings typed at the serial prompt are no serial number: they are said and asked again.
    let log2 = dir.join("boards2.jsonl");
    let _ = std::fs::remove_file(&log2);
    let input = format!("{}\nSN-9\n{}\n\n", line(good), line(good));
    let (screen, code) = station(d, &log2, &input);
    assert_eq!(code, 0, "{screen}");
    assert!(screen.contains("not a serial number"), "{screen}");
    let text = std::fs::read_to_string(&log2).unwrap();
    let serials: Vec<String> = text
        .lines()
        .map(|l| serde_json::from_str::<serde_json::Value>(l).unwrap()["serial"].to_string())
        .collect();
    assert_eq!(serials, ["\"SN-9\""], "{text}");
}
