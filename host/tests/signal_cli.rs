//! The signal test on the command line: `check --ac`, `limits --ac-f` and the proposed test
//! frequencies. Readings come from the engine (DC operating point and complex response) for an
//! invented stage (12 V, 47k/10k divider, 4k7 collector, 220 + 820 emitter, 15k load, 600 Ω source,
//! 10 µ/10 µ/470 µ).

mod common;

use biasjig_core::response::CapState;
use biasjig_core::solve::{solve, NodeLoads};
use biasjig_core::stage::Capacitor;
use common::signal::{board, check, TONES};
use common::stage::SIGNAL;
use common::{assert_exit, bin, json, stderr};

#[test]
fn a_good_board_passes_its_gain_windows() {
    let (r, g) = board(None, &TONES);
    let out = check(r, &[(TONES[0], g[0]), (TONES[1], g[1])], &["--json"]);
    assert_exit(&out, 0);
    let j = json(&out);
    assert_eq!(j["verdict"], "pass");
    let ac = j["ac"].as_array().unwrap();
    assert_eq!(ac.len(), 2);
    for (k, a) in ac.iter().enumerate() {
        assert_eq!(a["f"].as_f64(), Some(TONES[k]));
        assert_eq!(a["measured"].as_f64(), Some(g[k]));
        assert!(a["low"].as_f64().unwrap() < g[k] && g[k] < a["high"].as_f64().unwrap());
        assert_eq!(a["ok"], true);
    }
    // Without --ac there is no "ac" key and the DC verdict stands alone.
    let j = json(&check(r, &[], &["--json"]));
    assert!(j.get("ac").is_none());
}

#[test]
fn capacitor_faults_are_named_from_dc_and_gain_readings() {
    let cases = [
        ((Capacitor::Ce, CapState::Open), "CE", "open"),
        ((Capacitor::Cin, CapState::Open), "CIN", "open"),
        ((Capacitor::Ce, CapState::Fitted(47e-6)), "CE", "low"),
    ];
    for (cap, part, mode) in cases {
        let (r, g) = board(Some(cap), &TONES);
        let out = check(r, &[(TONES[0], g[0]), (TONES[1], g[1])], &["--json"]);
        assert_eq!(out.status.code(), Some(1), "{part} {mode}");
        let j = json(&out);
        assert_eq!(j["verdict"], "fail");
        assert!(j["ac"].as_array().unwrap().iter().any(|a| a["ok"] == false));
        let first = &j["faults"][0];
        let named = (first["part"] == part && first["mode"] == mode)
            || first["equivalent"]
                .as_array()
                .unwrap()
                .iter()
                .any(|e| e["part"] == part && e["mode"] == mode);
        assert!(named, "{part} {mode}: {}", j["faults"]);
        if mode == "low" {
            // The estimate is the capacitor's value in F, near the 47 µF fitted (with two tones
            // a low CIN, COUT or CE can be alike: CE's own entry carries its estimate).
            let ce = j["faults"]
                .as_array()
                .unwrap()
                .iter()
                .find(|f| f["part"] == "CE" && f["mode"] == "low")
                .unwrap();
            let est = ce["estimate"].as_f64().unwrap();
            assert!(
                (est / 47e-6 - 1.0).abs() < 0.35,
                "estimate {est}: {}",
                j["faults"]
            );
        }
    }
    // A shorted CIN shows at DC (RS from the base to ground while the nodes are read): the DC
    // readings alone fail and name it.
    let (s, p) = (SIGNAL.stage(), SIGNAL.profile());
    let loads = NodeLoads {
        base: Some(600.0),
        ..NodeLoads::NONE
    };
    let op = solve(&s, &p, common::signal::conditions(&p).loaded(loads)).unwrap();
    let out = check([op.vcc, op.vb, op.ve, op.vc], &[], &["--json"]);
    assert_eq!(out.status.code(), Some(1));
    let j = json(&out);
    let first = &j["faults"][0];
    let named = (first["part"] == "CIN" && first["mode"] == "short")
        || first["equivalent"]
            .as_array()
            .unwrap()
            .iter()
            .any(|e| e["part"] == "CIN" && e["mode"] == "short");
    assert!(named, "CIN short: {}", j["faults"]);
}

#[test]
fn limits_publish_the_windows_check_applies_and_propose_tones() {
    let out = bin()
        .arg("limits")
        .args(SIGNAL.words())
        .args(["--ac-f", "1k", "--ac-f", "5", "--json"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let l = json(&out);
    let (r, g) = board(None, &TONES);
    let c = json(&check(
        r,
        &[(TONES[0], g[0]), (TONES[1], g[1])],
        &["--json"],
    ));
    for k in 0..2 {
        let (a, b) = (&l["ac"][k], &c["ac"][k]);
        assert_eq!(a["f"], b["f"]);
        assert_eq!(a["low"], b["low"], "window at {}", a["f"]);
        assert_eq!(a["high"], b["high"], "window at {}", a["f"]);
        let (lo, nom, hi) = (
            a["low"].as_f64().unwrap(),
            a["nominal"].as_f64().unwrap(),
            a["high"].as_f64().unwrap(),
        );
        assert!(lo < nom && nom < hi);
    }
    // Without --ac-f: two proposed frequencies, each with its reason.
    let out = bin()
        .arg("limits")
        .args(SIGNAL.words())
        .arg("--json")
        .output()
        .unwrap();
    let p = json(&out);
    let prop = p["ac_proposed"].as_array().unwrap();
    assert_eq!(prop.len(), 2);
    assert_eq!(prop[0]["use"], "midband");
    assert_eq!(prop[1]["use"], "poles");
    assert!(prop[1]["f"].as_f64().unwrap() < prop[0]["f"].as_f64().unwrap());
    assert!(prop.iter().all(|x| !x["why"].as_str().unwrap().is_empty()));
}

#[test]
fn bad_gain_readings_are_refused_naming_the_flag() {
    let (r, _) = board(None, &[]);
    for bad in ["1k", "1k:x", "1M:10", "1k:-3"] {
        let mut c = bin();
        c.arg("check")
            .args(SIGNAL.without_vcc())
            .args(common::stage::reading_flags(r))
            .args(["--ac", bad]);
        let out = c.output().unwrap();
        assert_eq!(out.status.code(), Some(2), "{bad}");
        let err = stderr(&out);
        assert!(
            err.contains("--ac") && err.contains("allowed"),
            "{bad}: {err}"
        );
    }
    let out = bin()
        .arg("limits")
        .args(SIGNAL.words())
        .args(["--ac-f", "0"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("--ac-f"));
}
