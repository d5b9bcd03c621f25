//! The built-in tour (`sleek` with no subcommand): a small gallery of chordal SLE_κ curves, whole
//! CLE_κ configurations for κ = 3, 4, 16/3 and 6, CLE conformal-radius panels and a short audit
//! report, written to `output/` (or --out).

use super::args::{
    DomainArg, Global, LoopStyleArg, LoopsArgs, MethodArg, StepArg, StepShapeArg, TraceArgs,
};
use super::audit_cmd::{run_audit, write_reports};
use super::common::note;
use super::common::out;
use super::trace_cmd::{export, sample};
use super::Failure;
use rayon::prelude::*;
use sleek::audit::AuditSettings;
use std::path::PathBuf;

/// One picture of the gallery.
struct Scene {
    name: &'static str,
    kappa: f64,
    time: f64,
    count: u64,
    domain: DomainArg,
    spacing: Option<f64>,
    spacing_rel: Option<f64>,
    max_points: u64,
    inner_radius: Option<f64>,
}

/// Resolutions are chosen so the whole tour runs in about a minute on 2 cores; the captions say
/// where a spacing target was not reached.
const GALLERY: [Scene; 7] = [
    Scene {
        name: "kappa-2",
        kappa: 2.0,
        time: 1.0,
        count: 3,
        domain: DomainArg::HalfPlane,
        spacing: Some(0.01),
        spacing_rel: Some(0.05),
        max_points: 60000,
        inner_radius: None,
    },
    Scene {
        name: "kappa-8over3",
        kappa: 8.0 / 3.0,
        time: 1.0,
        count: 3,
        domain: DomainArg::HalfPlane,
        spacing: Some(0.01),
        spacing_rel: Some(0.05),
        max_points: 60000,
        inner_radius: None,
    },
    Scene {
        name: "kappa-4",
        kappa: 4.0,
        time: 1.0,
        count: 2,
        domain: DomainArg::HalfPlane,
        spacing: Some(0.015),
        spacing_rel: Some(0.05),
        max_points: 60000,
        inner_radius: None,
    },
    Scene {
        name: "kappa-6",
        kappa: 6.0,
        time: 1.0,
        count: 1,
        domain: DomainArg::HalfPlane,
        spacing: Some(0.02),
        spacing_rel: Some(0.05),
        max_points: 60000,
        inner_radius: None,
    },
    Scene {
        name: "kappa-8",
        kappa: 8.0,
        time: 1.0,
        count: 1,
        domain: DomainArg::HalfPlane,
        spacing: Some(0.035),
        spacing_rel: Some(0.05),
        max_points: 40000,
        inner_radius: None,
    },
    Scene {
        name: "kappa-3-disk",
        kappa: 3.0,
        time: 50.0,
        count: 3,
        domain: DomainArg::Disk,
        spacing: None,
        spacing_rel: Some(0.03),
        max_points: 60000,
        inner_radius: None,
    },
    Scene {
        name: "kappa-6-strip",
        kappa: 6.0,
        time: 1.0,
        count: 1,
        domain: DomainArg::Strip,
        spacing: None,
        spacing_rel: Some(0.04),
        max_points: 60000,
        inner_radius: Some(2e-3),
    },
];

/// Smallest loop diameter of the tour's CLE configurations (a few seconds each; a full
/// picture needs ε = 0.02, see `sleek bench --loops`).
const TOUR_LOOP_SIZE: f64 = 0.2;

