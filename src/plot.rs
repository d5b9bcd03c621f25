//! Figures (SVG or PNG, chosen by the file extension) drawn with `plotters` and an embedded
//! DejaVu Sans font (Bitstream Vera / DejaVu licence, see `assets/fonts/DejaVu-LICENSE`), so no
//! system font or library is needed.
//!
//! A [`PlaneFigure`] shows polylines in the complex plane with equal scales on both axes, the
//! boundary of the domain, a legend and a caption that records the parameters of the run.

use crate::domain::ChordalDomain;
use crate::error::{Error, Result};
use num_complex::Complex64;
use plotters::coord::Shift;
use plotters::prelude::*;
use std::path::Path;
use std::sync::Once;

static FONTS: Once = Once::new();

fn ensure_fonts() {
    FONTS.call_once(|| {
        // The font bytes are compiled in; registration only fails on a corrupt font file.
        let _ = plotters::style::register_font(
            "sans-serif",
            FontStyle::Normal,
            dejavu::sans::regular(),
        );
        let _ = plotters::style::register_font("sans-serif", FontStyle::Bold, dejavu::sans::bold());
        let _ = plotters::style::register_font(
            "sans-serif",
            FontStyle::Italic,
            dejavu::sans::oblique(),
        );
    });
}

/// Line colours for successive curves: eight hues chosen to stay distinct from each other on
/// white and in grey-scale print (darkest first).
pub const PALETTE: [RGBColor; 8] = [
    RGBColor(31, 56, 140),
    RGBColor(196, 78, 0),
    RGBColor(22, 128, 84),
    RGBColor(160, 32, 120),
    RGBColor(110, 110, 110),
    RGBColor(222, 160, 20),
    RGBColor(60, 160, 210),
    RGBColor(140, 60, 30),
];

/// One polyline of a figure.
#[derive(Debug, Clone)]
pub struct Polyline {
    /// Points, in order.
    pub points: Vec<Complex64>,
    /// Legend entry (none: not listed).
    pub label: Option<String>,
}

/// A figure of curves in the plane with equal axis scales.
#[derive(Debug, Clone)]
pub struct PlaneFigure {
    /// Title above the plot.
    pub title: String,
    /// Caption lines below the plot (parameters of the run, resolution, warnings).
    pub caption: Vec<String>,
    /// The curves.
    pub curves: Vec<Polyline>,
    /// Boundary of the domain to draw (and its marked points).
    pub domain: ChordalDomain,
    /// Optional view box `(x0, x1, y0, y1)`; computed from the data when absent.
    pub view: Option<(f64, f64, f64, f64)>,
    /// Boundary and interior points to mark (default: the curve's end points of the domain).
    pub marks: Option<Vec<(f64, f64)>>,
}

pub(crate) fn out_err(path: &Path, e: impl std::fmt::Display) -> Error {
    Error::Output(format!("drawing {}: {e}", path.display()))
}

impl PlaneFigure {
    /// Data bounds with a margin, widened so that the box fits the domain's boundary.
    fn view_box(&self) -> (f64, f64, f64, f64) {
        if let Some(v) = self.view {
            return v;
        }
        let (mut x0, mut x1, mut y0, mut y1) = (f64::MAX, f64::MIN, f64::MAX, f64::MIN);
        for c in &self.curves {
            for z in &c.points {
                if z.re.is_finite() && z.im.is_finite() {
                    x0 = x0.min(z.re);
                    x1 = x1.max(z.re);
                    y0 = y0.min(z.im);
                    y1 = y1.max(z.im);
                }
            }
        }
        if x0 > x1 {
            (x0, x1, y0, y1) = (-1.0, 1.0, 0.0, 1.0);
        }
        match self.domain {
            ChordalDomain::HalfPlane => y0 = y0.min(0.0),
            ChordalDomain::Disk => {
                (x0, x1, y0, y1) = (-1.0, 1.0, -1.0, 1.0);
            }
            ChordalDomain::Strip => {
                y0 = 0.0;
                y1 = std::f64::consts::PI;
            }
        }
        let pad = 0.04 * (x1 - x0).max(y1 - y0).max(1e-12);
        let below = if self.domain == ChordalDomain::HalfPlane {
            0.25 * pad
        } else {
            pad
        };
        (x0 - pad, x1 + pad, y0 - below, y1 + pad)
    }

