//! Checks of `sleek::special` and `sleek::laws` against published formulas, closed forms and
//! reference values.
//!
//! Reference values: `tests/data/reference_values.json`, written by
//! `scripts/reference_values.py` with the general-purpose arbitrary-precision library mpmath
//! (version recorded in the file; 1.3.0 when written), 50 working digits, 30 digits output,
//! evaluated at exactly the IEEE doubles used here.
//!
//! Tolerances (relative unless stated):
//! * Γ, ln|Γ|: 1e-13. The `special` crate's Lanczos Γ is accurate to a few ulp (~1e-15) for
//!   moderate arguments; 1e-13 leaves room for the growth of rounding with large |x| and for
//!   the reflection formula near poles, while still catching any wrong branch or constant.
//! * ₂F₁: 1e-13 (the brief's target for Schramm's arguments). All representations used are
//!   sums of terms of one sign or positive integrands, so ~1e-15 is expected.
//! * Laws: 1e-12. They add a few Γ evaluations, trigonometric functions of arguments with
//!   rounding error ~1e-16, and (for the CLE law near λ*) the amplification
//!   1/(1/2 − √(μ² + 8λ/κ)) ≲ 1e3 of a relative error 1e-16 in the cosine's argument.
//! * Finite-difference checks: the tolerance is derived from the step and the third cumulant
//!   (see the individual test).
//!
//! Each test names its source beside it.

use serde_json::Value;
use sleek::laws::{phase, schramm_left_passage, trace_dimension, CleLaw, Phase};
use sleek::special::{gamma, hyp2f1, ln_gamma, tanh_sinh};
use std::f64::consts::PI;

mod common;
use common::reference::{num, rows, val};

fn reference() -> Value {
    common::reference::load("reference_values.json")
}

fn rel_err(got: f64, want: f64) -> f64 {
    if want == 0.0 {
        got.abs()
    } else {
        ((got - want) / want).abs()
    }
}

/// Asserts `rel_err ≤ tol` for every case and reports the largest error seen.
struct Worst {
    what: &'static str,
    tol: f64,
    max: f64,
    at: String,
}

impl Worst {
    fn new(what: &'static str, tol: f64) -> Self {
        Worst {
            what,
            tol,
            max: 0.0,
            at: String::new(),
        }
    }
    fn check(&mut self, got: f64, want: f64, case: impl FnOnce() -> String) {
        let e = rel_err(got, want);
        let case = case();
        assert!(
            e <= self.tol,
            "{}: {case}: got {got:e}, want {want:e}, rel. err {e:.2e}",
            self.what
        );
        if e >= self.max {
            self.max = e;
            self.at = case;
        }
    }
}

impl Drop for Worst {
    fn drop(&mut self) {
        if !std::thread::panicking() {
            eprintln!(
                "max rel. error {:<28} {:.2e} (tol {:.0e}) at {}",
                self.what, self.max, self.tol, self.at
            );
        }
    }
}

#[test]
fn reference_file_names_its_source() {
    // The reference file must say which library and script produced it (project rule).
    let d = reference();
    assert_eq!(d["library"], "mpmath");
    assert_eq!(d["generator"], "scripts/reference_values.py");
    assert!(d["mpmath_version"].as_str().is_some_and(|v| !v.is_empty()));
}

// ------------------------------------------------------------------------------ Gamma ------

#[test]
fn gamma_matches_mpmath() {
    // Reference: mpmath 1.3.0 (scripts/reference_values.py).
    let d = reference();
    let mut w = Worst::new("gamma", 1e-13);
    for r in rows(&d, "gamma") {
        let x = num(r, "x");
        w.check(gamma(x), val(r, "value"), || format!("x = {x}"));
    }
}

#[test]
fn ln_gamma_matches_mpmath() {
    // Reference: mpmath 1.3.0 (scripts/reference_values.py), log|Γ(x)|. At x = 1 and 2 the
    // reference is exactly 0 and the error is taken as absolute (the value must be 0 to
    // 1e-13).
    let d = reference();
    let mut w = Worst::new("ln_gamma", 1e-13);
    for r in rows(&d, "ln_gamma_abs") {
        let x = num(r, "x");
        w.check(ln_gamma(x), val(r, "value"), || format!("x = {x}"));
    }
}

