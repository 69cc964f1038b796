//! Plots, PNG and SVG through plotters, and ringsum's one colour scale.
//!
//! Each plot is a [`Figure`]: it draws itself on any plotters backend, and
//! [`write_figure`] renders it to a `.png` or `.svg` file through a temporary file that
//! is renamed at the end, so a failed run leaves no half-drawn picture. Text is drawn
//! with DejaVu Sans embedded in the binary (`assets/fonts/`, licence beside it): plotters'
//! `ab_glyph` font path needs no system font libraries to build or run.
//!
//! # The colour scale
//! One sequential scale, [`scale_rgb`], serves maps, lines and markers. It is defined in
//! CIE L\*C\*h (the polar form of CIELAB, D65 white; CIE 15:2004) for `t` in 0..1:
//!
//! ```text
//! L*(t) = 18 + 74 t                      (lightness, dark to light, linear)
//! h(t)  = 290 - 190 t  degrees           (blue-violet, blue, teal, green, yellow)
//! C*(t) = 24 + 26 s(u), u = (t - 0.35) / 0.65 clamped to 0..1, s(u) = u^2 (3 - 2u)
//! ```
//!
//! and converted to sRGB (IEC 61966-2-1). Why it reads evenly: lightness, the channel
//! the eye judges magnitude by and the only one left in a grey-scale print, is linear in
//! the value, so equal steps of the data are equal steps of lightness and the scale stays
//! ordered in grey. The chroma is held at 24 where the sRGB gamut is narrow (the blues
//! and teals at L\* 30-45 hold no more) and grows smoothly to 50 in the greens and
//! yellows; every colour of the scale is inside the sRGB gamut, so nothing is clipped.
//! Measured (tests below): L\* of the 8-bit colours strictly increases over 101 steps, and
//! the CIELAB colour difference (CIE76) of successive sixteenths of the scale stays
//! within a factor 1.7 of each other.

use super::files::{check_writable, write_atomically, Partial};
use crate::analysis::checks::quantile;
use anyhow::{bail, Context};
use plotters::coord::Shift;
use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use std::path::{Path, PathBuf};
use std::sync::Once;

/// DejaVu Sans 2.37 (see `assets/fonts/LICENSE-DejaVu.txt`).
const FONT: &[u8] = include_bytes!("../../assets/fonts/DejaVuSans.ttf");

/// The font family every plot uses.
pub const FAMILY: &str = "sans-serif";

/// Registers the embedded font with plotters (once per process).
pub fn register_fonts() {
    static ONCE: Once = Once::new();
    ONCE.call_once(|| {
        if plotters::style::register_font(FAMILY, FontStyle::Normal, FONT).is_err() {
            // The font is part of the binary; failing to parse it is a build defect.
            panic!("the embedded font assets/fonts/DejaVuSans.ttf cannot be parsed");
        }
    });
}

/// Lightness, chroma and hue (degrees) of the colour scale at `t` (clamped to 0..1).
pub fn scale_lch(t: f64) -> (f64, f64, f64) {
    let t = if t.is_nan() { 0.0 } else { t.clamp(0.0, 1.0) };
    let l = 18.0 + 74.0 * t;
    let h = 290.0 - 190.0 * t;
    let u = ((t - 0.35) / 0.65).clamp(0.0, 1.0);
    let c = 24.0 + 26.0 * u * u * (3.0 - 2.0 * u);
    (l, c, h)
}

/// D65 reference white (CIE 15:2004), XYZ with Y = 1.
const WHITE_D65: [f64; 3] = [0.950_47, 1.0, 1.088_83];

/// CIELAB to linear sRGB (not clamped).
pub fn lab_to_linear_srgb(l: f64, a: f64, b: f64) -> [f64; 3] {
    let fy = (l + 16.0) / 116.0;
    let fx = fy + a / 500.0;
    let fz = fy - b / 200.0;
    let d = 6.0 / 29.0;
    let finv = |f: f64| {
        if f > d {
            f * f * f
        } else {
            3.0 * d * d * (f - 4.0 / 29.0)
        }
    };
    let (x, y, z) = (
        WHITE_D65[0] * finv(fx),
        WHITE_D65[1] * finv(fy),
        WHITE_D65[2] * finv(fz),
    );
    [
        3.240_454_2 * x - 1.537_138_5 * y - 0.498_531_4 * z,
        -0.969_266_0 * x + 1.876_010_8 * y + 0.041_556_0 * z,
        0.055_643_4 * x - 0.204_025_9 * y + 1.057_225_2 * z,
    ]
}

/// Linear sRGB channel to its 8-bit, gamma-encoded value.
fn encode(c: f64) -> u8 {
    let c = c.clamp(0.0, 1.0);
    let v = if c <= 0.003_130_8 {
        12.92 * c
    } else {
        1.055 * c.powf(1.0 / 2.4) - 0.055
    };
    (v * 255.0).round() as u8
}

/// 8-bit sRGB to CIELAB (D65).
pub fn srgb_to_lab(rgb: [u8; 3]) -> [f64; 3] {
    let lin = |c: u8| {
        let v = c as f64 / 255.0;
        if v <= 0.040_45 {
            v / 12.92
        } else {
            ((v + 0.055) / 1.055).powf(2.4)
        }
    };
    let (r, g, b) = (lin(rgb[0]), lin(rgb[1]), lin(rgb[2]));
    let x = 0.412_456_4 * r + 0.357_576_1 * g + 0.180_437_5 * b;
    let y = 0.212_672_9 * r + 0.715_152_2 * g + 0.072_175_0 * b;
    let z = 0.019_333_9 * r + 0.119_192_0 * g + 0.950_304_1 * b;
    let d: f64 = 6.0 / 29.0;
    let f = |t: f64| {
        if t > d * d * d {
            t.cbrt()
        } else {
            t / (3.0 * d * d) + 4.0 / 29.0
        }
    };
    let (fx, fy, fz) = (f(x / WHITE_D65[0]), f(y), f(z / WHITE_D65[2]));
    [116.0 * fy - 16.0, 500.0 * (fx - fy), 200.0 * (fy - fz)]
}

