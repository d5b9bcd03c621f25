//! Lattice reference models whose scaling limits are known SLE/CLE laws.
//!
//! # Lattice and coordinates
//! Sites of the triangular lattice sit at `i + j·e^{iπ/3}` for integers `(i, j)` (axial
//! coordinates); each site has six neighbours and is a hexagon of the dual honeycomb lattice.
//! The domain of radius `R` (in lattice spacings) is the set of *inside* sites with
//! `|i + j·e^{iπ/3}|² = i² + ij + j² < R²`; every other site is an *outside* site whose colour
//! or spin is fixed by the boundary condition of the model. Interfaces run along honeycomb
//! edges: their vertices are centroids of triangles of three mutually adjacent sites, so an
//! interface between two colours is never ambiguous. Every curve is returned in the **unit
//! disk**: lattice positions are divided by `R`, so one lattice spacing is `1/R`
//! ([`lattice_spacing`]) and a honeycomb edge is `1/(√3 R)`.
//!
//! # Models and boundary conditions
//! * [`percolation_exploration`]: critical site percolation (p = 1/2) on the inside sites;
//!   outside sites with `x < 0` black, with `x ≥ 0` white (Dobrushin). The exploration path,
//!   black on its left, runs from near `−i` to near `+i`. Limit: chordal SLE_6 from `−i` to `i`
//!   (Smirnov, C. R. Acad. Sci. Paris 2001; Camia & Newman, Probab. Theory Relat. Fields 2007).
//! * [`ising_interface`]: critical Ising model (`K_c = ln 3 / 4`) on the inside sites; outside
//!   sites with `x < 0` fixed `+`, with `x ≥ 0` fixed `−`; equilibrated by Swendsen–Wang
//!   (Phys. Rev. Lett. 1987). The interface, `+` on its left, runs from near `−i` to near `+i`.
//!   Limit: chordal SLE_3 (Chelkak, Duminil-Copin, Hongler, Kemppainen & Smirnov, C. R. Math.
//!   2014; the triangular lattice is isoradial: Chelkak & Smirnov, Invent. Math. 2012).
//! * [`lerw_radial`]: simple random walk on the triangular lattice from the origin until it
//!   first steps onto an outside site, loop-erased chronologically (Lawler, Duke Math. J. 1980),
//!   returned from the exit site to the origin. Limit: radial SLE_2 from the boundary to 0
//!   (Lawler, Schramm & Werner, Ann. Probab. 2004, whose abstract states that the results and
//!   proofs are not restricted to a particular choice of lattice).
//! * [`percolation_loops`]: critical site percolation on the inside sites, every outside site
//!   white (monochromatic boundary); every closed interface loop, counterclockwise. Limit:
//!   nested CLE_6 (Camia & Newman, Commun. Math. Phys. 2006).
//!
//! Every sample is a pure function of `(seed, index)`: its randomness is the stream
//! `rng::stream(seed, Tag::Lattice, index)`. Only [`LatticeDisk::new`] and
//! [`IsingConfig::new`] can fail; sampling cannot.

use crate::error::{Error, Result};
use crate::rng::{stream, Tag};
use rand::Rng;
use rand_chacha::ChaCha8Rng;

/// The six neighbour offsets in axial coordinates, counterclockwise from `+1`.
const DIR: [[i32; 2]; 6] = [[1, 0], [0, 1], [-1, 1], [-1, 0], [0, -1], [1, -1]];
/// √3/2, the height of a lattice row.
const ROW_HEIGHT: f64 = 0.866_025_403_784_438_6;

type Site = [i32; 2];
/// A honeycomb vertex as three times the axial centroid of its triangle (integers).
type Vertex = [i32; 2];

fn add(a: Site, b: Site) -> Site {
    [a[0] + b[0], a[1] + b[1]]
}

/// Whether an outside site is on the `x < 0` side (black / `+` under Dobrushin conditions).
fn west(s: Site) -> bool {
    2 * s[0] + s[1] < 0
}

#[derive(Debug, Clone, Copy)]
struct Row {
    imin: i32,
    imax: i32,
    off: usize,
}

/// The inside sites of the triangular lattice in the disk `|i + j·e^{iπ/3}| < radius`
/// (axial coordinates, lattice spacing 1), with a dense index `0..sites()` numbering them row
/// by row (`j` increasing, then `i` increasing).
#[derive(Debug, Clone)]
pub struct LatticeDisk {
    radius: usize,
    jmax: i32,
    rows: Vec<Row>,
    sites: usize,
}

impl LatticeDisk {
    /// The disk of `radius` lattice spacings; `radius` must be an integer in `[8, 4000]`.
    pub fn new(radius: usize) -> Result<Self> {
        if !(8..=4000).contains(&radius) {
            return Err(Error::param("radius", radius, "an integer in [8, 4000]"));
        }
        let r2 = (radius * radius) as i64;
        let norm = |i: i64, j: i64| i * i + i * j + j * j;
        let row_has = |j: i64| {
            let i0 = (-j).div_euclid(2);
            norm(i0, j).min(norm(i0 + 1, j)) < r2
        };
        let mut jmax = 0i64;
        while row_has(jmax + 1) {
            jmax += 1;
        }
        let mut rows = Vec::with_capacity(2 * jmax as usize + 1);
        let mut off = 0usize;
        for j in -jmax..=jmax {
            let c = -(j as f64) / 2.0;
            let h = (r2 as f64 - 0.75 * (j * j) as f64).max(0.0).sqrt();
            let (mut lo, mut hi) = ((c - h).ceil() as i64, (c + h).floor() as i64);
            while norm(lo - 1, j) < r2 {
                lo -= 1;
            }
            while norm(lo, j) >= r2 {
                lo += 1;
            }
            while norm(hi + 1, j) < r2 {
                hi += 1;
            }
            while norm(hi, j) >= r2 {
                hi -= 1;
            }
            rows.push(Row {
                imin: lo as i32,
                imax: hi as i32,
                off,
            });
            off += (hi - lo + 1) as usize;
        }
        Ok(LatticeDisk {
            radius,
            jmax: jmax as i32,
            rows,
            sites: off,
        })
    }

