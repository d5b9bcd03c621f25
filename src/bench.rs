//! Benchmark of the trace methods: direct O(N²) composition against the block tree, in one run
//! on the same machine (wall-clock times, all threads of the current rayon pool).

use crate::driving::BrownianPath;
use crate::error::Result;
use crate::loewner::{ChordalChain, Method, StepKind};
use crate::stats::log_log_slope;
use num_complex::Complex64;
use serde::Serialize;
use std::time::Instant;

/// What to measure.
#[derive(Debug, Clone, Serialize)]
pub struct BenchSettings {
    /// Curve sizes for both methods.
    pub common: Vec<usize>,
    /// Larger sizes for the fast method only.
    pub fast_only: Vec<usize>,
    /// κ values for the agreement check.
    pub kappas: Vec<f64>,
    /// Size used for the agreement check at every κ.
    pub agreement_n: usize,
    /// Seed of the driving functions.
    pub seed: u64,
}

impl Default for BenchSettings {
    fn default() -> Self {
        BenchSettings {
            common: vec![1_000, 3_000, 10_000, 30_000],
            fast_only: vec![100_000, 300_000, 1_000_000],
            kappas: vec![1.0, 4.0, 6.0, 8.0],
            agreement_n: 10_000,
            seed: 1,
        }
    }
}

/// One timing.
#[derive(Debug, Clone, Serialize)]
pub struct Timing {
    /// Steps N (the trace has N + 1 points).
    pub n: usize,
    /// `direct` or `fast`.
    pub method: &'static str,
    /// Wall-clock seconds for all N + 1 trace points (the fast time includes building the tree).
    pub seconds: f64,
    /// Peak resident memory of the process so far, in MiB (Linux; absent elsewhere).
    pub peak_mib: Option<f64>,
}

/// One agreement measurement.
#[derive(Debug, Clone, Serialize)]
pub struct Agreement {
    /// κ of the sampled curve.
    pub kappa: f64,
    /// Steps N.
    pub n: usize,
    /// max_k |γ_fast(t_k) − γ_direct(t_k)| divided by the curve's diameter.
    pub max_deviation_rel: f64,
}

/// Everything a benchmark run measured.
#[derive(Debug, Clone, Serialize)]
pub struct BenchReport {
    /// The settings.
    pub settings: BenchSettings,
    /// Threads used.
    pub threads: usize,
    /// All timings.
    pub timings: Vec<Timing>,
    /// Fitted exponent of the direct method's time against N.
    pub direct_exponent: f64,
    /// Fitted exponent of the fast method's time against N, over N ≥ 10⁴.
    pub fast_exponent: f64,
    /// Speed-up `direct / fast` at each common N.
    pub speedups: Vec<(usize, f64)>,
    /// Speed-up at N = 10⁵ with the direct time extrapolated from its fit (`a N^b` over the
    /// measured sizes), since running it there is slow.
    pub speedup_1e5_extrapolated: Option<f64>,
    /// Fast-vs-direct agreement per κ.
    pub agreement: Vec<Agreement>,
}

/// Peak resident set size of this process (VmHWM), in MiB, where /proc is available.
pub fn peak_memory_mib() -> Option<f64> {
    let s = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = s.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kb: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb / 1024.0)
}

fn chain(kappa: f64, n: usize, seed: u64) -> Result<ChordalChain> {
    let p = BrownianPath::uniform(kappa, 1.0, n, seed, 0)?;
    Ok(ChordalChain::new(p.driving(), StepKind::Tilted))
}

/// A curve to time: `(κ, N, seed, method)` → the trace points; only the evaluation of the
/// trace is timed, not the sampling of the driving function.
pub type TraceJob<'a> = &'a dyn Fn(f64, usize, u64, Method) -> Result<(Vec<Complex64>, f64)>;

/// Run the benchmark on chordal SLE (tilted slits, t = 1); `progress` receives a short
/// description of each stage as it starts.
///
/// # Errors
/// Only for invalid sizes.
pub fn run(s: &BenchSettings, progress: &dyn Fn(&str)) -> Result<BenchReport> {
    run_with(s, progress, &|kappa, n, seed, m| {
        let ch = chain(kappa, n, seed)?;
        let t0 = Instant::now();
        let tr = ch.trace(m)?;
        Ok((tr, t0.elapsed().as_secs_f64()))
    })
}

/// The same benchmark on radial SLE_κ in the disk (DESIGN §2), radial time 3 on the grid of
/// [`crate::radial::radial_grid`]: `direct` composes every radial step for every point, `fast`
/// uses the disk block tree of [`crate::disk_fast`] (building it is included in its time).
///
/// # Errors
/// Only for invalid sizes.
pub fn run_radial(s: &BenchSettings, progress: &dyn Fn(&str)) -> Result<BenchReport> {
    run_with(s, progress, &|kappa, n, seed, m| {
        let sle = crate::radial::RadialSle::new(kappa, None, 3.0, n)?;
        let t0 = Instant::now();
        let c = sle.sample_with(seed, 0, m);
        Ok((c.points, t0.elapsed().as_secs_f64()))
    })
}

