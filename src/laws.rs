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
use std::sync::OnceLock;

use num_complex::Complex64;
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
        // λ* = 1 − 2/κ − 3κ/32 in the factored form (8 − κ)(3κ − 8)/(32κ), which keeps its
        // relative accuracy near κ = 8 and κ = 8/3 (the sum form cancels: at κ = 7.9 it loses two
        // digits, which showed up as a 1.4e−14 error of the spectral survival function).
        let lambda_star = (8.0 - kappa) * (3.0 * kappa - 8.0) / (32.0 * kappa);
        let gasket_dimension = 2.0 - lambda_star;
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
            // cos(πr) = sin(π(1/2 − r)), with 1/2 − r = (8/κ)(λ* − λ)/(1/2 + r) computed without
            // cancellation, accurate near the pole r = 1/2.
            (PI * self.half_minus_root(lambda, u)).sin()
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

// ------------------------------------------------------------------------------------------
// Distribution of T: density, CDF, survival function, quantiles.
// ------------------------------------------------------------------------------------------

/// Number of Gauss–Legendre nodes per panel in the CDF quadrature.
const GL_NODES: usize = 16;

/// Panels of the variable v of the CDF quadrature (see [`CleLaw::jacobi_cdf`]); the weight e^{−v}
/// beyond the last break point is below 2e−22.
const CDF_PANELS: [f64; 8] = [0.0, 0.5, 1.5, 3.5, 7.5, 15.5, 31.5, 50.0];

/// Legendre polynomial P_n(z) and its derivative, by the three-term recurrence.
fn legendre_with_derivative(n: usize, z: f64) -> (f64, f64) {
    let (mut p0, mut p1) = (1.0, z);
    for k in 1..n {
        let k = k as f64;
        let p2 = ((2.0 * k + 1.0) * z * p1 - k * p0) / (k + 1.0);
        p0 = p1;
        p1 = p2;
    }
    let dp = n as f64 * (z * p1 - p0) / (z * z - 1.0);
    (p1, dp)
}

/// Nodes and weights of the 16-point Gauss–Legendre rule on [−1, 1] (Newton's method on P₁₆ from
/// the usual cosine starting values; common practice). Computed once.
fn gauss_legendre() -> &'static ([f64; GL_NODES], [f64; GL_NODES]) {
    static RULE: OnceLock<([f64; GL_NODES], [f64; GL_NODES])> = OnceLock::new();
    RULE.get_or_init(|| {
        let mut nodes = [0.0; GL_NODES];
        let mut weights = [0.0; GL_NODES];
        for i in 0..GL_NODES {
            let mut z = (PI * (i as f64 + 0.75) / (GL_NODES as f64 + 0.5)).cos();
            for _ in 0..50 {
                let (p, dp) = legendre_with_derivative(GL_NODES, z);
                let dz = p / dp;
                z -= dz;
                if dz.abs() <= 1e-16 {
                    break;
                }
            }
            let (_, dp) = legendre_with_derivative(GL_NODES, z);
            nodes[i] = z;
            weights[i] = 2.0 / ((1.0 - z * z) * dp * dp);
        }
        (nodes, weights)
    })
}

/// Largest number of terms summed in a series of this module before giving up (the series used
/// in their accurate ranges need fewer than 20).
const MAX_SERIES_TERMS: usize = 1_000_000;

/// ln cosh(x) for real x, without overflow.
fn ln_cosh(x: f64) -> f64 {
    let x = x.abs();
    x + (-2.0 * x).exp().ln_1p() - std::f64::consts::LN_2
}

/// tanh(x)/x = Σ T[k] (−1)^k x^{2k}, for small x (T the Taylor coefficients of tan).
fn tanh_over_x_series(x: f64) -> f64 {
    let x2 = -x * x;
    TAN_TAYLOR.iter().rev().fold(0.0, |acc, &t| acc * x2 + t)
}

/// Σ_{k≥1} 2k T[k] y^{k−1} for y = ±x² small: (sec²x − tan(x)/x)/x² for y = x², and
/// (tanh(x)/x − sech²x)/x² for y = −x² (the sign flips with y).
fn second_derivative_series(y: f64) -> f64 {
    TAN_TAYLOR
        .iter()
        .enumerate()
        .skip(1)
        .rev()
        .fold(0.0, |acc, (k, &t)| acc * y + 2.0 * (k as f64) * t)
}

/// Mean and variance of the nesting count at one scale (see [`CleLaw::nesting_count_mean_var`]).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct NestingCount {
    /// s = log(1/ε).
    pub log_inv_eps: f64,
    /// E[N(s)], the renewal function.
    pub mean: f64,
    /// Var[N(s)].
    pub variance: f64,
    /// The part of E[N(s)] that survives as s → ∞: s/E[T] + E[T²]/(2E[T]²) − 1 (the remainder
    /// decays like e^{−(κ/2)(1−|μ|)s}).
    pub asymptotic_mean: f64,
    /// The part of Var[N(s)] that survives as s → ∞: s·Var[T]/E[T]³ + c, with the constant
    /// c = 5E[T²]²/(4E[T]⁴) − 2E[T³]/(3E[T]³) − E[T²]/(2E[T]²) (obtained here numerically from
    /// the Laurent expansion at p = 0 of the transform, see the method's documentation).
    pub asymptotic_variance: f64,
}

impl CleLaw {
    /// −cos(4π/κ) = cos(πμ) = sin(π(8 − κ)/(2κ)), the amplitude of the law (accurate near κ = 8).
    fn amplitude(&self) -> f64 {
        (PI * (8.0 - self.kappa) / (2.0 * self.kappa)).sin()
    }

