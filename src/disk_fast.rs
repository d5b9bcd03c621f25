//! Fast composition of radial Loewner chains in the unit disk: an append-only binary tree of
//! blocks of consecutive maps, each with a series of its composed inverse map valid away from
//! the block's singular arc.
//!
//! Convention: a chain is a sequence of conformal maps of frames, stored in their forward
//! direction `g_e`: frame `e − 1` → frame `e` (each frame is the unit disk D). The maps are radial
//! steps of DESIGN §2 (`∂_t g = g (e^{iξ} + g)/(e^{iξ} − g)`, `g(0) = 0`) followed by a
//! rotation, and disk automorphisms (changes of the frame's normalising point). A point of the
//! last frame is taken back to the first by the composed inverse `F_1 ∘ … ∘ F_n`.
//!
//! # Why the disk fits a block series
//! For a block B of consecutive maps, `F_B` maps D onto D minus a hull, and the unit circle
//! outside an arc `A_B` (the preimage of the hull, in the block's output frame) onto the circle.
//! By Schwarz reflection, `F(z) = 1/conj(F(1/z̄))`, it extends analytically to the Riemann sphere
//! minus `A_B`, except for one simple pole (at the reflection of `F_B⁻¹(0)`). Composing with the
//! disk automorphism `M_q(u) = (u + q)/(1 + q̄u)`, `q = F_B(0)`, gives `H_B = M_q⁻¹ ∘ F_B` with
//! `H_B(0) = 0`, whose only pole is at ∞. So about the midpoint `c` of the arc (on the circle),
//! with `R` the chord from `c` to the arc's ends,
//! `H_B(z) = a₋₁ (z − c) + a₀ + Σ_{m≥1} a_m (z − c)^{−m}` for `|z − c| > R`,
//! and `F_B = M_q ∘ H_B`. The coefficients come from samples of `H_B` on the circle
//! `|z − c| = 1.4 R` (outside D by reflection) and a discrete Fourier transform of length 128
//! (spectrally accurate for analytic periodic data, aliasing about `1.4^{−128}`; common
//! practice, e.g. Trefethen & Weideman, SIAM Rev. 2014). A point goes through a block by its
//! series when `|z − c| > 1.8 R`, otherwise through the block's two halves, down to leaves of
//! eight maps composed directly. The terms fall off like `(R/|z − c|)^m`, so the series is cut
//! after `⌈36.8/ln(|z − c|/R)⌉` terms (between 8 and the 60 kept, 60 at the acceptance radius:
//! truncation about `10⁻¹⁶` of the block's scale; with the series summed by four interleaved
//! chains the cut no longer changes the measured time, see `DEVELOPERS.md`). The chordal version of the same idea is [`crate::fast`]; the disk differs
//! in complex coefficients, arcs on the circle instead of real intervals, and the automorphism
//! factor `M_q`, which is what a fixed Cayley frame could not absorb.
//!
//! The tree is *append-only*: a block is completed (its series computed) as soon as its last
//! map is pushed, so a growing exploration can map its current tip back to the start at any
//! time, and a prefix of the chain (what a branch of a CLE exploration inherits) is always a
//! union of completed blocks and at most seven loose maps.

use crate::radial::{RadialStep, TiltedRadialStep};
use num_complex::Complex64;
use std::f64::consts::{PI, TAU};

