//! Unzipping: the Loewner driving function of a given curve (DESIGN §9).
//!
//! A polyline `γ_0, γ_1, …, γ_N` starting on the boundary is removed segment by segment: the
//! image of `γ_k` under the maps of the earlier steps is a point `p` of H (or D), and step `k`
//! is the explicit slit map that sends `p` to the boundary. With *tilted* slits (the default) the
//! slit is the straight segment from the previous tip's image (on the boundary) to `p`, the
//! Kager–Nienhuis–Kadanoff slit (J. Stat. Phys. 2004) of driving `W = W_{k−1} + c√(t − t_{k−1})`;
//! the recovered driving function is continuous. With *vertical* slits the slit is the segment
//! from `Re p` to `p` and the driving function jumps to `Re p`. This is the zipper algorithm of
//! Marshall & Rohde (SIAM J. Numer. Anal. 2007), who prove its convergence for the slit variant.
//!
//! Conventions: chordal, `∂_t g_t = 2/(g_t − W_t)` in H (capacity `2t`); radial,
//! `∂_t g_t = g_t (e^{iξ_t} + g_t)/(e^{iξ_t} − g_t)` in D towards 0 (`t = −log CR`).
//!
//! Chordal unzipping uses [`crate::forward_tree`] (O(N log N) for curves whose far parts are far
//! in the current frame) or, with [`Method::Direct`], composes every step on every point
//! (O(N²), the reference). Radial unzipping composes directly, in parallel over the remaining
//! points.

use crate::error::{Error, Result};
use crate::forward_tree::ForwardChain;
use crate::loewner::{ChordalStep, Method, StepKind};
use crate::radial::{cayley, RadialStep, TiltedRadialStep};
use num_complex::Complex64;
use rayon::prelude::*;
use serde::Serialize;
use std::f64::consts::PI;

/// A point whose image in the current frame is this close to the boundary (relative to its
/// modulus, or to 1 in the disk) is not unzipped: it lies on the boundary or on the curve
/// already removed (a touch point, or a tiny back-step).
const ON_BOUNDARY: f64 = 1e-12;

/// The driving function recovered from a curve, with what was left out.
#[derive(Debug, Clone, Serialize)]
pub struct Unzipped {
    /// Loewner time after each step, starting with 0: capacity time (chordal) or radial time.
    pub times: Vec<f64>,
    /// Driving value after each step, starting with the start's value: `W_t` (chordal) or the
    /// angle `ξ_t`, continuous (radial).
    pub driving: Vec<f64>,
    /// Index (in the input) of the curve point each step removed; `used[0] = 0` is the start.
    pub used: Vec<usize>,
    /// Indices of points not unzipped because their image lay on the boundary.
    pub skipped: Vec<usize>,
    /// Slit shape of the steps.
    pub slit: StepKind,
}

impl Unzipped {
    /// Number of steps taken.
    pub fn steps(&self) -> usize {
        self.times.len() - 1
    }

    /// Final Loewner time.
    pub fn final_time(&self) -> f64 {
        *self.times.last().unwrap_or(&0.0)
    }
}

/// The chordal slit map that removes the segment from `base` (real) to `p` (in H): the tilted
/// slit of the KNK family whose tip is `p` exactly.
pub fn tilted_step_to(base: f64, p: Complex64) -> ChordalStep {
    let d = p - base;
    let alpha = (d.arg() / PI).clamp(1e-12, 1.0 - 1e-12);
    let len = d.norm();
    // Tip length = 2√Δt · ((1 − α)/α)^{(1 − 2α)/2} (from x_l^{1−α} x_r^α, DESIGN §3).
    let factor = ((1.0 - alpha) / alpha).powf(0.5 * (1.0 - 2.0 * alpha));
    let sq = len / (2.0 * factor);
    let c = 2.0 * (1.0 - 2.0 * alpha) / (alpha * (1.0 - alpha)).sqrt();
    ChordalStep::tilted(base, base + c * sq, sq * sq)
}

/// The vertical slit map that removes the segment from `Re p` to `p`.
pub fn vertical_step_to(p: Complex64) -> ChordalStep {
    ChordalStep::vertical(p.re, 0.25 * p.im * p.im)
}

/// The chordal unzip of a curve in H from `points[0] = 0`, with the composed map kept for
/// evaluating other points (for example, which side of the curve they lie on).
#[derive(Debug, Clone)]
pub struct ChordalUnzip {
    /// The recovered driving function and bookkeeping.
    pub result: Unzipped,
    chain: ForwardChain,
}

