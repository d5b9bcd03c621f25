//! `sleek trace --domain disk-radial [--rho R]`: radial SLE_κ (or SLE_κ(ρ)) in the unit disk.

use super::args::{DomainArg, Global, TraceArgs};
use super::common::{self, out};
use super::Failure;
use rayon::prelude::*;
use sleek::audit::fmt_kappa;
use sleek::domain::ChordalDomain;
use sleek::loewner::Method;
use sleek::plot::{PlaneFigure, Polyline};
use sleek::radial::{RadialCurve, RadialSle};

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
    let seed = common::resolve_seed(g);
    let curves: Vec<RadialCurve> = (0..a.count)
        .into_par_iter()
        .map(|i| sle.sample_with(seed, i, method))
        .collect();
    let name = match a.rho {
        Some(r) => format!("radial SLE_{}({})", fmt_kappa(kappa), r),
        None => format!("radial SLE_{}", fmt_kappa(kappa)),
    };
    let mut written = Vec::new();
    let csv_path = a
        .export_csv
        .clone()
        .or_else(|| common::in_out(g, "trace.csv"));
    if let Some(p) = &csv_path {
        let mut text = String::from("curve,index,t,x,y\n");
        for c in &curves {
            for (k, (z, t)) in c.points.iter().zip(&c.times).enumerate() {
                if !(z.re.is_finite() && z.im.is_finite()) {
                    return Err(Failure::Runtime(format!(
                        "curve {} point {k} is not finite; nothing written to {}",
                        c.index,
                        p.display()
                    )));
                }
                text.push_str(&format!("{},{k},{t},{},{}\n", c.index, z.re, z.im));
            }
        }
        common::write_file(p, text.as_bytes())?;
        written.push(p.display().to_string());
    }
    let json_path = a
        .export_json
        .clone()
        .or_else(|| common::in_out(g, "trace.json"));
    if let Some(p) = &json_path {
        let rec = serde_json::json!({
            "format": "sleek/radial-trace",
            "format_version": sleek::io::FORMAT_VERSION,
            "sleek_version": env!("CARGO_PKG_VERSION"),
            "convention": "radial Loewner equation in the unit disk from 1 towards 0, \
                           dg/dt = g (e^{i xi} + g)/(e^{i xi} - g), g'(0) = e^t; \
                           force point (with rho) starts just clockwise of 1",
            "kappa": kappa,
            "rho": a.rho,
            "seed": seed,
            "time": time,
            "steps": steps,
            "method": method.name(),
            "curves": curves.iter().map(|c| serde_json::json!({
                "curve": c.index,
                "t": c.times,
                "xi": c.driving,
                "eta": c.force,
                "x": c.points.iter().map(|z| z.re).collect::<Vec<_>>(),
                "y": c.points.iter().map(|z| z.im).collect::<Vec<_>>(),
                "stopped_at": c.stopped_at,
            })).collect::<Vec<_>>(),
        });
        let text = serde_json::to_string(&rec).map_err(|e| Failure::Runtime(e.to_string()))?;
        common::write_file(p, text.as_bytes())?;
        written.push(p.display().to_string());
    }
    let plot_path = a.plot.clone().or_else(|| common::in_out(g, "trace.svg"));
    if let Some(p) = &plot_path {
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
                .map(|c| Polyline {
                    points: c.points.clone(),
                    label: (curves.len() > 1 && curves.len() <= 12)
                        .then(|| format!("curve {}", c.index)),
                })
                .collect(),
            domain: ChordalDomain::Disk,
            view: None,
            marks: Some(vec![(1.0, 0.0), (0.0, 0.0)]),
        };
        fig.draw(p)?;
        written.push(p.display().to_string());
    }
    if g.json {
        let rec = serde_json::json!({
            "format": "sleek/radial-trace-summary",
            "kappa": kappa, "rho": a.rho, "seed": seed, "time": time, "steps": steps,
            "method": method.name(),
            "curves": curves.iter().map(|c| serde_json::json!({
                "curve": c.index,
                "end": [c.points.last().map(|z| z.re), c.points.last().map(|z| z.im)],
                "stopped_at": c.stopped_at,
            })).collect::<Vec<_>>(),
            "written": written,
        });
        out!(
            "{}",
            serde_json::to_string_pretty(&rec).map_err(|e| Failure::Runtime(e.to_string()))?
        );
        return Ok(());
    }
    out!("{name}, seed {seed}, radial time {time}, {steps} steps");
    out!("{:>6} {:>24} {:>12}", "curve", "end point", "stopped at");
    for c in &curves {
        let e = c.points.last().copied().unwrap_or_default();
        out!(
            "{:>6} {:>24} {:>12}",
            c.index,
            format!("({:.5}, {:.5})", e.re, e.im),
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
