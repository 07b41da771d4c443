//! Line assembly in a fixed buffer, in the shape of an accumulator.
//!
//! [`LineBuf::feed`] takes the bytes that arrived and says what happened: everything was taken
//! and the line is not finished yet, the line outgrew the buffer (the rest of it up to the next
//! line end is then discarded), or a whole line is ready, with the bytes that follow it.
//!
//! CR, LF and CRLF end a line; a CRLF is one line end, not an empty line between. With editing on
//! (the console's echo), backspace (0x08) and delete (0x7f) remove the last character. Any other
//! control byte (0x00 ..= 0x1f except CR and LF, and 0x7f with editing off) makes the line an
//! error, reported when the line ends; so does text that is not UTF-8. Nothing here panics and
//! the buffer never holds more than `N` bytes.

/// Why a finished line cannot be read as a command.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum LineError {
    /// The line held a control byte (its value is the first one seen).
    Control(u8),
    /// The line is not valid UTF-8.
    Encoding,
}

impl core::fmt::Display for LineError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        match self {
            Self::Control(b) => write!(f, "control byte 0x{b:02x} in the line"),
            Self::Encoding => f.write_str("the line is not UTF-8 text"),
        }
    }
}

/// What one call of [`LineBuf::feed`] found.
#[derive(Debug, PartialEq, Eq)]
pub enum Feed<'b, 'i> {
    /// Every byte was taken; the line is not finished yet.
    Pending,
    /// The line grew past the buffer. It is dropped; the bytes up to the next line end will be
    /// discarded as well. `rest` are the input bytes not looked at yet.
    Overfull {
        /// Input bytes after the one that overflowed.
        rest: &'i [u8],
    },
    /// A whole line (without its line end), and the input bytes after its line end.
    Line {
        /// The line's text, or why it is not usable.
        line: Result<&'b str, LineError>,
        /// Input bytes after the line end.
        rest: &'i [u8],
    },
}

/// A line assembler holding at most `N` bytes of one line.
#[derive(Debug, Clone)]
pub struct LineBuf<const N: usize> {
    buf: [u8; N],
    len: usize,
    /// The last line ended with CR: a following LF belongs to that line end.
    after_cr: bool,
    /// The line overflowed: discard up to the next line end.
    discarding: bool,
    /// First control byte seen in this line.
    control: Option<u8>,
    /// Backspace and delete edit the line.
    editing: bool,
}

impl<const N: usize> Default for LineBuf<N> {
    fn default() -> Self {
        Self::new()
    }
}

impl<const N: usize> LineBuf<N> {
    /// An empty assembler, editing off.
    pub const fn new() -> Self {
        Self {
            buf: [0; N],
            len: 0,
            after_cr: false,
            discarding: false,
            control: None,
            editing: false,
        }
    }

    /// Let backspace and delete edit the line (on while the console echoes).
    pub fn set_editing(&mut self, on: bool) {
        self.editing = on;
    }

    /// Bytes held for the unfinished line.
    pub fn len(&self) -> usize {
        self.len
    }

    /// No bytes held.
    pub fn is_empty(&self) -> bool {
        self.len == 0
    }

    /// The assembler is discarding the rest of an over-full line.
    pub fn is_discarding(&self) -> bool {
        self.discarding
    }

    /// Something of an unfinished line is held or being discarded (for end of input).
    pub fn has_partial(&self) -> bool {
        self.len > 0 || self.control.is_some()
    }

    /// Forget everything held (a new session).
    pub fn clear(&mut self) {
        self.len = 0;
        self.after_cr = false;
        self.discarding = false;
        self.control = None;
    }

