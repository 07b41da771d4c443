//! # biasjig firmware application
//!
//! The part of the jig reader firmware that does not depend on a chip: it compiles for the
//! Cortex-M4F images and for the host, where its unit tests run
//! (`cargo test --target x86_64-unknown-linux-gnu --lib` from `firmware-example/`).
//!
//! | module | job |
//! | --- | --- |
//! | [`serial`] | `embedded-io` 0.7 `Read`/`Write` over any non-blocking (`embedded-hal-nb`) UART |
//! | [`button`] | debounced active-low push button |
//! | [`console`] | the application [`console::App`]: the byte router, the buffered and timed replies, the `fw:` queries, the verdict screen from the console's last check, the button |
//! | [`cost`] | elapsed ticks of the last command (SysTick under QEMU, DWT cycle counter on hardware) |
//! | [`adc`] | ADC channel math: divider ratio, two-point calibration, oversampling, clipping, open probe |
//! | [`jig`] | the core `Jig` over ADC channels ([`jig::AdcJig`]) and the emulated jig ([`jig::EmulatedJig`]) |
//! | [`tone`] | the signal test: tone output, the two signal inputs sampled at a fixed rate, Goertzel; the emulated jig's synthesised samples |
//! | [`board`] | the emulated board under test: parts drawn within tolerance (SplitMix64), a fault, the core engine's node voltages; the emulated reading noise |
//! | [`screen`] | what is shown ([`screen::Show`]), a 128x64 one-bit framebuffer and its text art, the screen layouts |
//! | [`stack`] | stack painting and the high-water mark |
//! | [`store`] | the console's records on NOR flash (power-fail safe, wear levelled) and a RAM-backed flash model |
//! | `target` | Cortex-M only: tick sources, stack painting on the real stack, the emulated image's USART1, the store's memory and the internal flash |
//!
//! Dependencies point one way, no circles: `console` uses `screen`, `jig`, `cost` and `button`;
//! `screen` uses `jig` (a reading by node); `jig` uses `adc`, `board` and `tone`; `tone` uses
//! `board` (its reading noise); `board` uses `adc` (the inputs' resistance); `target` uses
//! `cost` and `stack`. The screen never reaches back into the application.
#![cfg_attr(not(test), no_std)]
#![deny(unsafe_code)]
#![deny(missing_docs)]
// No panics outside the tests: clippy's panic lints are denied for the whole crate in
// Cargo.toml (`[lints.clippy]`); clippy.toml allows them in tests.

pub mod adc;
pub mod board;
pub mod button;
pub mod console;
pub mod cost;
pub mod jig;
pub mod screen;
pub mod serial;
pub mod stack;
pub mod store;
#[cfg(target_os = "none")]
// Register access (USART1, SysTick, DWT) and stack painting need raw pointers; every unsafe block
// there says why it is sound.
#[allow(unsafe_code)]
pub mod target;
pub mod tone;

/// Firmware version, from the crate.
pub const VERSION: &str = env!("CARGO_PKG_VERSION");
