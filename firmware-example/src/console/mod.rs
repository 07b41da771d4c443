//! The application loop around the core console engine.
//!
//! [`App`] takes the serial bytes one at a time. A line that starts with `fw:` is a firmware
//! query (stack, cost, screen, measure, emulated board) and is answered here; every other byte
//! goes straight on to the core [`Console`] (`Console::feed`), so the console's own framing
//! holds for every other line: echo and line editing, `err TOO_LONG`, `err CONTROL`,
//! `err ENCODING`, CR / LF / CR LF. Only the first three bytes of a line are held back until
//! they are known not to be `fw:`.
//!
//! Around each console line the app
//! - times the command with a [`CostMeter`] (the reply is buffered in RAM, [`OUT_BUF`] bytes, so
//!   the figure counts computing, not the serial line, unless the reply is longer);
//! - reads the reply lines as they pass ([`Scan`]): after `test` or `check` the verdict screen is
//!   drawn from the console's own machine-mode lines (`verdict=`, `node= ... ok=0`, `fault=`), so
//!   the screen and the serial reply have one source. In human mode the app asks the console
//!   `diagnose` once more in machine mode, silently, and draws from that;
//! - lets the jig follow the console's design when its hash or ambient changed
//!   ([`FirmwareJig::follow`]).
//!
//! Firmware queries (each answered with data lines, then `ok` or `err CODE text`):
//! `fw:stack?` (`stack USED SIZE`, bytes), `fw:cost?` (`cost TICKS` of the last console
//! command, and `instructions=N` where the board measured its tick rate), `fw:measure?` (`VCC 12.000` ... `VC 6.800`, also drawn on the screen),
//! `fw:screen?` (the screen as text art), `fw:clock?` (`clock instructions= ticks=`: a known
//! loop timed at start-up, relating cost ticks to instructions under QEMU), `fw:board?` (the emulated board:
//! `seed= fault= vcc= r1= r2= rc= re1= re2= beta=`), `fw:board SEED` (draw another board).
use crate::button::Press;
use crate::cost::{CostMeter, Ticks};
use crate::jig::{reading, FirmwareJig};
use crate::screen::{DesignScreen, Verdict, VerdictScreen};
use biasjig_core::console::parse::Mode;
use biasjig_core::console::{Channel, Clock, Console, JigError, Store};
use biasjig_core::explain::FaultWords;
use biasjig_core::stage::{Fault, Readings, Resistor};
use biasjig_core::units::{Fixed, Full};
use embedded_io::{ErrorType, Read, Write};

/// Longest `fw:` query line, bytes.
pub const FW_LINE: usize = 64;
/// Reply buffer, bytes: a reply up to this size is sent after the cost counter stopped.
pub const OUT_BUF: usize = 1024;

/// Formats into a stack buffer (cut at `N` bytes) and writes it.
fn say<W: Write>(out: &mut W, args: core::fmt::Arguments<'_>) -> Result<(), W::Error> {
    let mut buf = FmtBuf::<200>::new();
    let _ = core::fmt::Write::write_fmt(&mut buf, args);
    out.write_all(buf.as_bytes())
}

/// A fixed buffer for `core::fmt`; text past its end is dropped.
#[derive(Debug, Clone)]
pub struct FmtBuf<const N: usize> {
    buf: [u8; N],
    len: usize,
}

impl<const N: usize> FmtBuf<N> {
    /// An empty buffer.
    pub const fn new() -> Self {
        FmtBuf {
            buf: [0; N],
            len: 0,
        }
    }
    /// What was written.
    pub fn as_bytes(&self) -> &[u8] {
        self.buf.get(..self.len).unwrap_or(&[])
    }
    /// What was written, as text (cut back to the last whole character).
    pub fn as_str(&self) -> &str {
        match core::str::from_utf8(self.as_bytes()) {
            Ok(s) => s,
            Err(e) => {
                core::str::from_utf8(self.buf.get(..e.valid_up_to()).unwrap_or(&[])).unwrap_or("")
            }
        }
    }
    /// Forget what was written.
    pub fn clear(&mut self) {
        self.len = 0;
    }
}

impl<const N: usize> Default for FmtBuf<N> {
    fn default() -> Self {
        Self::new()
    }
}

impl<const N: usize> core::fmt::Write for FmtBuf<N> {
    fn write_str(&mut self, s: &str) -> core::fmt::Result {
        let room = N - self.len;
        let n = s.len().min(room);
        if let (Some(dst), Some(src)) = (
            self.buf.get_mut(self.len..self.len + n),
            s.as_bytes().get(..n),
        ) {
            dst.copy_from_slice(src);
            self.len += n;
        }
        if n < s.len() {
            Err(core::fmt::Error)
        } else {
            Ok(())
        }
    }
}