#[test]
fn gamma_functional_equation() {
    // Γ(x+1) = xΓ(x) (common practice). Both sides are ~1e-15-accurate; 1e-14.
    for &x in &[0.3, 1.7, 4.4, 12.9, -0.6, -2.3] {
        let lhs = gamma(x + 1.0);
        let rhs = x * gamma(x);
        assert!(rel_err(lhs, rhs) < 1e-14, "x = {x}: {lhs} vs {rhs}");
    }
}

// -------------------------------------------------------------------------------- 2F1 ------

#[test]
fn hyp2f1_schramm_arguments_match_mpmath() {
    // Reference: mpmath 1.3.0 (scripts/reference_values.py) at a = 1/2, b = 4/κ, c = 3/2,
    // z = −s² for κ ∈ {1, 2, 8/3, 3, 4, 6, 7.5}, s ∈ {−3, −0.4, 0.5, 1, 2, 10, 200}
    // (Schramm, Electron. Comm. Probab. 2001 uses exactly these arguments).
    let d = reference();
    let mut w = Worst::new("hyp2f1 (Schramm args)", 1e-13);
    for r in rows(&d, "hyp2f1_schramm") {
        let (a, b, c, z) = (num(r, "a"), num(r, "b"), num(r, "c"), num(r, "z"));
        let got = hyp2f1(a, b, c, z).unwrap_or_else(|e| panic!("({a}, {b}; {c}; {z}): {e}"));
        w.check(got, val(r, "value"), || {
            format!("kappa = {}, s = {}", num(r, "kappa"), num(r, "s"))
        });
    }
}

#[test]
fn hyp2f1_schramm_sweep_matches_mpmath() {
    // Reference: mpmath 1.3.0 (scripts/reference_values.py), a seeded sweep of Schramm's
    // arguments (Schramm, Electron. Comm. Probab. 2001): κ ∈ (0.2, 8) with extra points near
    // 8/3, 4 and 8, s = ±10^u, u ∈ [−3, 3].
    let d = reference();
    let mut w = Worst::new("hyp2f1 (Schramm sweep)", 1e-13);
    for r in rows(&d, "hyp2f1_schramm_sweep") {
        let (a, b, c, z) = (num(r, "a"), num(r, "b"), num(r, "c"), num(r, "z"));
        let got = hyp2f1(a, b, c, z).unwrap_or_else(|e| panic!("({a}, {b}; {c}; {z}): {e}"));
        w.check(got, val(r, "value"), || {
            format!("kappa = {}, s = {}", num(r, "kappa"), num(r, "s"))
        });
    }
    assert!(rows(&d, "hyp2f1_schramm_sweep").len() >= 100);
}

#[test]
fn hyp2f1_other_arguments_match_mpmath() {
    // Reference: mpmath 1.3.0 (scripts/reference_values.py): integer a − b, z near 1,
    // z = −1e4 and −1e6, terminating series, small endpoint exponents, c < a, b.
    let d = reference();
    let mut w = Worst::new("hyp2f1 (other args)", 1e-13);
    for r in rows(&d, "hyp2f1_other") {
        let (a, b, c, z) = (num(r, "a"), num(r, "b"), num(r, "c"), num(r, "z"));
        let got = hyp2f1(a, b, c, z).unwrap_or_else(|e| panic!("({a}, {b}; {c}; {z}): {e}"));
        w.check(got, val(r, "value"), || {
            format!(
                "({a}, {b}; {c}; {z}) [{}]",
                r["note"].as_str().unwrap_or("")
            )
        });
    }
}

