//! `sleek measure`: driving functions of users' curves, κ with intervals, loops' radii.

use super::args::{CurveDomainArg, Global, MeasureArgs, StepArg};
use super::common::{check_plot_path, note, progress, resolve_seed, warn, write_file};
use super::Failure;
use num_complex::Complex64;
use sleek::curve::parse_curves;
use sleek::loewner::StepKind;
use sleek::measure_run::{measure_curves_with, Frame, MeasureSettings};
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

/// Largest file read (bytes).
const MAX_FILE: u64 = 512 << 20;

fn read(path: &Path) -> Result<Vec<Vec<Complex64>>, Failure> {
    let meta = std::fs::metadata(path)
        .map_err(|e| Failure::Runtime(format!("cannot read {}: {e}", path.display())))?;
    if meta.len() > MAX_FILE {
        return Err(Failure::Runtime(format!(
            "{}: {} bytes is more than the {} MiB limit for one file",
            path.display(),
            meta.len(),
            MAX_FILE >> 20
        )));
    }
    let text = std::fs::read_to_string(path)
        .map_err(|e| Failure::Runtime(format!("cannot read {}: {e}", path.display())))?;
    parse_curves(&text).map_err(|e| Failure::Runtime(format!("{}: {e}", path.display())))
}

pub fn run(g: &Global, a: &MeasureArgs) -> Result<(), Failure> {
    check_plot_path(a.plot.as_deref())?;
    if a.loops.is_some() {
        return loops(g, a);
    }
    let mut files: Vec<PathBuf> = a.curve.clone();
    if let Some(dir) = &a.curves {
        let mut found: Vec<PathBuf> = std::fs::read_dir(dir)
            .map_err(|e| Failure::Runtime(format!("cannot read {}: {e}", dir.display())))?
            .filter_map(|e| e.ok().map(|e| e.path()))
            .filter(|p| matches!(p.extension().and_then(|e| e.to_str()), Some("csv" | "json")))
            .collect();
        found.sort();
        files.extend(found);
    }
    if files.is_empty() {
        return Err(Failure::Usage(
            "no curves given: use --curve FILE (repeatable) or --curves DIR".into(),
        ));
    }
    if a.bootstrap < 100 || a.bootstrap > 100_000 {
        return Err(Failure::Usage(format!(
            "--bootstrap {} is out of range: an integer in [100, 100000]",
            a.bootstrap
        )));
    }
    let domain = match a.domain {
        CurveDomainArg::HalfPlane | CurveDomainArg::Polygon => None,
        CurveDomainArg::Disk => Some(false),
        CurveDomainArg::DiskRadial => Some(true),
    };
    let slit = match a.slit {
        StepArg::Tilted => StepKind::Tilted,
        StepArg::Vertical => StepKind::Vertical,
    };
    let mut inputs = Vec::new();
    for f in &files {
        for (k, c) in read(f)?.into_iter().enumerate() {
            inputs.push((format!("{}#{k}", f.display()), c));
        }
    }
    let seed = resolve_seed(g);
    let started = std::time::Instant::now();
    let settings = MeasureSettings {
        frame: match a.domain {
            CurveDomainArg::HalfPlane => Frame::HalfPlane,
            CurveDomainArg::Disk => Frame::Disk(a.target_angle),
            CurveDomainArg::DiskRadial => Frame::DiskRadial(a.target.unwrap_or((0.0, 0.0))),
            CurveDomainArg::Polygon => {
                let path = a.polygon.as_ref().ok_or_else(|| {
                    Failure::Usage("--domain polygon needs --polygon FILE (vertices x,y)".into())
                })?;
                let poly = read(path)?;
                let vertices = poly
                    .into_iter()
                    .next()
                    .unwrap_or_default()
                    .into_iter()
                    .map(|z| (z.re, z.im))
                    .collect();
                Frame::Polygon {
                    vertices,
                    target: a.target,
                }
            }
        },
        slit,
        boundary_tolerance: a.boundary_tolerance,
        max_points: usize::try_from(a.max_points).unwrap_or(usize::MAX),
        max_distortion: a.max_distortion,
        min_lag: a.min_lag,
        bootstrap: a.bootstrap as usize,
        level: a.level,
        seed,
    };
    let pb = progress(g, inputs.len() as u64, "unzipping");
    let report = measure_curves_with(&inputs, &settings, &|| pb.inc(1));
    pb.finish_and_clear();
    let report = report?;
    let unzip_seconds = started.elapsed().as_secs_f64();
    let longest = inputs.iter().map(|(_, p)| p.len()).max().unwrap_or(0);
    if longest as u64 > a.max_points {
        note(g, &format!("curves longer than --max-points {} were thinned (every k-th point kept; longest had {longest} points)", a.max_points));
    }
    // Per-curve findings: crossings are warnings (the first few named), the rest one line of
    // totals each; the JSON record has every curve's numbers.
    let crossings: Vec<&_> = report
        .curves
        .iter()
        .filter(|m| m.preparation.crossing.is_some())
        .collect();
    for m in crossings.iter().take(5) {
        if let Some((i, j, x, y)) = m.preparation.crossing {
            warn(&format!(
                "{}: the curve crosses itself (segments {i} and {j}, near ({x:.6}, {y:.6})); the unzip treats what follows as seen from the crossing",
                m.name
            ));
        }
    }
    if crossings.len() > 5 {
        warn(&format!(
            "{} more curves cross themselves (see --json)",
            crossings.len() - 5
        ));
    }
    let n = report.curves.len();
    let moved = report
        .curves
        .iter()
        .filter(|m| m.preparation.start_shift != 0.0 || m.preparation.start_gap > 0.0)
        .count();
    if domain.is_none() && moved > 0 {
        let m = report
            .curves
            .iter()
            .find(|m| m.preparation.start_shift != 0.0 || m.preparation.start_gap > 0.0);
        if let Some(m) = m {
            note(g, &format!(
                "{moved} of {n} curves started off the real line and were moved onto it (e.g. {}: shifted by {:.6e}, was {:.3e} above; see --json)",
                m.name, -m.preparation.start_shift, m.preparation.start_gap
            ));
        }
    }
    let dups: usize = report
        .curves
        .iter()
        .map(|m| m.preparation.duplicates_dropped)
        .sum();
    let trimmed: usize = report.curves.iter().map(|m| m.preparation.trimmed).sum();
    let skipped: usize = report.curves.iter().map(|m| m.unzip.skipped.len()).sum();
    if dups + trimmed + skipped > 0 {
        note(g, &format!(
            "{n} curves: {dups} repeated points dropped, {trimmed} points outside the domain at the ends trimmed, {skipped} points on the boundary or on the curve already removed skipped (per curve: --json)"
        ));
    }
    let data = report.driving_data();
    let kappa = &report.kappa;
    let lp = &report.left_passage;
    let step = report.mean_step;
    let h = report.median_segment;
    let measured = &report.curves;
    if let Some(p) = &a.export_csv {
        let mut s = String::from("curve,t,w\n");
        for (k, m) in measured.iter().enumerate() {
            for (t, w) in m.unzip.times.iter().zip(&m.unzip.driving) {
                if !(t.is_finite() && w.is_finite()) {
                    return Err(Failure::Runtime(format!(
                        "curve {k}: the recovered driving function is not finite at t = {t} \
                         (W = {w}); nothing written to {}",
                        p.display()
                    )));
                }
                let _ = writeln!(s, "{k},{t:e},{w:e}");
            }
        }
        write_file(p, s.as_bytes())?;
    }
    if let Some(p) = &a.plot {
        sleek::plot_measure::draw(p, &data, kappa, a.domain == CurveDomainArg::DiskRadial)?;
    }
    let curves_json: Vec<serde_json::Value> = measured
        .iter()
        .map(|m| {
            serde_json::json!({
                "file": m.name, "preparation": m.preparation, "stride": m.stride, "median_segment": m.spacing, "steps": m.unzip.steps(),
                "skipped": m.unzip.skipped.len(), "final_time": m.unzip.final_time(),
            })
        })
        .collect();
    let clock = if domain == Some(true) {
        "radial time"
    } else {
        "capacity time"
    };
    if g.json {
        super::common::warn_non_finite(&report, "measure summary");
        let rec = serde_json::json!({
            "schema": 1, "version": env!("CARGO_PKG_VERSION"), "seed": seed,
            "domain": match a.domain { CurveDomainArg::HalfPlane => "half-plane", CurveDomainArg::Disk => "disk", CurveDomainArg::DiskRadial => "disk-radial", CurveDomainArg::Polygon => "polygon" }, "slit": slit.name(), "clock": clock,
            "kappa": {"estimate": kappa.estimate, "ci": kappa.ci, "level": kappa.level, "method": kappa.method},
            "left_passage": lp,
            "curves": curves_json,
            "diagnostics": {"mean_step_time": step, "median_segment": h, "lags": kappa.lags, "normality": kappa.normality,
                "bootstrap": kappa.bootstrap, "block": kappa.block, "warnings": kappa.warnings},
            "seconds_unzip": unzip_seconds,
        });
        println!("{}", super::common::to_json(&rec, "measure summary")?);
        return Ok(());
    }
    let total_points: usize = measured.iter().map(|m| m.unzip.steps()).sum();
    println!(
        "curves           {} ({} steps unzipped with {} slits in {:.2} s; {clock})",
        measured.len(),
        total_points,
        slit.name(),
        unzip_seconds
    );
    println!(
        "resolution       median segment {:.3e} (unzipping frame{}), {:.3e} Loewner time per step; lags {:.3e} to {:.3e} (×2)",
        h,
        if domain == Some(true) { ", at the last time used" } else { "" },
        step,
        kappa.lags.first().map(|r| r.lag).unwrap_or(0.0),
        kappa.lags.last().map(|r| r.lag).unwrap_or(0.0)
    );
    println!(
        "κ (quadratic variation)  {:.3}   {:.0}% CI [{:.3}, {:.3}]   (blocked bootstrap, {} replicates, blocks of {:.3e})",
        kappa.estimate, 100.0 * kappa.level, kappa.ci[0], kappa.ci[1], kappa.bootstrap, kappa.block
    );
    if let Some(lp) = &lp {
        println!(
            "κ (left passage)         {:.2}   {:.0}% CI [{:.2}, {:.2}]   (Schramm's formula, {} curves)",
            lp.estimate, 100.0 * lp.level, lp.ci[0], lp.ci[1], lp.curves
        );
    }
    println!();
    println!(
        "{:>11} {:>9} {:>8} {:>8} {:>8} {:>8} {:>8} {:>8}",
        "lag", "n", "κ(lag)", "± s.e.", "drift z", "autocorr", "skew", "ex.kurt"
    );
    for r in &kappa.lags {
        println!(
            "{:>11.3e} {:>9} {:>8.3} {:>8.3} {:>8.2} {:>8.3} {:>8.3} {:>8.3}",
            r.lag,
            r.increments,
            r.kappa,
            r.std_error,
            r.drift_z,
            r.autocorrelation,
            r.skewness,
            r.excess_kurtosis
        );
    }
    println!(
        "normality at lag {:.3e}: KS distance {:.4} to N(0,1), p = {:.3} (conservative: κ estimated from the same data)",
        kappa.normality.lag, kappa.normality.ks_statistic, kappa.normality.ks_p_value
    );
    println!("standard errors: autocorrelation 1/√n, skewness √(6/n), excess kurtosis √(24/n); κ(lag) drifting with the lag shows lattice effects");
    for w in kappa
        .warnings
        .iter()
        .chain(lp.iter().flat_map(|l| l.warnings.iter()))
    {
        warn(w);
    }
    Ok(())
}

