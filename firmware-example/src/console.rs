//! The console seam and the application loop.
//!
//! [`App`] reads bytes from an `embedded-io` stream, assembles lines, times each command with a
//! [`CostMeter`], answers the firmware's own `fw:` queries (stack, cost, measure, screen) and hands
//! every other line to a [`Console`].
//!
//! **Interim:** the command set proper belongs to the core library's console engine, which is not
//! written yet. Until it is, [`InterimConsole`] answers `*IDN?` with one identification line and
//! `ok`, an empty line with `ok`, an overlong line with `err 11 line too long` and anything else
//! with `err 10 unknown command`. Swapping in the core console is the one line in each image that
//! builds the `App` (an adapter implementing [`Console`] for it, or `App` feeding it the stream).
use crate::cost::{CostMeter, Ticks};
use crate::jig::{JigError, Node, NodeVoltages};
use crate::line::{LineAssembler, LineEvent};
use embedded_io::{Read, Write};

/// Longest command line, in bytes.
pub const LINE_CAPACITY: usize = 128;

/// Something that answers complete command lines.
pub trait Console {
    /// Answers one complete line (without its ending). Every answer ends with exactly one status
    /// line: `ok` or `err <code> <text>`.
    fn line<W: Write>(&mut self, line: &[u8], out: &mut W) -> Result<(), W::Error>;
    /// Answers a line that was longer than the line buffer.
    fn overlong<W: Write>(&mut self, out: &mut W) -> Result<(), W::Error>;
}

/// The interim console (see the module documentation).
pub struct InterimConsole {
    /// Model name in the identification line, e.g. `jig-emulated`.
    pub model: &'static str,
}

impl Console for InterimConsole {
    fn line<W: Write>(&mut self, line: &[u8], out: &mut W) -> Result<(), W::Error> {
        let line = trim(line);
        if line.is_empty() {
            out.write_all(b"ok\r\n")
        } else if line.eq_ignore_ascii_case(b"*IDN?") {
            say(
                out,
                format_args!(
                    "{},{},0,{}\r\nok\r\n",
                    crate::IDN_PREFIX,
                    self.model,
                    crate::VERSION
                ),
            )
        } else {
            out.write_all(b"err 10 unknown command\r\n")
        }
    }

    fn overlong<W: Write>(&mut self, out: &mut W) -> Result<(), W::Error> {
        out.write_all(b"err 11 line too long\r\n")
    }
}

/// Formats into a stack buffer (cut at `N` bytes) and writes it: a formatting step that cannot
/// fail, so the only error left is the stream's own.
fn say<W: Write>(out: &mut W, args: core::fmt::Arguments<'_>) -> Result<(), W::Error> {
    let mut buf = FmtBuf::<96>::new();
    let _ = core::fmt::Write::write_fmt(&mut buf, args);
    out.write_all(buf.as_bytes())
}

/// A fixed buffer for `core::fmt`; text past its end is dropped.
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

fn trim(mut s: &[u8]) -> &[u8] {
    while let [b' ' | b'\t', rest @ ..] = s {
        s = rest;
    }
    while let [rest @ .., b' ' | b'\t'] = s {
        s = rest;
    }
    s
}

/// What the application needs from a board besides the serial line.
pub trait Board {
    /// Bytes of the stack region ever used (stack painting high-water mark).
    fn stack_used(&self) -> usize;
    /// Bytes of the stack region.
    fn stack_size(&self) -> usize;
    /// Measures the four jig nodes.
    fn measure(&mut self) -> Result<NodeVoltages, JigError>;
    /// Shows a measurement (or its error) on the board's screen.
    fn show(&mut self, result: &Result<NodeVoltages, JigError>);
    /// Writes the screen as text art, if the board keeps a framebuffer; `Ok(false)` if it does not.
    fn screen_art<W: Write>(&mut self, out: &mut W) -> Result<bool, W::Error>;
}

