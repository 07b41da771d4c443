//! The 128x64 one-bit screen: a RAM framebuffer and the screen layouts.
//!
//! The hardware image draws the layouts on an SSD1306 OLED; the emulated image draws the same
//! layouts into [`FrameBuffer`], which can print itself as text art over the console.
use crate::console::{label, FmtBuf};
use crate::jig::reading;
use biasjig_core::console::{Channel, JigError};
use biasjig_core::stage::Readings;
use biasjig_core::units::Fixed;
use embedded_graphics::mono_font::ascii::FONT_6X10;
use embedded_graphics::mono_font::{MonoFont, MonoTextStyle};
use embedded_graphics::pixelcolor::BinaryColor;
use embedded_graphics::prelude::*;
use embedded_graphics::text::{Alignment, Baseline, Text, TextStyleBuilder};

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

/// The check verdict of a board under test.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Verdict {
    /// All nodes within their windows.
    Pass,
    /// Some node outside its window.
    Fail,
}

/// What the verdict screen shows.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct VerdictScreen<'a> {
    /// PASS or FAIL, drawn large.
    pub verdict: Verdict,
    /// The node that failed, if any.
    pub failing_node: Option<Channel>,
    /// Likely fault, a short text (wrapped over up to three lines).
    pub fault: &'a str,
}

const CHARS_PER_LINE: usize = (WIDTH / 6) as usize;

/// Draws on `D` at twice the size: each pixel becomes a 2x2 block. The large verdict is the
/// small font doubled (12x20 per character), so the image carries one font only.
struct Double<'a, D>(&'a mut D);

impl<D: DrawTarget<Color = BinaryColor>> OriginDimensions for Double<'_, D> {
    fn size(&self) -> Size {
        let s = self.0.bounding_box().size;
        Size::new(s.width / 2, s.height / 2)
    }
}

impl<D: DrawTarget<Color = BinaryColor>> DrawTarget for Double<'_, D> {
    type Color = BinaryColor;
    type Error = D::Error;

    fn draw_iter<I>(&mut self, pixels: I) -> Result<(), Self::Error>
    where
        I: IntoIterator<Item = Pixel<Self::Color>>,
    {
        self.0.draw_iter(pixels.into_iter().flat_map(|Pixel(p, c)| {
            let q = Point::new(2 * p.x, 2 * p.y);
            [(0, 0), (1, 0), (0, 1), (1, 1)].map(|(dx, dy)| Pixel(q + Point::new(dx, dy), c))
        }))
    }
}

/// Large text (the small font doubled), centred on `x` (full-size pixels), top at `y`.
fn large<D: DrawTarget<Color = BinaryColor>>(
    d: &mut D,
    s: &str,
    x: i32,
    y: i32,
) -> Result<(), D::Error> {
    text(
        &mut Double(d),
        s,
        &FONT_6X10,
        Point::new(x / 2, y / 2),
        Alignment::Center,
    )
}

fn text<D: DrawTarget<Color = BinaryColor>>(
    d: &mut D,
    s: &str,
    font: &'static MonoFont<'static>,
    at: Point,
    align: Alignment,
) -> Result<(), D::Error> {
    let style = MonoTextStyle::new(font, BinaryColor::On);
    let ts = TextStyleBuilder::new()
        .alignment(align)
        .baseline(Baseline::Top)
        .build();
    Text::with_text_style(s, at, style, ts).draw(d)?;
    Ok(())
}

/// Splits `s` into lines of at most `width` characters at spaces (a word longer than a line is
/// cut); at most `N` lines.
pub fn wrap<const N: usize>(s: &str, width: usize) -> [&str; N] {
    let mut out = [""; N];
    let mut rest = s.trim();
    for slot in out.iter_mut() {
        if rest.is_empty() {
            break;
        }
        let cut = if rest.len() <= width {
            rest.len()
        } else {
            match rest.get(..=width).and_then(|h| h.rfind(' ')) {
                Some(sp) if sp > 0 => sp,
                _ => (0..=width)
                    .rev()
                    .find(|&i| rest.is_char_boundary(i))
                    .unwrap_or(0),
            }
        };
        let (head, tail) = rest.split_at_checked(cut).unwrap_or((rest, ""));
        *slot = head.trim_end();
        rest = tail.trim_start();
        if cut == 0 {
            break;
        }
    }
    out
}

