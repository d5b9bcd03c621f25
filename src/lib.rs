//! # sleek — Schramm–Loewner evolution by the zipper
//!
//! Samplers of chordal SLE_κ curves built from explicit slit maps of the discretised Loewner
//! equation, exact laws to compare them with, and checks of the samplers against published
//! results.
//!
//! Conventions (used throughout, and stated again on each item): the chordal Loewner equation in
//! the upper half-plane H, `∂_t g_t(z) = 2/(g_t(z) − W_t)`, `g_0(z) = z`, so the hull at time
//! `t` has half-plane capacity `2t`; SLE_κ is driven by `W_t = √κ B_t`.
//!
//! ```
//! use sleek::loewner::{Method, StepKind};
//! use sleek::sle::{ChordalSle, Resolution};
//!
//! // Chordal SLE_4 to capacity time 1 on 200 equal steps of tilted slits.
//! let sle = ChordalSle::new(4.0, 1.0, Resolution::Points(200), StepKind::Tilted, Method::Direct)?;
//! let curve = sle.sample(42, 0); // seed 42, sample 0: a pure function of both
//! assert_eq!(curve.points.len(), 201);
//! assert!(curve.points.iter().all(|z| z.im >= 0.0));
//! // Every hull of capacity time 1 lies below height 2.
//! assert!(curve.points.iter().all(|z| z.im <= 2.0 + 1e-12));
//!
//! // Exact values beside it: Schramm's left-passage probability at z = 1 + i.
//! let p = sleek::laws::schramm_left_passage(4.0, 1.0, 1.0)?;
//! assert!((p - 0.75).abs() < 1e-14);
//! # Ok::<(), sleek::Error>(())
//! ```
//!
//! Modules: [`driving`] (driving functions, Brownian paths and bridges), [`loewner`] (slit maps
//! and chains), [`sle`] (the SLE sampler), [`domain`] (images in the disk and the strip),
//! [`laws`] and [`special`] (exact formulas), [`stats`] (estimators), [`audit`] (checks against
//! published results), [`io`], [`plot`], [`report`] (presentation), [`rng`] (random streams).
#![deny(missing_docs)]

pub mod audit;
pub mod bench;
pub mod bessel;
pub mod cle;
pub mod curve;
pub mod disk_fast;
pub mod domain;
pub mod driving;
pub mod error;
pub mod fast;
pub mod finite;
pub mod forward_tree;
pub mod geometry;
pub mod geozip;
pub mod io;
pub mod journal;
pub mod lattice;
pub mod laws;
pub mod loewner;
pub mod loops;
pub mod measure;
pub mod measure_run;
pub mod plot;
pub mod plot_loops;
pub mod plot_measure;
pub mod polygon;
pub mod radial;
pub mod radii;
pub mod regions;
pub mod report;
pub mod rng;
pub mod sle;
pub mod sle_rho;
pub mod special;
pub mod stats;
pub mod unzip;

pub use error::{Error, Result};
