//! Whole CLE_κ configurations in the unit disk as geometry: the loops of diameter at least ε,
//! each a closed polyline with its nesting depth, its parent loop and its conformal radius, for
//! 8/3 < κ < 8.
//!
//! # Method: one branching exploration towards a grid of points
//! Sheffield's exploration tree (Duke Math. J. 2009) is run by [`crate::cle::CleExplorer`]
//! towards every point of a square grid of spacing `grid` (default ε/2) in the disk: one
//! radial SLE_κ(κ−6) whose branches split when points are disconnected from each other, each
//! branch driven by the point that sees its tip best (DESIGN §6.2). This module records the
//! branches' geometry: every frame change and every step is kept as a map of a
//! [`DiskChain`] (the fast composition of DESIGN §4), a branch's chain continues its parent's
//! (shared, not copied), and the tip of every step is taken back to the disk through the whole
//! ancestry. So the trace is drawn in the plane as it is made, with nothing but the Loewner
//! chain in between.
//!
//! **Where the loops are.** An excursion of a point's angle θ_z from 0 to ±2π closes the loop
//! around z (DESIGN §6.1): the trace from the last visit of θ to an end (the tip at the force
//! point) until the closing time, on z's branch including its ancestors, is the loop. It starts
//! and ends at the same point of the plane; for 4 < κ < 8 its first part may have been traced
//! by an ancestor towards another target (an arch, whose pocket the branch then entered),
//! which the shared chains handle without special cases.
//!
//! Two points inside one loop can be separated before it closes (for 4 < κ < 8 the loop
//! touches itself and pinches its interior into several components): each then closes "its"
//! loop, all from the same start. Only one of these traces returns to the start — the others
//! end where the pinch cut them off — and it is the loop; the others are recorded as the same
//! loop (same identifier) with their own conformal radii.
//!
//! A point is no longer explored once its conformal radius in the remaining domain is below
//! `stop_radius` (default ε/4): a loop of diameter ε around it would have to be long and
//! thin. A loop is therefore found when it surrounds a grid point that still has a conformal
//! radius of at least `stop_radius` when it closes; loops that surround no such point are
//! missing from the picture (see *Resolution*).
//!
//! # Status: superseded by [`crate::regions`], not used by the command line
//! `sleek loops` runs [`crate::regions`] (one exploration per region). This module keeps the
//! types both share ([`CleLoop`], [`LoopConfiguration`]) and the grid-branching engine below as
//! a record of what did not work and why.
//! This replaces a version that explored regions cut out of a raster with a polygon zipper
//! (in the history before 2026-12-03): there the pockets under arches were found on the
//! raster, and most large loops of κ > 4 were left open. Here nothing is rasterised and a
//! loop is closed by its own trace, but the configurations are still not right. Measured on
//! this machine (2 cores, ε = 0.2, defaults):
//! * (2026-12-03, later session: loops also closed from outside, unresolved traces not drawn,
//!   children split off mid-excursion keep it) κ = 3, seeds 1–3: 28, 25 and 42 s, 15–20 MB
//!   peak, 12, 2 and 5 loops drawn; κ = 6, seeds 1–3: 59, 59 and 155 s, 14–32 MB,
//!   3, 3 and 1 drawn, 10, 2 and 3 open.
//! * **Why this design cannot give right configurations** (DEVELOPERS.md): branches split by
//!   the pinch threshold, which is not a disconnection (the closeness of two points is small
//!   whenever either is near the trace, and the driver is the point nearest the tip), and after
//!   a split parent and child explore the same region independently: drawn together, the
//!   branches' traces cross all over the disk although each one alone is a clean exploration.
//!   For κ ≤ 4 the force point's push by the hidden excursions is missing too, so the trunk
//!   between loops is wrong. The next attempt splits only at real cuts, on both sides.
//!
//! # Resolution, and what is approximate
//! * The steps are cut so that the tip moves about `spacing` (default ε/6) in the plane: the
//!   scale of the map at the tip is estimated from the previous step and carried through frame
//!   changes by the derivative of the automorphism. Steps are also cut near marked points and
//!   near the ends of θ as in [`crate::cle`]. The largest gap of every loop is reported.
//! * The closing test: a closure counts as a loop's own when its trace ends within
//!   `close_gap` spacings (default 3) of its start. A group of closures with a common start of
//!   which none returns is an *open* loop: reported (counted, with its conformal radii) but not
//!   drawn, since part of it is missing. A returned trace with a gap wider than `close_gap`
//!   spacings anywhere is *unresolved*: counted, not drawn. Besides the points inside a loop,
//!   the branch outside it closes it too, when θ visits 0 with the trace back at its start.
//! * For κ ≤ 4 the net push of the hidden excursions on the force point is neglected, as in
//!   [`crate::cle`] (DESIGN §6.1).

use crate::cle::{CleExplorer, EndVisit, ExploreSettings, Recorder};
use crate::disk_fast::{DiskChain, DiskMap, Mobius};
use crate::error::{Error, Result};
use crate::polygon::winding_number;
use crate::radial::RadialStep;
use num_complex::Complex64;
use serde::Serialize;
use std::cell::RefCell;
use std::collections::HashMap;
use std::f64::consts::PI;
use std::sync::{Arc, OnceLock};

