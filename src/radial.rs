//! Radial Loewner chains in the unit disk D, from the boundary towards 0 (DESIGN §2, §5).
//!
//! Convention: `∂_t g_t(z) = g_t(z) (e^{iξ_t} + g_t(z)) / (e^{iξ_t} − g_t(z))`, `g_t(0) = 0`,
//! `g_t'(0) = e^t`, so the radial time is `t = −log CR(D_t, 0)`.
//!
//! A step of radial time `Δt` with constant driving angle `ξ` removes the radial slit
//! `[x, 1]·e^{iξ}`, `x = (1 − a)/(1 + a)`, `a = √(1 − e^{−Δt})`. It is computed through the
//! Cayley map `ζ = i(1 − w)/(1 + w)` (D → H, 1 ↦ 0, 0 ↦ i) of the rotated point `w = e^{−iξ} z`:
//! there the step is the chordal vertical slit of capacity time `s = (1 − e^{−Δt})/4` at 0
//! followed by the dilation `e^{Δt/2}`, which keeps `i` (the image of 0) fixed.

use crate::loewner::ChordalStep;
use num_complex::Complex64;
use std::f64::consts::PI;

const I: Complex64 = Complex64 { re: 0.0, im: 1.0 };

/// The Cayley map D → H, `w ↦ i(1 − w)/(1 + w)`.
#[inline]
pub fn cayley(w: Complex64) -> Complex64 {
    I * (1.0 - w) / (1.0 + w)
}

/// The inverse Cayley map H → D, `ζ ↦ (i − ζ)/(i + ζ)`.
#[inline]
pub fn cayley_inv(zeta: Complex64) -> Complex64 {
    (I - zeta) / (I + zeta)
}

/// One radial step: constant driving angle `xi` for a radial time `dt > 0`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RadialStep {
    /// Driving angle ξ (the slit grows from `e^{iξ}`).
    pub xi: f64,
    /// Radial time of the step (`−log` of the conformal radius it removes, seen from 0).
    pub dt: f64,
    rot: Complex64,
    chordal: ChordalStep,
    dilation: f64,
    /// `1/dilation` (multiplications on the inverse's path instead of divisions).
    inv_dilation: f64,
}

impl RadialStep {
    /// The step with driving angle `xi` over radial time `dt`.
    pub fn new(xi: f64, dt: f64) -> Self {
        // 1 − e^{−Δt} without cancellation for small steps.
        let s = -(-dt).exp_m1() / 4.0;
        RadialStep {
            xi,
            dt,
            rot: Complex64::from_polar(1.0, xi),
            chordal: ChordalStep::vertical(0.0, s),
            dilation: (0.5 * dt).exp(),
            inv_dilation: (-0.5 * dt).exp(),
        }
    }

    /// Inner end of the slit `[x, 1]·e^{iξ}`: `x e^{iξ}`, `x = (1 − a)/(1 + a)`.
    pub fn tip(&self) -> Complex64 {
        let a = (-(-self.dt).exp_m1()).sqrt();
        self.rot * ((1.0 - a) / (1.0 + a))
    }

    /// The forward map `g`: D minus the slit → D, with `g(0) = 0` and `g'(0) = e^{Δt}`.
    pub fn forward(&self, z: Complex64) -> Complex64 {
        let zeta = cayley(z / self.rot);
        let out = self.chordal.forward(zeta) * self.dilation;
        cayley_inv(out) * self.rot
    }

    /// The forward map and its derivative `g'(z)` (chain rule through the Cayley maps).
    pub fn forward_with_derivative(&self, z: Complex64) -> (Complex64, Complex64) {
        let w = z / self.rot;
        let zeta = cayley(w);
        let v = self.chordal.forward(zeta);
        let out = v * self.dilation;
        // d/dw cayley = −2i/(1 + w)²; vertical slit: dv/dζ = ζ / v; d/dη cayley_inv = −2i/(i + η)².
        let d = (-2.0 * I / ((1.0 + w) * (1.0 + w)))
            * (zeta / v)
            * self.dilation
            * (-2.0 * I / ((I + out) * (I + out)));
        (cayley_inv(out) * self.rot, d)
    }

