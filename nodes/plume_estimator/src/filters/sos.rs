//! Butterworth low-pass as a cascade of second-order sections (direct form II transposed).
//!
//! Design (the textbook bilinear-transform method, which `scipy.signal.butter(N, fc,
//! output="sos", fs=fs)` also uses): analog prototype poles `s_k = -exp(i pi m / (2N))`,
//! `m = -N+1, -N+3, ..., N-1`; pre-warping `K = tan(pi fc / fs)`; bilinear map
//! `z_k = (1 + K s_k) / (1 - K s_k)`; all N zeros at `z = -1`. Each conjugate pole pair becomes
//! one biquad (a real pole of an odd order a first-order section), each section scaled to unit
//! gain at DC, so the cascade has unit DC gain like scipy's. The sections differ from scipy's
//! pairing and gain placement only by rounding; the transfer function is the same.

use super::{check_dt, PlumeError};

/// Highest supported Butterworth order.
pub const MAX_BUTTERWORTH_ORDER: usize = 8;
const MAX_SECTIONS: usize = MAX_BUTTERWORTH_ORDER.div_ceil(2);

/// One second-order section `(b0 + b1 z^-1 + b2 z^-2) / (1 + a1 z^-1 + a2 z^-2)` with its
/// direct-form-II-transposed state.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Biquad {
    /// Numerator coefficients.
    pub b: [f64; 3],
    /// Denominator coefficients `a1`, `a2` (`a0 = 1`).
    pub a: [f64; 2],
    s1: f64,
    s2: f64,
}

impl Biquad {
    /// A section with zero state.
    pub fn new(b: [f64; 3], a: [f64; 2]) -> Biquad {
        Biquad { b, a, s1: 0.0, s2: 0.0 }
    }

    /// Filters one sample.
    #[inline]
    pub fn step(&mut self, x: f64) -> f64 {
        let [b0, b1, b2] = self.b;
        let [a1, a2] = self.a;
        let y = b0 * x + self.s1;
        self.s1 = b1 * x - a1 * y + self.s2;
        self.s2 = b2 * x - a2 * y;
        y
    }

    /// DC gain `sum(b) / (1 + a1 + a2)`.
    pub fn dc_gain(&self) -> f64 {
        (self.b[0] + self.b[1] + self.b[2]) / (1.0 + self.a[0] + self.a[1])
    }

    /// Steady state for a constant input `x0`; returns the steady output.
    pub fn prime(&mut self, x0: f64) -> f64 {
        let y0 = self.dc_gain() * x0;
        self.s2 = self.b[2] * x0 - self.a[1] * y0;
        self.s1 = self.b[1] * x0 - self.a[0] * y0 + self.s2;
        y0
    }
}

/// A cascade of up to four sections (orders up to [`MAX_BUTTERWORTH_ORDER`]); fixed size, so
/// stepping never allocates.
#[derive(Debug, Clone, PartialEq)]
pub struct Sos {
    sections: [Biquad; MAX_SECTIONS],
    len: usize,
}

impl Sos {
    /// Filters one sample through every section.
    #[inline]
    pub fn step(&mut self, x: f64) -> f64 {
        let mut y = x;
        for s in &mut self.sections[..self.len] {
            y = s.step(y);
        }
        y
    }

    /// Steady state for a constant input `x0`.
    pub fn prime(&mut self, x0: f64) {
        let mut y = x0;
        for s in &mut self.sections[..self.len] {
            y = s.prime(y);
        }
    }

    /// The sections in use.
    pub fn sections(&self) -> &[Biquad] {
        &self.sections[..self.len]
    }

    /// Group delay at DC [samples] (for documentation and diagnostics): `sum` over sections of
    /// `-d phase / d omega` at `omega = 0`.
    pub fn dc_group_delay(&self) -> f64 {
        // For H = B/A at z = 1: tau = sum(k b_k)/sum(b_k) - sum(k a_k)/sum(a_k).
        self.sections()
            .iter()
            .map(|s| {
                let nb = s.b[1] + 2.0 * s.b[2];
                let db = s.b[0] + s.b[1] + s.b[2];
                let na = s.a[0] + 2.0 * s.a[1];
                let da = 1.0 + s.a[0] + s.a[1];
                nb / db - na / da
            })
            .sum()
    }
}

