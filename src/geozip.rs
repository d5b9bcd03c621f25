//! The geodesic zipper: a conformal map of the interior of a closed polygon onto the unit disk,
//! with explicit forward and inverse maps (Marshall & Rohde, SIAM J. Numer. Anal. 2007, the
//! "geodesic algorithm").
//!
//! For counterclockwise vertices `z_0, …, z_n`:
//! 1. `φ(z) = i √((z − z_1)/(z − z_0))` sends the plane minus the edge `[z_0, z_1]` into H,
//!    `z_1 ↦ 0`, `z_0 ↦ ∞`;
//! 2. each later vertex image `a` is unzipped by
//!    `f_a(z) = √((z/(1 − z/c))² + d²)`, `c = |a|²/Re a`, `d = |a|²/Im a`, which opens the
//!    hyperbolic geodesic from 0 to `a` (an arc of a circle orthogonal to R) onto the real line,
//!    `a ↦ 0`; its inverse is `w ↦ s/(1 + s/c)`, `s = √(w² − d²)`;
//! 3. the last edge, from 0 to ∞, is then the imaginary half-axis and `u ↦ ±u²` opens the
//!    quadrant that holds the interior onto H;
//! 4. the Möbius map `u ↦ (u − a)/(u − ā)`, `a` the image of the chosen centre, ends in D with
//!    the centre at 0.
//!
//! The domain mapped exactly is bounded by the curve through the vertices whose pieces are
//! geodesics in the intermediate frames; it converges to the polygon as the vertices get dense.
//! Every map has a closed-form inverse, so points of D are taken back into the polygon without
//! iteration. Building costs `O(n²)` square roots, each evaluation `O(n)`.

use crate::error::{Error, Result};
use num_complex::Complex64;

const I: Complex64 = Complex64 { re: 0.0, im: 1.0 };

/// Principal square root by the algebraic formula (two real square roots), the same branch as
/// `Complex64::sqrt` (cut along the negative reals, `−0` imaginary parts below it) at a
/// fraction of its cost (`sqrt` through the polar form spent 70% of a configuration's time in
/// `hypot`, `atan2` and `sincos`).
#[inline]
pub(crate) fn csqrt(z: Complex64) -> Complex64 {
    let (x, y) = (z.re, z.im);
    if x == 0.0 && y == 0.0 {
        return Complex64::new(0.0, y);
    }
    let r = (x * x + y * y).sqrt();
    let r = if r.is_finite() && r > 0.0 {
        r
    } else {
        x.hypot(y)
    };
    let t = (0.5 * (x.abs() + r)).sqrt();
    if x >= 0.0 {
        Complex64::new(t, y / (2.0 * t))
    } else {
        Complex64::new(y.abs() / (2.0 * t), t.copysign(y))
    }
}

/// Square root in the closed upper half-plane; on the real axis the sign follows `tie`'s real
/// part (the side of the slit the point came from).
#[inline]
fn sqrt_upper(x: Complex64, tie: Complex64) -> Complex64 {
    let s = csqrt(x);
    if s.im < 0.0 || (s.im == 0.0 && tie.re < 0.0 && s.re > 0.0) {
        -s
    } else {
        s
    }
}

/// Opens the straightened slit `[0, i·d]`: `√(w² + d²)` in the closed upper half-plane. The
/// interior of the polygon lies on the slit's left (negative reals), so a point at the slit's
/// base, within rounding of 0 (a vertex already unzipped sits there, up to the √ε ≈ 1e-8 that
/// the cancellation in its own unzip leaves; vertex images have modulus about 1 by the
/// dilations, while d is huge for a vertex image near the real line) goes to
/// `−d`, the interior side; the principal root would send it to `+d`, the exterior side, and a
/// boundary vertex would be mapped to a point of the circle far from where the interior meets it.
#[inline]
fn open_slit(w: Complex64, d: f64) -> Complex64 {
    let x = w * w + d * d;
    let tol = 1e-7 * d.min(1.0);
    if w.norm_sqr() <= tol * tol {
        let s = csqrt(x);
        return Complex64::new(-s.re.abs(), s.im.abs());
    }
    sqrt_upper(x, w)
}