    /// The time t_s = 8π/κ at which the density, CDF and survival function switch from the
    /// Jacobi-transformed (small-t) series to the spectral (large-t) series. In the scaled time
    /// σ = κt/8 the two series are exchanged by σ ↦ π²/σ, so at σ = π both converge equally fast
    /// (successive terms shrink by e^{−2π} ≈ 0.002 or faster).
    pub fn series_switch_time(&self) -> f64 {
        8.0 * PI / self.kappa
    }

    /// The density of T = −log CR(U₀, 0) (outermost CLE_κ loop U₀ around 0 in the unit disk,
    /// 8/3 < κ < 8; Schramm, Sheffield & Wilson, Commun. Math. Phys. 2009) at t:
    /// [`CleLaw::jacobi_density`] for t ≤ [`CleLaw::series_switch_time`], otherwise
    /// [`CleLaw::spectral_density`]. Relative error about (1 + 2π²/(κt))·1e−16 (the rounding of
    /// the leading exponent −2π²/(κt) dominates for small t; measured ≤ 1.4e−14 against mpmath
    /// for t ≥ 0.05, κ ∈ {3, 4, 16/3, 6, 7}) wherever the value does not underflow (it
    /// underflows to 0 below t ≈ 2π²/(745κ)). Returns 0 for t ≤ 0 and
    /// t = +∞ (T is positive and finite almost surely) and NaN for NaN.
    pub fn density(&self, t: f64) -> f64 {
        if t.is_nan() {
            return f64::NAN;
        }
        if t <= 0.0 || t == f64::INFINITY {
            return 0.0;
        }
        if t <= self.series_switch_time() {
            self.jacobi_density(t)
        } else {
            self.spectral_density(t)
        }
    }

    /// The spectral series of the density (the poles of the moment generating function):
    /// f(t) = Σ_{n≥0} r_n e^{−λ_n t}, λ_n = (κ/8)((n + ½)² − μ²) = λ* + κn(n + 1)/8,
    /// r_n = −cos(4π/κ)(−1)^n (n + ½) κ/(4π). Exact for every t > 0 but cancels catastrophically
    /// for small t (the terms are O(1) while f(t) ≈ e^{−2π²/(κt)}); use it for
    /// t ≳ [`CleLaw::series_switch_time`]/2. Returns 0 for t ≤ 0 or t = +∞, NaN for NaN.
    pub fn spectral_density(&self, t: f64) -> f64 {
        if t.is_nan() {
            return f64::NAN;
        }
        if t <= 0.0 || t == f64::INFINITY {
            return 0.0;
        }
        let q = self.kappa * t / 8.0;
        let mut sum = 0.0;
        for n in 0..MAX_SERIES_TERMS {
            let nf = n as f64;
            let term = (nf + 0.5) * (-q * nf * (nf + 1.0)).exp();
            sum += if n % 2 == 0 { term } else { -term };
            if term <= 1e-18 * sum.abs() || term == 0.0 {
                break;
            }
        }
        self.amplitude() * self.kappa / (4.0 * PI) * (-self.lambda_star * t).exp() * sum
    }

    /// The Jacobi-transformed series of the density (obtained from the spectral series by the
    /// modular transformation η(−1/τ)³ = (−iτ)^{3/2} η(τ)³ of Dedekind's η, whose q-expansion is
    /// Σ (−1)^n (2n + 1) q^{(2n+1)²/8}; verified against the spectral series in mpmath, see
    /// `scripts/cle_law_reference.py`):
    ///
    /// f(t) = −cos(4π/κ) (κ/4π) (8π/(κt))^{3/2} e^{κμ²t/8} Σ_{n≥0} (−1)^n (n + ½) e^{−2π²(2n+1)²/(κt)}.
    ///
    /// Exact for every t > 0; its terms decrease quickly and without cancellation for
    /// t ≲ 2·[`CleLaw::series_switch_time`]. The exponentials are combined before evaluation, so
    /// the value keeps full relative accuracy down to the underflow threshold. Returns 0 for
    /// t ≤ 0 or t = +∞, NaN for NaN.
    pub fn jacobi_density(&self, t: f64) -> f64 {
        if t.is_nan() {
            return f64::NAN;
        }
        if t <= 0.0 || t == f64::INFINITY {
            return 0.0;
        }
        let k = self.kappa;
        let b0 = 2.0 * PI * PI / k;
        let ln_prefactor = (self.amplitude() * k / (4.0 * PI)).ln()
            + 1.5 * (8.0 * PI / (k * t)).ln()
            + k * self.mu * self.mu * t / 8.0
            - b0 / t;
        let mut sum = 0.0;
        for n in 0..MAX_SERIES_TERMS {
            let nf = n as f64;
            let term = (nf + 0.5) * (-4.0 * b0 * nf * (nf + 1.0) / t).exp();
            sum += if n % 2 == 0 { term } else { -term };
            if term <= 1e-18 * sum.abs() || term == 0.0 {
                break;
            }
        }
        ln_prefactor.exp() * sum
    }

    /// P(T ≤ t), T = −log CR(U₀, 0) as in [`CleLaw::density`]: [`CleLaw::jacobi_cdf`] for
    /// t ≤ [`CleLaw::series_switch_time`] (relative error about (1 + 2π²/(κt))·1e−16 however
    /// small the value, down to underflow; measured ≤ 8.4e−15 against mpmath for t ≥ 0.05),
    /// otherwise 1 − [`CleLaw::spectral_survival`]. Absolute error below 1e−15 everywhere (see
    /// `tests/cle_laws.rs`).
    /// Returns 0 for t ≤ 0, 1 for t = +∞, NaN for NaN.
    pub fn cdf(&self, t: f64) -> f64 {
        if t.is_nan() {
            return f64::NAN;
        }
        if t <= 0.0 {
            return 0.0;
        }
        if t == f64::INFINITY {
            return 1.0;
        }
        if t <= self.series_switch_time() {
            self.jacobi_cdf(t)
        } else {
            1.0 - self.spectral_survival(t)
        }
    }