/// What the board shows.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Show<'a> {
    /// The verdict of a check.
    Verdict(VerdictScreen<'a>),
    /// A plain measurement, or why it failed.
    Measured(Result<Readings, JigError>),
    /// The kept design now chosen.
    Design(DesignScreen<'a>),
    /// A large title and a short text.
    Message(&'a str, &'a str),
}

/// What the application needs from a board besides the serial line and the jig.
pub trait Board {
    /// Bytes of the stack region ever used (stack painting high-water mark).
    fn stack_used(&self) -> usize;
    /// Bytes of the stack region.
    fn stack_size(&self) -> usize;
    /// Draw on the board's screen.
    fn show(&mut self, what: &Show<'_>);
    /// Writes the screen as text art, if the board keeps a framebuffer; `Ok(false)` if not.
    fn screen_art<W: Write>(&mut self, out: &mut W) -> Result<bool, W::Error>;
    /// A measured tick rate: `(instructions, ticks)` a known loop took (`fw:clock?`), if the
    /// board measured one.
    fn tick_rate(&self) -> Option<(u64, u64)> {
        None
    }
}

/// The result of a check as read from the console's machine-mode reply lines.
#[derive(Debug, Clone, Default)]
pub struct Outcome {
    /// `verdict=pass|fail`, if seen.
    pub verdict: Option<Verdict>,
    /// The first `node=` line with `ok=0`.
    pub failing: Option<Channel>,
    /// The first `fault=` line as `PART mode` (e.g. `R1 open`), empty if none.
    pub fault: FmtBuf<32>,
    /// The status line was `ok`.
    pub ok: bool,
}

/// Reads reply lines as they are written and keeps the [`Outcome`].
pub struct Scan {
    line: [u8; 200],
    len: usize,
    /// What was found since the last [`Scan::reset`].
    pub outcome: Outcome,
}

impl Default for Scan {
    fn default() -> Self {
        Self::new()
    }
}

fn value<'a>(line: &'a str, key: &str) -> Option<&'a str> {
    line.split(' ')
        .find_map(|kv| kv.strip_prefix(key).and_then(|v| v.strip_prefix('=')))
}

impl Scan {
    /// Nothing seen.
    pub const fn new() -> Self {
        Scan {
            line: [0; 200],
            len: 0,
            outcome: Outcome {
                verdict: None,
                failing: None,
                fault: FmtBuf::new(),
                ok: false,
            },
        }
    }

    /// Forget what was seen (a new reply starts).
    pub fn reset(&mut self) {
        self.len = 0;
        self.outcome = Outcome::default();
    }

    /// Take output bytes.
    pub fn take(&mut self, bytes: &[u8]) {
        for &b in bytes {
            match b {
                b'\n' => {
                    self.end_line();
                    self.len = 0;
                }
                b'\r' => {}
                _ => {
                    if let Some(s) = self.line.get_mut(self.len) {
                        *s = b;
                        self.len += 1;
                    }
                }
            }
        }
    }

    fn end_line(&mut self) {
        let Ok(l) = core::str::from_utf8(self.line.get(..self.len).unwrap_or(&[])) else {
            return;
        };
        let o = &mut self.outcome;
        if l == "ok" || l.starts_with("ok ") {
            o.ok = true;
        } else if let Some(v) = l.strip_prefix("verdict=") {
            o.verdict = match v.split(' ').next() {
                Some("pass") => Some(Verdict::Pass),
                Some("fail") => Some(Verdict::Fail),
                _ => None,
            };
        } else if let Some(n) = l.strip_prefix("node=") {
            if o.failing.is_none() && value(l, "ok") == Some("0") {
                o.failing = n.split(' ').next().and_then(Channel::parse);
            }
        } else if let Some(p) = l.strip_prefix("fault=") {
            if o.fault.as_bytes().is_empty() {
                let part = p.split(' ').next().unwrap_or("");
                let mode = value(l, "mode").unwrap_or("");
                let _ = core::fmt::Write::write_fmt(&mut o.fault, format_args!("{part} {mode}"));
            }
        }
    }
}

/// Where a [`Tap`] sends its bytes: one object-safe seam, so the console engine is built for a
/// single writer type (the command code is large; two writer types would link it twice).
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

/// The console's writer: the reply is buffered in RAM (sent by [`Tap::flush_all`], or when the
/// buffer is full) and read by a [`Scan`] on the way; without a sink it is only scanned.
struct Tap<'a> {
    sink: Option<&'a mut dyn Sink>,
    buf: &'a mut [u8; OUT_BUF],
    len: &'a mut usize,
    scan: &'a mut Scan,
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
        self.scan.take(data);
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

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum State {
    /// `n` bytes of a line matched `fw:` so far (held back).
    Prefix(usize),
    /// A console line: bytes go through.
    Pass,
    /// A firmware query line.
    Fw,
}

const FW: &[u8; 3] = b"fw:";