/// Designs an order-`order` Butterworth low-pass with cut-off `cutoff` [Hz] (-3 dB) for sample
/// period `dt` [s].
pub fn butterworth_lowpass(order: usize, cutoff: f64, dt: f64) -> Result<Sos, PlumeError> {
    check_dt(dt)?;
    if !(1..=MAX_BUTTERWORTH_ORDER).contains(&order) {
        return Err(PlumeError::Size { what: "butterworth order", value: order, min: 1, max: MAX_BUTTERWORTH_ORDER });
    }
    let fs = 1.0 / dt;
    if !(cutoff.is_finite() && cutoff > 0.0 && cutoff < fs / 2.0) {
        return Err(PlumeError::Cutoff { what: "butterworth cut-off", cutoff, nyquist: fs / 2.0, rate: fs });
    }
    let k = (std::f64::consts::PI * cutoff * dt).tan();
    let n = order as f64;
    let mut sections = [Biquad::default(); MAX_SECTIONS];
    let mut len = 0;
    // m = N-1, N-3, ... > 0: one conjugate pair each.
    let mut m = order as i64 - 1;
    while m > 0 {
        let theta = std::f64::consts::PI * m as f64 / (2.0 * n);
        // s = -exp(i theta) = (-cos, -sin); z = (1 + K s) / (1 - K s).
        let (sr, si) = (-theta.cos(), -theta.sin());
        let (nr, ni) = (1.0 + k * sr, k * si);
        let (dr, di) = (1.0 - k * sr, -k * si);
        let den = dr * dr + di * di;
        let zr = (nr * dr + ni * di) / den;
        let zi = (ni * dr - nr * di) / den;
        let a1 = -2.0 * zr;
        let a2 = zr * zr + zi * zi;
        let g = (1.0 + a1 + a2) / 4.0;
        sections[len] = Biquad::new([g, 2.0 * g, g], [a1, a2]);
        len += 1;
        m -= 2;
    }
    if order % 2 == 1 {
        let zr = (1.0 - k) / (1.0 + k);
        let g = (1.0 - zr) / 2.0;
        sections[len] = Biquad::new([g, g, 0.0], [-zr, 0.0]);
        len += 1;
    }
    Ok(Sos { sections, len })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    /// |H(e^{i w})| of the cascade.
    fn magnitude(sos: &Sos, f: f64, dt: f64) -> f64 {
        let w = 2.0 * std::f64::consts::PI * f * dt;
        let (c1, s1, c2, s2) = (w.cos(), w.sin(), (2.0 * w).cos(), (2.0 * w).sin());
        sos.sections()
            .iter()
            .map(|q| {
                let nr = q.b[0] + q.b[1] * c1 + q.b[2] * c2;
                let ni = -(q.b[1] * s1 + q.b[2] * s2);
                let dr = 1.0 + q.a[0] * c1 + q.a[1] * c2;
                let di = -(q.a[0] * s1 + q.a[1] * s2);
                ((nr * nr + ni * ni) / (dr * dr + di * di)).sqrt()
            })
            .product()
    }

    #[test]
    fn butterworth_magnitude_follows_the_bilinear_formula() {
        // |H|^2 = 1 / (1 + (tan(pi f dt) / tan(pi fc dt))^(2N)): the bilinear-transformed
        // Butterworth response (textbook, e.g. Oppenheim & Schafer, Discrete-Time Signal
        // Processing, 3rd ed., 2010, sec. 7.2).
        for order in 1..=MAX_BUTTERWORTH_ORDER {
            let (fc, dt) = (2.0, 0.01);
            let sos = butterworth_lowpass(order, fc, dt).expect("designs");
            assert_relative_eq!(magnitude(&sos, 0.0, dt), 1.0, epsilon = 1e-12);
            assert_relative_eq!(magnitude(&sos, fc, dt), std::f64::consts::FRAC_1_SQRT_2, epsilon = 1e-12);
            for f in [0.5, 1.0, 5.0, 20.0, 45.0] {
                let r = ((std::f64::consts::PI * f * dt).tan() / (std::f64::consts::PI * fc * dt).tan()).powi(2 * order as i32);
                assert_relative_eq!(magnitude(&sos, f, dt), 1.0 / (1.0 + r).sqrt(), max_relative = 1e-9);
            }
        }
    }

    #[test]
    fn priming_gives_the_steady_state() {
        let mut sos = butterworth_lowpass(4, 1.0, 0.01).expect("designs");
        sos.prime(3.5);
        for _ in 0..100 {
            assert_relative_eq!(sos.step(3.5), 3.5, max_relative = 1e-12);
        }
        assert!(sos.dc_group_delay() > 0.0);
    }

    #[test]
    fn bad_designs_are_refused() {
        assert!(matches!(butterworth_lowpass(0, 1.0, 0.01), Err(PlumeError::Size { .. })));
        assert!(matches!(butterworth_lowpass(9, 1.0, 0.01), Err(PlumeError::Size { .. })));
        assert!(matches!(butterworth_lowpass(2, 50.0, 0.01), Err(PlumeError::Cutoff { .. })));
        assert!(matches!(butterworth_lowpass(2, 1.0, 0.0), Err(PlumeError::Period { .. })));
    }
}
