//! Fast composition of *forward* chordal maps, for unzipping curves (DESIGN §9).
//!
//! Unzipping builds steps one at a time: step `j` is determined by the image of the curve's point
//! `j` under the forward maps of all earlier steps, `G_{j−1} ∘ … ∘ G_1`. Composing directly costs
//! O(N²) map evaluations. This module keeps an append-only binary tree of blocks of consecutive
//! steps; a completed block `B = [a, b)` keeps a Laurent series of its composed forward map
//! `C_B = G_{b−1} ∘ … ∘ G_a` in the coordinates *before* the block:
//! `C_B(z) = z + Σ_{m≥1} a_m (z − c_B)^{−m}`, real `a_m` (C_B is real on the real line away from
//! the block's hull, so Schwarz reflection applies, and it is hydrodynamically normalised at ∞).
//! The centre `c_B` and radius `R_B` come from a box around the block's curve points as seen
//! in the block's input frame (recorded as the points are unzipped). Coefficients come from a
//! 64-point DFT on the circle `|z − c_B| = 2R_B` (upper half evaluated, lower half by
//! reflection); the series is used when `|z − c_B| > 3R_B`. As a check of the box, the DFT's
//! coefficients of non-negative powers must vanish (they do when `C_B − id` is analytic outside
//! the circle); when they do not, the radius is doubled and the series recomputed (up to three
//! times), and otherwise the block keeps no series and is always descended.
//!
//! This is the forward counterpart of [`crate::fast`] (which expands inverse maps about the
//! preimage interval in the frame after a block); the spectral accuracy of such expansions is
//! common practice (Trefethen & Weideman, SIAM Rev. 2014).

use crate::loewner::ChordalStep;
use num_complex::Complex64;

/// Steps in a leaf block.
const LEAF: usize = 8;
/// Laurent coefficients kept per block (`a_1 … a_TERMS`).
const TERMS: usize = 28;
/// DFT length on the sampling circle.
const SAMPLES: usize = 64;
/// Sampling radius and acceptance radius, in units of the block's radius.
const SAMPLE_RADIUS: f64 = 2.0;
const ACCEPT: f64 = 3.0;
/// Levels of the tree (blocks of `LEAF · 2^ℓ` steps).
const LEVELS: usize = 40;

#[derive(Debug, Clone)]
struct Block {
    centre: f64,
    radius: f64,
    coeffs: Vec<f64>,
    has_series: bool,
}

/// Bounding box of a block's curve points in its input frame.
#[derive(Debug, Clone, Copy)]
struct Hull {
    lo: f64,
    hi: f64,
    top: f64,
}

impl Hull {
    fn empty() -> Self {
        Hull {
            lo: f64::INFINITY,
            hi: f64::NEG_INFINITY,
            top: 0.0,
        }
    }
    fn add(&mut self, z: Complex64) {
        self.lo = self.lo.min(z.re);
        self.hi = self.hi.max(z.re);
        self.top = self.top.max(z.im.abs());
    }
}

/// An append-only chain of forward chordal steps with fast evaluation of the composed forward
/// map `G_n ∘ … ∘ G_1` (capacity-time convention of DESIGN §2: each step's forward map is
/// `g_{t_k} ∘ g_{t_{k−1}}^{−1}`, from H minus its slit onto H).
#[derive(Debug, Clone)]
pub struct ForwardChain {
    steps: Vec<ChordalStep>,
    levels: Vec<Vec<Block>>,
    open: Vec<Hull>,
    frames: Vec<Complex64>,
    series: bool,
}

impl ForwardChain {
    /// An empty chain; `series = false` turns the tree off (every evaluation composes all steps
    /// directly: the reference method).
    pub fn new(series: bool) -> Self {
        ForwardChain {
            steps: Vec::new(),
            levels: vec![Vec::new(); LEVELS],
            open: vec![Hull::empty(); LEVELS],
            frames: vec![Complex64::new(0.0, 0.0); LEVELS],
            series,
        }
    }

    /// Number of steps.
    pub fn len(&self) -> usize {
        self.steps.len()
    }

    /// Whether the chain has no step.
    pub fn is_empty(&self) -> bool {
        self.steps.is_empty()
    }

    /// The steps, in order.
    pub fn steps(&self) -> &[ChordalStep] {
        &self.steps
    }

