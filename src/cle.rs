//! CLE_κ in the unit disk by radial exploration, 8/3 < κ < 8 (DESIGN §6).
//!
//! Conventions. The disk is D, its conformal radius seen from z is `CR(D, z) = 1 − |z|²`, and the
//! radial Loewner equation of §2 of DESIGN is used in every *frame* (a uniformising map of the
//! remaining domain onto D, normalised at the point that currently drives the exploration).
//! In a frame the force point sits at angle 0 (the boundary point `1`) and the tip at angle θ.
//!
//! The exploration is Sheffield's radial SLE_κ(κ − 6) (Duke Math. J. 2009), simulated through
//! its angle process θ = ξ − η, `dθ = √κ dB + ((κ−4)/2) cot(θ/2) dt` on (0, 2π) — reflected at 0
//! for 4 < κ < 8, and for κ ≤ 4 the symmetric (principal-value) version on (−2π, 2π) in which
//! each excursion away from 0 picks its side by a fair coin. An excursion that reaches ±2π closes
//! a loop around the frame's point; its interior is a fresh CLE_κ, so θ restarts at 0 there.
//!
//! # The θ scheme (DESIGN §6.1)
//! With d the distance of θ to its nearer end, d/√κ is a Bessel process of dimension
//! δ = 3 − 8/κ plus a bounded drift. One step of length h: (1) exact squared-Bessel transition
//! `X'² = h·χ'²(δ, d²/(κh))` (Poisson mixture of central χ², exact for every δ > 0, reflection
//! included); (2) the bounded remainder `r(d) = ((κ−4)/2)(cot(d/2) − 2/d)` added by an Euler
//! step; (3) whether the step visited the end is sampled with the Bessel-bridge probability
//! `1 − I_ν(z)/I_{−ν}(z)`, ν = 4/κ − 1/2, z = X X'/h. A visit of the far end (2π) closes a loop.
//!
//! # Marked points and target invariance (DESIGN §6.2)
//! All marked points of a sample live in one configuration. Explorations towards different
//! targets agree until the targets are disconnected, so the exploration may at any stopping time
//! continue towards any point of the current component. This module uses that freedom: the
//! *driver* of a branch is the point whose own radial clock runs fastest (largest Poisson kernel
//! at the tip), and its θ is simulated by the exact scheme above, in its own time. The other
//! points are carried by the slit maps (`w ← G(w)`, `log|g'| += log|G'(w)|`); the step is cut so
//! that every non-driving point stays at least `separation·√(κh)` away from the tip in the
//! driver's frame, where the slit maps are smooth.
//!
//! Two events change the set of points a branch carries:
//! * **The driver's loop closes** (its θ visits 2π): every point that sees the closed arc as
//!   more than half of the boundary (harmonic measure > 1/2; for points far from the tip it is
//!   ≈ 1) is inside the same loop, gets the same loop identifier, and continues with the
//!   driver in the loop's interior, where θ restarts at 0. The other points leave.
//! * **A point is pinched off**: `1 − |w|` in the driver's frame is the pseudo-hyperbolic
//!   closeness of the two points — symmetric in them. It tends to 0 when the trace disconnects
//!   them, and is also small when the trace merely passes very close to one of them, so a split
//!   can come early: each point's law is unaffected (it continues towards itself from the state
//!   it has), but the two then share no later loop. A point with `1 − |w| < pinch` leaves on its own branch with the state
//!   it has, *without* a loop being recorded: a disconnection is a loop closure for the point
//!   only if its own θ is at 2π, and then the exact scheme closes that loop on the branch's
//!   first step (bridge probability ≈ 1); otherwise the point simply continues (for
//!   4 < κ < 8 most disconnections are swallowings, which are not loops).
//!
//! Points that leave together stay together when they are still connected to each other.
//! Each branch draws from its own random stream, numbered in the deterministic order in which
//! branches are created.

use crate::bessel::bridge_hit_probability;
use crate::disk_fast::DiskMap;
use crate::error::{Error, Result};
use crate::radial::{FrameStep, RadialStep};
use crate::rng::{self, Tag};
use num_complex::Complex64;
use rand::Rng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Gamma, Poisson, StandardNormal};
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;

const TWO_PI: f64 = 2.0 * PI;

/// Which end of its range the angle process visited during a step.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum EndVisit {
    /// No end was visited.
    None,
    /// θ visited 0: the tip touched the force point from the force point's own side.
    Zero,
    /// θ visited ±2π: a loop closed around the frame's point.
    Full,
}

/// One step of the angle process: the new value and the end it visited.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AngleStep {
    /// θ after the step (signed for κ ≤ 4; in [0, 2π] for κ > 4).
    pub theta: f64,
    /// Which end the step visited (sampled from the Bessel-bridge probability).
    pub visit: EndVisit,
}

/// The angle process θ of radial SLE_κ(κ − 6) and its exact-transition scheme (module docs).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AngleProcess {
    kappa: f64,
    sqrt_kappa: f64,
    delta: f64,
    nu: f64,
    drift: f64,
    symmetric: bool,
}

impl AngleProcess {
    /// The process for CLE_κ.
    ///
    /// Errors: [`Error::InvalidParameter`] unless 8/3 < κ < 8 (CLE_κ exists for 8/3 < κ ≤ 8;
    /// at κ = 8 the loops fill space and θ never reaches 2π; at κ ≤ 8/3 the Bessel dimension
    /// 3 − 8/κ is ≤ 0 and there is no loop ensemble).
    pub fn new(kappa: f64) -> Result<Self> {
        if !(kappa.is_finite() && kappa > 8.0 / 3.0 && kappa < 8.0) {
            return Err(Error::param(
                "kappa",
                kappa,
                "8/3 < kappa < 8 (CLE_kappa needs kappa > 8/3; at kappa >= 8 the exploration \
                 is space-filling and never closes a loop around its target)",
            ));
        }
        Ok(AngleProcess {
            kappa,
            sqrt_kappa: kappa.sqrt(),
            delta: 3.0 - 8.0 / kappa,
            nu: 4.0 / kappa - 0.5,
            drift: 0.5 * (kappa - 4.0),
            symmetric: kappa <= 4.0,
        })
    }

