//! Development check of the region-wise CLE_κ sampler (`sleek::regions`) in law: the
//! outermost loop around each point z of a grid, T = log(1 − |z|²) − log CR(z, U), against the
//! law of Schramm, Sheffield and Wilson (Comm. Math. Phys. 2009), `sleek::laws::CleLaw::cdf`.
//!
//! ```text
//! cargo run --release --example regions_law -- KAPPA MIN_SIZE CONFIGURATIONS [SEED]
//! ```
//! Grid: the 13 points of the square grid of step 1/4 with |z| ≤ 1/2. P(T ≤ t) is estimated
//! for t ≤ log((1 − |z|²)/ε), where no loop around z is lost to the size cut-off (a loop with
//! CR(z, U) ≥ ε has diameter ≥ ε). The points of one configuration are dependent, so the
//! standard error is that of the per-configuration means (configurations are independent).
//! Environment: `H_MAX`, `SPACING_DIV` and `TILTED` change the settings as in `regions_dev`,
//! `GRID` and `STOP_ROOM` set the target grid's spacing and the stop room (absolute), `PX_DIV`
//! the raster pixel of the conformal radius (default spacing/8: at spacing/4 the same 24 κ = 6
//! configurations gave 3 points with T ≤ 1.25 instead of 5, see DEVELOPERS.md); `SHOW_T_BELOW=t` lists the
//! points with T ≤ t (configuration index and point) on stderr; `ONLY=i` samples configuration
//! i alone and `FIGURE=file.png` draws it.

use num_complex::Complex64;
use rayon::prelude::*;
use sleek::laws::CleLaw;
use sleek::plot_loops::{DrawnLoop, LoopFigure, LoopStyle};
use sleek::regions::{outermost_log_cr_at, outermost_loop_at, RegionSampler, RegionSettings};
use std::time::Instant;

/// One configuration: for each t, (points with T ≤ t, points where t is observable); then the
/// regions that stalled and those that ended at a tiny loop around their target.
type Row = (Vec<(u32, u32)>, u32, u32);

fn main() {
    if let Err(e) = run() {
        eprintln!("error: {e}");
        std::process::exit(2);
    }
}

