//! Helpers shared by the commands: seeds, progress bars, notes on stderr, file writing.

use super::args::Global;
use super::Failure;
use indicatif::{ProgressBar, ProgressStyle};
use std::path::{Path, PathBuf};

/// The seed to use: the user's, or a fresh one (reported on stderr unless quiet).
pub fn resolve_seed(g: &Global) -> u64 {
    match g.seed {
        Some(s) => s,
        None => {
            let s = sleek::rng::fresh_seed();
            note(g, &format!("no --seed given; using --seed {s}"));
            s
        }
    }
}

/// A note on stderr (hidden with --quiet).
pub fn note(g: &Global, msg: &str) {
    if !g.quiet {
        eprintln!("sleek: {msg}");
    }
}

/// A warning on stderr (always shown).
pub fn warn(msg: &str) {
    eprintln!("sleek: warning: {msg}");
}

/// A progress bar on stderr: hidden with --quiet or when stderr is not a terminal.
pub fn progress(g: &Global, len: u64, what: &str) -> ProgressBar {
    if g.quiet {
        return ProgressBar::hidden();
    }
    let pb = ProgressBar::new(len);
    pb.set_style(
        ProgressStyle::with_template("{msg:>12} [{bar:30}] {pos}/{len} ({per_sec}, eta {eta})")
            .unwrap_or_else(|_| ProgressStyle::default_bar())
            .progress_chars("=> "),
    );
    pb.set_message(what.to_string());
    pb
}

/// Write bytes to a file atomically, with the path in any error.
pub fn write_file(path: &Path, bytes: &[u8]) -> Result<(), Failure> {
    sleek::io::write_atomic(path, bytes)
        .map_err(|e| Failure::Runtime(format!("cannot write {}: {e}", path.display())))
}

/// Refuse a plot file name that does not end in .svg or .png, before any work is done.
pub fn check_plot_path(p: Option<&Path>) -> Result<(), Failure> {
    if let Some(p) = p {
        let ext = p.extension().map(|e| e.to_string_lossy().to_lowercase());
        if !matches!(ext.as_deref(), Some("svg") | Some("png")) {
            return Err(Failure::Usage(format!(
                "--plot {}: the file name must end in .svg or .png",
                p.display()
            )));
        }
    }
    Ok(())
}

/// `dir/name` when an output folder is given.
pub fn in_out(g: &Global, name: &str) -> Option<PathBuf> {
    g.out.as_ref().map(|d| d.join(name))
}

/// Write one line to stdout; a closed pipe (e.g. `| head`) ends the program quietly, any other
/// failure is a runtime error.
pub fn emit(args: std::fmt::Arguments) -> Result<(), Failure> {
    use std::io::Write;
    let mut out = std::io::stdout().lock();
    out.write_fmt(args)
        .and_then(|_| out.write_all(b"\n"))
        .map_err(stdout_failure)
}

/// Classify a failure to write to stdout.
pub fn stdout_failure(e: std::io::Error) -> Failure {
    if e.kind() == std::io::ErrorKind::BrokenPipe {
        Failure::Quiet
    } else {
        Failure::Runtime(format!("cannot write to standard output: {e}"))
    }
}

/// `println!` that returns a [`Failure`] instead of panicking when stdout fails.
macro_rules! out {
    ($($t:tt)*) => {
        $crate::cli::common::emit(format_args!($($t)*))?
    };
}
pub(crate) use out;

/// Memory this machine has available now (`MemAvailable` of /proc/meminfo), in bytes; `None`
/// where it cannot be read.
pub fn available_memory() -> Option<f64> {
    let text = std::fs::read_to_string("/proc/meminfo").ok()?;
    let line = text.lines().find(|l| l.starts_with("MemAvailable:"))?;
    let kib: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kib * 1024.0)
}

/// Before a run: refuse one that needs more than 64 GiB, warn when it needs more than the memory
/// available now. `what` says what the estimate counts.
pub fn check_memory(bytes: f64, what: &str) -> Result<(), Failure> {
    const GIB: f64 = (1u64 << 30) as f64;
    if bytes > 64.0 * GIB {
        return Err(Failure::Usage(format!(
            "{what} need about {:.0} GiB of memory; the limit is 64 GiB: reduce the run, or split it into \
             runs with different --seed values (shards do not help: their merge holds the whole \
             run)",
            bytes / GIB
        )));
    }
    if let Some(avail) = available_memory() {
        if bytes > avail {
            warn(&format!(
                "{what} need about {:.1} GiB of memory but {:.1} GiB is available: the run may \
                 be killed",
                bytes / GIB,
                avail / GIB
            ));
        }
    }
    Ok(())
}

/// Encode a JSON export (pretty-printed), warning on stderr when a value is not finite: JSON
/// has no NaN, so such a value is written as `null`, and the warning names its field.
pub fn to_json<T: serde::Serialize>(value: &T, what: &str) -> Result<String, Failure> {
    warn_non_finite(value, what);
    serde_json::to_string_pretty(value)
        .map_err(|e| Failure::Runtime(format!("cannot encode {what} as JSON: {e}")))
}

/// Warn on stderr, naming the fields, when `value` holds a non-finite number. Call it on the
/// typed data before building a `serde_json::json!` record: the macro turns NaN into `null`
/// before any later check could see it.
pub fn warn_non_finite<T: serde::Serialize + ?Sized>(value: &T, what: &str) {
    let (bad, count) = sleek::finite::non_finite_fields(value, 3);
    if count > 0 {
        warn(&format!(
            "{what}: {count} value(s) not finite, written as null: {}{}",
            bad.join(", "),
            if count > bad.len() { ", …" } else { "" }
        ));
    }
}
