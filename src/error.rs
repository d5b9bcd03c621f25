//! Error type shared by the whole library.

use thiserror::Error;

/// Everything that can go wrong in the library: bad parameters (caught by constructors, before any
/// computation) and failures of input data or numerics.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum Error {
    /// A parameter is outside its valid range. The message names the parameter, the offending
    /// value and the valid range.
    #[error("{name} = {value} is out of range: {expected}")]
    InvalidParameter {
        /// Name of the parameter as the user knows it (e.g. `kappa`, `--time`).
        name: &'static str,
        /// The offending value, formatted.
        value: String,
        /// The valid range, in words.
        expected: String,
    },
    /// Input data (a driving-function file, a curve) is malformed.
    #[error("{0}")]
    InvalidData(String),
    /// A feature that exists in the interface but is not implemented yet.
    #[error("{0}")]
    Unavailable(String),
    /// Writing an output (file, figure) failed.
    #[error("{0}")]
    Output(String),
    /// A numerical procedure failed to reach its tolerance.
    #[error("{0}")]
    Numerical(String),
}

impl Error {
    /// Shorthand for [`Error::InvalidParameter`].
    pub fn param(
        name: &'static str,
        value: impl std::fmt::Display,
        expected: impl Into<String>,
    ) -> Self {
        // Long decimal renderings of numbers (such as 1e-300) are shortened to scientific form.
        let mut text = value.to_string();
        if text.len() > 14 {
            if let Ok(v) = text.parse::<f64>() {
                text = format!("{v:e}");
            }
        }
        Error::InvalidParameter {
            name,
            value: text,
            expected: expected.into(),
        }
    }
}

/// Result alias of the library.
pub type Result<T, E = Error> = std::result::Result<T, E>;