    /// The radius `R` in lattice spacings.
    pub fn radius(&self) -> usize {
        self.radius
    }

    /// The number of inside sites (about `2πR²/√3`).
    pub fn sites(&self) -> usize {
        self.sites
    }

    /// The dense index of the site with axial coordinates `(i, j)`, or `None` for an outside
    /// site.
    pub fn index(&self, i: i32, j: i32) -> Option<usize> {
        let r = self
            .rows
            .get(usize::try_from(j.checked_add(self.jmax)?).ok()?)?;
        (r.imin..=r.imax)
            .contains(&i)
            .then(|| r.off + (i - r.imin) as usize)
    }

    fn idx(&self, s: Site) -> Option<usize> {
        self.index(s[0], s[1])
    }

    /// Calls `f(site, index)` for every inside site in index order.
    fn for_each_site(&self, mut f: impl FnMut(Site, usize)) {
        for (r, j) in self.rows.iter().zip(-self.jmax..) {
            for i in r.imin..=r.imax {
                f([i, j], r.off + (i - r.imin) as usize);
            }
        }
    }

    fn point(&self, s: Site) -> [f64; 2] {
        let r = self.radius as f64;
        [
            (s[0] as f64 + 0.5 * s[1] as f64) / r,
            ROW_HEIGHT * s[1] as f64 / r,
        ]
    }

    fn vertex_point(&self, v: Vertex) -> [f64; 2] {
        let r = 3.0 * self.radius as f64;
        [
            (v[0] as f64 + 0.5 * v[1] as f64) / r,
            ROW_HEIGHT * v[1] as f64 / r,
        ]
    }
}

/// One lattice spacing in unit-disk coordinates: `1/R`.
pub fn lattice_spacing(disk: &LatticeDisk) -> f64 {
    1.0 / disk.radius as f64
}

/// The honeycomb vertex (3 × centroid) of the triangle `l`, `l + DIR[k]`, `l + DIR[k+1]`.
fn vertex(l: Site, k: usize) -> Vertex {
    let (a, b) = (DIR[k], DIR[(k + 1) % 6]);
    [3 * l[0] + a[0] + b[0], 3 * l[1] + a[1] + b[1]]
}

/// The exploration process with Dobrushin conditions (outside: `x < 0` black, `x ≥ 0` white),
/// `inside_black(index)` giving the colour of inside sites (called only for sites the path
/// touches, in the order it touches them). The state is the black site `l` on the left and the
/// direction `k` to the white site on the right; the next site is their common neighbour ahead,
/// `l + DIR[k+1]`. The path starts at the vertex behind the last outside–outside pair at the
/// bottom and stops at the vertex ahead of the first outside–outside pair at the top (from there
/// on every site is outside and the path is forced), so both ends lie just outside the circle.
fn explore(disk: &LatticeDisk, mut inside_black: impl FnMut(usize) -> bool) -> Vec<Vertex> {
    let j0 = -disk.jmax - 2;
    let ir = (-j0 + 1).div_euclid(2); // smallest i with 2i + j0 ≥ 0
    let mut l: Site = [ir - 1, j0];
    let mut k = 0usize;
    let mut path = Vec::new();
    let mut prev: Option<Vertex> = None;
    loop {
        let r = add(l, DIR[k]);
        let v = vertex(l, k);
        let outside = disk.idx(l).is_none() && disk.idx(r).is_none();
        if outside && l[1] + r[1] < 0 {
            path.clear();
            path.extend(prev);
        }
        path.push(v);
        if outside && l[1] + r[1] > 0 {
            return path;
        }
        prev = Some(v);
        let x = add(l, DIR[(k + 1) % 6]);
        let black = match disk.idx(x) {
            None => west(x),
            Some(ix) => inside_black(ix),
        };
        if black {
            l = x;
            k = (k + 5) % 6;
        } else {
            k = (k + 1) % 6;
        }
    }
}

/// Lazily coloured percolation exploration: the path and the colour states (0 untouched,
/// 1 black, 2 white) of the inside sites.
fn percolation_exploration_raw(
    disk: &LatticeDisk,
    seed: u64,
    index: u64,
) -> (Vec<Vertex>, Vec<u8>) {
    let mut rng = stream(seed, Tag::Lattice, index);
    let mut state = vec![0u8; disk.sites];
    let path = explore(disk, |ix| {
        if state[ix] == 0 {
            state[ix] = if rng.random::<bool>() { 1 } else { 2 };
        }
        state[ix] == 1
    });
    (path, state)
}

