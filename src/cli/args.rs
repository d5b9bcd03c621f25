//! Argument definitions and value parsers. Parsers reject bad values with a message naming the
//! valid range; clap adds the option name and the offending value.

use clap::{Args, Parser, Subcommand, ValueEnum};
use serde::{Deserialize, Serialize};
use sleek::journal::Shard;
use std::path::PathBuf;

/// sleek — Schramm–Loewner evolution by the zipper, with exact laws beside every estimate.
///
/// Without a subcommand, runs the built-in tour: a gallery of chordal SLE_κ curves, CLE_κ
/// conformal-radius panels and a short audit against published laws, written to `output/` (or
/// --out).
#[derive(Parser, Debug)]
#[command(
    name = "sleek",
    version,
    propagate_version = true,
    max_term_width = 100
)]
pub struct Cli {
    #[command(flatten)]
    pub global: Global,
    #[command(subcommand)]
    pub command: Option<Command>,
}

/// Options every command accepts.
#[derive(Args, Debug, Clone)]
pub struct Global {
    /// Seed of the random streams; sample i of a run uses a stream derived from (seed, i) only,
    /// so results do not depend on the thread count. Drawn and reported when absent.
    #[arg(long, global = true, value_name = "N")]
    pub seed: Option<u64>,
    /// Print the summary as JSON on stdout instead of a table.
    #[arg(long, global = true)]
    pub json: bool,
    /// Folder for the command's standard output files: trace.{csv,json,svg} for trace,
    /// radii.{json,svg} and radii-loops.csv for radii, lattice-MODEL.csv for lattice (default
    /// output/), audit.{md,json} for audit, bench.json (bench-cle.json with --cle,
    /// bench-radial.json with --radial) for bench, the gallery and report for the tour (default
    /// output/), the merged run for merge; laws only prints. For the sampling commands (trace,
    /// radii, lattice) the folder is also the run's journal: run.json and samples.jsonl.
    #[arg(long, global = true, value_name = "DIR")]
    pub out: Option<PathBuf>,
    /// No progress bars or notes on stderr (errors and warnings are still shown).
    #[arg(long, short, global = true)]
    pub quiet: bool,
}

