//! Driving functions of Loewner chains: user-given samples, Brownian forcing `√κ B`, and
//! refinement by Brownian bridges.
//!
//! A [`DrivingFunction`] is a list of grid times `0 = t_0 < … < t_N` (capacity time in the chordal
//! convention, radial time in the radial one) with values `W_0, …, W_N`.
//!
//! A [`BrownianPath`] is one sample path of `√κ B`, a pure function of `(seed, stream)`: its values
//! on a base grid come from consecutive standard normals of the stream, and every point added by
//! bisection is drawn from the exact Brownian-bridge law `N((W_a + W_b)/2, κ(t_b − t_a)/4)` with a
//! normal that depends only on the point's *dyadic address* inside its base interval. So a path
//! refined at different places, or to different depths, is always the same path: coarse and fine
//! resolutions of one seed can be compared pathwise.

use crate::error::{Error, Result};
use crate::rng;
use rand::RngCore;
use rand_distr::{Distribution, StandardNormal};

/// A sampled driving function `t ↦ W_t` on a strictly increasing grid starting at `t = 0`.
#[derive(Debug, Clone, PartialEq)]
pub struct DrivingFunction {
    t: Vec<f64>,
    w: Vec<f64>,
}

impl DrivingFunction {
    /// Build from grid times and values.
    ///
    /// # Errors
    /// [`Error::InvalidData`] unless `t` and `w` have the same length ≥ 2, every value is finite,
    /// `t[0] = 0` and `t` is strictly increasing.
    pub fn new(t: Vec<f64>, w: Vec<f64>) -> Result<Self> {
        if t.len() != w.len() {
            return Err(Error::InvalidData(format!(
                "driving function: {} times but {} values",
                t.len(),
                w.len()
            )));
        }
        if t.len() < 2 {
            return Err(Error::InvalidData(format!(
                "driving function: needs at least 2 samples (t = 0 and one later time), got {}",
                t.len()
            )));
        }
        if let Some(i) = (0..t.len()).find(|&i| !t[i].is_finite() || !w[i].is_finite()) {
            return Err(Error::InvalidData(format!(
                "driving function: sample {} (t = {}, W = {}) is not a finite number",
                i + 1,
                t[i],
                w[i]
            )));
        }
        if t[0] != 0.0 {
            return Err(Error::InvalidData(format!(
                "driving function: the first time must be 0, got t = {}",
                t[0]
            )));
        }
        if let Some(i) = (1..t.len()).find(|&i| t[i] <= t[i - 1]) {
            return Err(Error::InvalidData(format!(
                "driving function: times must increase strictly, but sample {} has t = {} after t = {}",
                i + 1,
                t[i],
                t[i - 1]
            )));
        }
        Ok(DrivingFunction { t, w })
    }

    /// Build from `(t, W)` pairs (same rules as [`DrivingFunction::new`]).
    ///
    /// # Errors
    /// As [`DrivingFunction::new`].
    pub fn from_pairs(pairs: &[(f64, f64)]) -> Result<Self> {
        Self::new(
            pairs.iter().map(|p| p.0).collect(),
            pairs.iter().map(|p| p.1).collect(),
        )
    }

    /// Sample a deterministic function `f` on `n` equal steps of `[0, time]`.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] for `n = 0` or a time that is not finite and positive;
    /// [`Error::InvalidData`] if `f` returns a non-finite value.
    pub fn from_fn(time: f64, n: usize, f: impl Fn(f64) -> f64) -> Result<Self> {
        check_time(time)?;
        if n == 0 {
            return Err(Error::param("steps", n, "an integer ≥ 1"));
        }
        let t: Vec<f64> = (0..=n).map(|k| time * k as f64 / n as f64).collect();
        let w = t.iter().map(|&s| f(s)).collect();
        Self::new(t, w)
    }

    /// Grid times `t_0 = 0, …, t_N`.
    pub fn times(&self) -> &[f64] {
        &self.t
    }

    /// Values `W_0, …, W_N`.
    pub fn values(&self) -> &[f64] {
        &self.w
    }

    /// Number of steps `N` (one less than the number of samples).
    pub fn steps(&self) -> usize {
        self.t.len() - 1
    }