/// Draws the verdict screen: PASS or FAIL large at the top, the failing node, the likely fault.
pub fn draw_verdict<D: DrawTarget<Color = BinaryColor>>(
    d: &mut D,
    s: &VerdictScreen<'_>,
) -> Result<(), D::Error> {
    d.clear(BinaryColor::Off)?;
    let word = match s.verdict {
        Verdict::Pass => "PASS",
        Verdict::Fail => "FAIL",
    };
    large(d, word, WIDTH as i32 / 2, 0)?;
    let mut y = 22;
    if let Some(node) = s.failing_node {
        let mut b = FmtBuf::<24>::new();
        let _ = core::fmt::Write::write_fmt(&mut b, format_args!("node {}", label(node)));
        text(d, b.as_str(), &FONT_6X10, Point::new(0, y), Alignment::Left)?;
        y += 11;
    }
    for line in wrap::<3>(s.fault, CHARS_PER_LINE) {
        if !line.is_empty() && y <= HEIGHT as i32 - 10 {
            text(d, line, &FONT_6X10, Point::new(0, y), Alignment::Left)?;
            y += 10;
        }
    }
    Ok(())
}

/// Draws a measurement: the four node voltages, or the node that could not be read and why.
pub fn draw_measurement<D: DrawTarget<Color = BinaryColor>>(
    d: &mut D,
    r: &Result<Readings, JigError>,
) -> Result<(), D::Error> {
    d.clear(BinaryColor::Off)?;
    match r {
        Ok(v) => {
            text(
                d,
                "MEASURED",
                &FONT_6X10,
                Point::new(WIDTH as i32 / 2, 0),
                Alignment::Center,
            )?;
            for (i, node) in Channel::ALL.into_iter().enumerate() {
                let mut b = FmtBuf::<24>::new();
                let _ = core::fmt::Write::write_fmt(
                    &mut b,
                    format_args!("{:<3} {:>7} V", label(node), Fixed(reading(v, node), 3)),
                );
                text(
                    d,
                    b.as_str(),
                    &FONT_6X10,
                    Point::new(4, 14 + 12 * i as i32),
                    Alignment::Left,
                )?;
            }
        }
        Err(e) => {
            large(d, "NO READ", WIDTH as i32 / 2, 0)?;
            let mut b = FmtBuf::<48>::new();
            let _ = core::fmt::Write::write_fmt(&mut b, format_args!("{e}"));
            let mut y = 24;
            for line in wrap::<3>(b.as_str(), CHARS_PER_LINE) {
                if !line.is_empty() {
                    text(d, line, &FONT_6X10, Point::new(0, y), Alignment::Left)?;
                    y += 11;
                }
            }
        }
    }
    Ok(())
}

/// What the design screen shows: the kept design chosen with the button.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DesignScreen<'a> {
    /// Its name.
    pub name: &'a str,
    /// Its place among the kept designs, from 1.
    pub index: usize,
    /// How many designs are kept.
    pub count: usize,
    /// Its design hash.
    pub hash: u64,
    /// Nominal supply, V.
    pub vcc: f64,
}

