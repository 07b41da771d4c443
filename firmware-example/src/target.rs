//! Cortex-M only: stack painting on the real stack, tick sources, the emulated image's USART1,
//! the store's memory and the internal flash.

/// Stack painting on the region cortex-m-rt leaves for the stack: from `_stack_end` (the end of
/// static RAM) up to `_stack_start` (the top of RAM).
pub mod stack {
    use crate::stack::PAINT;

    extern "C" {
        static _stack_start: u32;
        static _stack_end: u32;
    }

    fn bounds() -> (usize, usize) {
        // Only the addresses of the linker symbols are taken, never their contents.
        (
            core::ptr::addr_of!(_stack_end) as usize,
            core::ptr::addr_of!(_stack_start) as usize,
        )
    }

    /// Bytes of the stack region.
    pub fn size() -> usize {
        let (bottom, top) = bounds();
        top - bottom
    }

    /// Fills the unused part of the stack with the pattern. Call first thing in `main`; it paints
    /// only below its own frame (current stack pointer minus a margin), which nothing uses yet.
    #[inline(never)]
    pub fn paint() {
        let (bottom, _) = bounds();
        let sp = cortex_m::register::msp::read() as usize;
        let limit = (sp.saturating_sub(64)) & !3;
        let mut a = (bottom + 3) & !3;
        while a < limit {
            // SAFETY: [bottom, limit) lies in RAM between the end of statics and below the live
            // stack frame; no Rust object lives there.
            unsafe { core::ptr::write_volatile(a as *mut u32, PAINT) };
            a += 4;
        }
    }

    /// High-water mark: bytes of the stack ever used since [`paint`].
    pub fn used() -> usize {
        let (bottom, top) = bounds();
        let mut a = (bottom + 3) & !3;
        while a < top {
            // SAFETY: an aligned read inside RAM; volatile because the stack is not a Rust object.
            if unsafe { core::ptr::read_volatile(a as *const u32) } != PAINT {
                break;
            }
            a += 4;
        }
        top - a
    }
}

/// Tick sources for the cost counter.
pub mod ticks {
    use crate::cost::Ticks;
    use core::sync::atomic::{AtomicU32, Ordering};
    use cortex_m::peripheral::syst::SystClkSource;
    use cortex_m::peripheral::{DCB, DWT, SYST};

    static SYSTICK_WRAPS: AtomicU32 = AtomicU32::new(0);
    const RELOAD: u32 = 0x00FF_FFFF;

    /// Call from the `SysTick` exception handler.
    pub fn systick_wrapped() {
        SYSTICK_WRAPS.fetch_add(1, Ordering::Relaxed);
    }

    /// SysTick on the core clock, extended to 32 bits by counting wraps in its exception
    /// (the image must install a `SysTick` handler that calls [`systick_wrapped`]). Under QEMU
    /// with `-icount shift=0` it is deterministic.
    pub struct SysTickTicks {
        _syst: SYST,
    }

    impl SysTickTicks {
        /// Starts SysTick free-running with its wrap interrupt.
        pub fn start(mut syst: SYST) -> Self {
            syst.set_clock_source(SystClkSource::Core);
            syst.set_reload(RELOAD);
            syst.clear_current();
            syst.enable_interrupt();
            syst.enable_counter();
            SysTickTicks { _syst: syst }
        }
    }

    /// SysTick ticks since [`SysTickTicks::start`], 56 bits (wraps counted in the exception).
    pub fn now64() -> u64 {
        loop {
            let w = SYSTICK_WRAPS.load(Ordering::Acquire);
            let cur = SYST::get_current();
            if SYSTICK_WRAPS.load(Ordering::Acquire) == w {
                return (u64::from(w) << 24) | u64::from(RELOAD - (cur & RELOAD));
            }
        }
    }

    impl Ticks for SysTickTicks {
        fn now(&mut self) -> u32 {
            now64() as u32
        }
    }

    /// The console's millisecond clock from SysTick (started by [`SysTickTicks::start`]).
    pub struct SysTickClock {
        /// SysTick ticks per millisecond (the core clock in kHz).
        pub ticks_per_ms: u32,
    }

    impl biasjig_core::console::Clock for SysTickClock {
        fn now_ms(&mut self) -> u64 {
            now64() / u64::from(self.ticks_per_ms.max(1))
        }
    }