/// Numerical settings of a configuration.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LoopSettings {
    /// Loops of diameter at least this are kept (ε).
    pub min_size: f64,
    /// Target distance between consecutive points of a loop (default ε/6).
    pub spacing: f64,
    /// Spacing of the grid of target points (default ε/2).
    pub grid: f64,
    /// A point is no longer explored when its conformal radius falls below this (default ε/4).
    pub stop_radius: f64,
    /// A closure is its loop's own when it ends within this many spacings of its start
    /// (default 3).
    pub close_gap: f64,
    /// Largest step, in the driving point's radial time (default 0.01).
    pub h_max: f64,
    /// A point whose pseudo-hyperbolic closeness to the driver falls below this leaves on its
    /// own branch (default 1e-9; see [`crate::cle::ExploreSettings::pinch`]).
    pub pinch: f64,
    /// Steps keep every other marked point at least `separation·√(κh)` from the tip, in the
    /// driver's frame (default 3; the statistics of [`crate::cle`] use 8).
    pub separation: f64,
    /// The driver changes when another point's Poisson kernel at the tip is this many times
    /// its own (default 20; larger keeps the frames' slits small, which the fast composition
    /// needs).
    pub switch_ratio: f64,
    /// Step budget of one configuration (default 5·10⁷); exceeding it leaves the configuration
    /// incomplete, which is reported.
    pub max_steps: u64,
}

impl LoopSettings {
    /// Defaults for the size cutoff ε (see the field docs).
    pub fn defaults(min_size: f64) -> Self {
        LoopSettings {
            min_size,
            spacing: min_size / 6.0,
            grid: min_size / 2.0,
            stop_radius: min_size / 4.0,
            close_gap: 3.0,
            h_max: 0.01,
            separation: 3.0,
            pinch: 1e-9,
            switch_ratio: 1.5,
            max_steps: 50_000_000,
        }
    }

    /// Check the settings.
    ///
    /// Errors: [`Error::InvalidParameter`] naming the first value out of range.
    pub fn validate(&self) -> Result<()> {
        if !(self.min_size.is_finite() && self.min_size >= 0.01 && self.min_size <= 1.0) {
            return Err(Error::param(
                "min-size",
                self.min_size,
                "0.01 <= min-size <= 1 (the smallest loop diameter kept; the work grows like \
                 1/min-size^2)",
            ));
        }
        let e = self.min_size;
        if !(self.spacing.is_finite() && self.spacing >= e / 50.0 && self.spacing <= e / 2.0) {
            return Err(Error::param(
                "spacing",
                self.spacing,
                "min-size/50 <= spacing <= min-size/2",
            ));
        }
        if !(self.grid.is_finite() && self.grid >= e / 8.0 && self.grid <= e) {
            return Err(Error::param(
                "grid",
                self.grid,
                "min-size/8 <= grid <= min-size",
            ));
        }
        if !(self.stop_radius.is_finite() && self.stop_radius >= e / 100.0 && self.stop_radius <= e)
        {
            return Err(Error::param(
                "stop-radius",
                self.stop_radius,
                "min-size/100 <= stop-radius <= min-size",
            ));
        }
        if !(self.close_gap.is_finite() && self.close_gap >= 1.0 && self.close_gap <= 20.0) {
            return Err(Error::param(
                "close-gap",
                self.close_gap,
                "1 <= close-gap <= 20",
            ));
        }
        if !(self.separation.is_finite() && self.separation >= 1.0 && self.separation <= 20.0) {
            return Err(Error::param(
                "separation",
                self.separation,
                "1 <= separation <= 20",
            ));
        }
        if !(self.pinch.is_finite() && self.pinch >= 1e-12 && self.pinch <= 1e-4) {
            return Err(Error::param("pinch", self.pinch, "1e-12 <= pinch <= 1e-4"));
        }
        if !(self.h_max.is_finite() && self.h_max > 0.0 && self.h_max <= 0.1) {
            return Err(Error::param("h-max", self.h_max, "0 < h-max <= 0.1"));
        }
        if self.max_steps == 0 {
            return Err(Error::param("max-steps", 0.0, "max-steps >= 1"));
        }
        Ok(())
    }
}

/// One loop of a configuration.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CleLoop {
    /// Identifier: the loop's position in [`LoopConfiguration::loops`].
    pub id: usize,
    /// The innermost loop surrounding this one, if any.
    pub parent: Option<usize>,
    /// Nesting depth: 1 for outermost loops, `depth(parent) + 1` otherwise.
    pub depth: u32,
    /// The closed polyline in the unit disk, in the order traced (first point not repeated).
    /// Empty for an open loop (see [`CleLoop::closed`]).
    #[serde(serialize_with = "ser_points")]
    pub points: Vec<Complex64>,
    /// Whether the trace returned to its start (false: part of the loop is missing and it is
    /// not drawn; its conformal radii are still exact).
    pub closed: bool,
    /// The grid point whose exploration closed the loop (it lies inside the loop); `None` for
    /// a loop closed only by explorations outside it.
    #[serde(serialize_with = "ser_opt_point")]
    pub seen_from: Option<Complex64>,
    /// `log CR(U, seen_from)`, U the component of the loop's complement containing the point,
    /// from the exploration's radial time (exact for the chain, not measured on the polyline).
    pub log_cr: Option<f64>,
    /// Diameter of the polyline (0 for an open loop).
    pub diameter: f64,
    /// Largest distance between consecutive points of the polyline, the closing segment
    /// included.
    pub largest_gap: f64,
    /// Grid points inside the loop (found by the exploration).
    pub points_inside: usize,
}

