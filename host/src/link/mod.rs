//! The serial link to the instrument: a byte port with timeouts, a line reader that refuses
//! garbage, the console's framing (data lines, then one status line) and synchronisation.
//!
//! Every wait is bounded: a read waits at most the reply timeout, synchronisation at most its own
//! budget; a timeout, a disconnect or garbage is a [`LinkError`], which the commands turn into
//! exit status 3 with a clear message.
//!
//! [`port`] holds the byte ports (the serial port, an in-memory pair), [`relay`] carries a typed
//! session line by line to the instrument.

pub mod port;
pub mod relay;

use std::io;
use std::time::{Duration, Instant};

use biasjig_core::console::{MAX_DATA_LINES, MAX_OUT_LINE};
use biasjig_core::kv;
use thiserror::Error;

pub use port::{MemoryPort, Pipe, Port, SerialLink};

/// Why the link failed.
#[derive(Debug, Clone, PartialEq, Eq, Error)]
#[non_exhaustive]
pub enum LinkError {
    /// No complete reply within the time allowed.
    #[error("instrument timeout: {0}")]
    Timeout(String),
    /// The port went away.
    #[error("instrument disconnected: {0}")]
    Disconnected(String),
    /// Bytes that are not the console's protocol.
    #[error("instrument sent garbage: {0}")]
    Garbage(String),
}

/// One reply: data lines and the status line.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Reply {
    /// Data lines.
    pub data: Vec<String>,
    /// The status line (`ok ...` or `err CODE ...`).
    pub status: String,
}

impl Reply {
    /// The status is `ok`.
    pub fn ok(&self) -> bool {
        is_ok(&self.status)
    }

    /// The value of `key` in the machine data lines (the first `key=value` word, read by the
    /// core's [`kv`] reader).
    pub fn value(&self, key: &str) -> Option<&str> {
        self.data.iter().find_map(|l| kv::value(l, key))
    }
}

fn is_ok(l: &str) -> bool {
    l == "ok" || l.starts_with("ok ")
}

/// A status line.
pub fn is_status(l: &str) -> bool {
    is_ok(l) || l.starts_with("err ")
}

/// Default time one reply may take.
pub const REPLY_TIMEOUT: Duration = Duration::from_secs(5);
/// Default synchronisation budget (some serial bridges and emulators ignore the first second).
pub const SYNC_TIMEOUT: Duration = Duration::from_secs(10);

/// The console protocol over a [`Port`].
pub struct Link<P: Port> {
    port: P,
    pending: Vec<u8>,
    after_cr: bool,
    /// Time one reply may take.
    pub reply_timeout: Duration,
}

impl<P: Port> Link<P> {
    /// A link over `port`.
    pub fn new(port: P) -> Self {
        Self {
            port,
            pending: Vec::new(),
            after_cr: false,
            reply_timeout: REPLY_TIMEOUT,
        }
    }

    fn io(e: io::Error) -> LinkError {
        LinkError::Disconnected(e.to_string())
    }

    /// Send one line (a line end is added).
    pub fn send_line(&mut self, line: &str) -> Result<(), LinkError> {
        let mut b = line.as_bytes().to_vec();
        b.push(b'\n');
        self.port.send(&b).map_err(Self::io)
    }

