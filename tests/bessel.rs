//! Checks of `sleek::bessel` against reference values, closed forms and structural properties.
//!
//! Reference values: `tests/data/bessel_reference.json`, written by `scripts/bessel_reference.py`
//! with the general-purpose arbitrary-precision library mpmath (version recorded in the file;
//! 1.3.0 when written; `besseli`, `besselk`, `sinpi`), 50 working digits, 25 digits output,
//! evaluated at exactly the IEEE doubles used here. The bridge probabilities there were computed
//! in the cancellation-free form (2/π) sin(πν) K_ν/I_{−ν} and cross-checked inside the script
//! against 1 − I_ν/I_{−ν} at raised precision.
//!
//! Tolerances (relative):
//! * I, K and their scaled forms, |ν| ≤ 1: 1e-13 (the brief's target). The methods are sums of
//!   terms of (mostly) one sign or continued fractions with positive partial denominators, so a
//!   few ulp are expected; the loosest spot is Temme's series near z = 2, where its first term
//!   (≈ −0.58 for small μ) partly cancels the rest of the sum (result ≈ 0.11), amplifying
//!   rounding by about 5. The unscaled functions at z near 700 also carry the rounding of
//!   e^{±z} (1 ulp, since the exponent is exact).
//! * Larger orders (1.5 ≤ |ν| ≤ 10.3): 1e-13 as well, with the upward K recurrence (≤ 10 steps,
//!   each adding ≲ 1 ulp) and the unit shifts of 1/Γ(1 + ν) (≤ 10 steps).
//! * Bridge probability and the ratio I_ν/I_{−ν}: 1e-12 (the brief's requirement) wherever the
//!   reference is ≥ 1e-300; expected a few ulp since it is a quotient of positive quantities
//!   computed as above (for 2 < z < 20 with K_ν from a trapezoidal rule, which agrees with the
//!   CF2 route to 3e-15; see the unit tests in `src/bessel.rs`).
//!
//! Each test names its source beside it.

use serde_json::Value;
use sleek::bessel::{
    bessel_i, bessel_i_scaled, bessel_k, bessel_k_scaled, bessel_ratio_i, bridge_hit_probability,
    BRIDGE_CUTOFF, MAX_ORDER,
};

mod common;
use common::reference::{num, rows, val};

fn reference() -> Value {
    common::reference::load("bessel_reference.json")
}

fn rel_err(got: f64, want: f64) -> f64 {
    if want == 0.0 {
        if got == 0.0 {
            0.0
        } else {
            f64::INFINITY
        }
    } else {
        ((got - want) / want).abs()
    }
}

/// Whether a relative error fails a tolerance (NaN fails).
fn exceeds(err: f64, tol: f64) -> bool {
    err.is_nan() || err > tol
}

/// Largest error seen, with its arguments, for the summary printed by each test.
#[derive(Default)]
struct Worst {
    err: f64,
    at: (f64, f64),
    count: usize,
}

impl Worst {
    fn see(&mut self, err: f64, nu: f64, z: f64) {
        self.count += 1;
        if err > self.err || err.is_nan() {
            self.err = err;
            self.at = (nu, z);
        }
    }
}

/// Source: mpmath (library), `scripts/bessel_reference.py`. Tolerance 1e-13 relative, see the
/// file header.
#[test]
fn bessel_functions_match_mpmath() {
    let data = reference();
    type F = fn(f64, f64) -> f64;
    let funcs: [(&str, F); 4] = [
        ("i", bessel_i),
        ("i_scaled", bessel_i_scaled),
        ("k", bessel_k),
        ("k_scaled", bessel_k_scaled),
    ];
    let mut failures = Vec::new();
    for (key, f) in funcs {
        let mut small = Worst::default(); // |ν| ≤ 1
        let mut large = Worst::default(); // |ν| > 1
        for row in rows(&data, "bessel") {
            let (nu, z) = (num(row, "nu"), num(row, "z"));
            let want = val(row, key);
            let got = f(nu, z);
            let err = rel_err(got, want);
            if nu.abs() <= 1.0 {
                small.see(err, nu, z);
            } else {
                large.see(err, nu, z);
            }
            if exceeds(err, 1e-13) {
                failures.push(format!(
                    "{key}({nu}, {z}) = {got:e}, mpmath {want:e}, rel {err:e}"
                ));
            }
        }
        eprintln!(
            "{key:>9}: max rel err {:.2e} at (ν, z) = {:?} over {} points with |ν| ≤ 1; \
             {:.2e} at {:?} over {} points with |ν| > 1",
            small.err, small.at, small.count, large.err, large.at, large.count
        );
    }
    assert!(
        failures.is_empty(),
        "{} failures:\n{}",
        failures.len(),
        failures.join("\n")
    );
}

