//! Whole CLE_κ configurations (`sleek::regions`): reproducibility, nesting structure and the
//! geometry that distinguishes κ ≤ 4 from 4 < κ < 8.
//!
//! The configurations are small (ε = 0.3 or 0.2, a few seconds each); what is checked holds for
//! every configuration, so one seed per κ is a test, not a sample.

use num_complex::Complex64;
use sleek::geometry::{polylines_cross, vertex_distance};
use sleek::loops::{CleLoop, LoopConfiguration};
use sleek::polygon::winding_number;
use sleek::regions::{RegionSampler, RegionSettings};

fn sample(kappa: f64, eps: f64, seed: u64) -> LoopConfiguration {
    let s = RegionSettings::defaults(eps);
    RegionSampler::new(kappa, s)
        .expect("valid settings")
        .sample(seed, 0)
        .0
}

/// No two of the loops cross.
fn assert_no_two_cross(closed: &[&CleLoop]) {
    for (i, a) in closed.iter().enumerate() {
        for b in &closed[i + 1..] {
            assert!(
                !polylines_cross(&a.points, &b.points),
                "loops {} and {} cross",
                a.id,
                b.id
            );
        }
    }
}

fn check_structure(c: &LoopConfiguration, eps: f64) {
    for (i, l) in c.loops.iter().enumerate() {
        assert_eq!(l.id, i, "loop ids are positions");
        assert!(
            l.diameter >= eps,
            "loop {i} has diameter {} < ε",
            l.diameter
        );
        assert!(
            l.points.iter().all(|z| z.norm() < 1.0),
            "loop {i} leaves the disk"
        );
        match l.parent {
            None => assert_eq!(l.depth, 1, "loop {i} has no parent but depth {}", l.depth),
            Some(p) => {
                assert!(p < i, "parents come before their children");
                let parent: &CleLoop = &c.loops[p];
                assert_eq!(l.depth, parent.depth + 1, "depth of loop {i}");
                // The child lies inside its parent: most of its vertices are surrounded.
                let inside = l
                    .points
                    .iter()
                    .filter(|&&z| winding_number(&parent.points, z) != 0)
                    .count();
                assert!(
                    inside * 10 >= l.points.len() * 9,
                    "loop {i}: only {inside} of {} vertices inside its parent {p}",
                    l.points.len()
                );
            }
        }
    }
}

#[test]
fn a_configuration_is_a_function_of_the_seed() {
    let a = sample(3.0, 0.3, 11);
    let b = sample(3.0, 0.3, 11);
    assert_eq!(a.loops.len(), b.loops.len());
    for (x, y) in a.loops.iter().zip(&b.loops) {
        assert_eq!(x.points, y.points);
        assert_eq!((x.parent, x.depth), (y.parent, y.depth));
    }
    check_structure(&a, 0.3);
}

/// The regions of one level of the region tree run in parallel; the configuration (loops,
/// identifiers, parents, step count) must not depend on the number of threads (common practice
/// for reproducible parallel sampling).
#[test]
fn a_configuration_does_not_depend_on_the_thread_count() {
    let run = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| sample(6.0, 0.4, 3))
    };
    let (a, b) = (run(1), run(3));
    assert!(
        a.loops.len() > 1,
        "too few loops to compare: {}",
        a.loops.len()
    );
    assert_eq!(a.diagnostics.steps, b.diagnostics.steps);
    assert_eq!(a.loops.len(), b.loops.len());
    for (x, y) in a.loops.iter().zip(&b.loops) {
        assert_eq!((x.id, x.parent, x.depth), (y.id, y.parent, y.depth));
        assert_eq!(x.points, y.points);
    }
}

/// For each loop, the distance to the nearest other loop (vertices, `geometry::vertex_distance`),
/// in units of `spacing`, capped at two spacings.
fn nearest_other_loop(closed: &[&CleLoop], spacing: f64) -> Vec<f64> {
    let h = 2.0 * spacing;
    closed
        .iter()
        .enumerate()
        .map(|(i, l)| {
            let m = closed
                .iter()
                .enumerate()
                .filter(|&(j, _)| j != i)
                .map(|(_, o)| vertex_distance(&l.points, &o.points, h))
                .fold(h, f64::min);
            m / spacing
        })
        .collect()
}

/// Closed loops of seeds `seeds` pooled: (loops, loops within one spacing of another of their
/// configuration, within two), after checking the structure and that no two cross.
fn pooled_nearness(
    kappa: f64,
    eps: f64,
    seeds: std::ops::RangeInclusive<u64>,
) -> (usize, usize, usize) {
    let spacing = RegionSettings::defaults(eps).spacing;
    let (mut n, mut one, mut two) = (0, 0, 0);
    for seed in seeds {
        let c = sample(kappa, eps, seed);
        check_structure(&c, eps);
        let closed: Vec<&CleLoop> = c.loops.iter().filter(|l| l.closed).collect();
        assert_no_two_cross(&closed);
        let near = nearest_other_loop(&closed, spacing);
        n += closed.len();
        one += near.iter().filter(|&&d| d <= 1.0).count();
        two += near.iter().filter(|&&d| d <= 2.0).count();
    }
    (n, one, two)
}