/// The colour scale at `t` in 0..1, 8-bit sRGB.
pub fn scale_rgb(t: f64) -> [u8; 3] {
    let (l, c, h) = scale_lch(t);
    let (sin, cos) = h.to_radians().sin_cos();
    let lin = lab_to_linear_srgb(l, c * cos, c * sin);
    [encode(lin[0]), encode(lin[1]), encode(lin[2])]
}

/// The colour scale at `t` as a plotters colour.
pub fn scale_colour(t: f64) -> RGBColor {
    let [r, g, b] = scale_rgb(t);
    RGBColor(r, g, b)
}

/// Colours for `n` lines: the darker three quarters of the scale, so that every line
/// stands out on white.
pub fn line_colours(n: usize) -> Vec<RGBColor> {
    (0..n)
        .map(|i| {
            let t = if n <= 1 {
                0.0
            } else {
                0.75 * i as f64 / (n - 1) as f64
            };
            scale_colour(t)
        })
        .collect()
}

/// File formats of plots.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PlotFormat {
    Png,
    Svg,
}

/// A checked place for a plot.
#[derive(Debug, Clone, PartialEq)]
pub struct PlotTarget {
    pub path: PathBuf,
    pub format: PlotFormat,
}

/// Checks a plot path before any work: it ends in `.png` or `.svg` (or only `.png` when
/// `png_only`) and its folder exists.
pub fn check_plot_target(path: &Path, option: &str, png_only: bool) -> anyhow::Result<PlotTarget> {
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .map(str::to_ascii_lowercase);
    let format = match ext.as_deref() {
        Some("png") => PlotFormat::Png,
        Some("svg") if !png_only => PlotFormat::Svg,
        _ if png_only => bail!(
            "{option} {}: this picture is written as PNG; give a path ending in .png",
            path.display()
        ),
        _ => bail!(
            "{option} {}: plots are written as PNG or SVG; give a path ending in .png or .svg",
            path.display()
        ),
    };
    check_writable(path, option)?;
    Ok(PlotTarget {
        path: path.to_path_buf(),
        format,
    })
}

/// Parses a picture size such as `1000x700` (pixels; each side 200 to 8000).
pub fn parse_plot_size(text: &str) -> anyhow::Result<(u32, u32)> {
    let bad = || {
        anyhow::anyhow!(
            "--plot-size {text}: give the width and height in pixels as WIDTHxHEIGHT, e.g. 1000x700 (each 200 to 8000)"
        )
    };
    let (w, h) = text.trim().split_once(['x', 'X']).ok_or_else(bad)?;
    let w: u32 = w.trim().parse().map_err(|_| bad())?;
    let h: u32 = h.trim().parse().map_err(|_| bad())?;
    if !(200..=8000).contains(&w) || !(200..=8000).contains(&h) {
        return Err(bad());
    }
    Ok((w, h))
}

/// Something that draws itself on a plotters drawing area.
pub trait Figure {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> anyhow::Result<()>
    where
        DB::ErrorType: 'static;
}

/// Renders `figure` at `size` pixels to its target (through a temporary file renamed at
/// the end).
pub fn write_figure(
    target: &PlotTarget,
    size: (u32, u32),
    figure: &impl Figure,
) -> anyhow::Result<()> {
    register_fonts();
    let path = &target.path;
    match target.format {
        PlotFormat::Png => {
            let partial = Partial::start(path, ".png")?;
            {
                let root = BitMapBackend::new(partial.temp_path(), size).into_drawing_area();
                root.fill(&WHITE)?;
                figure.draw(&root)?;
                root.present()
                    .with_context(|| format!("{}: writing the picture failed", path.display()))?;
            }
            partial.commit()
        }
        PlotFormat::Svg => {
            let mut text = String::new();
            {
                let root = SVGBackend::with_string(&mut text, size).into_drawing_area();
                root.fill(&WHITE)?;
                figure.draw(&root)?;
                root.present()?;
            }
            write_atomically(path, text.as_bytes())
        }
    }
}

/// Text style of plot titles.
pub fn title_font() -> TextStyle<'static> {
    (FAMILY, 22).into_font().into()
}

/// Text style of tick labels.
pub fn label_font() -> TextStyle<'static> {
    (FAMILY, 15).into_font().into()
}

/// Text style of axis descriptions.
pub fn axis_font() -> TextStyle<'static> {
    (FAMILY, 17).into_font().into()
}