/// The conformal map of a polygon's interior onto D (module docs), centre ↦ 0.
#[derive(Debug, Clone)]
pub struct GeodesicZipper {
    z0: Complex64,
    z1: Complex64,
    /// `(1/c, d, s, 1/s)` of each unzipped vertex, in order: `f_a` followed by the dilation
    /// `s`, which keeps the next vertex's image at modulus 1 (without it the images grow
    /// geometrically and overflow after a few hundred vertices).
    maps: Vec<(f64, f64, f64, f64)>,
    /// `+1` when the interior lies in the first quadrant before the last map, `−1` in the
    /// second.
    quadrant: f64,
    /// Image in H of the centre.
    a: Complex64,
    skipped: usize,
}

impl GeodesicZipper {
    /// The map of the interior of the closed polygon `vertices` (either orientation, first
    /// vertex not repeated) onto D with `centre ↦ 0`.
    ///
    /// Errors: [`Error::InvalidData`] with fewer than 3 vertices or no enclosed area;
    /// [`Error::Numerical`] when the centre is not mapped into H (a centre outside the polygon,
    /// or a self-crossing polygon) or more than a tenth of the vertices cannot be unzipped.
    pub fn new(vertices: &[Complex64], centre: Complex64) -> Result<Self> {
        let mut v: Vec<Complex64> = Vec::with_capacity(vertices.len());
        for &z in vertices {
            if v.last().is_none_or(|&l: &Complex64| (l - z).norm() > 0.0) {
                v.push(z);
            }
        }
        while v.len() > 1 && (v[0] - v[v.len() - 1]).norm() == 0.0 {
            v.pop();
        }
        if v.len() < 3 {
            return Err(Error::InvalidData(format!(
                "a polygon needs at least 3 distinct vertices, got {}",
                v.len()
            )));
        }
        let area = crate::polygon::signed_area(&v);
        if area == 0.0 {
            return Err(Error::InvalidData("the polygon encloses no area".into()));
        }
        if area < 0.0 {
            v.reverse();
        }
        if crate::polygon::winding_number(&v, centre) == 0 {
            return Err(Error::Numerical(format!(
                "the centre ({}, {}) is not inside the polygon",
                centre.re, centre.im
            )));
        }
        // Start at the vertex nearest the centre. The first vertex goes to ∞ and the last
        // edge's end to 0 in the half-plane frame; were they in a fjord hidden from the centre,
        // the whole visible boundary would be squeezed about the centre's image, which would
        // lie within 1e-20 of the real line (seen on raster contours): all precision lost.
        let k = (0..v.len())
            .min_by(|&i, &j| (v[i] - centre).norm().total_cmp(&(v[j] - centre).norm()))
            .unwrap_or(0);
        v.rotate_left(k);
        let (z0, z1) = (v[0], v[1]);
        let mut img: Vec<Complex64> = v[2..].iter().map(|&z| phi(z0, z1, z)).collect();
        let mut maps = Vec::with_capacity(img.len());
        let mut skipped = 0;
        for k in 0..img.len() {
            let a = img[k];
            let n2 = a.norm_sqr();
            if !(a.im > 1e-14 * n2.sqrt() && n2.is_finite() && n2 > 0.0) {
                skipped += 1;
                continue;
            }
            let (ic, d) = (a.re / n2, n2 / a.im);
            for w in img[k + 1..].iter_mut() {
                *w = unzip(*w, ic, d);
            }
            let sc = match img.get(k + 1) {
                Some(z) if z.norm() > 0.0 && z.norm().is_finite() => 1.0 / z.norm(),
                _ => 1.0,
            };
            for w in img[k + 1..].iter_mut() {
                *w *= sc;
            }
            maps.push((ic, d, sc, 1.0 / sc));
        }
        if skipped * 10 > v.len() {
            return Err(Error::Numerical(format!(
                "the geodesic zipper could not unzip {skipped} of {} vertices (a self-crossing \
                 or badly crowded polygon)",
                v.len()
            )));
        }
        let mut z = GeodesicZipper {
            z0,
            z1,
            maps,
            quadrant: 1.0,
            a: I,
            skipped,
        };
        let u = z.to_quadrant(centre);
        if !(u.im > 0.0 && u.re.is_finite()) {
            return Err(Error::Numerical(format!(
                "the centre ({}, {}) is not mapped inside the polygon",
                centre.re, centre.im
            )));
        }
        z.quadrant = if u.re >= 0.0 { 1.0 } else { -1.0 };
        z.a = z.quadrant * u * u;
        if z.a.im.is_nan() || z.a.im <= 0.0 {
            return Err(Error::Numerical(
                "the centre is mapped onto the boundary".into(),
            ));
        }
        Ok(z)
    }

