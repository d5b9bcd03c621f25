//! `sleek trace`: chordal SLE_κ curves, or the trace of a given driving function.

use super::args::{DomainArg, Global, MethodArg, StepArg, TraceArgs};
use super::common::out;
use super::common::{note, progress, resolve_seed, warn, write_file};
use super::runs::{self, Outcome};
use super::Failure;
use rayon::prelude::*;
use serde::Deserialize;
use serde::Serialize;
use sleek::audit::fmt_kappa;
use sleek::domain::ChordalDomain;
use sleek::io::{write_trace_csv, write_trace_json, TraceSettings};
use sleek::loewner::{ChordalChain, Method, StepKind};
use sleek::plot::{PlaneFigure, Polyline};
use sleek::sle::{max_spacing, ChordalCurve, ChordalSle, Resolution, SpacingRule};
use std::path::Path;

pub fn step_kind(s: StepArg) -> StepKind {
    match s {
        StepArg::Tilted => StepKind::Tilted,
        StepArg::Vertical => StepKind::Vertical,
    }
}

pub fn method(m: MethodArg) -> Method {
    match m {
        MethodArg::Direct => Method::Direct,
        MethodArg::Fast => Method::Fast,
    }
}

pub fn domain(d: DomainArg) -> ChordalDomain {
    match d {
        DomainArg::HalfPlane => ChordalDomain::HalfPlane,
        DomainArg::Disk => ChordalDomain::Disk,
        DomainArg::Strip => ChordalDomain::Strip,
        DomainArg::DiskRadial => ChordalDomain::Disk,
    }
}

/// Curves and the settings that made them, ready for export.
pub struct TraceRun {
    pub curves: Vec<ChordalCurve>,
    pub settings: TraceSettings,
    pub domain: ChordalDomain,
}

/// Everything that determines a sampled run's curves and outputs (the settings recorded in a
/// run folder's manifest).
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct TraceJob {
    pub kappa: f64,
    pub time: f64,
    pub resolution: Resolution,
    pub step: StepArg,
    pub method: MethodArg,
    pub domain: DomainArg,
    pub count: u64,
}

/// One sampled curve as journaled: driving function and points in H.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct CurveData {
    pub t: Vec<f64>,
    pub w: Vec<f64>,
    pub x: Vec<f64>,
    pub y: Vec<f64>,
    pub max_spacing: f64,
    pub target_met: bool,
    pub depth_limited: usize,
    pub passes: usize,
}

impl CurveData {
    fn of(c: &ChordalCurve) -> Self {
        CurveData {
            t: c.driving.times().to_vec(),
            w: c.driving.values().to_vec(),
            x: c.points.iter().map(|z| z.re).collect(),
            y: c.points.iter().map(|z| z.im).collect(),
            max_spacing: c.max_spacing,
            target_met: c.target_met,
            depth_limited: c.depth_limited,
            passes: c.passes,
        }
    }

    fn into_curve(self, index: u64) -> Result<ChordalCurve, Failure> {
        if self.x.len() != self.y.len() || self.x.len() != self.t.len() {
            return Err(Failure::Runtime(format!(
                "curve {index}: {} times, {} x and {} y in the journal",
                self.t.len(),
                self.x.len(),
                self.y.len()
            )));
        }
        let driving = sleek::driving::DrivingFunction::new(self.t, self.w)
            .map_err(|e| Failure::Runtime(format!("curve {index} in the journal: {e}")))?;
        Ok(ChordalCurve {
            index,
            driving,
            points: self
                .x
                .iter()
                .zip(&self.y)
                .map(|(&x, &y)| num_complex::Complex64::new(x, y))
                .collect(),
            max_spacing: self.max_spacing,
            target_met: self.target_met,
            depth_limited: self.depth_limited,
            passes: self.passes,
        })
    }
}