    /// Draw to `path` (`.svg` or `.png`).
    ///
    /// # Errors
    /// An unknown extension or a failure to write the file.
    pub fn draw(&self, path: &Path) -> Result<()> {
        ensure_fonts();
        let ext = extension(path)?;
        // The strip's start point (at −∞) is the one allowed non-finite point (not drawn).
        let skip = usize::from(self.domain == crate::domain::ChordalDomain::Strip);
        for (k, c) in self.curves.iter().enumerate() {
            if let Some(j) = c
                .points
                .iter()
                .skip(skip)
                .position(|z| !(z.re.is_finite() && z.im.is_finite()))
            {
                return Err(Error::Numerical(format!(
                    "{}: curve {k} point {} is not finite; nothing drawn",
                    path.display(),
                    j + skip
                )));
            }
        }
        let (x0, x1, y0, y1) = self.view_box();
        // Equal scales: the plot area's aspect follows the data's, within limits; outside them
        // the shorter range is widened instead.
        let aspect = ((y1 - y0) / (x1 - x0)).clamp(0.3, 1.4);
        let (x0, x1, y0, y1) = widen_to_aspect(
            x0,
            x1,
            y0,
            y1,
            aspect,
            self.domain == ChordalDomain::HalfPlane,
        );
        let plot_w = 760u32;
        let plot_h = (plot_w as f64 * aspect).round() as u32;
        let caption = wrap_lines(&self.caption, 112);
        let caption_h = 22 * caption.len() as u32 + 16;
        let w = plot_w + 90;
        let h = plot_h + 70 + 50 + caption_h;
        let job = PlaneJob {
            fig: self,
            view: (x0, x1, y0, y1),
            caption: &caption,
            caption_h,
        };
        write_figure(path, &ext, (w, h), &job)
    }