pub fn run(g: &Global) -> Result<(), Failure> {
    let start = std::time::Instant::now();
    let out = g.out.clone().unwrap_or_else(|| PathBuf::from("output"));
    let seed = g.seed.unwrap_or(20261201);
    let g = Global {
        seed: Some(seed),
        out: Some(out.clone()),
        ..g.clone()
    };
    note(
        &g,
        &format!("tour: seed {seed}, writing to {}/", out.display()),
    );
    let mut written = Vec::new();
    for (i, sc) in GALLERY.iter().enumerate() {
        let a = TraceArgs {
            run: Default::default(),
            kappa: Some(sc.kappa),
            time: Some(sc.time),
            count: sc.count,
            points: None,
            spacing: sc.spacing,
            spacing_rel: sc.spacing_rel,
            inner_radius: sc.inner_radius,
            max_points: sc.max_points,
            base_steps: 64,
            step: StepArg::Tilted,
            method: MethodArg::Fast,
            domain: sc.domain,
            rho: None,
            driving: None,
            export_csv: None,
            export_json: None,
            plot: None,
        };
        // Each scene its own seed, derived from the tour's seed.
        let gs = Global {
            seed: Some(seed.wrapping_add(i as u64)),
            quiet: true,
            ..g.clone()
        };
        let run = sample(&gs, &a)?;
        let dir = out.join("gallery");
        let csv = dir.join(format!("{}.csv", sc.name));
        let svg = dir.join(format!("{}.svg", sc.name));
        let png = dir.join(format!("{}.png", sc.name));
        written.extend(export(&run, Some(&csv), None, Some(&svg))?);
        written.extend(export(&run, None, None, Some(&png))?);
        note(
            &g,
            &format!(
                "gallery {}/{}: {} ({:.1} s)",
                i + 1,
                GALLERY.len(),
                sc.name,
                start.elapsed().as_secs_f64()
            ),
        );
    }
    // Whole CLE configurations (`sleek loops`), one per κ: simple disjoint loops at κ = 3 and 4,
    // touching ones at 16/3 and 6. Tilted steps at κ = 3, where vertical ones leave kinks at
    // this spacing; at κ = 4 tilted steps end more regions early (README, "Accuracy and
    // limitations"). The four run side by side: each explores its region tree level by level.
    let scenes = [
        (3.0, "cle-loops-kappa-3", true),
        (4.0, "cle-loops-kappa-4", false),
        (16.0 / 3.0, "cle-loops-kappa-16over3", false),
        (6.0, "cle-loops-kappa-6", false),
    ];
    let results: Vec<Result<(usize, PathBuf, PathBuf), Failure>> = scenes
        .par_iter()
        .enumerate()
        .map(|(j, &(kappa, name, tilted))| {
            let dir = out.join("gallery");
            let json = dir.join(format!("{name}.json"));
            let png = dir.join(format!("{name}.png"));
            let a = LoopsArgs {
                kappa,
                min_size: TOUR_LOOP_SIZE,
                spacing: None,
                steps: if tilted {
                    StepShapeArg::Tilted
                } else {
                    StepShapeArg::Vertical
                },
                at: vec![],
                export_json: Some(json.clone()),
                export_csv: None,
                plot: Some(png.clone()),
                style: LoopStyleArg::Filled,
            };
            let gs = Global {
                seed: Some(seed.wrapping_add(100 + j as u64)),
                quiet: true,
                ..g.clone()
            };
            let drawn = super::loops_cmd::run_printing(&gs, &a, false)?;
            Ok((drawn, json, png))
        })
        .collect();
    for ((_, name, _), r) in scenes.iter().zip(results) {
        let (drawn, json, png) = r?;
        written.push(json.display().to_string());
        written.push(png.display().to_string());
        note(
            &g,
            &format!("{name}: {drawn} loops of diameter ≥ {TOUR_LOOP_SIZE}"),
        );
    }
    note(
        &g,
        &format!(
            "CLE configurations ({:.1} s)",
            start.elapsed().as_secs_f64()
        ),
    );
    // CLE conformal radii at three points of one configuration, against the exact law.
    for (kappa, name) in [(3.0, "cle-radii-kappa-3"), (6.0, "cle-radii-kappa-6")] {
        let settings = sleek::radii::RadiiSettings {
            kappa,
            points: sleek::audit::CLE_POINTS
                .iter()
                .map(|&(x, y)| [x, y])
                .collect(),
            samples: 2000,
            explore: sleek::cle::ExploreSettings::defaults(kappa, 1),
            lambdas: vec![0.5, 1.0, 2.0],
            nesting_at: vec![],
        };
        let run = sleek::radii::run(&settings, seed, &|| {})?;
        let fig = sleek::radii::law_figure(&run)?;
        for ext in ["svg", "png"] {
            let path = out.join("gallery").join(format!("{name}.{ext}"));
            fig.draw(&path)?;
            written.push(path.display().to_string());
        }
        let csv = out.join("gallery").join(format!("{name}.csv"));
        super::common::write_file(&csv, sleek::radii::loops_csv(&run).as_bytes())?;
        written.push(csv.display().to_string());
        note(
            &g,
            &format!("{name} ({:.1} s)", start.elapsed().as_secs_f64()),
        );
    }
    // Your curve vs SLE: lattice interfaces measured like a user's curves.
    written.extend(lattice_panels(&g, &out, seed)?);
    note(
        &g,
        &format!("lattice panels ({:.1} s)", start.elapsed().as_secs_f64()),
    );
    let settings = AuditSettings::quick(seed);
    let (report, elapsed) = run_audit(&g, &settings)?;
    let md = out.join("audit.md");
    let js = out.join("audit.json");
    write_reports(&report, elapsed, &md, &js)?;
    written.push(md.display().to_string());
    written.push(js.display().to_string());
    out!(
        "sleek tour (seed {seed}) — {:.1} s",
        start.elapsed().as_secs_f64()
    );
    out!(
        "audit: {} checks, {} failed",
        report.checks.len(),
        report
            .checks
            .iter()
            .filter(|c| c.verdict == sleek::audit::Verdict::Fail)
            .count()
    );
    for w in &written {
        out!("  {w}");
    }
    if !report.passed() {
        return Err(Failure::Runtime(format!(
            "some audit checks failed; see {}",
            md.display()
        )));
    }
    Ok(())
}