    /// Runs exactly `2 * n` instructions (a `subs` / `bne` loop) and gives the SysTick ticks they
    /// took: under QEMU `-icount shift=0` this relates ticks to instructions.
    pub fn ticks_for_loop(n: u32) -> u64 {
        let start = now64();
        if n > 0 {
            // SAFETY: a register-only countdown loop; touches no memory and no stack.
            unsafe {
                core::arch::asm!(
                    "1:",
                    "subs {0}, #1",
                    "bne 1b",
                    inout(reg) n => _,
                    options(nomem, nostack)
                );
            }
        }
        now64() - start
    }

    /// The DWT cycle counter (core cycles; hardware image).
    pub struct DwtTicks;

    impl DwtTicks {
        /// Enables trace and the cycle counter.
        pub fn start(dcb: &mut DCB, dwt: &mut DWT) -> Self {
            dcb.enable_trace();
            DWT::unlock();
            dwt.enable_cycle_counter();
            DwtTicks
        }
    }

    impl Ticks for DwtTicks {
        fn now(&mut self) -> u32 {
            DWT::cycle_count()
        }
    }
}

/// USART1 through the chip's register-access crate (the `stm32f4` PAC, as the HAL re-exports it),
/// for the emulated image: QEMU's model needs no clock set-up, only the transmitter and receiver
/// enabled, and a HAL's clock set-up may wait forever there. Same address (0x4001_1000) and
/// layout on the STM32F405 and F411.
pub mod usart1 {
    use cortex_m::peripheral::NVIC;
    use embedded_hal_nb::nb;
    use embedded_hal_nb::serial::{self, ErrorKind};
    use stm32f4xx_hal::pac::{Interrupt, RCC, USART1};

    /// A receive error of the USART.
    #[derive(Debug, Clone, Copy)]
    pub struct RawError(pub ErrorKind);

    impl serial::Error for RawError {
        fn kind(&self) -> ErrorKind {
            self.0
        }
    }

    /// USART1, 8N1, transmitter and receiver on.
    pub struct Usart1 {
        usart: USART1,
    }

    impl Usart1 {
        /// Enables USART1's clock, sets 115200 baud for an 84 MHz APB2 (ignored by QEMU) and turns
        /// on the USART with its transmitter and receiver. Touches only RCC's USART1 enable bit
        /// and USART1.
        pub fn init(usart: USART1, rcc: &RCC) -> Self {
            rcc.apb2enr().modify(|_, w| w.usart1en().set_bit());
            // 84 MHz / (16 * 45.5625) = 115 226 baud.
            usart
                .brr()
                .write(|w| w.div_mantissa().set(45).div_fraction().set(9));
            usart
                .cr1()
                .write(|w| w.ue().set_bit().te().set_bit().re().set_bit());
            Usart1 { usart }
        }

        /// Sleeps until a byte arrives or any interrupt (SysTick) comes. Under QEMU the
        /// machine's virtual clock runs on in real time while the core sleeps, so the console's
        /// clock (the PIN back-off) follows real time between commands; busy polling would
        /// stretch it.
        pub fn idle(&mut self) {
            self.usart.cr1().modify(|_, w| w.rxneie().set_bit());
            NVIC::unpend(Interrupt::USART1);
            // SAFETY: the handler (`on_interrupt`) only masks this interrupt again; it shares
            // no data with the code it interrupts.
            unsafe { NVIC::unmask(Interrupt::USART1) };
            if self.usart.sr().read().rxne().bit_is_clear() {
                // A byte arriving now raises the interrupt, which ends the wait. (One arriving
                // between the test and the WFI is taken by the handler first; the WFI then ends
                // at the next SysTick wrap, at most 0.1 s later.)
                cortex_m::asm::wfi();
            }
            NVIC::mask(Interrupt::USART1);
        }
    }

    /// Call from the USART1 interrupt handler: masks the interrupt (the USART holds its line up
    /// until the byte is read, and the byte is left for the polling reader).
    pub fn on_interrupt() {
        NVIC::mask(Interrupt::USART1);
    }

    impl serial::ErrorType for Usart1 {
        type Error = RawError;
    }

