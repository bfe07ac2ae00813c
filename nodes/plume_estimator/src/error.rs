//! The crate's error type.

use thiserror::Error;

/// What can go wrong in the plume estimator's library code: filter designs that do not fit
/// the sample grid, and calibrations that cannot be fitted.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum PlumeError {
    /// A cut-off frequency at or above the Nyquist frequency of the grid.
    #[error("{what}: cut-off {cutoff} Hz must be in (0, {nyquist}) Hz (the Nyquist frequency of the {rate} Hz grid)")]
    Cutoff { what: &'static str, cutoff: f64, nyquist: f64, rate: f64 },
    /// A time constant or length that is not positive and finite.
    #[error("{what}: {value} s must be positive and finite")]
    Time { what: &'static str, value: f64 },
    /// A filter order or length outside the supported range.
    #[error("{what}: {value} is outside {min}..={max}")]
    Size { what: &'static str, value: usize, min: usize, max: usize },
    /// The sample period itself is unusable.
    #[error("sample period {dt} s must be positive and finite")]
    Period { dt: f64 },
    /// Fewer calibration points than the model needs.
    #[error("calibration needs at least {needed} points for {coefficients} coefficients (got {got})")]
    TooFewPoints { got: usize, needed: usize, coefficients: usize },
    /// A calibration point with an unusable value.
    #[error("calibration point {index}: {field} = {value} {reason}")]
    BadPoint { index: usize, field: &'static str, value: f64, reason: &'static str },
    /// The calibration points cannot determine the model.
    #[error("calibration is degenerate: {reason}")]
    Degenerate { reason: String },
    /// A CSV file of features or ground truth that cannot be read.
    #[error("{file}:{line}: {reason}")]
    Csv { file: String, line: usize, reason: String },
}
