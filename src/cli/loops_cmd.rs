//! `sleek loops`: one CLE_κ configuration in the unit disk, exported and drawn.

use super::args::{Global, LoopStyleArg, LoopsArgs};
use super::common::{check_plot_path, emit, note, resolve_seed, to_json, write_file};
use super::Failure;
use num_complex::Complex64;
use rayon::prelude::*;
use serde::Serialize;
use sleek::loops::CleLoop;
use sleek::plot_loops::{DrawnLoop, LoopFigure, LoopStyle};
use sleek::polygon::winding_number;
use sleek::regions::{
    log_conformal_radius_inside, RegionDiagnostics, RegionSampler, RegionSettings,
};
use std::path::PathBuf;
use std::time::Instant;

/// The JSON export.
#[derive(Serialize)]
struct Export<'a> {
    kappa: f64,
    seed: u64,
    min_size: f64,
    settings: &'a RegionSettings,
    resolution: Resolution,
    marked: Vec<[f64; 2]>,
    /// The loops around each marked point, with conformal radii seen from it.
    around_marked: &'a [MarkedOut],
    loops: Vec<LoopOut<'a>>,
    diagnostics: &'a RegionDiagnostics,
    steps: u64,
    truncated: bool,
    seconds: f64,
}

/// What the numbers mean and how far to trust them.
#[derive(Serialize)]
struct Resolution {
    /// Target distance between consecutive points of a loop.
    spacing: f64,
    /// Largest distance between consecutive points over all loops (closing segments included).
    largest_gap: f64,
    note: &'static str,
}

const NOTE: &str = "an estimate: loops are discrete Loewner traces at the stated spacing; a loop \
                    of diameter >= min_size whose interior has no point farther than stop_room \
                    from the trace can be missing; log_cr is the conformal radius of the loop's \
                    roomiest interior component (its polygon, shrunk by half a spacing) seen \
                    from seen_from";

#[derive(Serialize)]
struct LoopOut<'a> {
    id: usize,
    parent: Option<usize>,
    depth: u32,
    points: Vec<[f64; 2]>,
    diameter: f64,
    largest_gap: f64,
    /// Whether the trace returned to its start (false: kept for the record, not drawn).
    closed: bool,
    log_cr: Option<f64>,
    seen_from: Option<[f64; 2]>,
    /// Marked points (indices into `marked`) that the loop surrounds.
    surrounds: Vec<usize>,
    #[serde(skip)]
    _src: std::marker::PhantomData<&'a ()>,
}

/// Run the command.
pub fn run(g: &Global, a: &LoopsArgs) -> Result<(), Failure> {
    run_printing(g, a, true).map(|_| ())
}

