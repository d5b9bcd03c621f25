//! Discretised chordal Loewner chains in the upper half-plane H (the zipper).
//!
//! Convention (DESIGN §2): `∂_t g_t(z) = 2/(g_t(z) − W_t)`, `g_0(z) = z`, `hcap(K_t) = 2t`.
//! Time is split into steps `0 = t_0 < t_1 < … < t_N`; on step k the driving function is replaced
//! by a simple one whose Loewner map is explicit, and the chain is the composition of these maps:
//! `g_{t_n}^{-1} = F_1 ∘ F_2 ∘ … ∘ F_n`, where `F_k` maps H onto H minus the slit grown on step k.
//!
//! Two explicit steps are provided:
//! * [`StepKind::Vertical`]: piecewise-constant driving `W ≡ W_k` on step k; the slit is the
//!   vertical segment `[W_k, W_k + 2i√Δt]`.
//! * [`StepKind::Tilted`]: driving `W(t) = W_{k−1} + c√(t − t_{k−1})` on step k, whose hull is a
//!   straight segment at angle απ, `c = 2(1−2α)/√(α(1−α))` (Kager, Nienhuis & Kadanoff,
//!   J. Stat. Phys. 2004). The driving function is continuous, and the chain converges faster.
//!
//! The *trace* `γ(t_n) = F_1 ∘ … ∘ F_n(tip_n)` computed point by point is the direct O(N²)
//! method ([`Method::Direct`]); it is the reference implementation.

use crate::driving::DrivingFunction;
use crate::error::Result;
use num_complex::Complex64;
use rayon::prelude::*;
use serde::Serialize;

/// Which explicit slit map each step of a chain uses.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Default)]
#[serde(rename_all = "kebab-case")]
pub enum StepKind {
    /// Piecewise-constant driving: vertical slits at the step's end value `W_k`.
    Vertical,
    /// Piecewise square-root driving: straight slits tilted at angle απ (the default).
    #[default]
    Tilted,
}

impl StepKind {
    /// Short name used in outputs (`vertical` or `tilted`).
    pub fn name(self) -> &'static str {
        match self {
            StepKind::Vertical => "vertical",
            StepKind::Tilted => "tilted",
        }
    }
}

/// How the trace of a chain is evaluated.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Default)]
#[serde(rename_all = "kebab-case")]
pub enum Method {
    /// Compose all maps for every point: O(N²) map evaluations. Reference method and test
    /// oracle.
    Direct,
    /// A tree of blocks with far-field (Laurent) expansions of their composed maps, see
    /// [`crate::fast`]: about N log N map evaluations; agrees with `Direct` to ~1e-13 of the
    /// curve's size. The default.
    #[default]
    Fast,
}

impl Method {
    /// Short name used in outputs (`direct` or `fast`).
    pub fn name(self) -> &'static str {
        match self {
            Method::Direct => "direct",
            Method::Fast => "fast",
        }
    }

    /// Returns an error if the method is not implemented in this version (both are).
    pub fn check_available(self) -> Result<()> {
        Ok(())
    }
}

/// Keep a point in the closed upper half-plane: rounding can push the imaginary part of a point on
/// the real line slightly below zero (or to −0.0), which would flip the branch of the roots below.
#[inline]
fn clamp_upper(z: Complex64) -> Complex64 {
    if z.im > 0.0 {
        z
    } else {
        Complex64::new(z.re, 0.0)
    }
}

/// One explicit step of a chordal chain, with its parameters precomputed.
///
/// `inverse` maps H onto H minus the slit (the map `F_k = g_{t_{k−1}} ∘ g_{t_k}^{-1}`);
/// `forward` is its inverse `G_k`, from H minus the slit onto H.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ChordalStep {
    /// Driving value at the start of the step, `W_{k−1}` (where the slit is rooted for tilted
    /// steps).
    pub w_start: f64,
    /// Driving value at the end of the step, `W_k`.
    pub w_end: f64,
    /// Capacity-time length of the step, `Δt = t_k − t_{k−1}` (the slit has hcap `2Δt`).
    pub dt: f64,
    shape: Shape,
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum Shape {
    /// Root `w`, half-width of the preimage interval `a = 2√Δt`.
    Vertical { w: f64, a: f64 },
    /// Angle απ; preimage of the slit `[W_k − x_l, W_k + x_r]`; slit length.
    Tilted {
        alpha: f64,
        xl: f64,
        xr: f64,
        len: f64,
    },
}