/// Draws the design screen: which kept design the unit now tests, and what the button does.
pub fn draw_design<D: DrawTarget<Color = BinaryColor>>(
    d: &mut D,
    s: &DesignScreen<'_>,
) -> Result<(), D::Error> {
    d.clear(BinaryColor::Off)?;
    let mut b = FmtBuf::<32>::new();
    let _ = core::fmt::Write::write_fmt(&mut b, format_args!("DESIGN {} of {}", s.index, s.count));
    text(d, b.as_str(), &FONT_6X10, Point::new(0, 0), Alignment::Left)?;
    if s.name.len() <= 10 {
        large(d, s.name, WIDTH as i32 / 2, 12)?;
    } else {
        text(
            d,
            s.name,
            &FONT_6X10,
            Point::new(WIDTH as i32 / 2, 17),
            Alignment::Center,
        )?;
    }
    b.clear();
    let _ = core::fmt::Write::write_fmt(
        &mut b,
        format_args!("VCC {} V {:08x}", Fixed(s.vcc, 1), s.hash >> 32),
    );
    text(
        d,
        b.as_str(),
        &FONT_6X10,
        Point::new(0, 34),
        Alignment::Left,
    )?;
    text(
        d,
        "short: test",
        &FONT_6X10,
        Point::new(0, 44),
        Alignment::Left,
    )?;
    text(
        d,
        "long: next design",
        &FONT_6X10,
        Point::new(0, 54),
        Alignment::Left,
    )
}

/// Draws a message: a large title and a text wrapped over up to three lines.
pub fn draw_message<D: DrawTarget<Color = BinaryColor>>(
    d: &mut D,
    title: &str,
    body: &str,
) -> Result<(), D::Error> {
    d.clear(BinaryColor::Off)?;
    large(d, title, WIDTH as i32 / 2, 0)?;
    let mut y = 24;
    for line in wrap::<3>(body, CHARS_PER_LINE) {
        if !line.is_empty() {
            text(d, line, &FONT_6X10, Point::new(0, y), Alignment::Left)?;
            y += 11;
        }
    }
    Ok(())
}

