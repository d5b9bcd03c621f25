//! Radial Loewner steps in the unit disk (DESIGN §2, §5): the Cayley-form step against
//! integration of the radial Loewner ODE, its normalisation, slit and Koebe identity, and the
//! conformal-radius rate (the squared Poisson kernel).

mod common;

use common::dopri;
use num_complex::Complex64 as C;
use sleek::radial::{RadialChain, RadialStep};

fn radial_ode(z: C, xi: f64, dt: f64) -> C {
    let e = C::from_polar(1.0, xi);
    dopri(|_, g| g * (e + g) / (e - g), 0.0, dt, z, 1e-14)
}

/// The explicit step equals the flow of the radial Loewner equation with constant driving
/// (common practice: the equation of DESIGN §2, integrated by DOPRI5), to 1e-12.
#[test]
fn step_matches_the_radial_ode() {
    for (xi, dt) in [(0.0, 0.1), (1.3, 0.02), (-2.5, 0.5), (3.0, 1e-4)] {
        let s = RadialStep::new(xi, dt);
        for z in [
            C::new(0.3, 0.2),
            C::new(-0.7, 0.1),
            C::new(0.0, -0.9),
            C::new(0.05, 0.0),
        ] {
            let ode = radial_ode(z, xi, dt);
            assert!(
                (s.forward(z) - ode).norm() < 1e-12,
                "ξ={xi} Δt={dt} z={z}: {} vs {ode}",
                s.forward(z)
            );
            assert!((s.inverse(s.forward(z)) - z).norm() < 1e-12);
        }
    }
}

/// g(0) = 0, g'(0) = e^{Δt}; the slit is [x, 1]e^{iξ} with x = (1−a)/(1+a), a = √(1 − e^{−Δt});
/// and the Koebe identity k(e^{−iξ} g(z)) = e^{Δt} k(e^{−iξ} z), k(z) = z/(1+z)² (DESIGN §5).
#[test]
fn normalisation_slit_and_koebe_identity() {
    let k = |z: C| z / ((1.0 + z) * (1.0 + z));
    for (xi, dt) in [(0.4f64, 0.3f64), (-1.0, 2.0), (2.9, 1e-3)] {
        let s = RadialStep::new(xi, dt);
        let (g0, d0) = s.forward_with_derivative(C::new(0.0, 0.0));
        assert!(g0.norm() < 1e-15);
        assert!((d0 - C::new(dt.exp(), 0.0)).norm() < 1e-12 * dt.exp());
        let a = (1.0 - (-dt).exp()).sqrt();
        let tip = s.inverse(C::from_polar(1.0, xi));
        assert!(
            (tip - C::from_polar((1.0 - a) / (1.0 + a), xi)).norm() < 1e-12,
            "{tip}"
        );
        assert!((s.tip() - tip).norm() < 1e-12);
        let rot = C::from_polar(1.0, -xi);
        for z in [C::new(0.2, -0.5), C::new(-0.6, 0.3)] {
            let lhs = k(rot * s.forward(z));
            let rhs = k(rot * z) * dt.exp();
            assert!(
                (lhs - rhs).norm() < 1e-12 * (1.0 + rhs.norm()),
                "{lhs} vs {rhs}"
            );
        }
    }
}

/// d/dt [−log CR(D_t, z)] = P² with P = (1 − |w|²)/|e^{iξ} − w|², w = g_t(z) (DESIGN §2):
/// one small step changes −log CR by P²Δt up to O(Δt²).
#[test]
fn conformal_radius_rate_is_the_squared_poisson_kernel() {
    let mut chain = RadialChain::new();
    chain.push(RadialStep::new(0.7, 0.4));
    chain.push(RadialStep::new(-1.9, 0.3));
    for z in [C::new(0.1, 0.2), C::new(-0.5, -0.4), C::new(0.6, 0.0)] {
        let before = -chain.log_conformal_radius(z);
        let (w, _) = chain.forward_with_log_derivative(z);
        let xi = 2.2;
        let dt = 1e-6;
        let mut next = chain.clone();
        next.push(RadialStep::new(xi, dt));
        let after = -next.log_conformal_radius(z);
        let e = C::from_polar(1.0, xi);
        let p = (1.0 - w.norm_sqr()) / (e - w).norm_sqr();
        let rate = (after - before) / dt;
        assert!(
            (rate - p * p).abs() < 1e-4 * p * p,
            "z={z}: rate {rate} vs P² {}",
            p * p
        );
    }
    // At the target itself, −log CR(D_t, 0) is the radial time.
    assert!((-chain.log_conformal_radius(C::new(0.0, 0.0)) - chain.time()).abs() < 1e-12);
}

