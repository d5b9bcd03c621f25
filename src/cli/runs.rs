//! Journaled sampling runs shared by every sampling command: `--out DIR` makes the folder a run
//! folder (manifest + sample journal, see `sleek::journal`), `--shard K/M` runs a share of the
//! samples, `--resume` continues an interrupted run, and Ctrl-C / SIGTERM stop cleanly with
//! every finished sample saved.

use super::args::{Global, RunArgs};
use super::common::{note, progress, resolve_seed, write_file};
use super::Failure;
use rayon::prelude::*;
use serde::de::DeserializeOwned;
use serde::Serialize;
use sleek::journal::{self, Journal, Manifest, RunState, SampleLog, Shard};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Mutex, Once};
use std::time::Duration;

/// Set by the signal handler: no new sample starts once it is set.
static STOP: AtomicBool = AtomicBool::new(false);
static HANDLER: Once = Once::new();

/// How often the journal is flushed to disk while a run goes on.
const FLUSH_INTERVAL: Duration = Duration::from_millis(500);

/// Catch SIGINT, SIGTERM and SIGHUP: the first asks the run to stop after the samples in
/// progress; a second ends the process at once (exit 130).
fn install_handler() {
    HANDLER.call_once(|| {
        let r = ctrlc::set_handler(|| {
            if STOP.swap(true, Ordering::SeqCst) {
                std::process::exit(130);
            }
            eprintln!(
                "sleek: stopping: finishing the samples in progress and saving the journal \
                 (signal again to quit at once)"
            );
        });
        if let Err(e) = r {
            super::common::warn(&format!(
                "cannot catch Ctrl-C ({e}); an interrupted run keeps what was flushed"
            ));
        }
    });
}

/// Refuses a second process on the same run folder (created exclusively; holds `host:pid`);
/// removed when dropped.
struct Lock(PathBuf);

impl Lock {
    fn take(dir: &Path) -> Result<Lock, Failure> {
        let path = dir.join("run.lock");
        let me = format!("{}:{}", host_name(), std::process::id());
        let io =
            |e: std::io::Error| Failure::Runtime(format!("cannot write {}: {e}", path.display()));
        for _ in 0..2 {
            match std::fs::OpenOptions::new()
                .write(true)
                .create_new(true)
                .open(&path)
            {
                Ok(mut f) => {
                    use std::io::Write;
                    f.write_all(format!("{me}\n").as_bytes()).map_err(io)?;
                    return Ok(Lock(path));
                }
                Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => {
                    let owner = std::fs::read_to_string(&path).unwrap_or_default();
                    let owner = owner.trim();
                    let (host, pid) = owner.rsplit_once(':').unwrap_or(("", owner));
                    let alive = match pid.parse::<u32>() {
                        // A process of this machine: alive while /proc has it.
                        Ok(pid) if host == host_name() => {
                            Path::new(&format!("/proc/{pid}")).exists()
                        }
                        // Another machine (a shared file system): assume it is alive.
                        Ok(_) => true,
                        Err(_) => false,
                    };
                    if alive {
                        return Err(Failure::Runtime(format!(
                            "{} is in use by process {owner} (if it is not, remove {})",
                            dir.display(),
                            path.display()
                        )));
                    }
                    // A stale lock left by a killed run: take it over.
                    std::fs::remove_file(&path).map_err(io)?;
                }
                Err(e) => return Err(io(e)),
            }
        }
        Err(Failure::Runtime(format!(
            "cannot take the lock {} (another process keeps creating it)",
            path.display()
        )))
    }
}

/// This machine's name (for lock files on shared file systems).
fn host_name() -> String {
    std::fs::read_to_string("/proc/sys/kernel/hostname")
        .map(|s| s.trim().to_string())
        .unwrap_or_else(|_| "localhost".into())
}

impl Drop for Lock {
    fn drop(&mut self) {
        let _ = std::fs::remove_file(&self.0);
    }
}

struct Journaled {
    dir: PathBuf,
    manifest: Manifest,
    /// Indices already in the journal when the run started (resumed runs).
    done: std::collections::BTreeSet<u64>,
    log: SampleLog,
    _lock: Lock,
}

/// A sampling run about to start: its seed, and its journal when it has a run folder.
pub struct Plan {
    /// The seed of the run.
    pub seed: u64,
    samples: u64,
    journal: Option<Journaled>,
}

/// What [`execute`] produced.
pub enum Outcome<T> {
    /// Every sample of the run, in index order.
    All(Vec<T>),
    /// This shard is complete; its folder waits for `sleek merge`.
    ShardDone,
}

