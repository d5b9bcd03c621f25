//! Deterministic checks of the chordal zipper: exact Loewner solutions (Kager, Nienhuis &
//! Kadanoff, J. Stat. Phys. 2004), explicit slit maps against numerical integration of the
//! Loewner equation, round trips, and the convergence order for `W = c√t`.

mod common;

use common::{forward_sqrt_step, inverse_sqrt_step};
use num_complex::Complex64 as C;
use sleek::driving::DrivingFunction;
use sleek::loewner::{ChordalChain, ChordalStep, Method, StepKind};
use sleek::stats::log_log_slope;

fn ray_c(alpha: f64) -> f64 {
    2.0 * (1.0 - 2.0 * alpha) / (alpha * (1.0 - alpha)).sqrt()
}

/// Constant driving: the hull is the vertical segment [0, 2i√t] (KNK 2004); both step kinds,
/// on a uniform and a very uneven grid, to 1e-12.
#[test]
fn constant_driving_gives_vertical_segment() {
    let uniform = DrivingFunction::from_fn(2.0, 1000, |_| 0.0).unwrap();
    let t: Vec<f64> = (0..=300)
        .map(|k| 2.0 * (k as f64 / 300.0).powi(3))
        .collect();
    let uneven = DrivingFunction::new(t.clone(), vec![0.0; t.len()]).unwrap();
    for d in [&uniform, &uneven] {
        for kind in [StepKind::Vertical, StepKind::Tilted] {
            let tr = ChordalChain::new(d, kind).trace(Method::Direct).unwrap();
            for (z, &s) in tr.iter().zip(d.times()) {
                assert!(
                    (z - C::new(0.0, 2.0 * s.sqrt())).norm() < 1e-12,
                    "{kind:?} t={s} {z}"
                );
            }
        }
    }
}

/// One tilted step is the exact solution for `W = c√t`: a straight ray at angle απ (KNK 2004).
/// The forward and inverse maps agree with integration of the Loewner ODE to 1e-11.
#[test]
fn tilted_step_matches_the_loewner_ode() {
    for alpha in [0.15, 0.3, 0.5, 0.7, 0.9] {
        let c = ray_c(alpha);
        let (w0, dt): (f64, f64) = (0.3, 0.25);
        let s = ChordalStep::tilted(w0, w0 + c * dt.sqrt(), dt);
        assert!((s.alpha() - alpha).abs() < 1e-14, "α from c");
        let tip = s.inverse(C::new(s.w_end, 0.0)) - w0; // the image of W_t, not the closed form
        assert!((tip.arg() / std::f64::consts::PI - alpha).abs() < 1e-13);
        for z in [
            C::new(1.5, 0.7),
            C::new(-1.0, 0.2),
            C::new(0.3, 2.0),
            C::new(0.9, 0.05),
        ] {
            let ode = forward_sqrt_step(z, w0, c, dt, 1e-14);
            assert!(
                (s.forward(z) - ode).norm() < 1e-11,
                "forward α={alpha} z={z}"
            );
        }
        for w in [
            C::new(1.5, 0.7),
            C::new(-1.0, 0.2),
            C::new(0.3, 2.0),
            C::new(0.9, 0.05),
        ] {
            let ode = inverse_sqrt_step(w, w0, c, dt, 1e-14);
            assert!(
                (s.inverse(w) - ode).norm() < 1e-11,
                "inverse α={alpha} w={w}"
            );
        }
    }
}

/// Vertical slit: `W + √((z − W)² + 4Δt)` is the flow of constant driving (common practice);
/// checked against the ODE with c = 0.
#[test]
fn vertical_step_matches_the_loewner_ode() {
    let s = ChordalStep::vertical(-0.2, 0.1);
    for z in [C::new(0.5, 0.5), C::new(-2.0, 0.01), C::new(-0.2, 1.0)] {
        let ode = forward_sqrt_step(z, -0.2, 0.0, 0.1, 1e-14);
        assert!((s.forward(z) - ode).norm() < 1e-12);
    }
}

/// A chain whose driving function *is* piecewise square-root is solved exactly by the tilted
/// chain: compositions agree with step-by-step ODE integration to 1e-10.
#[test]
fn tilted_chain_is_exact_for_piecewise_sqrt_driving() {
    let t: Vec<f64> = (0..=12)
        .map(|k| 0.05 * k as f64 + 0.002 * (k * k) as f64)
        .collect();
    let w: Vec<f64> = t
        .iter()
        .enumerate()
        .map(|(k, &s)| (3.0 * s).sin() - 0.4 * (k % 3) as f64 * s)
        .collect();
    let d = DrivingFunction::new(t.clone(), w.clone()).unwrap();
    let chain = ChordalChain::new(&d, StepKind::Tilted);
    let n = chain.len();
    for z in [C::new(0.7, 0.9), C::new(-1.2, 0.4), C::new(0.1, 1.6)] {
        let mut g = z;
        for k in 1..=n {
            let dt = t[k] - t[k - 1];
            g = forward_sqrt_step(g, w[k - 1], (w[k] - w[k - 1]) / dt.sqrt(), dt, 1e-14);
        }
        assert!(
            (chain.forward_map(n, z) - g).norm() < 1e-10,
            "forward z={z}"
        );
    }
    for wpt in [C::new(0.5, 0.8), C::new(-0.7, 0.3), C::new(2.0, 0.1)] {
        let mut h = wpt;
        for k in (1..=n).rev() {
            let dt = t[k] - t[k - 1];
            h = inverse_sqrt_step(h, w[k - 1], (w[k] - w[k - 1]) / dt.sqrt(), dt, 1e-14);
        }
        assert!(
            (chain.inverse_map(n, wpt) - h).norm() < 1e-10,
            "inverse w={wpt}"
        );
    }
}