/// The application: line assembly, the firmware's `fw:` queries, timing, and a [`Console`].
///
/// `fw:` queries (firmware diagnostics, not part of the command set):
/// `fw:stack?` (`stack <used> <size>`), `fw:cost?` (`cost <ticks>` of the previous command),
/// `fw:measure?` (`VCC 12.000` .. `VC 6.800`, shown on the screen too), `fw:screen?` (text art).
pub struct App<C, B, T> {
    console: C,
    board: B,
    cost: CostMeter<T>,
    lines: LineAssembler<LINE_CAPACITY>,
}

impl<C: Console, B: Board, T: Ticks> App<C, B, T> {
    /// Builds the application.
    pub fn new(console: C, board: B, ticks: T) -> Self {
        App {
            console,
            board,
            cost: CostMeter::new(ticks),
            lines: LineAssembler::new(),
        }
    }

    /// The board.
    pub fn board_mut(&mut self) -> &mut B {
        &mut self.board
    }

    /// Elapsed ticks of the last command.
    pub fn last_cost(&self) -> u32 {
        self.cost.last()
    }

    /// Measures and shows the result (the hardware button does this).
    pub fn measure_and_show(&mut self) -> Result<NodeVoltages, JigError> {
        let r = self.board.measure();
        self.board.show(&r);
        r
    }

    /// Reads what the stream has (blocking for at least one byte) and answers every line it ends.
    pub fn poll<S: Read + Write>(&mut self, io: &mut S) -> Result<(), S::Error> {
        let mut chunk = [0u8; 32];
        let n = io.read(&mut chunk)?;
        for &b in chunk.get(..n).unwrap_or(&[]) {
            self.feed(b, io)?;
        }
        Ok(())
    }

    /// Serves the stream forever; serial errors are dropped and serving goes on.
    pub fn run<S: Read + Write>(&mut self, io: &mut S) -> ! {
        loop {
            let _ = self.poll(io);
        }
    }

    /// Feeds one byte; answers when it ends a line.
    pub fn feed<W: Write>(&mut self, byte: u8, out: &mut W) -> Result<(), W::Error> {
        let Self {
            console,
            board,
            cost,
            lines,
        } = self;
        let Some(event) = lines.push(byte) else {
            return Ok(());
        };
        let prev = cost.last();
        cost.start();
        let r = match event {
            LineEvent::Overlong => console.overlong(out),
            LineEvent::Line(line) => {
                let t = trim(line);
                if t.len() > 3 && t.get(..3).is_some_and(|p| p.eq_ignore_ascii_case(b"fw:")) {
                    firmware_query(t.get(3..).unwrap_or(&[]), board, prev, out)
                } else {
                    console.line(line, out)
                }
            }
        };
        cost.stop();
        r
    }
}

