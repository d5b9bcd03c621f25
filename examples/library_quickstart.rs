//! Using sleek as a library: sample chordal SLE_κ curves, write them as CSV, and compare the
//! fraction of curves passing to the left of a point with Schramm's formula (Schramm, Electron.
//! Comm. Probab. 2001).
//!
//! Run with `cargo run --release --example library_quickstart`.

use num_complex::Complex64;
use sleek::audit::{flow_points, AuditSettings};
use sleek::domain::ChordalDomain;
use sleek::driving::BrownianPath;
use sleek::loewner::{Method, StepKind};
use sleek::sle::{ChordalSle, Resolution, SpacingRule};

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let kappa = 8.0 / 3.0;
    let seed = 2024;

    // Three curves to capacity time 1, consecutive points at most 0.02 apart.
    let rule = SpacingRule {
        absolute: Some(0.02),
        relative: None,
        inner_radius: 0.01,
        base_steps: 64,
        max_points: 50_000,
    };
    let sle = ChordalSle::new(
        kappa,
        1.0,
        Resolution::Spacing(rule),
        StepKind::Tilted,
        Method::Fast,
    )?;
    let curves: Vec<_> = (0..3).map(|i| sle.sample(seed, i)).collect();
    for c in &curves {
        println!(
            "curve {}: {} points, max spacing {:.3e}",
            c.index,
            c.points.len(),
            c.max_spacing
        );
    }
    let path = std::env::temp_dir().join("sleek_quickstart.csv");
    let mut file = std::fs::File::create(&path)?;
    sleek::io::write_trace_csv(&mut file, &curves, ChordalDomain::HalfPlane)?;
    println!("wrote {}", path.display());

    // Left passage at z = 1 + i from 1000 curves, with the audit's point-adaptive steps.
    let s = AuditSettings::quick(seed);
    let z = [Complex64::new(1.0, 1.0)];
    let n = 1000u64;
    let left = (0..n)
        .filter(|&i| {
            let p = BrownianPath::geometric(kappa, s.t_min, s.horizon, s.ratio, seed, i)
                .expect("valid settings");
            flow_points(&p, StepKind::Tilted, &z, s.point_step).0[0].re > 0.0
        })
        .count() as f64
        / n as f64;
    let exact = sleek::laws::schramm_left_passage(kappa, 1.0, 1.0)?;
    let se = (exact * (1.0 - exact) / n as f64).sqrt();
    println!("P(left of 1+i): {left:.3} ± {se:.3} (exact {exact:.6})");
    Ok(())
}
