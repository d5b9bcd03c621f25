//! Checks of the law of T = −log CR(U₀, 0) for the outermost CLE_κ loop around 0 in the unit disk
//! (Schramm, Sheffield & Wilson, Commun. Math. Phys. 2009) and of the nesting statistics derived
//! from it (Miller, Watson & Wilson, Ann. Probab. 2016), as implemented in `sleek::laws::CleLaw`.
//!
//! Two kinds of check: internal consistency (quadratures of the density against the closed-form
//! moments, the two series against each other, identities between functions), and comparisons
//! with reference values computed by mpmath 1.3.0 at 50 digits by
//! `scripts/cle_law_reference.py` (written to `tests/data/cle_law_reference.json`), among them an
//! independent solution of the generator ODE. Every tolerance is stated with its reason.

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use sleek::laws::CleLaw;
use sleek::special::tanh_sinh;
use sleek::stats::{choose_tail_threshold, ks_test, DEFAULT_TAIL_LEVELS};
use std::f64::consts::PI;

const KAPPAS: [f64; 6] = [3.0, 4.0, 16.0 / 3.0, 6.0, 7.0, 7.9];

fn reference() -> serde_json::Value {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/data/cle_law_reference.json"
    );
    serde_json::from_str(&std::fs::read_to_string(path).expect("reference file")).unwrap()
}

fn num(v: &serde_json::Value) -> f64 {
    match v {
        serde_json::Value::String(s) => s.parse().unwrap(),
        other => other.as_f64().unwrap(),
    }
}

fn rel(a: f64, b: f64) -> f64 {
    if a == b {
        0.0
    } else {
        (a - b).abs() / b.abs()
    }
}

/// ∫₀^∞ g(t) f(t) dt by tanh–sinh on [0, t_s], [t_s, 10 E[T]], [10 E[T], L] (L chosen by the
/// caller so that the neglected tail is below 1e−20).
fn integrate_against_density(law: &CleLaw, g: impl Fn(f64) -> f64, upper: f64) -> f64 {
    let ts = law.series_switch_time();
    let mid = 10.0 * law.mean_t();
    let mut total = 0.0;
    for (a, b) in [(0.0, ts), (ts, mid), (mid, upper)] {
        let q = tanh_sinh(|t| g(t) * law.density(t), a, b, 1e-14).unwrap();
        total += q.value;
    }
    total
}

#[test]
fn density_integrates_to_one_and_gives_the_mean() {
    // Internal consistency (quadrature of the density vs the closed-form E[T] of Schramm,
    // Sheffield & Wilson 2009). The tail beyond L = 60/λ* is e^{−60} ≈ 1e−26 of the mass.
    // Tolerances: 1e−13 (mass) and 1e−12 (moments, relative): tanh–sinh at relative tolerance
    // 1e−14 on three panels (its error estimate is the difference of the last two levels, and
    // the error roughly squares per level) plus rounding of ~1e3 density evaluations.
    for &k in &KAPPAS {
        let law = CleLaw::new(k).unwrap();
        let upper = 60.0 / law.lambda_star();
        let mass = integrate_against_density(&law, |_| 1.0, upper);
        assert!((mass - 1.0).abs() < 1e-13, "kappa {k}: mass {mass}");
        let mean = integrate_against_density(&law, |t| t, upper);
        assert!(
            rel(mean, law.mean_t()) < 1e-12,
            "kappa {k}: mean {mean} vs {}",
            law.mean_t()
        );
        let second = integrate_against_density(&law, |t| t * t, upper);
        let want = law.var_t() + law.mean_t().powi(2);
        assert!(
            rel(second, want) < 1e-12,
            "kappa {k}: E[T^2] {second} vs {want}"
        );
    }
}

#[test]
fn density_reproduces_the_moment_generating_function() {
    // Internal consistency: ∫ e^{λt} f(t) dt vs the closed form −cos(4π/κ)/cos(π√(μ²+8λ/κ))
    // (Schramm, Sheffield & Wilson 2009). The tail beyond L is below e^{−60} relative
    // (L = 60/(λ* − λ)). Tolerance 1e−12 relative, as above.
    for &k in &KAPPAS {
        let law = CleLaw::new(k).unwrap();
        for lambda in [
            -2.0,
            -0.3,
            0.0,
            0.5 * law.lambda_star(),
            0.9 * law.lambda_star(),
        ] {
            let upper = 60.0 / (law.lambda_star() - lambda).min(law.lambda_star());
            let got = integrate_against_density(&law, |t| (lambda * t).exp(), upper);
            let want = law.mgf(lambda).unwrap();
            assert!(
                rel(got, want) < 1e-12,
                "kappa {k} lambda {lambda}: {got} vs {want}"
            );
        }
    }
}

