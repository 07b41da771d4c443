//! biasjig jig reader on an STM32F411 board: the core console on USART2 (PA2 TX, PA3 RX, 115200
//! 8N1; the ST-LINK virtual COM port on a Nucleo-F411RE), the jig's four node inputs through
//! 10M/1M buffered dividers (ratio 11, 36.3 V full scale, 11 MΩ per input) on ADC1 (VCC PA0/IN0, VB PA1/IN1, VE PA4/IN4,
//! VC PB0/IN8), an SSD1306 128x64 OLED on I2C1 (PB8 SCL, PB9 SDA, address 0x3C) and a
//! measure-and-check button on PC13 (active low). The signal test: the tone output on PB4
//! (TIM3_CH1, a square wave) through the attenuator to the source end of RS, the source on PC0
//! (ADC1_IN10) and the load on PC1 (ADC1_IN11), both AC-coupled and biased at half the
//! reference, sampled in step with the tone by TIM2 (README, wiring).
//!
//! Settings (with the PIN count and the chosen design), calibration and up to eight kept designs
//! are in the store on flash sectors 6 and 7 (`STORE_FLASH` in memory.x), kept through power
//! cuts (store.rs).
#![no_std]
#![no_main]

use biasjig_core::console::{Channel, Console, Identity};
use biasjig_firmware::button::Debounce;
use biasjig_firmware::console::{App, Board};
use biasjig_firmware::cost::Ticks;
use biasjig_firmware::jig::{AdcJig, SampleSource};
use biasjig_firmware::screen::{draw_show, Show};
use biasjig_firmware::serial::NbSerial;
use biasjig_firmware::store::FlashStore;
use biasjig_firmware::target::internal_flash::InternalFlash;
use biasjig_firmware::target::{stack, store_mem, ticks, ticks::DwtTicks};
use biasjig_firmware::tone::ToneDriver;
use core::mem::MaybeUninit;
use cortex_m_rt::{entry, exception};
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
use stm32f4xx_hal::rcc::Enable;

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
    /// The signal test: source and load inputs, the tone timer and the sampling timer.
    source: Pin<'C', 0, Analog>,
    load: Pin<'C', 1, Analog>,
    tone_timer: pac::TIM3,
    sample_timer: pac::TIM2,
    /// Clock of both timers, Hz.
    timer_hz: u32,
}

impl ToneDriver for AdcSamples {
    fn start(&mut self, f_hz: f32, samples_per_period: u32) -> f32 {
        // One sampling period of D timer clocks; the tone's period is exactly P of them.
        let p = samples_per_period.max(2);
        let d = ((self.timer_hz as f32 / (f_hz * p as f32)) as u32).max(2);
        let (t, s) = (&self.tone_timer, &self.sample_timer);
        t.cr1().modify(|_, w| w.cen().clear_bit());
        s.cr1().modify(|_, w| w.cen().clear_bit());
        // SAFETY (every `bits` write below): PSC, ARR, CCR1 and CNT are plain counts whose
        // field is the whole register; any value is valid (D and P are kept below 2^16 by
        // `samples_per_period` and the tone range, and TIM2 is 32 bit).
        // Tone: PWM mode 1, half duty, period P·D clocks (TIM3 is 16 bit: prescale by D).
        t.psc().write(|w| unsafe { w.bits(d - 1) });
        t.arr().write(|w| unsafe { w.bits(p - 1) });
        t.ccr1().write(|w| unsafe { w.bits(p / 2) });
        t.ccmr1_output()
            .modify(|_, w| w.oc1m().pwm_mode1().oc1pe().set_bit());
        t.ccer().modify(|_, w| w.cc1e().set_bit());
        t.egr().write(|w| w.ug().set_bit());
        // Sampling: an update every D clocks.
        s.psc().write(|w| unsafe { w.bits(0) });
        s.arr().write(|w| unsafe { w.bits(d - 1) });
        s.egr().write(|w| w.ug().set_bit());
        s.sr().modify(|_, w| w.uif().clear_bit());
        t.cnt().write(|w| unsafe { w.bits(0) });
        s.cnt().write(|w| unsafe { w.bits(0) });
        t.cr1().modify(|_, w| w.cen().set_bit());
        s.cr1().modify(|_, w| w.cen().set_bit());
        self.timer_hz as f32 / (d as f32 * p as f32)
    }

    fn stop(&mut self) {
        self.tone_timer.cr1().modify(|_, w| w.cen().clear_bit());
        self.tone_timer.ccer().modify(|_, w| w.cc1e().clear_bit());
        self.sample_timer.cr1().modify(|_, w| w.cen().clear_bit());
    }