    /// Image of the boundary point `e^{iα}` under the forward map, returned as an angle
    /// `α'` with `α' − ξ ∈ [−π, π]`: boundary points flow away from the slit base `e^{iξ}`.
    /// `side` (±1) decides the side for the base point itself (α = ξ), which splits in two.
    ///
    /// In the Cayley coordinate the boundary point is `x = tan((α − ξ)/2)`, the step maps it to
    /// `e^{Δt/2} sign(x) √(x² + 4s)`, and back `α' = ξ + 2 atan(…)`.
    pub fn forward_boundary_angle(&self, alpha: f64, side: f64) -> f64 {
        let phi = (alpha - self.xi + PI).rem_euclid(2.0 * PI) - PI;
        let x = (0.5 * phi).tan();
        let sign = if phi > 0.0 || (phi == 0.0 && side > 0.0) {
            1.0
        } else {
            -1.0
        };
        let s = self.chordal_capacity();
        let y = sign * self.dilation * (x * x + 4.0 * s).sqrt();
        self.xi + 2.0 * y.atan()
    }

    /// Capacity time `s = (1 − e^{−Δt})/4` of the chordal vertical slit in the Cayley frame.
    fn chordal_capacity(&self) -> f64 {
        -(-self.dt).exp_m1() / 4.0
    }

    /// The inverse map `f = g^{-1}`: D → D minus the slit.
    pub fn inverse(&self, z: Complex64) -> Complex64 {
        let eta = cayley(z / self.rot) / self.dilation;
        cayley_inv(self.chordal.inverse(eta)) * self.rot
    }

    /// [`RadialStep::inverse`] with the algebraic square root
    /// ([`crate::loewner::ChordalStep::inverse_fast`]): equal up to rounding, cheaper.
    #[inline]
    pub fn inverse_fast(&self, z: Complex64) -> Complex64 {
        self.inverse_fast_rotated(z, Complex64::new(1.0, 0.0))
    }

    /// `inverse_fast(z · conj(pre))` for `|pre| = 1`, with the two rotations merged (a chain's
    /// map is a step followed by a rotation) and multiplications by `e^{−iξ}` and
    /// `e^{−Δt/2}` instead of divisions: equal to [`RadialStep::inverse`] up to rounding.
    #[inline]
    pub fn inverse_fast_rotated(&self, z: Complex64, pre: Complex64) -> Complex64 {
        let r = (self.rot * pre).conj();
        let eta = cayley(z * r) * self.inv_dilation;
        cayley_inv(self.chordal.inverse_fast(eta)) * self.rot
    }

    /// [`RadialStep::forward`] with the algebraic square root
    /// ([`crate::loewner::ChordalStep::forward_fast`]): equal up to rounding, cheaper.
    #[inline]
    pub fn forward_fast(&self, z: Complex64) -> Complex64 {
        let zeta = cayley(z * self.rot.conj());
        let out = self.chordal.forward_fast(zeta) * self.dilation;
        cayley_inv(out) * self.rot
    }
}

/// A radial chain: steps with driving angles `ξ_k` over radial times `Δt_k`, in time order.
#[derive(Debug, Clone, Default)]
pub struct RadialChain {
    steps: Vec<RadialStep>,
}

impl RadialChain {
    /// An empty chain (the identity).
    pub fn new() -> Self {
        Self::default()
    }

    /// Append a step.
    pub fn push(&mut self, step: RadialStep) {
        self.steps.push(step);
    }

    /// The steps, in time order.
    pub fn steps(&self) -> &[RadialStep] {
        &self.steps
    }

    /// Total radial time `t = −log CR(D_t, 0)`.
    pub fn time(&self) -> f64 {
        self.steps.iter().map(|s| s.dt).sum()
    }

    /// `g_t(z)` and `log |g_t'(z)|` for a point of D outside the hull (the logarithm is carried,
    /// as radial times of 50–100 are normal, DESIGN §6.2).
    pub fn forward_with_log_derivative(&self, z: Complex64) -> (Complex64, f64) {
        let mut w = z;
        let mut log_d = 0.0;
        for s in &self.steps {
            let (w1, d) = s.forward_with_derivative(w);
            w = w1;
            log_d += d.norm().ln();
        }
        (w, log_d)
    }