    /// P(T > t), T = −log CR(U₀, 0) as in [`CleLaw::density`]: [`CleLaw::spectral_survival`]
    /// for t > [`CleLaw::series_switch_time`] (relative error a few 1e−16 in the upper tail,
    /// measured ≤ 2.9e−15 against mpmath up to t = 100, down to underflow near t ≈ 745/λ*),
    /// otherwise 1 − [`CleLaw::jacobi_cdf`]. Returns 1 for t ≤ 0,
    /// 0 for t = +∞, NaN for NaN.
    pub fn survival(&self, t: f64) -> f64 {
        if t.is_nan() {
            return f64::NAN;
        }
        if t <= 0.0 {
            return 1.0;
        }
        if t == f64::INFINITY {
            return 0.0;
        }
        if t <= self.series_switch_time() {
            1.0 - self.jacobi_cdf(t)
        } else {
            self.spectral_survival(t)
        }
    }

    /// The spectral series of the survival function, P(T > t) = Σ_{n≥0} r_n e^{−λ_n t}/λ_n with
    /// r_n, λ_n as in [`CleLaw::spectral_density`] (Σ r_n/λ_n = 1). Exact for every t > 0;
    /// accurate in relative terms for t ≳ [`CleLaw::series_switch_time`]/2, and to a few 1e−16 in
    /// absolute terms for smaller t as long as enough terms are summed (about √(400/(κt))).
    /// Returns 1 for t ≤ 0, 0 for t = +∞, NaN for NaN.
    pub fn spectral_survival(&self, t: f64) -> f64 {
        if t.is_nan() {
            return f64::NAN;
        }
        if t <= 0.0 {
            return 1.0;
        }
        if t == f64::INFINITY {
            return 0.0;
        }
        let q = self.kappa * t / 8.0;
        let mut sum = 0.0;
        for n in 0..MAX_SERIES_TERMS {
            let nf = n as f64;
            let lambda_n = self.lambda_star + self.kappa * nf * (nf + 1.0) / 8.0;
            let term = (nf + 0.5) / lambda_n * (-q * nf * (nf + 1.0)).exp();
            sum += if n % 2 == 0 { term } else { -term };
            if term <= 1e-18 * sum.abs() || term == 0.0 {
                break;
            }
        }
        self.amplitude() * self.kappa / (4.0 * PI) * (-self.lambda_star * t).exp() * sum
    }

    /// P(T ≤ t) by term-by-term integration of the Jacobi-transformed density
    /// ([`CleLaw::jacobi_density`]). With a = κμ²/8 and b_n = 2π²(2n+1)²/κ, each term needs
    /// I_n(t) = ∫₀ᵗ s^{−3/2} e^{as − b_n/s} ds; the substitution s = t/(1 + v/x_n), x_n = b_n/t,
    /// gives
    ///
    /// I_n(t) = (√t/b_n) e^{at − x_n} ∫₀^∞ (1 + v/x_n)^{−1/2} exp(−at (v/x_n)/(1 + v/x_n)) e^{−v} dv,
    ///
    /// whose integrand is smooth, bounded by e^{−v} and analytic for Re v > −x_n. The integral is
    /// computed by 16-point Gauss–Legendre rules on the panels 0, 0.5, 1.5, 3.5, 7.5, 15.5, 31.5,
    /// 50 of v (the weight beyond 50 is e^{−50} ≈ 2e−22). For t ≤ 8π/κ one has x_n ≥ π/4 and
    /// at ≤ π/4, so each panel's Bernstein ellipse is large and the rule converges to rounding
    /// level. The prefactors are combined in logarithms, so the result keeps full relative
    /// accuracy however small it is (down to underflow). Intended for
    /// t ≤ [`CleLaw::series_switch_time`] (it stays exact but needs more terms beyond);
    /// returns 0 for t ≤ 0, 1 for t = +∞ and NaN for NaN.
    pub fn jacobi_cdf(&self, t: f64) -> f64 {
        if t.is_nan() {
            return f64::NAN;
        }
        if t <= 0.0 {
            return 0.0;
        }
        if t == f64::INFINITY {
            return 1.0;
        }
        let k = self.kappa;
        let b0 = 2.0 * PI * PI / k;
        let at = k * self.mu * self.mu * t / 8.0;
        let ln_prefactor =
            (self.amplitude() * k / (4.0 * PI)).ln() + 1.5 * (8.0 * PI / k).ln() + 0.5 * t.ln();
        let mut sum = 0.0_f64;
        for n in 0..MAX_SERIES_TERMS {
            let nf = n as f64;
            let b = b0 * (2.0 * nf + 1.0) * (2.0 * nf + 1.0);
            let x = b / t;
            let magnitude = (nf + 0.5) * (ln_prefactor - b.ln() + at - x).exp();
            if magnitude == 0.0 || (n > 0 && magnitude <= 1e-18 * sum.abs()) {
                break;
            }
            let term = magnitude * Self::jacobi_cdf_integral(x, at);
            sum += if n % 2 == 0 { term } else { -term };
        }
        sum
    }

    /// ∫₀^∞ (1 + v/x)^{−1/2} exp(−c (v/x)/(1 + v/x)) e^{−v} dv by panel Gauss–Legendre
    /// (see [`CleLaw::jacobi_cdf`]).
    fn jacobi_cdf_integral(x: f64, c: f64) -> f64 {
        let (nodes, weights) = gauss_legendre();
        let mut total = 0.0;
        for w in CDF_PANELS.windows(2) {
            let (lo, hi) = (w[0], w[1]);
            let mid = 0.5 * (lo + hi);
            let half = 0.5 * (hi - lo);
            let mut panel = 0.0;
            for (z, wt) in nodes.iter().zip(weights.iter()) {
                let v = mid + half * z;
                let r = v / x;
                let g = (-c * r / (1.0 + r) - v).exp() / (1.0 + r).sqrt();
                panel += wt * g;
            }
            total += half * panel;
        }
        total
    }

