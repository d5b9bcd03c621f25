//! Long runs on a cluster or a laptop: shards merged equal the whole run byte for byte, a run
//! killed mid-way and resumed equals an uninterrupted one, the thread count changes nothing, and
//! every misuse of shards, merges and resumes gets a one-line error.

use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

fn bin() -> PathBuf {
    assert_cmd::cargo::cargo_bin("sleek")
}

/// Run sleek quietly; return (exit code, stdout, stderr).
fn run_in(args: &[&str], threads: Option<usize>) -> (i32, String, String) {
    let mut c = Command::new(bin());
    c.args(args).arg("--quiet");
    if let Some(t) = threads {
        c.env("RAYON_NUM_THREADS", t.to_string());
    }
    let out = c.output().unwrap();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn ok(args: &[&str]) -> String {
    let (code, out, err) = run_in(args, None);
    assert_eq!(code, 0, "{args:?}: exit {code}: {err}");
    out
}

/// Every file of `a` has a namesake in `b` with the same bytes, and the two hold the same names.
fn same_folders(a: &Path, b: &Path) {
    let names = |d: &Path| {
        let mut v: Vec<String> = std::fs::read_dir(d)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        v.sort();
        v
    };
    let (na, nb) = (names(a), names(b));
    assert_eq!(
        na,
        nb,
        "{} and {} hold different files",
        a.display(),
        b.display()
    );
    assert!(na.len() >= 3, "too few files: {na:?}");
    for n in &na {
        let (x, y) = (
            std::fs::read(a.join(n)).unwrap(),
            std::fs::read(b.join(n)).unwrap(),
        );
        assert!(
            x == y,
            "{n} differs between {} and {}",
            a.display(),
            b.display()
        );
    }
}

/// `text` with every wall-clock time " in 1.23 s" removed (run-time fields may differ).
fn without_timings(text: &str) -> String {
    let mut out = String::new();
    let mut rest = text;
    while let Some(k) = rest.find(" in ") {
        let after = &rest[k + 4..];
        let digits = after
            .find(|c: char| !(c.is_ascii_digit() || c == '.'))
            .unwrap_or(after.len());
        if digits > 0 && after[digits..].starts_with(" s") {
            out.push_str(&rest[..k]);
            rest = &after[digits + 2..];
        } else {
            out.push_str(&rest[..k + 4]);
            rest = after;
        }
    }
    out.push_str(rest);
    out
}

fn with_out(base: &[&str], dir: &Path, extra: &[&str]) -> Vec<String> {
    let mut v: Vec<String> = base.iter().map(|s| s.to_string()).collect();
    v.push("--out".into());
    v.push(dir.display().to_string());
    v.extend(extra.iter().map(|s| s.to_string()));
    v
}

fn strs(v: &[String]) -> Vec<&str> {
    v.iter().map(String::as_str).collect()
}

/// The whole run, at 1 and at 2 threads, and M shards merged (in scrambled order) write the
/// same files.
fn shards_merge_to_the_whole_run(base: &[&str], shards: u64) {
    let tmp = tempfile::tempdir().unwrap();
    let whole = tmp.path().join("whole");
    let (code, out1, err) = run_in(&strs(&with_out(base, &whole, &[])), Some(1));
    assert_eq!(code, 0, "{err}");
    let whole2 = tmp.path().join("whole2");
    let (code, out2, err) = run_in(&strs(&with_out(base, &whole2, &[])), Some(2));
    assert_eq!(code, 0, "{err}");
    same_folders(&whole, &whole2);
    // The printed summaries agree too, apart from the folder names and wall-clock times.
    assert_eq!(
        without_timings(&out1.replace(&whole.display().to_string(), "D")),
        without_timings(&out2.replace(&whole2.display().to_string(), "D"))
    );
    let mut parts = Vec::new();
    for k in (1..=shards).rev() {
        let d = tmp.path().join(format!("part{k}"));
        let s = format!("{k}/{shards}");
        ok(&strs(&with_out(base, &d, &["--shard", &s])));
        parts.push(d.display().to_string());
    }
    let merged = tmp.path().join("merged");
    let mut args = vec!["merge".to_string()];
    args.extend(parts);
    args.push("--out".into());
    args.push(merged.display().to_string());
    ok(&strs(&args));
    same_folders(&whole, &merged);
}

#[test]
fn radii_shards_merge_to_the_whole_run() {
    shards_merge_to_the_whole_run(
        &[
            "radii", "-k", "6", "-m", "300", "--at", "0.2,-0.1", "--at", "0,0", "--seed", "11",
        ],
        3,
    );
}

#[test]
fn trace_shards_merge_to_the_whole_run() {
    shards_merge_to_the_whole_run(&["trace", "-k", "8/3", "-n", "5", "--seed", "4"], 2);
    shards_merge_to_the_whole_run(
        &[
            "trace",
            "-k",
            "4",
            "--domain",
            "disk-radial",
            "-n",
            "3",
            "--points",
            "500",
            "--seed",
            "4",
        ],
        3,
    );
}

#[test]
fn lattice_shards_merge_to_the_whole_run() {
    shards_merge_to_the_whole_run(
        &[
            "lattice",
            "--model",
            "percolation",
            "--radius",
            "30",
            "-n",
            "7",
            "--seed",
            "2",
        ],
        2,
    );
}

/// Wait until the journal of `dir` holds at least one complete line (or the process ends).
fn wait_for_journal(dir: &Path, child: &mut std::process::Child) {
    let start = Instant::now();
    loop {
        let lines = std::fs::read(dir.join("samples.jsonl"))
            .map(|b| b.iter().filter(|&&c| c == b'\n').count())
            .unwrap_or(0);
        if lines > 0 || start.elapsed() > Duration::from_secs(120) {
            return;
        }
        if let Ok(Some(_)) = child.try_wait() {
            return;
        }
        std::thread::sleep(Duration::from_millis(20));
    }
}

fn journal_lines(dir: &Path) -> usize {
    std::fs::read(dir.join("samples.jsonl"))
        .map(|b| b.iter().filter(|&&c| c == b'\n').count())
        .unwrap_or(0)
}

#[test]
fn killed_and_resumed_runs_equal_the_uninterrupted_run() {
    // 12000 configurations at κ = 6 take a few seconds on 2 cores: long enough to be caught.
    let base = ["radii", "-k", "6", "-m", "12000", "--seed", "21"];
    let tmp = tempfile::tempdir().unwrap();
    let whole = tmp.path().join("whole");
    ok(&strs(&with_out(&base, &whole, &[])));

    for signal in ["TERM", "KILL"] {
        let dir = tmp.path().join(format!("cut-{signal}"));
        let mut child = Command::new(bin())
            .args(strs(&with_out(&base, &dir, &["--quiet"])))
            .stdout(Stdio::null())
            .stderr(Stdio::piped())
            .spawn()
            .unwrap();
        wait_for_journal(&dir, &mut child);
        let status = Command::new("kill")
            .arg(format!("-{signal}"))
            .arg(child.id().to_string())
            .status()
            .unwrap();
        assert!(status.success());
        let out = child.wait_with_output().unwrap();
        let err = String::from_utf8_lossy(&out.stderr);
        let manifest = std::fs::read_to_string(dir.join("run.json")).unwrap();
        let done = journal_lines(&dir);
        // The interruption really cut the run short.
        assert!(
            done > 0 && done < 12000,
            "{signal}: {done} samples journaled"
        );
        if signal == "TERM" {
            assert_eq!(out.status.code(), Some(130), "{err}");
            assert!(
                manifest.contains("\"state\": \"interrupted\""),
                "{manifest}"
            );
            assert!(err.contains("--resume"), "{err}");
            // A crash of the machine can leave zero-filled blocks: a damaged line that the
            // resume drops (with a warning), running its samples again.
            use std::io::Write;
            let mut f = std::fs::OpenOptions::new()
                .append(true)
                .open(dir.join("samples.jsonl"))
                .unwrap();
            f.write_all(b"\0\0\0\0\n{\"i\":5,\"d\":1}\n").unwrap();
        } else {
            assert!(manifest.contains("\"state\": \"running\""), "{manifest}");
            // A kill can cut a line mid-way: add one by hand so the resume must drop it.
            use std::io::Write;
            let mut f = std::fs::OpenOptions::new()
                .append(true)
                .open(dir.join("samples.jsonl"))
                .unwrap();
            f.write_all(b"{\"i\":11999,\"d\":{\"steps\":12,\"po")
                .unwrap();
        }
        // A fresh run on the unfinished folder is refused: work is not thrown away silently.
        let (code, _, e) = run_in(&strs(&with_out(&base, &dir, &[])), None);
        assert_eq!(code, 2, "{e}");
        assert!(e.contains("unfinished") && e.contains("--resume"), "{e}");
        let (code, _, e) = run_in(&strs(&with_out(&base, &dir, &["--resume"])), None);
        assert_eq!(code, 0, "{e}");
        assert_eq!(e.contains("damaged"), signal == "TERM", "{e}");
        same_folders(&whole, &dir);
    }
}

fn usage_error(args: &[&str], mention: &[&str]) {
    let (code, _, err) = run_in(args, None);
    assert!(code == 2 || code == 1, "{args:?}: exit {code}: {err}");
    assert_eq!(err.trim_end().lines().count(), 1, "{args:?}: {err}");
    assert!(err.starts_with("sleek: error: "), "{err}");
    assert!(!err.contains("panicked"), "{err}");
    for m in mention {
        assert!(err.contains(m), "{args:?}: '{m}' missing from: {err}");
    }
}

#[test]
fn misuse_of_shards_merges_and_resumes_is_refused_on_one_line() {
    let tmp = tempfile::tempdir().unwrap();
    let d = |n: &str| tmp.path().join(n).display().to_string();
    let base = ["radii", "-k", "3", "-m", "40", "--seed", "1"];
    usage_error(
        &["radii", "-k", "3", "-m", "40", "--shard", "1/2"],
        &["--out"],
    );
    usage_error(
        &[
            "radii",
            "-k",
            "3",
            "-m",
            "40",
            "--shard",
            "1/2",
            "--out",
            &d("x"),
        ],
        &["--seed"],
    );
    usage_error(
        &[&base[..], &["--shard", "3/2", "--out", &d("x")]].concat(),
        &["3/2"],
    );
    usage_error(
        &[&base[..], &["--shard", "1/41", "--out", &d("x")]].concat(),
        &["40"],
    );
    usage_error(
        &[
            &base[..],
            &["--shard", "1/2", "--out", &d("x"), "--plot", &d("p.svg")],
        ]
        .concat(),
        &["--plot", "sleek merge"],
    );
    usage_error(
        &[&base[..], &["--resume", "--out", &d("none")]].concat(),
        &["holds no run"],
    );
    ok(&[&base[..], &["--shard", "1/2", "--out", &d("a1")]].concat());
    ok(&[&base[..], &["--shard", "2/2", "--out", &d("a2")]].concat());
    ok(&[
        "radii",
        "-k",
        "3",
        "-m",
        "40",
        "--seed",
        "2",
        "--shard",
        "2/2",
        "--out",
        &d("b2"),
    ]);
    ok(&[
        "radii",
        "-k",
        "3",
        "-m",
        "40",
        "--seed",
        "1",
        "--shard",
        "2/3",
        "--out",
        &d("c2"),
    ]);
    usage_error(
        &["merge", &d("a1"), "--out", &d("m")],
        &["1 of 2 shards missing", "2/2"],
    );
    usage_error(
        &["merge", &d("a1"), &d("a1"), "--out", &d("m")],
        &["given twice"],
    );
    usage_error(
        &["merge", &d("a1"), &d("b2"), "--out", &d("m")],
        &["seed 1 vs 2"],
    );
    usage_error(
        &["merge", &d("a1"), &d("c2"), "--out", &d("m")],
        &["same --shard"],
    );
    usage_error(
        &["merge", &d("a1"), &d("none"), "--out", &d("m")],
        &["holds no run"],
    );
    usage_error(&["merge", &d("a1"), &d("a2")], &["--out"]);
    usage_error(
        &["merge", &d("a1"), &d("a2"), "--out", &d("a1")],
        &["one of the parts"],
    );
    // Resuming with other settings names the first difference.
    usage_error(
        &[
            "radii",
            "-k",
            "4",
            "-m",
            "40",
            "--seed",
            "1",
            "--shard",
            "1/2",
            "--resume",
            "--out",
            &d("a1"),
        ],
        &["different run", "kappa"],
    );
    // A damaged journal is named with its line.
    let j = tmp.path().join("a2").join("samples.jsonl");
    let text = std::fs::read_to_string(&j).unwrap();
    std::fs::write(&j, text.replacen("{\"i\":", "{\"j\":", 1)).unwrap();
    usage_error(
        &["merge", &d("a1"), &d("a2"), "--out", &d("m")],
        &["line 1"],
    );
    // An incomplete shard is refused.
    std::fs::write(&j, text.lines().next().unwrap().to_string() + "\n").unwrap();
    usage_error(
        &["merge", &d("a1"), &d("a2"), "--out", &d("m")],
        &["holds 1 of its 20"],
    );
    std::fs::write(&j, &text).unwrap();
    ok(&["merge", &d("a1"), &d("a2"), "--out", &d("m")]);
}

#[test]
fn progress_bars_stay_silent_when_stderr_is_not_a_terminal() {
    // stderr is a pipe here: only the notes may appear, never a bar (no carriage returns, no
    // bar characters, no rate/ETA text).
    let tmp = tempfile::tempdir().unwrap();
    let out = Command::new(bin())
        .args(["radii", "-k", "6", "-m", "3000", "--seed", "5", "--out"])
        .arg(tmp.path().join("r"))
        .output()
        .unwrap();
    assert!(out.status.success());
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        !err.contains('\r') && !err.contains("eta") && !err.contains("=>"),
        "{err}"
    );
    assert!(err.lines().all(|l| l.starts_with("sleek: ")), "{err}");
    // --quiet removes the notes as well.
    let out = Command::new(bin())
        .args([
            "radii", "-k", "6", "-m", "300", "--seed", "5", "--quiet", "--out",
        ])
        .arg(tmp.path().join("q"))
        .output()
        .unwrap();
    assert!(out.status.success());
    assert!(
        out.stderr.is_empty(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}