    /// The conformal radius `CR(D_t, z) = (1 − |g_t(z)|²)/|g_t'(z)|` of the remaining domain seen
    /// from `z`, returned as its logarithm.
    pub fn log_conformal_radius(&self, z: Complex64) -> f64 {
        let (w, log_d) = self.forward_with_log_derivative(z);
        let r = w.norm();
        ((1.0 - r) * (1.0 + r)).ln() - log_d
    }

    /// The trace point after `n` steps: the tip of step n mapped back through steps n−1, …, 1
    /// (direct composition).
    pub fn trace_point(&self, n: usize) -> Complex64 {
        if n == 0 {
            return self
                .steps
                .first()
                .map(|s| s.rot)
                .unwrap_or(Complex64::new(1.0, 0.0));
        }
        let tip = self.steps[n - 1].tip();
        self.steps[..n - 1]
            .iter()
            .rev()
            .fold(tip, |z, s| s.inverse(z))
    }
}

/// Radial SLE_κ in the unit disk from 1 towards 0, or radial SLE_κ(ρ) with its force point
/// immediately clockwise of 1, on `steps` steps of radial time up to `time` (DESIGN §2, §5):
/// `t = −log CR(D_t, 0)`, on the grid of [`radial_grid`].
///
/// Without ρ the driving angle is ξ = √κ B (piecewise constant: the value at each step's end).
/// With ρ the angle θ = ξ − η is stepped by [`crate::cle::AngleProcess::radial_rho`] on a
/// grid of its own, finer near the ends of θ, and the force point moves by
/// `dη = −cot(θ/2) dt` summed on that grid (mid-point rule); the chain takes ξ = η + θ at the end
/// of each step. If θ reaches 2π (the trace disconnects the force point from 0) the curve stops
/// there and says so.
#[derive(Debug, Clone)]
pub struct RadialSle {
    kappa: f64,
    rho: Option<f64>,
    grid: Vec<f64>,
}

/// One sampled radial curve.
#[derive(Debug, Clone)]
pub struct RadialCurve {
    /// Sample index.
    pub index: u64,
    /// Radial times t_k of the trace points (t_0 = 0).
    pub times: Vec<f64>,
    /// Driving angles ξ_k of the steps (unwrapped).
    pub driving: Vec<f64>,
    /// Force-point angles η_k after each step (with ρ only).
    pub force: Vec<f64>,
    /// The trace points γ(t_k), k = 0..=n.
    pub points: Vec<Complex64>,
    /// Radial time at which θ reached 2π, if it did: the end of the step in which the visit was
    /// sampled (the curve stops before that step).
    pub stopped_at: Option<f64>,
    /// The radial chain of the steps taken.
    pub chain: RadialChain,
}

/// Sub-steps of the angle process near an end are at most d²/(PUSH_RESOLUTION·κ) long (d the
/// distance to the end), so θ moves by about d/4 per sub-step and the mid-point rule for the
/// force point's push cot(θ/2) stays accurate.
const PUSH_RESOLUTION: f64 = 16.0;
/// Smallest sub-step of the angle process, relative to the chain's step.
const MIN_SUBSTEP: f64 = 1e-5;

