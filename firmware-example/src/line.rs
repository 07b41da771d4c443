//! Line assembly from a byte stream.
//!
//! A line ends at CR, LF or CRLF (the LF right after a CR is swallowed, so CRLF is one ending).
//! Lines longer than the buffer are not cut into pieces: the rest of such a line is dropped and
//! its ending reports [`LineEvent::Overlong`] once.

/// What one input byte completed.
#[derive(Debug, PartialEq, Eq)]
pub enum LineEvent<'a> {
    /// A complete line, without its ending.
    Line(&'a [u8]),
    /// A line that did not fit the buffer has ended.
    Overlong,
}

/// Fixed-size line buffer of `N` bytes.
pub struct LineAssembler<const N: usize> {
    buf: [u8; N],
    len: usize,
    overflowed: bool,
    last_was_cr: bool,
}

impl<const N: usize> Default for LineAssembler<N> {
    fn default() -> Self {
        Self::new()
    }
}

impl<const N: usize> LineAssembler<N> {
    /// An empty assembler.
    pub const fn new() -> Self {
        LineAssembler {
            buf: [0; N],
            len: 0,
            overflowed: false,
            last_was_cr: false,
        }
    }

    /// Longest line that fits, in bytes.
    pub const fn capacity(&self) -> usize {
        N
    }

    /// Feeds one byte; returns an event when it ended a line.
    pub fn push(&mut self, byte: u8) -> Option<LineEvent<'_>> {
        let after_cr = core::mem::replace(&mut self.last_was_cr, byte == b'\r');
        match byte {
            b'\n' if after_cr => None,
            b'\r' | b'\n' => {
                let len = core::mem::take(&mut self.len);
                if core::mem::take(&mut self.overflowed) {
                    Some(LineEvent::Overlong)
                } else {
                    Some(LineEvent::Line(self.buf.get(..len).unwrap_or(&[])))
                }
            }
            _ => {
                if self.overflowed {
                    return None;
                }
                match self.buf.get_mut(self.len) {
                    Some(slot) => {
                        *slot = byte;
                        self.len += 1;
                    }
                    None => {
                        self.overflowed = true;
                        self.len = 0;
                    }
                }
                None
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn feed<const N: usize>(a: &mut LineAssembler<N>, input: &[u8]) -> Vec<Result<Vec<u8>, ()>> {
        let mut out = Vec::new();
        for &b in input {
            match a.push(b) {
                Some(LineEvent::Line(l)) => out.push(Ok(l.to_vec())),
                Some(LineEvent::Overlong) => out.push(Err(())),
                None => {}
            }
        }
        out
    }

    #[test]
    fn endings_cr_lf_crlf() {
        let mut a = LineAssembler::<16>::new();
        let ev = feed(&mut a, b"a\rb\nc\r\n\r\n\n");
        assert_eq!(
            ev,
            vec![
                Ok(b"a".to_vec()),
                Ok(b"b".to_vec()),
                Ok(b"c".to_vec()),
                Ok(vec![]),
                Ok(vec![])
            ]
        );
    }

    #[test]
    fn lf_after_cr_only_once() {
        let mut a = LineAssembler::<16>::new();
        assert_eq!(feed(&mut a, b"\r\n\n"), vec![Ok(vec![]), Ok(vec![])]);
    }

    #[test]
    fn overlong_reports_once_then_recovers() {
        let mut a = LineAssembler::<4>::new();
        let ev = feed(&mut a, b"abcd\nabcde\r\nok\n");
        assert_eq!(ev, vec![Ok(b"abcd".to_vec()), Err(()), Ok(b"ok".to_vec())]);
        assert_eq!(a.capacity(), 4);
    }
}