#[test]
fn cumulant_generating_function_is_consistent() {
    // Internal consistency: Λ = log mgf (relative 1e−14: one log, one division), Λ'(0) = E[T]
    // and Λ''(0) = Var[T] from their own closed forms (relative 1e−14 and 1e−13: the series vs
    // closed-form switch of `mean_t`/`var_t` at πν = 1/4 loses up to ~3e−15), and Λ', Λ'' against
    // central differences (step h = 1e−4·min(1, λ* − λ): relative truncation ~h²/(λ* − λ)² ≈
    // 1e−8 and rounding ~1e−16/h; bounds 1e−8 and 1e−7 relative).
    for &k in &KAPPAS {
        let law = CleLaw::new(k).unwrap();
        let d0 = law.cumulant_generating_derivative(0.0).unwrap();
        assert!(rel(d0, law.mean_t()) < 1e-14, "kappa {k}: {d0}");
        let v0 = law.cumulant_generating_second_derivative(0.0).unwrap();
        assert!(rel(v0, law.var_t()) < 1e-13, "kappa {k}: {v0}");
        // Λ(0) = log cos(πμ) − log sin(π(½ − |μ|)): the same number computed two ways
        // (tolerance 1e−15).
        assert!(law.cumulant_generating(0.0).unwrap().abs() < 1e-15);
        for lambda in [
            -30.0,
            -1.0,
            -0.05,
            0.3 * law.lambda_star(),
            0.8 * law.lambda_star(),
        ] {
            let l = law.cumulant_generating(lambda).unwrap();
            let m = law.mgf(lambda).unwrap().ln();
            assert!(
                (l - m).abs() <= 1e-14 * l.abs().max(1.0),
                "kappa {k} lambda {lambda}"
            );
            // Step scaled with the distance to the pole at λ*, where Λ^{(j)} ∝ (λ* − λ)^{−j}.
            let h = 1e-4 * (law.lambda_star() - lambda).min(1.0);
            let fd = (law.cumulant_generating(lambda + h).unwrap()
                - law.cumulant_generating(lambda - h).unwrap())
                / (2.0 * h);
            let d = law.cumulant_generating_derivative(lambda).unwrap();
            assert!(rel(d, fd) < 1e-8, "kappa {k} lambda {lambda}: {d} vs {fd}");
            let fd2 = (law.cumulant_generating_derivative(lambda + h).unwrap()
                - law.cumulant_generating_derivative(lambda - h).unwrap())
                / (2.0 * h);
            let d2 = law.cumulant_generating_second_derivative(lambda).unwrap();
            assert!(
                rel(d2, fd2) < 1e-7,
                "kappa {k} lambda {lambda}: {d2} vs {fd2}"
            );
        }
        assert!(law.cumulant_generating(law.lambda_star()).is_err());
        assert!(law.cumulant_generating_derivative(f64::NAN).is_err());
    }
}

#[test]
fn cumulant_generating_function_matches_mpmath() {
    // Reference: mpmath 1.3.0 (scripts/cle_law_reference.py): Λ from the closed form, Λ' by
    // mp.diff of it. Tolerance: 2e−14 relative (absolute for |Λ| < 1), plus the conditioning
    // near λ*: the double λ* = (8 − κ)(3κ − 8)/(32κ) differs from the exact one by a few ulp,
    // δ ≤ 4ε·λ*, which moves Λ' ∝ 1/(λ* − λ) by a relative δ/(λ* − λ) and Λ ≈ −log(λ* − λ)
    // by δ/(λ* − λ) absolutely.
    let data = reference();
    let mut worst = 0.0_f64;
    for row in data["cgf"].as_array().unwrap() {
        let k = num(&row["kappa"]);
        let lambda = num(&row["lambda"]);
        let law = CleLaw::new(k).unwrap();
        let cond = 4.0 * f64::EPSILON * law.lambda_star() / (law.lambda_star() - lambda);
        let want = num(&row["cgf"]);
        let got = law.cumulant_generating(lambda).unwrap();
        let err = (got - want).abs() / want.abs().max(1.0);
        assert!(
            err < 2e-14 + 2.0 * cond,
            "kappa {k} lambda {lambda}: {got} vs {want}"
        );
        let want_d = num(&row["cgf_derivative"]);
        let got_d = law.cumulant_generating_derivative(lambda).unwrap();
        let err_d = rel(got_d, want_d);
        assert!(
            err_d < 2e-14 + 2.0 * cond,
            "kappa {k} lambda {lambda}: {got_d} vs {want_d}"
        );
        worst = worst.max(err).max(err_d);
    }
    eprintln!("cgf vs mpmath: max relative error {worst:.2e}");
}

