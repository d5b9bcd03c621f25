//! `sleek radii`: conformal radii of nested CLE loops around marked points, beside the exact
//! laws.

use super::args::{Global, RadiiArgs};
use super::common::{self, out};
use super::runs::{self, Outcome};
use super::Failure;
use serde::Serialize;
use sleek::cle::ExploreSettings;
use sleek::laws::CleLaw;
use sleek::radii::{self, RadiiRun, RadiiSettings, RadiiSummary};
use std::path::Path;

#[derive(Serialize)]
struct RadiiRecord<'a> {
    format: &'static str,
    format_version: u32,
    sleek_version: &'static str,
    seed: u64,
    settings: &'a RadiiSettings,
    steps: u64,
    summary: &'a RadiiSummary,
    law_source: &'static str,
    notes: Vec<String>,
}

pub fn run(g: &Global, a: &RadiiArgs) -> Result<(), Failure> {
    let law = CleLaw::new(a.kappa)?;
    let points: Vec<[f64; 2]> = if a.at.is_empty() {
        vec![[0.0, 0.0]]
    } else {
        a.at.iter().map(|&(x, y)| [x, y]).collect()
    };
    for p in &points {
        if p[0] * p[0] + p[1] * p[1] >= 1.0 {
            return Err(Failure::Usage(format!(
                "invalid value '{},{}' for '--at <X,Y>': the point must be inside the open unit \
                 disk (x² + y² < 1)",
                p[0], p[1]
            )));
        }
    }
    if a.samples < 2 {
        return Err(Failure::Usage(format!(
            "invalid value '{}' for '--samples <SAMPLES>': at least 2 (standard errors need two)",
            a.samples
        )));
    }
    if let Some(s) = a.nesting_at.iter().find(|s| **s > 1e4) {
        return Err(Failure::Usage(format!(
            "invalid value '{s:?}' for '--nesting-at <S>': at most 1e4"
        )));
    }
    if a.levels > 1000 {
        return Err(Failure::Usage(format!(
            "invalid value '{}' for '--levels <LEVELS>': at most 1000",
            a.levels
        )));
    }
    common::check_plot_path(a.plot.as_deref())?;
    // Memory of the kept loop records, measured (κ = 6, 5·10⁴ samples × 4 levels): about 100
    // bytes a loop in memory and 250 when the run is journaled (--out), which reads its journal
    // back to summarise.
    let per_loop = if g.out.is_some() { 250.0 } else { 100.0 };
    let bytes = a.samples as f64 * points.len() as f64 * a.levels as f64 * per_loop;
    common::check_memory(
        bytes,
        &format!(
            "--samples {} × {} points × --levels {} loop records",
            a.samples,
            points.len(),
            a.levels
        ),
    )?;
    if a.step < 1e-6 {
        return Err(Failure::Usage(format!(
            "invalid value '{:?}' for '--step <STEP>': must be in [1e-6, 0.1]",
            a.step
        )));
    }
    if a.step > 0.1 {
        return Err(Failure::Usage(format!(
            "invalid value '{:?}' for '--step <STEP>': must be in [1e-6, 0.1] (the scheme is checked \
             up to 0.04)",
            a.step
        )));
    }
    let lambdas = if a.lambda.is_empty() {
        vec![-0.25 * law.lambda_star(), 0.5, 1.0, 2.0]
    } else {
        a.lambda.clone()
    };
    for &l in &lambdas {
        if l <= -law.lambda_star() {
            return Err(Failure::Usage(format!(
                "invalid value '{l:?}' for '--lambda <L>': must be > -λ* = {:.6} (E[CR^λ] is \
                 infinite below)",
                -law.lambda_star()
            )));
        }
    }
    let nesting_at = if a.nesting_at.is_empty() {
        vec![2.5, 5.0]
    } else {
        a.nesting_at.clone()
    };
    let mut explore = ExploreSettings::defaults(a.kappa, a.levels as usize);
    explore.h_max = a.step;
    let settings = RadiiSettings {
        kappa: a.kappa,
        points: points.clone(),
        samples: a.samples,
        explore,
        lambdas,
        nesting_at,
    };
    let explorer = radii::explorer(&settings)?;
    runs::no_exports_with_shard(
        &a.run,
        &[
            ("--plot", a.plot.is_some()),
            ("--export-csv", a.export_csv.is_some()),
        ],
    )?;
    let mut plan = runs::plan(
        g,
        &a.run,
        "radii",
        a.samples,
        &settings,
        &[
            "radii.json".into(),
            "radii-loops.csv".into(),
            "radii.svg".into(),
        ],
    )?;
    let seed = plan.seed;
    let samples = match runs::execute(g, &mut plan, "radii", |i| radii::sample(&explorer, seed, i))?
    {
        Outcome::All(v) => v,
        Outcome::ShardDone => return Ok(()),
    };
    let run = RadiiRun::from_samples(&settings, seed, samples)?;
    if let Some(path) = &a.plot {
        radii::law_figure(&run)?.draw(path)?;
        common::note(g, &format!("wrote {}", path.display()));
    }
    if let Some(path) = &a.export_csv {
        common::write_file(path, loops_csv(&run)?.as_bytes())?;
        common::note(g, &format!("wrote {}", path.display()));
    }
    finish(g, &run, runs::folder(&plan))
}

