//! The CLE exploration at its target against the Schramm–Sheffield–Wilson law, and the radial
//! bookkeeping it relies on.
//!
//! Source of the law: Schramm, Sheffield & Wilson, Commun. Math. Phys. 2009 — T = −log CR of the
//! outermost loop around the target, with E[e^{λT}] = −cos(4π/κ)/cos(π√((1−4/κ)² + 8λ/κ)); by the
//! domain Markov property the increments between nested loops are i.i.d. with the same law
//! (Sheffield, Duke Math. J. 2009). Tolerances: 4σ, σ the standard error of the sample mean
//! computed from the *exact* variance of the statistic (no estimated quantity enters the limit),
//! except the tail-fit test, whose σ is the fitted rate's own standard error (said there).

use num_complex::Complex64;
use rayon::prelude::*;
use sleek::cle::{AngleProcess, CleExplorer, EndVisit, ExploreSettings};
use sleek::laws::CleLaw;
use sleek::radial::RadialStep;

fn increments(ex: &CleExplorer, seed: u64, n: u64, level: usize) -> Vec<f64> {
    (0..n)
        .into_par_iter()
        .filter_map(|i| {
            let s = ex.sample(seed, i);
            let t = s.points[0].times();
            match level {
                1 => t.first().copied(),
                _ => (t.len() >= level).then(|| t[level - 1] - t[level - 2]),
            }
        })
        .collect()
}

fn check_level(kappa: f64, seed: u64, n: u64, level: usize) {
    let law = CleLaw::new(kappa).unwrap();
    let ex = CleExplorer::new(
        kappa,
        &[Complex64::new(0.0, 0.0)],
        ExploreSettings::defaults(kappa, 2),
    )
    .unwrap();
    let t = increments(&ex, seed, n, level);
    assert_eq!(t.len() as u64, n, "censored samples at kappa = {kappa}");
    assert_ssw(&law, &t, &format!("kappa = {kappa}, level {level}"));
}

/// E[T] and E[CR] = E[e^{−T}] of a sample against the exact law, 4σ with σ from the exact
/// variances (Var T, and E[CR²] − E[CR]²).
fn assert_ssw(law: &CleLaw, t: &[f64], what: &str) {
    let n = t.len() as f64;
    let m = t.iter().sum::<f64>() / n;
    let se_t = (law.var_t() / n).sqrt();
    assert!(
        (m - law.mean_t()).abs() < 4.0 * se_t,
        "{what}: E[T] = {m} vs {} (σ = {se_t})",
        law.mean_t()
    );
    let cr = t.iter().map(|x| (-x).exp()).sum::<f64>() / n;
    let e1 = law.cr_moment(1.0).unwrap();
    let se_cr = ((law.cr_moment(2.0).unwrap() - e1 * e1) / n).sqrt();
    assert!(
        (cr - e1).abs() < 4.0 * se_cr,
        "{what}: E[CR] = {cr} vs {e1} (σ = {se_cr})"
    );
}

#[test]
fn ssw_law_at_the_target_kappa_3() {
    // κ = 3 (δ = 1/3): the symmetric principal-value construction.
    check_level(3.0, 20261202, 2500, 1);
    check_level(3.0, 20261202, 2500, 2);
}

#[test]
fn ssw_law_at_the_target_kappa_4() {
    // κ = 4: T is the exit time of Brownian motion from (−π, π); E[T] = π².
    check_level(4.0, 20261203, 2500, 1);
    check_level(4.0, 20261203, 2500, 2);
}

#[test]
fn ssw_law_at_the_target_kappa_16_3() {
    check_level(16.0 / 3.0, 20261204, 2500, 1);
    check_level(16.0 / 3.0, 20261204, 2500, 2);
}

#[test]
fn ssw_law_at_the_target_kappa_6() {
    check_level(6.0, 20261205, 2500, 1);
    check_level(6.0, 20261205, 2500, 2);
}