    /// The angle process θ = ξ − η of radial SLE_κ(ρ) with its force point on the clockwise
    /// side of the start, `dθ = √κ dB + ((ρ+2)/2) cot(θ/2) dt` on (0, 2π) (DESIGN §5), stepped by
    /// the same exact scheme (Bessel dimension δ = 1 + 2(ρ+2)/κ near the ends; reflected at 0
    /// when δ < 2, never at an end when δ ≥ 2).
    ///
    /// Errors: [`Error::InvalidParameter`] unless κ ∈ (0, 10⁴] and ρ > −2 (for ρ ≤ −2 the
    /// process is not defined without a principal-value construction, which only the CLE case
    /// ρ = κ − 6 has here).
    pub fn radial_rho(kappa: f64, rho: f64) -> Result<Self> {
        if !(kappa.is_finite() && kappa > 0.0 && kappa <= 1e4) {
            return Err(Error::param("kappa", kappa, "0 < kappa <= 1e4"));
        }
        if !(rho.is_finite() && rho > -2.0 && rho <= 1e4) {
            return Err(Error::param(
                "rho",
                rho,
                "-2 < rho <= 1e4 (radial SLE_kappa(rho) with a force point needs rho > -2)",
            ));
        }
        let delta = 1.0 + 2.0 * (rho + 2.0) / kappa;
        Ok(AngleProcess {
            kappa,
            sqrt_kappa: kappa.sqrt(),
            delta,
            // ν ≤ 0 (δ ≥ 2): the ends are never visited.
            nu: 1.0 - 0.5 * delta,
            drift: 0.5 * (rho + 2.0),
            symmetric: false,
        })
    }

    /// κ.
    pub fn kappa(&self) -> f64 {
        self.kappa
    }

    /// Dimension δ of the Bessel process that θ/√κ follows near its ends (3 − 8/κ for CLE).
    pub fn bessel_dimension(&self) -> f64 {
        self.delta
    }

    /// Whether the symmetric (principal-value, κ ≤ 4) version is used.
    pub fn is_symmetric(&self) -> bool {
        self.symmetric
    }

    /// The bounded part of the drift, `r(d) = ((κ−4)/2)(cot(d/2) − 2/d)` for d ∈ [0, π].
    fn remainder(&self, d: f64) -> f64 {
        let c = if d < 1e-3 {
            // cot(x/2) − 2/x = −x/6 − x³/360 − …
            -d / 6.0 - d * d * d / 360.0
        } else {
            1.0 / (0.5 * d).tan() - 2.0 / d
        };
        self.drift * c
    }

    /// A non-central χ² variate with δ degrees of freedom and non-centrality `lam`.
    fn noncentral_chi2<R: Rng + ?Sized>(&self, lam: f64, rng: &mut R) -> f64 {
        let n = if lam <= 0.0 {
            0.0
        } else if lam < 1e12 {
            match Poisson::new(0.5 * lam) {
                Ok(p) => p.sample(rng),
                Err(_) => 0.5 * lam,
            }
        } else {
            // Far from the end (d²/(κh) > 1e12) the Poisson count is normal to 1e-6 relative.
            let z: f64 = StandardNormal.sample(rng);
            (0.5 * lam + (0.5 * lam).sqrt() * z).max(0.0).round()
        };
        let shape = 0.5 * self.delta + n;
        match Gamma::new(shape, 2.0) {
            Ok(g) => g.sample(rng),
            Err(_) => 2.0 * shape,
        }
    }

    /// One step of length `h` from `theta` (module docs: exact squared-Bessel step towards the
    /// nearer end, bounded drift remainder, Bessel-bridge visit of the end).
    pub fn step<R: Rng + ?Sized>(&self, theta: f64, h: f64, rng: &mut R) -> AngleStep {
        let sign = if theta < 0.0 { -1.0 } else { 1.0 };
        let a = theta.abs().min(TWO_PI);
        let near_full = a > PI;
        let d = if near_full { TWO_PI - a } else { a };
        let lam = d * d / (self.kappa * h);
        let y = self.noncentral_chi2(lam, rng);
        let x_new = (h * y).sqrt();
        let mut d_new = self.sqrt_kappa * x_new + self.remainder(d) * h;
        if d_new < 0.0 {
            d_new = -d_new;
        }
        let z = d * x_new / (self.sqrt_kappa * h);
        let p = if self.nu > 0.0 {
            bridge_hit_probability(self.nu, z)
        } else {
            0.0
        };
        let u: f64 = rng.random();
        let visited = u < p;
        if near_full {
            let a_new = (TWO_PI - d_new).clamp(0.0, TWO_PI);
            AngleStep {
                theta: sign * a_new,
                visit: if visited {
                    EndVisit::Full
                } else {
                    EndVisit::None
                },
            }
        } else {
            let a_new = d_new.min(TWO_PI);
            if visited {
                let s = if self.symmetric {
                    if rng.random::<bool>() {
                        1.0
                    } else {
                        -1.0
                    }
                } else {
                    1.0
                };
                AngleStep {
                    theta: s * a_new,
                    visit: EndVisit::Zero,
                }
            } else {
                AngleStep {
                    theta: sign * a_new,
                    visit: EndVisit::None,
                }
            }
        }
    }
}

