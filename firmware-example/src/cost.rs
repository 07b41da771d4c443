//! Cost counter: elapsed ticks of the last command.
//!
//! A [`Ticks`] source is a free-running counter read as `u32` that wraps; the difference of two
//! readings taken with `wrapping_sub` is right as long as one command takes less than 2^32 ticks.
//! Under QEMU (`-icount shift=0`, one instruction per virtual nanosecond) the emulated image uses
//! SysTick, which makes the figure deterministic; on hardware the DWT cycle counter counts core
//! cycles.

use core::sync::atomic::{AtomicU32, Ordering};

/// Ticks the emulated board spent standing in for the hardware: solving its drawn board and
/// synthesising the converter codes of a tone. On the part those are the board and the converters
/// (time spent waiting for conversions, not instructions), so a command's cost leaves them out
/// and `fw:cost?` reports them apart (`emulated=`).
static STAND_IN: AtomicU32 = AtomicU32::new(0);

/// Runs `f` as the hardware's stand-in: its ticks on `clock` are counted apart from the cost of
/// the command it runs in.
pub fn standing_in<R>(clock: fn() -> u32, f: impl FnOnce() -> R) -> R {
    let t0 = clock();
    let r = f();
    STAND_IN.fetch_add(clock().wrapping_sub(t0), Ordering::Relaxed);
    r
}

/// A clock that does not count: the stand-in's ticks are then not measured (host tests).
pub fn no_clock() -> u32 {
    0
}

/// A free-running, wrapping tick counter.
pub trait Ticks {
    /// The counter now.
    fn now(&mut self) -> u32;
}

/// No counter: always 0 (host tests, or a board without one).
pub struct NoTicks;

impl Ticks for NoTicks {
    fn now(&mut self) -> u32 {
        0
    }
}

/// Measures one command at a time and keeps the last figure.
pub struct CostMeter<T> {
    ticks: T,
    started: u32,
    last: u32,
    /// The stand-in's ticks when the command started, and those it took during the last one.
    stand_in_started: u32,
    last_stand_in: u32,
}

impl<T: Ticks> CostMeter<T> {
    /// A meter over a tick source; the last cost starts at 0.
    pub fn new(ticks: T) -> Self {
        CostMeter {
            ticks,
            started: 0,
            last: 0,
            stand_in_started: 0,
            last_stand_in: 0,
        }
    }

    /// A command starts.
    pub fn start(&mut self) {
        self.stand_in_started = STAND_IN.load(Ordering::Relaxed);
        self.started = self.ticks.now();
    }

    /// The command ended; its cost (without the stand-in's ticks) becomes the last cost.
    pub fn stop(&mut self) -> u32 {
        let elapsed = self.ticks.now().wrapping_sub(self.started);
        self.last_stand_in = STAND_IN
            .load(Ordering::Relaxed)
            .wrapping_sub(self.stand_in_started);
        self.last = elapsed.saturating_sub(self.last_stand_in);
        self.last
    }

    /// Elapsed ticks of the last command, without the hardware stand-in's.
    pub fn last(&self) -> u32 {
        self.last
    }

    /// Ticks the hardware's stand-in took during the last command (0 on the part).
    pub fn last_stand_in(&self) -> u32 {
        self.last_stand_in
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    struct Fake(u32, u32);
    impl Ticks for Fake {
        fn now(&mut self) -> u32 {
            self.0 = self.0.wrapping_add(self.1);
            self.0
        }
    }

    #[test]
    fn measures_across_a_wrap() {
        let mut m = CostMeter::new(Fake(u32::MAX - 10, 100));
        assert_eq!(m.last(), 0);
        m.start();
        assert_eq!(m.stop(), 100);
        assert_eq!(m.last(), 100);
        let mut z = CostMeter::new(NoTicks);
        z.start();
        assert_eq!(z.stop(), 0);
    }

    /// The emulated board's work inside a command is counted apart, not in its cost.
    #[test]
    fn the_stand_in_is_left_out_of_the_cost() {
        static NOW: AtomicU32 = AtomicU32::new(1000);
        fn clock() -> u32 {
            NOW.load(Ordering::Relaxed)
        }
        struct Shared;
        impl Ticks for Shared {
            fn now(&mut self) -> u32 {
                clock()
            }
        }
        let mut m = CostMeter::new(Shared);
        m.start();
        NOW.fetch_add(30, Ordering::Relaxed); // the instrument's own work
        standing_in(clock, || NOW.fetch_add(500, Ordering::Relaxed)); // the board's
        NOW.fetch_add(12, Ordering::Relaxed);
        assert_eq!(m.stop(), 42);
        assert_eq!(m.last_stand_in(), 500);
        assert_eq!(m.last(), 42);
    }
}
