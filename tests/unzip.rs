//! Unzipping curves back to their driving functions (DESIGN §9; Marshall & Rohde, SIAM J.
//! Numer. Anal. 2007): exact hulls (Kager, Nienhuis & Kadanoff, J. Stat. Phys. 2004), the
//! identity unzip ∘ trace, radial unzipping, and the fast tree against direct composition.

use num_complex::Complex64 as C;
use sleek::driving::BrownianPath;
use sleek::loewner::{ChordalChain, Method, StepKind};
use sleek::radial::RadialChain;
use sleek::unzip::{unzip_radial, ChordalUnzip};

/// A vertical segment [0, iL] has W ≡ 0 and capacity time L²/4 (KNK 2004), exactly for both
/// slit shapes (every step's image is again on the imaginary axis).
#[test]
fn vertical_segment() {
    let l = 3.0;
    let pts: Vec<C> = (0..=500)
        .map(|k| C::new(0.0, l * k as f64 / 500.0))
        .collect();
    for slit in [StepKind::Tilted, StepKind::Vertical] {
        for method in [Method::Fast, Method::Direct] {
            let u = ChordalUnzip::new(&pts, slit, method).unwrap().result;
            assert_eq!(u.steps(), 500);
            assert!(u.skipped.is_empty());
            assert!(u.driving.iter().all(|w| w.abs() < 1e-12), "{slit:?}");
            assert!((u.final_time() - l * l / 4.0).abs() < 1e-12 * l * l);
            // t(y) = y²/4 at every point.
            for (k, &t) in u.times.iter().enumerate() {
                let y = l * k as f64 / 500.0;
                assert!((t - y * y / 4.0).abs() < 1e-11, "t = {t} at y = {y}");
            }
        }
    }
}

/// Unzipping the trace of a chain with tilted (vertical) steps, with tilted (vertical) slits,
/// recovers its driving values and times to rounding: each step's tip, mapped forward, is the
/// tip of the same slit. Brownian driving at κ = 4 and κ = 6, 2000 steps; bound 1e-9 (the maps'
/// round-off grows along the chain).
#[test]
fn unzip_of_trace_is_identity() {
    for (kappa, seed) in [(4.0, 11u64), (6.0, 12)] {
        let path = BrownianPath::uniform(kappa, 1.0, 2000, seed, 0).unwrap();
        let d = path.driving();
        for kind in [StepKind::Tilted, StepKind::Vertical] {
            let chain = ChordalChain::new(d, kind);
            let mut tr = chain.trace(Method::Fast).unwrap();
            tr[0] = C::new(0.0, 0.0);
            // The trace starts at W_0 = 0.
            for method in [Method::Fast, Method::Direct] {
                let u = ChordalUnzip::new(&tr, kind, method).unwrap().result;
                assert!(
                    u.skipped.is_empty(),
                    "κ={kappa} {kind:?}: skipped {:?}",
                    u.skipped
                );
                let mut worst: f64 = 0.0;
                for k in 0..=2000 {
                    worst = worst.max((u.driving[k] - d.values()[k]).abs());
                    worst = worst.max((u.times[k] - d.times()[k]).abs());
                }
                assert!(worst < 1e-9, "κ={kappa} {kind:?} {method:?}: {worst:e}");
            }
        }
    }
}

/// The fast tree agrees with direct composition on a long SLE_6 trace (5000 points) and keeps
/// series in most blocks (so it is actually used).
#[test]
fn fast_tree_matches_direct() {
    let path = BrownianPath::uniform(6.0, 1.0, 5000, 5, 0).unwrap();
    let mut tr = ChordalChain::new(path.driving(), StepKind::Tilted)
        .trace(Method::Fast)
        .unwrap();
    tr[0] = C::new(0.0, 0.0);
    let fast = ChordalUnzip::new(&tr, StepKind::Tilted, Method::Fast).unwrap();
    let direct = ChordalUnzip::new(&tr, StepKind::Tilted, Method::Direct).unwrap();
    let (a, b) = (&fast.result, &direct.result);
    assert_eq!(a.steps(), b.steps());
    let worst = a
        .driving
        .iter()
        .zip(&b.driving)
        .map(|(x, y)| (x - y).abs())
        .fold(0.0, f64::max);
    assert!(worst < 1e-10, "fast vs direct: {worst:e}");
    let (with, all) = fast.chain().series_blocks();
    assert!(with * 10 >= all * 8, "{with} of {all} blocks have series");
    // The composed map at interior points agrees too.
    for z in [C::new(0.3, 0.2), C::new(-1.0, 0.5), C::new(0.0, 3.0)] {
        let (p, q) = (fast.map(z), direct.map(z));
        assert!((p - q).norm() < 1e-10 * (1.0 + q.norm()), "{z}: {p} vs {q}");
    }
}