    /// Vertices that could not be unzipped (their image was on the real line already).
    pub fn skipped(&self) -> usize {
        self.skipped
    }

    /// Number of unzipped vertices (the cost of one evaluation).
    pub fn len(&self) -> usize {
        self.maps.len()
    }

    /// Whether no vertex was unzipped.
    pub fn is_empty(&self) -> bool {
        self.maps.is_empty()
    }

    fn to_quadrant(&self, z: Complex64) -> Complex64 {
        let mut u = phi(self.z0, self.z1, z);
        for &(ic, d, sc, _) in &self.maps {
            u = sc * unzip(u, ic, d);
        }
        u
    }

    /// The map polygon → D (centre ↦ 0) and its derivative.
    pub fn to_disk_with_derivative(&self, z: Complex64) -> (Complex64, Complex64) {
        let m = (z - self.z1) / (z - self.z0);
        let dm = (self.z1 - self.z0) / ((z - self.z0) * (z - self.z0));
        let mut u = I * csqrt(m);
        if u.im < 0.0 {
            u = -u;
        }
        let mut du = -dm / (2.0 * u);
        for &(ic, d, sc, _) in &self.maps {
            let den = 1.0 - u * ic;
            let w = u / den;
            let v = open_slit(w, d);
            du *= sc * w / (v * den * den);
            u = sc * v;
        }
        let q = self.quadrant * u * u;
        du *= 2.0 * self.quadrant * u;
        let den = q - self.a.conj();
        (
            (q - self.a) / den,
            du * (self.a - self.a.conj()) / (den * den),
        )
    }

    /// The map polygon → D (centre ↦ 0).
    pub fn to_disk(&self, z: Complex64) -> Complex64 {
        if z == self.z0 {
            // The first vertex goes to ∞ in the half-plane frame, and ∞ to 1.
            return Complex64::new(1.0, 0.0);
        }
        let u = self.to_quadrant(z);
        let q = self.quadrant * u * u;
        (q - self.a) / (q - self.a.conj())
    }

    /// The inverse map D → polygon (0 ↦ centre).
    pub fn from_disk(&self, w: Complex64) -> Complex64 {
        self.from_disk_lanes([w])[0]
    }

    /// [`GeodesicZipper::from_disk`] at `L` points at once, lane by lane the same arithmetic
    /// (so the same values to the last bit): the lanes' chains of square roots and divisions
    /// are independent, and the processor overlaps them (two lanes cost about 1.2 one lane's
    /// time; see `sleek bench --loops`).
    pub fn from_disk_lanes<const L: usize>(&self, w: [Complex64; L]) -> [Complex64; L] {
        let mut u = w.map(|w| {
            let q = (self.a - w * self.a.conj()) / (1.0 - w);
            let q = Complex64::new(q.re, q.im.max(0.0));
            if self.quadrant > 0.0 {
                csqrt(q)
            } else {
                -csqrt(-q)
            }
        });
        for &(ic, d, _, isc) in self.maps.iter().rev() {
            for u in u.iter_mut() {
                // Points of the closed upper half-plane only: rounding below the real line
                // would pick the other branch of the square root (the mirror image).
                let v = Complex64::new(u.re * isc, (u.im * isc).max(0.0));
                let s = sqrt_upper(v * v - d * d, v);
                *u = s / (1.0 + s * ic);
            }
        }
        u.map(|u| {
            let m = -u * u;
            (self.z1 - m * self.z0) / (1.0 - m)
        })
    }

