//! Journaled runs: the on-disk record that lets a sampling run be split into shards, merged,
//! interrupted and resumed without changing a byte of its results.
//!
//! A run folder holds
//! - [`MANIFEST`] (`run.json`): what the run is — command, settings, seed, number of samples,
//!   which shard of how many, and its state (`running`, `interrupted`, `complete`). Written
//!   atomically (temporary file, then rename).
//! - [`SAMPLES`] (`samples.jsonl`): one line per finished sample, `{"i":INDEX,"d":DATA}`, appended
//!   as samples finish and flushed at intervals; the data is the sample's raw result, from which
//!   every summary is recomputed. When a run (or a merge) completes, the lines are rewritten in
//!   index order, so a finished folder does not depend on the thread count or on how the work
//!   was split.
//!
//! Sample `i` of a run with seed `s` is a pure function of `(s, i)` (see [`crate::rng`]), and
//! floating-point numbers are written in their shortest round-trip form, so summaries computed
//! from a merged or resumed journal equal those of an uninterrupted run bit for bit.
//!
//! Every reader here is bounded: a manifest is at most [`MAX_MANIFEST_BYTES`], a sample line at
//! most [`MAX_LINE_BYTES`], a run at most [`MAX_SAMPLES`] samples and [`MAX_SHARDS`] shards.

use crate::error::{Error, Result};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::fs::File;
use std::io::{BufRead, BufReader, BufWriter, Read, Write};
use std::ops::Range;
use std::path::{Path, PathBuf};
use std::sync::Mutex;
use std::time::{Duration, Instant};

/// File name of the manifest in a run folder.
pub const MANIFEST: &str = "run.json";
/// File name of the sample journal in a run folder.
pub const SAMPLES: &str = "samples.jsonl";
/// The `format` field of a manifest.
pub const FORMAT: &str = "sleek/run";
/// Version of the manifest and journal layout.
pub const FORMAT_VERSION: u32 = 1;
/// Largest manifest read (bytes).
pub const MAX_MANIFEST_BYTES: u64 = 1 << 24;
/// Largest sample line read (bytes; a chordal curve of 2·10⁵ points takes about 10 MB).
pub const MAX_LINE_BYTES: usize = 1 << 28;
/// Largest number of samples in one run.
pub const MAX_SAMPLES: u64 = 1 << 40;
/// Largest number of shards.
pub const MAX_SHARDS: u64 = 1_000_000;

/// Shard `index` of `count` (1-based): the run's sample indices are cut into `count` contiguous
/// ranges of nearly equal length and this shard takes the `index`-th.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Shard {
    /// Which shard, 1 ≤ index ≤ count.
    pub index: u64,
    /// How many shards.
    pub count: u64,
}

impl Shard {
    /// The whole run as one shard.
    pub const WHOLE: Shard = Shard { index: 1, count: 1 };

    /// Parse `K/M` with 1 ≤ K ≤ M ≤ [`MAX_SHARDS`].
    ///
    /// # Errors
    /// A message naming the valid form and range.
    pub fn parse(s: &str) -> std::result::Result<Shard, String> {
        let bad = || format!("expected K/M with 1 ≤ K ≤ M ≤ {MAX_SHARDS} (e.g. 3/8)");
        let (k, m) = s.trim().split_once('/').ok_or_else(bad)?;
        let k: u64 = k.trim().parse().map_err(|_| bad())?;
        let m: u64 = m.trim().parse().map_err(|_| bad())?;
        if k == 0 || m == 0 || k > m || m > MAX_SHARDS {
            return Err(bad());
        }
        Ok(Shard { index: k, count: m })
    }

    /// The sample indices `[⌊(K−1)n/M⌋, ⌊Kn/M⌋)` of this shard in a run of `n` samples.
    pub fn range(&self, n: u64) -> Range<u64> {
        let cut = |k: u64| ((k as u128 * n as u128) / self.count as u128) as u64;
        cut(self.index - 1)..cut(self.index)
    }

    /// True for the whole run.
    pub fn is_whole(&self) -> bool {
        self.count == 1
    }
}

impl std::fmt::Display for RunState {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            RunState::Running => "running",
            RunState::Interrupted => "interrupted",
            RunState::Complete => "complete",
        })
    }
}

impl std::fmt::Display for Shard {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}/{}", self.index, self.count)
    }
}