fn settings_of(job: &TraceJob, seed: u64) -> TraceSettings {
    TraceSettings {
        kappa: Some(job.kappa),
        seed: Some(seed),
        time: job.time,
        step: step_kind(job.step).name(),
        method: method(job.method).name(),
        resolution: describe_resolution(&job.resolution),
        resolution_settings: Some(job.resolution),
        domain: domain(job.domain).name(),
        driving_source: "brownian".into(),
    }
}

#[derive(Serialize)]
struct CurveSummary {
    curve: u64,
    samples: usize,
    max_spacing_in_h: f64,
    target_met: bool,
    depth_limited_steps: usize,
    refinement_passes: usize,
    end_x: f64,
    end_y: f64,
    height: f64,
}

#[derive(Serialize)]
struct Summary<'a> {
    format: &'static str,
    format_version: u32,
    sleek_version: &'static str,
    #[serde(flatten)]
    settings: &'a TraceSettings,
    curves: Vec<CurveSummary>,
}

fn resolution_of(a: &TraceArgs, time: f64) -> Resolution {
    if let Some(n) = a.points {
        return Resolution::Points(n as usize);
    }
    // Default: 0.02·√t apart, and 5% of the distance from the start near the start.
    let (absolute, relative) = match (a.spacing, a.spacing_rel) {
        (None, None) => (Some(0.02 * time.sqrt()), Some(0.05)),
        other => other,
    };
    Resolution::Spacing(SpacingRule {
        absolute,
        relative,
        inner_radius: a.inner_radius.unwrap_or(2e-2 * time.sqrt()),
        base_steps: usize::try_from(a.base_steps).unwrap_or(usize::MAX),
        max_points: usize::try_from(a.max_points).unwrap_or(usize::MAX),
    })
}

/// Describe a resolution in words.
pub fn describe_resolution(r: &Resolution) -> String {
    match r {
        Resolution::Points(n) => format!("{n} equal capacity steps"),
        Resolution::Spacing(s) => {
            let mut parts = Vec::new();
            if let Some(a) = s.absolute {
                parts.push(format!("spacing ≤ {a}"));
            }
            if let Some(f) = s.relative {
                parts.push(format!(
                    "spacing ≤ {f}·max(|z − γ(0)|, {:.3e})",
                    s.inner_radius
                ));
            }
            format!(
                "{} (bridge refinement of {} equal steps, at most {} points)",
                parts.join(" and "),
                s.base_steps,
                s.max_points
            )
        }
    }
}

/// The job and sampler of a Brownian `trace` invocation (validated, with the memory check).
fn job_of(a: &TraceArgs) -> Result<(TraceJob, ChordalSle), Failure> {
    let kappa = a
        .kappa
        .ok_or_else(|| Failure::Usage("--kappa is required".into()))?;
    let time = a.time.unwrap_or(1.0);
    let res = resolution_of(a, time);
    let sampler = ChordalSle::new(kappa, time, res, step_kind(a.step), method(a.method))?;
    if kappa > 8.0 {
        warn(&format!(
            "κ = {} > 8: SLE_κ is space-filling; the discretised trace fills the plane only \
             down to its spacing, and the figure shows a dense scribble",
            fmt_kappa(kappa)
        ));
    }
    // All curves are held in memory until exported.
    let per_curve = match res {
        Resolution::Points(n) => n as f64,
        Resolution::Spacing(r) => (r.max_points as f64).min(2e4),
    };
    let bytes = a.count as f64 * (per_curve + 1.0) * 200.0;
    super::common::check_memory(
        bytes,
        &format!(
            "--count {} curves of about {per_curve:.0} points (≈ 200 bytes a point)",
            a.count
        ),
    )?;
    Ok((
        TraceJob {
            kappa,
            time,
            resolution: res,
            step: a.step,
            method: a.method,
            domain: a.domain,
            count: a.count,
        },
        sampler,
    ))
}

