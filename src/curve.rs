//! Users' curves: reading them, cleaning them, and putting them in the frame where they are
//! unzipped (DESIGN §9).
//!
//! Files hold points `x,y`, one per line (CSV; a header line and `#` comments are allowed; a
//! third column form `curve,x,y` holds several curves, numbered by the first column), or JSON
//! (`[[x,y],…]`, `{"points":[[x,y],…]}`, or `{"curves":[[[x,y],…],…]}`).
//!
//! Cleaning, in this order, each reported: consecutive duplicate points are dropped; the start
//! is moved onto the boundary (the shift is reported); points outside the domain are an error
//! naming the point. A self-crossing of the polyline is found in O(N) expected time (a uniform
//! grid of segments) and reported with the two segments and the crossing point.

use crate::error::{Error, Result};
use num_complex::Complex64;
use serde::Serialize;

/// Largest number of points read from one file (about 160 MB of complex numbers).
pub const MAX_POINTS: usize = 10_000_000;

/// Read one or several curves from CSV (`x,y` or `curve,x,y`) or JSON text.
///
/// # Errors
/// [`Error::InvalidData`] naming the line (or JSON problem) when the text is not one of the
/// accepted forms, a number is not finite, or there are more than [`MAX_POINTS`] points.
pub fn parse_curves(text: &str) -> Result<Vec<Vec<Complex64>>> {
    let trimmed = text.trim_start();
    if trimmed.starts_with('[') || trimmed.starts_with('{') {
        return parse_json(trimmed);
    }
    let mut curves: Vec<(String, Vec<Complex64>)> = Vec::new();
    let mut total = 0usize;
    for (n, line) in text.lines().enumerate() {
        let line = line.trim();
        if line.is_empty() || line.starts_with('#') {
            continue;
        }
        let fields: Vec<&str> = line
            .split([',', ';', '\t', ' '])
            .filter(|s| !s.is_empty())
            .collect();
        let nums: Vec<Option<f64>> = fields.iter().map(|f| f.parse::<f64>().ok()).collect();
        if nums.iter().all(|v| v.is_none()) && curves.is_empty() {
            continue; // a header line
        }
        let (id, x, y) = match (fields.len(), nums.as_slice()) {
            (2, [Some(x), Some(y)]) => (String::new(), *x, *y),
            (3, [_, Some(x), Some(y)]) => (fields[0].to_string(), *x, *y),
            _ => {
                return Err(Error::InvalidData(format!(
                    "line {}: expected `x,y` or `curve,x,y` with numbers, got `{}`",
                    n + 1,
                    truncate(line)
                )))
            }
        };
        if !(x.is_finite() && y.is_finite()) {
            return Err(Error::InvalidData(format!(
                "line {}: coordinates must be finite, got ({x}, {y})",
                n + 1
            )));
        }
        total += 1;
        if total > MAX_POINTS {
            return Err(Error::InvalidData(format!(
                "more than {MAX_POINTS} points in one file; split it"
            )));
        }
        match curves.last_mut() {
            Some((last, pts)) if *last == id => pts.push(Complex64::new(x, y)),
            _ => curves.push((id, vec![Complex64::new(x, y)])),
        }
    }
    if curves.is_empty() {
        return Err(Error::InvalidData("no points found".into()));
    }
    Ok(curves.into_iter().map(|(_, p)| p).collect())
}

fn truncate(s: &str) -> String {
    s.chars().take(60).collect()
}

fn parse_json(text: &str) -> Result<Vec<Vec<Complex64>>> {
    let v: serde_json::Value =
        serde_json::from_str(text).map_err(|e| Error::InvalidData(format!("JSON: {e}")))?;
    let points = |v: &serde_json::Value| -> Result<Vec<Complex64>> {
        let arr = v
            .as_array()
            .ok_or_else(|| Error::InvalidData("JSON: expected an array of [x, y] pairs".into()))?;
        if arr.len() > MAX_POINTS {
            return Err(Error::InvalidData(format!(
                "more than {MAX_POINTS} points in one curve"
            )));
        }
        arr.iter()
            .enumerate()
            .map(|(i, p)| {
                let xy = p.as_array().filter(|a| a.len() == 2);
                let x = xy.and_then(|a| a[0].as_f64());
                let y = xy.and_then(|a| a[1].as_f64());
                match (x, y) {
                    (Some(x), Some(y)) if x.is_finite() && y.is_finite() => {
                        Ok(Complex64::new(x, y))
                    }
                    _ => Err(Error::InvalidData(format!(
                        "JSON: point {i} is not a pair of finite numbers"
                    ))),
                }
            })
            .collect()
    };
    let curves = if let Some(c) = v.get("curves") {
        c.as_array()
            .ok_or_else(|| Error::InvalidData("JSON: `curves` must be an array".into()))?
            .iter()
            .map(points)
            .collect::<Result<Vec<_>>>()?
    } else if let Some(p) = v.get("points") {
        vec![points(p)?]
    } else {
        vec![points(&v)?]
    };
    if curves.iter().all(|c| c.is_empty()) {
        return Err(Error::InvalidData("no points found".into()));
    }
    Ok(curves)
}