fn ser_points<S: serde::Serializer>(p: &[Complex64], s: S) -> std::result::Result<S::Ok, S::Error> {
    use serde::ser::SerializeSeq;
    let mut q = s.serialize_seq(Some(p.len()))?;
    for z in p {
        q.serialize_element(&[z.re, z.im])?;
    }
    q.end()
}

fn ser_opt_point<S: serde::Serializer>(
    z: &Option<Complex64>,
    s: S,
) -> std::result::Result<S::Ok, S::Error> {
    z.map(|z| [z.re, z.im]).serialize(s)
}

/// Counters of a configuration (what was approximated, and the cost).
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct LoopDiagnostics {
    /// Grid points explored.
    pub grid_points: u64,
    /// Branches of the exploration tree.
    pub branches: u64,
    /// Steps of all branches.
    pub steps: u64,
    /// Loop closures seen (all sizes, each point's view counted).
    pub closures: u64,
    /// Loops of diameter ≥ ε whose trace did not return to its start (kept as open loops).
    pub open_loops: u64,
    /// Loops of diameter ≥ ε whose trace returned to its start but has a gap wider than
    /// `close_gap` spacings (not drawn).
    pub unresolved_loops: u64,
    /// Steps whose tip moved more than three spacings in the plane.
    pub long_steps: u64,
    /// Branches stopped because their tip could not be resolved (module docs).
    pub stalled_branches: u64,
    /// Whether the step budget ran out (the configuration is incomplete).
    pub truncated: bool,
}

/// A CLE_κ configuration in the unit disk.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LoopConfiguration {
    /// Sample index.
    pub index: u64,
    /// Loops of diameter at least ε (closed ones) and the open ones, parents before children.
    pub loops: Vec<CleLoop>,
    /// Counters.
    pub diagnostics: LoopDiagnostics,
}

impl LoopConfiguration {
    /// The closed loops surrounding `z` (winding number ≠ 0), outermost first.
    pub fn surrounding(&self, z: Complex64) -> Vec<&CleLoop> {
        let mut v: Vec<&CleLoop> = self
            .loops
            .iter()
            .filter(|l| l.closed && winding_number(&l.points, z) != 0)
            .collect();
        v.sort_by_key(|l| l.depth);
        v
    }
}

/// Diameter of a point set, from its extent in 32 directions (within 0.5% of the exact value).
pub fn diameter(p: &[Complex64]) -> f64 {
    if p.len() < 2 {
        return 0.0;
    }
    (0..32)
        .map(|k| {
            let u = Complex64::from_polar(1.0, PI * k as f64 / 32.0);
            let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
            for z in p {
                let x = z.re * u.re + z.im * u.im;
                lo = lo.min(x);
                hi = hi.max(x);
            }
            hi - lo
        })
        .fold(0.0, f64::max)
}

/// Largest distance between consecutive points of a closed polyline (closing segment included).
pub fn largest_gap(p: &[Complex64]) -> f64 {
    if p.len() < 2 {
        return 0.0;
    }
    let n = p.len();
    (0..n)
        .map(|i| (p[(i + 1) % n] - p[i]).norm())
        .fold(0.0, f64::max)
}

/// The points of a square grid of spacing `g` in the disk `|z| ≤ 1 − g/2`, row by row.
pub fn grid_points(g: f64) -> Vec<Complex64> {
    let r = 1.0 - 0.5 * g;
    let n = (r / g).floor() as i64;
    let mut v = Vec::new();
    for j in -n..=n {
        for i in -n..=n {
            let z = Complex64::new(i as f64 * g, j as f64 * g);
            if z.norm() <= r {
                v.push(z);
            }
        }
    }
    v
}

// ---------------------------------------------------------------------------------------------
// The recorder: chains shared between branches, the trace in the plane, closures.

/// A finished branch's chain and trace (read by its descendants).
struct Frozen {
    parent: Option<Link>,
    chain: DiskChain,
    trace: Vec<Complex64>,
}

/// A branch's segment of the tree; its contents are set when the branch finishes (its
/// children run only after that).
struct Seg {
    id: u64,
    frozen: OnceLock<Frozen>,
}

/// Where a branch leaves its parent: the parent's segment and the lengths of its chain and
/// trace at that moment.
#[derive(Clone)]
struct Link {
    seg: Arc<Seg>,
    maps: usize,
    trace: usize,
}

/// A position on a branch's path: a trace point of a segment.
#[derive(Clone)]
struct Pos {
    seg: Arc<Seg>,
    idx: usize,
}

