//! CLE_κ configurations in the unit disk as geometry: every loop above a size cutoff, as a closed
//! polyline with its nesting depth and parent loop (DESIGN §6.3).
//!
//! # Method
//! The exploration of [`crate::cle`] (Sheffield's radial SLE_κ(κ−6), Duke Math. J. 2009, with
//! target invariance) is run towards a grid of *targets* (plus the user's marked points), and
//! every branch of the exploration tree now keeps its chain of maps in a
//! [`DiskChain`](crate::disk_fast::DiskChain). A branch created when targets separate keeps a
//! reference to its parent's chain and the length of the prefix it inherits, so a point of any
//! branch's current frame is taken back to the disk through the branch's own maps and then
//! through every ancestor's prefix, each by its block series.
//!
//! Each excursion of the driver's angle θ away from its ends traces one loop (DESIGN §6.1). The
//! tip is mapped back after every step, so the loop's polyline grows as it is traced; the step
//! is shortened when consecutive tip points are further apart than the spacing target, and
//! lengthened when they are much closer. An excursion that ends at 0 closes a loop that does
//! not surround the driver; one that reaches 2π closes the loop around it, whose interior the
//! branch then explores afresh (one level deeper).
//!
//! A loop being traced when targets separate is continued by one branch only (the one whose own
//! θ is further from its ends: the others were cut off from the rest of the loop), so no loop is
//! drawn twice. Nesting: a branch explores a region surrounded by `depth` loops, the innermost
//! being its `region` loop; a loop started there has depth `depth + 1` and that parent.
//!
//! A target is retired once its conformal radius falls below `stop_cr` (its remaining region has
//! in-radius below that, by Koebe's theorem); a branch whose targets are all retired finishes the
//! loop it is tracing and stops. Loops of diameter below `min_size` are counted and dropped.
//!
//! # Status: experimental, not used by the command line
//! Measured on this machine (seeds 1, one configuration each; `min_size` ε, grid ε/2):
//! * A single target (the exploration towards one point, no branching) gives closed, loop-like
//!   polylines for κ = 3; at κ = 6 the loop in progress when the target's domain becomes small
//!   is traced in a frame so compressed at the tip that steps cannot resolve it, and it closes
//!   with a long straight segment.
//! * With a grid of targets the pictures show straight jumps across the disk and, with a weak
//!   target separation (2√(κh)), the same region explored by several branches (crossing,
//!   overlapping loops): targets swept by a slit or pinched early start branches that re-explore
//!   their parent's region. With separation 8 (the default here) fewer branches start, but
//!   straight jumps and crossings remain, and κ = 6 at ε = 0.5 took 44 s (37 000 steps), far
//!   from the goal of ε = 0.02 in a minute.
//! * Slits: with vertical slits (piecewise-constant driving) each slit starts where the driving
//!   point moved to, down the side of the previous slit, and the loops were hairy at the scale
//!   of the spacing target. Steps are now [`TiltedRadialStep`]s that start at the tip and end
//!   where θ asks (`tilted_step`); at a visit of 0 the next slit starts at the force point.
//!   When no tilted slit reaches θ (θ asks for the tip nearer the force point than one slit
//!   allows), a vertical slit between the tip and the force point is solved for instead
//!   (`vertical_slit_for_angle`). The step control checks slits at the tip and 3σ of θ's
//!   increment either side. For κ = 3, one target, ε = 0.1 (seed 1): loop bodies look like
//!   CLE_3 loops at the spacing target, but 40% of the steps fell back, and some "loops" are
//!   slivers of a few long straight segments or close with one long segment; 49 s, 88 657 steps.
//!
//! What is needed (DEVELOPERS.md, "Where things stand"): a consistent treatment of the steps
//! where θ comes closer to the force point than a slit allows, a clock that resolves the tip
//! when it is far from every target (a driver chosen near the tip), and a cheaper way to detect
//! the regions that are cut off than carrying a grid of targets through every step.

use crate::cle::{
    arc_measure, group_connected, AngleProcess, Branch, EndVisit, LoopAround, PointRecord, Tracked,
};
use crate::disk_fast::{DiskChain, DiskMap};
use crate::error::{Error, Result};
use crate::radial::TiltedRadialStep;
use crate::rng::{self, Tag};
use num_complex::Complex64;
use serde::Serialize;
use std::f64::consts::PI;

const TWO_PI: f64 = 2.0 * PI;
/// Driver hysteresis, as in [`crate::cle`]: switch when another Poisson kernel is 1.5× larger.
const SWITCH_RATIO: f64 = 1.5;

