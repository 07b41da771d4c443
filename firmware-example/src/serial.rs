//! `embedded-io` 0.7 over a non-blocking UART.
//!
//! [`NbSerial`] wraps anything that implements `embedded_hal_nb::serial::{Read, Write}` for bytes
//! (the HAL's `Serial`, or the emulated image's raw USART1) and gives the blocking byte-stream
//! traits the console engine works with:
//!
//! - [`embedded_io::Read::read`] blocks until at least one byte is there, then takes whatever else
//!   is already waiting without blocking again;
//! - [`embedded_io::Write::write`] blocks per byte, but gives up with [`SerialError::Timeout`] when
//!   the transmitter stays busy for more than a bounded number of polls;
//! - [`embedded_io::ReadReady::read_ready`] polls once, keeping a received byte for the next read,
//!   so a main loop can serve other inputs (a button) between lines.
use embedded_hal_nb::nb;
use embedded_hal_nb::serial::{self, ErrorKind as NbKind};

/// Polls of a busy transmitter before a write gives up. At 115200 baud one byte takes about
/// 87 µs; a loop of a few cycles per poll at 100 MHz makes this bound several milliseconds.
pub const DEFAULT_WRITE_POLLS: u32 = 200_000;

/// What went wrong on the serial line.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SerialError {
    /// A received byte was lost because the previous one was not read in time.
    Overrun,
    /// Framing error (wrong baud rate, line break).
    Framing,
    /// Parity error.
    Parity,
    /// Noise detected on the line.
    Noise,
    /// The transmitter stayed busy longer than the bounded wait.
    Timeout,
    /// Anything else the UART reported.
    Other,
}

impl core::fmt::Display for SerialError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        let s = match self {
            SerialError::Overrun => "receive overrun",
            SerialError::Framing => "framing error",
            SerialError::Parity => "parity error",
            SerialError::Noise => "noise on line",
            SerialError::Timeout => "transmitter timeout",
            SerialError::Other => "serial error",
        };
        f.write_str(s)
    }
}

impl core::error::Error for SerialError {}

impl embedded_io::Error for SerialError {
    fn kind(&self) -> embedded_io::ErrorKind {
        match self {
            SerialError::Timeout => embedded_io::ErrorKind::TimedOut,
            SerialError::Overrun
            | SerialError::Framing
            | SerialError::Parity
            | SerialError::Noise => embedded_io::ErrorKind::InvalidData,
            SerialError::Other => embedded_io::ErrorKind::Other,
        }
    }
}

fn map_error<E: serial::Error>(e: E) -> SerialError {
    match e.kind() {
        NbKind::Overrun => SerialError::Overrun,
        NbKind::FrameFormat => SerialError::Framing,
        NbKind::Parity => SerialError::Parity,
        NbKind::Noise => SerialError::Noise,
        _ => SerialError::Other,
    }
}

/// Blocking `embedded-io` byte stream over a non-blocking UART.
pub struct NbSerial<S> {
    inner: S,
    pending: Option<u8>,
    write_polls: u32,
}

impl<S> NbSerial<S> {
    /// Wraps a UART with the default bounded write wait.
    pub fn new(inner: S) -> Self {
        Self::with_write_polls(inner, DEFAULT_WRITE_POLLS)
    }

    /// Wraps a UART; a write gives up after `write_polls` polls of a busy transmitter.
    pub fn with_write_polls(inner: S, write_polls: u32) -> Self {
        NbSerial {
            inner,
            pending: None,
            write_polls: write_polls.max(1),
        }
    }

    /// The wrapped UART.
    pub fn inner_mut(&mut self) -> &mut S {
        &mut self.inner
    }
}

impl<S> embedded_io::ErrorType for NbSerial<S> {
    type Error = SerialError;
}

impl<S: serial::Read<u8>> embedded_io::Read for NbSerial<S> {
    fn read(&mut self, buf: &mut [u8]) -> Result<usize, SerialError> {
        let Some((first, rest)) = buf.split_first_mut() else {
            return Ok(0);
        };
        *first = match self.pending.take() {
            Some(b) => b,
            None => loop {
                match self.inner.read() {
                    Ok(b) => break b,
                    Err(nb::Error::WouldBlock) => core::hint::spin_loop(),
                    Err(nb::Error::Other(e)) => return Err(map_error(e)),
                }
            },
        };
        let mut n = 1;
        for slot in rest.iter_mut() {
            match self.inner.read() {
                Ok(b) => {
                    *slot = b;
                    n += 1;
                }
                // An error after the first byte is left for the UART to clear; what was read stands.
                Err(_) => break,
            }
        }
        Ok(n)
    }
}

impl<S: serial::Read<u8>> embedded_io::ReadReady for NbSerial<S> {
    fn read_ready(&mut self) -> Result<bool, SerialError> {
        if self.pending.is_some() {
            return Ok(true);
        }
        match self.inner.read() {
            Ok(b) => {
                self.pending = Some(b);
                Ok(true)
            }
            Err(nb::Error::WouldBlock) => Ok(false),
            Err(nb::Error::Other(e)) => Err(map_error(e)),
        }
    }
}

