//! SVG plots of a spread: a histogram per node with the worst case and the pass window marked,
//! the DC and AC load lines with the Monte Carlo Q-point cloud, and the sensitivity shares.
//!
//! Text is written as SVG `<text>` elements, so no font files or system font libraries are
//! needed to make the plots (plotters without its `ttf`/`ab_glyph` features lays text out with
//! its built-in size estimate; the viewer renders it with its own sans-serif font).

use std::error::Error;
use std::path::{Path, PathBuf};

use biasjig_core::device::Profile;
use biasjig_core::limits::Limits;
use biasjig_core::spread::{Factor, Node, Range, Spread, Stats};
use biasjig_core::stage::{Polarity, Stage};
use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;

use thiserror::Error;

use crate::text::eng;

type PlotResult = Result<(), Box<dyn Error>>;

/// Why the plots could not be written (exit 2).
#[derive(Debug, Error)]
#[non_exhaustive]
pub enum PlotError {
    /// The folder could not be created.
    #[error("--plot: {}: cannot create the folder: {why}", .dir.display())]
    Folder {
        /// The folder.
        dir: PathBuf,
        /// Why.
        why: std::io::Error,
    },
    /// A plot could not be drawn or written.
    #[error("--plot: {}: cannot write the plot: {why}", .path.display())]
    Write {
        /// The plot's file.
        path: PathBuf,
        /// Why.
        why: Box<dyn Error>,
    },
}

/// Draw the legend of the labelled series and finish the file.
fn legend_and_finish<'a, DB, CT>(
    chart: &mut ChartContext<'a, DB, CT>,
    root: &DrawingArea<DB, Shift>,
) -> PlotResult
where
    DB: DrawingBackend + 'a,
    DB::ErrorType: 'static,
    CT: CoordTranslate,
{
    chart
        .configure_series_labels()
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK)
        .draw()?;
    root.present()?;
    Ok(())
}

/// A chart with numbers on both axes.
type Chart<'a, DB> = ChartContext<'a, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

/// The key of a line in the legend: a short stroke in the line's style.
fn line_key(style: ShapeStyle) -> impl Fn((i32, i32)) -> PathElement<(i32, i32)> {
    move |(x, y)| PathElement::new(vec![(x, y), (x + 16, y)], style)
}

/// Vertical lines across the chart (from 0 to `top`) at `xs`, labelled in the legend.
fn marks<'a, DB>(
    chart: &mut Chart<'a, DB>,
    xs: &[f64],
    top: f64,
    style: ShapeStyle,
    label: &str,
) -> PlotResult
where
    DB: DrawingBackend + 'a,
    DB::ErrorType: 'static,
{
    chart
        .draw_series(
            xs.iter()
                .map(|&x| PathElement::new(vec![(x, 0.0), (x, top)], style)),
        )?
        .label(label)
        .legend(line_key(style));
    Ok(())
}

/// Write every plot into `dir` (created if missing); returns the files written.
pub fn write_all(
    dir: &Path,
    stage: &Stage,
    profile: &Profile,
    sp: &Spread,
    lim: Option<&Limits>,
    cloud: &[(f64, f64)],
    req_lines: &[(Node, f64)],
) -> Result<Vec<PathBuf>, PlotError> {
    std::fs::create_dir_all(dir).map_err(|why| PlotError::Folder {
        dir: dir.to_path_buf(),
        why,
    })?;
    let fail = |p: &Path, why: Box<dyn Error>| PlotError::Write {
        path: p.to_path_buf(),
        why,
    };
    let mut written = Vec::new();
    for n in Node::ALL {
        let path = dir.join(format!("histogram_{}.svg", n.name()));
        let window = lim.and_then(|l| if n == Node::Ic { None } else { l.window(n) });
        let reqs: Vec<f64> = req_lines
            .iter()
            .filter(|(k, _)| *k == n)
            .map(|(_, x)| *x)
            .collect();
        histogram(
            &path,
            n,
            sp.monte_carlo.nodes.get(n),
            *sp.worst.nodes.get(n),
            window.map(|w| (w.low, w.high)),
            &reqs,
        )
        .map_err(|e| fail(&path, e))?;
        written.push(path);
    }
    let path = dir.join("load_lines.svg");
    load_lines(&path, stage, profile, sp, cloud).map_err(|e| fail(&path, e))?;
    written.push(path);
    let path = dir.join("sensitivity.svg");
    sensitivity(&path, sp).map_err(|e| fail(&path, e))?;
    written.push(path);
    Ok(written)
}

