//! `sleek trace --domain disk-radial [--rho R]`: radial SLE_κ (or SLE_κ(ρ)) in the unit disk.

use super::args::MethodArg;
use super::args::{DomainArg, Global, TraceArgs};
use super::common::{self, out};
use super::runs::{self, Outcome};
use super::Failure;
use serde::{Deserialize, Serialize};
use sleek::audit::fmt_kappa;
use sleek::domain::ChordalDomain;
use sleek::loewner::Method;
use sleek::plot::{PlaneFigure, Polyline};
use sleek::radial::{RadialCurve, RadialSle};
use std::path::Path;

pub fn run(g: &Global, a: &TraceArgs) -> Result<(), Failure> {
    let usage = |m: &str| Err(Failure::Usage(m.to_string()));
    if a.driving.is_some() {
        return usage("--driving traces chordal driving functions; radial SLE needs --kappa");
    }
    if a.spacing.is_some() || a.spacing_rel.is_some() || a.inner_radius.is_some() {
        return usage(
            "--spacing, --spacing-rel and --inner-radius are for chordal curves; radial curves \
             take --points (steps of radial time, see --help)",
        );
    }
    common::check_plot_path(a.plot.as_deref())?;
    let Some(kappa) = a.kappa else {
        return usage("radial SLE needs --kappa");
    };
    let time = a.time.unwrap_or(1.0);
    let steps = a.points.unwrap_or(2000);
    let method = super::trace_cmd::method(a.method);
    if steps > 1_000_000 || (method == Method::Direct && steps > 100_000) {
        return usage(&format!(
            "invalid value '{steps}' for '--points <POINTS>': at most 1000000 for radial curves \
             (100000 with --method direct, which is O(points²))"
        ));
    }
    if a.count > 1000 {
        return usage(&format!(
            "invalid value '{}' for '--count <COUNT>': at most 1000 radial curves per run",
            a.count
        ));
    }
    if a.rho.is_some() && !matches!(a.domain, DomainArg::DiskRadial | DomainArg::HalfPlane) {
        return usage("--rho is for radial SLE_κ(ρ) in the disk: use it with --domain disk-radial");
    }
    let sle = RadialSle::new(kappa, a.rho, time, steps as usize)?;
    if kappa > 8.0 {
        common::warn(&format!(
            "κ = {kappa} > 8: the radial curve is space-filling; the figure shows it only at its \
             resolution"
        ));
    }
    let method_arg = a.method;
    let job = RadialJob {
        kappa,
        rho: a.rho,
        time,
        steps,
        method: method_arg,
        count: a.count,
    };
    // Kept: about 48 bytes a point per curve; while a curve is built, its block tree takes
    // about 400 bytes a point (measured at 10⁶ points: 398 MiB), one curve per thread.
    let threads = rayon::current_num_threads() as f64;
    let bytes = a.count as f64 * (steps as f64 + 1.0) * 48.0
        + threads.min(a.count as f64) * steps as f64 * 400.0;
    common::check_memory(
        bytes,
        &format!("--count {} radial curves of {steps} steps", a.count),
    )?;
    let mut plan = super::trace_cmd::plan_run(g, a, "radial-trace", &job)?;
    let seed = plan.seed;
    let data = match runs::execute(g, &mut plan, "curves", |i| {
        RadialData::of(&sle.sample_with(seed, i, method))
    })? {
        Outcome::All(v) => v,
        Outcome::ShardDone => return Ok(()),
    };
    let explicit = write_outputs(
        &job,
        seed,
        &data,
        a.export_csv.as_deref(),
        a.export_json.as_deref(),
        a.plot.as_deref(),
    );
    let rest = finish(g, &job, seed, data, runs::folder(&plan));
    for w in explicit? {
        common::note(g, &format!("wrote {w}"));
    }
    rest
}

/// Everything that determines a radial run's curves and outputs (recorded in a run folder).
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct RadialJob {
    pub kappa: f64,
    pub rho: Option<f64>,
    pub time: f64,
    pub steps: u64,
    pub method: MethodArg,
    pub count: u64,
}

/// One radial curve as journaled.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct RadialData {
    pub t: Vec<f64>,
    pub xi: Vec<f64>,
    pub eta: Vec<f64>,
    pub x: Vec<f64>,
    pub y: Vec<f64>,
    pub stopped_at: Option<f64>,
}

impl RadialData {
    fn of(c: &RadialCurve) -> Self {
        RadialData {
            t: c.times.clone(),
            xi: c.driving.clone(),
            eta: c.force.clone(),
            x: c.points.iter().map(|z| z.re).collect(),
            y: c.points.iter().map(|z| z.im).collect(),
            stopped_at: c.stopped_at,
        }
    }
    fn point(&self, k: usize) -> (f64, f64) {
        (self.x[k], self.y[k])
    }
}

fn name_of(job: &RadialJob) -> String {
    match job.rho {
        Some(r) => format!("radial SLE_{}({})", fmt_kappa(job.kappa), r),
        None => format!("radial SLE_{}", fmt_kappa(job.kappa)),
    }
}