#[test]
fn radial_sle_traces_respect_koebe_quarter_bound() {
    // Every trace point lies on the boundary of D_t, whose conformal radius seen from 0 is
    // e^{−t}; by the Koebe quarter theorem (Koebe 1907, Bieberbach 1916; a classical theorem)
    // its distance to 0 is at least e^{−t}/4,
    // and the curve stays in the closed disk. Checked for radial SLE_2 and SLE_2(ρ = 1).
    use sleek::radial::RadialSle;
    for rho in [None, Some(1.0)] {
        let sle = RadialSle::new(2.0, rho, 3.0, 600).unwrap();
        for i in 0..4 {
            let c = sle.sample(5, i);
            // ρ = 1 ≥ κ/2 − 2: the Bessel dimension 1 + 2(ρ+2)/κ = 4 ≥ 2, θ never reaches 2π.
            assert!(c.stopped_at.is_none());
            assert_eq!(c.points.len(), 601);
            for (z, t) in c.points.iter().zip(&c.times) {
                assert!(z.norm() <= 1.0 + 1e-12);
                assert!(
                    z.norm() >= 0.25 * (-t).exp() * (1.0 - 1e-9),
                    "{z} at t = {t}"
                );
            }
            assert_eq!(c.points, sle.sample(5, i).points);
        }
    }
    assert!(RadialSle::new(2.0, Some(-2.0), 1.0, 10).is_err());
    assert!(RadialSle::new(2.0, None, 0.0, 10).is_err());
}

#[test]
fn radial_sle_kappa_6_minus_kappa_closes_loops_with_the_ssw_law() {
    // Radial SLE_κ(κ − 6) from 1 towards 0 reaches θ = 2π when it closes the outermost CLE_κ loop
    // around 0 (Sheffield, Duke Math. J. 2009), at radial time T with the law of Schramm,
    // Sheffield & Wilson (Commun. Math. Phys. 2009). T depends on the angle process θ only (the
    // force point's motion is checked by the martingale test below): P(T ≤ t) at t = 5 and 12
    // against the exact CDF, 4σ of the binomial standard error under the exact law.
    use sleek::laws::CleLaw;
    use sleek::radial::RadialSle;
    for (kappa, seed) in [(6.0, 31u64), (16.0 / 3.0, 32)] {
        let law = CleLaw::new(kappa).unwrap();
        let sle = RadialSle::new(kappa, Some(kappa - 6.0), 50.0, 20_000).unwrap();
        let n = 2000u64;
        let stops: Vec<Option<f64>> = (0..n)
            .map(|i| sle.sample_driving(seed, i).stopped_at)
            .collect();
        for t in [5.0, 12.0] {
            let p = law.cdf(t);
            let hits = stops.iter().filter(|s| s.is_some_and(|x| x <= t)).count() as f64;
            let sigma = (p * (1.0 - p) / n as f64).sqrt();
            let est = hits / n as f64;
            assert!(
                (est - p).abs() < 4.0 * sigma,
                "kappa = {kappa}: P(T <= {t}) = {est} vs {p} (σ = {sigma})"
            );
        }
    }
}