/// A number for a tick label: few digits, no trailing zeros. Below 1e-9 in size a tick
/// is zero: plotters places ticks at `start + k step`, so the zero tick of an axis that
/// starts below zero comes out as a rounding remainder such as -2.2e-16.
pub fn tick(v: f64) -> String {
    let a = v.abs();
    let s = if a < 1e-9 {
        "0".to_string()
    } else if a >= 100.0 {
        format!("{v:.0}")
    } else if a >= 10.0 {
        format!("{v:.1}")
    } else if a >= 1.0 {
        format!("{v:.2}")
    } else if a >= 0.01 {
        format!("{v:.3}")
    } else {
        format!("{v:.1e}")
    };
    if s.contains('.') && !s.contains('e') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// Radius for a tick label on a kilometre axis.
fn km_tick(km: f64) -> String {
    tick(km)
}

/// `min..max` of finite values, widened so that it is never empty, with a margin of
/// `pad` of the span on each side.
pub fn padded_range(values: impl IntoIterator<Item = f64>, pad: f64) -> (f64, f64) {
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for v in values {
        if v.is_finite() {
            lo = lo.min(v);
            hi = hi.max(v);
        }
    }
    if lo > hi {
        return (0.0, 1.0);
    }
    if hi - lo < 1e-9 {
        let w = hi.abs().max(1e-3) * 0.1;
        return (lo - w, hi + w);
    }
    let m = (hi - lo) * pad;
    (lo - m, hi + m)
}

// ---------------------------------------------------------------------------------------
// TC against outer radius
// ---------------------------------------------------------------------------------------

/// One curve of a radius sweep.
#[derive(Debug, Clone)]
pub struct SweepCurve {
    pub label: String,
    /// Radii, m (increasing).
    pub radii_m: Vec<f64>,
    /// Cumulative TC, mGal.
    pub tc_mgal: Vec<f64>,
    /// Where 95% and 99% of the final TC are reached, m.
    pub r95_m: f64,
    pub r99_m: f64,
}

/// TC against outer radius on a logarithmic radius axis: one line per station (few
/// stations) or the spread of all stations (many), for the main DEM and dashed for each
/// comparison DEM; the radii where 95% and 99% of the final TC are reached are marked.
#[derive(Debug, Clone)]
pub struct SweepFigure {
    pub title: String,
    /// Curves of the main DEM.
    pub main: Vec<SweepCurve>,
    /// Label of the main DEM in the legend.
    pub main_label: String,
    /// Per comparison DEM: its label and curves (same stations, same order).
    pub compare: Vec<(String, Vec<SweepCurve>)>,
    /// At most this many stations are drawn as lines; more are drawn as a spread.
    pub max_lines: usize,
}

/// Median and bands of many curves on common radii.
struct Spread {
    radii_m: Vec<f64>,
    lo: Vec<f64>,
    p10: Vec<f64>,
    median: Vec<f64>,
    p90: Vec<f64>,
    hi: Vec<f64>,
}

fn spread(curves: &[SweepCurve]) -> Spread {
    let radii_m = curves[0].radii_m.clone();
    let mut s = Spread {
        radii_m,
        lo: vec![],
        p10: vec![],
        median: vec![],
        p90: vec![],
        hi: vec![],
    };
    for j in 0..s.radii_m.len() {
        let mut v: Vec<f64> = curves.iter().map(|c| c.tc_mgal[j]).collect();
        v.sort_by(f64::total_cmp);
        s.lo.push(v[0]);
        s.p10.push(quantile(&v, 0.1));
        s.median.push(quantile(&v, 0.5));
        s.p90.push(quantile(&v, 0.9));
        s.hi.push(v[v.len() - 1]);
    }
    s
}

fn median_of(values: impl Iterator<Item = f64>) -> f64 {
    let mut v: Vec<f64> = values.collect();
    v.sort_by(f64::total_cmp);
    quantile(&v, 0.5)
}

impl Figure for SweepFigure {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> anyhow::Result<()>
    where
        DB::ErrorType: 'static,
    {
        if self.main.is_empty() {
            bail!("internal error: a sweep plot without stations");
        }
        let all = self
            .main
            .iter()
            .chain(self.compare.iter().flat_map(|(_, c)| c.iter()));
        let r_min = self.main[0].radii_m[0] / 1000.0;
        let r_max = *self.main[0].radii_m.last().unwrap_or(&1.0) / 1000.0;
        let lines = self.main.len() <= self.max_lines;
        // Room on the right for the station names at the ends of the lines.
        let x_end = if lines { r_max * 1.45 } else { r_max * 1.05 };
        let (y0, y1) = padded_range(
            all.flat_map(|c| c.tc_mgal.iter().copied()).chain([0.0]),
            0.05,
        );
        let mut chart = ChartBuilder::on(root)
            .caption(&self.title, title_font())
            .margin(14)
            .x_label_area_size(52)
            .y_label_area_size(72)
            .build_cartesian_2d((r_min * 0.95..x_end).log_scale(), y0..y1)?;
        chart
            .configure_mesh()
            .x_desc("outer radius (km, logarithmic)")
            .y_desc("terrain correction to that radius (mGal)")
            .x_label_formatter(&|v| km_tick(*v))
            .y_label_formatter(&|v| tick(*v))
            .label_style(label_font())
            .axis_desc_style(axis_font())
            .light_line_style(RGBColor(235, 235, 235))
            .bold_line_style(RGBColor(210, 210, 210))
            .draw()?;
        let km = |c: &SweepCurve| -> Vec<(f64, f64)> {
            c.radii_m
                .iter()
                .zip(&c.tc_mgal)
                .map(|(&r, &t)| (r / 1000.0, t))
                .collect()
        };
        let value_at = |c: &SweepCurve, r: f64| -> f64 {
            let j = c
                .radii_m
                .iter()
                .position(|&x| (x - r).abs() <= 1e-9 * r.max(1.0))
                .unwrap_or(c.radii_m.len() - 1);
            c.tc_mgal[j]
        };
        if lines {
            let colours = line_colours(self.main.len());
            for (k, (curve, colour)) in self.main.iter().zip(&colours).enumerate() {
                let colour = *colour;
                chart
                    .draw_series(LineSeries::new(km(curve), colour.stroke_width(2)))?
                    .label(curve.label.clone())
                    .legend(move |(x, y)| {
                        PathElement::new(vec![(x, y), (x + 22, y)], colour.stroke_width(2))
                    });
                for (_, curves) in &self.compare {
                    let c = &curves[k];
                    chart.draw_series(DashedLineSeries::new(
                        km(c),
                        6,
                        4,
                        colour.stroke_width(1),
                    ))?;
                }
                if let Some(&last) = curve.tc_mgal.last() {
                    chart.draw_series(std::iter::once(Text::new(
                        curve.label.clone(),
                        (r_max * 1.06, last),
                        label_font().color(&colour),
                    )))?;
                }
                let p95 = (curve.r95_m / 1000.0, value_at(curve, curve.r95_m));
                let p99 = (curve.r99_m / 1000.0, value_at(curve, curve.r99_m));
                chart.draw_series(std::iter::once(Circle::new(p95, 5, colour.filled())))?;
                chart.draw_series(std::iter::once(TriangleMarker::new(
                    p99,
                    7,
                    colour.filled(),
                )))?;
            }
            chart
                .draw_series(std::iter::empty::<Circle<(f64, f64), i32>>())?
                .label("95% of the final TC reached")
                .legend(|(x, y)| Circle::new((x + 11, y), 5, BLACK.filled()));
            chart
                .draw_series(std::iter::empty::<Circle<(f64, f64), i32>>())?
                .label("99% of the final TC reached")
                .legend(|(x, y)| TriangleMarker::new((x + 11, y), 7, BLACK.filled()));
            if !self.compare.is_empty() {
                let names: Vec<&str> = self.compare.iter().map(|(n, _)| n.as_str()).collect();
                chart
                    .draw_series(std::iter::empty::<Circle<(f64, f64), i32>>())?
                    .label(format!("dashed: {}", names.join(", ")))
                    .legend(|(x, y)| {
                        DashedPathElement::new(
                            vec![(x, y), (x + 22, y)],
                            5,
                            3,
                            BLACK.stroke_width(1),
                        )
                    });
            }
        } else {
            let s = spread(&self.main);
            let to_km = |v: &[f64]| -> Vec<(f64, f64)> {
                s.radii_m
                    .iter()
                    .zip(v)
                    .map(|(&r, &t)| (r / 1000.0, t))
                    .collect()
            };
            let band = |lo: &[f64], hi: &[f64]| -> Vec<(f64, f64)> {
                let mut pts = to_km(hi);
                let mut low = to_km(lo);
                low.reverse();
                pts.extend(low);
                pts
            };
            let light = scale_colour(0.85);
            let mid = scale_colour(0.6);
            let dark = scale_colour(0.1);
            chart
                .draw_series(std::iter::once(Polygon::new(
                    band(&s.lo, &s.hi),
                    light.filled(),
                )))?
                .label(format!("all {} stations (min to max)", self.main.len()))
                .legend(move |(x, y)| {
                    Rectangle::new([(x, y - 5), (x + 22, y + 5)], light.filled())
                });
            chart
                .draw_series(std::iter::once(Polygon::new(
                    band(&s.p10, &s.p90),
                    mid.filled(),
                )))?
                .label("10% to 90% of the stations")
                .legend(move |(x, y)| Rectangle::new([(x, y - 5), (x + 22, y + 5)], mid.filled()));
            chart
                .draw_series(LineSeries::new(to_km(&s.median), dark.stroke_width(3)))?
                .label(format!("median, {}", self.main_label))
                .legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 22, y)], dark.stroke_width(3))
                });
            let compare_colours = line_colours(self.compare.len() + 1);
            for ((name, curves), colour) in self.compare.iter().zip(compare_colours.iter().skip(1))
            {
                let cs = spread(curves);
                let colour = *colour;
                let pts: Vec<(f64, f64)> = cs
                    .radii_m
                    .iter()
                    .zip(&cs.median)
                    .map(|(&r, &t)| (r / 1000.0, t))
                    .collect();
                chart
                    .draw_series(DashedLineSeries::new(pts, 8, 5, colour.stroke_width(2)))?
                    .label(format!("median, {name}"))
                    .legend(move |(x, y)| {
                        DashedPathElement::new(
                            vec![(x, y), (x + 22, y)],
                            6,
                            3,
                            colour.stroke_width(2),
                        )
                    });
            }
            let r95 = median_of(self.main.iter().map(|c| c.r95_m)) / 1000.0;
            let r99 = median_of(self.main.iter().map(|c| c.r99_m)) / 1000.0;
            // Where along the (logarithmic) axis a radius lies, 0 at the left, 1 at the right.
            let across = |r: f64| (r / (r_min * 0.95)).ln() / (x_end / (r_min * 0.95)).ln();
            // The two labels at different heights, so that close radii do not overprint;
            // a label in the right quarter goes to the left of its line, inside the plot.
            for (r, what, style, height) in [
                (r95, "95%", BLACK.stroke_width(1), 0.04),
                (r99, "99%", BLACK.stroke_width(2), 0.10),
            ] {
                chart.draw_series(DashedLineSeries::new(vec![(r, y0), (r, y1)], 6, 4, style))?;
                let left = across(r) > 0.75;
                let (text, side) = if left {
                    (format!("{what} at {} km ", km_tick(r)), HPos::Right)
                } else {
                    (format!(" {what} at {} km", km_tick(r)), HPos::Left)
                };
                chart.draw_series(std::iter::once(Text::new(
                    text,
                    (r, y0 + height * (y1 - y0)),
                    label_font().pos(Pos::new(side, VPos::Top)),
                )))?;
            }
            chart
                .draw_series(std::iter::empty::<Circle<(f64, f64), i32>>())?
                .label("median station reaches 95% / 99% of its final TC")
                .legend(|(x, y)| {
                    DashedPathElement::new(vec![(x, y), (x + 22, y)], 5, 3, BLACK.stroke_width(1))
                });
        }
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperLeft)
            .label_font(label_font())
            .background_style(WHITE.mix(0.85))
            .border_style(RGBColor(160, 160, 160))
            .draw()?;
        Ok(())
    }
}