/// Numerical settings of the exploration.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ExploreSettings {
    /// Largest step, in the driving point's radial time (default 0.01; DESIGN §6.1 measured
    /// ≈ 0.5% error in E[T] at this step).
    pub h_max: f64,
    /// Smallest step; below it the geometry near the tip is unresolved (default 1e-10).
    pub h_min: f64,
    /// Non-driving points are kept at least `separation·√(κh)` from the tip (default 8).
    pub separation: f64,
    /// A non-driving point with `1 − |w| < pinch` in the driver's frame (pseudo-hyperbolic
    /// closeness to the driver) counts as disconnected from it and leaves on its own branch
    /// (default 1e-6).
    pub pinch: f64,
    /// Nested loops to find around each point (default 1).
    pub levels: usize,
    /// A point whose normalised radial time exceeds this without finding all its loops is
    /// reported as censored (default: levels·30/λ*, a tail probability of about e^{−30} per
    /// level).
    pub max_time: f64,
    /// Step budget for one sample (all branches); exceeding it censors the remaining points.
    pub max_steps: u64,
}

impl ExploreSettings {
    /// Defaults for κ and `levels` (see the field docs).
    pub fn defaults(kappa: f64, levels: usize) -> Self {
        let lambda_star = 1.0 - 2.0 / kappa - 3.0 * kappa / 32.0;
        let levels = levels.max(1);
        ExploreSettings {
            h_max: 0.01,
            h_min: 1e-10,
            separation: 8.0,
            pinch: 1e-6,
            levels,
            max_time: levels as f64 * 30.0 / lambda_star.max(1e-3),
            max_steps: 200_000_000,
        }
    }
}

/// A loop of the configuration surrounding a marked point.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct LoopAround {
    /// Nesting level (1 = outermost loop around the point).
    pub level: usize,
    /// Identifier of the loop within its sample: points that share a loop share its id.
    pub loop_id: u64,
    /// Natural log of the conformal radius of the loop's interior seen from the point, in the
    /// disk's own coordinates (so `log(1 − |z|²) − log_cr` is the law of §7.1 at level 1).
    pub log_cr: f64,
}

/// What one sample found around one marked point.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PointRecord {
    /// The marked point.
    pub z: [f64; 2],
    /// `log CR(D, z) = log(1 − |z|²)`.
    pub log_cr_disk: f64,
    /// The loops around the point, outermost first.
    pub loops: Vec<LoopAround>,
    /// True if the exploration stopped (time or step budget) before all levels were found.
    pub censored: bool,
}

impl PointRecord {
    /// An empty record for the marked point `z` of the open disk.
    pub fn new(z: Complex64) -> Self {
        let r = z.norm();
        PointRecord {
            z: [z.re, z.im],
            log_cr_disk: ((1.0 - r) * (1.0 + r)).ln(),
            loops: Vec::new(),
            censored: false,
        }
    }

    /// Normalised times `T_k = log CR(D, z) − log CR(loop_k)`, k = 1, 2, …
    pub fn times(&self) -> Vec<f64> {
        self.loops
            .iter()
            .map(|l| self.log_cr_disk - l.log_cr)
            .collect()
    }
}

/// Counters that say how well a sample was resolved.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize)]
pub struct SampleDiagnostics {
    /// Steps taken (all branches).
    pub steps: u64,
    /// Steps that wanted to be shorter than `h_min` and were taken at `h_min`.
    pub floor_steps: u64,
    /// Changes of driving point.
    pub switches: u64,
    /// Branches of the exploration tree (1 + number of separations).
    pub branches: u64,
    /// Points that left a branch: pinched off from its driver, or outside a loop that closed
    /// around it.
    pub pinched: u64,
}

/// One CLE_κ configuration seen from the marked points.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CleSample {
    /// Sample index (with the seed, it determines the sample).
    pub index: u64,
    /// One record per marked point, in the order given.
    pub points: Vec<PointRecord>,
    /// Resolution counters.
    pub diagnostics: SampleDiagnostics,
}

/// A marked point carried by a branch: its image `w` in the branch frame and `log|g'(z)|`.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Tracked {
    pub(crate) id: usize,
    pub(crate) w: Complex64,
    pub(crate) ell: f64,
}

impl Tracked {
    /// `log CR(D_t, z) = log(1 − |w|²) − log|g_t'(z)|`.
    pub(crate) fn log_cr(&self) -> f64 {
        let r = self.w.norm();
        ((1.0 - r) * (1.0 + r)).ln() - self.ell
    }
}

/// Hooks through which an exploration records its own geometry: every change of a branch's
/// frame as a forward map, the end visits of θ, splits and loop closures. `()` records nothing
/// and is what the statistics of [`CleExplorer`] use; [`crate::loops`] draws loops with it.
pub(crate) trait Recorder: Sized {
    /// Whether every step must be taken as a map (this turns off the one-point shortcut, which
    /// carries no geometry).
    const TRACES: bool;
    /// The branch frame changed by the forward map `m`; `tip_before` is the tip in the frame
    /// before it.
    fn map(&mut self, _m: DiskMap, _tip_before: Complex64) {}
    /// A step of radial time `h` was taken (its map was just recorded), θ visited `visit`
    /// and is now `theta`.
    fn stepped(&mut self, _visit: EndVisit, _h: f64, _theta: f64) {}
    /// The tip is back at the force point after a visit of 0: the loop traced since the
    /// previous visit, if the trace returned to its start, closed with the branch's points
    /// outside it; it gets identifier `loop_id`, nesting depth `depth`, and lies inside the
    /// loop `outer` (the driver's innermost loop so far).
    fn returned(&mut self, _loop_id: u64, _depth: usize, _outer: Option<u64>) {}
    /// The next step is the second half of one whose first half visited an end.
    fn half_step(&mut self) {}
    /// The longest next step the recorder wants (its resolution of the trace).
    fn max_h(&self) -> f64 {
        f64::INFINITY
    }
    /// Another point becomes the driver when its Poisson kernel at the tip is this many times
    /// the driver's.
    fn switch_ratio(&self) -> f64 {
        SWITCH_RATIO
    }
    /// Whether the branch should stop now (its trace can no longer be resolved).
    fn give_up(&self) -> bool {
        false
    }
    /// Points with `log CR(D_t, z)` below this are no longer explored.
    fn min_log_cr(&self) -> f64 {
        f64::NEG_INFINITY
    }
    /// The recorder of a branch split off now, with identifier `branch`; its path is the
    /// current one, without the last step when `before_last_step`.
    fn fork(&mut self, before_last_step: bool, branch: u64) -> Self;
    /// A loop with identifier `loop_id` closed around the points `inside` (`(point, log CR)`),
    /// the first of them the driver.
    fn closed(&mut self, _loop_id: u64, _inside: &[(usize, f64)]) {}
    /// Whether the step would move the tip farther in the plane than the trace resolves.
    fn too_far(&self, _step: &RadialStep) -> bool {
        false
    }
    /// Whether the tip is still far, in the plane, from the force point.
    fn far_from_force_point(&self) -> bool {
        false
    }
    /// The branch restarted θ at 0 with its force point at its tip (a new excursion, and so a
    /// possible loop, starts here).
    fn restarted(&mut self) {}
    /// The branch has finished.
    fn finish(self) {}
}