#[derive(Subcommand, Debug)]
pub enum Command {
    /// Sample chordal SLE_κ curves (or the trace of a given driving function), or radial SLE_κ
    /// and SLE_κ(ρ) with --domain disk-radial; export and plot.
    ///
    /// The Loewner chain is dg/dt = 2/(g − W) in the upper half-plane, W = √κ B, run to capacity
    /// time --time (half-plane capacity 2t). Curves are made of explicit slit maps: tilted
    /// slits (piecewise square-root driving, default) or vertical slits (piecewise constant).
    /// Cost on 2 cores: the fast method (default) about 2.5 s per 10⁵ points and 20–30 s per 10⁶,
    /// a few times more with refinement passes; the direct method N²/2 slit-map evaluations
    /// (N = 10⁴: 2–4 s). Memory: about 190 bytes per point of all curves (radial: 48 bytes a
    /// point kept, plus about 400 bytes a point of the curve each thread is building); the
    /// command warns above the memory available. Accepts --out (journaled run), --shard and
    /// --resume like `radii`. `sleek bench` measures yours.
    Trace(TraceArgs),
    /// Exact values for a κ: trace dimension, phase, Schramm's left-passage probability, and the
    /// CLE_κ conformal-radius law (8/3 < κ < 8).
    Laws(LawsArgs),
    /// Check the samplers against published exact results at your resolution and sample size,
    /// and print a table (estimate ± standard error, exact value, deviation in σ).
    Audit(AuditArgs),
    /// Conformal radii of the nested CLE_κ loops around marked points of the unit disk, with
    /// E[CR^λ], mean and variance of T, and nesting counts beside the exact laws.
    ///
    /// All points of a sample lie in one CLE_κ configuration, explored by radial SLE_κ(κ−6)
    /// (exact squared-Bessel steps for the angle process, Bessel-bridge loop closing, the point
    /// with the fastest clock driving); T_k = log(1 − |z|²) − log CR of the k-th loop, and
    /// ΔT_k = T_k − T_(k−1) follows the Schramm–Sheffield–Wilson law at every point. Loop ids
    /// are shared by points inside the same loop. Cost on 2 cores: 3–8·10⁶ steps per second;
    /// one level needs about E[T]/step steps per point (κ = 6, step 0.01: about 1100), e.g.
    /// 10⁴ samples × 3 points × 2 levels at κ = 6 in about 30 s. Memory: about 100 bytes per
    /// loop record (samples × points × levels), 250 with --out (the journal is read back); the
    /// command warns when that exceeds the memory available and refuses above 64 GiB.
    ///
    /// Long runs: with --out DIR the run is journaled (Ctrl-C or SIGTERM stop it with every
    /// finished sample saved; --resume continues it), --shard K/M runs a share of the samples
    /// for `sleek merge`.
    Radii(RadiiArgs),
    /// A whole CLE_κ configuration in the unit disk: every loop of diameter ≥ --min-size as a
    /// closed polyline with its nesting depth, parent loop and conformal radius; exported as
    /// JSON and CSV and drawn coloured by depth.
    ///
    /// One radial SLE_κ(κ−6) exploration per region (the disk, then each loop's interior and
    /// each pocket the trace cut off, uniformised afresh by the geodesic zipper); for κ ≥ 4 the
    /// target moves with the loop being traced until it closes. First version: some loops (at
    /// ε = 0.2, seeds 1–3: 3 of 91 for κ ≥ 4, 4 of 18 at κ = 3) do not return to their start in the
    /// discrete chain; they are kept in the data with "closed": false and not drawn (see the
    /// README). The loops are estimates at a stated resolution: trace points at most about
    /// 1.5 × --spacing apart (default --min-size/6; most gaps are far smaller), and a loop
    /// whose interior has no point farther than --min-size/8 from the trace can be missed.
    /// Writes loops.json and loops.png to --out (default output/) unless --export-json,
    /// --export-csv or --plot name other files. Cost: see `sleek bench --loops`.
    Loops(LoopsArgs),
    /// Time the direct and fast trace methods in one run on this machine: fitted scaling
    /// exponents, speed-ups, fast-vs-direct agreement and peak memory (about a minute); with
    /// --cle, the CLE exploration instead.
    Bench(BenchArgs),
    /// Measure your curves: recover each curve's Loewner driving function by unzipping it, and
    /// estimate κ with a confidence interval (quadratic variation over a range of lags, blocked
    /// bootstrap), with diagnostics (normality, independence, drift, κ against the lag) and a
    /// second estimate from left-passage frequencies (Schramm's formula) when there are several
    /// chordal curves. With --loops and --at: conformal radii of the loops around a point.
    ///
    /// Curve files: `x,y` per line, or `curve,x,y` for several curves (CSV, header and '#'
    /// comments allowed), or JSON `[[x,y],…]`. Cost on 2 cores (measured on lattice curves):
    /// about 0.1 ms per point with tilted slits and 0.02 ms with vertical ones (chordal, fast
    /// tree); radial unzipping is direct, N²/2 map evaluations (31 000 points in 7 s). Peak memory
    /// measured: 47 MB for 20 curves of 10⁶ points in all.
    Measure(MeasureArgs),
    /// Lattice reference curves with known scaling limits, written as curve files that
    /// `measure` reads: percolation exploration (SLE_6), critical Ising interfaces (SLE_3),
    /// loop-erased random walk (radial SLE_2), percolation loops (CLE_6), in a disk of
    /// --radius lattice spacings, scaled to the unit disk.
    ///
    /// Cost per sample on one core, measured at radius 500 (it grows like radius²; Ising also
    /// like --sweeps): percolation 0.3 s, loops 1.3 s, Ising with 60 sweeps 1.7 s, LERW under
    /// 0.05 s. Memory: the samples are kept until the file is written, about 80 bytes a point,
    /// with about 1.2·radius² points per percolation exploration and 5.5·radius² per loop
    /// configuration (0.1·radius² for Ising); the command warns above the memory available.
    /// Accepts --out (journaled run), --shard and --resume like `radii`.
    Lattice(LatticeArgs),
    /// Combine the folders of a sharded run (each made with --shard K/M --out DIR) into --out
    /// DIR: the parts must be shards of one run (same command, settings, seed and version),
    /// complete, disjoint and together complete; the result is byte for byte what the
    /// unsharded run writes to its --out folder. Memory: about three times the size of the
    /// parts' samples.jsonl files.
    Merge(MergeArgs),
}