impl<S: serial::Write<u8>> NbSerial<S> {
    /// Polls `op` until it is done: gives up with [`SerialError::Timeout`] after `write_polls`
    /// polls of a busy transmitter.
    fn bounded(
        &mut self,
        mut op: impl FnMut(&mut S) -> nb::Result<(), S::Error>,
    ) -> Result<(), SerialError> {
        let mut polls = 0u32;
        loop {
            match op(&mut self.inner) {
                Ok(()) => return Ok(()),
                Err(nb::Error::WouldBlock) => {
                    polls += 1;
                    if polls >= self.write_polls {
                        return Err(SerialError::Timeout);
                    }
                    core::hint::spin_loop();
                }
                Err(nb::Error::Other(e)) => return Err(map_error(e)),
            }
        }
    }
}

impl<S: serial::Write<u8>> embedded_io::Write for NbSerial<S> {
    fn write(&mut self, buf: &[u8]) -> Result<usize, SerialError> {
        for &b in buf {
            self.bounded(|s| s.write(b))?;
        }
        Ok(buf.len())
    }

    fn flush(&mut self) -> Result<(), SerialError> {
        self.bounded(|s| s.flush())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use embedded_io::{Read, ReadReady, Write};
    use std::collections::VecDeque;

    #[derive(Debug)]
    struct MockErr(NbKind);
    impl serial::Error for MockErr {
        fn kind(&self) -> NbKind {
            self.0
        }
    }

    /// Input script: `Some(b)` delivers a byte, `None` is one "not yet" poll.
    #[derive(Default)]
    struct Mock {
        rx: VecDeque<Option<u8>>,
        tx: Vec<u8>,
        tx_busy_polls: u32,
        busy_left: u32,
        overrun_next: bool,
    }
    impl Mock {
        /// A transmitter busy for `polls` polls before each byte.
        fn busy_for(polls: u32) -> Self {
            Mock {
                tx_busy_polls: polls,
                busy_left: polls,
                ..Mock::default()
            }
        }
    }

    impl serial::ErrorType for Mock {
        type Error = MockErr;
    }
    impl serial::Read<u8> for Mock {
        fn read(&mut self) -> nb::Result<u8, MockErr> {
            if self.overrun_next {
                self.overrun_next = false;
                return Err(nb::Error::Other(MockErr(NbKind::Overrun)));
            }
            match self.rx.pop_front() {
                Some(Some(b)) => Ok(b),
                _ => Err(nb::Error::WouldBlock),
            }
        }
    }
    impl serial::Write<u8> for Mock {
        fn write(&mut self, b: u8) -> nb::Result<(), MockErr> {
            if self.busy_left > 0 {
                self.busy_left -= 1;
                return Err(nb::Error::WouldBlock);
            }
            self.busy_left = self.tx_busy_polls;
            self.tx.push(b);
            Ok(())
        }
        fn flush(&mut self) -> nb::Result<(), MockErr> {
            Ok(())
        }
    }

    #[test]
    fn read_blocks_for_first_byte_then_takes_what_is_waiting() {
        let mut m = Mock::default();
        m.rx.extend([None, None, Some(b'a'), Some(b'b'), None, Some(b'c')]);
        let mut s = NbSerial::new(m);
        let mut buf = [0u8; 8];
        assert_eq!(s.read(&mut buf).unwrap(), 2);
        assert_eq!(&buf[..2], b"ab");
        assert_eq!(s.read(&mut buf).unwrap(), 1);
        assert_eq!(buf[0], b'c');
        assert_eq!(s.read(&mut []).unwrap(), 0);
    }

    #[test]
    fn read_ready_keeps_the_byte() {
        let mut m = Mock::default();
        m.rx.extend([None, Some(b'x')]);
        let mut s = NbSerial::new(m);
        assert!(!s.read_ready().unwrap());
        assert!(s.read_ready().unwrap());
        assert!(s.read_ready().unwrap());
        let mut buf = [0u8; 4];
        assert_eq!(s.read(&mut buf).unwrap(), 1);
        assert_eq!(buf[0], b'x');
    }

    #[test]
    fn read_error_maps() {
        let mut s = NbSerial::new(Mock {
            overrun_next: true,
            ..Mock::default()
        });
        let mut buf = [0u8; 4];
        assert_eq!(s.read(&mut buf), Err(SerialError::Overrun));
        assert_eq!(
            embedded_io::Error::kind(&SerialError::Overrun),
            embedded_io::ErrorKind::InvalidData
        );
    }

    #[test]
    fn write_waits_per_byte_within_bound() {
        let mut s = NbSerial::with_write_polls(Mock::busy_for(3), 10);
        s.write_all(b"ok\r\n").unwrap();
        s.flush().unwrap();
        assert_eq!(s.inner_mut().tx, b"ok\r\n");
    }

    #[test]
    fn write_times_out_on_a_stuck_transmitter() {
        let mut s = NbSerial::with_write_polls(Mock::busy_for(100), 10);
        assert_eq!(s.write(b"x"), Err(SerialError::Timeout));
    }
}
