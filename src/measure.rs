//! Estimating κ from recovered driving functions, with confidence intervals and diagnostics
//! (DESIGN §9).
//!
//! **Quadratic variation.** For SLE_κ the driving function is `√κ B` (chordal `W_t`, capacity
//! time; radial `ξ_t`, radial time), so for every lag `s` the increments
//! `ΔW = W(t + s) − W(t)` are independent N(0, κs) (Schramm, Israel J. Math. 2000). Each curve's
//! driving function is read on the grid `0, s, 2s, …` (linear interpolation between unzipping
//! steps) and `κ̂(s) = Σ ΔW² / (s · #increments)` over all curves. Lags below a few lattice
//! spacings are biased by the lattice; the table of `κ̂(s)` against `s` shows it. The estimate
//! is the mean of `κ̂(s)` over the chosen lags.
//!
//! **Interval.** A blocked bootstrap (common practice; Künsch, Ann. Statist. 1989): curves are
//! resampled with replacement and, within each, blocks of time length equal to the largest lag
//! are resampled with replacement; the percentile interval of the replicated estimate is
//! reported. Bootstrap draws come from [`crate::rng::Tag::Bootstrap`] streams keyed by the seed.
//!
//! **Diagnostics.** Normality of the standardised increments (skewness and excess kurtosis with
//! their standard errors √(6/n), √(24/n); Kolmogorov–Smirnov distance to N(0, 1), whose p-value
//! is conservative because κ is estimated), independence (lag-one autocorrelation of
//! consecutive increments, standard error 1/√n), and drift (mean increment over its standard
//! error).
//!
//! **Left passage.** A second, independent estimator: for points `z` at fixed positions, the
//! fraction of curves passing to the left of `z` against Schramm's formula (Schramm, Electron.
//! Comm. Probab. 2001), fitted by maximum (pseudo-)likelihood over κ ∈ (0, 8); the interval is
//! a bootstrap over curves, which accounts for the dependence between points of one curve.

use crate::error::{Error, Result};
use crate::laws::schramm_left_passage;
use crate::rng::{stream, Tag};
use crate::stats::ks_test;
use rand::Rng;
use serde::Serialize;

/// A recovered driving function: times (capacity or radial) and values, increasing times.
#[derive(Debug, Clone, Copy)]
pub struct DrivingData<'a> {
    /// Loewner times, starting at 0, increasing.
    pub times: &'a [f64],
    /// Driving values at those times.
    pub values: &'a [f64],
}

impl DrivingData<'_> {
    fn final_time(&self) -> f64 {
        *self.times.last().unwrap_or(&0.0)
    }

    /// Linear interpolation at time `t` (clamped to the range).
    fn at(&self, t: f64) -> f64 {
        let ts = self.times;
        match ts.binary_search_by(|x| x.total_cmp(&t)) {
            Ok(k) => self.values[k],
            Err(0) => self.values[0],
            Err(k) if k >= ts.len() => self.values[ts.len() - 1],
            Err(k) => {
                let f = (t - ts[k - 1]) / (ts[k] - ts[k - 1]);
                self.values[k - 1] + f * (self.values[k] - self.values[k - 1])
            }
        }
    }
}

/// Settings of the κ estimate.
#[derive(Debug, Clone, Serialize)]
pub struct KappaSettings {
    /// Lags (in Loewner time) used for the estimate.
    pub lags: Vec<f64>,
    /// Bootstrap replicates.
    pub bootstrap: usize,
    /// Confidence level of the interval.
    pub level: f64,
    /// Seed of the bootstrap draws.
    pub seed: u64,
}

/// Geometric lags from `min_lag` up to a fifth of the median curve's time, by factors of 2
/// (at most 12); curves too short for two blocks of the largest lag are then left out by
/// [`estimate_kappa`]. `min_lag` should be far above the Loewner time of one lattice step:
/// lattice curves keep a visible bias up to a few hundred steps (see [`mean_step`]).
pub fn default_lags(curves: &[DrivingData], min_lag: f64) -> Vec<f64> {
    let mut ts: Vec<f64> = curves.iter().map(|c| c.final_time()).collect();
    ts.sort_by(f64::total_cmp);
    let median = ts.get(ts.len() / 2).copied().unwrap_or(0.0);
    let top = median / 5.0;
    let mut lags = Vec::new();
    let mut s = min_lag;
    while s <= top && lags.len() < 12 {
        lags.push(s);
        s *= 2.0;
    }
    lags
}

