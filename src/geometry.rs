//! Geometry of sampled curves and loops: box-counting dimension, and the tests of simplicity,
//! disjointness and touching that CLE loops are checked with.
//!
//! # Box counting (common practice)
//! A polyline is covered by the squares of a grid of side `r` (anchored at the origin) that its
//! segments meet; `N(r)` is their number. Every segment is walked in steps of `r/4`, so a
//! segment longer than a box is not counted as its two end boxes only. The dimension estimate
//! is the least-squares slope of `log N(r)` against `log(1/r)` over a stated range of sizes;
//! its standard error is the regression's (the scatter of the points about the line), which
//! says how straight the plot is, not how far a finite sample is from the limit. Below the
//! polyline's own spacing, `N(r)` counts the straight segments and the slope drifts towards 1;
//! above a tenth of its diameter, few boxes are counted. Fit between those.

use crate::error::{Error, Result};
use num_complex::Complex64;
use serde::Serialize;
use std::collections::HashSet;

/// Number of boxes of side `r` (a grid anchored at the origin) met by the polyline `p`.
pub fn box_count(p: &[Complex64], r: f64) -> usize {
    let mut cells: HashSet<(i64, i64)> = HashSet::new();
    let cell = |z: Complex64| ((z.re / r).floor() as i64, (z.im / r).floor() as i64);
    if let Some(&z) = p.first() {
        cells.insert(cell(z));
    }
    for w in p.windows(2) {
        let (a, b) = (w[0], w[1]);
        let n = ((b - a).norm() / (0.25 * r)).ceil().max(1.0) as usize;
        for k in 1..=n {
            let t = k as f64 / n as f64;
            cells.insert(cell(a + (b - a) * t));
        }
    }
    cells.len()
}

/// A box-counting dimension estimate with the data it was fitted on.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DimensionFit {
    /// Slope of `log N(r)` against `log(1/r)`.
    pub dimension: f64,
    /// Standard error of the slope from the regression residuals (module docs: a measure of
    /// how straight the log-log plot is, not a sampling error).
    pub slope_stderr: f64,
    /// Smallest and largest box side used.
    pub r_min: f64,
    /// Largest box side used.
    pub r_max: f64,
    /// `(r, N(r))` for every size used, largest first.
    pub counts: Vec<(f64, usize)>,
}

/// Box-counting dimension of the polyline `p` from `sizes` box sides, geometrically spaced from
/// `r_max` down to `r_min` (module docs).
///
/// Errors: [`Error::InvalidParameter`] unless `0 < r_min < r_max`, `sizes ≥ 3` and `p` has at
/// least two points.
pub fn box_dimension(
    p: &[Complex64],
    r_min: f64,
    r_max: f64,
    sizes: usize,
) -> Result<DimensionFit> {
    if !(r_min.is_finite() && r_min > 0.0) {
        return Err(Error::param("r_min", r_min, "a finite box side > 0"));
    }
    if !(r_max.is_finite() && r_max > r_min) {
        return Err(Error::param(
            "r_max",
            r_max,
            format!("a finite box side > r_min = {r_min}"),
        ));
    }
    if sizes < 3 {
        return Err(Error::param("sizes", sizes as f64, "at least 3 box sizes"));
    }
    if p.len() < 2 {
        return Err(Error::param(
            "points",
            p.len() as f64,
            "a polyline of at least 2 points",
        ));
    }
    let q = (r_min / r_max).ln() / (sizes - 1) as f64;
    let counts: Vec<(f64, usize)> = (0..sizes)
        .map(|k| {
            let r = r_max * (q * k as f64).exp();
            (r, box_count(p, r))
        })
        .collect();
    let xs: Vec<f64> = counts.iter().map(|c| -c.0.ln()).collect();
    let ys: Vec<f64> = counts.iter().map(|c| (c.1 as f64).ln()).collect();
    let n = xs.len() as f64;
    let mx = xs.iter().sum::<f64>() / n;
    let my = ys.iter().sum::<f64>() / n;
    let sxx: f64 = xs.iter().map(|x| (x - mx) * (x - mx)).sum();
    let sxy: f64 = xs.iter().zip(&ys).map(|(x, y)| (x - mx) * (y - my)).sum();
    let slope = sxy / sxx;
    let rss: f64 = xs
        .iter()
        .zip(&ys)
        .map(|(x, y)| {
            let e = y - my - slope * (x - mx);
            e * e
        })
        .sum();
    let slope_stderr = (rss / (n - 2.0) / sxx).sqrt();
    Ok(DimensionFit {
        dimension: slope,
        slope_stderr,
        r_min,
        r_max,
        counts,
    })
}

/// Whether two closed polylines (first points not repeated) cross: some segment of one and some
/// segment of the other intersect properly (touching at an end point or overlapping on a line
/// does not count). Brute force over segment pairs, `O(|a|·|b|)`.
pub fn polylines_cross(a: &[Complex64], b: &[Complex64]) -> bool {
    let o = |p: Complex64, q: Complex64, r: Complex64| ((q - p).conj() * (r - p)).im;
    for i in 0..a.len() {
        let (p, q) = (a[i], a[(i + 1) % a.len()]);
        for j in 0..b.len() {
            let (r, s) = (b[j], b[(j + 1) % b.len()]);
            if o(p, q, r) * o(p, q, s) < 0.0 && o(r, s, p) * o(r, s, q) < 0.0 {
                return true;
            }
        }
    }
    false
}

