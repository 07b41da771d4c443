//! Byte ports under the link: the serial port through the `serialport` crate, and an in-memory
//! pair (the manual station's in-process console, tests).

use std::collections::VecDeque;
use std::io;
use std::sync::{Arc, Condvar, Mutex};
use std::time::{Duration, Instant};

use super::LinkError;

/// A byte port: the serial port, or one end of an in-memory pair in tests.
pub trait Port {
    /// Write all bytes.
    fn send(&mut self, bytes: &[u8]) -> io::Result<()>;
    /// Read what has arrived, waiting at most `wait`; `Ok(0)` when nothing came.
    fn recv(&mut self, buf: &mut [u8], wait: Duration) -> io::Result<usize>;
    /// Drop bytes that arrived and were not read.
    fn clear_input(&mut self) -> io::Result<()>;
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