/// The mean Loewner time per step over all curves (total time over total steps): the lattice
/// scale on the Loewner clock. (The median is much smaller for lattice curves, whose many steps
/// along fjords and earlier parts of the curve add almost no capacity.)
pub fn mean_step(curves: &[DrivingData]) -> f64 {
    let t: f64 = curves.iter().map(|c| c.final_time()).sum();
    let n: usize = curves.iter().map(|c| c.times.len().saturating_sub(1)).sum();
    if n == 0 {
        0.0
    } else {
        t / n as f64
    }
}

/// One lag's row of the κ table.
#[derive(Debug, Clone, Serialize)]
pub struct LagRow {
    /// The lag s (Loewner time).
    pub lag: f64,
    /// Increments used (all curves).
    pub increments: usize,
    /// κ̂(s) = mean ΔW² / s.
    pub kappa: f64,
    /// Bootstrap standard error of κ̂(s).
    pub std_error: f64,
    /// Mean increment divided by its standard error (drift z-score).
    pub drift_z: f64,
    /// Lag-one autocorrelation of consecutive increments (standard error 1/√n).
    pub autocorrelation: f64,
    /// Skewness of the increments (standard error √(6/n)).
    pub skewness: f64,
    /// Excess kurtosis of the increments (standard error √(24/n)).
    pub excess_kurtosis: f64,
}

/// Normality check of the standardised increments at one lag.
#[derive(Debug, Clone, Serialize)]
pub struct NormalityCheck {
    /// The lag checked (the middle lag).
    pub lag: f64,
    /// Kolmogorov–Smirnov distance to N(0, 1).
    pub ks_statistic: f64,
    /// Its p-value (conservative: κ was estimated from the same data).
    pub ks_p_value: f64,
}

/// κ from quadratic variation, with its interval and diagnostics.
#[derive(Debug, Clone, Serialize)]
pub struct KappaEstimate {
    /// The estimate (mean of κ̂(s) over the lags).
    pub estimate: f64,
    /// The bootstrap percentile interval.
    pub ci: [f64; 2],
    /// Its confidence level.
    pub level: f64,
    /// Name of the estimator.
    pub method: &'static str,
    /// Curves used.
    pub curves: usize,
    /// Bootstrap replicates and block length (Loewner time).
    pub bootstrap: usize,
    /// Block length of the bootstrap.
    pub block: f64,
    /// Per-lag table.
    pub lags: Vec<LagRow>,
    /// Normality check.
    pub normality: NormalityCheck,
    /// Warnings about the data (few blocks, lags too short, …).
    pub warnings: Vec<String>,
}

/// Per curve, per block, per lag: (Σ ΔW², count).
type Table = Vec<Vec<Vec<(f64, usize)>>>;