/// The loop CSV, refused when a value is not finite.
fn loops_csv(run: &RadiiRun) -> Result<String, Failure> {
    sleek::finite::ensure_finite(&run.records, "loop records").map_err(Failure::Runtime)?;
    Ok(radii::loops_csv(run))
}

/// Summarise a complete run, write the run folder's files (radii.json, radii-loops.csv,
/// radii.svg) and print the table; shared by `radii` and `merge`.
pub fn finish(g: &Global, run: &RadiiRun, dir: Option<&Path>) -> Result<(), Failure> {
    let settings = &run.settings;
    let summary = radii::summarise(run)?;
    let mut notes = vec![
        "all points of a sample are in one CLE configuration; loop ids are shared by points \
         that share a loop"
            .to_string(),
        format!(
            "discretisation: angle-process step {} (radial time); loops close at the end of the \
             step in which the Bessel bridge visited 2π, so each T_k carries a bias below one step",
            settings.explore.h_max
        ),
    ];
    if summary.levels.iter().any(|r| r.censored > 0) {
        notes.push(format!(
            "some samples stopped before finding all levels (radial time budget {:.0}); their \
             missing levels are left out of the statistics",
            settings.explore.max_time
        ));
    }
    let record = RadiiRecord {
        format: "sleek/radii",
        format_version: 1,
        sleek_version: env!("CARGO_PKG_VERSION"),
        seed: run.seed,
        settings,
        steps: run.steps,
        summary: &summary,
        law_source: "Schramm, Sheffield & Wilson, Commun. Math. Phys. 2009 (conformal radius \
                     law); nesting: Miller, Watson & Wilson, Ann. Probab. 2016",
        notes,
    };
    let json = common::to_json(&record, "radii summary")?;
    if let Some(d) = dir {
        let p = d.join("radii.json");
        common::write_file(&p, format!("{json}\n").as_bytes())?;
        let csv = d.join("radii-loops.csv");
        common::write_file(&csv, loops_csv(run)?.as_bytes())?;
        let svg = d.join("radii.svg");
        radii::law_figure(run)?.draw(&svg)?;
        common::note(
            g,
            &format!(
                "wrote radii.json, radii-loops.csv, radii.svg in {}",
                d.display()
            ),
        );
    }
    if g.json {
        out!("{json}");
        return Ok(());
    }
    print_table(&record, &settings.points)
}