/// The radial-time grid of [`RadialSle`]: `t_k = F⁻¹(k/N)` with
/// `F(t) = ½(1 − e^{−2t})/(1 − e^{−2T}) + ½ t/T`, so half the resolution is uniform in `e^{−2t}`
/// (small steps at the start, where a step of radial time Δt draws a slit of length about 2√Δt)
/// and half uniform in t (no step longer than 2T/N near the end). `t_0 = 0`, `t_N = T` exactly.
pub fn radial_grid(time: f64, steps: usize) -> Vec<f64> {
    let scale = -(-2.0 * time).exp_m1();
    let f = |t: f64| 0.5 * (-(-2.0 * t).exp_m1()) / scale + 0.5 * t / time;
    let mut grid = Vec::with_capacity(steps + 1);
    grid.push(0.0);
    for k in 1..steps {
        let target = k as f64 / steps as f64;
        let (mut lo, mut hi) = (0.0, time);
        for _ in 0..80 {
            let mid = 0.5 * (lo + hi);
            if f(mid) < target {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        grid.push(0.5 * (lo + hi));
    }
    grid.push(time);
    grid
}

impl RadialSle {
    /// A sampler.
    ///
    /// Errors: [`crate::Error::InvalidParameter`] for κ outside (0, 10⁴], ρ ≤ −2, a time
    /// outside (0, 50] or steps outside [1, 10⁶].
    pub fn new(kappa: f64, rho: Option<f64>, time: f64, steps: usize) -> crate::Result<Self> {
        use crate::error::Error;
        if !(kappa.is_finite() && kappa > 0.0 && kappa <= 1e4) {
            return Err(Error::param("kappa", kappa, "0 < kappa <= 1e4"));
        }
        if let Some(r) = rho {
            crate::cle::AngleProcess::radial_rho(kappa, r)?;
        }
        if !(time.is_finite() && time > 0.0 && time <= 50.0) {
            return Err(Error::param(
                "time",
                time,
                "0 < t <= 50 (radial time: the hull's conformal radius seen from 0 is e^-t)",
            ));
        }
        if !(1..=1_000_000).contains(&steps) {
            return Err(Error::param(
                "points",
                steps as f64,
                "1 <= points <= 1000000 for radial curves",
            ));
        }
        Ok(RadialSle {
            kappa,
            rho,
            grid: radial_grid(time, steps),
        })
    }

    /// Sample `index` of a run with `seed` (a pure function of both), its trace composed by the
    /// disk block tree ([`crate::disk_fast`], about N log N).
    pub fn sample(&self, seed: u64, index: u64) -> RadialCurve {
        self.sample_with(seed, index, crate::loewner::Method::Fast)
    }

    /// [`RadialSle::sample`] with the trace composed by `method`: `Fast` (the disk block tree)
    /// or `Direct` (every inverse step for every point, O(N²); the reference).
    pub fn sample_with(
        &self,
        seed: u64,
        index: u64,
        method: crate::loewner::Method,
    ) -> RadialCurve {
        let mut c = self.sample_driving(seed, index);
        c.points = match method {
            crate::loewner::Method::Direct => {
                (0..c.times.len()).map(|k| c.chain.trace_point(k)).collect()
            }
            crate::loewner::Method::Fast => {
                let mut tree = crate::disk_fast::DiskChain::new();
                for s in c.chain.steps() {
                    tree.push(crate::disk_fast::DiskMap::Step {
                        step: *s,
                        rot: Complex64::new(1.0, 0.0),
                    });
                }
                let mut pts = vec![c.chain.trace_point(0)];
                pts.extend((0..tree.len()).filter_map(|k| tree.tip_point(k)));
                pts
            }
        };
        c
    }

    /// The same sample without its trace points (`points` empty): the driving angle, the force
    /// point and the stopping time only, at O(steps) cost.
    pub fn sample_driving(&self, seed: u64, index: u64) -> RadialCurve {
        use rand_distr::{Distribution, StandardNormal};
        let mut g = crate::rng::stream(seed, crate::rng::Tag::Driving, index);
        let grid = &self.grid;
        let steps = grid.len() - 1;
        let mut chain = RadialChain::new();
        let mut times = vec![0.0];
        let mut driving = Vec::with_capacity(steps);
        let mut force = Vec::new();
        let mut stopped_at = None;
        match self.rho {
            None => {
                let mut xi = 0.0;
                for k in 0..steps {
                    let h = grid[k + 1] - grid[k];
                    let z: f64 = StandardNormal.sample(&mut g);
                    xi += (self.kappa * h).sqrt() * z;
                    chain.push(RadialStep::new(xi, h));
                    driving.push(xi);
                    times.push(grid[k + 1]);
                }
            }
            Some(rho) => {
                let process = crate::cle::AngleProcess::radial_rho(self.kappa, rho)
                    .expect("validated in new");
                let (mut theta, mut eta) = (0.0f64, 0.0f64);
                'steps: for k in 0..steps {
                    let h = grid[k + 1] - grid[k];
                    // The force point moves by dη = −cot(θ/2) dt, θ = ξ − η. Near an end of θ
                    // this push is singular (≈ −2/θ), and letting the slit map of the whole step
                    // carry the force point biases the driving function badly (measured at
                    // ρ = 0, κ = 6, 100 steps: E[ξ_1] = 0.63 instead of 0, Var ξ_1 = 0.70κ). So
                    // θ is advanced on a finer grid of its own, each sub-step τ at most
                    // d²/(PUSH_RESOLUTION·κ) (d the distance of θ to its nearer end, never
                    // below h·MIN_SUBSTEP), and the push is summed with the mid-point rule.
                    // Only ξ at the end of the step enters the Loewner chain.
                    let mut left = h;
                    while left > 0.0 {
                        let d = theta.abs().min(2.0 * PI - theta.abs());
                        let tau = (d * d / (PUSH_RESOLUTION * self.kappa))
                            .max(h * MIN_SUBSTEP)
                            .min(left);
                        let tau = if left - tau < 1e-3 * tau { left } else { tau };
                        let st = process.step(theta, tau, &mut g);
                        if st.visit == crate::cle::EndVisit::Full {
                            // The end of the step in which the visit was sampled (as for CLE
                            // loops).
                            stopped_at = Some(grid[k + 1]);
                            break 'steps;
                        }
                        let mid = 0.5 * (theta.abs() + st.theta.abs());
                        eta -= tau / (0.5 * mid).tan();
                        theta = st.theta;
                        left -= tau;
                    }
                    let xi = eta + theta;
                    chain.push(RadialStep::new(xi, h));
                    driving.push(xi);
                    force.push(eta);
                    times.push(grid[k + 1]);
                }
            }
        }
        RadialCurve {
            index,
            times,
            driving,
            force,
            points: Vec::new(),
            stopped_at,
            chain,
        }
    }
}

/// A radial step whose slit starts at a given boundary point `e^{iβ}` and is straight in the
/// Cayley frame of that point: the chordal tilted slit of Kager, Nienhuis & Kadanoff (J. Stat.
/// Phys. 2004) from 0 at angle απ with capacity time `s`, followed by the affine map of H that
/// sends the image of `i` (the image of 0) back to `i`, so that 0 stays fixed. Consecutive
/// steps built on the previous tip make a continuous trace, which vertical slits (whose bases
/// follow the driving point) do not.
///
/// Convention: the forward map `g` sends D minus the slit onto D with `g(0) = 0`; its radial
/// time is `dt = log|g'(0)|` (DESIGN §2: `−log` of the conformal radius seen from 0), computed
/// exactly from the construction rather than prescribed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TiltedRadialStep {
    /// Angle β of the slit's base.
    pub base: f64,
    /// Radial time of the step, `log|g'(0)|`.
    pub dt: f64,
    rot: Complex64,
    chordal: ChordalStep,
    a: f64,
    b: f64,
}

