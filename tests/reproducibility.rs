//! Every sample is a pure function of (seed, index): results do not depend on the number of
//! threads or on the order of computation (STYLE: reproducibility).

use sleek::loewner::{Method, StepKind};
use sleek::sle::{ChordalSle, Resolution, SpacingRule};

fn sample_all(threads: usize, sle: &ChordalSle) -> Vec<Vec<(u64, u64)>> {
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap();
    pool.install(|| {
        use rayon::prelude::*;
        (0..6u64)
            .into_par_iter()
            .map(|i| {
                sle.sample(99, i)
                    .points
                    .iter()
                    .map(|z| (z.re.to_bits(), z.im.to_bits()))
                    .collect()
            })
            .collect()
    })
}

#[test]
fn identical_bits_at_one_and_two_threads() {
    let rule = SpacingRule {
        absolute: Some(0.1),
        relative: Some(0.2),
        inner_radius: 0.01,
        base_steps: 32,
        max_points: 5000,
    };
    for res in [Resolution::Points(300), Resolution::Spacing(rule)] {
        let sle = ChordalSle::new(3.0, 1.0, res, StepKind::Tilted, Method::Direct).unwrap();
        assert_eq!(sample_all(1, &sle), sample_all(2, &sle));
        // And sample 3 alone equals sample 3 of the batch.
        let alone: Vec<(u64, u64)> = sle
            .sample(99, 3)
            .points
            .iter()
            .map(|z| (z.re.to_bits(), z.im.to_bits()))
            .collect();
        assert_eq!(alone, sample_all(2, &sle)[3]);
    }
}

#[test]
fn refinement_keeps_the_same_brownian_path() {
    // A finer spacing target only adds samples: the driving values at the coarse run's times
    // are unchanged (bridge points are addressed, not drawn in sequence).
    let mk = |a: f64| {
        let rule = SpacingRule {
            absolute: Some(a),
            relative: None,
            inner_radius: 0.01,
            base_steps: 16,
            max_points: 20000,
        };
        ChordalSle::new(
            4.0,
            1.0,
            Resolution::Spacing(rule),
            StepKind::Tilted,
            Method::Direct,
        )
        .unwrap()
        .sample(5, 0)
    };
    let (coarse, fine) = (mk(0.3), mk(0.1));
    assert!(fine.points.len() > coarse.points.len());
    let (tf, wf) = (fine.driving.times(), fine.driving.values());
    for (t, w) in coarse.driving.times().iter().zip(coarse.driving.values()) {
        let j = tf
            .iter()
            .position(|x| x == t)
            .expect("coarse time present in fine grid");
        assert_eq!(wf[j], *w);
    }
}
