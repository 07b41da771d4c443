//! biasjig jig reader on QEMU's `netduinoplus2` (STM32F405): the core console on USART1, the
//! emulated jig (a board drawn around the console's design, a fault set by `inject`, node
//! voltages from the core engine through the hardware's ADC math), the screen drawn into a RAM
//! framebuffer (`fw:screen?`), settings, calibration and kept designs in the store on a
//! RAM-backed flash model (`STORE_RAM` in memory.x: not cleared at start-up, so it survives
//! QEMU's `system_reset`).
//!
//! Start-up is kept minimal for the emulator: no clock tree set-up (a HAL's clock set-up can wait
//! forever under QEMU), only USART1 and SysTick are touched.
//!
//! `qemu-system-arm -M netduinoplus2 -nographic -monitor none -serial pty -icount shift=0 -kernel jig-emulated`
#![no_std]
#![no_main]

use biasjig_core::console::{Console, Identity};
use biasjig_firmware::console::{App, Board};
use biasjig_firmware::jig::EmulatedJig;
use biasjig_firmware::screen::{draw_show, FrameBuffer, Show};
use biasjig_firmware::serial::NbSerial;
use biasjig_firmware::store::{FlashStore, RamFlash};
use biasjig_firmware::target::{stack, store_mem, ticks, usart1, usart1::Usart1};
use core::mem::MaybeUninit;
use cortex_m_rt::{entry, exception};
use embedded_io::{ReadReady, Write};
use panic_halt as _;
// The device crate supplies the interrupt vector table (F411 layout; the emulated image enables
// no device interrupt, so the F405 difference does not matter).
use stm32f4xx_hal::pac::{self, interrupt};

/// The store: the RAM-backed flash model.
type EmuStore = FlashStore<RamFlash<'static>>;

/// QEMU's netduinoplus2 SYSCLK (SysTick's core clock), Hz.
const SYSCLK_HZ: u32 = 168_000_000;
/// The seed of the first emulated board (`fw:board SEED` draws another).
const BOARD_SEED: u64 = 1;
/// Iterations of the start-up tick-rate loop (two instructions each).
const RATE_LOOP: u32 = 500_000;

struct EmulatedBoard {
    fb: FrameBuffer,
    rate: (u64, u64),
}

impl Board for EmulatedBoard {
    fn stack(&self) -> (usize, usize) {
        (stack::used(), stack::size())
    }
    fn show(&mut self, what: &Show<'_>) {
        let _ = draw_show(&mut self.fb, what);
    }
    fn screen_art<W: Write>(&mut self, out: &mut W) -> Result<bool, W::Error> {
        self.fb.write_art(out)?;
        Ok(true)
    }
    fn tick_rate(&self) -> Option<(u64, u64)> {
        Some(self.rate)
    }
}

type EmuConsole = Console<EmulatedJig, EmuStore, ticks::SysTickClock>;
type EmuApp =
    App<'static, EmulatedJig, EmuStore, ticks::SysTickClock, EmulatedBoard, ticks::SysTickTicks>;

fn halt() -> ! {
    loop {
        cortex_m::asm::wfi();
    }
}

/// Builds the console in static memory. Called from `main` before [`init`], not from it: the
/// console (about 13 KB) passes through this frame on its way into its static slot, and no other
/// frame of the start-up may sit under that.
#[inline(never)]
fn console() -> Option<&'static mut EmuConsole> {
    let flash = RamFlash::formatted(store_mem::take_ram()?);
    let len = u32::try_from(embedded_storage::nor_flash::ReadNorFlash::capacity(&flash)).ok()?;
    let store = FlashStore::new(flash, 0..len).ok()?;
    let slot = cortex_m::singleton!(: MaybeUninit<EmuConsole> = MaybeUninit::uninit())?;
    Some(Console::unloaded_in(
        slot,
        Identity::new("jig-emulated", biasjig_firmware::VERSION),
        EmulatedJig::new(BOARD_SEED).timed_by(now32),
        store,
        ticks::SysTickClock {
            ticks_per_ms: SYSCLK_HZ / 1000,
        },
    ))
}

/// Loads the console's stored records and builds the application in static memory (kept out
/// of `main`'s frame, so the stack holds only the frames of the command being served).
#[inline(never)]
fn init(
    console: &'static mut EmuConsole,
    cost_ticks: ticks::SysTickTicks,
) -> Option<&'static mut EmuApp> {
    let rate = (2 * u64::from(RATE_LOOP), ticks::ticks_for_loop(RATE_LOOP));
    console.load_stored();
    let board = EmulatedBoard {
        fb: FrameBuffer::new(),
        rate,
    };
    let app = cortex_m::singleton!(: MaybeUninit<EmuApp> = MaybeUninit::uninit())?;
    Some(app.write(App::new(console, board, cost_ticks)))
}

#[entry]
fn main() -> ! {
    stack::paint();
    let (Some(dp), Some(cp)) = (pac::Peripherals::take(), cortex_m::Peripherals::take()) else {
        halt()
    };
    let mut io = NbSerial::new(Usart1::init(dp.USART1, &dp.RCC));
    let cost_ticks = ticks::SysTickTicks::start(cp.SYST);
    let Some(console) = console() else { halt() };
    let Some(app) = init(console, cost_ticks) else {
        halt()
    };
    loop {
        if matches!(io.read_ready(), Ok(true)) {
            let _ = app.poll(&mut io);
        } else {
            io.inner_mut().idle();
        }
    }
}

#[interrupt]
fn USART1() {
    usart1::on_interrupt();
}

#[exception]
fn SysTick() {
    ticks::systick_wrapped();
}

/// SysTick ticks, wrapping at 32 bits: the clock that times the emulated board apart.
fn now32() -> u32 {
    ticks::now64() as u32
}
