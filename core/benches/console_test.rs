//! Cost of the console's `test` on a failing board, per fault class: the path the instrument
//! runs (measure, the gain at the two test frequencies, windows, verdict, diagnosis), through
//! [`Console::feed`] with a jig that reads the engine's board.
//!
//! Deterministic instruction counts, not time: `scripts/instructions.sh console_test` (a bare
//! count N runs N `test` commands cycling over the fault classes), or under callgrind with
//! `--dump-instr=no` and `callgrind_annotate --inclusive=yes` for where the cost goes. The goal
//! of issue 15: one `test` with a diagnosis within 10 M instructions on every fault class.

use biasjig_testkit::session::{console_with, EngineJig, FixedClock};

/// Where the replies go: nowhere, or the terminal with `--show`.
struct Sink(bool);

impl embedded_io::ErrorType for Sink {
    type Error = core::convert::Infallible;
}

impl embedded_io::Write for Sink {
    fn write(&mut self, buf: &[u8]) -> Result<usize, Self::Error> {
        if self.0 {
            print!("{}", String::from_utf8_lossy(buf));
        }
        Ok(buf.len())
    }
    fn flush(&mut self) -> Result<(), Self::Error> {
        Ok(())
    }
}

fn main() {
    // The fault classes of the firmware's end-to-end test: opens, shorts, a decade slip, the
    // transistor's junction faults.
    let faults = [
        "r1 open",
        "r2 short",
        "rc open",
        "re2 short",
        "rc 47000",
        "r2 1000",
        "q be_open",
        "q ce_short",
        "q bc_short",
        "q reversed",
    ];
    let args: Vec<String> = std::env::args().collect();
    if args.iter().any(|a| a == "--counts") {
        println!("10 30 test");
        return;
    }
    let show = args.iter().any(|a| a == "--show");
    let n: usize = args
        .get(1)
        .and_then(|a| a.parse().ok())
        .unwrap_or(faults.len());
    // A second argument picks one fault class (its cost alone).
    let only: Option<usize> = args.get(2).and_then(|a| a.parse().ok());
    // The default stage with a fault, read through 11 MΩ inputs, gains from the engine's
    // response.
    let mut c = console_with("0", EngineJig::instrument(), FixedClock);
    // `--dc`: the stage without its load, so that `test` reads the DC nodes only.
    if args.iter().any(|a| a == "--dc") {
        c.feed(b"set rl none\n", &mut Sink(show))
            .expect("a sink never fails");
    }
    for (i, f) in faults
        .iter()
        .enumerate()
        .cycle()
        .take(n * if only.is_some() { faults.len() } else { 1 })
    {
        if only.is_some_and(|o| o != i) {
            continue;
        }
        let line = format!("inject {f}\ntest\n");
        c.feed(line.as_bytes(), &mut Sink(show))
            .expect("a sink never fails");
    }
}