/// One loop closure as seen by a branch.
struct Closure {
    loop_id: u64,
    /// (segment, trace index) of the loop's start.
    start: (u64, usize),
    inside: Vec<(usize, f64)>,
    /// The trace from the start to the closing point, when the closure returned to its start and
    /// is at least ε across (otherwise empty).
    points: Vec<Complex64>,
    /// Distance from the closing point to the start.
    gap: f64,
    diameter: f64,
    /// For a closure seen from outside (θ back at 0): the loop's depth and the loop around it.
    outside: Option<(usize, Option<u64>)>,
}

/// What all branches of one configuration share.
struct Shared {
    kappa: f64,
    settings: LoopSettings,
    min_log_cr: f64,
    /// The explorer's smallest step.
    h_floor: f64,
    closures: RefCell<Vec<Closure>>,
    long_steps: RefCell<u64>,
    stalled: RefCell<u64>,
}

struct PathRec<'a> {
    sh: &'a Shared,
    me: Arc<Seg>,
    parent: Option<Link>,
    /// The branch's maps in its *reference frame* (see [`PathRec::map`]).
    chain: DiskChain,
    trace: Vec<Complex64>,
    /// From the reference frame to the explorer's (driver's) frame.
    d: Mobius,
    /// `d` and the chain's length before the last step.
    d_before_step: Mobius,
    maps_before_step: usize,
    /// The last visit of θ to an end, and the one before it.
    last_visit: Pos,
    prev_visit: Pos,
    /// Whether the last step visited an end.
    visit_in_last_step: bool,
    /// Whether the current step is the second half of one that visited an end.
    second_half: bool,
    /// Start of the loop that the current step closed.
    closing_start: Option<Pos>,
    /// log of the map's scale at the tip (plane length per unit of driver-frame length).
    log_scale: f64,
    max_h: f64,
    /// Consecutive steps that the spacing wanted shorter than the explorer's smallest step.
    unresolved_run: u32,
    /// The branch's own steps, and those that moved the tip more than three spacings.
    own_steps: u64,
    own_long: u64,
}

/// A branch also stops when more than this many of its steps, and more than a tenth of them,
/// moved the tip more than three spacings.
const LONG_STEPS_MAX: u64 = 200;

/// A branch stops after this many consecutive steps too short to resolve (its tip is in a
/// part of the domain that its frame squeezes below the spacing; counted as stalled).
const STALL_STEPS: u32 = 2000;
/// Radial time of a probe step after a large change of frame.
const PROBE_H: f64 = 1e-6;

/// The reference frame is changed when its centre sees the tip with a Poisson kernel above
/// this (relative to the driver's, which is 1)…
const REF_KERNEL_MAX: f64 = 0.05;
/// … to a point this far out on the driver frame's radius opposite the tip (Poisson kernel
/// (1 − r)/(1 + r) ≈ 0.01 at the tip).
const REF_RADIUS: f64 = 0.98;
/// … or when `1 − |centre|²` in the driver frame falls below this.
const REF_INSIDE_MIN: f64 = 1e-3;

impl<'a> PathRec<'a> {
    fn root(sh: &'a Shared) -> Self {
        let me = Arc::new(Seg {
            id: 0,
            frozen: OnceLock::new(),
        });
        let start = Pos {
            seg: me.clone(),
            idx: 0,
        };
        PathRec {
            sh,
            me,
            parent: None,
            chain: DiskChain::new(),
            // The exploration starts at the boundary point 1 (the tip and force point of the
            // root frame, which is the disk itself).
            trace: vec![Complex64::new(1.0, 0.0)],
            d: Mobius::identity(),
            d_before_step: Mobius::identity(),
            maps_before_step: 0,
            last_visit: start.clone(),
            prev_visit: start,
            visit_in_last_step: false,
            second_half: false,
            closing_start: None,
            log_scale: 0.0,
            max_h: f64::INFINITY,
            unresolved_run: 0,
            own_steps: 0,
            own_long: 0,
        }
    }

    /// Move the reference frame's centre to the point `−REF_RADIUS·tip` of the driver frame
    /// (`tip` on the unit circle), by an automorphism appended to the chain.
    fn recentre(&mut self, tip: Complex64) {
        let c = self.d.invert(-REF_RADIUS * tip);
        let change = Mobius {
            c,
            rot: Complex64::new(1.0, 0.0),
        };
        self.chain.push(DiskMap::Mobius { c, rot: change.rot });
        self.d = self.d.after(&change.inverse());
    }

    /// A point of the current frame taken back to the disk through the whole ancestry.
    fn to_plane(&self, z: Complex64, own_maps: usize) -> Complex64 {
        let mut z = self.chain.apply_prefix(own_maps, z);
        let mut link = self.parent.clone();
        while let Some(l) = link {
            let f = l
                .seg
                .frozen
                .get()
                .expect("a parent finishes before its children run");
            z = f.chain.apply_prefix(l.maps, z);
            link = f.parent.clone();
        }
        z
    }

    /// The trace from `start` to the current tip.
    fn path_from(&self, start: &Pos) -> Vec<Complex64> {
        let mut parts: Vec<Vec<Complex64>> = Vec::new();
        if Arc::ptr_eq(&start.seg, &self.me) {
            return self.trace[start.idx.min(self.trace.len())..].to_vec();
        }
        parts.push(self.trace.clone());
        let mut link = self.parent.clone();
        while let Some(l) = link {
            let f = l.seg.frozen.get().expect("parent finished");
            let end = l.trace.min(f.trace.len());
            if Arc::ptr_eq(&start.seg, &l.seg) {
                parts.push(f.trace[start.idx.min(end)..end].to_vec());
                break;
            }
            parts.push(f.trace[..end].to_vec());
            link = f.parent.clone();
        }
        parts.into_iter().rev().flatten().collect()
    }