/// Options of every sampling command for long runs (see README, "Long runs").
#[derive(Args, Debug, Clone, Default)]
pub struct RunArgs {
    /// Run only shard K of M (1 ≤ K ≤ M): the samples ⌊(K−1)n/M⌋ to ⌊Kn/M⌋ − 1 of the n of the
    /// run. Needs --out (the shard's folder) and --seed (the same for every shard); combine the
    /// folders with `sleek merge`.
    #[arg(long, value_parser = parse_shard, value_name = "K/M")]
    pub shard: Option<Shard>,
    /// Continue the interrupted run in --out DIR, given with the same options: finished samples
    /// are kept, the others are run, and the results equal an uninterrupted run's.
    #[arg(long)]
    pub resume: bool,
}

#[derive(Args, Debug)]
pub struct MergeArgs {
    /// The shard folders (each written by a run with --shard K/M --out DIR), in any order.
    #[arg(required = true, value_name = "DIR")]
    pub parts: Vec<PathBuf>,
}

/// `K/M` for --shard.
pub fn parse_shard(s: &str) -> Result<Shard, String> {
    Shard::parse(s)
}

#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum CurveDomainArg {
    /// Chordal in the upper half-plane from the real line to ∞ (the first point is moved onto
    /// the real line; the shift is reported).
    HalfPlane,
    /// Chordal in the unit disk from the first point to the boundary point at --target-angle
    /// (default: the last point's angle).
    Disk,
    /// Radial in the unit disk from the first point to --target (default 0,0).
    DiskRadial,
    /// Chordal in the polygon of --polygon FILE, from the first point to --target (default the
    /// last point), both projected onto its boundary; mapped onto H by the zipper.
    Polygon,
}

#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum LatticeModel {
    /// Critical site percolation exploration on the triangular lattice, −i to i (chordal SLE_6).
    Percolation,
    /// Critical Ising interface, Dobrushin boundary conditions, Swendsen–Wang (chordal SLE_3).
    Ising,
    /// Loop-erased random walk from 0, reversed: boundary to 0 (radial SLE_2).
    Lerw,
    /// All percolation interface loops, white boundary (CLE_6).
    Loops,
}