impl Recorder for () {
    const TRACES: bool = false;
    fn fork(&mut self, _before_last_step: bool, _branch: u64) -> Self {}
}

/// One branch of the exploration tree: force point at 1, tip at `e^{iθ}`, driver at 0.
pub(crate) struct Branch<R: Recorder = ()> {
    pub(crate) theta: f64,
    pub(crate) pts: Vec<Tracked>,
    pub(crate) driver: usize,
    pub(crate) rng: ChaCha8Rng,
    /// The points before the current step (reused buffer, so the hot loop does not allocate).
    pub(crate) before: Vec<Tracked>,
    /// What records the branch's geometry.
    pub(crate) rec: R,
    /// Geometry only: the radial time of a first step off the neck still to take (a branch
    /// split off with θ away from the ends; see `run_branch`).
    pub(crate) swallow: Option<f64>,
    /// `1 − |w|` of the driver in its parent's frame when the branch was split off (1 for the
    /// root): its pseudo-hyperbolic closeness to the parent's driver.
    pub(crate) closeness: f64,
    /// Geometry only: the rest of a refined step, `(θ at its end, its radial time)`, latest
    /// first (see `run_branch`).
    pub(crate) pending: Vec<(f64, f64)>,
}

/// Harmonic measure, seen from `w`, of the boundary arc from the force point (angle 0) to the
/// tip (angle θ), on the side given by the sign of θ.
pub(crate) fn arc_measure(w: Complex64, theta: f64) -> f64 {
    let m = |u: Complex64| (u - w) / (Complex64::new(1.0, 0.0) - w.conj() * u);
    let a = m(Complex64::new(1.0, 0.0)).arg();
    let b = m(Complex64::from_polar(1.0, theta)).arg();
    if theta >= 0.0 {
        (b - a).rem_euclid(TWO_PI) / TWO_PI
    } else {
        (a - b).rem_euclid(TWO_PI) / TWO_PI
    }
}

impl<R: Recorder> Branch<R> {
    /// Move to the frame of point `k` (Möbius map sending `w_k` to 0, rotated so that the force
    /// point is at 1) and make it the driver; θ becomes the point's own angle. Returns the frame
    /// change as a forward map (the identity when `k` is already at 0).
    pub(crate) fn renormalise(&mut self, k: usize) -> DiskMap {
        let theta_before = self.theta;
        // A refined step's remainder is in the old driver's angle; dropping it is harmless
        // (the midpoints already drawn are samples of the process at their times).
        self.pending.clear();
        let c = self.pts[k].w;
        let one = Complex64::new(1.0, 0.0);
        let tip = Complex64::from_polar(1.0, self.theta);
        let (force, tip) = if c == Complex64::new(0.0, 0.0) {
            (one, tip)
        } else {
            let rc = c.norm();
            let num = ((1.0 - rc) * (1.0 + rc)).ln();
            for p in self.pts.iter_mut() {
                let den = one - c.conj() * p.w;
                p.ell += num - 2.0 * den.norm().ln();
                p.w = (p.w - c) / den;
            }
            let m = |u: Complex64| (u - c) / (one - c.conj() * u);
            (m(one), m(tip))
        };
        let rot = force.conj() / force.norm();
        for p in self.pts.iter_mut() {
            p.w *= rot;
        }
        self.pts[k].w = Complex64::new(0.0, 0.0);
        let b = (tip * rot).arg();
        self.theta = if self.theta >= 0.0 {
            b.rem_euclid(TWO_PI)
        } else {
            -(-b).rem_euclid(TWO_PI)
        };
        self.driver = k;
        let m = DiskMap::Mobius { c, rot };
        if R::TRACES {
            self.rec.map(m, Complex64::from_polar(1.0, theta_before));
        }
        m
    }

    /// Apply a step (its driving angle in the frame, force point at angle 0) to every point,
    /// then rotate the frame so that the force point, moved to its image on `side` of the slit
    /// base when it sits there, is at angle 0 again; θ becomes `theta`. Returns the rotation.
    pub(crate) fn advance<S: FrameStep>(&mut self, step: &S, side: f64, theta: f64) -> Complex64 {
        let driver = self.driver;
        for (j, p) in self.pts.iter_mut().enumerate() {
            if j == driver {
                p.ell += step.radial_time();
            } else {
                let (w, d) = step.forward_with_derivative(p.w);
                p.w = w;
                p.ell += d.norm().ln();
            }
        }
        let eta = step.forward_boundary_angle(0.0, side);
        let rot = Complex64::from_polar(1.0, -eta);
        for p in self.pts.iter_mut() {
            p.w *= rot;
        }
        self.pts[driver].w = Complex64::new(0.0, 0.0);
        if R::TRACES {
            let tip_before = Complex64::from_polar(1.0, self.theta);
            self.rec.map(step.as_disk_map(rot), tip_before);
        }
        self.theta = theta;
        rot
    }

