//! The screens: the verdict of a check, a measurement, the chosen design, a message.
use super::text::{large, paragraph, small, text};
use super::{label, Monochrome, HEIGHT, WIDTH};
use crate::jig::reading;
use biasjig_core::console::{Channel, JigError};
use biasjig_core::stage::Readings;
use biasjig_core::units::Fixed;
use core::fmt::Write as _;
use embedded_graphics::pixelcolor::BinaryColor;
use embedded_graphics::prelude::*;
use embedded_graphics::text::Alignment;
use heapless::String;

/// The middle of the screen, pixels.
const MID: i32 = WIDTH as i32 / 2;

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

/// Draws the verdict screen: PASS or FAIL large at the top, the failing node, the likely fault.
pub fn draw_verdict<D: Monochrome>(d: &mut D, s: &VerdictScreen<'_>) -> Result<(), D::Error> {
    d.clear(BinaryColor::Off)?;
    let word = match s.verdict {
        Verdict::Pass => "PASS",
        Verdict::Fail => "FAIL",
    };
    large(d, word, MID, 0)?;
    let mut y = 22;
    if let Some(node) = s.failing_node {
        let mut b = String::<24>::new();
        let _ = write!(b, "node {}", label(node));
        small(d, &b, 0, y)?;
        y += 11;
    }
    paragraph(d, s.fault, y, 10, HEIGHT as i32 - 10)?;
    Ok(())
}

/// Draws a measurement: the four node voltages, or the node that could not be read and why.
pub fn draw_measurement<D: Monochrome>(
    d: &mut D,
    r: &Result<Readings, JigError>,
) -> Result<(), D::Error> {
    d.clear(BinaryColor::Off)?;
    match r {
        Ok(v) => {
            text(d, "MEASURED", Point::new(MID, 0), Alignment::Center)?;
            for (i, node) in Channel::ALL.into_iter().enumerate() {
                let mut b = String::<24>::new();
                let _ = write!(b, "{:<3} {:>7} V", label(node), Fixed(reading(v, node), 3));
                small(d, &b, 4, 14 + 12 * i as i32)?;
            }
        }
        Err(e) => {
            large(d, "NO READ", MID, 0)?;
            let mut b = String::<48>::new();
            let _ = write!(b, "{e}");
            paragraph(d, &b, 24, 11, i32::MAX)?;
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
pub fn draw_design<D: Monochrome>(d: &mut D, s: &DesignScreen<'_>) -> Result<(), D::Error> {
    d.clear(BinaryColor::Off)?;
    let mut b = String::<32>::new();
    let _ = write!(b, "DESIGN {} of {}", s.index, s.count);
    small(d, &b, 0, 0)?;
    if s.name.len() <= 10 {
        large(d, s.name, MID, 12)?;
    } else {
        text(d, s.name, Point::new(MID, 17), Alignment::Center)?;
    }
    b.clear();
    let _ = write!(b, "VCC {} V {:08x}", Fixed(s.vcc, 1), s.hash >> 32);
    small(d, &b, 0, 34)?;
    small(d, "short: test", 0, 44)?;
    small(d, "long: next design", 0, 54)
}

/// Draws a message: a large title and a text wrapped over up to three lines.
pub fn draw_message<D: Monochrome>(d: &mut D, title: &str, body: &str) -> Result<(), D::Error> {
    d.clear(BinaryColor::Off)?;
    large(d, title, MID, 0)?;
    paragraph(d, body, 24, 11, i32::MAX)?;
    Ok(())
}