    /// The p-quantile of T: the t ≥ 0 with P(T ≤ t) = p (0 for p = 0, +∞ for p = 1). For p ≤ 1/2
    /// it solves log P(T ≤ t) = log p, otherwise log P(T > t) = log(1 − p), by Newton's method on
    /// the logarithm (derivative ±density/probability) safeguarded by bisection within a bracket
    /// that is kept throughout; stops when the step is below 1e−15·t. For upper-tail
    /// probabilities closer to 0 than 1 − p can resolve, use [`CleLaw::inverse_survival`].
    ///
    /// Errors: [`Error::InvalidParameter`] unless 0 ≤ p ≤ 1; [`Error::Numerical`] if the
    /// iteration does not converge (not observed).
    pub fn quantile(&self, p: f64) -> Result<f64> {
        if !(0.0..=1.0).contains(&p) {
            return Err(Error::param("p", p, "a probability 0 <= p <= 1"));
        }
        if p == 0.0 {
            return Ok(0.0);
        }
        if p == 1.0 {
            return Ok(f64::INFINITY);
        }
        if p <= 0.5 {
            self.solve_tail(p.ln(), false)
        } else {
            self.solve_tail((-p).ln_1p(), true)
        }
    }

    /// The t with P(T > t) = q (+∞ for q = 0, 0 for q = 1): the (1 − q)-quantile, computed from
    /// the survival function so that tiny q keep their relative accuracy.
    ///
    /// Errors: [`Error::InvalidParameter`] unless 0 ≤ q ≤ 1; [`Error::Numerical`] if the
    /// iteration does not converge (not observed).
    pub fn inverse_survival(&self, q: f64) -> Result<f64> {
        if !(0.0..=1.0).contains(&q) {
            return Err(Error::param("q", q, "a probability 0 <= q <= 1"));
        }
        if q == 0.0 {
            return Ok(f64::INFINITY);
        }
        if q == 1.0 {
            return Ok(0.0);
        }
        if q >= 0.5 {
            self.solve_tail((-q).ln_1p(), false)
        } else {
            self.solve_tail(q.ln(), true)
        }
    }

    /// Solves log F(t) = target (upper = false) or log S(t) = target (upper = true).
    fn solve_tail(&self, target: f64, upper: bool) -> Result<f64> {
        // g(t) increasing in t in both cases.
        let g = |t: f64| -> (f64, f64) {
            let f = self.density(t);
            if upper {
                let s = self.survival(t);
                (target - s.ln(), f / s)
            } else {
                let c = self.cdf(t);
                (c.ln() - target, f / c)
            }
        };
        match crate::special::increasing_root(|t| Ok(g(t)), 0.0, self.mean_t())? {
            Ok(t) => Ok(t),
            Err(crate::special::RootFailure::NoBracket) => Err(Error::Numerical(format!(
                "CLE quantile: no bracket found for log-probability {target}"
            ))),
            Err(crate::special::RootFailure::NoConvergence) => Err(Error::Numerical(format!(
                "CLE quantile: no convergence for log-probability {target}"
            ))),
        }
    }

    /// 1/E[T − t₀ | T > t₀], the value to which the maximum-likelihood rate of an exponential
    /// fitted to the excesses over the threshold t₀ converges (see
    /// [`crate::stats::exponential_tail_mle`]). It increases to λ* as t₀ → ∞ with relative
    /// deficit 1 − rate/λ* ≈ 3(λ*/λ₁)(1 − λ*/λ₁) e^{−κt₀/4} from the next spectral term
    /// (λ₁ − λ* = κ/4); the hazard rate f/S itself has the larger deficit
    /// 3(1 − λ*/λ₁) e^{−κt₀/4}. Computed as P(T > t₀)/∫_{t₀}^∞ P(T > t) dt with
    /// ∫_{t}^∞ P(T > u) du = Σ r_n e^{−λ_n t}/λ_n² for t ≥ 8π/κ and tanh–sinh quadrature of the
    /// survival function below.
    ///
    /// Errors: [`Error::InvalidParameter`] unless t₀ is finite and ≥ 0; [`Error::Numerical`] if
    /// the quadrature fails.
    pub fn exponential_tail_rate(&self, threshold: f64) -> Result<f64> {
        if !(threshold.is_finite() && threshold >= 0.0) {
            return Err(Error::param(
                "threshold",
                threshold,
                "a finite threshold >= 0",
            ));
        }
        let ts = self.series_switch_time();
        let integrated_tail = |t: f64| -> f64 {
            let q = self.kappa * t / 8.0;
            let mut sum = 0.0;
            for n in 0..MAX_SERIES_TERMS {
                let nf = n as f64;
                let lambda_n = self.lambda_star + self.kappa * nf * (nf + 1.0) / 8.0;
                let term = (nf + 0.5) / (lambda_n * lambda_n) * (-q * nf * (nf + 1.0)).exp();
                sum += if n % 2 == 0 { term } else { -term };
                if term <= 1e-18 * sum.abs() || term == 0.0 {
                    break;
                }
            }
            self.amplitude() * self.kappa / (4.0 * PI) * (-self.lambda_star * t).exp() * sum
        };
        let (tail, surv) = if threshold >= ts {
            (integrated_tail(threshold), self.survival(threshold))
        } else {
            let q = crate::special::tanh_sinh(|t| self.survival(t), threshold, ts, 1e-14)?;
            (q.value + integrated_tail(ts), self.survival(threshold))
        };
        if !(tail > 0.0 && surv > 0.0) {
            return Ok(self.lambda_star);
        }
        Ok(surv / tail)
    }

