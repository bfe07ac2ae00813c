//! The plume estimator node core: `chem` (ChemSample) in, and optionally `wind`
//! (Vector3Stamped) and `odom` (Odometry) for the distance model's wind covariate (see
//! [`crate::wind`]); `plume_features` (PlumeFeatures) out every `features.step`, diagnostics
//! "plume_estimator: <part>".
//!
//! Per ChemSample, in order (each rejection is counted and diagnosed, never a panic):
//! 1. a stamp of 0 (unset) is replaced by the receive time;
//! 2. stale: `|now - stamp| > input.max_age` (when `max_age > 0`): dropped;
//! 3. out of order: a stamp at or before the last accepted one: dropped, unless it is more
//!    than `input.backward_reset` before it (a bag loop, a restarted simulation): then the
//!    estimator restarts (filters, windows, grid rate; the counters stay) with this sample;
//! 4. malformed: `values` and `channels` of different lengths: dropped;
//! 5. a new channel layout (names or count) rebuilds the channels;
//! 6. while the grid rate is being measured (`input.sample_rate = 0`), the sample only
//!    measures it (median of the first 8 intervals);
//! 7. each value is conditioned; a rejected value (NaN, inf, ...) is counted for its channel
//!    and the channel's grid bridges the hole like any gap.
//!
//! At each tick every channel's open bin closes, the window features are computed per
//! channel and pooled (see [`crate::window`]), the distance model is applied to the pooled
//! features, and one PlumeFeatures message is published (NaN fields while there is too little
//! data).

use crate::chain::BoutChain;
use crate::channel::Channel;
use crate::conditioning::ChannelInput;
use crate::diagnostics;
use crate::error::PlumeError;
use crate::grid::period_ns;
use crate::params::{design_key, multiple, Params};
use crate::window::{Features, Geometry, Pool};
use sillage_core::msg::{ChemSample, DiagnosticStatus, Header, Odometry, PlumeFeatures, Vector3Stamped};
use sillage_core::params::{self, ParamError};
use sillage_core::{Msg, Nanos, NodeCore, Outbox, Port, Qos};

/// Intervals measured before the grid rate is fixed (`input.sample_rate = 0`).
pub const RATE_PROBE_INTERVALS: usize = 8;

/// Input index of `chem`.
pub const IN_CHEM: usize = 0;
/// Input index of `wind` (optional: only the wind covariate uses it).
pub const IN_WIND: usize = 1;
/// Input index of `odom` (optional: compensates a relative wind).
pub const IN_ODOM: usize = 2;

/// Input counters (cumulative since start).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct InputCounts {
    /// ChemSample messages received.
    pub received: u64,
    /// Accepted (passed the stamp and layout checks).
    pub accepted: u64,
    /// Dropped as stale (`input.max_age`).
    pub stale: u64,
    /// Dropped for a stamp at or before the previous one.
    pub out_of_order: u64,
    /// Restarts after a step back in time of more than `input.backward_reset`.
    pub backward_resets: u64,
    /// Dropped for `values` / `channels` length mismatch.
    pub malformed: u64,
    /// Values rejected by conditioning (NaN, inf, non-positive resistance, ...).
    pub bad_values: u64,
    /// Samples used only to measure the grid rate.
    pub rate_probe: u64,
    /// Channel layout changes after the first.
    pub layout_changes: u64,
    /// Messages with more channels than `input.max_channels` (the extra ones are ignored).
    pub too_many_channels: u64,
}

impl InputCounts {
    /// Everything dropped or rejected.
    pub fn rejected(&self) -> u64 {
        self.stale + self.out_of_order + self.malformed + self.bad_values
    }
}

/// What the last tick published.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Published {
    /// Tick time [ns].
    pub stamp: Nanos,
    /// Pooled features.
    pub combined: Features,
    /// Distance [m] (NaN when unknown).
    pub distance: f64,
    /// Distance sigma [m].
    pub distance_sigma: f64,
}