#[test]
fn mgf_matches_the_generator_ode() {
    // Independent check: E_0[e^{λT}] = u(0) for the solution of
    // u'' + ((κ−4)/κ) cot(θ/2) u' + (2λ/κ) u = 0 regular at θ = 0 with u(2π) = 1, solved in
    // mpmath by Frobenius series and odefun (scripts/cle_law_reference.py; DESIGN §6.1 for the
    // generator). Tolerance 1e−14 relative: mgf is two trigonometric evaluations.
    let data = reference();
    let mut worst = 0.0_f64;
    for row in data["mgf_from_generator_ode"].as_array().unwrap() {
        let k = num(&row["kappa"]);
        let lambda = num(&row["lambda"]);
        let want = num(&row["mgf_from_ode"]);
        let got = CleLaw::new(k).unwrap().mgf(lambda).unwrap();
        let e = rel(got, want);
        worst = worst.max(e);
        assert!(e < 1e-14, "kappa {k} lambda {lambda}: {got} vs {want}");
    }
    eprintln!("mgf vs generator ODE: max relative error {worst:.2e}");
}

#[test]
fn density_cdf_survival_match_mpmath() {
    // Reference: mpmath 1.3.0 at 50 digits (spectral series at raised precision, checked there
    // against the Jacobi form and against its term-by-term integral;
    // scripts/cle_law_reference.py). Tolerances: relative 5e−14 for the density, for the CDF
    // where it is ≤ 1/2 and for the survival function where it is ≤ 1/2 (the exponent of the
    // leading factor reaches 2π²/(κt) ≈ 130 at t = 0.05, whose rounding costs ~130·1.1e−16
    // ≈ 1.5e−14), and absolute 1e−15 for the complementary probability (1 − p rounding).
    let data = reference();
    let (mut wd, mut wc, mut ws) = (0.0_f64, 0.0_f64, 0.0_f64);
    for row in data["cle_law"].as_array().unwrap() {
        let k = num(&row["kappa"]);
        let t = num(&row["t"]);
        let law = CleLaw::new(k).unwrap();
        let (d, c, s) = (
            num(&row["density"]),
            num(&row["cdf"]),
            num(&row["survival"]),
        );
        let ed = rel(law.density(t), d);
        assert!(
            ed < 5e-14,
            "density kappa {k} t {t}: {} vs {d}",
            law.density(t)
        );
        let ec = if c <= 0.5 {
            rel(law.cdf(t), c)
        } else {
            (law.cdf(t) - c).abs()
        };
        let es = if s <= 0.5 {
            rel(law.survival(t), s)
        } else {
            (law.survival(t) - s).abs()
        };
        let tol_c = if c <= 0.5 { 5e-14 } else { 1e-15 };
        let tol_s = if s <= 0.5 { 5e-14 } else { 1e-15 };
        assert!(ec < tol_c, "cdf kappa {k} t {t}: {} vs {c}", law.cdf(t));
        assert!(
            es < tol_s,
            "survival kappa {k} t {t}: {} vs {s}",
            law.survival(t)
        );
        wd = wd.max(ed);
        wc = wc.max(ec);
        ws = ws.max(es);
    }
    eprintln!("law vs mpmath: density {wd:.2e}, cdf {wc:.2e}, survival {ws:.2e} (max errors)");
}

