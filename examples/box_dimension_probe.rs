//! Development aid: box-counting dimension of chordal SLE_κ traces (time 1, equal spacing
//! targets) against the Hausdorff dimension 1 + κ/8 (Beffara, Ann. Probab. 2008). Not yet a
//! report of the command line; the numbers it printed are quoted in DEVELOPERS.md.
//!
//! ```text
//! cargo run --release --example box_dimension_probe -- SPACING R_MIN R_MAX SAMPLES [KAPPA…]
//! ```
//! e.g. `0.002 0.008 0.25 10 1 2` (about two minutes) or `0.004 0.016 0.25 6 4` (about eight
//! minutes on 2 cores: long curves refine slowly). Box counting over a finite range is biased;
//! see `sleek::geometry`.

use sleek::geometry::box_dimension;
use sleek::loewner::{Method, StepKind};
use sleek::sle::{ChordalSle, Resolution, SpacingRule};

fn main() {
    let args: Vec<f64> = std::env::args()
        .skip(1)
        .map(|a| {
            a.parse()
                .expect("numbers: SPACING R_MIN R_MAX SAMPLES [KAPPA…]")
        })
        .collect();
    assert!(
        args.len() >= 4,
        "usage: box_dimension_probe SPACING R_MIN R_MAX SAMPLES [KAPPA…]"
    );
    let (spacing, rmin, rmax, n) = (args[0], args[1], args[2], args[3] as u64);
    let kappas = if args.len() > 4 {
        args[4..].to_vec()
    } else {
        vec![1.0, 2.0, 4.0, 6.0]
    };
    println!("box sizes {rmin}..{rmax} (8 sizes), trace spacing ≤ {spacing}, {n} traces per κ");
    for kappa in kappas {
        let rule = SpacingRule {
            absolute: Some(spacing),
            relative: None,
            inner_radius: 0.01,
            base_steps: 64,
            max_points: 400_000,
        };
        let sle = ChordalSle::new(
            kappa,
            1.0,
            Resolution::Spacing(rule),
            StepKind::Tilted,
            Method::Fast,
        )
        .expect("valid settings");
        let ds: Vec<f64> = (0..n)
            .map(|i| {
                let c = sle.sample(11, i);
                box_dimension(&c.points, rmin, rmax, 8)
                    .expect("valid range")
                    .dimension
            })
            .collect();
        let m = ds.iter().sum::<f64>() / n as f64;
        let sd = (ds.iter().map(|d| (d - m) * (d - m)).sum::<f64>() / (n as f64 - 1.0)).sqrt();
        println!(
            "κ = {kappa}: box dimension {m:.4} ± {:.4} (s.e. over traces; sd {sd:.4}), 1 + κ/8 = {:.4}",
            sd / (n as f64).sqrt(),
            1.0 + kappa / 8.0
        );
    }
}