/// Decide how the run goes: in memory (no `--out`), or journaled in the `--out` folder, fresh,
/// as a shard, or resumed. `outputs` are the file names the command writes in its folder (removed
/// when a new run replaces a finished one).
pub fn plan<S: Serialize>(
    g: &Global,
    r: &RunArgs,
    command: &str,
    samples: u64,
    settings: &S,
    outputs: &[String],
) -> Result<Plan, Failure> {
    let Some(dir) = g.out.clone() else {
        if r.shard.is_some() || r.resume {
            return Err(Failure::Usage(
                "--shard and --resume need --out DIR (the folder that holds the run)".into(),
            ));
        }
        return Ok(Plan {
            seed: resolve_seed(g),
            samples,
            journal: None,
        });
    };
    if r.shard.is_some() && g.seed.is_none() && !r.resume {
        return Err(Failure::Usage(
            "--shard needs --seed N: every shard of a run must use the same seed".into(),
        ));
    }
    if let Some(s) = r.shard {
        if s.count > samples {
            return Err(Failure::Usage(format!(
                "invalid value '{s}' for '--shard <K/M>': at most as many shards as samples \
                 ({samples})"
            )));
        }
    }
    let settings = serde_json::to_value(settings)
        .map_err(|e| Failure::Runtime(format!("cannot encode the settings: {e}")))?;
    std::fs::create_dir_all(&dir)
        .map_err(|e| Failure::Runtime(format!("cannot create {}: {e}", dir.display())))?;
    let lock = Lock::take(&dir)?;
    let existing = Manifest::read(&dir)?;
    let (manifest, journal) = if r.resume {
        let Some(old) = existing else {
            return Err(Failure::Usage(format!(
                "--resume: {} holds no run (no {})",
                dir.display(),
                journal::MANIFEST
            )));
        };
        let seed = g.seed.unwrap_or(old.seed);
        let shard = r.shard.unwrap_or(old.shard);
        let mut m = Manifest::new(command, seed, samples, shard, settings);
        if let Err(d) = old.same_run(&m) {
            return Err(Failure::Usage(format!(
                "--resume: {} holds a different run ({d}); give the same options as the run \
                 you resume",
                dir.display()
            )));
        }
        if shard != old.shard {
            return Err(Failure::Usage(format!(
                "--resume: {} holds shard {}, not {shard}",
                dir.display(),
                old.shard
            )));
        }
        let j = journal::read_journal_with(&dir, m.range(), true)?;
        if let Some(line) = j.damaged_at {
            super::common::warn(&format!(
                "{}: line {line} is damaged (a crash of the machine?); it and the lines after it \
                 are dropped and their samples run again",
                dir.join(journal::SAMPLES).display()
            ));
        }
        note(
            g,
            &format!(
                "resuming {}: {} of {} samples already done{}",
                dir.display(),
                j.samples.len(),
                m.range().end - m.range().start,
                if j.partial_tail {
                    " (a line cut by the interruption was dropped)"
                } else {
                    ""
                }
            ),
        );
        m.state = RunState::Running;
        (m, j)
    } else {
        if let Some(old) = &existing {
            if old.state != RunState::Complete {
                let done = journal::read_journal(&dir, old.range())
                    .map(|j| format!("{} of {} samples", j.samples.len(), old.range().count()))
                    .unwrap_or_else(|_| "a damaged journal".into());
                return Err(Failure::Usage(format!(
                    "{} holds an unfinished {} run ({done}, state {}); continue it with \
                     --resume, or remove {} to start again",
                    dir.display(),
                    old.command,
                    old.state,
                    dir.join(journal::MANIFEST).display()
                )));
            }
        }
        // Starting afresh over a finished run: its summary files go with its journal, so the
        // folder never shows results of another run beside this one's journal.
        if existing.is_some() {
            for name in outputs {
                let p = dir.join(name);
                if p.is_file() {
                    std::fs::remove_file(&p).map_err(|e| {
                        Failure::Runtime(format!("cannot remove {}: {e}", p.display()))
                    })?;
                }
            }
        }
        let seed = resolve_seed(g);
        let m = Manifest::new(
            command,
            seed,
            samples,
            r.shard.unwrap_or(Shard::WHOLE),
            settings,
        );
        (m, Journal::default())
    };
    manifest.write(&dir)?;
    let log = SampleLog::open(&dir, journal.valid_len, FLUSH_INTERVAL)?;
    Ok(Plan {
        seed: manifest.seed,
        samples,
        journal: Some(Journaled {
            done: journal.samples.keys().copied().collect(),
            dir,
            manifest,
            log,
            _lock: lock,
        }),
    })
}

/// Parse journal data back into samples (in index order).
pub fn parse_samples<T: DeserializeOwned>(
    samples: &BTreeMap<u64, String>,
    origin: &Path,
) -> Result<Vec<T>, Failure> {
    samples
        .iter()
        .map(|(i, d)| {
            serde_json::from_str(d).map_err(|e| {
                Failure::Runtime(format!(
                    "{}: sample {i} does not fit this command ({e})",
                    origin.display()
                ))
            })
        })
        .collect()
}