#[test]
fn spectral_and_jacobi_series_agree_in_the_overlap() {
    // Internal consistency of the two exact series on [t_s/2, 2t_s], t_s = 8π/κ, where both
    // converge without significant cancellation. Tolerance 2e−14 relative (densities; the
    // spectral series cancels by at most a factor 1 + 3e^{−κt/4}·… ≈ 1.4 at t_s/2) and 1e−15
    // absolute / 2e−14 relative for the CDF (Jacobi integral vs 1 − spectral survival).
    let mut worst = (0.0_f64, 0.0_f64);
    for &k in &KAPPAS {
        let law = CleLaw::new(k).unwrap();
        let ts = law.series_switch_time();
        for i in 0..=40 {
            let t = ts * 2f64.powf(-1.0 + i as f64 / 20.0);
            let a = law.spectral_density(t);
            let b = law.jacobi_density(t);
            let e = rel(a, b);
            assert!(e < 2e-14, "kappa {k} t {t}: {a} vs {b}");
            let c1 = law.jacobi_cdf(t);
            let c2 = 1.0 - law.spectral_survival(t);
            let ec = (c1 - c2).abs();
            assert!(
                ec < 1e-15 || rel(c1, c2) < 2e-14,
                "kappa {k} t {t}: {c1} vs {c2}"
            );
            worst = (worst.0.max(e), worst.1.max(ec));
        }
    }
    eprintln!(
        "spectral vs Jacobi: density {:.2e} relative, cdf {:.2e} absolute",
        worst.0, worst.1
    );
}

#[test]
fn survival_plus_cdf_is_one_and_limits_are_right() {
    // Identity (tolerance 2 ulp of 1: one subtraction on either side of the switch point).
    for &k in &KAPPAS {
        let law = CleLaw::new(k).unwrap();
        for i in 0..200 {
            let t = 0.02 * 1.05f64.powi(i);
            let s = law.survival(t) + law.cdf(t);
            assert!(
                (s - 1.0).abs() <= 2.0 * f64::EPSILON,
                "kappa {k} t {t}: {s}"
            );
        }
        assert_eq!(law.cdf(0.0), 0.0);
        assert_eq!(law.survival(0.0), 1.0);
        assert_eq!(law.cdf(-1.0), 0.0);
        assert_eq!(law.density(-1.0), 0.0);
        assert_eq!(law.cdf(f64::INFINITY), 1.0);
        assert_eq!(law.survival(f64::INFINITY), 0.0);
        assert!(law.cdf(f64::NAN).is_nan());
        // Monotonicity of the CDF on a fine grid.
        let mut prev = 0.0;
        for i in 1..2000 {
            let c = law.cdf(0.05 * i as f64);
            assert!(c >= prev, "kappa {k}: cdf decreases at {}", 0.05 * i as f64);
            prev = c;
        }
    }
}

#[test]
fn scaling_relation_between_kappa_and_its_dual() {
    // κT/8 has a law depending on μ² only (DESIGN §7.1): κ = 3 and κ = 6 have μ = ∓1/3, so
    // T₃ = 2T₆ in law. Checks the two regimes against each other through all three functions.
    // Tolerance 5e−14 relative (as for the mpmath comparison).
    let a = CleLaw::new(3.0).unwrap();
    let b = CleLaw::new(6.0).unwrap();
    for i in 0..60 {
        let t = 0.1 * 1.12f64.powi(i);
        assert!(rel(a.cdf(t), b.cdf(t / 2.0)) < 5e-14 || (a.cdf(t) - b.cdf(t / 2.0)).abs() < 1e-16);
        assert!(rel(a.survival(t), b.survival(t / 2.0)) < 5e-14);
        assert!(rel(a.density(t), 0.5 * b.density(t / 2.0)) < 5e-14);
    }
}

