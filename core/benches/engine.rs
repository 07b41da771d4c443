//! Engine benchmark: one operating-point solve and 100 000 solves, timed; run under callgrind
//! for a deterministic instruction count per solve (see `scripts/instructions.sh`).
//!
//! `cargo bench -p biasjig-core --bench engine -- [SOLVES]`

use std::hint::black_box;
use std::time::Instant;

use biasjig_core::device::Profile;
use biasjig_core::solve::{solve, Conditions};
use biasjig_core::stage::{Part, Polarity, Stage};

/// The demo-like stage the benchmark solves, with hFE stepped so every solve does real work.
fn stage() -> Stage {
    Stage {
        polarity: Polarity::Npn,
        vcc: Part::new(12.0, 0.0),
        r1: Part::new(56e3, 0.05),
        r2: Part::new(12e3, 0.05),
        rc: Part::new(3.3e3, 0.05),
        re1: Part::new(180.0, 0.05),
        re2: Part::new(820.0, 0.05),
        rl: Some(15e3),
        rs: 600.0,
        cin: None,
        cout: None,
        ce: None,
    }
}

fn run(n: u64) -> f64 {
    let s = stage();
    let p = Profile {
        beta_min: 100.0,
        beta_max: 300.0,
        ..Profile::default()
    };
    let mut acc = 0.0;
    for i in 0..n {
        let beta = 100.0 + (i % 200) as f64;
        let cond = Conditions {
            beta_25: beta,
            ..Conditions::typical(&p)
        };
        if let Ok(op) = solve(black_box(&s), black_box(&p), cond) {
            acc += op.ic;
        }
    }
    acc
}

fn main() {
    // `--counts`: the two counts and the unit that scripts/instructions.sh measures with.
    if std::env::args().any(|a| a == "--counts") {
        println!("1000 11000 solve");
        return;
    }
    // Under `cargo bench` the harness passes `--bench`; a bare number sets the solve count.
    let n: u64 = std::env::args()
        .skip(1)
        .find_map(|a| a.parse().ok())
        .unwrap_or(100_000);
    let t = Instant::now();
    black_box(run(1));
    let one = t.elapsed();
    let t = Instant::now();
    black_box(run(n));
    let many = t.elapsed();
    println!(
        "engine: 1 solve {:.2} µs; {n} solves {:.1} ms ({:.3} µs per solve)",
        one.as_secs_f64() * 1e6,
        many.as_secs_f64() * 1e3,
        many.as_secs_f64() * 1e6 / n as f64
    );
}