/// The exploration path of critical site percolation (p = 1/2) in the disk with Dobrushin
/// conditions (outside sites with `x < 0` black, `x ≥ 0` white), black on its left: a simple
/// path of honeycomb vertices in unit-disk coordinates from just outside the circle near `−i`
/// to just outside it near `+i`. Colours are sampled only where the path looks, so the cost is
/// proportional to its length (about `R^{7/4}`). Scaling limit: chordal SLE_6 from `−i` to `i`.
pub fn percolation_exploration(disk: &LatticeDisk, seed: u64, index: u64) -> Vec<[f64; 2]> {
    let (path, _) = percolation_exploration_raw(disk, seed, index);
    path.into_iter().map(|v| disk.vertex_point(v)).collect()
}

/// The exact critical coupling `K_c = βJ = ln 3 / 4` of the ferromagnetic Ising model on the
/// triangular lattice (`e^{4K_c} = 3`; Houtappel, Physica 1950, quoted from memory and checked
/// by duality and the star–triangle relation in this module's tests).
pub fn ising_critical_coupling() -> f64 {
    3f64.ln() / 4.0
}

/// Validated parameters of [`ising_interface`]: the number of Swendsen–Wang sweeps.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct IsingConfig {
    sweeps: usize,
}

impl IsingConfig {
    /// `sweeps` Swendsen–Wang updates from a random start; an integer in `[1, 100000]`.
    pub fn new(sweeps: usize) -> Result<Self> {
        if !(1..=100_000).contains(&sweeps) {
            return Err(Error::param("sweeps", sweeps, "an integer in [1, 100000]"));
        }
        Ok(IsingConfig { sweeps })
    }

    /// The number of Swendsen–Wang sweeps.
    pub fn sweeps(&self) -> usize {
        self.sweeps
    }
}

/// An Ising graph for the Swendsen–Wang sampler: couplings `K` between pairs of sites and
/// between sites and fixed boundary spins (`true` = `+`).
trait Couplings {
    fn size(&self) -> usize;
    /// Every coupled pair of sites, once.
    fn bonds(&self, f: impl FnMut(usize, usize));
    /// Every coupling of a site to a fixed spin (a site may appear several times).
    fn fields(&self, f: impl FnMut(usize, bool));
}

/// The inside sites of a disk with Dobrushin boundary spins (`x < 0` `+`, `x ≥ 0` `−`).
struct DiskCouplings<'a> {
    disk: &'a LatticeDisk,
    fields: Vec<(usize, bool)>,
}

impl<'a> DiskCouplings<'a> {
    fn new(disk: &'a LatticeDisk) -> Self {
        let near = ((disk.radius - 1) * (disk.radius - 1)) as i64;
        let mut fields = Vec::new();
        disk.for_each_site(|s, ix| {
            let (i, j) = (s[0] as i64, s[1] as i64);
            if i * i + i * j + j * j < near {
                return; // every neighbour is within distance 1, hence inside
            }
            for d in DIR {
                let t = add(s, d);
                if disk.idx(t).is_none() {
                    fields.push((ix, west(t)));
                }
            }
        });
        DiskCouplings { disk, fields }
    }
}

impl Couplings for DiskCouplings<'_> {
    fn size(&self) -> usize {
        self.disk.sites
    }

    fn bonds(&self, mut f: impl FnMut(usize, usize)) {
        let rows = &self.disk.rows;
        for (n, r) in rows.iter().enumerate() {
            let next = rows.get(n + 1);
            for i in r.imin..=r.imax {
                let a = r.off + (i - r.imin) as usize;
                if i < r.imax {
                    f(a, a + 1);
                }
                if let Some(q) = next {
                    // neighbours (i, j+1) and (i−1, j+1)
                    if (q.imin..=q.imax).contains(&i) {
                        f(a, q.off + (i - q.imin) as usize);
                    }
                    if (q.imin..=q.imax).contains(&(i - 1)) {
                        f(a, q.off + (i - 1 - q.imin) as usize);
                    }
                }
            }
        }
    }

    fn fields(&self, mut f: impl FnMut(usize, bool)) {
        for &(a, s) in &self.fields {
            f(a, s);
        }
    }
}

/// `P(u32 < threshold) = p`: the Swendsen–Wang bond probability `p = 1 − e^{−2K}` in units
/// of 2^−32.
fn bond_threshold(coupling: f64) -> u64 {
    ((1.0 - (-2.0 * coupling).exp()) * 4_294_967_296.0) as u64
}

fn find(parent: &mut [u32], mut a: u32) -> u32 {
    while parent[a as usize] != a {
        let up = parent[parent[a as usize] as usize];
        parent[a as usize] = up;
        a = up;
    }
    a
}

/// Joins the classes of `a` and `b`, the larger root pointing to the smaller.
fn union(parent: &mut [u32], a: u32, b: u32) {
    let (ra, rb) = (find(parent, a), find(parent, b));
    parent[ra.max(rb) as usize] = ra.min(rb);
}

/// Work arrays of the Swendsen–Wang sampler (kept between sweeps).
#[derive(Default)]
struct SwWork {
    parent: Vec<u32>,
    label: Vec<u8>,
}