impl ChordalUnzip {
    /// Unzip `points` (in H, `points[0]` must be 0) with the given slit shape; `Method::Fast`
    /// uses the block tree, `Method::Direct` composes every step.
    ///
    /// # Errors
    /// [`Error::InvalidData`] if the curve has fewer than two points, does not start at 0, or a
    /// point is not finite or lies below the real line.
    pub fn new(points: &[Complex64], slit: StepKind, method: Method) -> Result<Self> {
        if points.len() < 2 {
            return Err(Error::InvalidData(format!(
                "a curve needs at least 2 points to unzip, got {}",
                points.len()
            )));
        }
        if points[0] != Complex64::new(0.0, 0.0) {
            return Err(Error::InvalidData(format!(
                "a chordal curve in H must start at 0, got ({}, {})",
                points[0].re, points[0].im
            )));
        }
        for (i, z) in points.iter().enumerate() {
            if !(z.re.is_finite() && z.im.is_finite()) || z.im < 0.0 {
                return Err(Error::InvalidData(format!(
                    "point {i} = ({}, {}) is not a finite point of the closed upper half-plane",
                    z.re, z.im
                )));
            }
        }
        let mut chain = ForwardChain::new(method == Method::Fast);
        let mut times = vec![0.0];
        let mut driving = vec![0.0];
        let mut used = vec![0];
        let mut skipped = Vec::new();
        let mut t = 0.0;
        let mut w = 0.0;
        for (i, &z) in points.iter().enumerate().skip(1) {
            let p = chain.map_next_point(z);
            if p.im.is_nan() || p.im <= ON_BOUNDARY * (1.0 + p.norm()) || !p.re.is_finite() {
                skipped.push(i);
                continue;
            }
            let step = match slit {
                StepKind::Tilted => tilted_step_to(w, p),
                StepKind::Vertical => vertical_step_to(p),
            };
            t += step.dt;
            w = step.w_end;
            chain.push(step);
            times.push(t);
            driving.push(w);
            used.push(i);
        }
        Ok(ChordalUnzip {
            result: Unzipped {
                times,
                driving,
                used,
                skipped,
                slit,
            },
            chain,
        })
    }

    /// Image of `z` under the composed map `g_T` (all steps): a point of the closed upper
    /// half-plane; points swallowed by the curve end on the real line.
    pub fn map(&self, z: Complex64) -> Complex64 {
        self.chain.map(z)
    }

    /// Image and derivative of `g_T` at `z`.
    pub fn map_with_derivative(&self, z: Complex64) -> (Complex64, Complex64) {
        self.chain.map_with_derivative(z)
    }

    /// Whether the curve passes to the left of `z` (z lies on the right of the curve): the
    /// sign of `Re g_T(z) − W_T` (common practice; exact for a curve from 0 to ∞ when z is not
    /// on the curve). For a curve stopped at a finite point this is a statement about the
    /// curve so far.
    pub fn passes_left_of(&self, z: Complex64) -> bool {
        self.map(z).re > *self.result.driving.last().unwrap_or(&0.0)
    }

    /// The composed chain (steps in order).
    pub fn chain(&self) -> &ForwardChain {
        &self.chain
    }
}

/// Unzip a curve in the unit disk from the boundary point `points[0]` (|·| = 1) towards 0, on
/// the radial clock. Tilted steps use [`TiltedRadialStep`] (a slit from the previous tip's image
/// that is straight in that point's Cayley frame); vertical steps are radial segments.
///
/// # Errors
/// [`Error::InvalidData`] if there are fewer than two points, the first is not on the unit
/// circle (within 1e-9), or a point is not finite or lies outside the closed disk.
pub fn unzip_radial(points: &[Complex64], slit: StepKind) -> Result<Unzipped> {
    if points.len() < 2 {
        return Err(Error::InvalidData(format!(
            "a curve needs at least 2 points to unzip, got {}",
            points.len()
        )));
    }
    if (points[0].norm() - 1.0).abs() > 1e-9 {
        return Err(Error::InvalidData(format!(
            "a radial curve must start on the unit circle, got |z0| = {}",
            points[0].norm()
        )));
    }
    for (i, z) in points.iter().enumerate() {
        if !(z.re.is_finite() && z.im.is_finite()) || z.norm() > 1.0 + 1e-9 {
            return Err(Error::InvalidData(format!(
                "point {i} = ({}, {}) is not a finite point of the closed unit disk",
                z.re, z.im
            )));
        }
    }
    let mut cur: Vec<Complex64> = points.to_vec();
    let mut beta = points[0].arg();
    let mut times = vec![0.0];
    let mut driving = vec![beta];
    let mut used = vec![0];
    let mut skipped = Vec::new();
    let mut t = 0.0;
    for i in 1..points.len() {
        let p = cur[i];
        if p.norm().is_nan() || 1.0 - p.norm() <= ON_BOUNDARY {
            skipped.push(i);
            continue;
        }
        let rest = &mut cur[i + 1..];
        match slit {
            StepKind::Tilted => {
                let zeta = cayley(p * Complex64::from_polar(1.0, -beta));
                let chordal = tilted_step_to(0.0, zeta);
                let c = chordal.w_end / chordal.dt.sqrt();
                let step = TiltedRadialStep::new(beta, c, chordal.dt);
                apply_all(rest, |z| step.forward_with_derivative(z).0);
                t += step.dt;
                beta = step.tip_angle_after();
            }
            StepKind::Vertical => {
                let xi = beta + (p.arg() - beta + PI).rem_euclid(2.0 * PI) - PI;
                let x = p.norm();
                let a = (1.0 - x) / (1.0 + x);
                let dt = -(-a * a).ln_1p();
                let step = RadialStep::new(xi, dt);
                apply_all(rest, |z| step.forward(z));
                t += dt;
                beta = xi;
            }
        }
        times.push(t);
        driving.push(beta);
        used.push(i);
    }
    Ok(Unzipped {
        times,
        driving,
        used,
        skipped,
        slit,
    })
}

/// Apply `f` to every point, in parallel when there are many.
fn apply_all(points: &mut [Complex64], f: impl Fn(Complex64) -> Complex64 + Sync) {
    if points.len() > 2048 {
        points.par_chunks_mut(512).for_each(|c| {
            for z in c {
                *z = f(*z);
            }
        });
    } else {
        for z in points {
            *z = f(*z);
        }
    }
}
