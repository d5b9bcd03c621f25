//! Conformal radii of the nested CLE_κ loops around marked points, summarised beside the exact
//! laws (DESIGN §7.1–§7.2, §8).
//!
//! All marked points of a sample live in **one** CLE_κ configuration (DESIGN §6.2), so loops
//! shared by several points are recognisable by their identifiers and joint statistics (loops
//! surrounding both points of a pair, the first loop separating them) are meaningful.
//!
//! For a point z and level k, `T_k = log CR(D, z) − log CR(U_k, z)` (U_k the interior of the
//! k-th loop around z, CR(D, z) = 1 − |z|²); the increments `T_k − T_{k−1}` are i.i.d. with the
//! law of Schramm, Sheffield & Wilson (Commun. Math. Phys. 2009).

use crate::cle::{CleExplorer, CleSample, ExploreSettings, PointRecord};
use crate::error::{Error, Result};
use crate::laws::CleLaw;
use crate::stats::{choose_tail_threshold, ks_test, KsTest, Moments, TailFit, DEFAULT_TAIL_LEVELS};
use num_complex::Complex64;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

/// What to sample.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RadiiSettings {
    /// κ, 8/3 < κ < 8.
    pub kappa: f64,
    /// Marked points (x, y) in the open unit disk.
    pub points: Vec<[f64; 2]>,
    /// Samples per point.
    pub samples: u64,
    /// Exploration settings (levels, step sizes).
    pub explore: ExploreSettings,
    /// Exponents λ of the moments E[CR^λ] = E[e^{−λ ΔT}] to report (λ > −λ*).
    pub lambdas: Vec<f64>,
    /// Values s = log(1/ε) at which nesting counts N(s) = #{k : T_k ≤ s} are reported.
    pub nesting_at: Vec<f64>,
}

/// The raw samples of a run: `records[i][j]` is sample i seen from point j.
#[derive(Debug, Clone, PartialEq)]
pub struct RadiiRun {
    /// The settings.
    pub settings: RadiiSettings,
    /// The seed.
    pub seed: u64,
    /// One row per sample, one record per point.
    pub records: Vec<Vec<PointRecord>>,
    /// Total steps of all explorations.
    pub steps: u64,
}

/// One sample of a run: what the exploration found at every marked point, and its step count.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RadiiSample {
    /// Total steps of the exploration (all branches).
    pub steps: u64,
    /// One record per marked point, in the order of the settings' points.
    pub points: Vec<PointRecord>,
}

/// The explorer of a run's settings.
///
/// Errors: [`Error::InvalidParameter`] for κ outside (8/3, 8), points outside the open disk,
/// no points, zero samples, or λ ≤ −λ*.
pub fn explorer(settings: &RadiiSettings) -> Result<CleExplorer> {
    let law = CleLaw::new(settings.kappa)?;
    if settings.samples == 0 {
        return Err(Error::param("samples", 0.0, "at least 1 sample"));
    }
    for &l in &settings.lambdas {
        if !(l.is_finite() && l > -law.lambda_star()) {
            return Err(Error::param(
                "lambda",
                l,
                format!(
                    "lambda > -lambda* = {:.6} (E[CR^lambda] is infinite below)",
                    -law.lambda_star()
                ),
            ));
        }
    }
    if settings.points.is_empty() {
        return Err(Error::param("points", 0.0, "at least one marked point"));
    }
    let pts: Vec<Complex64> = settings
        .points
        .iter()
        .map(|p| Complex64::new(p[0], p[1]))
        .collect();
    CleExplorer::new(settings.kappa, &pts, settings.explore)
}

/// Sample `i` of a run with `seed`: a pure function of both.
pub fn sample(explorer: &CleExplorer, seed: u64, i: u64) -> RadiiSample {
    let s: CleSample = explorer.sample(seed, i);
    RadiiSample {
        steps: s.diagnostics.steps,
        points: s.points,
    }
}

impl RadiiRun {
    /// A run from its samples in index order.
    ///
    /// Errors: [`Error::InvalidData`] when a sample does not hold one record per marked point of
    /// the settings (a journal edited or damaged by hand), or a record's loops are not at levels
    /// 1, 2, … in order.
    pub fn from_samples(
        settings: &RadiiSettings,
        seed: u64,
        samples: Vec<RadiiSample>,
    ) -> Result<Self> {
        for (i, s) in samples.iter().enumerate() {
            if s.points.len() != settings.points.len() {
                return Err(Error::InvalidData(format!(
                    "sample {i} holds {} point records; the settings have {} marked points",
                    s.points.len(),
                    settings.points.len()
                )));
            }
            for rec in &s.points {
                let ordered = rec.loops.iter().enumerate().all(|(k, l)| l.level == k + 1);
                if !ordered || rec.loops.len() > settings.explore.levels {
                    return Err(Error::InvalidData(format!(
                        "sample {i}: the loops of a point are not levels 1..={} in order",
                        settings.explore.levels
                    )));
                }
            }
        }
        let steps = samples.iter().map(|r| r.steps).sum();
        Ok(RadiiRun {
            settings: settings.clone(),
            seed,
            records: samples.into_iter().map(|r| r.points).collect(),
            steps,
        })
    }
}