    fn render<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
        (x0, x1, y0, y1): (f64, f64, f64, f64),
        caption: &[String],
        caption_h: u32,
        s: u32,
    ) -> std::result::Result<(), Box<dyn std::error::Error + 'static>>
    where
        DB::ErrorType: 'static,
    {
        root.fill(&WHITE)?;
        let (_, total_h) = root.dim_in_pixel();
        let (upper, lower) = root.split_vertically(total_h - caption_h);
        let font = |px: u32| ("sans-serif", (px * s) as f64).into_font();
        let build = |x0: f64, x1: f64, y0: f64, y1: f64| {
            ChartBuilder::on(&upper)
                .caption(&self.title, font(20))
                .margin(12 * s)
                .x_label_area_size(40 * s)
                .y_label_area_size(56 * s)
                .build_cartesian_2d(x0..x1, y0..y1)
        };
        // Equal scales: measure the plotting area once, widen the ranges to its exact aspect,
        // and lay the chart out again.
        let (pw, ph) = build(x0, x1, y0, y1)?.plotting_area().dim_in_pixel();
        let (x0, x1, y0, y1) = widen_to_aspect(
            x0,
            x1,
            y0,
            y1,
            ph as f64 / pw.max(1) as f64,
            self.domain == ChordalDomain::HalfPlane,
        );
        upper.fill(&WHITE)?;
        let mut chart = build(x0, x1, y0, y1)?;
        let tick = |v: &f64, span: f64| {
            // Avoid "-0.0" and keep as many decimals as the span needs.
            let v = if v.abs() < 1e-9 * span { 0.0 } else { *v };
            let digits = (-(span / 8.0).log10().floor()).clamp(0.0, 6.0) as usize;
            format!("{v:.digits$}")
        };
        let (xs, ys) = (x1 - x0, y1 - y0);
        chart
            .configure_mesh()
            .x_label_formatter(&|v| tick(v, xs))
            .y_label_formatter(&|v| tick(v, ys))
            .light_line_style(RGBColor(235, 235, 235))
            .bold_line_style(RGBColor(215, 215, 215))
            .x_desc("Re z")
            .y_desc("Im z")
            .label_style(font(13))
            .axis_desc_style(font(14))
            .draw()?;
        let boundary = ShapeStyle::from(&BLACK).stroke_width(2 * s);
        match self.domain {
            ChordalDomain::HalfPlane => {
                chart.draw_series(LineSeries::new([(x0, 0.0), (x1, 0.0)], boundary))?;
                chart.draw_series(std::iter::once(Circle::new(
                    (0.0, 0.0),
                    4 * s,
                    BLACK.filled(),
                )))?;
            }
            ChordalDomain::Disk => {
                let circle: Vec<(f64, f64)> = (0..=720)
                    .map(|k| {
                        let a = k as f64 * std::f64::consts::PI / 360.0;
                        (a.cos(), a.sin())
                    })
                    .collect();
                chart.draw_series(LineSeries::new(circle, boundary))?;
                let marks = self
                    .marks
                    .clone()
                    .unwrap_or_else(|| vec![(1.0, 0.0), (-1.0, 0.0)]);
                chart.draw_series(
                    marks
                        .into_iter()
                        .map(|p| Circle::new(p, 4 * s, BLACK.filled())),
                )?;
            }
            ChordalDomain::Strip => {
                for y in [0.0, std::f64::consts::PI] {
                    chart.draw_series(LineSeries::new([(x0, y), (x1, y)], boundary))?;
                }
            }
        }
        let mut any_label = false;
        for (i, c) in self.curves.iter().enumerate() {
            let colour = PALETTE[i % PALETTE.len()];
            let style = ShapeStyle::from(&colour).stroke_width(s);
            let pts: Vec<(f64, f64)> = c
                .points
                .iter()
                .filter(|z| z.re.is_finite() && z.im.is_finite())
                .map(|z| (z.re, z.im))
                .collect();
            let series = chart.draw_series(LineSeries::new(pts, style))?;
            if let Some(label) = &c.label {
                any_label = true;
                series.label(label.clone()).legend(move |(x, y)| {
                    PathElement::new(
                        vec![(x, y), (x + 20 * s as i32, y)],
                        ShapeStyle::from(&colour).stroke_width(2 * s),
                    )
                });
            }
        }
        if any_label {
            chart
                .configure_series_labels()
                .position(SeriesLabelPosition::UpperLeft)
                .legend_area_size(30 * s)
                .background_style(WHITE.mix(0.85))
                .border_style(RGBColor(150, 150, 150))
                .label_font(font(13))
                .draw()?;
        }
        for (i, line) in caption.iter().enumerate() {
            lower.draw_text(
                line,
                &font(14).color(&RGBColor(40, 40, 40)),
                ((16 * s) as i32, ((4 + 22 * i as u32) * s) as i32),
            )?;
        }
        Ok(())
    }
}

/// Break caption lines at spaces so that none is longer than `width` characters.
/// Something that renders itself on a drawing area at pixel scale `s` (1 for SVG, 2 for PNG).
pub(crate) trait Render {
    fn render<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
        s: u32,
    ) -> std::result::Result<(), Box<dyn std::error::Error + 'static>>
    where
        DB::ErrorType: 'static;
}

/// A plane figure with its layout fixed.
struct PlaneJob<'a> {
    fig: &'a PlaneFigure,
    view: (f64, f64, f64, f64),
    caption: &'a [String],
    caption_h: u32,
}

impl Render for PlaneJob<'_> {
    fn render<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
        s: u32,
    ) -> std::result::Result<(), Box<dyn std::error::Error + 'static>>
    where
        DB::ErrorType: 'static,
    {
        self.fig
            .render(root, self.view, self.caption, self.caption_h * s, s)
    }
}

/// The lower-case extension of a plot file, which must be `svg` or `png`.
pub(crate) fn extension(path: &Path) -> Result<String> {
    let ext = path
        .extension()
        .map(|e| e.to_string_lossy().to_lowercase())
        .unwrap_or_default();
    if ext == "svg" || ext == "png" {
        Ok(ext)
    } else {
        Err(Error::param(
            "plot",
            path.display(),
            "a file name ending in .svg or .png",
        ))
    }
}

