//! Engine benchmark: one operating-point solve and 100 000 solves, timed; run under callgrind
//! for a deterministic instruction count per solve (see `scripts/instructions.sh`).
//!
//! `cargo bench -p biasjig-core --bench engine -- [SOLVES]`

use std::hint::black_box;
use std::time::Instant;

use biasjig_core::solve::{solve, Conditions};
use biasjig_core::stage::Stage;
use biasjig_testkit::bench::runs;
use biasjig_testkit::fixtures::{npn, profile};

/// The demo-like stage the benchmark solves, with hFE stepped so every solve does real work.
fn stage() -> Stage {
    Stage {
        rl: Some(15e3),
        rs: 600.0,
        ..npn(12.0, [56e3, 12e3, 3.3e3, 180.0, 820.0])
    }
}

fn run(n: u64) -> f64 {
    let s = stage();
    let p = profile(100.0, 200.0, 300.0, 0.65);
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
    let Some(n) = runs("1000 11000 solve", 100_000) else {
        return;
    };
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
