//! `biasjig station --manual` as a technician runs it (issue 11, item 6): a bad readings line
//! asks again for the readings, a serial already tested is said so and recorded as a retest,
//! refused readings are logged as refused with the reason, and the verdict screen names the
//! fault in the words of `biasjig check`.

mod common;

use common::console::assert_refused_unpowered;

use std::path::Path;

use common::demo::{self, typed};
use common::{code, json_lines, path_str, run, stderr, stdout, temp};

/// The scratch folder of this file.
const TAG: &str = "station-loop";

/// The manual station's screen and exit code.
fn station(design: &Path, log: &Path, input: &str) -> (String, i32) {
    let out = common::console::station(design, log, &[], input);
    (stderr(&out), code(&out))
}

#[test]
fn manual_loop_reasks_readings_marks_retests_logs_refusals_and_words_the_fault() {
    let bench = demo::bench(TAG);
    let (design, log, file) = (bench.design, bench.log, bench.file);
    let (good, bad) = (bench.good, bench.bad);
    let d = path_str(&design);
    let line = typed;
    // SN-2: first a line that is not readings, then a typo the unit refuses, then the readings.
    // SN-3: readings of an unpowered board (refused), then given up (empty line).
    // SN-1 again: a retest.
    let input = format!(
        "SN-1\n{}\nSN-2\nforgot the readings\n12 x 1 1\n{}\nSN-3\n0 0 0 0\n\nSN-1\n{}\n\n",
        line(good),
        line(bad),
        line(good)
    );
    let (screen, code) = station(&design, &log, &input);
    assert_eq!(code, 0, "{screen}");
    let text = std::fs::read_to_string(&log).unwrap();
    let recs = json_lines(&log);
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
    assert_refused_unpowered(refused);
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
    let check = run([
        "check", "--design", d, "--vcc", "12", "--vb", &vb, "--ve", &ve, "--vc", &vc,
    ]);
    let check_text = stdout(&check);
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
    let log2 = temp(TAG, "boards2.jsonl");
    let input = format!("{}\nSN-9\n{}\n\n", line(good), line(good));
    let (screen, code) = station(&design, &log2, &input);
    assert_eq!(code, 0, "{screen}");
    assert!(screen.contains("not a serial number"), "{screen}");
    let text = std::fs::read_to_string(&log2).unwrap();
    let serials: Vec<String> = text
        .lines()
        .map(|l| serde_json::from_str::<serde_json::Value>(l).unwrap()["serial"].to_string())
        .collect();
    assert_eq!(serials, ["\"SN-9\""], "{text}");
}