    impl serial::Read<u8> for Usart1 {
        fn read(&mut self) -> nb::Result<u8, RawError> {
            let sr = self.usart.sr().read();
            let kind = if sr.ore().bit_is_set() {
                Some(ErrorKind::Overrun)
            } else if sr.fe().bit_is_set() {
                Some(ErrorKind::FrameFormat)
            } else if sr.pe().bit_is_set() {
                Some(ErrorKind::Parity)
            } else if sr.nf().bit_is_set() {
                Some(ErrorKind::Noise)
            } else {
                None
            };
            if let Some(kind) = kind {
                // Reading DR after SR clears the error flags.
                let _ = self.usart.dr().read();
                return Err(nb::Error::Other(RawError(kind)));
            }
            if sr.rxne().bit_is_set() {
                Ok(self.usart.dr().read().dr().bits() as u8)
            } else {
                Err(nb::Error::WouldBlock)
            }
        }
    }

    impl serial::Write<u8> for Usart1 {
        fn write(&mut self, byte: u8) -> nb::Result<(), RawError> {
            if self.usart.sr().read().txe().bit_is_set() {
                self.usart.dr().write(|w| w.dr().set(u16::from(byte)));
                Ok(())
            } else {
                Err(nb::Error::WouldBlock)
            }
        }

        fn flush(&mut self) -> nb::Result<(), RawError> {
            if self.usart.sr().read().tc().bit_is_set() {
                Ok(())
            } else {
                Err(nb::Error::WouldBlock)
            }
        }
    }
}

/// The memory the linker script reserves for the store (`STORE_FLASH`, `STORE_RAM` in
/// memory.x).
pub mod store_mem {
    use core::sync::atomic::{AtomicBool, Ordering};

    extern "C" {
        static __store_ram_start: u8;
        static __store_ram_end: u8;
        static __store_flash_start: u8;
        static __store_flash_end: u8;
    }

    static RAM_TAKEN: AtomicBool = AtomicBool::new(false);

    /// The `STORE_RAM` region, once (`None` on a second call). No section is placed there, so
    /// neither start-up nor QEMU's loader writes it: its contents survive a reset of the machine.
    pub fn take_ram() -> Option<&'static mut [u8]> {
        if RAM_TAKEN.swap(true, Ordering::AcqRel) {
            return None;
        }
        // Only the addresses of the linker symbols are taken.
        let start = core::ptr::addr_of!(__store_ram_start) as usize;
        let end = core::ptr::addr_of!(__store_ram_end) as usize;
        // SAFETY: [start, end) is RAM that the linker script keeps free of every section and of
        // the stack; the flag above hands it out once, so this is its only reference.
        Some(unsafe { core::slice::from_raw_parts_mut(start as *mut u8, end - start) })
    }

    /// The `STORE_FLASH` sectors as byte offsets from the start of flash (0x0800_0000).
    pub fn flash_range() -> core::ops::Range<u32> {
        let base = 0x0800_0000usize;
        let start = core::ptr::addr_of!(__store_flash_start) as usize;
        let end = core::ptr::addr_of!(__store_flash_end) as usize;
        (start.wrapping_sub(base) as u32)..(end.wrapping_sub(base) as u32)
    }
}

/// The STM32F4's own flash as an `embedded-storage` NOR flash (offsets from 0x0800_0000),
/// unlocked for each erase or write and locked again after it.
pub mod internal_flash {
    use embedded_storage::nor_flash::{ErrorType, NorFlash, ReadNorFlash};
    use stm32f4xx_hal::flash::{Error, FlashExt};
    use stm32f4xx_hal::pac::FLASH;

    /// The flash controller and the memory behind it.
    pub struct InternalFlash(pub FLASH);

    impl ErrorType for InternalFlash {
        type Error = Error;
    }

    impl ReadNorFlash for InternalFlash {
        const READ_SIZE: usize = 1;

        fn read(&mut self, offset: u32, bytes: &mut [u8]) -> Result<(), Error> {
            let start = offset as usize;
            let src = self
                .0
                .read()
                .get(start..start + bytes.len())
                .ok_or(Error::ProgrammingAlignment)?;
            bytes.copy_from_slice(src);
            Ok(())
        }

        fn capacity(&self) -> usize {
            self.0.len()
        }
    }

    impl NorFlash for InternalFlash {
        const WRITE_SIZE: usize = 1;
        /// The store's sectors (6 and 7) are 128 KiB each.
        const ERASE_SIZE: usize = 128 * 1024;

        fn erase(&mut self, from: u32, to: u32) -> Result<(), Error> {
            NorFlash::erase(&mut self.0.unlocked(), from, to)
        }

        fn write(&mut self, offset: u32, bytes: &[u8]) -> Result<(), Error> {
            NorFlash::write(&mut self.0.unlocked(), offset, bytes)
        }
    }
}
