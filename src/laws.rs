//! Exact laws of SLE and CLE that simulations can be compared with.
//!
//! Conventions: chordal SLE_κ runs in the upper half-plane ℍ from 0 to ∞; CLE_κ lives in the
//! unit disk 𝔻 and CR(U, 0) is the conformal radius of a domain U ∋ 0 seen from 0.
//!
//! * [`trace_dimension`] — Hausdorff dimension of the SLE_κ trace (Beffara, Ann. Probab. 2008).
//! * [`phase`] — simple / self-touching / space-filling (Rohde & Schramm, Ann. Math. 2005).
//! * [`schramm_left_passage`] — Schramm's formula (Schramm, Electron. Comm. Probab. 2001).
//! * [`CleLaw`] — law of −log CR of the outermost CLE_κ loop around 0 (Schramm, Sheffield &
//!   Wilson, Commun. Math. Phys. 2009), and the dimension 2 − λ* of the CLE gasket (Nacu &
//!   Werner, J. London Math. Soc. 2011, for 8/3 < κ ≤ 4; Miller, Sun & Wilson, Ann. Probab.
//!   2014, for all 8/3 < κ ≤ 8 — the latter citation from memory).

use std::f64::consts::PI;

use serde::Serialize;

use crate::special::{gamma_ratio, hyp2f1};
use crate::{Error, Result};

fn check_kappa(kappa: f64) -> Result<()> {
    if kappa.is_finite() && kappa > 0.0 {
        Ok(())
    } else {
        Err(Error::param("kappa", kappa, "a finite kappa > 0"))
    }
}

/// Hausdorff dimension of the trace of SLE_κ: min(1 + κ/8, 2), almost surely
/// (Beffara, Ann. Probab. 2008).
///
/// Errors: [`Error::InvalidParameter`] unless κ is finite and > 0.
pub fn trace_dimension(kappa: f64) -> Result<f64> {
    check_kappa(kappa)?;
    Ok((1.0 + kappa / 8.0).min(2.0))
}

/// Topological phase of the SLE_κ trace (Rohde & Schramm, Ann. Math. 2005).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Phase {
    /// κ ≤ 4: the trace is a simple curve that does not touch the real line after time 0.
    Simple,
    /// 4 < κ < 8: the trace touches itself and the real line, swallowing regions, but is not
    /// space-filling.
    SelfTouching,
    /// κ ≥ 8: the trace is space-filling (it visits every point of the closed half-plane).
    SpaceFilling,
}

impl Phase {
    /// A short human-readable phrase for the phase (e.g. for CLI output).
    pub fn describe(&self) -> &'static str {
        match self {
            Phase::Simple => "simple curve (kappa <= 4)",
            Phase::SelfTouching => "self-touching, not space-filling (4 < kappa < 8)",
            Phase::SpaceFilling => "space-filling curve (kappa >= 8)",
        }
    }
}

/// The phase of SLE_κ: [`Phase::Simple`] for κ ≤ 4, [`Phase::SelfTouching`] for 4 < κ < 8,
/// [`Phase::SpaceFilling`] for κ ≥ 8 (Rohde & Schramm, Ann. Math. 2005).
///
/// Errors: [`Error::InvalidParameter`] unless κ is finite and > 0.
pub fn phase(kappa: f64) -> Result<Phase> {
    check_kappa(kappa)?;
    Ok(if kappa <= 4.0 {
        Phase::Simple
    } else if kappa < 8.0 {
        Phase::SelfTouching
    } else {
        Phase::SpaceFilling
    })
}

