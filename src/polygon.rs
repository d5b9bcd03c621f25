//! Conformal radii of the interiors of closed polygons, and the nesting of user loops around a
//! point (DESIGN §9).
//!
//! The interior of a polygon `v_0 … v_{n−1}` (oriented counterclockwise here) is mapped onto H by
//! the zipper (Marshall & Rohde, SIAM J. Numer. Anal. 2007):
//! 1. `φ_0(z) = i √((z − v_1)/(z − v_0))` maps the plane minus the edge `[v_0, v_1]` onto H,
//!    with `v_1 ↦ 0` and `v_0 ↦ ∞`;
//! 2. the images of `v_2, …` are unzipped with tilted slits ([`crate::unzip`]), the last edge
//!    `[v_{n−1}, v_0]` with extra points placed geometrically towards `v_0`, so that what is left
//!    of it is a curve to ∞ of negligible harmonic measure;
//! 3. that remainder is taken as the ray from the last image `W` at the edge's asymptotic angle
//!    `βπ` (`β = arg(i √((v_0 − v_1)/(v_{n−1} − v_0)))/π`), and the wedge on its left (the
//!    interior, for a counterclockwise polygon) is opened onto H by `u ↦ u^{1/(1−β)}`.
//!
//! With `Φ` the composed map, the conformal radius seen from `z_0` is
//! `CR = 2 Im Φ(z_0) / |Φ'(z_0)|` (conformal covariance; `CR(H, w) = 2 Im w`).
//!
//! The zipper's domain is bounded by a curve through the points, not the polygon's straight
//! edges; edges are subdivided into `refine` pieces, and the result at `refine` is compared
//! with the result at `2·refine`: their difference is reported as the error estimate and the
//! finer value as the result. The composition uses [`crate::forward_tree`].

use crate::error::{Error, Result};
use crate::loewner::{Method, StepKind};
use crate::unzip::ChordalUnzip;
use num_complex::Complex64;
use serde::Serialize;
use std::f64::consts::PI;

/// Extra points on the closing edge, at distances `2^{−k}` of its length from `v_0`.
const CLOSING_POINTS: i32 = 3;

/// Signed area of a closed polygon (positive when counterclockwise).
pub fn signed_area(v: &[Complex64]) -> f64 {
    let n = v.len();
    (0..n)
        .map(|k| {
            let (a, b) = (v[k], v[(k + 1) % n]);
            a.re * b.im - a.im * b.re
        })
        .sum::<f64>()
        / 2.0
}

/// Winding number of the closed polygon around `z` (0 outside; ±1 inside a simple polygon).
pub fn winding_number(v: &[Complex64], z: Complex64) -> i64 {
    let n = v.len();
    let mut w = 0i64;
    for k in 0..n {
        let (a, b) = (v[k] - z, v[(k + 1) % n] - z);
        if a.im <= 0.0 {
            if b.im > 0.0 && a.re * b.im - a.im * b.re > 0.0 {
                w += 1;
            }
        } else if b.im <= 0.0 && a.re * b.im - a.im * b.re < 0.0 {
            w -= 1;
        }
    }
    w
}

/// A conformal radius with its error estimate.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct RadiusEstimate {
    /// CR of the polygon's interior seen from the point (finer resolution).
    pub value: f64,
    /// |CR(refine) − CR(2·refine)|: the estimated discretisation error.
    pub error_estimate: f64,
    /// Points unzipped at the finer resolution.
    pub points: usize,
    /// Boundary points whose image was already on the real line when their turn came (parts
    /// behind narrow necks, crowded in double precision), at the finer resolution; they were
    /// not unzipped.
    pub crowded: usize,
}