    fn pos_now(&self) -> Pos {
        if self.trace.is_empty() {
            // A child before its first step: its position is its parent's at the split.
            let l = self.parent.as_ref().expect("a child has a parent");
            Pos {
                seg: l.seg.clone(),
                idx: l.trace - 1,
            }
        } else {
            Pos {
                seg: self.me.clone(),
                idx: self.trace.len() - 1,
            }
        }
    }
}

/// Trace point `i` of a finished segment.
fn segment_point(seg: &Arc<Seg>, i: usize) -> Complex64 {
    let f = seg.frozen.get().expect("parent finished");
    if i < f.trace.len() {
        f.trace[i]
    } else {
        f.trace.last().copied().unwrap_or(Complex64::new(1.0, 0.0))
    }
}

impl<'a> Recorder for PathRec<'a> {
    const TRACES: bool = true;
    /// The explorer's maps are taken in the driver's frame, centred near the tip, where every
    /// step is a large slit; composed as they are, no block of the chain would keep a usable
    /// series. So the branch keeps its chain in a *reference frame* centred far from the tip
    /// (seen from there the tip has a Poisson kernel of at most [`REF_KERNEL_MAX`] relative
    /// to the driver's view): a change of driver only changes `d`, and each step enters the
    /// chain as a [`DiskMap::Conjugated`] map, whose slit is small.
    fn map(&mut self, m: DiskMap, tip_before: Complex64) {
        match m {
            DiskMap::Mobius { c, rot } => {
                let mm = Mobius { c, rot };
                // The scale at the tip is divided by |M'(tip)|.
                let st = mm.stretch(tip_before);
                if st.is_finite() && st > 0.0 {
                    self.log_scale -= st.ln();
                }
                // After a large change of frame (a new branch's first frame, centred in a
                // region that was a sliver of the old one) the scale carried through it is
                // not to be trusted: the next step is a short probe that measures it.
                if !(st > 0.1 && st < 10.0) || self.trace.is_empty() {
                    self.max_h = self.max_h.min(PROBE_H);
                }
                self.d = mm.after(&self.d);
            }
            DiskMap::Step { step, rot } => {
                if self.trace.is_empty() {
                    // A new branch: its domain is a sliver of its parent's reference frame
                    // (it was cut off there), where slits would be below the precision; centre
                    // the reference frame inside its own domain before its first step.
                    self.recentre(tip_before);
                }
                self.d_before_step = self.d;
                self.maps_before_step = self.chain.len();
                let n = self.chain.len();
                let tip = self.to_plane(self.d.invert(step.tip()), n);
                self.trace.push(tip);
                let w0 = rot * step.forward(self.d.apply(Complex64::new(0.0, 0.0)));
                self.chain.push(DiskMap::Conjugated {
                    step,
                    rot,
                    d: self.d,
                    w0,
                });
                self.d = Mobius {
                    c: -w0,
                    rot: Complex64::new(1.0, 0.0),
                };
            }
            DiskMap::Tilted { .. } | DiskMap::Conjugated { .. } => {
                unreachable!("the CLE explorer takes radial steps only")
            }
        }
    }

    fn stepped(&mut self, visit: EndVisit, h: f64, theta: f64) {
        let s = &self.sh.settings;
        // Keep the reference centre far from the tip.
        let tip = Complex64::from_polar(1.0, theta);
        let r = self.d.apply(Complex64::new(0.0, 0.0));
        let inside = 1.0 - r.norm_sqr();
        let kernel = inside / (tip - r).norm_sqr();
        // The centre is also moved when the flow has pushed it near the circle, where the
        // automorphisms would lose precision.
        if kernel > REF_KERNEL_MAX || inside.is_nan() || inside <= REF_INSIDE_MIN {
            self.recentre(tip);
        }
        // The trace point of this step and the one before it.
        let n = self.trace.len();
        let now = self.trace[n - 1];
        let before = if n >= 2 {
            self.trace[n - 2]
        } else {
            let l = self.parent.as_ref();
            match l {
                Some(l) => segment_point(&l.seg, l.trace - 1),
                None => now,
            }
        };
        let moved = (now - before).norm();
        self.own_steps += 1;
        if self.own_steps % 20000 == 0 && std::env::var_os("SLEEK_DEBUG").is_some() {
            eprintln!(
                "branch {} step {} theta {:.6} h {:.2e} max_h {:.2e} tip {:.4}",
                self.me.id, self.own_steps, theta, h, self.max_h, now
            );
        }
        if moved > 3.0 * s.spacing {
            *self.sh.long_steps.borrow_mut() += 1;
            self.own_long += 1;
        }
        // Scale estimate: plane displacement per √(κh) of frame displacement; up at once,
        // down slowly.
        if moved > 0.0 && h > 0.0 {
            let measured = (moved / (self.sh.kappa * h).sqrt()).ln();
            self.log_scale = if measured > self.log_scale {
                measured
            } else {
                0.7 * self.log_scale + 0.3 * measured
            };
        }
        let scale = self.log_scale.exp();
        let frame_len = s.spacing / scale;
        self.max_h = (frame_len * frame_len / self.sh.kappa).max(1e-12);
        if self.max_h < self.sh.h_floor {
            self.unresolved_run += 1;
        } else {
            self.unresolved_run = 0;
        }
        self.visit_in_last_step = visit != EndVisit::None || self.second_half;
        self.second_half = false;
        self.closing_start = None;
        if visit != EndVisit::None {
            if visit == EndVisit::Full {
                self.closing_start = Some(self.last_visit.clone());
            }
            let now = self.pos_now();
            self.prev_visit = std::mem::replace(&mut self.last_visit, now);
        }
    }