/// Render in memory (SVG text, or an RGB buffer at twice the size encoded as PNG), then write
/// atomically (temporary file and rename), creating the parent folder.
pub(crate) fn write_figure(
    path: &Path,
    ext: &str,
    (w, h): (u32, u32),
    job: &impl Render,
) -> Result<()> {
    ensure_fonts();
    if let Some(parent) = path.parent().filter(|p| !p.as_os_str().is_empty()) {
        std::fs::create_dir_all(parent).map_err(|e| out_err(path, e))?;
    }
    if ext == "svg" {
        let mut text = String::new();
        {
            let root = SVGBackend::with_string(&mut text, (w, h)).into_drawing_area();
            job.render(&root, 1).map_err(|e| out_err(path, e))?;
            root.present().map_err(|e| out_err(path, e))?;
        }
        crate::io::write_atomic(path, text.as_bytes()).map_err(|e| out_err(path, e))
    } else {
        let (pw, ph) = (w * 2, h * 2);
        let mut rgb = vec![255u8; (pw * ph * 3) as usize];
        {
            let root = BitMapBackend::with_buffer(&mut rgb, (pw, ph)).into_drawing_area();
            job.render(&root, 2).map_err(|e| out_err(path, e))?;
            root.present().map_err(|e| out_err(path, e))?;
        }
        let img = image::RgbImage::from_raw(pw, ph, rgb)
            .ok_or_else(|| out_err(path, "image buffer has the wrong size"))?;
        let mut png = std::io::Cursor::new(Vec::new());
        img.write_to(&mut png, image::ImageOutputFormat::Png)
            .map_err(|e| out_err(path, e))?;
        crate::io::write_atomic(path, png.get_ref()).map_err(|e| out_err(path, e))
    }
}

/// One estimated moment: (λ, estimate of E[e^{−λT}], its standard error).
pub type MomentPoint = (f64, f64, f64);

/// A two-panel figure of a positive random variable against its exact law: left, histograms
/// (as densities) of samples beside the exact density; right, estimated E[e^{−λT}] with ±2
/// standard-error bars beside the exact curve, on a logarithmic axis.
#[derive(Debug, Clone)]
pub struct LawFigure {
    /// Title above the panels.
    pub title: String,
    /// Caption lines below (parameters, sources, resolution).
    pub caption: Vec<String>,
    /// Labelled samples of T.
    pub samples: Vec<(String, Vec<f64>)>,
    /// The exact density as (t, f(t)) points, drawn as a black line.
    pub density: Vec<(f64, f64)>,
    /// Labelled estimates (λ, E[e^{−λT}], standard error).
    pub moments: Vec<(String, Vec<MomentPoint>)>,
    /// The exact moment curve (λ, E[e^{−λT}]).
    pub exact_moments: Vec<(f64, f64)>,
    /// Axis label of T (e.g. "T = −log CR").
    pub t_label: String,
}

impl LawFigure {
    /// Draw to `path` (.svg or .png).
    ///
    /// Errors: [`Error::InvalidParameter`] for another extension; [`Error::Output`] if the file
    /// cannot be written.
    pub fn draw(&self, path: &Path) -> Result<()> {
        let ext = extension(path)?;
        let caption = wrap_lines(&self.caption, 140);
        let caption_h = 22 * caption.len() as u32 + 16;
        let job = LawJob {
            fig: self,
            caption: &caption,
            caption_h,
        };
        write_figure(path, &ext, (1100, 520 + caption_h), &job)
    }
}

struct LawJob<'a> {
    fig: &'a LawFigure,
    caption: &'a [String],
    caption_h: u32,
}