/// The application: the core console, the firmware queries, the cost counter and the screen.
///
/// The console is borrowed, not owned, so that an image can keep it in static memory (built in
/// place once) instead of moving a few kilobytes through the stack at start-up.
pub struct App<'c, J: FirmwareJig, S: Store, C: Clock, B: Board, T: Ticks> {
    /// The core console engine (it owns the jig, the store and the clock).
    pub console: &'c mut Console<J, S, C>,
    board: B,
    cost: CostMeter<T>,
    state: State,
    held: [u8; 3],
    /// After a firmware query ended with CR: an LF right after belongs to it.
    after_fw_cr: bool,
    fw: [u8; FW_LINE],
    fw_len: usize,
    fw_over: bool,
    /// First word of the console line, lower case.
    word: [u8; 8],
    word_len: usize,
    word_done: bool,
    out: [u8; OUT_BUF],
    out_len: usize,
    scan: Scan,
    followed: (u64, u64),
}

impl<'c, J: FirmwareJig, S: Store, C: Clock, B: Board, T: Ticks> App<'c, J, S, C, B, T> {
    /// The application around a console; the jig follows the console's design at once.
    pub fn new(console: &'c mut Console<J, S, C>, board: B, ticks: T) -> Self {
        let mut app = App {
            console,
            board,
            cost: CostMeter::new(ticks),
            state: State::Prefix(0),
            held: [0; 3],
            after_fw_cr: false,
            fw: [0; FW_LINE],
            fw_len: 0,
            fw_over: false,
            word: [0; 8],
            word_len: 0,
            word_done: false,
            out: [0; OUT_BUF],
            out_len: 0,
            scan: Scan::new(),
            followed: (0, 0),
        };
        app.follow(true);
        app
    }

    /// The board.
    pub fn board_mut(&mut self) -> &mut B {
        &mut self.board
    }

    /// Elapsed ticks of the last console command.
    pub fn last_cost(&self) -> u32 {
        self.cost.last()
    }

    fn follow(&mut self, force: bool) {
        let key = (
            self.console.design_hash(),
            self.console.settings().temp_c.to_bits(),
        );
        if force || key != self.followed {
            self.followed = key;
            let s = *self.console.settings();
            self.console.jig.follow(&s);
        }
    }

    /// Runs `line` on the console in machine mode with its reply scanned, not sent.
    fn silent(&mut self, line: &str) -> &Outcome {
        let mode = self.console.mode();
        self.console.set_mode(Mode::Machine);
        self.scan.reset();
        let mut tap = Tap {
            sink: None,
            buf: &mut self.out,
            len: &mut self.out_len,
            scan: &mut self.scan,
        };
        // Fed as bytes (not `Console::line`) so that the engine is built for one call path.
        let _ = self.console.feed(line.as_bytes(), &mut tap);
        let _ = self.console.feed(b"\n", &mut tap);
        self.console.set_mode(mode);
        &self.scan.outcome
    }

    fn show_outcome(&mut self) {
        let o = &self.scan.outcome;
        if let (true, Some(verdict)) = (o.ok, o.verdict) {
            let mut text = FmtBuf::<96>::new();
            if verdict == Verdict::Fail {
                fault_words(&mut text, self.console);
            }
            self.board.show(&Show::Verdict(VerdictScreen {
                verdict,
                failing_node: o.failing,
                fault: text.as_str(),
            }));
        }
    }

    /// Measure and check with the console's `test` and show the verdict (a short press).
    pub fn button(&mut self) {
        self.silent("test");
        self.show_outcome();
    }

    /// A press of the button: short measures and judges, long chooses the next kept design
    /// (after the chosen one, in the order `designs` lists them) and shows it.
    pub fn press(&mut self, p: Press) {
        match p {
            Press::Short => self.button(),
            Press::Long => self.next_design(),
        }
    }

    /// The budget build keeps no designs by name: a long press says where to choose one.
    #[cfg(not(feature = "full-console"))]
    fn next_design(&mut self) {
        self.board.show(&Show::Message(
            "NOT HERE",
            "choose designs on a PC or the full image",
        ));
    }

    #[cfg(feature = "full-console")]
    fn next_design(&mut self) {
        let list = self.console.kept_designs();
        if list.is_empty() {
            self.board.show(&Show::Message(
                "NO DESIGNS",
                "keep one from the console: keep NAME",
            ));
            return;
        }
        if self.console.is_locked() {
            self.board.show(&Show::Message(
                "LOCKED",
                "unlock from the console to choose",
            ));
            return;
        }
        let chosen = self.console.chosen_design();
        let at = chosen
            .and_then(|c| list.iter().position(|k| k.name.same(&c)))
            .map_or(0, |i| (i + 1) % list.len());
        let Some(k) = list.get(at).copied() else {
            return;
        };
        let mut line = FmtBuf::<32>::new();
        let _ = core::fmt::Write::write_fmt(&mut line, format_args!("choose {}", k.name));
        let ok = self.silent(line.as_str()).ok;
        self.follow(false);
        if ok {
            self.board.show(&Show::Design(DesignScreen {
                name: k.name.as_str(),
                index: at + 1,
                count: list.len(),
                hash: k.hash,
                vcc: k.vcc,
            }));
        } else {
            self.board.show(&Show::Message(
                "NOT CHOSEN",
                "the store could not be written",
            ));
        }
    }