/// Three marked points in one configuration: the law of §7.1 must hold at every one of them,
/// not only at the exploration's first target (target invariance; Sheffield, Duke Math. J.
/// 2009), and loops shared by two points must be their common outermost loops.
fn check_joint(kappa: f64, seed: u64, n: u64) {
    let law = CleLaw::new(kappa).unwrap();
    let pts = [
        Complex64::new(0.0, 0.0),
        Complex64::new(0.5, 0.0),
        Complex64::new(-0.3, 0.5),
    ];
    let ex = CleExplorer::new(kappa, &pts, ExploreSettings::defaults(kappa, 2)).unwrap();
    let samples: Vec<_> = (0..n).into_par_iter().map(|i| ex.sample(seed, i)).collect();
    for j in 0..pts.len() {
        for level in 1..=2 {
            let t: Vec<f64> = samples
                .iter()
                .map(|s| {
                    let t = s.points[j].times();
                    assert_eq!(t.len(), 2, "censored sample");
                    if level == 1 {
                        t[0]
                    } else {
                        t[1] - t[0]
                    }
                })
                .collect();
            assert_ssw(
                &law,
                &t,
                &format!("kappa = {kappa}, point {j}, level {level}"),
            );
        }
    }
    // Nesting: loops surrounding two points are the outermost ones of both, at equal levels.
    for s in &samples {
        for a in 0..pts.len() {
            for b in 0..pts.len() {
                let (la, lb) = (&s.points[a].loops, &s.points[b].loops);
                let shared: Vec<bool> = la
                    .iter()
                    .map(|l| lb.iter().any(|m| m.loop_id == l.loop_id))
                    .collect();
                assert!(
                    shared.windows(2).all(|w| w[0] || !w[1]),
                    "sample {}",
                    s.index
                );
                for (k, l) in la.iter().enumerate() {
                    if shared[k] {
                        assert_eq!(lb[k].loop_id, l.loop_id, "sample {}", s.index);
                    }
                }
            }
        }
    }
}

#[test]
fn ssw_law_at_three_marked_points_kappa_3() {
    check_joint(3.0, 20261206, 2000);
}

#[test]
fn ssw_law_at_three_marked_points_kappa_6() {
    check_joint(6.0, 20261207, 2000);
}

#[test]
fn ssw_law_at_three_marked_points_kappa_4() {
    check_joint(4.0, 20261208, 1500);
}

#[test]
fn ssw_law_at_three_marked_points_kappa_16_3() {
    check_joint(16.0 / 3.0, 20261209, 1500);
}

#[test]
fn nesting_counts_follow_the_renewal_function() {
    // Miller, Watson & Wilson (Ann. Probab. 2016): the nested loops around a point form a
    // renewal process with the Schramm–Sheffield–Wilson increments, so N(s) = #{k : T_k ≤ s}
    // has mean U(s) (→ s/E[T]); exact U(s) and Var N(s) from `CleLaw::nesting_count_mean_var`.
    // κ = 6, s = 20, 8 levels (P(T_8 ≤ 20) is negligible: the test asserts no truncation).
    let kappa = 6.0;
    let law = CleLaw::new(kappa).unwrap();
    let ex = CleExplorer::new(
        kappa,
        &[Complex64::new(0.0, 0.0)],
        ExploreSettings::defaults(kappa, 8),
    )
    .unwrap();
    let s = 20.0;
    let n = 1500u64;
    let counts: Vec<f64> = (0..n)
        .into_par_iter()
        .map(|i| {
            let t = ex.sample(20261210, i).points[0].times();
            assert_eq!(t.len(), 8);
            assert!(t[7] > s, "count truncated at 8 levels");
            t.iter().filter(|&&x| x <= s).count() as f64
        })
        .collect();
    let exact = law.nesting_count_mean_var(s).unwrap();
    let m = counts.iter().sum::<f64>() / n as f64;
    let se = (exact.variance / n as f64).sqrt();
    assert!(
        (m - exact.mean).abs() < 4.0 * se,
        "E[N(20)] = {m} vs {} (σ = {se})",
        exact.mean
    );
}

#[test]
fn tail_fit_of_simulated_radii_brackets_the_exact_rate() {
    // The exponential rate of T − t₀ | T > t₀ tends to λ* = 1 − 2/κ − 3κ/32 (Schramm, Sheffield
    // & Wilson 2009); at a finite threshold the fit estimates `exponential_tail_rate(t₀)`.
    // Tolerance 4 standard errors of the fitted rate (rate/√n_above).
    use sleek::stats::{choose_tail_threshold, DEFAULT_TAIL_LEVELS};
    let kappa = 6.0;
    let law = CleLaw::new(kappa).unwrap();
    let ex = CleExplorer::new(
        kappa,
        &[Complex64::new(0.0, 0.0)],
        ExploreSettings::defaults(kappa, 1),
    )
    .unwrap();
    let t = increments(&ex, 20261211, 4000, 1);
    let c = choose_tail_threshold(&t, &DEFAULT_TAIL_LEVELS).unwrap();
    let exact = law.exponential_tail_rate(c.fit.threshold).unwrap();
    assert!(
        (c.fit.rate - exact).abs() < 4.0 * c.fit.se,
        "rate {} ± {} vs {exact} (λ* = {}) above t₀ = {}",
        c.fit.rate,
        c.fit.se,
        law.lambda_star(),
        c.fit.threshold
    );
}

