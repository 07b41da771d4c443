//! The application around the core console engine.
//!
//! [`App`] takes the serial bytes one at a time and
//! - routes them (`router`): a line that starts with `fw:` is a firmware query (`queries`:
//!   stack, cost, screen, measure, button, emulated board), every other byte goes straight on to
//!   the core [`Console`];
//! - sends the console's replies through one buffered writer (`writer`) that times each
//!   console line (`fw:cost?`) and notes its status line;
//! - after a `test` or `check` that succeeded, draws the verdict screen from the console's typed
//!   last check (`verdict`), in either mode, so the screen and the serial reply have one
//!   source;
//! - lets the jig follow the console's design when its hash or ambient changed
//!   ([`FirmwareJig::follow`]);
//! - serves the button: a short press measures and judges, a long press chooses the next kept
//!   design.
//!
//! The application draws through [`Board::show`] with a [`Show`]; the screen module knows nothing
//! of the application.
use crate::button::Press;
use crate::cost::Ticks;
use crate::jig::FirmwareJig;
use crate::screen::Show;
use biasjig_core::console::parse::Mode;
use biasjig_core::console::{Clock, Console, Store};
use embedded_io::{Read, Write};

mod queries;
mod router;
#[cfg(test)]
mod tests;
mod verdict;
mod writer;

pub use queries::FW_LINE;
pub use writer::OUT_BUF;

/// What the application needs from a board besides the serial line and the jig.
pub trait Board {
    /// The stack: bytes of its region ever used (the stack painting high-water mark), and bytes
    /// of the region.
    fn stack(&self) -> (usize, usize);
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

/// The application: the core console, the firmware queries, the cost counter and the screen.
///
/// The console is borrowed, not owned, so that an image can keep it in static memory (built in
/// place once) instead of moving a few kilobytes through the stack at start-up.
pub struct App<'c, J: FirmwareJig, S: Store, C: Clock, B: Board, T: Ticks> {
    /// The core console engine (it owns the jig, the store and the clock).
    pub console: &'c mut Console<J, S, C>,
    board: B,
    router: router::Router,
    replies: writer::Replies<T>,
    /// The design hash and ambient (bits) the jig last followed.
    followed: (u64, u64),
}

impl<'c, J: FirmwareJig, S: Store, C: Clock, B: Board, T: Ticks> App<'c, J, S, C, B, T> {
    /// The application around a console; the jig follows the console's design at once.
    pub fn new(console: &'c mut Console<J, S, C>, board: B, ticks: T) -> Self {
        let mut app = App {
            console,
            board,
            router: router::Router::new(),
            replies: writer::Replies::new(ticks),
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
        self.replies.last_cost()
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

    /// Runs `line` on the console in machine mode, its reply not sent; `true` if it answered
    /// `ok`.
    fn silent(&mut self, line: &str) -> bool {
        let mode = self.console.mode();
        self.console.set_mode(Mode::Machine);
        self.replies.silent(self.console, line);
        self.console.set_mode(mode);
        self.replies.ok()
    }

    /// Draws the verdict of the console's last judged board.
    fn show_verdict(&mut self) {
        let mut text = heapless::String::new();
        if let Some(v) = verdict::verdict_screen(self.console, &mut text) {
            self.board.show(&Show::Verdict(v));
        }
    }

    /// Measure and check with the console's `test` and show the verdict (a short press).
    pub fn button(&mut self) {
        if self.silent("test") {
            self.show_verdict();
        }
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
        use crate::screen::DesignScreen;
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
        let mut line = heapless::String::<32>::new();
        let _ = core::fmt::Write::write_fmt(&mut line, format_args!("choose {}", k.name));
        let ok = self.silent(&line);
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
}