/// Numerical settings of a configuration.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LoopSettings {
    /// Loops of diameter at least this are kept (ε).
    pub min_size: f64,
    /// Spacing of the target grid (default ε/2, DESIGN §6.3).
    pub grid: f64,
    /// Target spacing of consecutive polyline points, absolute (default ε/5).
    pub spacing: f64,
    /// A target is retired when its conformal radius falls below this (default ε/4).
    pub stop_cr: f64,
    /// Largest step, in the driver's radial time (default 0.01).
    pub h_max: f64,
    /// Smallest step (default 1e-10).
    pub h_min: f64,
    /// Marked points are kept at least `separation·√(κh)` from the tip (default 8, as in
    /// [`crate::cle::ExploreSettings`]).
    pub separation: f64,
    /// Grid targets are kept at least `target_separation·√(κh)` from the tip (default 8).
    pub target_separation: f64,
    /// Pseudo-hyperbolic closeness below which two targets are disconnected (default 1e-6).
    pub pinch: f64,
    /// Step budget for the configuration (all branches).
    pub max_steps: u64,
    /// Largest radial time spent finishing a loop after a branch's targets are retired.
    pub finish_time: f64,
}

impl LoopSettings {
    /// Defaults for the size cutoff ε (see the field docs).
    pub fn defaults(min_size: f64) -> Self {
        LoopSettings {
            min_size,
            grid: 0.5 * min_size,
            spacing: 0.2 * min_size,
            stop_cr: 0.25 * min_size,
            h_max: 0.01,
            h_min: 1e-10,
            separation: 8.0,
            target_separation: 8.0,
            pinch: 1e-6,
            max_steps: 400_000_000,
            finish_time: 50.0,
        }
    }
}

/// One loop of a configuration.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CleLoop {
    /// Identifier within the configuration (shared with [`LoopAround::loop_id`]).
    pub id: u64,
    /// The loop immediately surrounding this one, if any (`None`: an outermost loop).
    pub parent: Option<u64>,
    /// Nesting depth: 1 for outermost loops, 2 for loops inside one loop, …
    pub depth: u32,
    /// The closed polyline (the first point is not repeated at the end), in the disk.
    pub points: Vec<[f64; 2]>,
    /// Diameter of the polyline (largest extent over 64 directions; within 0.12%).
    pub diameter: f64,
    /// Largest distance between consecutive points, the closing segment included.
    pub max_spacing: f64,
    /// `log CR` of the loop's interior seen from the target that discovered it from inside,
    /// when one did (the loop closed around a target).
    pub log_cr: Option<f64>,
}

/// Counters that say how a configuration was resolved.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize)]
pub struct LoopDiagnostics {
    /// Steps (all branches).
    pub steps: u64,
    /// Steps forced below `h_min` by a target close to the tip and taken at `h_min`.
    pub floor_steps: u64,
    /// Branches of the exploration tree.
    pub branches: u64,
    /// Targets (grid and marked).
    pub targets: u64,
    /// Loops completed (before the size cut).
    pub loops_traced: u64,
    /// Loops below `min_size`, dropped.
    pub loops_small: u64,
    /// Loops left unfinished (the step budget or `finish_time` ran out while tracing them).
    pub loops_unfinished: u64,
    /// Steps whose tilted slit could not put the tip at the angle θ asked for (too close to the
    /// force point for one step); they use the straight slit from the tip.
    pub tilt_fallbacks: u64,
    /// Whether the step budget stopped the exploration.
    pub truncated: bool,
    /// Maps stored in all chains, and their memory in bytes.
    pub maps: u64,
    /// Heap memory of the chains and their block trees, bytes.
    pub chain_bytes: u64,
}

/// One sampled configuration.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LoopConfiguration {
    /// Sample index.
    pub index: u64,
    /// Loops of diameter ≥ `min_size`, in the order they were completed.
    pub loops: Vec<CleLoop>,
    /// The marked points and the loops found around them (outermost first), down to `stop_cr`.
    pub marked: Vec<PointRecord>,
    /// Resolution counters.
    pub diagnostics: LoopDiagnostics,
}

/// Sampler of CLE_κ configurations in the unit disk, all loops of diameter ≥ ε.
#[derive(Debug, Clone)]
pub struct LoopSampler {
    process: AngleProcess,
    settings: LoopSettings,
    marked: Vec<Complex64>,
    targets: Vec<Complex64>,
}

/// A branch with its place in the tree and what it is tracing.
struct LBranch {
    br: Branch,
    chain: usize,
    /// Loop being traced (an excursion of θ in progress).
    exc: Option<u64>,
    /// Whether this branch continues the geometry of `exc`.
    owns: bool,
    depth: u32,
    region: Option<u64>,
    h_spatial: f64,
    tip: Complex64,
    /// The tip as a point of the frame's circle (where the next slit starts).
    tip_w: Complex64,
    finishing: f64,
}

/// Everything one configuration accumulates.
struct State {
    chains: Vec<(DiskChain, Option<(usize, usize)>)>,
    /// Per loop id: depth, parent, and the polyline while it is traced (taken when finished).
    meta: Vec<(u32, Option<u64>)>,
    lines: Vec<Option<Vec<Complex64>>>,
    around_cr: Vec<Option<f64>>,
    done: Vec<CleLoop>,
    records: Vec<PointRecord>,
    retired: Vec<bool>,
    diag: LoopDiagnostics,
    next_branch: u64,
}

