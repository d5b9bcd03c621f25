//! Numerical guards at branch cuts and near the boundary (common practice for conformal maps
//! built from principal roots and logarithms): points on the real line given as `x − 0i` or a
//! rounding error below it, points on the two sides of a slit, points on or a rounding error
//! outside the unit circle, and marked points a hair from the circle.

use num_complex::Complex64;
use sleek::loewner::ChordalStep;
use sleek::radial::RadialStep;

fn c(re: f64, im: f64) -> Complex64 {
    Complex64::new(re, im)
}

fn steps() -> Vec<ChordalStep> {
    vec![
        ChordalStep::vertical(0.3, 0.01),
        ChordalStep::tilted(0.0, 0.25, 0.01),
        ChordalStep::tilted(0.1, -0.4, 0.02),
        ChordalStep::tilted(0.0, 1e-9, 0.01),
    ]
}

#[test]
fn inverse_maps_ignore_the_sign_of_zero_and_rounding_below_the_line() {
    for s in steps() {
        let (lo, hi) = s.preimage_interval();
        for k in 0..=200 {
            let x = lo - 0.1 + (hi - lo + 0.2) * k as f64 / 200.0;
            let up = s.inverse(c(x, 0.0));
            for below in [-0.0, -1e-300, -1e-17] {
                let z = s.inverse(c(x, below));
                assert!(
                    z.im >= 0.0,
                    "{s:?}: F({x} {below}i) = {z} is below the line"
                );
                assert!(
                    (z - up).norm() <= 1e-7,
                    "{s:?}: F({x} {below}i) = {z} but F({x}) = {up}: the cut was crossed"
                );
            }
            // Inside the preimage interval the real line goes onto the slit (above the line),
            // outside it stays on the line.
            let inside = x > lo + 1e-9 && x < hi - 1e-9;
            if inside {
                assert!(up.im > 0.0, "{s:?}: F({x}) = {up} should be on the slit");
            } else if x < lo - 1e-9 || x > hi + 1e-9 {
                assert!(up.im.abs() < 1e-12, "{s:?}: F({x}) = {up} should be real");
            }
        }
    }
}

#[test]
fn forward_maps_send_the_two_sides_of_a_slit_to_the_two_ends_of_its_preimage() {
    for s in steps() {
        let (lo, hi) = s.preimage_interval();
        let base = c(s.base(), 0.0);
        let tip = s.tip();
        for f in [0.1, 0.5, 0.9] {
            let on = base + (tip - base) * f;
            // A normal to the slit, pointing to its right side.
            let normal = (tip - base) * c(0.0, -1.0) / (tip - base).norm();
            let right = s.forward(on + normal * 1e-9);
            let left = s.forward(on - normal * 1e-9);
            // The tip goes to the driving value at the end of the step, between the two sides.
            let split = s.forward(tip).re;
            assert!(split > lo && split < hi);
            assert!(right.re > split && left.re < split, "{s:?}: {left} {right}");
            assert!(right.im >= 0.0 && left.im >= 0.0 && right.im < 1e-3 && left.im < 1e-3);
            assert!(right.re <= hi + 1e-6 && left.re >= lo - 1e-6);
        }
    }
}

#[test]
fn radial_steps_keep_the_closed_disk_at_and_just_outside_the_circle() {
    for (xi, dt) in [(0.0, 1e-3), (2.0, 0.05), (-3.1, 1e-8)] {
        let s = RadialStep::new(xi, dt);
        for k in 0..720 {
            let a = k as f64 * std::f64::consts::PI / 360.0;
            for r in [1.0, 1.0 + 1e-16, 1.0 - 1e-16, 1.0 + 4e-16] {
                let z = Complex64::from_polar(r, a);
                let w = s.inverse(z);
                assert!(
                    w.re.is_finite() && w.im.is_finite() && w.norm() <= 1.0 + 1e-9,
                    "ξ = {xi}, Δt = {dt}: f({z}) = {w}"
                );
                let g = s.forward(w);
                assert!(g.re.is_finite() && g.im.is_finite(), "g(f({z})) = {g}");
            }
        }
    }
}

#[test]
fn cle_radii_at_points_a_hair_from_the_circle_stay_finite_and_ordered() {
    use sleek::cle::ExploreSettings;
    use sleek::radii::{run, RadiiSettings};
    let settings = |kappa: f64, points: Vec<[f64; 2]>| RadiiSettings {
        kappa,
        points,
        samples: 40,
        explore: ExploreSettings::defaults(kappa, 2),
        lambdas: vec![0.5],
        nesting_at: vec![2.0],
    };
    for kappa in [3.0, 6.0] {
        // One point 1e-9 from the circle; a pair whose pseudo-hyperbolic closeness is 1e-4.
        for points in [
            vec![[1.0 - 1e-9, 0.0]],
            vec![[0.0, -(1.0 - 1e-9)]],
            vec![[0.0, 0.0], [1.0 - 1e-4, 0.0]],
        ] {
            let r = run(&settings(kappa, points.clone()), 3, &|| {}).unwrap();
            for row in &r.records {
                for rec in row {
                    assert!(rec.log_cr_disk.is_finite());
                    let mut last = rec.log_cr_disk;
                    for l in &rec.loops {
                        assert!(l.log_cr.is_finite(), "κ = {kappa}: {rec:?}");
                        // Nested loops have smaller conformal radii than the disk and each other.
                        assert!(l.log_cr < last, "κ = {kappa}: {rec:?}");
                        last = l.log_cr;
                    }
                }
            }
            let summary = sleek::radii::summarise(&r).unwrap();
            let check = sleek::finite::ensure_finite(&summary, "summary");
            assert!(check.is_ok(), "{check:?}");
        }
        // Two points too close to each other relative to the circle for the pinch rule (it would
        // split them at once): refused with the pair named. Before this guard the pair below gave
        // a first loop with a conformal radius larger than the disk's.
        let e = run(
            &settings(kappa, vec![[1.0 - 1e-9, 0.0], [0.0, -(1.0 - 1e-6)]]),
            3,
            &|| {},
        )
        .unwrap_err()
        .to_string();
        assert!(e.contains("too close") && e.contains("0.999999999"), "{e}");
    }
}