#[derive(Args, Debug)]
#[command(allow_negative_numbers = true)]
pub struct MeasureArgs {
    /// A curve file (repeatable).
    #[arg(long, value_name = "FILE")]
    pub curve: Vec<PathBuf>,
    /// A folder of curve files (*.csv, *.json).
    #[arg(long, value_name = "DIR")]
    pub curves: Option<PathBuf>,
    /// Where the curves live.
    #[arg(long, value_enum, default_value = "half-plane")]
    pub domain: CurveDomainArg,
    /// Disk: angle (radians) of the target boundary point.
    #[arg(long, value_parser = parse_finite, allow_hyphen_values = true)]
    pub target_angle: Option<f64>,
    /// The domain's polygon for --domain polygon: a file of vertices `x,y` (CSV or JSON).
    #[arg(long, value_name = "FILE")]
    pub polygon: Option<PathBuf>,
    /// Disk-radial: the interior target point X,Y; polygon: the target boundary point.
    #[arg(long, value_parser = parse_point, allow_hyphen_values = true)]
    pub target: Option<(f64, f64)>,
    /// Slit shape used to unzip.
    #[arg(long, value_enum, default_value = "tilted")]
    pub slit: StepArg,
    /// Points at most this far outside the domain are moved onto its boundary (lattice curves
    /// in a jagged disk); farther ones are an error.
    #[arg(long, default_value = "0.01", value_parser = parse_fraction)]
    pub boundary_tolerance: f64,
    /// Disk: use each curve while the map to H stretches lengths by at most this factor
    /// relative to the start (the lattice scale then stays uniform on the Loewner clock).
    #[arg(long, default_value = "2", value_parser = parse_positive)]
    pub max_distortion: f64,
    /// Longer curves are thinned to this many points (every k-th point kept, reported).
    #[arg(long, default_value = "20000", value_parser = parse_count)]
    pub max_points: u64,
    /// Smallest lag (Loewner time); default 100 h², the Loewner time of a slit 20 median
    /// segment lengths h long (lattice curves keep a visible bias well above one step; the
    /// table of κ against the lag shows it). Lags double up to a fifth of the median curve's Loewner time.
    #[arg(long, value_parser = parse_positive)]
    pub min_lag: Option<f64>,
    /// Bootstrap replicates.
    #[arg(long, default_value = "1000", value_parser = parse_count)]
    pub bootstrap: u64,
    /// Confidence level of the intervals.
    #[arg(long, default_value = "0.95", value_parser = parse_fraction)]
    pub level: f64,
    /// Write the driving functions as CSV (curve,t,w).
    #[arg(long, value_name = "FILE")]
    pub export_csv: Option<PathBuf>,
    /// Draw driving functions, increments against the Gaussian, and κ against the lag (.svg or
    /// .png).
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    /// A file of closed loops (`loop,x,y` CSV or JSON curves): with --at, report the loops
    /// surrounding the point and their conformal radii (zipper, error estimate from two
    /// resolutions).
    #[arg(long, value_name = "FILE", requires = "at")]
    pub loops: Option<PathBuf>,
    /// The point X,Y for --loops.
    #[arg(long, value_parser = parse_point, allow_hyphen_values = true)]
    pub at: Option<(f64, f64)>,
}

#[derive(Args, Debug)]
pub struct LatticeArgs {
    #[command(flatten)]
    pub run: RunArgs,
    /// Which model.
    #[arg(long, value_enum)]
    pub model: LatticeModel,
    /// Disk radius in lattice spacings (8 to 4000).
    #[arg(long, default_value = "200", value_parser = parse_count)]
    pub radius: u64,
    /// Number of independent samples.
    #[arg(long, short = 'n', default_value = "20", value_parser = parse_count)]
    pub count: u64,
    /// Ising: Swendsen–Wang sweeps before the interface is read (1 to 100000).
    #[arg(long, default_value = "60", value_parser = parse_count)]
    pub sweeps: u64,
}

#[derive(Args, Debug)]
pub struct BenchArgs {
    /// Largest curve for the fast method (the direct method stops at 30000 steps).
    #[arg(long, default_value = "1000000", value_parser = parse_count)]
    pub max_n: u64,
    /// Time the CLE exploration instead: steps per second of the bare angle process and of
    /// explorations with 1, 3 and 10 marked points, at κ = 3, 4, 16/3, 6.
    #[arg(long, conflicts_with = "radial")]
    pub cle: bool,
    /// Time radial SLE_4 traces in the disk instead (direct against the disk block tree, radial
    /// time 3), with the same table.
    #[arg(long)]
    pub radial: bool,
    /// Runs per CLE timing (with --cle).
    #[arg(long, default_value = "1000", value_parser = parse_count)]
    pub cle_samples: u64,
    /// Time whole CLE configurations (`sleek loops`) instead: one per κ ∈ {3, 6} and
    /// ε ∈ {0.4, 0.3, 0.2}, with loops and steps per second, peak memory, and the time at
    /// ε = 0.02 extrapolated from the fitted scaling (about two minutes).
    #[arg(long, conflicts_with_all = ["radial", "cle"])]
    pub loops: bool,
}