#[test]
fn hyp2f1_closed_forms() {
    // Elementary closed forms (Abramowitz & Stegun, Handbook of Mathematical Functions,
    // National Bureau of Standards 1964, 15.1.4–15.1.7; (from memory)):
    //   2F1(1/2, 1; 3/2; −x²) = atan(x)/x, 2F1(1/2, 1/2; 3/2; −x²) = asinh(x)/x,
    //   2F1(1/2, 3/2; 3/2; −x²) = (1 + x²)^{−1/2}, 2F1(1, 1; 2; −x) = ln(1 + x)/x.
    // The right-hand sides are evaluated by libm to ~1e-16; tolerance 1e-13 as for mpmath.
    let mut w = Worst::new("hyp2f1 (closed forms)", 1e-13);
    for &x in &[1e-3, 0.1, 0.5, 0.9, 1.0, 1.3, 3.0, 10.0, 77.7, 1e3] {
        let z = -x * x;
        w.check(hyp2f1(0.5, 1.0, 1.5, z).unwrap(), x.atan() / x, || {
            format!("atan, x = {x}")
        });
        w.check(hyp2f1(0.5, 0.5, 1.5, z).unwrap(), x.asinh() / x, || {
            format!("asinh, x = {x}")
        });
        w.check(
            hyp2f1(0.5, 1.5, 1.5, z).unwrap(),
            1.0 / (1.0 + x * x).sqrt(),
            || format!("sqrt, x = {x}"),
        );
        w.check(hyp2f1(1.0, 1.0, 2.0, -x).unwrap(), x.ln_1p() / x, || {
            format!("ln, x = {x}")
        });
    }
}

#[test]
fn hyp2f1_symmetry_and_trivial_cases() {
    // ₂F₁ is symmetric in a and b, and equals 1 at z = 0 or a = 0 (definition of the series;
    // common practice). Both orders go through the same candidate set, so the tolerance is
    // 1e-14.
    for &(a, b, c, z) in &[
        (0.3, 1.9, 2.4, -30.0),
        (0.5, 4.0 / 3.0, 1.5, 0.8),
        (2.0, 0.7, 1.1, -0.3),
    ] {
        let ab = hyp2f1(a, b, c, z).unwrap();
        let ba = hyp2f1(b, a, c, z).unwrap();
        assert!(rel_err(ab, ba) < 1e-14, "({a},{b};{c};{z}): {ab} vs {ba}");
    }
    assert_eq!(hyp2f1(0.3, 0.4, 0.5, 0.0).unwrap(), 1.0);
    assert_eq!(hyp2f1(0.0, 0.4, 0.5, -7.0).unwrap(), 1.0);
}

#[test]
fn hyp2f1_errors_instead_of_panics() {
    // Outside the supported domain the function must return Err (project rule: no panics).
    assert!(hyp2f1(0.5, 0.5, 1.5, 1.0).is_err()); // z = 1 (branch point)
    assert!(hyp2f1(0.5, 0.5, 1.5, 1.5).is_err()); // z > 1 (branch cut)
    assert!(hyp2f1(0.5, 0.5, 0.0, 0.1).is_err()); // c = 0 (pole)
    assert!(hyp2f1(0.5, 0.5, -3.0, 0.1).is_err()); // c = −3 (pole)
    assert!(hyp2f1(f64::NAN, 0.5, 1.5, 0.1).is_err());
    assert!(hyp2f1(0.5, f64::INFINITY, 1.5, 0.1).is_err());
    assert!(hyp2f1(0.5, 0.5, 1.5, f64::NEG_INFINITY).is_err());
    // c < a, b and z = 0.95: no Euler integral and no series with |ζ| ≤ 0.9 exists.
    assert!(hyp2f1(3.0, 4.0, 2.5, 0.95).is_err());
}

#[test]
fn tanh_sinh_integrates_known_integrals() {
    // Exact integrals (common practice): ∫₀¹ t^{-1/2} = 2, ∫₀¹ ln t = −1,
    // ∫₀¹ 4/(1+t²) = π, ∫₋₁¹ √(1−t²) = π/2. Tolerance 1e-13 absolute (values O(1)).
    type Case<'a> = (&'a dyn Fn(f64) -> f64, f64, f64, f64);
    let cases: [Case; 4] = [
        (&|t: f64| t.powf(-0.5), 0.0, 1.0, 2.0),
        (&|t: f64| t.ln(), 0.0, 1.0, -1.0),
        (&|t: f64| 4.0 / (1.0 + t * t), 0.0, 1.0, PI),
        (&|t: f64| (1.0 - t * t).sqrt(), -1.0, 1.0, PI / 2.0),
    ];
    for (f, a, b, want) in cases {
        let q = tanh_sinh(f, a, b, 1e-14).unwrap();
        assert!((q.value - want).abs() < 1e-13, "{q:?} vs {want}");
    }
    assert!(tanh_sinh(|t| t, f64::NAN, 1.0, 1e-10).is_err());
    assert!(tanh_sinh(|t| t, 0.0, 1.0, -1.0).is_err());
}

