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
}

fn out_err(path: &Path, e: impl std::fmt::Display) -> Error {
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
        let ext = path
            .extension()
            .map(|e| e.to_string_lossy().to_lowercase())
            .unwrap_or_default();
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
        let scale = if ext == "png" { 2 } else { 1 };
        let plot_w = 760u32;
        let plot_h = (plot_w as f64 * aspect).round() as u32;
        let caption = wrap_lines(&self.caption, 112);
        let caption_h = 22 * caption.len() as u32 + 16;
        let w = plot_w + 90;
        let h = plot_h + 70 + 50 + caption_h;
        if let Some(parent) = path.parent().filter(|p| !p.as_os_str().is_empty()) {
            std::fs::create_dir_all(parent).map_err(|e| out_err(path, e))?;
        }
        match ext.as_str() {
            // Render in memory, then write atomically (temporary file and rename).
            "svg" => {
                let mut text = String::new();
                {
                    let root = SVGBackend::with_string(&mut text, (w, h)).into_drawing_area();
                    self.render(&root, (x0, x1, y0, y1), &caption, caption_h, 1)
                        .map_err(|e| out_err(path, e))?;
                    root.present().map_err(|e| out_err(path, e))?;
                }
                crate::io::write_atomic(path, text.as_bytes()).map_err(|e| out_err(path, e))
            }
            "png" => {
                let (pw, ph) = (w * scale, h * scale);
                let mut rgb = vec![255u8; (pw * ph * 3) as usize];
                {
                    let root = BitMapBackend::with_buffer(&mut rgb, (pw, ph)).into_drawing_area();
                    self.render(&root, (x0, x1, y0, y1), &caption, caption_h * scale, scale)
                        .map_err(|e| out_err(path, e))?;
                    root.present().map_err(|e| out_err(path, e))?;
                }
                let img = image::RgbImage::from_raw(pw, ph, rgb)
                    .ok_or_else(|| out_err(path, "image buffer has the wrong size"))?;
                let mut png = std::io::Cursor::new(Vec::new());
                img.write_to(&mut png, image::ImageOutputFormat::Png)
                    .map_err(|e| out_err(path, e))?;
                crate::io::write_atomic(path, png.get_ref()).map_err(|e| out_err(path, e))
            }
            _ => Err(Error::param(
                "plot",
                path.display(),
                "a file name ending in .svg or .png",
            )),
        }
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
                chart.draw_series(
                    [(1.0, 0.0), (-1.0, 0.0)]
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
fn wrap_lines(lines: &[String], width: usize) -> Vec<String> {
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