fn run_with(s: &BenchSettings, progress: &dyn Fn(&str), job: TraceJob) -> Result<BenchReport> {
    let mut timings = Vec::new();
    let time = |n: usize, m: Method, timings: &mut Vec<Timing>| -> Result<f64> {
        let (tr, secs) = job(4.0, n, s.seed, m)?;
        std::hint::black_box(tr);
        timings.push(Timing {
            n,
            method: m.name(),
            seconds: secs,
            peak_mib: peak_memory_mib(),
        });
        Ok(secs)
    };
    let mut speedups = Vec::new();
    let mut direct_pts = Vec::new();
    for &n in &s.common {
        progress(&format!("N = {n}: direct and fast"));
        let d = time(n, Method::Direct, &mut timings)?;
        let f = time(n, Method::Fast, &mut timings)?;
        direct_pts.push((n as f64, d));
        speedups.push((n, d / f));
    }
    let mut fast_pts: Vec<(f64, f64)> = timings
        .iter()
        .filter(|t| t.method == "fast" && t.n >= 10_000)
        .map(|t| (t.n as f64, t.seconds))
        .collect();
    for &n in &s.fast_only {
        progress(&format!("N = {n}: fast"));
        let f = time(n, Method::Fast, &mut timings)?;
        if n >= 10_000 {
            fast_pts.push((n as f64, f));
        }
    }
    let direct_exponent = log_log_slope(&direct_pts);
    let fast_exponent = log_log_slope(&fast_pts);
    // Extrapolate the direct time to 1e5 from the fit through the largest measured size.
    let speedup_1e5_extrapolated = direct_pts.last().and_then(|&(n_last, t_last)| {
        let fast_1e5 = timings
            .iter()
            .find(|t| t.method == "fast" && t.n == 100_000)?
            .seconds;
        let direct_1e5 = t_last * (1e5 / n_last).powf(direct_exponent);
        Some(direct_1e5 / fast_1e5)
    });
    let mut agreement = Vec::new();
    for &k in &s.kappas {
        progress(&format!("agreement at κ = {k}"));
        let (d, _) = job(k, s.agreement_n, s.seed + 1, Method::Direct)?;
        let (f, _) = job(k, s.agreement_n, s.seed + 1, Method::Fast)?;
        let diam = 2.0 * d.iter().map(|z| z.norm()).fold(0.0, f64::max);
        let dev = d
            .iter()
            .zip(&f)
            .map(|(a, b)| (a - b).norm())
            .fold(0.0, f64::max);
        agreement.push(Agreement {
            kappa: k,
            n: s.agreement_n,
            max_deviation_rel: dev / diam,
        });
    }
    Ok(BenchReport {
        settings: s.clone(),
        threads: rayon::current_num_threads(),
        timings,
        direct_exponent,
        fast_exponent,
        speedups,
        speedup_1e5_extrapolated,
        agreement,
    })
}

/// One CLE timing: explorations of CLE_κ with a number of marked points.
#[derive(Debug, Clone, Serialize)]
pub struct CleTiming {
    /// κ.
    pub kappa: f64,
    /// Marked points per configuration (0: the bare angle process, no geometry).
    pub points: usize,
    /// Configurations (or angle-process runs) timed.
    pub samples: u64,
    /// Steps taken in all of them.
    pub steps: u64,
    /// Wall-clock seconds (all threads of the current rayon pool).
    pub seconds: f64,
    /// Steps per second.
    pub steps_per_second: f64,
    /// Cost of one step relative to a step of the bare angle process at the same κ.
    pub relative_step_cost: f64,
}

/// Marked points of the CLE benchmark: the first `m` of a fixed spread of the disk.
fn bench_points(m: usize) -> Vec<num_complex::Complex64> {
    (0..m)
        .map(|k| {
            let r = 0.75 * ((k + 1) as f64 / m as f64).sqrt();
            num_complex::Complex64::from_polar(if k == 0 { 0.0 } else { r }, 2.4 * k as f64)
        })
        .collect()
}

