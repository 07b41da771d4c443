//! biasjig jig reader on an STM32F411 board: the console on USART2 (PA2 TX, PA3 RX, 115200 8N1;
//! the ST-LINK virtual COM port on a Nucleo-F411RE), the jig's four node inputs through 47k/10k
//! dividers on ADC1 (VCC PA0/IN0, VB PA1/IN1, VE PA4/IN4, VC PB0/IN8), an SSD1306 128x64 OLED on
//! I2C1 (PB8 SCL, PB9 SDA, address 0x3C) and a measure button on PC13 (active low).
#![no_std]
#![no_main]

use biasjig_firmware::adc::ChannelConfig;
use biasjig_firmware::button::Debounce;
use biasjig_firmware::console::{App, Board, InterimConsole};
use biasjig_firmware::cost::Ticks;
use biasjig_firmware::jig::{
    JigError, Node, NodeVoltages, SampleSource, SampledJig, JIG_DIVIDER_RATIO,
};
use biasjig_firmware::screen::draw_measurement;
use biasjig_firmware::serial::NbSerial;
use biasjig_firmware::target::{stack, ticks::DwtTicks};
use cortex_m_rt::entry;
use embedded_io::{ReadReady, Write};
use panic_halt as _;
use ssd1306::mode::BufferedGraphicsMode;
use ssd1306::prelude::*;
use ssd1306::{I2CDisplayInterface, Ssd1306};
use stm32f4xx_hal::adc::config::{AdcConfig, SampleTime};
use stm32f4xx_hal::adc::Adc;
use stm32f4xx_hal::gpio::{Analog, Pin};
use stm32f4xx_hal::i2c::{I2c, Mode};
use stm32f4xx_hal::pac;
use stm32f4xx_hal::prelude::*;
use stm32f4xx_hal::rcc::Config;

/// Core clock, Hz.
const SYSCLK_HZ: u32 = 84_000_000;
/// Button poll period: 1 ms of core cycles.
const BUTTON_POLL_CYCLES: u32 = SYSCLK_HZ / 1000;

type Display = Ssd1306<
    I2CInterface<I2c<pac::I2C1>>,
    DisplaySize128x64,
    BufferedGraphicsMode<DisplaySize128x64>,
>;

struct AdcSamples {
    adc: Adc<pac::ADC1>,
    vcc: Pin<'A', 0, Analog>,
    vb: Pin<'A', 1, Analog>,
    ve: Pin<'A', 4, Analog>,
    vc: Pin<'B', 0, Analog>,
}

impl SampleSource for AdcSamples {
    fn sample(&mut self, node: Node) -> u16 {
        let t = SampleTime::Cycles_480;
        match node {
            Node::Vcc => self.adc.convert(&self.vcc, t),
            Node::Vb => self.adc.convert(&self.vb, t),
            Node::Ve => self.adc.convert(&self.ve, t),
            Node::Vc => self.adc.convert(&self.vc, t),
        }
    }
}

struct JigBoard {
    jig: SampledJig<AdcSamples>,
    display: Option<Display>,
}

impl Board for JigBoard {
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
        if let Some(d) = self.display.as_mut() {
            let _ = draw_measurement(d, result);
            if d.flush().is_err() {
                // The display stopped answering; stop drawing to it.
                self.display = None;
            }
        }
    }
    fn screen_art<W: Write>(&mut self, _out: &mut W) -> Result<bool, W::Error> {
        Ok(false)
    }
}

#[entry]
fn main() -> ! {
    stack::paint();
    let (Some(dp), Some(mut cp)) = (pac::Peripherals::take(), cortex_m::Peripherals::take()) else {
        loop {
            cortex_m::asm::wfi();
        }
    };
    let mut rcc = dp.RCC.freeze(Config::hsi().sysclk(SYSCLK_HZ.Hz()));
    let gpioa = dp.GPIOA.split(&mut rcc);
    let gpiob = dp.GPIOB.split(&mut rcc);
    let gpioc = dp.GPIOC.split(&mut rcc);

    let Ok(serial) = dp
        .USART2
        .serial::<u8>((gpioa.pa2, gpioa.pa3), 115_200.bps(), &mut rcc)
    else {
        loop {
            cortex_m::asm::wfi();
        }
    };
    let mut io = NbSerial::new(serial);

    let adc = Adc::new(dp.ADC1, true, AdcConfig::default(), &mut rcc);
    // VDDA from the factory VREFINT calibration, volts.
    let vref = adc.reference_voltage() as f32 / 1000.0;
    let samples = AdcSamples {
        adc,
        vcc: gpioa.pa0.into_analog(),
        vb: gpioa.pa1.into_analog(),
        ve: gpioa.pa4.into_analog(),
        vc: gpiob.pb0.into_analog(),
    };
    // Per-channel two-point calibration goes into `channels[i].cal` (from the production
    // calibration record; identity until one is stored).
    let jig = SampledJig {
        source: samples,
        channels: [ChannelConfig::new(JIG_DIVIDER_RATIO, vref); 4],
        oversample: 32,
    };

    let i2c = I2c::new(
        dp.I2C1,
        (gpiob.pb8, gpiob.pb9),
        Mode::standard(400.kHz()),
        &mut rcc,
    );
    let mut display = Ssd1306::new(
        I2CDisplayInterface::new(i2c),
        DisplaySize128x64,
        DisplayRotation::Rotate0,
    )
    .into_buffered_graphics_mode();
    let display = display.init().is_ok().then_some(display);

    let button = gpioc.pc13.into_pull_up_input();
    let mut debounce = Debounce::<5>::new();

    let mut poll_clock = DwtTicks::start(&mut cp.DCB, &mut cp.DWT);
    let mut last_poll = poll_clock.now();
    // Interim console: the core console engine replaces `InterimConsole` here when it exists.
    let mut app = App::new(
        InterimConsole {
            model: "jig-stm32f411",
        },
        JigBoard { jig, display },
        DwtTicks,
    );

    loop {
        if matches!(io.read_ready(), Ok(true)) {
            let _ = app.poll(&mut io);
        }
        let now = poll_clock.now();
        if now.wrapping_sub(last_poll) >= BUTTON_POLL_CYCLES {
            last_poll = now;
            if debounce.update(button.is_low()) {
                // Measure and show; the pass/fail check waits for the core's check module.
                let _ = app.measure_and_show();
            }
        }
    }
}
