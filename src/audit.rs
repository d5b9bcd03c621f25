//! Checks of the samplers against published exact results, at a resolution and sample size the
//! user chooses: "is the sampler accurate enough at my settings?".
//!
//! Three kinds of checks (DESIGN §7.3):
//! * exact Loewner solutions (Kager, Nienhuis & Kadanoff, J. Stat. Phys. 2004): constant driving
//!   gives the vertical segment `[0, 2i√t]`; `W = c√t` gives the straight ray at angle απ;
//! * Schramm's left-passage formula (Schramm, Electron. Comm. Probab. 2001), estimated from
//!   seeded samples with binomial standard errors;
//! * pathwise convergence: the same Brownian paths at several resolutions, so the discretisation
//!   error is seen without sampling noise.

use crate::driving::{BrownianPath, DrivingFunction};
use crate::error::{Error, Result};
use crate::laws;
use crate::loewner::{ChordalChain, ChordalStep, Method, StepKind};
use crate::stats::{log_log_slope, Moments};
use num_complex::Complex64;
use rayon::prelude::*;
use serde::Serialize;

/// Settings of an audit run.
#[derive(Debug, Clone, Serialize)]
pub struct AuditSettings {
    /// Seed of all random samples.
    pub seed: u64,
    /// Curves per κ for the statistical checks.
    pub samples: usize,
    /// Relative time step `Δt/t` of the geometric base grid used for left passage (steps are
    /// then bisected wherever a point needs it, see `point_step`).
    pub ratio: f64,
    /// Point-adaptive step bound ε: a step is bisected (Brownian bridge) until
    /// `2Δt ≤ ε |g(z) − W|²` for every undecided point z, i.e. until no point's image moves by
    /// more than about ε of its distance to the driving point in one step.
    pub point_step: f64,
    /// First grid time (the first step is `[0, t_min]`).
    pub t_min: f64,
    /// Final capacity time of each curve for left passage (large, so that the curve has passed
    /// the points; the remaining ambiguity is reported as a bias bound).
    pub horizon: f64,
    /// κ values for the left-passage checks (each in (0, 8)).
    pub kappas: Vec<f64>,
    /// Points `(x, y)` of H at which left passage is checked.
    pub points: Vec<(f64, f64)>,
    /// Step kind of the chains.
    pub step: StepKind,
    /// Number of equal steps for the exact-solution checks.
    pub exact_steps: usize,
    /// Deviations beyond this many standard errors count as failures.
    pub sigma_limit: f64,
    /// κ values for the CLE checks (each in (8/3, 8); empty: none).
    pub cle_kappas: Vec<f64>,
    /// CLE configurations per κ (three marked points in each).
    pub cle_samples: usize,
}

impl AuditSettings {
    /// Defaults at a modest size (runs in seconds).
    pub fn quick(seed: u64) -> Self {
        AuditSettings {
            seed,
            samples: 2000,
            ratio: 0.1,
            point_step: 0.1,
            t_min: 1e-4,
            horizon: 1e4,
            kappas: vec![2.0, 8.0 / 3.0, 4.0],
            points: vec![(1.0, 1.0), (-0.5, 1.0), (2.0, 0.5)],
            step: StepKind::Tilted,
            exact_steps: 256,
            sigma_limit: 4.0,
            cle_kappas: vec![3.0, 6.0],
            cle_samples: 2000,
        }
    }