    // --------------------------------------------------------------------------------------
    // Cumulant generating function.
    // --------------------------------------------------------------------------------------

    fn check_cgf_lambda(&self, lambda: f64) -> Result<()> {
        if lambda.is_nan() || lambda >= self.lambda_star {
            return Err(Error::param(
                "lambda",
                lambda,
                format!(
                    "lambda < lambda* = {} (E[exp(lambda T)] is infinite for lambda >= lambda*)",
                    self.lambda_star
                ),
            ));
        }
        Ok(())
    }

    /// Λ(λ) = log E[e^{λT}] for λ < λ* (T = −log CR(U₀, 0), Schramm, Sheffield & Wilson, Commun.
    /// Math. Phys. 2009). With u = μ² + 8λ/κ (DESIGN §7.2): Λ = log cos(πμ) − log C(u),
    /// C(u) = sin(π(½ − √u)) for u ≥ 0 (with ½ − √u = (8/κ)(λ* − λ)/(½ + √u), accurate near
    /// λ*) and C(u) = cosh(π√−u) for u < 0 (in the overflow-free form log cosh x =
    /// x + log1p(e^{−2x}) − log 2). Equals log of [`CleLaw::mgf`]; −∞ at λ = −∞.
    ///
    /// Errors: [`Error::InvalidParameter`] for NaN or λ ≥ λ*.
    pub fn cumulant_generating(&self, lambda: f64) -> Result<f64> {
        self.check_cgf_lambda(lambda)?;
        if lambda == f64::NEG_INFINITY {
            return Ok(f64::NEG_INFINITY);
        }
        let ln_amp = self.amplitude().ln();
        let u = self.mu * self.mu + 8.0 * lambda / self.kappa;
        if u >= 0.0 {
            let eps = self.half_minus_root(lambda, u);
            Ok(ln_amp - (PI * eps).sin().ln())
        } else {
            Ok(ln_amp - ln_cosh(PI * (-u).sqrt()))
        }
    }

    /// ½ − √u for u = μ² + 8λ/κ ∈ [0, ¼), computed as (8/κ)(λ* − λ)/(½ + √u).
    fn half_minus_root(&self, lambda: f64, u: f64) -> f64 {
        8.0 * (self.lambda_star - lambda) / (self.kappa * (0.5 + u.sqrt()))
    }

    /// Λ'(λ) = d/dλ log E[e^{λT}] = (4π/κ) G(u), u = μ² + 8λ/κ, with G(u) = tan(π√u)/√u for
    /// u > 0 (as cot(πε)/√u, ε = ½ − √u, near λ*), π at u = 0 and tanh(π√−u)/√−u for u < 0
    /// (DESIGN §7.2); Taylor series of tan(x)/x and tanh(x)/x for π√|u| < 1/4. It increases from 0
    /// (λ → −∞) through E[T] (λ = 0) to +∞ (λ → λ*). Λ'(λ) is the mean of T under the
    /// exponentially tilted law e^{λt − Λ(λ)} f(t) dt.
    ///
    /// Errors: [`Error::InvalidParameter`] for NaN or λ ≥ λ*.
    pub fn cumulant_generating_derivative(&self, lambda: f64) -> Result<f64> {
        self.check_cgf_lambda(lambda)?;
        if lambda == f64::NEG_INFINITY {
            return Ok(0.0);
        }
        let u = self.mu * self.mu + 8.0 * lambda / self.kappa;
        Ok(4.0 * PI / self.kappa * self.g_of_u(lambda, u))
    }

    /// G(u) of [`CleLaw::cumulant_generating_derivative`].
    fn g_of_u(&self, lambda: f64, u: f64) -> f64 {
        if u >= 0.0 {
            let r = u.sqrt();
            let x = PI * r;
            if x < SERIES_CUTOFF {
                PI * tan_over_x_series(x)
            } else if r < 0.25 {
                x.tan() / r
            } else {
                let eps = self.half_minus_root(lambda, u);
                1.0 / ((PI * eps).tan() * r)
            }
        } else {
            let s = (-u).sqrt();
            let x = PI * s;
            if x < SERIES_CUTOFF {
                PI * tanh_over_x_series(x)
            } else {
                x.tanh() / s
            }
        }
    }

    /// Λ''(λ), the variance of T under the tilted law: (4π/κ)(8/κ) G'(u) with
    /// G'(u) = (π sec²(π√u) − tan(π√u)/√u)/(2u) for u > 0 and
    /// (tanh(π√−u)/√−u − π sech²(π√−u))/(2(−u)) for u < 0 (series near u = 0). Λ''(0) = Var[T].
    ///
    /// Errors: [`Error::InvalidParameter`] for NaN or λ ≥ λ*.
    pub fn cumulant_generating_second_derivative(&self, lambda: f64) -> Result<f64> {
        self.check_cgf_lambda(lambda)?;
        if lambda == f64::NEG_INFINITY {
            return Ok(0.0);
        }
        let u = self.mu * self.mu + 8.0 * lambda / self.kappa;
        let gp = if u >= 0.0 {
            let r = u.sqrt();
            let x = PI * r;
            if x < SERIES_CUTOFF {
                // G = π tan(x)/x with x² = π²u: G'(u) = (π³/2) Σ 2k T_k x^{2k−2}.
                0.5 * PI.powi(3) * second_derivative_series(x * x)
            } else {
                let eps = self.half_minus_root(lambda, u);
                let s = (PI * eps).sin();
                let tan = if r < 0.25 {
                    x.tan()
                } else {
                    1.0 / (PI * eps).tan()
                };
                (PI / (s * s) - tan / r) / (2.0 * u)
            }
        } else {
            let s = (-u).sqrt();
            let x = PI * s;
            if x < SERIES_CUTOFF {
                0.5 * PI.powi(3) * second_derivative_series(-x * x)
            } else {
                let sech = 1.0 / x.cosh();
                (x.tanh() / s - PI * sech * sech) / (2.0 * (-u))
            }
        };
        Ok(4.0 * PI / self.kappa * (8.0 / self.kappa) * gp)
    }