#[test]
fn kappa_four_is_the_brownian_exit_time_from_an_interval() {
    // At κ = 4 (μ = 0, no drift in the angle process of DESIGN §6.1), T is the exit time from
    // (−π, π) of standard Brownian motion started at 0 (common practice; e.g. Borodin & Salminen,
    // Handbook of Brownian Motion, 2002 — from memory): E[e^{λT}] = 1/cos(π√(2λ)) for
    // λ < 1/8, and by the method of images the density is
    // f(t) = Σ_{k∈ℤ} (−1)^k (2k+1)π/√(2πt³) e^{−(2k+1)²π²/(2t)} (summed here directly, |k| ≤ 30),
    // and equivalently (eigenfunctions) f(t) = (1/2π) Σ_{n≥0} (−1)^n (2n+1) e^{−(2n+1)²t/8}.
    // Tolerances: 1e−14 relative (mgf), 5e−14 relative (density: the image sum is evaluated
    // independently in plain arithmetic; its exponent reaches π²/(2·0.05) ≈ 99).
    let law = CleLaw::new(4.0).unwrap();
    for lambda in [-3.0_f64, -0.5, 0.01, 0.06, 0.12] {
        let want = if lambda >= 0.0 {
            1.0 / (PI * (2.0 * lambda).sqrt()).cos()
        } else {
            1.0 / (PI * (-2.0 * lambda).sqrt()).cosh()
        };
        assert!(
            rel(law.mgf(lambda).unwrap(), want) < 1e-14,
            "lambda {lambda}"
        );
    }
    for i in 0..50 {
        let t = 0.05 * 1.15f64.powi(i);
        let images: f64 = (-30..=30)
            .map(|k: i32| {
                let m = (2 * k + 1) as f64;
                let sign = if k.rem_euclid(2) == 0 { 1.0 } else { -1.0 };
                sign * m * PI / (2.0 * PI * t.powi(3)).sqrt() * (-m * m * PI * PI / (2.0 * t)).exp()
            })
            .sum();
        let eigen: f64 = (0..200)
            .map(|n: i32| {
                let m = (2 * n + 1) as f64;
                let sign = if n % 2 == 0 { 1.0 } else { -1.0 };
                sign * m * (-m * m * t / 8.0).exp()
            })
            .sum::<f64>()
            / (2.0 * PI);
        let f = law.density(t);
        if t < 5.0 {
            assert!(rel(f, images) < 5e-14, "t {t}: {f} vs images {images}");
        }
        if t > 2.0 {
            assert!(
                rel(f, eigen) < 5e-14,
                "t {t}: {f} vs eigenfunctions {eigen}"
            );
        }
    }
}

#[test]
fn quantiles_invert_the_cdf() {
    // Internal consistency; tolerance 1e−13 relative in the probability (Newton stops at a
    // relative step of 1e−15 in t; dlogF/dlogt is at most ~2π²/(κt) ≈ 100 in the range tested).
    for &k in &KAPPAS {
        let law = CleLaw::new(k).unwrap();
        for p in [1e-12, 1e-6, 0.01, 0.3, 0.5, 0.7, 0.99, 1.0 - 1e-9] {
            let t = law.quantile(p).unwrap();
            let back = if p <= 0.5 {
                rel(law.cdf(t), p)
            } else {
                rel(law.survival(t), 1.0 - p)
            };
            assert!(back < 1e-13, "kappa {k} p {p}: t {t}, error {back}");
        }
        for q in [1e-300, 1e-30, 1e-3] {
            let t = law.inverse_survival(q).unwrap();
            assert!(rel(law.survival(t), q) < 1e-13, "kappa {k} q {q}");
        }
        assert_eq!(law.quantile(0.0).unwrap(), 0.0);
        assert_eq!(law.quantile(1.0).unwrap(), f64::INFINITY);
        assert!(law.quantile(1.5).is_err());
        assert!(law.quantile(f64::NAN).is_err());
    }
}

