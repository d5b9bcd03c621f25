//! Benchmark of the trace methods: direct O(N²) composition against the block tree, in one run
//! on the same machine (wall-clock times, all threads of the current rayon pool).

use crate::driving::BrownianPath;
use crate::error::Result;
use crate::loewner::{ChordalChain, Method, StepKind};
use crate::stats::log_log_slope;
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

/// Run the benchmark; `progress` receives a short description of each stage as it starts.
///
/// # Errors
/// Only for invalid sizes.
pub fn run(s: &BenchSettings, progress: &dyn Fn(&str)) -> Result<BenchReport> {
    let mut timings = Vec::new();
    let time = |n: usize, m: Method, timings: &mut Vec<Timing>| -> Result<f64> {
        let ch = chain(4.0, n, s.seed)?;
        let t0 = Instant::now();
        let tr = ch.trace(m)?;
        let secs = t0.elapsed().as_secs_f64();
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
        let ch = chain(k, s.agreement_n, s.seed + 1)?;
        let d = ch.trace(Method::Direct)?;
        let f = ch.trace(Method::Fast)?;
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