/// Draws whatever the application shows.
pub fn draw_show<D: DrawTarget<Color = BinaryColor>>(
    d: &mut D,
    what: &crate::console::Show<'_>,
) -> Result<(), D::Error> {
    use crate::console::Show;
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

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    const NODES: Readings = Readings {
        vcc: 12.0,
        vb: 2.1,
        ve: 1.45,
        vc: 6.8,
    };

    fn art(fb: &FrameBuffer) -> String {
        let mut v = Vec::new();
        fb.write_art(&mut v).unwrap();
        String::from_utf8(v).unwrap()
    }

    fn lit(fb: &FrameBuffer, y0: u32, y1: u32) -> usize {
        (y0..y1)
            .flat_map(|y| (0..WIDTH).map(move |x| (x, y)))
            .filter(|&(x, y)| fb.pixel(x, y))
            .count()
    }

    #[test]
    fn framebuffer_pixels_and_art() {
        let mut fb = FrameBuffer::new();
        Pixel(Point::new(0, 0), BinaryColor::On)
            .draw(&mut fb)
            .unwrap();
        Pixel(Point::new(1, 1), BinaryColor::On)
            .draw(&mut fb)
            .unwrap();
        Pixel(Point::new(2, 0), BinaryColor::On)
            .draw(&mut fb)
            .unwrap();
        Pixel(Point::new(2, 1), BinaryColor::On)
            .draw(&mut fb)
            .unwrap();
        Pixel(Point::new(-1, 5), BinaryColor::On)
            .draw(&mut fb)
            .unwrap();
        Pixel(Point::new(500, 5), BinaryColor::On)
            .draw(&mut fb)
            .unwrap();
        assert!(fb.pixel(0, 0) && fb.pixel(1, 1) && !fb.pixel(1, 0) && !fb.pixel(999, 0));
        let a = art(&fb);
        let lines: Vec<&str> = a.split("\r\n").collect();
        assert_eq!(lines.len(), 33);
        assert_eq!(lines[0].len(), 128);
        assert!(lines[0].starts_with("\".#  "));
        Pixel(Point::new(0, 0), BinaryColor::Off)
            .draw(&mut fb)
            .unwrap();
        assert!(!fb.pixel(0, 0));
    }

    #[test]
    fn verdict_screen_layout() {
        let mut fb = FrameBuffer::new();
        let s = VerdictScreen {
            verdict: Verdict::Fail,
            failing_node: Some(Channel::Vc),
            fault: "collector resistor open or transistor cut off",
        };
        draw_verdict(&mut fb, &s).unwrap();
        assert!(lit(&fb, 0, 20) > 100, "large verdict at the top");
        assert!(lit(&fb, 22, 32) > 20, "node line");
        assert!(lit(&fb, 33, 64) > 40, "fault text");
        let mut pass = FrameBuffer::new();
        draw_verdict(
            &mut pass,
            &VerdictScreen {
                verdict: Verdict::Pass,
                failing_node: None,
                fault: "",
            },
        )
        .unwrap();
        assert!(lit(&pass, 0, 20) > 100);
        assert_eq!(lit(&pass, 22, 64), 0);
        assert_ne!(art(&pass), art(&fb));
    }

    #[test]
    fn measurement_screens() {
        let mut fb = FrameBuffer::new();
        draw_result(&mut fb, &Ok(NODES));
        assert!(lit(&fb, 14, 62) > 150);
        let mut e = FrameBuffer::new();
        draw_result(&mut e, &Err(JigError::OutOfRange(Channel::Ve)));
        assert!(lit(&e, 0, 20) > 100);
    }

    /// Compares a screen with its golden picture in `golden/NAME.txt`. The golden files are
    /// regression pins: copied from our own output (`BIASJIG_BLESS=1` writes them again) after
    /// a person looked at them; they catch any unintended change of a screen.
    pub(crate) fn golden(name: &str, fb: &FrameBuffer) {
        let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("golden")
            .join(format!("{name}.txt"));
        let got = art(fb).replace("\r\n", "\n");
        if std::env::var_os("BIASJIG_BLESS").is_some() {
            std::fs::create_dir_all(path.parent().unwrap()).unwrap();
            std::fs::write(&path, &got).unwrap();
        }
        let want = std::fs::read_to_string(&path)
            .unwrap_or_else(|e| panic!("{}: {e} (BIASJIG_BLESS=1 writes it)", path.display()));
        assert_eq!(got, want, "screen {name} differs from {}", path.display());
    }

    #[test]
    fn every_screen_matches_its_golden_picture() {
        let mut fb = FrameBuffer::new();
        draw_verdict(
            &mut fb,
            &VerdictScreen {
                verdict: Verdict::Pass,
                failing_node: None,
                fault: "",
            },
        )
        .unwrap();
        golden("verdict-pass", &fb);
        draw_verdict(
            &mut fb,
            &VerdictScreen {
                verdict: Verdict::Fail,
                failing_node: Some(Channel::Vc),
                fault: "RC reads like 47 kohm instead of 4.7 kohm: a decade slip",
            },
        )
        .unwrap();
        golden("verdict-fail", &fb);
        draw_result(&mut fb, &Ok(NODES));
        golden("measured", &fb);
        draw_result(&mut fb, &Err(JigError::OpenProbe(Channel::Vb)));
        golden("no-read", &fb);
        let design = DesignScreen {
            name: "preamp-12",
            index: 1,
            count: 2,
            hash: 0x3f1e_0a2b_5c6d_7e8f,
            vcc: 12.0,
        };
        draw_design(&mut fb, &design).unwrap();
        golden("design", &fb);
        draw_design(
            &mut fb,
            &DesignScreen {
                name: "pump-monitor-15V",
                index: 2,
                count: 2,
                vcc: 15.0,
                ..design
            },
        )
        .unwrap();
        golden("design-long-name", &fb);
        draw_message(
            &mut fb,
            "NO DESIGNS",
            "keep one from the console: keep NAME",
        )
        .unwrap();
        golden("no-designs", &fb);
        draw_message(&mut fb, "LOCKED", "unlock from the console to choose").unwrap();
        golden("locked", &fb);
    }

    #[test]
    fn wrapping() {
        assert_eq!(
            wrap::<3>("base divider open", 21),
            ["base divider open", "", ""]
        );
        assert_eq!(
            wrap::<3>("collector resistor open or transistor cut off", 21),
            ["collector resistor", "open or transistor", "cut off"]
        );
        assert_eq!(wrap::<2>("abcdefghij", 4), ["abcd", "efgh"]);
        assert_eq!(wrap::<2>("", 4), ["", ""]);
    }
}