    /// Non-driving points that leave after a step: `(pinched, broken)`, those closer to the
    /// circle than `pinch` (pseudo-hyperbolic closeness to the driver) and those the step pushed
    /// onto it (their state before the step is the one to keep).
    pub(crate) fn leaving(&self, pinch: f64) -> (Vec<usize>, Vec<usize>) {
        let mut pinched = Vec::new();
        let mut broken = Vec::new();
        for (j, p) in self.pts.iter().enumerate() {
            if j == self.driver {
                continue;
            }
            let r = p.w.norm();
            if !(r < 1.0 && p.ell.is_finite()) {
                broken.push(j);
            } else if 1.0 - r < pinch {
                pinched.push(j);
            }
        }
        (pinched, broken)
    }

    /// The point with the fastest clock (largest Poisson kernel at the tip).
    pub(crate) fn fastest(&self) -> (usize, f64) {
        let tip = Complex64::from_polar(1.0, self.theta);
        let mut best = (self.driver, 1.0);
        for (j, p) in self.pts.iter().enumerate() {
            if j == self.driver {
                continue;
            }
            let r = p.w.norm();
            let pk = (1.0 - r) * (1.0 + r) / (tip - p.w).norm_sqr();
            if pk > best.1 {
                best = (j, pk);
            }
        }
        best
    }

    /// Relabel the force point at the tip and restart θ at 0 (a loop has just closed around
    /// the branch's points: its interior is explored afresh from the closing point). Returns the
    /// frame change (a rotation).
    pub(crate) fn restart_inside(&mut self) -> DiskMap {
        let rot = Complex64::from_polar(1.0, -self.theta);
        for p in self.pts.iter_mut() {
            p.w *= rot;
        }
        let m = DiskMap::Mobius {
            c: Complex64::new(0.0, 0.0),
            rot,
        };
        if R::TRACES {
            self.rec.map(m, Complex64::from_polar(1.0, self.theta));
        }
        self.theta = 0.0;
        m
    }
}

/// Sampler of CLE_κ configurations seen from a set of marked points of the unit disk.
#[derive(Debug, Clone)]
pub struct CleExplorer {
    process: AngleProcess,
    settings: ExploreSettings,
    points: Vec<Complex64>,
}

/// Hysteresis for changing the driver: switch when another point's Poisson kernel at the tip is
/// this much larger (its clock, which runs at the kernel's square, 2.25 times faster).
const SWITCH_RATIO: f64 = 1.5;

impl CleExplorer {
    /// An explorer of CLE_κ with the given marked points (at least one, all in the open disk).
    ///
    /// Errors: [`Error::InvalidParameter`] for κ outside (8/3, 8), no point, a point with
    /// |z| ≥ 1 or non-finite coordinates, or unusable settings.
    pub fn new(kappa: f64, points: &[Complex64], settings: ExploreSettings) -> Result<Self> {
        let process = AngleProcess::new(kappa)?;
        if points.is_empty() {
            return Err(Error::param(
                "points",
                0.0,
                "at least one marked point in the open unit disk",
            ));
        }
        for z in points {
            if !(z.re.is_finite() && z.im.is_finite() && z.norm() < 1.0) {
                return Err(Error::param(
                    "point",
                    z.norm(),
                    format!(
                        "|z| < 1 (the point ({}, {}) is not inside the open unit disk)",
                        z.re, z.im
                    ),
                ));
            }
        }
        let s = settings;
        if !(s.h_max.is_finite() && s.h_max > 0.0 && s.h_max <= 0.5) {
            return Err(Error::param("h_max", s.h_max, "0 < h_max <= 0.5"));
        }
        if !(s.h_min.is_finite() && s.h_min > 0.0 && s.h_min <= s.h_max) {
            return Err(Error::param("h_min", s.h_min, "0 < h_min <= h_max"));
        }
        if !(s.separation.is_finite() && s.separation >= 1.0) {
            return Err(Error::param("separation", s.separation, "separation >= 1"));
        }
        if s.levels == 0 || s.levels > 10_000 {
            return Err(Error::param(
                "levels",
                s.levels as f64,
                "1 <= levels <= 10000",
            ));
        }
        if !(s.max_time.is_finite() && s.max_time > 0.0) {
            return Err(Error::param(
                "max_time",
                s.max_time,
                "a positive radial time",
            ));
        }
        // Two marked points that start closer (pseudo-hyperbolically, in the frame of either)
        // than the pinch rule can tell apart would be split onto separate branches at once, as if
        // a loop had already separated them: refuse them (10·pinch leaves a margin; measured:
        // at 1 − |φ| = 1e-8 the first loop came at T = 0.01, at 1e-5 and 1e-4 the law was
        // unchanged).
        for (i, a) in points.iter().enumerate() {
            for b in &points[i + 1..] {
                let closeness = 1.0 - ((b - a) / (1.0 - a.conj() * b)).norm();
                if closeness < 10.0 * s.pinch {
                    return Err(Error::param(
                        "points",
                        closeness,
                        format!(
                            "1 - |phi_a(b)| >= {:e} for every pair (the points ({}, {}) and \
                             ({}, {}) are too close to each other relative to the circle to be \
                             explored in one configuration; move them or use separate runs)",
                            10.0 * s.pinch,
                            a.re,
                            a.im,
                            b.re,
                            b.im
                        ),
                    ));
                }
            }
        }
        Ok(CleExplorer {
            process,
            settings,
            points: points.to_vec(),
        })
    }

    /// The angle process.
    pub fn process(&self) -> &AngleProcess {
        &self.process
    }

    /// The settings.
    pub fn settings(&self) -> &ExploreSettings {
        &self.settings
    }

    /// The marked points.
    pub fn points(&self) -> &[Complex64] {
        &self.points
    }