    /// Check every setting.
    ///
    /// # Errors
    /// The first setting out of range.
    pub fn validate(&self) -> Result<()> {
        for &k in &self.cle_kappas {
            crate::laws::CleLaw::new(k)?;
        }
        if !self.cle_kappas.is_empty() && !(10..=10_000_000).contains(&self.cle_samples) {
            return Err(Error::param(
                "cle-samples",
                self.cle_samples as f64,
                "an integer in [10, 1e7] (or no CLE kappa)",
            ));
        }
        if self.samples < 10 {
            return Err(Error::param("samples", self.samples, "an integer ≥ 10"));
        }
        if !(self.ratio.is_finite() && self.ratio > 0.0 && self.ratio <= 1.0) {
            return Err(Error::param("ratio", self.ratio, "a number in (0, 1]"));
        }
        if !(self.point_step.is_finite() && (1e-4..=1.0).contains(&self.point_step)) {
            return Err(Error::param(
                "point-step",
                self.point_step,
                "a number in [1e-4, 1]",
            ));
        }
        if !(self.horizon <= 1e12 && self.t_min >= 1e-12) {
            return Err(Error::param("horizon", self.horizon, "at most 1e12"));
        }
        let base_steps = (self.horizon / self.t_min).ln() / self.ratio.ln_1p();
        if base_steps.is_nan() || base_steps > 1e6 {
            return Err(Error::param(
                "ratio",
                self.ratio,
                format!(
                    "large enough that the base grid has at most 1e6 steps (it would have \
                     {base_steps:.1e})"
                ),
            ));
        }
        if !(self.horizon.is_finite() && self.horizon > self.t_min && self.t_min > 0.0) {
            return Err(Error::param(
                "horizon",
                self.horizon,
                format!("a finite number > t_min = {}", self.t_min),
            ));
        }
        for &k in &self.kappas {
            if !(k.is_finite() && k > 0.0 && k < 8.0) {
                return Err(Error::param(
                    "kappa",
                    k,
                    "a number in (0, 8) for left passage",
                ));
            }
        }
        for &(x, y) in &self.points {
            if !(x.is_finite() && y.is_finite() && y > 0.0) {
                return Err(Error::param(
                    "at",
                    format!("{x},{y}"),
                    "a point x,y of the upper half-plane (y > 0)",
                ));
            }
        }
        if self.exact_steps < 2 || self.exact_steps > 1 << 16 {
            return Err(Error::param("exact-steps", self.exact_steps, "2 to 65536"));
        }
        Ok(())
    }
}

/// Outcome of one check.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Verdict {
    /// Within tolerance.
    Pass,
    /// Outside tolerance.
    Fail,
    /// Reported for information (no tolerance applies).
    Info,
    /// Within tolerance, but the bias bound (finite horizon) exceeds a quarter of the standard
    /// error, so the check cannot tell: lengthen `horizon` or lower `samples`.
    Inconclusive,
}

/// One row of the audit table.
#[derive(Debug, Clone, Serialize)]
pub struct CheckRow {
    /// What is checked.
    pub check: String,
    /// Published source of the exact value.
    pub source: &'static str,
    /// The estimate (or computed value, for deterministic checks).
    pub estimate: f64,
    /// Standard error of the estimate (statistical checks only).
    pub std_error: Option<f64>,
    /// The exact value.
    pub exact: f64,
    /// `(estimate − exact) / std_error` (statistical checks only).
    pub deviation_sigma: Option<f64>,
    /// A bound on the bias that the finite horizon or resolution can cause, when known.
    pub bias_bound: Option<f64>,
    /// The resolution used, in words.
    pub resolution: String,
    /// Pass, fail or information.
    pub verdict: Verdict,
}

/// One line of a pathwise convergence study: an error measure at one resolution.
#[derive(Debug, Clone, Serialize)]
pub struct ConvergenceRow {
    /// What is measured.
    pub study: String,
    /// Step kind.
    pub step: StepKind,
    /// Resolution parameter (number of steps, or `Δt/t`).
    pub resolution: f64,
    /// Error measure at this resolution (against the finest resolution of the same paths).
    pub error: f64,
    /// Standard error of the error measure, when it is an average over samples.
    pub std_error: Option<f64>,
    /// Observed order: slope of log error against log step size, over the whole study.
    pub observed_order: f64,
}

/// Everything an audit produced.
#[derive(Debug, Clone, Serialize)]
pub struct AuditReport {
    /// The settings.
    pub settings: AuditSettings,
    /// The check table.
    pub checks: Vec<CheckRow>,
    /// The convergence studies.
    pub convergence: Vec<ConvergenceRow>,
}

