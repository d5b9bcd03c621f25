//! `sleek merge DIR… --out DIR`: combine the folders of a sharded run into the folder the
//! unsharded run would have written.

use super::args::{Global, MergeArgs};
use super::common::{note, write_file};
use super::runs::parse_samples;
use super::Failure;
use sleek::journal::{self, Manifest};
use std::path::Path;

pub fn run(g: &Global, a: &MergeArgs) -> Result<(), Failure> {
    let Some(out) = g.out.clone() else {
        return Err(Failure::Usage(
            "merge needs --out DIR: the folder for the merged run".into(),
        ));
    };
    let out_canon = std::fs::canonicalize(&out).ok();
    // The merge holds every sample as journal text and parsed: about three times the journals.
    let journal_bytes: u64 = a
        .parts
        .iter()
        .filter_map(|d| std::fs::metadata(d.join(journal::SAMPLES)).ok())
        .map(|m| m.len())
        .sum();
    super::common::check_memory(
        3.0 * journal_bytes as f64,
        &format!("merging {journal_bytes} bytes of sample journals"),
    )?;
    let mut parts = Vec::new();
    for dir in &a.parts {
        if out_canon.is_some() && std::fs::canonicalize(dir).ok() == out_canon {
            return Err(Failure::Usage(format!(
                "--out {} is one of the parts: write the merge to a new folder",
                out.display()
            )));
        }
        let Some(m) = Manifest::read(dir)? else {
            return Err(Failure::Usage(format!(
                "{} holds no run ({} missing): give the folders written with --shard K/M --out DIR",
                dir.display(),
                journal::MANIFEST
            )));
        };
        let j = journal::read_journal(dir, m.range())?;
        parts.push((dir.clone(), m, j));
    }
    let (manifest, samples) = journal::merge_parts(parts)?;
    if let Some(old) = Manifest::read(&out)? {
        if old.state != journal::RunState::Complete {
            return Err(Failure::Usage(format!(
                "{} holds an unfinished {} run: merge into another folder",
                out.display(),
                old.command
            )));
        }
    }
    std::fs::create_dir_all(&out)
        .map_err(|e| Failure::Runtime(format!("cannot create {}: {e}", out.display())))?;
    // The manifest goes last: until the merge has written everything, the folder holds no run
    // (a crash half-way cannot leave new samples under an old manifest).
    let manifest_path = out.join(journal::MANIFEST);
    if manifest_path.exists() {
        std::fs::remove_file(&manifest_path).map_err(|e| {
            Failure::Runtime(format!("cannot remove {}: {e}", manifest_path.display()))
        })?;
    }
    write_file(
        &out.join(journal::SAMPLES),
        journal::journal_text(&samples).as_bytes(),
    )?;
    note(
        g,
        &format!(
            "merged {} shards of a {} run: {} samples, seed {}",
            a.parts.len(),
            manifest.command,
            samples.len(),
            manifest.seed
        ),
    );
    finish(g, &manifest, &samples, &out)?;
    manifest.write(&out)?;
    Ok(())
}

/// Write a complete run's output files from its manifest and samples (as the command would).
fn finish(
    g: &Global,
    m: &Manifest,
    samples: &std::collections::BTreeMap<u64, String>,
    out: &Path,
) -> Result<(), Failure> {
    let settings = |what: &str| {
        Failure::Runtime(format!(
            "{}: the settings do not fit a {what} run",
            out.join(journal::MANIFEST).display()
        ))
    };
    match m.command.as_str() {
        "radii" => {
            let s: sleek::radii::RadiiSettings =
                serde_json::from_value(m.settings.clone()).map_err(|_| settings("radii"))?;
            let v = parse_samples(samples, out)?;
            let run = sleek::radii::RadiiRun::from_samples(&s, m.seed, v)?;
            super::radii_cmd::finish(g, &run, Some(out))
        }
        "trace" => {
            let job: super::trace_cmd::TraceJob =
                serde_json::from_value(m.settings.clone()).map_err(|_| settings("trace"))?;
            let v = parse_samples(samples, out)?;
            super::trace_cmd::finish(g, &job, m.seed, v, Some(out))
        }
        "radial-trace" => {
            let job: super::radial_trace::RadialJob =
                serde_json::from_value(m.settings.clone()).map_err(|_| settings("radial-trace"))?;
            let v = parse_samples(samples, out)?;
            super::radial_trace::finish(g, &job, m.seed, v, Some(out))
        }
        "lattice" => {
            let job: super::lattice_cmd::LatticeJob =
                serde_json::from_value(m.settings.clone()).map_err(|_| settings("lattice"))?;
            let v = parse_samples(samples, out)?;
            super::lattice_cmd::finish(g, &job, m.seed, v, out)
        }
        other => Err(Failure::Runtime(format!(
            "{}: unknown command '{other}' (this sleek merges trace, radial-trace, radii and \
             lattice runs)",
            out.join(journal::MANIFEST).display()
        ))),
    }
}