    fn max_h(&self) -> f64 {
        self.max_h
    }

    fn too_far(&self, step: &RadialStep) -> bool {
        let Some(&tip) = self.trace.last() else {
            return false;
        };
        let next = self.to_plane(self.d.invert(step.tip()), self.chain.len());
        (next - tip).norm() > 2.0 * self.sh.settings.spacing
    }

    fn far_from_force_point(&self) -> bool {
        let Some(&tip) = self.trace.last() else {
            return false;
        };
        let f = self.to_plane(self.d.invert(Complex64::new(1.0, 0.0)), self.chain.len());
        (f - tip).norm() > self.sh.settings.spacing
    }

    fn restarted(&mut self) {
        // A branch cut off in a pocket starts its region's exploration here: loops start here,
        // and the scale carried from the parent's frame is not to be trusted (the next step is
        // a probe).
        let now = self.pos_now();
        self.last_visit = now.clone();
        self.prev_visit = now;
        self.visit_in_last_step = false;
        self.max_h = self.max_h.min(PROBE_H);
    }

    fn half_step(&mut self) {
        self.second_half = true;
    }

    fn min_log_cr(&self) -> f64 {
        self.sh.min_log_cr
    }

    fn give_up(&self) -> bool {
        let frame_ok = self.d.c.norm() < 1.0 && self.d.rot.re.is_finite();
        let tip_ok = self
            .trace
            .last()
            .is_none_or(|z| z.re.is_finite() && z.im.is_finite());
        let broken = !frame_ok || !tip_ok;
        if broken
            || self.unresolved_run >= STALL_STEPS
            || (self.own_long > LONG_STEPS_MAX && 10 * self.own_long > self.own_steps)
        {
            *self.sh.stalled.borrow_mut() += 1;
            true
        } else {
            false
        }
    }

    fn switch_ratio(&self) -> f64 {
        self.sh.settings.switch_ratio
    }

    fn fork(&mut self, before_last_step: bool, branch: u64) -> Self {
        let back = usize::from(before_last_step && !self.trace.is_empty());
        let (maps, d) = if back == 1 {
            (self.maps_before_step, self.d_before_step)
        } else {
            (self.chain.len(), self.d)
        };
        let parent = if self.trace.len() > back {
            Link {
                seg: self.me.clone(),
                maps,
                trace: self.trace.len() - back,
            }
        } else {
            // Nothing of our own before the split point: the child leaves from our parent.
            let l = self
                .parent
                .clone()
                .expect("a branch without trace has a parent");
            Link {
                seg: l.seg,
                maps: l.maps,
                trace: l.trace,
            }
        };
        // A visit of the driver's θ to an end in the step that separated the points is not a
        // visit for them: the tip met the force point only as seen from the driver's side (a
        // loop that closed around them, or an arch that cut off their pocket with their own
        // excursion still running). Their excursion started at the visit before.
        let (last_visit, prev_visit) = if self.visit_in_last_step {
            (self.prev_visit.clone(), self.prev_visit.clone())
        } else {
            (self.last_visit.clone(), self.prev_visit.clone())
        };
        PathRec {
            sh: self.sh,
            me: Arc::new(Seg {
                id: branch,
                frozen: OnceLock::new(),
            }),
            parent: Some(parent),
            chain: DiskChain::new(),
            trace: Vec::new(),
            d,
            d_before_step: d,
            maps_before_step: 0,
            last_visit,
            prev_visit,
            visit_in_last_step: false,
            second_half: false,
            closing_start: None,
            log_scale: self.log_scale,
            max_h: self.max_h,
            unresolved_run: 0,
            own_steps: 0,
            own_long: 0,
        }
    }