impl State {
    /// A point of chain `c`'s frame after its first `m` maps, taken back to the disk.
    fn to_disk(&self, mut c: usize, mut m: usize, mut z: Complex64) -> Complex64 {
        loop {
            let (chain, parent) = &self.chains[c];
            z = chain.apply_prefix(m, z);
            match parent {
                Some((p, k)) => {
                    c = *p;
                    m = *k;
                }
                None => return z,
            }
        }
    }

    fn new_loop(&mut self, depth: u32, parent: Option<u64>, first: Complex64) -> u64 {
        let id = self.meta.len() as u64;
        self.meta.push((depth, parent));
        self.lines.push(Some(vec![first]));
        self.around_cr.push(None);
        id
    }

    /// Close loop `id` (its owner finished tracing it) and keep it if it is large enough.
    fn finish_loop(&mut self, id: u64, min_size: f64) {
        let Some(pts) = self.lines[id as usize].take() else {
            return;
        };
        self.diag.loops_traced += 1;
        let diameter = diameter(&pts);
        if diameter < min_size || pts.len() < 3 {
            self.diag.loops_small += 1;
            return;
        }
        let n = pts.len();
        let max_spacing = (0..n)
            .map(|i| (pts[(i + 1) % n] - pts[i]).norm())
            .fold(0.0, f64::max);
        let (depth, parent) = self.meta[id as usize];
        self.done.push(CleLoop {
            id,
            parent,
            depth,
            points: pts.iter().map(|z| [z.re, z.im]).collect(),
            diameter,
            max_spacing,
            log_cr: self.around_cr[id as usize],
        });
    }
}

/// Largest extent of a point set over 64 directions (within 1 − cos(π/128) ≈ 0.03% of the
/// diameter... bounded by 0.12% for the 64 directions of a half-turn).
fn diameter(pts: &[Complex64]) -> f64 {
    let mut best: f64 = 0.0;
    for j in 0..64 {
        let d = Complex64::from_polar(1.0, PI * j as f64 / 64.0);
        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
        for z in pts {
            let p = z.re * d.re + z.im * d.im;
            lo = lo.min(p);
            hi = hi.max(p);
        }
        best = best.max(hi - lo);
    }
    best
}

/// Distance of an angle from the nearer end of its range.
fn end_distance(theta: f64) -> f64 {
    let a = theta.abs();
    a.min(TWO_PI - a)
}

impl LoopSampler {
    /// A sampler of CLE_κ in the unit disk keeping loops of diameter ≥ `settings.min_size`, with
    /// optional marked points (their surrounding loops are reported).
    ///
    /// Errors: [`Error::InvalidParameter`] for κ outside (8/3, 8), ε outside [0.005, 1], a grid,
    /// spacing or stop radius that is not positive and below 1, or a marked point outside the
    /// open disk.
    pub fn new(kappa: f64, marked: &[Complex64], settings: LoopSettings) -> Result<Self> {
        let process = AngleProcess::new(kappa)?;
        let s = settings;
        if !(s.min_size.is_finite() && (0.005..=1.0).contains(&s.min_size)) {
            return Err(Error::param(
                "min-size",
                s.min_size,
                "0.005 <= min-size <= 1 (loops of diameter >= min-size are kept; the cost grows \
                 like 1/min-size^2)",
            ));
        }
        for (name, v) in [
            ("grid", s.grid),
            ("spacing", s.spacing),
            ("stop-cr", s.stop_cr),
        ] {
            if !(v.is_finite() && (1e-4..=1.0).contains(&v)) {
                return Err(Error::param(name, v, "1e-4 <= value <= 1"));
            }
        }
        if !(s.h_max.is_finite() && s.h_max > 0.0 && s.h_max <= 0.5) {
            return Err(Error::param("h_max", s.h_max, "0 < h_max <= 0.5"));
        }
        if !(s.h_min.is_finite() && s.h_min > 0.0 && s.h_min <= s.h_max) {
            return Err(Error::param("h_min", s.h_min, "0 < h_min <= h_max"));
        }
        for z in marked {
            if !(z.re.is_finite() && z.im.is_finite() && z.norm() < 1.0) {
                return Err(Error::param(
                    "at",
                    z.norm(),
                    format!(
                        "|z| < 1 (the point ({}, {}) is not inside the open unit disk)",
                        z.re, z.im
                    ),
                ));
            }
        }
        // Grid targets: a square grid through 0, inside the disk where CR = 1 − |z|² exceeds
        // the stop radius (closer to the circle a target would be retired at once).
        let g = s.grid;
        let n = (1.0 / g).floor() as i64;
        let mut targets = Vec::new();
        for i in -n..=n {
            for j in -n..=n {
                let z = Complex64::new(i as f64 * g, j as f64 * g);
                if 1.0 - z.norm_sqr() > s.stop_cr {
                    targets.push(z);
                }
            }
        }
        if targets.len() + marked.len() > 2_000_000 {
            return Err(Error::param(
                "grid",
                g,
                "a grid of at most 2e6 targets (grid >= about 1.3e-3)",
            ));
        }
        Ok(LoopSampler {
            process,
            settings,
            marked: marked.to_vec(),
            targets,
        })
    }