/// Schramm's formula: the probability that chordal SLE_κ in the upper half-plane from 0 to ∞
/// passes to the left of the point z = x + iy (equivalently, z lies to the right of the curve)
/// (Schramm, Electron. Comm. Probab. 2001):
///
/// P = 1/2 + Γ(4/κ) / (√π Γ((8 − κ)/(2κ))) · s · ₂F₁(1/2, 4/κ; 3/2; −s²),  s = x/y.
///
/// It depends on z only through s = x/y, tends to 1 as s → +∞ and to 0 as s → −∞, and equals
/// 1/2 on the imaginary axis. Equivalently P = K ∫_{−∞}^{s} (1 + u²)^{−4/κ} du with
/// K = Γ(4/κ)/(√π Γ(4/κ − 1/2)). For |s| ≤ 1 the ₂F₁ form above is evaluated as long as it
/// gives P ∈ [1/4, 3/4]; otherwise (|s| > 1, or small κ where P leaves [1/4, 3/4] already for
/// |s| < 1) the smaller of P and 1 − P is computed directly as the tail integral,
/// (1/2) I_{1/(1+s²)}(4/κ − 1/2, 1/2) (a regularised incomplete beta function, written as
/// x₀^p Γ(p + 1/2)/(2√π Γ(p + 1)) · ₂F₁(p, 1/2; p + 1; x₀), x₀ = 1/(1 + s²), p = 4/κ − 1/2),
/// so that probabilities close to 0 keep their relative accuracy.
///
/// Errors: [`Error::InvalidParameter`] unless 0 < κ < 8 (for κ ≥ 8 the curve is space-filling
/// and visits every point, so the question has no content), `x` is finite, and `y` is finite
/// and > 0; [`Error::Numerical`] if the hypergeometric evaluation fails.
pub fn schramm_left_passage(kappa: f64, x: f64, y: f64) -> Result<f64> {
    check_kappa(kappa)?;
    if kappa >= 8.0 {
        return Err(Error::param(
            "kappa",
            kappa,
            "0 < kappa < 8 (for kappa >= 8 SLE is space-filling and visits every point, so \
             it passes neither to the left nor to the right of z)",
        ));
    }
    if kappa < 1e-4 {
        return Err(Error::param(
            "kappa",
            kappa,
            "kappa >= 1e-4 for Schramm's formula (below, the curve is the vertical ray to within \
             rounding and the Gamma-function ratio loses its accuracy)",
        ));
    }
    if !x.is_finite() {
        return Err(Error::param("x", x, "a finite real part of z"));
    }
    if !(y.is_finite() && y > 0.0) {
        return Err(Error::param(
            "y",
            y,
            "a finite imaginary part y > 0 (z in the upper half-plane)",
        ));
    }
    let s = x / y;
    if s.is_infinite() {
        return Ok(if s > 0.0 { 1.0 } else { 0.0 });
    }
    if s == 0.0 {
        return Ok(0.5);
    }
    let b = 4.0 / kappa;
    // p = b − 1/2 = (8 − κ)/(2κ), computed without cancellation.
    let p = (8.0 - kappa) / (2.0 * kappa);
    // Direct form for |s| ≤ 1, kept while P is within [1/4, 3/4] (no cancellation in 1/2 + d).
    let mut direct = None;
    if s.abs() <= 1.0 {
        let k = gamma_ratio(b, p) / PI.sqrt();
        let d = k * s * hyp2f1(0.5, b, 1.5, -s * s)?;
        if d.abs() <= 0.25 {
            return Ok(0.5 + d);
        }
        direct = Some(d);
    }
    // Tail form: min(P, 1 − P) = (1/2) I_{x0}(p, 1/2), x0 = 1/(1 + s²).
    let ln_x0 = -(s * s).ln_1p();
    let x0 = 1.0 / (1.0 + s * s);
    if x0 >= 1.0 {
        // Only for |s| below ~1e-8 (and then only for absurdly small κ): keep the direct form.
        return Ok(0.5 + direct.unwrap_or(0.0));
    }
    let f = hyp2f1(p, 0.5, p + 1.0, x0)?;
    let tail = 0.5 * (p * ln_x0).exp() * gamma_ratio(b, b + 0.5) / PI.sqrt() * f;
    Ok(if s > 0.0 { 1.0 - tail } else { tail })
}

/// Taylor coefficients of tan(x) (odd powers): tan x = Σₖ T[k] x^{2k+1},
/// T[k] = 2^{2k+2}(2^{2k+2} − 1)|B_{2k+2}|/(2k+2)! (B the Bernoulli numbers; exact rationals
/// 1, 1/3, 2/15, 17/315, 62/2835, 1382/155925, …, rounded to f64). Checked against mpmath in
/// `tests/special_laws.rs`.
const TAN_TAYLOR: [f64; 13] = [
    1.0,
    1.0 / 3.0,
    2.0 / 15.0,
    17.0 / 315.0,
    62.0 / 2835.0,
    1382.0 / 155925.0,
    21844.0 / 6081075.0,
    929569.0 / 638512875.0,
    6404582.0 / 10854718875.0,
    443861162.0 / 1856156927625.0,
    0.000_096_915_379_569_294_51,
    0.000_039_278_323_883_316_83,
    0.000_015_918_905_069_328_964,
];

/// Below this value of x = πν the cumulants use the Taylor series (the next omitted term is
/// below 1e−17 relative there).
const SERIES_CUTOFF: f64 = 0.25;

/// tan(x)/x = Σ T[k] x^{2k}, for small x.
fn tan_over_x_series(x: f64) -> f64 {
    let x2 = x * x;
    TAN_TAYLOR.iter().rev().fold(0.0, |acc, &t| acc * x2 + t)
}

/// (sec²x − tan(x)/x)/x² = Σ_{k≥1} 2k T[k] x^{2k−2} = 2/3 + (8/15)x² + (34/105)x⁴ + …,
/// for small x.
fn sec2_minus_tan_over_x_series(x: f64) -> f64 {
    let x2 = x * x;
    TAN_TAYLOR
        .iter()
        .enumerate()
        .skip(1)
        .rev()
        .fold(0.0, |acc, (k, &t)| acc * x2 + 2.0 * (k as f64) * t)
}

