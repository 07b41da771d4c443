//! The line console: one protocol engine for the instrument's UART and the host.
//!
//! The engine is generic over [`embedded_io::Read`] and [`embedded_io::Write`]; the front end
//! supplies a [`Jig`], a [`Store`] and a [`Clock`]. It owns no electronics: it maps lines to the
//! core's functions and their results back to lines.
//!
//! Framing (docs/protocol.md has the whole protocol):
//! - every input line gets data lines (zero or more, at most [`MAX_DATA_LINES`]) and then exactly
//!   one status line: `ok`, `ok TEXT` or `err CODE TEXT`;
//! - no output line is longer than [`MAX_OUT_LINE`] bytes; output lines end with CR LF;
//! - an input line longer than [`LINE_MAX`] bytes gets `err TOO_LONG` at once and is discarded up
//!   to its line end; a line with a control byte gets `err CONTROL`, one that is not UTF-8
//!   `err ENCODING`;
//! - a write error (or a write of zero bytes) ends the call with an error value; nothing blocks
//!   on it and nothing panics.
//!
//! Layers: [`line`](mod@line) (assembling lines), [`parse`] (line to [`parse::Command`] through the one
//! command table [`COMMANDS`]), the session state in [`Console`], the commands by job
//! (session, the PIN lock, settings, calibration, show, predict, judge, synthesis, kept designs)
//! writing their data lines through one formatting module (each item once, the mode chooses the
//! layout), [`jig`] (traits the front end implements) and [`record`] (store records and the
//! design hash).

mod args;
mod calibration;
mod code;
mod defaults;
mod fields;
mod format;
pub mod jig;
mod judge;
mod kept;
pub mod line;
mod lock;
pub mod parse;
#[cfg(any(feature = "analysis", feature = "spread"))]
mod predict;
pub mod record;
pub mod reply;
mod session;
mod settings;
mod show;
#[cfg(feature = "synthesis")]
mod synthesis;
mod table;

use embedded_io::{Read, Write};

pub use jig::{Calibration, Channel, ChannelCal, Clock, Jig, JigError, Slot, Store, StoreError};
use line::{Feed, LineBuf, LineError};
use parse::Mode;
use record::Settings;
use reply::{write_all, Fail, Reply, Text};

pub use code::Code;
pub use defaults::{default_profile, default_requirement, default_settings, default_stage};
pub use format::Num;
pub use judge::{LastCheck, LISTED_FAULTS};
pub use kept::{KeptDesign, KeptList};
pub use lock::{PIN_BACKOFF_MAX_MS, PIN_BACKOFF_MS, PIN_FREE_TRIES};
pub use table::{Spec, COMMANDS, SAFETY};

use crate::design::{Candidates, Requirement};
use crate::stage::Readings;

/// Longest input line, bytes (without its line end).
pub const LINE_MAX: usize = 128;
/// Most data lines before one status line.
pub const MAX_DATA_LINES: usize = 40;
/// Longest output line, bytes (without CR LF).
pub const MAX_OUT_LINE: usize = 200;

/// A failed write.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum WriteError<E> {
    /// The stream's own error.
    Io(E),
    /// The stream took no bytes.
    Zero,
}

/// Why a session ended early.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SessionError<R, W> {
    /// Reading failed.
    Read(R),
    /// Writing failed.
    Write(WriteError<W>),
}

/// What `identify` and `*IDN?` answer: maker, model, serial, firmware (IEEE 488.2 style).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Identity {
    /// Maker field.
    pub maker: &'static str,
    /// Model field, e.g. `console` on the host, `jig-emulated` on the emulated instrument.
    pub model: &'static str,
    /// Serial number of the unit (`0` when it has none).
    pub serial: heapless::String<24>,
    /// Firmware or program version.
    pub firmware: &'static str,
}

impl Identity {
    /// An identity with serial `0`.
    pub fn new(model: &'static str, firmware: &'static str) -> Self {
        let mut serial = heapless::String::new();
        let _ = serial.push('0');
        Self {
            maker: "biasjig",
            model,
            serial,
            firmware,
        }
    }
}

/// Where the last readings came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Source {
    /// Read by the jig.
    Measured,
    /// Typed with `check`.
    Typed,
}

/// The console engine with its session state.
pub struct Console<J: Jig, S: Store, C: Clock> {
    /// The jig.
    pub jig: J,
    /// The store.
    pub store: S,
    /// The clock.
    pub clock: C,
    identity: Identity,
    lines: LineBuf<LINE_MAX>,
    settings: Settings,
    calibration: Calibration,
    /// Low calibration points taken: (applied V, raw V) per channel.
    cal_low: [Option<(f64, f64)>; 4],
    readings: Option<(Readings, Source)>,
    /// The last judged board (cleared when the stage or the meter changes).
    last: Option<LastCheck>,
    /// The test frequencies of `test`, with the settings they were proposed for.
    #[cfg(feature = "signal-test")]
    proposed: Option<judge::Proposed>,
    requirement: Requirement,
    candidates: Candidates,
    echo: bool,
    echo_after_cr: bool,
    mode: Mode,
    /// No unlock try before this time, ms.
    retry_at_ms: u64,
}

