//! Event encoding of one conditioned channel: send-on-delta and level-crossing.
//!
//! The encoder keeps a reference level `L` on a grid of spacing `delta` and emits an event
//! each time the signal crosses a threshold; the event's `level` is the level crossed, which is
//! also the reference after the crossing, so **every level lies on the delta grid of the
//! current reference** (`L +- k delta`).
//!
//! - `send_on_delta` (absolute deadband; Miskowicz, "Send-on-delta concept: an event-based data
//!   reporting strategy", Sensors 6(1):49-63, 2006): the first sample is the reference; an event
//!   fires when the signal reaches `L + delta` (rising) or `L - delta` (falling), and that level
//!   becomes the reference. Every event needs a change of at least `delta` since the last one,
//!   so over any interval N <= TV / delta (TV: total variation).
//! - `level_crossing`: fixed levels `k delta` (k integer; with relative delta the grid is
//!   re-anchored at the current reference when delta changes); an event fires each time the
//!   signal crosses a level, in either direction.
//!
//! Options: `hysteresis` (a fraction of delta): for send-on-delta an extra margin before a
//! reversal of direction fires; for level-crossing a band of +-hysteresis/2 around each level
//! that the signal must leave before the crossing counts (noise narrower than the band never
//! chatters). `delta_mode: relative`: delta = `delta` x the running range of the signal (an
//! envelope that relaxes with `range_time_constant`), floored at `min_delta`; the delta in force
//! is the one from before the sample. `refractory`: after a published event, crossings in the
//! next `refractory` seconds still move the reference but are not published (counted as
//! suppressed). `polarities`: which directions are published (the other still moves the
//! reference). Several crossings between two samples give one event each, stamped where the
//! straight line between the samples meets each threshold; stamps never decrease.

mod range;

use crate::overrides::overridable;
use range::Range;
use serde::{Deserialize, Serialize};
use sillage_core::params::{ensure, ParamError};
use sillage_core::Nanos;

/// Encoding rule (parameter `mode`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Mode {
    /// Report a change of `delta` since the last event (the reference moves with the events).
    SendOnDelta,
    /// Report each crossing of a fixed grid level `k delta`.
    LevelCrossing,
}

/// How `delta` is read (parameter `delta_mode`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum DeltaMode {
    /// `delta` in conditioned units.
    Absolute,
    /// `delta` as a fraction of the running signal range.
    Relative,
}

/// Which event directions are published (parameter `polarities`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Polarities {
    /// Rising and falling.
    Both,
    /// Rising only (odor arriving).
    Rising,
    /// Falling only (odor leaving).
    Falling,
}

impl Polarities {
    /// Whether events of `polarity` (+1 / -1) are published.
    #[inline]
    pub fn publishes(self, polarity: i8) -> bool {
        match self {
            Polarities::Both => true,
            Polarities::Rising => polarity > 0,
            Polarities::Falling => polarity < 0,
        }
    }
}

overridable! {
    /// Event encoding parameters of a channel.
    pub struct EncodingParams / EncodingOverrides {
        /// `send_on_delta` or `level_crossing`.
        pub mode: Mode = Mode::SendOnDelta,
        /// Grid spacing: conditioned units (absolute) or fraction of the running range
        /// (relative); > 0.
        pub delta: f64 = 0.05,
        /// `absolute` or `relative`.
        pub delta_mode: DeltaMode = DeltaMode::Absolute,
        /// Relaxation time constant of the running range envelope (relative mode) [s]; > 0.
        pub range_time_constant: f64 = 60.0,
        /// Smallest delta in relative mode [conditioned units]; > 0.
        pub min_delta: f64 = 0.01,
        /// Hysteresis as a fraction of delta, in [0, 1].
        pub hysteresis: f64 = 0.0,
        /// Dead time after a published event [s]; >= 0.
        pub refractory: f64 = 0.0,
        /// `both`, `rising` or `falling`.
        pub polarities: Polarities = Polarities::Both,
        /// Most crossings published for one sample (the reference still follows a larger
        /// jump; the rest is counted as overflow); >= 1.
        pub max_events_per_sample: u32 = 256,
    }
}

