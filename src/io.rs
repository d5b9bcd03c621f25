//! Reading and writing data: driving-function files, trace exports (CSV and JSON), atomic files.
//!
//! Every export is checked for non-finite numbers before it is written, and files are written
//! atomically (a temporary file in the same folder, then a rename), so an interrupted run never
//! leaves a half-written file behind.

use crate::domain::ChordalDomain;
use crate::driving::DrivingFunction;
use crate::error::{Error, Result};
use crate::sle::ChordalCurve;
use serde::Serialize;
use std::io::{BufRead, Read, Write};
use std::path::Path;

/// Version of the JSON layouts written by this crate (bumped on incompatible changes).
pub const FORMAT_VERSION: u32 = 1;

/// Largest driving-function file accepted, in samples (keeps memory bounded on bad input).
pub const MAX_DRIVING_SAMPLES: usize = 50_000_000;

/// Longest line accepted in a driving-function file, in bytes.
pub const MAX_DRIVING_LINE: usize = 4096;

/// Parse a driving function from text: one sample `t,W` per line (comma, semicolon, tab or spaces
/// between the two numbers), `#` starts a comment, and a first line that is not numeric is taken
/// as a header. Times must start at 0 and increase strictly.
///
/// # Errors
/// [`Error::InvalidData`] naming the line that cannot be read (including a line longer than
/// [`MAX_DRIVING_LINE`] bytes, or more than [`MAX_DRIVING_SAMPLES`] samples), or the rule a
/// sample breaks.
pub fn read_driving(mut reader: impl BufRead) -> Result<DrivingFunction> {
    let mut t = Vec::new();
    let mut w = Vec::new();
    let mut seen_data = false;
    let mut buf = Vec::new();
    for i in 0usize.. {
        buf.clear();
        let n = (&mut reader)
            .take(MAX_DRIVING_LINE as u64 + 2)
            .read_until(b'\n', &mut buf)
            .map_err(|e| Error::InvalidData(format!("line {}: {e}", i + 1)))?;
        if n == 0 {
            break;
        }
        // The cap counts the line without its newline.
        if n - usize::from(buf.last() == Some(&b'\n')) > MAX_DRIVING_LINE {
            return Err(Error::InvalidData(format!(
                "line {}: longer than {MAX_DRIVING_LINE} bytes (expected 't,W')",
                i + 1
            )));
        }
        let line = std::str::from_utf8(&buf)
            .map_err(|_| Error::InvalidData(format!("line {}: not UTF-8 text", i + 1)))?;
        let body = line.split('#').next().unwrap_or("").trim();
        if body.is_empty() {
            continue;
        }
        let fields: Vec<&str> = body
            .split(|c: char| c == ',' || c == ';' || c.is_whitespace())
            .filter(|f| !f.is_empty())
            .collect();
        let parsed: Option<(f64, f64)> = match fields.as_slice() {
            [a, b] => a.parse().ok().zip(b.parse().ok()),
            _ => None,
        };
        match parsed {
            Some((a, b)) => {
                seen_data = true;
                if t.len() >= MAX_DRIVING_SAMPLES {
                    return Err(Error::InvalidData(format!(
                        "more than {MAX_DRIVING_SAMPLES} samples; split the file"
                    )));
                }
                t.push(a);
                w.push(b);
            }
            None if !seen_data
                && t.is_empty()
                && fields.iter().all(|f| f.parse::<f64>().is_err()) =>
            {
                // A header line such as "t,w".
                seen_data = true;
            }
            None => {
                let shown: String = body.chars().take(60).collect();
                return Err(Error::InvalidData(format!(
                    "line {}: expected two numbers 't,W', found '{shown}'",
                    i + 1
                )));
            }
        }
    }
    DrivingFunction::new(t, w)
}

/// Write `bytes` to `path` atomically (temporary file in the same folder, then rename); a
/// target that is not a regular file is written in place.
///
/// # Errors
/// Any I/O error, with the path in the message.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    // A target that exists and is not a regular file (a device, a pipe, a symbolic link) is
    // written in place: renaming over it would replace it.
    if let Ok(meta) = std::fs::symlink_metadata(path) {
        if !meta.file_type().is_file() {
            let mut f = std::fs::OpenOptions::new()
                .write(true)
                .truncate(true)
                .open(path)?;
            f.write_all(bytes)?;
            return f.flush();
        }
    }
    let dir = path.parent().filter(|p| !p.as_os_str().is_empty());
    if let Some(d) = dir {
        std::fs::create_dir_all(d)?;
    }
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "out".into());
    let tmp = match dir {
        Some(d) => d.join(format!(".{name}.tmp-{}", std::process::id())),
        None => Path::new(&format!(".{name}.tmp-{}", std::process::id())).to_path_buf(),
    };
    {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all().ok();
    }
    std::fs::rename(&tmp, path).inspect_err(|_| {
        let _ = std::fs::remove_file(&tmp);
    })
}