#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum StepArg {
    /// Straight slits at angle απ (piecewise square-root driving; continuous trace).
    Tilted,
    /// Vertical slits (piecewise-constant driving).
    Vertical,
}

#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum MethodArg {
    /// Compose every slit map for every point (O(N²), the reference).
    Direct,
    /// Block tree with far-field expansions (about N log N; agrees with direct to ~1e-13 of
    /// the curve's size).
    Fast,
}

#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum DomainArg {
    /// Upper half-plane, from 0 to ∞.
    HalfPlane,
    /// Unit disk, from 1 to −1.
    Disk,
    /// Strip 0 < Im z < π, from −∞ to +∞.
    Strip,
    /// Radial SLE in the unit disk from 1 towards 0 (radial Loewner chain; --time is radial
    /// time, the hull's conformal radius seen from 0 being e^−t; with --rho, radial SLE_κ(ρ)).
    DiskRadial,
}

#[derive(Args, Debug)]
#[command(allow_negative_numbers = true)]
pub struct TraceArgs {
    #[command(flatten)]
    pub run: RunArgs,
    /// κ > 0 (κ > 8 is allowed with a warning: the curve is space-filling).
    #[arg(long, short, value_parser = parse_kappa, required_unless_present = "driving")]
    pub kappa: Option<f64>,
    /// Final Loewner time t > 0 (default 1). Chordal: capacity time, the hull has half-plane
    /// capacity 2t and lies below height 2√t; with --driving the file's last time is used.
    /// Radial (--domain disk-radial): radial time t ≤ 50, the remaining domain's conformal
    /// radius seen from 0 being e^−t.
    #[arg(long, short, value_parser = parse_positive, conflicts_with = "driving")]
    pub time: Option<f64>,
    /// Number of independent curves.
    #[arg(long, short = 'n', default_value = "1", value_parser = parse_count)]
    pub count: u64,
    /// Chordal: N equal capacity steps, no refinement (N points after the start). Radial: N steps
    /// (default 2000, at most 10⁶), half uniform in e^−2t and half in t; the trace is composed
    /// by the disk block tree (--method fast, about N log N) or directly (--method direct,
    /// O(N²), at most 10⁵).
    #[arg(long, value_parser = parse_count, conflicts_with_all = ["spacing", "spacing_rel"])]
    pub points: Option<u64>,
    /// Refine until consecutive points are at most this far apart (absolute distance in H).
    #[arg(long, value_parser = parse_positive)]
    pub spacing: Option<f64>,
    /// Refine until consecutive points are at most this fraction of their distance from the
    /// start point apart (scale-invariant). With no resolution option the default is
    /// --spacing 0.02·√t together with --spacing-rel 0.05.
    #[arg(long, value_parser = parse_fraction)]
    pub spacing_rel: Option<f64>,
    /// With --spacing-rel: distances from the start below this count as this
    /// (default 0.01·2√t).
    #[arg(long, value_parser = parse_positive)]
    pub inner_radius: Option<f64>,
    /// Refinement stops at this many points per curve (the output then says the target was not
    /// met and reports the spacing reached).
    #[arg(long, default_value = "200000", value_parser = parse_count)]
    pub max_points: u64,
    /// Equal steps of the grid before refinement.
    #[arg(long, default_value = "64", value_parser = parse_count)]
    pub base_steps: u64,
    /// Slit shape of each step.
    #[arg(long, value_enum, default_value = "tilted")]
    pub step: StepArg,
    /// How the trace is evaluated.
    #[arg(long, value_enum, default_value = "fast")]
    pub method: MethodArg,
    /// Radial SLE_κ(ρ): the force point starts just clockwise of 1 (implies --domain
    /// disk-radial; ρ > −2).
    #[arg(long, value_parser = parse_finite, allow_hyphen_values = true)]
    pub rho: Option<f64>,
    /// Domain of the exported and plotted points (by an explicit conformal map from H), or
    /// disk-radial for radial SLE.
    #[arg(long, value_enum, default_value = "half-plane")]
    pub domain: DomainArg,
    /// Trace a given driving function instead of Brownian motion: a text file with one sample
    /// `t,W` per line (t from 0, strictly increasing; '#' comments; optional header).
    #[arg(long, value_name = "FILE", conflicts_with_all = ["kappa", "points", "spacing", "spacing_rel"])]
    pub driving: Option<PathBuf>,
    /// Write the points as CSV with header curve,index,t,x,y.
    #[arg(long, value_name = "FILE")]
    pub export_csv: Option<PathBuf>,
    /// Write curves, driving functions and settings as one JSON record.
    #[arg(long, value_name = "FILE")]
    pub export_json: Option<PathBuf>,
    /// Draw the curves (.svg or .png).
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
}

