//! Chordal SLE_κ(ρ) in the upper half-plane H with one force point on the right of the start.
//!
//! Convention (DESIGN §2, §5): `∂_t g_t(z) = 2/(g_t(z) − W_t)`, hcap 2t, and
//! `dW = √κ dB + ρ/(W − O) dt`, `dO = 2/(O − W) dt`, with the force point `O_0 = x₀ ≥ 0`
//! (`x₀ = 0` means `0⁺`). The gap `A = O − W ≥ 0` is √κ times a Bessel process of dimension
//! `δ = 1 + 2(ρ + 2)/κ`, and `M = W + (ρ/2) O` is √κ times a Brownian motion.
//!
//! # Scheme
//! `A` is advanced by exact squared-Bessel steps (non-central χ² with δ degrees of freedom).
//! The force point's push `dO = 2 dt/A` is singular where the gap is small, so the gap runs on a
//! grid of its own, finer there: sub-steps of at most `A²/(PUSH_RESOLUTION·κ)` (never below
//! `MIN_SUBSTEP` of a chain step), on which the push is summed by the mid-point rule. For δ < 2
//! a visit of 0 inside a sub-step is drawn with the Bessel-bridge probability
//! ([`crate::bessel::bridge_hit_probability`]): it means the force point is swallowed, and the
//! sample records the time. The Loewner chain then takes `W = O − A` at the end of each of its
//! equal capacity steps (vertical or tilted slits), so the chain's resolution and the driving
//! process's resolution are separate.
//!
//! With `ρ = κ − 6` and `x₀ > 0` this is chordal SLE_κ from 0 to x₀ until x₀ is swallowed
//! (Schramm & Wilson, New York J. Math. 2005).
//!
//! # Status: a building block, partly validated, not on the command line
//! `tests/sle_rho.rs` checks the martingale `W + (ρ/2) O` (force point at 0⁺; κ = 2 … 6, ρ from
//! −1 to 1 and κ − 6 at κ = 16/3) and, for ρ = κ − 6 with x₀ = 1, that Schramm's left-passage
//! probability of the remaining chord is a martingale up to t = 0.05. **Known failure:** at
//! t = 0.25, once many chords have ended, its mean falls below the start value by 6–9σ (κ = 3
//! and 5, a point near (0, 1)), unchanged on ten times shorter base steps. A probe of κ = 3 at
//! t = 0.25 found the unfinished chords at a mean of 0.93 and the finished ones (668 of 1500) at
//! 0.55, with values 0 or 1 as they should be, but 0 far more often than chords of that size
//! allow for a point at height 0.15 under them. Either the sampler near the swallowing of the
//! force point ([`RhoDriving::swallowed_at`]) or the test's reading of the end (the images of
//! points deep in the last fjord) is wrong; not resolved. A lead: in 24 of 131 finished chords
//! (κ = 3) the traced chord closed by the segment from its tip to 1 winds around z = 0.3 + 0.15i
//! while the chain's image of z lies outside [W, O] (e.g. g = 1.540 + 10⁻¹⁴i against
//! [1.5435, 1.5436]): the frame and the trace disagree about which side of the chord z is on.
//! Part of the cause: W jumps over the image of z in sub-steps held at the floor
//! (`MIN_SUBSTEP`) while the tip skims (0, 1) (sample 11: W moved by about 6·10⁻⁵ past an image
//! 10⁻⁵ away, with Im 6·10⁻¹⁰). Watching the points (sub-steps small against each image's
//! distance to W) *and* lowering the floor to 10⁻¹² raised E[P_0.25] from 0.753 to 0.800 (P_0 =
//! 0.864, σ = 0.010): better, not enough, and at three times the cost; left for the next session.
//! It is meant for the whole-configuration CLE sampler (DEVELOPERS.md, "Where things stand").

use crate::driving::DrivingFunction;
use crate::error::{Error, Result};
use crate::rng::{self, Tag};
use rand::Rng;
use rand_distr::{Distribution, Gamma, Poisson, StandardNormal};

/// Sub-steps of the gap near 0 are at most `A²/(PUSH_RESOLUTION·κ)` long, so `A` moves by about
/// an eighth of itself per sub-step and the slit flow of the force point matches `∫ 2 dt/A`.
const PUSH_RESOLUTION: f64 = 64.0;
/// Smallest sub-step of the gap, relative to a chain step.
const MIN_SUBSTEP: f64 = 1e-5;