    /// The settings.
    pub fn settings(&self) -> &LoopSettings {
        &self.settings
    }

    /// κ.
    pub fn kappa(&self) -> f64 {
        self.process.kappa()
    }

    /// Number of targets (marked points first, then the grid).
    pub fn target_count(&self) -> usize {
        self.marked.len() + self.targets.len()
    }

    /// Configuration `index` of a run with `seed` (a pure function of both).
    pub fn sample(&self, seed: u64, index: u64) -> LoopConfiguration {
        let all: Vec<Complex64> = self
            .marked
            .iter()
            .chain(self.targets.iter())
            .copied()
            .collect();
        let mut st = State {
            chains: vec![(DiskChain::new(), None)],
            meta: Vec::new(),
            lines: Vec::new(),
            around_cr: Vec::new(),
            done: Vec::new(),
            records: self.marked.iter().map(|&z| PointRecord::new(z)).collect(),
            retired: vec![false; all.len()],
            diag: LoopDiagnostics {
                targets: all.len() as u64,
                ..Default::default()
            },
            next_branch: 1,
        };
        let mut br = Branch {
            theta: 0.0,
            pts: all
                .iter()
                .enumerate()
                .map(|(id, &w)| Tracked { id, w, ell: 0.0 })
                .collect(),
            driver: 0,
            rng: rng::substream(seed, Tag::Loops, index, 0),
            before: Vec::new(),
        };
        // The target nearest 0 drives first (any choice is exact by target invariance).
        let k = br.fastest_any();
        let m = br.renormalise(k);
        push_map(&mut st.chains[0].0, m);
        let tip_w = moved(Complex64::new(1.0, 0.0), &m);
        let tip = st.to_disk(
            0,
            st.chains[0].0.len(),
            Complex64::from_polar(1.0, br.theta),
        );
        let root = LBranch {
            br,
            chain: 0,
            exc: None,
            owns: false,
            depth: 0,
            region: None,
            // First steps from the circle: a slit of length about 2√h should not exceed the
            // spacing target.
            h_spatial: (0.25 * self.settings.spacing * self.settings.spacing)
                .min(self.settings.h_max),
            tip,
            tip_w,
            finishing: 0.0,
        };
        let mut stack = vec![root];
        while let Some(mut b) = stack.pop() {
            let spawned = self.run_branch(&mut b, &mut st, seed, index);
            for c in spawned.into_iter().rev() {
                stack.push(c);
            }
        }
        st.diag.branches = st.next_branch;
        for l in st.done.iter_mut() {
            l.log_cr = st.around_cr[l.id as usize];
        }
        st.diag.loops_unfinished = st.lines.iter().filter(|l| l.is_some()).count() as u64;
        st.diag.maps = st.chains.iter().map(|c| c.0.len() as u64).sum();
        st.diag.chain_bytes = st.chains.iter().map(|c| c.0.memory_bytes() as u64).sum();
        LoopConfiguration {
            index,
            loops: st.done,
            marked: st.records,
            diagnostics: st.diag,
        }
    }

    fn is_marked(&self, id: usize) -> bool {
        id < self.marked.len()
    }

    /// Retire targets whose conformal radius is below the stop radius; returns false when the
    /// branch has no live target left (its driver is then kept, retired, to finish a loop).
    fn retire(&self, b: &mut LBranch, st: &mut State) -> bool {
        let log_stop = self.settings.stop_cr.ln();
        for p in &b.br.pts {
            if !st.retired[p.id] && p.log_cr() < log_stop {
                st.retired[p.id] = true;
            }
        }
        let dead = |id: usize| st.retired[id];
        let driver_id = b.br.pts[b.br.driver].id;
        let live = b.br.pts.iter().filter(|p| !dead(p.id)).count();
        if live == 0 {
            let d = b.br.pts[b.br.driver];
            b.br.pts.clear();
            b.br.pts.push(d);
            b.br.driver = 0;
            return false;
        }
        let retired_now = b.br.pts.iter().any(|p| st.retired[p.id]);
        if retired_now {
            b.br.pts.retain(|p| !st.retired[p.id]);
            match b.br.pts.iter().position(|p| p.id == driver_id) {
                Some(k) => b.br.driver = k,
                None => {
                    let k = b.br.fastest_any();
                    let m = b.br.renormalise(k);
                    push_map(&mut st.chains[b.chain].0, m);
                    b.tip_w = moved(b.tip_w, &m);
                }
            }
        }
        true
    }

