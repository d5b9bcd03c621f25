//! `sleek lattice`: reference curves from lattice models, written as curve files.

use super::args::{Global, LatticeArgs, LatticeModel};
use super::common::{check_memory, note, out, write_file};
use super::runs::{self, Outcome};
use super::Failure;
use serde::{Deserialize, Serialize};
use sleek::lattice::{self, IsingConfig, LatticeDisk};
use std::fmt::Write as _;
use std::path::Path;
use std::time::Instant;

pub fn run(g: &Global, a: &LatticeArgs) -> Result<(), Failure> {
    let radius = usize::try_from(a.radius).unwrap_or(usize::MAX);
    let disk = LatticeDisk::new(radius)?;
    let sweeps = usize::try_from(a.sweeps).unwrap_or(usize::MAX);
    let ising = IsingConfig::new(sweeps)?;
    if a.count > 100_000 {
        return Err(Failure::Usage(format!(
            "--count {} is out of range: at most 100000",
            a.count
        )));
    }
    let job = LatticeJob {
        model: a.model,
        radius: a.radius,
        sweeps: a.sweeps,
        count: a.count,
    };
    // Measured (radius 500 and 1000, 1 and 4 samples): the samples are kept until the file is
    // written, about 80 bytes a point, with about 1.2 r² points per percolation exploration,
    // 5.5 r² per percolation-loop configuration, 0.1 r² per Ising interface and fewer per LERW;
    // each worker thread also holds its lattice, about 16 bytes a site (π r² sites).
    let r2 = (radius as f64).powi(2);
    let per_sample = match a.model {
        LatticeModel::Percolation => 1.2 * r2,
        LatticeModel::Loops => 5.5 * r2,
        LatticeModel::Ising => 0.1 * r2,
        LatticeModel::Lerw => 0.05 * r2,
    } * 80.0;
    let threads = rayon::current_num_threads() as f64;
    let bytes = a.count as f64 * per_sample
        + threads.min(a.count as f64) * std::f64::consts::PI * r2 * 16.0;
    check_memory(
        bytes,
        &format!("--count {} samples at --radius {radius}", a.count),
    )?;
    let mut plan = runs::plan(
        g,
        &a.run,
        "lattice",
        a.count,
        &job,
        &[format!("lattice-{}.csv", name_of(a.model).0)],
    )?;
    let seed = plan.seed;
    let start = Instant::now();
    let samples = match runs::execute(g, &mut plan, name_of(a.model).0, |i| match a.model {
        LatticeModel::Percolation => vec![lattice::percolation_exploration(&disk, seed, i)],
        LatticeModel::Ising => vec![lattice::ising_interface(&disk, &ising, seed, i)],
        LatticeModel::Lerw => vec![lattice::lerw_radial(&disk, seed, i)],
        LatticeModel::Loops => lattice::percolation_loops(&disk, seed, i),
    })? {
        Outcome::All(v) => v,
        Outcome::ShardDone => return Ok(()),
    };
    let elapsed = start.elapsed().as_secs_f64();
    let out = g.out.clone().unwrap_or_else(|| "output".into());
    report(g, &job, seed, samples, &out, Some(elapsed))
}

/// Everything that determines a lattice run's samples (recorded in a run folder).
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct LatticeJob {
    pub model: LatticeModel,
    pub radius: u64,
    pub sweeps: u64,
    pub count: u64,
}

/// File stem and scaling limit of a model.
fn name_of(m: LatticeModel) -> (&'static str, &'static str, &'static str) {
    match m {
        LatticeModel::Percolation => ("percolation", "chordal SLE_6 from −i to i", "disk"),
        LatticeModel::Ising => ("ising", "chordal SLE_3 from −i to i", "disk"),
        LatticeModel::Lerw => ("lerw", "radial SLE_2 from the boundary to 0", "disk-radial"),
        LatticeModel::Loops => ("loops", "CLE_6 in the unit disk", "loops"),
    }
}

/// Write a complete lattice run's curve file in `out` and print its summary (shared with
/// `merge`).
pub fn finish(
    g: &Global,
    job: &LatticeJob,
    seed: u64,
    samples: Vec<Vec<Vec<[f64; 2]>>>,
    out: &Path,
) -> Result<(), Failure> {
    report(g, job, seed, samples, out, None)
}

fn report(
    g: &Global,
    job: &LatticeJob,
    seed: u64,
    samples: Vec<Vec<Vec<[f64; 2]>>>,
    out: &Path,
    elapsed: Option<f64>,
) -> Result<(), Failure> {
    let radius = usize::try_from(job.radius).unwrap_or(usize::MAX);
    let disk = LatticeDisk::new(radius)?;
    let sweeps = usize::try_from(job.sweeps).unwrap_or(usize::MAX);
    let (name, limit, domain) = name_of(job.model);
    std::fs::create_dir_all(out)
        .map_err(|e| Failure::Runtime(format!("cannot create {}: {e}", out.display())))?;
    sleek::finite::ensure_finite(&samples, "lattice curves").map_err(Failure::Runtime)?;
    let mut csv = String::new();
    let _ = writeln!(
        csv,
        "# sleek lattice --model {name} --radius {radius} --seed {seed}; scaling limit: {limit}; lattice spacing {:e} in disk units",
        lattice::lattice_spacing(&disk)
    );
    let key = if job.model == LatticeModel::Loops {
        "sample_loop"
    } else {
        "curve"
    };
    let _ = writeln!(csv, "{key},x,y");
    let mut count = 0usize;
    let mut points = 0usize;
    for (i, s) in samples.iter().enumerate() {
        for (j, c) in s.iter().enumerate() {
            let id = if job.model == LatticeModel::Loops {
                format!("{i}-{j}")
            } else {
                i.to_string()
            };
            for p in c {
                let _ = writeln!(csv, "{id},{:.9},{:.9}", p[0], p[1]);
            }
            count += 1;
            points += c.len();
        }
    }
    let path = out.join(format!("lattice-{name}.csv"));
    write_file(&path, csv.as_bytes())?;
    if g.json {
        let rec = serde_json::json!({
            "model": name, "radius": radius, "seed": seed, "samples": job.count,
            "sweeps": if job.model == LatticeModel::Ising { Some(sweeps) } else { None },
            "scaling_limit": limit, "lattice_spacing": lattice::lattice_spacing(&disk),
            "curves": count, "points": points, "seconds": elapsed,
            "file": path.display().to_string(),
        });
        out!("{}", super::common::to_json(&rec, "lattice summary")?);
    } else {
        out!("model            {name} (scaling limit: {limit})");
        out!("lattice          triangular, disk of radius {radius} spacings, scaled to the unit disk (spacing {:.2e})", lattice::lattice_spacing(&disk));
        if job.model == LatticeModel::Ising {
            out!("sweeps           {sweeps} Swendsen–Wang sweeps at K_c = ln 3 / 4");
        }
        out!("seed             {seed}");
        out!(
            "written          {count} curves, {points} points{} → {}",
            elapsed.map(|e| format!(" in {e:.2} s")).unwrap_or_default(),
            path.display()
        );
        if domain != "loops" {
            out!(
                "measure with     sleek measure --curve {} --domain {domain}",
                path.display()
            );
        } else {
            out!(
                "measure with     sleek measure --loops {} --at 0,0",
                path.display()
            );
        }
    }
    note(
        g,
        "lattice curves carry lattice effects below a few spacings; measure κ at larger lags",
    );
    Ok(())
}