/// `W = c√t` sampled on N equal steps: the chain's endpoint converges to the exact ray's
/// endpoint at first order for both step kinds, and the tilted error is at least twice smaller
/// (measured order here ≈ 0.97 for both; the ratio ≈ 3).
#[test]
fn ray_convergence_order() {
    for alpha in [0.2, 0.35, 0.75] {
        let c = ray_c(alpha);
        let exact = ChordalStep::tilted(0.0, c, 1.0).tip();
        let mut errs = std::collections::HashMap::new();
        for kind in [StepKind::Tilted, StepKind::Vertical] {
            let pts: Vec<(f64, f64)> = (6..=10)
                .map(|p| {
                    let n = 1usize << p;
                    let d = DrivingFunction::from_fn(1.0, n, |s| c * s.sqrt()).unwrap();
                    let end = ChordalChain::new(&d, kind).trace_point(n);
                    (1.0 / n as f64, (end - exact).norm())
                })
                .collect();
            let order = log_log_slope(&pts);
            assert!(
                (0.85..1.15).contains(&order),
                "{kind:?} α={alpha}: order {order}"
            );
            errs.insert(kind.name(), pts.last().unwrap().1);
        }
        assert!(errs["tilted"] * 2.0 < errs["vertical"], "{errs:?}");
    }
}

/// Round trips: inverse ∘ forward = identity off the slit, and forward ∘ inverse = identity in
/// H, on and near the real line and near the tip. Tolerances follow the conditioning: near the
/// tip the forward map has a square-root singularity, so there the bound is √(ε)-sized.
#[test]
fn round_trips() {
    for c in [-5.0, -1.0, 0.0, 0.8, 3.0] {
        let dt: f64 = 0.01;
        for kind in [StepKind::Tilted, StepKind::Vertical] {
            let s = ChordalStep::new(kind, 0.1, 0.1 + c * dt.sqrt(), dt);
            let (lo, hi) = s.preimage_interval();
            let len = s.slit_length();
            // w in H and on the real line outside the preimage interval.
            for i in 0..120 {
                for j in 0..40 {
                    let re = s.w_end - 1.0 + i as f64 * 0.0173;
                    let im = if j == 0 { 0.0 } else { 1e-6 * 1.5f64.powi(j) };
                    if im == 0.0 && (lo - 1e-9..=hi + 1e-9).contains(&re) {
                        continue; // on the slit: two preimages
                    }
                    let w = C::new(re, im);
                    let (z, dz) = s.inverse_with_derivative(w);
                    assert!(z.im >= 0.0, "inverse left H");
                    // Rounding of z (≈1e-16 |z|) becomes an error δz/|F'(w)| in w; allow 1000×.
                    let tol = 1e-13 * (1.0 + z.norm()) / dz.norm() + 1e-13 * (1.0 + w.norm());
                    let back = s.forward(z);
                    assert!(
                        (back - w).norm() < tol,
                        "{kind:?} c={c}: w={w} -> z={z} -> {back}, tol {tol:e}"
                    );
                }
            }
            // z in H off the slit, away from its base (a branch point of the inverse).
            for i in 0..80 {
                for j in 1..40 {
                    let z = C::new(-0.9 + i as f64 * 0.025, j as f64 * 0.02);
                    if (z - s.base()).norm() < 0.05 * len {
                        continue;
                    }
                    let back = s.inverse(s.forward(z));
                    assert!((back - z).norm() < 1e-10, "{kind:?} c={c}: z={z} -> {back}");
                }
            }
        }
    }
}

/// The trace of a rough driving function stays in the closed upper half-plane and is finite.
#[test]
fn trace_stays_in_closed_half_plane() {
    let d = DrivingFunction::from_fn(1.0, 2000, |s| 3.0 * (40.0 * s).sin() * s.sqrt()).unwrap();
    for kind in [StepKind::Tilted, StepKind::Vertical] {
        for z in ChordalChain::new(&d, kind).trace(Method::Direct).unwrap() {
            assert!(z.re.is_finite() && z.im.is_finite() && z.im >= 0.0, "{z}");
        }
    }
}