/// Where a user's curve lives and where it goes.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum CurveDomain {
    /// Chordal in H, from the real line (its first point) to ∞.
    HalfPlane,
    /// Chordal in the unit disk, from the first point (on the circle) to the boundary point
    /// `e^{i·target}`; unzipped in H after the Möbius map sending the start to 0, the target to
    /// ∞ and the centre to a point of modulus 1.
    Disk {
        /// Angle of the target boundary point.
        target: f64,
    },
    /// Radial in the unit disk, from the first point (on the circle) to the interior point
    /// `target` (unzipped after the disk automorphism sending it to 0).
    DiskRadial {
        /// The interior target point `(x, y)`.
        target: (f64, f64),
    },
}

/// A cleaned curve in its unzipping frame.
#[derive(Debug, Clone, Serialize)]
pub struct PreparedCurve {
    /// Points in the unzipping frame (H starting at 0, or D starting on the circle).
    #[serde(skip)]
    pub points: Vec<Complex64>,
    /// For each kept point, its index in the input.
    #[serde(skip)]
    pub input_index: Vec<usize>,
    /// Number of points read.
    pub points_read: usize,
    /// Consecutive duplicates dropped.
    pub duplicates_dropped: usize,
    /// Points dropped outside the disk before the curve enters it or after it leaves (disk
    /// domains), or at and after the radial target.
    pub trimmed: usize,
    /// How far the first point was from the boundary (in the input's units) before it was moved
    /// onto it.
    pub start_gap: f64,
    /// The shift applied to the start (H: the real translation; D: the start's angle).
    pub start_shift: f64,
    /// A self-crossing of the polyline, if one was found: `(segment i, segment j, x, y)` with
    /// segment i joining input points i and i+1.
    pub crossing: Option<(usize, usize, f64, f64)>,
}

/// Clean a curve and map it to its unzipping frame.
///
/// # Errors
/// [`Error::InvalidData`] naming the point when a point lies outside the domain (below the real
/// line in H, outside the closed unit disk in D) or when fewer than 2 distinct points remain;
/// [`Error::InvalidParameter`] for a radial target outside the open disk.
pub fn prepare(points: &[Complex64], domain: CurveDomain) -> Result<PreparedCurve> {
    prepare_with(points, domain, 1e-9)
}

