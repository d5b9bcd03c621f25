//! The disk block tree (`disk_fast`) against direct composition, which is the oracle: trace
//! points of sampled radial chains, with frame changes (disk automorphisms) mixed in, and points
//! near the circle and near the curve. Target (issue: fast composition, radial item): max
//! deviation ≤ 1e-9 of the disk's diameter; the bound below, 1e-11, leaves room for rounding only.

use num_complex::Complex64 as C;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};
use sleek::disk_fast::{DiskChain, DiskMap};
use sleek::radial::RadialStep;

/// A radial SLE_κ chain of `n` steps of radial time `h`, each followed by a random rotation by at
/// most `spin`, with
/// an automorphism every `mobius_every` steps (0: none).
fn chain(kappa: f64, n: usize, h: f64, mobius_every: usize, spin: f64, seed: u64) -> DiskChain {
    let mut g = ChaCha8Rng::seed_from_u64(seed);
    let mut c = DiskChain::new();
    let mut xi = 0.0;
    for k in 0..n {
        let z: f64 = StandardNormal.sample(&mut g);
        xi += (kappa * h).sqrt() * z;
        let rot = C::from_polar(1.0, spin * (2.0 * g.random::<f64>() - 1.0));
        c.push(DiskMap::Step {
            step: RadialStep::new(xi, h),
            rot,
        });
        if mobius_every > 0 && k % mobius_every == mobius_every - 1 {
            let a = C::from_polar(
                0.6 * g.random::<f64>(),
                std::f64::consts::TAU * g.random::<f64>(),
            );
            c.push(DiskMap::Mobius {
                c: a,
                rot: C::from_polar(1.0, g.random::<f64>()),
            });
        }
    }
    c
}

#[test]
fn tip_points_agree_with_direct_composition() {
    for (kappa, mob, seed) in [
        (2.0, 0, 1u64),
        (4.0, 97, 2),
        (6.0, 0, 3),
        (6.0, 13, 4),
        (8.0, 301, 5),
    ] {
        let c = chain(kappa, 3000, 2e-3, mob, 0.15, seed);
        let mut worst: f64 = 0.0;
        for n in (0..c.len()).step_by(7) {
            if let DiskMap::Step { step, .. } = c.maps()[n] {
                let a = c.apply_prefix(n, step.tip());
                let b = c.apply_prefix_direct(n, step.tip());
                worst = worst.max((a - b).norm());
            }
        }
        assert!(worst < 1e-11, "κ={kappa} mobius every {mob}: {worst:e}");
    }
}

#[test]
fn interior_and_boundary_points_agree() {
    let c = chain(6.0, 2500, 4e-3, 50, 0.15, 11);
    let mut g = ChaCha8Rng::seed_from_u64(12);
    let mut worst: f64 = 0.0;
    for _ in 0..400 {
        // Points spread over the disk, many within 1e-6 of the circle.
        let r = if g.random::<bool>() {
            1.0 - 1e-6 * g.random::<f64>()
        } else {
            g.random::<f64>().sqrt()
        };
        let z = C::from_polar(r, std::f64::consts::TAU * g.random::<f64>());
        let m = g.random_range(0..=c.len());
        let a = c.apply_prefix(m, z);
        let b = c.apply_prefix_direct(m, z);
        worst = worst.max((a - b).norm());
        assert!(a.norm() <= 1.0 + 1e-12, "left the disk: {a}");
    }
    assert!(worst < 1e-11, "{worst:e}");
}

#[test]
fn series_are_used() {
    // The agreement above must not hold trivially: blocks of a chain of small steps whose
    // radial time is short carry a series. Radial time 1e-3 per step: a leaf (8 steps) has an
    // arc of about 2√(κ·0.008) + 2·2√0.001 ≈ 0.5 rad (chord radius 0.25 < 0.3), so every leaf
    // should; blocks of 64 steps and more have arcs of radius > 0.3 and should not.
    let c = chain(4.0, 4096, 1e-3, 0, 0.0, 21);
    let (with, all) = c.series_blocks();
    assert_eq!(all, 4096 / 8 * 2 - 1);
    assert!(with >= 4096 / 8, "{with} of {all} blocks have a series");
}

#[test]
fn radial_sle_traces_fast_equal_direct() {
    // The sampler's two methods on the same driving function (same seed and index), with and
    // without a force point, where the trace comes back close to earlier parts of the curve.
    use sleek::loewner::Method;
    use sleek::radial::RadialSle;
    for (kappa, rho, seed) in [
        (2.0, None, 1u64),
        (6.0, None, 2),
        (4.0, Some(0.5), 3),
        (8.0, Some(-1.0), 4),
    ] {
        let sle = RadialSle::new(kappa, rho, 3.0, 2500).unwrap();
        let f = sle.sample_with(seed, 0, Method::Fast);
        let d = sle.sample_with(seed, 0, Method::Direct);
        assert_eq!(f.points.len(), d.points.len());
        let worst = f
            .points
            .iter()
            .zip(&d.points)
            .map(|(a, b)| (a - b).norm())
            .fold(0.0, f64::max);
        assert!(worst < 1e-11, "κ={kappa} ρ={rho:?}: {worst:e}");
    }
}