impl Render for LawJob<'_> {
    fn render<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
        s: u32,
    ) -> std::result::Result<(), Box<dyn std::error::Error + 'static>>
    where
        DB::ErrorType: 'static,
    {
        let f = self.fig;
        root.fill(&WHITE)?;
        let font = |px: u32| ("sans-serif", (px * s) as f64).into_font();
        let (_, total_h) = root.dim_in_pixel();
        let (upper, lower) = root.split_vertically(total_h - self.caption_h * s);
        let (title_area, panels) = upper.split_vertically(34 * s);
        title_area.draw_text(
            &f.title,
            &font(20).color(&BLACK),
            ((16 * s) as i32, (8 * s) as i32),
        )?;
        let (left, right) = panels.split_horizontally(panels.dim_in_pixel().0 / 2);
        // Left: histograms as densities over [0, t_max], t_max the 99th percentile of all.
        let mut all: Vec<f64> = f
            .samples
            .iter()
            .flat_map(|(_, v)| v.iter().copied())
            .filter(|t| t.is_finite())
            .collect();
        all.sort_by(f64::total_cmp);
        let t_max = all
            .get(((all.len() as f64) * 0.99) as usize)
            .copied()
            .unwrap_or(1.0)
            .max(1e-9);
        let bins = 40usize;
        let width = t_max / bins as f64;
        let hists: Vec<Vec<(f64, f64)>> = f
            .samples
            .iter()
            .map(|(_, v)| {
                let mut c = vec![0usize; bins];
                for &t in v {
                    if t.is_finite() && t >= 0.0 && t < t_max {
                        c[((t / width) as usize).min(bins - 1)] += 1;
                    }
                }
                let n = v.len().max(1) as f64;
                let mut pts = Vec::with_capacity(2 * bins + 2);
                pts.push((0.0, 0.0));
                for (k, &ck) in c.iter().enumerate() {
                    let y = ck as f64 / (n * width);
                    pts.push((k as f64 * width, y));
                    pts.push(((k + 1) as f64 * width, y));
                }
                pts.push((t_max, 0.0));
                pts
            })
            .collect();
        let y_max = hists
            .iter()
            .flatten()
            .map(|p| p.1)
            .chain(f.density.iter().filter(|p| p.0 <= t_max).map(|p| p.1))
            .fold(0.0, f64::max)
            * 1.1;
        let mut chart = ChartBuilder::on(&left)
            .margin(12 * s)
            .x_label_area_size(40 * s)
            .y_label_area_size(60 * s)
            .caption("density of T", font(15))
            .build_cartesian_2d(0.0..t_max, 0.0..y_max.max(1e-12))?;
        chart
            .configure_mesh()
            .light_line_style(RGBColor(235, 235, 235))
            .bold_line_style(RGBColor(215, 215, 215))
            .x_desc(f.t_label.as_str())
            .y_desc("density")
            .label_style(font(12))
            .axis_desc_style(font(13))
            .draw()?;
        for (i, ((label, _), h)) in f.samples.iter().zip(&hists).enumerate() {
            let colour = PALETTE[i % PALETTE.len()];
            chart
                .draw_series(LineSeries::new(
                    h.clone(),
                    ShapeStyle::from(&colour).stroke_width(s),
                ))?
                .label(label.clone())
                .legend(move |(x, y)| {
                    PathElement::new(
                        vec![(x, y), (x + 20 * s as i32, y)],
                        ShapeStyle::from(&colour).stroke_width(2 * s),
                    )
                });
        }
        chart
            .draw_series(LineSeries::new(
                f.density.iter().copied().filter(|p| p.0 <= t_max),
                ShapeStyle::from(&BLACK).stroke_width(2 * s),
            ))?
            .label("exact")
            .legend(move |(x, y)| {
                PathElement::new(
                    vec![(x, y), (x + 20 * s as i32, y)],
                    ShapeStyle::from(&BLACK).stroke_width(2 * s),
                )
            });
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperRight)
            .background_style(WHITE.mix(0.85))
            .border_style(RGBColor(150, 150, 150))
            .label_font(font(12))
            .draw()?;
        // Right: log10 E[e^{−λT}] against λ.
        let lam: Vec<f64> = f.exact_moments.iter().map(|p| p.0).collect();
        let (l0, l1) = (
            lam.iter().copied().fold(f64::MAX, f64::min),
            lam.iter().copied().fold(f64::MIN, f64::max),
        );
        let logs: Vec<f64> = f
            .exact_moments
            .iter()
            .map(|p| p.1.log10())
            .chain(
                f.moments
                    .iter()
                    .flat_map(|(_, v)| v.iter().map(|m| (m.1 - 2.0 * m.2).max(m.1 * 0.1).log10())),
            )
            .filter(|v| v.is_finite())
            .collect();
        let (g0, g1) = (
            logs.iter().copied().fold(f64::MAX, f64::min) - 0.2,
            logs.iter().copied().fold(f64::MIN, f64::max) + 0.2,
        );
        let mut chart = ChartBuilder::on(&right)
            .margin(12 * s)
            .x_label_area_size(40 * s)
            .y_label_area_size(60 * s)
            .caption("E[CR^λ] = E[exp(−λT)]", font(15))
            .build_cartesian_2d(l0 - 0.05 * (l1 - l0)..l1 + 0.05 * (l1 - l0), g0..g1)?;
        chart
            .configure_mesh()
            .light_line_style(RGBColor(235, 235, 235))
            .bold_line_style(RGBColor(215, 215, 215))
            .x_desc("λ")
            .y_desc("log10 E[CR^λ]")
            .label_style(font(12))
            .axis_desc_style(font(13))
            .draw()?;
        chart.draw_series(LineSeries::new(
            f.exact_moments.iter().map(|p| (p.0, p.1.log10())),
            ShapeStyle::from(&BLACK).stroke_width(2 * s),
        ))?;
        let k = f.moments.len().max(1) as f64;
        for (i, (_, v)) in f.moments.iter().enumerate() {
            let colour = PALETTE[i % PALETTE.len()];
            let shift = (i as f64 - (k - 1.0) / 2.0) * 0.012 * (l1 - l0);
            for &(l, m, se) in v {
                let lo = (m - 2.0 * se).max(m * 0.1).log10();
                let hi = (m + 2.0 * se).log10();
                chart.draw_series(std::iter::once(PathElement::new(
                    vec![(l + shift, lo), (l + shift, hi)],
                    ShapeStyle::from(&colour).stroke_width(s),
                )))?;
                chart.draw_series(std::iter::once(Circle::new(
                    (l + shift, m.log10()),
                    3 * s,
                    colour.filled(),
                )))?;
            }
        }
        for (i, line) in self.caption.iter().enumerate() {
            lower.draw_text(
                line,
                &font(14).color(&RGBColor(40, 40, 40)),
                ((16 * s) as i32, ((4 + 22 * i as u32) * s) as i32),
            )?;
        }
        Ok(())
    }
}

