//! Finite impulse response filters: a streaming convolution and three designs.
//!
//! - [`gaussian_kernel`]: a Gaussian smoothing kernel truncated at 4 standard deviations (the
//!   truncation `scipy.ndimage.gaussian_filter1d` uses by default), made causal by delaying it
//!   by its radius: a linear-phase low-pass with a group delay of `radius` samples.
//! - [`firwin_lowpass`]: the window method with a Hamming window, normalised to unit DC gain
//!   (the same construction as `scipy.signal.firwin(numtaps, cutoff, window="hamming", fs=fs)`).
//! - [`lowpass_differentiator`]: that low-pass convolved with the first difference
//!   `(1 - z^-1) / dt`: a causal, linear-phase (antisymmetric) FIR low-pass differentiator with
//!   gain `i omega` [1/s] in the pass band and a group delay of `numtaps / 2` samples.

use super::{check_dt, PlumeError};

/// Longest supported FIR [taps]; keeps the per-sample cost bounded.
pub const MAX_TAPS: usize = 4096;

/// A streaming FIR filter `y[n] = sum_k h[k] x[n-k]`. The history is kept twice in a buffer of
/// `2 N` values so that each step is one contiguous dot product; nothing allocates after
/// [`Fir::new`].
#[derive(Debug, Clone, PartialEq)]
pub struct Fir {
    /// Coefficients reversed (oldest input first), so the dot product runs forwards.
    rev: Vec<f64>,
    buf: Vec<f64>,
    pos: usize,
}

impl Fir {
    /// A filter with coefficients `h` (`h[0]` multiplies the newest input) and zero history.
    pub fn new(h: &[f64]) -> Result<Fir, PlumeError> {
        if h.is_empty() || h.len() > MAX_TAPS {
            return Err(PlumeError::Size { what: "FIR length", value: h.len(), min: 1, max: MAX_TAPS });
        }
        let rev: Vec<f64> = h.iter().rev().copied().collect();
        Ok(Fir { buf: vec![0.0; 2 * rev.len()], rev, pos: 0 })
    }

    /// Number of taps.
    pub fn len(&self) -> usize {
        self.rev.len()
    }

    /// Whether the filter has no taps (never true for a designed filter).
    pub fn is_empty(&self) -> bool {
        self.rev.is_empty()
    }

    /// The coefficients, `h[0]` first.
    pub fn coefficients(&self) -> impl Iterator<Item = f64> + '_ {
        self.rev.iter().rev().copied()
    }

    /// Filters one sample.
    #[inline]
    pub fn step(&mut self, x: f64) -> f64 {
        let n = self.rev.len();
        self.pos = if self.pos + 1 == n { 0 } else { self.pos + 1 };
        self.buf[self.pos] = x;
        self.buf[self.pos + n] = x;
        let window = &self.buf[self.pos + 1..self.pos + 1 + n];
        dot(&self.rev, window)
    }

    /// Fills the history with `x0` (the steady state of a constant input).
    pub fn prime(&mut self, x0: f64) {
        self.buf.fill(x0);
    }
}

/// Dot product in four independent lanes (lets the compiler vectorise; the summation order is
/// fixed, so results are deterministic).
#[inline]
fn dot(a: &[f64], b: &[f64]) -> f64 {
    let mut acc = [0.0f64; 4];
    let (ca, ra) = a.split_at(a.len() - a.len() % 4);
    let (cb, rb) = b.split_at(ca.len());
    for (x, y) in ca.chunks_exact(4).zip(cb.chunks_exact(4)) {
        for l in 0..4 {
            acc[l] += x[l] * y[l];
        }
    }
    let mut s = (acc[0] + acc[1]) + (acc[2] + acc[3]);
    for (x, y) in ra.iter().zip(rb) {
        s += x * y;
    }
    s
}

/// Normalised Gaussian kernel of standard deviation `sigma` [s] on a grid of period `dt` [s]:
/// `h[k] ∝ exp(-(k - r)^2 / (2 s^2))`, `s = sigma / dt`, `k = 0..=2r`, radius
/// `r = floor(4 s + 0.5)`, summing to 1.
pub fn gaussian_kernel(sigma: f64, dt: f64) -> Result<Vec<f64>, PlumeError> {
    check_dt(dt)?;
    if !(sigma.is_finite() && sigma > 0.0) {
        return Err(PlumeError::Time { what: "gaussian sigma", value: sigma });
    }
    let s = sigma / dt;
    let radius = (4.0 * s + 0.5).floor();
    if radius > (MAX_TAPS / 2) as f64 {
        return Err(PlumeError::Size { what: "gaussian kernel taps", value: 2 * radius as usize + 1, min: 1, max: MAX_TAPS });
    }
    let r = radius as usize;
    let mut h: Vec<f64> = (0..=2 * r)
        .map(|k| {
            let u = (k as f64 - r as f64) / s;
            (-0.5 * u * u).exp()
        })
        .collect();
    let sum: f64 = h.iter().sum();
    h.iter_mut().for_each(|v| *v /= sum);
    Ok(h)
}