impl AuditReport {
    /// True when no check failed.
    pub fn passed(&self) -> bool {
        self.checks.iter().all(|c| c.verdict != Verdict::Fail)
    }
}

const KNK: &str = "Kager, Nienhuis & Kadanoff, J. Stat. Phys. 2004";
const SCHRAMM: &str = "Schramm, Electron. Comm. Probab. 2001";

/// Run all checks. `progress` is called with the number of finished work units out of the total.
///
/// # Errors
/// Invalid settings.
pub fn run(settings: &AuditSettings, progress: &(dyn Fn(u64, u64) + Sync)) -> Result<AuditReport> {
    settings.validate()?;
    let mut checks = exact_checks(settings.exact_steps)?;
    let total = (settings.kappas.len() * settings.samples) as u64;
    let done = std::sync::atomic::AtomicU64::new(0);
    for &kappa in &settings.kappas {
        checks.extend(left_passage_checks(settings, kappa, &|n| {
            let d = done.fetch_add(n, std::sync::atomic::Ordering::Relaxed) + n;
            progress(d, total);
        })?);
    }
    for &kappa in &settings.cle_kappas {
        checks.extend(cle_checks(settings, kappa)?);
    }
    let mut convergence = ray_convergence()?;
    convergence.extend(endpoint_convergence(settings.seed)?);
    convergence.extend(left_passage_convergence(settings)?);
    Ok(AuditReport {
        settings: settings.clone(),
        checks,
        convergence,
    })
}

const SSW: &str = "Schramm, Sheffield & Wilson, Commun. Math. Phys. 2009";

/// Marked points of the CLE checks: the first target and two points away from it.
pub const CLE_POINTS: [(f64, f64); 3] = [(0.0, 0.0), (0.5, 0.0), (-0.3, 0.5)];

/// The conformal-radius law at three marked points of one CLE_κ configuration (levels 1 and 2,
/// E[T] and E[CR]), then E[T] at the target for steps 0.04, 0.02, 0.01, 0.005 on the same
/// streams (the discretisation study; Info rows, with their standard errors).
///
/// # Errors
/// κ outside (8/3, 8).
pub fn cle_checks(s: &AuditSettings, kappa: f64) -> Result<Vec<CheckRow>> {
    use crate::cle::{CleExplorer, ExploreSettings};
    use crate::laws::CleLaw;
    let law = CleLaw::new(kappa)?;
    let pts: Vec<Complex64> = CLE_POINTS
        .iter()
        .map(|&(x, y)| Complex64::new(x, y))
        .collect();
    let seed = s.seed ^ 0x636c_6500 ^ kappa.to_bits();
    let explore = ExploreSettings::defaults(kappa, 2);
    let ex = CleExplorer::new(kappa, &pts, explore)?;
    let n = s.cle_samples as u64;
    let samples: Vec<_> = (0..n).into_par_iter().map(|i| ex.sample(seed, i)).collect();
    let mut rows = Vec::new();
    let e1 = law.cr_moment(1.0)?;
    let sd_cr = (law.cr_moment(2.0)? - e1 * e1).sqrt();
    for (j, &(x, y)) in CLE_POINTS.iter().enumerate() {
        for level in 1..=2usize {
            let t: Vec<f64> = samples
                .iter()
                .filter_map(|smp| {
                    let t = smp.points[j].times();
                    (t.len() >= level).then(|| if level == 1 { t[0] } else { t[1] - t[0] })
                })
                .collect();
            let m = t.len() as f64;
            let mean = t.iter().sum::<f64>() / m;
            let cr = t.iter().map(|v| (-v).exp()).sum::<f64>() / m;
            for (what, est, exact, se) in [
                ("E[ΔT]", mean, law.mean_t(), (law.var_t() / m).sqrt()),
                ("E[CR]", cr, e1, sd_cr / m.sqrt()),
            ] {
                let dev = (est - exact) / se;
                rows.push(CheckRow {
                    check: format!(
                        "CLE_{}: {what} at level {level} around ({x}, {y}), 3 points per configuration",
                        fmt_kappa(kappa)
                    ),
                    source: SSW,
                    estimate: est,
                    std_error: Some(se),
                    exact,
                    deviation_sigma: Some(dev),
                    bias_bound: None,
                    resolution: format!(
                        "{} configurations, angle step {}",
                        t.len(),
                        explore.h_max
                    ),
                    verdict: if dev.abs() <= s.sigma_limit {
                        Verdict::Pass
                    } else {
                        Verdict::Fail
                    },
                });
            }
        }
    }
    let m = 2 * n;
    for h in [0.04, 0.02, 0.01, 0.005] {
        let mut st = ExploreSettings::defaults(kappa, 1);
        st.h_max = h;
        let one = CleExplorer::new(kappa, &[Complex64::new(0.0, 0.0)], st)?;
        let t: Vec<f64> = (0..m)
            .into_par_iter()
            .filter_map(|i| one.sample(seed, i).points[0].times().first().copied())
            .collect();
        let mean = t.iter().sum::<f64>() / t.len() as f64;
        let se = (law.var_t() / t.len() as f64).sqrt();
        rows.push(CheckRow {
            check: format!(
                "CLE_{}: E[T] at the target, angle step {h} (discretisation study)",
                fmt_kappa(kappa)
            ),
            source: SSW,
            estimate: mean,
            std_error: Some(se),
            exact: law.mean_t(),
            deviation_sigma: Some((mean - law.mean_t()) / se),
            bias_bound: None,
            resolution: format!("{} explorations, same streams at every step", t.len()),
            verdict: Verdict::Info,
        });
    }
    Ok(rows)
}

