//! Monte Carlo cost: instructions per sample (deterministic, under callgrind) and samples per
//! second (wall clock, for orientation only).
//!
//! `cargo bench -p biasjig-core --bench spread` prints samples per second and, when valgrind is
//! installed, runs itself under `valgrind --tool=callgrind` with N and 10·N samples and prints
//! (I(10N) − I(N)) / 9N instructions per sample, which cancels the set-up.
//! `scripts/instructions.sh spread` gives the DC figure the same way. By hand:
//!
//! ```text
//! valgrind --tool=callgrind --callgrind-out-file=/dev/null target/release/deps/spread-* --samples 1000 --dc
//! valgrind --tool=callgrind --callgrind-out-file=/dev/null target/release/deps/spread-* --samples 10000 --dc
//! ```
//! (`--dc`: one exact solve and the swing per sample, the goal of at most 2 000 instructions;
//! without it the midband gain adds one small-signal solve per sample.)

use std::hint::black_box;
use std::process::Command;
use std::time::Instant;

use biasjig_core::device::Profile;
use biasjig_core::spread::{monte_carlo, worst_case, McSettings, Method, Requirement, Variation};
use biasjig_core::stage::Stage;
use biasjig_testkit::fixtures::{demo_profile, demo_stage, demo_variation};

/// The demo scenario of the brief (invented): its stage, transistor and ambient range.
fn demo() -> (Stage, Profile, Variation) {
    (demo_stage(), demo_profile(), demo_variation())
}

fn run(samples: u32, signal: bool) -> f64 {
    let (s, p, v) = demo();
    let wc = match worst_case(&s, &p, &v, Method::default()) {
        Ok(w) => w,
        Err(e) => {
            eprintln!("worst case: {e}");
            return 0.0;
        }
    };
    let st = McSettings {
        runs: samples,
        seed: 1,
        signal,
        requirement: Requirement::default(),
    };
    match monte_carlo(black_box(&s), &p, &v, &wc, &st, |_, _| {}) {
        Ok(mc) => black_box(mc.nodes.vc.mean),
        Err(e) => {
            eprintln!("monte carlo: {e}");
            0.0
        }
    }
}

/// Instructions of one run of this program under callgrind, from its "Collected" line.
fn callgrind(samples: u32, dc: bool) -> Option<u64> {
    let me = std::env::current_exe().ok()?;
    let mut cmd = Command::new("valgrind");
    cmd.args(["--tool=callgrind", "--callgrind-out-file=/dev/null"])
        .arg(me);
    cmd.args(["--samples", &samples.to_string()]);
    if dc {
        cmd.arg("--dc");
    }
    let out = cmd.output().ok()?;
    let text = String::from_utf8_lossy(&out.stderr);
    let line = text.lines().find(|l| l.contains("Collected :"))?;
    line.rsplit(':').next()?.trim().parse().ok()
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let dc = args.iter().any(|a| a == "--dc");
    // The convention of scripts/instructions.sh: `--counts` names N1 N2 and the unit, a bare
    // count N runs N samples (the DC figure of the goal).
    if args.iter().any(|a| a == "--counts") {
        println!("1000 10000 monte-carlo-sample");
        return;
    }
    if let Some(n) = args.get(1).and_then(|a| a.parse::<u32>().ok()) {
        black_box(run(n, false));
        return;
    }
    if let Some(i) = args.iter().position(|a| a == "--samples") {
        let n = args.get(i + 1).and_then(|s| s.parse().ok()).unwrap_or(1000);
        black_box(run(n, !dc));
        return;
    }
    for (label, signal) in [("dc (solve + swing)", false), ("with gain", true)] {
        let n = 20_000;
        let t = Instant::now();
        black_box(run(n, signal));
        let secs = t.elapsed().as_secs_f64();
        println!("monte carlo {label}: {:.0} samples/s", f64::from(n) / secs);
    }
    let n = 1000u32;
    for (label, dc) in [("dc (solve + swing)", true), ("with gain", false)] {
        match (callgrind(n, dc), callgrind(10 * n, dc)) {
            (Some(a), Some(b)) => {
                let per = (b.saturating_sub(a)) as f64 / f64::from(9 * n);
                println!("monte carlo {label}: {per:.0} instructions per sample (callgrind, {n} and {} samples)", 10 * n);
            }
            _ => println!("monte carlo {label}: callgrind not available; run the commands in the bench's notes"),
        }
    }
}
