//! The experimental CLE_κ configuration sampler (`sleek::loops`): what holds whatever the state
//! of its geometry — reproducibility, the grid, the closing rule, and clear errors for bad
//! settings. Its geometric and statistical checks (simple disjoint loops for κ ≤ 4, the SSW law
//! at grid points) are not here yet because the configurations are not right yet (see the
//! module docs).

use num_complex::Complex64;
use sleek::loops::{grid_points, LoopSampler, LoopSettings};

/// A coarse configuration: ε = 0.5 (37 grid points), at most 3·10⁴ steps (some configurations
/// take minutes at the default budget).
fn coarse(kappa: f64) -> LoopSampler {
    let mut s = LoopSettings::defaults(0.5);
    s.max_steps = 30_000;
    LoopSampler::new(kappa, s).unwrap()
}

#[test]
fn a_configuration_is_a_pure_function_of_seed_and_index() {
    for &kappa in &[3.0, 6.0] {
        let s = coarse(kappa);
        let a = s.sample(7, 2);
        let b = s.sample(7, 2);
        assert_eq!(a, b, "κ = {kappa}");
        let c = s.sample(8, 2);
        assert_ne!(
            a.diagnostics, c.diagnostics,
            "κ = {kappa}: seeds 7 and 8 agree"
        );
    }
}

#[test]
fn closed_loops_return_to_their_start_and_open_ones_carry_no_points() {
    for &kappa in &[3.0, 6.0] {
        let s = coarse(kappa);
        let st = *s.settings();
        for seed in 0..3 {
            let c = s.sample(seed, 0);
            for l in &c.loops {
                if l.closed {
                    assert!(l.diameter >= st.min_size, "κ = {kappa}: {l:?}");
                    let n = l.points.len();
                    let closing = (l.points[n - 1] - l.points[0]).norm();
                    assert!(closing <= st.close_gap * st.spacing * (1.0 + 1e-12));
                    // Resolved everywhere, not only at the closing point.
                    assert!(l.largest_gap <= st.close_gap * st.spacing * (1.0 + 1e-12));
                    assert!(l.points.iter().all(|z| z.norm() <= 1.0 + 1e-9));
                } else {
                    assert!(l.points.is_empty());
                }
                match l.log_cr {
                    Some(x) => assert!(x < 0.0 && x.is_finite() && l.seen_from.is_some()),
                    // Closed only by the exploration outside it: no point inside saw it.
                    None => assert!(l.closed && l.seen_from.is_none()),
                }
                if let Some(p) = l.parent {
                    assert!(p < l.id && c.loops[p].depth < l.depth);
                }
            }
            assert_eq!(
                c.loops.iter().filter(|l| !l.closed).count() as u64,
                c.diagnostics.open_loops
            );
        }
    }
}

#[test]
fn the_grid_covers_the_disk_at_its_spacing() {
    let g = 0.1;
    let pts = grid_points(g);
    assert!(pts.iter().all(|z| z.norm() <= 1.0 - 0.5 * g + 1e-12));
    // Every point of the disk |z| ≤ 0.9 is within g/√2 of a grid point.
    for k in 0..200 {
        let z = Complex64::from_polar(0.9 * ((k as f64 * 0.618).fract()), k as f64 * 2.4);
        let d = pts
            .iter()
            .map(|p| (p - z).norm())
            .fold(f64::INFINITY, f64::min);
        assert!(d <= g / 2f64.sqrt() + 1e-12, "{z}: {d}");
    }
}

#[test]
fn bad_settings_name_the_value_and_the_range() {
    let e = LoopSampler::new(8.5, LoopSettings::defaults(0.2)).unwrap_err();
    assert!(e.to_string().contains("8.5"), "{e}");
    let e = LoopSampler::new(6.0, LoopSettings::defaults(0.001)).unwrap_err();
    let msg = e.to_string();
    assert!(msg.contains("min-size") && msg.contains("0.01"), "{msg}");
    let mut s = LoopSettings::defaults(0.2);
    s.spacing = 0.5;
    let msg = LoopSampler::new(6.0, s).unwrap_err().to_string();
    assert!(msg.contains("spacing"), "{msg}");
}