/// The node core.
#[derive(Debug, Clone)]
pub struct PlumeEstimator {
    params: Params,
    geometry: Geometry,
    bins: usize,
    period: Option<Nanos>,
    template: Option<BoutChain>,
    design_error: Option<(String, PlumeError)>,
    probe: [Nanos; RATE_PROBE_INTERVALS + 1],
    probe_len: usize,
    channels: Vec<Channel>,
    inputs: Vec<ChannelInput>,
    counts: InputCounts,
    last_stamp: Option<Nanos>,
    last_arrival: Option<Nanos>,
    interval: Option<f64>,
    frame_id: String,
    last: Option<Published>,
    reject_history: Vec<u64>,
    reject_head: usize,
    wind: crate::wind::WindSpeed,
}

impl PlumeEstimator {
    /// A core with validated parameters.
    pub fn new(params: Params) -> Result<Self, ParamError> {
        use sillage_core::params::NodeParams;
        params.validate()?;
        let f = &params.features;
        let bins = multiple(f.window, f.step).unwrap_or(1);
        let sub_bins = multiple(f.rate_cv_window, f.step).unwrap_or(1);
        let geometry = Geometry { window: f.window, sub_bins, subs: bins / sub_bins, min_coverage: f.min_coverage };
        let mut core = PlumeEstimator {
            geometry,
            bins,
            period: None,
            template: None,
            design_error: None,
            probe: [0; RATE_PROBE_INTERVALS + 1],
            probe_len: 0,
            channels: Vec::new(),
            inputs: Vec::new(),
            counts: InputCounts::default(),
            last_stamp: None,
            last_arrival: None,
            interval: None,
            frame_id: String::new(),
            last: None,
            reject_history: vec![0; bins],
            reject_head: 0,
            wind: crate::wind::WindSpeed::new(params.wind.clone(), f.window),
            params,
        };
        if core.params.input.sample_rate > 0.0 {
            core.set_period(period_ns(core.params.input.sample_rate));
        }
        Ok(core)
    }

    fn set_period(&mut self, period: Nanos) {
        self.period = Some(period);
        match BoutChain::design(&self.params.filter, period as f64 * 1e-9) {
            Ok(c) => {
                self.template = Some(c);
                self.design_error = None;
            }
            Err(e) => self.design_error = Some((design_key(&self.params.filter, &e).to_string(), e)),
        }
    }

    /// The parameters in use.
    pub fn params(&self) -> &Params {
        &self.params
    }

    /// The channels (in ChemSample order).
    pub fn channels(&self) -> &[Channel] {
        &self.channels
    }

    /// Input counters.
    pub fn counts(&self) -> &InputCounts {
        &self.counts
    }

    /// The grid period [ns], once known.
    pub fn grid_period(&self) -> Option<Nanos> {
        self.period
    }

    /// The designed chain (for its delay), once the grid is known.
    pub fn chain(&self) -> Option<&BoutChain> {
        self.template.as_ref()
    }

    /// A filter design that failed for the measured grid rate (key, error).
    pub fn design_error(&self) -> Option<&(String, PlumeError)> {
        self.design_error.as_ref()
    }

    /// What the last tick published.
    pub fn last_published(&self) -> Option<&Published> {
        self.last.as_ref()
    }

    /// Mean interval between accepted samples [s] (exponentially weighted).
    pub fn input_interval(&self) -> Option<f64> {
        self.interval
    }

    /// Time of the last accepted sample's arrival [ns].
    pub fn last_arrival(&self) -> Option<Nanos> {
        self.last_arrival
    }

    /// Rejections during the last window.
    pub fn recent_rejections(&self) -> u64 {
        self.counts.rejected() - self.reject_history[self.reject_head]
    }

    fn layout_matches(&self, m: &ChemSample) -> bool {
        let n = m.values.len().min(self.params.input.max_channels);
        if self.inputs.len() != n {
            return false;
        }
        if m.channels.is_empty() {
            return self.channels.iter().enumerate().all(|(i, c)| diagnostics::is_index_name(c.name(), i));
        }
        self.channels.iter().zip(&m.channels).all(|(c, name)| c.name() == name)
    }

