//! `sleek bench`: direct against fast trace evaluation, in one run.

use super::args::{BenchArgs, Global};
use super::common::out;
use super::common::{in_out, note, write_file};
use super::Failure;
use sleek::bench::{self, BenchSettings};

pub fn run(g: &Global, a: &BenchArgs) -> Result<(), Failure> {
    if a.cle {
        return run_cle(g, a);
    }
    if a.loops {
        return run_loops(g);
    }
    let mut s = BenchSettings::default();
    s.fast_only.retain(|&n| n as u64 <= a.max_n);
    s.common.retain(|&n| n as u64 <= a.max_n);
    if let Some(seed) = g.seed {
        s.seed = seed;
    }
    let (rep, what, file) = if a.radial {
        (
            bench::run_radial(&s, &|msg| note(g, msg))?,
            "radial SLE_4 in the disk (radial time 3, N steps)",
            "bench-radial.json",
        )
    } else {
        (
            bench::run(&s, &|msg| note(g, msg))?,
            "chordal SLE_4 (tilted slits, t = 1, N equal steps)",
            "bench.json",
        )
    };
    super::common::warn_non_finite(&rep, "bench record");
    let rec = serde_json::json!({
        "format": "sleek/bench",
        "format_version": sleek::io::FORMAT_VERSION,
        "sleek_version": env!("CARGO_PKG_VERSION"),
        "note": format!("wall-clock times of the trace of one curve of {what}; fast times \
                 include building the block tree"),
        "report": rep,
    });
    if write_record(g, file, &rec)? {
        return Ok(());
    }
    out!("trace of {what}, {} threads", rep.threads);
    out!(
        "{:>9}  {:>12}  {:>12}  {:>9}  {:>10}",
        "N",
        "direct (s)",
        "fast (s)",
        "speed-up",
        "peak MiB"
    );
    let mut ns: Vec<usize> = rep.timings.iter().map(|t| t.n).collect();
    ns.dedup();
    for n in ns {
        let d = rep
            .timings
            .iter()
            .find(|t| t.n == n && t.method == "direct");
        let f = rep.timings.iter().find(|t| t.n == n && t.method == "fast");
        let cell = |t: Option<&sleek::bench::Timing>| {
            t.map(|t| format!("{:.4}", t.seconds))
                .unwrap_or_else(|| "—".into())
        };
        let sp = match (d, f) {
            (Some(d), Some(f)) => format!("{:.1}×", d.seconds / f.seconds),
            _ => "—".into(),
        };
        let mem = f
            .and_then(|t| t.peak_mib)
            .map(|m| format!("{m:.0}"))
            .unwrap_or_else(|| "—".into());
        out!(
            "{n:>9}  {:>12}  {:>12}  {sp:>9}  {mem:>10}",
            cell(d),
            cell(f)
        );
    }
    out!(
        "fitted exponent: direct {:.2} (over N ≤ {}), fast {:.2} (over N ≥ 10⁴)",
        rep.direct_exponent,
        s.common.last().copied().unwrap_or(0),
        rep.fast_exponent
    );
    if let Some(x) = rep.speedup_1e5_extrapolated {
        out!("speed-up at N = 10⁵: {x:.0}× (direct extrapolated from its fit, not run)");
    }
    for ag in &rep.agreement {
        out!(
            "κ = {}: max |fast − direct| / diameter = {:.2e} (N = {})",
            ag.kappa,
            ag.max_deviation_rel,
            ag.n
        );
    }
    Ok(())
}