// ---------------------------------------------------------------------------------------
// New against legacy TC
// ---------------------------------------------------------------------------------------

/// New TC against legacy TC, one point per station, with the 1:1 line and the worst
/// stations named.
#[derive(Debug, Clone)]
pub struct ScatterFigure {
    pub title: String,
    pub x_desc: String,
    pub y_desc: String,
    pub points: Vec<(f64, f64)>,
    /// Labels drawn beside some points: (index into `points`, text).
    pub labels: Vec<(usize, String)>,
}

impl Figure for ScatterFigure {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> anyhow::Result<()>
    where
        DB::ErrorType: 'static,
    {
        let (lo, hi) = padded_range(self.points.iter().flat_map(|&(x, y)| [x, y]), 0.06);
        let mut chart = ChartBuilder::on(root)
            .caption(&self.title, title_font())
            .margin(14)
            .x_label_area_size(52)
            .y_label_area_size(72)
            .build_cartesian_2d(lo..hi, lo..hi)?;
        chart
            .configure_mesh()
            .x_desc(self.x_desc.as_str())
            .y_desc(self.y_desc.as_str())
            .x_label_formatter(&|v| tick(*v))
            .y_label_formatter(&|v| tick(*v))
            .label_style(label_font())
            .axis_desc_style(axis_font())
            .light_line_style(RGBColor(235, 235, 235))
            .bold_line_style(RGBColor(210, 210, 210))
            .draw()?;
        let grey = RGBColor(120, 120, 120);
        chart
            .draw_series(LineSeries::new(
                vec![(lo, lo), (hi, hi)],
                grey.stroke_width(1),
            ))?
            .label("new = legacy")
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 22, y)], grey));
        let dot = scale_colour(0.2);
        chart
            .draw_series(
                self.points
                    .iter()
                    .map(|&p| Circle::new(p, 4, dot.mix(0.8).filled())),
            )?
            .label(format!("{} stations", self.points.len()))
            .legend(move |(x, y)| Circle::new((x + 11, y), 4, dot.filled()));
        let worst = scale_colour(0.65);
        for (i, text) in &self.labels {
            let p = self.points[*i];
            chart.draw_series(std::iter::once(Circle::new(p, 6, worst.stroke_width(2))))?;
            chart.draw_series(std::iter::once(Text::new(
                format!("  {text}"),
                p,
                label_font(),
            )))?;
        }
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperLeft)
            .label_font(label_font())
            .background_style(WHITE.mix(0.85))
            .border_style(RGBColor(160, 160, 160))
            .draw()?;
        Ok(())
    }
}