    // --------------------------------------------------------------------------------------
    // Nesting (Miller, Watson & Wilson, Ann. Probab. 2016).
    // --------------------------------------------------------------------------------------

    /// 1/E[T]: the almost-sure limit of N_ε/log(1/ε), N_ε the number of CLE_κ loops surrounding
    /// the disk B(0, ε) (Miller, Watson & Wilson, Ann. Probab. 2016): the mean number of loops
    /// per unit of log(1/ε), by the renewal theorem, since the log conformal radii of the nested
    /// loops around 0 are partial sums of i.i.d. copies of T.
    pub fn nesting_rate(&self) -> f64 {
        1.0 / self.mean_t()
    }

    /// The point (ν, γ(ν)) of the nesting rate function with parameter λ < λ*:
    /// ν = 1/Λ'(λ), γ = λ − Λ(λ)/Λ'(λ) (see [`CleLaw::nesting_rate_function`]). λ = 0 gives
    /// (1/E[T], 0); λ → λ* gives ν → 0, γ → λ*; λ → −∞ gives ν → ∞.
    ///
    /// Errors: [`Error::InvalidParameter`] for NaN, infinite λ or λ ≥ λ*.
    pub fn nesting_parametric(&self, lambda: f64) -> Result<(f64, f64)> {
        if lambda.is_infinite() {
            return Err(Error::param("lambda", lambda, "a finite lambda < lambda*"));
        }
        let d = self.cumulant_generating_derivative(lambda)?;
        let l = self.cumulant_generating(lambda)?;
        Ok((1.0 / d, lambda - l / d))
    }

    /// The nesting rate function γ(ν) = ν Λ*(1/ν) of Miller, Watson & Wilson (Ann. Probab. 2016),
    /// Λ* the Legendre transform of Λ(λ) = log E[e^{λT}]: the points z of the disk around which
    /// the number of loops surrounding B(z, ε) grows like ν log(1/ε) have Hausdorff dimension
    /// 2 − γ(ν) (for γ(ν) < 2). γ ≥ 0, γ(1/E[T]) = 0, γ(0+) = λ* (the gasket exponent; ν = 0
    /// returns λ*), γ is convex, and γ'(ν) = −Λ(λ(ν)).
    ///
    /// Evaluation (no finite differences): the λ < λ* with Λ'(λ) = 1/ν is found by solving
    /// G(u) = κ/(4πν) for u = μ² + 8λ/κ (G increasing, see
    /// [`CleLaw::cumulant_generating_derivative`]): for κ/(4πν) > π in ε = ½ − √u ∈ (0, ½) as
    /// tan(πε)(½ − ε) = 4πν/κ, otherwise in s = √−u ≥ 0 as tanh(πs)/s = κ/(4πν); each by Newton's
    /// method safeguarded by bisection in a bracket. Then λ = λ* − (κ/8)ε(1 − ε) (resp.
    /// −(κ/8)(s² + μ²)) and γ = λ − νΛ(λ). The approach to λ* as ν → 0 is slow:
    /// γ ≈ λ* − ν(log(1/ν) + O(1)).
    ///
    /// Errors: [`Error::InvalidParameter`] unless ν is finite and ≥ 0; [`Error::Numerical`] if
    /// the solve does not converge (not observed).
    pub fn nesting_rate_function(&self, nu: f64) -> Result<f64> {
        if !(nu.is_finite() && nu >= 0.0) {
            return Err(Error::param(
                "nu",
                nu,
                "a finite nesting rate nu >= 0 (loops per unit of log(1/eps))",
            ));
        }
        if nu == 0.0 {
            return Ok(self.lambda_star);
        }
        let k = self.kappa;
        let g_target = k / (4.0 * PI * nu);
        if g_target > PI {
            // tan(πε)(½ − ε) = y, increasing in ε on (0, ½) from 0 to 1/π; for ε > ¼ it is
            // evaluated as δ/tan(πδ), δ = ½ − ε, which stays accurate as ε → ½.
            let y = 4.0 * PI * nu / k;
            let h = |e: f64| -> (f64, f64) {
                let delta = 0.5 - e;
                let (value, cos_pe) = if e <= 0.25 {
                    ((PI * e).tan() * delta, (PI * e).cos())
                } else {
                    (delta / (PI * delta).tan(), (PI * delta).sin())
                };
                let tan_pe = if e <= 0.25 {
                    (PI * e).tan()
                } else {
                    1.0 / (PI * delta).tan()
                };
                (value - y, PI * delta / (cos_pe * cos_pe) - tan_pe)
            };
            let eps = safeguarded_newton(h, 0.0, 0.5, (2.0 * y / PI).min(0.25))?;
            let lambda = self.lambda_star - k / 8.0 * eps * (1.0 - eps);
            let l = self.amplitude().ln() - (PI * eps).sin().ln();
            return Ok(lambda - nu * l);
        }
        let lambda = if g_target == PI {
            -k * self.mu * self.mu / 8.0
        } else {
            // g − tanh(πs)/s = 0, increasing in s from g − π < 0 (s = 0) to g > 0 (s → ∞); the
            // root lies below 1/g because tanh < 1.
            let h = |s: f64| -> (f64, f64) {
                let x = PI * s;
                if x < SERIES_CUTOFF {
                    (
                        g_target - PI * tanh_over_x_series(x),
                        PI * PI * x * second_derivative_series(-x * x),
                    )
                } else {
                    let th = x.tanh();
                    let sech = 1.0 / x.cosh();
                    (g_target - th / s, (th - x * sech * sech) / (s * s))
                }
            };
            let upper = 1.0 / g_target;
            let s = safeguarded_newton(h, 0.0, upper, 0.5 * upper)?;
            -k / 8.0 * (s * s + self.mu * self.mu)
        };
        let l = self.cumulant_generating(lambda)?;
        Ok(lambda - nu * l)
    }

