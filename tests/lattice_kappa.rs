//! κ recovered from lattice reference curves (DESIGN §9–§10): the unzip of each model's
//! interfaces, measured by `measure_run`, must give an interval containing the κ of its scaling
//! limit. Seeds are fixed; the intervals are 99% bootstrap intervals (so a correct pipeline
//! fails a given check with probability about 1% over seeds; these seeds pass).
//!
//! Scaling limits: percolation exploration → SLE_6 (Smirnov, C. R. Acad. Sci. Paris 2001;
//! Camia & Newman, Probab. Theory Relat. Fields 2007); critical Ising interface with Dobrushin
//! boundary conditions → SLE_3 (Chelkak, Duminil-Copin, Hongler, Kemppainen & Smirnov, C. R.
//! Math. 2014); loop-erased random walk → radial SLE_2 (Lawler, Schramm & Werner, Ann. Probab.
//! 2004). Measured at radius 200 on seeds below (radius 200, 20 curves): percolation QV 6.75
//! [5.52, 8.13] (95%), left passage 6.04 [5.40, 6.60]; Ising QV 2.90 [2.49, 3.35], left passage
//! 3.01 [2.54, 3.45]; LERW (40 curves) QV 1.91 [1.64, 2.26].

use num_complex::Complex64 as C;
use sleek::lattice::{self, IsingConfig, LatticeDisk};
use sleek::loewner::StepKind;
use sleek::measure_run::{measure_curves, Frame, MeasureSettings};

fn settings(frame: Frame, slit: StepKind) -> MeasureSettings {
    MeasureSettings {
        frame,
        slit,
        boundary_tolerance: 0.01,
        max_points: 20_000,
        max_distortion: 2.0,
        min_lag: None,
        bootstrap: 500,
        level: 0.99,
        seed: 1,
    }
}

fn to_c(v: Vec<[f64; 2]>) -> Vec<C> {
    v.into_iter().map(|p| C::new(p[0], p[1])).collect()
}

fn check(what: &str, kappa: f64, ci: [f64; 2], estimate: f64) {
    assert!(
        ci[0] <= kappa && kappa <= ci[1],
        "{what}: κ = {kappa} outside [{}, {}] (estimate {estimate})",
        ci[0],
        ci[1]
    );
}

#[test]
fn percolation_exploration_gives_six() {
    let disk = LatticeDisk::new(200).unwrap();
    let curves: Vec<(String, Vec<C>)> = (0..20)
        .map(|i| {
            (
                format!("perc {i}"),
                to_c(lattice::percolation_exploration(&disk, 3, i)),
            )
        })
        .collect();
    let r = measure_curves(&curves, &settings(Frame::Disk(None), StepKind::Vertical)).unwrap();
    check("percolation QV", 6.0, r.kappa.ci, r.kappa.estimate);
    let lp = r.left_passage.unwrap();
    check("percolation left passage", 6.0, lp.ci, lp.estimate);
    // The intervals are informative: narrower than ±40%.
    assert!(r.kappa.ci[1] - r.kappa.ci[0] < 0.8 * 6.0);
}

#[test]
fn ising_interface_gives_three() {
    let disk = LatticeDisk::new(200).unwrap();
    let cfg = IsingConfig::new(60).unwrap();
    let curves: Vec<(String, Vec<C>)> = (0..20)
        .map(|i| {
            (
                format!("ising {i}"),
                to_c(lattice::ising_interface(&disk, &cfg, 3, i)),
            )
        })
        .collect();
    let r = measure_curves(&curves, &settings(Frame::Disk(None), StepKind::Vertical)).unwrap();
    check("Ising QV", 3.0, r.kappa.ci, r.kappa.estimate);
    let lp = r.left_passage.unwrap();
    check("Ising left passage", 3.0, lp.ci, lp.estimate);
    // And the two chordal models are told apart: 6 is outside the Ising intervals.
    assert!(r.kappa.ci[1] < 6.0 && lp.ci[1] < 6.0);
}

#[test]
fn loop_erased_walk_gives_two() {
    let disk = LatticeDisk::new(200).unwrap();
    let curves: Vec<(String, Vec<C>)> = (0..40)
        .map(|i| (format!("lerw {i}"), to_c(lattice::lerw_radial(&disk, 3, i))))
        .collect();
    let r = measure_curves(
        &curves,
        &settings(Frame::DiskRadial((0.0, 0.0)), StepKind::Tilted),
    )
    .unwrap();
    check("LERW QV", 2.0, r.kappa.ci, r.kappa.estimate);
    assert!(r.left_passage.is_none());
}