fn label_of(n: Node, v: f64) -> String {
    match n {
        Node::Gain => format!("{v:.2}"),
        _ => eng(v, n.unit()),
    }
}

/// Histogram of one node with the worst case (red), the pass window (green) and the design's
/// requirement (orange) marked.
fn histogram(
    path: &Path,
    n: Node,
    st: &Stats,
    wc: Range,
    window: Option<(f64, f64)>,
    reqs: &[f64],
) -> PlotResult {
    let root = SVGBackend::new(path, (720, 420)).into_drawing_area();
    root.fill(&WHITE)?;
    let h = &st.histogram;
    let mut lo = h.lo.min(wc.min);
    let mut hi = h.hi.max(wc.max);
    if let Some((a, b)) = window {
        lo = lo.min(a);
        hi = hi.max(b);
    }
    for &x in reqs {
        lo = lo.min(x);
        hi = hi.max(x);
    }
    let pad = 0.03 * (hi - lo);
    let (lo, hi) = (lo - pad, hi + pad);
    let top = f64::from(h.bins.iter().copied().max().unwrap_or(1).max(1)) * 1.15;
    let mut chart = ChartBuilder::on(&root)
        .caption(
            format!("{}: {} Monte Carlo samples", n.label(), st.count),
            ("sans-serif", 20),
        )
        .margin(12)
        .x_label_area_size(40)
        .y_label_area_size(56)
        .build_cartesian_2d(lo..hi, 0.0..top)?;
    chart
        .configure_mesh()
        .x_labels(7)
        .x_label_formatter(&|x| label_of(n, *x))
        .x_desc(n.label())
        .y_label_formatter(&|y| format!("{y:.0}"))
        .y_desc("samples")
        .draw()?;
    let w = h.width();
    chart.draw_series(h.bins.iter().enumerate().map(|(k, c)| {
        let x0 = h.lo + w * k as f64;
        Rectangle::new(
            [(x0, 0.0), (x0 + w, f64::from(*c))],
            BLUE.mix(0.55).filled(),
        )
    }))?;
    let (red, green) = (RED.stroke_width(2), GREEN.stroke_width(2));
    marks(&mut chart, &[wc.min, wc.max], top, red, "worst case")?;
    if let Some((a, b)) = window {
        marks(&mut chart, &[a, b], top, green, "pass window")?;
    }
    if !reqs.is_empty() {
        let orange = RGBColor(230, 120, 0).stroke_width(2);
        marks(&mut chart, reqs, top, orange, "requirement")?;
    }
    legend_and_finish(&mut chart, &root)
}