/// One map of a disk chain, given by its forward direction (frame before → frame after).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum DiskMap {
    /// A radial step (DESIGN §2) followed by the rotation `rot` (|rot| = 1): `w ↦ rot · G(w)`.
    Step {
        /// The radial step.
        step: RadialStep,
        /// Rotation applied after the step.
        rot: Complex64,
    },
    /// A tilted radial step ([`TiltedRadialStep`], a slit that continues from a given boundary
    /// point) followed by the rotation `rot`.
    Tilted {
        /// The step.
        step: TiltedRadialStep,
        /// Rotation applied after the step.
        rot: Complex64,
    },
    /// A disk automorphism `w ↦ rot · (w − c)/(1 − c̄ w)` (|c| < 1, |rot| = 1): a change of the
    /// frame's normalising point from 0 to `c`.
    Mobius {
        /// The point sent to 0.
        c: Complex64,
        /// Rotation applied after.
        rot: Complex64,
    },
    /// A radial step taken in another frame and read in this one: `u ↦ E(rot · G(D(u)))`, with
    /// `D` the automorphism from this frame to the step's frame, `G` the step and
    /// `E(w) = (w − w0)/(1 − w̄0 w)` the automorphism that puts the image `w0 = rot·G(D(0))`
    /// of this frame's centre back at 0. So the map fixes 0, and its slit is as small as the
    /// step looks from this frame's centre (which is what keeps block series usable when the
    /// steps are taken in frames centred near the tip).
    Conjugated {
        /// The step (in its own frame).
        step: RadialStep,
        /// Rotation applied after the step.
        rot: Complex64,
        /// `D`, from this frame to the step's frame.
        d: Mobius,
        /// `w0 = rot · G(D(0))`.
        w0: Complex64,
    },
}

/// A disk automorphism `w ↦ rot · (w − c)/(1 − c̄ w)` (|c| < 1, |rot| = 1).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Mobius {
    /// The point sent to 0.
    pub c: Complex64,
    /// Rotation applied after.
    pub rot: Complex64,
}

impl Mobius {
    /// The identity.
    pub fn identity() -> Self {
        Mobius {
            c: Complex64::new(0.0, 0.0),
            rot: Complex64::new(1.0, 0.0),
        }
    }

    /// The map at `w` (for `|w| ≤ 1`).
    #[inline]
    pub fn apply(&self, w: Complex64) -> Complex64 {
        self.rot * (w - self.c) / (1.0 - self.c.conj() * w)
    }

    /// The inverse map at `z`.
    #[inline]
    pub fn invert(&self, z: Complex64) -> Complex64 {
        let u = z * self.rot.conj();
        (u + self.c) / (1.0 + self.c.conj() * u)
    }

    /// The automorphism equal to `u ↦ f(u)` for a disk automorphism `f` given by its values:
    /// `c = f⁻¹(0)` and `f(1)`.
    fn from_values(c: Complex64, f_at_one: Complex64) -> Self {
        let one = Complex64::new(1.0, 0.0);
        // f(1) = rot·(1 − c)/(1 − c̄), so rot = f(1)·(1 − c̄)/(1 − c).
        let rot = f_at_one * (one - c.conj()) / (one - c);
        Mobius {
            c,
            rot: rot / rot.norm(),
        }
    }

    /// `self ∘ first` (first `first`, then `self`).
    pub fn after(&self, first: &Mobius) -> Mobius {
        let c = first.invert(self.c);
        let f1 = self.apply(first.apply(Complex64::new(1.0, 0.0)));
        Mobius::from_values(c, f1)
    }

    /// The inverse automorphism.
    pub fn inverse(&self) -> Mobius {
        // The inverse sends rot·(−c)… : its zero is the image of 0, i.e. apply(0).
        let c = self.apply(Complex64::new(0.0, 0.0));
        let f1 = self.invert(Complex64::new(1.0, 0.0));
        Mobius::from_values(c, f1)
    }

    /// `|f'(w)|` on the circle or inside: `(1 − |c|²)/|1 − c̄ w|²`.
    pub fn stretch(&self, w: Complex64) -> f64 {
        (1.0 - self.c.norm_sqr()) / (1.0 - self.c.conj() * w).norm_sqr()
    }
}

impl DiskMap {
    /// The inverse map, frame after → frame before, for `|z| ≤ 1`.
    #[inline]
    pub fn inverse(&self, z: Complex64) -> Complex64 {
        match *self {
            DiskMap::Step { step, rot } => step.inverse_fast_rotated(z, rot),
            DiskMap::Tilted { step, rot } => step.inverse(z * rot.conj()),
            DiskMap::Mobius { c, rot } => {
                let u = z * rot.conj();
                (u + c) / (1.0 + c.conj() * u)
            }
            DiskMap::Conjugated { step, rot, d, w0 } => {
                let v = (z + w0) / (1.0 + w0.conj() * z);
                d.invert(step.inverse(v * rot.conj()))
            }
        }
    }