/// Exact solutions: constant driving (both step kinds) and `W = c√t` (one tilted step is exact;
/// the chain of `n` steps converges to it).
///
/// # Errors
/// Only for an invalid number of steps.
pub fn exact_checks(n: usize) -> Result<Vec<CheckRow>> {
    let mut rows = Vec::new();
    let t = 1.0;
    let zero = DrivingFunction::from_fn(t, n, |_| 0.0)?;
    for kind in [StepKind::Vertical, StepKind::Tilted] {
        let chain = ChordalChain::new(&zero, kind);
        let trace = chain.trace(Method::Direct)?;
        let err = trace
            .iter()
            .zip(zero.times())
            .map(|(z, &s)| (z - Complex64::new(0.0, 2.0 * s.sqrt())).norm())
            .fold(0.0, f64::max);
        rows.push(CheckRow {
            check: format!(
                "W ≡ 0: trace on [0, 2i√t], {} slits, max error",
                kind.name()
            ),
            source: KNK,
            estimate: err,
            std_error: None,
            exact: 0.0,
            deviation_sigma: None,
            bias_bound: None,
            resolution: format!("{n} equal steps, t = 1"),
            verdict: if err <= 1e-12 {
                Verdict::Pass
            } else {
                Verdict::Fail
            },
        });
    }
    for alpha in [0.15f64, 0.3, 0.7] {
        let c = 2.0 * (1.0 - 2.0 * alpha) / (alpha * (1.0 - alpha)).sqrt();
        let step = ChordalStep::tilted(0.0, c * t.sqrt(), t);
        // The tip as the image of W_t under the map (not the closed form of `tip()`), so the
        // check tests the map against the KNK angle.
        let tip = step.inverse(Complex64::new(step.w_end, 0.0));
        let angle_err = (tip.arg() / std::f64::consts::PI - alpha).abs();
        rows.push(CheckRow {
            check: format!("W = c√t, α = {alpha}: angle of the one-step trace / π"),
            source: KNK,
            estimate: tip.arg() / std::f64::consts::PI,
            std_error: None,
            exact: alpha,
            deviation_sigma: None,
            bias_bound: None,
            resolution: "1 tilted step (exact)".into(),
            verdict: if angle_err <= 1e-12 {
                Verdict::Pass
            } else {
                Verdict::Fail
            },
        });
        for kind in [StepKind::Tilted, StepKind::Vertical] {
            let d = DrivingFunction::from_fn(t, n, |s| c * s.sqrt())?;
            let end = ChordalChain::new(&d, kind).trace_point(n);
            let rel = (end - tip).norm() / tip.norm();
            rows.push(CheckRow {
                check: format!(
                    "W = c√t, α = {alpha}: endpoint error / |γ(1)|, {} slits",
                    kind.name()
                ),
                source: KNK,
                estimate: rel,
                std_error: None,
                exact: 0.0,
                deviation_sigma: None,
                bias_bound: None,
                resolution: format!("{n} equal steps (first-order scheme)"),
                verdict: Verdict::Info,
            });
        }
    }
    Ok(rows)
}

