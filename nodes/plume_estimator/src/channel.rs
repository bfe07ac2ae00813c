//! One chemical channel from conditioned samples to window bins: grid, band-pass, clean-air
//! noise, bouts with their threshold, odor time, and the per-step bins.
//!
//! A channel is *ready* once its bout threshold is known (at once for an absolute threshold,
//! after the clean-air learning for a noise-relative one); only ready time counts as valid
//! time in the window, and only bouts detected while ready are counted. Nothing allocates per
//! sample: buffers are sized when the channel is created.

use crate::bouts::{Bout, BoutTracker};
use crate::chain::BoutChain;
use crate::grid::{Grid, GridEvent};
use crate::noise::NoiseLearner;
use crate::params::{Params, OdorTimeRule, ThresholdMode};
use crate::window::{BinRing, Features};
use sillage_core::Nanos;

/// Longest clean-air learning buffer [grid samples].
pub const MAX_LEARN_SAMPLES: usize = 200_000;

/// Counters of one channel.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct ChannelCounts {
    /// Samples that reached the grid.
    pub samples: u64,
    /// Grid samples filtered.
    pub grid_samples: u64,
    /// Restarts after gaps longer than `input.max_gap`.
    pub restarts: u64,
    /// Bouts accepted.
    pub bouts: u64,
    /// Rising runs below the threshold (noise).
    pub rejected: u64,
}

/// The part of a channel that consumes grid samples.
#[derive(Debug, Clone)]
struct Pipeline {
    chain: BoutChain,
    tracker: BoutTracker,
    noise: NoiseLearner,
    threshold: Option<f64>,
    mode: ThresholdMode,
    noise_factor: f64,
    positive_peak: bool,
    odor_time: OdorTimeRule,
    odor_level: f64,
    dt: f64,
    ring: BinRing,
    counts: ChannelCounts,
    last_bout: Option<Bout>,
    last_e: f64,
}

impl Pipeline {
    #[inline]
    fn process(&mut self, t: Nanos, x: f64, fresh: bool) {
        if fresh {
            self.chain.reset();
            self.tracker.reset();
        }
        let e = self.chain.step(x);
        self.last_e = e;
        self.counts.grid_samples += 1;
        if let Some(sigma) = self.noise.push(e) {
            if self.mode == ThresholdMode::Noise {
                self.threshold = Some(self.noise_factor * sigma);
            }
        }
        let bout = self.tracker.step(t, e);
        let Some(threshold) = self.threshold else { return };
        self.ring.open.valid += self.dt;
        if self.odor_time == OdorTimeRule::AboveLevel && x > self.odor_level {
            self.ring.open.presence += self.dt;
        }
        if let Some(b) = bout {
            if b.amplitude >= threshold && (b.peak_value > 0.0 || !self.positive_peak) {
                self.ring.open.bouts += 1;
                self.ring.open.amplitude_sum += b.amplitude;
                if self.odor_time == OdorTimeRule::RisePhases {
                    self.ring.open.presence += (b.peak - b.rise_start) as f64 * 1e-9;
                }
                self.counts.bouts += 1;
                self.last_bout = Some(b);
            } else {
                self.counts.rejected += 1;
            }
        }
    }
}

/// One channel.
#[derive(Debug, Clone)]
pub struct Channel {
    name: String,
    grid: Grid,
    pipe: Pipeline,
    /// Features of the last closed window.
    pub features: Features,
}

impl Channel {
    /// A channel named `name` with a copy of the designed `chain`, on a grid of `period` [ns].
    pub fn new(name: &str, chain: &BoutChain, period: Nanos, p: &Params, bins: usize) -> Channel {
        let dt = period as f64 * 1e-9;
        // The tolerance keeps 3.0 s / 0.05 s at 60 samples, not 61.
        let learn = ((p.bouts.learn_time / dt - 1e-9).ceil() as usize).clamp(2, MAX_LEARN_SAMPLES);
        let mut c = chain.clone();
        c.reset();
        Channel {
            name: name.to_string(),
            grid: Grid::new(period, sillage_core::time::nanos(p.input.max_gap)),
            pipe: Pipeline {
                chain: c,
                tracker: BoutTracker::new(),
                noise: NoiseLearner::new(learn),
                threshold: (p.bouts.threshold_mode == ThresholdMode::Absolute).then_some(p.bouts.threshold),
                mode: p.bouts.threshold_mode,
                noise_factor: p.bouts.noise_factor,
                positive_peak: p.bouts.positive_peak,
                odor_time: p.features.odor_time,
                odor_level: p.features.odor_level,
                dt,
                ring: BinRing::new(bins),
                counts: ChannelCounts::default(),
                last_bout: None,
                last_e: f64::NAN,
            },
            features: Features::EMPTY,
        }
    }

    /// The channel's name (from ChemSample.channels).
    pub fn name(&self) -> &str {
        &self.name
    }

    /// Adds a conditioned sample `x` (larger = more gas) at `t` [ns], with the transformed
    /// value before baseline removal `level` (for std/mean). Samples at or before the previous
    /// one are ignored (the node rejects them earlier).
    #[inline]
    pub fn push(&mut self, t: Nanos, x: f64, level: f64) {
        let pipe = &mut self.pipe;
        let event = self.grid.push(t, x, |tg, v, fresh| pipe.process(tg, v, fresh));
        match event {
            Some(GridEvent::Restarted) => self.pipe.counts.restarts += 1,
            None => return,
            _ => {}
        }
        self.pipe.counts.samples += 1;
        if self.pipe.threshold.is_some() {
            self.pipe.ring.add_signal(level);
        }
    }

    /// Closes the open bin (at an output tick).
    pub fn close_bin(&mut self) {
        self.pipe.ring.close();
    }

    /// The window bins.
    pub fn ring(&self) -> &BinRing {
        &self.pipe.ring
    }

    /// The bout threshold [signal units / s], once known.
    pub fn threshold(&self) -> Option<f64> {
        self.pipe.threshold
    }

    /// The learned clean-air noise of the smoothed derivative [signal units / s].
    pub fn noise(&self) -> Option<f64> {
        self.pipe.noise.sigma()
    }

    /// Fraction of the clean-air learning done.
    pub fn learning_progress(&self) -> f64 {
        self.pipe.noise.progress()
    }

    /// Counters.
    pub fn counts(&self) -> &ChannelCounts {
        &self.pipe.counts
    }

    /// The last accepted bout.
    pub fn last_bout(&self) -> Option<Bout> {
        self.pipe.last_bout
    }

    /// The last smoothed derivative [signal units / s].
    pub fn last_derivative(&self) -> f64 {
        self.pipe.last_e
    }

    /// Whether the bout threshold is known.
    pub fn ready(&self) -> bool {
        self.pipe.threshold.is_some()
    }
}