// ---------------------------------------------------------------------------- SLE laws ----

#[test]
fn trace_dimension_formula() {
    // Beffara, Ann. Probab. 2008: dim = min(1 + κ/8, 2). Exact in binary for these κ.
    assert_eq!(trace_dimension(2.0).unwrap(), 1.25);
    assert_eq!(trace_dimension(6.0).unwrap(), 1.75);
    assert_eq!(trace_dimension(8.0).unwrap(), 2.0);
    assert_eq!(trace_dimension(12.0).unwrap(), 2.0);
    for bad in [0.0, -1.0, f64::NAN, f64::INFINITY] {
        assert!(trace_dimension(bad).is_err(), "kappa = {bad}");
    }
}

#[test]
fn phases() {
    // Rohde & Schramm, Ann. Math. 2005: simple for κ ≤ 4, self-touching for 4 < κ < 8,
    // space-filling for κ ≥ 8.
    assert_eq!(phase(8.0 / 3.0).unwrap(), Phase::Simple);
    assert_eq!(phase(4.0).unwrap(), Phase::Simple);
    assert_eq!(phase(6.0).unwrap(), Phase::SelfTouching);
    assert_eq!(phase(8.0).unwrap(), Phase::SpaceFilling);
    assert_eq!(phase(16.0).unwrap(), Phase::SpaceFilling);
    for bad in [0.0, -4.0, f64::NAN, f64::INFINITY] {
        assert!(phase(bad).is_err(), "kappa = {bad}");
    }
    // Serialised in kebab-case (project convention for the CLI's JSON output).
    assert_eq!(
        serde_json::to_string(&Phase::SelfTouching).unwrap(),
        "\"self-touching\""
    );
    assert_eq!(
        serde_json::to_string(&Phase::SpaceFilling).unwrap(),
        "\"space-filling\""
    );
    assert!(!Phase::Simple.describe().is_empty());
}

#[test]
fn schramm_matches_mpmath() {
    // Schramm, Electron. Comm. Probab. 2001; reference values: mpmath 1.3.0
    // (scripts/reference_values.py), from the 2F1 form and cross-checked there by
    // quadrature.
    let d = reference();
    let mut w = Worst::new("schramm_left_passage", 1e-12);
    for r in rows(&d, "schramm_left_passage") {
        let (k, x, y) = (num(r, "kappa"), num(r, "x"), num(r, "y"));
        let got = schramm_left_passage(k, x, y).unwrap();
        w.check(got, val(r, "value"), || {
            format!("kappa = {k}, x = {x}, y = {y}")
        });
    }
}

#[test]
fn schramm_colleague_values_kappa_6() {
    // κ = 6 values quoted in the design brief as computed with mpmath, 6 decimals:
    // s = 0.5 → 0.565225, s = 1 → 0.616270, s = 2 → 0.680214. Tolerance 5e-7 absolute
    // (rounding of the quoted digits).
    for (s, want) in [(0.5, 0.565225), (1.0, 0.616270), (2.0, 0.680214)] {
        let got = schramm_left_passage(6.0, s, 1.0).unwrap();
        assert!((got - want).abs() <= 5e-7, "s = {s}: {got}");
    }
}