/// Deepest bisection of a base step in the point-adaptive walk.
const MAX_POINT_LEVEL: u8 = 30;

/// Flow points forward through one sampled curve, `z ↦ g_T(z) − W_T`, bisecting steps where a
/// point needs it (see [`AuditSettings::point_step`]). With tilted slits, points whose image is
/// already on (or within 1e-9 relative of) the real line are decided and no longer drive the
/// refinement.
/// Returns the images and the number of steps used.
pub fn flow_points(
    path: &BrownianPath,
    step: StepKind,
    points: &[Complex64],
    eps: f64,
) -> (Vec<Complex64>, usize) {
    let mut g = points.to_vec();
    let mut w_last = 0.0;
    let n = path.walk_adaptive(MAX_POINT_LEVEL, |t0, t1, w0, w1, last| {
        let dt = t1 - t0;
        if !last {
            for z in &g {
                // Decided points stop driving the refinement, except with vertical slits, whose
                // driving jumps: a jump across a point's image would move it to the other side.
                if step == StepKind::Tilted && z.im <= 1e-9 * (z.re - w0).abs() {
                    continue;
                }
                let d = (z - w0).norm_sqr().min((z - w1).norm_sqr());
                if 2.0 * dt > eps * d {
                    return false;
                }
            }
        }
        let s = ChordalStep::new(step, w0, w1, dt);
        for z in g.iter_mut() {
            *z = s.forward(*z);
        }
        w_last = w1;
        true
    });
    (g.into_iter().map(|z| z - w_last).collect(), n)
}

/// The side of the curve a point ends on, from `Z = g_T(z) − W_T`: true when the curve passes
/// to its left (`Re Z > 0`); and the probability that this could still change after T, given
/// by Schramm's formula at Z.
fn side(kappa: f64, z: Complex64) -> (bool, f64) {
    let residual = if z.im > 0.0 {
        laws::schramm_left_passage(kappa, z.re, z.im)
            .map(|h| h.min(1.0 - h))
            .unwrap_or(0.0)
    } else {
        0.0
    };
    (z.re > 0.0, residual)
}

