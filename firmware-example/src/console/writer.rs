//! The console's replies: buffered in RAM, timed, and their status line noted.
//!
//! [`Replies`] feeds bytes to the core console through one writer type, [`Tap`] (the command code
//! is large; two writer types would link it twice). The reply is kept in a RAM buffer of
//! [`OUT_BUF`] bytes and sent after the console's work on the line, so the cost counter
//! ([`CostMeter`]) counts computing, not the serial line, unless the reply is longer. A line run
//! silently (the button path) goes through the same writer with no stream behind it.
//!
//! The status line (`ok ...` or `err CODE ...`, the last line of every reply) is noted as the
//! reply passes: the application draws the verdict screen only after a check that succeeded, and
//! takes what it draws from the console's typed last check, not from the reply's text.
use crate::cost::{CostMeter, Ticks};
use biasjig_core::console::{Clock, Console, Jig, Store};
use embedded_io::{ErrorType, Write};

/// Reply buffer, bytes: a reply up to this size is sent after the cost counter stopped.
pub const OUT_BUF: usize = 1024;

/// Where a [`Tap`] sends its bytes: one object-safe seam for every stream type.
trait Sink {
    /// Send every byte; `false` when the stream failed (the error is kept by the sink).
    fn send(&mut self, data: &[u8]) -> bool;
}

/// A [`Sink`] over an `embedded-io` writer that keeps the first error.
struct IoSink<'a, W: Write> {
    inner: &'a mut W,
    error: Option<W::Error>,
}

impl<W: Write> Sink for IoSink<'_, W> {
    fn send(&mut self, data: &[u8]) -> bool {
        if self.error.is_some() {
            return false;
        }
        match self.inner.write_all(data) {
            Ok(()) => true,
            Err(e) => {
                self.error = Some(e);
                false
            }
        }
    }
}

/// The stream behind the tap failed (its error is in the [`IoSink`]).
#[derive(Debug, Clone, Copy)]
struct SinkFailed;

impl core::fmt::Display for SinkFailed {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        f.write_str("the serial stream failed")
    }
}

impl core::error::Error for SinkFailed {}

impl embedded_io::Error for SinkFailed {
    fn kind(&self) -> embedded_io::ErrorKind {
        embedded_io::ErrorKind::Other
    }
}

/// Whether the last reply line began `ok`: followed byte by byte over the reply.
#[derive(Debug, Clone, Copy, Default)]
struct StatusLine {
    /// The first bytes of the line being written.
    head: [u8; 3],
    /// Bytes of the line being written so far (counting stops at 3).
    len: usize,
    /// The last finished line was an `ok` status line.
    ok: bool,
}

impl StatusLine {
    fn take(&mut self, data: &[u8]) {
        for &b in data {
            if b == b'\n' {
                let [o, k, after] = self.head;
                self.ok = [o, k] == *b"ok" && (self.len == 2 || after == b' ' || after == b'\r');
                self.len = 0;
            } else {
                if let Some(h) = self.head.get_mut(self.len) {
                    *h = b;
                }
                self.len = (self.len + 1).min(3);
            }
        }
    }
}

/// The console's writer: the reply is buffered in RAM (sent by [`Tap::flush_all`], or when the
/// buffer is full) and its status line noted; without a sink it is only noted.
struct Tap<'a> {
    sink: Option<&'a mut dyn Sink>,
    buf: &'a mut [u8; OUT_BUF],
    len: &'a mut usize,
    status: &'a mut StatusLine,
}

impl ErrorType for Tap<'_> {
    type Error = SinkFailed;
}

impl Tap<'_> {
    fn flush_all(&mut self) -> Result<(), SinkFailed> {
        let n = core::mem::take(self.len);
        let data = self.buf.get(..n).unwrap_or(&[]);
        match self.sink.as_mut() {
            Some(s) => {
                if s.send(data) {
                    Ok(())
                } else {
                    Err(SinkFailed)
                }
            }
            None => Ok(()),
        }
    }
}

