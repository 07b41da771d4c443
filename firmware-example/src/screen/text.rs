//! Text on the screen: the one font, its doubled size for titles, and word wrapping.
use embedded_graphics::mono_font::ascii::FONT_6X10;
use embedded_graphics::mono_font::MonoTextStyle;
use embedded_graphics::pixelcolor::BinaryColor;
use embedded_graphics::prelude::*;
use embedded_graphics::text::{Alignment, Baseline, Text, TextStyleBuilder};

use super::{Monochrome, WIDTH};

/// Characters of the small font on one line.
pub(super) const CHARS_PER_LINE: usize = (WIDTH / 6) as usize;

/// Draws on `D` at twice the size: each pixel becomes a 2x2 block. The large verdict is the
/// small font doubled (12x20 per character), so the image carries one font only.
struct Double<'a, D>(&'a mut D);

impl<D: Monochrome> OriginDimensions for Double<'_, D> {
    fn size(&self) -> Size {
        let s = self.0.bounding_box().size;
        Size::new(s.width / 2, s.height / 2)
    }
}

impl<D: Monochrome> DrawTarget for Double<'_, D> {
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
pub(super) fn large<D: Monochrome>(d: &mut D, s: &str, x: i32, y: i32) -> Result<(), D::Error> {
    text(
        &mut Double(d),
        s,
        Point::new(x / 2, y / 2),
        Alignment::Center,
    )
}

/// Small text, left-aligned, top-left corner at (`x`, `y`).
pub(super) fn small<D: Monochrome>(d: &mut D, s: &str, x: i32, y: i32) -> Result<(), D::Error> {
    text(d, s, Point::new(x, y), Alignment::Left)
}

/// Text in the one font, top at `at.y`, aligned on `at.x`.
pub(super) fn text<D: Monochrome>(
    d: &mut D,
    s: &str,
    at: Point,
    align: Alignment,
) -> Result<(), D::Error> {
    let style = MonoTextStyle::new(&FONT_6X10, BinaryColor::On);
    let ts = TextStyleBuilder::new()
        .alignment(align)
        .baseline(Baseline::Top)
        .build();
    Text::with_text_style(s, at, style, ts).draw(d)?;
    Ok(())
}

/// Lines of a text wrapped at `width` characters, at most three, drawn from `y` down in steps
/// of `step` pixels while their top is at most `last_y`; gives the `y` after the last line.
pub(super) fn paragraph<D: Monochrome>(
    d: &mut D,
    s: &str,
    mut y: i32,
    step: i32,
    last_y: i32,
) -> Result<i32, D::Error> {
    for line in wrap::<3>(s, CHARS_PER_LINE) {
        if !line.is_empty() && y <= last_y {
            small(d, line, 0, y)?;
            y += step;
        }
    }
    Ok(y)
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