impl ChordalStep {
    /// A vertical-slit step: driving constant equal to `w` over a step of length `dt > 0`.
    pub fn vertical(w: f64, dt: f64) -> Self {
        ChordalStep {
            w_start: w,
            w_end: w,
            dt,
            shape: Shape::Vertical {
                w,
                a: 2.0 * dt.sqrt(),
            },
        }
    }

    /// A tilted-slit step from driving value `w_start` to `w_end` over a step of length `dt > 0`:
    /// the driving function is `w_start + c√(t − t_{k−1})`, `c = (w_end − w_start)/√dt`.
    pub fn tilted(w_start: f64, w_end: f64, dt: f64) -> Self {
        let c = (w_end - w_start) / dt.sqrt();
        // α = 1/2 − c/(2√(c²+16)), written to avoid cancellation for large |c|.
        let alpha = if c >= 0.0 {
            8.0 / ((c * c + 16.0).sqrt() * ((c * c + 16.0).sqrt() + c))
        } else {
            1.0 - 8.0 / ((c * c + 16.0).sqrt() * ((c * c + 16.0).sqrt() - c))
        };
        let xl = 2.0 * (dt * (1.0 - alpha) / alpha).sqrt();
        let xr = 2.0 * (dt * alpha / (1.0 - alpha)).sqrt();
        let len = xl.powf(1.0 - alpha) * xr.powf(alpha);
        ChordalStep {
            w_start,
            w_end,
            dt,
            shape: Shape::Tilted { alpha, xl, xr, len },
        }
    }

    /// Build a step of the given kind from the driving values at both ends.
    pub fn new(kind: StepKind, w_start: f64, w_end: f64, dt: f64) -> Self {
        match kind {
            StepKind::Vertical => ChordalStep::vertical(w_end, dt),
            StepKind::Tilted => ChordalStep::tilted(w_start, w_end, dt),
        }
    }

    /// Angle of the slit with the positive real axis, as a fraction α of π.
    pub fn alpha(&self) -> f64 {
        match self.shape {
            Shape::Vertical { .. } => 0.5,
            Shape::Tilted { alpha, .. } => alpha,
        }
    }

    /// The base point of the slit on the real line.
    pub fn base(&self) -> f64 {
        match self.shape {
            Shape::Vertical { w, .. } => w,
            Shape::Tilted { .. } => self.w_start,
        }
    }

    /// The tip of the slit, `F_k(W_k)`.
    pub fn tip(&self) -> Complex64 {
        match self.shape {
            Shape::Vertical { w, a } => Complex64::new(w, a),
            Shape::Tilted { alpha, len, .. } => {
                let (s, c) = (alpha * std::f64::consts::PI).sin_cos();
                Complex64::new(self.w_start + len * c, len * s)
            }
        }
    }

    /// Length of the slit (`2√Δt` for a vertical slit).
    pub fn slit_length(&self) -> f64 {
        match self.shape {
            Shape::Vertical { a, .. } => a,
            Shape::Tilted { len, .. } => len,
        }
    }

    /// The preimage of the slit on the real line under `F_k`: `[W_k − x_l, W_k + x_r]`.
    pub fn preimage_interval(&self) -> (f64, f64) {
        match self.shape {
            Shape::Vertical { w, a } => (w - a, w + a),
            Shape::Tilted { xl, xr, .. } => (self.w_end - xl, self.w_end + xr),
        }
    }