/// Clean a polygon: drop a repeated closing vertex and consecutive duplicates, orient it
/// counterclockwise.
///
/// # Errors
/// [`Error::InvalidData`] for fewer than 3 distinct vertices, a non-finite vertex or zero area.
pub fn clean_polygon(vertices: &[Complex64]) -> Result<Vec<Complex64>> {
    let mut v: Vec<Complex64> = Vec::with_capacity(vertices.len());
    for (i, &z) in vertices.iter().enumerate() {
        if !(z.re.is_finite() && z.im.is_finite()) {
            return Err(Error::InvalidData(format!(
                "vertex {i} = ({}, {}) is not finite",
                z.re, z.im
            )));
        }
        if v.last() != Some(&z) {
            v.push(z);
        }
    }
    while v.len() > 1 && v.first() == v.last() {
        v.pop();
    }
    if v.len() < 3 {
        return Err(Error::InvalidData(format!(
            "a loop needs at least 3 distinct vertices, got {}",
            v.len()
        )));
    }
    let area = signed_area(&v);
    if area == 0.0 {
        return Err(Error::InvalidData("the loop encloses no area".into()));
    }
    if area < 0.0 {
        v.reverse();
    }
    Ok(v)
}

/// Conformal radius of the interior of the closed polygon `vertices` seen from `z0`, computed at
/// `refine` and `2·refine` subdivisions per edge (see the module docs).
///
/// # Errors
/// [`Error::InvalidParameter`] if `refine` is 0 or above 64 or `z0` is not inside the polygon;
/// [`Error::InvalidData`] for a degenerate polygon; [`Error::Numerical`] if the zipper loses the
/// point (a self-crossing polygon, for example).
pub fn conformal_radius(
    vertices: &[Complex64],
    z0: Complex64,
    refine: usize,
) -> Result<RadiusEstimate> {
    let w = zipper_polygon(vertices, z0, refine)?;
    let coarse = zipper_radius(&w, z0, refine)?;
    let (fine, n, crowded) = zipper_radius_counted(&w, z0, 2 * refine)?;
    Ok(RadiusEstimate {
        value: fine,
        error_estimate: (fine - coarse).abs(),
        points: n,
        crowded,
    })
}

/// The cleaned, counterclockwise polygon rotated to start at the vertex nearest `z0`, after the
/// checks shared by the radius functions.
fn zipper_polygon(vertices: &[Complex64], z0: Complex64, refine: usize) -> Result<Vec<Complex64>> {
    if refine == 0 || refine > 64 {
        return Err(Error::param("refine", refine, "an integer in [1, 64]"));
    }
    let mut v = clean_polygon(vertices)?;
    if winding_number(&v, z0) == 0 {
        return Err(Error::param(
            "point",
            format!("({}, {})", z0.re, z0.im),
            "a point inside the loop",
        ));
    }
    // Start the zipper at the vertex nearest z0: parts of the loop behind narrow necks (lattice
    // loops have many) are then crowded, not z0 itself, whose image would otherwise underflow.
    let start = (0..v.len())
        .min_by(|&a, &b| (v[a] - z0).norm().total_cmp(&(v[b] - z0).norm()))
        .unwrap_or(0);
    v.rotate_left(start);
    Ok(v)
}

/// Conformal radius as [`conformal_radius`], then Richardson-extrapolated from `refine`,
/// `2·refine` and `4·refine` with the observed order `p = log₂((r₁ − r₂)/(r₂ − r₃))` (common
/// practice): corners make the zipper converge at a fractional order (about 1.5 for right
/// angles), which extrapolation removes. The error estimate is the size of the correction.
/// Falls back to the finest value when the three values do not converge monotonically.
///
/// # Errors
/// As [`conformal_radius`] (with `refine` up to 64).
pub fn conformal_radius_extrapolated(
    vertices: &[Complex64],
    z0: Complex64,
    refine: usize,
) -> Result<RadiusEstimate> {
    let w = zipper_polygon(vertices, z0, refine)?;
    let r1 = zipper_radius(&w, z0, refine)?;
    let r2 = zipper_radius(&w, z0, 2 * refine)?;
    let (r3, n, crowded) = zipper_radius_counted(&w, z0, 4 * refine)?;
    let (d1, d2) = (r1 - r2, r2 - r3);
    if d1 * d2 > 0.0 && d2.abs() < d1.abs() {
        let f = 2f64.powf((d1 / d2).log2());
        let ext = r3 + (r3 - r2) / (f - 1.0);
        return Ok(RadiusEstimate {
            value: ext,
            error_estimate: (ext - r3).abs(),
            points: n,
            crowded,
        });
    }
    Ok(RadiusEstimate {
        value: r3,
        error_estimate: d2.abs().max(d1.abs()),
        points: n,
        crowded,
    })
}

