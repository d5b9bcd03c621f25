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
//! iteration. Building costs `O(n²)` square roots, each evaluation `O(n)`; from [`TREE_MIN`]
//! vertices on, the inverse maps are normalised to fix ∞ ([`ZipStep`]) and composed by the
//! block tree of [`crate::fast`], so that [`GeodesicZipper::from_disk`] costs O(log n) block
//! series for points far from most of the boundary (a 2000-vertex star: 11–13 µs a point
//! against 35–50 µs, `examples/kernel_timing.rs`; within 2·10⁻¹² of composing every map).
//! `SLEEK_TREE_MIN=n` (environment, for measurements) moves the threshold.

use crate::error::{Error, Result};
use crate::fast::{BlockTree, HalfPlaneStep};
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
    /// The unzipping map of each unzipped vertex, in order ([`ZipStep`]).
    maps: Vec<ZipStep>,
    /// `+1` when the interior lies in the first quadrant before the last map, `−1` in the
    /// second.
    quadrant: f64,
    /// Image in H of the centre.
    a: Complex64,
    skipped: usize,
    /// The maps with a block tree of their inverses ([`crate::fast`]), for polygons of at least
    /// [`TREE_MIN`] unzipped vertices: an evaluation of [`GeodesicZipper::from_disk`] then
    /// costs O(log n) block series where the point is far from most of the boundary instead
    /// of n square roots.
    tree: Option<BlockTree<'static, ZipStep>>,
}

/// One unzipping map in the half-plane frame, for the vertex image `a`:
/// `f(z) = σ·N(T(M(z)))` with `M(z) = z/(1 − z/c)` (`c = |a|²/Re a`), which sends the geodesic
/// from 0 to `a` onto the segment `[0, i·d]` (`d = |a|²/Im a`), `T(w) = √(w² + d²)`, which opens
/// it onto `[−d, d]`, `N(x) = x/(1 − x/e)` with `e = T(M(∞)) = −sign(c)·√(c² + d²)`, which
/// takes `e` back to ∞, and the dilation `σ` that puts the next vertex's image at modulus 1
/// (without it the images grow geometrically and overflow after a few hundred vertices).
/// `N` is a real automorphism of H fixing 0, so the domain is that of the geodesic algorithm
/// (Marshall & Rohde 2007) in another normalisation; it makes `f(∞) = ∞`, so the inverse is
/// analytic off the interval `σ·N([−d, d])`, ∞ included, as [`crate::fast`]'s block tree needs.
/// Zippers too small for a tree (under [`TREE_MIN`] vertices) keep `N` the identity.
#[derive(Debug, Clone, Copy)]
pub struct ZipStep {
    ic: f64,
    d: f64,
    ie: f64,
    sc: f64,
    isc: f64,
}

impl ZipStep {
    /// `T(M(z))` then `N`, before the dilation (closed upper half-plane to itself).
    #[inline]
    fn open(&self, u: Complex64) -> Complex64 {
        let v = unzip(u, self.ic, self.d);
        if self.ie == 0.0 {
            return v;
        }
        let x = v / (1.0 - v * self.ie);
        Complex64::new(x.re, x.im.max(0.0))
    }

    /// The forward map `f`.
    #[inline]
    fn forward(&self, u: Complex64) -> Complex64 {
        self.sc * self.open(u)
    }

    /// The inverse map, closed upper half-plane to itself (rounding below the real line is
    /// clamped: it would pick the other branch of the square root, the mirror image).
    #[inline]
    fn inverse_map(&self, y: Complex64) -> Complex64 {
        let x = Complex64::new(y.re * self.isc, (y.im * self.isc).max(0.0));
        let w = if self.ie == 0.0 {
            x
        } else {
            let w = x / (1.0 + x * self.ie);
            Complex64::new(w.re, w.im.max(0.0))
        };
        let s = sqrt_upper(w * w - self.d * self.d, w);
        s / (1.0 + s * self.ic)
    }
}

impl HalfPlaneStep for ZipStep {
    fn inverse(&self, z: Complex64) -> Complex64 {
        self.inverse_map(z)
    }
    fn preimage_interval(&self) -> (f64, f64) {
        let n = |x: f64| self.sc * x / (1.0 - x * self.ie);
        (n(-self.d), n(self.d))
    }
    fn forward_real(&self, x: f64) -> f64 {
        // M(x) = 1/(1/x − 1/c) (0 at 0, ∞ at c), T keeps the sign (−d at 0, as `open_slit`),
        // N(r) = 1/(1/r − 1/e) (e at r = ±∞).
        let w = 1.0 / (1.0 / x - self.ic);
        let r = (w * w + self.d * self.d).sqrt();
        let r = if w > 0.0 { r } else { -r };
        self.sc / (1.0 / r - self.ie)
    }
}

