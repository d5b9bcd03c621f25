//! The measuring pipeline behind `sleek measure`: prepare each curve, unzip it, record
//! left-passage sides, and estimate κ two ways (DESIGN §9; estimators in [`crate::measure`]).
//!
//! Choices made for lattice curves, each reported in the result:
//! * curves longer than `max_points` are thinned (every k-th point kept);
//! * chordal curves in the disk are used for quadratic variation only while the map to H
//!   stretches lengths by at most `max_distortion` relative to the start (so the lattice scale
//!   stays uniform on the capacity clock); left passage uses the whole polyline, decided
//!   geometrically (winding number of the curve closed by the clockwise boundary arc);
//! * radial curves are used up to radial time `ln(1/(50 h))`, `h` the median segment length,
//!   so the remaining domain stays at least 50 segments across;
//! * the smallest default lag is `100 h²` (a slit 20 segments long), `h` the median segment in
//!   the unzipping frame (radial: at the last time used).

use crate::curve::{half_plane_to_disk, prepare_with, CurveDomain, PreparedCurve};
use crate::error::{Error, Result};
use crate::loewner::{Method, StepKind};
use crate::measure::{
    default_lags, estimate_kappa, left_passage_angles, left_passage_kappa, mean_step, DrivingData,
    KappaEstimate, KappaSettings, LeftPassageEstimate,
};
use crate::polygon::winding_number;
use crate::unzip::{unzip_radial, ChordalUnzip, Unzipped};
use num_complex::Complex64;
use rayon::prelude::*;
use serde::Serialize;

/// Which frame the curves are unzipped in.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Frame {
    /// Chordal in H from the real line to ∞.
    HalfPlane,
    /// Chordal in the unit disk to the boundary point at this angle (None: each curve's last
    /// point's angle).
    Disk(Option<f64>),
    /// Radial in the unit disk towards this interior point.
    DiskRadial((f64, f64)),
    /// Chordal in the polygon with these vertices, from the first point to `target` (None: the
    /// last point), both projected onto the boundary; mapped onto H by the zipper
    /// ([`crate::polygon::PolygonToHalfPlane`], 16 pieces per edge) with the polygon's vertex
    /// centroid (or the curve's middle point, when the centroid is outside) sent to modulus 1.
    /// The curve is used while lengths are stretched by at most `max_distortion` relative to
    /// its second point; no left-passage estimate in this frame (it needs the whole curve).
    Polygon {
        /// Vertices, in order (either orientation).
        vertices: Vec<(f64, f64)>,
        /// The target boundary point.
        target: Option<(f64, f64)>,
    },
}

/// Settings of a measurement.
#[derive(Debug, Clone, Serialize)]
pub struct MeasureSettings {
    /// The frame.
    pub frame: Frame,
    /// Slit shape of the unzip.
    pub slit: StepKind,
    /// Points this far outside the domain are moved onto its boundary.
    pub boundary_tolerance: f64,
    /// Curves longer than this are thinned.
    pub max_points: usize,
    /// Disk: largest length distortion of the map to H used for quadratic variation.
    pub max_distortion: f64,
    /// Smallest lag (None: 100 h²).
    pub min_lag: Option<f64>,
    /// Bootstrap replicates.
    pub bootstrap: usize,
    /// Confidence level.
    pub level: f64,
    /// Seed of the bootstrap.
    pub seed: u64,
}

/// One measured curve.
#[derive(Debug, Clone, Serialize)]
pub struct MeasuredCurve {
    /// Its name (file and position).
    pub name: String,
    /// Cleaning and framing.
    pub preparation: PreparedCurve,
    /// Thinning stride (1: none).
    pub stride: usize,
    /// The recovered driving function (the part used for quadratic variation).
    pub unzip: Unzipped,
    /// Left-passage observations (polar angle in H, passes left).
    #[serde(skip)]
    pub sides: Vec<(f64, bool)>,
    /// Median segment length in the unzipping frame (radial: at the last time used).
    pub spacing: f64,
}

/// Everything `measure` reports.
#[derive(Debug, Clone, Serialize)]
pub struct MeasureReport {
    /// The curves.
    pub curves: Vec<MeasuredCurve>,
    /// κ by quadratic variation.
    pub kappa: KappaEstimate,
    /// κ by left passage (chordal frames, two curves or more).
    pub left_passage: Option<LeftPassageEstimate>,
    /// Mean Loewner time per step.
    pub mean_step: f64,
    /// Median segment length used for the default lags.
    pub median_segment: f64,
}

impl MeasureReport {
    /// The driving functions as estimator input.
    pub fn driving_data(&self) -> Vec<DrivingData<'_>> {
        self.curves
            .iter()
            .map(|m| DrivingData {
                times: &m.unzip.times,
                values: &m.unzip.driving,
            })
            .collect()
    }
}

/// Measure named curves (see the module docs).
///
/// # Errors
/// [`Error::InvalidData`] naming the curve when it cannot be prepared or unzipped;
/// [`Error::InvalidParameter`] for bad settings (from the estimators).
pub fn measure_curves(
    inputs: &[(String, Vec<Complex64>)],
    a: &MeasureSettings,
) -> Result<MeasureReport> {
    measure_curves_with(inputs, a, &|| {})
}