/// Sample (or trace) the curves of a `trace` invocation.
pub fn sample(g: &Global, a: &TraceArgs) -> Result<TraceRun, Failure> {
    let step = step_kind(a.step);
    let meth = method(a.method);
    let dom = domain(a.domain);
    if let Some(path) = &a.driving {
        if a.count > 1 {
            return Err(Failure::Usage(
                "--count cannot exceed 1 with --driving (a given driving function has one trace)"
                    .into(),
            ));
        }
        let file = std::fs::File::open(path).map_err(|e| {
            Failure::Runtime(format!("cannot read --driving {}: {e}", path.display()))
        })?;
        let d = sleek::io::read_driving(std::io::BufReader::new(file))
            .map_err(|e| Failure::Runtime(format!("--driving {}: {e}", path.display())))?;
        meth.check_available()?;
        let chain = ChordalChain::new(&d, step);
        let points = chain.trace(meth)?;
        let settings = TraceSettings {
            kappa: None,
            seed: None,
            time: d.final_time(),
            step: step.name(),
            method: meth.name(),
            resolution: format!("{} steps of the given driving function", d.steps()),
            resolution_settings: None,
            domain: dom.name(),
            driving_source: path.display().to_string(),
        };
        return Ok(TraceRun {
            curves: vec![ChordalCurve {
                index: 0,
                max_spacing: max_spacing(&points),
                driving: d,
                points,
                target_met: true,
                depth_limited: 0,
                passes: 1,
            }],
            settings,
            domain: dom,
        });
    }
    let (job, sampler) = job_of(a)?;
    let seed = resolve_seed(g);
    let pb = progress(g, a.count, "curves");
    let curves: Vec<ChordalCurve> = (0..a.count)
        .into_par_iter()
        .map(|i| {
            let c = sampler.sample(seed, i);
            pb.inc(1);
            c
        })
        .collect();
    pb.finish_and_clear();
    Ok(TraceRun {
        curves,
        settings: settings_of(&job, seed),
        domain: domain(job.domain),
    })
}

/// The figure of a run.
pub fn figure(run: &TraceRun) -> PlaneFigure {
    let s = &run.settings;
    let title = match s.kappa {
        Some(k) => format!("Chordal SLE with κ = {}", fmt_kappa(k)),
        None => "trace of the given driving function".to_string(),
    };
    let n_pts: usize = run.curves.iter().map(|c| c.points.len()).sum();
    let worst = run.curves.iter().map(|c| c.max_spacing).fold(0.0, f64::max);
    let mut caption = vec![
        format!(
            "{}; seed {}; {} curve{}; t = {} (hcap {})",
            run.domain.describe(),
            s.seed.map(|x| x.to_string()).unwrap_or_else(|| "—".into()),
            run.curves.len(),
            if run.curves.len() == 1 { "" } else { "s" },
            s.time,
            2.0 * s.time
        ),
        format!(
            "{} slits, {} method; {}; {} points, max spacing in H {:.2e}",
            s.step, s.method, s.resolution, n_pts, worst
        ),
    ];
    if run.curves.iter().any(|c| !c.target_met) {
        caption.push(
            "warning: the spacing target was not met everywhere (at most --max-points, or steps \
             bisected to the deepest level where capacity time moves slowly)"
                .into(),
        );
    }
    PlaneFigure {
        title,
        caption,
        curves: run
            .curves
            .iter()
            .map(|c| Polyline {
                points: c.points.iter().map(|z| run.domain.map(*z)).collect(),
                label: (run.curves.len() > 1 && run.curves.len() <= 12)
                    .then(|| format!("curve {}", c.index)),
            })
            .collect(),
        domain: run.domain,
        view: None,
        marks: None,
    }
}