    /// The forward map of the boundary point `e^{iα}`, as an angle (not unwrapped).
    pub fn forward_angle(&self, alpha: f64) -> f64 {
        match *self {
            DiskMap::Step { step, rot } => step.forward_boundary_angle(alpha, 1.0) + rot.arg(),
            DiskMap::Tilted { step, rot } => step.forward_boundary_angle(alpha, 1.0) + rot.arg(),
            DiskMap::Mobius { c, rot } => {
                let u = Complex64::from_polar(1.0, alpha);
                ((u - c) / (1.0 - c.conj() * u) * rot).arg()
            }
            DiskMap::Conjugated { step, rot, d, w0 } => {
                let a = d.apply(Complex64::from_polar(1.0, alpha)).arg();
                let g = Complex64::from_polar(1.0, step.forward_boundary_angle(a, 1.0)) * rot;
                ((g - w0) / (1.0 - w0.conj() * g)).arg()
            }
        }
    }

    /// The arc of the output frame's circle that the inverse map does not send to the circle
    /// (the preimage of the step's slit); `None` for automorphisms.
    fn arc(&self) -> Option<Arc> {
        match *self {
            DiskMap::Step { step, rot } => {
                // The slit is the Cayley-frame vertical slit of capacity s = (1 − e^{−Δt})/4,
                // whose preimage [−2√s, 2√s] is dilated by e^{Δt/2}; back on the circle an
                // abscissa x is the angle ξ + 2 atan(x) (see `RadialStep`).
                let s = -(-step.dt).exp_m1() / 4.0;
                let half = 2.0 * (2.0 * s.sqrt() * (0.5 * step.dt).exp()).atan();
                Some(Arc {
                    start: step.xi + rot.arg() - half,
                    len: 2.0 * half,
                })
            }
            DiskMap::Tilted { step, rot } => {
                let (start, len) = step.preimage_arc();
                Some(Arc {
                    start: start + rot.arg(),
                    len,
                })
            }
            DiskMap::Mobius { .. } => None,
            DiskMap::Conjugated { step, rot, w0, .. } => {
                let s = -(-step.dt).exp_m1() / 4.0;
                let half = 2.0 * (2.0 * s.sqrt() * (0.5 * step.dt).exp()).atan();
                let e = |a: f64| {
                    let g = Complex64::from_polar(1.0, a) * rot;
                    ((g - w0) / (1.0 - w0.conj() * g)).arg()
                };
                let a = e(step.xi - half);
                let b = e(step.xi + half);
                let len = (b - a).rem_euclid(TAU);
                if len > PI {
                    // The automorphism keeps the orientation, so a long arc is genuine only if
                    // the step's midpoint falls in its middle; otherwise rounding swapped the
                    // ends of a tiny one.
                    let m = (e(step.xi) - a).rem_euclid(TAU);
                    if !(m > 0.25 * len && m < 0.75 * len) {
                        return Some(Arc {
                            start: b,
                            len: (a - b).rem_euclid(TAU),
                        });
                    }
                }
                Some(Arc { start: a, len })
            }
        }
    }
}

/// An arc of the unit circle from angle `start`, counter-clockwise over `len` ∈ [0, 2π].
#[derive(Debug, Clone, Copy, PartialEq)]
struct Arc {
    start: f64,
    len: f64,
}

/// Arcs longer than this are treated as the whole circle (their blocks keep no series anyway).
const LONG_ARC: f64 = 3.0;

impl Arc {
    fn full() -> Self {
        Arc {
            start: 0.0,
            len: TAU,
        }
    }

    /// The image of the arc under a map's forward boundary correspondence (orientation kept).
    fn push(self, m: &DiskMap) -> Self {
        if self.len >= LONG_ARC {
            return Arc::full();
        }
        let a = m.forward_angle(self.start);
        let b = m.forward_angle(self.start + self.len);
        Arc {
            start: a,
            len: (b - a).rem_euclid(TAU),
        }
    }