    /// Sample `index` of a run with `seed` (a pure function of both).
    pub fn sample(&self, seed: u64, index: u64) -> CleSample {
        self.sample_part(seed, index, 0)
    }

    /// Sample `index` of part `part` of a run with `seed`: parts are independent streams of the
    /// same run (used to explore several points in independent configurations). Part 0 is
    /// [`CleExplorer::sample`].
    pub fn sample_part(&self, seed: u64, index: u64, part: u32) -> CleSample {
        self.sample_recorded(seed, index, part, ())
    }

    /// [`CleExplorer::sample_part`] with a recorder of the geometry on the root branch (the
    /// branches split off get theirs from [`Recorder::fork`]).
    pub(crate) fn sample_recorded<R: Recorder>(
        &self,
        seed: u64,
        index: u64,
        part: u32,
        rec: R,
    ) -> CleSample {
        let base = (part as u64) << 40;
        let mut records: Vec<PointRecord> =
            self.points.iter().map(|&z| PointRecord::new(z)).collect();
        let mut diag = SampleDiagnostics::default();
        let mut next_loop: u64 = 0;
        let mut next_branch: u64 = base + 1;
        let mut root = Branch {
            theta: 0.0,
            pts: self
                .points
                .iter()
                .enumerate()
                .map(|(id, &w)| Tracked { id, w, ell: 0.0 })
                .collect(),
            driver: 0,
            rng: rng::substream(seed, Tag::Cle, index, base),
            before: Vec::new(),
            rec,
            swallow: None,
            closeness: 1.0,
            pending: Vec::new(),
        };
        let k = root.fastest_any();
        root.renormalise(k);
        let mut stack = vec![root];
        while let Some(mut br) = stack.pop() {
            let spawned = self.run_branch(
                &mut br,
                &mut records,
                &mut diag,
                &mut next_loop,
                &mut next_branch,
                seed,
                index,
            );
            br.rec.finish();
            // Push in reverse so branches run in creation order (deterministic either way).
            for b in spawned.into_iter().rev() {
                stack.push(b);
            }
        }
        diag.branches = next_branch - base;
        CleSample {
            index,
            points: records,
            diagnostics: diag,
        }
    }