    /// Read one line, until `deadline`.
    pub fn read_line(&mut self, deadline: Instant) -> Result<String, LinkError> {
        loop {
            while let Some(pos) = self.pending.iter().position(|b| *b == b'\r' || *b == b'\n') {
                let end = self.pending[pos];
                let line: Vec<u8> = self.pending.drain(..=pos).collect();
                let after_cr = std::mem::replace(&mut self.after_cr, end == b'\r');
                if pos == 0 && end == b'\n' && after_cr {
                    continue;
                }
                let text = String::from_utf8(line[..pos].to_vec())
                    .map_err(|_| LinkError::Garbage("a line that is not UTF-8 text".into()))?;
                if text.chars().any(|c| c.is_control()) {
                    return Err(LinkError::Garbage(format!(
                        "control characters in {text:?}"
                    )));
                }
                return Ok(text);
            }
            if self.pending.len() > 4 * MAX_OUT_LINE {
                self.pending.clear();
                return Err(LinkError::Garbage(format!(
                    "more than {} bytes without a line end",
                    4 * MAX_OUT_LINE
                )));
            }
            let now = Instant::now();
            if now >= deadline {
                return Err(LinkError::Timeout("no complete line in time".into()));
            }
            let mut buf = [0u8; 256];
            let n = self
                .port
                .recv(&mut buf, (deadline - now).min(Duration::from_millis(100)));
            let n = n.map_err(Self::io)?;
            self.pending.extend_from_slice(&buf[..n]);
        }
    }

    /// Read one reply: data lines up to the status line.
    pub fn read_reply(&mut self, deadline: Instant) -> Result<Reply, LinkError> {
        let mut data = Vec::new();
        loop {
            let line = self.read_line(deadline)?;
            if is_status(&line) {
                return Ok(Reply { data, status: line });
            }
            if line.len() > MAX_OUT_LINE || data.len() >= MAX_DATA_LINES {
                return Err(LinkError::Garbage(format!(
                    "reply beyond the protocol's bounds at {line:?}"
                )));
            }
            data.push(line);
        }
    }

    /// Send a command and read its reply.
    pub fn command(&mut self, line: &str) -> Result<Reply, LinkError> {
        self.send_line(line)?;
        let deadline = Instant::now() + self.reply_timeout;
        self.read_reply(deadline)
    }

    /// Synchronise: clear stale input, send blank lines until an `ok` comes back (within
    /// `budget`), then ask for the identification and return it. Stray replies left from the
    /// blank lines are skipped.
    pub fn sync(&mut self, budget: Duration) -> Result<String, LinkError> {
        let deadline = Instant::now() + budget;
        let _ = self.port.clear_input();
        self.pending.clear();
        self.after_cr = false;
        loop {
            if Instant::now() >= deadline {
                return Err(LinkError::Timeout(format!(
                    "no answer to a blank line within {} s",
                    budget.as_secs_f64()
                )));
            }
            self.send_line("")?;
            let step = (Instant::now() + Duration::from_millis(300)).min(deadline);
            match self.read_line(step) {
                Ok(l) if is_ok(&l) => break,
                Ok(_) | Err(LinkError::Timeout(_)) | Err(LinkError::Garbage(_)) => continue,
                Err(e) => return Err(e),
            }
        }
        // Flush what the other blank lines caused, then identify.
        std::thread::sleep(Duration::from_millis(50));
        let _ = self.port.clear_input();
        self.pending.clear();
        self.send_line("*IDN?")?;
        let idn_deadline = (Instant::now() + self.reply_timeout)
            .min(deadline.max(Instant::now() + Duration::from_secs(1)));
        let mut ident = None;
        loop {
            let l = self.read_line(idn_deadline)?;
            if is_ok(&l) {
                if let Some(id) = ident {
                    return Ok(id);
                }
            } else if l.starts_with("err ") {
                ident = None;
            } else if l.split(',').count() == 4 {
                ident = Some(l);
            }
        }
    }
}

/// A synchronisation budget outside what is allowed (exit 2).
#[derive(Debug, Clone, Copy, PartialEq, Error)]
#[error("--sync-timeout: {seconds}: allowed 0.1 to 600 seconds")]
pub struct BudgetError {
    /// The budget given, s.
    pub seconds: f64,
}

/// Check a synchronisation budget in seconds.
pub fn sync_budget(seconds: f64) -> Result<Duration, BudgetError> {
    if seconds.is_finite() && (0.1..=600.0).contains(&seconds) {
        Ok(Duration::from_secs_f64(seconds))
    } else {
        Err(BudgetError { seconds })
    }
}
