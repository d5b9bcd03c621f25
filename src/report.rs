//! Presentation of audit results: a plain-text table for the terminal and a Markdown report.
//! Both take an `impl Write`; nothing here computes.

use crate::audit::{AuditReport, CheckRow, Verdict};
use std::io::{self, Write};

fn fmt_num(x: f64) -> String {
    if x == 0.0 {
        "0".into()
    } else if x.abs() >= 1e-3 && x.abs() < 1e4 {
        format!("{x:.6}")
    } else {
        format!("{x:.3e}")
    }
}

fn estimate_cell(r: &CheckRow) -> String {
    match r.std_error {
        Some(se) => format!("{:.4} ± {:.4}", r.estimate, se),
        None => fmt_num(r.estimate),
    }
}

fn verdict_word(v: Verdict) -> &'static str {
    match v {
        Verdict::Pass => "pass",
        Verdict::Fail => "FAIL",
        Verdict::Info => "info",
        Verdict::Inconclusive => "inconclusive",
    }
}

fn sigma_cell(r: &CheckRow) -> String {
    r.deviation_sigma
        .map(|d| format!("{d:+.2}"))
        .unwrap_or_else(|| "—".into())
}

/// The check table as aligned plain text (one row per check), then the convergence studies.
///
/// # Errors
/// I/O errors of `out`.
pub fn write_table(out: &mut impl Write, report: &AuditReport) -> io::Result<()> {
    let head = [
        "check",
        "estimate",
        "exact",
        "dev/σ",
        "bias ≤",
        "verdict",
        "resolution",
    ];
    let rows: Vec<[String; 7]> = report
        .checks
        .iter()
        .map(|r| {
            [
                r.check.clone(),
                estimate_cell(r),
                fmt_num(r.exact),
                sigma_cell(r),
                r.bias_bound.map(fmt_num).unwrap_or_else(|| "—".into()),
                verdict_word(r.verdict).into(),
                r.resolution.clone(),
            ]
        })
        .collect();
    let mut width = head.map(|h| h.chars().count());
    for r in &rows {
        for (w, c) in width.iter_mut().zip(r) {
            *w = (*w).max(c.chars().count());
        }
    }
    let line = |out: &mut dyn Write, cells: &[String]| -> io::Result<()> {
        let mut s = String::new();
        for (i, (c, w)) in cells.iter().zip(width).enumerate() {
            if i > 0 {
                s.push_str("  ");
            }
            s.push_str(c);
            s.extend(std::iter::repeat_n(' ', w - c.chars().count()));
        }
        writeln!(out, "{}", s.trim_end())
    };
    line(out, &head.map(String::from))?;
    line(out, &width.map(|w| "-".repeat(w)))?;
    let mut last_source = "";
    for (r, cells) in report.checks.iter().zip(&rows) {
        if r.source != last_source {
            writeln!(out, "# source: {}", r.source)?;
            last_source = r.source;
        }
        line(out, cells)?;
    }
    writeln!(out)?;
    writeln!(
        out,
        "Convergence on the same paths (error against the finest resolution):"
    )?;
    let mut last = String::new();
    for c in &report.convergence {
        if c.study != last {
            writeln!(out, "  {}", c.study)?;
            last = c.study.clone();
        }
        let se = c
            .std_error
            .map(|s| format!(" ± {}", fmt_num(s)))
            .unwrap_or_default();
        writeln!(
            out,
            "    {:<8} resolution {:<10} error {}{}   (observed order {:.2})",
            c.step.name(),
            fmt_num(c.resolution),
            fmt_num(c.error),
            se,
            c.observed_order
        )?;
    }
    let failed = report
        .checks
        .iter()
        .filter(|c| c.verdict == Verdict::Fail)
        .count();
    writeln!(
        out,
        "\n{} checks, {} failed (statistical checks fail beyond {} σ).",
        report.checks.len(),
        failed,
        report.settings.sigma_limit
    )
}

/// Escape the table separator in a Markdown cell.
fn cell(text: &str) -> String {
    text.replace('|', "\\|")
}

/// The audit as a Markdown document: settings, the check table, convergence tables, and notes on
/// how to read them.
///
/// # Errors
/// I/O errors of `out`.
pub fn write_markdown(
    out: &mut impl Write,
    report: &AuditReport,
    elapsed_s: f64,
) -> io::Result<()> {
    let s = &report.settings;
    writeln!(out, "# sleek audit\n")?;
    writeln!(
        out,
        "sleek {} · seed {} · {} curves per κ · left passage on a geometric base grid Δt/t = {} \
         bisected until 2Δt ≤ {}·|g(z) − W|², from t = {:e} to t = {:e} · {} slits · {:.1} s\n",
        env!("CARGO_PKG_VERSION"),
        s.seed,
        s.samples,
        s.ratio,
        s.point_step,
        s.t_min,
        s.horizon,
        s.step.name(),
        elapsed_s
    )?;
    writeln!(
        out,
        "These are estimates from finite samples at a finite resolution, not proofs. A statistical \
         check fails when the estimate is more than {} standard errors from the exact value; \
         `bias ≤` bounds the error that stopping the curves at the horizon can cause (the mean \
         of min(h, 1 − h) for Schramm's h at g_T(z) − W_T).\n",
        s.sigma_limit
    )?;
    writeln!(out, "## Checks against published results\n")?;
    writeln!(
        out,
        "| check | source | estimate ± s.e. | exact | dev (σ) | bias ≤ | resolution | verdict |"
    )?;
    writeln!(out, "|---|---|---|---|---|---|---|---|")?;
    for r in &report.checks {
        writeln!(
            out,
            "| {} | {} | {} | {} | {} | {} | {} | {} |",
            cell(&r.check),
            r.source,
            estimate_cell(r),
            fmt_num(r.exact),
            sigma_cell(r),
            r.bias_bound.map(fmt_num).unwrap_or_else(|| "—".into()),
            cell(&r.resolution),
            verdict_word(r.verdict)
        )?;
    }
    writeln!(out, "\n## Convergence as the step shrinks\n")?;
    writeln!(
        out,
        "Each study uses the same driving paths at every resolution (coarse grids are subsets of \
         the fine one), so the differences are discretisation error, not sampling noise.\n"
    )?;
    let mut last = String::new();
    for c in &report.convergence {
        if c.study != last {
            writeln!(out, "\n**{}**\n", cell(&c.study))?;
            writeln!(
                out,
                "| steps | resolution | error | s.e. | observed order |"
            )?;
            writeln!(out, "|---|---|---|---|---|")?;
            last = c.study.clone();
        }
        writeln!(
            out,
            "| {} | {} | {} | {} | {:.2} |",
            c.step.name(),
            fmt_num(c.resolution),
            fmt_num(c.error),
            c.std_error.map(fmt_num).unwrap_or_else(|| "—".into()),
            c.observed_order
        )?;
    }
    let failed = report
        .checks
        .iter()
        .filter(|c| c.verdict == Verdict::Fail)
        .count();
    writeln!(out, "\n{} checks, {} failed.", report.checks.len(), failed)
}
