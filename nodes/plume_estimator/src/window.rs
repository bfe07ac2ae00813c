//! Windowed features: per channel, and pooled over channels.
//!
//! Time is cut into bins of one output `step`; the window is the last `window / step` closed
//! bins (the bin closes at each output tick, so on a steady timer the window is exactly
//! `window` seconds; grid samples count in the bin open when they are processed). Each bin
//! holds, per channel, the accepted bouts (count and summed amplitude), the time with odor
//! present, the time with valid data, and sums of the linear sensor response for its std/mean
//! (see [`crate::conditioning`]).
//! Nothing allocates after the ring is created.
//!
//! Features of a window (per channel; rates use the *valid* time, so a gap lowers coverage
//! instead of biasing the rate):
//! - `bouts`: accepted bouts whose peak fell in the window;
//! - `bout_rate` = bouts / valid time [Hz];
//! - `bout_amplitude`: mean amplitude of those bouts [signal units / s] (NaN without bouts);
//! - `odor_time_fraction` = odor time / valid time (0..1), published in the `intermittency`
//!   field: with `odor_time: rise_phases` it is the share of time in bout rise phases;
//! - `bout_rate_cv` (published in the `edge_index` field): coefficient of variation (population std / mean) of the bout rates of the
//!   sub-windows with at least `min_coverage` valid data; NaN with fewer than 2 such
//!   sub-windows or no bouts. The 2016 bout work found the variance of bout counts to indicate
//!   the crosswind offset from the plume centreline: near the edge contact comes in clusters,
//!   so counts vary more between sub-windows (a Poisson train gives about
//!   `1 / sqrt(rate * sub_window)`);
//! - `std_over_mean`: standard deviation over mean of the linear sensor response (before
//!   baseline removal; per sample) over the window, the proximity indicator of "Indicators of
//!   gas source proximity using metal oxide sensors in a turbulent environment" (2006), which
//!   found std/mean a better proximity indicator than the mean or the std alone (as summarised
//!   in docs/references.md); NaN unless the mean is > 0. Diagnostics only (PlumeFeatures has
//!   no field for it).
//!
//! Pooled over channels ("combined", what PlumeFeatures carries): every channel's bouts,
//! valid time, presence time and sub-window counts are summed before dividing, so the pooled
//! rate is total bouts / total valid channel-time (the maximum-likelihood rate of channels
//! sharing one Poisson rate; the per-channel mean when coverage is equal), the amplitude the
//! mean over all bouts, the odor-time fraction the pooled fraction, the bout-rate CV the CV of the
//! pooled sub-window rates; `bouts` is the per-channel mean count rounded to an integer;
//! `std_over_mean` the mean of the channels' finite values.

/// One bin of one channel.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Bin {
    /// Accepted bouts (by peak time).
    pub bouts: u32,
    /// Sum of their amplitudes [signal units / s].
    pub amplitude_sum: f64,
    /// Time with odor present [s].
    pub presence: f64,
    /// Time with valid data [s].
    pub valid: f64,
    /// Samples in the signal sums.
    pub n: u64,
    /// Sum of (transformed - shift).
    pub sum: f64,
    /// Sum of (transformed - shift)^2.
    pub sum2: f64,
}

impl Bin {
    fn add(&mut self, o: &Bin) {
        self.bouts += o.bouts;
        self.amplitude_sum += o.amplitude_sum;
        self.presence += o.presence;
        self.valid += o.valid;
        self.n += o.n;
        self.sum += o.sum;
        self.sum2 += o.sum2;
    }
}

/// The last `len` closed bins of one channel plus the open one.
#[derive(Debug, Clone, PartialEq)]
pub struct BinRing {
    bins: Vec<Bin>,
    head: usize,
    /// The bin being filled.
    pub open: Bin,
    /// Shift subtracted from the transformed signal in the sums (against cancellation).
    pub shift: Option<f64>,
}

impl BinRing {
    /// A ring of `len` closed bins (all empty).
    pub fn new(len: usize) -> BinRing {
        BinRing { bins: vec![Bin::default(); len.max(1)], head: 0, open: Bin::default(), shift: None }
    }

    /// Adds one transformed-signal sample to the open bin.
    #[inline]
    pub fn add_signal(&mut self, v: f64) {
        let s = *self.shift.get_or_insert(v);
        let d = v - s;
        self.open.n += 1;
        self.open.sum += d;
        self.open.sum2 += d * d;
    }

    /// Closes the open bin (the oldest closed bin drops out of the window).
    pub fn close(&mut self) {
        self.bins[self.head] = std::mem::take(&mut self.open);
        self.head = (self.head + 1) % self.bins.len();
    }

    /// Closed bins oldest first.
    pub fn iter(&self) -> impl Iterator<Item = &Bin> {
        self.bins[self.head..].iter().chain(self.bins[..self.head].iter())
    }

    /// Empties every bin.
    pub fn clear(&mut self) {
        self.bins.fill(Bin::default());
        self.open = Bin::default();
        self.shift = None;
    }
}