/// Write the exports a run asked for.
pub fn export(
    run: &TraceRun,
    csv: Option<&Path>,
    json: Option<&Path>,
    plot: Option<&Path>,
) -> Result<Vec<String>, Failure> {
    // Attempt every output even when one fails, then report the first failure.
    let mut written = Vec::new();
    let mut failures = Vec::new();
    let mut attempt = |p: &Path, r: Result<(), Failure>| match r {
        Ok(()) => written.push(p.display().to_string()),
        Err(e) => failures.push(e),
    };
    if let Some(p) = csv {
        let mut buf = Vec::new();
        attempt(
            p,
            write_trace_csv(&mut buf, &run.curves, run.domain)
                .map_err(Failure::from)
                .and_then(|_| write_file(p, &buf)),
        );
    }
    if let Some(p) = json {
        let mut buf = Vec::new();
        attempt(
            p,
            write_trace_json(&mut buf, &run.curves, &run.settings, run.domain)
                .map_err(Failure::from)
                .and_then(|_| write_file(p, &buf)),
        );
    }
    if let Some(p) = plot {
        attempt(p, figure(run).draw(p).map_err(Failure::from));
    }
    if let Some(e) = failures.into_iter().next() {
        return Err(e);
    }
    Ok(written)
}

pub fn run(g: &Global, a: &TraceArgs) -> Result<(), Failure> {
    if a.domain == DomainArg::DiskRadial || a.rho.is_some() {
        return super::radial_trace::run(g, a);
    }
    super::common::check_plot_path(a.plot.as_deref())?;
    let (run, dir) = if a.driving.is_some() {
        if a.run.shard.is_some() || a.run.resume {
            return Err(Failure::Usage(
                "--shard and --resume are for sampled curves, not --driving".into(),
            ));
        }
        (sample(g, a)?, g.out.clone())
    } else {
        let (job, sampler) = job_of(a)?;
        let mut plan = plan_run(g, a, "trace", &job)?;
        let seed = plan.seed;
        let data = match runs::execute(g, &mut plan, "curves", |i| {
            CurveData::of(&sampler.sample(seed, i))
        })? {
            Outcome::All(v) => v,
            Outcome::ShardDone => return Ok(()),
        };
        let dir = runs::folder(&plan).map(Path::to_path_buf);
        (run_of(&job, seed, data)?, dir)
    };
    // Exports the user named explicitly come first: nothing computed is lost if the rest fails.
    let explicit = export(
        &run,
        a.export_csv.as_deref(),
        a.export_json.as_deref(),
        a.plot.as_deref(),
    );
    let rest = report(g, &run, dir.as_deref());
    explicit.map(|w| {
        for w in w {
            note(g, &format!("wrote {w}"));
        }
    })?;
    rest
}

/// The run plan of a sampled `trace` invocation (chordal or radial): exports are refused with
/// --shard, and the folder's files are trace.{csv,json,svg}.
pub fn plan_run<S: Serialize>(
    g: &Global,
    a: &TraceArgs,
    command: &str,
    job: &S,
) -> Result<runs::Plan, Failure> {
    runs::no_exports_with_shard(
        &a.run,
        &[
            ("--plot", a.plot.is_some()),
            ("--export-csv", a.export_csv.is_some()),
            ("--export-json", a.export_json.is_some()),
        ],
    )?;
    runs::plan(
        g,
        &a.run,
        command,
        a.count,
        job,
        &["trace.csv".into(), "trace.json".into(), "trace.svg".into()],
    )
}

fn run_of(job: &TraceJob, seed: u64, data: Vec<CurveData>) -> Result<TraceRun, Failure> {
    let curves = data
        .into_iter()
        .enumerate()
        .map(|(i, d)| d.into_curve(i as u64))
        .collect::<Result<Vec<_>, _>>()?;
    Ok(TraceRun {
        curves,
        settings: settings_of(job, seed),
        domain: domain(job.domain),
    })
}