    /// Take bytes; see [`Feed`].
    pub fn feed<'b, 'i>(&'b mut self, input: &'i [u8]) -> Feed<'b, 'i> {
        let mut rest = input;
        while let Some((&byte, tail)) = rest.split_first() {
            rest = tail;
            let after_cr = core::mem::replace(&mut self.after_cr, false);
            match byte {
                b'\n' if after_cr => {}
                b'\r' | b'\n' => {
                    self.after_cr = byte == b'\r';
                    if self.discarding {
                        self.discarding = false;
                        self.len = 0;
                        self.control = None;
                        continue;
                    }
                    return Feed::Line {
                        line: self.take(),
                        rest,
                    };
                }
                _ if self.discarding => {}
                0x08 | 0x7f if self.editing => self.backspace(),
                0x00..=0x1f | 0x7f => {
                    self.control.get_or_insert(byte);
                }
                _ => {
                    if let Some(slot) = self.buf.get_mut(self.len) {
                        *slot = byte;
                        self.len += 1;
                    } else {
                        self.discarding = true;
                        self.len = 0;
                        self.control = None;
                        return Feed::Overfull { rest };
                    }
                }
            }
        }
        Feed::Pending
    }

    /// End of input: the unfinished line, if any, as if its line end had come.
    pub fn finish(&mut self) -> Option<Result<&str, LineError>> {
        let partial = self.has_partial() && !self.discarding;
        self.discarding = false;
        self.after_cr = false;
        if partial {
            Some(self.take())
        } else {
            self.clear();
            None
        }
    }

    /// Remove the last character (all bytes of a UTF-8 sequence).
    fn backspace(&mut self) {
        while let Some(last) = self.len.checked_sub(1) {
            self.len = last;
            match self.buf.get(last) {
                Some(b) if (b & 0xc0) == 0x80 => continue,
                _ => break,
            }
        }
    }

    /// The finished line; the buffer is empty for the next one.
    fn take(&mut self) -> Result<&str, LineError> {
        let len = core::mem::replace(&mut self.len, 0);
        if let Some(b) = self.control.take() {
            return Err(LineError::Control(b));
        }
        let bytes = self.buf.get(..len).unwrap_or(&[]);
        core::str::from_utf8(bytes).map_err(|_| LineError::Encoding)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn lines(input: &[u8]) -> std::vec::Vec<std::string::String> {
        let mut lb = LineBuf::<8>::new();
        let mut out = std::vec::Vec::new();
        let mut rest = input;
        loop {
            match lb.feed(rest) {
                Feed::Pending => break,
                Feed::Overfull { rest: r } => {
                    out.push("<long>".into());
                    rest = r;
                }
                Feed::Line { line, rest: r } => {
                    out.push(match line {
                        Ok(s) => s.into(),
                        Err(e) => std::format!("<{e:?}>"),
                    });
                    rest = r;
                }
            }
        }
        out
    }

    #[test]
    fn line_ends() {
        assert_eq!(lines(b"a\rb\nc\r\nd\n\n"), ["a", "b", "c", "d", ""]);
        assert_eq!(lines(b"\r\n\r\n"), ["", ""]);
        assert_eq!(lines(b"\n\r"), ["", ""]);
    }

    #[test]
    fn overfull_is_discarded_whole() {
        assert_eq!(lines(b"123456789abc\nok\n"), ["<long>", "ok"]);
        assert_eq!(lines(b"12345678\n"), ["12345678"]);
    }

    #[test]
    fn control_and_encoding() {
        assert_eq!(lines(b"a\x01b\n"), ["<Control(1)>"]);
        assert_eq!(lines(b"a\x08\n"), ["<Control(8)>"]);
        assert_eq!(lines(b"\xff\n"), ["<Encoding>"]);
        assert_eq!(lines("µ\n".as_bytes()), ["µ"]);
    }

    #[test]
    fn backspace_edits_when_on() {
        let mut lb = LineBuf::<8>::new();
        lb.set_editing(true);
        let input = "aµ\x08\x08b\x7fc\n".as_bytes();
        match lb.feed(input) {
            Feed::Line { line, rest } => {
                assert_eq!(line, Ok("c"));
                assert!(rest.is_empty());
            }
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn split_crlf_across_feeds() {
        let mut lb = LineBuf::<8>::new();
        assert!(matches!(lb.feed(b"x\r"), Feed::Line { line: Ok("x"), .. }));
        assert_eq!(lb.feed(b"\n"), Feed::Pending);
        assert!(matches!(lb.feed(b"\n"), Feed::Line { line: Ok(""), .. }));
    }
}