#[test]
fn nesting_rate_function_properties() {
    // Miller, Watson & Wilson (Ann. Probab. 2016): γ(1/E[T]) = 0, γ ≥ 0, γ(0+) = λ*, γ convex.
    // Tolerances: |γ(1/E[T])| ≤ 1e−15 (the solve returns λ ≈ 0 to rounding, γ = O(λ²));
    // γ ≥ −1e−16; convexity: second differences on a grid of step 1e−3·ν ≥ −1e−13 (rounding of
    // the three values); γ(ν) → λ*: λ* − γ(ν) ≈ ν(log(1/ν) + C), so at ν = 1e−9 the gap is in
    // (0, 1e−7).
    for &k in &KAPPAS {
        let law = CleLaw::new(k).unwrap();
        let nu0 = law.nesting_rate();
        assert!(rel(nu0, 1.0 / law.mean_t()) < 1e-15);
        let g0 = law.nesting_rate_function(nu0).unwrap();
        assert!(g0.abs() < 1e-15, "kappa {k}: gamma(1/E[T]) = {g0}");
        let small = law.nesting_rate_function(1e-9).unwrap();
        assert!(
            law.lambda_star() - small > 0.0 && law.lambda_star() - small < 1e-7,
            "kappa {k}: gamma(1e-9) = {small}, lambda* = {}",
            law.lambda_star()
        );
        assert_eq!(law.nesting_rate_function(0.0).unwrap(), law.lambda_star());
        let grid: Vec<f64> = (0..400).map(|i| 1e-4 * 1.03f64.powi(i)).collect();
        for &nu in &grid {
            let g = law.nesting_rate_function(nu).unwrap();
            assert!(g >= -1e-16, "kappa {k} nu {nu}: {g}");
            let h = 1e-3 * nu;
            let gm = law.nesting_rate_function(nu - h).unwrap();
            let gp = law.nesting_rate_function(nu + h).unwrap();
            assert!(gm + gp - 2.0 * g >= -1e-13, "kappa {k} nu {nu}: not convex");
        }
        // γ'(ν) = −Λ(λ(ν)) (differentiating γ = λ − νΛ(λ) along Λ'(λ) = 1/ν), against a
        // central difference with h = 1e−4ν: relative truncation ~(h/ν)²/6 ≈ 2e−9, rounding
        // ~1e−16·λ*/h; bound 1e−6·max(1, |Λ|).
        for lambda in [
            -5.0,
            -0.2,
            0.0,
            0.5 * law.lambda_star(),
            0.99 * law.lambda_star(),
        ] {
            let (nu, _) = law.nesting_parametric(lambda).unwrap();
            let h = 1e-4 * nu;
            let slope = (law.nesting_rate_function(nu + h).unwrap()
                - law.nesting_rate_function(nu - h).unwrap())
                / (2.0 * h);
            let want = -law.cumulant_generating(lambda).unwrap();
            assert!(
                (slope - want).abs() < 1e-6 * want.abs().max(1.0),
                "kappa {k} lambda {lambda}: gamma' {slope} vs {want}"
            );
        }
        // Parametric form vs the solved form: tolerance 1e−13 absolute (both evaluate
        // γ = λ − νΛ(λ) with λ recovered to rounding).
        for lambda in [
            -20.0,
            -1.0,
            -0.01,
            0.0,
            0.5 * law.lambda_star(),
            law.lambda_star() - 1e-6,
        ] {
            let (nu, gamma) = law.nesting_parametric(lambda).unwrap();
            let g = law.nesting_rate_function(nu).unwrap();
            assert!(
                (g - gamma).abs() < 1e-13 * gamma.abs().max(1.0),
                "kappa {k} lambda {lambda}: {g} vs {gamma}"
            );
        }
        assert!(law.nesting_rate_function(-1.0).is_err());
        assert!(law.nesting_rate_function(f64::NAN).is_err());
    }
}

#[test]
fn nesting_rate_function_matches_mpmath() {
    // Reference: mpmath 1.3.0, Legendre transform by root finding on mp.diff of the closed-form
    // Λ (scripts/cle_law_reference.py). Tolerance 1e−13 absolute (γ ≤ λ* < 0.14 for ν ≤ 1, and
    // 1e−13 relative above).
    let data = reference();
    let mut worst = 0.0_f64;
    for row in data["nesting_rate_function"].as_array().unwrap() {
        let k = num(&row["kappa"]);
        let nu = num(&row["nu"]);
        let want = num(&row["gamma"]);
        let got = CleLaw::new(k).unwrap().nesting_rate_function(nu).unwrap();
        let e = (got - want).abs() / want.abs().max(1.0);
        worst = worst.max(e);
        assert!(e < 1e-13, "kappa {k} nu {nu}: {got} vs {want}");
    }
    eprintln!("gamma vs mpmath: max error {worst:.2e}");
}

#[test]
fn nesting_count_matches_mpmath_laplace_inversion() {
    // Reference: mpmath 1.3.0 invertlaplace (Talbot and de Hoog, agreeing to 1e−25) of the
    // renewal transforms (scripts/cle_law_reference.py). Tolerance 1e−12 absolute for the mean
    // and 1e−11·max(1, Var) for the variance: the trapezoidal Bromwich sum has ~5000 terms of
    // size up to O(1) e^{−cs}, each rounded to ~1e−16.
    let data = reference();
    let (mut wm, mut wv) = (0.0_f64, 0.0_f64);
    for row in data["renewal"].as_array().unwrap() {
        let k = num(&row["kappa"]);
        let s = num(&row["s"]);
        let law = CleLaw::new(k).unwrap();
        let got = law.nesting_count_mean_var(s).unwrap();
        let (m, v) = (num(&row["mean"]), num(&row["variance"]));
        let em = (got.mean - m).abs();
        let ev = (got.variance - v).abs() / v.abs().max(1.0);
        assert!(em < 1e-12, "kappa {k} s {s}: mean {} vs {m}", got.mean);
        assert!(
            ev < 1e-11,
            "kappa {k} s {s}: variance {} vs {v}",
            got.variance
        );
        wm = wm.max(em);
        wv = wv.max(ev);
    }
    eprintln!("renewal vs mpmath: mean {wm:.2e}, variance {wv:.2e} (max errors)");
}