fn zipper_radius(v: &[Complex64], z0: Complex64, refine: usize) -> Result<f64> {
    zipper_radius_counted(v, z0, refine).map(|r| r.0)
}

fn zipper_radius_counted(
    v: &[Complex64],
    z0: Complex64,
    refine: usize,
) -> Result<(f64, usize, usize)> {
    let zip = PolygonZipper::new(v, refine)?;
    let (out, d) = zip.map_with_derivative(z0).ok_or_else(|| {
        Error::Numerical(format!(
            "the zipper lost the point ({}, {}): is the loop simple?",
            z0.re, z0.im
        ))
    })?;
    Ok((2.0 * out.im / d.norm(), zip.points, zip.skipped_points()))
}

/// The zipper map of a counterclockwise polygon's interior onto H (module docs): `v_0 ↦ ∞`,
/// `v_1 ↦` a real point, boundary to the real line.
#[derive(Debug, Clone)]
pub struct PolygonZipper {
    v0: Complex64,
    v1: Complex64,
    unzip: ChordalUnzip,
    w_end: f64,
    beta: f64,
    points: usize,
}

impl PolygonZipper {
    /// Build the map for the counterclockwise vertices `v` (at least 3, distinct consecutive),
    /// each edge cut into `refine` pieces.
    ///
    /// # Errors
    /// [`Error::Numerical`] if the unzip fails (a self-crossing polygon, for example).
    pub fn new(v: &[Complex64], refine: usize) -> Result<Self> {
        let n = v.len();
        if n < 3 {
            return Err(Error::InvalidData(format!(
                "a polygon needs at least 3 vertices, got {n}"
            )));
        }
        let (v0, v1) = (v[0], v[1]);
        // Boundary points after v_1, in order, ending on the closing edge towards v_0.
        let mut pts: Vec<Complex64> = Vec::with_capacity(n * refine + CLOSING_POINTS as usize);
        for k in 1..n {
            let (a, b) = (v[k], v[(k + 1) % n]);
            for j in 1..=refine {
                if k == n - 1 && j == refine {
                    break; // v_0 itself goes to ∞
                }
                pts.push(a + (b - a) * (j as f64 / refine as f64));
            }
        }
        let last = *pts.last().unwrap_or(&v[n - 1]);
        let d = last - v0;
        for k in 1..=CLOSING_POINTS {
            pts.push(v0 + d * 0.5f64.powi(k));
        }
        let mut images: Vec<Complex64> = Vec::with_capacity(pts.len() + 1);
        images.push(Complex64::new(0.0, 0.0));
        for &p in &pts {
            let z = phi0(v0, v1, p).0;
            images.push(Complex64::new(z.re, z.im.max(0.0)));
        }
        let unzip = ChordalUnzip::new(&images, StepKind::Tilted, Method::Fast)?;
        let w_end = *unzip.result.driving.last().unwrap_or(&0.0);
        let i = Complex64::new(0.0, 1.0);
        let beta = (i * ((v0 - v1) / (last - v0)).sqrt()).arg() / PI;
        if !(beta > 0.0 && beta < 1.0) {
            return Err(Error::Numerical(
                "the zipper's closing edge left the half-plane: is the polygon simple?".into(),
            ));
        }
        Ok(PolygonZipper {
            v0,
            v1,
            unzip,
            w_end,
            beta,
            points: images.len(),
        })
    }