    fn rebuild_channels(&mut self, m: &ChemSample) {
        if !self.inputs.is_empty() {
            self.counts.layout_changes += 1;
        }
        self.channels.clear();
        self.inputs.clear();
        let (Some(chain), Some(period)) = (&self.template, self.period) else { return };
        let n = m.values.len().min(self.params.input.max_channels);
        for i in 0..n {
            let name = m.channels.get(i).cloned().unwrap_or_else(|| diagnostics::index_name(i));
            self.channels.push(Channel::new(&name, chain, period, &self.params, self.bins));
            self.inputs.push(ChannelInput::new(&self.params));
        }
    }

    /// Measures the grid rate; true once it is known.
    fn probe_rate(&mut self, stamp: Nanos) -> bool {
        if self.period.is_some() {
            return true;
        }
        self.probe[self.probe_len] = stamp;
        self.probe_len += 1;
        if self.probe_len <= RATE_PROBE_INTERVALS {
            self.counts.rate_probe += 1;
            return false;
        }
        let mut iv = [0; RATE_PROBE_INTERVALS];
        for (k, v) in iv.iter_mut().enumerate() {
            *v = self.probe[k + 1] - self.probe[k];
        }
        iv.sort_unstable();
        let median = (iv[RATE_PROBE_INTERVALS / 2 - 1] + iv[RATE_PROBE_INTERVALS / 2]) / 2;
        self.set_period(median.max(1));
        true
    }

    /// Starts over with the same parameters, keeping the counters and the frame. (`new` only
    /// fails on parameters that do not validate, and these did when this core was built.)
    fn restart(&mut self) {
        if let Ok(mut fresh) = PlumeEstimator::new(self.params.clone()) {
            fresh.counts = self.counts;
            fresh.reject_history.fill(self.counts.rejected());
            fresh.frame_id = std::mem::take(&mut self.frame_id);
            *self = fresh;
        }
    }

    fn on_chem(&mut self, now: Nanos, m: &ChemSample) {
        self.counts.received += 1;
        let stamp = match m.header.stamp.to_nanos() {
            0 => now,
            s => s,
        };
        let max_age = self.params.input.max_age;
        if max_age > 0.0 && ((now - stamp) as f64).abs() * 1e-9 > max_age {
            self.counts.stale += 1;
            return;
        }
        if let Some(last) = self.last_stamp.filter(|&last| stamp <= last) {
            if last - stamp <= sillage_core::time::nanos(self.params.input.backward_reset) {
                self.counts.out_of_order += 1;
                return;
            }
            self.restart();
            self.counts.backward_resets += 1;
        }
        if !m.channels.is_empty() && m.channels.len() != m.values.len() {
            self.counts.malformed += 1;
            return;
        }
        if let Some(last) = self.last_stamp {
            let dt = (stamp - last) as f64 * 1e-9;
            self.interval = Some(self.interval.map_or(dt, |v| v + 0.05 * (dt - v)));
        }
        self.last_stamp = Some(stamp);
        self.last_arrival = Some(now);
        self.counts.accepted += 1;
        if m.values.len() > self.params.input.max_channels {
            self.counts.too_many_channels += 1;
        }
        if self.frame_id != m.header.frame_id {
            self.frame_id.clone_from(&m.header.frame_id);
        }
        if !self.probe_rate(stamp) || self.template.is_none() {
            return;
        }
        if !self.layout_matches(m) {
            self.rebuild_channels(m);
        }
        for ((ch, input), &raw) in self.channels.iter_mut().zip(&mut self.inputs).zip(&m.values) {
            match input.condition(stamp, raw, m.quantity) {
                Ok((x, level)) => ch.push(stamp, x, level),
                Err(_) => self.counts.bad_values += 1,
            }
        }
    }

    /// Per-channel conditioning state (faults by kind, status).
    pub fn inputs(&self) -> &[ChannelInput] {
        &self.inputs
    }