/// A straight segment at angle απ from 0 is the hull of `W = c√t`, `c = 2(1−2α)/√(α(1−α))`,
/// with capacity time `T = (L/2)² (α/(1−α))^{1−2α}` (KNK 2004). Unzipped with tilted slits
/// from equally spaced points, the error in T and W(T) must shrink as the points get denser
/// (observed order ≈ 1; the test asks ≥ 0.9) and be below 1e-3 relative at 4000 points.
#[test]
fn straight_ray_converges() {
    for alpha in [0.3f64, 0.5, 0.7] {
        let l = 2.0;
        let c = 2.0 * (1.0 - 2.0 * alpha) / (alpha * (1.0 - alpha)).sqrt();
        let big_t = (l / 2.0f64).powi(2) * (alpha / (1.0 - alpha)).powf(1.0 - 2.0 * alpha);
        let err = |n: usize| {
            let dir = C::from_polar(1.0, alpha * std::f64::consts::PI);
            let pts: Vec<C> = (0..=n).map(|k| dir * (l * k as f64 / n as f64)).collect();
            let u = ChordalUnzip::new(&pts, StepKind::Tilted, Method::Fast)
                .unwrap()
                .result;
            let t = u.final_time();
            let w = *u.driving.last().unwrap();
            ((t - big_t).abs() / big_t).max((w - c * big_t.sqrt()).abs() / big_t.sqrt())
        };
        let (e1, e2) = (err(250), err(4000));
        assert!(e2 < 1e-3, "α={alpha}: relative error {e2:e} at 4000 points");
        if e1 > 1e-12 {
            let order = (e1 / e2.max(1e-300)).ln() / 16f64.ln();
            assert!(order >= 0.9 || e2 < 1e-12, "α={alpha}: {e1:e} → {e2:e}");
        }
    }
}

/// Radial unzip of a radial trace: tilted radial steps built on the trace are recovered. The
/// trace of vertical radial steps (constant angle on each step) unzipped with vertical slits gives
/// back the angles and the radial times to 1e-9.
#[test]
fn radial_unzip_of_trace() {
    let path = BrownianPath::uniform(3.0, 2.0, 1000, 9, 0).unwrap();
    let d = path.driving();
    let mut chain = RadialChain::new();
    for k in 1..d.times().len() {
        chain.push(sleek::radial::RadialStep::new(
            d.values()[k],
            d.times()[k] - d.times()[k - 1],
        ));
    }
    let mut pts = vec![C::from_polar(1.0, d.values()[1])];
    for n in 1..=chain.steps().len() {
        pts.push(chain.trace_point(n));
    }
    let u = unzip_radial(&pts, StepKind::Vertical).unwrap();
    assert!(u.skipped.is_empty());
    for k in 1..u.times.len() {
        assert!((u.times[k] - d.times()[k]).abs() < 1e-9, "t at {k}");
        let diff = (u.driving[k] - d.values()[k] + std::f64::consts::PI)
            .rem_euclid(std::f64::consts::TAU)
            - std::f64::consts::PI;
        assert!(diff.abs() < 1e-9, "ξ at {k}: {diff:e}");
    }
    // Tilted radial unzip of the same points: the radial time of the whole curve is a property
    // of the hull (−log CR), so both slit shapes must agree on it to the discretisation error
    // (here < 1e-2 of the total time 2).
    let v = unzip_radial(&pts, StepKind::Tilted).unwrap();
    assert!((v.final_time() - 2.0).abs() < 2e-2, "{}", v.final_time());
}

/// A point below the real line is refused with a message naming it.
#[test]
fn points_below_the_line_are_rejected() {
    let pts = [C::new(0.0, 0.0), C::new(0.1, 0.2), C::new(0.2, -0.1)];
    let e = ChordalUnzip::new(&pts, StepKind::Tilted, Method::Fast).unwrap_err();
    assert!(e.to_string().contains("point 2"), "{e}");
}

/// A semicircular arc from 0 over the half-disk of centre −r, radius r, ending on the real line at
/// −2r, swallows the half-disk: its hull's map is `g(z) = z + r²/(z + r)` (Joukowski, common
/// practice), so hcap = r², the final capacity time is r²/2, and the tip goes to
/// W_T = g(−2r) = −3r. Unzipped from points on the arc (the last one, on the real line, is
/// skipped as a boundary point), T and W_T converge to these values: the error at 4000 points is
/// below 2e-3 relative and smaller than at 500 points.
#[test]
fn semicircle_swallowing_a_half_disk() {
    let r = 1.5;
    let err = |n: usize| {
        let pts: Vec<C> = (0..=n)
            .map(|k| {
                let th = std::f64::consts::PI * k as f64 / n as f64;
                C::new(-r + r * th.cos(), r * th.sin())
            })
            .map(|z| C::new(z.re, z.im.max(0.0)))
            .collect();
        let mut pts = pts;
        pts[0] = C::new(0.0, 0.0);
        let u = ChordalUnzip::new(&pts, StepKind::Tilted, Method::Fast)
            .unwrap()
            .result;
        assert_eq!(u.skipped, vec![n], "only the end point is on the line");
        let t = u.final_time();
        let w = *u.driving.last().unwrap();
        ((t - r * r / 2.0).abs() / (r * r / 2.0)).max((w + 3.0 * r).abs() / (3.0 * r))
    };
    let (e1, e2) = (err(500), err(4000));
    assert!(e2 < 2e-3, "relative error {e2:e} at 4000 points");
    assert!(e2 < e1, "{e1:e} → {e2:e}");
}