    /// Image of `z` under the composition of all steps (`G_n ∘ … ∘ G_1 (z)`).
    pub fn map(&self, z: Complex64) -> Complex64 {
        self.walk(z, false, None).0
    }

    /// Image of `z` and the derivative of the composed map at `z`.
    pub fn map_with_derivative(&self, z: Complex64) -> (Complex64, Complex64) {
        self.walk(z, true, None)
    }

    /// Image of the curve point that the next step will unzip; remembers its images in the
    /// frames where open blocks start, for their hulls. Call [`ForwardChain::push`] next.
    pub fn map_next_point(&mut self, z: Complex64) -> Complex64 {
        let mut frames = std::mem::take(&mut self.frames);
        let out = self.walk(z, false, Some(&mut frames)).0;
        self.frames = frames;
        out
    }

    /// Append a step whose tip is the point last passed to [`ForwardChain::map_next_point`].
    pub fn push(&mut self, step: ChordalStep) {
        let j = self.steps.len();
        for l in 0..LEVELS {
            let size = LEAF << l;
            if j % size == 0 {
                self.open[l] = Hull::empty();
                // The slit's base in the block's own frame (the block starts with this step).
                self.open[l].add(Complex64::new(step.base(), 0.0));
            }
            let z = if j % size == 0 {
                step.tip()
            } else {
                self.frames[l]
            };
            self.open[l].add(z);
        }
        self.steps.push(step);
        let n = self.steps.len();
        for l in 0..LEVELS {
            let size = LEAF << l;
            if n % size == 0 {
                let hull = self.open[l];
                let block = self.build_block(l, n / size - 1, hull);
                self.levels[l].push(block);
            } else {
                break;
            }
        }
    }

    fn build_block(&self, level: usize, index: usize, hull: Hull) -> Block {
        let centre = 0.5 * (hull.lo + hull.hi);
        let half = 0.5 * (hull.hi - hull.lo);
        let mut radius = 1.1 * (half * half + hull.top * hull.top).sqrt();
        let mut block = Block {
            centre,
            radius,
            coeffs: vec![0.0; TERMS],
            has_series: false,
        };
        if !(self.series && radius > 0.0 && radius.is_finite()) {
            return block;
        }
        for _ in 0..4 {
            if let Some(c) = self.sample(level, index, centre, radius) {
                block.radius = radius;
                block.coeffs = c;
                block.has_series = true;
                // A second check of the box: the series at the acceptance radius, off the
                // sampling nodes, against the block applied step by step.
                let z = Complex64::new(centre, 0.0)
                    + Complex64::from_polar(ACCEPT * radius, 0.5 + 0.03 * (index % 7) as f64);
                let one = Complex64::new(1.0, 0.0);
                let (series, _) = self.apply_series(&block, z, one, false);
                let (exact, _) = self.descend(level, index, z, one, false);
                if (series - exact).norm()
                    <= 1e-12 * (exact - z).norm().max(1e-300) + 1e-15 * radius
                {
                    return block;
                }
                block.has_series = false;
            }
            radius *= 2.0;
        }
        block
    }

    /// Coefficients of block (level, index) from samples on `|z − c| = 2R`, or `None` when the
    /// coefficients of non-negative powers do not vanish (the box missed part of the hull).
    fn sample(&self, level: usize, index: usize, c: f64, r: f64) -> Option<Vec<f64>> {
        let rho = SAMPLE_RADIUS * r;
        let half = SAMPLES / 2;
        let mut f = vec![Complex64::new(0.0, 0.0); SAMPLES];
        for (k, fk) in f.iter_mut().enumerate().take(half + 1) {
            let th = std::f64::consts::TAU * k as f64 / SAMPLES as f64;
            let mut z = Complex64::new(c, 0.0) + Complex64::from_polar(rho, th);
            if k == 0 || k == half {
                z.im = 0.0;
            }
            let (w, _) = self.descend(level, index, z, Complex64::new(1.0, 0.0), false);
            *fk = w - z;
            if !fk.re.is_finite() || !fk.im.is_finite() {
                return None;
            }
        }
        for k in half + 1..SAMPLES {
            f[k] = f[SAMPLES - k].conj();
        }
        let scale = f.iter().map(|v| v.norm()).fold(0.0, f64::max).max(1e-300);
        let coef = |m: i64| -> f64 {
            // (1/P) Σ_k f_k e^{imθ_k}: the coefficient of e^{−imθ} in f.
            let mut s = 0.0;
            for (k, fk) in f.iter().enumerate() {
                let th = std::f64::consts::TAU * ((m * k as i64).rem_euclid(SAMPLES as i64)) as f64
                    / SAMPLES as f64;
                s += fk.re * th.cos() - fk.im * th.sin();
            }
            s / SAMPLES as f64
        };
        // Non-negative powers of (z − c) must be absent.
        for m in [-2i64, -1, 0] {
            if coef(m).abs() > 1e-11 * scale {
                return None;
            }
        }
        Some(
            (1..=TERMS as i64)
                .map(|m| coef(m) * rho.powi(m as i32))
                .collect(),
        )
    }