    /// 1/φ(p) = E[e^{−pT}]^{−1} = cos(π√(μ² − 8p/κ))/cos(πμ) for complex p: an entire function
    /// (cos √w is entire in w), so the transforms below are meromorphic.
    fn inverse_laplace_transform_of_law(&self, p: Complex64) -> Complex64 {
        let w = Complex64::new(self.mu * self.mu, 0.0) - p * (8.0 / self.kappa);
        (w.sqrt() * PI).cos() / self.amplitude()
    }

    /// The mean and variance of the nesting count N(s) = #{k ≥ 1 : S_k ≤ s}, S_k = T₁ + … + T_k
    /// with T_i i.i.d. copies of T, at s = log(1/ε). N(s) is the number of loops around 0 of a
    /// CLE_κ in the unit disk whose interiors have conformal radius (seen from 0) at least ε —
    /// by Koebe's 1/4 theorem within O(1) loops of the number surrounding B(0, ε) (Miller, Watson
    /// & Wilson, Ann. Probab. 2016).
    ///
    /// Exact (not asymptotic) values, by Laplace inversion: with φ(p) = E[e^{−pT}] and
    /// ψ = 1/φ (entire), E[N(s)] = U(s) has transform φ/(p(1 − φ)) = 1/(p(ψ − 1)) and E[N(s)²]
    /// (= Σ_k (2k − 1) P(S_k ≤ s)) has transform φ(1 + φ)/(p(1 − φ)²) = (ψ + 1)/(p(ψ − 1)²). Their
    /// only singularities are poles on the real axis: at p = 0 and at p₁ > p₂ > … < 0 where
    /// ψ = 1, p₁ = −(κ/2)(1 − |μ|). The inverse is the residue at 0 (a polynomial in s) plus the
    /// Bromwich integral along Re p = −c, c = |p₁|/2, computed by the trapezoidal rule (step
    /// 2π(0.8c)/(37 + 0.8cs), truncated at |Im p| = 51.3κ where the integrand is below e^{−45}).
    /// The residue uses E[T], E[T²] in closed form for the s and s² terms and, for the constant
    /// term of the second moment, the Laurent coefficient computed by the trapezoidal rule on the
    /// circle |p| = c (64 points; aliasing error 2^{−64}). The remainder (the line integral)
    /// decays like e^{−cs}; it is omitted when cs > 60. Measured agreement with mpmath's
    /// Talbot/de Hoog inversion: see `tests/cle_laws.rs`.
    ///
    /// Errors: [`Error::InvalidParameter`] unless s is finite and ≥ 0.
    pub fn nesting_count_mean_var(&self, log_inv_eps: f64) -> Result<NestingCount> {
        let s = log_inv_eps;
        if !(s.is_finite() && s >= 0.0) {
            return Err(Error::param(
                "log_inv_eps",
                s,
                "a finite s = log(1/eps) >= 0",
            ));
        }
        let m1 = self.mean_t();
        let m2 = self.var_t() + m1 * m1;
        let sigma2 = self.var_t();
        let one = Complex64::new(1.0, 0.0);
        let f_mean = |p: Complex64| -> Complex64 {
            let psi = self.inverse_laplace_transform_of_law(p);
            one / (p * (psi - one))
        };
        let f_second = |p: Complex64| -> Complex64 {
            let psi = self.inverse_laplace_transform_of_law(p);
            let d = psi - one;
            (psi + one) / (p * d * d)
        };
        let c = self.renewal_contour_shift();
        // Residue at 0: mean s/m1 + a₋₁; second moment s²/m1² + (2m2/m1³ − 3/m1)s + b₋₁.
        let a_m1 = m2 / (2.0 * m1 * m1) - 1.0;
        let b_m1 = self.laurent_coefficient_at_zero(&f_second, -1, c);
        let u0 = s / m1 + a_m1;
        let var_constant = b_m1 - a_m1 * a_m1;
        let var0 = sigma2 / (m1 * m1 * m1) * s + var_constant;
        let (r_mean, r_second) = if c * s > 60.0 {
            (0.0, 0.0)
        } else {
            (
                self.bromwich_remainder(&f_mean, s, c),
                self.bromwich_remainder(&f_second, s, c),
            )
        };
        let mean = u0 + r_mean;
        // Var = (V₀ − U₀²) + R_V − R_U (2U₀ + R_U), arranged so that the s² terms cancel exactly.
        let variance = var0 + r_second - r_mean * (2.0 * u0 + r_mean);
        Ok(NestingCount {
            log_inv_eps: s,
            mean,
            variance,
            asymptotic_mean: u0,
            asymptotic_variance: var0,
        })
    }

    /// c = |p₁|/2 = (κ/4)(1 − |μ|): half the distance from 0 to the first negative pole of the
    /// renewal transforms.
    fn renewal_contour_shift(&self) -> f64 {
        0.25 * self.kappa * (1.0 - self.mu.abs())
    }

    /// The Laurent coefficient of order `order` at p = 0 of f, by the trapezoidal rule on the
    /// circle |p| = radius (exponentially accurate: the next singularity is at 2·radius).
    fn laurent_coefficient_at_zero(
        &self,
        f: &impl Fn(Complex64) -> Complex64,
        order: i32,
        radius: f64,
    ) -> f64 {
        const POINTS: usize = 64;
        let mut acc = Complex64::new(0.0, 0.0);
        for j in 0..POINTS {
            let angle = 2.0 * PI * (j as f64 + 0.5) / POINTS as f64;
            let p = Complex64::from_polar(radius, angle);
            acc += f(p) * p.powi(-order);
        }
        (acc / POINTS as f64).re
    }