/// One Swendsen–Wang update (Phys. Rev. Lett. 1987; Edwards & Sokal, Phys. Rev. D 1988):
/// open each bond between equal spins (and between a site and an equal fixed spin) with
/// probability `threshold / 2^32`, join the clusters by union–find (the fixed `+` and `−` spins
/// are two extra nodes), keep the spin of clusters holding a fixed spin and give every other
/// cluster a fresh fair spin. Clusters are labelled in site order, so the update is a pure
/// function of the spins and the generator.
fn sw_sweep<G: Couplings>(
    g: &G,
    spins: &mut [bool],
    threshold: u64,
    rng: &mut ChaCha8Rng,
    work: &mut SwWork,
) {
    let n = g.size();
    let (plus, minus) = (n as u32, n as u32 + 1);
    let parent = &mut work.parent;
    parent.clear();
    parent.extend(0..n as u32 + 2);
    {
        let s = &*spins;
        g.bonds(|a, b| {
            if s[a] == s[b] && u64::from(rng.random::<u32>()) < threshold {
                union(parent, a as u32, b as u32);
            }
        });
        g.fields(|a, h| {
            if s[a] == h && u64::from(rng.random::<u32>()) < threshold {
                union(parent, a as u32, if h { plus } else { minus });
            }
        });
    }
    let label = &mut work.label;
    label.clear();
    label.resize(n + 2, 0);
    // A cluster is monochromatic, so the two fixed spins are never in one cluster.
    let rp = find(parent, plus) as usize;
    label[rp] = 1;
    let rm = find(parent, minus) as usize;
    label[rm] = 2;
    for (a, spin) in spins.iter_mut().enumerate() {
        let r = find(parent, a as u32) as usize;
        if label[r] == 0 {
            label[r] = if rng.random::<bool>() { 1 } else { 2 };
        }
        *spin = label[r] == 1;
    }
}

/// Spins (`true` = `+`) of the inside sites after `sweeps` Swendsen–Wang updates at `K_c` from
/// independent fair spins, Dobrushin boundary.
fn ising_spins(disk: &LatticeDisk, sweeps: usize, seed: u64, index: u64) -> Vec<bool> {
    let mut rng = stream(seed, Tag::Lattice, index);
    let g = DiskCouplings::new(disk);
    let mut spins: Vec<bool> = (0..disk.sites).map(|_| rng.random()).collect();
    let threshold = bond_threshold(ising_critical_coupling());
    let mut work = SwWork::default();
    for _ in 0..sweeps {
        sw_sweep(&g, &mut spins, threshold, &mut rng, &mut work);
    }
    spins
}

/// The interface of the critical Ising model (`K_c = ln 3 / 4`, nearest-neighbour ferromagnet
/// on the triangular lattice) in the disk with Dobrushin spins (outside sites with `x < 0` fixed
/// `+`, `x ≥ 0` fixed `−`) after `config.sweeps()` Swendsen–Wang updates from independent fair
/// spins: the exploration path with `+` on its left, a simple path of honeycomb vertices in
/// unit-disk coordinates from just outside the circle near `−i` to just outside it near `+i`.
/// Scaling limit (at equilibrium): chordal SLE_3 from `−i` to `i`.
pub fn ising_interface(
    disk: &LatticeDisk,
    config: &IsingConfig,
    seed: u64,
    index: u64,
) -> Vec<[f64; 2]> {
    let spins = ising_spins(disk, config.sweeps, seed, index);
    explore(disk, |ix| spins[ix])
        .into_iter()
        .map(|v| disk.vertex_point(v))
        .collect()
}

/// The loop-erased walk as sites, from the origin to the exit site.
fn lerw_sites(disk: &LatticeDisk, seed: u64, index: u64) -> Vec<Site> {
    const FREE: u32 = u32::MAX;
    let mut rng = stream(seed, Tag::Lattice, index);
    let mut pos = vec![FREE; disk.sites];
    let mut path: Vec<(Site, usize)> = Vec::new();
    let mut s: Site = [0, 0];
    let mut ix = disk.index(0, 0).unwrap_or(0); // the origin is inside for every valid radius
    loop {
        if pos[ix] == FREE {
            pos[ix] = path.len() as u32;
            path.push((s, ix));
        } else {
            // chronological loop erasure: drop the loop just closed at s
            for &(_, q) in &path[pos[ix] as usize + 1..] {
                pos[q] = FREE;
            }
            path.truncate(pos[ix] as usize + 1);
        }
        s = add(s, DIR[rng.random_range(0..6usize)]);
        match disk.idx(s) {
            Some(next) => ix = next,
            None => break,
        }
    }
    let mut sites: Vec<Site> = path.into_iter().map(|(t, _)| t).collect();
    sites.push(s);
    sites
}

/// Radial loop-erased random walk: a simple random walk on the triangular lattice from the
/// origin, stopped at its first step onto an outside site, loop-erased chronologically, and
/// returned **reversed**: from the exit site (at distance in `[1, 1 + 1/R)` from 0 in unit-disk
/// coordinates) to the origin `(0, 0)`, consecutive points being lattice neighbours. Scaling
/// limit: radial SLE_2 from the boundary to 0.
pub fn lerw_radial(disk: &LatticeDisk, seed: u64, index: u64) -> Vec<[f64; 2]> {
    lerw_sites(disk, seed, index)
        .into_iter()
        .rev()
        .map(|s| disk.point(s))
        .collect()
}

