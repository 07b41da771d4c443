//! Cost counter: elapsed ticks of the last command.
//!
//! A [`Ticks`] source is a free-running counter read as `u32` that wraps; the difference of two
//! readings taken with `wrapping_sub` is right as long as one command takes less than 2^32 ticks.
//! Under QEMU (`-icount shift=0`, one instruction per virtual nanosecond) the emulated image uses
//! SysTick, which makes the figure deterministic; on hardware the DWT cycle counter counts core
//! cycles.

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
}

impl<T: Ticks> CostMeter<T> {
    /// A meter over a tick source; the last cost starts at 0.
    pub fn new(ticks: T) -> Self {
        CostMeter {
            ticks,
            started: 0,
            last: 0,
        }
    }

    /// A command starts.
    pub fn start(&mut self) {
        self.started = self.ticks.now();
    }

    /// The command ended; its cost becomes the last cost.
    pub fn stop(&mut self) -> u32 {
        self.last = self.ticks.now().wrapping_sub(self.started);
        self.last
    }

    /// Elapsed ticks of the last command.
    pub fn last(&self) -> u32 {
        self.last
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
}