fn loops(g: &Global, a: &MeasureArgs) -> Result<(), Failure> {
    let path = a
        .loops
        .as_ref()
        .ok_or_else(|| Failure::Usage("--loops needs a file".into()))?;
    let (x, y) =
        a.at.ok_or_else(|| Failure::Usage("--loops needs --at X,Y".into()))?;
    let loops = read(path)?;
    let z0 = Complex64::new(x, y);
    let started = std::time::Instant::now();
    let found = sleek::polygon::surrounding_loops(&loops, z0, 1)?;
    let secs = started.elapsed().as_secs_f64();
    if g.json {
        let rec = serde_json::json!({"schema": 1, "version": env!("CARGO_PKG_VERSION"), "at": [x, y],
            "loops_read": loops.len(), "surrounding": found, "seconds": secs});
        println!("{}", super::common::to_json(&rec, "measure summary")?);
        return Ok(());
    }
    println!(
        "{} loops read from {}; {} surround ({x}, {y})",
        loops.len(),
        path.display(),
        found.len()
    );
    println!(
        "{:>6} {:>8} {:>14} {:>10} {:>12} {:>8}",
        "depth", "loop", "CR", "± est.", "−log CR", "crowded"
    );
    for l in &found {
        println!(
            "{:>6} {:>8} {:>14.8} {:>10.1e} {:>12.6} {:>8}",
            l.depth,
            l.loop_index,
            l.conformal_radius.value,
            l.conformal_radius.error_estimate,
            -l.conformal_radius.value.ln(),
            l.conformal_radius.crowded
        );
    }
    note(g, &format!("zipper conformal radii, error estimates from one and two subdivisions per edge ({secs:.2} s)"));
    Ok(())
}