    /// The final time `t_N`.
    pub fn final_time(&self) -> f64 {
        self.t[self.t.len() - 1]
    }

    /// The coarser driving function made of every `factor`-th sample (the last sample is always
    /// kept). With a Brownian path this is the same path seen at a coarser resolution.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] for `factor = 0`.
    pub fn subsample(&self, factor: usize) -> Result<Self> {
        if factor == 0 {
            return Err(Error::param("factor", factor, "an integer ≥ 1"));
        }
        let n = self.steps();
        let mut idx: Vec<usize> = (0..=n).step_by(factor).collect();
        if *idx.last().unwrap_or(&0) != n {
            idx.push(n);
        }
        Ok(DrivingFunction {
            t: idx.iter().map(|&i| self.t[i]).collect(),
            w: idx.iter().map(|&i| self.w[i]).collect(),
        })
    }
}

/// Check that a time horizon is finite and positive.
pub(crate) fn check_time(time: f64) -> Result<()> {
    if time.is_finite() && time > 0.0 {
        Ok(())
    } else {
        Err(Error::param("time", time, "a finite number > 0"))
    }
}

/// Check that κ is finite and positive.
pub(crate) fn check_kappa(kappa: f64) -> Result<()> {
    if kappa.is_finite() && kappa > 0.0 {
        Ok(())
    } else {
        Err(Error::param("kappa", kappa, "a finite number > 0"))
    }
}

/// Where a grid point sits: base interval `base`, dyadic position `num / 2^level` inside it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct Address {
    base: u32,
    level: u8,
    num: u64,
}

/// Deepest bisection level inside one base interval (2^40 sub-steps).
pub const MAX_BISECTION_LEVEL: u8 = 40;

/// Most base intervals a [`BrownianPath`] may have (the address space of bridge normals).
pub const MAX_BASE_STEPS: usize = 1 << 22;

/// One sample path of `√κ B` on `[0, T]`, refinable by Brownian bridges (see the module docs).
#[derive(Debug, Clone)]
pub struct BrownianPath {
    kappa: f64,
    seed: u64,
    stream: u64,
    base_t: Vec<f64>,
    driving: DrivingFunction,
    addr: Vec<Address>,
}

impl BrownianPath {
    /// A path of `√κ B` sampled on the base grid `base_t` (strictly increasing, starting at 0),
    /// from the random stream `(seed, stream)` of [`rng::stream`] with tag [`rng::Tag::Driving`].
    ///
    /// # Errors
    /// Bad κ, a bad grid, or more than [`MAX_BASE_STEPS`] steps.
    pub fn on_grid(kappa: f64, base_t: Vec<f64>, seed: u64, stream: u64) -> Result<Self> {
        check_kappa(kappa)?;
        if base_t.len() > MAX_BASE_STEPS + 1 {
            return Err(Error::param(
                "steps",
                base_t.len() - 1,
                format!("at most {MAX_BASE_STEPS} base steps"),
            ));
        }
        let mut g = rng::stream(seed, rng::Tag::Driving, stream);
        let mut w = Vec::with_capacity(base_t.len());
        w.push(0.0);
        for k in 1..base_t.len() {
            let z: f64 = StandardNormal.sample(&mut g);
            let dt = base_t[k] - base_t[k - 1];
            w.push(w[k - 1] + (kappa * dt).sqrt() * z);
        }
        let driving = DrivingFunction::new(base_t.clone(), w)?;
        let addr = (0..base_t.len())
            .map(|k| Address {
                base: k as u32,
                level: 0,
                num: 0,
            })
            .collect();
        Ok(BrownianPath {
            kappa,
            seed,
            stream,
            base_t,
            driving,
            addr,
        })
    }

    /// A path on `n` equal steps of `[0, time]`.
    ///
    /// # Errors
    /// Bad κ, time or `n` (must be ≥ 1 and ≤ [`MAX_BASE_STEPS`]).
    pub fn uniform(kappa: f64, time: f64, n: usize, seed: u64, stream: u64) -> Result<Self> {
        check_time(time)?;
        if n == 0 || n > MAX_BASE_STEPS {
            return Err(Error::param(
                "points",
                n,
                format!("an integer from 1 to {MAX_BASE_STEPS}"),
            ));
        }
        let t = (0..=n).map(|k| time * k as f64 / n as f64).collect();
        Self::on_grid(kappa, t, seed, stream)
    }