    /// New branches for targets that left `parent` together: one per group still connected to
    /// each other ([`group_connected`]); see [`LoopSampler::spawn`] for the arguments.
    #[allow(clippy::too_many_arguments)]
    fn spawn_groups(
        &self,
        parent: &LBranch,
        pts: Vec<Tracked>,
        theta: f64,
        prefix: usize,
        exc: Option<u64>,
        (depth, region): (u32, Option<u64>),
        tips: (Complex64, Complex64),
        st: &mut State,
        seed: u64,
        index: u64,
    ) -> Vec<LBranch> {
        if pts.is_empty() {
            return Vec::new();
        }
        group_connected(pts, self.settings.pinch)
            .into_iter()
            .map(|g| {
                self.spawn(
                    parent, theta, g, prefix, exc, depth, region, tips, st, seed, index,
                )
            })
            .collect()
    }

    /// A new branch for targets that left `parent` (frame with tip at angle `theta`, chain
    /// prefix `prefix` of the parent's chain).
    #[allow(clippy::too_many_arguments)]
    fn spawn(
        &self,
        parent: &LBranch,
        theta: f64,
        pts: Vec<Tracked>,
        prefix: usize,
        exc: Option<u64>,
        depth: u32,
        region: Option<u64>,
        (tip, tip_w): (Complex64, Complex64),
        st: &mut State,
        seed: u64,
        index: u64,
    ) -> LBranch {
        let id = st.next_branch;
        st.next_branch += 1;
        let mut br = Branch {
            theta,
            pts,
            driver: 0,
            rng: rng::substream(seed, Tag::Loops, index, id),
            before: Vec::new(),
        };
        let c = st.chains.len();
        st.chains
            .push((DiskChain::new(), Some((parent.chain, prefix))));
        let k = br.fastest_any();
        let m = br.renormalise(k);
        push_map(&mut st.chains[c].0, m);
        let tip_w = moved(tip_w, &m);
        LBranch {
            br,
            chain: c,
            exc,
            owns: false,
            depth,
            region,
            h_spatial: parent.h_spatial,
            tip,
            tip_w,
            finishing: 0.0,
        }
    }

    /// Shorten `h` until the slit the step may draw stays within the spacing target, predicted
    /// before the step: a radial slit of length 2√h at the tip, and, when θ is close enough to
    /// an end for the step to reach it, one at the force point (across the neck of a loop that
    /// is closing, which can be long in the disk even where it is short in the frame).
    fn predict_step(&self, b: &LBranch, st: &State, mut h: f64) -> f64 {
        let s = &self.settings;
        let kappa = self.process.kappa();
        let len = st.chains[b.chain].0.len();
        let theta = b.br.theta;
        let tip_angle = b.tip_w.arg();
        for _ in 0..12 {
            if h <= s.h_min {
                return s.h_min;
            }
            let r = 1.0 - 2.0 * h.sqrt();
            let at =
                |ang: f64| (st.to_disk(b.chain, len, Complex64::from_polar(r, ang)) - b.tip).norm();
            // The step's end is random: cover where the tip can land within about 3σ of θ's
            // increment.
            let spread = 3.0 * (kappa * h).sqrt();
            let mut d = at(tip_angle)
                .max(at(tip_angle - spread))
                .max(at(tip_angle + spread));
            if end_distance(theta) < 6.0 * (kappa * h).sqrt() {
                d = d.max(at(0.0));
            }
            if d <= s.spacing {
                return h;
            }
            h = (h * 0.5 * (s.spacing / d).powi(2)).max(s.h_min);
        }
        h
    }