    /// Image in H of an interior point and the map's derivative there; `None` if the point's
    /// image falls outside the wedge that the interior must map to (a point outside the
    /// polygon, or a polygon the zipper cannot follow).
    pub fn map_with_derivative(&self, z: Complex64) -> Option<(Complex64, Complex64)> {
        let (a, da) = phi0(self.v0, self.v1, z);
        let (b, db) = self.unzip.map_with_derivative(a);
        let rot = Complex64::from_polar(1.0, -self.beta * PI);
        let u = (b - self.w_end) * rot;
        let gamma = 1.0 / (1.0 - self.beta);
        let arg = u.arg();
        if !(arg > 0.0 && arg < (1.0 - self.beta) * PI) {
            return None;
        }
        let out = (u.ln() * gamma).exp();
        let dout = out * gamma / u * rot;
        Some((out, da * db * dout))
    }

    /// Number of boundary points unzipped.
    pub fn points(&self) -> usize {
        self.points
    }

    /// Boundary points whose image was already on the real line when their turn came (crowding:
    /// deep narrow fjords), and so were not unzipped.
    pub fn skipped_points(&self) -> usize {
        self.unzip.result.skipped.len()
    }
}

/// `φ_0(z) = i √((z − v_1)/(z − v_0))` and its derivative.
fn phi0(v0: Complex64, v1: Complex64, z: Complex64) -> (Complex64, Complex64) {
    let r = (z - v1) / (z - v0);
    let s = r.sqrt();
    let i = Complex64::new(0.0, 1.0);
    // d/dz: i/(2√r) · (v_1 − v_0)/(z − v_0)².
    (i * s, i / (2.0 * s) * (v1 - v0) / ((z - v0) * (z - v0)))
}

/// The nearest point of the polygon's boundary to `z`, as (edge index k of [v_k, v_{k+1}],
/// parameter in [0, 1], the point).
pub fn nearest_boundary_point(v: &[Complex64], z: Complex64) -> (usize, f64, Complex64) {
    let n = v.len();
    let mut best = (0, 0.0, v[0], f64::INFINITY);
    for k in 0..n {
        let (a, b) = (v[k], v[(k + 1) % n]);
        let d = b - a;
        let t = (((z - a) * d.conj()).re / d.norm_sqr().max(1e-300)).clamp(0.0, 1.0);
        let p = a + d * t;
        let dist = (z - p).norm();
        if dist < best.3 {
            best = (k, t, p, dist);
        }
    }
    (best.0, best.1, best.2)
}

/// A conformal map of a polygonal domain onto H sending the boundary point `a` to 0 and the
/// boundary point `b` to ∞ (the zipper map, then an affine map of H), scaled so that the
/// reference point has modulus 1. Used to measure chordal curves from `a` to `b` in a domain
/// given by the user.
#[derive(Debug, Clone)]
pub struct PolygonToHalfPlane {
    zip: PolygonZipper,
    shift: f64,
    scale: f64,
}