/// How far a run folder got.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum RunState {
    /// Started (or killed without a chance to say so).
    Running,
    /// Stopped by a signal; the journal holds every finished sample.
    Interrupted,
    /// Every sample of the shard is in the journal (in index order).
    Complete,
}

/// The manifest `run.json` of a run folder.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Manifest {
    /// Always [`FORMAT`].
    pub format: String,
    /// Always [`FORMAT_VERSION`].
    pub format_version: u32,
    /// The sleek version that wrote the run; merges and resumes require the same.
    pub sleek_version: String,
    /// The sampling command (`trace`, `radial-trace`, `radii`, `lattice`).
    pub command: String,
    /// Seed of the run.
    pub seed: u64,
    /// Number of samples of the whole run (all shards).
    pub samples: u64,
    /// Which shard this folder holds.
    pub shard: Shard,
    /// State of the shard.
    pub state: RunState,
    /// The command's settings: everything that determines the samples and the summaries.
    pub settings: serde_json::Value,
}

impl Manifest {
    /// A new manifest in state `running` for this version of sleek.
    pub fn new(
        command: &str,
        seed: u64,
        samples: u64,
        shard: Shard,
        settings: serde_json::Value,
    ) -> Manifest {
        Manifest {
            format: FORMAT.into(),
            format_version: FORMAT_VERSION,
            sleek_version: env!("CARGO_PKG_VERSION").into(),
            command: command.into(),
            seed,
            samples,
            shard,
            state: RunState::Running,
            settings,
        }
    }

    /// The sample indices of this folder's shard.
    pub fn range(&self) -> Range<u64> {
        self.shard.range(self.samples)
    }

    /// Parse and validate a manifest's text (`origin` names it in errors).
    ///
    /// # Errors
    /// [`Error::InvalidData`] for malformed JSON, unknown or missing fields, another format or
    /// version, or values out of range.
    pub fn parse(text: &str, origin: &str) -> Result<Manifest> {
        let m: Manifest = serde_json::from_str(text)
            .map_err(|e| Error::InvalidData(format!("{origin}: not a sleek run manifest ({e})")))?;
        if m.format != FORMAT {
            return Err(Error::InvalidData(format!(
                "{origin}: format '{}' is not '{FORMAT}'",
                m.format
            )));
        }
        if m.format_version != FORMAT_VERSION {
            return Err(Error::InvalidData(format!(
                "{origin}: format version {} is not {FORMAT_VERSION}",
                m.format_version
            )));
        }
        if m.samples == 0 || m.samples > MAX_SAMPLES {
            return Err(Error::InvalidData(format!(
                "{origin}: samples {} out of range 1..={MAX_SAMPLES}",
                m.samples
            )));
        }
        let s = m.shard;
        if s.index == 0 || s.index > s.count || s.count > MAX_SHARDS {
            return Err(Error::InvalidData(format!(
                "{origin}: shard {}/{} out of range (1 ≤ K ≤ M ≤ {MAX_SHARDS})",
                s.index, s.count
            )));
        }
        if !m.settings.is_object() {
            return Err(Error::InvalidData(format!(
                "{origin}: settings must be a JSON object"
            )));
        }
        Ok(m)
    }

    /// Read `dir/run.json`, or `None` when the folder has none.
    ///
    /// # Errors
    /// An unreadable, oversized or invalid manifest.
    pub fn read(dir: &Path) -> Result<Option<Manifest>> {
        let path = dir.join(MANIFEST);
        let file = match File::open(&path) {
            Ok(f) => f,
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(None),
            Err(e) => {
                return Err(Error::Output(format!(
                    "cannot read {}: {e}",
                    path.display()
                )));
            }
        };
        let mut text = String::new();
        file.take(MAX_MANIFEST_BYTES + 1)
            .read_to_string(&mut text)
            .map_err(|e| Error::InvalidData(format!("{}: {e}", path.display())))?;
        if text.len() as u64 > MAX_MANIFEST_BYTES {
            return Err(Error::InvalidData(format!(
                "{}: larger than {MAX_MANIFEST_BYTES} bytes",
                path.display()
            )));
        }
        Manifest::parse(&text, &path.display().to_string()).map(Some)
    }

    /// Write `dir/run.json` atomically.
    ///
    /// # Errors
    /// An I/O failure.
    pub fn write(&self, dir: &Path) -> Result<()> {
        let path = dir.join(MANIFEST);
        let mut text = serde_json::to_string_pretty(self)
            .map_err(|e| Error::Output(format!("encoding {}: {e}", path.display())))?;
        text.push('\n');
        crate::io::write_atomic(&path, text.as_bytes())
            .map_err(|e| Error::Output(format!("cannot write {}: {e}", path.display())))
    }

