//! The fast (block-tree) composition against the direct one, which is the oracle: trace points
//! of sampled curves and prefix maps at hard points (near the real line, near earlier parts of
//! the curve). Target (issue: fast composition): max deviation ≤ 1e-9 of the curve's diameter;
//! measured ≈ 5e-14, so the 1e-11 bound below leaves room only for rounding.

use num_complex::Complex64 as C;
use sleek::driving::{BrownianPath, DrivingFunction};
use sleek::fast::BlockTree;
use sleek::loewner::{ChordalChain, Method, StepKind};

fn max_dev(a: &[C], b: &[C]) -> f64 {
    a.iter()
        .zip(b)
        .map(|(x, y)| (x - y).norm())
        .fold(0.0, f64::max)
}

fn diameter(p: &[C]) -> f64 {
    p.iter().map(|z| z.norm()).fold(0.0, f64::max) * 2.0
}

#[test]
fn fast_trace_equals_direct_for_sampled_curves() {
    for kappa in [1.0, 4.0, 6.0, 8.0] {
        for seed in [1u64, 2, 3] {
            for kind in [StepKind::Tilted, StepKind::Vertical] {
                let n = 1500 + 700 * seed as usize; // not a power of two
                let p = BrownianPath::uniform(kappa, 1.0, n, seed, 0).unwrap();
                let ch = ChordalChain::new(p.driving(), kind);
                let d = ch.trace(Method::Direct).unwrap();
                let f = ch.trace(Method::Fast).unwrap();
                let rel = max_dev(&d, &f) / diameter(&d);
                assert!(rel < 1e-11, "κ={kappa} seed={seed} {kind:?}: {rel:e}");
            }
        }
    }
}

#[test]
fn fast_trace_on_refined_uneven_grids() {
    // Bridge refinement makes step lengths vary over many orders of magnitude.
    let mut p = BrownianPath::uniform(6.0, 1.0, 50, 9, 4).unwrap();
    p.refine_steps(&[(3, 8), (10, 5), (11, 12), (40, 9)]);
    let ch = ChordalChain::new(p.driving(), StepKind::Tilted);
    let d = ch.trace(Method::Direct).unwrap();
    let f = ch.trace(Method::Fast).unwrap();
    assert!(max_dev(&d, &f) / diameter(&d) < 1e-11);
}

#[test]
fn prefix_maps_at_hard_points() {
    // A driving function that sends the curve back towards the real line and its earlier parts.
    let d = DrivingFunction::from_fn(2.0, 3000, |t| {
        2.5 * (9.0 * t).sin() + 0.8 * (31.0 * t).cos() - 0.8
    })
    .unwrap();
    for kind in [StepKind::Tilted, StepKind::Vertical] {
        let ch = ChordalChain::new(&d, kind);
        let tree = BlockTree::new(ch.steps());
        let trace = ch.trace(Method::Direct).unwrap();
        let scale = diameter(&trace);
        let w_end = *d.values().last().unwrap();
        for m in [1usize, 7, 8, 9, 100, 1777, 3000] {
            for re in [-6.0, -2.0, -0.3, 0.0, 0.4, 1.1, 3.0, 7.0] {
                for im in [0.0, 1e-9, 1e-4, 0.01, 0.3, 2.0] {
                    let w = C::new(w_end + re, im);
                    let a = ch.inverse_map(m, w);
                    let b = tree.apply_prefix(m, w);
                    assert!(
                        (a - b).norm() < 1e-11 * scale,
                        "{kind:?} m={m} w={w}: {a} vs {b}"
                    );
                }
            }
        }
    }
}

/// A step that is not normalised at ∞: a chordal step followed by a real dilation and shift
/// (`w ↦ λw + μ`), as steps of other chains seen in a half-plane frame are. The block tree must
/// learn the linear and constant terms of its series and still agree with direct composition.
#[derive(Clone)]
struct ScaledStep {
    inner: sleek::loewner::ChordalStep,
    lambda: f64,
    mu: f64,
}

impl sleek::fast::HalfPlaneStep for ScaledStep {
    fn inverse(&self, z: C) -> C {
        self.inner.inverse((z - self.mu) / self.lambda)
    }
    fn preimage_interval(&self) -> (f64, f64) {
        let (a, b) = self.inner.preimage_interval();
        (self.lambda * a + self.mu, self.lambda * b + self.mu)
    }
    fn forward_real(&self, x: f64) -> f64 {
        self.lambda * self.inner.forward_real(x) + self.mu
    }
}

#[test]
fn block_tree_handles_steps_not_normalised_at_infinity() {
    let p = BrownianPath::uniform(3.0, 1.0, 2000, 4, 0).unwrap();
    let ch = ChordalChain::new(p.driving(), StepKind::Tilted);
    let steps: Vec<ScaledStep> = ch
        .steps()
        .iter()
        .enumerate()
        .map(|(k, s)| ScaledStep {
            inner: *s,
            lambda: 1.0 + 1e-3 * ((k % 7) as f64 - 3.0),
            mu: 1e-3 * ((k % 5) as f64 - 2.0),
        })
        .collect();
    let tree = BlockTree::new(&steps);
    use sleek::fast::HalfPlaneStep;
    for m in [5usize, 64, 999, 2000] {
        for w in [
            C::new(0.3, 0.5),
            C::new(-2.0, 0.01),
            C::new(5.0, 3.0),
            C::new(1.0, 0.0),
        ] {
            let direct = steps[..m].iter().rev().fold(w, |z, s| s.inverse(z));
            let fast = tree.apply_prefix(m, w);
            assert!(
                (direct - fast).norm() < 1e-11 * (1.0 + direct.norm()),
                "m={m} w={w}: {direct} vs {fast}"
            );
        }
    }
}