/// Law of T = −log CR(U₀, 0), where U₀ is the interior of the outermost loop surrounding 0 of a
/// CLE_κ in the unit disk, for 8/3 < κ < 8 (Schramm, Sheffield & Wilson, Commun. Math. Phys.
/// 2009), together with the dimension of the CLE_κ gasket.
///
/// Notation: μ = 1 − 4/κ, ν = |μ|, λ* = 1 − 2/κ − 3κ/32. The moment generating function is
/// E[e^{λT}] = −cos(4π/κ) / cos(π √(μ² + 8λ/κ)) for λ < λ*, and +∞ for λ ≥ λ*.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct CleLaw {
    kappa: f64,
    mu: f64,
    lambda_star: f64,
    gasket_dimension: f64,
}

impl CleLaw {
    /// The law for CLE_κ.
    ///
    /// Errors: [`Error::InvalidParameter`] unless 8/3 < κ < 8: CLE_κ exists only for
    /// 8/3 < κ ≤ 8, and at κ = 8 the formula degenerates (−cos(4π/κ) = 0, T = ∞ a.s. in the
    /// limit).
    pub fn new(kappa: f64) -> Result<CleLaw> {
        if !(kappa.is_finite() && kappa > 8.0 / 3.0 && kappa < 8.0) {
            return Err(Error::param(
                "kappa",
                kappa,
                "8/3 < kappa < 8 (CLE_kappa exists only for 8/3 < kappa <= 8, and the \
                 conformal-radius law degenerates at kappa = 8)",
            ));
        }
        let mu = 1.0 - 4.0 / kappa;
        let lambda_star = 1.0 - 2.0 / kappa - 3.0 * kappa / 32.0;
        let gasket_dimension = 2.0 - (8.0 - kappa) * (3.0 * kappa - 8.0) / (32.0 * kappa);
        Ok(CleLaw {
            kappa,
            mu,
            lambda_star,
            gasket_dimension,
        })
    }

    /// κ.
    pub fn kappa(&self) -> f64 {
        self.kappa
    }

    /// μ = 1 − 4/κ.
    pub fn mu(&self) -> f64 {
        self.mu
    }

    /// λ* = 1 − 2/κ − 3κ/32: the exponential moments E[e^{λT}] are finite exactly for λ < λ*,
    /// so P(T > t) = e^{−λ* t + o(t)} (Schramm, Sheffield & Wilson, Commun. Math. Phys. 2009).
    pub fn lambda_star(&self) -> f64 {
        self.lambda_star
    }

    /// Hausdorff dimension of the CLE_κ gasket (the set of points surrounded by no loop),
    /// 2 − (8 − κ)(3κ − 8)/(32κ) = 2 − λ*. The exponent λ* is from Schramm, Sheffield & Wilson
    /// (Commun. Math. Phys. 2009); the dimension was proved by Nacu & Werner (J. London Math.
    /// Soc. 2011) for 8/3 < κ ≤ 4 and by Miller, Sun & Wilson (Ann. Probab. 2014; from memory)
    /// for 8/3 < κ ≤ 8.
    pub fn gasket_dimension(&self) -> f64 {
        self.gasket_dimension
    }

    /// E[e^{λT}] = −cos(4π/κ) / cos(π √(μ² + 8λ/κ)) for λ < λ*. When μ² + 8λ/κ < 0 the
    /// denominator is cosh(π √(−μ² − 8λ/κ)). For very negative λ the value underflows to 0.
    ///
    /// Errors: [`Error::InvalidParameter`] for non-finite λ or λ ≥ λ* (the expectation is
    /// infinite there); [`Error::Numerical`] if λ is so close to λ* that the denominator
    /// rounds to zero.
    pub fn mgf(&self, lambda: f64) -> Result<f64> {
        if lambda.is_nan() || lambda == f64::INFINITY || lambda >= self.lambda_star {
            return Err(Error::param(
                "lambda",
                lambda,
                format!(
                    "lambda < lambda* = {} (E[exp(lambda T)] is infinite for lambda >= lambda*)",
                    self.lambda_star
                ),
            ));
        }
        if lambda == f64::NEG_INFINITY {
            return Ok(0.0);
        }
        // −cos(4π/κ) = sin(π(8 − κ)/(2κ)), accurate near κ = 8.
        let numerator = (PI * (8.0 - self.kappa) / (2.0 * self.kappa)).sin();
        let u = self.mu * self.mu + 8.0 * lambda / self.kappa;
        let denominator = if u >= 0.0 {
            // cos(πr) = sin(π(1/2 − r)), accurate near the pole r = 1/2.
            (PI * (0.5 - u.sqrt())).sin()
        } else {
            (PI * (-u).sqrt()).cosh()
        };
        if denominator <= 0.0 {
            return Err(Error::Numerical(format!(
                "CLE mgf: lambda = {lambda} is too close to lambda* = {} to evaluate",
                self.lambda_star
            )));
        }
        Ok(numerator / denominator)
    }