/// Run `f` on every sample index of the plan (in parallel; each sample is a pure function of its
/// index). Journaled runs append each finished sample, skip those already done, stop cleanly on
/// a signal (exit 130, journal saved) and end with the journal rewritten in index order.
pub fn execute<T, F>(g: &Global, plan: &mut Plan, what: &str, f: F) -> Result<Outcome<T>, Failure>
where
    T: Serialize + DeserializeOwned + Send,
    F: Fn(u64) -> T + Sync,
{
    let Some(j) = plan.journal.as_mut() else {
        let pb = progress(g, plan.samples, what);
        let v: Vec<T> = (0..plan.samples)
            .into_par_iter()
            .map(|i| {
                let t = f(i);
                pb.inc(1);
                t
            })
            .collect();
        pb.finish_and_clear();
        return Ok(Outcome::All(v));
    };
    install_handler();
    let range = j.manifest.range();
    let total = range.end - range.start;
    let todo: Vec<u64> = range.filter(|i| !j.done.contains(i)).collect();
    let pb = progress(g, total, what);
    pb.set_position(j.done.len() as u64);
    let failure: Mutex<Option<sleek::Error>> = Mutex::new(None);
    let failed = AtomicBool::new(false);
    todo.par_iter().for_each(|&i| {
        if STOP.load(Ordering::Relaxed) || failed.load(Ordering::Relaxed) {
            return;
        }
        let t = f(i);
        match j.log.append(i, &t) {
            Ok(()) => pb.inc(1),
            Err(e) => {
                failed.store(true, Ordering::Relaxed);
                if let Ok(mut slot) = failure.lock() {
                    slot.get_or_insert(e);
                }
            }
        }
    });
    pb.finish_and_clear();
    j.log.flush()?;
    let failure = failure.into_inner().ok().flatten();
    if failure.is_some() || STOP.load(Ordering::SeqCst) {
        j.manifest.state = RunState::Interrupted;
        j.manifest.write(&j.dir)?;
        let saved = journal::read_journal(&j.dir, j.manifest.range())
            .map(|x| x.samples.len())
            .unwrap_or(0);
        let msg = format!(
            "{saved} of {total} samples are saved in {}; continue with the same command and \
             --resume",
            j.dir.display()
        );
        return Err(match failure {
            Some(sleek::Error::Numerical(e)) => Failure::Runtime(format!(
                "{e}: a sample is a pure function of the seed and its index, so resuming would \
                 meet it again; please report it with the command line ({saved} of {total} \
                 samples are saved in {})",
                j.dir.display()
            )),
            Some(e) => Failure::Runtime(format!("{e}; {msg}")),
            None => Failure::Interrupted(format!("stopped by a signal: {msg}")),
        });
    }
    let all = journal::read_journal(&j.dir, j.manifest.range())?;
    if all.samples.len() as u64 != total {
        return Err(Failure::Runtime(format!(
            "{}: {} of {total} samples in the journal after the run (was the folder changed by \
             another process?)",
            j.dir.display(),
            all.samples.len()
        )));
    }
    write_file(
        &j.dir.join(journal::SAMPLES),
        journal::journal_text(&all.samples).as_bytes(),
    )?;
    j.manifest.state = RunState::Complete;
    j.manifest.write(&j.dir)?;
    if !j.manifest.shard.is_whole() {
        let r = j.manifest.range();
        note(
            g,
            &format!(
                "shard {} complete: samples {}..{} in {}; when every shard is done, run \
                 'sleek merge DIR… --out DIR' on their folders",
                j.manifest.shard,
                r.start,
                r.end,
                j.dir.display()
            ),
        );
        return Ok(Outcome::ShardDone);
    }
    Ok(Outcome::All(parse_samples(&all.samples, &j.dir)?))
}

/// The run folder of a journaled run (for the standard output files).
pub fn folder(plan: &Plan) -> Option<&Path> {
    plan.journal.as_ref().map(|j| j.dir.as_path())
}

/// Refuse export options with --shard: a shard has only part of the samples; the merged folder
/// holds the figures and files of the whole run.
pub fn no_exports_with_shard(r: &RunArgs, exports: &[(&str, bool)]) -> Result<(), Failure> {
    if r.shard.is_some() {
        if let Some((name, _)) = exports.iter().find(|(_, given)| *given) {
            return Err(Failure::Usage(format!(
                "{name} cannot be used with --shard: a shard holds part of the samples; \
                 `sleek merge` writes the whole run's files into its --out folder"
            )));
        }
    }
    Ok(())
}