    /// The inverse map `F_k`: closed upper half-plane → H minus the slit (boundary to boundary).
    ///
    /// Principal roots/powers are used on factors whose arguments lie in `[0, π]`, so the result
    /// stays in the closed upper half-plane for every input there (DESIGN §3).
    #[inline]
    pub fn inverse(&self, w: Complex64) -> Complex64 {
        let w = clamp_upper(w);
        match self.shape {
            Shape::Vertical { w: root, a } => {
                let u = w - root;
                root + (u - a).sqrt() * (u + a).sqrt()
            }
            Shape::Tilted { alpha, xl, xr, .. } => {
                let u = w - self.w_end;
                let l = (u + xl).ln() * (1.0 - alpha) + (u - xr).ln() * alpha;
                self.w_start + l.exp()
            }
        }
    }

    /// The same map as [`ChordalStep::inverse`], with the vertical slit's square roots taken by
    /// the algebraic formula (two real square roots, the same principal branch) instead of the
    /// polar form: equal up to rounding, several times cheaper. Used where traces are composed
    /// through long chains ([`crate::disk_fast`]).
    #[inline]
    pub fn inverse_fast(&self, w: Complex64) -> Complex64 {
        match self.shape {
            Shape::Vertical { w: root, a } => {
                let w = clamp_upper(w);
                let u = w - root;
                root + crate::geozip::csqrt(u - a) * crate::geozip::csqrt(u + a)
            }
            Shape::Tilted { .. } => self.inverse(w),
        }
    }

    /// The same map as [`ChordalStep::forward`], with the vertical slit's square root taken by
    /// the algebraic formula (the same principal branch and the same choice of sign): equal up
    /// to rounding, several times cheaper (the polar form's `hypot`, `atan2` and `sincos` were
    /// most of the cost of mapping points forward through a long chain).
    #[inline]
    pub fn forward_fast(&self, z: Complex64) -> Complex64 {
        match self.shape {
            Shape::Vertical { w, a } => {
                let z = clamp_upper(z);
                let v = z - w;
                let mut s = crate::geozip::csqrt(v * v + a * a);
                if s.im < 0.0 || (s.im == 0.0 && v.re < 0.0) {
                    s = -s;
                }
                clamp_upper(w + s)
            }
            Shape::Tilted { .. } => self.forward(z),
        }
    }

    /// The inverse map and its complex derivative `F_k'(w)`.
    #[inline]
    pub fn inverse_with_derivative(&self, w: Complex64) -> (Complex64, Complex64) {
        let w = clamp_upper(w);
        match self.shape {
            Shape::Vertical { w: root, a } => {
                let u = w - root;
                let s = (u - a).sqrt() * (u + a).sqrt();
                (root + s, u / s)
            }
            Shape::Tilted { alpha, xl, xr, .. } => {
                let u = w - self.w_end;
                let p = u + xl;
                let q = u - xr;
                let s = (p.ln() * (1.0 - alpha) + q.ln() * alpha).exp();
                (self.w_start + s, s * ((1.0 - alpha) / p + alpha / q))
            }
        }
    }

    /// The forward map restricted to the real line: a boundary point `x` (not on the slit's base)
    /// goes to the real point `G_k(x)` outside the preimage interval; monotone increasing.
    /// The base point itself goes to the left end of the preimage interval.
    pub fn forward_real(&self, x: f64) -> f64 {
        match self.shape {
            Shape::Vertical { w, a } => {
                let v = x - w;
                if v > 0.0 {
                    w + (v * v + a * a).sqrt()
                } else {
                    w - (v * v + a * a).sqrt()
                }
            }
            Shape::Tilted { alpha, xl, xr, .. } => {
                let v = x - self.w_start;
                if v == 0.0 {
                    return self.w_end - xl;
                }
                // u = x_r + e^s (v > 0) or u = −x_l − e^s (v < 0); h(s) is convex and increasing
                // with h' in (min(α,1−α), 1), so Newton's method converges from any start.
                let (p, q) = if v > 0.0 {
                    (1.0 - alpha, alpha)
                } else {
                    (alpha, 1.0 - alpha)
                };
                let gap = xl + xr;
                let target = v.abs().ln();
                // h(s) = p·ln(gap + e^s) + q·s − target.
                let mut s = (v.abs().max(gap)).ln();
                for _ in 0..200 {
                    let es = s.exp();
                    let h = p * (gap + es).ln() + q * s - target;
                    let dh = p * es / (gap + es) + q;
                    let step = h / dh;
                    s -= step;
                    if step.abs() <= 1e-15 * (1.0 + s.abs()) {
                        break;
                    }
                }
                if v > 0.0 {
                    self.w_end + xr + s.exp()
                } else {
                    self.w_end - xl - s.exp()
                }
            }
        }
    }

