//! Fuzzing every input parser: curve files (`measure --curve/--polygon/--loops`), driving-function
//! files (`trace --driving`), run manifests and sample journals (`--resume`, `merge`), and the
//! shard option. No input may panic, hang or produce an accepted value that breaks the parser's
//! own contract (finite numbers, increasing times, indices in range).
//!
//! Two campaigns per parser, both seeded:
//! - a mutation fuzzer (byte flips, insertions of hostile tokens, splices of valid inputs),
//!   `SLEEK_FUZZ_EXECS` executions per parser (default 50 000; the closing notes quote longer
//!   campaigns), each in `catch_unwind` so a panic names its input;
//! - proptest strategies over structured inputs (numbers of every kind, separators, nesting).

use proptest::prelude::*;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use sleek::curve::parse_curves;
use sleek::io::read_driving;
use sleek::journal::{parse_journal, Manifest, Shard};
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::time::{Duration, Instant};

const TOKENS: &[&str] = &[
    "nan",
    "NaN",
    "inf",
    "-inf",
    "1e309",
    "-1e309",
    "1e-320",
    "-0",
    "0",
    "1",
    "-1",
    "0.5",
    "1e18",
    "18446744073709551616",
    "-9223372036854775809",
    ",",
    ";",
    "\t",
    " ",
    "\n",
    "\r\n",
    "#",
    "[",
    "]",
    "{",
    "}",
    "\"",
    ":",
    "null",
    "true",
    "\"i\":",
    "\"d\":",
    "\"curves\":",
    "\"points\":",
    "[[",
    "]]",
    "\u{feff}",
    "\u{0}",
    "é",
    "1/2",
    "3/0",
    "0/0",
    "x,y",
    "t,w",
    "\"shard\":",
    "\"samples\":",
    "{\"index\":0,\"count\":0}",
    "99999999999999999999",
];

const SEEDS_CURVES: &[&str] = &[
    "x,y\n0,0\n0.1,0.2\n0.2,0.5\n",
    "curve,x,y\na,0,0\na,1,1\nb,0,0\nb,-1,2\n",
    "[[0,0],[0.5,0.5],[1,2]]",
    "{\"curves\":[[[0,0],[1,1]],[[0,0],[2,3]]]}",
    "{\"points\":[[0,0],[1e-3,1]]}",
    "# comment\n0;0\n1\t1\n",
];

const SEEDS_DRIVING: &[&str] = &[
    "t,w\n0,0\n0.5,0.1\n1,-0.2\n",
    "# c\n0 0\n1e-3;1\n2\t-3 # tail\n",
    "0,0\n0.25,0.5\n",
];

fn seed_manifest() -> String {
    let m = Manifest::new(
        "radii",
        7,
        10,
        Shard { index: 2, count: 3 },
        serde_json::json!({"kappa": 3.0, "points": [[0.0, 0.0]]}),
    );
    serde_json::to_string_pretty(&m).unwrap()
}

const SEED_JOURNAL: &str = "{\"i\":3,\"d\":{\"steps\":5,\"points\":[]}}\n{\"i\":5,\"d\":[1.5,2]}\n";

/// One mutation of `base`: flips, deletions, token insertions, or a splice with another seed.
fn mutate(rng: &mut ChaCha8Rng, base: &[u8], others: &[Vec<u8>]) -> Vec<u8> {
    let mut v = base.to_vec();
    let rounds = rng.random_range(1..8);
    for _ in 0..rounds {
        let pos = if v.is_empty() {
            0
        } else {
            rng.random_range(0..=v.len())
        };
        match rng.random_range(0..6) {
            0 if !v.is_empty() => {
                let p = pos.min(v.len() - 1);
                v[p] ^= 1 << rng.random_range(0..8);
            }
            1 if !v.is_empty() => {
                let end = (pos + rng.random_range(1..6)).min(v.len());
                v.drain(pos.min(end)..end);
            }
            2 | 3 => {
                let t = TOKENS[rng.random_range(0..TOKENS.len())].as_bytes();
                v.splice(pos..pos, t.iter().copied());
            }
            4 => {
                let o = &others[rng.random_range(0..others.len())];
                let cut = rng.random_range(0..=o.len());
                v.truncate(pos);
                v.extend_from_slice(&o[cut..]);
            }
            _ => {
                let b: u8 = rng.random();
                v.insert(pos, b);
            }
        }
    }
    v
}