/// Independent fair colours (`true` = black) of the inside sites, in index order.
fn percolation_colours(disk: &LatticeDisk, seed: u64, index: u64) -> Vec<bool> {
    let mut rng = stream(seed, Tag::Lattice, index);
    let mut colours = Vec::with_capacity(disk.sites);
    while colours.len() < disk.sites {
        let word: u64 = rng.random();
        let take = (disk.sites - colours.len()).min(64);
        colours.extend((0..take).map(|b| (word >> b) & 1 == 1));
    }
    colours
}

/// Twice the signed area of a polygon in axial coordinates (a positive multiple of the
/// Euclidean area, the axial-to-Cartesian map having determinant √3/2).
fn twice_area(lp: &[Vertex]) -> i64 {
    let n = lp.len();
    (0..n)
        .map(|m| {
            let (p, q) = (lp[m], lp[(m + 1) % n]);
            p[0] as i64 * q[1] as i64 - q[0] as i64 * p[1] as i64
        })
        .sum()
}

/// Every interface loop of the colouring `black` (outside sites white), counterclockwise,
/// passed through `out` as soon as it is traced. Each loop is traced with black on its left
/// (the exploration rule), starting from the first black–white pair not yet traced in index
/// order, then reversed if its signed area is negative.
fn loop_vertices<T>(
    disk: &LatticeDisk,
    black: &[bool],
    mut out: impl FnMut(Vec<Vertex>) -> T,
) -> Vec<T> {
    let is_black = |s: Site| disk.idx(s).is_some_and(|ix| black[ix]);
    let mut seen = vec![0u8; disk.sites];
    let mut loops = Vec::new();
    disk.for_each_site(|s0, ix0| {
        if !black[ix0] {
            return;
        }
        for (k0, d0) in DIR.into_iter().enumerate() {
            if seen[ix0] & (1 << k0) != 0 || is_black(add(s0, d0)) {
                continue;
            }
            let (mut l, mut k, mut lx) = (s0, k0, ix0);
            let mut lp = Vec::new();
            loop {
                seen[lx] |= 1 << k;
                lp.push(vertex(l, k));
                let x = add(l, DIR[(k + 1) % 6]);
                match disk.idx(x) {
                    Some(xi) if black[xi] => {
                        (l, lx) = (x, xi);
                        k = (k + 5) % 6;
                    }
                    _ => k = (k + 1) % 6,
                }
                if lx == ix0 && k == k0 {
                    break;
                }
            }
            if twice_area(&lp) < 0 {
                lp.reverse();
            }
            loops.push(out(lp));
        }
    });
    loops
}