/// Run the explorations (parallel over samples; each sample is a pure function of
/// (seed, sample index), so the result does not depend on the thread count).
/// `tick` is called once per finished sample (for progress bars).
///
/// Errors: as [`explorer`].
pub fn run(settings: &RadiiSettings, seed: u64, tick: &(dyn Fn() + Sync)) -> Result<RadiiRun> {
    let explorer = explorer(settings)?;
    let rows: Vec<RadiiSample> = (0..settings.samples)
        .into_par_iter()
        .map(|i| {
            let s = sample(&explorer, seed, i);
            tick();
            s
        })
        .collect();
    RadiiRun::from_samples(settings, seed, rows)
}

/// One estimated moment beside its exact value.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MomentRow {
    /// λ.
    pub lambda: f64,
    /// Sample mean of CR^λ = e^{−λ ΔT}.
    pub estimate: f64,
    /// Its standard error (sample standard deviation / √n).
    pub std_error: f64,
    /// Exact E[CR^λ] (Schramm, Sheffield & Wilson 2009).
    pub exact: f64,
    /// (estimate − exact)/std_error; absent when the standard error is zero (every sample
    /// equal) or the exact value is not finite.
    pub deviation_sigma: Option<f64>,
    /// True when λ ≤ −λ*/2: E[CR^{2λ}] = ∞, so the standard error is not meaningful.
    pub infinite_variance: bool,
}

/// Statistics of the level-k increments at one point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LevelRow {
    /// Point index (order of the `--at` options).
    pub point: usize,
    /// Level k (1 = outermost loop).
    pub level: usize,
    /// Samples that found loop k.
    pub n: u64,
    /// Samples stopped before loop k (time or step budget).
    pub censored: u64,
    /// Mean of ΔT_k and its standard error.
    pub mean: f64,
    /// Standard error of the mean.
    pub mean_se: f64,
    /// Exact E[T].
    pub mean_exact: f64,
    /// Sample variance of ΔT_k.
    pub variance: f64,
    /// Exact Var[T].
    pub variance_exact: f64,
    /// E[CR^λ] on the λ grid.
    pub moments: Vec<MomentRow>,
    /// Kolmogorov–Smirnov test of the ΔT_k against the exact CDF (None below 2 samples).
    pub ks: Option<KsTest>,
    /// Exponential fit of the tail of ΔT_k (threshold chosen among upper quantiles), beside
    /// λ* and the exact rate at the same threshold (None when too few samples).
    pub tail: Option<TailRow>,
}

/// Tail fit of one level beside the exact values.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TailRow {
    /// The fitted rate of `T − t₀ | T > t₀` with its 95% interval.
    pub fit: TailFit,
    /// Whether successive thresholds agreed (see [`crate::stats::choose_tail_threshold`]).
    pub threshold_stable: bool,
    /// 1/E[T − t₀ | T > t₀] under the exact law: what the fit estimates at this threshold.
    pub exact_rate_at_threshold: Option<f64>,
    /// λ*, the limit of that rate as t₀ → ∞.
    pub lambda_star: f64,
}

/// Nesting count N(s) = #{k ≥ 1 : T_k ≤ s} at one point, s = log(1/ε).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NestingRow {
    /// Point index.
    pub point: usize,
    /// s = log(1/ε) (ε relative to CR(D, z)).
    pub s: f64,
    /// Mean count (None when some sample's count is only a lower bound: raise the levels).
    pub mean: Option<f64>,
    /// Standard error of the mean count.
    pub mean_se: Option<f64>,
    /// Exact E[N(s)] (the renewal function of the law of §7.1, by Laplace inversion; its
    /// leading term s/E[T] is the Miller–Watson–Wilson rate, Ann. Probab. 2016).
    pub predicted: f64,
    /// Exact standard deviation of N(s) (one sample).
    pub predicted_sd: f64,
    /// (mean − predicted)/mean_se; absent with the mean, or when mean_se is zero.
    pub deviation_sigma: Option<f64>,
    /// Samples whose deepest loop found is still inside s (their count is only a lower bound);
    /// the mean is reported only when this is 0, since leaving them out would bias it down.
    pub truncated: u64,
}