    /// `log |Φ'(z)|` for the map Φ: polygon → D, accumulated as a sum of logarithms (the
    /// derivative itself can overflow or underflow over thousands of maps).
    pub fn log_abs_derivative(&self, z: Complex64) -> f64 {
        let m = (z - self.z1) / (z - self.z0);
        let dm = (self.z1 - self.z0) / ((z - self.z0) * (z - self.z0));
        let mut u = I * csqrt(m);
        if u.im < 0.0 {
            u = -u;
        }
        let mut log_d = (dm / (2.0 * u)).norm().ln();
        for &(ic, d, sc, _) in &self.maps {
            let den = 1.0 - u * ic;
            let w = u / den;
            let v = open_slit(w, d);
            log_d += (sc * w / (v * den * den)).norm().ln();
            u = sc * v;
        }
        let q = self.quadrant * u * u;
        let den = q - self.a.conj();
        log_d += (2.0 * u).norm().ln() + ((self.a - self.a.conj()) / (den * den)).norm().ln();
        log_d
    }

    /// Conformal radius of the polygon seen from the centre, `1/|Φ'(centre)|`.
    pub fn conformal_radius(&self, centre: Complex64) -> f64 {
        (-self.log_abs_derivative(centre)).exp()
    }
}

#[inline]
fn phi(z0: Complex64, z1: Complex64, z: Complex64) -> Complex64 {
    let u = I * csqrt((z - z1) / (z - z0));
    if u.im < 0.0 {
        -u
    } else {
        u
    }
}

