//! The serial link to the instrument: a byte port with timeouts, a line reader that refuses
//! garbage, the console's framing (data lines, then one status line) and synchronisation.
//!
//! Every wait is bounded: a read waits at most the reply timeout, synchronisation at most its own
//! budget; a timeout, a disconnect or garbage is a [`LinkError`], which the commands turn into
//! exit status 3 with a clear message.

use std::collections::VecDeque;
use std::fmt;
use std::io;
use std::sync::{Arc, Condvar, Mutex};
use std::time::{Duration, Instant};

use biasjig_core::console::{MAX_DATA_LINES, MAX_OUT_LINE};

/// A byte port: the serial port, or one end of an in-memory pair in tests.
pub trait Port {
    /// Write all bytes.
    fn send(&mut self, bytes: &[u8]) -> io::Result<()>;
    /// Read what has arrived, waiting at most `wait`; `Ok(0)` when nothing came.
    fn recv(&mut self, buf: &mut [u8], wait: Duration) -> io::Result<usize>;
    /// Drop bytes that arrived and were not read.
    fn clear_input(&mut self) -> io::Result<()>;
}

/// Why the link failed.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum LinkError {
    /// No complete reply within the time allowed.
    Timeout(String),
    /// The port went away.
    Disconnected(String),
    /// Bytes that are not the console's protocol.
    Garbage(String),
}

impl fmt::Display for LinkError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Self::Timeout(m) => write!(f, "instrument timeout: {m}"),
            Self::Disconnected(m) => write!(f, "instrument disconnected: {m}"),
            Self::Garbage(m) => write!(f, "instrument sent garbage: {m}"),
        }
    }
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

    /// The value of `key` in the machine data lines.
    pub fn value(&self, key: &str) -> Option<&str> {
        let prefix = format!("{key}=");
        self.data
            .iter()
            .flat_map(|l| l.split(' '))
            .find_map(|kv| kv.strip_prefix(prefix.as_str()))
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

/// A serial port through the `serialport` crate.
pub struct SerialLink {
    port: Box<dyn serialport::SerialPort>,
}

impl SerialLink {
    /// Open `path` at `baud`, 8N1.
    pub fn open(path: &str, baud: u32) -> Result<Self, LinkError> {
        serialport::new(path, baud)
            .timeout(Duration::from_millis(100))
            .open()
            .map(|port| Self { port })
            .map_err(|e| LinkError::Disconnected(format!("cannot open {path}: {e}")))
    }
}

impl Port for SerialLink {
    fn send(&mut self, bytes: &[u8]) -> io::Result<()> {
        io::Write::write_all(&mut self.port, bytes)?;
        io::Write::flush(&mut self.port)
    }

    fn recv(&mut self, buf: &mut [u8], wait: Duration) -> io::Result<usize> {
        self.port.set_timeout(wait.max(Duration::from_millis(1)))?;
        match io::Read::read(&mut self.port, buf) {
            Ok(n) => Ok(n),
            Err(e)
                if e.kind() == io::ErrorKind::TimedOut || e.kind() == io::ErrorKind::WouldBlock =>
            {
                Ok(0)
            }
            Err(e) => Err(e),
        }
    }

    fn clear_input(&mut self) -> io::Result<()> {
        self.port
            .clear(serialport::ClearBuffer::Input)
            .map_err(io::Error::other)
    }
}

/// One direction of an in-memory byte pipe.
#[derive(Default)]
pub struct Pipe {
    bytes: Mutex<VecDeque<u8>>,
    ready: Condvar,
}

impl Pipe {
    /// Put bytes in.
    pub fn put(&self, b: &[u8]) {
        if let Ok(mut g) = self.bytes.lock() {
            g.extend(b);
            self.ready.notify_all();
        }
    }

    /// Take up to `buf.len()` bytes, waiting at most `wait` (0 when none came); `None` when the
    /// pipe is unusable (a writer panicked holding it).
    pub fn take(&self, buf: &mut [u8], wait: Duration) -> Option<usize> {
        let deadline = Instant::now() + wait;
        let mut g = self.bytes.lock().ok()?;
        loop {
            if !g.is_empty() {
                let n = buf.len().min(g.len());
                for (slot, b) in buf.iter_mut().zip(g.drain(..n)) {
                    *slot = b;
                }
                return Some(n);
            }
            let now = Instant::now();
            if now >= deadline {
                return Some(0);
            }
            g = self.ready.wait_timeout(g, deadline - now).ok()?.0;
        }
    }

    /// Drop what is held.
    pub fn clear(&self) {
        if let Ok(mut g) = self.bytes.lock() {
            g.clear();
        }
    }
}

/// One end of an in-memory serial pair.
#[derive(Clone)]
pub struct MemoryPort {
    /// Bytes this end reads.
    pub rx: Arc<Pipe>,
    /// Bytes this end writes.
    pub tx: Arc<Pipe>,
}

impl MemoryPort {
    /// Two connected ends.
    pub fn pair() -> (MemoryPort, MemoryPort) {
        let a = Arc::new(Pipe::default());
        let b = Arc::new(Pipe::default());
        (
            MemoryPort {
                rx: a.clone(),
                tx: b.clone(),
            },
            MemoryPort { rx: b, tx: a },
        )
    }
}

impl Port for MemoryPort {
    fn send(&mut self, bytes: &[u8]) -> io::Result<()> {
        self.tx.put(bytes);
        Ok(())
    }

    fn recv(&mut self, buf: &mut [u8], wait: Duration) -> io::Result<usize> {
        self.rx
            .take(buf, wait)
            .ok_or_else(|| io::Error::new(io::ErrorKind::BrokenPipe, "the other end closed"))
    }

    fn clear_input(&mut self) -> io::Result<()> {
        self.rx.clear();
        Ok(())
    }
}
