//! Statistical check of chordal SLE_κ against Schramm's left-passage formula (Schramm,
//! Electron. Comm. Probab. 2001), seeded, and the convergence of the discretisation on coupled
//! paths.

use sleek::audit::{self, AuditSettings, Verdict};

/// κ ∈ {2, 8/3, 4} at z = 1+i, −0.5+i, 2+0.5i, 3000 curves each (seed 2026). Each estimate is a
/// binomial proportion, σ = √(p₀(1−p₀)/3000) ≤ 0.0091 with p₀ the exact value; the test fails beyond 4σ (two-sided
/// probability 6e-5 per check for an exact sampler). The bias that stopping the curves at
/// t = 1e4 can cause is bounded by the run itself and must be far below σ.
#[test]
fn schramm_formula_at_several_points() {
    let mut s = AuditSettings::quick(2026);
    s.samples = 3000;
    s.sigma_limit = 4.0;
    let rows = audit::run(&s, &|_, _| {}).unwrap().checks;
    let lp: Vec<_> = rows
        .iter()
        .filter(|r| r.check.starts_with("left passage"))
        .collect();
    assert_eq!(lp.len(), 9);
    for r in lp {
        let se = r.std_error.unwrap();
        assert!(se > 0.0 && se < 0.01, "{}: σ = {se}", r.check);
        assert!(
            r.bias_bound.unwrap() < 0.1 * se,
            "{}: truncation bias {:?}",
            r.check,
            r.bias_bound
        );
        assert_eq!(
            r.verdict,
            Verdict::Pass,
            "{}: {} vs {} ({:+.2}σ)",
            r.check,
            r.estimate,
            r.exact,
            r.deviation_sigma.unwrap()
        );
    }
}

/// The discretisation error must shrink as the step shrinks. On the same Brownian paths:
/// (1) the mean endpoint error of the trace at t = 1 decreases with N for both step kinds with
/// an observed order above 0.5, the tilted error staying below the vertical one (measured:
/// orders ≈ 0.75, tilted ≈ 0.8 × vertical); (2) for left passage, the fraction of sides that
/// differ from the finest walk decreases from ε = 8ε₀ to ε = 2ε₀ (1000 coupled curves).
#[test]
fn discretisation_error_shrinks_with_the_step() {
    let s = AuditSettings::quick(7);
    let rep = audit::run(&s, &|_, _| {}).unwrap();
    let study = |prefix: &str, step: &str| -> Vec<(f64, f64, f64)> {
        rep.convergence
            .iter()
            .filter(|c| c.study.starts_with(prefix) && c.step.name() == step)
            .map(|c| (c.resolution, c.error, c.observed_order))
            .collect()
    };
    let tilted = study("Brownian driving", "tilted");
    let vertical = study("Brownian driving", "vertical");
    assert_eq!(tilted.len(), 7);
    for w in tilted.windows(2).chain(vertical.windows(2)) {
        assert!(w[1].1 < w[0].1, "error did not shrink: {w:?}");
    }
    assert!(
        tilted[0].2 > 0.5 && vertical[0].2 > 0.5,
        "orders {} {}",
        tilted[0].2,
        vertical[0].2
    );
    for (t, v) in tilted.iter().zip(&vertical) {
        assert!(t.1 < v.1, "tilted {t:?} vs vertical {v:?}");
    }
    let lp = study("left passage", "tilted");
    assert_eq!(lp.len(), 3);
    assert!(lp[0].1 > lp[2].1, "side flips did not decrease: {lp:?}");
}