/// Percolation and Ising interfaces in a disk of radius 150, 20 each, unzipped and measured as a
/// user's curves would be: a figure of two interfaces with both κ estimates in the caption,
/// the measurement figure, and the curves as CSV.
fn lattice_panels(g: &Global, out: &std::path::Path, seed: u64) -> Result<Vec<String>, Failure> {
    use num_complex::Complex64;
    use sleek::lattice::{self, IsingConfig, LatticeDisk};
    use sleek::measure_run::{measure_curves, Frame, MeasureSettings};
    use sleek::plot::{PlaneFigure, Polyline};
    let disk = LatticeDisk::new(150)?;
    let ising = IsingConfig::new(60)?;
    let mut written = Vec::new();
    for (name, kappa) in [("percolation", 6.0), ("ising", 3.0)] {
        let curves: Vec<(String, Vec<Complex64>)> = (0..20u64)
            .map(|i| {
                let c = if kappa == 6.0 {
                    lattice::percolation_exploration(&disk, seed, i)
                } else {
                    lattice::ising_interface(&disk, &ising, seed, i)
                };
                (
                    format!("{name} {i}"),
                    c.into_iter().map(|p| Complex64::new(p[0], p[1])).collect(),
                )
            })
            .collect();
        let settings = MeasureSettings {
            frame: Frame::Disk(None),
            slit: sleek::loewner::StepKind::Vertical,
            boundary_tolerance: 0.02,
            max_points: 20_000,
            max_distortion: 2.0,
            min_lag: None,
            bootstrap: 500,
            level: 0.95,
            seed,
        };
        let report = measure_curves(&curves, &settings)?;
        let dir = out.join("gallery");
        let k = &report.kappa;
        let lp = report.left_passage.as_ref();
        let caption = vec![
            format!(
                "Critical {} interfaces on the triangular lattice, disk of radius 150 spacings, from −i to i (seed {seed}, 2 of 20 shown); scaling limit SLE_{}.",
                if kappa == 6.0 { "site-percolation exploration" } else { "Ising (Swendsen–Wang, 60 sweeps, Dobrushin boundary)" },
                kappa
            ),
            format!(
                "Measured from the 20 curves: κ = {:.2} [{:.2}, {:.2}] by quadratic variation of the unzipped driving function, {} by left passage (95% bootstrap intervals).",
                k.estimate,
                k.ci[0],
                k.ci[1],
                lp.map(|l| format!("{:.2} [{:.2}, {:.2}]", l.estimate, l.ci[0], l.ci[1]))
                    .unwrap_or_else(|| "—".into())
            ),
            "Lattice effects: quadratic variation uses lags above 20 segment lengths; see the measure figure for κ against the lag.".into(),
        ];
        let fig = PlaneFigure {
            title: format!("lattice interfaces vs SLE_{kappa}: {name}"),
            caption,
            curves: curves
                .iter()
                .take(2)
                .enumerate()
                .map(|(i, (_, c))| Polyline {
                    points: c.clone(),
                    label: Some(format!("interface {}", i + 1)),
                })
                .collect(),
            domain: sleek::domain::ChordalDomain::Disk,
            view: None,
            marks: Some(vec![(0.0, -1.0), (0.0, 1.0)]),
        };
        for ext in ["svg", "png"] {
            let p = dir.join(format!("lattice-{name}.{ext}"));
            fig.draw(&p)?;
            written.push(p.display().to_string());
            let m = dir.join(format!("measure-{name}.{ext}"));
            sleek::plot_measure::draw(&m, &report.driving_data(), k, false)?;
            written.push(m.display().to_string());
        }
        // The two interfaces drawn (all 20: `sleek lattice --model … --radius 150 -n 20
        // --seed <tour seed>`).
        let mut csv = format!(
            "# the 2 interfaces drawn; all 20: sleek lattice --model {name} --radius 150 -n 20 --seed {seed}\ncurve,x,y\n"
        );
        for (i, (_, c)) in curves.iter().take(2).enumerate() {
            for z in c {
                csv.push_str(&format!("{i},{:.7},{:.7}\n", z.re, z.im));
            }
        }
        let p = dir.join(format!("lattice-{name}.csv"));
        super::common::write_file(&p, csv.as_bytes())?;
        written.push(p.display().to_string());
        note(
            g,
            &format!(
                "lattice {name}: κ = {:.2} [{:.2}, {:.2}]",
                k.estimate, k.ci[0], k.ci[1]
            ),
        );
    }
    Ok(written)
}