    /// The shorter of the two arcs that start at one of the arcs and cover both.
    fn union(self, o: Arc) -> Self {
        if self.len >= LONG_ARC || o.len >= LONG_ARC {
            return Arc::full();
        }
        let d1 = (o.start - self.start).rem_euclid(TAU);
        let l1 = self.len.max(d1 + o.len);
        let d2 = (self.start - o.start).rem_euclid(TAU);
        let l2 = o.len.max(d2 + self.len);
        if l1 <= l2 {
            Arc {
                start: self.start,
                len: l1.min(TAU),
            }
        } else {
            Arc {
                start: o.start,
                len: l2.min(TAU),
            }
        }
    }
}

fn union_opt(a: Option<Arc>, b: Option<Arc>) -> Option<Arc> {
    match (a, b) {
        (Some(a), Some(b)) => Some(a.union(b)),
        (a, None) => a,
        (None, b) => b,
    }
}

/// Maps in a leaf block.
const LEAF: usize = 8;
/// Laurent coefficients `a₁ … a_TERMS` kept per block (plus `a₋₁`, `a₀`).
const TERMS: usize = 60;
const _: () = assert!(TERMS % 4 == 0, "power_tail takes the terms four at a time");
/// Samples on the circle `|z − c| = SAMPLE_RADIUS · R` (the DFT length).
const SAMPLES: usize = 128;
/// Radius of the sampling circle in units of the arc's chord radius `R`.
const SAMPLE_RADIUS: f64 = 1.4;
/// Series used only when `|z − c| > ACCEPT · R`.
const ACCEPT: f64 = 1.8;
/// Blocks whose arc's chord radius exceeds this keep no series (their acceptance disk would
/// cover all of D).
const MAX_RADIUS: f64 = 1.0;

/// Series terms `a₁ … a_M` needed at `|z − c|² = ratio2 · R²` (ratio2 > ACCEPT²): the terms
/// fall off like `(R/|z − c|)^m`, so `M = ⌈36.8 / ln(|z − c|/R)⌉` (e^{−36.8} = 10⁻¹⁶), at least
/// 8 and at most `TERMS`.
#[inline]
fn term_count(ratio2: f64) -> usize {
    let m = (73.6 / ratio2.ln()).ceil();
    if m.is_finite() {
        // (A multiple of 4, for `power_tail`.)
        ((m as usize).clamp(8, TERMS) + 3) & !3
    } else {
        TERMS
    }
}

/// `Σ_i c_i v^{i+1}` with four interleaved Horner chains in `v⁴` (`c.len()` a multiple of 4):
/// a series evaluation is a chain of dependent multiply-adds, and four independent ones run
/// about four times as fast on a pipelined processor (Estrin's idea; common practice).
#[inline]
fn power_tail(c: &[Complex64], v: Complex64) -> Complex64 {
    let v2 = v * v;
    let v4 = v2 * v2;
    let zero = Complex64::new(0.0, 0.0);
    let (mut p0, mut p1, mut p2, mut p3) = (zero, zero, zero, zero);
    for q in c.chunks_exact(4).rev() {
        p0 = p0 * v4 + q[0];
        p1 = p1 * v4 + q[1];
        p2 = p2 * v4 + q[2];
        p3 = p3 * v4 + q[3];
    }
    v * (p0 + v * p1 + v2 * (p2 + v * p3))
}

#[derive(Debug, Clone)]
struct Node {
    arc: Option<Arc>,
    /// `F_B(0)`.
    q: Complex64,
    centre: Complex64,
    radius: f64,
    coeffs: [Complex64; TERMS + 2],
    has_series: bool,
}