fn executions() -> usize {
    std::env::var("SLEEK_FUZZ_EXECS")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(50_000)
}

/// Run `check` on `executions()` mutated inputs; a panic, or an input that takes longer than 10 s
/// (a hang detector: inputs of a few hundred bytes take microseconds), fails the test with the
/// input shown.
fn campaign(name: &str, seeds: &[Vec<u8>], seed: u64, check: impl Fn(&[u8])) {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let n = executions();
    let start = Instant::now();
    let mut slowest = Duration::ZERO;
    for k in 0..n {
        let base = &seeds[k % seeds.len()];
        let input = mutate(&mut rng, base, seeds);
        let t0 = Instant::now();
        let r = catch_unwind(AssertUnwindSafe(|| check(&input)));
        let dt = t0.elapsed();
        slowest = slowest.max(dt);
        assert!(
            r.is_ok(),
            "{name}: execution {k} panicked on input {:?}",
            String::from_utf8_lossy(&input)
        );
        assert!(
            dt < Duration::from_secs(10),
            "{name}: execution {k} took {dt:?} on input {:?}",
            String::from_utf8_lossy(&input)
        );
    }
    eprintln!(
        "{name}: {n} executions in {:.2} s, slowest {:.1} ms, no panic",
        start.elapsed().as_secs_f64(),
        slowest.as_secs_f64() * 1e3
    );
}

fn check_curves(bytes: &[u8]) {
    let text = String::from_utf8_lossy(bytes);
    if let Ok(curves) = parse_curves(&text) {
        assert!(!curves.is_empty());
        for c in &curves {
            assert!(c.iter().all(|z| z.re.is_finite() && z.im.is_finite()));
        }
    }
}

fn check_driving(bytes: &[u8]) {
    if let Ok(d) = read_driving(bytes) {
        let t = d.times();
        assert_eq!(t[0], 0.0);
        assert!(t.windows(2).all(|p| p[1] > p[0]));
        assert!(d.values().iter().all(|w| w.is_finite()));
    }
}

fn check_manifest(bytes: &[u8]) {
    let text = String::from_utf8_lossy(bytes);
    if let Ok(m) = Manifest::parse(&text, "fuzz") {
        assert!(m.shard.index >= 1 && m.shard.index <= m.shard.count);
        let r = m.range();
        assert!(r.start <= r.end && r.end <= m.samples);
    }
    if let Ok(s) = Shard::parse(&text) {
        assert!(s.index >= 1 && s.index <= s.count);
    }
}

fn check_journal(bytes: &[u8]) {
    if let Ok(j) = parse_journal(bytes, 0..10, "fuzz") {
        assert!(j.samples.keys().all(|i| *i < 10));
        assert!(j.valid_len as usize <= bytes.len());
        // What was accepted is well-formed JSON and survives a round trip.
        let text = sleek::journal::journal_text(&j.samples);
        let again = parse_journal(text.as_bytes(), 0..10, "again").unwrap();
        assert_eq!(again.samples, j.samples);
    }
}

fn to_bytes(v: &[&str]) -> Vec<Vec<u8>> {
    v.iter().map(|s| s.as_bytes().to_vec()).collect()
}

#[test]
fn mutation_campaign_curve_files() {
    campaign("curve files", &to_bytes(SEEDS_CURVES), 1, check_curves);
}

#[test]
fn mutation_campaign_driving_files() {
    campaign("driving files", &to_bytes(SEEDS_DRIVING), 2, check_driving);
}

#[test]
fn mutation_campaign_manifests_and_shards() {
    let seeds = vec![
        seed_manifest().into_bytes(),
        b"3/8".to_vec(),
        b" 1/1 ".to_vec(),
    ];
    campaign("manifests and --shard", &seeds, 3, check_manifest);
}

#[test]
fn mutation_campaign_journals() {
    campaign("journals", &to_bytes(&[SEED_JOURNAL]), 4, check_journal);
}