/// For κ ≤ 4 the loops are simple and pairwise disjoint (Rohde & Schramm, Ann. Math. 2005 for
/// the simple SLE_κ traces; Sheffield & Werner, Ann. Math. 2012 for disjointness of CLE_κ
/// loops): no two closed loops cross, and few come within a spacing of another. Single
/// configurations change with the last bit of rounding, so eight are pooled. Measured
/// (2026-12-05, ε = 0.2, seeds 1–8): 5 of 41 closed loops within one spacing of another, a
/// per-configuration mean fraction 0.09 with standard error 0.06; the bound 0.3 is 3.5 s.e. above.
/// (Their own polylines are not always simple at the spacing; that is not checked here.)
#[test]
fn kappa_three_loops_do_not_cross_or_touch_each_other() {
    let (n, one, _) = pooled_nearness(3.0, 0.2, 1..=8);
    assert!(n >= 20, "{n} closed loops at κ = 3, seeds 1–8");
    assert!(
        10 * one <= 3 * n,
        "{one} of {n} κ = 3 loops within a spacing of another"
    );
}

/// For 4 < κ < 8 the loops touch each other but do not cross (Sheffield, Duke Math. J. 2009,
/// the exploration tree; quoted from memory): no two closed loops cross, and most come within
/// two spacings of another loop. Measured (2026-12-05, ε = 0.3, seeds 1–12): 36 of 50 within
/// two spacings, a per-configuration mean fraction 0.73 with standard error 0.09; the bound 0.4
/// is 3.7 s.e. below (κ = 3 above: 0.09 within one spacing).
#[test]
fn kappa_six_closed_loops_touch_but_do_not_cross() {
    let (n, _, two) = pooled_nearness(6.0, 0.3, 1..=12);
    assert!(n >= 20, "{n} closed loops at κ = 6, seeds 1–12");
    assert!(
        5 * two >= 2 * n,
        "only {two} of {n} κ = 6 loops within two spacings of another"
    );
}

#[test]
fn bad_settings_name_the_value() {
    let e = RegionSampler::new(8.5, RegionSettings::defaults(0.1)).unwrap_err();
    assert!(e.to_string().contains("kappa = 8.5"), "{e}");
    let e = RegionSampler::new(3.0, RegionSettings::defaults(0.001)).unwrap_err();
    assert!(e.to_string().contains("min-size = 0.001"), "{e}");
}

#[test]
fn conformal_radius_inside_a_circle_converges_as_the_pixel_shrinks() {
    // Exact case: the disk of radius R about 0 seen from z has CR = (R² − |z|²)/R (the Möbius
    // map of the disk; common practice). The raster component sits between px/2 and px inside
    // the polygon, so the error must be O(px) and shrink when px is halved.
    use sleek::regions::log_conformal_radius_inside;
    let r = 0.6;
    let circle: Vec<Complex64> = (0..720)
        .map(|k| Complex64::from_polar(r, k as f64 * std::f64::consts::TAU / 720.0))
        .collect();
    for z in [Complex64::new(0.0, 0.0), Complex64::new(0.2, -0.15)] {
        let exact = ((r * r - z.norm_sqr()) / r).ln();
        let coarse = log_conformal_radius_inside(&circle, z, 0.02).expect("inside");
        let fine = log_conformal_radius_inside(&circle, z, 0.01).expect("inside");
        let (e1, e2) = (exact - coarse, exact - fine);
        // Biased low by between px/2 and px over the distance to the circle (about 0.4–0.6).
        assert!(e1 > 0.0 && e1 < 0.08, "px 0.02: error {e1} at {z}");
        assert!(
            e2 > 0.0 && e2 < 0.6 * e1,
            "px 0.01: error {e2} against {e1} at {z}"
        );
    }
    // Outside the loop: no component.
    assert!(log_conformal_radius_inside(&circle, Complex64::new(0.9, 0.0), 0.02).is_none());
}

/// Tilted steps (experimental) keep the κ ≤ 4 facts: closed loops that do not cross (Rohde &
/// Schramm, Ann. Math. 2005; Sheffield & Werner, Ann. Math. 2012), no tip outside the disk.
#[test]
fn kappa_three_tilted_loops_do_not_cross_and_stay_in_the_disk() {
    let mut settings = RegionSettings::defaults(0.3);
    settings.tilted = Some(true);
    let (c, _) = RegionSampler::new(3.0, settings).unwrap().sample(5, 0);
    check_structure(&c, 0.3);
    let closed: Vec<&CleLoop> = c.loops.iter().filter(|l| l.closed).collect();
    assert!(
        !closed.is_empty(),
        "no closed loop at κ = 3, seed 5, tilted"
    );
    assert_no_two_cross(&closed);
    for l in &c.loops {
        assert!(
            l.points.iter().all(|z| z.norm() < 1.0),
            "loop {} leaves the disk",
            l.id
        );
    }
}

/// A loop still being traced when every grid point of its region is covered is finished, not
/// dropped: in this configuration (κ = 16/3, ε = 0.2, seed 20261303) the disk's exploration
/// once ended with a 25 000-point excursion in progress and drew no loop over half the disk.
/// The regions that end normally must leave no excursion behind (regression, found by looking
/// at the tour's picture).
#[test]
fn a_loop_in_progress_is_finished_when_its_region_is_covered() {
    let sampler = RegionSampler::new(16.0 / 3.0, RegionSettings::defaults(0.2)).expect("valid");
    let (c, rd) = sampler.sample(20261303, 0);
    assert!(!c.diagnostics.truncated);
    assert_eq!(rd.stalled, 0, "{rd:?}");
    // (Before the fix: 25 169 dropped points, measured.)
    assert_eq!(rd.dropped_points, 0, "{rd:?}");
}