/// Unzipped vertices from which [`GeodesicZipper::from_disk`] goes through a block tree.
pub const TREE_MIN: usize = 64;

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
        // The normalisation N (which the block tree needs) only where a tree will be built:
        // without a tree it is a Möbius map per vertex for nothing.
        let tree_min = std::env::var("SLEEK_TREE_MIN")
            .ok()
            .and_then(|s| s.parse().ok())
            .unwrap_or(TREE_MIN);
        let with_tree = img.len() >= tree_min;
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
            let mut step = ZipStep {
                ic,
                d,
                ie: if with_tree {
                    -ic / (1.0 + (d * ic) * (d * ic)).sqrt()
                } else {
                    0.0
                },
                sc: 1.0,
                isc: 1.0,
            };
            for w in img[k + 1..].iter_mut() {
                *w = step.open(*w);
            }
            let sc = match img.get(k + 1) {
                Some(z) if z.norm() > 0.0 && z.norm().is_finite() => 1.0 / z.norm(),
                _ => 1.0,
            };
            for w in img[k + 1..].iter_mut() {
                *w *= sc;
            }
            step.sc = sc;
            step.isc = 1.0 / sc;
            maps.push(step);
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
            tree: None,
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
        if with_tree {
            z.tree = Some(BlockTree::owned(z.maps.clone()));
        }
        Ok(z)
    }

    /// The same zipper without its block tree (every evaluation through every map): the
    /// reference for the tree's accuracy.
    pub fn without_tree(&self) -> Self {
        GeodesicZipper {
            tree: None,
            ..self.clone()
        }
    }

    /// Whether evaluations go through a block tree.
    pub fn has_tree(&self) -> bool {
        self.tree.is_some()
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
        for m in &self.maps {
            u = m.forward(u);
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
        for m in &self.maps {
            let den = 1.0 - u * m.ic;
            let w = u / den;
            let v = open_slit(w, m.d);
            let den2 = 1.0 - v * m.ie;
            du *= m.sc * w / (v * den * den * den2 * den2);
            u = m.sc * (v / den2);
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
        if let Some(tree) = &self.tree {
            for u in u.iter_mut() {
                *u = tree.apply_prefix(self.maps.len(), *u);
            }
        } else {
            for m in self.maps.iter().rev() {
                for u in u.iter_mut() {
                    *u = m.inverse_map(*u);
                }
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
        for m in &self.maps {
            let den = 1.0 - u * m.ic;
            let w = u / den;
            let v = open_slit(w, m.d);
            let den2 = 1.0 - v * m.ie;
            log_d += (m.sc * w / (v * den * den * den2 * den2)).norm().ln();
            u = m.sc * (v / den2);
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

    /// A star-shaped polygon with a wiggly boundary, `r(φ) = 1 + 0.3 cos 5φ + 0.1 sin 17φ`.
    fn wiggly(n: usize) -> Vec<Complex64> {
        (0..n)
            .map(|k| {
                let p = 2.0 * PI * k as f64 / n as f64;
                Complex64::from_polar(1.0 + 0.3 * (5.0 * p).cos() + 0.1 * (17.0 * p).sin(), p)
            })
            .collect()
    }

    /// The block tree of the inverse maps (`crate::fast`) against composing every map, at
    /// points spread over D and on the circle, for an L-shape (corners, long straight runs) and
    /// a wiggly star: the same map up to rounding (common practice for a fast-multipole-type
    /// summation; the series are cut at about 3⁻²⁹ of each block's size, `crate::fast`).
    /// Measured: 1e-12 and 2e-12 in the plane (polygons about 2 across).
    #[test]
    fn the_block_tree_agrees_with_composing_every_map() {
        let cases = [
            (l_shape(150, true), Complex64::new(0.5, 0.5)),
            (wiggly(1500), Complex64::new(0.1, -0.05)),
        ];
        for (poly, centre) in cases {
            let z = GeodesicZipper::new(&poly, centre).unwrap();
            assert!(z.has_tree() && z.len() >= TREE_MIN);
            let direct = z.without_tree();
            assert!(!direct.has_tree());
            let mut worst: f64 = 0.0;
            for &r in &[0.0, 0.3, 0.6, 0.9, 0.99, 0.999, 0.9999, 1.0] {
                for k in 0..300 {
                    let w = Complex64::from_polar(r, 2.0 * PI * (k as f64 + 0.37) / 300.0);
                    let (a, b) = (z.from_disk(w), direct.from_disk(w));
                    assert!(a.re.is_finite() && a.im.is_finite(), "{w} ↦ {a}");
                    worst = worst.max((a - b).norm());
                }
            }
            eprintln!("block tree against direct composition: worst {worst:.2e}");
            assert!(worst < 1e-9, "worst deviation {worst:e}");
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