/// Sample, write the files, and print the summary when `print`; returns the number of loops
/// drawn (closed).
pub fn run_printing(g: &Global, a: &LoopsArgs, print: bool) -> Result<usize, Failure> {
    // With --json the table gives way to one JSON summary on stdout, printed at the end.
    let emit = |args: std::fmt::Arguments| -> Result<(), Failure> {
        if print && !g.json {
            emit(args)
        } else {
            Ok(())
        }
    };
    check_plot_path(a.plot.as_deref())?;
    let mut settings = RegionSettings::defaults(a.min_size);
    if let Some(sp) = a.spacing {
        settings.spacing = sp;
    }
    settings.tilted = Some(a.steps == super::args::StepShapeArg::Tilted);
    let sampler = RegionSampler::new(a.kappa, settings)?;
    for &(x, y) in &a.at {
        if x * x + y * y >= 1.0 {
            return Err(Failure::Usage(format!(
                "--at {x},{y} is out of range: the point must be inside the unit disk \
                 (x² + y² < 1)"
            )));
        }
    }
    let seed = resolve_seed(g);
    let out_dir = g.out.clone().unwrap_or_else(|| PathBuf::from("output"));
    let explicit = a.export_json.is_some() || a.export_csv.is_some() || a.plot.is_some();
    let json_path = a
        .export_json
        .clone()
        .or_else(|| (!explicit).then(|| out_dir.join("loops.json")));
    let plot_path = a
        .plot
        .clone()
        .or_else(|| (!explicit).then(|| out_dir.join("loops.png")));
    note(
        g,
        &format!(
            "sampling CLE_{} in the unit disk, loops of diameter >= {} (spacing {:.4})",
            a.kappa, a.min_size, settings.spacing
        ),
    );
    let t0 = Instant::now();
    let (conf, rd) = sampler.sample(seed, 0);
    let seconds = t0.elapsed().as_secs_f64();
    let marked: Vec<Complex64> = a.at.iter().map(|&(x, y)| Complex64::new(x, y)).collect();
    let surrounds = |l: &CleLoop| -> Vec<usize> {
        marked
            .iter()
            .enumerate()
            .filter(|(_, &z)| winding_number(&l.points, z) != 0)
            .map(|(i, _)| i)
            .collect()
    };
    let largest_gap = conf
        .loops
        .iter()
        .filter(|l| l.closed)
        .map(|l| l.largest_gap)
        .fold(0.0, f64::max);

    // Summary.
    let mut by_depth = std::collections::BTreeMap::new();
    for l in &conf.loops {
        *by_depth.entry(l.depth).or_insert(0usize) += 1;
    }
    emit(format_args!(
        "CLE_κ, κ = {}, seed {seed}, ε = {}: {} loops of diameter ≥ ε in {:.1} s ({} steps, {} \
         regions; {:.2} loops/s, {:.0} steps/s on {} threads)",
        a.kappa,
        a.min_size,
        conf.loops.len(),
        seconds,
        conf.diagnostics.steps,
        rd.regions,
        conf.loops.len() as f64 / seconds.max(1e-9),
        conf.diagnostics.steps as f64 / seconds.max(1e-9),
        rayon::current_num_threads()
    ))?;
    for (d, n) in &by_depth {
        emit(format_args!(
            "  depth {d}: {n} loop{}",
            if *n == 1 { "" } else { "s" }
        ))?;
    }
    emit(format_args!(
        "  resolution: spacing {:.4} (largest gap {:.4}); loops whose interior has no point \
         farther than {:.4} from the trace can be missing",
        settings.spacing, largest_gap, settings.stop_room
    ))?;
    let open = conf.loops.iter().filter(|l| !l.closed).count();
    if open > 0 {
        emit(format_args!(
            "  {open} of them did not return to their start in the discrete chain (closing \
             chord over {} spacings): kept in the data with \"closed\": false, not drawn",
            sleek::regions::CLOSE_GAP
        ))?;
    }
    let early = rd.stalled + rd.tiny_full;
    if early > 0 {
        emit(format_args!(
            "  {early} region(s) ended early (the discrete chain stopped resolving the tip): \
             loops there can be missing"
        ))?;
    }
    if conf.diagnostics.truncated {
        emit(format_args!(
            "  warning: the step budget ran out; the configuration is incomplete"
        ))?;
    }
    if rd.failed_interiors > 0 {
        emit(format_args!(
            "  warning: {} regions could not be uniformised and were not explored",
            rd.failed_interiors
        ))?;
    }
    // The loops around each marked point, outermost first.
    let around_marked: Vec<Vec<&CleLoop>> = marked
        .iter()
        .map(|z| {
            let mut around: Vec<&CleLoop> = conf
                .loops
                .iter()
                .filter(|l| winding_number(&l.points, *z) != 0)
                .collect();
            around.sort_by_key(|l| l.depth);
            around
        })
        .collect();
    // Seen from each marked point: log CR(z, U) for U the component of each closed loop's
    // interior holding z, on a raster of an eighth of the spacing (`regions::
    // log_conformal_radius_inside`; biased low by about that pixel over the distance to the loop).
    let px = settings.spacing / 8.0;
    let marked_loops: Vec<MarkedOut> = marked
        .par_iter()
        .zip(&around_marked)
        .map(|(z, around)| MarkedOut {
            point: [z.re, z.im],
            loops: around
                .iter()
                .map(|l| {
                    let log_cr = if l.closed {
                        log_conformal_radius_inside(&l.points, *z, px)
                    } else {
                        None
                    };
                    MarkedLoop {
                        id: l.id,
                        depth: l.depth,
                        closed: l.closed,
                        log_cr,
                        t: log_cr.map(|c| (1.0 - z.norm_sqr()).ln() - c),
                    }
                })
                .collect(),
        })
        .collect();
    for (i, (z, m)) in marked.iter().zip(&marked_loops).enumerate() {
        let list: Vec<String> = m
            .loops
            .iter()
            .map(|l| match l.log_cr {
                Some(c) => format!("loop {} (depth {}, log CR {:.3})", l.id, l.depth, c),
                None if !l.closed => format!("loop {} (depth {}, open)", l.id, l.depth),
                None => format!("loop {} (depth {}, CR unresolved)", l.id, l.depth),
            })
            .collect();
        let around = &m.loops;
        emit(format_args!(
            "  point {i} ({}, {}): {} loop{} around it{}{}",
            z.re,
            z.im,
            around.len(),
            if around.len() == 1 { "" } else { "s" },
            if list.is_empty() { "" } else { ": " },
            list.join(", ")
        ))?;
    }

    // Files.
    if let Some(p) = &json_path {
        let export = Export {
            kappa: a.kappa,
            seed,
            min_size: a.min_size,
            settings: &settings,
            resolution: Resolution {
                spacing: settings.spacing,
                largest_gap,
                note: NOTE,
            },
            marked: marked.iter().map(|z| [z.re, z.im]).collect(),
            around_marked: &marked_loops,
            loops: conf
                .loops
                .iter()
                .map(|l| LoopOut {
                    id: l.id,
                    parent: l.parent,
                    depth: l.depth,
                    points: l.points.iter().map(|z| [z.re, z.im]).collect(),
                    diameter: l.diameter,
                    largest_gap: l.largest_gap,
                    closed: l.closed,
                    log_cr: l.log_cr,
                    seen_from: l.seen_from.map(|z| [z.re, z.im]),
                    surrounds: surrounds(l),
                    _src: std::marker::PhantomData,
                })
                .collect(),
            diagnostics: &rd,
            steps: conf.diagnostics.steps,
            truncated: conf.diagnostics.truncated,
            seconds,
        };
        write_file(p, to_json(&export, "the configuration")?.as_bytes())?;
        note(g, &format!("wrote {}", p.display()));
    }
    if let Some(p) = &a.export_csv {
        let mut s = String::from("loop,parent,depth,vertex,x,y\n");
        for l in &conf.loops {
            let parent = l.parent.map(|p| p.to_string()).unwrap_or_default();
            for (k, z) in l.points.iter().enumerate() {
                s.push_str(&format!(
                    "{},{},{},{},{},{}\n",
                    l.id, parent, l.depth, k, z.re, z.im
                ));
            }
        }
        write_file(p, s.as_bytes())?;
        note(g, &format!("wrote {}", p.display()));
    }
    if let Some(p) = &plot_path {
        let fig = LoopFigure {
            title: format!("CLE_κ in the unit disk, κ = {}", fmt_kappa(a.kappa)),
            caption: vec![
                format!(
                    "seed {seed}, ε = {} (loops of diameter ≥ ε), {} loops; trace spacing \
                     {:.4}{}; an estimate at this resolution",
                    a.min_size,
                    conf.loops.iter().filter(|l| l.closed).count(),
                    settings.spacing,
                    if settings.tilted == Some(true) {
                        ", tilted steps"
                    } else {
                        ""
                    }
                ),
                caveats(open, early, conf.diagnostics.truncated),
                if marked.is_empty() {
                    "colour: nesting depth".to_string()
                } else {
                    "colour: nesting depth; crosses: marked points, the loops around them drawn \
                     thicker"
                        .to_string()
                },
            ],
            loops: conf
                .loops
                .iter()
                .filter(|l| l.closed)
                .map(|l| DrawnLoop {
                    points: l.points.iter().map(|z| (z.re, z.im)).collect(),
                    depth: l.depth,
                    highlighted: !surrounds(l).is_empty(),
                })
                .collect(),
            marked: marked.iter().map(|z| (z.re, z.im)).collect(),
            style: match a.style {
                LoopStyleArg::Outline => LoopStyle::Outline,
                LoopStyleArg::Filled => LoopStyle::Filled,
            },
        };
        fig.draw(p)?;
        note(g, &format!("wrote {}", p.display()));
    }
    let drawn = conf.loops.iter().filter(|l| l.closed).count();
    if print && g.json {
        let summary = Summary {
            kappa: a.kappa,
            seed,
            min_size: a.min_size,
            loops: conf.loops.len(),
            closed: drawn,
            by_depth,
            spacing: settings.spacing,
            largest_gap,
            note: NOTE,
            marked: &marked_loops,
            diagnostics: &rd,
            steps: conf.diagnostics.steps,
            truncated: conf.diagnostics.truncated,
            seconds,
        };
        emit_json(to_json(&summary, "the summary")?)?;
    }
    Ok(drawn)
}

