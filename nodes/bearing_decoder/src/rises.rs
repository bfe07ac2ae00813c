//! Onsets from the rise itself: the time of the derivative peak of each rise of a sensor's
//! conditioned signal, for slow (MOX) sensors whose first send-on-delta crossing comes late
//! and shifts with the sensor's sensitivity.
//!
//! Contract, per sensor, samples in stamp order (an older or equal stamp is ignored):
//! - the slope is the finite difference of consecutive samples, smoothed by an exponential
//!   moving average with time constant `slope_tau` (the same filter on every sensor, so its
//!   delay cancels in the lag between sensors);
//! - a rise starts when the slope exceeds `slope` and has climbed at least `slope` above its
//!   lowest value since the previous onset (a second odor hit during a decay or a rise counts);
//! - its onset is the time of the slope's maximum, refined by a parabola through the three
//!   slope samples around it, minus the sensor's `delay`; it is reported once the slope has
//!   fallen below half that maximum, if the signal gained at least `min_rise` meanwhile.
//!
//! The peak of the slope does not move when the signal is scaled by a positive gain or shifted
//! by an offset, unlike a fixed-level crossing; for a first-order response to a step it is the
//! step time (plus the smoothing delay, common to all sensors).

use sillage_core::Nanos;

/// Settings of [`RiseDetector`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RiseSettings {
    /// Slope that starts a rise [conditioned units/s] (> 0).
    pub slope: f64,
    /// Time constant of the slope smoothing [s] (>= 0; 0 = none).
    pub slope_tau: f64,
    /// Smallest gain of the signal over a rise [conditioned units] (>= 0).
    pub min_rise: f64,
    /// Delay of this sensor subtracted from its onsets [s].
    pub delay: f64,
}

#[derive(Debug, Clone, Copy, PartialEq)]
struct Rise {
    start_value: f64,
    peak: (f64, f64),
    before: (f64, f64),
    after: Option<(f64, f64)>,
}

/// The rise detector of one sensor.
#[derive(Debug, Clone, PartialEq)]
pub struct RiseDetector {
    settings: RiseSettings,
    last: Option<(Nanos, f64)>,
    slope: Option<(f64, f64)>,
    trough: f64,
    rise: Option<Rise>,
}

const S: f64 = 1e-9;

impl RiseDetector {
    /// A detector that has seen nothing.
    pub fn new(settings: RiseSettings) -> RiseDetector {
        RiseDetector { settings, last: None, slope: None, trough: f64::INFINITY, rise: None }
    }

    /// Replaces the settings, keeping the signal state.
    pub fn set_settings(&mut self, settings: RiseSettings) {
        self.settings = settings;
    }

    /// Forgets the signal (keeps the settings).
    pub fn reset(&mut self) {
        *self = RiseDetector::new(self.settings);
    }

    /// The smoothed slope now [conditioned units/s], once two samples were seen.
    pub fn slope(&self) -> Option<f64> {
        self.slope.map(|s| s.1)
    }

    /// Takes the conditioned value `x` sampled at `t` [ns]; returns the onset time [ns] of a
    /// rise that has just been confirmed.
    pub fn push(&mut self, t: Nanos, x: f64) -> Option<Nanos> {
        if !x.is_finite() {
            return None;
        }
        let Some((t0, x0)) = self.last else {
            self.last = Some((t, x));
            return None;
        };
        if t <= t0 {
            return None;
        }
        self.last = Some((t, x));
        let dt = (t - t0) as f64 * S;
        let raw = (x - x0) / dt;
        // The finite difference belongs to the middle of the sample interval.
        let mid = (t0 as f64 + 0.5 * (t - t0) as f64) * S;
        let d = match self.slope {
            Some((_, prev)) if self.settings.slope_tau > 0.0 => prev + (raw - prev) * (1.0 - (-dt / self.settings.slope_tau).exp()),
            _ => raw,
        };
        let prev = self.slope.replace((mid, d));
        self.trough = self.trough.min(d);
        let s = self.settings;
        match &mut self.rise {
            None => {
                if d > s.slope && d - self.trough >= s.slope {
                    let before = prev.unwrap_or((mid, d));
                    self.rise = Some(Rise { start_value: x0, peak: (mid, d), before, after: None });
                }
                None
            }
            Some(r) => {
                if d > r.peak.1 {
                    r.before = prev.unwrap_or(r.peak);
                    r.peak = (mid, d);
                    r.after = None;
                } else if r.after.is_none() {
                    r.after = Some((mid, d));
                }
                if d >= 0.5 * r.peak.1 {
                    return None;
                }
                let r = *r;
                self.rise = None;
                self.trough = d;
                if x - r.start_value < s.min_rise {
                    return None;
                }
                let at = vertex(r.before, r.peak, r.after.unwrap_or((mid, d))) - s.delay;
                Some((at / S).round() as Nanos)
            }
        }
    }
}

/// Abscissa of the vertex of the parabola through three points (the middle one highest), kept
/// within the outer two; the middle abscissa when they are degenerate.
fn vertex(a: (f64, f64), b: (f64, f64), c: (f64, f64)) -> f64 {
    let (ha, hc) = (b.0 - a.0, c.0 - b.0);
    if ha <= 0.0 || hc <= 0.0 {
        return b.0;
    }
    // Slopes of the chords; the vertex is where the parabola's derivative vanishes.
    let s1 = (b.1 - a.1) / ha;
    let s2 = (c.1 - b.1) / hc;
    let curvature = (s2 - s1) / (0.5 * (ha + hc));
    if curvature >= 0.0 || !curvature.is_finite() {
        return b.0;
    }
    let mid1 = 0.5 * (a.0 + b.0);
    (mid1 - s1 / curvature).clamp(a.0, c.0)
}

#[cfg(test)]
mod tests;