    /// Run a branch until its points are done or it splits; returns the branches split off.
    #[allow(clippy::too_many_arguments)]
    fn run_branch<R: Recorder>(
        &self,
        br: &mut Branch<R>,
        records: &mut [PointRecord],
        diag: &mut SampleDiagnostics,
        next_loop: &mut u64,
        next_branch: &mut u64,
        seed: u64,
        index: u64,
    ) -> Vec<Branch<R>> {
        let s = &self.settings;
        let kappa = self.process.kappa;
        let mut spawned = Vec::new();
        let mut since_check = 0u32;
        loop {
            if br.pts.is_empty() {
                return spawned;
            }
            if R::TRACES && br.rec.give_up() {
                br.pts.clear();
                return spawned;
            }
            if let Some(h0) = br.swallow.take() {
                let step = RadialStep::new(br.theta, h0);
                let side = if br.theta >= 0.0 { -1.0 } else { 1.0 };
                br.advance(&step, side, br.theta);
                diag.steps += 1;
                continue;
            }
            if diag.steps >= s.max_steps {
                for p in &br.pts {
                    records[p.id].censored = true;
                }
                br.pts.clear();
                return spawned;
            }
            // Time budget, checked every 64 steps.
            since_check += 1;
            if since_check >= 64 {
                since_check = 0;
                let before = br.pts.len();
                let floor = br.rec.min_log_cr();
                br.pts.retain(|p| {
                    let t = records[p.id].log_cr_disk - p.log_cr();
                    if t > s.max_time {
                        records[p.id].censored = true;
                        false
                    } else {
                        p.log_cr().is_nan() || p.log_cr() >= floor
                    }
                });
                if br.pts.is_empty() {
                    return spawned;
                }
                if br.pts.len() != before {
                    let k = br.fastest_any();
                    br.renormalise(k);
                }
            }
            if !R::TRACES && br.pts.len() == 1 {
                // One point: no geometry to carry, only its own clock and angle (the same steps
                // and random numbers as the general path below).
                let st = self.process.step(br.theta, s.h_max, &mut br.rng);
                br.pts[0].ell += s.h_max;
                diag.steps += 1;
                if st.visit == EndVisit::Full {
                    let p = br.pts[0];
                    let id = *next_loop;
                    *next_loop += 1;
                    let rec = &mut records[p.id];
                    rec.loops.push(LoopAround {
                        level: rec.loops.len() + 1,
                        loop_id: id,
                        log_cr: p.log_cr(),
                    });
                    if rec.loops.len() >= s.levels {
                        br.pts.clear();
                        return spawned;
                    }
                    br.theta = 0.0;
                } else {
                    br.theta = st.theta;
                }
                continue;
            }
            let (k, pk) = br.fastest();
            if k != br.driver && pk > br.rec.switch_ratio() && br.pending.is_empty() {
                br.renormalise(k);
                diag.switches += 1;
            }
            // Step length: every non-driving point at least separation·√(κh) from the tip.
            let tip = Complex64::from_polar(1.0, br.theta);
            let mut h = s.h_max.min(br.rec.max_h());
            for (j, p) in br.pts.iter().enumerate() {
                if j != br.driver {
                    let dist = (tip - p.w).norm() / s.separation;
                    h = h.min(dist * dist / kappa);
                }
            }
            if R::TRACES {
                // Geometry: near 2π (a loop about to close), steps no longer than the distance
                // to it, so that the visit lands where the tip already is instead of jumping
                // from it to the force point; and while the tip is still far from the force
                // point in the plane (the short arc between them hides a stretch of it),
                // steps of a third of that, which rarely visit.
                // (Near 0 the steps stay as they are: there the tip's jumps to the force point
                // are the exploration's own, between loops for κ ≤ 4 and at swallowings for
                // κ > 4, and no loop is drawn across them.)
                let d = TWO_PI - br.theta.abs();
                if d < 1.0 {
                    let cap = if br.rec.far_from_force_point() {
                        d / 3.0
                    } else {
                        d
                    };
                    h = h.min(cap * cap / kappa);
                }
            }
            let floored = h < s.h_min;
            if floored {
                h = s.h_min;
                diag.floor_steps += 1;
            }
            br.before.clear();
            br.before.extend_from_slice(&br.pts);
            let theta_before = br.theta;
            let mut st = match br.pending.pop() {
                Some((theta, h_left)) => {
                    h = h_left;
                    AngleStep {
                        theta,
                        visit: EndVisit::None,
                    }
                }
                None => self.process.step(br.theta, h, &mut br.rng),
            };
            if R::TRACES && st.visit == EndVisit::None {
                // Geometry: a step that would move the tip more than the recorder resolves is
                // refined by Brownian-bridge midpoints of θ (away from the ends, where the
                // drift is smooth and the bridge of θ/√κ is Brownian to O(h)); the second half
                // waits on `pending`. The law of θ at the step's end is untouched.
                loop {
                    let sk = (kappa * h).sqrt();
                    let ends = |t: f64| t.abs().min(TWO_PI - t.abs());
                    if h < 2.0 * s.h_min || ends(theta_before).min(ends(st.theta)) < 3.0 * sk {
                        break;
                    }
                    if !br.rec.too_far(&RadialStep::new(st.theta, h)) {
                        break;
                    }
                    let z: f64 = br.rng.sample(StandardNormal);
                    br.pending.push((st.theta, 0.5 * h));
                    st.theta = 0.5 * (theta_before + st.theta) + 0.5 * sk * z;
                    h *= 0.5;
                }
            }
            let visited = st.visit != EndVisit::None;
            if R::TRACES && visited {
                // For geometry, the visit of an end must close what it closes in the chain too
                // (a loop, or the pocket under an arch), not leave it open by the part of the
                // step after the visit. A visit of 2π ends the step there: its slit grows from
                // the force point. A visit of 0 splits the step in two halves, the first with
                // its slit at the force point, the second from there to the new angle. (At the
                // step's resolution this is the same process; the statistics keep the plain
                // scheme.)
                if st.visit == EndVisit::Full {
                    st.theta = TWO_PI.copysign(st.theta);
                } else {
                    h *= 0.5;
                    let first = RadialStep::new(0.0, h);
                    let side = if st.theta >= 0.0 { -1.0 } else { 1.0 };
                    br.advance(&first, side, 0.0);
                    br.rec.stepped(EndVisit::Zero, h, 0.0);
                    {
                        // The tip is back at the force point: the loop traced since the last
                        // visit (if any) closed with the branch's points outside it.
                        let p = br.pts[br.driver];
                        let outer = records[p.id].loops.last().map(|l| l.loop_id);
                        let depth = records[p.id].loops.len() + 1;
                        let id = *next_loop;
                        *next_loop += 1;
                        br.rec.returned(id, depth, outer);
                    }
                    br.rec.half_step();
                    diag.steps += 1;
                    st.visit = EndVisit::None;
                }
            }
            let step = RadialStep::new(st.theta, h);
            let driver = br.driver;
            let side = if st.theta >= 0.0 { -1.0 } else { 1.0 };
            br.advance(&step, side, st.theta);
            br.rec.stepped(st.visit, h, br.theta);
            diag.steps += 1;

            // Pinched points: 1 − |w| is the pseudo-hyperbolic closeness of a point to the
            // driver (symmetric in the two); it tends to 0 when the trace disconnects them (and
            // is small when the trace passes very close, where an early split is harmless for
            // each point's own law). Such points leave on their own branch with the state they have;
            // their own angle then decides, through the exact scheme, whether the region they
            // are in is a loop interior (θ ≈ 2π: the next step closes it) or not.
            let (mut pinched, broken) = br.leaving(s.pinch);
            let mut leaving: Vec<usize> = pinched.clone();
            leaving.extend(&broken);
            let mut inside = Vec::new();
            if st.visit == EndVisit::Full {
                // A loop closes around the driver and around every other point that sees the
                // closed arc as most of the boundary; the others are outside and leave.
                for (j, p) in br.pts.iter().enumerate() {
                    if j == driver || (!leaving.contains(&j) && arc_measure(p.w, br.theta) > 0.5) {
                        inside.push(j);
                    } else if !leaving.contains(&j) {
                        pinched.push(j);
                        leaving.push(j);
                    }
                }
            }
            if !broken.is_empty() {
                diag.pinched += broken.len() as u64;
                let pts: Vec<Tracked> = broken.iter().map(|&j| br.before[j]).collect();
                for g in group_connected(pts, s.pinch) {
                    let rec = br.rec.fork(true, *next_branch);
                    spawned.push(self.split(theta_before, g, seed, index, next_branch, rec));
                }
            }
            if !pinched.is_empty() {
                diag.pinched += pinched.len() as u64;
                let pts: Vec<Tracked> = pinched.iter().map(|&j| br.pts[j]).collect();
                for g in group_connected(pts, s.pinch) {
                    let rec = br.rec.fork(false, *next_branch);
                    let mut child = self.split(br.theta, g, seed, index, next_branch, rec);
                    if R::TRACES {
                        if child.snap_to_end(if visited { SNAP } else { SNAP_CUT }) {
                            // Cut off by the step: at a visit of an end (a loop or an arch
                            // closed mid-step, its slit went on past that point) or, for
                            // κ > 4, swallowed. Seen from the points the tip met the force
                            // point: θ is at an end. At 2π the first step closes their loop
                            // (from the last visit); at 0 their region is explored afresh from
                            // here, where their next loop starts.
                            if child.theta == 0.0 {
                                child.rec.restarted();
                            }
                        } else {
                            // Split off with θ away from the ends: their region is joined to
                            // the parent's by a neck that the parent's frame squeezes below
                            // `pinch`, and it is the side that keeps the force point (the
                            // parent's driver went into a pocket, or only nearly so), so the
                            // excursion being traced goes on here: θ and the loop's start are
                            // kept. Seen from them, the parent's region is an arc of about
                            // δ = `1 − |w|` around the tip; a first slit of length about √δ
                            // moves the tip off it, so that the branch does not trace the
                            // parent's region again at scales its frame cannot resolve.
                            // (Restarting θ here instead left 31 of 36 loops of diameter ≥ 0.2
                            // open at κ = 6, seeds 1–2, against 12 of 18 when kept.)
                            child.swallow = Some(0.25 * child.closeness);
                        }
                    }
                    spawned.push(child);
                }
            }
            if st.visit == EndVisit::Full {
                let id = *next_loop;
                *next_loop += 1;
                let was_driver = br.pts[driver].id;
                if R::TRACES {
                    // The driver first, then the others inside.
                    let closed: Vec<(usize, f64)> = std::iter::once(driver)
                        .chain(inside.iter().copied().filter(|&j| j != driver))
                        .map(|j| (br.pts[j].id, br.pts[j].log_cr()))
                        .collect();
                    br.rec.closed(id, &closed);
                }
                let mut remaining = Vec::new();
                for &j in &inside {
                    let p = br.pts[j];
                    let rec = &mut records[p.id];
                    rec.loops.push(LoopAround {
                        level: rec.loops.len() + 1,
                        loop_id: id,
                        log_cr: p.log_cr(),
                    });
                    if rec.loops.len() < s.levels {
                        remaining.push(p);
                    }
                }
                br.pts = remaining;
                if br.pts.is_empty() {
                    return spawned;
                }
                let k = br
                    .pts
                    .iter()
                    .position(|p| p.id == was_driver)
                    .unwrap_or_else(|| br.fastest_any());
                br.restart_inside();
                br.renormalise(k);
                br.theta = 0.0;
            } else if !leaving.is_empty() {
                let was_driver = br.pts[driver].id;
                let mut keep = Vec::new();
                for (j, p) in br.pts.iter().enumerate() {
                    if !leaving.contains(&j) {
                        keep.push(*p);
                    }
                }
                br.pts = keep;
                br.driver = br.pts.iter().position(|p| p.id == was_driver).unwrap_or(0);
            }
        }
    }