/// As [`prepare`], with points up to `tolerance` outside the domain (below the real line, or
/// outside the circle) moved onto its boundary, for lattice curves whose domain is a jagged
/// approximation of the disk. Points farther out are still an error.
///
/// # Errors
/// As [`prepare`].
pub fn prepare_with(
    points: &[Complex64],
    domain: CurveDomain,
    tolerance: f64,
) -> Result<PreparedCurve> {
    let tol = tolerance.max(0.0);
    let points: Vec<Complex64> = points
        .iter()
        .map(|&z| match domain {
            CurveDomain::HalfPlane if z.im < 0.0 && z.im >= -tol => Complex64::new(z.re, 0.0),
            CurveDomain::Disk { .. } | CurveDomain::DiskRadial { .. }
                if z.norm() > 1.0 && z.norm() <= 1.0 + tol =>
            {
                z / z.norm()
            }
            _ => z,
        })
        .collect();
    let points = &points[..];
    let mut kept = Vec::with_capacity(points.len());
    let mut index = Vec::with_capacity(points.len());
    let mut dups = 0;
    for (i, &z) in points.iter().enumerate() {
        if kept.last() == Some(&z) {
            dups += 1;
            continue;
        }
        kept.push(z);
        index.push(i);
    }
    let mut trimmed = 0;
    if !matches!(domain, CurveDomain::HalfPlane) {
        // Lattice curves often start and end just outside the circle: keep the part inside,
        // started from the radial projection of the last point before it.
        if let Some(f) = kept.iter().position(|z| z.norm() < 1.0 - 1e-12) {
            let l = kept
                .iter()
                .rposition(|z| z.norm() < 1.0 - 1e-12)
                .unwrap_or(f);
            let start = if f > 0 { kept[f - 1] } else { kept[f] };
            let start = if start.norm() > 0.0 {
                start / start.norm()
            } else {
                Complex64::new(1.0, 0.0)
            };
            trimmed = kept.len() - (l + 1 - f);
            let mut k2 = vec![start];
            let mut i2 = vec![index[f.saturating_sub(1)]];
            if f == 0 {
                k2.extend_from_slice(&kept[1..=l]);
                i2.extend_from_slice(&index[1..=l]);
            } else {
                k2.extend_from_slice(&kept[f..=l]);
                i2.extend_from_slice(&index[f..=l]);
            }
            kept = k2;
            index = i2;
        }
        if let CurveDomain::DiskRadial { target } = domain {
            let c = Complex64::new(target.0, target.1);
            if let Some(hit) = kept.iter().skip(1).position(|z| (z - c).norm() < 1e-9) {
                trimmed += kept.len() - (hit + 1);
                kept.truncate(hit + 1);
                index.truncate(hit + 1);
            }
        }
    }
    if kept.len() < 2 {
        return Err(Error::InvalidData(format!(
            "a curve needs at least 2 distinct points, got {}",
            kept.len()
        )));
    }
    let scale = kept
        .iter()
        .map(|z| (z - kept[0]).norm())
        .fold(0.0, f64::max)
        .max(1e-300);
    let crossing = find_crossing(&kept).map(|(i, j, z)| (index[i], index[j], z.re, z.im));
    let (gap, shift, out) = match domain {
        CurveDomain::HalfPlane => {
            for (k, z) in kept.iter().enumerate().skip(1) {
                if z.im < -1e-12 * scale {
                    return Err(Error::InvalidData(format!(
                        "point {} = ({}, {}) lies below the real line",
                        index[k], z.re, z.im
                    )));
                }
            }
            let s = kept[0].re;
            let gap = kept[0].im.abs();
            let mut out: Vec<Complex64> = kept
                .iter()
                .map(|z| Complex64::new(z.re - s, z.im.max(0.0)))
                .collect();
            out[0] = Complex64::new(0.0, 0.0);
            (gap, s, out)
        }
        CurveDomain::Disk { target } => {
            check_disk(&kept, &index)?;
            let a = Complex64::from_polar(1.0, kept[0].arg());
            let b = Complex64::from_polar(1.0, target);
            if (a - b).norm() < 1e-9 {
                return Err(Error::param(
                    "target angle",
                    target,
                    "a boundary point different from the curve's start",
                ));
            }
            let gap = 1.0 - kept[0].norm();
            let map = disk_to_half_plane(a, b);
            let mut out: Vec<Complex64> = kept
                .iter()
                .map(|&z| {
                    let w = map(z);
                    Complex64::new(w.re, w.im.max(0.0))
                })
                .collect();
            out[0] = Complex64::new(0.0, 0.0);
            (gap, kept[0].arg(), out)
        }
        CurveDomain::DiskRadial { target } => {
            check_disk(&kept, &index)?;
            let c = Complex64::new(target.0, target.1);
            if c.norm() >= 1.0 || c.norm().is_nan() {
                return Err(Error::param(
                    "target",
                    format!("({}, {})", target.0, target.1),
                    "a point inside the open unit disk",
                ));
            }
            let gap = 1.0 - kept[0].norm();
            let mut out: Vec<Complex64> = kept
                .iter()
                .map(|&z| {
                    let w = (z - c) / (1.0 - c.conj() * z);
                    if w.norm() > 1.0 {
                        w / w.norm()
                    } else {
                        w
                    }
                })
                .collect();
            let n0 = out[0].norm();
            out[0] /= n0;
            (gap, kept[0].arg(), out)
        }
    };
    Ok(PreparedCurve {
        points: out,
        input_index: index,
        points_read: points.len(),
        duplicates_dropped: dups,
        trimmed,
        start_gap: gap,
        start_shift: shift,
        crossing,
    })
}

fn check_disk(kept: &[Complex64], index: &[usize]) -> Result<()> {
    for (k, z) in kept.iter().enumerate() {
        if z.norm() > 1.0 + 1e-9 {
            return Err(Error::InvalidData(format!(
                "point {} = ({}, {}) lies outside the unit disk (|z| = {})",
                index[k],
                z.re,
                z.im,
                z.norm()
            )));
        }
    }
    Ok(())
}