#[test]
fn tilted_radial_step_fixes_0_and_continues_from_its_base() {
    // Exact properties of the construction (no published value needed): the forward map fixes
    // 0 with |g'(0)| = e^{dt}, inverts the inverse map, sends the slit's base neighbourhood to
    // the two ends of the preimage arc, and the slit starts at e^{iβ}.
    use num_complex::Complex64 as C;
    use sleek::radial::TiltedRadialStep;
    for &(beta, c, s) in &[
        (0.3, 0.0, 1e-3),
        (2.0, 1.5, 4e-4),
        (-1.0, -3.0, 1e-2),
        (4.0, 0.7, 1e-5),
    ] {
        let st = TiltedRadialStep::new(beta, c, s);
        let (g0, d0) = st.forward_with_derivative(C::new(0.0, 0.0));
        assert!(g0.norm() < 1e-13, "g(0) = {g0}");
        assert!((d0.norm().ln() - st.dt).abs() < 1e-10);
        // For c = 0 the step is the vertical radial slit of radial time −log(1 − 4s).
        if c == 0.0 {
            assert!((st.dt + (1.0 - 4.0 * s).ln()).abs() < 1e-12);
        }
        for z in [
            C::new(0.3, -0.2),
            C::new(-0.5, 0.6),
            C::from_polar(0.99, beta + 1.0),
        ] {
            let w = st.inverse(z);
            let (back, _) = st.forward_with_derivative(w);
            assert!((back - z).norm() < 1e-11, "round trip at {z}: {back}");
        }
        // The slit runs from the base: the base's two sides go to the two ends of the preimage
        // arc. (Checked forwards: backwards, the inverse map behaves like a power 1 − α or α of
        // the distance to an end, so one ulp in the angle moves the point by up to (1e-16)^0.2
        // ≈ 6e-4 at α = 0.8.)
        let (a0, len) = st.preimage_arc();
        let lo = st.forward_boundary_angle(beta, -1.0);
        let hi = st.forward_boundary_angle(beta, 1.0);
        assert!((lo - a0).abs() < 1e-9, "β={beta} c={c}: {lo} vs {a0}");
        assert!(
            (hi - (a0 + len)).abs() < 1e-9,
            "β={beta} c={c}: {hi} vs {}",
            a0 + len
        );
        // The tip maps to the tip angle.
        let (t, _) = st.forward_with_derivative(st.tip() * (1.0 - 1e-12));
        assert!((t.arg() - C::from_polar(1.0, st.tip_angle_after()).arg()).abs() < 1e-4);
    }
}

#[test]
fn radial_sle_kappa_rho_driving_has_the_martingale_of_the_sde() {
    // Radial SLE_κ(ρ): dξ = √κ dB + (ρ/2) cot((ξ − η)/2) dt and dη = −cot((ξ − η)/2) dt
    // (Loewner flow of the force point; common practice, e.g. Schramm & Wilson, New York J. Math.
    // 2005), so M = ξ + (ρ/2) η is √κ B: E[M_t] = 0 and E[M_t² − κ t] = 0. This sees the force
    // point's push near the tip, which the loop-closing test above cannot (T depends on θ only).
    // Before the push was summed on a finer grid of θ, ρ = 0 and κ = 6 on 100 steps gave
    // E[ξ_1] = 0.63 ± 0.03. Horizons are chosen so that no curve stops (θ never reaches 2π),
    // which keeps t fixed. 4σ of the sample standard errors.
    use sleek::radial::RadialSle;
    for (kappa, rho, time, seed) in [
        (2.0, 0.0, 1.0, 41u64),
        (3.0, 0.5, 1.0, 42),
        (6.0, 0.0, 0.3, 43),
        (6.0, 2.0, 1.0, 44),
    ] {
        let sle = RadialSle::new(kappa, Some(rho), time, 200).unwrap();
        let n = 3000u64;
        let (mut m1, mut m2) = (Vec::new(), Vec::new());
        for i in 0..n {
            let c = sle.sample_driving(seed, i);
            assert!(
                c.stopped_at.is_none(),
                "κ = {kappa}, ρ = {rho}: curve {i} stopped"
            );
            let m = c.driving.last().unwrap() + 0.5 * rho * c.force.last().unwrap();
            m1.push(m);
            m2.push(m * m - kappa * c.times.last().unwrap());
        }
        for (name, v) in [("E[M]", &m1), ("E[M² − κt]", &m2)] {
            let k = v.len() as f64;
            let mean = v.iter().sum::<f64>() / k;
            let se = (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (k - 1.0) / k).sqrt();
            assert!(
                mean.abs() < 4.0 * se,
                "κ = {kappa}, ρ = {rho}: {name} = {mean} (σ = {se})"
            );
        }
    }
}