impl TiltedRadialStep {
    /// The step from `e^{iβ}` whose Cayley-frame slit is the tilted slit with driving increment
    /// `c√s` over capacity time `s > 0`.
    pub fn new(base: f64, c: f64, s: f64) -> Self {
        let chordal = ChordalStep::tilted(0.0, c * s.sqrt(), s);
        let p = chordal.forward(I);
        let (_, d) = chordal.inverse_with_derivative(p);
        let dt = (1.0 / (d.norm() * p.im)).ln();
        TiltedRadialStep {
            base,
            dt,
            rot: Complex64::from_polar(1.0, base),
            chordal,
            a: p.re,
            b: p.im,
        }
    }

    /// The slit's tip, in the frame before the step.
    pub fn tip(&self) -> Complex64 {
        cayley_inv(self.chordal.tip()) * self.rot
    }

    /// The inverse map `f = g⁻¹`: D → D minus the slit.
    pub fn inverse(&self, z: Complex64) -> Complex64 {
        let v = cayley(z / self.rot) * self.b + self.a;
        cayley_inv(self.chordal.inverse(v)) * self.rot
    }

    /// The forward map and its derivative `g'(w)` (chain rule through the Cayley maps).
    pub fn forward_with_derivative(&self, w: Complex64) -> (Complex64, Complex64) {
        let w1 = w / self.rot;
        let zeta = cayley(w1);
        let v = self.chordal.forward(zeta);
        let (_, fd) = self.chordal.inverse_with_derivative(v);
        let u = (v - self.a) / self.b;
        let d =
            (-2.0 * I / ((1.0 + w1) * (1.0 + w1))) / fd / self.b * (-2.0 * I / ((I + u) * (I + u)));
        (cayley_inv(u) * self.rot, d)
    }