/// The Möbius map of the unit disk onto H sending the boundary point `a` to 0, the boundary
/// point `b` to ∞, and 0 to a point of modulus 1.
pub fn disk_to_half_plane(a: Complex64, b: Complex64) -> impl Fn(Complex64) -> Complex64 {
    // m(z) = (z − a)/(z − b) sends the circle to a line through 0; rotate it onto R with D above.
    let m = move |z: Complex64| (z - a) / (z - b);
    let probe = m(Complex64::new(0.0, 0.0));
    // Direction of the image line at a: m'(a)·(i a) = i a/(a − b).
    let dir = Complex64::new(0.0, 1.0) * a / (a - b);
    let mut u = dir.conj() / dir.norm();
    if (u * probe).im < 0.0 {
        u = -u;
    }
    let k = 1.0 / (u * probe).norm();
    move |z| u * k * m(z)
}

/// The inverse of [`disk_to_half_plane`]: H onto the unit disk, 0 ↦ `a`, ∞ ↦ `b`.
pub fn half_plane_to_disk(a: Complex64, b: Complex64) -> impl Fn(Complex64) -> Complex64 {
    let f = disk_to_half_plane(a, b);
    // f(z) = U (z − a)/(z − b) with U = f(0)·b/a (from z = 0), so z = (w b − U a)/(w − U).
    let u = f(Complex64::new(0.0, 0.0)) * b / a;
    move |w| (w * b - u * a) / (w - u)
}

/// The first self-crossing of a polyline found, as (segment i, segment j > i + 1, point), using
/// a uniform grid of cells about the mean segment length (segments sharing an end point are not
/// compared). Returns `None` for a simple polyline.
pub fn find_crossing(p: &[Complex64]) -> Option<(usize, usize, Complex64)> {
    let n = p.len();
    if n < 4 {
        return None;
    }
    let (mut lo, mut hi) = (p[0], p[0]);
    let mut total = 0.0;
    for k in 0..n {
        lo = Complex64::new(lo.re.min(p[k].re), lo.im.min(p[k].im));
        hi = Complex64::new(hi.re.max(p[k].re), hi.im.max(p[k].im));
        if k + 1 < n {
            total += (p[k + 1] - p[k]).norm();
        }
    }
    let cell = (total / (n - 1) as f64).max(1e-300);
    let nx = (((hi.re - lo.re) / cell) as usize + 1).min(1 << 12);
    let ny = (((hi.im - lo.im) / cell) as usize + 1).min(1 << 12);
    let cw = (hi.re - lo.re) / nx as f64 + 1e-300;
    let ch = (hi.im - lo.im) / ny as f64 + 1e-300;
    let mut grid: std::collections::HashMap<(usize, usize), Vec<usize>> =
        std::collections::HashMap::new();
    let cell_of = |z: Complex64| {
        (
            (((z.re - lo.re) / cw) as usize).min(nx - 1),
            (((z.im - lo.im) / ch) as usize).min(ny - 1),
        )
    };
    let mut best: Option<(usize, usize, Complex64)> = None;
    for i in 0..n - 1 {
        let (a, b) = (cell_of(p[i]), cell_of(p[i + 1]));
        let (x0, x1) = (a.0.min(b.0), a.0.max(b.0));
        let (y0, y1) = (a.1.min(b.1), a.1.max(b.1));
        if (x1 - x0 + 1) * (y1 - y0 + 1) > 4096 {
            continue; // a very long segment; checking it would cost too much
        }
        for x in x0..=x1 {
            for y in y0..=y1 {
                let list = grid.entry((x, y)).or_default();
                for &j in list.iter() {
                    if j + 1 >= i {
                        continue;
                    }
                    if let Some(z) = segment_crossing(p[j], p[j + 1], p[i], p[i + 1]) {
                        if best.is_none_or(|(bi, _, _)| i < bi) {
                            best = Some((j, i, z));
                        }
                    }
                }
                list.push(i);
            }
        }
        if best.is_some() {
            return best;
        }
    }
    best
}

/// Crossing point of segments [a, b] and [c, d] (proper or touching), if any.
pub(crate) fn segment_crossing(
    a: Complex64,
    b: Complex64,
    c: Complex64,
    d: Complex64,
) -> Option<Complex64> {
    let cross = |u: Complex64, v: Complex64| u.re * v.im - u.im * v.re;
    let r = b - a;
    let s = d - c;
    let den = cross(r, s);
    if den == 0.0 {
        return None;
    }
    let t = cross(c - a, s) / den;
    let u = cross(c - a, r) / den;
    if (0.0..=1.0).contains(&t) && (0.0..=1.0).contains(&u) {
        Some(a + r * t)
    } else {
        None
    }
}