#[test]
fn schramm_closed_forms() {
    // Closed forms of Schramm's formula (Schramm, Electron. Comm. Probab. 2001; the κ = 2, 8/3,
    // 4 reductions follow from the 2F1 identities of A&S 15.1 and are the brief's):
    //   κ = 2: 1/2 + (atan s + s/(1+s²))/π,  κ = 8/3: 1/2 + s/(2√(1+s²)),  κ = 4: 1/2 + atan(s)/π.
    // Relative tolerance 1e-12 in P (the closed forms are evaluated in f64 and lose relative
    // accuracy where P ≪ 1, so only s ≥ −3 is used).
    let mut w = Worst::new("schramm (closed forms)", 1e-12);
    for &s in &[-3.0, -1.0, -0.3, 0.0, 0.2, 0.999, 1.001, 2.5, 40.0, 1e3] {
        let k2 = 0.5 + (f64::atan(s) + s / (1.0 + s * s)) / PI;
        let k83 = 0.5 + s / (2.0 * (1.0 + s * s).sqrt());
        let k4 = 0.5 + f64::atan(s) / PI;
        w.check(schramm_left_passage(2.0, s, 1.0).unwrap(), k2, || {
            format!("kappa 2, s = {s}")
        });
        w.check(
            schramm_left_passage(8.0 / 3.0, s, 1.0).unwrap(),
            k83,
            || format!("kappa 8/3, s = {s}"),
        );
        w.check(schramm_left_passage(4.0, s, 1.0).unwrap(), k4, || {
            format!("kappa 4, s = {s}")
        });
    }
}

#[test]
fn schramm_symmetry_and_monotonicity() {
    // P(−s) = 1 − P(s) (reflection symmetry of SLE; Schramm, Electron. Comm. Probab. 2001),
    // P(0) = 1/2, P increasing in s. Tolerance 1e-14 absolute for the symmetry (both sides
    // come from the same O(1) computations).
    for &k in &[0.5, 1.0, 3.0, 5.0, 7.9] {
        assert!((schramm_left_passage(k, 0.0, 1.0).unwrap() - 0.5).abs() < 1e-15);
        let mut prev = 0.0;
        for i in -40i32..=40 {
            let s = 1.25f64.powi(i.abs()) * f64::from(i.signum()) * 0.1;
            let p = schramm_left_passage(k, s, 1.0).unwrap();
            let q = schramm_left_passage(k, -s, 1.0).unwrap();
            assert!((p + q - 1.0).abs() < 1e-14, "kappa {k} s {s}: {p} + {q}");
            assert!(p >= prev, "not monotone at kappa {k}, s {s}");
            assert!((0.0..=1.0).contains(&p));
            prev = p;
        }
    }
}

#[test]
fn schramm_continuous_across_route_switch() {
    // The implementation switches from the 2F1 form to the incomplete-beta tail at |s| = 1, or
    // earlier where the 2F1 form leaves P ∈ [1/4, 3/4]. P is smooth (Schramm, Electron. Comm.
    // Probab. 2001) with |dP/ds| ≤ K = Γ(4/κ)/(√π Γ(4/κ − 1/2)) (the maximum of the density
    // K(1 + u²)^{−4/κ}). At each possible switch point s* (s = ±1, and the points where
    // P = 1/4 or 3/4, located by bisection — which would converge onto a jump if there were
    // one) values at s* ± ε must differ by at most 2Kε plus rounding 1e-14.
    let density_max = |k: f64| {
        let b = 4.0 / k;
        gamma(b) / (PI.sqrt() * gamma(b - 0.5))
    };
    for &k in &[0.1, 0.3, 0.7, 2.0, 8.0 / 3.0, 4.0, 6.0, 7.9] {
        let p = |s: f64| schramm_left_passage(k, s, 1.0).unwrap();
        let mut points = vec![1.0, -1.0];
        for target in [0.25, 0.75] {
            let (mut lo, mut hi) = (-1.0f64, 1.0f64);
            if (p(lo) - target) * (p(hi) - target) < 0.0 {
                for _ in 0..200 {
                    let mid = 0.5 * (lo + hi);
                    if (p(mid) - target) * (p(lo) - target) > 0.0 {
                        lo = mid;
                    } else {
                        hi = mid;
                    }
                }
                points.push(0.5 * (lo + hi));
            }
        }
        for s in points {
            let eps = 1e-12 * s.abs().max(1e-3);
            let jump = (p(s + eps) - p(s - eps)).abs();
            let tol = 2.0 * density_max(k) * eps + 1e-14;
            assert!(jump <= tol, "kappa {k}, s* = {s}: jump {jump:e} > {tol:e}");
        }
    }
}

