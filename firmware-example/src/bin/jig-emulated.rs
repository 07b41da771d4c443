//! biasjig jig reader on QEMU's `netduinoplus2` (STM32F405): console on USART1, an emulated jig,
//! the screen drawn into a RAM framebuffer.
//!
//! Start-up is kept minimal for the emulator: no clock tree set-up (a HAL's clock set-up can wait
//! forever under QEMU), only USART1 and SysTick are touched.
//!
//! `qemu-system-arm -M netduinoplus2 -nographic -monitor none -serial pty -icount shift=0 -kernel jig-emulated`
#![no_std]
#![no_main]

use biasjig_firmware::console::{App, Board, InterimConsole};
use biasjig_firmware::jig::{EmulatedJig, JigError, NodeVoltages, EMULATED_NODES};
use biasjig_firmware::screen::{draw_result, FrameBuffer};
use biasjig_firmware::serial::NbSerial;
use biasjig_firmware::target::{stack, ticks, usart1::Usart1};
use cortex_m_rt::{entry, exception};
use embedded_io::Write;
use panic_halt as _;
// The device crate supplies the interrupt vector table (F411 layout; the emulated image enables
// no device interrupt, so the F405 difference does not matter).
use stm32f4xx_hal as _;

struct EmulatedBoard {
    jig: EmulatedJig,
    fb: FrameBuffer,
}

impl Board for EmulatedBoard {
    fn stack_used(&self) -> usize {
        stack::used()
    }
    fn stack_size(&self) -> usize {
        stack::size()
    }
    fn measure(&mut self) -> Result<NodeVoltages, JigError> {
        self.jig.measure()
    }
    fn show(&mut self, result: &Result<NodeVoltages, JigError>) {
        draw_result(&mut self.fb, result);
    }
    fn screen_art<W: Write>(&mut self, out: &mut W) -> Result<bool, W::Error> {
        self.fb.write_art(out)?;
        Ok(true)
    }
}

#[entry]
fn main() -> ! {
    stack::paint();
    let mut io = NbSerial::new(Usart1::init());
    let Some(cp) = cortex_m::Peripherals::take() else {
        loop {
            cortex_m::asm::wfi();
        }
    };
    let ticks = ticks::SysTickTicks::start(cp.SYST);
    let board = EmulatedBoard {
        jig: EmulatedJig::new(EMULATED_NODES),
        fb: FrameBuffer::new(),
    };
    // Interim console: the core console engine replaces `InterimConsole` here when it exists.
    let mut app = App::new(
        InterimConsole {
            model: "jig-emulated",
        },
        board,
        ticks,
    );
    app.run(&mut io)
}

#[exception]
fn SysTick() {
    ticks::systick_wrapped();
}