    /// The forward map `G_k = F_k^{-1}`: H minus the slit → H.
    ///
    /// Vertical slits have the closed form `W + √((z−W)² + 4Δt)` (branch with `Im ≥ 0`, and with
    /// the sign of `Re(z − W)` on the real line). Tilted slits are inverted by Newton's method on
    /// the logarithmic form of `F_k`, with a continuation along rays from the slit's base as a
    /// fallback; the answer is checked (`F_k(G_k(z)) = z` to ~1e-13 relative).
    /// A point exactly on a slit has two preimages; either may be returned.
    pub fn forward(&self, z: Complex64) -> Complex64 {
        let z = clamp_upper(z);
        match self.shape {
            Shape::Vertical { w, a } => {
                let v = z - w;
                let mut s = (v * v + a * a).sqrt();
                if s.im < 0.0 || (s.im == 0.0 && v.re < 0.0) {
                    s = -s;
                }
                clamp_upper(w + s)
            }
            Shape::Tilted { alpha, xl, xr, len } => {
                clamp_upper(self.w_end + tilted_forward(z - self.w_start, alpha, xl, xr, len))
            }
        }
    }
}

/// Solve `(u + x_l)^{1−α} (u − x_r)^α = v` for `u` in the closed upper half-plane, i.e. the
/// forward tilted-slit map in coordinates where the slit is rooted at 0 and its preimage is
/// `[−x_l, x_r]`.
fn tilted_forward(v: Complex64, alpha: f64, xl: f64, xr: f64, len: f64) -> Complex64 {
    let shift = (1.0 - alpha) * xl - alpha * xr;
    let dt = xl * xr / 4.0; // x_l x_r = 4Δt
    let far_guess = |v: Complex64| v - shift + 2.0 * dt / v;
    // Φ is one-to-one on the closed upper half-plane and a solution is accepted only at rounding
    // level, so a direct Newton solve from the far-field guess is safe near the slit too; it
    // usually converges, and the continuation below is the fallback.
    if let Some(u) = newton_log(v.ln(), far_guess(v), alpha, xl, xr) {
        return u;
    }
    let r_target = v.norm();
    if r_target == 0.0 {
        // The base of the slit: both ends of the preimage interval map there.
        return Complex64::new(-xl, 0.0);
    }
    // Continuation along the ray arg(v) = const, from far away (where the far-field guess is
    // excellent) down to |v|; the ray never meets the slit unless v lies on it. The radial step
    // shrinks whenever Newton's method fails from the previous solution.
    let dir = v / r_target;
    let mut r = (16.0 * len).max(2.0 * r_target);
    let mut u = far_guess(dir * r);
    let mut factor: f64 = 0.7;
    loop {
        let next_r = (r * factor).max(r_target);
        match newton_log((dir * next_r).ln(), u, alpha, xl, xr) {
            Some(next_u) => {
                u = next_u;
                r = next_r;
                if r <= r_target {
                    return u;
                }
                factor = (factor * factor).max(0.5);
            }
            None => {
                factor = factor.sqrt();
                if factor > 1.0 - 1e-9 {
                    // Not reached for points off the slit; keep the nearest solution found.
                    return u;
                }
            }
        }
    }
}