#[test]
fn schramm_errors() {
    // Domain of Schramm's formula (Schramm, Electron. Comm. Probab. 2001): 0 < κ < 8, y > 0.
    for bad in [0.0, -1.0, 8.0, 9.0, f64::NAN, f64::INFINITY] {
        assert!(
            schramm_left_passage(bad, 1.0, 1.0).is_err(),
            "kappa = {bad}"
        );
    }
    let msg = schramm_left_passage(8.0, 1.0, 1.0).unwrap_err().to_string();
    assert!(msg.contains("space-filling"), "{msg}");
    for bad_y in [0.0, -1.0, f64::NAN, f64::INFINITY] {
        assert!(
            schramm_left_passage(3.0, 1.0, bad_y).is_err(),
            "y = {bad_y}"
        );
    }
    assert!(schramm_left_passage(3.0, f64::NAN, 1.0).is_err());
    assert!(schramm_left_passage(3.0, f64::INFINITY, 1.0).is_err());
}

// ---------------------------------------------------------------------------- CLE laws ----

#[test]
fn cle_law_matches_mpmath() {
    // Schramm, Sheffield & Wilson, Commun. Math. Phys. 2009 (MGF, λ*); Nacu & Werner,
    // J. London Math. Soc. 2011 (gasket dimension). Reference: mpmath 1.3.0
    // (scripts/reference_values.py); there E[T], Var[T] are mpmath numerical derivatives of
    // log E[e^{λT}] at 0, independent of the closed forms implemented here.
    let d = reference();
    let mut wm = Worst::new("CleLaw::mean_t", 1e-12);
    let mut wv = Worst::new("CleLaw::var_t", 1e-12);
    let mut wl = Worst::new("CleLaw::lambda_star", 1e-12);
    let mut wg = Worst::new("CleLaw::gasket_dimension", 1e-12);
    let mut wf = Worst::new("CleLaw::mgf", 1e-12);
    let mut wc = Worst::new("CleLaw::cr_moment", 1e-12);
    let mut cosh_cases = 0;
    for r in rows(&d, "cle") {
        let k = num(r, "kappa");
        let law = CleLaw::new(k).unwrap();
        let case = || format!("kappa = {k}");
        wm.check(law.mean_t(), val(r, "mean_t"), case);
        wv.check(law.var_t(), val(r, "var_t"), case);
        wl.check(law.lambda_star(), val(r, "lambda_star"), case);
        wg.check(law.gasket_dimension(), val(r, "gasket_dimension"), case);
        assert!((law.mu() - val(r, "mu")).abs() < 1e-15);
        for m in r["mgf"].as_array().unwrap() {
            let lam = num(m, "lambda");
            let want = val(m, "value");
            wf.check(law.mgf(lam).unwrap(), want, || {
                format!("kappa = {k}, lambda = {lam}")
            });
            if lam > -law.lambda_star() {
                wc.check(law.cr_moment(-lam).unwrap(), want, || {
                    format!("kappa = {k}, lambda = {}", -lam)
                });
            }
            if m["branch"] == "cosh" {
                cosh_cases += 1;
            }
        }
    }
    assert!(
        cosh_cases >= 10,
        "the reference set must exercise the cosh branch"
    );
}

#[test]
fn cle_law_colleague_values() {
    // Values quoted in the design brief (mpmath 1.3, 7 significant digits):
    // κ=3: E[T]=21.76559 (=4π√3), Var=370.4676, λ*=5/96; κ=4: π², 64.93939, 1/8;
    // κ=16/3: 3π, 64.55554, 1/8; κ=6: 2π√3, 92.61689, 5/48. Tolerance 1e-6 relative for the
    // 7-digit Var values, 1e-12 for the exact expressions.
    let cases = [
        (3.0, 4.0 * PI * 3f64.sqrt(), 370.4676, 5.0 / 96.0),
        (4.0, PI * PI, 64.93939, 1.0 / 8.0),
        (16.0 / 3.0, 3.0 * PI, 64.55554, 1.0 / 8.0),
        (6.0, 2.0 * PI * 3f64.sqrt(), 92.61689, 5.0 / 48.0),
    ];
    for (k, mean, var, ls) in cases {
        let law = CleLaw::new(k).unwrap();
        assert!(
            rel_err(law.mean_t(), mean) < 1e-12,
            "kappa {k}: {}",
            law.mean_t()
        );
        assert!(
            rel_err(law.var_t(), var) < 1e-6,
            "kappa {k}: {}",
            law.var_t()
        );
        assert!(
            rel_err(law.lambda_star(), ls) < 1e-12,
            "kappa {k}: {}",
            law.lambda_star()
        );
    }
    // κ = 4 limits: E[T] = π², Var[T] = 2π⁴/3 (limits of the closed forms as ν → 0).
    let law = CleLaw::new(4.0).unwrap();
    assert!(rel_err(law.var_t(), 2.0 * PI.powi(4) / 3.0) < 1e-14);
}

