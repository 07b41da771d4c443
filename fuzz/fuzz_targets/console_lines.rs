//! Fuzz the console's line assembler, parser and framing: any bytes, split at a fuzzer-chosen
//! point, must give exactly one status line per line, bounded output, and no panic.
#![no_main]

use biasjig_core::console::jig::{MemoryStore, NoJig};
use biasjig_core::console::{Clock, Console, Identity, MAX_DATA_LINES, MAX_OUT_LINE};
use libfuzzer_sys::fuzz_target;

struct Out(Vec<u8>);

impl embedded_io::ErrorType for Out {
    type Error = core::convert::Infallible;
}

impl embedded_io::Write for Out {
    fn write(&mut self, buf: &[u8]) -> Result<usize, Self::Error> {
        self.0.extend_from_slice(buf);
        Ok(buf.len())
    }
    fn flush(&mut self) -> Result<(), Self::Error> {
        Ok(())
    }
}

struct Zero;

impl Clock for Zero {
    fn now_ms(&mut self) -> u64 {
        0
    }
}

fuzz_target!(|data: &[u8]| {
    let Some((&cut, bytes)) = data.split_first() else { return };
    // Echo on changes what is written, not what is answered; keep it off for the count.
    if bytes.windows(4).any(|w| w.eq_ignore_ascii_case(b"echo")) {
        return;
    }
    let mut c = Console::new(Identity::new("fuzz", "0"), NoJig, MemoryStore::default(), Zero);
    let mut out = Out(Vec::new());
    let at = usize::from(cut).min(bytes.len());
    let (a, b) = bytes.split_at(at);
    c.feed(a, &mut out).unwrap();
    c.feed(b, &mut out).unwrap();
    c.finish(&mut out).unwrap();
    // Reference count of line ends: CR, LF, CRLF as one; plus an unfinished last line.
    let (mut ends, mut after_cr, mut partial) = (0usize, false, false);
    for &x in bytes {
        let was = core::mem::replace(&mut after_cr, false);
        match x {
            b'\n' if was => {}
            b'\r' | b'\n' => {
                after_cr = x == b'\r';
                ends += 1;
                partial = false;
            }
            _ => partial = true,
        }
    }
    let text = String::from_utf8_lossy(&out.0);
    let (mut statuses, mut data) = (0usize, 0usize);
    for l in text.split("\r\n").filter(|l| !l.is_empty()) {
        assert!(l.len() <= MAX_OUT_LINE);
        if l == "ok" || l.starts_with("ok ") || l.starts_with("err ") {
            statuses += 1;
            data = 0;
        } else {
            data += 1;
            assert!(data <= MAX_DATA_LINES);
        }
    }
    assert_eq!(statuses, ends + usize::from(partial));
});