/// Source: mpmath (library), `scripts/bessel_reference.py` (bridge rows: (2/π) sin(πν)
/// K_ν/I_{−ν} and I_ν/I_{−ν}, ν = 4/κ − ½ for κ ∈ {3, 4, 16/3, 6, 7.5} and further ν ∈ [0, 1]).
/// Includes pseudo-random points and subnormal z. Tolerance 1e-12 relative where the reference
/// is ≥ 1e-300 (the brief's requirement); above `BRIDGE_CUTOFF` the result must be exactly 0,
/// and between 1e-301 and 1e-300 below the cutoff it must still be positive and below 1e-300
/// (times 1 + 1e-12). The same for the ratio (tiny only at subnormal z).
#[test]
fn bridge_probability_matches_mpmath() {
    let data = reference();
    let mut worst_p = Worst::default();
    let mut worst_r = Worst::default();
    let mut failures = Vec::new();
    for row in rows(&data, "bridge") {
        let (nu, z) = (num(row, "nu"), num(row, "z"));
        if let Some(kappa) = row["kappa"].as_f64() {
            // The order the CLE code will pass: the same double expression as the script.
            assert_eq!(nu, 4.0 / kappa - 0.5);
        }
        let (want_p, want_r) = (val(row, "p"), val(row, "ratio"));
        let (p, r) = (bridge_hit_probability(nu, z), bessel_ratio_i(nu, z));
        if z > BRIDGE_CUTOFF {
            if p != 0.0 {
                failures.push(format!("p({nu}, {z}) = {p:e} above the cutoff, expected 0"));
            }
            if want_p >= 1e-300 {
                failures.push(format!(
                    "reference p({nu}, {z}) = {want_p:e} ≥ 1e-300 above cutoff"
                ));
            }
        } else if want_p >= 1e-300 || want_p == 0.0 {
            let err = rel_err(p, want_p);
            worst_p.see(err, nu, z);
            if exceeds(err, 1e-12) {
                failures.push(format!(
                    "p({nu}, {z}) = {p:e}, mpmath {want_p:e}, rel {err:e}"
                ));
            }
        } else if !(p > 0.0 && p < 1e-300 * (1.0 + 1e-12)) {
            failures.push(format!("p({nu}, {z}) = {p:e}, mpmath {want_p:e} (tiny)"));
        }
        if want_r >= 1e-300 || want_r == 0.0 {
            let err = rel_err(r, want_r);
            worst_r.see(err, nu, z);
            if exceeds(err, 1e-12) {
                failures.push(format!(
                    "ratio({nu}, {z}) = {r:e}, mpmath {want_r:e}, rel {err:e}"
                ));
            }
        } else if !(0.0..1e-300 * (1.0 + 1e-12)).contains(&r) {
            // Below the normal range (z subnormal) only the order of magnitude is meaningful.
            failures.push(format!(
                "ratio({nu}, {z}) = {r:e}, mpmath {want_r:e} (tiny)"
            ));
        }
    }
    let mut worst_n = Worst::default();
    for row in rows(&data, "ratio_negative") {
        let (nu, z) = (num(row, "nu"), num(row, "z"));
        let want = val(row, "ratio");
        let got = bessel_ratio_i(nu, z);
        let err = rel_err(got, want);
        worst_n.see(err, nu, z);
        if exceeds(err, 1e-12) {
            failures.push(format!(
                "ratio({nu}, {z}) = {got:e}, mpmath {want:e}, rel {err:e}"
            ));
        }
    }
    eprintln!(
        "bridge p: max rel err {:.2e} at {:?} over {} points (reference ≥ 1e-300); \
         ratio: {:.2e} at {:?} over {}; ratio at ν < 0: {:.2e} at {:?} over {}",
        worst_p.err,
        worst_p.at,
        worst_p.count,
        worst_r.err,
        worst_r.at,
        worst_r.count,
        worst_n.err,
        worst_n.at,
        worst_n.count
    );
    assert!(
        failures.is_empty(),
        "{} failures:\n{}",
        failures.len(),
        failures.join("\n")
    );
}