#[test]
fn cle_cumulants_are_derivatives_of_log_mgf() {
    // Internal consistency (common practice): E[T] and Var[T] are the first two derivatives of
    // log E[e^{λT}] at 0 (Schramm, Sheffield & Wilson, Commun. Math. Phys. 2009 give the MGF).
    // Central differences with step h have truncation error ≈ h²κ₃/6 (first derivative) and
    // ≈ h²κ₄/12 (second), κ₃, κ₄ the third and fourth cumulants of T (mpmath values in the
    // reference file), and rounding error ≈ 1e-16·|log M|/h resp. 4e-16/h² with |log M| ≲ 1.
    // The tolerances are twice the truncation estimate plus the rounding bound: computed, not
    // tuned.
    let d = reference();
    for r in rows(&d, "cle") {
        let k = num(r, "kappa");
        let law = CleLaw::new(k).unwrap();
        let c3 = val(r, "third_cumulant_t").abs();
        let c4 = val(r, "fourth_cumulant_t").abs();
        let lm = |l: f64| law.mgf(l).unwrap().ln();
        let h = 1e-4 * law.lambda_star();
        let d1 = (lm(h) - lm(-h)) / (2.0 * h);
        let tol1 = 2.0 * h * h * c3 / 6.0 + 1e-15 / h;
        let e1 = (d1 - law.mean_t()).abs();
        assert!(
            e1 <= tol1,
            "kappa {k}: {d1} vs {} (tol {tol1:e})",
            law.mean_t()
        );
        let h2 = 1e-3 * law.lambda_star();
        let d2 = (lm(h2) - 2.0 * lm(0.0) + lm(-h2)) / (h2 * h2);
        let tol2 = 2.0 * h2 * h2 * c4 / 12.0 + 4e-16 / (h2 * h2);
        let e2 = (d2 - law.var_t()).abs();
        assert!(
            e2 <= tol2,
            "kappa {k}: {d2} vs {} (tol {tol2:e})",
            law.var_t()
        );
        eprintln!("kappa {k}: |d1 - E[T]| = {e1:.1e} (tol {tol1:.1e}), |d2 - Var| = {e2:.1e} (tol {tol2:.1e})");
    }
}

#[test]
fn cle_identities() {
    // mgf(0) = cr_moment(0) = 1 (T is a.s. finite), λ* = 2 − gasket dimension (Schramm,
    // Sheffield & Wilson, Commun. Math. Phys. 2009; Nacu & Werner, J. London Math. Soc. 2011).
    // Tolerance 1e-14: numerator and denominator of mgf(0) are the same cosine computed by two
    // trigonometric identities, each accurate to a few ulp for κ away from 8/3 and 8.
    for &k in &[2.7, 3.0, 3.3, 4.0, 4.0001, 5.0, 6.0, 7.0, 7.9] {
        let law = CleLaw::new(k).unwrap();
        assert!((law.mgf(0.0).unwrap() - 1.0).abs() < 1e-14, "kappa {k}");
        assert!(
            (law.cr_moment(0.0).unwrap() - 1.0).abs() < 1e-14,
            "kappa {k}"
        );
        assert!((law.lambda_star() - (2.0 - law.gasket_dimension())).abs() < 1e-15);
        assert!((law.mu() - (1.0 - 4.0 / k)).abs() < 1e-16);
        assert_eq!(law.kappa(), k);
        // Serialised with its parameters (for the CLI's JSON output; common practice).
        let v = serde_json::to_value(law).unwrap();
        assert_eq!(v["kappa"].as_f64(), Some(k));
        assert_eq!(v["lambda_star"].as_f64(), Some(law.lambda_star()));
        // E[CR^λ] decreasing in λ and E[e^{λT}] increasing (T > 0).
        let a = law.cr_moment(0.5).unwrap();
        let b = law.cr_moment(1.0).unwrap();
        assert!(b < a && a < 1.0);
    }
}