impl EncodingParams {
    /// Checks ranges; `prefix` is the dotted key of this group (e.g. `encoding`).
    pub fn check(&self, prefix: &str) -> Result<(), ParamError> {
        let key = |k: &str| if prefix.is_empty() { k.to_string() } else { format!("{prefix}.{k}") };
        ensure(self.delta.is_finite() && self.delta > 0.0, &key("delta"), "must be > 0")?;
        ensure(
            self.range_time_constant.is_finite() && self.range_time_constant > 0.0,
            &key("range_time_constant"),
            "must be > 0 [s]",
        )?;
        ensure(self.min_delta.is_finite() && self.min_delta > 0.0, &key("min_delta"), "must be > 0")?;
        ensure((0.0..=1.0).contains(&self.hysteresis), &key("hysteresis"), "must be in [0, 1] (fraction of delta)")?;
        ensure(self.refractory.is_finite() && self.refractory >= 0.0, &key("refractory"), "must be >= 0 [s]")?;
        ensure(self.max_events_per_sample >= 1, &key("max_events_per_sample"), "must be >= 1")
    }
}

/// One published crossing.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Crossing {
    /// Interpolated crossing time [ns].
    pub stamp: Nanos,
    /// +1 rising, -1 falling.
    pub polarity: i8,
    /// The level crossed = the reference after the crossing [conditioned units].
    pub level: f64,
    /// The grid spacing in force [conditioned units].
    pub delta: f64,
}

/// Event counters of one encoder.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct EncoderCounts {
    /// Published rising events.
    pub rising: u64,
    /// Published falling events.
    pub falling: u64,
    /// Crossings inside a refractory period (not published).
    pub suppressed: u64,
    /// Crossings of a polarity that is not published.
    pub filtered: u64,
    /// Crossings beyond `max_events_per_sample` (not published).
    pub overflow: u64,
}

/// The grid position: level `anchor + k * grid`; `side` is the polarity of the last crossing
/// (0 before any).
#[derive(Debug, Clone, Copy, PartialEq)]
struct Grid {
    anchor: f64,
    k: f64,
    grid: f64,
    side: i8,
}

impl Grid {
    #[inline]
    fn level(&self, k: f64) -> f64 {
        self.anchor + k * self.grid
    }
}

/// The encoder of one channel (plain state, no allocation per step).
#[derive(Debug, Clone, PartialEq)]
pub struct LevelEncoder {
    params: EncodingParams,
    refractory: Nanos,
    range: Range,
    grid: Option<Grid>,
    prev: (Nanos, f64),
    last_event: Option<Nanos>,
    counts: EncoderCounts,
}

impl LevelEncoder {
    /// An encoder with parameters `p` (check them first with [`EncodingParams::check`]).
    pub fn new(p: &EncodingParams) -> LevelEncoder {
        LevelEncoder {
            params: p.clone(),
            refractory: sillage_core::time::nanos(p.refractory),
            range: Range::new(p.range_time_constant),
            grid: None,
            prev: (0, 0.0),
            last_event: None,
            counts: EncoderCounts::default(),
        }
    }

    /// The parameters in use.
    pub fn params(&self) -> &EncodingParams {
        &self.params
    }

    /// Replaces the parameters; the reference level is kept (re-anchored on the new grid at
    /// the next sample), the counters too.
    pub fn set_params(&mut self, p: &EncodingParams) {
        let mode_changed = p.mode != self.params.mode;
        self.params = p.clone();
        self.refractory = sillage_core::time::nanos(p.refractory);
        self.range.set_tau(p.range_time_constant);
        if mode_changed {
            self.grid = None;
        }
    }

    /// Forgets the reference and the history (counters are kept).
    pub fn reset(&mut self) {
        self.range = Range::new(self.params.range_time_constant);
        self.grid = None;
        self.last_event = None;
    }

    /// The counters.
    pub fn counts(&self) -> &EncoderCounts {
        &self.counts
    }

    /// The current reference level (None before the first sample).
    pub fn reference(&self) -> Option<f64> {
        self.grid.map(|g| g.level(g.k))
    }

    /// The delta in force for the next sample [conditioned units].
    pub fn delta(&self) -> f64 {
        match self.params.delta_mode {
            DeltaMode::Absolute => self.params.delta,
            DeltaMode::Relative => (self.params.delta * self.range.width()).max(self.params.min_delta),
        }
    }