    /// `Ok` when `other` describes the same run (command, version, seed, samples, settings);
    /// otherwise the first difference in words.
    pub fn same_run(&self, other: &Manifest) -> std::result::Result<(), String> {
        if self.command != other.command {
            return Err(format!("command {} vs {}", self.command, other.command));
        }
        if self.sleek_version != other.sleek_version {
            return Err(format!(
                "sleek version {} vs {}",
                self.sleek_version, other.sleek_version
            ));
        }
        if self.seed != other.seed {
            return Err(format!("seed {} vs {}", self.seed, other.seed));
        }
        if self.samples != other.samples {
            return Err(format!("samples {} vs {}", self.samples, other.samples));
        }
        if self.settings != other.settings {
            return Err(format!(
                "settings differ{}",
                first_difference(&self.settings, &other.settings, "")
                    .map(|d| format!(" ({d})"))
                    .unwrap_or_default()
            ));
        }
        Ok(())
    }
}

/// The first differing field of two JSON values, as `path: a vs b`.
fn first_difference(a: &serde_json::Value, b: &serde_json::Value, path: &str) -> Option<String> {
    use serde_json::Value;
    if a == b {
        return None;
    }
    match (a, b) {
        (Value::Object(x), Value::Object(y)) => {
            // Plain values first (κ before the nested settings derived from it).
            let mut keys: Vec<&String> = x.keys().collect();
            keys.sort_by_key(|k| x[*k].is_object() || x[*k].is_array());
            for k in keys {
                let va = &x[k];
                let p = if path.is_empty() {
                    k.clone()
                } else {
                    format!("{path}.{k}")
                };
                match y.get(k) {
                    Some(vb) => {
                        if let Some(d) = first_difference(va, vb, &p) {
                            return Some(d);
                        }
                    }
                    None => return Some(format!("{p}: {va} vs absent")),
                }
            }
            y.keys()
                .find(|k| !x.contains_key(*k))
                .map(|k| format!("{path}.{k}: absent vs {}", y[k]))
        }
        _ => {
            let (sa, sb) = (a.to_string(), b.to_string());
            let cut = |s: String| {
                if s.len() > 60 {
                    format!(
                        "{}…",
                        &s[..s.char_indices().nth(57).map_or(s.len(), |c| c.0)]
                    )
                } else {
                    s
                }
            };
            Some(format!(
                "{}: {} vs {}",
                if path.is_empty() { "value" } else { path },
                cut(sa),
                cut(sb)
            ))
        }
    }
}

/// One journal line: `{"i":INDEX,"d":DATA}`.
#[derive(Serialize)]
struct LineOut<'a, T: Serialize> {
    i: u64,
    d: &'a T,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct LineIn<'a> {
    i: u64,
    #[serde(borrow)]
    d: &'a serde_json::value::RawValue,
}

/// The journal of a shard as read back: the data of every finished sample, by index.
#[derive(Debug, Clone, Default)]
pub struct Journal {
    /// Raw JSON data of each finished sample, keyed by sample index.
    pub samples: BTreeMap<u64, String>,
    /// Length in bytes of the well-formed prefix of the file (a line cut by a kill is dropped).
    pub valid_len: u64,
    /// True when the file ended in a partial line (a run killed while writing).
    pub partial_tail: bool,
    /// With recovery: the first malformed line, where reading stopped.
    pub damaged_at: Option<u64>,
}

/// Parse a journal from a reader. Lines must be `{"i":INDEX,"d":DATA}` with INDEX in `range`,
/// no index twice, each at most [`MAX_LINE_BYTES`]. A last line without its newline is a line
/// cut by a kill: it is dropped and reported in [`Journal::partial_tail`].
///
/// # Errors
/// [`Error::InvalidData`] naming the line for a malformed line, an index out of range or
/// repeated, or an oversized line.
pub fn parse_journal(reader: impl Read, range: Range<u64>, origin: &str) -> Result<Journal> {
    parse_journal_with(reader, range, origin, false)
}

