//! Streaming digital filters for the bout chain: one `step` per sample, no allocation after
//! design, designed from the sample period `dt` [s].
//!
//! Every filter can be *primed* with a value `x0`: its state becomes the steady state it would
//! reach after a constant input `x0` (what `scipy.signal.lfilter_zi` / `sosfilt_zi` times `x0`
//! gives). The chain primes each stage with its first input, so a sensor that starts at a
//! non-zero baseline does not produce a start-up transient (a spurious bout).

mod fir;
mod first_order;
mod sos;

pub use fir::{firwin_lowpass, gaussian_kernel, lowpass_differentiator, Fir};
pub use first_order::{ema_alpha, Difference, Ema};
pub use sos::{butterworth_lowpass, Biquad, Sos, MAX_BUTTERWORTH_ORDER};

pub use crate::error::PlumeError;

/// Checks a sample period.
pub(crate) fn check_dt(dt: f64) -> Result<(), PlumeError> {
    if dt.is_finite() && dt > 0.0 {
        Ok(())
    } else {
        Err(PlumeError::Period { dt })
    }
}