    /// Reads what the stream has (blocking for at least one byte) and answers every line it ends.
    pub fn poll<I: Read + Write>(&mut self, io: &mut I) -> Result<(), I::Error> {
        let mut chunk = [0u8; 32];
        let n = io.read(&mut chunk)?;
        for &b in chunk.get(..n).unwrap_or(&[]) {
            self.feed(b, io)?;
        }
        Ok(())
    }

    /// Serves the stream forever; serial errors are dropped and serving goes on.
    pub fn run<I: Read + Write>(&mut self, io: &mut I) -> ! {
        loop {
            let _ = self.poll(io);
        }
    }

    /// Feeds one byte; answers when it ends a line.
    pub fn feed<W: Write>(&mut self, b: u8, out: &mut W) -> Result<(), W::Error> {
        if core::mem::take(&mut self.after_fw_cr) && b == b'\n' {
            return Ok(());
        }
        match self.state {
            State::Prefix(n) => {
                if FW.get(n) == Some(&b.to_ascii_lowercase()) {
                    if let Some(h) = self.held.get_mut(n) {
                        *h = b;
                    }
                    if n + 1 == FW.len() {
                        self.state = State::Fw;
                        self.fw_len = 0;
                        self.fw_over = false;
                        if self.console.echo() {
                            out.write_all(&self.held)?;
                        }
                    } else {
                        self.state = State::Prefix(n + 1);
                    }
                    return Ok(());
                }
                self.state = State::Pass;
                self.word_len = 0;
                self.word_done = false;
                let held = self.held;
                for &h in held.get(..n).unwrap_or(&[]) {
                    self.pass(h, out)?;
                }
                self.pass(b, out)
            }
            State::Pass => self.pass(b, out),
            State::Fw => {
                if b == b'\r' || b == b'\n' {
                    self.state = State::Prefix(0);
                    self.after_fw_cr = b == b'\r';
                    if self.console.echo() {
                        out.write_all(b"\r\n")?;
                    }
                    let (q, over) = (self.fw, self.fw_over);
                    let len = self.fw_len;
                    self.fw_query(q.get(..len).unwrap_or(&[]), over, out)
                } else {
                    match self.fw.get_mut(self.fw_len) {
                        Some(s) => {
                            *s = b;
                            self.fw_len += 1;
                        }
                        None => self.fw_over = true,
                    }
                    if self.console.echo() {
                        out.write_all(&[b])?;
                    }
                    Ok(())
                }
            }
        }
    }

    fn pass<W: Write>(&mut self, b: u8, out: &mut W) -> Result<(), W::Error> {
        let end = b == b'\r' || b == b'\n';
        if !self.word_done && !end {
            if b == b' ' {
                self.word_done = self.word_len > 0;
            } else if let Some(w) = self.word.get_mut(self.word_len) {
                *w = b.to_ascii_lowercase();
                self.word_len += 1;
            } else {
                self.word_done = true;
            }
        }
        if end {
            self.state = State::Prefix(0);
            self.scan.reset();
            self.cost.start();
        }
        let mut sink = IoSink {
            inner: out,
            error: None,
        };
        let mut tap = Tap {
            sink: Some(&mut sink),
            buf: &mut self.out,
            len: &mut self.out_len,
            scan: &mut self.scan,
        };
        // A failed write stops the reply; the stream's own error is in the sink.
        let _ = self.console.feed(core::slice::from_ref(&b), &mut tap);
        if end {
            self.cost.stop();
        }
        let _ = tap.flush_all();
        if let Some(e) = sink.error {
            return Err(e);
        }
        if end {
            self.after_line();
        }
        Ok(())
    }

    fn after_line(&mut self) {
        self.follow(false);
        let word = self.word.get(..self.word_len).unwrap_or(&[]);
        if word == b"test" || word == b"check" {
            if self.scan.outcome.ok && self.scan.outcome.verdict.is_none() {
                // Human mode: the reply was for a person; read the console's own result again
                // in machine mode.
                self.silent("diagnose");
            }
            self.show_outcome();
        }
        self.word_len = 0;
        self.word_done = false;
    }

