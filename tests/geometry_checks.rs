//! Box-counting dimension on sets whose dimension is known exactly, and the loop checks of
//! `sleek::geometry`.
//!
//! Sources: the Koch curve's dimension log 4 / log 3 is the similarity dimension of a
//! self-similar set with the open set condition (Hutchinson, Indiana Univ. Math. J. 1981);
//! segments and filled squares are common practice.
//!
//! Tolerance 0.05 throughout, and where it comes from: box counts depend on where the grid
//! falls. For the Koch curve (level 8) the slope over four placements of the fitted range
//! (r from 0.9·3⁻⁷ to 0.9·3⁻³, 0.5·3⁻⁷ to 0.5·3⁻³, 0.7·3⁻⁶ to 0.7·3⁻², 3⁻⁶ to 3⁻³) was
//! 1.280, 1.260, 1.302 and 1.287 (measured 2026-12-03); 0.05 allows that spread and still
//! fails an estimator that counts only vertices (whose slope falls towards 1 below the segment
//! length). A bounded set of length L also covers about L/r + 1 boxes of side r, a bias of
//! order r/L in the slope: the ranges for the segment and the square keep r/L ≤ 0.02.

use num_complex::Complex64;
use sleek::geometry::{box_dimension, is_simple_closed, vertex_distance};

fn koch(level: u32) -> Vec<Complex64> {
    let mut p = vec![Complex64::new(0.0, 0.0), Complex64::new(1.0, 0.0)];
    let rot = Complex64::from_polar(1.0, std::f64::consts::PI / 3.0);
    for _ in 0..level {
        let mut q = Vec::with_capacity(4 * p.len());
        for w in p.windows(2) {
            let (a, b) = (w[0], w[1]);
            let d = (b - a) / 3.0;
            q.push(a);
            q.push(a + d);
            q.push(a + d + d * rot);
            q.push(a + 2.0 * d);
        }
        q.push(*p.last().unwrap());
        p = q;
    }
    p
}

#[test]
fn koch_curve_has_dimension_log4_over_log3() {
    let p = koch(8);
    // Segments are 3⁻⁸ ≈ 1.5e-4 long: fit four periods log 3 above them (module docs).
    let f = box_dimension(&p, 0.9 * 3f64.powi(-7), 0.9 * 3f64.powi(-3), 17).unwrap();
    let exact = 4f64.ln() / 3f64.ln();
    println!("Koch: {} ± {} against {exact}", f.dimension, f.slope_stderr);
    assert!(
        (f.dimension - exact).abs() < 0.05,
        "Koch: {} ± {} against {exact}",
        f.dimension,
        f.slope_stderr
    );
}

#[test]
fn segment_has_dimension_one_and_a_filled_square_two() {
    let seg = vec![Complex64::new(0.013, 0.021), Complex64::new(0.87, 0.66)];
    let f = box_dimension(&seg, 1e-4, 1e-2, 8).unwrap();
    println!("segment: {}", f.dimension);
    assert!((f.dimension - 1.0).abs() < 0.05, "segment: {}", f.dimension);
    // A boustrophedon through the unit square, rows 1/1024 apart.
    let n = 1024;
    let mut sq = Vec::new();
    for k in 0..=n {
        let y = k as f64 / n as f64;
        let (a, b) = if k % 2 == 0 { (0.0, 1.0) } else { (1.0, 0.0) };
        sq.push(Complex64::new(a, y));
        sq.push(Complex64::new(b, y));
    }
    let f = box_dimension(&sq, 4e-3, 2e-2, 6).unwrap();
    println!("square: {}", f.dimension);
    assert!((f.dimension - 2.0).abs() < 0.05, "square: {}", f.dimension);
}

#[test]
fn a_closed_koch_snowflake_is_simple_and_two_rescaled_copies_are_disjoint() {
    // Three Koch curves on the sides of a triangle, outwards: a simple closed curve.
    let k = koch(4);
    let corners = [
        Complex64::new(0.0, 0.0),
        Complex64::from_polar(1.0, std::f64::consts::PI / 3.0),
        Complex64::new(1.0, 0.0),
    ];
    let mut flake = Vec::new();
    for s in 0..3 {
        let (a, b) = (corners[s], corners[(s + 1) % 3]);
        for z in &k[..k.len() - 1] {
            flake.push(a + (b - a) * z);
        }
    }
    assert!(is_simple_closed(&flake));
    let centre = Complex64::new(0.5, 0.3);
    let small: Vec<Complex64> = flake.iter().map(|z| centre + (z - centre) * 0.5).collect();
    assert!(is_simple_closed(&small));
    // The half-size copy lies strictly inside: no vertex within 0.01.
    assert_eq!(vertex_distance(&flake, &small, 0.01), f64::INFINITY);
    // A copy shifted by 0.05 comes within 0.05 of the original somewhere.
    let shifted: Vec<Complex64> = flake.iter().map(|z| z + 0.05).collect();
    assert!(vertex_distance(&flake, &shifted, 0.06) <= 0.05 + 1e-12);
}