/// A sampler of chordal SLE_κ(ρ) with validated parameters.
#[derive(Debug, Clone)]
pub struct ChordalSleRho {
    kappa: f64,
    rho: f64,
    force: f64,
    time: f64,
    steps: usize,
    delta: f64,
}

/// One sampled driving process on the chain's grid.
#[derive(Debug, Clone, PartialEq)]
pub struct RhoDriving {
    /// Grid times: the sub-steps of the gap (at most `T/N` apart, finer where the gap is small),
    /// up to the end or up to the last sub-step before the force point was swallowed.
    pub times: Vec<f64>,
    /// Driving values `W_{t_k}` (`W_0 = 0`).
    pub w: Vec<f64>,
    /// Force point `O_{t_k}` (`O_0 = x₀`).
    pub o: Vec<f64>,
    /// The end of the base step (`T/N` grid) in which the gap visited 0 (force point swallowed),
    /// if it did. Not validated: see the module docs.
    /// Only with the force point away from 0 and δ < 2; the sample stops there.
    pub swallowed_at: Option<f64>,
}

impl RhoDriving {
    /// The driving function for [`crate::loewner::ChordalChain`].
    ///
    /// # Errors
    /// [`Error::InvalidData`] when fewer than two grid points were sampled (swallowed in the first
    /// step).
    pub fn driving(&self) -> Result<DrivingFunction> {
        DrivingFunction::new(self.times.clone(), self.w.clone())
    }
}

impl ChordalSleRho {
    /// A sampler of chordal SLE_κ(ρ) from 0 with force point `force` (≥ 0; 0 means 0⁺) up to
    /// capacity time `time` on `steps` equal steps.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless 0 < κ ≤ 10⁴, ρ > −2 (or any finite ρ when the force
    /// point is away from 0: the sample then stops when it is swallowed), `force` finite and
    /// ≥ 0, δ = 1 + 2(ρ + 2)/κ > 0, `time` finite and > 0, and 1 ≤ steps ≤ 10⁷.
    pub fn new(kappa: f64, rho: f64, force: f64, time: f64, steps: usize) -> Result<Self> {
        if !(kappa.is_finite() && kappa > 0.0 && kappa <= 1e4) {
            return Err(Error::param("kappa", kappa, "0 < kappa <= 1e4"));
        }
        if !(force.is_finite() && force >= 0.0) {
            return Err(Error::param("force", force, "a force point x0 >= 0"));
        }
        if !rho.is_finite() || (force == 0.0 && rho <= -2.0) {
            return Err(Error::param(
                "rho",
                rho,
                "rho > -2 with the force point at 0+ (below, the process needs a principal \
                 value); any finite rho with a force point x0 > 0",
            ));
        }
        let delta = 1.0 + 2.0 * (rho + 2.0) / kappa;
        if delta <= 0.0 {
            return Err(Error::param(
                "rho",
                rho,
                "rho > -2 - kappa/2 (the Bessel dimension 1 + 2(rho + 2)/kappa must be > 0)",
            ));
        }
        if !(time.is_finite() && time > 0.0) {
            return Err(Error::param("time", time, "a finite time > 0"));
        }
        if steps == 0 || steps > 10_000_000 {
            return Err(Error::param("steps", steps as f64, "1 <= steps <= 1e7"));
        }
        Ok(ChordalSleRho {
            kappa,
            rho,
            force,
            time,
            steps,
            delta,
        })
    }

    /// ρ.
    pub fn rho(&self) -> f64 {
        self.rho
    }

    /// Dimension δ = 1 + 2(ρ + 2)/κ of the Bessel process `(O − W)/√κ`.
    pub fn bessel_dimension(&self) -> f64 {
        self.delta
    }

    /// A squared-Bessel step: `X'²/τ ~ χ'²(δ, X²/τ)`, with `lam = X²/τ`.
    fn chi2<R: Rng + ?Sized>(&self, lam: f64, rng: &mut R) -> f64 {
        let n = if lam <= 0.0 {
            0.0
        } else if lam < 1e12 {
            Poisson::new(0.5 * lam).map_or(0.5 * lam, |p| p.sample(rng))
        } else {
            let z: f64 = StandardNormal.sample(rng);
            (0.5 * lam + (0.5 * lam).sqrt() * z).max(0.0).round()
        };
        let shape = 0.5 * self.delta + n;
        Gamma::new(shape, 2.0).map_or(2.0 * shape, |g| g.sample(rng))
    }