    /// Run a branch until it has nothing left to do; returns the branches split off.
    fn run_branch(&self, b: &mut LBranch, st: &mut State, seed: u64, index: u64) -> Vec<LBranch> {
        let s = &self.settings;
        let kappa = self.process.kappa();
        let mut spawned: Vec<LBranch> = Vec::new();
        let mut counter = 0u32;
        let mut finishing = false;
        loop {
            if st.diag.steps >= s.max_steps {
                st.diag.truncated = true;
                return spawned;
            }
            if !finishing {
                counter += 1;
                if counter % 8 == 1 && !self.retire(b, st) {
                    finishing = true;
                }
            }
            if finishing && !(b.owns && b.exc.is_some() && b.finishing < s.finish_time) {
                return spawned;
            }
            if b.br.pts.len() > 1 {
                let (k, pk) = b.br.fastest();
                if k != b.br.driver && pk > SWITCH_RATIO {
                    let m = b.br.renormalise(k);
                    push_map(&mut st.chains[b.chain].0, m);
                    b.tip_w = moved(b.tip_w, &m);
                }
            }
            // Step length: spacing target, and targets kept away from the tip.
            let tip_w = Complex64::from_polar(1.0, b.br.theta);
            let mut h = s.h_max.min(b.h_spatial);
            for (j, p) in b.br.pts.iter().enumerate() {
                if j != b.br.driver {
                    let sep = if self.is_marked(p.id) {
                        s.separation
                    } else {
                        s.target_separation
                    };
                    let dist = (tip_w - p.w).norm() / sep;
                    h = h.min(dist * dist / kappa);
                }
            }
            if h < s.h_min {
                h = s.h_min;
                st.diag.floor_steps += 1;
            }
            h = self.predict_step(b, st, h);
            // A loop starts when θ leaves its end.
            if b.exc.is_none() {
                let id = st.new_loop(b.depth + 1, b.region, b.tip);
                b.exc = Some(id);
                b.owns = true;
            }
            b.br.before.clear();
            let before_pts = std::mem::take(&mut b.br.before);
            let mut before_pts = before_pts;
            before_pts.extend_from_slice(&b.br.pts);
            let theta_before = b.br.theta;
            let len_before = st.chains[b.chain].0.len();
            let a = self.process.step(b.br.theta, h, &mut b.br.rng);
            let side = if a.theta >= 0.0 { -1.0 } else { 1.0 };
            // At a visit of 0 the loop closed at the force point, where the next excursion
            // starts: its slit grows from there, not from the old tip.
            let base = if a.visit == EndVisit::Zero {
                0.0
            } else {
                b.tip_w.arg()
            };
            let step = match tilted_step(base, a.theta, h, side) {
                Some(step) => step,
                None => {
                    st.diag.tilt_fallbacks += 1;
                    let xi = vertical_slit_for_angle(a.theta, h, side);
                    TiltedRadialStep::new(xi, 0.0, -(-h).exp_m1() / 4.0)
                }
            };
            let driver = b.br.driver;
            let rot = b.br.advance(&step, side, a.theta);
            st.chains[b.chain].0.push(DiskMap::Tilted { step, rot });
            let tip_w_before = b.tip_w;
            b.tip_w = Complex64::from_polar(1.0, step.tip_angle_after()) * rot;
            st.diag.steps += 1;
            if finishing {
                b.finishing += h;
            }

            // The new tip in the disk (the slit's tip taken back through the chain before the
            // step), the spacing control, and the loop's polyline.
            let tip_before = b.tip;
            let tip = st.to_disk(b.chain, len_before, step.tip());
            let d = (tip - b.tip).norm();
            let ratio = if d > 0.0 { s.spacing / d } else { 2.0 };
            b.h_spatial = (h * (0.7 * ratio * ratio).min(2.0)).clamp(s.h_min, s.h_max);
            b.tip = tip;
            let exc = b.exc.expect("set above");
            if a.visit == EndVisit::None && b.owns {
                if let Some(line) = st.lines[exc as usize].as_mut() {
                    line.push(tip);
                }
            }

            // Targets that left: pushed onto the circle by the step (kept with their state
            // before it) or pinched off from the driver.
            let (pinched, broken) = b.br.leaving(s.pinch);
            let mut leaving: Vec<usize> = pinched.clone();
            leaving.extend(&broken);
            let mut outside = Vec::new();
            if a.visit == EndVisit::Full {
                for (j, p) in b.br.pts.iter().enumerate() {
                    if j != driver && !leaving.contains(&j) && arc_measure(p.w, b.br.theta) <= 0.5 {
                        outside.push(j);
                        leaving.push(j);
                    }
                }
            }
            let mut children: Vec<LBranch> = Vec::new();
            let len = st.chains[b.chain].0.len();
            let pick = |idx: &[usize], from: &[Tracked]| -> Vec<Tracked> {
                idx.iter().map(|&j| from[j]).collect()
            };
            let (d, r) = (b.depth, b.region);
            let groups = [
                // Swept by the slit: their state before the step.
                (
                    pick(&broken, &before_pts),
                    theta_before,
                    len_before,
                    (tip_before, tip_w_before),
                ),
                (pick(&pinched, &b.br.pts), b.br.theta, len, (tip, b.tip_w)),
            ];
            for (pts, theta, prefix, tips) in groups {
                let kids = self.spawn_groups(
                    b,
                    pts,
                    theta,
                    prefix,
                    Some(exc),
                    (d, r),
                    tips,
                    st,
                    seed,
                    index,
                );
                children.extend(kids);
            }
            // The loop in progress continues in one branch only: the one whose θ is furthest
            // from its ends (the others were cut off from the rest of the loop).
            if b.owns && !children.is_empty() && a.visit == EndVisit::None {
                let mut best = end_distance(b.br.theta);
                let mut who = None;
                for (i, c) in children.iter().enumerate() {
                    let dc = end_distance(c.br.theta);
                    if dc > best {
                        best = dc;
                        who = Some(i);
                    }
                }
                if let Some(i) = who {
                    b.owns = false;
                    children[i].owns = true;
                }
            }
            // Outside the loop that closes around the driver: the loop is finished for them.
            let pts = pick(&outside, &b.br.pts);
            let kids = self.spawn_groups(
                b,
                pts,
                b.br.theta,
                len,
                None,
                (d, r),
                (tip, b.tip_w),
                st,
                seed,
                index,
            );
            children.extend(kids);
            spawned.extend(children);

            match a.visit {
                EndVisit::None => {}
                EndVisit::Zero => {
                    // The loop closed at the force point (its root), not around the driver; the
                    // next excursion has already started within this step, from the force point.
                    if b.owns {
                        st.finish_loop(exc, s.min_size);
                    }
                    if finishing {
                        b.exc = None;
                        return spawned;
                    }
                    let id = st.new_loop(b.depth + 1, b.region, tip);
                    b.exc = Some(id);
                    b.owns = true;
                }
                EndVisit::Full => {
                    if st.around_cr[exc as usize].is_none() {
                        // Seen from the driver, CR of the loop's interior.
                        st.around_cr[exc as usize] = Some(b.br.pts[driver].log_cr());
                    }
                    let (depth, _) = st.meta[exc as usize];
                    let mut kept = Vec::new();
                    for (j, p) in b.br.pts.iter().enumerate() {
                        if leaving.contains(&j) {
                            continue;
                        }
                        if self.is_marked(p.id) {
                            let rec = &mut st.records[p.id];
                            rec.loops.push(LoopAround {
                                level: rec.loops.len() + 1,
                                loop_id: exc,
                                log_cr: p.log_cr(),
                            });
                        }
                        kept.push(*p);
                    }
                    if b.owns {
                        st.finish_loop(exc, s.min_size);
                    }
                    let was_driver = b.br.pts[driver].id;
                    b.br.pts = kept;
                    b.br.driver =
                        b.br.pts
                            .iter()
                            .position(|p| p.id == was_driver)
                            .unwrap_or(0);
                    b.depth = depth;
                    b.region = Some(exc);
                    b.exc = None;
                    b.owns = false;
                    let m = b.br.restart_inside();
                    push_map(&mut st.chains[b.chain].0, m);
                    b.tip_w = moved(b.tip_w, &m);
                    if finishing {
                        return spawned;
                    }
                }
            }
            if a.visit != EndVisit::Full && !leaving.is_empty() {
                let was_driver = b.br.pts[driver].id;
                let keep: Vec<Tracked> =
                    b.br.pts
                        .iter()
                        .enumerate()
                        .filter(|(j, _)| !leaving.contains(j))
                        .map(|(_, p)| *p)
                        .collect();
                b.br.pts = keep;
                b.br.driver =
                    b.br.pts
                        .iter()
                        .position(|p| p.id == was_driver)
                        .unwrap_or(0);
            }
            b.br.before = before_pts;
        }
    }
}