/// Window-method low-pass of `numtaps` taps (odd, >= 3), cut-off `cutoff` [Hz], Hamming
/// window, unit DC gain: `h[k] = w[k] 2 fc dt sinc(2 fc dt (k - (N-1)/2)) / sum`.
pub fn firwin_lowpass(numtaps: usize, cutoff: f64, dt: f64) -> Result<Vec<f64>, PlumeError> {
    check_dt(dt)?;
    if numtaps < 3 || numtaps % 2 == 0 || numtaps >= MAX_TAPS {
        return Err(PlumeError::Size { what: "FIR low-pass taps (odd)", value: numtaps, min: 3, max: MAX_TAPS - 1 });
    }
    let fs = 1.0 / dt;
    if !(cutoff.is_finite() && cutoff > 0.0 && cutoff < fs / 2.0) {
        return Err(PlumeError::Cutoff { what: "FIR cut-off", cutoff, nyquist: fs / 2.0, rate: fs });
    }
    let pi = std::f64::consts::PI;
    let c = cutoff / (fs / 2.0); // relative to Nyquist, as firwin normalises
    let alpha = 0.5 * (numtaps as f64 - 1.0);
    let mut h: Vec<f64> = (0..numtaps)
        .map(|k| {
            let m = k as f64 - alpha;
            let window = 0.54 - 0.46 * (2.0 * pi * k as f64 / (numtaps as f64 - 1.0)).cos();
            c * sinc(c * m) * window
        })
        .collect();
    let sum: f64 = h.iter().sum();
    h.iter_mut().for_each(|v| *v /= sum);
    Ok(h)
}

/// `sin(pi x) / (pi x)`, 1 at 0.
fn sinc(x: f64) -> f64 {
    if x == 0.0 {
        1.0
    } else {
        let px = std::f64::consts::PI * x;
        px.sin() / px
    }
}

/// Causal linear-phase low-pass differentiator: [`firwin_lowpass`] of `numtaps` taps convolved
/// with `[1, -1] / dt`; `numtaps + 1` taps, antisymmetric, output in input units per second.
pub fn lowpass_differentiator(numtaps: usize, cutoff: f64, dt: f64) -> Result<Vec<f64>, PlumeError> {
    let lp = firwin_lowpass(numtaps, cutoff, dt)?;
    let mut h = vec![0.0; numtaps + 1];
    for (k, v) in lp.iter().enumerate() {
        h[k] += v / dt;
        h[k + 1] -= v / dt;
    }
    Ok(h)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use proptest::prelude::*;

    #[test]
    fn gaussian_kernel_shape() {
        let h = gaussian_kernel(0.03, 0.01).expect("designs");
        assert_eq!(h.len(), 2 * 12 + 1); // floor(4 * 3 + 0.5) = 12
        assert_relative_eq!(h.iter().sum::<f64>(), 1.0, epsilon = 1e-15);
        // Ratio of the centre to one sigma away is exp(1/2) (definition of the Gaussian).
        assert_relative_eq!(h[12] / h[15], 0.5f64.exp(), max_relative = 1e-12);
        assert!(h.iter().zip(h.iter().rev()).all(|(a, b)| a == b), "symmetric");
    }

    #[test]
    fn differentiator_is_antisymmetric_with_unit_slope() {
        let dt = 0.01;
        let h = lowpass_differentiator(101, 2.0, dt).expect("designs");
        assert_eq!(h.len(), 102);
        for k in 0..h.len() {
            assert_relative_eq!(h[k], -h[h.len() - 1 - k], epsilon = 1e-12);
        }
        // A ramp of slope 3 units/s comes out as 3 after the delay line is filled.
        let mut f = Fir::new(&h).expect("fir");
        let mut y = 0.0;
        for n in 0..400 {
            y = f.step(3.0 * n as f64 * dt);
        }
        assert_relative_eq!(y, 3.0, max_relative = 1e-9);
    }

    proptest! {
        /// The streaming filter equals the direct convolution with zero history.
        #[test]
        fn streaming_equals_direct_convolution(
            h in proptest::collection::vec(-1.0f64..1.0, 1..40),
            x in proptest::collection::vec(-10.0f64..10.0, 1..200),
        ) {
            let mut f = Fir::new(&h).expect("fir");
            for n in 0..x.len() {
                let direct: f64 = (0..h.len()).filter(|&k| k <= n).map(|k| h[k] * x[n - k]).sum();
                let y = f.step(x[n]);
                prop_assert!((y - direct).abs() <= 1e-12 * (1.0 + direct.abs()), "n={} {} vs {}", n, y, direct);
            }
        }
    }

    #[test]
    fn bad_designs_are_refused() {
        assert!(firwin_lowpass(100, 2.0, 0.01).is_err(), "even length");
        assert!(firwin_lowpass(101, 60.0, 0.01).is_err(), "above Nyquist");
        assert!(gaussian_kernel(-1.0, 0.01).is_err());
        assert!(gaussian_kernel(100.0, 0.01).is_err(), "too long");
        assert!(Fir::new(&[]).is_err());
    }
}