/// Write the CSV, JSON and figure of a radial run where asked.
fn write_outputs(
    job: &RadialJob,
    seed: u64,
    curves: &[RadialData],
    csv_path: Option<&Path>,
    json_path: Option<&Path>,
    plot_path: Option<&Path>,
) -> Result<Vec<String>, Failure> {
    let (kappa, time, steps) = (job.kappa, job.time, job.steps);
    let method = super::trace_cmd::method(job.method);
    let name = name_of(job);
    for (i, c) in curves.iter().enumerate() {
        if c.t.is_empty() || c.x.len() != c.t.len() || c.y.len() != c.t.len() {
            return Err(Failure::Runtime(format!(
                "curve {i}: {} times but {} x and {} y",
                c.t.len(),
                c.x.len(),
                c.y.len()
            )));
        }
    }
    let mut written = Vec::new();
    if let Some(p) = csv_path {
        let mut text = String::from("curve,index,t,x,y\n");
        for (i, c) in curves.iter().enumerate() {
            for (k, t) in c.t.iter().enumerate() {
                let (x, y) = c.point(k);
                if !(x.is_finite() && y.is_finite() && t.is_finite()) {
                    return Err(Failure::Runtime(format!(
                        "curve {i} point {k} is not finite; nothing written to {}",
                        p.display()
                    )));
                }
                text.push_str(&format!("{i},{k},{t},{x},{y}\n"));
            }
        }
        common::write_file(p, text.as_bytes())?;
        written.push(p.display().to_string());
    }
    if let Some(p) = json_path {
        sleek::finite::ensure_finite(curves, &p.display().to_string()).map_err(Failure::Runtime)?;
        let rec = serde_json::json!({
            "format": "sleek/radial-trace",
            "format_version": sleek::io::FORMAT_VERSION,
            "sleek_version": env!("CARGO_PKG_VERSION"),
            "convention": "radial Loewner equation in the unit disk from 1 towards 0, \
                           dg/dt = g (e^{i xi} + g)/(e^{i xi} - g), g'(0) = e^t; \
                           force point (with rho) starts just clockwise of 1",
            "kappa": kappa,
            "rho": job.rho,
            "seed": seed,
            "time": time,
            "steps": steps,
            "method": method.name(),
            "curves": curves.iter().enumerate().map(|(i, c)| serde_json::json!({
                "curve": i,
                "t": c.t,
                "xi": c.xi,
                "eta": c.eta,
                "x": c.x,
                "y": c.y,
                "stopped_at": c.stopped_at,
            })).collect::<Vec<_>>(),
        });
        let text = serde_json::to_string(&rec).map_err(|e| Failure::Runtime(e.to_string()))?;
        common::write_file(p, text.as_bytes())?;
        written.push(p.display().to_string());
    }
    if let Some(p) = plot_path {
        let stopped = curves.iter().filter(|c| c.stopped_at.is_some()).count();
        let mut caption = vec![
            format!(
                "unit disk from 1 towards 0; seed {seed}; {} curve{}; radial time t = {time} \
                 (conformal radius of the remaining domain seen from 0: e^-t = {:.4})",
                curves.len(),
                if curves.len() == 1 { "" } else { "s" },
                (-time).exp()
            ),
            format!(
                "{steps} radial slits (piecewise-constant driving), half of the steps uniform in \
                 e^-2t and half in t; points are not refined where the tip runs far in little \
                 radial time"
            ),
        ];
        if stopped > 0 {
            caption.push(format!(
                "{stopped} curve(s) stopped early: θ reached 2π (the force point was \
                 disconnected from 0)"
            ));
        }
        let fig = PlaneFigure {
            title: name.clone(),
            caption,
            curves: curves
                .iter()
                .enumerate()
                .map(|(i, c)| Polyline {
                    points: c
                        .x
                        .iter()
                        .zip(&c.y)
                        .map(|(&x, &y)| num_complex::Complex64::new(x, y))
                        .collect(),
                    label: (curves.len() > 1 && curves.len() <= 12).then(|| format!("curve {i}")),
                })
                .collect(),
            domain: ChordalDomain::Disk,
            view: None,
            marks: Some(vec![(1.0, 0.0), (0.0, 0.0)]),
        };
        fig.draw(p)?;
        written.push(p.display().to_string());
    }
    Ok(written)
}

/// Write a complete radial run's folder files (trace.csv, trace.json, trace.svg) and print its
/// table (shared with `merge`).
pub fn finish(
    g: &Global,
    job: &RadialJob,
    seed: u64,
    curves: Vec<RadialData>,
    dir: Option<&Path>,
) -> Result<(), Failure> {
    let (kappa, time, steps) = (job.kappa, job.time, job.steps);
    let method = super::trace_cmd::method(job.method);
    let name = name_of(job);
    let written = match dir {
        Some(d) => write_outputs(
            job,
            seed,
            &curves,
            Some(&d.join("trace.csv")),
            Some(&d.join("trace.json")),
            Some(&d.join("trace.svg")),
        )?,
        None => Vec::new(),
    };
    if g.json {
        common::warn_non_finite(&curves, "radial summary");
        let rec = serde_json::json!({
            "format": "sleek/radial-trace-summary",
            "kappa": kappa, "rho": job.rho, "seed": seed, "time": time, "steps": steps,
            "method": method.name(),
            "curves": curves.iter().enumerate().map(|(i, c)| serde_json::json!({
                "curve": i,
                "end": [c.x.last(), c.y.last()],
                "stopped_at": c.stopped_at,
            })).collect::<Vec<_>>(),
            "written": written,
        });
        out!("{}", common::to_json(&rec, "radial summary")?);
        return Ok(());
    }
    out!("{name}, seed {seed}, radial time {time}, {steps} steps");
    out!("{:>6} {:>24} {:>12}", "curve", "end point", "stopped at");
    for (i, c) in curves.iter().enumerate() {
        let (ex, ey) =
            c.x.last()
                .zip(c.y.last())
                .map_or((f64::NAN, f64::NAN), |(x, y)| (*x, *y));
        out!(
            "{:>6} {:>24} {:>12}",
            i,
            format!("({ex:.5}, {ey:.5})"),
            c.stopped_at
                .map(|t| format!("{t:.4}"))
                .unwrap_or_else(|| "—".into())
        );
    }
    for w in &written {
        out!("wrote {w}");
    }
    Ok(())
}