fn run() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    if args.len() < 3 {
        return Err("usage: regions_law KAPPA MIN_SIZE CONFIGURATIONS [SEED]".into());
    }
    let kappa: f64 = args[0].parse()?;
    let eps: f64 = args[1].parse()?;
    let n: u64 = args[2].parse()?;
    let seed: u64 = args.get(3).map(|s| s.parse()).transpose()?.unwrap_or(1);
    let mut settings = RegionSettings::defaults(eps);
    if let Ok(d) = std::env::var("SPACING_DIV") {
        settings.spacing = eps / d.parse::<f64>()?;
    }
    if std::env::var("TILTED").is_ok() {
        settings.tilted = Some(true);
    }
    if let Ok(d) = std::env::var("GRID") {
        settings.grid = d.parse::<f64>()?;
    }
    if let Ok(d) = std::env::var("STOP_ROOM") {
        settings.stop_room = d.parse::<f64>()?;
    }
    if let Ok(d) = std::env::var("H_MAX") {
        settings.h_max = d.parse::<f64>()?;
    }
    let px = settings.spacing
        / std::env::var("PX_DIV")
            .ok()
            .map(|s| s.parse::<f64>())
            .transpose()?
            .unwrap_or(8.0);
    let sampler = RegionSampler::new(kappa, settings)?;
    let law = CleLaw::new(kappa)?;
    let mut grid = Vec::new();
    for i in -2i32..=2 {
        for j in -2i32..=2 {
            let z = Complex64::new(0.25 * i as f64, 0.25 * j as f64);
            if z.norm() <= 0.5 + 1e-12 {
                grid.push(z);
            }
        }
    }
    let ts = [0.25, 0.5, 0.75, 1.0, 1.25, 1.6, 2.0, 2.3, 3.0];
    let t0 = Instant::now();
    // (`ONLY=i` samples configuration i alone, to look at one configuration again.)
    let only: Option<u64> = std::env::var("ONLY").ok().map(|s| s.parse()).transpose()?;
    let indices: Vec<u64> = match only {
        Some(i) => vec![i],
        None => (0..n).collect(),
    };
    let rows: Vec<Row> = indices
        .into_par_iter()
        .map(|i| {
            let (c, rd) = sampler.sample(seed, i);
            let mut counts = vec![(0u32, 0u32); ts.len()];
            for &z in &grid {
                let w = (1.0 - z.norm_sqr()).ln();
                let t_max = w - eps.ln();
                // (A point within a pixel of its loop is moved two pixels: module docs.)
                let t = outermost_log_cr_at(&c, z, px).map(|l| w - l);
                if let (Ok(lim), Some(t)) = (std::env::var("SHOW_T_BELOW"), t) {
                    if t <= lim.parse::<f64>().unwrap_or(0.0) {
                        eprintln!("configuration {i}: T = {t:.3} at {z}");
                    }
                }
                for (k, &tk) in ts.iter().enumerate() {
                    if tk <= t_max {
                        counts[k].1 += 1;
                        if t.is_some_and(|t| t <= tk) {
                            counts[k].0 += 1;
                        }
                    }
                }
            }
            if let (Some(_), Ok(path)) = (only, std::env::var("FIGURE")) {
                // (The configuration, the loops around the grid points drawn thicker.)
                let around: Vec<usize> = grid
                    .iter()
                    .filter_map(|&z| outermost_loop_at(&c, z).map(|l| l.id))
                    .collect();
                let fig = LoopFigure {
                    title: format!(
                        "regions_law: kappa {kappa}, eps {eps}, seed {seed}, configuration {i}"
                    ),
                    caption: vec!["thick: the outermost loop around a grid point".into()],
                    loops: c
                        .loops
                        .iter()
                        .map(|l| DrawnLoop {
                            points: l.points.iter().map(|p| (p.re, p.im)).collect(),
                            depth: l.depth,
                            highlighted: around.contains(&l.id),
                        })
                        .collect(),
                    marked: grid.iter().map(|z| (z.re, z.im)).collect(),
                    style: LoopStyle::Outline,
                };
                if let Err(e) = fig.draw(std::path::Path::new(&path)) {
                    eprintln!("figure: {e}");
                }
            }
            (counts, rd.stalled as u32, rd.tiny_full as u32)
        })
        .collect();
    let secs = t0.elapsed().as_secs_f64();
    let stalled: u32 = rows.iter().map(|r| r.1).sum();
    let tiny: u32 = rows.iter().map(|r| r.2).sum();
    println!(
        "kappa {kappa}, eps {eps}, {n} configurations (seed {seed}), {} grid points, px {px:.4}, \
         {secs:.0} s; regions ended early: {stalled} stalled, {tiny} tiny_full",
        grid.len()
    );
    println!("    t   points T<=t / observable   observed P   s.e.     SSW P    expected   z");
    for (k, &t) in ts.iter().enumerate() {
        let per: Vec<f64> = rows
            .iter()
            .filter(|r| r.0[k].1 > 0)
            .map(|r| r.0[k].0 as f64 / r.0[k].1 as f64)
            .collect();
        if per.len() < 2 {
            continue;
        }
        let hits: u32 = rows.iter().map(|r| r.0[k].0).sum();
        let seen: u32 = rows.iter().map(|r| r.0[k].1).sum();
        let m = per.iter().sum::<f64>() / per.len() as f64;
        let var = per.iter().map(|p| (p - m) * (p - m)).sum::<f64>() / (per.len() - 1) as f64;
        let se = (var / per.len() as f64).sqrt();
        let exact = law.cdf(t);
        // (With few hits the sample s.e. is unreliable; the expected count says more.)
        let z = if se > 0.0 {
            format!("{:+.2}", (m - exact) / se)
        } else {
            "n/a".to_string()
        };
        println!(
            "  {t:.2}   {hits:>5} / {seen:<5}              {m:.4}       {se:.4}   {exact:.4}   {:>7.1}    {z}",
            exact * seen as f64
        );
    }
    Ok(())
}
