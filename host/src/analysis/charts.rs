//! SVG pictures for the HTML report: the individuals chart of a node in test order and the
//! histogram of its readings against the window at the nominal supply.

use plotters::coord::ranged1d::{AsRangedCoord, ValueFormatter};
use plotters::coord::Shift;
use plotters::prelude::*;
use thiserror::Error;

use super::stats::Chart;

/// A node's data for its pictures.
pub struct NodePlot<'a> {
    /// Node name (vb, ...).
    pub name: &'a str,
    /// Unit.
    pub unit: &'a str,
    /// Readings referred to the nominal supply, in test order.
    pub values: &'a [f64],
    /// Window at the nominal supply.
    pub window: Option<(f64, f64)>,
    /// The individuals chart.
    pub chart: Option<&'a Chart>,
}

/// Why a picture could not be drawn (what the drawing library says).
#[derive(Debug, Error)]
#[error("{why}")]
pub struct DrawError {
    /// What the drawing library says.
    pub why: String,
}

fn err(e: impl std::fmt::Display) -> DrawError {
    DrawError { why: e.to_string() }
}

/// A chart of `X` by `Y` on the backend `DB`.
type Frame<'a, DB, X, Y> = ChartContext<
    'a,
    DB,
    Cartesian2d<<X as AsRangedCoord>::CoordDescType, <Y as AsRangedCoord>::CoordDescType>,
>;

/// The frame of a picture: the caption over a chart of `x` by `y`, `y_labels` pixels for the
/// value labels, with its mesh drawn.
fn frame<'a, DB, X, Y>(
    root: &'a DrawingArea<DB, Shift>,
    caption: String,
    y_labels: u32,
    x: X,
    y: Y,
) -> Result<Frame<'a, DB, X, Y>, DrawError>
where
    DB: DrawingBackend,
    X: AsRangedCoord,
    Y: AsRangedCoord,
    X::CoordDescType: ValueFormatter<X::Value>,
    Y::CoordDescType: ValueFormatter<Y::Value>,
{
    let mut chart = ChartBuilder::on(root)
        .caption(caption, ("sans-serif", 15))
        .margin(10)
        .x_label_area_size(30)
        .y_label_area_size(y_labels)
        .build_cartesian_2d(x, y)
        .map_err(err)?;
    chart
        .configure_mesh()
        .disable_x_mesh()
        .draw()
        .map_err(err)?;
    Ok(chart)
}

/// The individuals chart: points in test order, centre and control limits, signals in red.
pub fn control(n: &NodePlot<'_>) -> Result<String, DrawError> {
    let mut svg = String::new();
    let Some(c) = n.chart else {
        return Ok(svg);
    };
    {
        let root = SVGBackend::with_string(&mut svg, (640, 300)).into_drawing_area();
        root.fill(&WHITE).map_err(err)?;
        let (mut lo, mut hi) = (c.lcl(), c.ucl());
        for v in n.values {
            lo = lo.min(*v);
            hi = hi.max(*v);
        }
        if !(lo.is_finite() && hi.is_finite() && hi > lo) {
            (lo, hi) = (c.centre - 1.0, c.centre + 1.0);
        }
        let pad = 0.05 * (hi - lo);
        let len = n.values.len().max(2);
        let caption = format!(
            "{} ({}) individuals chart, first tests in test order",
            n.name.to_uppercase(),
            n.unit
        );
        let mut chart = frame(&root, caption, 60, 0..len, (lo - pad)..(hi + pad))?;
        chart
            .draw_series(LineSeries::new(
                n.values.iter().enumerate().map(|(i, v)| (i, *v)),
                BLUE.stroke_width(1),
            ))
            .map_err(err)?;
        for (y, style) in [
            (c.centre, GREEN.stroke_width(1)),
            (c.ucl(), RED.stroke_width(1)),
            (c.lcl(), RED.stroke_width(1)),
        ] {
            chart
                .draw_series(DashedLineSeries::new(vec![(0, y), (len, y)], 6, 4, style))
                .map_err(err)?;
        }
        chart
            .draw_series(c.signals.iter().filter_map(|(_, i)| {
                n.values
                    .get(*i)
                    .map(|v| Circle::new((*i, *v), 3, RED.filled()))
            }))
            .map_err(err)?;
        root.present().map_err(err)?;
    }
    Ok(svg)
}

/// Histogram of the readings with the window at the nominal supply dashed.
pub fn histogram(n: &NodePlot<'_>) -> Result<String, DrawError> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (480, 300)).into_drawing_area();
        root.fill(&WHITE).map_err(err)?;
        let (wl, wh) = n.window.unwrap_or((f64::NAN, f64::NAN));
        let (mut lo, mut hi) = (wl, wh);
        for v in n.values {
            lo = lo.min(*v);
            hi = hi.max(*v);
        }
        if !(lo.is_finite() && hi.is_finite() && hi > lo) {
            (lo, hi) = (0.0, 1.0);
        }
        let pad = 0.05 * (hi - lo);
        let (lo, hi) = (lo - pad, hi + pad);
        const BINS: usize = 30;
        let width = (hi - lo) / BINS as f64;
        let mut counts = [0u32; BINS];
        for v in n.values {
            let k = (((v - lo) / width) as usize).min(BINS - 1);
            if let Some(c) = counts.get_mut(k) {
                *c += 1;
            }
        }
        let top = counts.iter().copied().max().unwrap_or(1).max(1);
        let caption = format!(
            "{} ({}) at the nominal supply; window dashed",
            n.name.to_uppercase(),
            n.unit
        );
        let mut chart = frame(&root, caption, 40, lo..hi, 0u32..top + 1)?;
        chart
            .draw_series(counts.iter().enumerate().map(|(k, c)| {
                let x0 = lo + width * k as f64;
                Rectangle::new([(x0, 0), (x0 + width, *c)], BLUE.mix(0.6).filled())
            }))
            .map_err(err)?;
        for edge in [wl, wh] {
            if edge.is_finite() {
                chart
                    .draw_series(DashedLineSeries::new(
                        vec![(edge, 0), (edge, top + 1)],
                        6,
                        4,
                        RED.stroke_width(2),
                    ))
                    .map_err(err)?;
            }
        }
        root.present().map_err(err)?;
    }
    Ok(svg)
}
