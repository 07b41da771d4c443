//! The 128x64 one-bit screen: what the application shows, a RAM framebuffer, and the layouts.
//!
//! The hardware image draws the layouts on an SSD1306 OLED; the emulated image draws the same
//! layouts into [`FrameBuffer`], which can print itself as text art over the console
//! (`fw:screen?`). The screen knows nothing of the application: the application
//! ([`crate::console`]) hands it a [`Show`].
//!
//! | module | job |
//! | --- | --- |
//! | this one | [`Show`] and [`draw_show`], the framebuffer and its text art, node labels |
//! | `layouts` | the verdict, measurement, design and message screens |
//! | `text` | the one font, its doubled size for titles, word wrapping |
use biasjig_core::console::{Channel, JigError};
use biasjig_core::stage::Readings;
use embedded_graphics::pixelcolor::BinaryColor;
use embedded_graphics::prelude::*;

mod layouts;
#[cfg(test)]
pub(crate) mod tests;
mod text;

pub use layouts::{
    draw_design, draw_measurement, draw_message, draw_verdict, DesignScreen, Verdict, VerdictScreen,
};
pub use text::wrap;

/// A one-bit screen or framebuffer the layouts draw on.
pub trait Monochrome: DrawTarget<Color = BinaryColor> {}

impl<D: DrawTarget<Color = BinaryColor>> Monochrome for D {}

/// What the board shows.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Show<'a> {
    /// The verdict of a check.
    Verdict(VerdictScreen<'a>),
    /// A plain measurement, or why it failed.
    Measured(Result<Readings, JigError>),
    /// The kept design now chosen.
    Design(DesignScreen<'a>),
    /// A large title and a short text.
    Message(&'a str, &'a str),
}

/// Upper-case node label for screens and `fw:measure?`.
pub fn label(c: Channel) -> &'static str {
    match c {
        Channel::Vcc => "VCC",
        Channel::Vb => "VB",
        Channel::Ve => "VE",
        Channel::Vc => "VC",
    }
}

/// Screen width, pixels.
pub const WIDTH: u32 = 128;
/// Screen height, pixels.
pub const HEIGHT: u32 = 64;
const BYTES: usize = (WIDTH * HEIGHT / 8) as usize;

/// 128x64 pixels, one bit each, in RAM.
pub struct FrameBuffer {
    bits: [u8; BYTES],
}

impl Default for FrameBuffer {
    fn default() -> Self {
        Self::new()
    }
}

impl FrameBuffer {
    /// An all-off framebuffer.
    pub const fn new() -> Self {
        FrameBuffer { bits: [0; BYTES] }
    }

    /// Whether a pixel is on; off outside the screen.
    pub fn pixel(&self, x: u32, y: u32) -> bool {
        if x >= WIDTH || y >= HEIGHT {
            return false;
        }
        let i = (y * WIDTH + x) as usize;
        self.bits
            .get(i / 8)
            .is_some_and(|b| b & (1 << (i % 8)) != 0)
    }

    fn set(&mut self, x: u32, y: u32, on: bool) {
        let i = (y * WIDTH + x) as usize;
        if let Some(b) = self.bits.get_mut(i / 8) {
            if on {
                *b |= 1 << (i % 8);
            } else {
                *b &= !(1 << (i % 8));
            }
        }
    }

    /// Text art: 32 lines of 128 characters, each character two pixel rows
    /// (`#` both on, `"` upper only, `.` lower only, space none), lines ending in CRLF.
    pub fn write_art<W: embedded_io::Write>(&self, out: &mut W) -> Result<(), W::Error> {
        let mut line = [b' '; WIDTH as usize + 2];
        for row in 0..HEIGHT / 2 {
            for (x, c) in line.iter_mut().take(WIDTH as usize).enumerate() {
                let x = x as u32;
                *c = match (self.pixel(x, 2 * row), self.pixel(x, 2 * row + 1)) {
                    (true, true) => b'#',
                    (true, false) => b'"',
                    (false, true) => b'.',
                    (false, false) => b' ',
                };
            }
            if let Some(end) = line.get_mut(WIDTH as usize..) {
                end.copy_from_slice(b"\r\n");
            }
            out.write_all(&line)?;
        }
        Ok(())
    }
}

impl OriginDimensions for FrameBuffer {
    fn size(&self) -> Size {
        Size::new(WIDTH, HEIGHT)
    }
}

impl DrawTarget for FrameBuffer {
    type Color = BinaryColor;
    type Error = core::convert::Infallible;

    fn draw_iter<I>(&mut self, pixels: I) -> Result<(), Self::Error>
    where
        I: IntoIterator<Item = Pixel<Self::Color>>,
    {
        for Pixel(p, c) in pixels {
            if let (Ok(x), Ok(y)) = (u32::try_from(p.x), u32::try_from(p.y)) {
                if x < WIDTH && y < HEIGHT {
                    self.set(x, y, c.is_on());
                }
            }
        }
        Ok(())
    }
}

/// Draws whatever the application shows.
pub fn draw_show<D: Monochrome>(d: &mut D, what: &Show<'_>) -> Result<(), D::Error> {
    match what {
        Show::Verdict(v) => draw_verdict(d, v),
        Show::Measured(r) => draw_measurement(d, r),
        Show::Design(s) => draw_design(d, s),
        Show::Message(title, body) => draw_message(d, title, body),
    }
}

/// Draws a measurement into the framebuffer (which cannot fail).
pub fn draw_result(fb: &mut FrameBuffer, r: &Result<Readings, JigError>) {
    let _ = draw_measurement(fb, r);
}