/// Time the bare angle process (one level per run) and explorations with 1, 3 and 10 marked
/// points (one level each) at every κ of `kappas`, `samples` runs each, seed `seed`.
///
/// # Errors
/// κ outside (8/3, 8).
pub fn run_cle(kappas: &[f64], samples: u64, seed: u64) -> Result<Vec<CleTiming>> {
    use crate::cle::{AngleProcess, CleExplorer, EndVisit, ExploreSettings};
    use rayon::prelude::*;
    let mut out = Vec::new();
    for &kappa in kappas {
        let process = AngleProcess::new(kappa)?;
        let st = ExploreSettings::defaults(kappa, 1);
        let t0 = Instant::now();
        let steps: u64 = (0..samples)
            .into_par_iter()
            .map(|i| {
                let mut g = crate::rng::substream(seed, crate::rng::Tag::Cle, i, u64::MAX);
                let (mut theta, mut n) = (0.0, 0u64);
                loop {
                    let s = process.step(theta, st.h_max, &mut g);
                    n += 1;
                    if s.visit == EndVisit::Full || n as f64 * st.h_max > st.max_time {
                        return n;
                    }
                    theta = s.theta;
                }
            })
            .sum();
        let bare = t0.elapsed().as_secs_f64() / steps as f64;
        out.push(CleTiming {
            kappa,
            points: 0,
            samples,
            steps,
            seconds: bare * steps as f64,
            steps_per_second: 1.0 / bare,
            relative_step_cost: 1.0,
        });
        for m in [1usize, 3, 10] {
            let ex = CleExplorer::new(kappa, &bench_points(m), st)?;
            let t0 = Instant::now();
            let steps: u64 = (0..samples)
                .into_par_iter()
                .map(|i| ex.sample(seed, i).diagnostics.steps)
                .sum();
            let secs = t0.elapsed().as_secs_f64();
            out.push(CleTiming {
                kappa,
                points: m,
                samples,
                steps,
                seconds: secs,
                steps_per_second: steps as f64 / secs,
                relative_step_cost: secs / steps as f64 / bare,
            });
        }
    }
    Ok(out)
}

/// One timing of a whole CLE_κ configuration ([`crate::regions`]).
#[derive(Debug, Clone, Serialize)]
pub struct LoopsTiming {
    /// κ.
    pub kappa: f64,
    /// ε (`min_size`).
    pub min_size: f64,
    /// Wall-clock seconds (the regions of one level of the region tree run in parallel on
    /// rayon's threads).
    pub seconds: f64,
    /// Loops of diameter ≥ ε found.
    pub loops: usize,
    /// Loops per second.
    pub loops_per_second: f64,
    /// Exploration steps, all regions.
    pub steps: u64,
    /// Steps per second.
    pub steps_per_second: f64,
    /// Regions explored.
    pub regions: u64,
    /// Peak resident memory of the process after the run, MiB (Linux only).
    pub peak_mib: Option<f64>,
}

/// Time one configuration for each (κ, ε) with `seed`, largest ε first.
///
/// Errors: [`crate::Error::InvalidParameter`] for κ or ε out of range.
pub fn run_loops(kappas: &[f64], sizes: &[f64], seed: u64) -> Result<Vec<LoopsTiming>> {
    let mut out = Vec::new();
    for &kappa in kappas {
        for &eps in sizes {
            let sampler = crate::regions::RegionSampler::new(
                kappa,
                crate::regions::RegionSettings::defaults(eps),
            )?;
            let t = std::time::Instant::now();
            let (c, rd) = sampler.sample(seed, 0);
            let seconds = t.elapsed().as_secs_f64();
            out.push(LoopsTiming {
                kappa,
                min_size: eps,
                seconds,
                loops: c.loops.len(),
                loops_per_second: c.loops.len() as f64 / seconds,
                steps: c.diagnostics.steps,
                steps_per_second: c.diagnostics.steps as f64 / seconds,
                regions: rd.regions,
                peak_mib: peak_memory_mib(),
            });
        }
    }
    Ok(out)
}

/// Least-squares slope of `log seconds` against `log(1/ε)` for one κ, and the time it predicts
/// at `target` ε (an extrapolation, reported as such).
pub fn loops_scaling(rows: &[LoopsTiming], kappa: f64, target: f64) -> Option<(f64, f64)> {
    let pts: Vec<(f64, f64)> = rows
        .iter()
        .filter(|r| r.kappa == kappa && r.seconds > 0.0)
        .map(|r| ((1.0 / r.min_size).ln(), r.seconds.ln()))
        .collect();
    if pts.len() < 2 {
        return None;
    }
    let n = pts.len() as f64;
    let mx = pts.iter().map(|p| p.0).sum::<f64>() / n;
    let my = pts.iter().map(|p| p.1).sum::<f64>() / n;
    let sxx: f64 = pts.iter().map(|p| (p.0 - mx).powi(2)).sum();
    let sxy: f64 = pts.iter().map(|p| (p.0 - mx) * (p.1 - my)).sum();
    if sxx <= 0.0 {
        return None;
    }
    let slope = sxy / sxx;
    let at = (my + slope * ((1.0 / target).ln() - mx)).exp();
    Some((slope, at))
}