/// `e^{2πi j / SAMPLES}`.
fn twiddles() -> &'static [Complex64; SAMPLES] {
    static TW: std::sync::OnceLock<[Complex64; SAMPLES]> = std::sync::OnceLock::new();
    TW.get_or_init(|| {
        let mut t = [Complex64::new(0.0, 0.0); SAMPLES];
        for (j, e) in t.iter_mut().enumerate() {
            *e = Complex64::from_polar(1.0, TAU * j as f64 / SAMPLES as f64);
        }
        t
    })
}

/// A disk chain with its block tree, grown one map at a time (see the module docs).
#[derive(Debug, Clone, Default)]
pub struct DiskChain {
    maps: Vec<DiskMap>,
    /// `levels[l][k]` covers maps `[k·LEAF·2^l, (k+1)·LEAF·2^l)`.
    levels: Vec<Vec<Node>>,
}

impl DiskChain {
    /// An empty chain (the identity).
    pub fn new() -> Self {
        Self::default()
    }

    /// Number of maps.
    pub fn len(&self) -> usize {
        self.maps.len()
    }

    /// Whether the chain has no map.
    pub fn is_empty(&self) -> bool {
        self.maps.is_empty()
    }

    /// The maps, in order.
    pub fn maps(&self) -> &[DiskMap] {
        &self.maps
    }

    /// Approximate heap memory in bytes (maps and blocks).
    pub fn memory_bytes(&self) -> usize {
        self.maps.capacity() * std::mem::size_of::<DiskMap>()
            + self
                .levels
                .iter()
                .map(|l| l.capacity() * std::mem::size_of::<Node>())
                .sum::<usize>()
    }

    /// Blocks with a usable series, and all blocks (a diagnostic of the tree's reach).
    pub fn series_blocks(&self) -> (usize, usize) {
        let all = self.levels.iter().map(|l| l.len()).sum();
        let with = self
            .levels
            .iter()
            .flat_map(|l| l.iter())
            .filter(|n| n.has_series)
            .count();
        (with, all)
    }

    /// Append a map; completes every block that ends with it.
    pub fn push(&mut self, m: DiskMap) {
        self.maps.push(m);
        let n = self.maps.len();
        if n % LEAF != 0 {
            return;
        }
        let mut level = 0;
        let mut k = n / LEAF - 1;
        loop {
            if self.levels.len() <= level {
                self.levels.push(Vec::new());
            }
            let node = self.build(level, k);
            debug_assert_eq!(self.levels[level].len(), k);
            self.levels[level].push(node);
            if k % 2 == 0 {
                break;
            }
            level += 1;
            k /= 2;
        }
    }

    fn build(&self, level: usize, k: usize) -> Node {
        let arc = if level == 0 {
            let start = k * LEAF;
            let mut a: Option<Arc> = None;
            for m in &self.maps[start..start + LEAF] {
                a = union_opt(a.map(|x| x.push(m)), m.arc());
            }
            a
        } else {
            let (first, second) = (
                &self.levels[level - 1][2 * k],
                &self.levels[level - 1][2 * k + 1],
            );
            let size = LEAF << (level - 1);
            let start = (2 * k + 1) * size;
            let pushed = first.arc.map(|mut a| {
                for m in &self.maps[start..start + size] {
                    a = a.push(m);
                    if a.len >= LONG_ARC {
                        break;
                    }
                }
                a
            });
            union_opt(pushed, second.arc)
        };
        let mut node = Node {
            arc,
            q: Complex64::new(0.0, 0.0),
            centre: Complex64::new(1.0, 0.0),
            radius: 0.0,
            coeffs: [Complex64::new(0.0, 0.0); TERMS + 2],
            has_series: false,
        };
        node.q = self.apply_block(level, k, Complex64::new(0.0, 0.0), None);
        if let Some(a) = arc {
            if a.len < LONG_ARC {
                node.centre = Complex64::from_polar(1.0, a.start + 0.5 * a.len);
                node.radius = 2.0 * (0.25 * a.len).sin();
                if node.radius <= MAX_RADIUS && node.radius > 0.0 {
                    node.coeffs = self.sample_coefficients(level, k, &node);
                    node.has_series = node
                        .coeffs
                        .iter()
                        .all(|c| c.re.is_finite() && c.im.is_finite());
                }
            }
        }
        node
    }

