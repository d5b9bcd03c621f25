//! Chordal SLE_κ in the upper half-plane, from 0 to ∞, sampled with the zipper.
//!
//! Convention (DESIGN §2): `∂_t g_t(z) = 2/(g_t(z) − W_t)`, `W_t = √κ B_t`, `hcap(K_t) = 2t`.
//! A sample is the trace `γ(t_0), …, γ(t_N)` of the discretised chain of a Brownian driving
//! function ([`crate::driving::BrownianPath`]). The grid is either `N` equal capacity steps, or is
//! refined adaptively by Brownian bridges until consecutive trace points are at most a given
//! distance apart ([`Resolution::Spacing`]).

use crate::driving::{check_kappa, check_time, BrownianPath, DrivingFunction, MAX_BISECTION_LEVEL};
use crate::error::{Error, Result};
use crate::loewner::{ChordalChain, Method, StepKind};
use num_complex::Complex64;
use serde::{Deserialize, Serialize};

/// A spacing target for adaptive refinement: consecutive trace points `p, q` must satisfy
/// `|p − q| ≤ min(absolute, relative · max(r, inner_radius))`, where `r` is the smaller distance
/// of `p`, `q` from the start point `γ(0)` (unset bounds count as +∞).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SpacingRule {
    /// Absolute bound on the distance between consecutive points, if any.
    pub absolute: Option<f64>,
    /// Bound as a fraction of the distance from the start point, if any.
    pub relative: Option<f64>,
    /// Distances from the start below this count as this (keeps a relative bound finite).
    pub inner_radius: f64,
    /// Equal capacity steps of the initial grid, before refinement.
    pub base_steps: usize,
    /// Refinement stops (with the target unmet, and a flag in the result) at this many steps.
    pub max_points: usize,
}

impl SpacingRule {
    /// The allowed spacing between two consecutive points at distances `r0, r1` from the start.
    pub fn allowed(&self, r0: f64, r1: f64) -> f64 {
        let a = self.absolute.unwrap_or(f64::INFINITY);
        let r = self
            .relative
            .map(|f| f * r0.min(r1).max(self.inner_radius))
            .unwrap_or(f64::INFINITY);
        a.min(r)
    }

    fn validate(&self) -> Result<()> {
        if self.absolute.is_none() && self.relative.is_none() {
            return Err(Error::param(
                "spacing",
                "none",
                "give an absolute spacing, a relative spacing, or both",
            ));
        }
        if let Some(a) = self.absolute {
            if !(a.is_finite() && a > 0.0) {
                return Err(Error::param("spacing", a, "a finite number > 0"));
            }
        }
        if let Some(r) = self.relative {
            if !(r.is_finite() && r > 0.0 && r <= 1.0) {
                return Err(Error::param("spacing-rel", r, "a number in (0, 1]"));
            }
        }
        if !(self.inner_radius.is_finite() && self.inner_radius > 0.0) {
            return Err(Error::param(
                "inner-radius",
                self.inner_radius,
                "a finite number > 0",
            ));
        }
        if self.base_steps == 0 || self.base_steps > 1 << 20 {
            return Err(Error::param("base-steps", self.base_steps, "1 to 1048576"));
        }
        if self.max_points < self.base_steps {
            return Err(Error::param(
                "max-points",
                self.max_points,
                format!("at least the base steps ({})", self.base_steps),
            ));
        }
        Ok(())
    }
}

/// How finely a curve is discretised.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Resolution {
    /// `N` equal capacity steps, no refinement.
    Points(usize),
    /// Adaptive refinement to a spacing target.
    Spacing(SpacingRule),
}

/// A chordal SLE_κ sampler with validated parameters.
#[derive(Debug, Clone, Serialize)]
pub struct ChordalSle {
    kappa: f64,
    time: f64,
    resolution: Resolution,
    step: StepKind,
    method: Method,
}