/// Joint statistics of two marked points of the same configurations.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PairRow {
    /// The two point indices.
    pub points: [usize; 2],
    /// Samples in which both points found all their levels (the others are left out).
    pub n: u64,
    /// Mean number of loops (among the levels found) surrounding both points.
    pub shared_mean: f64,
    /// Its standard error.
    pub shared_se: f64,
    /// Fraction of samples whose outermost loop around the first point also surrounds the
    /// second.
    pub first_shared: f64,
    /// Mean level (around the first point) of the first loop that surrounds one point but not
    /// the other, over the samples where it is among the levels found.
    pub first_separating_level: Option<f64>,
}

/// The summary of a run.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RadiiSummary {
    /// κ.
    pub kappa: f64,
    /// λ* = 1 − 2/κ − 3κ/32.
    pub lambda_star: f64,
    /// Per point and level.
    pub levels: Vec<LevelRow>,
    /// Nesting counts.
    pub nesting: Vec<NestingRow>,
    /// Joint statistics of every pair of points.
    pub pairs: Vec<PairRow>,
}

/// Summarise a run against the exact laws.
///
/// Errors: [`Error::InvalidParameter`] if κ is outside (8/3, 8).
pub fn summarise(run: &RadiiRun) -> Result<RadiiSummary> {
    let s = &run.settings;
    let law = CleLaw::new(s.kappa)?;
    let mut levels = Vec::new();
    let mut nesting = Vec::new();
    let mean_exact = law.mean_t();
    // Normalised times of every record, computed once.
    let times: Vec<Vec<Vec<f64>>> = run
        .records
        .iter()
        .map(|row| row.iter().map(|r| r.times()).collect())
        .collect();
    for j in 0..s.points.len() {
        for k in 1..=s.explore.levels {
            let mut inc = Vec::new();
            let mut censored = 0;
            for row in &times {
                let t = &row[j];
                if t.len() >= k {
                    inc.push(if k == 1 { t[0] } else { t[k - 1] - t[k - 2] });
                } else {
                    censored += 1;
                }
            }
            let m: Moments = inc.iter().copied().collect();
            let moments = s
                .lambdas
                .iter()
                .map(|&l| {
                    let mm: Moments = inc.iter().map(|t| (-l * t).exp()).collect();
                    let exact = law.cr_moment(l).unwrap_or(f64::NAN);
                    let se = mm.std_error();
                    MomentRow {
                        lambda: l,
                        estimate: mm.mean(),
                        std_error: se,
                        exact,
                        deviation_sigma: (se > 0.0 && exact.is_finite())
                            .then(|| (mm.mean() - exact) / se),
                        infinite_variance: l <= -0.5 * law.lambda_star(),
                    }
                })
                .collect();
            let ks = if inc.len() >= 2 {
                ks_test(&inc, |t| law.cdf(t)).ok()
            } else {
                None
            };
            let tail = if inc.len() >= 50 {
                choose_tail_threshold(&inc, &DEFAULT_TAIL_LEVELS)
                    .ok()
                    .map(|c| TailRow {
                        exact_rate_at_threshold: law.exponential_tail_rate(c.fit.threshold).ok(),
                        fit: c.fit,
                        threshold_stable: c.stable,
                        lambda_star: law.lambda_star(),
                    })
            } else {
                None
            };
            levels.push(LevelRow {
                point: j,
                level: k,
                n: m.n,
                censored,
                mean: m.mean(),
                mean_se: m.std_error(),
                mean_exact,
                variance: m.variance(),
                variance_exact: law.var_t(),
                moments,
                ks,
                tail,
            });
        }
        for &sv in &s.nesting_at {
            let mut c = Moments::new();
            let mut truncated = 0;
            for (row, rec) in times.iter().zip(&run.records) {
                let t = &row[j];
                let n = t.iter().filter(|&&x| x <= sv).count();
                if n == t.len() && (rec[j].censored || t.len() == s.explore.levels) {
                    truncated += 1;
                } else {
                    c.push(n as f64);
                }
            }
            let exact = law.nesting_count_mean_var(sv)?;
            let ok = truncated == 0 && c.n > 1;
            nesting.push(NestingRow {
                point: j,
                s: sv,
                mean: ok.then(|| c.mean()),
                mean_se: ok.then(|| c.std_error()),
                predicted: exact.mean,
                predicted_sd: exact.variance.max(0.0).sqrt(),
                deviation_sigma: (ok && c.std_error() > 0.0)
                    .then(|| (c.mean() - exact.mean) / c.std_error()),
                truncated,
            });
        }
    }
    let mut pairs = Vec::new();
    let full = |r: &PointRecord| r.loops.len() == s.explore.levels;
    for a in 0..s.points.len() {
        for b in (a + 1)..s.points.len() {
            let mut shared = Moments::new();
            let mut first = 0u64;
            let mut sep = Moments::new();
            for row in &run.records {
                let (ra, rb) = (&row[a], &row[b]);
                if !(full(ra) && full(rb)) {
                    continue;
                }
                let ids_b: Vec<u64> = rb.loops.iter().map(|l| l.loop_id).collect();
                let common = ra
                    .loops
                    .iter()
                    .filter(|l| ids_b.contains(&l.loop_id))
                    .count();
                shared.push(common as f64);
                if ids_b.contains(&ra.loops[0].loop_id) {
                    first += 1;
                }
                // Nested loops shared by both points come first, so the first separating loop
                // around `a` is the first of its loops not shared with `b`.
                if let Some(k) = ra.loops.iter().position(|l| !ids_b.contains(&l.loop_id)) {
                    sep.push((k + 1) as f64);
                }
            }
            pairs.push(PairRow {
                points: [a, b],
                n: shared.n,
                shared_mean: shared.mean(),
                shared_se: shared.std_error(),
                first_shared: first as f64 / shared.n.max(1) as f64,
                first_separating_level: (sep.n > 0).then(|| sep.mean()),
            });
        }
    }
    Ok(RadiiSummary {
        kappa: s.kappa,
        lambda_star: law.lambda_star(),
        levels,
        nesting,
        pairs,
    })
}