/// As [`measure_curves`], calling `done` once per curve as its unzip finishes (from any thread;
/// for progress bars).
///
/// # Errors
/// As [`measure_curves`].
pub fn measure_curves_with(
    inputs: &[(String, Vec<Complex64>)],
    a: &MeasureSettings,
    done: &(dyn Fn() + Sync),
) -> Result<MeasureReport> {
    if inputs.is_empty() {
        return Err(Error::InvalidData("no curves to measure".into()));
    }
    let slit = a.slit;
    let name_err = |name: &str, e: Error| Error::InvalidData(format!("{name}: {e}"));
    let measured: Vec<Result<MeasuredCurve>> = inputs
        .par_iter()
        .map(|(name, pts)| {
            let polygon_points;
            let pts = if let Frame::Polygon { vertices, target } = &a.frame {
                let v: Vec<Complex64> = vertices
                    .iter()
                    .map(|&(x, y)| Complex64::new(x, y))
                    .collect();
                let start = pts[0];
                let end = target
                    .map(|(x, y)| Complex64::new(x, y))
                    .unwrap_or(pts[pts.len() - 1]);
                let centroid = v.iter().sum::<Complex64>() / v.len().max(1) as f64;
                let reference = if winding_number(&v, centroid) != 0 {
                    centroid
                } else {
                    pts[pts.len() / 2]
                };
                let map = crate::polygon::PolygonToHalfPlane::new(&v, start, end, reference, 16)
                    .map_err(|e| {
                        Error::InvalidData(format!("the domain's polygon ({name}): {e}"))
                    })?;
                let mut out = Vec::with_capacity(pts.len());
                out.push(Complex64::new(0.0, 0.0));
                let mut d_start = None;
                for (k, &z) in pts.iter().enumerate().skip(1) {
                    if z == end && k + 1 == pts.len() {
                        break; // the target itself goes to ∞
                    }
                    match map.map_with_derivative(z) {
                        Some((w, d)) => {
                            // As for the disk: stop where lengths are stretched by more than
                            // max_distortion relative to the start.
                            let d0 = *d_start.get_or_insert(d.norm());
                            if d.norm() > a.max_distortion * d0 {
                                break;
                            }
                            out.push(w)
                        }
                        None => {
                            return Err(Error::InvalidData(format!(
                                "{name}: point {k} = ({}, {}) is not inside the domain",
                                z.re, z.im
                            )))
                        }
                    }
                }
                polygon_points = out;
                &polygon_points
            } else {
                pts
            };
            let dom = match &a.frame {
                Frame::HalfPlane | Frame::Polygon { .. } => CurveDomain::HalfPlane,
                Frame::Disk(t) => CurveDomain::Disk {
                    target: t.unwrap_or_else(|| pts.last().map(|z| z.arg()).unwrap_or(0.0)),
                },
                Frame::DiskRadial(c) => CurveDomain::DiskRadial { target: *c },
            };
            let stride = pts.len().div_ceil(a.max_points.max(2)).max(1);
            let thinned: Vec<Complex64> = if stride > 1 {
                let mut v: Vec<Complex64> = pts.iter().step_by(stride).cloned().collect();
                if (pts.len() - 1) % stride != 0 {
                    v.push(pts[pts.len() - 1]);
                }
                v
            } else {
                pts.clone()
            };
            let pts = &thinned;
            let mut cut = None;
            let prepared =
                prepare_with(pts, dom, a.boundary_tolerance).map_err(|e| name_err(name, e))?;
            if let CurveDomain::Disk { target } = dom {
                // The map to H stretches lengths by |a − b|²/|z − b|² relative to the start a:
                // keep the curve while that stays below --max-distortion, so that the lattice
                // scale stays uniform on the Loewner clock.
                let a0 = pts[prepared.input_index[0]];
                let a0 = a0 / a0.norm().max(1e-300);
                let b = Complex64::from_polar(1.0, target);
                let near = (a0 - b).norm() / a.max_distortion.sqrt();
                cut = prepared
                    .input_index
                    .iter()
                    .position(|&i| (pts[i] - b).norm() < near);
            }
            let (unzip, sides, radial_spacing) = if matches!(a.frame, Frame::DiskRadial(_)) {
                let mut u = unzip_radial(&prepared.points, slit).map_err(|e| name_err(name, e))?;
                // Near the target the lattice spacing h grows to e^t·h relative to the remaining
                // domain: stop at radial time ln(1/(50 h)), h the median segment length.
                let h_input = median_segment(pts);
                if let Some(h) = h_input {
                    let t_max = (1.0 / (50.0 * h)).ln();
                    if t_max > 0.0 {
                        let k = u.times.partition_point(|&t| t <= t_max).max(2);
                        u.times.truncate(k);
                        u.driving.truncate(k);
                        u.used.truncate(k);
                    }
                }
                // The lattice spacing relative to the remaining domain at the last time used.
                let h_end = h_input.map(|h| h * u.final_time().exp());
                (u, Vec::new(), h_end)
            } else if let CurveDomain::Disk { target } = dom {
                // Left passage from the polyline itself (no unzip needed): the curve from a to
                // b and the clockwise boundary arc from b back to a enclose the curve's right
                // side. Points r·e^{iφ} of the H frame (the disk's centre has modulus 1) are
                // mapped back to the disk.
                let start = pts[prepared.input_index[0]];
                let start = start / start.norm().max(1e-300);
                let b = Complex64::from_polar(1.0, target);
                let to_disk = half_plane_to_disk(start, b);
                let mut closed: Vec<Complex64> = pts.clone();
                let (tb, mut ta) = (b.arg(), start.arg());
                while ta > tb {
                    ta -= std::f64::consts::TAU;
                }
                while ta <= tb - std::f64::consts::TAU {
                    ta += std::f64::consts::TAU;
                }
                for k in 0..=256 {
                    let t = tb + (ta - tb) * k as f64 / 256.0;
                    closed.push(Complex64::from_polar(1.0, t));
                }
                let mut sides = Vec::new();
                for &phi in &left_passage_angles() {
                    for &r in &[0.25, 0.5, 1.0, 2.0, 4.0] {
                        let z = to_disk(Complex64::from_polar(r, phi));
                        sides.push((phi, winding_number(&closed, z) != 0));
                    }
                }
                let mut pts_h = prepared.points.clone();
                if let Some(k) = cut {
                    pts_h.truncate(k.max(2));
                }
                let u =
                    ChordalUnzip::new(&pts_h, slit, Method::Fast).map_err(|e| name_err(name, e))?;
                (u.result, sides, None)
            } else {
                let u = ChordalUnzip::new(&prepared.points, slit, Method::Fast)
                    .map_err(|e| name_err(name, e))?;
                // Left passage at points r·e^{iφ}, radii relative to the curve's extent in H.
                let l = prepared.points.iter().map(|z| z.norm()).fold(0.0, f64::max);
                let radii: Vec<f64> = [1.0 / 64.0, 1.0 / 32.0, 1.0 / 16.0, 1.0 / 8.0]
                    .iter()
                    .map(|f| f * l)
                    .collect();
                let mut sides = Vec::new();
                if !matches!(a.frame, Frame::Polygon { .. }) {
                    for &phi in &left_passage_angles() {
                        for &r in &radii {
                            sides.push((phi, u.passes_left_of(Complex64::from_polar(r, phi))));
                        }
                    }
                }
                (u.result, sides, None)
            };
            let used = &prepared.points[..unzip
                .used
                .last()
                .map(|&k| k + 1)
                .unwrap_or(0)
                .min(prepared.points.len())];
            let spacing = radial_spacing.unwrap_or_else(|| median_segment(used).unwrap_or(0.0));
            done();
            Ok(MeasuredCurve {
                name: name.clone(),
                preparation: prepared,
                stride,
                unzip,
                sides,
                spacing,
            })
        })
        .collect();
    let measured: Vec<MeasuredCurve> = measured.into_iter().collect::<Result<_>>()?;
    let data: Vec<DrivingData> = measured
        .iter()
        .map(|m| DrivingData {
            times: &m.unzip.times,
            values: &m.unzip.driving,
        })
        .collect();
    let step = mean_step(&data);
    // Lattice effects reach far above one step: the smallest default lag is the Loewner time of
    // a slit 20 median segments long (ℓ²/4 with ℓ = 20 h), h in the unzipping frame.
    let h = median(
        measured
            .iter()
            .map(|m| m.spacing)
            .filter(|h| *h > 0.0)
            .collect(),
    )
    .unwrap_or(0.0);
    let min_lag = a.min_lag.unwrap_or(100.0 * h * h);
    if min_lag.is_nan() || min_lag <= 0.0 {
        return Err(Error::param(
            "min-lag",
            min_lag,
            "a positive Loewner time (the curves may be too short)",
        ));
    }
    let lags = default_lags(&data, min_lag);
    let settings = KappaSettings {
        lags,
        bootstrap: a.bootstrap,
        level: a.level,
        seed: a.seed,
    };
    let kappa = estimate_kappa(&data, &settings)?;
    let chordal_sides: Vec<Vec<(f64, bool)>> = measured
        .iter()
        .filter(|m| !m.sides.is_empty())
        .map(|m| m.sides.clone())
        .collect();
    let lp = if chordal_sides.len() >= 2 {
        Some(left_passage_kappa(
            &chordal_sides,
            a.bootstrap,
            a.level,
            a.seed,
        )?)
    } else {
        None
    };
    drop(data);
    Ok(MeasureReport {
        curves: measured,
        kappa,
        left_passage: lp,
        mean_step: step,
        median_segment: h,
    })
}

/// The median of the values (None when empty).
fn median(mut v: Vec<f64>) -> Option<f64> {
    v.sort_by(f64::total_cmp);
    v.get(v.len() / 2).copied()
}

/// The median length of a polyline's non-zero segments.
fn median_segment(p: &[Complex64]) -> Option<f64> {
    median(
        p.windows(2)
            .map(|w| (w[1] - w[0]).norm())
            .filter(|d| *d > 0.0)
            .collect(),
    )
}