impl<J: Jig, S: Store, C: Clock> Console<J, S, C> {
    /// A console; settings and calibration are loaded from the store (defaults when it has
    /// none or a damaged record) and the calibration is handed to the jig.
    pub fn new(identity: Identity, jig: J, store: S, clock: C) -> Self {
        let mut c = Self::unloaded(identity, jig, store, clock);
        c.load();
        c
    }

    /// A console with the default settings and calibration, nothing loaded yet: for building a
    /// console in place in static memory (a console is several KB; a copy on a small stack
    /// counts against its budget). Call [`Console::load_stored`] on it next.
    #[inline(never)]
    pub fn unloaded(identity: Identity, jig: J, store: S, clock: C) -> Self {
        let settings = Self::defaults_for(&jig);
        Self {
            jig,
            store,
            clock,
            identity,
            lines: LineBuf::new(),
            settings,
            calibration: Calibration::default(),
            cal_low: [None; 4],
            readings: None,
            last: None,
            #[cfg(feature = "signal-test")]
            proposed: None,
            requirement: default_requirement(),
            candidates: Candidates::new(),
            echo: false,
            echo_after_cr: false,
            mode: Mode::Human,
            retry_at_ms: 0,
        }
    }

    /// [`Console::unloaded`] written into `slot` (static memory on an instrument) and returned:
    /// the console is built where it stays, not in its caller's frame and copied (a console is
    /// about 11 KB; the copy would count against a small stack's budget).
    #[inline(never)]
    pub fn unloaded_in(
        slot: &mut core::mem::MaybeUninit<Self>,
        identity: Identity,
        jig: J,
        store: S,
        clock: C,
    ) -> &mut Self {
        slot.write(Self::unloaded(identity, jig, store, clock))
    }

    /// The default settings on this jig: [`default_settings`] with the jig's own measuring
    /// inputs ([`Jig::input_r`], attached together).
    pub(crate) fn defaults_for(jig: &J) -> Settings {
        let mut s = default_settings();
        s.inputs.r = jig.input_r();
        s
    }

    /// Load the settings and calibration from the store (defaults stay when it has none or a
    /// damaged record) and hand the calibration to the jig, as [`Console::new`] does.
    pub fn load_stored(&mut self) {
        self.load();
    }

    #[inline(never)]
    fn load(&mut self) {
        let mut rec = [0u8; jig::RECORD_LEN];
        if let Ok(true) = self.store.load(Slot::Settings, &mut rec) {
            if let Some(s) = Settings::decode(&rec) {
                if s.stage.validate().is_ok() && s.profile.validate().is_ok() {
                    self.settings = s;
                }
            }
        }
        if let Ok(true) = self.store.load(Slot::Calibration, &mut rec) {
            if let Some(cal) = record::decode_calibration(&rec) {
                self.calibration = cal;
            }
        }
        let _ = self.jig.set_calibration(&self.calibration);
        self.resume_backoff();
    }

    /// The current settings (stage, profile, meter, lock).
    pub fn settings(&self) -> &Settings {
        &self.settings
    }

    /// The last readings and where they came from.
    pub fn readings(&self) -> Option<(Readings, Source)> {
        self.readings
    }

    /// The last judged board, typed, as the session keeps it (a reference, no copy): the
    /// readings and where they came from, the verdict with every node's window, the gain
    /// readings with theirs and (when it failed) the diagnosis; [`LastCheck::first_failing`]
    /// and [`LastCheck::first_fault`] give what a screen shows. Set by `check`, `test` and
    /// `diagnose`; a board that is not judged (an `err` status) leaves the previous one;
    /// cleared when the stage, the transistor or the test settings change.
    pub fn last_check(&self) -> Option<&LastCheck> {
        self.last.as_ref()
    }

    /// The design requirement.
    pub fn requirement(&self) -> &Requirement {
        &self.requirement
    }

    /// The candidates of the last `design`, best first.
    pub fn candidates(&self) -> &Candidates {
        &self.candidates
    }

    /// The data-line style.
    pub fn mode(&self) -> Mode {
        self.mode
    }

    /// Echo is on.
    pub fn echo(&self) -> bool {
        self.echo
    }

    /// Turn echo on or off (as the `echo` command does).
    pub fn set_echo(&mut self, on: bool) {
        self.echo = on;
    }

    /// Set the data-line style (as the `mode` command does).
    pub fn set_mode(&mut self, mode: Mode) {
        self.mode = mode;
    }

    /// Editing of the stage and limits is locked.
    pub fn is_locked(&self) -> bool {
        self.settings.pin.is_some()
    }