    /// A path on a geometric grid: one step `[0, t_min]`, then steps with `Δt/t = ratio` up to
    /// `time` (the last step is shortened to end exactly at `time`). Such grids resolve every
    /// scale equally well, which suits scale-invariant statistics.
    ///
    /// # Errors
    /// Bad κ, `t_min` not in `(0, time)`, or `ratio` not in `(0, 10]`.
    pub fn geometric(
        kappa: f64,
        t_min: f64,
        time: f64,
        ratio: f64,
        seed: u64,
        stream: u64,
    ) -> Result<Self> {
        check_time(time)?;
        if !(t_min.is_finite() && t_min > 0.0 && t_min < time) {
            return Err(Error::param(
                "t_min",
                t_min,
                format!("a number in (0, {time})"),
            ));
        }
        if !(ratio.is_finite() && ratio > 0.0 && ratio <= 10.0) {
            return Err(Error::param("ratio", ratio, "a number in (0, 10]"));
        }
        Self::on_grid(kappa, geometric_grid(t_min, time, ratio), seed, stream)
    }

    /// The current samples of the path.
    pub fn driving(&self) -> &DrivingFunction {
        &self.driving
    }

    /// κ of this path.
    pub fn kappa(&self) -> f64 {
        self.kappa
    }

    /// Split step `k` (between samples `k` and `k+1`) into `2^levels` equal sub-steps whose
    /// values are drawn from the Brownian bridge. Returns how many levels were applied (fewer when
    /// [`MAX_BISECTION_LEVEL`] is reached).
    pub fn refine_steps(&mut self, requests: &[(usize, u8)]) -> u8 {
        let mut by_step = vec![0u8; self.driving.steps()];
        for &(k, lv) in requests {
            if k < by_step.len() {
                by_step[k] = by_step[k].max(lv);
            }
        }
        let mut t = Vec::with_capacity(self.driving.t.len());
        let mut w = Vec::with_capacity(self.driving.t.len());
        let mut addr = Vec::with_capacity(self.driving.t.len());
        let mut applied_min = u8::MAX;
        for (k, &levels) in by_step.iter().enumerate() {
            t.push(self.driving.t[k]);
            w.push(self.driving.w[k]);
            addr.push(self.addr[k]);
            if levels == 0 {
                continue;
            }
            let (a, b) = (self.addr[k], self.addr[k + 1]);
            let (base, level, num) = normalise(a, b);
            let room = MAX_BISECTION_LEVEL.saturating_sub(level);
            let levels = levels.min(room);
            applied_min = applied_min.min(levels);
            if levels == 0 {
                continue;
            }
            // Values at the dyadic points of level `level + levels` strictly inside [num, num+1].
            let sub = 1usize << levels;
            let mut vals = vec![f64::NAN; sub + 1];
            vals[0] = self.driving.w[k];
            vals[sub] = self.driving.w[k + 1];
            let mut stride = sub;
            let mut lv = level;
            while stride > 1 {
                let half = stride / 2;
                lv += 1;
                for left in (0..sub).step_by(stride) {
                    let mid = left + half;
                    let mid_num = (num << (lv - level)) + mid as u64 / half as u64;
                    let z = self.bridge_normal(base, lv, mid_num);
                    let h = self.dyadic_length(base, lv - 1);
                    vals[mid] = 0.5 * (vals[left] + vals[left + stride])
                        + 0.5 * (self.kappa * h).sqrt() * z;
                }
                stride = half;
            }
            let (tb0, tb1) = self.base_interval(base);
            for (i, &v) in vals.iter().enumerate().take(sub).skip(1) {
                let n_here = (num << levels) + i as u64;
                let l_here = level + levels;
                t.push(tb0 + (tb1 - tb0) * (n_here as f64 / (1u64 << l_here) as f64));
                w.push(v);
                addr.push(Address {
                    base,
                    level: l_here,
                    num: n_here,
                });
            }
        }
        let last = self.driving.steps();
        t.push(self.driving.t[last]);
        w.push(self.driving.w[last]);
        addr.push(self.addr[last]);
        self.driving = DrivingFunction { t, w };
        self.addr = addr;
        if applied_min == u8::MAX {
            0
        } else {
            applied_min
        }
    }