fn print_table(r: &RadiiRecord, points: &[[f64; 2]]) -> Result<(), Failure> {
    let s = r.summary;
    out!(
        "CLE_κ conformal radii, κ = {}, {} configurations, seed {}, step {}",
        sleek::audit::fmt_kappa(s.kappa),
        r.settings.samples,
        r.seed,
        r.settings.explore.h_max
    );
    out!("exact law: {}", r.law_source);
    out!("λ* = {:.6}", s.lambda_star);
    for (j, p) in points.iter().enumerate() {
        out!("");
        out!("point {j} at ({}, {})", p[0], p[1]);
        out!(
            "  {:>5} {:>6} {:>22} {:>9} {:>10} {:>10}",
            "level",
            "n",
            "E[ΔT] ± s.e.",
            "exact",
            "Var[ΔT]",
            "exact"
        );
        for row in s.levels.iter().filter(|x| x.point == j) {
            out!(
                "  {:>5} {:>6} {:>14.4} ± {:<6.4} {:>9.4} {:>10.3} {:>10.3}{}",
                row.level,
                row.n,
                row.mean,
                row.mean_se,
                row.mean_exact,
                row.variance,
                row.variance_exact,
                if row.censored > 0 {
                    format!("  ({} censored)", row.censored)
                } else {
                    String::new()
                }
            );
        }
        out!(
            "  {:>5} {:>8} {:>9} {:>28} {:>12} {:>10}",
            "level",
            "KS D",
            "p-value",
            "tail rate (95% CI)",
            "exact at t₀",
            "λ*"
        );
        for row in s.levels.iter().filter(|x| x.point == j) {
            let (d, p) = row
                .ks
                .map(|k| (format!("{:.4}", k.statistic), format!("{:.3}", k.p_value)))
                .unwrap_or_else(|| ("—".into(), "—".into()));
            let (fit, exact) = match &row.tail {
                Some(t) => (
                    format!(
                        "{:.4} ({:.4}, {:.4}){}",
                        t.fit.rate,
                        t.fit.ci_low,
                        t.fit.ci_high,
                        if t.threshold_stable { "" } else { "?" }
                    ),
                    t.exact_rate_at_threshold
                        .map(|r| format!("{r:.4}"))
                        .unwrap_or_else(|| "—".into()),
                ),
                None => ("—".into(), "—".into()),
            };
            out!(
                "  {:>5} {:>8} {:>9} {:>28} {:>12} {:>10.4}",
                row.level,
                d,
                p,
                fit,
                exact,
                s.lambda_star
            );
        }
        out!(
            "  {:>5} {:>8} {:>24} {:>11} {:>7}",
            "level",
            "λ",
            "E[CR^λ] ± s.e.",
            "exact",
            "dev/σ"
        );
        for row in s.levels.iter().filter(|x| x.point == j) {
            for m in &row.moments {
                out!(
                    "  {:>5} {:>8.4} {:>14.6} ± {:<8.6} {:>11.6} {:>7.2}{}",
                    row.level,
                    m.lambda,
                    m.estimate,
                    m.std_error,
                    m.exact,
                    Sigma(m.deviation_sigma.unwrap_or(f64::NAN)),
                    if m.infinite_variance {
                        "  (λ ≤ −λ*/2: infinite variance, s.e. unreliable)"
                    } else {
                        ""
                    }
                );
            }
        }
        out!("  {:>8} {:>22} {:>10}", "s", "E[N(s)] ± s.e.", "renewal*");
        for n in s.nesting.iter().filter(|x| x.point == j) {
            match (n.mean, n.mean_se) {
                (Some(m), Some(se)) => out!(
                    "  {:>8.2} {:>14.4} ± {:<6.4} {:>10.4} {:>7.2}",
                    n.s,
                    m,
                    se,
                    n.predicted,
                    Sigma(n.deviation_sigma.unwrap_or(f64::NAN))
                ),
                _ => out!(
                    "  {:>8.2} {:>23} {:>10.4}  ({} samples found all {} levels inside s; raise \
                     --levels)",
                    n.s,
                    "—",
                    n.predicted,
                    n.truncated,
                    r.settings.explore.levels
                ),
            }
        }
    }
    if !s.pairs.is_empty() {
        out!("");
        out!(
            "pairs (same configurations): {:>6} {:>20} {:>14} {:>18}",
            "n",
            "shared loops ± s.e.",
            "first shared",
            "first separating"
        );
        for p in &s.pairs {
            out!(
                "  points {} and {}            {:>6} {:>12.4} ± {:<6.4} {:>13.4} {:>18}",
                p.points[0],
                p.points[1],
                p.n,
                p.shared_mean,
                p.shared_se,
                p.first_shared,
                p.first_separating_level
                    .map(|l| format!("level {l:.3}"))
                    .unwrap_or_else(|| "—".into())
            );
        }
    }
    out!("");
    out!(
        "* exact: the renewal function of the Schramm–Sheffield–Wilson law, N(s) = #{{k : T_k ≤ s}} \
         with s = log(1/ε) relative to 1 − |z|² (its slope 1/E[T] is the Miller–Watson–Wilson rate)"
    );
    out!(
        "tail: exponential fit of ΔT − t₀ above an upper quantile t₀ (? = successive thresholds \
         disagreed); it estimates the exact rate at t₀, which rises to λ* as t₀ grows"
    );
    for n in &r.notes {
        out!("note: {n}");
    }
    Ok(())
}

/// A deviation in standard errors, printed as "—" when it is not finite (zero standard error).
struct Sigma(f64);

impl std::fmt::Display for Sigma {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        // Not `f.pad`: for strings it reads the precision as a maximum width, which cut
        // "-0.02" to "-0".
        let s = if self.0.is_finite() {
            format!("{:.*}", f.precision().unwrap_or(2), self.0)
        } else {
            "—".to_string()
        };
        match f.width() {
            Some(w) => write!(f, "{s:>w$}"),
            None => f.write_str(&s),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::Sigma;

    #[test]
    fn deviations_keep_their_digits_in_a_fixed_width_column() {
        assert_eq!(format!("{:>7.2}", Sigma(-0.0234)), "  -0.02");
        assert_eq!(format!("{:>7.2}", Sigma(1.5)), "   1.50");
        assert_eq!(format!("{:>7.2}", Sigma(f64::NAN)), "      —");
    }
}