    /// Series coefficients of `H_B = M_q⁻¹ ∘ F_B` about the node's centre, scaled as
    /// `b_m = a_m r^{−m}` (m = −1, 0, 1, …, TERMS), from samples on the circle of radius
    /// `r = SAMPLE_RADIUS · R` (points outside D by Schwarz reflection).
    fn sample_coefficients(&self, level: usize, k: usize, node: &Node) -> [Complex64; TERMS + 2] {
        let r = SAMPLE_RADIUS * node.radius;
        let tw = twiddles();
        let q = node.q;
        let mut f = [Complex64::new(0.0, 0.0); SAMPLES];
        for (j, fj) in f.iter_mut().enumerate() {
            let z = node.centre + tw[j] * r;
            let fz = if z.norm_sqr() <= 1.0 {
                self.apply_block(level, k, z, None)
            } else {
                let inner = self.apply_block(level, k, 1.0 / z.conj(), None);
                1.0 / inner.conj()
            };
            *fj = (fz - q) / (1.0 - q.conj() * fz);
        }
        let mut a = [Complex64::new(0.0, 0.0); TERMS + 2];
        for (i, am) in a.iter_mut().enumerate() {
            let m = i as i64 - 1;
            let mut s = Complex64::new(0.0, 0.0);
            for (j, fj) in f.iter().enumerate() {
                s += fj * tw[(m * j as i64).rem_euclid(SAMPLES as i64) as usize];
            }
            *am = s / SAMPLES as f64;
        }
        a
    }

    /// `F_B(z)` for block `(level, k)`; `own` is the node itself when it is already stored (its
    /// series may then be used), `None` while it is being built (its halves are used).
    fn apply_block(&self, level: usize, k: usize, z: Complex64, own: Option<&Node>) -> Complex64 {
        self.apply_block_lanes(level, k, [z], own)[0]
    }

    /// [`DiskChain::apply_block`] at `L` points in lockstep while they take the same path
    /// through the tree (each lane's arithmetic is the one-point arithmetic).
    fn apply_block_lanes<const L: usize>(
        &self,
        level: usize,
        k: usize,
        z: [Complex64; L],
        own: Option<&Node>,
    ) -> [Complex64; L] {
        if let Some(n) = own {
            if n.has_series {
                let w = z.map(|z| z - n.centre);
                let accept = ACCEPT * n.radius;
                let far = w.map(|w| w.norm_sqr() > accept * accept);
                if far.iter().all(|&f| f) {
                    // Coefficients are stored scaled by the sampling radius r (`b_m = a_m r^{−m}`),
                    // so the series is a polynomial in `r/(z − c)`, of modulus below
                    // SAMPLE_RADIUS/ACCEPT: no powers of a tiny arc underflow.
                    let r = SAMPLE_RADIUS * n.radius;
                    let v = w.map(|w| r / w);
                    // Its terms fall off like (R/|z − c|)^m: the first `terms` of them reach
                    // 10⁻¹⁶ (e^{−36.8}) of the block's scale at the lane nearest the arc.
                    let near = w.iter().map(|w| w.norm_sqr()).fold(f64::INFINITY, f64::min);
                    let terms = term_count(near / (n.radius * n.radius));
                    let tail = &n.coeffs[2..2 + terms];
                    let mut out = [Complex64::new(0.0, 0.0); L];
                    for j in 0..L {
                        let h = n.coeffs[0] * (w[j] / r) + n.coeffs[1] + power_tail(tail, v[j]);
                        out[j] = (h + n.q) / (1.0 + n.q.conj() * h);
                    }
                    return out;
                }
                if L > 1 && far.iter().any(|&f| f) {
                    // The lanes part: each goes its own way.
                    let mut out = z;
                    for o in out.iter_mut() {
                        *o = self.apply_block_lanes(level, k, [*o], own)[0];
                    }
                    return out;
                }
            }
        }
        if level == 0 {
            let start = k * LEAF;
            let mut z = z;
            for m in self.maps[start..start + LEAF].iter().rev() {
                for z in z.iter_mut() {
                    *z = m.inverse(*z);
                }
            }
            return z;
        }
        let second = &self.levels[level - 1][2 * k + 1];
        let z = self.apply_block_lanes(level - 1, 2 * k + 1, z, Some(second));
        let first = &self.levels[level - 1][2 * k];
        self.apply_block_lanes(level - 1, 2 * k, z, Some(first))
    }