impl PolygonToHalfPlane {
    /// The map for the polygon `vertices` (either orientation) with `a`, `b` projected onto its
    /// boundary, `reference` an interior point (its image gets modulus 1), `refine` pieces per
    /// edge.
    ///
    /// # Errors
    /// [`Error::InvalidData`] for a degenerate polygon; [`Error::InvalidParameter`] if `a` and
    /// `b` project to the same boundary point or `reference` is not inside;
    /// [`Error::Numerical`] if the zipper fails.
    pub fn new(
        vertices: &[Complex64],
        a: Complex64,
        b: Complex64,
        reference: Complex64,
        refine: usize,
    ) -> Result<Self> {
        let mut v = clean_polygon(vertices)?;
        if winding_number(&v, reference) == 0 {
            return Err(Error::param(
                "reference point",
                format!("({}, {})", reference.re, reference.im),
                "a point inside the domain",
            ));
        }
        let (_, _, pa) = nearest_boundary_point(&v, a);
        let (kb, tb, pb) = nearest_boundary_point(&v, b);
        if (pa - pb).norm() < 1e-12 * (1.0 + pa.norm()) {
            return Err(Error::param(
                "curve end",
                format!("({}, {})", b.re, b.im),
                "a boundary point different from the start",
            ));
        }
        // Put b first (v_0 ↦ ∞), inserting it as a vertex when it is inside an edge.
        let n = v.len();
        let mut w = Vec::with_capacity(n + 1);
        if tb <= 0.0 {
            v.rotate_left(kb);
        } else if tb >= 1.0 {
            v.rotate_left((kb + 1) % n);
        } else {
            v.rotate_left(kb + 1);
            w.push(pb);
        }
        w.extend_from_slice(&v);
        let zip = PolygonZipper::new(&w, refine)?;
        // a's image: the real part of the image of a point just inside the boundary at a.
        let (k, _, pa) = nearest_boundary_point(&w, pa);
        let edge = w[(k + 1) % w.len()] - w[k];
        let inward = Complex64::new(0.0, 1.0) * edge / edge.norm().max(1e-300);
        let diam = w.iter().map(|z| (z - w[0]).norm()).fold(0.0, f64::max);
        let probe = pa + inward * (1e-9 * diam);
        let shift = zip
            .map_with_derivative(probe)
            .ok_or_else(|| Error::Numerical("the zipper lost the curve's start".into()))?
            .0
            .re;
        let r = zip
            .map_with_derivative(reference)
            .ok_or_else(|| Error::Numerical("the zipper lost the reference point".into()))?
            .0;
        let scale = 1.0 / (r - shift).norm().max(1e-300);
        Ok(PolygonToHalfPlane { zip, shift, scale })
    }

    /// Image of an interior point (None outside the domain).
    pub fn map(&self, z: Complex64) -> Option<Complex64> {
        self.map_with_derivative(z).map(|(w, _)| w)
    }

    /// Image of an interior point and the map's derivative there (None outside the domain).
    pub fn map_with_derivative(&self, z: Complex64) -> Option<(Complex64, Complex64)> {
        self.zip
            .map_with_derivative(z)
            .map(|(w, d)| ((w - self.shift) * self.scale, d * self.scale))
    }
}

/// A loop surrounding a point, with its conformal radius seen from the point.
#[derive(Debug, Clone, Serialize)]
pub struct SurroundingLoop {
    /// Index of the loop in the input.
    pub loop_index: usize,
    /// Nesting depth among the surrounding loops (1 = outermost, by conformal radius).
    pub depth: usize,
    /// Conformal radius of the loop's interior seen from the point.
    pub conformal_radius: RadiusEstimate,
}

/// The loops that surround `z0` (winding number ≠ 0), with their conformal radii, outermost
/// (largest radius) first.
///
/// # Errors
/// As [`conformal_radius`] for each surrounding loop.
pub fn surrounding_loops(
    loops: &[Vec<Complex64>],
    z0: Complex64,
    refine: usize,
) -> Result<Vec<SurroundingLoop>> {
    let mut out = Vec::new();
    for (k, l) in loops.iter().enumerate() {
        if l.len() < 3 || winding_number(l, z0) == 0 {
            continue;
        }
        let cr = conformal_radius(l, z0, refine)?;
        out.push(SurroundingLoop {
            loop_index: k,
            depth: 0,
            conformal_radius: cr,
        });
    }
    out.sort_by(|a, b| {
        b.conformal_radius
            .value
            .total_cmp(&a.conformal_radius.value)
    });
    for (d, l) in out.iter_mut().enumerate() {
        l.depth = d + 1;
    }
    Ok(out)
}