/// The tilted radial step from the tip (at angle `base` from the force point, which sits at
/// angle 0) of radial time `h` after which the tip sits at angle `theta` from the force point's
/// image: Newton's method on (c, log s) with a finite-difference Jacobian, to 1e-9·h in radial
/// time and 1e-10 in angle. `None` when there is no such step (the angle asked for is closer to
/// the force point than one step can leave it) or Newton's method does not converge.
///
/// The angle process already contains the force point's motion, so the slit must be placed
/// from the geometry after the step, not at the old force point plus θ (which shifts the tip by
/// the force point's displacement, about 2√h when θ is small).
fn tilted_step(base: f64, theta: f64, h: f64, side: f64) -> Option<TiltedRadialStep> {
    let wrap = |x: f64| (x + PI).rem_euclid(TWO_PI) - PI;
    let eval = |c: f64, ls: f64| {
        let st = TiltedRadialStep::new(base, c, ls.exp());
        let eta = st.forward_boundary_angle(0.0, side);
        let f2 = wrap(st.tip_angle_after() - eta - theta);
        (st, st.dt - h, f2)
    };
    let (mut c, mut ls) = (0.0f64, (-(-h).exp_m1() / 4.0).ln());
    for _ in 0..30 {
        let (st, f1, f2) = eval(c, ls);
        if !(f1.is_finite() && f2.is_finite()) {
            return None;
        }
        if f1.abs() <= 1e-9 * h && f2.abs() <= 1e-10 {
            return Some(st);
        }
        let (dc, dl) = (1e-7 * (1.0 + c.abs()), 1e-7);
        let (_, a1, a2) = eval(c + dc, ls);
        let (_, b1, b2) = eval(c, ls + dl);
        let (j11, j21, j12, j22) = (
            (a1 - f1) / dc,
            (a2 - f2) / dc,
            (b1 - f1) / dl,
            (b2 - f2) / dl,
        );
        let det = j11 * j22 - j12 * j21;
        if !(det.is_finite() && det != 0.0) {
            return None;
        }
        let step_c = (-(j22 * f1 - j12 * f2) / det).clamp(-2.0, 2.0);
        let step_l = (-(-j21 * f1 + j11 * f2) / det).clamp(-1.0, 1.0);
        c += step_c;
        ls += step_l;
    }
    None
}

