//! κ estimation and conformal radii of polygons (DESIGN §9).

use num_complex::Complex64 as C;
use sleek::driving::BrownianPath;
use sleek::measure::{default_lags, estimate_kappa, DrivingData, KappaSettings};
use sleek::polygon::{conformal_radius, conformal_radius_extrapolated, surrounding_loops};

/// Quadratic variation on exact Brownian driving functions √κ B (Schramm, Israel J. Math.
/// 2000): 8 paths of 20000 steps, κ = 3 and 6, seeds fixed. The 95% bootstrap interval must
/// contain κ and be narrow: the estimate averages κ̂ over lags up to T/20, and the largest lag
/// has only 8 × 20 increments (relative s.e. √(2/160) ≈ 11%), so the 95% interval is about
/// ±6% (measured [2.86, 3.22] at κ = 3); wider than 25% would be a fault.
#[test]
fn kappa_of_brownian_driving() {
    for (kappa, seed) in [(3.0, 21u64), (6.0, 22)] {
        let paths: Vec<BrownianPath> = (0..8)
            .map(|i| BrownianPath::uniform(kappa, 1.0, 20_000, seed, i).unwrap())
            .collect();
        let data: Vec<DrivingData> = paths
            .iter()
            .map(|p| DrivingData {
                times: p.driving().times(),
                values: p.driving().values(),
            })
            .collect();
        let lags = default_lags(&data, 4.0 / 20_000.0);
        let est = estimate_kappa(
            &data,
            &KappaSettings {
                lags,
                bootstrap: 400,
                level: 0.95,
                seed: 1,
            },
        )
        .unwrap();
        assert!(
            est.ci[0] <= kappa && kappa <= est.ci[1],
            "κ = {kappa}: {} [{}, {}]",
            est.estimate,
            est.ci[0],
            est.ci[1]
        );
        assert!(est.ci[1] - est.ci[0] < 0.25 * kappa, "{:?}", est.ci);
        // Increments are independent: lag-one autocorrelation within 4/√n of 0.
        for r in &est.lags {
            assert!(
                r.autocorrelation.abs() < 4.0 / (r.increments as f64).sqrt(),
                "lag {}: {}",
                r.lag,
                r.autocorrelation
            );
        }
    }
}

fn reference(key: &str) -> f64 {
    let text = std::fs::read_to_string("tests/data/polygon_reference.json").unwrap();
    let v: serde_json::Value = serde_json::from_str(&text).unwrap();
    v[key].as_f64().unwrap()
}

/// A regular 4000-gon inscribed in the unit circle, seen from z0 = 0.3 − 0.2i: the disk's CR is
/// 1 − |z0|² (common practice: the disk automorphism); the polygon differs from the disk by
/// O(n⁻²) ≈ 2e-7 here. Bound 1e-6, and the error estimate must be below it.
#[test]
fn conformal_radius_of_a_disk() {
    let n = 4000;
    let v: Vec<C> = (0..n)
        .map(|k| C::from_polar(1.0, std::f64::consts::TAU * k as f64 / n as f64))
        .collect();
    let z0 = C::new(0.3, -0.2);
    let r = conformal_radius(&v, z0, 1).unwrap();
    assert!((r.value - 0.87).abs() < 1e-6, "{}", r.value);
    assert!(r.error_estimate < 1e-6, "{}", r.error_estimate);
    // Orientation does not matter.
    let mut w = v.clone();
    w.reverse();
    let s = conformal_radius(&w, z0, 1).unwrap();
    assert!((s.value - r.value).abs() < 1e-6);
}

/// The ellipse x² + (y/0.6)² < 1 sampled at 4000 points: centre and (0.3, 0.2) against the
/// harmonic-polynomial Green's function values of scripts/polygon_reference.py (mpmath 1.3.0).
/// Measured differences 1.9e-7 and 1.05e-6; bounds 1e-6 and 2e-6 (the second includes the
/// polygon's own deviation from the ellipse and the zipper's error, both O(n⁻²)).
#[test]
fn conformal_radius_of_an_ellipse() {
    let n = 4000;
    let v: Vec<C> = (0..n)
        .map(|k| {
            let t = std::f64::consts::TAU * k as f64 / n as f64;
            C::new(t.cos(), 0.6 * t.sin())
        })
        .collect();
    let c = conformal_radius(&v, C::new(0.0, 0.0), 1).unwrap();
    assert!(
        (c.value - reference("ellipse_centre")).abs() < 1e-6,
        "{}",
        c.value
    );
    let o = conformal_radius(&v, C::new(0.3, 0.2), 1).unwrap();
    assert!(
        (o.value - reference("ellipse_off_centre")).abs() < 2e-6,
        "{}",
        o.value
    );
}

/// The square [−1, 1]² from its centre against the Schwarz–Christoffel value (scripts/
/// polygon_reference.py, mpmath 1.3.0). Corners slow the zipper (observed order ≈ 1.5 in the
/// subdivision: errors 3.4e-4, 1.25e-4, 4.45e-5 at 32, 64, 128 pieces per edge); Richardson
/// extrapolation from 64, 128 and 256 pieces per edge gives 2.4e-7 (measured). Bound 1e-6.
#[test]
fn conformal_radius_of_a_square() {
    let sq = [
        C::new(-1.0, -1.0),
        C::new(1.0, -1.0),
        C::new(1.0, 1.0),
        C::new(-1.0, 1.0),
    ];
    let r = conformal_radius_extrapolated(&sq, C::new(0.0, 0.0), 64).unwrap();
    assert!(
        (r.value - reference("square_centre")).abs() < 1e-6,
        "{}",
        r.value
    );
}