    fn fw_query<W: Write>(&mut self, q: &[u8], over: bool, out: &mut W) -> Result<(), W::Error> {
        let q = core::str::from_utf8(q).unwrap_or("\u{fffd}").trim();
        if over {
            return say(
                out,
                format_args!("err TOO_LONG firmware query longer than {FW_LINE} bytes\r\n"),
            );
        }
        let mut words = q.split(' ').filter(|w| !w.is_empty());
        let head = words.next().unwrap_or("");
        let is = |w: &str| head.eq_ignore_ascii_case(w);
        if is("stack?") {
            say(
                out,
                format_args!(
                    "stack {} {}\r\nok\r\n",
                    self.board.stack_used(),
                    self.board.stack_size()
                ),
            )
        } else if is("clock?") {
            match self.board.tick_rate() {
                Some((i, t)) => say(
                    out,
                    format_args!("clock instructions={i} ticks={t}\r\nok\r\n"),
                ),
                None => out.write_all(b"err NOT_SUPPORTED no tick rate measured on this unit\r\n"),
            }
        } else if is("cost?") {
            let t = self.cost.last();
            match self.board.tick_rate() {
                Some((i, r)) if r > 0 => {
                    let insns = u64::from(t) * i / r;
                    say(out, format_args!("cost {t} instructions={insns}\r\nok\r\n"))
                }
                _ => say(out, format_args!("cost {t}\r\nok\r\n")),
            }
        } else if is("measure?") {
            let r = self.console.jig.measure(16);
            self.board.show(&Show::Measured(r));
            match r {
                Ok(v) => {
                    for c in Channel::ALL {
                        say(
                            out,
                            format_args!("{} {}\r\n", label(c), Fixed(reading(&v, c), 3)),
                        )?;
                    }
                    out.write_all(b"ok\r\n")
                }
                Err(e) => say(out, format_args!("err JIG {e}\r\n")),
            }
        } else if is("screen?") {
            if self.board.screen_art(out)? {
                out.write_all(b"ok\r\n")
            } else {
                out.write_all(b"err NOT_SUPPORTED this unit keeps no framebuffer\r\n")
            }
        } else if is("press") {
            // The button path without a button: `fw:press short` or `fw:press long`.
            let p = match words.next() {
                Some(w) if w.eq_ignore_ascii_case("short") => Press::Short,
                Some(w) if w.eq_ignore_ascii_case("long") => Press::Long,
                w => {
                    return say(
                        out,
                        format_args!(
                            "err VALUE press: {}: allowed short or long\r\n",
                            w.unwrap_or("")
                        ),
                    )
                }
            };
            self.press(p);
            out.write_all(b"ok\r\n")
        } else if is("board?") || is("board") {
            let arg = words.next();
            let Some(board) = self.console.jig.board() else {
                return out.write_all(b"err NOT_SUPPORTED this jig reads a real board\r\n");
            };
            match arg {
                None => {
                    let seed = board.seed();
                    let fault = board.fault();
                    let (s, beta) = board.drawn();
                    let mut f = FmtBuf::<24>::new();
                    write_fault(&mut f, fault);
                    say(
                        out,
                        format_args!(
                            "seed={seed} fault={} vcc={} r1={} r2={} rc={} re1={} re2={} beta={}\r\nok\r\n",
                            f.as_str(),
                            Full(s.vcc.value),
                            Full(s.r1.value),
                            Full(s.r2.value),
                            Full(s.rc.value),
                            Full(s.re1.value),
                            Full(s.re2.value),
                            Full(beta)
                        ),
                    )
                }
                Some(a) => match a.parse::<u64>() {
                    Ok(seed) => {
                        board.set_seed(seed);
                        out.write_all(b"ok\r\n")
                    }
                    Err(_) => say(
                        out,
                        format_args!(
                            "err VALUE seed: {a}: allowed a whole number 0 to 18446744073709551615\r\n"
                        ),
                    ),
                },
            }
        } else {
            say(
                out,
                format_args!(
                    "err UNKNOWN fw:{q}: firmware queries are fw:stack? fw:cost? fw:clock? fw:measure? fw:screen? fw:press short|long fw:board? fw:board SEED\r\n"
                ),
            )
        }
    }
}

/// The most likely fault of the console's last judged board, in words for the screen (ASCII:
/// the screen's font has no Ω or µ).
fn fault_words<J: FirmwareJig, S: Store, C: Clock, const N: usize>(
    out: &mut FmtBuf<N>,
    console: &Console<J, S, C>,
) {
    let Some(d) = console.last_check().and_then(|l| l.diagnosis.as_ref()) else {
        return;
    };
    let mut ascii = Ascii(out);
    let _ = match d.faults().next() {
        Some(h) if d.explained => core::fmt::Write::write_fmt(
            &mut ascii,
            format_args!("{}", FaultWords::of(&console.settings().stage, h)),
        ),
        _ => core::fmt::Write::write_str(&mut ascii, "no single fault explains the readings"),
    };
}

/// Writes text in ASCII: Ω as "ohm", µ as "u", any other non-ASCII character as "?".
struct Ascii<'a, W: core::fmt::Write>(&'a mut W);

