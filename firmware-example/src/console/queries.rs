//! The firmware queries: the `fw:` lines, answered here and not by the core console.
//!
//! Each is answered with data lines, then `ok` or `err CODE text`:
//! `fw:stack?` (`stack USED SIZE`, bytes), `fw:cost?` (`cost TICKS` of the last console command
//! without the emulated board's own work, `emulated=` that work in instructions,
//! and `instructions=N` where the board measured its tick rate), `fw:clock?`
//! (`clock instructions= ticks=`: a known loop timed at start-up, relating cost ticks to
//! instructions under QEMU), `fw:measure?` (`VCC 12.000` ... `VC 6.800`, also drawn on the
//! screen), `fw:screen?` (the screen as text art), `fw:press short|long` (the button without a
//! button), `fw:board?` (the emulated board: `seed= fault= vcc= r1= r2= rc= re1= re2= beta=`),
//! `fw:board SEED` (draw another board).
use super::{App, Board};
use crate::button::Press;
use crate::cost::Ticks;
use crate::jig::{reading, FirmwareJig};
use crate::screen::{label, Show};
use biasjig_core::console::{Channel, Clock, Store};
use biasjig_core::stage::{Fault, Resistor};
use biasjig_core::units::{Fixed, Full};
use embedded_io::{Write, WriteFmtError};

/// Longest `fw:` query line after its `fw:`, bytes.
pub const FW_LINE: usize = 64;

/// Writes formatted text to the stream (a formatting error of our own types sends what was
/// formatted and stops there).
pub(super) fn say<W: Write>(out: &mut W, args: core::fmt::Arguments<'_>) -> Result<(), W::Error> {
    match out.write_fmt(args) {
        Err(WriteFmtError::Other(e)) => Err(e),
        Ok(()) | Err(WriteFmtError::FmtError) => Ok(()),
    }
}

/// `R1:open`, `RC:47000`, `Q:be_open` or `none`: the emulated board's fault for `fw:board?`.
struct FaultField(Option<Fault>);

impl core::fmt::Display for FaultField {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        let name = |r: Resistor| r.name();
        match self.0 {
            None => f.write_str("none"),
            Some(Fault::Open(r)) => write!(f, "{}:open", name(r)),
            Some(Fault::Short(r)) => write!(f, "{}:short", name(r)),
            Some(Fault::Value(r, v)) => write!(f, "{}:{}", name(r), Full(v)),
            Some(Fault::Device(d)) => write!(f, "Q:{}", d.name()),
        }
    }
}

impl<J: FirmwareJig, S: Store, C: Clock, B: Board, T: Ticks> App<'_, J, S, C, B, T> {
    /// Answers one `fw:` query line (`q`, the text after `fw:`).
    pub(super) fn fw_query<W: Write>(&mut self, q: &str, out: &mut W) -> Result<(), W::Error> {
        let q = q.trim();
        let mut words = q.split(' ').filter(|w| !w.is_empty());
        let head = words.next().unwrap_or("");
        let is = |w: &str| head.eq_ignore_ascii_case(w);
        if is("stack?") {
            let (used, size) = self.board.stack();
            say(out, format_args!("stack {used} {size}\r\nok\r\n"))
        } else if is("clock?") {
            match self.board.tick_rate() {
                Some((i, t)) => say(
                    out,
                    format_args!("clock instructions={i} ticks={t}\r\nok\r\n"),
                ),
                None => out.write_all(b"err NOT_SUPPORTED no tick rate measured on this unit\r\n"),
            }
        } else if is("cost?") {
            let t = self.replies.last_cost();
            let e = self.replies.last_stand_in();
            match self.board.tick_rate() {
                Some((i, r)) if r > 0 => {
                    let insns = u64::from(t) * i / r;
                    let emulated = u64::from(e) * i / r;
                    say(
                        out,
                        format_args!("cost {t} instructions={insns} emulated={emulated}\r\nok\r\n"),
                    )
                }
                _ => say(out, format_args!("cost {t}\r\nok\r\n")),
            }
        } else if is("measure?") {
            self.measure(out)
        } else if is("screen?") {
            if self.board.screen_art(out)? {
                out.write_all(b"ok\r\n")
            } else {
                out.write_all(b"err NOT_SUPPORTED this unit keeps no framebuffer\r\n")
            }
        } else if is("press") {
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
            self.emulated_board(words.next(), out)
        } else {
            say(
                out,
                format_args!(
                    "err UNKNOWN fw:{q}: firmware queries are fw:stack? fw:cost? fw:clock? fw:measure? fw:screen? fw:press short|long fw:board? fw:board SEED\r\n"
                ),
            )
        }
    }

    /// `fw:measure?`: the four node voltages, also drawn on the screen.
    fn measure<W: Write>(&mut self, out: &mut W) -> Result<(), W::Error> {
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
    }

    /// `fw:board?` (no argument) or `fw:board SEED`.
    fn emulated_board<W: Write>(&mut self, arg: Option<&str>, out: &mut W) -> Result<(), W::Error> {
        let Some(board) = self.console.jig.board() else {
            return out.write_all(b"err NOT_SUPPORTED this jig reads a real board\r\n");
        };
        match arg {
            None => {
                let seed = board.seed();
                let fault = FaultField(board.fault());
                let (s, beta) = board.drawn();
                say(
                    out,
                    format_args!(
                        "seed={seed} fault={fault} vcc={} r1={} r2={} rc={} re1={} re2={} beta={}\r\nok\r\n",
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
    }
}
