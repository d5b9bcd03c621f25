//! `sleek laws`: exact values for one κ.

use super::args::{Global, LawsArgs};
use super::common::out;
use super::Failure;
use serde::Serialize;
use sleek::audit::fmt_kappa;
use sleek::laws::{self, CleLaw};

#[derive(Serialize)]
struct LeftPassage {
    x: f64,
    y: f64,
    probability: f64,
}

#[derive(Serialize)]
struct Moment {
    lambda: f64,
    value: Option<f64>,
    note: Option<String>,
}

#[derive(Serialize)]
struct CleSummary {
    source: &'static str,
    observable: &'static str,
    lambda_star: f64,
    gasket_dimension: f64,
    mean_t: f64,
    var_t: f64,
    cr_moments: Vec<Moment>,
    quantiles: Vec<(f64, f64)>,
    nesting_rate: f64,
    nesting_source: &'static str,
    nesting_rate_function: Vec<(f64, f64)>,
}

#[derive(Serialize)]
struct LawsRecord {
    format: &'static str,
    format_version: u32,
    sleek_version: &'static str,
    kappa: f64,
    trace_dimension: f64,
    trace_dimension_source: &'static str,
    phase: laws::Phase,
    phase_source: &'static str,
    left_passage: Vec<LeftPassage>,
    left_passage_source: &'static str,
    left_passage_note: Option<String>,
    cle: Option<CleSummary>,
    cle_note: Option<String>,
}

pub fn run(g: &Global, a: &LawsArgs) -> Result<(), Failure> {
    let k = a.kappa;
    let points = if a.at.is_empty() {
        vec![(1.0, 1.0)]
    } else {
        a.at.clone()
    };
    for &(x, y) in &points {
        if y <= 0.0 {
            return Err(Failure::Usage(format!(
                "--at {x},{y}: the point must lie in the upper half-plane (y > 0)"
            )));
        }
    }
    let (left_passage, left_passage_note) = if k < 8.0 {
        let mut v = Vec::new();
        for &(x, y) in &points {
            v.push(LeftPassage {
                x,
                y,
                probability: laws::schramm_left_passage(k, x, y)?,
            });
        }
        (v, None)
    } else {
        (
            Vec::new(),
            Some("not defined for κ ≥ 8: the curve visits every point".to_string()),
        )
    };
    let (cle, cle_note) = match CleLaw::new(k) {
        Ok(law) => {
            let lambdas = if a.lambda.is_empty() {
                vec![0.5, 1.0, 2.0, -law.lambda_star() / 4.0]
            } else {
                a.lambda.clone()
            };
            let cr_moments = lambdas
                .iter()
                .map(|&l| match law.cr_moment(l) {
                    Ok(v) => Moment {
                        lambda: l,
                        value: Some(v),
                        note: None,
                    },
                    Err(e) => Moment {
                        lambda: l,
                        value: None,
                        note: Some(e.to_string()),
                    },
                })
                .collect();
            (
                Some(CleSummary {
                    source: "Schramm, Sheffield & Wilson, Commun. Math. Phys. 2009",
                    observable: "T = −log CR(U₀, 0), U₀ the interior of the outermost loop around 0 of CLE_κ in the unit disk",
                    lambda_star: law.lambda_star(),
                    gasket_dimension: law.gasket_dimension(),
                    mean_t: law.mean_t(),
                    var_t: law.var_t(),
                    cr_moments,
                    quantiles: [0.1, 0.5, 0.9, 0.99]
                        .iter()
                        .filter_map(|&p| law.quantile(p).ok().map(|q| (p, q)))
                        .collect(),
                    nesting_rate: law.nesting_rate(),
                    nesting_source: "Miller, Watson & Wilson, Ann. Probab. 2016",
                    nesting_rate_function: [0.5, 1.0, 2.0]
                        .iter()
                        .filter_map(|&f| {
                            let nu = f * law.nesting_rate();
                            law.nesting_rate_function(nu).ok().map(|g| (nu, g))
                        })
                        .collect(),
                }),
                None,
            )
        }
        Err(e) => (None, Some(e.to_string())),
    };
    let rec = LawsRecord {
        format: "sleek/laws",
        format_version: sleek::io::FORMAT_VERSION,
        sleek_version: env!("CARGO_PKG_VERSION"),
        kappa: k,
        trace_dimension: laws::trace_dimension(k)?,
        trace_dimension_source: "Beffara, Ann. Probab. 2008",
        phase: laws::phase(k)?,
        phase_source: "Rohde & Schramm, Ann. Math. 2005",
        left_passage,
        left_passage_source: "Schramm, Electron. Comm. Probab. 2001",
        left_passage_note,
        cle,
        cle_note,
    };
    if g.json {
        out!("{}", super::common::to_json(&rec, "laws record")?);
        return Ok(());
    }
    out!("SLE_κ with κ = {}", fmt_kappa(k));
    out!(
        "  {:<34} {:<14} {}",
        "dimension of the trace",
        format!("{:.6}", rec.trace_dimension),
        rec.trace_dimension_source
    );
    out!(
        "  {:<34} {:<14} {}",
        "phase",
        rec.phase.describe(),
        rec.phase_source
    );
    for lp in &rec.left_passage {
        out!(
            "  {:<34} {:<14} {}",
            format!("P(passes left of {}{:+}i)", lp.x, lp.y),
            format!("{:.6}", lp.probability),
            rec.left_passage_source
        );
    }
    if let Some(n) = &rec.left_passage_note {
        out!("  left passage: {n}");
    }
    match &rec.cle {
        Some(c) => {
            out!("CLE_κ in the unit disk, {} — {}", c.observable, c.source);
            out!(
                "  {:<34} {:.8}",
                "λ* (tail: P(T > t) ~ C e^{−λ* t})",
                c.lambda_star
            );
            out!(
                "  {:<34} {:.8}",
                "gasket dimension 2 − λ*",
                c.gasket_dimension
            );
            out!("  {:<34} {:.8}", "E[T]", c.mean_t);
            out!("  {:<34} {:.8}", "Var[T]", c.var_t);
            for (p, q) in &c.quantiles {
                out!("  {:<34} {q:.8}", format!("quantile of T at {p}"));
            }
            out!(
                "  {:<34} {:.8}   {}",
                "loops per unit log(1/ε): 1/E[T]",
                c.nesting_rate,
                c.nesting_source
            );
            for (nu, gam) in &c.nesting_rate_function {
                out!(
                    "  {:<34} {gam:.8}   (points with nesting ν have dimension 2 − γ)",
                    format!("γ(ν), ν = {nu:.6}")
                );
            }
            for m in &c.cr_moments {
                let label = format!("E[CR^λ], λ = {}", m.lambda);
                match (m.value, &m.note) {
                    (Some(v), _) => out!("  {label:<34} {v:.10}"),
                    (None, Some(n)) => out!("  {label:<34} — ({n})"),
                    _ => {}
                }
            }
        }
        None => out!("CLE_κ: {}", rec.cle_note.as_deref().unwrap_or("")),
    }
    Ok(())
}