/// One sampled chordal curve in H with its driving function and resolution diagnostics.
#[derive(Debug, Clone)]
pub struct ChordalCurve {
    /// Sample index within its run (the curve is a pure function of the seed and this index).
    pub index: u64,
    /// The driving function on the final grid (capacity time `t`, value `W_t`).
    pub driving: DrivingFunction,
    /// Trace points `γ(t_k)`, one per grid time.
    pub points: Vec<Complex64>,
    /// Largest distance between consecutive trace points.
    pub max_spacing: f64,
    /// For adaptive runs: whether every spacing met the target (false when `max_points` or the
    /// deepest bisection level stopped refinement). Always true for equal steps.
    pub target_met: bool,
    /// Steps that still miss the target although bisected to [`MAX_BISECTION_LEVEL`]: places
    /// where the curve moves far in little capacity time (a slow clock), not a budget problem.
    pub depth_limited: usize,
    /// Number of refinement passes used.
    pub passes: usize,
}

impl ChordalSle {
    /// A sampler of chordal SLE_κ up to capacity time `time`.
    ///
    /// # Errors
    /// κ not finite and > 0; time not finite and > 0; a bad resolution; an unavailable method.
    pub fn new(
        kappa: f64,
        time: f64,
        resolution: Resolution,
        step: StepKind,
        method: Method,
    ) -> Result<Self> {
        check_kappa(kappa)?;
        check_time(time)?;
        if kappa > 1e4 {
            return Err(Error::param("kappa", kappa, "a number in (0, 1e4]"));
        }
        if !(1e-12..=1e12).contains(&time) {
            return Err(Error::param(
                "time",
                time,
                "a number in [1e-12, 1e12] (rescale: SLE at time t is √t times SLE at time 1)",
            ));
        }
        match resolution {
            Resolution::Points(n) => {
                if n == 0 || n > crate::driving::MAX_BASE_STEPS {
                    return Err(Error::param(
                        "points",
                        n,
                        format!("an integer from 1 to {}", crate::driving::MAX_BASE_STEPS),
                    ));
                }
            }
            Resolution::Spacing(rule) => rule.validate()?,
        }
        method.check_available()?;
        Ok(ChordalSle {
            kappa,
            time,
            resolution,
            step,
            method,
        })
    }

    /// κ.
    pub fn kappa(&self) -> f64 {
        self.kappa
    }

    /// Final capacity time `t` (half-plane capacity `2t`).
    pub fn time(&self) -> f64 {
        self.time
    }

    /// The resolution setting.
    pub fn resolution(&self) -> Resolution {
        self.resolution
    }

    /// The step kind.
    pub fn step(&self) -> StepKind {
        self.step
    }

    /// The trace method.
    pub fn method(&self) -> Method {
        self.method
    }

    /// Sample curve `index` of the run with `seed`.
    pub fn sample(&self, seed: u64, index: u64) -> ChordalCurve {
        match self.resolution {
            Resolution::Points(n) => {
                let path = BrownianPath::uniform(self.kappa, self.time, n, seed, index)
                    .expect("parameters validated by the constructor");
                let chain = ChordalChain::new(path.driving(), self.step);
                let points = chain.trace(self.method).expect("method validated");
                ChordalCurve {
                    index,
                    max_spacing: max_spacing(&points),
                    driving: path.driving().clone(),
                    points,
                    target_met: true,
                    depth_limited: 0,
                    passes: 1,
                }
            }
            Resolution::Spacing(rule) => self.sample_adaptive(rule, seed, index),
        }
    }