/// As [`parse_journal`], but a malformed line (as a machine crash can leave: zero-filled or cut
/// blocks) ends the journal instead of failing: the lines from there on are dropped and
/// [`Journal::damaged_at`] names the first of them. For resuming, which reruns what is dropped.
///
/// # Errors
/// As [`parse_journal`] for index problems before the damage.
pub fn parse_journal_recovering(
    reader: impl Read,
    range: Range<u64>,
    origin: &str,
) -> Result<Journal> {
    parse_journal_with(reader, range, origin, true)
}

fn parse_journal_with(
    reader: impl Read,
    range: Range<u64>,
    origin: &str,
    recover: bool,
) -> Result<Journal> {
    let mut r = BufReader::new(reader);
    let mut out = Journal::default();
    let mut buf = Vec::new();
    let mut line_no = 0u64;
    loop {
        buf.clear();
        let n = (&mut r)
            .take(MAX_LINE_BYTES as u64 + 2)
            .read_until(b'\n', &mut buf)
            .map_err(|e| Error::InvalidData(format!("{origin}: {e}")))?;
        if n == 0 {
            break;
        }
        line_no += 1;
        if buf.last() != Some(&b'\n') || n > MAX_LINE_BYTES + 1 {
            if n > MAX_LINE_BYTES {
                return Err(Error::InvalidData(format!(
                    "{origin} line {line_no}: longer than {MAX_LINE_BYTES} bytes"
                )));
            }
            out.partial_tail = true;
            break;
        }
        let parsed = std::str::from_utf8(&buf[..n - 1])
            .map_err(|_| format!("{origin} line {line_no}: not valid UTF-8"))
            .and_then(|text| {
                if text.trim().is_empty() {
                    return Ok(None);
                }
                serde_json::from_str::<LineIn>(text).map(Some).map_err(|e| {
                    format!(
                        "{origin} line {line_no}: not a sample line {{\"i\":INDEX,\"d\":DATA}} \
                         ({e})"
                    )
                })
            });
        let line = match parsed {
            Ok(Some(l)) => l,
            Ok(None) => {
                out.valid_len += n as u64;
                continue;
            }
            Err(_) if recover => {
                out.damaged_at = Some(line_no);
                break;
            }
            Err(m) => return Err(Error::InvalidData(m)),
        };
        if !range.contains(&line.i) {
            return Err(Error::InvalidData(format!(
                "{origin} line {line_no}: sample index {} outside this shard's range {}..{}",
                line.i, range.start, range.end
            )));
        }
        if out
            .samples
            .insert(line.i, line.d.get().to_string())
            .is_some()
        {
            return Err(Error::InvalidData(format!(
                "{origin} line {line_no}: sample {} appears twice",
                line.i
            )));
        }
        out.valid_len += n as u64;
    }
    Ok(out)
}

/// Read `dir/samples.jsonl` (an absent file is an empty journal); with `recover`, as
/// [`parse_journal_recovering`].
///
/// # Errors
/// As [`parse_journal`], or an unreadable file.
pub fn read_journal_with(dir: &Path, range: Range<u64>, recover: bool) -> Result<Journal> {
    let path = dir.join(SAMPLES);
    match File::open(&path) {
        Ok(f) => parse_journal_with(f, range, &path.display().to_string(), recover),
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(Journal::default()),
        Err(e) => Err(Error::Output(format!(
            "cannot read {}: {e}",
            path.display()
        ))),
    }
}

/// Read `dir/samples.jsonl` strictly (an absent file is an empty journal).
///
/// # Errors
/// As [`parse_journal`], or an unreadable file.
pub fn read_journal(dir: &Path, range: Range<u64>) -> Result<Journal> {
    read_journal_with(dir, range, false)
}

/// The journal text of finished samples in index order (what a complete folder holds).
pub fn journal_text(samples: &BTreeMap<u64, String>) -> String {
    let mut s = String::new();
    for (i, d) in samples {
        s.push_str("{\"i\":");
        s.push_str(&i.to_string());
        s.push_str(",\"d\":");
        s.push_str(d);
        s.push_str("}\n");
    }
    s
}

/// Appends finished samples to `samples.jsonl`, one line each, flushing at least every
/// `interval` (and always on [`SampleLog::flush`]). Safe to share between threads.
pub struct SampleLog {
    path: PathBuf,
    inner: Mutex<(BufWriter<File>, Instant)>,
    interval: Duration,
}