    /// Apply block (level, index) to `z` (and carry the derivative `d` when `deriv`).
    fn apply_block(
        &self,
        level: usize,
        index: usize,
        z: Complex64,
        d: Complex64,
        deriv: bool,
    ) -> (Complex64, Complex64) {
        let b = &self.levels[level][index];
        if b.has_series && (z - b.centre).norm() > ACCEPT * b.radius {
            return self.apply_series(b, z, d, deriv);
        }
        self.descend(level, index, z, d, deriv)
    }

    /// Apply block (level, index) through its children (or its steps, at a leaf).
    fn descend(
        &self,
        level: usize,
        index: usize,
        z: Complex64,
        d: Complex64,
        deriv: bool,
    ) -> (Complex64, Complex64) {
        if level == 0 {
            let start = index * LEAF;
            return self.direct(start, start + LEAF, z, d, deriv);
        }
        let (z, d) = self.apply_block(level - 1, 2 * index, z, d, deriv);
        self.apply_block(level - 1, 2 * index + 1, z, d, deriv)
    }

    fn apply_series(
        &self,
        b: &Block,
        z: Complex64,
        d: Complex64,
        deriv: bool,
    ) -> (Complex64, Complex64) {
        {
            let u = (z - b.centre).inv();
            let mut s = Complex64::new(0.0, 0.0);
            let mut ds = Complex64::new(0.0, 0.0);
            for (m, &a) in b.coeffs.iter().enumerate().rev() {
                s = (s + a) * u;
                if deriv {
                    // d/dz Σ a_m u^m = −Σ m a_m u^{m+1}.
                    ds = (ds + a * (m as f64 + 1.0)) * u;
                }
            }
            let out = z + s;
            let out = Complex64::new(out.re, out.im.max(0.0));
            let dd = if deriv { d * (1.0 - ds * u) } else { d };
            (out, dd)
        }
    }

    fn direct(
        &self,
        start: usize,
        end: usize,
        mut z: Complex64,
        mut d: Complex64,
        deriv: bool,
    ) -> (Complex64, Complex64) {
        for s in &self.steps[start..end] {
            z = s.forward(z);
            if deriv {
                let (_, fd) = s.inverse_with_derivative(z);
                d /= fd;
            }
        }
        (z, d)
    }

    /// Compose all steps on `z`, recording the images where open blocks start.
    fn walk(
        &self,
        mut z: Complex64,
        deriv: bool,
        mut frames: Option<&mut Vec<Complex64>>,
    ) -> (Complex64, Complex64) {
        let n = self.steps.len();
        let mut d = Complex64::new(1.0, 0.0);
        let mut p = 0;
        for l in (0..LEVELS).rev() {
            let size = LEAF << l;
            if size > n {
                if let Some(f) = frames.as_deref_mut() {
                    f[l] = z;
                }
                continue;
            }
            while p + size <= n {
                (z, d) = self.apply_block(l, p / size, z, d, deriv);
                p += size;
            }
            if let Some(f) = frames.as_deref_mut() {
                f[l] = z;
            }
        }
        self.direct(p, n, z, d, deriv)
    }

    /// Number of blocks that keep a series, and the total number of blocks.
    pub fn series_blocks(&self) -> (usize, usize) {
        let all: Vec<&Block> = self.levels.iter().flatten().collect();
        (all.iter().filter(|b| b.has_series).count(), all.len())
    }
}