/// Source: the textbook identities I_{±1/2}(z) = √(2/(πz)) (sinh z, cosh z) (common practice),
/// which give 1 − I_{1/2}/I_{−1/2} = 1 − tanh z = 2/(1 + e^{2z}) (the Brownian bridge). The
/// closed form is evaluated in f64 with ≤ 2 ulp error; tolerance 1e-13 relative. The grid runs
/// past the z = 2 and z = 20 method switches up to the cutoff.
#[test]
fn half_order_is_the_brownian_bridge() {
    let mut z = 1e-10;
    let mut worst = 0.0_f64;
    while z <= BRIDGE_CUTOFF {
        let closed = 2.0 / (1.0 + (2.0 * z).exp());
        let p = bridge_hit_probability(0.5, z);
        let err = rel_err(p, closed);
        worst = worst.max(err);
        assert!(
            err <= 1e-13,
            "z = {z}: {p:e} vs closed form {closed:e} (rel {err:e})"
        );
        // The ratio is tanh z.
        let r = bessel_ratio_i(0.5, z);
        assert!(
            rel_err(r, z.tanh()) <= 1e-13,
            "z = {z}: ratio {r} vs tanh {}",
            z.tanh()
        );
        z *= 1.05;
    }
    eprintln!("ν = 1/2: max rel err against 2/(1 + e^(2z)) {worst:.2e}");
    // Same identities for the functions themselves (I_{1/2} = √(2/(πz)) sinh z, K_{1/2} =
    // √(π/(2z)) e^{−z}).
    for &z in &[1e-6, 0.3, 1.9, 2.1, 7.0, 19.0, 21.0, 300.0] {
        let i = (2.0 / (std::f64::consts::PI * z)).sqrt() * z.sinh();
        let k = (std::f64::consts::PI / (2.0 * z)).sqrt() * (-z).exp();
        assert!(rel_err(bessel_i(0.5, z), i) <= 1e-13, "I_1/2({z})");
        assert!(rel_err(bessel_k(0.5, z), k) <= 1e-13, "K_1/2({z})");
        assert!(rel_err(bessel_k(-0.5, z), k) <= 1e-13, "K_-1/2({z})");
    }
}

/// Structural check (no external source): for a Bessel bridge the hitting probability decreases
/// as z = xy/h grows. The grid is spaced 1% in z. Where p is close to 1 its change can be below
/// one ulp, so there p must be non-increasing and the complementary ratio (small, hence well
/// resolved) strictly increasing; wherever a quantity is below ½ its change is resolvable and
/// must be strict. A failure means a real defect (e.g. a jump at a method switch). (There is no
/// such check in ν: for fixed z the probability vanishes at ν = 0 and at ν = 1.)
#[test]
fn bridge_probability_is_monotone_in_z() {
    for &nu in &[1e-3, 1.0 / 30.0, 1.0 / 6.0, 0.25, 0.5, 5.0 / 6.0, 0.99] {
        let mut z = 1e-9;
        let mut prev = bridge_hit_probability(nu, z);
        let mut prev_r = bessel_ratio_i(nu, z);
        assert!(prev > 0.0 && prev <= 1.0);
        while z < BRIDGE_CUTOFF / 1.01 {
            z *= 1.01;
            let (p, r) = (bridge_hit_probability(nu, z), bessel_ratio_i(nu, z));
            assert!(
                p <= prev && r >= prev_r,
                "ν = {nu}, z = {z}: p {p:e} vs {prev:e}, ratio {r:e} vs {prev_r:e}"
            );
            if p < 0.5 {
                assert!(p < prev, "ν = {nu}, z = {z}: p {p:e} not below {prev:e}");
            }
            if r < 0.5 {
                assert!(
                    r > prev_r,
                    "ν = {nu}, z = {z}: ratio {r:e} not above {prev_r:e}"
                );
            }
            (prev, prev_r) = (p, r);
        }
    }
}