/// Settings of a trace run, recorded in every export.
#[derive(Debug, Clone, Serialize)]
pub struct TraceSettings {
    /// κ (0 for a user-given driving function).
    pub kappa: Option<f64>,
    /// Seed of the run (absent for a user-given driving function).
    pub seed: Option<u64>,
    /// Final capacity time t (hcap = 2t).
    pub time: f64,
    /// Step kind (`vertical` or `tilted`).
    pub step: &'static str,
    /// Trace method.
    pub method: &'static str,
    /// Resolution, as a short human-readable description.
    pub resolution: String,
    /// The resolution settings, machine-readable (absent for a user-given driving function).
    pub resolution_settings: Option<crate::sle::Resolution>,
    /// Domain the points are given in.
    pub domain: &'static str,
    /// Where the driving function came from (`brownian` or the file name).
    pub driving_source: String,
}

#[derive(Serialize)]
struct CurveRecord<'a> {
    curve: u64,
    samples: usize,
    max_spacing_in_h: f64,
    target_met: bool,
    depth_limited_steps: usize,
    t: &'a [f64],
    w: &'a [f64],
    x: Vec<f64>,
    y: Vec<f64>,
}

#[derive(Serialize)]
struct TraceRecord<'a> {
    format: &'static str,
    format_version: u32,
    sleek_version: &'static str,
    convention: &'static str,
    #[serde(flatten)]
    settings: &'a TraceSettings,
    curves: Vec<CurveRecord<'a>>,
}

fn check_finite(curves: &[ChordalCurve], domain: ChordalDomain) -> Result<()> {
    for c in curves {
        for (k, z) in c
            .points
            .iter()
            .enumerate()
            .skip(domain.first_finite_index())
        {
            let m = domain.map(*z);
            if !(m.re.is_finite() && m.im.is_finite()) {
                return Err(Error::Numerical(format!(
                    "curve {} point {k} is not finite ({m}); nothing was written",
                    c.index
                )));
            }
        }
    }
    Ok(())
}

/// Write curves as CSV with header `curve,index,t,x,y` (points in `domain`; in the strip the
/// start point, at −∞, is left out).
///
/// # Errors
/// A non-finite point (nothing is written then) or an I/O error.
pub fn write_trace_csv(
    out: &mut impl Write,
    curves: &[ChordalCurve],
    domain: ChordalDomain,
) -> Result<()> {
    check_finite(curves, domain)?;
    let io = |e: std::io::Error| Error::Output(format!("writing CSV: {e}"));
    writeln!(out, "curve,index,t,x,y").map_err(io)?;
    for c in curves {
        let first = domain.first_finite_index();
        for (k, (z, t)) in c
            .points
            .iter()
            .zip(c.driving.times())
            .enumerate()
            .skip(first)
        {
            let m = domain.map(*z);
            writeln!(out, "{},{k},{t:e},{:e},{:e}", c.index, m.re, m.im).map_err(io)?;
        }
    }
    Ok(())
}

/// Write curves and their settings as one JSON record (see README, "Output formats").
///
/// # Errors
/// A non-finite point (nothing is written then) or a serialisation error.
pub fn write_trace_json(
    out: &mut impl Write,
    curves: &[ChordalCurve],
    settings: &TraceSettings,
    domain: ChordalDomain,
) -> Result<()> {
    check_finite(curves, domain)?;
    let record = TraceRecord {
        format: "sleek/trace",
        format_version: FORMAT_VERSION,
        sleek_version: env!("CARGO_PKG_VERSION"),
        convention: "chordal Loewner equation in H, dg/dt = 2/(g - W), hcap(K_t) = 2t; \
                     x, y are the trace points mapped into the domain",
        settings,
        curves: curves
            .iter()
            .map(|c| {
                let first = domain.first_finite_index();
                let mapped: Vec<_> = c.points[first..].iter().map(|z| domain.map(*z)).collect();
                CurveRecord {
                    curve: c.index,
                    samples: mapped.len(),
                    max_spacing_in_h: c.max_spacing,
                    target_met: c.target_met,
                    depth_limited_steps: c.depth_limited,
                    t: &c.driving.times()[first..],
                    w: &c.driving.values()[first..],
                    x: mapped.iter().map(|z| z.re).collect(),
                    y: mapped.iter().map(|z| z.im).collect(),
                }
            })
            .collect(),
    };
    serde_json::to_writer_pretty(&mut *out, &record)
        .map_err(|e| Error::Output(format!("writing JSON: {e}")))?;
    writeln!(out).map_err(|e| Error::Output(format!("writing JSON: {e}")))?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parses_header_comments_and_separators() {
        let text = "# a comment\nt,w\n0,0\n0.5; 0.1\n1\t-0.2 # trailing\n";
        let d = read_driving(text.as_bytes()).unwrap();
        assert_eq!(d.times(), &[0.0, 0.5, 1.0]);
        assert_eq!(d.values(), &[0.0, 0.1, -0.2]);
    }

    #[test]
    fn reports_the_bad_line() {
        let e = read_driving("0,0\n0.5,abc\n".as_bytes()).unwrap_err();
        assert!(e.to_string().contains("line 2"), "{e}");
        let e = read_driving("0,0\n0.5\n".as_bytes()).unwrap_err();
        assert!(e.to_string().contains("line 2"), "{e}");
        assert!(read_driving("".as_bytes()).is_err());
        assert!(read_driving("0,0\n0,1\n".as_bytes()).is_err());
    }
}