/// Histogram of values (differences), with the zero line.
#[derive(Debug, Clone)]
pub struct HistogramFigure {
    pub title: String,
    pub x_desc: String,
    pub values: Vec<f64>,
}

impl Figure for HistogramFigure {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> anyhow::Result<()>
    where
        DB::ErrorType: 'static,
    {
        let n = self.values.len().max(1);
        let bins = ((2.0 * (n as f64).sqrt()).ceil() as usize).clamp(12, 60);
        let (lo, hi) = padded_range(self.values.iter().copied().chain([0.0]), 0.02);
        let width = (hi - lo) / bins as f64;
        let mut counts = vec![0usize; bins];
        for &v in &self.values {
            let k = (((v - lo) / width).floor() as usize).min(bins - 1);
            counts[k] += 1;
        }
        let top = *counts.iter().max().unwrap_or(&1) as f64 * 1.1 + 0.5;
        let mut chart = ChartBuilder::on(root)
            .caption(&self.title, title_font())
            .margin(14)
            .x_label_area_size(52)
            .y_label_area_size(64)
            .build_cartesian_2d(lo..hi, 0.0..top)?;
        chart
            .configure_mesh()
            .x_desc(self.x_desc.as_str())
            .y_desc("stations per bin")
            .x_label_formatter(&|v| tick(*v))
            .y_label_formatter(&|v| format!("{v:.0}"))
            .label_style(label_font())
            .axis_desc_style(axis_font())
            .light_line_style(RGBColor(235, 235, 235))
            .bold_line_style(RGBColor(210, 210, 210))
            .draw()?;
        let fill = scale_colour(0.45);
        chart.draw_series(counts.iter().enumerate().map(|(k, &c)| {
            let x0 = lo + k as f64 * width;
            Rectangle::new([(x0, 0.0), (x0 + width, c as f64)], fill.filled())
        }))?;
        chart.draw_series(counts.iter().enumerate().map(|(k, &c)| {
            let x0 = lo + k as f64 * width;
            Rectangle::new([(x0, 0.0), (x0 + width, c as f64)], WHITE.stroke_width(1))
        }))?;
        chart.draw_series(std::iter::once(PathElement::new(
            vec![(0.0, 0.0), (0.0, top)],
            BLACK.stroke_width(1),
        )))?;
        Ok(())
    }
}