impl<W: core::fmt::Write> core::fmt::Write for Ascii<'_, W> {
    fn write_str(&mut self, s: &str) -> core::fmt::Result {
        for c in s.chars() {
            match c {
                'Ω' => self.0.write_str("ohm")?,
                'µ' => self.0.write_char('u')?,
                c if c.is_ascii() => self.0.write_char(c)?,
                _ => self.0.write_char('?')?,
            }
        }
        Ok(())
    }
}

/// Upper-case node label for screens and `fw:measure?`.
pub fn label(c: Channel) -> &'static str {
    match c {
        Channel::Vcc => "VCC",
        Channel::Vb => "VB",
        Channel::Ve => "VE",
        Channel::Vc => "VC",
    }
}

fn write_fault<const N: usize>(f: &mut FmtBuf<N>, fault: Option<Fault>) {
    use core::fmt::Write as _;
    let name = |r: Resistor| r.name();
    let _ = match fault {
        None => f.write_str("none"),
        Some(Fault::Open(r)) => write!(f, "{}:open", name(r)),
        Some(Fault::Short(r)) => write!(f, "{}:short", name(r)),
        Some(Fault::Value(r, v)) => write!(f, "{}:{}", name(r), Full(v)),
        Some(Fault::Device(d)) => write!(f, "Q:{}", d.name()),
    };
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::cost::NoTicks;
    use crate::jig::EmulatedJig;
    use crate::screen::{draw_show, FrameBuffer};
    use biasjig_core::console::jig::MemoryStore;
    use biasjig_core::console::Identity;

    struct Ms(u64);
    impl Clock for Ms {
        fn now_ms(&mut self) -> u64 {
            self.0 += 1;
            self.0
        }
    }

    struct TestBoard {
        fb: FrameBuffer,
        shown: usize,
    }
    impl Board for TestBoard {
        fn stack_used(&self) -> usize {
            1234
        }
        fn stack_size(&self) -> usize {
            4096
        }
        fn show(&mut self, what: &Show<'_>) {
            self.shown += 1;
            let _ = draw_show(&mut self.fb, what);
        }
        fn screen_art<W: Write>(&mut self, out: &mut W) -> Result<bool, W::Error> {
            self.fb.write_art(out)?;
            Ok(true)
        }
    }

    type TestApp = App<'static, EmulatedJig, MemoryStore, Ms, TestBoard, NoTicks>;

    fn app() -> TestApp {
        let console = Box::leak(Box::new(Console::new(
            Identity::new("test", crate::VERSION),
            EmulatedJig::new(5),
            MemoryStore::default(),
            Ms(0),
        )));
        let board = TestBoard {
            fb: FrameBuffer::new(),
            shown: 0,
        };
        App::new(console, board, NoTicks)
    }

    fn talk(app: &mut TestApp, input: &[u8]) -> String {
        let mut out = Vec::new();
        for &b in input {
            app.feed(b, &mut out).unwrap();
        }
        String::from_utf8(out).unwrap()
    }

    #[test]
    fn console_lines_reach_the_core_console() {
        let mut a = app();
        assert_eq!(talk(&mut a, b"\r\n"), "ok\r\n");
        let idn = talk(&mut a, b"*idn?\n");
        assert_eq!(idn, format!("biasjig,test,0,{}\r\nok\r\n", crate::VERSION));
        assert!(talk(&mut a, b"hello\n").starts_with("err UNKNOWN"));
        // f and fo are held back, then go on to the console.
        assert!(talk(&mut a, b"fo\r\n").starts_with("err UNKNOWN"));
        assert!(talk(&mut a, b"f\n").starts_with("err UNKNOWN"));
        let long = vec![b'x'; 300];
        let t = talk(&mut a, &long);
        assert!(t.starts_with("err TOO_LONG"), "{t}");
        // The rest of the overlong line, up to its end, is discarded without a reply.
        assert_eq!(talk(&mut a, b"xx\r\n"), "");
        assert_eq!(talk(&mut a, b"\r\n"), "ok\r\n");
        assert!(talk(&mut a, b"a\x01b\n").starts_with("err CONTROL"));
        assert_eq!(talk(&mut a, b"mode machine\r\n"), "ok\r\n");
        assert_eq!(talk(&mut a, b"mode\n"), "mode=machine\r\nok\r\n");
    }

    /// The budget build (no `full-console`): the design search, the spread, the parts list, the
    /// designs kept by name and the gain calibration are refused, each saying where to do it;
    /// everything that judges a board stays.
    /// The budget build keeps no designs by name: a long press shows where to choose one and
    /// leaves the stage as it was.
    #[cfg(not(feature = "full-console"))]
    #[test]
    fn budget_build_long_press_says_where_to_choose() {
        let mut a = app();
        talk(&mut a, b"mode machine\n");
        let before = talk(&mut a, b"hash\n");
        let shown = a.board_mut().shown;
        a.press(Press::Long);
        assert_eq!(a.board_mut().shown, shown + 1);
        let mut art = Vec::new();
        assert!(a.board_mut().screen_art(&mut art).unwrap());
        assert_ne!(art, {
            let mut blank = Vec::new();
            FrameBuffer::new().write_art(&mut blank).unwrap();
            blank
        });
        assert_eq!(talk(&mut a, b"hash\n"), before);
    }

    #[cfg(not(feature = "full-console"))]
    #[test]
    fn budget_build_refuses_what_it_leaves_out() {
        let mut a = app();
        talk(&mut a, b"mode machine\n");
        for line in [
            "design\n",
            "pick 1\n",
            "requirement\n",
            "requirement vcc 9\n",
        ] {
            let t = talk(&mut a, line.as_bytes());
            assert!(t.starts_with("err NOT_SUPPORTED"), "{line}: {t}");
            assert!(t.contains("biasjig design"), "{line}: {t}");
        }
        for (line, word) in [
            ("spread\n", "spread:"),
            ("parts\n", "parts:"),
            ("keep preamp\n", "keep:"),
            ("designs\n", "designs:"),
            ("choose preamp\n", "choose:"),
            ("forget preamp\n", "forget:"),
            ("calibrate gain 1000 10\n", "calibrate gain:"),
        ] {
            let t = talk(&mut a, line.as_bytes());
            assert!(
                t.starts_with(&format!("err NOT_SUPPORTED {word}")) && t.contains("full image"),
                "{line}: {t}"
            );
        }
        assert!(talk(&mut a, b"limits\n").contains("node=vb low="));
    }

    #[test]
    fn firmware_queries() {
        // (fw:press is tested with the button path.)
        let mut a = app();
        assert_eq!(talk(&mut a, b"fw:stack?\r\n"), "stack 1234 4096\r\nok\r\n");
        // The LF of the CR LF above was swallowed: no extra `ok`.
        assert_eq!(talk(&mut a, b"FW:COST?\n"), "cost 0\r\nok\r\n");
        let m = talk(&mut a, b"fw:measure?\n");
        let lines: Vec<&str> = m.split("\r\n").collect();
        assert_eq!(lines.len(), 6, "{m}");
        assert!(lines[0].starts_with("VCC 1"), "{m}");
        assert_eq!(lines[4], "ok");
        let art = talk(&mut a, b"fw:screen?\n");
        assert_eq!(art.lines().count(), 33);
        assert!(art.ends_with("ok\r\n") && art.contains('#'));
        assert!(talk(&mut a, b"fw:nothing\n").starts_with("err UNKNOWN"));
        let long = [b"fw:".as_slice(), &[b'x'; 100], b"\n"].concat();
        assert!(talk(&mut a, &long).starts_with("err TOO_LONG"));
        let b = talk(&mut a, b"fw:board?\n");
        assert!(b.starts_with("seed=5 fault=none vcc=1"), "{b}");
        assert_eq!(talk(&mut a, b"fw:board 77\n"), "ok\r\n");
        assert!(talk(&mut a, b"fw:board?\n").starts_with("seed=77 "));
        assert!(talk(&mut a, b"fw:board x\n").starts_with("err VALUE"));
    }

    #[test]
    fn inject_reaches_the_emulated_board_and_design_is_followed() {
        let mut a = app();
        talk(&mut a, b"mode machine\n");
        let good = talk(&mut a, b"measure\n");
        assert!(
            good.starts_with("vcc=") && good.ends_with("ok\r\n"),
            "{good}"
        );
        assert_eq!(talk(&mut a, b"inject r1 open\n"), "ok\r\n");
        assert!(talk(&mut a, b"fw:board?\n").contains("fault=R1:open"));
        let open = talk(&mut a, b"measure\n");
        assert_ne!(open, good);
        talk(&mut a, b"inject none\n");
        // A new design: the board is drawn again around it.
        let before = talk(&mut a, b"fw:board?\n");
        assert_eq!(talk(&mut a, b"set rc 3k9\n"), "ok\r\n");
        let after = talk(&mut a, b"fw:board?\n");
        assert_ne!(before, after);
        let rc: f64 = value(after.trim_end(), "rc").unwrap().parse().unwrap();
        assert!((rc / 3900.0 - 1.0).abs() <= 0.05, "{after}");
    }

    #[cfg(feature = "full-console")]
    #[test]
    fn calibrate_gain_corrects_the_emulated_signal_path() {
        use biasjig_core::console::Jig as _;
        let mut a = app();
        talk(&mut a, b"mode machine\n");
        let g0 = a.console.jig.gain(1000.0).unwrap();
        // Declare a reference 10 % above what the path reads: the correction is 1/1.1.
        let line = format!("calibrate gain 1k {}\n", g0 * 1.1);
        let t = talk(&mut a, line.as_bytes());
        assert!(t.ends_with("ok\r\n"), "{t}");
        let k: f64 = value(t.lines().next().unwrap().trim_end(), "load_over_source")
            .unwrap()
            .parse()
            .unwrap();
        // The tone measurements of the emulated jig differ by up to about 0.6 % between reads
        // (the console takes its own).
        assert!((k * 1.1 - 1.0).abs() < 1.5e-2, "{t}");
        let g1 = a.console.jig.gain(1000.0).unwrap();
        assert!((g1 / (g0 * 1.1) - 1.0).abs() < 1.5e-2, "{g0} {g1}");
        assert!(talk(&mut a, b"calibrate\n").contains("signal load_over_source="));
        assert_eq!(talk(&mut a, b"calibrate reset\n"), "ok\r\n");
        let g2 = a.console.jig.gain(1000.0).unwrap();
        assert!((g2 / g0 - 1.0).abs() < 1.5e-2, "{g0} {g2}");
    }

    #[test]
    fn scan_reads_a_check_reply() {
        let mut s = Scan::new();
        s.take(b"verdict=fail\r\nnode=vb measured=0.01 low=1.9 high=2.1 ok=0\r\n");
        s.take(b"node=vc measured=12 low=5 high=7 ok=0\r\nderived ic=0 ib=0\r\n");
        s.take(b"fault=R1 mode=open score=0.9 estimate=none equivalent=none\r\n");
        s.take(b"fault=Q mode=be_open score=0.5 estimate=none equivalent=none\r\nok\r\n");
        let o = &s.outcome;
        assert_eq!(o.verdict, Some(Verdict::Fail));
        assert_eq!(o.failing, Some(Channel::Vb));
        assert_eq!(o.fault.as_str(), "R1 open");
        assert!(o.ok);
        s.reset();
        s.take(b"verdict=pass\r\nok\r\n");
        assert_eq!(s.outcome.verdict, Some(Verdict::Pass));
        assert_eq!(s.outcome.fault.as_str(), "");
    }

    /// The button path on the emulated jig: with no design kept a long press says so; with two
    /// kept, long presses step through them (the console's stage follows) and a short press
    /// measures and judges, showing the fault in words. Screens compared with golden pictures
    /// (regression pins, see `screen::tests::golden`).
    #[cfg(feature = "full-console")]
    #[test]
    fn button_path_chooses_designs_and_judges() {
        let mut a = app();
        talk(&mut a, b"mode machine\n");
        let screen = |a: &mut TestApp| {
            let fb = &a.board_mut().fb;
            let mut copy = FrameBuffer::new();
            for y in 0..crate::screen::HEIGHT {
                for x in 0..crate::screen::WIDTH {
                    if fb.pixel(x, y) {
                        use embedded_graphics::prelude::*;
                        let _ = Pixel(
                            Point::new(x as i32, y as i32),
                            embedded_graphics::pixelcolor::BinaryColor::On,
                        )
                        .draw(&mut copy);
                    }
                }
            }
            copy
        };
        a.press(Press::Long);
        crate::screen::tests::golden("no-designs", &screen(&mut a));
        assert!(talk(&mut a, b"keep preamp-12\n").starts_with("ok kept preamp-12, design hash "));
        talk(&mut a, b"set vcc 15\n");
        talk(&mut a, b"keep pump-15\n");
        let hash15 = talk(&mut a, b"hash\n");
        // Long press: from pump-15 (chosen last) on to the first kept design.
        a.press(Press::Long);
        assert!(talk(&mut a, b"stage\n").contains("design=preamp-12"));
        crate::screen::tests::golden("button-design-1", &screen(&mut a));
        a.press(Press::Long);
        assert_eq!(talk(&mut a, b"hash\n"), hash15);
        crate::screen::tests::golden("button-design-2", &screen(&mut a));
        // Short press: measure and judge; the emulated board follows the chosen design.
        talk(&mut a, b"inject rc open\n");
        a.press(Press::Short);
        crate::screen::tests::golden("button-fail-rc-open", &screen(&mut a));
        talk(&mut a, b"inject none\n");
        a.press(Press::Short);
        crate::screen::tests::golden("verdict-pass", &screen(&mut a));
        talk(&mut a, b"lock 1234\n");
        a.press(Press::Long);
        crate::screen::tests::golden("locked", &screen(&mut a));
        assert_eq!(talk(&mut a, b"hash\n"), hash15, "locked: the design stays");
        assert!(talk(&mut a, b"fw:press sideways\n").starts_with("err VALUE press"));
    }

    #[test]
    fn echo_is_the_consoles() {
        let mut a = app();
        talk(&mut a, b"echo on\n");
        let t = talk(&mut a, b"hash\r\n");
        assert!(t.starts_with("hash\r\n"), "{t}");
        let t = talk(&mut a, b"fw:cost?\r\n");
        assert!(t.starts_with("fw:cost?\r\ncost "), "{t}");
    }
}