/// Estimate κ from driving functions by quadratic variation over `settings.lags`.
///
/// # Errors
/// [`Error::InvalidParameter`] for no lags, a non-positive lag, a level outside (0, 1) or fewer
/// than 100 bootstrap replicates; [`Error::InvalidData`] when no curve is long enough for two
/// increments at the largest lag.
pub fn estimate_kappa(curves: &[DrivingData], settings: &KappaSettings) -> Result<KappaEstimate> {
    if settings.lags.is_empty() {
        return Err(Error::param(
            "lags",
            "none",
            "at least one lag: the default range (100 h² up to a fifth of the median curve's \
             Loewner time) is empty for these curves; give a smaller --min-lag or longer curves",
        ));
    }
    if let Some(&bad) = settings.lags.iter().find(|&&s| !(s > 0.0 && s.is_finite())) {
        return Err(Error::param("lag", bad, "a positive finite Loewner time"));
    }
    if !(settings.level > 0.0 && settings.level < 1.0) {
        return Err(Error::param("level", settings.level, "a number in (0, 1)"));
    }
    if settings.bootstrap < 100 {
        return Err(Error::param(
            "bootstrap",
            settings.bootstrap,
            "at least 100 replicates",
        ));
    }
    let lags = &settings.lags;
    let block = lags.iter().cloned().fold(0.0, f64::max);
    let mut warnings = Vec::new();
    // Increments per lag (for diagnostics) and the block table.
    let mut table: Table = Vec::new();
    let mut incs: Vec<Vec<Vec<f64>>> = vec![Vec::new(); lags.len()];
    for c in curves {
        // At most 2·10⁶ increments at the smallest lag per curve (memory stays bounded).
        let smallest = lags.iter().cloned().fold(f64::INFINITY, f64::min);
        let usable = c.final_time().min(2e6 * smallest);
        let nb = (usable / block).floor() as usize;
        if nb < 2 {
            continue;
        }
        let mut blocks = vec![vec![(0.0, 0usize); lags.len()]; nb];
        for (li, &s) in lags.iter().enumerate() {
            let per = (block / s).round().max(1.0) as usize;
            let n = nb * per;
            let mut seq = Vec::with_capacity(n);
            let mut prev = c.at(0.0);
            for i in 0..n {
                let next = c.at((i + 1) as f64 * s);
                let d = next - prev;
                prev = next;
                let b = &mut blocks[(i / per).min(nb - 1)][li];
                b.0 += d * d;
                b.1 += 1;
                seq.push(d);
            }
            incs[li].push(seq);
        }
        table.push(blocks);
    }
    if table.is_empty() {
        return Err(Error::InvalidData(format!(
            "no curve is long enough for two blocks of the largest lag {block:e} (Loewner time)"
        )));
    }
    let blocks_total: usize = table.iter().map(|b| b.len()).sum();
    if blocks_total < 20 {
        warnings.push(format!(
            "only {blocks_total} bootstrap blocks: the interval is rough; use longer or more curves, or smaller lags"
        ));
    }
    let estimate_from = |sel: &[(usize, usize)]| -> (f64, Vec<f64>) {
        let mut per_lag = vec![(0.0, 0usize); lags.len()];
        for &(c, b) in sel {
            for (li, v) in table[c][b].iter().enumerate() {
                per_lag[li].0 += v.0;
                per_lag[li].1 += v.1;
            }
        }
        let ks: Vec<f64> = per_lag
            .iter()
            .zip(lags)
            .map(|((s2, n), s)| s2 / (s * *n as f64))
            .collect();
        (ks.iter().sum::<f64>() / ks.len() as f64, ks)
    };
    let all: Vec<(usize, usize)> = table
        .iter()
        .enumerate()
        .flat_map(|(c, b)| (0..b.len()).map(move |k| (c, k)))
        .collect();
    let (estimate, per_lag) = estimate_from(&all);
    // Bootstrap: replicate r draws from stream (seed, Bootstrap, r), so it is reproducible and
    // independent of threads.
    let mut reps = Vec::with_capacity(settings.bootstrap);
    let mut lag_reps: Vec<Vec<f64>> = vec![Vec::with_capacity(settings.bootstrap); lags.len()];
    for r in 0..settings.bootstrap {
        let mut g = stream(settings.seed, Tag::Bootstrap, r as u64);
        let mut sel = Vec::with_capacity(all.len());
        for _ in 0..table.len() {
            let c = g.random_range(0..table.len());
            let nb = table[c].len();
            for _ in 0..nb {
                sel.push((c, g.random_range(0..nb)));
            }
        }
        let (e, ks) = estimate_from(&sel);
        reps.push(e);
        for (li, k) in ks.into_iter().enumerate() {
            lag_reps[li].push(k);
        }
    }
    reps.sort_by(f64::total_cmp);
    let q = |p: f64| reps[((p * (reps.len() - 1) as f64).round() as usize).min(reps.len() - 1)];
    let alpha = 1.0 - settings.level;
    let ci = [q(alpha / 2.0), q(1.0 - alpha / 2.0)];
    let mut rows = Vec::with_capacity(lags.len());
    for (li, &s) in lags.iter().enumerate() {
        let all_inc: Vec<f64> = incs[li].iter().flatten().cloned().collect();
        let n = all_inc.len() as f64;
        let mean = all_inc.iter().sum::<f64>() / n;
        let m2 = all_inc.iter().map(|d| (d - mean).powi(2)).sum::<f64>() / n;
        let m3 = all_inc.iter().map(|d| (d - mean).powi(3)).sum::<f64>() / n;
        let m4 = all_inc.iter().map(|d| (d - mean).powi(4)).sum::<f64>() / n;
        let mut num = 0.0;
        let mut pairs = 0usize;
        for seq in &incs[li] {
            for w in seq.windows(2) {
                num += (w[0] - mean) * (w[1] - mean);
                pairs += 1;
            }
        }
        let lr = &lag_reps[li];
        let lm = lr.iter().sum::<f64>() / lr.len() as f64;
        let lsd = (lr.iter().map(|x| (x - lm).powi(2)).sum::<f64>() / (lr.len() - 1) as f64).sqrt();
        rows.push(LagRow {
            lag: s,
            increments: all_inc.len(),
            kappa: per_lag[li],
            std_error: lsd,
            drift_z: mean / (m2 / n).sqrt().max(1e-300),
            autocorrelation: if pairs > 0 {
                num / pairs as f64 / m2.max(1e-300)
            } else {
                f64::NAN
            },
            skewness: m3 / m2.powf(1.5).max(1e-300),
            excess_kurtosis: m4 / (m2 * m2).max(1e-300) - 3.0,
        });
    }
    let mid = lags.len() / 2;
    let sd = (estimate * lags[mid]).sqrt();
    let z: Vec<f64> = incs[mid].iter().flatten().map(|d| d / sd).collect();
    let ks = ks_test(&z, normal_cdf)?;
    Ok(KappaEstimate {
        estimate,
        ci,
        level: settings.level,
        method: "quadratic variation of the driving function (mean over lags)",
        curves: table.len(),
        bootstrap: settings.bootstrap,
        block,
        lags: rows,
        normality: NormalityCheck {
            lag: lags[mid],
            ks_statistic: ks.statistic,
            ks_p_value: ks.p_value,
        },
        warnings,
    })
}