/// CSV of the loops: `sample,point,x,y,level,loop,log_cr` (log_cr = natural log of the
/// conformal radius of the level-th loop's interior seen from the point, disk coordinates;
/// `loop` = the loop's identifier within its sample: points that share a loop share it).
pub fn loops_csv(run: &RadiiRun) -> String {
    let mut out = String::from("sample,point,x,y,level,loop,log_cr\n");
    for (i, row) in run.records.iter().enumerate() {
        for (j, rec) in row.iter().enumerate() {
            for l in &rec.loops {
                out.push_str(&format!(
                    "{i},{j},{},{},{},{},{}\n",
                    rec.z[0], rec.z[1], l.level, l.loop_id, l.log_cr
                ));
            }
        }
    }
    out
}

/// A figure of the level-1 law at every point: histograms of T against the exact density, and
/// E[CR^λ] on a λ-grid from −0.45λ* to 3 against the exact curve (Schramm, Sheffield & Wilson,
/// Commun. Math. Phys. 2009).
///
/// Errors: [`Error::InvalidParameter`] if κ is outside (8/3, 8).
pub fn law_figure(run: &RadiiRun) -> Result<crate::plot::LawFigure> {
    let s = &run.settings;
    let law = CleLaw::new(s.kappa)?;
    let mut samples = Vec::new();
    let mut moments = Vec::new();
    let grid: Vec<f64> = (0..12)
        .map(|k| -0.45 * law.lambda_star() + (3.0 + 0.45 * law.lambda_star()) * k as f64 / 11.0)
        .collect();
    for (j, p) in s.points.iter().enumerate() {
        let t: Vec<f64> = run
            .records
            .iter()
            .filter_map(|row| row[j].times().first().copied())
            .collect();
        let m = grid
            .iter()
            .map(|&l| {
                let mm: Moments = t.iter().map(|x| (-l * x).exp()).collect();
                (l, mm.mean(), mm.std_error())
            })
            .collect();
        let label = format!("point {j} ({}, {})", p[0], p[1]);
        samples.push((label.clone(), t));
        moments.push((label, m));
    }
    let t_max = samples
        .iter()
        .flat_map(|(_, v)| v.iter().copied())
        .fold(1.0, f64::max);
    let density = (0..=400)
        .map(|k| {
            let t = t_max * k as f64 / 400.0;
            (t, law.density(t))
        })
        .collect();
    let exact_moments = (0..=200)
        .map(|k| {
            let l = grid[0] + (grid[11] - grid[0]) * k as f64 / 200.0;
            (l, law.cr_moment(l).unwrap_or(f64::NAN))
        })
        .collect();
    Ok(crate::plot::LawFigure {
        title: format!(
            "CLE_{} in the unit disk: conformal radius of the outermost loop around each point",
            crate::audit::fmt_kappa(s.kappa)
        ),
        caption: vec![
            format!(
                "T = log(1 − |z|²) − log CR(loop interior, z); {} configurations, all points in \
                 each; seed {}; angle step {} (radial time)",
                s.samples, run.seed, s.explore.h_max
            ),
            "black: exact law of Schramm, Sheffield & Wilson (Commun. Math. Phys. 2009); \
             right: sample means with ±2 standard errors"
                .to_string(),
        ],
        samples,
        density,
        moments,
        exact_moments,
        t_label: "T".into(),
    })
}