/// The base ξ of a vertical slit of radial time `h` (force point at angle 0, on `side` of the
/// base when they coincide) after which the tip sits at angle `theta` from the force point's
/// image, `ξ − η(ξ) = θ`: the fallback when no slit from the tip reaches θ, which happens when θ
/// asks for the tip nearer the force point than the tip is. The slit then starts between the
/// tip and the force point (the loop is closing there). When even that is impossible,
/// `|tan(θ/2)| < √(e^h − 1)`, the slit starts at the force point.
///
/// In the Cayley frame of the base (DESIGN §2) the force point sits at `x = tan(−ξ/2)` and moves
/// to `y = sign(x)·e^{h/2}·√(x² + 4s)`, `s = (1 − e^{−h})/4`, at angle `ξ + 2 atan(y)`.
fn vertical_slit_for_angle(theta: f64, h: f64, side: f64) -> f64 {
    let y = -(0.5 * theta).tan();
    let x2 = y * y * (-h).exp() + (-h).exp_m1();
    let x = if x2 > 0.0 {
        y.signum() * x2.sqrt()
    } else {
        0.0 * side
    };
    -2.0 * x.atan()
}

/// The image of a point of the frame's circle under a frame change.
fn moved(t: Complex64, m: &DiskMap) -> Complex64 {
    match *m {
        DiskMap::Mobius { c, rot } => {
            let u = rot * (t - c) / (1.0 - c.conj() * t);
            u / u.norm()
        }
        _ => t,
    }
}

/// Append a frame change unless it is the identity.
fn push_map(chain: &mut DiskChain, m: DiskMap) {
    if let DiskMap::Mobius { c, rot } = m {
        if c == Complex64::new(0.0, 0.0) && rot == Complex64::new(1.0, 0.0) {
            return;
        }
    }
    chain.push(m);
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_configuration_is_a_pure_function_of_seed_and_index() {
        // One target (grid spacing 0.99 keeps only 0), κ = 3, ε = 0.6: small and fast.
        let mut s = LoopSettings::defaults(0.6);
        s.grid = 0.99;
        let ls = LoopSampler::new(3.0, &[Complex64::new(0.2, 0.1)], s).unwrap();
        let a = ls.sample(7, 3);
        let b = ls.sample(7, 3);
        assert_eq!(a, b);
        assert!(a.diagnostics.steps > 0 && a.diagnostics.loops_traced > 0);
        let c = ls.sample(7, 4);
        assert_ne!(a.diagnostics.steps, c.diagnostics.steps);
    }

    #[test]
    fn vertical_fallback_puts_the_tip_at_the_requested_angle() {
        for &(theta, h) in &[
            (0.3, 1e-3),
            (-0.5, 1e-2),
            (3.0, 1e-4),
            (5.9, 1e-3),
            (-6.0, 1e-3),
        ] {
            let side = if theta >= 0.0 { -1.0 } else { 1.0 };
            let xi = vertical_slit_for_angle(theta, h, side);
            let st = TiltedRadialStep::new(xi, 0.0, -(-h).exp_m1() / 4.0);
            let eta = st.forward_boundary_angle(0.0, side);
            let got = (st.tip_angle_after() - eta - theta + PI).rem_euclid(TWO_PI) - PI;
            assert!(got.abs() < 1e-11, "θ = {theta}, h = {h}: off by {got:e}");
        }
        // Closer than one step allows: the slit starts at the force point.
        assert_eq!(vertical_slit_for_angle(1e-4, 1e-2, -1.0), 0.0);
    }

    #[test]
    fn tilted_step_puts_the_tip_at_the_requested_angle() {
        // After the step the tip sits at θ from the force point's image, and the step's radial
        // time is h (exact properties of the construction).
        for &(base, theta, h) in &[
            (0.3, 0.5, 1e-3),
            (-0.4, -0.9, 1e-2),
            (2.0, 2.05, 1e-4),
            (5.5, 5.6, 1e-3),
        ] {
            let side = if theta >= 0.0 { -1.0 } else { 1.0 };
            let st = tilted_step(base, theta, h, side).expect("reachable");
            let eta = st.forward_boundary_angle(0.0, side);
            let got = (st.tip_angle_after() - eta - theta + PI).rem_euclid(TWO_PI) - PI;
            assert!(got.abs() < 1e-9, "base {base}, θ = {theta}: off by {got:e}");
            assert!((st.dt - h).abs() <= 1e-9 * h);
        }
    }
}