/// Per-zone differences: for each zone the mean (bar), plus and minus one standard
/// deviation (whisker) and the extremes (dots).
#[derive(Debug, Clone)]
pub struct ZoneFigure {
    pub title: String,
    pub y_desc: String,
    /// Zone name, mean, standard deviation, smallest, largest.
    pub zones: Vec<(String, f64, f64, f64, f64)>,
}

impl Figure for ZoneFigure {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> anyhow::Result<()>
    where
        DB::ErrorType: 'static,
    {
        let n = self.zones.len();
        if n == 0 {
            bail!("internal error: a zone plot without zones");
        }
        let (y0, y1) = padded_range(
            self.zones
                .iter()
                .flat_map(|z| [z.1 - z.2, z.1 + z.2, z.3, z.4])
                .chain([0.0]),
            0.08,
        );
        let names: Vec<String> = self.zones.iter().map(|z| z.0.clone()).collect();
        let mut chart = ChartBuilder::on(root)
            .caption(&self.title, title_font())
            .margin(14)
            .x_label_area_size(52)
            .y_label_area_size(72)
            .build_cartesian_2d(-0.5..(n as f64 - 0.5), y0..y1)?;
        chart
            .configure_mesh()
            .disable_x_mesh()
            .x_labels(n)
            .x_desc("zone")
            .y_desc(self.y_desc.as_str())
            .x_label_formatter(&|v| {
                let i = v.round();
                if (v - i).abs() < 1e-6 && i >= 0.0 && (i as usize) < names.len() {
                    names[i as usize].clone()
                } else {
                    String::new()
                }
            })
            .y_label_formatter(&|v| tick(*v))
            .label_style(label_font())
            .axis_desc_style(axis_font())
            .light_line_style(RGBColor(235, 235, 235))
            .bold_line_style(RGBColor(210, 210, 210))
            .draw()?;
        // Zone names under each bar, whatever ticks plotters chose.
        let bar = scale_colour(0.45);
        let dark = scale_colour(0.05);
        chart.draw_series(self.zones.iter().enumerate().map(|(i, z)| {
            let x = i as f64;
            Rectangle::new([(x - 0.3, 0.0), (x + 0.3, z.1)], bar.filled())
        }))?;
        for (i, z) in self.zones.iter().enumerate() {
            let x = i as f64;
            chart.draw_series(std::iter::once(PathElement::new(
                vec![(x, z.1 - z.2), (x, z.1 + z.2)],
                dark.stroke_width(2),
            )))?;
            for y in [z.1 - z.2, z.1 + z.2] {
                chart.draw_series(std::iter::once(PathElement::new(
                    vec![(x - 0.12, y), (x + 0.12, y)],
                    dark.stroke_width(2),
                )))?;
            }
            chart.draw_series(
                [z.3, z.4]
                    .into_iter()
                    .map(|y| Circle::new((x, y), 3, dark.filled())),
            )?;
        }
        chart.draw_series(std::iter::once(PathElement::new(
            vec![(-0.5, 0.0), (n as f64 - 0.5, 0.0)],
            BLACK.stroke_width(1),
        )))?;
        Ok(())
    }
}

// ---------------------------------------------------------------------------------------
// Map preview
// ---------------------------------------------------------------------------------------

/// A TC grid over a hillshade of the DEM, with a colour bar (PNG only: the map is a
/// bitmap).
pub struct MapFigure<'a> {
    pub title: String,
    /// Grid values (mGal), row-major from the north-west; NaN where there is no value.
    pub values: &'a [f32],
    pub cols: usize,
    pub rows: usize,
    /// Western and northern edges of the grid's cells and the spacing, m.
    pub x_left: f64,
    pub y_top: f64,
    pub spacing: f64,
    /// The DEM, for the hillshade underlay.
    pub dem: &'a crate::dem::Dem,
    /// Station positions to mark, m.
    pub stations: Vec<(f64, f64)>,
    /// Whether the grid is in longitude and latitude (degrees) rather than metres.
    pub geographic: bool,
}

/// Hillshade of the DEM at `(x, y)` from central differences over `step` (m): 0 (in
/// shadow) to 1, the cosine of the angle between the ground's normal and the sun, with
/// the sun from the north-west (azimuth 315 degrees) at 45 degrees (common practice for
/// shaded relief, so that hills look raised rather than sunken).
pub fn hillshade(dem: &crate::dem::Dem, x: f64, y: f64, step: f64) -> Option<f64> {
    let e = dem.bilinear(x + step, y)?;
    let w = dem.bilinear(x - step, y)?;
    let n = dem.bilinear(x, y + step)?;
    let s = dem.bilinear(x, y - step)?;
    // Gradients per metre (a geographic grid's units are degrees).
    let (mx, my) = dem.metres_per_unit(y);
    let gx = (e - w) / (2.0 * step * mx);
    let gy = (n - s) / (2.0 * step * my);
    // Unit normal (-gx, -gy, 1) / norm; sun direction from azimuth 315, altitude 45.
    let norm = (gx * gx + gy * gy + 1.0).sqrt();
    let (alt, az) = (45f64.to_radians(), 315f64.to_radians());
    let sun = (alt.cos() * az.sin(), alt.cos() * az.cos(), alt.sin());
    let shade = (-gx * sun.0 - gy * sun.1 + sun.2) / norm;
    Some(shade.clamp(0.0, 1.0))
}