    /// Image of the boundary point `e^{iα}` as an angle within π of the base; `side` (±1)
    /// decides the side for the base point itself.
    pub fn forward_boundary_angle(&self, alpha: f64, side: f64) -> f64 {
        let phi = (alpha - self.base + PI).rem_euclid(2.0 * PI) - PI;
        let y = if phi == 0.0 {
            let (lo, hi) = self.chordal.preimage_interval();
            if side > 0.0 {
                hi
            } else {
                lo
            }
        } else {
            self.chordal.forward_real((0.5 * phi).tan())
        };
        self.base + 2.0 * ((y - self.a) / self.b).atan()
    }

    /// Angle of the new tip (the image of the slit's tip) after the step.
    pub fn tip_angle_after(&self) -> f64 {
        self.base + 2.0 * ((self.chordal_w_end() - self.a) / self.b).atan()
    }

    fn chordal_w_end(&self) -> f64 {
        let (lo, hi) = self.chordal.preimage_interval();
        // preimage = [W_end − x_l, W_end + x_r] with x_l/x_r = (1 − α)/α.
        let al = self.chordal.alpha();
        lo + (hi - lo) * (1.0 - al)
    }

    /// The arc of the output circle that is the preimage of the slit, as `(start, length)`.
    pub fn preimage_arc(&self) -> (f64, f64) {
        let (lo, hi) = self.chordal.preimage_interval();
        let a0 = self.base + 2.0 * ((lo - self.a) / self.b).atan();
        let a1 = self.base + 2.0 * ((hi - self.a) / self.b).atan();
        (a0, a1 - a0)
    }
}

/// What the CLE explorers need from a step in a branch's frame (radial time, forward map with
/// derivative, boundary correspondence): implemented by [`RadialStep`] and [`TiltedRadialStep`].
pub trait FrameStep {
    /// Radial time of the step.
    fn radial_time(&self) -> f64;
    /// The forward map and its derivative.
    fn forward_with_derivative(&self, w: Complex64) -> (Complex64, Complex64);
    /// Image of a boundary angle; `side` decides the side of the slit's base.
    fn forward_boundary_angle(&self, alpha: f64, side: f64) -> f64;
    /// The step followed by the rotation `rot`, as a map of a [`crate::disk_fast::DiskChain`].
    fn as_disk_map(&self, rot: Complex64) -> crate::disk_fast::DiskMap;
}

impl FrameStep for RadialStep {
    fn radial_time(&self) -> f64 {
        self.dt
    }
    fn forward_with_derivative(&self, w: Complex64) -> (Complex64, Complex64) {
        RadialStep::forward_with_derivative(self, w)
    }
    fn forward_boundary_angle(&self, alpha: f64, side: f64) -> f64 {
        RadialStep::forward_boundary_angle(self, alpha, side)
    }
    fn as_disk_map(&self, rot: Complex64) -> crate::disk_fast::DiskMap {
        crate::disk_fast::DiskMap::Step { step: *self, rot }
    }
}

impl FrameStep for TiltedRadialStep {
    fn radial_time(&self) -> f64 {
        self.dt
    }
    fn forward_with_derivative(&self, w: Complex64) -> (Complex64, Complex64) {
        TiltedRadialStep::forward_with_derivative(self, w)
    }
    fn forward_boundary_angle(&self, alpha: f64, side: f64) -> f64 {
        TiltedRadialStep::forward_boundary_angle(self, alpha, side)
    }
    fn as_disk_map(&self, rot: Complex64) -> crate::disk_fast::DiskMap {
        crate::disk_fast::DiskMap::Tilted { step: *self, rot }
    }
}