#[test]
fn cle_mean_var_smooth_through_kappa_4() {
    // E[T] and Var[T] are analytic in κ through κ = 4 (functions of ν² = μ²; Schramm,
    // Sheffield & Wilson, Commun. Math. Phys. 2009). The implementation switches from the
    // closed forms to Taylor series at πν = 1/4, i.e. κ = 4/(1 ∓ 1/(4π)). A second difference
    // f(κ₀+3δ) − 2f(κ₀+δ) + f(κ₀−δ) spanning the switch is O(δ²f'') ≈ 1e-20·f for a smooth f
    // and equals the jump otherwise; with four evaluations each accurate to ≈ 3e-15 (the
    // closed-form variance loses ≈ 1/((2/3)(πν)²) ≈ 24 ulp at the cutoff) the tolerance is
    // 3e-14 relative. Then the second difference of Var[T] across κ = 4 must be O(e²) (no
    // kink): |Δ²| ≤ 1e-5·Var for e = 1e-4 (the true value is e²·Var''(4) ≈ 1e-8·Var·O(1)).
    let cut = 0.25 / PI;
    for &k0 in &[4.0 / (1.0 - cut), 4.0 / (1.0 + cut)] {
        let d = 1e-10 * k0;
        let law = |j: f64| CleLaw::new(k0 + j * d).unwrap();
        let (a, b, c) = (law(-1.0), law(1.0), law(3.0));
        let jump_mean = c.mean_t() - 2.0 * b.mean_t() + a.mean_t();
        let jump_var = c.var_t() - 2.0 * b.var_t() + a.var_t();
        assert!(
            jump_mean.abs() < 3e-14 * b.mean_t(),
            "kappa {k0}: mean jump {jump_mean:e}"
        );
        assert!(
            jump_var.abs() < 3e-14 * b.var_t(),
            "kappa {k0}: var jump {jump_var:e}"
        );
        eprintln!(
            "switch at kappa {k0}: relative jumps mean {:.1e}, var {:.1e}",
            jump_mean / b.mean_t(),
            jump_var / b.var_t()
        );
    }
    let f = |k: f64| CleLaw::new(k).unwrap().var_t();
    let e = 1e-4;
    let second = f(4.0 + e) - 2.0 * f(4.0) + f(4.0 - e);
    assert!(second.abs() < 1e-5 * f(4.0), "kink at kappa = 4: {second}");
}

#[test]
fn cle_errors() {
    // CLE_κ exists only for 8/3 < κ ≤ 8 (Sheffield & Werner, Ann. Math. 2012); the law of
    // SSW degenerates at κ = 8.
    for bad in [8.0 / 3.0, 2.0, 0.0, -5.0, 8.0, 9.0, f64::NAN, f64::INFINITY] {
        assert!(CleLaw::new(bad).is_err(), "kappa = {bad}");
    }
    let msg = CleLaw::new(2.0).unwrap_err().to_string();
    assert!(msg.contains("8/3"), "{msg}");
    let law = CleLaw::new(6.0).unwrap();
    let ls = law.lambda_star();
    assert!(law.mgf(ls).is_err());
    assert!(law.mgf(ls + 1.0).is_err());
    assert!(law.mgf(f64::NAN).is_err());
    assert!(law.mgf(f64::INFINITY).is_err());
    assert!(law.cr_moment(-ls).is_err());
    assert!(law.cr_moment(f64::NAN).is_err());
    assert_eq!(law.mgf(f64::NEG_INFINITY).unwrap(), 0.0);
    // Just below λ*: finite and large, never a panic.
    let v = law.mgf(ls * (1.0 - 1e-12)).unwrap();
    assert!(v.is_finite() && v > 1e6);
}
