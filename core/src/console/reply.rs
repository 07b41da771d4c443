//! The reply writer: bounded data lines, then exactly one status line.

use core::fmt::{self, Write as _};

use embedded_io::Write;

use super::parse::Mode;
use super::{Code, WriteError, MAX_DATA_LINES, MAX_OUT_LINE};

/// Text of at most one output line; longer text is cut at a character boundary.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Text(pub heapless::String<MAX_OUT_LINE>, bool);

impl fmt::Write for Text {
    fn write_str(&mut self, s: &str) -> fmt::Result {
        for c in s.chars() {
            // Output stays printable: control characters become spaces.
            let c = if c.is_control() { ' ' } else { c };
            if self.0.push(c).is_err() {
                self.1 = true;
                break;
            }
        }
        Ok(())
    }
}

impl Text {
    /// Formatted text, cut to one output line.
    pub fn of(args: fmt::Arguments<'_>) -> Text {
        let mut t = Text::default();
        let _ = t.write_fmt(args);
        t
    }

    /// Text was cut off at the line limit.
    pub fn was_cut(&self) -> bool {
        self.1
    }

    /// The text.
    pub fn as_str(&self) -> &str {
        self.0.as_str()
    }
}

/// A failed command: the status line's code and text.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Fail {
    /// Error code.
    pub code: Code,
    /// What went wrong.
    pub text: Text,
}

impl Fail {
    /// A failure with formatted text.
    pub fn new(code: Code, args: fmt::Arguments<'_>) -> Fail {
        Fail {
            code,
            text: Text::of(args),
        }
    }
}

/// What a command ends with: `ok` with optional text, or a failure.
pub type Outcome = Result<Option<Text>, Fail>;

/// Write every byte; a write of zero bytes is an error at once (never a retry loop).
pub fn write_all<W: Write>(out: &mut W, mut bytes: &[u8]) -> Result<(), WriteError<W::Error>> {
    while !bytes.is_empty() {
        match out.write(bytes) {
            Ok(0) => return Err(WriteError::Zero),
            Ok(n) => bytes = bytes.get(n..).unwrap_or(&[]),
            Err(e) => return Err(WriteError::Io(e)),
        }
    }
    Ok(())
}

/// Data lines of one reply.
pub struct Reply<'w, W: Write> {
    out: &'w mut W,
    mode: Mode,
    lines: usize,
    cut: bool,
    error: Option<WriteError<W::Error>>,
}

impl<'w, W: Write> Reply<'w, W> {
    /// A reply in `mode` on `out`.
    pub fn new(out: &'w mut W, mode: Mode) -> Self {
        Self {
            out,
            mode,
            lines: 0,
            cut: false,
            error: None,
        }
    }

    /// The data-line style.
    pub fn mode(&self) -> Mode {
        self.mode
    }

    /// Data lines (`machine`) or text for a person (`human`).
    pub fn machine(&self) -> bool {
        self.mode == Mode::Machine
    }

    fn emit(&mut self, bytes: &[u8]) {
        if self.error.is_none() {
            if let Err(e) = write_all(self.out, bytes) {
                self.error = Some(e);
            }
        }
    }

    fn put(&mut self, indent: bool, args: fmt::Arguments<'_>) {
        if self.lines >= MAX_DATA_LINES {
            self.cut = true;
            return;
        }
        let mut t = Text::default();
        if indent && self.mode == Mode::Human {
            let _ = t.write_str("  ");
        }
        let _ = t.write_fmt(args);
        self.cut |= t.was_cut();
        let s = t.as_str();
        // A data line never looks like a status line.
        if s == "ok" || s.starts_with("ok ") || s.starts_with("err") {
            let mut u = Text::default();
            let _ = write!(u, "  {s}");
            t = u;
        }
        self.lines += 1;
        let line = t;
        self.emit(line.as_str().as_bytes());
        self.emit(b"\r\n");
    }

    /// Note that part of the reply was left out at the size limit (the status says so).
    pub fn mark_cut(&mut self) {
        self.cut = true;
    }

    /// One data line (indented by two spaces in human mode).
    pub fn data(&mut self, args: fmt::Arguments<'_>) {
        self.put(true, args);
    }

    /// One data line exactly as given (the identification line).
    pub fn raw(&mut self, args: fmt::Arguments<'_>) {
        self.put(false, args);
    }

    /// Write the status line of `outcome` and flush; the first write error of the reply.
    pub fn finish(mut self, outcome: &Outcome) -> Result<(), WriteError<W::Error>> {
        let mut t = Text::default();
        match outcome {
            Ok(None) => {
                let _ = t.write_str("ok");
                if self.cut {
                    let _ = t.write_str(" (reply cut at the size limit)");
                }
            }
            Ok(Some(text)) => {
                let _ = write!(t, "ok {}", text.as_str());
            }
            Err(f) => {
                let _ = write!(t, "err {} {}", f.code.name(), f.text.as_str());
            }
        }
        self.emit(t.as_str().as_bytes());
        self.emit(b"\r\n");
        if self.error.is_none() {
            if let Err(e) = self.out.flush() {
                self.error = Some(WriteError::Io(e));
            }
        }
        match self.error {
            Some(e) => Err(e),
            None => Ok(()),
        }
    }
}