#[inline]
fn unzip(u: Complex64, ic: f64, d: f64) -> Complex64 {
    let w = u / (1.0 - u * ic);
    let w = Complex64::new(w.re, w.im.max(0.0));
    open_slit(w, d)
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::PI;

    fn circle(n: usize, r: f64, c: Complex64) -> Vec<Complex64> {
        (0..n)
            .map(|k| c + Complex64::from_polar(r, 2.0 * PI * k as f64 / n as f64))
            .collect()
    }

    #[test]
    fn a_fine_circle_maps_to_a_rotation_of_the_disk() {
        // Exact: the disk is mapped onto itself by a rotation (Schwarz lemma).
        let z =
            GeodesicZipper::new(&circle(2000, 1.0, Complex64::new(0.0, 0.0)), 0.0.into()).unwrap();
        for &p in &[
            Complex64::new(0.3, 0.2),
            Complex64::new(-0.7, 0.1),
            Complex64::new(0.0, -0.9),
        ] {
            let w = z.to_disk(p);
            assert!((w.norm() - p.norm()).abs() < 1e-5, "{p} ↦ {w}");
            let back = z.from_disk(w);
            assert!((back - p).norm() < 1e-9, "{p} ↦ {w} ↦ {back}");
        }
        assert!((z.conformal_radius(0.0.into()) - 1.0).abs() < 1e-5);
    }

    #[test]
    fn conformal_radius_of_a_square_and_an_off_centre_disk() {
        // Square of side 2: the Schwarz–Christoffel map z ↦ C∫(1 − z⁴)^{−1/2} sends the
        // corners ±1, ±i to the square's corners, so C·ϖ/2 = √2 and CR = C = 2√2/ϖ =
        // 1.0787052…, ϖ = 2.6220575543 the lemniscate constant (common practice; derived here).
        let mut sq = Vec::new();
        let n = 400;
        for k in 0..n {
            let t = -1.0 + 2.0 * k as f64 / n as f64;
            sq.push(Complex64::new(t, -1.0));
        }
        for k in 0..n {
            let t = -1.0 + 2.0 * k as f64 / n as f64;
            sq.push(Complex64::new(1.0, t));
        }
        for k in 0..n {
            let t = 1.0 - 2.0 * k as f64 / n as f64;
            sq.push(Complex64::new(t, 1.0));
        }
        for k in 0..n {
            let t = 1.0 - 2.0 * k as f64 / n as f64;
            sq.push(Complex64::new(-1.0, t));
        }
        let z = GeodesicZipper::new(&sq, 0.0.into()).unwrap();
        let cr = z.conformal_radius(0.0.into());
        assert!(
            (cr - 2.0 * 2f64.sqrt() / 2.622_057_554_292_119).abs() < 2e-3,
            "CR = {cr}"
        );
        // Disk of radius 2 about 1: CR seen from p is (4 − |p − 1|²)/2 (common practice).
        let p = Complex64::new(1.5, 0.5);
        let z = GeodesicZipper::new(&circle(3000, 2.0, Complex64::new(1.0, 0.0)), p).unwrap();
        let cr = z.conformal_radius(p);
        let exact = (4.0 - (p - 1.0).norm_sqr()) / 2.0;
        assert!((cr - exact).abs() < 1e-4, "CR = {cr}, exact {exact}");
        let q = Complex64::new(-0.5, 1.2);
        assert!((z.from_disk(z.to_disk(q)) - q).norm() < 1e-11);
        // Boundary goes to boundary.
        let b = z.to_disk(Complex64::new(1.0, 2.0) + Complex64::new(1e-9, -1e-9));
        assert!(
            (b.norm() - 1.0).abs() < 1e-3,
            "|Φ(boundary)| = {}",
            b.norm()
        );
    }

    /// The L-shaped polygon `[0,2]² ∖ (1,2]²`, `per_edge` vertices per edge, counterclockwise
    /// or clockwise.
    fn l_shape(per_edge: usize, ccw: bool) -> Vec<Complex64> {
        let corners = [
            (0.0, 0.0),
            (2.0, 0.0),
            (2.0, 1.0),
            (1.0, 1.0),
            (1.0, 2.0),
            (0.0, 2.0),
        ];
        let mut v = Vec::new();
        for k in 0..corners.len() {
            let a = Complex64::new(corners[k].0, corners[k].1);
            let b = Complex64::new(corners[(k + 1) % 6].0, corners[(k + 1) % 6].1);
            for j in 0..per_edge {
                v.push(a + (b - a) * (j as f64 / per_edge as f64));
            }
        }
        if !ccw {
            v.reverse();
        }
        v
    }

    #[test]
    fn points_of_the_disk_land_inside_a_nonconvex_polygon() {
        // Clockwise on purpose.
        let v = l_shape(100, false);
        let c = Complex64::new(0.5, 0.5);
        let z = GeodesicZipper::new(&v, c).unwrap();
        assert!(z.to_disk(c).norm() < 1e-12);
        for k in 0..200 {
            let w = Complex64::from_polar(0.995, 2.0 * PI * k as f64 / 200.0);
            let p = z.from_disk(w);
            assert!(
                crate::polygon::winding_number(&v, p) != 0,
                "{w} ↦ {p} outside"
            );
            assert!((z.to_disk(p) - w).norm() < 1e-9);
        }
        assert!(GeodesicZipper::new(&v, Complex64::new(1.5, 1.5)).is_err());
    }

    #[test]
    fn boundary_vertices_are_reached_from_just_inside() {
        // The boundary correspondence: the image angle of each vertex, approached from inside
        // D, must lead back to that vertex (an exploration starts its curve there).
        let v = l_shape(40, true);
        let z = GeodesicZipper::new(&v, Complex64::new(0.4, 0.6)).unwrap();
        // Worst distance from a vertex to the image of its angle at 1 − e; the tolerances are
        // the distance that 1 − e itself stands for (|F'| ≤ about 10 on this polygon, larger at
        // the reentrant corner, where √e sets the scale) plus rounding.
        for (e, tol) in [(1e-4, 0.05), (1e-7, 2e-3), (1e-10, 1e-4)] {
            let mut worst: f64 = 0.0;
            for &p in &v {
                let a = z.to_disk(p).arg();
                let back = z.from_disk(Complex64::from_polar(1.0 - e, a));
                worst = worst.max((back - p).norm());
            }
            assert!(worst < tol, "e = {e}: worst distance {worst}");
        }
    }

    #[test]
    fn the_algebraic_square_root_is_the_principal_one() {
        let mut worst: f64 = 0.0;
        for &(x, y) in &[
            (1.0, 0.0),
            (-1.0, 0.0),
            (-1.0, -0.0),
            (0.0, 1.0),
            (0.0, -1.0),
            (-3.0, 1e-300),
            (-3.0, -1e-300),
            (1e-300, 1e-300),
            (1e200, -1e200),
            (-2.5, 7.0),
            (0.3, -0.4),
        ] {
            let z = Complex64::new(x, y);
            let (a, b) = (csqrt(z), z.sqrt());
            worst = worst.max((a - b).norm() / b.norm().max(1e-300));
            assert_eq!(a.im.is_sign_negative(), b.im.is_sign_negative(), "{z}");
        }
        assert!(worst < 1e-15, "relative difference {worst}");
    }
}