#[test]
fn oversized_inputs_are_refused_not_swallowed() {
    // A driving file of one endless line (as /dev/zero would give) stops at the line cap.
    let long = vec![b'1'; sleek::io::MAX_DRIVING_LINE + 10];
    let e = read_driving(&long[..]).unwrap_err().to_string();
    assert!(e.contains("longer than"), "{e}");
    // A line of exactly the cap, newline excluded, is still read.
    let mut at_cap = format!("0,{}\n", "0".repeat(sleek::io::MAX_DRIVING_LINE - 2)).into_bytes();
    at_cap.extend_from_slice(b"1,1\n");
    assert!(read_driving(&at_cap[..]).is_ok());
    // A journal line beyond its cap is refused rather than read on (checked with a reader that
    // would go on forever).
    struct Endless;
    impl std::io::Read for Endless {
        fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
            buf.fill(b'7');
            Ok(buf.len())
        }
    }
    let e = parse_journal(Endless, 0..10, "endless")
        .unwrap_err()
        .to_string();
    assert!(e.contains("longer than"), "{e}");
    // Deeply nested JSON is an error, not a stack overflow.
    let deep = "[".repeat(100_000);
    assert!(parse_curves(&deep).is_err());
    assert!(Manifest::parse(&deep, "deep").is_err());
    let line = format!("{{\"i\":1,\"d\":{deep}}}\n");
    assert!(parse_journal(line.as_bytes(), 0..10, "deep").is_err());
}

fn number() -> impl Strategy<Value = String> {
    prop_oneof![
        any::<f64>().prop_map(|x| format!("{x}")),
        any::<f64>().prop_map(|x| format!("{x:e}")),
        any::<i64>().prop_map(|x| x.to_string()),
        Just("nan".to_string()),
        Just("-inf".to_string()),
        "[0-9eE+.-]{1,12}",
    ]
}

fn separator() -> impl Strategy<Value = String> {
    prop_oneof![
        Just(",".to_string()),
        Just(";".to_string()),
        Just("\t".to_string()),
        Just(" ".to_string()),
        Just(", ".to_string()),
        Just("".to_string()),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig {
        cases: 1000,
        failure_persistence: None,
        ..ProptestConfig::default()
    })]

    #[test]
    fn structured_driving_files(rows in prop::collection::vec((number(), separator(), number()), 0..40),
                                header in any::<bool>()) {
        let mut text = String::new();
        if header { text.push_str("t,w\n"); }
        for (a, s, b) in &rows { text.push_str(&format!("{a}{s}{b}\n")); }
        check_driving(text.as_bytes());
    }

    #[test]
    fn structured_curve_files(rows in prop::collection::vec((prop::option::of("[a-c0-9]{1,2}"), number(), separator(), number()), 0..40),
                              json in any::<bool>()) {
        let text = if json {
            let pts: Vec<String> = rows.iter().map(|(_, a, _, b)| format!("[{a},{b}]")).collect();
            format!("[{}]", pts.join(","))
        } else {
            rows.iter().map(|(id, a, s, b)| match id {
                Some(id) => format!("{id},{a}{s}{b}\n"),
                None => format!("{a}{s}{b}\n"),
            }).collect()
        };
        check_curves(text.as_bytes());
    }

    #[test]
    fn structured_journals(lines in prop::collection::vec((any::<u8>(), number(), any::<bool>()), 0..30),
                           cut in any::<bool>()) {
        let mut text = String::new();
        for (i, d, obj) in &lines {
            if *obj {
                text.push_str(&format!("{{\"i\":{},\"d\":{{\"x\":{d}}}}}\n", i % 12));
            } else {
                text.push_str(&format!("{{\"i\":{},\"d\":[{d}]}}\n", i % 12));
            }
        }
        if cut && !text.is_empty() { text.pop(); text.pop(); }
        check_journal(text.as_bytes());
    }

    #[test]
    fn structured_shards(k in any::<i64>(), m in any::<i64>(), sep in "[/ ,]{1,2}") {
        check_manifest(format!("{k}{sep}{m}").as_bytes());
    }
}
