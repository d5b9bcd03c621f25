//! `sleek measure`: driving functions of users' curves, κ with intervals, loops' radii.

use super::args::{CurveDomainArg, Global, MeasureArgs, StepArg};
use super::common::{check_plot_path, note, resolve_seed, warn, write_file};
use super::Failure;
use num_complex::Complex64;
use rayon::prelude::*;
use sleek::curve::{parse_curves, prepare_with, CurveDomain, PreparedCurve};
use sleek::loewner::{Method, StepKind};
use sleek::measure::{
    default_lags, estimate_kappa, left_passage_angles, left_passage_kappa, median_step,
    DrivingData, KappaSettings,
};
use sleek::unzip::{unzip_radial, ChordalUnzip, Unzipped};
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

struct Measured {
    file: String,
    prepared: PreparedCurve,
    unzip: Unzipped,
    sides: Vec<(f64, bool)>,
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
        CurveDomainArg::HalfPlane => None,
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
    let measured: Vec<Result<Measured, Failure>> = inputs
        .par_iter()
        .map(|(name, pts)| {
            let dom = match domain {
                None => CurveDomain::HalfPlane,
                Some(false) => CurveDomain::Disk {
                    target: a
                        .target_angle
                        .unwrap_or_else(|| pts.last().map(|z| z.arg()).unwrap_or(0.0)),
                },
                Some(true) => CurveDomain::DiskRadial {
                    target: a.target.unwrap_or((0.0, 0.0)),
                },
            };
            let stride = pts.len().div_ceil(a.max_points.max(2) as usize).max(1);
            let thinned: Vec<Complex64> = if stride > 1 {
                let mut v: Vec<Complex64> = pts.iter().step_by(stride).cloned().collect();
                if (pts.len() - 1) % stride != 0 {
                    v.push(pts[pts.len() - 1]);
                }
                v
            } else {
                pts.clone()
            };
            let pts = &thinned;
            let prepared = prepare_with(pts, dom, a.boundary_tolerance)
                .map_err(|e| Failure::Runtime(format!("{name}: {e}")))?;
            let (unzip, sides) = if domain == Some(true) {
                let u = unzip_radial(&prepared.points, slit)
                    .map_err(|e| Failure::Runtime(format!("{name}: {e}")))?;
                (u, Vec::new())
            } else {
                let u = ChordalUnzip::new(&prepared.points, slit, Method::Fast)
                    .map_err(|e| Failure::Runtime(format!("{name}: {e}")))?;
                // Left passage at points r·e^{iφ}: fixed radii for disk curves (mapped so the
                // centre has modulus 1), radii relative to the curve's extent in H.
                let radii: Vec<f64> = if domain.is_some() {
                    vec![0.25, 0.5, 1.0, 2.0, 4.0]
                } else {
                    let l = prepared.points.iter().map(|z| z.norm()).fold(0.0, f64::max);
                    [1.0 / 64.0, 1.0 / 32.0, 1.0 / 16.0, 1.0 / 8.0]
                        .iter()
                        .map(|f| f * l)
                        .collect()
                };
                let mut sides = Vec::new();
                for &phi in &left_passage_angles() {
                    for &r in &radii {
                        sides.push((phi, u.passes_left_of(Complex64::from_polar(r, phi))));
                    }
                }
                (u.result, sides)
            };
            Ok(Measured {
                file: name.clone(),
                prepared,
                unzip,
                sides,
            })
        })
        .collect();
    let measured: Vec<Measured> = measured.into_iter().collect::<Result<_, _>>()?;
    let longest = inputs.iter().map(|(_, p)| p.len()).max().unwrap_or(0);
    if longest as u64 > a.max_points {
        note(g, &format!("curves longer than --max-points {} were thinned (every k-th point kept; longest had {longest} points)", a.max_points));
    }
    let unzip_seconds = started.elapsed().as_secs_f64();
    for m in &measured {
        if let Some((i, j, x, y)) = m.prepared.crossing {
            warn(&format!(
                "{}: the curve crosses itself (segments {i} and {j}, near ({x:.6}, {y:.6})); the unzip treats what follows as seen from the crossing",
                m.file
            ));
        }
        if !m.unzip.skipped.is_empty() {
            note(g, &format!(
                "{}: {} points were on the boundary or on the curve already removed and were skipped (first: input point {})",
                m.file, m.unzip.skipped.len(), m.prepared.input_index.get(m.unzip.skipped[0]).copied().unwrap_or(0)
            ));
        }
    }
    let data: Vec<DrivingData> = measured
        .iter()
        .map(|m| DrivingData {
            times: &m.unzip.times,
            values: &m.unzip.driving,
        })
        .collect();
    let step = median_step(&data);
    let min_lag = a.min_lag.unwrap_or(10.0 * step);
    let lags = default_lags(&data, min_lag);
    let settings = KappaSettings {
        lags,
        bootstrap: a.bootstrap as usize,
        level: a.level,
        seed,
    };
    let kappa = estimate_kappa(&data, &settings)?;
    let chordal_sides: Vec<Vec<(f64, bool)>> = measured
        .iter()
        .filter(|m| !m.sides.is_empty())
        .map(|m| m.sides.clone())
        .collect();
    let lp = if chordal_sides.len() >= 2 {
        Some(left_passage_kappa(
            &chordal_sides,
            a.bootstrap as usize,
            a.level,
            seed,
        )?)
    } else {
        None
    };
    if let Some(p) = &a.export_csv {
        let mut s = String::from("curve,t,w\n");
        for (k, m) in measured.iter().enumerate() {
            for (t, w) in m.unzip.times.iter().zip(&m.unzip.driving) {
                let _ = writeln!(s, "{k},{t:e},{w:e}");
            }
        }
        write_file(p, s.as_bytes())?;
    }
    if let Some(p) = &a.plot {
        sleek::plot_measure::draw(p, &data, &kappa, a.domain == CurveDomainArg::DiskRadial)?;
    }
    let curves_json: Vec<serde_json::Value> = measured
        .iter()
        .map(|m| {
            serde_json::json!({
                "file": m.file, "preparation": m.prepared, "steps": m.unzip.steps(),
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
        let rec = serde_json::json!({
            "schema": 1, "version": env!("CARGO_PKG_VERSION"), "seed": seed,
            "domain": format!("{:?}", a.domain), "slit": slit.name(), "clock": clock,
            "kappa": {"estimate": kappa.estimate, "ci": kappa.ci, "level": kappa.level, "method": kappa.method},
            "left_passage": lp,
            "curves": curves_json,
            "diagnostics": {"median_step_time": step, "lags": kappa.lags, "normality": kappa.normality,
                "bootstrap": kappa.bootstrap, "block": kappa.block, "warnings": kappa.warnings},
            "seconds_unzip": unzip_seconds,
        });
        println!("{}", serde_json::to_string_pretty(&rec).unwrap_or_default());
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
        "lattice scale    median step {:.3e}; lags from {:.3e} to {:.3e} (×2)",
        step,
        settings.lags.first().unwrap_or(&0.0),
        settings.lags.last().unwrap_or(&0.0)
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
        println!("{}", serde_json::to_string_pretty(&rec).unwrap_or_default());
        return Ok(());
    }
    println!(
        "{} loops read from {}; {} surround ({x}, {y})",
        loops.len(),
        path.display(),
        found.len()
    );
    println!(
        "{:>6} {:>8} {:>14} {:>10} {:>12}",
        "depth", "loop", "CR", "± est.", "−log CR"
    );
    for l in &found {
        println!(
            "{:>6} {:>8} {:>14.8} {:>10.1e} {:>12.6}",
            l.depth,
            l.loop_index,
            l.conformal_radius.value,
            l.conformal_radius.error_estimate,
            -l.conformal_radius.value.ln()
        );
    }
    note(g, &format!("zipper conformal radii, error estimates from one and two subdivisions per edge ({secs:.2} s)"));
    Ok(())
}