impl SampleLog {
    /// Open `dir/samples.jsonl` for appending after its first `valid_len` bytes (anything after
    /// them — a line cut by a kill — is cut off).
    ///
    /// # Errors
    /// An I/O failure.
    pub fn open(dir: &Path, valid_len: u64, interval: Duration) -> Result<SampleLog> {
        let path = dir.join(SAMPLES);
        let io = |e: std::io::Error| Error::Output(format!("cannot write {}: {e}", path.display()));
        {
            let f = std::fs::OpenOptions::new()
                .create(true)
                .truncate(false)
                .write(true)
                .open(&path)
                .map_err(io)?;
            f.set_len(valid_len).map_err(io)?;
        }
        // Append mode: every write lands at the end of the file, whatever else happened to it.
        let f = std::fs::OpenOptions::new()
            .append(true)
            .open(&path)
            .map_err(io)?;
        Ok(SampleLog {
            inner: Mutex::new((BufWriter::with_capacity(1 << 16, f), Instant::now())),
            path,
            interval,
        })
    }

    /// Append sample `i`. Its data must be finite everywhere (checked: a NaN would be written
    /// as `null` and lost).
    ///
    /// # Errors
    /// [`Error::Numerical`] for non-finite data (nothing written), or an I/O failure.
    pub fn append<T: Serialize>(&self, i: u64, data: &T) -> Result<()> {
        crate::finite::ensure_finite(data, &format!("sample {i}")).map_err(Error::Numerical)?;
        let mut line = serde_json::to_string(&LineOut { i, d: data })
            .map_err(|e| Error::Output(format!("encoding sample {i}: {e}")))?;
        line.push('\n');
        let io =
            |e: std::io::Error| Error::Output(format!("cannot write {}: {e}", self.path.display()));
        let mut g = self
            .inner
            .lock()
            .map_err(|_| Error::Output("journal lock poisoned".into()))?;
        g.0.write_all(line.as_bytes()).map_err(io)?;
        if g.1.elapsed() >= self.interval {
            // Flushed and synced, so a crash of the machine loses at most one interval.
            Self::sync(&mut g, &self.path)?;
        }
        Ok(())
    }

    /// Write everything buffered to the file.
    ///
    /// # Errors
    /// An I/O failure.
    pub fn flush(&self) -> Result<()> {
        let mut g = self
            .inner
            .lock()
            .map_err(|_| Error::Output("journal lock poisoned".into()))?;
        Self::sync(&mut g, &self.path)
    }

    fn sync(g: &mut (BufWriter<File>, Instant), path: &Path) -> Result<()> {
        let io = |e: std::io::Error| Error::Output(format!("cannot write {}: {e}", path.display()));
        g.0.flush().map_err(io)?;
        g.0.get_ref().sync_data().map_err(io)?;
        g.1 = Instant::now();
        Ok(())
    }
}