/// The caption's line on what the picture may lack: open loops (not drawn), regions that ended
/// early (loops there can be missing), a spent step budget.
fn caveats(open: usize, early: u64, truncated: bool) -> String {
    let mut parts = Vec::new();
    if open > 0 {
        parts.push(format!(
            "{open} loop(s) that did not close in the discrete chain are not drawn"
        ));
    }
    if early > 0 {
        parts.push(format!(
            "{early} region(s) ended early, loops there can be missing"
        ));
    }
    if truncated {
        parts.push("the step budget ran out: incomplete".to_string());
    }
    if parts.is_empty() {
        "no region ended early; loops smaller than ε are not sampled, and this version can miss some larger ones (README)".to_string()
    } else {
        parts.join("; ")
    }
}

/// Print a JSON document on stdout.
fn emit_json(text: String) -> Result<(), Failure> {
    emit(format_args!("{text}"))
}

/// The `--json` summary on stdout (the loops themselves go to the JSON file).
#[derive(Serialize)]
struct Summary<'a> {
    kappa: f64,
    seed: u64,
    min_size: f64,
    /// Loops of diameter ≥ ε found, and how many of them closed (drawn).
    loops: usize,
    closed: usize,
    /// Loops per nesting depth.
    by_depth: std::collections::BTreeMap<u32, usize>,
    spacing: f64,
    largest_gap: f64,
    note: &'static str,
    /// Each marked point with the loops around it, outermost first.
    marked: &'a [MarkedOut],
    diagnostics: &'a RegionDiagnostics,
    steps: u64,
    truncated: bool,
    seconds: f64,
}

/// A marked point with the loops around it, outermost first (summary and export).
#[derive(Serialize)]
struct MarkedOut {
    point: [f64; 2],
    loops: Vec<MarkedLoop>,
}

/// A loop around a marked point z.
#[derive(Serialize)]
struct MarkedLoop {
    id: usize,
    depth: u32,
    closed: bool,
    /// log CR(z, U), U the component of the loop's interior holding z (null when the loop is
    /// open or z is within a raster pixel of it).
    log_cr: Option<f64>,
    /// T = log(1 − |z|²) − log CR(z, U): for the outermost loop, Schramm–Sheffield–Wilson's law.
    t: Option<f64>,
}

/// κ as the user would write it: 16/3 and 8/3 as fractions, others in decimals.
fn fmt_kappa(k: f64) -> String {
    for d in [3.0, 2.0] {
        let n = k * d;
        if (n - n.round()).abs() < 1e-9 && (k - k.round()).abs() > 1e-9 {
            return format!("{}/{}", n.round(), d);
        }
    }
    format!("{k}")
}