#[derive(Args, Debug)]
#[command(allow_negative_numbers = true)]
pub struct LawsArgs {
    /// κ > 0.
    #[arg(long, short, value_parser = parse_kappa)]
    pub kappa: f64,
    /// Point x,y of the upper half-plane for Schramm's left-passage probability (repeatable;
    /// default 1,1).
    #[arg(long, value_parser = parse_point, allow_hyphen_values = true, value_name = "X,Y")]
    pub at: Vec<(f64, f64)>,
    /// λ for the CLE moment E[CR^λ] (repeatable; default 0.5, 1, 2, and −λ*/4).
    #[arg(long, value_parser = parse_finite, allow_hyphen_values = true, value_name = "L")]
    pub lambda: Vec<f64>,
}

#[derive(Args, Debug)]
#[command(allow_negative_numbers = true)]
pub struct AuditArgs {
    /// Curves per κ for the statistical checks (standard errors shrink like 1/√samples).
    #[arg(long, short = 'm', default_value = "4000", value_parser = parse_count)]
    pub samples: u64,
    /// Relative capacity step Δt/t of the geometric base grid (steps are then bisected where a
    /// point needs it; see --point-step).
    #[arg(long, default_value = "0.1", value_parser = parse_fraction)]
    pub ratio: f64,
    /// Point-adaptive step bound ε: steps are bisected by Brownian bridges until
    /// 2Δt ≤ ε·|g_t(z) − W_t|² for every point z not yet decided (smaller is finer and slower).
    #[arg(long, default_value = "0.1", value_parser = parse_fraction)]
    pub point_step: f64,
    /// Capacity time at which curves stop (the bias this leaves is reported).
    #[arg(long, default_value = "10000", value_parser = parse_positive)]
    pub horizon: f64,
    /// κ values for left passage, each in (0, 8) (repeatable; default 2, 8/3, 4).
    #[arg(long, short, value_parser = parse_kappa)]
    pub kappa: Vec<f64>,
    /// Points x,y for left passage (repeatable; default 1,1  -0.5,1  2,0.5).
    #[arg(long, value_parser = parse_point, allow_hyphen_values = true, value_name = "X,Y")]
    pub at: Vec<(f64, f64)>,
    /// Slit shape of each step.
    #[arg(long, value_enum, default_value = "tilted")]
    pub step: StepArg,
    /// Deviation (in standard errors) beyond which a statistical check fails.
    #[arg(long, default_value = "4", value_parser = parse_positive)]
    pub sigma_limit: f64,
    /// κ values for the CLE conformal-radius checks, each in (8/3, 8) (repeatable; default 3
    /// and 6).
    #[arg(long, value_parser = parse_kappa)]
    pub cle_kappa: Vec<f64>,
    /// CLE configurations per κ (3 marked points each; the step study uses twice as many
    /// single-point explorations); 0 skips the CLE checks.
    #[arg(long, default_value = "2000")]
    pub cle_samples: u64,
}