/// Shards of one run, checked for a merge: same run, disjoint, complete.
///
/// `parts` are the manifests and journals of the folders given, in any order. Returns the
/// manifest of the whole run (shard 1/1, complete) and every sample in index order.
///
/// # Errors
/// [`Error::InvalidData`] naming the folder for: an incomplete shard, parts of different runs
/// (the first difference is named), shard counts that differ, a shard given twice, a missing
/// shard, or a journal that lacks some of its shard's samples.
pub fn merge_parts(
    parts: Vec<(PathBuf, Manifest, Journal)>,
) -> Result<(Manifest, BTreeMap<u64, String>)> {
    let Some((dir0, first, _)) = parts.first() else {
        return Err(Error::InvalidData("nothing to merge".into()));
    };
    let (dir0, first) = (dir0.clone(), first.clone());
    let m = first.shard.count;
    let mut seen: BTreeMap<u64, PathBuf> = BTreeMap::new();
    let mut all = BTreeMap::new();
    for (dir, man, journal) in parts {
        if let Err(d) = first.same_run(&man) {
            return Err(Error::InvalidData(format!(
                "{} and {} are not parts of one run: {d}",
                dir0.display(),
                dir.display()
            )));
        }
        if man.shard.count != m {
            return Err(Error::InvalidData(format!(
                "{} is shard {} but {} is shard {}: every part must come from the same --shard K/{m}",
                dir.display(),
                man.shard,
                dir0.display(),
                first.shard
            )));
        }
        if let Some(other) = seen.get(&man.shard.index) {
            return Err(Error::InvalidData(format!(
                "shard {} is given twice ({} and {})",
                man.shard,
                other.display(),
                dir.display()
            )));
        }
        if man.state != RunState::Complete {
            return Err(Error::InvalidData(format!(
                "{} (shard {}) is not complete (state {}): finish it with --resume first",
                dir.display(),
                man.shard,
                man.state
            )));
        }
        let range = man.range();
        let have = journal.samples.len() as u64;
        if have != range.end - range.start {
            return Err(Error::InvalidData(format!(
                "{} (shard {}) holds {have} of its {} samples",
                dir.display(),
                man.shard,
                range.end - range.start
            )));
        }
        seen.insert(man.shard.index, dir);
        all.extend(journal.samples);
    }
    let missing: Vec<u64> = (1..=m).filter(|k| !seen.contains_key(k)).collect();
    if !missing.is_empty() {
        let list: Vec<String> = missing.iter().take(5).map(|k| format!("{k}/{m}")).collect();
        return Err(Error::InvalidData(format!(
            "{} of {m} shards missing: {}{}",
            missing.len(),
            list.join(", "),
            if missing.len() > 5 { ", …" } else { "" }
        )));
    }
    let mut whole = first;
    whole.shard = Shard::WHOLE;
    whole.state = RunState::Complete;
    Ok((whole, all))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shards_cut_the_indices_into_disjoint_complete_ranges() {
        for n in [1u64, 2, 7, 100, 1001] {
            for m in [1u64, 2, 3, 8, 13] {
                let mut next = 0;
                for k in 1..=m {
                    let r = Shard { index: k, count: m }.range(n);
                    assert_eq!(r.start, next);
                    next = r.end;
                }
                assert_eq!(next, n);
            }
        }
        assert_eq!(Shard::parse(" 3/8 "), Ok(Shard { index: 3, count: 8 }));
        for bad in ["0/3", "4/3", "3", "a/b", "1/0", "1/2000000", "-1/2", ""] {
            assert!(Shard::parse(bad).is_err(), "{bad}");
        }
    }

    #[test]
    fn journal_drops_a_cut_last_line_and_refuses_repeats() {
        let text = "{\"i\":3,\"d\":[1.5,2]}\n{\"i\":4,\"d\":{\"a\":1}}\n{\"i\":5,\"d\":[1";
        let j = parse_journal(text.as_bytes(), 0..10, "t").unwrap();
        assert_eq!(j.samples.len(), 2);
        assert!(j.partial_tail);
        assert_eq!(j.valid_len as usize, text.rfind('\n').unwrap() + 1);
        assert_eq!(j.samples[&3], "[1.5,2]");
        let twice = "{\"i\":3,\"d\":1}\n{\"i\":3,\"d\":1}\n";
        let e = parse_journal(twice.as_bytes(), 0..10, "t").unwrap_err();
        assert!(e.to_string().contains("line 2"), "{e}");
        let out = "{\"i\":30,\"d\":1}\n";
        assert!(parse_journal(out.as_bytes(), 0..10, "t").is_err());
        assert_eq!(
            journal_text(&j.samples),
            "{\"i\":3,\"d\":[1.5,2]}\n{\"i\":4,\"d\":{\"a\":1}}\n"
        );
    }

    #[test]
    fn recovery_stops_at_a_damaged_line_and_strict_reading_refuses_it() {
        let text = "{\"i\":1,\"d\":2}\n\0\0\0\n{\"i\":2,\"d\":3}\n";
        assert!(parse_journal(text.as_bytes(), 0..10, "t").is_err());
        let j = parse_journal_recovering(text.as_bytes(), 0..10, "t").unwrap();
        assert_eq!(j.damaged_at, Some(2));
        assert_eq!(j.samples.len(), 1);
        assert_eq!(j.valid_len as usize, text.find('\0').unwrap());
    }

    #[test]
    fn settings_differences_are_named() {
        let a = Manifest::new(
            "radii",
            1,
            10,
            Shard::WHOLE,
            serde_json::json!({"k": 3, "p": [1]}),
        );
        let mut b = a.clone();
        b.settings = serde_json::json!({"k": 3, "p": [2]});
        let d = a.same_run(&b).unwrap_err();
        assert!(d.contains("p: [1] vs [2]"), "{d}");
        let text = serde_json::to_string(&a).unwrap();
        assert_eq!(Manifest::parse(&text, "x").unwrap(), a);
        assert!(Manifest::parse(&text.replace("sleek/run", "other"), "x").is_err());
    }
}