/// Structural check: hit and no-hit probabilities are computed from the same weights and sum
/// to 1 within 2 ulp; the ratio at −ν is the reciprocal of the ratio at ν (exact identity,
/// tolerance 1e-14 relative).
#[test]
fn probability_and_ratio_are_consistent() {
    for &nu in &[1e-6, 0.1, 1.0 / 6.0, 0.5, 0.75, 0.9, 1.0 - 1e-6] {
        for &z in &[1e-8, 0.1, 1.0, 2.0, 3.0, 15.0, 25.0, 200.0] {
            let p = bridge_hit_probability(nu, z);
            let r = bessel_ratio_i(nu, z);
            assert!(
                (p + r - 1.0).abs() <= 2.0 * f64::EPSILON,
                "ν = {nu}, z = {z}: {p} + {r}"
            );
            let back = bessel_ratio_i(-nu, z);
            assert!(
                rel_err(back * r, 1.0) <= 1e-14,
                "ν = {nu}, z = {z}: {back} · {r}"
            );
        }
    }
}

/// Documented special values and input validation (the documentation in `src/bessel.rs` is the
/// source): no panics, NaN for invalid input, the endpoint convention at z = 0.
#[test]
fn special_values_and_invalid_input() {
    let nan = f64::NAN;
    let inf = f64::INFINITY;
    for &(nu, z) in &[
        (nan, 1.0),
        (0.5, nan),
        (-0.1, 1.0),
        (1.1, 1.0),
        (0.5, -1.0),
        (inf, 1.0),
    ] {
        assert!(bridge_hit_probability(nu, z).is_nan(), "p({nu}, {z})");
    }
    for &(nu, z) in &[(nan, 1.0), (0.5, nan), (-1.1, 1.0), (1.1, 1.0), (0.5, -1.0)] {
        assert!(bessel_ratio_i(nu, z).is_nan(), "ratio({nu}, {z})");
    }
    for f in [bessel_i, bessel_i_scaled, bessel_k, bessel_k_scaled] {
        assert!(f(nan, 1.0).is_nan());
        assert!(f(0.5, nan).is_nan());
        assert!(f(0.5, -1e-300).is_nan());
        assert!(f(MAX_ORDER * 1.5, 1.0).is_nan());
        assert!(f(-inf, 1.0).is_nan());
    }
    // z = 0: an endpoint at 0 is a visit.
    for &nu in &[0.0, 1e-9, 0.5, 1.0] {
        assert_eq!(bridge_hit_probability(nu, 0.0), 1.0);
    }
    // ν ∈ {0, 1}: never hit for z > 0.
    for &z in &[1e-300, 1e-8, 1.0, 50.0] {
        assert_eq!(bridge_hit_probability(0.0, z), 0.0);
        assert_eq!(bridge_hit_probability(1.0, z), 0.0);
        assert_eq!(bessel_ratio_i(0.0, z), 1.0);
        assert_eq!(bessel_ratio_i(1.0, z), 1.0);
        assert_eq!(bessel_ratio_i(-1.0, z), 1.0);
    }
    // Ratio at z = 0: the limit z → 0⁺.
    assert_eq!(bessel_ratio_i(0.3, 0.0), 0.0);
    assert_eq!(bessel_ratio_i(0.0, 0.0), 1.0);
    assert_eq!(bessel_ratio_i(-0.3, 0.0), inf);
    // Beyond the cutoff and at infinity.
    assert_eq!(
        bridge_hit_probability(0.5, BRIDGE_CUTOFF * (1.0 + 1e-15)),
        0.0
    );
    assert_eq!(bridge_hit_probability(0.5, inf), 0.0);
    assert_eq!(bessel_ratio_i(0.5, inf), 1.0);
    let just_below = bridge_hit_probability(0.5, BRIDGE_CUTOFF);
    assert!(just_below > 0.0 && just_below < 1e-300, "{just_below:e}");
    // Tiny and subnormal z: never NaN, p + ratio = 1. For ν ≥ 0.3 the ratio is at most of order
    // z^{2ν}/sin(πν) (leading terms of I_ν and K_ν), i.e. p = 1 to rounding; for ν = 10⁻⁶ instead
    // p ≈ 2ν ln(2/z) ≈ 1.4e-3 (K_ν ≈ ln(2/z) when ν ln(2/z) ≪ 1; from memory, DLMF 10.30.3).
    for &nu in &[1e-6, 0.3, 0.5, 0.9, 1.0 - 1e-9] {
        for &z in &[5e-324, 1e-310, 1e-200] {
            let p = bridge_hit_probability(nu, z);
            let r = bessel_ratio_i(nu, z);
            assert!(
                (p + r - 1.0).abs() <= 2.0 * f64::EPSILON,
                "p({nu}, {z}) = {p}, ratio {r}"
            );
            if nu >= 0.3 {
                assert!(p > 1.0 - 1e-15 && p <= 1.0, "p({nu}, {z}) = {p}");
            } else {
                let approx = 2.0 * nu * (std::f64::consts::LN_2 - z.ln());
                assert!(rel_err(p, approx) < 1e-2, "p({nu}, {z}) = {p} vs {approx}");
            }
        }
    }
    // The plain functions at the ends of their domain.
    assert_eq!(bessel_i(0.0, 0.0), 1.0);
    assert_eq!(bessel_i(0.7, 0.0), 0.0);
    assert_eq!(bessel_i(-2.0, 0.0), 0.0);
    assert_eq!(bessel_i(-0.5, 0.0), inf);
    assert_eq!(bessel_i(-1.5, 0.0), -inf); // 1/Γ(−½) < 0
    assert_eq!(bessel_k(0.3, 0.0), inf);
    assert_eq!(bessel_k(0.3, inf), 0.0);
    assert_eq!(bessel_i_scaled(0.3, inf), 0.0);
    assert_eq!(bessel_i(0.3, inf), inf);
    // Scaled forms stay finite far beyond the overflow of e^{z}.
    let z = 1e4;
    let asym = 1.0 / (2.0 * std::f64::consts::PI * z).sqrt();
    assert!(rel_err(bessel_i_scaled(0.2, z), asym) < 1e-4);
    // Leading Hankel terms (DLMF 10.40.1–2, from memory): (2πz)^{−1/2} and (π/(2z))^{1/2}, with
    // relative corrections (4ν² − 1)/(8z) ≈ 1.2e-5 here.
    assert!(
        rel_err(
            bessel_k_scaled(0.2, z),
            (std::f64::consts::PI / (2.0 * z)).sqrt()
        ) < 1e-4
    );
}

