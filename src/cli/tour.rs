//! The built-in tour (`sleek` with no subcommand): a small gallery of chordal SLE_κ curves, CLE
//! conformal-radius panels and a
//! short audit report, written to `output/` (or --out).

use super::args::{DomainArg, Global, MethodArg, StepArg, TraceArgs};
use super::audit_cmd::{run_audit, write_reports};
use super::common::note;
use super::common::out;
use super::trace_cmd::{export, sample};
use super::Failure;
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