    /// The driving process of sample `index` of a run with `seed` (a pure function of both).
    pub fn sample_driving(&self, seed: u64, index: u64) -> RhoDriving {
        let mut g = rng::stream(seed, Tag::Driving, index);
        let h = self.time / self.steps as f64;
        let sk = self.kappa.sqrt();
        let nu = 1.0 - 0.5 * self.delta;
        let (mut x, mut o) = (self.force / sk, self.force);
        // Images of the two sides of the start point: the boundary nearest the tip on either
        // side, when the curve does not touch the boundary (κ ≤ 4).
        let (mut left_side, mut right_side) = (0.0f64, 0.0f64);
        let simple = self.kappa <= 4.0;
        let mut out = RhoDriving {
            times: vec![0.0],
            w: vec![0.0],
            o: vec![self.force],
            swallowed_at: None,
        };
        for k in 0..self.steps {
            let mut left = h;
            while left > 0.0 {
                // Sub-step at most d²/(PUSH_RESOLUTION·κ), d the gap to the force point and, for
                // κ ≤ 4, also the distances to the images of the start point's two sides: where
                // the tip comes near the boundary a step of fixed size would touch it, which a
                // simple curve never does (measured: without this the chord towards x₀ = 1 cut
                // (0, 1) in almost every sample).
                let w_now = o - sk * x;
                let mut d = sk * x;
                if simple {
                    d = d.min(right_side.min(o) - w_now).min(w_now - left_side);
                }
                let d = d.max(0.0);
                let tau = (d * d / (PUSH_RESOLUTION * self.kappa))
                    .max(h * MIN_SUBSTEP)
                    .min(left);
                let tau = if left - tau < 1e-3 * tau { left } else { tau };
                let x_new = (tau * self.chi2(x * x / tau, &mut g)).sqrt();
                // A force point away from the start is swallowed at the gap's first visit of 0
                // (possible for δ < 2): the sample stops at the end of that chain step. With
                // the force point at 0⁺ the visits are reflections (the χ² step reflects).
                if self.force > 0.0 && nu > 0.0 {
                    let p = if x_new == 0.0 {
                        1.0
                    } else {
                        crate::bessel::bridge_hit_probability(nu.min(1.0), x * x_new / tau)
                    };
                    let u: f64 = g.random();
                    if u < p {
                        out.swallowed_at = Some((k + 1) as f64 * h);
                        return out;
                    }
                }
                // The force point moves with the chain's own flow: a vertical slit at the new
                // driving value W' = O − √κ x' sends O to W' + √(κx'² + 4τ), which is
                // O + 2τ/A + O(τ²/A³) on these short sub-steps. Using the chain's image (rather
                // than integrating dO = 2 dt/A on the side) keeps the curve aimed at the chain's
                // own force point: a separate integral drifts from it by far more than the gap
                // near a swallowing, and the discrete chord then lands beside x₀.
                let w_new = o - sk * x_new;
                let flow = |y: f64| {
                    let v = y - w_new;
                    let r = (v * v + 4.0 * tau).sqrt();
                    if v > 0.0 {
                        w_new + r
                    } else {
                        w_new - r
                    }
                };
                right_side = flow(right_side.max(w_new + f64::MIN_POSITIVE));
                left_side = flow(left_side.min(w_new - f64::MIN_POSITIVE));
                o += (self.kappa * x_new * x_new + 4.0 * tau).sqrt() - sk * x_new;
                x = x_new;
                left -= tau;
                // Every sub-step is a step of the chain: where the gap is small the curve is
                // close to the force point and the chain must resolve that scale too.
                let t = if left > 0.0 {
                    (k + 1) as f64 * h - left
                } else {
                    (k + 1) as f64 * h
                };
                // The recorded W is the slit's position over this sub-step (W = O − A with the
                // force point before its push), so the chain built from `w` moves x₀ to `o`
                // exactly.
                if t > *out.times.last().unwrap_or(&0.0) {
                    out.times.push(t);
                    out.w.push(w_new);
                    out.o.push(o);
                }
            }
        }
        out
    }
}