/// Levels of the preview's hillshade.
const SHADE_LEVELS: f64 = 8.0;

impl MapFigure<'_> {
    fn value_range(&self) -> (f64, f64) {
        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
        for &v in self.values {
            if v.is_finite() {
                lo = lo.min(v as f64);
                hi = hi.max(v as f64);
            }
        }
        if lo > hi {
            (0.0, 1.0)
        } else if hi - lo < 1e-9 {
            (lo - 0.5e-3, hi + 0.5e-3)
        } else {
            (lo, hi)
        }
    }
}

impl Figure for MapFigure<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> anyhow::Result<()>
    where
        DB::ErrorType: 'static,
    {
        // Grid units per chart unit: km for a projected grid, degrees for a geographic one.
        let unit = if self.geographic { 1.0 } else { 1000.0 };
        let (w, _) = root.dim_in_pixel();
        let bar_width = 150u32.min(w / 4);
        let (map_area, bar_area) = root.split_horizontally(w - bar_width);
        let map_area = map_area.titled(&self.title, (FAMILY, 19).into_font())?;
        let x0 = self.x_left;
        let x1 = self.x_left + self.cols as f64 * self.spacing;
        let y1 = self.y_top;
        let y0 = self.y_top - self.rows as f64 * self.spacing;
        // Plotting-area size for these label areas, then ranges with equal metres per
        // pixel on both axes (the map keeps its shape).
        let build = |xr: std::ops::Range<f64>, yr: std::ops::Range<f64>| {
            ChartBuilder::on(&map_area)
                .margin(12)
                .x_label_area_size(50)
                .y_label_area_size(76)
                .build_cartesian_2d(xr, yr)
        };
        let (pw, ph) = build(0.0..1.0, 0.0..1.0)?.plotting_area().dim_in_pixel();
        let (pw, ph) = (pw.max(1), ph.max(1));
        let per_px = ((x1 - x0) / pw as f64).max((y1 - y0) / ph as f64);
        let (cx, cy) = (0.5 * (x0 + x1), 0.5 * (y0 + y1));
        let (vx0, vx1) = (cx - 0.5 * per_px * pw as f64, cx + 0.5 * per_px * pw as f64);
        let (vy0, vy1) = (cy - 0.5 * per_px * ph as f64, cy + 0.5 * per_px * ph as f64);
        let mut chart = build(vx0 / unit..vx1 / unit, vy0 / unit..vy1 / unit)?;
        // Decimals enough to tell the ticks apart (about ten across the picture).
        let span = per_px * pw.max(ph) as f64 / unit;
        let decimals = (1.0 - (span / 10.0).log10().floor()).clamp(0.0, 6.0) as usize;
        let km_label = move |v: &f64| format!("{v:.decimals$}");
        let (x_desc, y_desc) = if self.geographic {
            ("longitude (deg)", "latitude (deg)")
        } else {
            ("easting (km)", "northing (km)")
        };
        chart
            .configure_mesh()
            .disable_mesh()
            .x_desc(x_desc)
            .y_desc(y_desc)
            .x_label_formatter(&km_label)
            .y_label_formatter(&km_label)
            .label_style(label_font())
            .axis_desc_style(axis_font())
            .draw()?;
        let (lo, hi) = self.value_range();
        // Gradients over three pixels (or cells): the shape of the ground, not its grain.
        let step = 3.0 * per_px.max(self.dem.dx.max(self.dem.dy));
        let mut buf = vec![255u8; (pw * ph * 3) as usize];
        for py in 0..ph {
            let y = vy1 - (py as f64 + 0.5) * per_px;
            for px in 0..pw {
                let x = vx0 + (px as f64 + 0.5) * per_px;
                // Shading in SHADE_LEVELS steps: as legible, and the picture compresses
                // several times better than with a continuous shade of a rough DEM.
                let shade = hillshade(self.dem, x, y, step)
                    .map(|s| (s * SHADE_LEVELS).round() / SHADE_LEVELS);
                let col = ((x - self.x_left) / self.spacing).floor();
                let row = ((self.y_top - y) / self.spacing).floor();
                let value = if col >= 0.0
                    && row >= 0.0
                    && (col as usize) < self.cols
                    && (row as usize) < self.rows
                {
                    let v = self.values[row as usize * self.cols + col as usize];
                    v.is_finite().then_some(v as f64)
                } else {
                    None
                };
                let rgb = match (value, shade) {
                    (Some(v), s) => {
                        let c = scale_rgb((v - lo) / (hi - lo));
                        let k = 0.6 + 0.4 * s.unwrap_or(1.0);
                        [
                            (c[0] as f64 * k).round() as u8,
                            (c[1] as f64 * k).round() as u8,
                            (c[2] as f64 * k).round() as u8,
                        ]
                    }
                    (None, Some(s)) => {
                        let g = (150.0 + 90.0 * s).round() as u8;
                        [g, g, g]
                    }
                    (None, None) => [255, 255, 255],
                };
                let i = ((py * pw + px) * 3) as usize;
                buf[i..i + 3].copy_from_slice(&rgb);
            }
        }
        let image = BitMapElement::with_owned_buffer((vx0 / unit, vy1 / unit), (pw, ph), buf)
            .context("internal error: map buffer of the wrong size")?;
        chart.draw_series(std::iter::once(image))?;
        // Outline of the grid and the stations.
        chart.draw_series(std::iter::once(PathElement::new(
            vec![
                (x0 / unit, y0 / unit),
                (x1 / unit, y0 / unit),
                (x1 / unit, y1 / unit),
                (x0 / unit, y1 / unit),
                (x0 / unit, y0 / unit),
            ],
            BLACK.stroke_width(1),
        )))?;
        chart.draw_series(
            self.stations
                .iter()
                .map(|&(x, y)| Circle::new((x / unit, y / unit), 3, BLACK.stroke_width(1))),
        )?;
        // Colour bar.
        let mut bar = ChartBuilder::on(&bar_area)
            .margin_top(46)
            .margin_bottom(62)
            .margin_right(8)
            .y_label_area_size(bar_width.saturating_sub(50).min(80))
            .build_cartesian_2d(0.0..1.0, lo..hi)?;
        bar.configure_mesh()
            .disable_mesh()
            .disable_x_axis()
            .y_desc("terrain correction (mGal)")
            .y_label_formatter(&|v| tick(*v))
            .label_style(label_font())
            .axis_desc_style(axis_font())
            .draw()?;
        let steps = 256;
        bar.draw_series((0..steps).map(|k| {
            let a = lo + (hi - lo) * k as f64 / steps as f64;
            let b = lo + (hi - lo) * (k + 1) as f64 / steps as f64;
            let c = scale_colour((k as f64 + 0.5) / steps as f64);
            Rectangle::new([(0.0, a), (1.0, b)], c.filled())
        }))?;
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lightness_strictly_increases_along_the_scale() {
        // L* of the 8-bit output colours (CIE 15:2004 CIELAB, sRGB IEC 61966-2-1).
        let lab: Vec<[f64; 3]> = (0..=100)
            .map(|i| srgb_to_lab(scale_rgb(i as f64 / 100.0)))
            .collect();
        for w in lab.windows(2) {
            assert!(w[1][0] > w[0][0], "L* {} then {}", w[0][0], w[1][0]);
        }
        assert!((lab[0][0] - 18.0).abs() < 0.5 && (lab[100][0] - 92.0).abs() < 0.5);
        // Grey-scale readability: relative luminance strictly increases as well.
        let luminance = |rgb: [u8; 3]| {
            let l = srgb_to_lab(rgb)[0];
            ((l + 16.0) / 116.0).powi(3)
        };
        let ys: Vec<f64> = (0..=100)
            .map(|i| luminance(scale_rgb(i as f64 / 100.0)))
            .collect();
        assert!(ys.windows(2).all(|w| w[1] > w[0]));
    }

    #[test]
    fn the_scale_needs_no_gamut_clipping_and_steps_evenly() {
        for i in 0..=1000 {
            let (l, c, h) = scale_lch(i as f64 / 1000.0);
            let (s, co) = h.to_radians().sin_cos();
            let lin = lab_to_linear_srgb(l, c * co, c * s);
            assert!(
                lin.iter().all(|&v| (-1e-9..=1.0 + 1e-9).contains(&v)),
                "t = {}: outside sRGB {lin:?}",
                i as f64 / 1000.0
            );
        }
        // CIE76 colour difference of successive sixteenths, summed over fine steps.
        let lab: Vec<[f64; 3]> = (0..=256)
            .map(|i| {
                let (l, c, h) = scale_lch(i as f64 / 256.0);
                let (s, co) = h.to_radians().sin_cos();
                [l, c * co, c * s]
            })
            .collect();
        let de = |a: &[f64; 3], b: &[f64; 3]| {
            ((a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2) + (a[2] - b[2]).powi(2)).sqrt()
        };
        let blocks: Vec<f64> = (0..16)
            .map(|k| {
                (16 * k..16 * k + 16)
                    .map(|i| de(&lab[i], &lab[i + 1]))
                    .sum()
            })
            .collect();
        let (min, max) = blocks
            .iter()
            .fold((f64::INFINITY, 0.0f64), |(a, b), &v| (a.min(v), b.max(v)));
        assert!(max / min < 1.7, "uneven steps: {blocks:?}");
    }

    #[test]
    fn plot_sizes_and_targets_are_checked() {
        assert_eq!(parse_plot_size("1000x700").unwrap(), (1000, 700));
        assert_eq!(parse_plot_size(" 640X480 ").unwrap(), (640, 480));
        assert!(parse_plot_size("10x10").is_err());
        assert!(parse_plot_size("wide").is_err());
        assert_eq!(
            check_plot_target(Path::new("a.svg"), "--plot", false)
                .unwrap()
                .format,
            PlotFormat::Svg
        );
        assert!(check_plot_target(Path::new("a.svg"), "--preview", true).is_err());
        assert!(check_plot_target(Path::new("a.pdf"), "--plot", false).is_err());
        assert!(check_plot_target(Path::new("/no/such/dir/a.png"), "--plot", false).is_err());
    }

    #[test]
    fn quantiles_interpolate() {
        let v = [1.0, 2.0, 3.0, 4.0];
        assert_eq!(quantile(&v, 0.5), 2.5);
        assert_eq!(quantile(&v, 0.0), 1.0);
        assert_eq!(quantile(&v, 1.0), 4.0);
    }

    #[test]
    fn ticks_are_short() {
        assert_eq!(tick(2.5), "2.5");
        assert_eq!(tick(120.0), "120");
        assert_eq!(tick(0.125), "0.125");
        assert_eq!(tick(0.0), "0");
        assert_eq!(tick(-2.220446049250313e-16), "0");
        assert_eq!(tick(-0.1 + 0.1 * 3.0 - 0.2), "0");
        assert_eq!(tick(2e-5), "2.0e-5");
        assert_eq!(tick(-0.4), "-0.4");
    }
}