    /// `F_1 ∘ … ∘ F_m (z)`: a point of frame `m` (after the first `m` maps) taken back to frame 0,
    /// for `|z| ≤ 1`, by the block series where the point is far from a block's arc.
    ///
    /// `m` is clamped to the chain's length.
    pub fn apply_prefix(&self, m: usize, z: Complex64) -> Complex64 {
        self.apply_prefix_lanes(m, [z])[0]
    }

    /// [`DiskChain::apply_prefix`] at `L` points at once, with the same values to the last bit:
    /// the lanes go through the tree together while they take the same path, so that their
    /// independent chains of operations overlap in the processor.
    pub fn apply_prefix_lanes<const L: usize>(
        &self,
        m: usize,
        z: [Complex64; L],
    ) -> [Complex64; L] {
        let m = m.min(self.maps.len());
        let leaves = m / LEAF;
        let mut z = z;
        for s in self.maps[leaves * LEAF..m].iter().rev() {
            for z in z.iter_mut() {
                *z = s.inverse(*z);
            }
        }
        // The complete leaves [0, leaves) as aligned dyadic blocks, the latest first.
        let mut rest = leaves;
        let mut level = 0;
        while rest > 0 {
            if rest & 1 == 1 {
                let k = rest - 1;
                let node = &self.levels[level][k];
                z = self.apply_block_lanes(level, k, z, Some(node));
                rest -= 1;
            }
            rest >>= 1;
            level += 1;
        }
        z
    }

    /// The same as [`DiskChain::apply_prefix`] by composing every map (the reference).
    pub fn apply_prefix_direct(&self, m: usize, z: Complex64) -> Complex64 {
        let m = m.min(self.maps.len());
        self.maps[..m].iter().rev().fold(z, |z, s| s.inverse(z))
    }

