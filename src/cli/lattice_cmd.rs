//! `sleek lattice`: reference curves from lattice models, written as curve files.

use super::args::{Global, LatticeArgs, LatticeModel};
use super::common::{note, progress, resolve_seed, write_file};
use super::Failure;
use rayon::prelude::*;
use sleek::lattice::{self, IsingConfig, LatticeDisk};
use std::fmt::Write as _;
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
    let seed = resolve_seed(g);
    let out = g.out.clone().unwrap_or_else(|| "output".into());
    std::fs::create_dir_all(&out)
        .map_err(|e| Failure::Runtime(format!("cannot create {}: {e}", out.display())))?;
    let (name, limit, domain) = match a.model {
        LatticeModel::Percolation => ("percolation", "chordal SLE_6 from −i to i", "disk"),
        LatticeModel::Ising => ("ising", "chordal SLE_3 from −i to i", "disk"),
        LatticeModel::Lerw => ("lerw", "radial SLE_2 from the boundary to 0", "disk-radial"),
        LatticeModel::Loops => ("loops", "CLE_6 in the unit disk", "loops"),
    };
    let start = Instant::now();
    let pb = progress(g, a.count, name);
    let samples: Vec<Vec<Vec<[f64; 2]>>> = (0..a.count)
        .into_par_iter()
        .map(|i| {
            let r = match a.model {
                LatticeModel::Percolation => vec![lattice::percolation_exploration(&disk, seed, i)],
                LatticeModel::Ising => vec![lattice::ising_interface(&disk, &ising, seed, i)],
                LatticeModel::Lerw => vec![lattice::lerw_radial(&disk, seed, i)],
                LatticeModel::Loops => lattice::percolation_loops(&disk, seed, i),
            };
            pb.inc(1);
            r
        })
        .collect();
    pb.finish_and_clear();
    let elapsed = start.elapsed().as_secs_f64();
    let mut csv = String::new();
    let _ = writeln!(
        csv,
        "# sleek lattice --model {name} --radius {radius} --seed {seed}; scaling limit: {limit}; lattice spacing {:e} in disk units",
        lattice::lattice_spacing(&disk)
    );
    let key = if a.model == LatticeModel::Loops {
        "sample_loop"
    } else {
        "curve"
    };
    let _ = writeln!(csv, "{key},x,y");
    let mut count = 0usize;
    let mut points = 0usize;
    for (i, s) in samples.iter().enumerate() {
        for (j, c) in s.iter().enumerate() {
            let id = if a.model == LatticeModel::Loops {
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
            "model": name, "radius": radius, "seed": seed, "samples": a.count,
            "sweeps": if a.model == LatticeModel::Ising { Some(sweeps) } else { None },
            "scaling_limit": limit, "lattice_spacing": lattice::lattice_spacing(&disk),
            "curves": count, "points": points, "seconds": elapsed,
            "file": path.display().to_string(),
        });
        println!("{}", serde_json::to_string_pretty(&rec).unwrap_or_default());
    } else {
        println!("model            {name} (scaling limit: {limit})");
        println!("lattice          triangular, disk of radius {radius} spacings, scaled to the unit disk (spacing {:.2e})", lattice::lattice_spacing(&disk));
        if a.model == LatticeModel::Ising {
            println!("sweeps           {sweeps} Swendsen–Wang sweeps at K_c = ln 3 / 4");
        }
        println!("seed             {seed}");
        println!(
            "written          {count} curves, {points} points in {:.2} s → {}",
            elapsed,
            path.display()
        );
        if domain != "loops" {
            println!(
                "measure with     sleek measure --curve {} --domain {domain}",
                path.display()
            );
        } else {
            println!(
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