/// Newton's method for `Φ(u) = (1−α) Log(u + x_l) + α Log(u − x_r) = target`, started at
/// `guess`, with a backtracking line search on |Φ(u) − target| and iterates kept in the closed
/// upper half-plane. Converged means the residual is at rounding level; returns `None` otherwise
/// (a small Newton step alone is not trusted: Φ' is unbounded near `−x_l` and `x_r`).
fn newton_log(
    target: Complex64,
    guess: Complex64,
    alpha: f64,
    xl: f64,
    xr: f64,
) -> Option<Complex64> {
    let phi = |u: Complex64| (u + xl).ln() * (1.0 - alpha) + (u - xr).ln() * alpha;
    // Attainable residual: rounding of the target, plus the rounding of u (≈ 2⁻⁵² of its size)
    // amplified by |Φ'(u)|, which is large near the branch points −x_l and x_r.
    let base_tol = 8e-16 * (1.0 + target.norm());
    let mut u = clamp_upper(guess);
    let mut resid = phi(u) - target;
    let mut tol = base_tol;
    for _ in 0..50 {
        if !(resid.re.is_finite() && resid.im.is_finite()) {
            return None;
        }
        let dphi = (1.0 - alpha) / (u + xl) + alpha / (u - xr);
        tol = base_tol + 4.5e-16 * (u.norm() + xl + xr) * dphi.norm();
        if resid.norm() <= tol {
            return Some(u);
        }
        let step = resid / dphi;
        if !(step.re.is_finite() && step.im.is_finite()) {
            return None;
        }
        let mut lambda = 1.0;
        let mut accepted = false;
        for _ in 0..30 {
            let next = clamp_upper(u - step * lambda);
            let r = phi(next) - target;
            if r.norm() < resid.norm() {
                u = next;
                resid = r;
                accepted = true;
                break;
            }
            lambda *= 0.5;
        }
        if !accepted {
            // No decrease: at rounding level already, or stuck.
            return (resid.norm() <= 64.0 * tol).then_some(u);
        }
    }
    (resid.norm() <= 64.0 * tol).then_some(u)
}

/// A discretised chordal Loewner chain: the explicit steps of a driving function.
#[derive(Debug, Clone)]
pub struct ChordalChain {
    kind: StepKind,
    times: Vec<f64>,
    drive: Vec<f64>,
    steps: Vec<ChordalStep>,
}

impl ChordalChain {
    /// Build the chain of `kind` steps for the driving function sampled at `driving`'s grid.
    pub fn new(driving: &DrivingFunction, kind: StepKind) -> Self {
        let t = driving.times();
        let w = driving.values();
        let steps = (1..t.len())
            .map(|k| ChordalStep::new(kind, w[k - 1], w[k], t[k] - t[k - 1]))
            .collect();
        ChordalChain {
            kind,
            times: t.to_vec(),
            drive: w.to_vec(),
            steps,
        }
    }

    /// The step kind of this chain.
    pub fn kind(&self) -> StepKind {
        self.kind
    }

    /// Number of steps N.
    pub fn len(&self) -> usize {
        self.steps.len()
    }

    /// True when the chain has no steps.
    pub fn is_empty(&self) -> bool {
        self.steps.is_empty()
    }

    /// The steps, in time order.
    pub fn steps(&self) -> &[ChordalStep] {
        &self.steps
    }

    /// Grid times `t_0 = 0, …, t_N` (capacity time).
    pub fn times(&self) -> &[f64] {
        &self.times
    }

    /// Driving values `W_0, …, W_N` on the grid.
    pub fn driving_values(&self) -> &[f64] {
        &self.drive
    }

    /// `g_{t_n}^{-1}(w) = F_1 ∘ … ∘ F_n(w)` for `w` in the closed upper half-plane, `n ≤ N`.
    pub fn inverse_map(&self, n: usize, w: Complex64) -> Complex64 {
        self.steps[..n].iter().rev().fold(w, |z, s| s.inverse(z))
    }

    /// `g_{t_n}^{-1}(w)` and its derivative (chain rule through all steps).
    pub fn inverse_map_with_derivative(&self, n: usize, w: Complex64) -> (Complex64, Complex64) {
        let mut z = w;
        let mut d = Complex64::new(1.0, 0.0);
        for s in self.steps[..n].iter().rev() {
            let (z1, d1) = s.inverse_with_derivative(z);
            z = z1;
            d *= d1;
        }
        (z, d)
    }

