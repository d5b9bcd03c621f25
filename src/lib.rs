//! sleek: Schramm–Loewner evolution and conformal loop ensembles by the zipper.
#![deny(missing_docs)]

pub mod audit;
pub mod domain;
pub mod driving;
pub mod error;
pub mod io;
pub mod laws;
pub mod loewner;
pub mod plot;
pub mod report;
pub mod rng;
pub mod sle;
pub mod special;
pub mod stats;

pub use error::{Error, Result};