pub(crate) fn wrap_lines(lines: &[String], width: usize) -> Vec<String> {
    let mut out = Vec::new();
    for line in lines {
        let mut cur = String::new();
        for word in line.split(' ') {
            if !cur.is_empty() && cur.chars().count() + 1 + word.chars().count() > width {
                out.push(std::mem::take(&mut cur));
                cur.push_str("    ");
            } else if !cur.is_empty() {
                cur.push(' ');
            }
            cur.push_str(word);
        }
        out.push(cur);
    }
    out
}

/// Widen the shorter side of a box so that `(y1 − y0)/(x1 − x0) = aspect`.
/// With `grow_up`, vertical room is added above only (the half-plane's lower side is empty).
fn widen_to_aspect(
    x0: f64,
    x1: f64,
    y0: f64,
    y1: f64,
    aspect: f64,
    grow_up: bool,
) -> (f64, f64, f64, f64) {
    let (w, h) = (x1 - x0, y1 - y0);
    if h / w < aspect {
        let extra = (aspect * w - h) / 2.0;
        if grow_up {
            (x0, x1, y0, y1 + 2.0 * extra)
        } else {
            (x0, x1, y0 - extra, y1 + extra)
        }
    } else {
        let extra = (h / aspect - w) / 2.0;
        (x0 - extra, x1 + extra, y0, y1)
    }
}