    /// Takes the conditioned value `x` at `t` [ns]; appends the published crossings to `out`
    /// and returns how many. `interpolate = false` stamps every crossing at `t` (use it after a
    /// gap, where a straight line between the samples means nothing). A non-finite `x` is
    /// ignored.
    #[inline]
    pub fn step(&mut self, t: Nanos, x: f64, interpolate: bool, out: &mut Vec<Crossing>) -> usize {
        if !x.is_finite() {
            return 0;
        }
        let delta = self.delta();
        if self.params.delta_mode == DeltaMode::Relative {
            self.range.update(t, x);
        }
        let Some(mut g) = self.grid else {
            self.grid = Some(self.start(x, delta));
            self.prev = (t, x);
            return 0;
        };
        if g.grid != delta {
            g = Grid { anchor: g.level(g.k), k: 0.0, grid: delta, side: g.side };
        }
        let (t0, x0) = if interpolate && self.prev.0 < t { self.prev } else { (t, x) };
        let before = out.len();
        let lc = self.params.mode == Mode::LevelCrossing;
        let h = self.params.hysteresis * delta;
        let max = self.params.max_events_per_sample as usize;
        let mut n = 0usize;
        loop {
            // Next rising and falling crossings: (grid index, detection threshold).
            let (up_k, up_thr, down_k, down_thr) = if lc {
                let (up_k, down_k) = if g.side < 0 { (g.k, g.k - 1.0) } else { (g.k + 1.0, g.k) };
                (up_k, g.level(up_k) + h / 2.0, down_k, g.level(down_k) - h / 2.0)
            } else {
                let up_h = if g.side < 0 { h } else { 0.0 };
                let down_h = if g.side > 0 { h } else { 0.0 };
                (g.k + 1.0, g.level(g.k + 1.0) + up_h, g.k - 1.0, g.level(g.k - 1.0) - down_h)
            };
            let (k, thr, polarity) = if x >= up_thr {
                (up_k, up_thr, 1i8)
            } else if x <= down_thr {
                (down_k, down_thr, -1i8)
            } else {
                break;
            };
            let level = g.level(k);
            if !level.is_finite() || (k != g.k && level == g.level(g.k)) {
                // delta is below the resolution of f64 at this magnitude: no grid to follow.
                g = Grid { anchor: x, k: 0.0, grid: delta, side: polarity };
                self.counts.overflow = self.counts.overflow.saturating_add(1);
                break;
            }
            if n == max {
                let skipped = self.jump(&mut g, x, polarity, h, lc);
                self.counts.overflow = self.counts.overflow.saturating_add(skipped);
                break;
            }
            n += 1;
            g.k = k;
            g.side = polarity;
            let stamp = interpolate_stamp(t0, x0, t, x, thr);
            self.emit(Crossing { stamp, polarity, level, delta }, out);
        }
        self.grid = Some(g);
        self.prev = (t, x);
        out.len() - before
    }

    fn start(&self, x: f64, delta: f64) -> Grid {
        match self.params.mode {
            Mode::SendOnDelta => Grid { anchor: x, k: 0.0, grid: delta, side: 0 },
            Mode::LevelCrossing => Grid { anchor: 0.0, k: (x / delta).floor(), grid: delta, side: 1 },
        }
    }

    /// Moves the reference to the last level `x` has passed in direction `polarity` without
    /// publishing; returns the number of crossings skipped.
    fn jump(&self, g: &mut Grid, x: f64, polarity: i8, h: f64, lc: bool) -> u64 {
        // Same-direction thresholds: the level itself (send-on-delta) or level +- h/2.
        let margin = if lc { h / 2.0 } else { 0.0 };
        let p = f64::from(polarity);
        let target = if polarity > 0 {
            ((x - margin - g.anchor) / g.grid).floor()
        } else {
            ((x + margin - g.anchor) / g.grid).ceil()
        };
        let skipped = ((target - g.k) * p).max(0.0);
        if skipped > 0.0 {
            // Re-anchor so the grid index stays small and exact; past the range of f64 the
            // reference simply becomes the signal.
            let level = g.level(target);
            let anchor = if level.is_finite() { level } else { x };
            *g = Grid { anchor, k: 0.0, grid: g.grid, side: polarity };
        }
        skipped.min(u64::MAX as f64) as u64
    }

    #[inline]
    fn emit(&mut self, c: Crossing, out: &mut Vec<Crossing>) {
        if !self.params.polarities.publishes(c.polarity) {
            self.counts.filtered += 1;
            return;
        }
        if let Some(last) = self.last_event {
            if c.stamp.saturating_sub(last) < self.refractory {
                self.counts.suppressed += 1;
                return;
            }
        }
        self.last_event = Some(c.stamp);
        if c.polarity > 0 {
            self.counts.rising += 1;
        } else {
            self.counts.falling += 1;
        }
        out.push(c);
    }
}

/// Where the line from (t0, x0) to (t1, x1) meets `thr`, clamped to [t0, t1] [ns].
#[inline]
fn interpolate_stamp(t0: Nanos, x0: f64, t1: Nanos, x1: f64, thr: f64) -> Nanos {
    if t1 <= t0 || x1 == x0 {
        return t1;
    }
    let f = ((thr - x0) / (x1 - x0)).clamp(0.0, 1.0);
    t0.saturating_add((t1.saturating_sub(t0) as f64 * f).round() as Nanos)
}

#[cfg(test)]
mod tests;