    /// The trace point of map `n` (0-based) when it is a radial step: the tip of its slit taken
    /// back to frame 0; `None` for automorphisms.
    pub fn tip_point(&self, n: usize) -> Option<Complex64> {
        match self.maps.get(n)? {
            DiskMap::Step { step, .. } => Some(self.apply_prefix(n, step.tip())),
            DiskMap::Tilted { step, .. } => Some(self.apply_prefix(n, step.tip())),
            DiskMap::Conjugated { step, d, .. } => Some(self.apply_prefix(n, d.invert(step.tip()))),
            DiskMap::Mobius { .. } => None,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn arc_union_is_the_shorter_cover() {
        let a = Arc {
            start: 6.0,
            len: 0.4,
        };
        let b = Arc {
            start: 0.1,
            len: 0.2,
        };
        let u = a.union(b);
        assert!((u.start - 6.0).abs() < 1e-15);
        assert!((u.len - (0.3 + TAU - 6.0)).abs() < 1e-12);
    }

    fn c(re: f64, im: f64) -> Complex64 {
        Complex64::new(re, im)
    }

    #[test]
    fn automorphisms_compose_and_invert() {
        let a = Mobius {
            c: c(0.3, -0.4),
            rot: Complex64::from_polar(1.0, 0.7),
        };
        let b = Mobius {
            c: c(-0.5, 0.2),
            rot: Complex64::from_polar(1.0, -1.1),
        };
        let ab = a.after(&b);
        let ai = a.inverse();
        for z in [
            c(0.1, 0.2),
            c(-0.6, 0.3),
            c(0.0, 0.0),
            c(0.0, 0.99),
            c(0.7, -0.7),
        ] {
            assert!((ab.apply(z) - a.apply(b.apply(z))).norm() < 1e-13, "{z}");
            assert!((ai.apply(a.apply(z)) - z).norm() < 1e-13, "{z}");
            assert!((a.invert(a.apply(z)) - z).norm() < 1e-13, "{z}");
        }
        // |f'| on the circle: (1 − |c|²)/|1 − c̄w|², against a difference quotient.
        let w = Complex64::from_polar(1.0, 2.0);
        let e = 1e-6;
        let num = (a.apply(w * Complex64::from_polar(1.0, e)) - a.apply(w)).norm() / e;
        assert!((num - a.stretch(w)).abs() < 1e-5 * a.stretch(w));
    }

    /// The conjugated step read by hand: `u ↦ E(rot·G(D(u)))`.
    fn conjugated(step: RadialStep, rot: Complex64, d: Mobius) -> (DiskMap, Complex64) {
        let w0 = rot * step.forward(d.apply(c(0.0, 0.0)));
        (DiskMap::Conjugated { step, rot, d, w0 }, w0)
    }

    #[test]
    fn a_conjugated_step_is_the_step_read_in_another_frame() {
        let step = RadialStep::new(0.8, 0.01);
        let rot = Complex64::from_polar(1.0, -0.3);
        let d = Mobius {
            c: c(0.5, 0.3),
            rot: Complex64::from_polar(1.0, 0.4),
        };
        let (m, w0) = conjugated(step, rot, d);
        for u in [c(0.1, 0.2), c(-0.6, 0.3), c(0.2, -0.9), c(-0.3, -0.3)] {
            let w = rot * step.forward(d.apply(u));
            let out = (w - w0) / (1.0 - w0.conj() * w);
            assert!((m.inverse(out) - u).norm() < 1e-12, "{u}");
        }
        // It fixes 0, and its arc is where the circle is not sent to the circle.
        assert!(m.inverse(c(0.0, 0.0)).norm() < 1e-14);
        let arc = m.arc().expect("a step has an arc");
        assert!(arc.len > 0.0 && arc.len < 1.0);
        let mid = Complex64::from_polar(1.0, arc.start + 0.5 * arc.len);
        assert!(m.inverse(mid).norm() < 1.0 - 1e-3);
        for a in [
            arc.start - 0.05,
            arc.start + arc.len + 0.05,
            arc.start + 3.0,
        ] {
            let r = m.inverse(Complex64::from_polar(1.0, a)).norm();
            assert!((r - 1.0).abs() < 1e-12, "angle {a}: |F| = {r}");
        }
        // The boundary correspondence of the forward map agrees with the inverse.
        let a = arc.start + arc.len + 0.3;
        let back = m.inverse(Complex64::from_polar(1.0, a)).arg();
        let fwd = m.forward_angle(back);
        assert!(((fwd - a + PI).rem_euclid(TAU) - PI).abs() < 1e-10);
    }

    #[test]
    fn chains_of_conjugated_steps_use_their_series_and_agree_with_direct_composition() {
        // A slit crawling along the circle, each step taken in a frame centred near its tip
        // (|c| = 0.9 towards the tip) and read in a frame centred far from it, as the CLE
        // geometry records them.
        let mut chain = DiskChain::new();
        for k in 0..1200 {
            let xi = 0.2 + 0.002 * k as f64;
            let near = Mobius {
                c: Complex64::from_polar(0.9, xi),
                rot: c(1.0, 0.0),
            };
            let step = RadialStep::new(0.0, 1e-3);
            chain.push(conjugated(step, c(1.0, 0.0), near).0);
        }
        let (with, all) = chain.series_blocks();
        assert!(with * 2 > all, "{with} of {all} blocks have a series");
        for z in [
            c(0.0, 0.0),
            c(-0.5, 0.1),
            c(0.3, 0.6),
            Complex64::from_polar(0.999, 2.5),
        ] {
            let fast = chain.apply_prefix(chain.len(), z);
            let direct = chain.apply_prefix_direct(chain.len(), z);
            assert!((fast - direct).norm() < 1e-10, "{z}: {fast} vs {direct}");
        }
    }
}