fn left_passage_checks(
    s: &AuditSettings,
    kappa: f64,
    progress: &(dyn Fn(u64) + Sync),
) -> Result<Vec<CheckRow>> {
    let points: Vec<Complex64> = s
        .points
        .iter()
        .map(|&(x, y)| Complex64::new(x, y))
        .collect();
    // Each κ its own streams, so rows for different κ are independent samples.
    let kappa_seed = s.seed ^ kappa.to_bits().rotate_left(23);
    // One sample: indicator and residual per point. Collected in index order: thread-independent.
    let per_sample: Vec<(Vec<(bool, f64)>, usize)> = (0..s.samples as u64)
        .into_par_iter()
        .map(|i| {
            let path = BrownianPath::geometric(kappa, s.t_min, s.horizon, s.ratio, kappa_seed, i)
                .expect("validated settings");
            let (images, n) = flow_points(&path, s.step, &points, s.point_step);
            if i % 64 == 63 {
                progress(64);
            }
            (images.into_iter().map(|z| side(kappa, z)).collect(), n)
        })
        .collect();
    let steps: Moments = per_sample.iter().map(|v| v.1 as f64).collect();
    let per_sample: Vec<Vec<(bool, f64)>> = per_sample.into_iter().map(|v| v.0).collect();
    let mut rows = Vec::new();
    for (j, &(x, y)) in s.points.iter().enumerate() {
        let hits: Moments = per_sample.iter().map(|v| v[j].0 as u8 as f64).collect();
        let residual: Moments = per_sample.iter().map(|v| v[j].1).collect();
        let p = hits.mean();
        // Binomial standard error under the exact law, √(p₀(1−p₀)/n): the σ of the test, and
        // well defined even when every curve falls on one side.
        let exact = laws::schramm_left_passage(kappa, x, y)?;
        let se = (exact * (1.0 - exact) / hits.n as f64).sqrt().max(1e-300);
        let dev = (p - exact) / se;
        rows.push(CheckRow {
            check: format!("left passage, κ = {}, z = {x}{:+}i", fmt_kappa(kappa), y),
            source: SCHRAMM,
            estimate: p,
            std_error: Some(se),
            exact,
            deviation_sigma: Some(dev),
            bias_bound: Some(residual.mean()),
            resolution: format!(
                "{} curves to t = {:e}; {} slits; 2Δt ≤ {}·|g(z) − W|² (mean {:.0} steps)",
                s.samples,
                s.horizon,
                s.step.name(),
                s.point_step,
                steps.mean()
            ),
            verdict: if dev.abs() > s.sigma_limit {
                Verdict::Fail
            } else if residual.mean() > 0.25 * se {
                Verdict::Inconclusive
            } else {
                Verdict::Pass
            },
        });
    }
    Ok(rows)
}

/// κ written as a fraction when it is 8/3 or 16/3.
pub fn fmt_kappa(k: f64) -> String {
    for (num, den) in [(8, 3), (16, 3)] {
        if (k - num as f64 / den as f64).abs() < 1e-12 {
            return format!("{num}/{den}");
        }
    }
    if k != 0.0 && !(1e-3..1e4).contains(&k.abs()) {
        return format!("{k:e}");
    }
    format!("{k}")
}

/// `W = c√t`, α = 0.3: relative endpoint error against the exact ray as the number of equal
/// steps doubles, for both step kinds.
fn ray_convergence() -> Result<Vec<ConvergenceRow>> {
    let alpha: f64 = 0.3;
    let c = 2.0 * (1.0 - 2.0 * alpha) / (alpha * (1.0 - alpha)).sqrt();
    let tip = ChordalStep::tilted(0.0, c, 1.0).tip();
    let ns: Vec<usize> = (4..=11).map(|p| 1usize << p).collect();
    let mut rows = Vec::new();
    for kind in [StepKind::Tilted, StepKind::Vertical] {
        let errs: Vec<(f64, f64)> = ns
            .iter()
            .map(|&n| {
                let d = DrivingFunction::from_fn(1.0, n, |s| c * s.sqrt()).expect("valid");
                let end = ChordalChain::new(&d, kind).trace_point(n);
                (1.0 / n as f64, (end - tip).norm() / tip.norm())
            })
            .collect();
        let order = log_log_slope(&errs);
        for (h, e) in errs {
            rows.push(ConvergenceRow {
                study: "W = c√t (α = 0.3): |γ_N(1) − exact| / |exact| vs N".into(),
                step: kind,
                resolution: (1.0 / h).round(),
                error: e,
                std_error: None,
                observed_order: order,
            });
        }
    }
    Ok(rows)
}

