//! The console engine in this process: no jig (readings are typed), settings in memory, a
//! millisecond clock from the program's start. The console command runs it on stdin/stdout;
//! the manual station serves it on a memory pair; the station computes the expected digest
//! with it.

use std::time::Instant;

use biasjig_core::console::jig::{MemoryStore, NoJig};
use biasjig_core::console::{Clock, Console, Identity};

/// Milliseconds since the program started.
pub struct StdClock(pub Instant);

impl Default for StdClock {
    fn default() -> Self {
        Self(Instant::now())
    }
}

impl Clock for StdClock {
    fn now_ms(&mut self) -> u64 {
        u64::try_from(self.0.elapsed().as_millis()).unwrap_or(u64::MAX)
    }
}

/// The console engine of this process: no jig (readings are typed with `check`), settings in memory.
pub type LocalConsole = Console<NoJig, MemoryStore, StdClock>;

/// A console engine for this process.
pub fn local_console() -> LocalConsole {
    Console::new(
        Identity::new("console", env!("CARGO_PKG_VERSION")),
        NoJig,
        MemoryStore::default(),
        StdClock::default(),
    )
}