    /// `g_{t_n}(z) = G_n ∘ … ∘ G_1(z)` for `z` in H outside the hull `K_{t_n}`.
    pub fn forward_map(&self, n: usize, z: Complex64) -> Complex64 {
        self.steps[..n].iter().fold(z, |w, s| s.forward(w))
    }

    /// The trace point `γ(t_n)`; `γ(t_0) = W_0`.
    pub fn trace_point(&self, n: usize) -> Complex64 {
        if n == 0 {
            return Complex64::new(self.drive[0], 0.0);
        }
        let tip = self.steps[n - 1].tip();
        self.inverse_map(n - 1, tip)
    }

    /// All trace points `γ(t_0), …, γ(t_N)` by the chosen method (parallel over points; the
    /// result does not depend on the number of threads).
    ///
    /// # Errors
    /// [`Error::Unavailable`] for a method not implemented in this version.
    pub fn trace(&self, method: Method) -> Result<Vec<Complex64>> {
        let all: Vec<usize> = (0..self.len() + 1).collect();
        self.trace_at(method, &all)
    }

    /// The trace points `γ(t_n)` for the given indices `n ≤ N`, by the chosen method.
    ///
    /// # Errors
    /// [`Error::Unavailable`] for a method not implemented in this version.
    pub fn trace_at(&self, method: Method, indices: &[usize]) -> Result<Vec<Complex64>> {
        method.check_available()?;
        Ok(match method {
            Method::Direct => indices
                .par_iter()
                .with_min_len(16)
                .map(|&n| self.trace_point(n))
                .collect(),
            Method::Fast => {
                let tree = crate::fast::BlockTree::new(&self.steps);
                indices
                    .par_iter()
                    .with_min_len(256)
                    .map(|&n| {
                        if n == 0 {
                            Complex64::new(self.drive[0], 0.0)
                        } else {
                            tree.apply_prefix(n - 1, self.steps[n - 1].tip())
                        }
                    })
                    .collect()
            }
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn c(re: f64, im: f64) -> Complex64 {
        Complex64::new(re, im)
    }

    #[test]
    fn vertical_slit_tip_and_round_trip() {
        let s = ChordalStep::vertical(0.3, 0.25);
        assert!((s.tip() - c(0.3, 1.0)).norm() < 1e-15);
        assert!((s.inverse(c(0.3, 0.0)) - c(0.3, 1.0)).norm() < 1e-15);
        for z in [
            c(1.0, 1.0),
            c(-2.0, 0.01),
            c(0.3, 1.5),
            c(0.29, 0.5),
            c(5.0, 0.0),
        ] {
            let back = s.inverse(s.forward(z));
            assert!((back - z).norm() < 1e-13, "{z} -> {back}");
        }
    }

    #[test]
    fn tilted_slit_geometry() {
        for c_drive in [-3.0, -0.5, 0.0, 0.7, 4.0] {
            let dt: f64 = 0.01;
            let s = ChordalStep::tilted(0.1, 0.1 + c_drive * dt.sqrt(), dt);
            let (l, r) = s.preimage_interval();
            // Both ends of the preimage interval go to the base of the slit. F behaves like
            // (w − end)^{min(α, 1−α)} there, so the rounding δ of the end point (≈ 1e-16 of its
            // size) is amplified to ≈ δ^{min(α,1−α)}; the bound allows four times that.
            let scale = (l.abs() + r.abs()).max(1.0);
            let m = s.alpha().min(1.0 - s.alpha());
            let bound = 4.0 * (4.5e-16 * scale).powf(m) * scale;
            assert!((s.inverse(c(l, 0.0)) - c(0.1, 0.0)).norm() < bound);
            assert!((s.inverse(c(r, 0.0)) - c(0.1, 0.0)).norm() < bound);
            // The tip is the image of W_k and lies at angle απ.
            let tip = s.inverse(c(s.w_end, 0.0));
            assert!((tip - s.tip()).norm() < 1e-12);
            let ang = (tip - 0.1).arg() / std::f64::consts::PI;
            assert!((ang - s.alpha()).abs() < 1e-12);
        }
    }
}