    fn sample_adaptive(&self, rule: SpacingRule, seed: u64, index: u64) -> ChordalCurve {
        let mut path = BrownianPath::uniform(self.kappa, self.time, rule.base_steps, seed, index)
            .expect("parameters validated by the constructor");
        let mut chain = ChordalChain::new(path.driving(), self.step);
        let mut points = chain.trace(self.method).expect("method validated");
        // `fresh`: every point was computed with the current chain. Between full evaluations only
        // the points a refinement inserts are computed; the others keep values from an earlier,
        // slightly coarser chain, which is accurate enough to decide where to refine next. The
        // result is always a full evaluation with the final chain.
        let mut fresh = true;
        let mut passes = 1;
        loop {
            let start = points[0];
            let n = points.len() - 1;
            let mut requests: Vec<(f64, usize, u8)> = Vec::new();
            let mut blocked = 0usize;
            for k in 0..n {
                let d = (points[k + 1] - points[k]).norm();
                let allowed =
                    rule.allowed((points[k] - start).norm(), (points[k + 1] - start).norm());
                if d > allowed {
                    if path.depth(k) >= MAX_BISECTION_LEVEL {
                        blocked += 1;
                        continue;
                    }
                    // Spacing scales like √Δt at typical times: split into ≈ (d/allowed)² pieces.
                    let want = ((d / allowed).powi(2)).log2().ceil().clamp(1.0, 10.0) as u8;
                    requests.push((d / allowed, k, want));
                }
            }
            // Within the point budget, refine the worst steps first.
            let mut room = rule.max_points.saturating_sub(n);
            requests.sort_by(|a, b| b.0.total_cmp(&a.0));
            let mut chosen = Vec::new();
            for &(_, k, want) in &requests {
                // Near the budget, split less deeply so that the worst steps all get some.
                let fit = (usize::BITS - 1 - (room + 1).leading_zeros()) as u8;
                let want = want.min(fit);
                if want == 0 {
                    break;
                }
                room -= (1usize << want) - 1;
                chosen.push((k, want));
            }
            if chosen.is_empty() {
                if !fresh {
                    points = chain.trace(self.method).expect("method validated");
                    fresh = true;
                    passes += 1;
                    continue;
                }
                return ChordalCurve {
                    index,
                    max_spacing: max_spacing(&points),
                    driving: path.driving().clone(),
                    points,
                    target_met: requests.is_empty() && blocked == 0,
                    depth_limited: blocked,
                    passes,
                };
            }
            let old_t = path.driving().times().to_vec();
            path.refine_steps(&chosen);
            chain = ChordalChain::new(path.driving(), self.step);
            let new_t = path.driving().times();
            // Old grid times are kept exactly, so a merge walk finds the inserted samples.
            let mut merged: Vec<Option<Complex64>> = Vec::with_capacity(new_t.len());
            let mut i = 0;
            for &t in new_t {
                if i < old_t.len() && old_t[i] == t {
                    merged.push(Some(points[i]));
                    i += 1;
                } else {
                    merged.push(None);
                }
            }
            let inserted: Vec<usize> = (0..merged.len()).filter(|&j| merged[j].is_none()).collect();
            // A handful of points is cheaper to compose directly than to rebuild a block tree.
            let how = if inserted.len() <= 64 {
                Method::Direct
            } else {
                self.method
            };
            let values = chain.trace_at(how, &inserted).expect("method validated");
            for (&j, v) in inserted.iter().zip(values) {
                merged[j] = Some(v);
            }
            points = merged
                .into_iter()
                .map(|p| p.expect("every sample filled"))
                .collect();
            fresh = false;
            passes += 1;
        }
    }
}

/// Largest distance between consecutive points of a polyline (0 for fewer than two points).
pub fn max_spacing(points: &[Complex64]) -> f64 {
    points
        .windows(2)
        .map(|w| (w[1] - w[0]).norm())
        .fold(0.0, f64::max)
}

/// The trace of a deterministic (user-given) driving function, with the chosen step kind.
///
/// # Errors
/// An unavailable method.
pub fn trace_of(
    driving: &DrivingFunction,
    step: StepKind,
    method: Method,
) -> Result<Vec<Complex64>> {
    ChordalChain::new(driving, step).trace(method)
}
