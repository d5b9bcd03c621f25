//! Images of chordal curves in other simply connected domains, by explicit conformal maps from
//! the upper half-plane H (chordal SLE is conformally invariant: the image of SLE_κ in H from 0 to
//! ∞ is SLE_κ in the target domain between the images of 0 and ∞, up to time change).

use num_complex::Complex64;
use serde::Serialize;

/// A target domain for chordal curves, with its two marked boundary points.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Default)]
#[serde(rename_all = "kebab-case")]
pub enum ChordalDomain {
    /// The upper half-plane H, from 0 to ∞ (no map).
    #[default]
    HalfPlane,
    /// The unit disk, from 1 to −1: `z ↦ (i − z)/(i + z)` (sends i to the centre 0).
    Disk,
    /// The horizontal strip `{0 < Im < π}`, from −∞ to +∞: `z ↦ log z` (principal branch).
    Strip,
}

impl ChordalDomain {
    /// Short name used in outputs and on the command line.
    pub fn name(self) -> &'static str {
        match self {
            ChordalDomain::HalfPlane => "half-plane",
            ChordalDomain::Disk => "disk",
            ChordalDomain::Strip => "strip",
        }
    }

    /// A sentence describing the domain and its marked points, for captions.
    pub fn describe(self) -> &'static str {
        match self {
            ChordalDomain::HalfPlane => "upper half-plane, from 0 to ∞",
            ChordalDomain::Disk => "unit disk, from 1 to −1 (image of H by z ↦ (i−z)/(i+z))",
            ChordalDomain::Strip => "strip 0 < Im z < π, from −∞ to +∞ (image of H by log z)",
        }
    }

    /// Index of the first trace point that has a finite image: 1 for the strip (the start point
    /// 0 goes to −∞ and is left out of exports and figures), 0 otherwise.
    pub fn first_finite_index(self) -> usize {
        match self {
            ChordalDomain::Strip => 1,
            _ => 0,
        }
    }

    /// Map a point of the closed upper half-plane into the domain. For the strip, 0 goes to
    /// −∞ (returned as a non-finite real part).
    pub fn map(self, z: Complex64) -> Complex64 {
        match self {
            ChordalDomain::HalfPlane => z,
            ChordalDomain::Disk => {
                let i = Complex64::new(0.0, 1.0);
                (i - z) / (i + z)
            }
            ChordalDomain::Strip => {
                if z.norm() == 0.0 {
                    Complex64::new(f64::NEG_INFINITY, 0.0)
                } else {
                    // Clamp −0.0 so points on the negative axis land on Im = π, not −π.
                    Complex64::new(z.re, z.im.max(0.0)).ln()
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn marked_points_and_interior() {
        let d = ChordalDomain::Disk;
        assert!((d.map(Complex64::new(0.0, 0.0)) - 1.0).norm() < 1e-15);
        assert!((d.map(Complex64::new(1e12, 0.0)) + 1.0).norm() < 1e-11);
        assert!(d.map(Complex64::new(0.3, 0.2)).norm() < 1.0);
        assert!((d.map(Complex64::new(5.0, 0.0)).norm() - 1.0).abs() < 1e-15);
        let s = ChordalDomain::Strip;
        let w = s.map(Complex64::new(-2.0, -0.0));
        assert!((w.im - std::f64::consts::PI).abs() < 1e-15);
    }
}