    fn sample_pair(&mut self) -> (u16, u16) {
        while self.sample_timer.sr().read().uif().bit_is_clear() {}
        self.sample_timer.sr().modify(|_, w| w.uif().clear_bit());
        let t = SampleTime::Cycles_56;
        let a = self.adc.convert(&self.source, t);
        let b = self.adc.convert(&self.load, t);
        (a, b)
    }
}

impl SampleSource for AdcSamples {
    fn sample(&mut self, channel: Channel) -> u16 {
        let t = SampleTime::Cycles_480;
        match channel {
            Channel::Vcc => self.adc.convert(&self.vcc, t),
            Channel::Vb => self.adc.convert(&self.vb, t),
            Channel::Ve => self.adc.convert(&self.ve, t),
            Channel::Vc => self.adc.convert(&self.vc, t),
        }
    }

    fn tone(&mut self) -> Option<&mut dyn ToneDriver> {
        Some(self)
    }
}

struct JigBoard {
    display: Option<Display>,
}

impl Board for JigBoard {
    fn stack(&self) -> (usize, usize) {
        (stack::used(), stack::size())
    }
    fn show(&mut self, what: &Show<'_>) {
        if let Some(d) = self.display.as_mut() {
            let _ = draw_show(d, what);
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

type HwStore = FlashStore<InternalFlash>;
type HwConsole = Console<AdcJig<AdcSamples>, HwStore, ticks::SysTickClock>;
type HwApp = App<'static, AdcJig<AdcSamples>, HwStore, ticks::SysTickClock, JigBoard, DwtTicks>;

/// Builds the console and the application in static memory (kept out of `main`'s frame).
#[inline(never)]
fn init(jig: AdcJig<AdcSamples>, board: JigBoard, flash: pac::FLASH) -> Option<&'static mut HwApp> {
    let store = FlashStore::new(InternalFlash(flash), store_mem::flash_range()).ok()?;
    // Built in place in static memory (a console is about 8 KB: a copy on the stack
    // would count against the stack budget).
    let slot = cortex_m::singleton!(: MaybeUninit<HwConsole> = MaybeUninit::uninit())?;
    let console: &'static mut HwConsole = Console::unloaded_in(
        slot,
        identity(),
        jig,
        store,
        ticks::SysTickClock {
            ticks_per_ms: SYSCLK_HZ / 1000,
        },
    );
    console.load_stored();
    let app = cortex_m::singleton!(: MaybeUninit<HwApp> = MaybeUninit::uninit())?;
    Some(app.write(App::new(console, board, DwtTicks)))
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
    pac::TIM2::enable(&mut rcc);
    pac::TIM3::enable(&mut rcc);
    let timer_hz = rcc.clocks.timclk1().raw();
    // The tone output: TIM3_CH1 on PB4 (alternate function 2).
    let _tone_pin = gpiob.pb4.into_alternate::<2>();
    let samples = AdcSamples {
        adc,
        vcc: gpioa.pa0.into_analog(),
        vb: gpioa.pa1.into_analog(),
        ve: gpioa.pa4.into_analog(),
        vc: gpiob.pb0.into_analog(),
        source: gpioc.pc0.into_analog(),
        load: gpioc.pc1.into_analog(),
        tone_timer: dp.TIM3,
        sample_timer: dp.TIM2,
        timer_hz,
    };
    // The console hands the jig its two-point calibration (`calibrate CH low|high V`).
    let jig = AdcJig::new(samples, vref);

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
    let _systick = ticks::SysTickTicks::start(cp.SYST);
    let Some(app) = init(jig, JigBoard { display }, dp.FLASH) else {
        loop {
            cortex_m::asm::wfi();
        }
    };

    loop {
        if matches!(io.read_ready(), Ok(true)) {
            let _ = app.poll(&mut io);
        }
        let now = poll_clock.now();
        if now.wrapping_sub(last_poll) >= BUTTON_POLL_CYCLES {
            last_poll = now;
            if debounce.update(button.is_low()) {
                // Measure and check (the console's `test`), verdict on the screen.
                app.button();
            }
        }
    }
}

/// The identification: the serial is the chip's 96-bit unique ID in hex.
fn identity() -> Identity {
    let mut id = Identity::new("jig-stm32f411", biasjig_firmware::VERSION);
    let uid = stm32f4xx_hal::signature::Uid::get();
    id.serial.clear();
    // x and y (little-endian), the wafer number, the lot number's 7 bytes (zero-padded).
    let (x, y) = (uid.x(), uid.y());
    let bytes = x
        .to_le_bytes()
        .into_iter()
        .chain(y.to_le_bytes())
        .chain([uid.waf_num()])
        .chain(uid.lot_num().bytes().chain(core::iter::repeat(0)).take(7));
    for b in bytes {
        let _ = core::fmt::Write::write_fmt(&mut id.serial, format_args!("{b:02x}"));
    }
    id
}

#[exception]
fn SysTick() {
    ticks::systick_wrapped();
}