    /// (1/2πi)∫ e^{ps} f(p) dp along Re p = −c upwards, for f with f(p̄) = conj f(p):
    /// (e^{−cs}/π) Re ∫₀^∞ e^{iys} f(−c + iy) dy by the trapezoidal rule.
    fn bromwich_remainder(&self, f: &impl Fn(Complex64) -> Complex64, s: f64, c: f64) -> f64 {
        let d = 0.8 * c;
        let h = 2.0 * PI * d / (37.0 + d * s);
        let y_max = self.kappa * (45.0 / (2.0 * PI)).powi(2);
        let steps = (y_max / h).ceil() as usize;
        let mut acc = 0.5 * f(Complex64::new(-c, 0.0)).re;
        for j in 1..=steps {
            let y = j as f64 * h;
            let p = Complex64::new(-c, y);
            let e = Complex64::from_polar(1.0, y * s);
            acc += (f(p) * e).re;
        }
        (-c * s).exp() * acc * h / PI
    }
}

/// Root of an increasing function on [lo, hi] (h returns value and derivative) by Newton's
/// method from `start`, falling back on bisection whenever a step leaves the bracket.
fn safeguarded_newton(h: impl Fn(f64) -> (f64, f64), lo: f64, hi: f64, start: f64) -> Result<f64> {
    crate::special::bracketed_newton(|x| Ok(h(x)), lo, hi, start, 1e-16, 2.0)?.ok_or_else(|| {
        Error::Numerical(format!(
            "nesting rate function: root finding did not converge in [{lo}, {hi}]"
        ))
    })
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
    fn gauss_legendre_rule_is_exact_for_polynomials() {
        // A 16-point Gauss rule integrates polynomials of degree ≤ 31 exactly (common practice):
        // ∫_{−1}^{1} x^{2j} dx = 2/(2j + 1). Tolerance 1e−15 (rounding of 16 products).
        let (x, w) = gauss_legendre();
        for j in 0..16 {
            let got: f64 = x.iter().zip(w).map(|(x, w)| w * x.powi(2 * j)).sum();
            let want = 2.0 / (2 * j + 1) as f64;
            assert!(
                (got - want).abs() < 1e-15,
                "degree {}: {got} vs {want}",
                2 * j
            );
        }
    }

    #[test]
    fn renewal_laurent_coefficients_match_the_moments() {
        // The circle trapezoid for the Laurent coefficients at p = 0 against the closed forms
        // from E[T] and E[T²] (renewal theory, common practice): for 1/(p(ψ − 1)):
        // a₋₂ = 1/m₁, a₋₁ = m₂/(2m₁²) − 1; for (ψ + 1)/(p(ψ − 1)²): b₋₃ = 2/m₁²,
        // b₋₂ = 2m₂/m₁³ − 3/m₁. Tolerance 1e−13 relative (aliasing 2^−64, rounding of 64 terms).
        for &k in &[3.0, 4.0, 16.0 / 3.0, 6.0, 7.9] {
            let law = CleLaw::new(k).unwrap();
            let m1 = law.mean_t();
            let m2 = law.var_t() + m1 * m1;
            let one = Complex64::new(1.0, 0.0);
            let fu = |p: Complex64| one / (p * (law.inverse_laplace_transform_of_law(p) - one));
            let fv = |p: Complex64| {
                let psi = law.inverse_laplace_transform_of_law(p);
                (psi + one) / (p * (psi - one) * (psi - one))
            };
            let c = law.renewal_contour_shift();
            let close = |a: f64, b: f64| ((a - b) / b).abs() < 1e-13;
            assert!(close(law.laurent_coefficient_at_zero(&fu, -2, c), 1.0 / m1));
            assert!(close(
                law.laurent_coefficient_at_zero(&fu, -1, c),
                m2 / (2.0 * m1 * m1) - 1.0
            ));
            assert!(close(
                law.laurent_coefficient_at_zero(&fv, -3, c),
                2.0 / (m1 * m1)
            ));
            assert!(close(
                law.laurent_coefficient_at_zero(&fv, -2, c),
                2.0 * m2 / m1.powi(3) - 3.0 / m1
            ));
        }
    }

    #[test]
    fn bromwich_remainder_is_converged_in_the_step() {
        // Internal consistency of the trapezoidal Bromwich integral: the result with the step
        // halved differs by less than 1e−14 (the rule is exponentially convergent, so the
        // difference bounds the error of the coarser one).
        for &k in &[3.0, 6.0, 7.9] {
            let law = CleLaw::new(k).unwrap();
            let one = Complex64::new(1.0, 0.0);
            let fu = |p: Complex64| one / (p * (law.inverse_laplace_transform_of_law(p) - one));
            let c = law.renewal_contour_shift();
            for s in [0.0, 1.0, 10.0, 50.0] {
                let a = law.bromwich_remainder(&fu, s, c);
                // Same integral with the step halved: shift by half a step and average.
                let d = 0.8 * c;
                let h = 2.0 * PI * d / (37.0 + d * s);
                let y_max = law.kappa * (45.0 / (2.0 * PI)).powi(2);
                let steps = (y_max / h).ceil() as usize;
                let mut acc = 0.0;
                for j in 0..steps {
                    let y = (j as f64 + 0.5) * h;
                    acc += (fu(Complex64::new(-c, y)) * Complex64::from_polar(1.0, y * s)).re;
                }
                let mid = (-c * s).exp() * acc * h / PI;
                let fine = 0.5 * (a + mid);
                assert!((a - fine).abs() < 1e-14, "kappa {k} s {s}: {a} vs {fine}");
            }
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