/// Whether the closed polyline `p` (first point not repeated) is simple: no two of its
/// segments cross, the closing segment included. Segments that share an end point are not
/// compared, so a polyline that comes back exactly onto one of its vertices counts as simple.
pub fn is_simple_closed(p: &[Complex64]) -> bool {
    let n = p.len();
    if n < 4 {
        return true;
    }
    if crate::curve::find_crossing(p).is_some() {
        return false;
    }
    // The closing segment against every segment it does not share an end with.
    let (a, b) = (p[n - 1], p[0]);
    !(1..n - 2).any(|k| crate::curve::segment_crossing(a, b, p[k], p[k + 1]).is_some())
}

/// Smallest distance between the vertices of two polylines, found through a grid of cells of
/// side `cell` (pairs farther apart than `cell` are not compared, and `f64::INFINITY` is
/// returned when no pair is within `cell`).
pub fn vertex_distance(a: &[Complex64], b: &[Complex64], cell: f64) -> f64 {
    let key = |z: Complex64| ((z.re / cell).floor() as i64, (z.im / cell).floor() as i64);
    let mut grid: std::collections::HashMap<(i64, i64), Vec<Complex64>> =
        std::collections::HashMap::new();
    for &z in a {
        grid.entry(key(z)).or_default().push(z);
    }
    let mut best = f64::INFINITY;
    for &z in b {
        let (i, j) = key(z);
        for di in -1..=1 {
            for dj in -1..=1 {
                if let Some(v) = grid.get(&(i + di, j + dj)) {
                    for &w in v {
                        best = best.min((z - w).norm());
                    }
                }
            }
        }
    }
    if best <= cell {
        best
    } else {
        f64::INFINITY
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn square(x: f64, y: f64, side: f64) -> Vec<Complex64> {
        vec![
            Complex64::new(x, y),
            Complex64::new(x + side, y),
            Complex64::new(x + side, y + side),
            Complex64::new(x, y + side),
        ]
    }

    #[test]
    fn polylines_cross_only_when_segments_cross() {
        // Overlapping squares cross; nested, disjoint, or corner-sharing ones do not.
        assert!(polylines_cross(
            &square(0.0, 0.0, 1.0),
            &square(0.5, 0.5, 1.0)
        ));
        assert!(!polylines_cross(
            &square(0.0, 0.0, 1.0),
            &square(0.25, 0.25, 0.5)
        ));
        assert!(!polylines_cross(
            &square(0.0, 0.0, 1.0),
            &square(2.0, 0.0, 1.0)
        ));
        assert!(!polylines_cross(
            &square(0.0, 0.0, 1.0),
            &square(1.0, 1.0, 1.0)
        ));
    }

    #[test]
    fn box_count_of_a_segment_grows_like_one_over_r() {
        let p = vec![Complex64::new(0.05, 0.05), Complex64::new(0.95, 0.05)];
        // A horizontal segment of length 0.9 inside one row of boxes.
        assert_eq!(box_count(&p, 0.1), 10);
        assert_eq!(box_count(&p, 0.01), 91);
    }

    #[test]
    fn bad_box_ranges_name_the_value() {
        let p = [Complex64::new(0.0, 0.0), Complex64::new(1.0, 0.0)];
        let e = box_dimension(&p, 0.1, 0.05, 4).unwrap_err().to_string();
        assert!(e.contains("r_max") && e.contains("0.05"), "{e}");
        let e = box_dimension(&p, 0.0, 0.05, 4).unwrap_err().to_string();
        assert!(e.contains("r_min"), "{e}");
    }

    #[test]
    fn closed_square_is_simple_and_a_figure_eight_is_not() {
        let sq = [
            Complex64::new(0.0, 0.0),
            Complex64::new(1.0, 0.0),
            Complex64::new(1.0, 1.0),
            Complex64::new(0.0, 1.0),
        ];
        assert!(is_simple_closed(&sq));
        let eight = [
            Complex64::new(0.0, 0.0),
            Complex64::new(1.0, 1.0),
            Complex64::new(1.0, 0.0),
            Complex64::new(0.0, 1.0),
        ];
        assert!(!is_simple_closed(&eight));
        // A simple spiral whose closing segment cuts one of its segments (and touches the
        // first one at the start point, which is no crossing).
        let spiral: Vec<Complex64> = [
            (0.0, 0.0),
            (3.0, 0.0),
            (3.0, 3.0),
            (1.0, 3.0),
            (1.0, 1.0),
            (2.0, 1.0),
            (2.0, 1.5),
        ]
        .iter()
        .map(|&(x, y)| Complex64::new(x, y))
        .collect();
        assert!(!is_simple_closed(&spiral));
        assert!(is_simple_closed(&spiral[..6]));
    }

    #[test]
    fn vertex_distance_finds_the_nearest_pair_within_a_cell() {
        let a = [Complex64::new(0.0, 0.0), Complex64::new(1.0, 0.0)];
        let b = [Complex64::new(1.03, 0.04), Complex64::new(3.0, 0.0)];
        assert!((vertex_distance(&a, &b, 0.1) - 0.05).abs() < 1e-12);
        assert_eq!(vertex_distance(&a, &b, 0.01), f64::INFINITY);
    }
}