/// Window features (per channel or pooled).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Features {
    /// Bouts in the window (pooled: per-channel mean, rounded).
    pub bouts: u32,
    /// Valid time in the window [s] (pooled: summed over channels).
    pub valid: f64,
    /// Valid time / (window x channels), 0..1.
    pub coverage: f64,
    /// Bouts per second of valid time [Hz]; NaN below `min_coverage`.
    pub bout_rate: f64,
    /// Mean bout amplitude [signal units / s]; NaN without bouts or below `min_coverage`.
    pub bout_amplitude: f64,
    /// Fraction of valid time with odor present; NaN below `min_coverage`.
    pub odor_time_fraction: f64,
    /// Coefficient of variation of sub-window bout rates; NaN when unknown.
    pub bout_rate_cv: f64,
    /// std / mean of the transformed signal; NaN unless the mean is > 0.
    pub std_over_mean: f64,
}

impl Features {
    /// Features with no data at all.
    pub const EMPTY: Features = Features {
        bouts: 0,
        valid: 0.0,
        coverage: 0.0,
        bout_rate: f64::NAN,
        bout_amplitude: f64::NAN,
        odor_time_fraction: f64::NAN,
        bout_rate_cv: f64::NAN,
        std_over_mean: f64::NAN,
    };
}

/// Window geometry.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Geometry {
    /// Window length [s].
    pub window: f64,
    /// Bins per sub-window.
    pub sub_bins: usize,
    /// Sub-windows per window.
    pub subs: usize,
    /// Smallest coverage for published rates.
    pub min_coverage: f64,
}

/// Most sub-windows per window (fixed-size scratch, no allocation).
pub const MAX_SUBS: usize = 256;

/// Accumulates the features of one or more channels' rings.
#[derive(Debug, Clone)]
pub struct Pool {
    total: Bin,
    sub_bouts: [u32; MAX_SUBS],
    sub_valid: [f64; MAX_SUBS],
    channels: usize,
    som_sum: f64,
    som_n: usize,
}

impl Pool {
    /// An empty pool.
    pub fn new() -> Pool {
        Pool { total: Bin::default(), sub_bouts: [0; MAX_SUBS], sub_valid: [0.0; MAX_SUBS], channels: 0, som_sum: 0.0, som_n: 0 }
    }

    /// Adds one channel's window; returns that channel's own features.
    pub fn add(&mut self, ring: &BinRing, g: &Geometry) -> Features {
        let mut own = Pool::new();
        let mut total = Bin::default();
        for (k, b) in ring.iter().enumerate() {
            total.add(b);
            let s = (k / g.sub_bins).min(MAX_SUBS - 1);
            own.sub_bouts[s] += b.bouts;
            own.sub_valid[s] += b.valid;
        }
        own.total = total;
        own.channels = 1;
        let som = std_over_mean(&total, ring.shift);
        if som.is_finite() {
            own.som_sum = som;
            own.som_n = 1;
        }
        if total.valid > 0.0 {
            // Channels without valid data in the window neither dilute nor count.
            self.merge(&own, g.subs);
        }
        own.features(g)
    }

    fn merge(&mut self, o: &Pool, subs: usize) {
        self.total.add(&o.total);
        for s in 0..subs.min(MAX_SUBS) {
            self.sub_bouts[s] += o.sub_bouts[s];
            self.sub_valid[s] += o.sub_valid[s];
        }
        self.channels += o.channels;
        self.som_sum += o.som_sum;
        self.som_n += o.som_n;
    }

    /// The pooled features.
    pub fn features(&self, g: &Geometry) -> Features {
        if self.channels == 0 {
            return Features::EMPTY;
        }
        let t = &self.total;
        let coverage = (t.valid / (g.window * self.channels as f64)).clamp(0.0, 1.0);
        let ok = coverage >= g.min_coverage && t.valid > 0.0;
        let nan_unless = |c: bool, v: f64| if c { v } else { f64::NAN };
        let sub_len = g.window / g.subs as f64 * self.channels as f64;
        let mut rates = [0.0f64; MAX_SUBS];
        let mut m = 0;
        for s in 0..g.subs.min(MAX_SUBS) {
            if self.sub_valid[s] > 0.0 && self.sub_valid[s] >= g.min_coverage * sub_len {
                rates[m] = f64::from(self.sub_bouts[s]) / self.sub_valid[s];
                m += 1;
            }
        }
        Features {
            bouts: (f64::from(t.bouts) / self.channels as f64).round() as u32,
            valid: t.valid,
            coverage,
            bout_rate: nan_unless(ok, f64::from(t.bouts) / t.valid),
            bout_amplitude: nan_unless(ok && t.bouts > 0, t.amplitude_sum / f64::from(t.bouts)),
            odor_time_fraction: nan_unless(ok, (t.presence / t.valid).clamp(0.0, 1.0)),
            bout_rate_cv: coefficient_of_variation(&rates[..m]),
            std_over_mean: if self.som_n > 0 { self.som_sum / self.som_n as f64 } else { f64::NAN },
        }
    }
}