#[test]
fn nesting_count_matches_direct_convolution() {
    // Independent numerical route: U(s) = Σ_{k≥1} P(S_k ≤ s) and E[N²] = Σ (2k − 1) P(S_k ≤ s)
    // with the densities of S_k obtained by repeated trapezoidal convolution of the density on
    // a grid of step h, extrapolated from h and h/2 (Richardson; the density is C^∞ and vanishes
    // to all orders at 0, so the error of the trapezoidal convolution is O(h²)). Tolerance 1e−6
    // absolute, several times the difference between the h and h/2 results after
    // extrapolation (measured ~1e−8).
    for (k, s) in [(6.0, 12.0), (3.0, 30.0)] {
        let law = CleLaw::new(k).unwrap();
        let exact = law.nesting_count_mean_var(s).unwrap();
        let conv = |n: usize| -> (f64, f64) {
            let h = s / n as f64;
            let f: Vec<f64> = (0..=n).map(|i| law.density(i as f64 * h)).collect();
            let mut g = f.clone(); // density of S_1
            let (mut mean, mut second) = (0.0, 0.0);
            for kk in 1..200 {
                // P(S_k ≤ s) by the trapezoidal rule.
                let mut p = 0.5 * (g[0] + g[n]);
                for v in &g[1..n] {
                    p += v;
                }
                p *= h;
                mean += p;
                second += (2 * kk - 1) as f64 * p;
                if p < 1e-14 {
                    break;
                }
                // g ← g * f on the grid (trapezoidal).
                let mut next = vec![0.0; n + 1];
                for (i, slot) in next.iter_mut().enumerate() {
                    let mut acc = 0.5 * (g[0] * f[i] + g[i] * f[0]);
                    for j in 1..i {
                        acc += g[j] * f[i - j];
                    }
                    *slot = if i == 0 { 0.0 } else { acc * h };
                }
                g = next;
            }
            (mean, second - mean * mean)
        };
        let (m1, v1) = conv(1200);
        let (m2, v2) = conv(2400);
        let mean = (4.0 * m2 - m1) / 3.0;
        let var = (4.0 * v2 - v1) / 3.0;
        assert!(
            (mean - exact.mean).abs() < 1e-6,
            "kappa {k} s {s}: convolution mean {mean} vs {}",
            exact.mean
        );
        assert!(
            (var - exact.variance).abs() < 1e-6,
            "kappa {k} s {s}: convolution variance {var} vs {}",
            exact.variance
        );
    }
}

#[test]
fn nesting_count_limits() {
    // U(0) = 0 and Var N(0) = 0 exactly (tolerance 1e−13: the residue and the Bromwich integral
    // cancel); for large s the remainder decays like e^{−(κ/2)(1−|μ|)s}, so at s = 200 the
    // exact values equal the asymptotic ones (the remainder is omitted for cs > 60: asserted
    // equal), and the asymptotic slope of the variance is Var[T]/E[T]³ (renewal theory; common
    // practice; tolerance 1e−12 relative).
    for &k in &KAPPAS {
        let law = CleLaw::new(k).unwrap();
        let z = law.nesting_count_mean_var(0.0).unwrap();
        assert!(z.mean.abs() < 1e-13, "kappa {k}: U(0) = {}", z.mean);
        assert!(
            z.variance.abs() < 1e-13,
            "kappa {k}: Var N(0) = {}",
            z.variance
        );
        let a = law.nesting_count_mean_var(200.0).unwrap();
        let b = law.nesting_count_mean_var(400.0).unwrap();
        let slope = (b.asymptotic_variance - a.asymptotic_variance) / 200.0;
        let want = law.var_t() / law.mean_t().powi(3);
        assert!(
            rel(slope, want) < 1e-12,
            "kappa {k}: slope {slope} vs {want}"
        );
        let mslope = (b.mean - a.mean) / 200.0;
        assert!(rel(mslope, law.nesting_rate()) < 1e-12);
        // Monotone in s.
        let mut prev = 0.0;
        for i in 1..60 {
            let m = law.nesting_count_mean_var(0.5 * i as f64).unwrap().mean;
            assert!(m >= prev - 1e-14, "kappa {k}: renewal function decreases");
            prev = m;
        }
        assert!(law.nesting_count_mean_var(-1.0).is_err());
    }
}