/// Write a complete sampled run's folder files and print its table (shared with `merge`).
pub fn finish(
    g: &Global,
    job: &TraceJob,
    seed: u64,
    data: Vec<CurveData>,
    dir: Option<&Path>,
) -> Result<(), Failure> {
    let run = run_of(job, seed, data)?;
    report(g, &run, dir)
}

/// Warn about unmet targets, write trace.{csv,json,svg} in `dir`, print the table.
fn report(g: &Global, run: &TraceRun, dir: Option<&Path>) -> Result<(), Failure> {
    let unmet: Vec<&ChordalCurve> = run.curves.iter().filter(|c| !c.target_met).collect();
    if !unmet.is_empty() {
        let deep: usize = unmet.iter().map(|c| c.depth_limited).sum();
        let why = if deep > 0 {
            format!(
                "{deep} steps were bisected to the deepest level (2^-40 of a base step) where the \
                 curve moves far in little capacity time; the rest, if any, hit --max-points"
            )
        } else {
            "raise --max-points or loosen --spacing/--spacing-rel".to_string()
        };
        warn(&format!(
            "spacing target not met on {} of {} curves (largest spacing {:.3e}): {why}",
            unmet.len(),
            run.curves.len(),
            unmet.iter().map(|c| c.max_spacing).fold(0.0, f64::max)
        ));
    }
    let mut written = Vec::new();
    let mut export_error = None;
    if let Some(d) = dir {
        std::fs::create_dir_all(d)
            .map_err(|e| Failure::Runtime(format!("cannot create {}: {e}", d.display())))?;
        match export(
            run,
            Some(&d.join("trace.csv")),
            Some(&d.join("trace.json")),
            Some(&d.join("trace.svg")),
        ) {
            Ok(w) => written.extend(w),
            Err(e) => export_error = Some(e),
        }
    }
    let summaries: Vec<CurveSummary> = run
        .curves
        .iter()
        .map(|c| {
            let end = run
                .domain
                .map(*c.points.last().expect("at least one point"));
            CurveSummary {
                curve: c.index,
                samples: c.points.len(),
                max_spacing_in_h: c.max_spacing,
                target_met: c.target_met,
                depth_limited_steps: c.depth_limited,
                refinement_passes: c.passes,
                end_x: end.re,
                end_y: end.im,
                height: c.points.iter().map(|z| z.im).fold(0.0, f64::max),
            }
        })
        .collect();
    if g.json {
        let s = Summary {
            format: "sleek/trace-summary",
            format_version: sleek::io::FORMAT_VERSION,
            sleek_version: env!("CARGO_PKG_VERSION"),
            settings: &run.settings,
            curves: summaries,
        };
        out!("{}", super::common::to_json(&s, "trace summary")?);
    } else {
        let s = &run.settings;
        out!(
            "{}: t = {} (hcap {}), {} slits, {} method",
            match s.kappa {
                Some(k) => format!(
                    "chordal SLE_κ in H, κ = {}, seed {}",
                    fmt_kappa(k),
                    s.seed.unwrap_or(0)
                ),
                None => format!("trace of {}", s.driving_source),
            },
            s.time,
            2.0 * s.time,
            s.step,
            s.method
        );
        out!("resolution: {}", s.resolution);
        out!(
            "{:>6}  {:>8}  {:>12}  {:>7}  {:>26}  {:>8}",
            "curve",
            "points",
            "max spacing",
            "target",
            "end point (in domain)",
            "height"
        );
        for c in &summaries {
            out!(
                "{:>6}  {:>8}  {:>12.3e}  {:>7}  {:>12.5} {:>+12.5}i  {:>8.4}",
                c.curve,
                c.samples,
                c.max_spacing_in_h,
                if c.target_met { "met" } else { "NOT met" },
                c.end_x,
                c.end_y,
                c.height
            );
        }
    }
    for w in written {
        note(g, &format!("wrote {w}"));
    }
    match export_error {
        Some(e) => Err(e),
        None => Ok(()),
    }
}