/// The standard normal distribution function.
fn normal_cdf(x: f64) -> f64 {
    use special::Error as _;
    0.5 * (-x / std::f64::consts::SQRT_2).compl_error()
}

/// Polar angles (in H) of the points where left passage is recorded: jπ/10, j = 1, …, 9.
pub fn left_passage_angles() -> Vec<f64> {
    (1..10)
        .map(|j| j as f64 * std::f64::consts::PI / 10.0)
        .collect()
}

/// κ from left-passage frequencies.
#[derive(Debug, Clone, Serialize)]
pub struct LeftPassageEstimate {
    /// Maximum pseudo-likelihood estimate.
    pub estimate: f64,
    /// Bootstrap percentile interval over curves.
    pub ci: [f64; 2],
    /// Confidence level.
    pub level: f64,
    /// Name of the estimator.
    pub method: &'static str,
    /// Curves used.
    pub curves: usize,
    /// Per angle: (angle, observed fraction passing left, Schramm's value at the estimate).
    pub table: Vec<(f64, f64, f64)>,
    /// Warnings.
    pub warnings: Vec<String>,
}

/// Fit κ to left-passage observations: `sides[c]` holds, for curve c, pairs (polar angle of the
/// point in H, whether the curve passed to its left).
///
/// # Errors
/// [`Error::InvalidData`] with fewer than 2 curves; [`Error::InvalidParameter`] for a bad level
/// or fewer than 100 replicates.
pub fn left_passage_kappa(
    sides: &[Vec<(f64, bool)>],
    bootstrap: usize,
    level: f64,
    seed: u64,
) -> Result<LeftPassageEstimate> {
    if sides.len() < 2 {
        return Err(Error::InvalidData(format!(
            "left passage needs at least 2 curves (better 50 or more), got {}",
            sides.len()
        )));
    }
    if !(level > 0.0 && level < 1.0) {
        return Err(Error::param("level", level, "a number in (0, 1)"));
    }
    if bootstrap < 100 {
        return Err(Error::param(
            "bootstrap",
            bootstrap,
            "at least 100 replicates",
        ));
    }
    let angles = left_passage_angles();
    // Counts per curve per angle: (left, total).
    let counts: Vec<Vec<(f64, f64)>> = sides
        .iter()
        .map(|obs| {
            let mut c = vec![(0.0, 0.0); angles.len()];
            for &(a, left) in obs {
                if let Some(k) = angles.iter().position(|&b| (a - b).abs() < 1e-9) {
                    c[k].1 += 1.0;
                    if left {
                        c[k].0 += 1.0;
                    }
                }
            }
            c
        })
        .collect();
    // Schramm's probabilities on a κ grid, reused by every replicate.
    let grid: Vec<f64> = (0..=780).map(|i| 0.1 + 0.01 * i as f64).collect();
    let probs: Vec<Vec<f64>> = grid
        .iter()
        .map(|&k| {
            angles
                .iter()
                .map(|&a| {
                    schramm_left_passage(k, a.cos(), a.sin())
                        .unwrap_or(0.5)
                        .clamp(1e-12, 1.0 - 1e-12)
                })
                .collect()
        })
        .collect();
    let fit = |sel: &[usize]| -> f64 {
        let mut tot = vec![(0.0, 0.0); angles.len()];
        for &c in sel {
            for (k, v) in counts[c].iter().enumerate() {
                tot[k].0 += v.0;
                tot[k].1 += v.1;
            }
        }
        let mut best = (f64::NEG_INFINITY, grid[0]);
        for (gi, p) in probs.iter().enumerate() {
            let ll: f64 = tot
                .iter()
                .zip(p)
                .map(|(&(l, n), &p)| l * p.ln() + (n - l) * (1.0 - p).ln())
                .sum();
            if ll > best.0 {
                best = (ll, grid[gi]);
            }
        }
        best.1
    };
    let all: Vec<usize> = (0..sides.len()).collect();
    let estimate = fit(&all);
    let mut reps: Vec<f64> = (0..bootstrap)
        .map(|r| {
            let mut g = stream(seed, Tag::Bootstrap, (1u64 << 40) + r as u64);
            let sel: Vec<usize> = (0..sides.len())
                .map(|_| g.random_range(0..sides.len()))
                .collect();
            fit(&sel)
        })
        .collect();
    reps.sort_by(f64::total_cmp);
    let q = |p: f64| reps[((p * (reps.len() - 1) as f64).round() as usize).min(reps.len() - 1)];
    let a = 1.0 - level;
    let mut table = Vec::new();
    for (k, &ang) in angles.iter().enumerate() {
        let (l, n) = counts
            .iter()
            .fold((0.0, 0.0), |acc, c| (acc.0 + c[k].0, acc.1 + c[k].1));
        let p = schramm_left_passage(estimate, ang.cos(), ang.sin()).unwrap_or(f64::NAN);
        table.push((ang, if n > 0.0 { l / n } else { f64::NAN }, p));
    }
    let mut warnings = Vec::new();
    if sides.len() < 50 {
        warnings.push(format!(
            "only {} curves: the left-passage interval is rough (50 or more recommended)",
            sides.len()
        ));
    }
    if estimate <= grid[0] + 1e-9 || estimate >= grid[grid.len() - 1] - 1e-9 {
        warnings.push("the fit is at the edge of the κ range searched (0.1 to 7.9)".into());
    }
    Ok(LeftPassageEstimate {
        estimate,
        ci: [q(a / 2.0), q(1.0 - a / 2.0)],
        level,
        method: "left-passage frequencies against Schramm's formula (grid step 0.01 in κ)",
        curves: sides.len(),
        table,
        warnings,
    })
}