#[derive(Args, Debug)]
#[command(allow_negative_numbers = true)]
pub struct RadiiArgs {
    #[command(flatten)]
    pub run: RunArgs,
    /// κ, 8/3 < κ < 8.
    #[arg(long, short, value_parser = parse_kappa)]
    pub kappa: f64,
    /// Marked point x,y with x² + y² < 1 (repeatable; default 0,0).
    #[arg(long, value_parser = parse_point, allow_hyphen_values = true, value_name = "X,Y")]
    pub at: Vec<(f64, f64)>,
    /// Configurations (samples), at least 2; every point is in each of them.
    #[arg(long, short = 'm', default_value = "2000", value_parser = parse_count)]
    pub samples: u64,
    /// Nested loops to find around each point (at most 1000).
    #[arg(long, short = 'l', default_value = "2", value_parser = parse_count)]
    pub levels: u64,
    /// Largest step of the angle process, in the driving point's own radial time, in
    /// [1e-6, 0.1] (the bias in E[T] measured at 0.04…0.005 is below 1% at κ = 3 and 6; see the
    /// README).
    #[arg(long, default_value = "0.01", value_parser = parse_positive)]
    pub step: f64,
    /// λ for E[CR^λ] (repeatable; each > −λ*; default 0.5, 1, 2 and −λ*/4).
    #[arg(long, value_parser = parse_finite, allow_hyphen_values = true, value_name = "L")]
    pub lambda: Vec<f64>,
    /// s = log(1/ε) for the nesting counts N(s) = #{k : T_k ≤ s} (repeatable; default 2.5 and
    /// 5; a count needs enough --levels to be exact, and the output says when it is not).
    #[arg(long, value_parser = parse_positive, value_name = "S")]
    pub nesting_at: Vec<f64>,
    /// Write every loop as CSV: sample,point,x,y,level,loop,log_cr.
    #[arg(long, value_name = "FILE")]
    pub export_csv: Option<PathBuf>,
    /// Draw the level-1 law at each point against the exact one (.svg or .png): histograms of T
    /// beside the exact density, and E[CR^λ] beside the exact curve.
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
}

#[derive(Args, Debug)]
pub struct LoopsArgs {
    /// κ, 8/3 < κ < 8 (fractions such as 16/3 are accepted).
    #[arg(long, short, value_parser = parse_kappa)]
    pub kappa: f64,
    /// ε: loops of diameter at least this are kept, 0.01 ≤ ε ≤ 1 (the work grows faster than
    /// 1/ε²).
    #[arg(long, default_value = "0.1", value_parser = parse_positive)]
    pub min_size: f64,
    /// Resolution of the traces: consecutive points at most about 1.5 spacings apart (a median
    /// 0.06 spacings), ε/50 ≤ spacing ≤ ε/2 (default ε/6). The
    /// traces carry kinks about one spacing long (the steps' slits start where the driving
    /// point is, not at the last tip), which show at κ ≤ 4: for figures use ε/12 or finer
    /// (measured at κ = 3, ε = 0.2: about 5× the time of ε/6).
    #[arg(long, value_parser = parse_positive)]
    pub spacing: Option<f64>,
    /// Step shape. vertical: slits at the driving point (default). tilted (experimental):
    /// slits that continue from the last tip, without the kinks; at κ = 3, ε = 0.2 the loops
    /// look like SLE_3 loops at the default spacing, in 2–4× the time; a region whose tip
    /// loses precision ends early (README, "Accuracy and limitations").
    #[arg(long, value_enum, default_value = "vertical")]
    pub steps: StepShapeArg,
    /// Marked point x,y with x² + y² < 1 (repeatable): the loops around it are listed and drawn
    /// thicker.
    #[arg(long, value_parser = parse_point, allow_hyphen_values = true, value_name = "X,Y")]
    pub at: Vec<(f64, f64)>,
    /// Write the configuration as JSON: kappa, seed, min_size, settings, resolution and the
    /// loops (id, parent, depth, points [[x, y], …], diameter, log_cr, seen_from).
    #[arg(long, value_name = "FILE")]
    pub export_json: Option<PathBuf>,
    /// Write every loop vertex as CSV: loop,parent,depth,vertex,x,y.
    #[arg(long, value_name = "FILE")]
    pub export_csv: Option<PathBuf>,
    /// Draw the configuration (.svg or .png): loops coloured by depth with a legend, the unit
    /// circle, κ, seed and ε in the caption.
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    /// Outline only, or interiors filled with a light tint of the depth's colour.
    #[arg(long, value_enum, default_value = "outline")]
    pub style: LoopStyleArg,
}