#[test]
fn exponential_tail_rate_tends_to_lambda_star() {
    // 1/E[T − t₀ | T > t₀] → λ* with relative deficit ≈ 3(λ*/λ₁)(1 − λ*/λ₁)e^{−κt₀/4} (from
    // the next spectral term: with S ≈ a₀e^{−λ*t}(1 + ρe^{−κt/4}), ρ = −3λ*/λ₁, the ratio
    // S/∫S is λ*(1 + ρ(1 − λ*/λ₁)e^{−κt/4})); at t₀ = 0 it is 1/E[T]. Tolerances: 1e−12 relative at t₀ = 0 (quadrature at 1e−14
    // plus the spectral tail), and the deficit within 10% of its leading-order prediction at
    // t₀ = 3 t_s (the next correction is smaller by e^{−κt₀/4} there).
    for &k in &KAPPAS {
        let law = CleLaw::new(k).unwrap();
        let r0 = law.exponential_tail_rate(0.0).unwrap();
        assert!(rel(r0, 1.0 / law.mean_t()) < 1e-12, "kappa {k}: {r0}");
        let t0 = 3.0 * law.series_switch_time();
        let r = law.exponential_tail_rate(t0).unwrap();
        let l1 = law.lambda_star() + k / 4.0;
        let ratio = law.lambda_star() / l1;
        let predicted = 3.0 * ratio * (1.0 - ratio) * (-k * t0 / 4.0).exp();
        let deficit = 1.0 - r / law.lambda_star();
        assert!(
            rel(deficit, predicted) < 0.1,
            "kappa {k}: deficit {deficit} vs {predicted}"
        );
        assert!(law.exponential_tail_rate(-1.0).is_err());
    }
}

#[test]
fn inverse_cdf_samples_pass_ks_and_tail_fit() {
    // A statistical check with a fixed seed (ChaCha8, seed 20240611): 20 000 samples of T by
    // inversion of the CDF at κ = 6. (1) Kolmogorov–Smirnov against the same CDF: the p-value
    // is uniform under the null, so it falls below 1e−3 with probability 1e−3. (2) The
    // exponential tail fit at the threshold chosen by `choose_tail_threshold` must agree with
    // `exponential_tail_rate` at that threshold within 4 standard errors (probability of failure
    // 6e−5 under the model).
    let law = CleLaw::new(6.0).unwrap();
    let mut rng = ChaCha8Rng::seed_from_u64(20240611);
    let sample: Vec<f64> = (0..20_000)
        .map(|_| law.quantile(rng.random::<f64>()).unwrap())
        .collect();
    let ks = ks_test(&sample, |t| law.cdf(t)).unwrap();
    assert!(
        ks.p_value > 1e-3,
        "KS: D = {}, p = {}",
        ks.statistic,
        ks.p_value
    );
    let choice = choose_tail_threshold(&sample, &DEFAULT_TAIL_LEVELS).unwrap();
    let target = law.exponential_tail_rate(choice.fit.threshold).unwrap();
    assert!(
        (choice.fit.rate - target).abs() < 4.0 * choice.fit.se,
        "tail rate {} ± {} vs {target}",
        choice.fit.rate,
        choice.fit.se
    );
}

#[test]
fn invalid_parameters_are_rejected() {
    for k in [8.0 / 3.0, 8.0, 2.0, f64::NAN, f64::INFINITY] {
        assert!(CleLaw::new(k).is_err(), "kappa {k}");
    }
    let law = CleLaw::new(6.0).unwrap();
    assert!(law.nesting_parametric(law.lambda_star()).is_err());
    assert!(law.nesting_parametric(f64::NEG_INFINITY).is_err());
    assert!(law.inverse_survival(-0.1).is_err());
    assert!(law.nesting_count_mean_var(f64::NAN).is_err());
}