/// Every interface loop of critical site percolation (p = 1/2) on the inside sites with all
/// outside sites white: the cycles of honeycomb edges separating a black site from a white one,
/// pairwise disjoint and simple, each a closed polyline of honeycomb vertices in unit-disk
/// coordinates (first point not repeated), oriented counterclockwise. Loops come in the order of
/// their first black–white edge in the site numbering of [`LatticeDisk`]. Scaling limit: nested
/// CLE_6 in the unit disk.
pub fn percolation_loops(disk: &LatticeDisk, seed: u64, index: u64) -> Vec<Vec<[f64; 2]>> {
    let black = percolation_colours(disk, seed, index);
    loop_vertices(disk, &black, |lp| {
        lp.into_iter().map(|v| disk.vertex_point(v)).collect()
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::collections::HashSet;

    /// The three sites of the triangle whose vertex key is `v`: up triangles
    /// `(i,j),(i+1,j),(i,j+1)` have key `(3i+1, 3j+1)`, down triangles
    /// `(i+1,j),(i,j+1),(i+1,j+1)` have key `(3i+2, 3j+2)`.
    fn triangle(v: Vertex) -> [Site; 3] {
        let m = v[0].rem_euclid(3);
        assert!(
            m != 0 && v[1].rem_euclid(3) == m,
            "not a honeycomb vertex: {v:?}"
        );
        let (i, j) = ((v[0] - m) / 3, (v[1] - m) / 3);
        if m == 1 {
            [[i, j], [i + 1, j], [i, j + 1]]
        } else {
            [[i + 1, j], [i, j + 1], [i + 1, j + 1]]
        }
    }

    /// The two sites shared by the triangles of adjacent vertices (panics if not adjacent).
    fn shared(v: Vertex, w: Vertex) -> [Site; 2] {
        let tw = triangle(w);
        let s: Vec<Site> = triangle(v).into_iter().filter(|a| tw.contains(a)).collect();
        assert_eq!(s.len(), 2, "vertices {v:?} and {w:?} are not adjacent");
        [s[0], s[1]]
    }

    /// Every step of the polyline (and the closing one if `closed`) has length `len`.
    fn assert_steps(pts: &[[f64; 2]], len: f64, closed: bool) {
        let n = pts.len();
        for m in 0..if closed { n } else { n - 1 } {
            let (p, q) = (pts[m], pts[(m + 1) % n]);
            let d = (q[0] - p[0]).hypot(q[1] - p[1]);
            assert!((d - len).abs() < 1e-12, "step {m}: {d} instead of {len}");
        }
    }

    /// Checks a chordal interface: simple, consecutive vertices adjacent with a black site and a
    /// white site across every edge, ends just outside the circle within 3 spacings of ∓i.
    fn check_chordal(disk: &LatticeDisk, path: &[Vertex], black: &dyn Fn(Site) -> bool) {
        let distinct: HashSet<Vertex> = path.iter().copied().collect();
        assert_eq!(distinct.len(), path.len(), "a vertex repeats");
        for w in path.windows(2) {
            let [a, b] = shared(w[0], w[1]);
            assert_ne!(black(a), black(b), "edge {w:?} is not an interface edge");
        }
        let h = lattice_spacing(disk);
        for (p, y) in [
            (disk.vertex_point(path[0]), -1.0),
            (disk.vertex_point(path[path.len() - 1]), 1.0),
        ] {
            assert!(p[0].hypot(p[1]) > 1.0, "end {p:?} inside the circle");
            assert!(p[0].hypot(p[1] - y) < 3.0 * h, "end {p:?} far from {y}i");
        }
    }

    #[test]
    fn disk_index_is_a_bijection_onto_the_inside_sites() {
        for radius in [8, 9, 37] {
            let disk = LatticeDisk::new(radius).unwrap();
            let r2 = (radius * radius) as i32;
            let mut seen = vec![false; disk.sites()];
            let m = 2 * radius as i32 + 2;
            let mut count = 0;
            for j in -m..=m {
                for i in -m..=m {
                    let inside = i * i + i * j + j * j < r2;
                    assert_eq!(disk.index(i, j).is_some(), inside, "site ({i},{j})");
                    if let Some(ix) = disk.index(i, j) {
                        assert!(!seen[ix]);
                        seen[ix] = true;
                        count += 1;
                    }
                }
            }
            assert_eq!(count, disk.sites());
            // Area check, common practice: 2πR²/√3 sites up to a boundary term O(R).
            let area = 2.0 * std::f64::consts::PI * (radius * radius) as f64 / 3f64.sqrt();
            assert!((count as f64 - area).abs() < 4.0 * radius as f64);
        }
    }

    #[test]
    fn bad_parameters_are_rejected() {
        assert!(LatticeDisk::new(7).is_err());
        assert!(LatticeDisk::new(4001).is_err());
        assert!(LatticeDisk::new(8).is_ok());
        assert!(IsingConfig::new(0).is_err());
        assert!(IsingConfig::new(100_001).is_err());
        assert_eq!(IsingConfig::new(5).unwrap().sweeps(), 5);
    }

    #[test]
    fn critical_coupling_is_self_dual() {
        // Kramers–Wannier duality (Phys. Rev. 1941) maps triangular K to honeycomb L with
        // tanh L = e^{−2K}; the star–triangle relation (Onsager 1944; Wannier, Rev. Mod. Phys.
        // 1945) maps honeycomb L back to triangular K' with e^{4K'} = cosh 3L / cosh L. The
        // critical point is the fixed point K' = K (Houtappel, Physica 1950).
        let k = ising_critical_coupling();
        assert!(((4.0 * k).exp() - 3.0).abs() < 1e-14);
        let l = (-2.0 * k).exp().atanh();
        let k_back = ((3.0 * l).cosh() / l.cosh()).ln() / 4.0;
        assert!((k_back - k).abs() < 1e-14, "{k_back} vs {k}");
        // Honeycomb criticality cosh 2L_c = 2 (same sources).
        assert!(((2.0 * l).cosh() - 2.0).abs() < 1e-13);
    }

    /// A small explicit Ising graph.
    struct Small {
        n: usize,
        bonds: Vec<(usize, usize)>,
        fields: Vec<(usize, bool)>,
    }

    impl Couplings for Small {
        fn size(&self) -> usize {
            self.n
        }
        fn bonds(&self, mut f: impl FnMut(usize, usize)) {
            self.bonds.iter().for_each(|&(a, b)| f(a, b));
        }
        fn fields(&self, mut f: impl FnMut(usize, bool)) {
            self.fields.iter().for_each(|&(a, h)| f(a, h));
        }
    }

    /// Energy `−Σ s_a s_b − Σ s_a h` and the spin of site 0 (±1).
    fn observe(g: &Small, s: &[bool]) -> [f64; 2] {
        let v = |b: bool| if b { 1.0 } else { -1.0 };
        let e = -g.bonds.iter().map(|&(a, b)| v(s[a]) * v(s[b])).sum::<f64>()
            - g.fields.iter().map(|&(a, h)| v(s[a]) * v(h)).sum::<f64>();
        [e, v(s[0])]
    }

    /// Compares exact means (enumeration of all 2^n states) with Swendsen–Wang estimates,
    /// tolerance 4σ with σ the batch-means standard error (40 batches of 5000 sweeps; common
    /// practice).
    fn check_sw(g: &Small, k: f64, seed: u64) {
        let mut z = 0.0;
        let mut exact = [0.0; 2];
        for m in 0u32..1 << g.n {
            let s: Vec<bool> = (0..g.n).map(|a| (m >> a) & 1 == 1).collect();
            let o = observe(g, &s);
            let w = (-k * o[0]).exp();
            z += w;
            exact[0] += w * o[0];
            exact[1] += w * o[1];
        }
        let exact = exact.map(|x| x / z);
        let mut rng = stream(seed, Tag::Lattice, 0);
        let mut spins = vec![true; g.n];
        let mut work = SwWork::default();
        let threshold = bond_threshold(k);
        for _ in 0..1000 {
            sw_sweep(g, &mut spins, threshold, &mut rng, &mut work);
        }
        let (batches, size) = (40, 5000);
        let mut means = vec![[0.0; 2]; batches];
        for mean in means.iter_mut() {
            for _ in 0..size {
                sw_sweep(g, &mut spins, threshold, &mut rng, &mut work);
                let o = observe(g, &spins);
                mean[0] += o[0] / size as f64;
                mean[1] += o[1] / size as f64;
            }
        }
        for q in 0..2 {
            let m = means.iter().map(|b| b[q]).sum::<f64>() / batches as f64;
            let var = means.iter().map(|b| (b[q] - m).powi(2)).sum::<f64>() / (batches - 1) as f64;
            let sigma = (var / batches as f64).sqrt();
            assert!(
                (m - exact[q]).abs() < 4.0 * sigma,
                "observable {q}: SW {m} ± {sigma}, exact {}",
                exact[q]
            );
        }
    }

    /// A hexagon of sites 0..6 around the centre 6 (12 bonds).
    fn hexagon(fields: Vec<(usize, bool)>) -> Small {
        let mut bonds: Vec<(usize, usize)> = (0..6).map(|a| (a, (a + 1) % 6)).collect();
        bonds.extend((0..6).map(|a| (a, 6)));
        Small {
            n: 7,
            bonds,
            fields,
        }
    }

    #[test]
    fn swendsen_wang_matches_enumeration_free_boundary() {
        check_sw(&hexagon(Vec::new()), ising_critical_coupling(), 11);
    }

    #[test]
    fn swendsen_wang_matches_enumeration_fixed_boundary() {
        // Mixed fixed spins, one site coupled twice: exercises the fixed-spin nodes used by
        // `ising_interface`. Site 0's mean spin is not zero here, so it is checked too.
        let fields = vec![
            (0, true),
            (0, true),
            (1, true),
            (2, false),
            (3, false),
            (4, true),
        ];
        check_sw(&hexagon(fields), ising_critical_coupling(), 12);
        check_sw(&hexagon(vec![(1, false), (3, true)]), 0.6, 13);
    }

    #[test]
    fn disk_couplings_list_every_neighbour_pair_once() {
        let disk = LatticeDisk::new(23).unwrap();
        let g = DiskCouplings::new(&disk);
        let mut bonds = HashSet::new();
        g.bonds(|a, b| assert!(bonds.insert((a.min(b), a.max(b))), "bond twice"));
        let mut fields = HashSet::new();
        let (mut inside, mut outside) = (0, 0);
        disk.for_each_site(|s, ix| {
            for d in DIR {
                let t = add(s, d);
                match disk.idx(t) {
                    Some(it) => {
                        inside += 1;
                        assert!(bonds.contains(&(ix.min(it), ix.max(it))));
                    }
                    None => {
                        outside += 1;
                        fields.insert((ix, west(t), t));
                    }
                }
            }
        });
        assert_eq!(bonds.len() * 2, inside);
        assert_eq!(g.fields.len(), outside);
        for &(ix, plus) in &g.fields {
            assert!(fields.iter().any(|&(a, p, _)| a == ix && p == plus));
        }
    }

    #[test]
    fn exploration_of_a_monochromatic_disk_follows_the_boundary() {
        // All inside sites black: the path keeps the white arc (x ≥ 0) on its right, so every
        // triangle it visits holds an outside white site; symmetrically for all white.
        let disk = LatticeDisk::new(30).unwrap();
        for all_black in [true, false] {
            let path = explore(&disk, |_| all_black);
            let colour = |s: Site| disk.idx(s).map_or(west(s), |_| all_black);
            check_chordal(&disk, &path, &colour);
            for &v in &path {
                let t = triangle(v);
                assert!(t
                    .iter()
                    .any(|&s| disk.idx(s).is_none() && west(s) != all_black));
            }
        }
    }

    #[test]
    fn percolation_exploration_is_an_interface() {
        for (radius, seed) in [(8, 1), (40, 2), (40, 3), (150, 4)] {
            let disk = LatticeDisk::new(radius).unwrap();
            let (path, state) = percolation_exploration_raw(&disk, seed, 7);
            let colour = |s: Site| match disk.idx(s) {
                None => west(s),
                Some(ix) => {
                    assert_ne!(state[ix], 0, "unsampled site on the path");
                    state[ix] == 1
                }
            };
            check_chordal(&disk, &path, &colour);
            let pts = percolation_exploration(&disk, seed, 7);
            assert_steps(&pts, lattice_spacing(&disk) / 3f64.sqrt(), false);
        }
    }

    #[test]
    fn ising_interface_is_an_interface() {
        let disk = LatticeDisk::new(30).unwrap();
        for seed in [1, 2] {
            let spins = ising_spins(&disk, 10, seed, 0);
            let colour = |s: Site| disk.idx(s).map_or(west(s), |ix| spins[ix]);
            let path = explore(&disk, |ix| spins[ix]);
            check_chordal(&disk, &path, &colour);
            let config = IsingConfig::new(10).unwrap();
            let pts = ising_interface(&disk, &config, seed, 0);
            assert_eq!(pts.len(), path.len());
            assert_eq!(pts[5], disk.vertex_point(path[5]));
        }
    }

    #[test]
    fn lerw_is_a_simple_lattice_path_from_the_circle_to_the_origin() {
        for (radius, seed) in [(8, 1), (50, 2), (200, 3)] {
            let disk = LatticeDisk::new(radius).unwrap();
            let sites = lerw_sites(&disk, seed, 0);
            let distinct: HashSet<Site> = sites.iter().copied().collect();
            assert_eq!(
                distinct.len(),
                sites.len(),
                "the erased path repeats a site"
            );
            for w in sites.windows(2) {
                let d = [w[1][0] - w[0][0], w[1][1] - w[0][1]];
                assert!(DIR.contains(&d), "{w:?} are not neighbours");
            }
            let last = sites[sites.len() - 1];
            assert!(disk.idx(last).is_none());
            assert!(sites[..sites.len() - 1]
                .iter()
                .all(|&s| disk.idx(s).is_some()));
            let pts = lerw_radial(&disk, seed, 0);
            let h = lattice_spacing(&disk);
            let r0 = pts[0][0].hypot(pts[0][1]);
            assert!((1.0..1.0 + h).contains(&r0), "exit at radius {r0}");
            assert_eq!(pts[pts.len() - 1], [0.0, 0.0]);
            assert_steps(&pts, h, false);
        }
    }

    /// Whether the site `s` is inside the polygon `lp` (crossing number of a ray in the +a
    /// direction, exact in integers; sites have b ≡ 0 mod 3 and vertices not, so the ray never
    /// meets a vertex).
    fn surrounds(lp: &[Vertex], s: Site) -> bool {
        let (a0, b0) = (3 * s[0] as i64, 3 * s[1] as i64);
        let mut inside = false;
        for m in 0..lp.len() {
            let (p, q) = (lp[m], lp[(m + 1) % lp.len()]);
            let (a1, b1, a2, b2) = (p[0] as i64, p[1] as i64, q[0] as i64, q[1] as i64);
            if (b1 > b0) != (b2 > b0) {
                // crossing abscissa > a0  ⇔  (a1 − a0)(b2 − b1) + (a2 − a1)(b0 − b1) has the
                // sign of (b2 − b1)
                let t = (a1 - a0) * (b2 - b1) + (a2 - a1) * (b0 - b1);
                if (t > 0) == (b2 > b1) {
                    inside = !inside;
                }
            }
        }
        inside
    }

    #[test]
    fn percolation_loops_are_the_interfaces_of_the_colouring() {
        // Exact checks: loops are closed simple honeycomb cycles, pairwise disjoint,
        // counterclockwise, use every black–white edge once, and (Jordan curve theorem, every
        // interface crossing flips the colour, outside white) a site is black iff an odd number
        // of loops surround it.
        let disk = LatticeDisk::new(20).unwrap();
        let mut centre_black = 0;
        for seed in 0..8 {
            let black = percolation_colours(&disk, seed, 3);
            let loops = loop_vertices(&disk, &black, |lp| lp);
            let mut all = HashSet::new();
            let mut edges = 0;
            for lp in &loops {
                assert!(lp.len() >= 6);
                for m in 0..lp.len() {
                    let (v, w) = (lp[m], lp[(m + 1) % lp.len()]);
                    let [a, b] = shared(v, w);
                    let col = |s: Site| disk.idx(s).is_some_and(|ix| black[ix]);
                    assert_ne!(col(a), col(b));
                    assert!(all.insert(v), "vertex {v:?} shared or repeated");
                }
                edges += lp.len();
            }
            let mut bw = 0;
            disk.for_each_site(|s, ix| {
                if black[ix] {
                    bw += DIR
                        .iter()
                        .filter(|&&d| disk.idx(add(s, d)).is_none_or(|it| !black[it]))
                        .count();
                }
                let n = loops.iter().filter(|lp| surrounds(lp, s)).count();
                assert_eq!(black[ix], n % 2 == 1, "parity at site {s:?}");
            });
            assert_eq!(edges, bw);
            let origin = disk.index(0, 0).unwrap();
            if black[origin] {
                centre_black += 1;
                assert!(loops.iter().any(|lp| surrounds(lp, [0, 0])));
            }
            // The public form: the same loops in unit-disk coordinates, edges 1/(√3 R),
            // counterclockwise by the Cartesian shoelace formula.
            let pts = percolation_loops(&disk, seed, 3);
            assert_eq!(pts.len(), loops.len());
            for lp in &pts {
                assert_steps(lp, lattice_spacing(&disk) / 3f64.sqrt(), true);
                let area: f64 = (0..lp.len())
                    .map(|m| {
                        let (p, q) = (lp[m], lp[(m + 1) % lp.len()]);
                        p[0] * q[1] - q[0] * p[1]
                    })
                    .sum();
                assert!(area > 0.0, "loop not counterclockwise");
            }
        }
        assert!(
            centre_black > 0,
            "no seed with a black centre: the check above never ran"
        );
    }

    #[test]
    fn samples_are_pure_functions_of_seed_and_index() {
        let disk = LatticeDisk::new(25).unwrap();
        assert_eq!(
            percolation_exploration(&disk, 5, 1),
            percolation_exploration(&disk, 5, 1)
        );
        assert_ne!(
            percolation_exploration(&disk, 5, 1),
            percolation_exploration(&disk, 5, 2)
        );
        assert_eq!(lerw_radial(&disk, 5, 1), lerw_radial(&disk, 5, 1));
        assert_ne!(lerw_radial(&disk, 5, 1), lerw_radial(&disk, 6, 1));
        assert_eq!(
            percolation_loops(&disk, 5, 1),
            percolation_loops(&disk, 5, 1)
        );
        let c = IsingConfig::new(3).unwrap();
        assert_eq!(
            ising_interface(&disk, &c, 5, 1),
            ising_interface(&disk, &c, 5, 1)
        );
    }
}