#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum StepShapeArg {
    /// Vertical slits at the driving point.
    Vertical,
    /// Tilted slits from the last tip (experimental).
    Tilted,
}

#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum LoopStyleArg {
    /// Outlines only.
    Outline,
    /// Interiors filled (deeper loops on top), outlines over them.
    Filled,
}

fn parse_f64(s: &str) -> Result<f64, String> {
    s.trim()
        .parse::<f64>()
        .map_err(|_| "expected a number".to_string())
}

/// κ: a finite number > 0 (fractions such as 8/3 are accepted).
pub fn parse_kappa(s: &str) -> Result<f64, String> {
    let v = match s.split_once('/') {
        Some((a, b)) => {
            let (a, b) = (parse_f64(a)?, parse_f64(b)?);
            a / b
        }
        None => parse_f64(s)?,
    };
    if v.is_finite() && v > 0.0 {
        Ok(v)
    } else {
        Err("κ must be a finite number > 0".into())
    }
}

/// A finite number > 0.
pub fn parse_positive(s: &str) -> Result<f64, String> {
    let v = parse_f64(s)?;
    if v.is_finite() && v > 0.0 {
        Ok(v)
    } else {
        Err("must be a finite number > 0".into())
    }
}

/// A finite number.
pub fn parse_finite(s: &str) -> Result<f64, String> {
    let v = parse_f64(s)?;
    if v.is_finite() {
        Ok(v)
    } else {
        Err("must be a finite number".into())
    }
}

/// A number in (0, 1].
pub fn parse_fraction(s: &str) -> Result<f64, String> {
    let v = parse_f64(s)?;
    if v.is_finite() && v > 0.0 && v <= 1.0 {
        Ok(v)
    } else {
        Err("must be a number in (0, 1]".into())
    }
}

/// An integer ≥ 1.
pub fn parse_count(s: &str) -> Result<u64, String> {
    match s.trim().parse::<u64>() {
        Ok(0) => Err("must be an integer ≥ 1".into()),
        Ok(v) => Ok(v),
        Err(_) => Err("must be an integer ≥ 1".into()),
    }
}

/// A point `x,y` with finite coordinates (negative values allowed).
pub fn parse_point(s: &str) -> Result<(f64, f64), String> {
    let (a, b) = s
        .split_once(',')
        .ok_or_else(|| "expected a point written x,y".to_string())?;
    let x = parse_f64(a).map_err(|_| "expected a point written x,y".to_string())?;
    let y = parse_f64(b).map_err(|_| "expected a point written x,y".to_string())?;
    if x.is_finite() && y.is_finite() {
        Ok((x, y))
    } else {
        Err("coordinates must be finite".into())
    }
}