#[test]
fn loop_radii_are_carried_in_disk_coordinates() {
    // Bookkeeping (common practice: conformal invariance of the exploration): one point at
    // z ≠ 0 is explored in its own frame, so its normalised times equal those of the target 0
    // for the same random stream, and log CR of each loop is log(1 − |z|²) − T.
    let kappa = 6.0;
    let s = ExploreSettings::defaults(kappa, 3);
    let z = Complex64::new(-0.3, 0.5);
    let a = CleExplorer::new(kappa, &[Complex64::new(0.0, 0.0)], s).unwrap();
    let b = CleExplorer::new(kappa, &[z], s).unwrap();
    for i in 0..20 {
        let pa = &a.sample(7, i).points[0];
        let pb = &b.sample(7, i).points[0];
        assert_eq!(pa.loops.len(), 3);
        assert_eq!(pb.loops.len(), 3);
        let lz = (1.0 - z.norm_sqr()).ln();
        assert!((pb.log_cr_disk - lz).abs() < 1e-15);
        for (la, lb) in pa.loops.iter().zip(&pb.loops) {
            let ta = -la.log_cr;
            let tb = lz - lb.log_cr;
            assert!((ta - tb).abs() < 1e-9 * ta.max(1.0), "{ta} vs {tb}");
        }
        // Nested loops: conformal radii decrease with the level.
        assert!(pb.loops.windows(2).all(|w| w[1].log_cr < w[0].log_cr));
    }
}

#[test]
fn samples_are_pure_functions_of_seed_and_index() {
    let kappa = 3.0;
    let ex = CleExplorer::new(
        kappa,
        &[Complex64::new(0.2, 0.1)],
        ExploreSettings::defaults(kappa, 2),
    )
    .unwrap();
    let a = ex.sample(11, 5);
    assert_eq!(a, ex.sample(11, 5));
    assert_ne!(a.points[0].loops, ex.sample(11, 6).points[0].loops);
    assert_ne!(a.points[0].loops, ex.sample_part(11, 5, 1).points[0].loops);
}

#[test]
fn angle_process_visits_and_reflection() {
    // For κ > 4 the process is reflected at 0 (never negative); from θ = 0 the first step
    // visits 0 with probability 1.
    use rand::SeedableRng;
    let mut g = rand_chacha::ChaCha8Rng::seed_from_u64(3);
    let p6 = AngleProcess::new(6.0).unwrap();
    let s = p6.step(0.0, 0.01, &mut g);
    assert_eq!(s.visit, EndVisit::Zero);
    let mut theta = 0.0;
    for _ in 0..20000 {
        let s = p6.step(theta, 0.01, &mut g);
        assert!(s.theta >= 0.0, "κ > 4 is reflected at 0");
        theta = if s.visit == EndVisit::Full {
            0.0
        } else {
            s.theta
        };
    }
    // κ = 3: at each visit of 0 the side of the next excursion is a fair coin — the signs
    // chosen at Zero visits are Binomial(n, 1/2) (common practice: the symmetric construction of
    // DESIGN §6.1); 4σ with σ = √n/2.
    let p3 = AngleProcess::new(3.0).unwrap();
    let mut theta = 0.0;
    let (mut visits, mut positive) = (0u64, 0u64);
    for _ in 0..200_000 {
        let s = p3.step(theta, 0.01, &mut g);
        if s.visit == EndVisit::Zero {
            visits += 1;
            if s.theta > 0.0 {
                positive += 1;
            }
        }
        theta = if s.visit == EndVisit::Full {
            0.0
        } else {
            s.theta
        };
    }
    assert!(visits > 1000, "only {visits} visits of 0");
    let dev = positive as f64 - visits as f64 / 2.0;
    assert!(
        dev.abs() < 4.0 * (visits as f64).sqrt() / 2.0,
        "{positive} of {visits} positive"
    );
}

#[test]
fn out_of_range_kappa_and_points_are_refused() {
    let s = ExploreSettings::defaults(6.0, 1);
    let o = [Complex64::new(0.0, 0.0)];
    for k in [8.0 / 3.0, 2.0, 8.0, 9.0, f64::NAN] {
        let e = CleExplorer::new(k, &o, s).unwrap_err().to_string();
        assert!(e.contains("kappa"), "{e}");
    }
    let e = CleExplorer::new(6.0, &[Complex64::new(1.0, 0.0)], s)
        .unwrap_err()
        .to_string();
    assert!(e.contains("unit disk"), "{e}");
}

#[test]
fn boundary_flow_matches_the_interior_map_at_the_circle() {
    // The image of a boundary point under a radial slit step is the limit of the interior map
    // (common practice: continuity of the Loewner map up to the boundary away from the slit).
    let step = RadialStep::new(0.7, 0.03);
    for alpha in [-2.0, -0.5, 0.2, 1.5, 3.0] {
        let inner = step.forward(Complex64::from_polar(1.0 - 1e-9, alpha)).arg();
        let edge = step.forward_boundary_angle(alpha, 1.0);
        let d = (inner - edge + std::f64::consts::PI).rem_euclid(2.0 * std::f64::consts::PI)
            - std::f64::consts::PI;
        assert!(d.abs() < 1e-6, "alpha = {alpha}: {inner} vs {edge}");
    }
}