/// Brownian driving, κ = 4, t = 1: the same 200 paths at N = 2^5 … 2^11 equal steps; the mean
/// distance of the endpoint `γ(1)` from its value on the finest grid (2^13 steps).
fn endpoint_convergence(seed: u64) -> Result<Vec<ConvergenceRow>> {
    let fine_p = 13;
    let paths = 200u64;
    let mut rows = Vec::new();
    for kind in [StepKind::Tilted, StepKind::Vertical] {
        let per_path: Vec<Vec<f64>> = (0..paths)
            .into_par_iter()
            .map(|i| {
                let path = BrownianPath::uniform(4.0, 1.0, 1 << fine_p, seed, 1_000_000 + i)
                    .expect("valid");
                let fine = ChordalChain::new(path.driving(), kind).trace_point(1 << fine_p);
                (5..=11)
                    .map(|p| {
                        let d = path.driving().subsample(1 << (fine_p - p)).expect("valid");
                        let n = d.steps();
                        (ChordalChain::new(&d, kind).trace_point(n) - fine).norm()
                    })
                    .collect()
            })
            .collect();
        let mut errs = Vec::new();
        for (j, p) in (5..=11).enumerate() {
            let m: Moments = per_path.iter().map(|v| v[j]).collect();
            errs.push(((1u64 << p) as f64, m.mean(), m.std_error()));
        }
        let order = log_log_slope(&errs.iter().map(|e| (1.0 / e.0, e.1)).collect::<Vec<_>>());
        for (n, e, se) in errs {
            rows.push(ConvergenceRow {
                study: "Brownian driving, κ = 4, t = 1: mean |γ_N(1) − γ_8192(1)| over 200 paths"
                    .into(),
                step: kind,
                resolution: n,
                error: e,
                std_error: Some(se),
                observed_order: order,
            });
        }
    }
    Ok(rows)
}

/// Left passage on the same paths at point-step bounds ε = 8ε₀, 4ε₀, 2ε₀ against ε₀ = ε/4:
/// the fraction of (curve, point) pairs whose side differs from the finest walk, at the first κ
/// of the settings. The walks bisect with the same bridge normals, so they follow one path.
fn left_passage_convergence(s: &AuditSettings) -> Result<Vec<ConvergenceRow>> {
    let kappa = s.kappas.first().copied().unwrap_or(4.0);
    let finest = s.point_step / 4.0;
    let factors = [8.0, 4.0, 2.0];
    let samples = s.samples.min(1000) as u64;
    let points: Vec<Complex64> = s
        .points
        .iter()
        .map(|&(x, y)| Complex64::new(x, y))
        .collect();
    let flips: Vec<Vec<f64>> = (0..samples)
        .into_par_iter()
        .map(|i| {
            let path =
                BrownianPath::geometric(kappa, s.t_min, s.horizon, s.ratio, s.seed ^ 0x5eed, i)
                    .expect("valid");
            let sides = |eps: f64| -> Vec<bool> {
                flow_points(&path, s.step, &points, eps)
                    .0
                    .into_iter()
                    .map(|z| z.re > 0.0)
                    .collect()
            };
            let fine = sides(finest);
            factors
                .iter()
                .map(|&f| {
                    let coarse = sides(finest * f);
                    coarse.iter().zip(&fine).filter(|(a, b)| a != b).count() as f64
                        / points.len() as f64
                })
                .collect()
        })
        .collect();
    let mut errs = Vec::new();
    for (j, &f) in factors.iter().enumerate() {
        let m: Moments = flips.iter().map(|v| v[j]).collect();
        errs.push((finest * f, m.mean(), m.std_error()));
    }
    let order = log_log_slope(&errs.iter().map(|e| (e.0, e.1)).collect::<Vec<_>>());
    Ok(errs
        .into_iter()
        .map(|(eps, e, se)| ConvergenceRow {
            study: format!(
                "left passage, κ = {}: fraction of sides that differ from the walk with ε = {} ({} curves)",
                fmt_kappa(kappa),
                finest,
                samples
            ),
            step: s.step,
            resolution: eps,
            error: e,
            std_error: Some(se),
            observed_order: order,
        })
        .collect())
}