    /// E[CR(U₀, 0)^λ] = E[e^{−λT}] = `mgf(−λ)`, finite for λ > −λ*.
    ///
    /// Errors: as [`CleLaw::mgf`], i.e. [`Error::InvalidParameter`] for λ ≤ −λ* or NaN.
    pub fn cr_moment(&self, lambda: f64) -> Result<f64> {
        if lambda.is_nan() || lambda <= -self.lambda_star {
            return Err(Error::param(
                "lambda",
                lambda,
                format!(
                    "lambda > -lambda* = {} (E[CR^lambda] is infinite for lambda <= -lambda*)",
                    -self.lambda_star
                ),
            ));
        }
        self.mgf(-lambda)
    }

    /// E[T] = 4π tan(πν)/(κν), ν = |1 − 4/κ| (the derivative of log E[e^{λT}] at 0); at κ = 4
    /// it equals π². Evaluated by the Taylor series of tan(x)/x for πν < 1/4.
    pub fn mean_t(&self) -> f64 {
        let nu = self.mu.abs();
        let x = PI * nu;
        if x < SERIES_CUTOFF {
            4.0 * PI * PI / self.kappa * tan_over_x_series(x)
        } else {
            4.0 * PI * x.tan() / (self.kappa * nu)
        }
    }

    /// Var[T] = (16π/(κ²ν²)) (π sec²(πν) − tan(πν)/ν) (the second derivative of
    /// log E[e^{λT}] at 0); at κ = 4 it equals 2π⁴/3. For x = πν < 1/4 it uses the series
    /// (16π⁴/κ²)[2/3 + (8/15)x² + (34/105)x⁴ + (496/2835)x⁶ + …], whose coefficients are
    /// 2k·T_{2k+1} with T_{2k+1} the Taylor coefficients of tan.
    pub fn var_t(&self) -> f64 {
        let nu = self.mu.abs();
        let x = PI * nu;
        let k2 = self.kappa * self.kappa;
        if x < SERIES_CUTOFF {
            16.0 * PI.powi(4) / k2 * sec2_minus_tan_over_x_series(x)
        } else {
            let sec = 1.0 / x.cos();
            16.0 * PI / (k2 * nu * nu) * (PI * sec * sec - x.tan() / nu)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn series_and_closed_form_agree_at_cutoff() {
        // Internal consistency at x = 1/4 where the evaluation switches (common practice):
        // series truncation < 1e-17, closed-form cancellation ≈ 1.1e-16/((2/3)x²) ≈ 3e-15.
        let x: f64 = SERIES_CUTOFF;
        let closed_mean = x.tan() / x;
        assert!((tan_over_x_series(x) / closed_mean - 1.0).abs() < 1e-15);
        let closed_var = (1.0 / (x.cos() * x.cos()) - x.tan() / x) / (x * x);
        assert!((sec2_minus_tan_over_x_series(x) / closed_var - 1.0).abs() < 1e-14);
    }

    #[test]
    fn tan_taylor_table_matches_mpmath() {
        // Reference: mpmath 1.3.0 Taylor expansion of tan, cross-checked there against the
        // Bernoulli-number formula (scripts/reference_values.py). Tolerance 2 ulp (rounding of
        // the literals and of the f64 divisions).
        let path = concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/tests/data/reference_values.json"
        );
        let data: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap();
        let want = data["tan_taylor_odd_coefficients"].as_array().unwrap();
        assert_eq!(want.len(), TAN_TAYLOR.len());
        for (k, (w, &t)) in want.iter().zip(TAN_TAYLOR.iter()).enumerate() {
            let w: f64 = w.as_str().unwrap().parse().unwrap();
            assert!(
                ((t - w) / w).abs() <= 2.0 * f64::EPSILON,
                "k = {k}: {t} vs {w}"
            );
        }
    }

    #[test]
    fn phase_boundaries() {
        // Rohde & Schramm, Ann. Math. 2005: simple iff kappa <= 4, space-filling iff kappa >= 8.
        assert_eq!(phase(4.0).unwrap(), Phase::Simple);
        assert_eq!(phase(4.000001).unwrap(), Phase::SelfTouching);
        assert_eq!(phase(7.999).unwrap(), Phase::SelfTouching);
        assert_eq!(phase(8.0).unwrap(), Phase::SpaceFilling);
        assert!(phase(0.0).is_err());
    }
}
