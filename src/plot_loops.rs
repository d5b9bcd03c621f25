//! The figure of a CLE configuration: loops in the unit disk coloured by nesting depth, with a
//! legend, the unit circle, marked points and the loops that surround them, and a caption with
//! κ, the seed, ε and the resolution. Used so far only to look at the experimental samples of
//! [`crate::loops`]; no command draws it yet.

use crate::error::Result;
use crate::plot::{extension, wrap_lines, write_figure, Render};
use plotters::coord::Shift;
use plotters::prelude::*;
use std::path::Path;

/// How loops are drawn.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LoopStyle {
    /// Outlines only.
    Outline,
    /// Interiors filled with a light tint of the depth's colour (deeper loops on top), outlines
    /// drawn over them.
    Filled,
}

/// One loop to draw.
#[derive(Debug, Clone)]
pub struct DrawnLoop {
    /// The closed polyline (first point not repeated).
    pub points: Vec<(f64, f64)>,
    /// Nesting depth (1 = outermost).
    pub depth: u32,
    /// Whether it surrounds a marked point (drawn thicker).
    pub highlighted: bool,
}

/// A figure of loops in the unit disk.
#[derive(Debug, Clone)]
pub struct LoopFigure {
    /// Title above the disk.
    pub title: String,
    /// Caption lines below.
    pub caption: Vec<String>,
    /// The loops.
    pub loops: Vec<DrawnLoop>,
    /// Marked points (drawn as small crosses).
    pub marked: Vec<(f64, f64)>,
    /// Outline or filled interiors.
    pub style: LoopStyle,
}

/// Colours of depths 1, 2, 3, …: a dark-to-light sequence of our own, legible on white; depth
/// `d > 6` reuses the last colour.
const DEPTH_COLOURS: [RGBColor; 6] = [
    RGBColor(20, 40, 110),
    RGBColor(170, 40, 60),
    RGBColor(20, 120, 90),
    RGBColor(200, 120, 10),
    RGBColor(110, 60, 160),
    RGBColor(90, 150, 200),
];

fn depth_colour(d: u32) -> RGBColor {
    DEPTH_COLOURS[(d.max(1) as usize - 1).min(DEPTH_COLOURS.len() - 1)]
}

impl LoopFigure {
    /// Draw to `path` (`.svg` or `.png`).
    ///
    /// Errors: [`crate::Error::InvalidParameter`] for another extension,
    /// [`crate::Error::Output`] if the file cannot be written.
    pub fn draw(&self, path: &Path) -> Result<()> {
        let ext = extension(path)?;
        let caption = wrap_lines(&self.caption, 100);
        let caption_h = 22 * caption.len() as u32 + 16;
        let side = 760u32;
        let job = LoopJob {
            fig: self,
            caption: &caption,
            caption_h,
        };
        write_figure(path, &ext, (side + 40, side + 60 + caption_h), &job)
    }
}

struct LoopJob<'a> {
    fig: &'a LoopFigure,
    caption: &'a [String],
    caption_h: u32,
}

impl Render for LoopJob<'_> {
    fn render<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
        s: u32,
    ) -> std::result::Result<(), Box<dyn std::error::Error + 'static>>
    where
        DB::ErrorType: 'static,
    {
        let fig = self.fig;
        root.fill(&WHITE)?;
        let (_, total_h) = root.dim_in_pixel();
        let (upper, lower) = root.split_vertically(total_h - self.caption_h * s);
        let font = |px: u32| ("sans-serif", (px * s) as f64).into_font();
        let (w, h) = upper.dim_in_pixel();
        // A square plotting area: the disk keeps its shape.
        let title_h = 40 * s;
        let side = (w.min(h - title_h)) as i32 - (20 * s) as i32;
        let x_off = (w as i32 - side) / 2;
        upper.draw_text(
            &fig.title,
            &font(20).color(&BLACK),
            (x_off, (10 * s) as i32),
        )?;
        let area = upper.margin(title_h, 0, x_off as u32, x_off as u32);
        let mut chart =
            ChartBuilder::on(&area).build_cartesian_2d(-1.02f64..1.02f64, -1.02f64..1.02f64)?;
        let mut order: Vec<&DrawnLoop> = fig.loops.iter().collect();
        order.sort_by_key(|l| l.depth);
        if fig.style == LoopStyle::Filled {
            for l in &order {
                let c = depth_colour(l.depth);
                let tint = RGBColor(
                    (255.0 - 0.35 * (255.0 - c.0 as f64)) as u8,
                    (255.0 - 0.35 * (255.0 - c.1 as f64)) as u8,
                    (255.0 - 0.35 * (255.0 - c.2 as f64)) as u8,
                );
                chart.draw_series(std::iter::once(Polygon::new(
                    l.points.clone(),
                    tint.filled(),
                )))?;
            }
        }
        for l in &order {
            let c = depth_colour(l.depth);
            let width = if l.highlighted { 3 * s } else { s };
            // Segment by segment: a polyline's mitred joins turn the sharp reversals of a
            // fractal curve into long spikes.
            let n = l.points.len();
            let style = ShapeStyle::from(&c).stroke_width(width);
            chart.draw_series(
                (0..n).map(|k| PathElement::new(vec![l.points[k], l.points[(k + 1) % n]], style)),
            )?;
        }
        let circle: Vec<(f64, f64)> = (0..=720)
            .map(|k| {
                let a = k as f64 * std::f64::consts::PI / 360.0;
                (a.cos(), a.sin())
            })
            .collect();
        chart.draw_series(LineSeries::new(
            circle,
            ShapeStyle::from(&BLACK).stroke_width(2 * s),
        ))?;
        for &(x, y) in &fig.marked {
            let d = 0.025;
            let style = ShapeStyle::from(&BLACK).stroke_width(2 * s);
            chart.draw_series(LineSeries::new([(x - d, y - d), (x + d, y + d)], style))?;
            chart.draw_series(LineSeries::new([(x - d, y + d), (x + d, y - d)], style))?;
        }
        // Legend: one swatch per depth present.
        let max_depth = fig.loops.iter().map(|l| l.depth).max().unwrap_or(0);
        for d in 1..=max_depth {
            let n = fig.loops.iter().filter(|l| l.depth == d).count();
            let y = (title_h as i32) + ((8 + 20 * (d as i32 - 1)) * s as i32);
            let x = (6 * s) as i32;
            upper.draw(&Rectangle::new(
                [(x, y), (x + (14 * s) as i32, y + (12 * s) as i32)],
                depth_colour(d).filled(),
            ))?;
            upper.draw_text(
                &format!("depth {d} ({n})"),
                &font(13).color(&BLACK),
                (x + (18 * s) as i32, y - s as i32),
            )?;
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