/// Timing of `bridge_hit_probability` (run with `cargo test --release --test bessel -- --ignored
/// --nocapture`). Prints ns per call for z in each method's range; asserts nothing about time.
#[test]
#[ignore]
fn time_bridge_hit_probability() {
    use std::hint::black_box;
    use std::time::Instant;
    // Each range is swept with log-spaced z.
    let ranges: [(&str, f64, f64); 4] = [
        ("z in [1e-6, 2]", 1e-6, 2.0),
        ("z in (2, 20)", 2.0001, 19.999),
        ("z in [20, 346]", 20.0, 345.0),
        ("z in [1e-3, 5]", 1e-3, 5.0),
    ];
    for &nu in &[1.0 / 6.0, 0.25, 5.0 / 6.0] {
        for &(name, lo, hi) in &ranges {
            let n = 200_000;
            let ratio: f64 = (hi / lo).powf(1.0 / n as f64);
            let mut acc = 0.0;
            let start = Instant::now();
            let mut z = lo;
            for _ in 0..n {
                acc += bridge_hit_probability(black_box(nu), black_box(z));
                z *= ratio;
            }
            let ns = start.elapsed().as_nanos() as f64 / n as f64;
            black_box(acc);
            eprintln!("ν = {nu:.4}, {name}: {ns:.0} ns/call");
        }
    }
}