    /// The design hash of the current stage and profile.
    pub fn design_hash(&self) -> u64 {
        record::design_hash(&self.settings.stage, &self.settings.profile)
    }

    fn echo_bytes<W: Write>(
        &mut self,
        bytes: &[u8],
        out: &mut W,
    ) -> Result<(), WriteError<W::Error>> {
        for &b in bytes {
            // The CR LF state is followed even with echo off, so that turning echo on between
            // the CR and the LF of one line end echoes nothing for the LF.
            let after_cr = core::mem::replace(&mut self.echo_after_cr, false);
            let echo: &[u8] = match b {
                b'\n' if after_cr => b"",
                b'\r' | b'\n' => {
                    self.echo_after_cr = b == b'\r';
                    b"\r\n"
                }
                0x08 | 0x7f => b"\x08 \x08",
                0x00..=0x1f => b"",
                _ => core::slice::from_ref(&b),
            };
            if self.echo && !echo.is_empty() {
                write_all(out, echo)?;
            }
        }
        Ok(())
    }

    /// Take bytes that arrived and answer every line they complete.
    pub fn feed<W: Write>(
        &mut self,
        input: &[u8],
        out: &mut W,
    ) -> Result<(), WriteError<W::Error>> {
        let mut rest = input;
        loop {
            self.lines.set_editing(self.echo);
            let (consumed, next) = match self.lines.feed(rest) {
                Feed::Pending => (rest, None),
                Feed::Overfull { rest: r } => {
                    let used = rest.get(..rest.len() - r.len()).unwrap_or(rest);
                    (used, Some((Event::Overfull, r)))
                }
                Feed::Line { line, rest: r } => {
                    let used = rest.get(..rest.len() - r.len()).unwrap_or(rest);
                    let ev = match line {
                        Ok(s) => Event::Line(Text::of(format_args!("{s}"))),
                        Err(e) => Event::Bad(e),
                    };
                    (used, Some((ev, r)))
                }
            };
            self.echo_bytes(consumed, out)?;
            let Some((ev, r)) = next else { return Ok(()) };
            match ev {
                Event::Overfull => self.overlong(out)?,
                Event::Line(t) => self.line(t.as_str(), out)?,
                Event::Bad(e) => self.bad_line(e, out)?,
            }
            rest = r;
        }
    }

    /// End of input: answer an unfinished last line, if any.
    pub fn finish<W: Write>(&mut self, out: &mut W) -> Result<(), WriteError<W::Error>> {
        let ev = match self.lines.finish() {
            None => return Ok(()),
            Some(Ok(s)) => Event::Line(Text::of(format_args!("{s}"))),
            Some(Err(e)) => Event::Bad(e),
        };
        match ev {
            Event::Line(t) => self.line(t.as_str(), out),
            Event::Bad(e) => self.bad_line(e, out),
            Event::Overfull => self.overlong(out),
        }
    }

    /// Run a session: read until the end of input, answering every line.
    pub fn run<R: Read, W: Write>(
        &mut self,
        input: &mut R,
        out: &mut W,
    ) -> Result<(), SessionError<R::Error, W::Error>> {
        let mut buf = [0u8; 64];
        loop {
            let n = input.read(&mut buf).map_err(SessionError::Read)?;
            if n == 0 {
                return self.finish(out).map_err(SessionError::Write);
            }
            let chunk = buf.get(..n).unwrap_or(&[]);
            self.feed(chunk, out).map_err(SessionError::Write)?;
        }
    }

    /// Answer a line that was longer than [`LINE_MAX`].
    pub fn overlong<W: Write>(&mut self, out: &mut W) -> Result<(), WriteError<W::Error>> {
        let fail = Fail::new(
            Code::TooLong,
            format_args!("line longer than {LINE_MAX} bytes; discarded up to its end"),
        );
        Reply::new(out, self.mode).finish(&Err(fail))
    }

    fn bad_line<W: Write>(
        &mut self,
        e: LineError,
        out: &mut W,
    ) -> Result<(), WriteError<W::Error>> {
        let code = match e {
            LineError::Control(_) => Code::Control,
            LineError::Encoding => Code::Encoding,
        };
        Reply::new(out, self.mode).finish(&Err(Fail::new(code, format_args!("{e}"))))
    }

    /// Answer one complete line (without its line end): data lines, then one status line.
    pub fn line<W: Write>(&mut self, line: &str, out: &mut W) -> Result<(), WriteError<W::Error>> {
        let mut reply = Reply::new(out, self.mode);
        let outcome = match parse::parse(line) {
            Ok(cmd) => self.exec(cmd, &mut reply),
            Err(e) => Err(Fail::new(e.code, format_args!("{e}"))),
        };
        reply.finish(&outcome)
    }
}

#[expect(
    clippy::large_enum_variant,
    reason = "a short-lived value on the stack that holds one line; no allocation"
)]
enum Event {
    Overfull,
    Line(Text),
    Bad(LineError),
}