    /// A new branch for points that left a branch, in the inherited frame (tip at angle
    /// `theta`); the fastest of them drives it.
    fn split<R: Recorder>(
        &self,
        theta: f64,
        pts: Vec<Tracked>,
        seed: u64,
        index: u64,
        next_branch: &mut u64,
        rec: R,
    ) -> Branch<R> {
        let id = *next_branch;
        *next_branch += 1;
        let mut b = Branch {
            theta,
            pts,
            driver: 0,
            rng: rng::substream(seed, Tag::Cle, index, id),
            before: Vec::new(),
            rec,
            swallow: None,
            closeness: 1.0,
            pending: Vec::new(),
        };
        let k = b.fastest_any();
        b.closeness = 1.0 - b.pts[k].w.norm();
        b.renormalise(k);
        b
    }
}

/// Split points that leave a branch together into groups that are still connected to each
/// other (pseudo-hyperbolic closeness `1 − |φ_{w_j}(w_k)|` at least `pinch`).
pub(crate) fn group_connected(pts: Vec<Tracked>, pinch: f64) -> Vec<Vec<Tracked>> {
    let n = pts.len();
    let mut label: Vec<usize> = (0..n).collect();
    for a in 0..n {
        for b in (a + 1)..n {
            let (wa, wb) = (pts[a].w, pts[b].w);
            let m = (wb - wa) / (Complex64::new(1.0, 0.0) - wa.conj() * wb);
            if 1.0 - m.norm() >= pinch {
                let (la, lb) = (label[a], label[b]);
                for l in label.iter_mut() {
                    if *l == lb {
                        *l = la;
                    }
                }
            }
        }
    }
    let mut groups: Vec<(usize, Vec<Tracked>)> = Vec::new();
    for (i, p) in pts.into_iter().enumerate() {
        match groups.iter_mut().find(|g| g.0 == label[i]) {
            Some(g) => g.1.push(p),
            None => groups.push((label[i], vec![p])),
        }
    }
    groups.into_iter().map(|g| g.1).collect()
}

/// A branch cut off at a visit whose angle is within this of an end is put there.
const SNAP: f64 = 0.3;
/// A branch cut off without a visit (swallowed) whose angle is within this of an end is put
/// there; farther, it was split off early and restarts (geometry only).
const SNAP_CUT: f64 = 0.01;

impl<R: Recorder> Branch<R> {
    /// Put θ at the nearer end (0 or ±2π) when it is within `tol` of it; returns whether it
    /// did.
    pub(crate) fn snap_to_end(&mut self, tol: f64) -> bool {
        let a = self.theta.abs();
        if a < tol {
            self.theta = 0.0;
        } else if a > TWO_PI - tol {
            self.theta = TWO_PI.copysign(self.theta);
        } else {
            return false;
        }
        true
    }

    /// The point with the largest Poisson kernel at the tip, the driver included (used when
    /// the current driver is not a member, e.g. right after a split).
    pub(crate) fn fastest_any(&self) -> usize {
        let tip = Complex64::from_polar(1.0, self.theta);
        let mut best = (0usize, f64::NEG_INFINITY);
        for (j, p) in self.pts.iter().enumerate() {
            let r = p.w.norm();
            let pk = (1.0 - r) * (1.0 + r) / (tip - p.w).norm_sqr().max(f64::MIN_POSITIVE);
            if pk > best.1 {
                best = (j, pk);
            }
        }
        best.0
    }
}