/// The DC load line IC = (VCC − |VCE|)/(RC + RE1 + RE2), the AC load line through the nominal
/// Q-point with slope −1/(RC‖RL + RE1), and the Monte Carlo Q-points (|VCE|, IC).
fn load_lines(
    path: &Path,
    stage: &Stage,
    profile: &Profile,
    sp: &Spread,
    cloud: &[(f64, f64)],
) -> PlotResult {
    let root = SVGBackend::new(path, (720, 480)).into_drawing_area();
    root.fill(&WHITE)?;
    let vcc = stage.vcc.value;
    let rdc = stage.rc.value + stage.re_total();
    let rac_c = match stage.rl {
        Some(rl) => stage.rc.value * rl / (stage.rc.value + rl),
        None => stage.rc.value,
    };
    let rac = rac_c + stage.re1.value;
    let mag = |v: f64| match stage.polarity {
        Polarity::Npn => v,
        Polarity::Pnp => -v,
    };
    let vq = mag(sp.centre.values.vce);
    let iq = sp.centre.values.ic;
    let i_max_dc = vcc / rdc;
    let i_max_ac = iq + vq / rac;
    let top = i_max_dc
        .max(i_max_ac)
        .max(cloud.iter().map(|p| p.1).fold(0.0, f64::max))
        * 1.1;
    let right = vcc
        .max(vq + iq * rac)
        .max(cloud.iter().map(|p| mag(p.0)).fold(0.0, f64::max))
        * 1.05;
    let mut chart = ChartBuilder::on(&root)
        .caption("Load lines and Q-point spread", ("sans-serif", 20))
        .margin(12)
        .x_label_area_size(40)
        .y_label_area_size(64)
        .build_cartesian_2d(0.0..right, 0.0..top)?;
    chart
        .configure_mesh()
        .x_label_formatter(&|x| eng(*x, "V"))
        .y_label_formatter(&|y| eng(*y, "A"))
        .x_desc("|VCE|")
        .y_desc("IC")
        .draw()?;
    let lines = [
        (
            "DC load line",
            [(0.0, i_max_dc), (vcc, 0.0)],
            BLACK.stroke_width(2),
        ),
        (
            "AC load line",
            [(0.0, i_max_ac), (vq + iq * rac, 0.0)],
            MAGENTA.stroke_width(2),
        ),
        (
            "VCE(sat)",
            [(profile.vce_sat, 0.0), (profile.vce_sat, top)],
            RGBColor(150, 150, 150).into(),
        ),
    ];
    for (label, ends, style) in lines {
        chart
            .draw_series(LineSeries::new(ends, style))?
            .label(label)
            .legend(line_key(style));
    }
    chart
        .draw_series(
            cloud
                .iter()
                .map(|(v, i)| Circle::new((mag(*v), *i), 2, BLUE.mix(0.35).filled())),
        )?
        .label("Monte Carlo Q-points")
        .legend(|(x, y)| Circle::new((x + 8, y), 3, BLUE.filled()));
    chart
        .draw_series([Circle::new((vq, iq), 5, RED.filled())])?
        .label("nominal Q-point")
        .legend(|(x, y)| Circle::new((x + 8, y), 4, RED.filled()));
    legend_and_finish(&mut chart, &root)
}

/// Bars of each factor's share of the variance, one panel per DC node.
fn sensitivity(path: &Path, sp: &Spread) -> PlotResult {
    let root = SVGBackend::new(path, (960, 560)).into_drawing_area();
    root.fill(&WHITE)?;
    let panels = root.split_evenly((2, 3));
    let nodes = [Node::Vb, Node::Ve, Node::Vc, Node::Vbe, Node::Vce, Node::Ic];
    let index = |f: Factor| Factor::ALL.iter().position(|g| *g == f).unwrap_or(0) as f64;
    for (area, n) in panels.iter().zip(nodes) {
        let mut chart = ChartBuilder::on(area)
            .caption(format!("{} variance share", n.label()), ("sans-serif", 16))
            .margin(8)
            .x_label_area_size(28)
            .y_label_area_size(40)
            .build_cartesian_2d(-0.5..(Factor::ALL.len() as f64 - 0.5), 0.0..1.0)?;
        chart
            .configure_mesh()
            .disable_x_mesh()
            .x_labels(Factor::ALL.len())
            .x_label_formatter(&|x| {
                let k = x.round();
                if (x - k).abs() < 0.01 && k >= 0.0 {
                    Factor::ALL
                        .get(k as usize)
                        .map_or(String::new(), |f| f.name().to_string())
                } else {
                    String::new()
                }
            })
            .y_label_formatter(&|y| format!("{:.0}%", 100.0 * y))
            .draw()?;
        chart.draw_series(
            sp.sensitivity
                .nodes
                .get(n)
                .iter()
                .filter(|s| s.share > 0.0)
                .map(|s| {
                    let x = index(s.factor);
                    Rectangle::new(
                        [(x - 0.35, 0.0), (x + 0.35, s.share)],
                        BLUE.mix(0.7).filled(),
                    )
                }),
        )?;
    }
    root.present()?;
    Ok(())
}