    /// Walk the base grid in time order, bisecting steps on demand: `visit(t0, t1, w0, w1, last)`
    /// is called for a candidate step and returns `true` when it accepts (and uses) the step, or
    /// `false` to have it split in two at its midpoint, drawn from the Brownian bridge with the
    /// same dyadic-address normals as [`BrownianPath::refine_steps`] (so the walk sees the same
    /// path). With `last = true` the step is at `max_level` and must be accepted.
    /// Returns the number of accepted steps.
    pub fn walk_adaptive(
        &self,
        max_level: u8,
        mut visit: impl FnMut(f64, f64, f64, f64, bool) -> bool,
    ) -> usize {
        let max_level = max_level.min(MAX_BISECTION_LEVEL);
        let (t, w) = (&self.base_t, self.base_values());
        let mut accepted = 0;
        // Stack of (level, num, t0, t1, w0, w1), right halves pushed first.
        let mut stack: Vec<(u8, u64, f64, f64, f64, f64)> = Vec::new();
        for k in 0..t.len() - 1 {
            stack.push((0, 0, t[k], t[k + 1], w[k], w[k + 1]));
            while let Some((level, num, t0, t1, w0, w1)) = stack.pop() {
                let last = level >= max_level;
                if visit(t0, t1, w0, w1, last) || last {
                    accepted += 1;
                    continue;
                }
                let lv = level + 1;
                let mid_num = 2 * num + 1;
                let z = self.bridge_normal(k as u32, lv, mid_num);
                let h = self.dyadic_length(k as u32, level);
                let wm = 0.5 * (w0 + w1) + 0.5 * (self.kappa * h).sqrt() * z;
                let tb0 = t[k];
                let tm = tb0 + (t[k + 1] - tb0) * (mid_num as f64 / (1u64 << lv) as f64);
                stack.push((lv, mid_num, tm, t1, wm, w1));
                stack.push((lv, 2 * num, t0, tm, w0, wm));
            }
        }
        accepted
    }

    /// Values of the path on its base grid (before any refinement).
    fn base_values(&self) -> Vec<f64> {
        let mut out = Vec::with_capacity(self.base_t.len());
        let (t, w) = (self.driving.times(), self.driving.values());
        let mut i = 0;
        for &tb in &self.base_t {
            while t[i] != tb {
                i += 1;
            }
            out.push(w[i]);
        }
        out
    }

    /// Bisection depth already used by step `k` (0 on the base grid).
    pub fn depth(&self, k: usize) -> u8 {
        let (_, level, _) = normalise(self.addr[k], self.addr[k + 1]);
        level
    }

    /// Length of a dyadic sub-interval of level `level` of base interval `base` (computed the
    /// same way everywhere, so bridge values agree to the bit).
    fn dyadic_length(&self, base: u32, level: u8) -> f64 {
        let (a, b) = self.base_interval(base);
        (b - a) / (1u64 << level) as f64
    }

    fn base_interval(&self, base: u32) -> (f64, f64) {
        let b = base as usize;
        (self.base_t[b], self.base_t[b + 1])
    }

