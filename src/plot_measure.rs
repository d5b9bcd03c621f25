//! The figure of `sleek measure`: recovered driving functions, standardised increments against
//! the Gaussian, and κ against the lag with bootstrap error bars and the interval.

use crate::error::Result;
use crate::measure::{DrivingData, KappaEstimate};
use crate::plot::{extension, write_figure, Render, PALETTE};
use plotters::coord::Shift;
use plotters::prelude::*;
use std::path::Path;

struct Job<'a> {
    data: &'a [DrivingData<'a>],
    kappa: &'a KappaEstimate,
    radial: bool,
}

type Res = std::result::Result<(), Box<dyn std::error::Error + 'static>>;

impl Render for Job<'_> {
    fn render<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>, s: u32) -> Res
    where
        DB::ErrorType: 'static,
    {
        let f = |px: u32| px * s;
        root.fill(&WHITE)?;
        let (top, bottom) = root.split_vertically(f(430));
        let panels = top.split_evenly((1, 3));
        let k = self.kappa;
        let font = ("sans-serif", f(15)).into_font();
        // Panel 1: driving functions.
        {
            let (mut t1, mut w0, mut w1) = (0.0f64, f64::MAX, f64::MIN);
            for d in self.data.iter().take(8) {
                t1 = t1.max(*d.times.last().unwrap_or(&0.0));
                for &w in d.values {
                    w0 = w0.min(w);
                    w1 = w1.max(w);
                }
            }
            if w0 >= w1 {
                (w0, w1) = (-1.0, 1.0);
            }
            let mut ch = ChartBuilder::on(&panels[0])
                .caption("driving functions (first 8)", font.clone())
                .margin(f(10))
                .x_label_area_size(f(40))
                .y_label_area_size(f(55))
                .build_cartesian_2d(0.0..t1.max(1e-12), w0..w1)?;
            ch.configure_mesh()
                .x_desc(if self.radial {
                    "radial time t"
                } else {
                    "capacity time t"
                })
                .y_desc(if self.radial { "ξ_t" } else { "W_t" })
                .label_style(("sans-serif", f(12)))
                .draw()?;
            for (i, d) in self.data.iter().take(8).enumerate() {
                let c = PALETTE[i % PALETTE.len()];
                ch.draw_series(LineSeries::new(
                    d.times.iter().cloned().zip(d.values.iter().cloned()),
                    c.stroke_width(s),
                ))?;
            }
        }
        // Panel 2: histogram of standardised increments at the middle lag, against N(0, 1).
        {
            let lag = k.normality.lag;
            let sd = (k.estimate * lag).sqrt();
            let mut z = Vec::new();
            for d in self.data {
                let tmax = *d.times.last().unwrap_or(&0.0);
                let n = ((tmax / lag).floor() as usize).min(200_000);
                let at = |t: f64| {
                    let i = d
                        .times
                        .partition_point(|&x| x < t)
                        .clamp(1, d.times.len() - 1);
                    let (ta, tb) = (d.times[i - 1], d.times[i]);
                    let (wa, wb) = (d.values[i - 1], d.values[i]);
                    wa + (wb - wa) * ((t - ta) / (tb - ta).max(1e-300)).clamp(0.0, 1.0)
                };
                for j in 0..n {
                    z.push((at((j + 1) as f64 * lag) - at(j as f64 * lag)) / sd);
                }
            }
            let bins = 30;
            let (lo, hi) = (-4.0, 4.0);
            let width = (hi - lo) / bins as f64;
            let mut counts = vec![0.0; bins];
            for &v in &z {
                let b = ((v - lo) / width).floor();
                if b >= 0.0 && (b as usize) < bins {
                    counts[b as usize] += 1.0;
                }
            }
            let norm = z.len().max(1) as f64 * width;
            let mut ch = ChartBuilder::on(&panels[1])
                .caption(
                    format!("increments at lag {lag:.2e} (n = {})", z.len()),
                    font.clone(),
                )
                .margin(f(10))
                .x_label_area_size(f(40))
                .y_label_area_size(f(55))
                .build_cartesian_2d(lo..hi, 0.0..0.5)?;
            ch.configure_mesh()
                .x_desc("ΔW / √(κ s)")
                .y_desc("density")
                .label_style(("sans-serif", f(12)))
                .draw()?;
            ch.draw_series(counts.iter().enumerate().map(|(i, &c)| {
                let x0 = lo + i as f64 * width;
                Rectangle::new(
                    [(x0, 0.0), (x0 + width, (c / norm).min(0.5))],
                    PALETTE[6].mix(0.6).filled(),
                )
            }))?;
            ch.draw_series(LineSeries::new(
                (0..=200).map(|i| {
                    let x = lo + (hi - lo) * i as f64 / 200.0;
                    (
                        x,
                        (-0.5 * x * x).exp() / (2.0 * std::f64::consts::PI).sqrt(),
                    )
                }),
                BLACK.stroke_width(2 * s),
            ))?
            .label("N(0, 1)")
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], BLACK));
            ch.configure_series_labels()
                .border_style(BLACK)
                .label_font(("sans-serif", f(12)))
                .draw()?;
        }
        // Panel 3: κ against the lag.
        {
            let rows = &k.lags;
            let l0 = rows.first().map(|r| r.lag).unwrap_or(1e-6) / 1.5;
            let l1 = rows.last().map(|r| r.lag).unwrap_or(1.0) * 1.5;
            let mut y0 = k.ci[0];
            let mut y1 = k.ci[1];
            for r in rows {
                y0 = y0.min(r.kappa - 2.0 * r.std_error);
                y1 = y1.max(r.kappa + 2.0 * r.std_error);
            }
            let pad = 0.1 * (y1 - y0).max(0.1);
            let mut ch = ChartBuilder::on(&panels[2])
                .caption("κ estimate against the lag (±2 s.e.)", font.clone())
                .margin(f(10))
                .x_label_area_size(f(40))
                .y_label_area_size(f(55))
                .build_cartesian_2d((l0..l1).log_scale(), (y0 - pad)..(y1 + pad))?;
            ch.configure_mesh()
                .x_desc("lag s")
                .y_desc("κ(s)")
                .x_labels(4)
                .x_label_formatter(&|v| format!("{v:.0e}"))
                .label_style(("sans-serif", f(12)))
                .draw()?;
            ch.draw_series(std::iter::once(Rectangle::new(
                [(l0, k.ci[0]), (l1, k.ci[1])],
                PALETTE[0].mix(0.15).filled(),
            )))?
            .label(format!(
                "estimate {:.3}, {:.0}% CI",
                k.estimate,
                100.0 * k.level
            ))
            .legend(move |(x, y)| {
                Rectangle::new([(x, y - 5), (x + 20, y + 5)], PALETTE[0].mix(0.3).filled())
            });
            for r in rows {
                ch.draw_series(std::iter::once(PathElement::new(
                    vec![
                        (r.lag, r.kappa - 2.0 * r.std_error),
                        (r.lag, r.kappa + 2.0 * r.std_error),
                    ],
                    PALETTE[1].stroke_width(s),
                )))?;
            }
            ch.draw_series(
                rows.iter()
                    .map(|r| Circle::new((r.lag, r.kappa), 3 * s, PALETTE[1].filled())),
            )?;
            ch.configure_series_labels()
                .position(SeriesLabelPosition::UpperLeft)
                .background_style(WHITE.mix(0.8))
                .border_style(BLACK)
                .label_font(("sans-serif", f(12)))
                .draw()?;
        }
        let lines = [
            format!(
                "κ = {:.3}, {:.0}% CI [{:.3}, {:.3}]: quadratic variation of the recovered driving function, blocked bootstrap ({} replicates, blocks of {:.2e}), {} curves.",
                k.estimate, 100.0 * k.level, k.ci[0], k.ci[1], k.bootstrap, k.block, k.curves
            ),
            format!(
                "Normality at lag {:.2e}: KS distance {:.4}, p = {:.3} (conservative). A trend of κ(s) with the lag shows lattice or discretisation effects.",
                k.normality.lag, k.normality.ks_statistic, k.normality.ks_p_value
            ),
        ];
        for (i, l) in lines.iter().enumerate() {
            bottom.draw(&Text::new(
                l.clone(),
                (f(16) as i32, f(8 + 22 * i as u32) as i32),
                ("sans-serif", f(13)).into_font(),
            ))?;
        }
        Ok(())
    }
}

/// Draw the measurement figure to `path` (.svg or .png).
///
/// # Errors
/// An unknown extension or a failure to write the file.
pub fn draw(path: &Path, data: &[DrivingData], kappa: &KappaEstimate, radial: bool) -> Result<()> {
    let ext = extension(path)?;
    write_figure(
        path,
        &ext,
        (1500, 490),
        &Job {
            data,
            kappa,
            radial,
        },
    )
}