    fn tick(&mut self, now: Nanos, out: &mut Outbox) {
        let mut pool = Pool::new();
        for ch in &mut self.channels {
            ch.close_bin();
            ch.features = pool.add(ch.ring(), &self.geometry);
        }
        let combined = pool.features(&self.geometry);
        let wind_speed = self.wind.mean(now);
        let (distance, distance_sigma) =
            crate::distance::estimate(&self.params.distance, combined.bout_rate, combined.bout_amplitude, combined.valid, wind_speed);
        self.reject_history[self.reject_head] = self.counts.rejected();
        self.reject_head = (self.reject_head + 1) % self.reject_history.len();
        self.last = Some(Published { stamp: now, combined, distance, distance_sigma });
        out.publish(
            0,
            PlumeFeatures {
                header: Header::new(now, &self.frame_id),
                window: self.params.features.window,
                bouts: combined.bouts,
                bout_rate: combined.bout_rate,
                bout_amplitude: combined.bout_amplitude,
                intermittency: combined.odor_time_fraction,
                distance,
                distance_sigma,
                edge_index: combined.bout_rate_cv,
            },
        );
    }
}

impl NodeCore for PlumeEstimator {
    fn name(&self) -> &str {
        crate::NODE_NAME
    }
    fn inputs(&self) -> Vec<Port> {
        vec![
            Port::of::<ChemSample>("chem", Qos::SensorData),
            Port::of::<Vector3Stamped>("wind", Qos::SensorData),
            Port::of::<Odometry>("odom", Qos::SensorData),
        ]
    }
    fn outputs(&self) -> Vec<Port> {
        vec![Port::of::<PlumeFeatures>("plume_features", Qos::Reliable)]
    }
    fn timers(&self) -> Vec<Nanos> {
        vec![sillage_core::time::nanos(self.params.features.step)]
    }
    fn on_message(&mut self, now: Nanos, input: usize, msg: &Msg, _out: &mut Outbox) {
        match (input, msg) {
            (IN_CHEM, Msg::ChemSample(m)) => self.on_chem(now, m),
            (IN_WIND, Msg::Vector3Stamped(m)) => {
                self.wind.on_wind(now, m);
            }
            (IN_ODOM, Msg::Odometry(m)) => self.wind.on_odom(now, m),
            _ => {} // the executors deliver only the declared types
        }
    }
    fn on_timer(&mut self, now: Nanos, timer: usize, out: &mut Outbox) {
        if timer == 0 {
            self.tick(now, out);
        }
    }
    fn diagnostics(&self, now: Nanos, out: &mut Vec<DiagnosticStatus>) {
        diagnostics::report(self, now, out);
    }
    fn params_yaml(&self) -> serde_yaml::Value {
        params::to_value(&self.params)
    }
    /// Distance coefficients change in place; `features.step` cannot change at run time (the
    /// executors fix the timer period at start-up); any other change restarts the estimator
    /// with the new parameters (the counters are kept).
    fn set_params_yaml(&mut self, value: &serde_yaml::Value) -> Result<(), ParamError> {
        let mut next = self.params.clone();
        params::apply(&mut next, value)?;
        if next.features.step != self.params.features.step {
            return Err(ParamError::Invalid {
                key: "features.step".into(),
                reason: "cannot change at run time (the timer period is fixed at start-up)".into(),
            });
        }
        let mut rest = next.clone();
        rest.distance = self.params.distance.clone();
        if rest == self.params {
            self.params = next;
            return Ok(());
        }
        let mut fresh = PlumeEstimator::new(next)?;
        if fresh.params.wind == self.params.wind && fresh.params.features.window == self.params.features.window {
            fresh.wind = self.wind.clone();
        }
        fresh.counts = self.counts;
        fresh.reject_history.fill(self.counts.rejected());
        fresh.frame_id = std::mem::take(&mut self.frame_id);
        *self = fresh;
        Ok(())
    }
}