    fn closed(&mut self, loop_id: u64, inside: &[(usize, f64)]) {
        let Some(start) = self.closing_start.take() else {
            return;
        };
        let s = &self.sh.settings;
        let mut pts = self.path_from(&start);
        let gap = match (pts.first(), pts.last()) {
            (Some(a), Some(b)) => (a - b).norm(),
            _ => 0.0,
        };
        let diameter = diameter(&pts);
        let keep = diameter >= s.min_size && gap <= s.close_gap * s.spacing;
        if std::env::var_os("SLEEK_DEBUG").is_some() {
            let n = self.chain.len();
            let f = self.to_plane(self.d.invert(Complex64::new(1.0, 0.0)), n);
            let (a, b) = (
                pts.first().copied().unwrap_or_default(),
                pts.last().copied().unwrap_or_default(),
            );
            eprintln!(
                "closure {loop_id} on branch {} (own steps {}) start ({}, {}) len {} gap {:.1} spacings diam {:.3}; force point from start {:.1}, from end {:.1}",
                self.me.id,
                self.own_steps,
                start.seg.id,
                start.idx,
                pts.len(),
                gap / s.spacing,
                diameter,
                (f - a).norm() / s.spacing,
                (f - b).norm() / s.spacing,
            );
        }
        if keep && pts.len() > 1 {
            pts.pop(); // the closing point repeats the start
        }
        let points = if keep { pts } else { Vec::new() };
        self.sh.closures.borrow_mut().push(Closure {
            loop_id,
            start: (start.seg.id, start.idx),
            inside: inside.to_vec(),
            points,
            gap,
            diameter,
            outside: None,
        });
    }

    fn returned(&mut self, loop_id: u64, depth: usize, outer: Option<u64>) {
        let s = &self.sh.settings;
        let start = self.prev_visit.clone();
        let mut pts = self.path_from(&start);
        let n = pts.len();
        if n < 3 {
            return;
        }
        // The closing point is the force point; the loop returned to it only if the trace came
        // back along it (not by a jump of the tip to the force point).
        let last = (pts[n - 1] - pts[n - 2]).norm();
        let gap = (pts[n - 1] - pts[0]).norm();
        let diameter = diameter(&pts);
        if diameter < s.min_size || last > s.close_gap * s.spacing || gap > s.close_gap * s.spacing
        {
            return;
        }
        pts.pop();
        self.sh.closures.borrow_mut().push(Closure {
            loop_id,
            start: (start.seg.id, start.idx),
            inside: Vec::new(),
            points: pts,
            gap: last,
            diameter,
            outside: Some((depth, outer)),
        });
    }

    fn finish(self) {
        if let Some(path) = std::env::var_os("SLEEK_DUMP") {
            // Development aid: every branch's own trace, one line per point.
            use std::io::Write;
            if let Ok(mut f) = std::fs::OpenOptions::new()
                .create(true)
                .append(true)
                .open(path)
            {
                let first = self
                    .parent
                    .as_ref()
                    .map(|l| segment_point(&l.seg, l.trace - 1));
                for z in first.iter().chain(self.trace.iter()) {
                    let _ = writeln!(f, "{} {} {}", self.me.id, z.re, z.im);
                }
            }
        }
        if std::env::var_os("SLEEK_DEBUG").is_some() {
            eprintln!(
                "branch {} steps {} long {} trace {}",
                self.me.id,
                self.own_steps,
                self.own_long,
                self.trace.len()
            );
        }
        let _ = self.me.frozen.set(Frozen {
            parent: self.parent,
            chain: self.chain,
            trace: self.trace,
        });
    }
}

/// Sampler of CLE_κ configurations (module docs).
#[derive(Debug, Clone)]
pub struct LoopSampler {
    kappa: f64,
    settings: LoopSettings,
    explorer: CleExplorer,
}

impl LoopSampler {
    /// A sampler of CLE_κ, 8/3 < κ < 8, with the given settings.
    ///
    /// Errors: [`Error::InvalidParameter`] for κ out of range or invalid settings.
    pub fn new(kappa: f64, settings: LoopSettings) -> Result<Self> {
        settings.validate()?;
        let mut es = ExploreSettings::defaults(kappa, 10_000);
        es.h_max = settings.h_max;
        es.separation = settings.separation;
        es.pinch = settings.pinch;
        es.max_time = 1e6;
        es.max_steps = settings.max_steps;
        let explorer = CleExplorer::new(kappa, &grid_points(settings.grid), es)?;
        Ok(LoopSampler {
            kappa,
            settings,
            explorer,
        })
    }

    /// The settings.
    pub fn settings(&self) -> &LoopSettings {
        &self.settings
    }

    /// κ.
    pub fn kappa(&self) -> f64 {
        self.kappa
    }

    /// The grid of target points.
    pub fn grid(&self) -> &[Complex64] {
        self.explorer.points()
    }

    /// Configuration `index` of a run with `seed` (a pure function of both).
    pub fn sample(&self, seed: u64, index: u64) -> LoopConfiguration {
        let sh = Shared {
            kappa: self.kappa,
            settings: self.settings,
            min_log_cr: self.settings.stop_radius.ln(),
            h_floor: self.explorer.settings().h_min,
            closures: RefCell::new(Vec::new()),
            long_steps: RefCell::new(0),
            stalled: RefCell::new(0),
        };
        let sample = self
            .explorer
            .sample_recorded(seed, index, 0, PathRec::root(&sh));
        let closures = sh.closures.into_inner();
        let mut diag = LoopDiagnostics {
            grid_points: self.grid().len() as u64,
            branches: sample.diagnostics.branches,
            steps: sample.diagnostics.steps,
            closures: closures.len() as u64,
            long_steps: sh.long_steps.into_inner(),
            stalled_branches: sh.stalled.into_inner(),
            truncated: sample.diagnostics.steps >= self.settings.max_steps,
            ..Default::default()
        };
        let loops = assemble(&self.settings, self.grid(), &sample, closures, &mut diag);
        LoopConfiguration {
            index,
            loops,
            diagnostics: diag,
        }
    }
}