    /// Standard normal attached to the dyadic point `num / 2^level` of base interval `base`
    /// (`num` odd): drawn from its own counter block of the stream, so it is independent of the
    /// order in which points are refined.
    fn bridge_normal(&self, base: u32, level: u8, num: u64) -> f64 {
        let heap = (1u64 << level) | num; // unique for odd num < 2^level
        let block = (1u64 << 63) | ((base as u64) << 41) | heap;
        let mut g = rng::stream(self.seed, rng::Tag::Driving, self.stream);
        rng::seek_block(&mut g, block);
        // Box–Muller from the block's first two 64-bit words: the normal never reads past its
        // own 16-word block, so addresses cannot overlap.
        let u1 = 1.0 - (g.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64); // (0, 1]
        let u2 = (g.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64);
        (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
    }
}

/// Express a grid interval between two adjacent points as `(base, level, num)`: the interval
/// `[num, num + 1] / 2^level` of base interval `base`.
fn normalise(a: Address, b: Address) -> (u32, u8, u64) {
    if b.level == 0 && b.base == a.base + 1 {
        // Right end is the end of the base interval: treat it as num = 2^level in `a.base`.
        return (a.base, a.level, a.num);
    }
    let level = a.level.max(b.level);
    (a.base, level, a.num << (level - a.level))
}

/// Geometric grid: 0, t_min, then ×(1 + ratio) up to `time` (last point exactly `time`).
pub fn geometric_grid(t_min: f64, time: f64, ratio: f64) -> Vec<f64> {
    let mut t = vec![0.0, t_min];
    let q = 1.0 + ratio;
    let mut k = 1i32;
    loop {
        let next = t_min * q.powi(k);
        if next >= time * (1.0 - 1e-12) {
            break;
        }
        t.push(next);
        k += 1;
    }
    t.push(time);
    t
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn refinement_is_order_independent() {
        let mut a = BrownianPath::uniform(3.0, 1.0, 8, 11, 2).unwrap();
        let mut b = a.clone();
        // a: refine step 3 by 2 levels at once; b: one level, then both halves one more level.
        a.refine_steps(&[(3, 2)]);
        b.refine_steps(&[(3, 1)]);
        b.refine_steps(&[(3, 1), (4, 1)]);
        assert_eq!(a.driving(), b.driving());
        assert_eq!(a.driving().steps(), 11);
    }

    #[test]
    fn walk_sees_the_refined_path() {
        let mut a = BrownianPath::uniform(6.0, 2.0, 5, 3, 9).unwrap();
        let b = a.clone();
        a.refine_steps(&[(1, 3), (4, 2)]);
        let mut walked = vec![(0.0, 0.0)];
        b.walk_adaptive(40, |t0, t1, _w0, w1, _| {
            let want = if (0.4..0.8).contains(&t0) {
                3
            } else if t0 >= 1.6 {
                2
            } else {
                0
            };
            // Depth of this candidate: base step length 0.4 divided by its length.
            let depth = ((0.4 / (t1 - t0)).log2().round()) as i32;
            if depth < want {
                return false;
            }
            walked.push((t1, w1));
            true
        });
        let d = a.driving();
        assert_eq!(walked.len(), d.times().len());
        for ((t, w), (&ta, &wa)) in walked.iter().zip(d.times().iter().zip(d.values())) {
            assert!((t - ta).abs() < 1e-15 && w == &wa, "{t} {w} vs {ta} {wa}");
        }
    }

    #[test]
    fn same_seed_same_path_other_seed_other_path() {
        let a = BrownianPath::uniform(2.0, 1.0, 16, 5, 0).unwrap();
        let b = BrownianPath::uniform(2.0, 1.0, 16, 5, 0).unwrap();
        let c = BrownianPath::uniform(2.0, 1.0, 16, 5, 1).unwrap();
        assert_eq!(a.driving(), b.driving());
        assert_ne!(a.driving().values(), c.driving().values());
    }

    #[test]
    fn rejects_bad_input() {
        assert!(DrivingFunction::new(vec![0.0, 1.0], vec![0.0]).is_err());
        assert!(DrivingFunction::new(vec![0.5, 1.0], vec![0.0, 0.0]).is_err());
        assert!(DrivingFunction::new(vec![0.0, 1.0, 1.0], vec![0.0; 3]).is_err());
        assert!(DrivingFunction::new(vec![0.0, f64::NAN], vec![0.0; 2]).is_err());
        assert!(BrownianPath::uniform(-1.0, 1.0, 4, 0, 0).is_err());
        assert!(BrownianPath::uniform(1.0, 0.0, 4, 0, 0).is_err());
        assert!(BrownianPath::uniform(1.0, 1.0, 0, 0, 0).is_err());
    }
}
