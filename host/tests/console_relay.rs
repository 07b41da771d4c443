//! `biasjig console --port`: the relay keeps one reply per line sent. The instrument is faked by
//! the console engine itself on the other end of a pseudo-terminal pair, so the binary runs its
//! real serial path.

mod common;

use std::io::{Read, Write};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;
use std::time::{Duration, Instant};

use biasjig_core::console::jig::{MemoryStore, NoJig};
use biasjig_core::console::{Clock, Console, Identity};
use common::console::statuses;
use common::{code, run_with_input, stderr, stdout};
use serialport::{SerialPort, TTYPort};

struct TestClock(Instant);

impl Clock for TestClock {
    fn now_ms(&mut self) -> u64 {
        u64::try_from(self.0.elapsed().as_millis()).unwrap_or(u64::MAX)
    }
}

/// The engine as `biasjig console` runs it in-process (same identity), so the relay's output
/// can be compared with the local console's.
fn engine() -> Console<NoJig, MemoryStore, TestClock> {
    Console::new(
        Identity::new("console", env!("CARGO_PKG_VERSION")),
        NoJig,
        MemoryStore::default(),
        TestClock(Instant::now()),
    )
}

/// The fake instrument: every byte from the master side of the pair goes to the engine, every
/// answer back, until `stop`.
fn instrument(mut master: TTYPort, stop: Arc<AtomicBool>) {
    let mut c = engine();
    master
        .set_timeout(Duration::from_millis(50))
        .expect("pty timeout");
    let mut buf = [0u8; 256];
    while !stop.load(Ordering::SeqCst) {
        let n = match master.read(&mut buf) {
            Ok(n) => n,
            Err(e) if e.kind() == std::io::ErrorKind::TimedOut => continue,
            Err(_) => return,
        };
        let mut out = Vec::new();
        // `Vec<u8>` is an embedded-io writer itself: the engine writes to memory.
        c.feed(&buf[..n], &mut out)
            .expect("engine writes to memory");
        if master.write_all(&out).is_err() {
            return;
        }
    }
}

/// `biasjig ARGS` on `input`: stdout (line ends as `\n`), stderr and the exit code.
fn run(args: &[&str], input: &[u8]) -> (String, String, i32) {
    let out = run_with_input(args, input);
    (stdout(&out).replace("\r\n", "\n"), stderr(&out), code(&out))
}

#[test]
fn relay_keeps_one_reply_per_line_with_cr_and_bad_bytes_inside() {
    let (master, slave) = TTYPort::pair().expect("a pseudo-terminal pair");
    let path = slave.name().expect("the pty's name");
    let stop = Arc::new(AtomicBool::new(false));
    let s2 = stop.clone();
    let fake = std::thread::spawn(move || instrument(master, s2));
    // A CR inside a line, bytes that are not UTF-8, a control byte, an over-long line, and a
    // last line without its line end.
    let mut input = b"mode machine\nhash\rset r1 1k\nidentify\n\xff\xfe r1\nhash\n".to_vec();
    input.extend_from_slice(b"stage\x07\nset r1 2k2\n");
    input.extend(vec![b'z'; 300]);
    input.extend_from_slice(b"\r\nhash\r\n\r\nidentify");
    let (relayed, err, code) = run(&["console", "--port", &path, "--sync-timeout", "5"], &input);
    stop.store(true, Ordering::SeqCst);
    fake.join().unwrap();
    drop(slave);
    assert_eq!(code, 0, "{err}\n{relayed}");
    // The same lines answered by the engine in this process: the relay must show the same.
    let (local, _, code) = run(&["console"], &input);
    assert_eq!(code, 0);
    assert_eq!(relayed, local, "relay vs in-process console");
    let s = statuses(&relayed);
    // mode, hash, set, identify, (bad bytes), hash, (control), set, (too long), hash, blank,
    // identify: 12 lines, 12 replies.
    assert_eq!(s.len(), 12, "{relayed}");
    assert!(s[4].starts_with("err ENCODING"), "{relayed}");
    assert!(s[6].starts_with("err CONTROL"), "{relayed}");
    assert!(s[8].starts_with("err TOO_LONG"), "{relayed}");
    let lines: Vec<&str> = relayed.lines().collect();
    // Each `identify` answer follows its own command: data line then `ok`.
    let idn: Vec<usize> = lines
        .iter()
        .enumerate()
        .filter(|(_, l)| l.starts_with("biasjig,console,"))
        .map(|(k, _)| k)
        .collect();
    assert_eq!(idn.len(), 2, "{relayed}");
    for k in idn {
        assert_eq!(lines[k + 1], "ok", "{relayed}");
    }
    // The hash changes after each `set`, and each `hash` answer is its own.
    let hashes: Vec<&str> = lines
        .iter()
        .filter_map(|l| l.strip_prefix("hash="))
        .collect();
    assert_eq!(hashes.len(), 3, "{relayed}");
    assert_ne!(hashes[0], hashes[1]);
    assert_ne!(hashes[1], hashes[2]);
}
