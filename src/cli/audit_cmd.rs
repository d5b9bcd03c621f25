//! `sleek audit`: checks against published exact results.

use super::args::{AuditArgs, Global};
use super::common::out;
use super::common::{in_out, note, progress, resolve_seed, write_file};
use super::trace_cmd::step_kind;
use super::Failure;
use sleek::audit::{self, AuditReport, AuditSettings};

/// Run the audit with progress on stderr; returns the report and the elapsed seconds.
pub fn run_audit(g: &Global, s: &AuditSettings) -> Result<(AuditReport, f64), Failure> {
    let start = std::time::Instant::now();
    let pb = progress(g, (s.samples * s.kappas.len()) as u64, "curves");
    let report = audit::run(s, &|done, _| pb.set_position(done))?;
    pb.finish_and_clear();
    Ok((report, start.elapsed().as_secs_f64()))
}

/// The canonical JSON record of an audit.
fn audit_record(report: &AuditReport, elapsed: f64) -> serde_json::Value {
    super::common::warn_non_finite(report, "audit record");
    serde_json::json!({
        "format": "sleek/audit",
        "format_version": sleek::io::FORMAT_VERSION,
        "sleek_version": env!("CARGO_PKG_VERSION"),
        "elapsed_seconds": elapsed,
        "passed": report.passed(),
        "report": report,
    })
}

/// Write the Markdown and JSON files of a report.
pub fn write_reports(
    report: &AuditReport,
    elapsed: f64,
    md: &std::path::Path,
    json: &std::path::Path,
) -> Result<(), Failure> {
    let mut buf = Vec::new();
    sleek::report::write_markdown(&mut buf, report, elapsed)
        .map_err(|e| Failure::Runtime(e.to_string()))?;
    write_file(md, &buf)?;
    let text = super::common::to_json(&audit_record(report, elapsed), "audit record")?;
    write_file(json, text.as_bytes())
}

pub fn run(g: &Global, a: &AuditArgs) -> Result<(), Failure> {
    let mut s = AuditSettings::quick(0);
    s.samples = a.samples.min(10_000_000) as usize;
    s.ratio = a.ratio;
    s.point_step = a.point_step;
    s.horizon = a.horizon;
    if !a.kappa.is_empty() {
        s.kappas = a.kappa.clone();
    }
    if !a.at.is_empty() {
        s.points = a.at.clone();
    }
    s.step = step_kind(a.step);
    s.sigma_limit = a.sigma_limit;
    if !a.cle_kappa.is_empty() {
        s.cle_kappas = a.cle_kappa.clone();
    }
    if a.cle_samples == 0 {
        s.cle_kappas.clear();
    }
    s.cle_samples = a.cle_samples.min(10_000_000) as usize;
    s.validate()?;
    s.seed = resolve_seed(g);
    let (report, elapsed) = run_audit(g, &s)?;
    if g.json {
        out!(
            "{}",
            super::common::to_json(&audit_record(&report, elapsed), "audit record")?
        );
    } else {
        let mut out = std::io::stdout().lock();
        sleek::report::write_table(&mut out, &report)
            .map_err(|e| Failure::Runtime(e.to_string()))?;
    }
    // Files after the table, so that a bad --out cannot lose what was computed.
    if let (Some(md), Some(js)) = (in_out(g, "audit.md"), in_out(g, "audit.json")) {
        write_reports(&report, elapsed, &md, &js)?;
        note(g, &format!("wrote {} and {}", md.display(), js.display()));
    }
    if !report.passed() {
        return Err(Failure::Runtime(
            "some checks failed (see the table)".into(),
        ));
    }
    note(g, &format!("audit finished in {elapsed:.1} s"));
    Ok(())
}