fn firmware_query<B: Board, W: Write>(
    q: &[u8],
    board: &mut B,
    prev_cost: u32,
    out: &mut W,
) -> Result<(), W::Error> {
    if q.eq_ignore_ascii_case(b"stack?") {
        say(
            out,
            format_args!(
                "stack {} {}\r\nok\r\n",
                board.stack_used(),
                board.stack_size()
            ),
        )
    } else if q.eq_ignore_ascii_case(b"cost?") {
        say(out, format_args!("cost {prev_cost}\r\nok\r\n"))
    } else if q.eq_ignore_ascii_case(b"measure?") {
        let r = board.measure();
        board.show(&r);
        match r {
            Ok(v) => {
                for node in Node::ALL {
                    say(out, format_args!("{} {:.3}\r\n", node.name(), v.get(node)))?;
                }
                out.write_all(b"ok\r\n")
            }
            Err(e) => say(out, format_args!("err 20 {e}\r\n")),
        }
    } else if q.eq_ignore_ascii_case(b"screen?") {
        if board.screen_art(out)? {
            out.write_all(b"ok\r\n")
        } else {
            out.write_all(b"err 21 no framebuffer\r\n")
        }
    } else {
        out.write_all(b"err 10 unknown command\r\n")
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::cost::NoTicks;
    use crate::jig::{EmulatedJig, EMULATED_NODES};
    use crate::screen::FrameBuffer;

    struct TestBoard {
        jig: EmulatedJig,
        fb: FrameBuffer,
    }
    impl Board for TestBoard {
        fn stack_used(&self) -> usize {
            1234
        }
        fn stack_size(&self) -> usize {
            4096
        }
        fn measure(&mut self) -> Result<NodeVoltages, JigError> {
            self.jig.measure()
        }
        fn show(&mut self, r: &Result<NodeVoltages, JigError>) {
            crate::screen::draw_result(&mut self.fb, r);
        }
        fn screen_art<W: Write>(&mut self, out: &mut W) -> Result<bool, W::Error> {
            self.fb.write_art(out)?;
            Ok(true)
        }
    }

    fn app() -> App<InterimConsole, TestBoard, NoTicks> {
        let board = TestBoard {
            jig: EmulatedJig::new(EMULATED_NODES),
            fb: FrameBuffer::new(),
        };
        App::new(InterimConsole { model: "test" }, board, NoTicks)
    }

    fn talk(app: &mut App<InterimConsole, TestBoard, NoTicks>, input: &[u8]) -> String {
        let mut out = Vec::new();
        for &b in input {
            app.feed(b, &mut out).unwrap();
        }
        String::from_utf8(out).unwrap()
    }

    #[test]
    fn interim_command_set() {
        let mut a = app();
        assert_eq!(talk(&mut a, b"\r\n"), "ok\r\n");
        let idn = talk(&mut a, b"*idn?\n");
        assert_eq!(
            idn,
            format!("biasjig,jig-reader,test,0,{}\r\nok\r\n", crate::VERSION)
        );
        assert_eq!(talk(&mut a, b"  *IDN?  \r"), idn);
        assert_eq!(talk(&mut a, b"hello\n"), "err 10 unknown command\r\n");
        assert_eq!(talk(&mut a, b"fw:nothing\n"), "err 10 unknown command\r\n");
        let long = vec![b'x'; 300];
        assert_eq!(talk(&mut a, &long), "");
        assert_eq!(talk(&mut a, b"\r\n"), "err 11 line too long\r\n");
        assert_eq!(talk(&mut a, b"\n"), "ok\r\n");
    }

    #[test]
    fn firmware_queries() {
        let mut a = app();
        assert_eq!(talk(&mut a, b"fw:stack?\n"), "stack 1234 4096\r\nok\r\n");
        assert_eq!(talk(&mut a, b"FW:COST?\n"), "cost 0\r\nok\r\n");
        let m = talk(&mut a, b"fw:measure?\n");
        let lines: Vec<&str> = m.split("\r\n").collect();
        assert_eq!(lines.len(), 6, "{m}");
        assert!(
            lines[0].starts_with("VCC 12.0") || lines[0].starts_with("VCC 11.9"),
            "{m}"
        );
        assert_eq!(lines[4], "ok");
        let art = talk(&mut a, b"fw:screen?\n");
        assert_eq!(art.lines().count(), 33);
        assert!(art.ends_with("ok\r\n"));
        assert!(art.contains('#'));
    }

    #[test]
    fn poll_reads_from_a_stream() {
        struct Io<'a>(&'a [u8], Vec<u8>);
        impl embedded_io::ErrorType for Io<'_> {
            type Error = core::convert::Infallible;
        }
        impl Read for Io<'_> {
            fn read(&mut self, buf: &mut [u8]) -> Result<usize, Self::Error> {
                let n = buf.len().min(self.0.len());
                buf[..n].copy_from_slice(&self.0[..n]);
                self.0 = &self.0[n..];
                Ok(n)
            }
        }
        impl Write for Io<'_> {
            fn write(&mut self, buf: &[u8]) -> Result<usize, Self::Error> {
                self.1.extend_from_slice(buf);
                Ok(buf.len())
            }
            fn flush(&mut self) -> Result<(), Self::Error> {
                Ok(())
            }
        }
        let mut a = app();
        let mut io = Io(b"\n\njunk\n", Vec::new());
        a.poll(&mut io).unwrap();
        assert_eq!(io.1, b"ok\r\nok\r\nerr 10 unknown command\r\n");
        assert_eq!(a.last_cost(), 0);
    }
}