fn run_cle(g: &Global, a: &BenchArgs) -> Result<(), Failure> {
    let kappas = [3.0, 4.0, 16.0 / 3.0, 6.0];
    let seed = g.seed.unwrap_or(1);
    note(
        g,
        "timing the CLE exploration (one level per run, angle step 0.01)",
    );
    let rows = bench::run_cle(&kappas, a.cle_samples.min(1_000_000), seed)?;
    super::common::warn_non_finite(&rows, "bench record");
    let rec = serde_json::json!({
        "format": "sleek/bench-cle",
        "format_version": sleek::io::FORMAT_VERSION,
        "sleek_version": env!("CARGO_PKG_VERSION"),
        "threads": rayon::current_num_threads(),
        "note": "points = 0 is the bare angle process (no geometry); relative cost is per step",
        "rows": rows,
    });
    if write_record(g, "bench-cle.json", &rec)? {
        return Ok(());
    }
    out!(
        "CLE exploration, {} runs per row, {} threads, angle step 0.01, one level",
        a.cle_samples,
        rayon::current_num_threads()
    );
    out!(
        "{:>6}  {:>7}  {:>12}  {:>9}  {:>14}  {:>14}",
        "κ",
        "points",
        "steps",
        "seconds",
        "steps/s",
        "cost per step"
    );
    for r in &rows {
        out!(
            "{:>6.3}  {:>7}  {:>12}  {:>9.3}  {:>14.3e}  {:>13.2}×",
            r.kappa,
            if r.points == 0 {
                "bare".to_string()
            } else {
                r.points.to_string()
            },
            r.steps,
            r.seconds,
            r.steps_per_second,
            r.relative_step_cost
        );
    }
    Ok(())
}

/// Write the JSON record to `--out/<name>` when given, and print it with --json; true when it was
/// printed (the table is then skipped).
fn run_loops(g: &Global) -> Result<(), Failure> {
    let kappas = [3.0, 6.0];
    let sizes = [0.4, 0.3, 0.2];
    let seed = g.seed.unwrap_or(1);
    note(
        g,
        "timing whole CLE configurations (one per row, seed fixed; the regions of one level of a configuration run in parallel)",
    );
    let rows = bench::run_loops(&kappas, &sizes, seed)?;
    let fits: Vec<serde_json::Value> = kappas
        .iter()
        .filter_map(|&k| {
            bench::loops_scaling(&rows, k, 0.02).map(|(slope, at)| {
                serde_json::json!({"kappa": k, "exponent": slope, "extrapolated_seconds_at_0.02": at})
            })
        })
        .collect();
    super::common::warn_non_finite(&rows, "bench record");
    let rec = serde_json::json!({
        "format": "sleek/bench-loops",
        "format_version": sleek::io::FORMAT_VERSION,
        "sleek_version": env!("CARGO_PKG_VERSION"),
        "seed": seed,
        "note": "one configuration per row (timings of one seed vary with the configuration); \
                 the time at min_size 0.02 is extrapolated from a power law fitted to these \
                 rows, not measured",
        "rows": rows,
        "scaling": fits,
    });
    if write_record(g, "bench-loops.json", &rec)? {
        return Ok(());
    }
    out!(
        "whole CLE configurations (sleek loops), seed {seed}, {} threads (the regions of one level of a configuration run in parallel)",
        rayon::current_num_threads()
    );
    out!(
        "{:>6}  {:>5}  {:>9}  {:>6}  {:>9}  {:>9}  {:>10}  {:>8}",
        "κ",
        "ε",
        "seconds",
        "loops",
        "loops/s",
        "steps",
        "steps/s",
        "peak MiB"
    );
    for r in &rows {
        out!(
            "{:>6.3}  {:>5.2}  {:>9.2}  {:>6}  {:>9.3}  {:>9}  {:>10.0}  {:>8}",
            r.kappa,
            r.min_size,
            r.seconds,
            r.loops,
            r.loops_per_second,
            r.steps,
            r.steps_per_second,
            r.peak_mib
                .map(|m| format!("{m:.0}"))
                .unwrap_or_else(|| "-".into())
        );
    }
    for &k in &kappas {
        if let Some((slope, at)) = bench::loops_scaling(&rows, k, 0.02) {
            out!(
                "κ = {k}: time ∝ ε^-{slope:.2} over these rows; extrapolated to ε = 0.02: \
                 {at:.0} s (an extrapolation, not a measurement)"
            );
        }
    }
    Ok(())
}

fn write_record(g: &Global, name: &str, rec: &serde_json::Value) -> Result<bool, Failure> {
    let text = super::common::to_json(rec, "bench record")?;
    if let Some(p) = in_out(g, name) {
        write_file(&p, text.as_bytes())?;
        note(g, &format!("wrote {}", p.display()));
    }
    if g.json {
        out!("{text}");
        return Ok(true);
    }
    Ok(false)
}