/// Group the closures into loops (module docs), keep those of diameter ≥ ε and the open ones
/// that may be, and link parents through the points' nesting.
fn assemble(
    s: &LoopSettings,
    grid: &[Complex64],
    sample: &crate::cle::CleSample,
    closures: Vec<Closure>,
    diag: &mut LoopDiagnostics,
) -> Vec<CleLoop> {
    // Groups by common start, in order of first appearance.
    let mut group_of_start: HashMap<(u64, usize), usize> = HashMap::new();
    let mut groups: Vec<Vec<usize>> = Vec::new();
    for (i, c) in closures.iter().enumerate() {
        let g = *group_of_start.entry(c.start).or_insert_with(|| {
            groups.push(Vec::new());
            groups.len() - 1
        });
        groups[g].push(i);
    }
    // Each group: its own closure (returned to the start, the longest such), or none.
    struct Found {
        own: Option<usize>,
        members: Vec<usize>,
        diameter: f64,
    }
    let mut found: Vec<Found> = Vec::new();
    let mut group_of_loop: HashMap<u64, usize> = HashMap::new();
    for members in groups {
        let own = members
            .iter()
            .copied()
            .filter(|&i| closures[i].gap <= s.close_gap * s.spacing)
            .max_by_key(|&i| closures[i].points.len());
        let diameter = members
            .iter()
            .map(|&i| closures[i].diameter)
            .fold(0.0, f64::max);
        for &i in &members {
            group_of_loop.insert(closures[i].loop_id, found.len());
        }
        found.push(Found {
            own,
            members,
            diameter,
        });
    }
    // Keep: closed loops of diameter ≥ ε; open groups whose partial traces reach ε.
    // A returned trace with a gap wider than `close_gap` spacings jumped somewhere (the
    // spacing was not resolved there): it is counted as unresolved, not drawn.
    let resolved = |i: usize| largest_gap(&closures[i].points) <= s.close_gap * s.spacing;
    let keep: Vec<bool> = found
        .iter()
        .map(|f| match f.own {
            Some(i) if !closures[i].points.is_empty() && !resolved(i) => {
                diag.unresolved_loops += 1;
                false
            }
            Some(i) => !closures[i].points.is_empty(),
            None => f.diameter >= s.min_size,
        })
        .collect();
    // Parent and depth from the points' nesting: the loop one level out around the same point.
    let mut parent_group: Vec<Option<usize>> = vec![None; found.len()];
    let mut depth: Vec<u32> = vec![0; found.len()];
    for rec in &sample.points {
        let mut prev: Option<usize> = None;
        for l in &rec.loops {
            if let Some(&g) = group_of_loop.get(&l.loop_id) {
                if depth[g] == 0 {
                    depth[g] = l.level as u32;
                    parent_group[g] = prev;
                }
                prev = Some(g);
            }
        }
    }
    // Loops seen only from outside: depth and parent from the closure.
    for (g, f) in found.iter().enumerate() {
        if depth[g] != 0 {
            continue;
        }
        if let Some((d, outer)) = f.members.iter().find_map(|&i| closures[i].outside) {
            depth[g] = d as u32;
            parent_group[g] = outer.and_then(|o| group_of_loop.get(&o).copied());
        }
    }
    // Order: by depth, then by discovery.
    let mut order: Vec<usize> = (0..found.len()).filter(|&g| keep[g]).collect();
    order.sort_by_key(|&g| (depth[g], g));
    let mut id_of_group: HashMap<usize, usize> = HashMap::new();
    let mut out = Vec::new();
    for g in order {
        let f = &found[g];
        let (points, closed) = match f.own {
            Some(i) => (closures[i].points.clone(), true),
            None => (Vec::new(), false),
        };
        if !closed {
            diag.open_loops += 1;
        }
        // Seen from a point inside when any closure of the group was.
        let (pt, log_cr) = f
            .members
            .iter()
            .find_map(|&i| closures[i].inside.first().copied())
            .map(|(p, l)| (Some(grid[p]), Some(l)))
            .unwrap_or((None, None));
        let mut inside: Vec<usize> = f
            .members
            .iter()
            .flat_map(|&i| closures[i].inside.iter().map(|p| p.0))
            .collect();
        inside.sort_unstable();
        inside.dedup();
        // The nearest kept ancestor (ancestors of a kept loop are larger, so normally kept).
        let mut pg = parent_group[g];
        while let Some(p) = pg {
            if id_of_group.contains_key(&p) {
                break;
            }
            pg = parent_group[p];
        }
        let id = out.len();
        id_of_group.insert(g, id);
        out.push(CleLoop {
            id,
            parent: pg.map(|p| id_of_group[&p]),
            depth: depth[g].max(1),
            diameter: if closed { diameter(&points) } else { 0.0 },
            largest_gap: largest_gap(&points),
            points,
            closed,
            seen_from: pt,
            log_cr,
            points_inside: inside.len(),
        });
    }
    out
}