impl Write for Tap<'_> {
    fn write(&mut self, data: &[u8]) -> Result<usize, SinkFailed> {
        if data.is_empty() {
            return Ok(0);
        }
        self.status.take(data);
        if self.sink.is_none() {
            return Ok(data.len());
        }
        if *self.len + data.len() > OUT_BUF {
            self.flush_all()?;
        }
        if data.len() > OUT_BUF {
            if let Some(s) = self.sink.as_mut() {
                if !s.send(data) {
                    return Err(SinkFailed);
                }
            }
        } else if let Some(dst) = self.buf.get_mut(*self.len..*self.len + data.len()) {
            dst.copy_from_slice(data);
            *self.len += data.len();
        }
        Ok(data.len())
    }

    fn flush(&mut self) -> Result<(), SinkFailed> {
        Ok(())
    }
}

/// The console's replies: the RAM buffer, the cost of the last console line and its status.
pub(super) struct Replies<T> {
    out: [u8; OUT_BUF],
    len: usize,
    cost: CostMeter<T>,
    status: StatusLine,
}

impl<T: Ticks> Replies<T> {
    /// No reply yet; the cost meter on `ticks`.
    pub(super) fn new(ticks: T) -> Self {
        Replies {
            out: [0; OUT_BUF],
            len: 0,
            cost: CostMeter::new(ticks),
            status: StatusLine::default(),
        }
    }

    /// Elapsed ticks of the last console line (without the emulated board's).
    pub(super) fn last_cost(&self) -> u32 {
        self.cost.last()
    }

    /// Ticks the emulated board took during the last console line.
    pub(super) fn last_stand_in(&self) -> u32 {
        self.cost.last_stand_in()
    }

    /// The last reply ended with an `ok` status line.
    pub(super) fn ok(&self) -> bool {
        self.status.ok
    }

    /// Feeds `bytes` to the console and sends its reply to `out`. When `timed` (the bytes end a
    /// line) the console's work on them is timed as the last cost.
    pub(super) fn feed<J: Jig, S: Store, C: Clock, W: Write>(
        &mut self,
        console: &mut Console<J, S, C>,
        bytes: &[u8],
        out: &mut W,
        timed: bool,
    ) -> Result<(), W::Error> {
        let mut sink = IoSink {
            inner: out,
            error: None,
        };
        let mut tap = Tap {
            sink: Some(&mut sink),
            buf: &mut self.out,
            len: &mut self.len,
            status: &mut self.status,
        };
        if timed {
            self.cost.start();
        }
        // A failed write stops the reply; the stream's own error is in the sink.
        let _ = console.feed(bytes, &mut tap);
        if timed {
            self.cost.stop();
        }
        let _ = tap.flush_all();
        match sink.error {
            Some(e) => Err(e),
            None => Ok(()),
        }
    }

    /// Runs `line` on the console with its reply noted, not sent (not timed).
    pub(super) fn silent<J: Jig, S: Store, C: Clock>(
        &mut self,
        console: &mut Console<J, S, C>,
        line: &str,
    ) {
        let mut tap = Tap {
            sink: None,
            buf: &mut self.out,
            len: &mut self.len,
            status: &mut self.status,
        };
        // Fed as bytes (not `Console::line`) so that the engine is built for one call path.
        let _ = console.feed(line.as_bytes(), &mut tap);
        let _ = console.feed(b"\n", &mut tap);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_status_line_is_the_last_line() {
        // Each chunk written, and whether the reply so far ends in success; the last two are one
        // line split across writes and ended by LF alone (the first of them completes no line).
        let chunks: [(&[u8], bool); 6] = [
            (
                b"verdict=fail\r\nnode=vb measured=0.01 ok=0\r\nok\r\n",
                true,
            ),
            (b"err JIG probe vb is open\r\n", false),
            (b"ok kept preamp-12, design hash 1\r\n", true),
            (b"okay\r\n", false),
            (b"o", false),
            (b"k\n", true),
        ];
        let mut s = StatusLine::default();
        for (chunk, ok) in chunks {
            s.take(chunk);
            assert_eq!(s.ok, ok, "after {:?}", core::str::from_utf8(chunk));
        }
    }
}