impl Default for Pool {
    fn default() -> Self {
        Pool::new()
    }
}

/// std / mean of the signal summed in `b` (shifted by `shift`); NaN unless mean > 0.
fn std_over_mean(b: &Bin, shift: Option<f64>) -> f64 {
    let Some(shift) = shift else { return f64::NAN };
    if b.n < 2 {
        return f64::NAN;
    }
    let n = b.n as f64;
    let md = b.sum / n;
    let var = (b.sum2 / n - md * md).max(0.0);
    let mean = md + shift;
    if mean > 0.0 { var.sqrt() / mean } else { f64::NAN }
}

/// Population std / mean; NaN for fewer than 2 values or a zero mean.
pub fn coefficient_of_variation(v: &[f64]) -> f64 {
    if v.len() < 2 {
        return f64::NAN;
    }
    let n = v.len() as f64;
    let mean = v.iter().sum::<f64>() / n;
    if mean.is_nan() || mean <= 0.0 {
        return f64::NAN;
    }
    let var = v.iter().map(|x| (x - mean) * (x - mean)).sum::<f64>() / n;
    var.sqrt() / mean
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn geometry() -> Geometry {
        Geometry { window: 4.0, sub_bins: 2, subs: 2, min_coverage: 0.5 }
    }

    fn ring(bins: &[(u32, f64, f64)]) -> BinRing {
        let mut r = BinRing::new(bins.len());
        for &(bouts, presence, valid) in bins {
            r.open = Bin { bouts, amplitude_sum: f64::from(bouts) * 2.0, presence, valid, ..Bin::default() };
            r.close();
        }
        r
    }

    #[test]
    fn channel_features_by_hand() {
        // Four 1 s bins: bouts 1, 3, 0, 2; presence 0.5 s in each; full coverage.
        let r = ring(&[(1, 0.5, 1.0), (3, 0.5, 1.0), (0, 0.5, 1.0), (2, 0.5, 1.0)]);
        let mut pool = Pool::new();
        let f = pool.add(&r, &geometry());
        assert_eq!(f.bouts, 6);
        assert_relative_eq!(f.bout_rate, 1.5);
        assert_relative_eq!(f.bout_amplitude, 2.0);
        assert_relative_eq!(f.odor_time_fraction, 0.5);
        // Sub-window rates 4/2 = 2 and 2/2 = 1: mean 1.5, population std 0.5.
        assert_relative_eq!(f.bout_rate_cv, 0.5 / 1.5);
        assert!(f.std_over_mean.is_nan(), "no signal sums");
        let again = pool.features(&geometry());
        assert_eq!((again.bouts, again.bout_rate, again.bout_rate_cv), (f.bouts, f.bout_rate, f.bout_rate_cv));
    }

    #[test]
    fn pooling_sums_before_dividing() {
        let a = ring(&[(2, 0.0, 1.0), (2, 0.0, 1.0), (2, 0.0, 1.0), (2, 0.0, 1.0)]);
        // The second channel has valid data for half the window only.
        let b = ring(&[(0, 0.0, 0.0), (0, 0.0, 0.0), (1, 1.0, 1.0), (1, 1.0, 1.0)]);
        let g = geometry();
        let mut pool = Pool::new();
        pool.add(&a, &g);
        let fb = pool.add(&b, &g);
        assert_relative_eq!(fb.coverage, 0.5);
        assert_relative_eq!(fb.bout_rate, 1.0);
        let p = pool.features(&g);
        assert_eq!(p.bouts, 5); // (8 + 2) / 2
        assert_relative_eq!(p.bout_rate, 10.0 / 6.0);
        assert_relative_eq!(p.odor_time_fraction, 2.0 / 6.0);
        assert_relative_eq!(p.coverage, 0.75);
        // Pooled sub-windows: 4 bouts / 2 s, then 6 bouts / 4 s.
        assert!(coefficient_of_variation(&[2.0, 1.5]) == p.bout_rate_cv);
    }

    #[test]
    fn low_coverage_gives_nan_rates_and_std_over_mean_needs_a_positive_mean() {
        let r = ring(&[(1, 0.0, 0.2), (0, 0.0, 0.0), (0, 0.0, 0.0), (0, 0.0, 0.0)]);
        let f = Pool::new().add(&r, &geometry());
        assert!(f.bout_rate.is_nan() && f.odor_time_fraction.is_nan() && f.bout_amplitude.is_nan());
        let mut s = BinRing::new(1);
        for v in [1.0, 3.0, 1.0, 3.0] {
            s.add_signal(v);
        }
        s.close();
        let f = Pool::new().add(&s, &Geometry { window: 1.0, sub_bins: 1, subs: 1, min_coverage: 0.5 });
        assert_relative_eq!(f.std_over_mean, 0.5); // std 1, mean 2
        assert!(coefficient_of_variation(&[0.0, 0.0]).is_nan());
    }
}
