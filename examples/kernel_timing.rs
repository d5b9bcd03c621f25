//! Timing of the three kernels that a CLE configuration (`sleek loops`) spends its time in, on
//! fixed deterministic inputs, so that a change to one of them can be measured without the
//! chaotic dependence of whole configurations on rounding:
//! 1. a disk chain taken back to frame 0 ([`sleek::disk_fast::DiskChain::apply_prefix`]) at
//!    its trace points and at boundary points next to the tip (the step control's probe), one
//!    point at a time and two at once;
//! 2. the geodesic zipper's inverse ([`sleek::geozip::GeodesicZipper::from_disk`]) on a
//!    2000-vertex polygon, through every map and through the block tree, inside the disk and
//!    on its circle, one point and two at once;
//! 3. interior points mapped forward through every radial step (a change of target), with
//!    the polar-form square root and with the algebraic one.
//!
//! ```text
//! cargo run --release --example kernel_timing
//! ```
//! Single-threaded; the numbers are for comparing builds on one machine, not a benchmark of
//! record (that is `sleek bench --loops`).

use num_complex::Complex64;
use sleek::disk_fast::{DiskChain, DiskMap};
use sleek::geozip::GeodesicZipper;
use sleek::radial::RadialStep;
use std::f64::consts::PI;
use std::hint::black_box;
use std::time::Instant;

/// A small deterministic generator (SplitMix64), uniform on [0, 1).
struct Mix(u64);
impl Mix {
    fn next(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// Prints the time per evaluation, and per evaluation and map when `maps` is given.
fn report(label: &str, evaluations: usize, maps: Option<f64>, secs: f64) {
    let per = secs / evaluations as f64;
    match maps {
        Some(m) => println!(
            "{label:<50} {:>9.2} µs each, {:>6.1} ns per map",
            1e6 * per,
            1e9 * per / m
        ),
        None => println!("{label:<50} {:>9.2} µs each", 1e6 * per),
    }
}

fn main() {
    let mut g = Mix(20261205);
    // 1. A radial SLE_6-like chain: 30 000 steps of radial time 1e-4, driving a ±√(κh) walk.
    let (kappa, h, n): (f64, f64, usize) = (6.0, 1e-4, 30_000);
    let mut chain = DiskChain::new();
    let mut xi = 0.0f64;
    let mut xis = Vec::with_capacity(n);
    for _ in 0..n {
        xi += if g.next() < 0.5 { -1.0 } else { 1.0 } * (kappa * h).sqrt();
        xis.push(xi);
        chain.push(DiskMap::Step {
            step: RadialStep::new(xi, h),
            rot: Complex64::new(1.0, 0.0),
        });
    }
    let sample: Vec<usize> = (0..4000).map(|k| 1 + k * (n - 1) / 4000).collect();
    let mut sink = Complex64::new(0.0, 0.0);
    let t = Instant::now();
    for &m in &sample {
        let w = RadialStep::new(xis[m - 1], h).tip();
        sink += chain.apply_prefix(m, w);
    }
    let secs = t.elapsed().as_secs_f64();
    report("chain: a trace point", sample.len(), None, secs);
    let r = 3.5 * (kappa * h).sqrt();
    let t = Instant::now();
    for &m in &sample {
        for a in [xis[m - 1] + r, xis[m - 1] - r] {
            sink += chain.apply_prefix(m, Complex64::from_polar(1.0, a));
        }
    }
    let one = t.elapsed().as_secs_f64();
    report(
        "chain: a probe pair, one point at a time",
        sample.len(),
        None,
        one,
    );
    let t = Instant::now();
    for &m in &sample {
        let w = [
            Complex64::from_polar(1.0, xis[m - 1] + r),
            Complex64::from_polar(1.0, xis[m - 1] - r),
        ];
        let [p, q] = chain.apply_prefix_lanes(m, w);
        sink += p + q;
    }
    let two = t.elapsed().as_secs_f64();
    report("chain: a probe pair in two lanes", sample.len(), None, two);
    println!("    (two lanes / one at a time: {:.2})", two / one);

    // 2. The geodesic zipper of a wiggly star with 2000 vertices.
    let nv = 2000;
    let poly: Vec<Complex64> = (0..nv)
        .map(|k| {
            let p = 2.0 * PI * k as f64 / nv as f64;
            Complex64::from_polar(1.0 + 0.3 * (7.0 * p).sin() + 0.1 * (23.0 * p).sin(), p)
        })
        .collect();
    let tree = GeodesicZipper::new(&poly, Complex64::new(0.0, 0.0)).expect("a star polygon");
    let direct = tree.without_tree();
    let inner: Vec<Complex64> = (0..20_000)
        .map(|_| Complex64::from_polar(0.99 * g.next().sqrt(), 2.0 * PI * g.next()))
        .collect();
    let edge: Vec<Complex64> = (0..20_000)
        .map(|_| Complex64::from_polar(1.0, 2.0 * PI * g.next()))
        .collect();
    let maps = tree.len() as f64;
    for (zip, how) in [(&direct, "every map"), (&tree, "block tree")] {
        for (pts, wh) in [(&inner, "|w| < 0.99"), (&edge, "|w| = 1")] {
            let t = Instant::now();
            for &w in pts.iter() {
                sink += zip.from_disk(w);
            }
            let one = t.elapsed().as_secs_f64();
            report(
                &format!("zipper, {how}, {wh}, one at a time"),
                pts.len(),
                Some(maps),
                one,
            );
            let t = Instant::now();
            for w in pts.chunks_exact(2) {
                let [p, q] = zip.from_disk_lanes([w[0], w[1]]);
                sink += p + q;
            }
            let two = t.elapsed().as_secs_f64();
            report(
                &format!("zipper, {how}, {wh}, in pairs"),
                pts.len(),
                Some(maps),
                two,
            );
        }
    }

    // 3. Forward through every step, as a change of target does.
    let steps: Vec<RadialStep> = xis.iter().map(|&x| RadialStep::new(x, h)).collect();
    let starts: Vec<Complex64> = (0..100)
        .map(|_| Complex64::from_polar(0.5 * g.next(), 2.0 * PI * g.next()))
        .collect();
    let t = Instant::now();
    for &z in &starts {
        sink += steps.iter().fold(z, |w, s| s.forward(w));
    }
    let slow = t.elapsed().as_secs_f64();
    report(
        "forward: a point, polar square root",
        starts.len(),
        Some(n as f64),
        slow,
    );
    let t = Instant::now();
    for &z in &starts {
        sink += steps.iter().fold(z, |w, s| s.forward_fast(w));
    }
    let fast = t.elapsed().as_secs_f64();
    report(
        "forward: a point, algebraic square root",
        starts.len(),
        Some(n as f64),
        fast,
    );
    println!("    (algebraic / polar: {:.2})", fast / slow);
    black_box(sink);
}