/// Nested squares around a point: found outermost first, with increasing depth; a point
/// outside a loop is rejected by `conformal_radius` with a message naming it.
#[test]
fn nesting_of_loops() {
    let square = |h: f64| vec![C::new(-h, -h), C::new(h, -h), C::new(h, h), C::new(-h, h)];
    let loops = vec![
        square(0.5),
        square(2.0),
        square(1.0),
        vec![C::new(3.0, 3.0), C::new(4.0, 3.0), C::new(4.0, 4.0)],
    ];
    let found = surrounding_loops(&loops, C::new(0.0, 0.0), 4).unwrap();
    let order: Vec<usize> = found.iter().map(|l| l.loop_index).collect();
    assert_eq!(order, vec![1, 2, 0]);
    assert_eq!(found[2].depth, 3);
    // Scaling about the common centre: CR of the square of half-side h is h times that of
    // half-side 1 (to the zipper's error at 4 pieces per edge, about 1e-3 relative).
    let r = |k: usize| found[k].conformal_radius.value;
    assert!((r(0) / r(2) - 4.0).abs() < 4e-3 * 4.0);
    let e = conformal_radius(&square(1.0), C::new(2.0, 0.0), 1).unwrap_err();
    assert!(e.to_string().contains("(2, 0)"), "{e}");
}

/// The zipper map of a polygonal domain onto H (a ↦ 0, b ↦ ∞, reference ↦ modulus 1) for a
/// regular 4000-gon is the disk's Möbius map with the same normalisation (the map is unique,
/// common practice), to the polygon's deviation from the circle (about 1e-6 here); and for the
/// square from the middle of its bottom side to the middle of its top side, symmetry puts the
/// vertical midline on the imaginary axis: measured |Re w| between 1e-4 and 3e-4 (the zipper's
/// accuracy with corners at 32 pieces per edge, as for the square's CR), relative 1.5e-5 to
/// 1.6e-3; bound 3e-3 relative.
#[test]
fn polygon_domain_map() {
    use sleek::curve::disk_to_half_plane;
    use sleek::polygon::PolygonToHalfPlane;
    let n = 4000;
    let v: Vec<C> = (0..n)
        .map(|k| C::from_polar(1.0, std::f64::consts::TAU * k as f64 / n as f64))
        .collect();
    let (a, b) = (C::new(0.0, -1.0), C::from_polar(1.0, 1.0));
    let map = PolygonToHalfPlane::new(&v, a, b, C::new(0.0, 0.0), 1).unwrap();
    let exact = disk_to_half_plane(a, b);
    for z in [
        C::new(0.0, 0.0),
        C::new(0.3, -0.4),
        C::new(-0.5, 0.5),
        C::new(0.1, -0.9),
    ] {
        let (p, q) = (map.map(z).unwrap(), exact(z));
        assert!((p - q).norm() < 1e-5 * (1.0 + q.norm()), "{z}: {p} vs {q}");
    }
    assert!(map.map(C::new(2.0, 0.0)).is_none());
    let sq = [
        C::new(-1.0, -1.0),
        C::new(1.0, -1.0),
        C::new(1.0, 1.0),
        C::new(-1.0, 1.0),
    ];
    let m = PolygonToHalfPlane::new(
        &sq,
        C::new(0.0, -1.0),
        C::new(0.0, 1.0),
        C::new(0.0, 0.0),
        32,
    )
    .unwrap();
    for y in [0.9, 0.5, 0.0, -0.5, -0.9] {
        let w = m.map(C::new(0.0, y)).unwrap();
        assert!(w.re.abs() < 3e-3 * w.norm(), "y = {y}: {w}");
        assert!(w.im > 0.0);
    }
}

/// Real-world input: consecutive duplicates are dropped and counted, the start is moved onto the
/// real line with the shift reported, a self-crossing is found with its two segments and the
/// crossing point, and a point below the real line is an error naming it.
#[test]
fn curve_cleaning_and_crossings() {
    use sleek::curve::{find_crossing, prepare, CurveDomain};
    let pts = [
        C::new(2.0, 0.01),
        C::new(2.0, 0.5),
        C::new(2.0, 0.5),
        C::new(3.0, 1.0),
        C::new(2.5, 2.0),
        C::new(1.5, 0.8),
        C::new(3.5, 0.8),
    ];
    let p = prepare(&pts, CurveDomain::HalfPlane).unwrap();
    assert_eq!(p.duplicates_dropped, 1);
    assert_eq!(p.start_shift, 2.0);
    assert!((p.start_gap - 0.01).abs() < 1e-15);
    assert_eq!(p.points[0], C::new(0.0, 0.0));
    // The segment from input point 1 ((2, 0.5), repeated as point 2) to (3, 1) is crossed by the
    // segment from input point 5, (1.5, 0.8)–(3.5, 0.8), at (2.6, 0.8).
    let (i, j, x, y) = p.crossing.expect("a crossing");
    assert_eq!((i, j), (1, 5));
    assert!(
        (x - 2.6).abs() < 1e-12 && (y - 0.8).abs() < 1e-12,
        "({x}, {y})"
    );
    // A simple spiral has none.
    let spiral: Vec<C> = (0..2000)
        .map(|k| C::from_polar(0.01 + 0.001 * k as f64, 0.05 * k as f64))
        .collect();
    assert!(find_crossing(&spiral).is_none());
    let e = prepare(
        &[C::new(0.0, 0.0), C::new(1.0, -0.5)],
        CurveDomain::HalfPlane,
    )
    .unwrap_err();
    assert!(e.to_string().contains("point 1"), "{e}");
}
