//! The byte router: each serial byte goes to the core console or to a `fw:` query line.
//!
//! A line that starts with `fw:` (any case) is a firmware query: its bytes are assembled by the
//! core's line assembler ([`LineBuf`]), with the console's framing (CR, LF and CR LF end it;
//! backspace edits it while the console echoes; a control byte or text that is not UTF-8 is
//! refused with `err CONTROL` or `err ENCODING`; a line longer than [`FW_LINE`] bytes gets
//! `err TOO_LONG` at once and is discarded up to its end). Every other byte goes straight on to
//! the core console, so its own framing holds for every other line. Only the first three bytes
//! of a line are held back until they are known not to be `fw:`.
use super::queries::{say, FW_LINE};
use super::{App, Board};
use crate::cost::Ticks;
use crate::jig::FirmwareJig;
use biasjig_core::console::line::{Feed, LineBuf, LineError};
use biasjig_core::console::{Clock, Store};
use embedded_io::Write;

/// The prefix of a firmware query line (matched in any case).
const FW: &[u8; 3] = b"fw:";

/// Where the bytes of the current line go.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum State {
    /// `n` bytes of a line matched `fw:` so far (held back).
    Prefix(usize),
    /// A console line: bytes go through.
    Console,
    /// A firmware query line: bytes go to the query's line assembler.
    Query,
}

/// The router's state between bytes.
pub(super) struct Router {
    state: State,
    held: [u8; 3],
    /// After a firmware query ended with CR: an LF right after belongs to it.
    after_query_cr: bool,
    /// The last byte the console took was a CR: an LF next belongs to that line end (the
    /// console's own view; query lines in between do not reach it).
    after_console_cr: bool,
    /// The firmware query line.
    query: LineBuf<FW_LINE>,
    /// First word of the console line, lower case (to know a `test` or `check` line).
    word: heapless::Vec<u8, 8>,
    /// The first word is complete (a space came, or it outgrew `word`).
    word_done: bool,
}

impl Router {
    pub(super) const fn new() -> Self {
        Router {
            state: State::Prefix(0),
            held: [0; 3],
            after_query_cr: false,
            after_console_cr: false,
            query: LineBuf::new(),
            word: heapless::Vec::new(),
            word_done: false,
        }
    }

    /// Notes a byte of the console line's first word.
    fn note_word(&mut self, b: u8) {
        if self.word_done {
            return;
        }
        if b == b' ' {
            self.word_done = !self.word.is_empty();
        } else if self.word.push(b.to_ascii_lowercase()).is_err() {
            self.word_done = true;
        }
    }

    /// The console line that just ended was `test` or `check` (a check that draws the screen);
    /// the first word is forgotten for the next line.
    fn take_check_word(&mut self) -> bool {
        let check = matches!(self.word.as_slice(), b"test" | b"check");
        self.word.clear();
        self.word_done = false;
        check
    }
}

/// The console's echo of one byte of a query line: a line end as CR LF, backspace and delete
/// as rubbing out, no other control byte. (The LF of a CR LF never comes here: the router
/// takes it.)
fn echo_of(b: &u8) -> &[u8] {
    match *b {
        b'\r' | b'\n' => b"\r\n",
        0x08 | 0x7f => b"\x08 \x08",
        0x00..=0x1f => b"",
        _ => core::slice::from_ref(b),
    }
}

impl<J: FirmwareJig, S: Store, C: Clock, B: Board, T: Ticks> App<'_, J, S, C, B, T> {
    /// Feeds one byte; answers when it ends a line.
    pub fn feed<W: Write>(&mut self, b: u8, out: &mut W) -> Result<(), W::Error> {
        if core::mem::take(&mut self.router.after_query_cr) && b == b'\n' {
            return Ok(());
        }
        match self.router.state {
            State::Prefix(n) => {
                if FW.get(n) == Some(&b.to_ascii_lowercase()) {
                    if let Some(h) = self.router.held.get_mut(n) {
                        *h = b;
                    }
                    if n + 1 == FW.len() {
                        self.router.state = State::Query;
                        self.router.query.clear();
                        if self.console.echo() {
                            out.write_all(&self.router.held)?;
                        }
                    } else {
                        self.router.state = State::Prefix(n + 1);
                    }
                    return Ok(());
                }
                self.router.state = State::Console;
                let held = self.router.held;
                for &h in held.get(..n).unwrap_or(&[]) {
                    self.console_byte(h, out)?;
                }
                self.console_byte(b, out)
            }
            State::Console => self.console_byte(b, out),
            State::Query => self.query_byte(b, out),
        }
    }

    /// A byte of a console line. The LF of a CR LF goes to the console too (it takes it as part
    /// of that line end), but it ends no line here: it is not timed and not followed.
    fn console_byte<W: Write>(&mut self, b: u8, out: &mut W) -> Result<(), W::Error> {
        let after_cr = core::mem::take(&mut self.router.after_console_cr);
        let end = b == b'\r' || b == b'\n';
        if end {
            self.router.state = State::Prefix(0);
            self.router.after_console_cr = b == b'\r';
        } else {
            self.router.note_word(b);
        }
        let line_end = end && !(after_cr && b == b'\n');
        self.replies
            .feed(self.console, core::slice::from_ref(&b), out, line_end)?;
        if line_end {
            self.after_line();
        }
        Ok(())
    }

    /// A byte of a firmware query line.
    fn query_byte<W: Write>(&mut self, b: u8, out: &mut W) -> Result<(), W::Error> {
        let echo = self.console.echo();
        let end = b == b'\r' || b == b'\n';
        if echo {
            out.write_all(echo_of(&b))?;
        }
        self.router.query.set_editing(echo);
        let discarding = self.router.query.is_discarding();
        let line = match self.router.query.feed(core::slice::from_ref(&b)) {
            Feed::Pending => {
                if discarding && end {
                    // The rest of an over-long query line ended.
                    self.end_query(b);
                }
                return Ok(());
            }
            Feed::Overfull { .. } => {
                return say(
                    out,
                    format_args!("err TOO_LONG firmware query longer than {FW_LINE} bytes\r\n"),
                );
            }
            Feed::Line { line, .. } => line,
        };
        // The query's text is copied out of the assembler, which `fw_query` may not borrow.
        let text: Result<heapless::String<FW_LINE>, LineError> =
            line.map(|s| heapless::String::try_from(s).unwrap_or_default());
        self.end_query(b);
        match text {
            Ok(q) => self.fw_query(&q, out),
            Err(e) => {
                let code = match e {
                    LineError::Encoding => "ENCODING",
                    _ => "CONTROL",
                };
                say(out, format_args!("err {code} {e}\r\n"))
            }
        }
    }

    fn end_query(&mut self, b: u8) {
        self.router.state = State::Prefix(0);
        self.router.after_query_cr = b == b'\r';
    }

    /// After a console line: the jig follows the design; a check draws the verdict screen.
    fn after_line(&mut self) {
        self.follow(false);
        if self.router.take_check_word() && self.replies.ok() {
            self.show_verdict();
        }
    }
}
