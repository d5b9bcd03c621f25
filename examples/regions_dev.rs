//! Development harness for the region-wise CLE_κ sampler (`sleek::regions`): samples
//! configurations, prints counters, geometry checks and timing, and draws each one.
//!
//! ```text
//! cargo run --release --example regions_dev -- KAPPA MIN_SIZE SEED [SEED…]
//! ```
//! Figures go to `output/dev/regions_KAPPA_MIN_SIZE_SEED.png`.

use sleek::plot_loops::{DrawnLoop, LoopFigure, LoopStyle};
use sleek::regions::{RegionSampler, RegionSettings};
use std::time::Instant;

fn main() {
    if let Err(e) = run() {
        eprintln!("error: {e}");
        std::process::exit(2);
    }
}

fn run() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    if args.len() < 3 {
        return Err("usage: regions_dev KAPPA MIN_SIZE SEED [SEED…]".into());
    }
    let kappa: f64 = args[0].parse()?;
    let eps: f64 = args[1].parse()?;
    let mut settings = RegionSettings::defaults(eps);
    if let Ok(d) = std::env::var("SPACING_DIV") {
        settings.spacing = eps / d.parse::<f64>()?;
    }
    if std::env::var("TILTED").is_ok() {
        settings.tilted = Some(true);
    }
    if let Ok(d) = std::env::var("H_MAX") {
        // (Development: the largest step in radial time.)
        settings.h_max = d.parse::<f64>()?;
    }
    let sampler = RegionSampler::new(kappa, settings)?;
    for s in &args[2..] {
        let seed: u64 = s.parse()?;
        let t = Instant::now();
        let (c, rd) = sampler.sample(seed, 0);
        let secs = t.elapsed().as_secs_f64();
        println!(
            "seed {seed}: {secs:.1} s, {} loops, {} steps, {:?}",
            c.loops.len(),
            c.diagnostics.steps,
            rd
        );
        let mut by_depth = std::collections::BTreeMap::new();
        for l in &c.loops {
            *by_depth.entry(l.depth).or_insert(0) += 1;
        }
        println!(
            "  loops by depth: {by_depth:?}; {} not closed within 3 spacings",
            c.loops.iter().filter(|l| !l.closed).count()
        );
        // Geometry checks (Rohde & Schramm, Ann. Math. 2005; Sheffield & Werner, Ann. Math.
        // 2012): for κ ≤ 4 loops are simple and pairwise disjoint; for κ > 4 they touch.
        let not_simple = c
            .loops
            .iter()
            .filter(|l| !sleek::geometry::is_simple_closed(&l.points))
            .count();
        let mut near = 0;
        let mut crossing = 0;
        for (i, a) in c.loops.iter().enumerate() {
            for b in &c.loops[i + 1..] {
                if sleek::geometry::vertex_distance(&a.points, &b.points, settings.spacing)
                    <= 0.5 * settings.spacing
                {
                    near += 1;
                }
                if sleek::geometry::polylines_cross(&a.points, &b.points) {
                    crossing += 1;
                }
            }
        }
        println!(
            "  checks: {not_simple} of {} loops not simple; {near} pairs within half a spacing; \
             {crossing} pairs crossing",
            c.loops.len()
        );
        let dir = std::path::Path::new("output/dev");
        std::fs::create_dir_all(dir)?;
        let path = dir.join(format!("regions_{kappa}_{eps}_{seed}.png"));
        LoopFigure {
            title: format!("CLE_κ configuration (region-wise, dev), κ = {kappa}"),
            caption: vec![format!(
                "seed {seed}, ε = {eps}, spacing {:.4}; {} loops",
                settings.spacing,
                c.loops.len()
            )],
            loops: c
                .loops
                .iter()
                .map(|l| DrawnLoop {
                    points: l.points.iter().map(|z| (z.re, z.im)).collect(),
                    depth: l.depth,
                    highlighted: false,
                })
                .collect(),
            marked: Vec::new(),
            style: LoopStyle::Outline,
        }
        .draw(&path)?;
        println!("  figure: {}", path.display());
    }
    Ok(())
}
