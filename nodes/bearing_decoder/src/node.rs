//! The node core: inputs `odor_events`, `wind`, `chem`, `odom` (in this order), output
//! `odor_bearing`, one timer at `rate`.
//!
//! Every timer tick publishes the current estimate (`cue = NONE` with NaN bearing and lag when
//! there is nothing to say); with `publish_on_evidence` an odor event array that brings a new
//! onset publishes one at once as well (with `timing.onsets: rise`, a chem sample that confirms
//! a rise does). Estimates are computed from the onsets of the last onset window
//! ([`Params::window`]) taken within `timing.max_turn` of the current heading, the latest wind
//! and odometry, and the smoothed chem responses.

use crate::air::{Air, AirContext};
use crate::amplitude::{Amplitude, AmplitudeCue, AmplitudeSilence};
use crate::channels::{ChannelMap, Lookup};
use crate::fusion::{fuse, Fused, Vote};
use crate::geometry::SensorArray;
use crate::onsets::{OnsetTrain, Push};
use crate::params::{OnsetSource, Params};
use crate::rises::RiseDetector;
use crate::timing::{TimingCue, TimingDecoder, TimingSilence};
use crate::warnings::{InputWarning, WarningLog};
use crate::NODE_NAME;
use sillage_core::msg::*;
use sillage_core::params::{self, NodeParams, ParamError};
use sillage_core::time::{nanos, secs};
use sillage_core::{Msg, Nanos, NodeCore, Outbox, Port, Qos};

/// Input indices.
pub const IN_ODOR_EVENTS: usize = 0;
/// Wind input index.
pub const IN_WIND: usize = 1;
/// Chem input index.
pub const IN_CHEM: usize = 2;
/// Odometry input index.
pub const IN_ODOM: usize = 3;
/// The output index of `odor_bearing`.
pub const OUT_BEARING: usize = 0;

/// One estimate with the state of each cue.
#[derive(Debug, Clone, PartialEq)]
pub struct Estimate {
    /// When it was made [ns].
    pub stamp: Nanos,
    /// The published answer.
    pub fused: Fused,
    /// The timing cue, or why it is silent.
    pub timing: Result<TimingCue, TimingSilence>,
    /// The amplitude cue, or why it is silent (`None`: disabled or no chem yet).
    pub amplitude: Option<Result<AmplitudeCue, AmplitudeSilence>>,
    /// The air used.
    pub air: AirContext,
}

/// Running totals for the diagnostics.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Stats {
    /// Odor events received.
    pub events: u64,
    /// Of which onsets.
    pub onsets: u64,
    /// Messages published.
    pub published: u64,
    /// Published estimates by cue (TIMING, AMPLITUDE, FUSED, NONE).
    pub by_cue: [u64; 4],
    /// Estimates whose front/back choice was a guess.
    pub unresolved: u64,
    /// Estimates with a clamped lag.
    pub clamped: u64,
}

/// The bearing decoder core.
#[derive(Debug, Clone)]
pub struct BearingDecoder {
    params: Params,
    array: SensorArray,
    channels: ChannelMap,
    trains: Vec<OnsetTrain>,
    selected: Vec<OnsetTrain>,
    rises: Vec<RiseDetector>,
    air: Air,
    timing: TimingDecoder,
    /// The last fresh timing cue: when, its bearing in the odometry frame [rad], the cue.
    held: Option<(Nanos, f64, TimingCue)>,
    amplitude: Amplitude,
    chem_seen: bool,
    warnings: WarningLog,
    stats: Stats,
    last: Option<Estimate>,
    /// Stamp and content of the last published bearing (no exact repeat at one instant).
    last_sent: Option<(Nanos, u64, u64, u64, u8)>,
}

impl BearingDecoder {
    /// A core with validated parameters.
    pub fn new(params: Params) -> Result<Self, ParamError> {
        params.validate()?;
        let array = params.sensor_array()?;
        let capacity = params.timing.max_onsets as usize;
        Ok(BearingDecoder {
            channels: ChannelMap::new(&params.channel_names, &array),
            trains: (0..array.len()).map(|_| OnsetTrain::new(capacity)).collect(),
            selected: (0..array.len()).map(|_| OnsetTrain::new(capacity)).collect(),
            rises: (0..array.len()).map(|i| RiseDetector::new(params.rise_settings(i))).collect(),
            air: Air::new(params.air_settings()),
            timing: TimingDecoder::new(params.timing_settings()),
            held: None,
            amplitude: Amplitude::new(&params.amplitude, &params.front_back, &array),
            chem_seen: false,
            warnings: WarningLog::default(),
            stats: Stats::default(),
            last: None,
            last_sent: None,
            array,
            params,
        })
    }

    /// The parameters in use.
    pub fn params(&self) -> &Params {
        &self.params
    }

    /// The sensor layout.
    pub fn array(&self) -> &SensorArray {
        &self.array
    }

    /// Warning counters.
    pub fn warnings(&self) -> &WarningLog {
        &self.warnings
    }

    /// Running totals.
    pub fn stats(&self) -> &Stats {
        &self.stats
    }

    /// The latest published estimate.
    pub fn last_estimate(&self) -> Option<&Estimate> {
        self.last.as_ref()
    }

    /// The channel list in use.
    pub fn channel_names(&self) -> &[String] {
        self.channels.names()
    }

    fn warn(&mut self, now: Nanos, w: InputWarning) {
        self.warnings.record(now, w);
    }

    /// Computes the estimate at `now` [ns] from the current state (prunes the onset window).
    pub fn estimate(&mut self, now: Nanos) -> Estimate {
        let start = now.saturating_sub(nanos(self.params.window()));
        let yaw = self.air.yaw();
        for (t, sel) in self.trains.iter_mut().zip(&mut self.selected) {
            t.prune(start);
            t.select_into(sel, yaw, self.params.timing.max_turn);
        }
        let air = self.air.context(now);
        let timing = self.timing.decode(&self.array, &self.selected, &air);
        let timing = self.hold(now, yaw, timing);
        if timing == Err(TimingSilence::Singular) {
            self.warn(now, InputWarning::SingularFit { stamp: now });
        }
        let amplitude = (self.params.amplitude.enabled && self.chem_seen).then(|| self.amplitude.cue(now, air.upwind));
        let t_vote = timing.as_ref().ok().map(|c| Vote { bearing: c.bearing, confidence: c.confidence, lag: c.lag });
        // A side-only amplitude answer is not an angle: it speaks only when timing is silent.
        let a_vote = amplitude
            .as_ref()
            .and_then(|a| a.as_ref().ok())
            .filter(|c| !(c.side_only && t_vote.is_some()))
            .map(|c| Vote { bearing: c.bearing, confidence: c.confidence, lag: f64::NAN });
        let fused = fuse(t_vote, a_vote, self.params.fusion.min_ratio);
        Estimate { stamp: now, fused, timing, amplitude, air }
    }

    /// Keeps a fresh timing cue; while the onsets are too few, gives the last one turned into
    /// the current frame with its confidence falling linearly over `timing.hold`.
    fn hold(&mut self, now: Nanos, yaw: Option<f64>, fresh: Result<TimingCue, TimingSilence>) -> Result<TimingCue, TimingSilence> {
        let hold = self.params.timing.hold;
        match (fresh, yaw) {
            (Ok(c), Some(y)) => {
                self.held = Some((now, crate::geometry::angle_diff(c.bearing, -y), c));
                Ok(c)
            }
            (Err(s @ (TimingSilence::NoMatches | TimingSilence::TooFewMatches { .. })), Some(y)) if hold > 0.0 => match self.held {
                Some((t0, b, c)) if now >= t0 && secs(now - t0) < hold => {
                    let age = secs(now - t0);
                    let bearing = crate::geometry::angle_diff(b, y);
                    Ok(TimingCue { bearing, confidence: c.confidence * (1.0 - age / hold), age, ..c })
                }
                _ => Err(s),
            },
            (other, _) => other,
        }
    }

    fn publish(&mut self, now: Nanos, out: &mut Outbox) {
        let e = self.estimate(now);
        let f = e.fused;
        // Evidence (events, chem) and the timer can all publish at one instant: a message equal
        // to the one already sent at this stamp says nothing new and is not sent again.
        let key = (now, f.bearing.to_bits(), f.lag.to_bits(), f.confidence.to_bits(), f.cue);
        if self.last_sent == Some(key) {
            self.last = Some(e);
            return;
        }
        self.last_sent = Some(key);
        self.stats.published += 1;
        self.stats.by_cue[usize::from(f.cue.min(3))] += 1;
        let t_used = matches!(f.cue, OdorBearing::TIMING | OdorBearing::FUSED);
        if let (true, Ok(t)) = (t_used, &e.timing) {
            self.stats.unresolved += u64::from(t.resolution.is_unresolved());
            self.stats.clamped += u64::from(t.clamped);
        }
        out.publish(
            OUT_BEARING,
            OdorBearing {
                header: Header::new(now, &self.params.base_frame),
                bearing: f.bearing,
                lag: f.lag,
                confidence: f.confidence,
                cue: f.cue,
            },
        );
        self.last = Some(e);
    }

    fn on_events(&mut self, now: Nanos, m: &OdorEventArray) -> bool {
        let gap = nanos(self.params.timing.onset_gap);
        let from_events = self.params.timing.onsets == OnsetSource::FirstEvent;
        let yaw = self.air.yaw();
        let mut fresh = false;
        for ev in &m.events {
            self.stats.events += 1;
            let stamp = ev.stamp.to_nanos();
            let sensor = match self.channels.lookup(ev.channel) {
                Lookup::Sensor(s) => s,
                Lookup::Unplaced(name) => {
                    let w = InputWarning::UnplacedChannel { stamp, channel: ev.channel, name: name.to_string() };
                    self.warn(now, w);
                    continue;
                }
                Lookup::Unknown(known) => {
                    self.warn(now, InputWarning::UnknownChannel { stamp, channel: ev.channel, known });
                    continue;
                }
            };
            if !from_events {
                if ev.polarity != OdorEvent::RISING && ev.polarity != OdorEvent::FALLING {
                    self.warn(now, InputWarning::BadPolarity { stamp, channel: ev.channel, polarity: ev.polarity });
                }
                continue;
            }
            match self.trains[sensor].push_at(stamp, ev.polarity, gap, yaw) {
                Push::Onset => {
                    self.stats.onsets += 1;
                    fresh = true;
                }
                Push::Other => {}
                Push::OutOfOrder { previous } => {
                    self.warn(now, InputWarning::OutOfOrder { stamp, channel: ev.channel, previous })
                }
                Push::BadPolarity => {
                    self.warn(now, InputWarning::BadPolarity { stamp, channel: ev.channel, polarity: ev.polarity })
                }
            }
        }
        fresh
    }

    /// Takes a chem sample; true when it confirmed a rise onset (`timing.onsets: rise`).
    fn on_chem(&mut self, now: Nanos, m: &ChemSample) -> bool {
        let stamp = m.header.stamp.to_nanos();
        let repeated = m.channels.iter().enumerate().any(|(i, n)| m.channels[..i].contains(n));
        if m.values.len() != m.channels.len() || repeated {
            let w = InputWarning::ChemShape { stamp, values: m.values.len(), channels: m.channels.len() };
            self.warn(now, w);
            return false;
        }
        self.channels.update(&m.channels, &self.array);
        let rises = self.params.timing.onsets == OnsetSource::Rise;
        if !self.params.amplitude.enabled && !rises {
            return false;
        }
        self.chem_seen = true;
        let yaw = self.air.yaw();
        let mut fresh = false;
        for (i, &v) in m.values.iter().enumerate() {
            let Some(sensor) = self.channels.sensor(i) else { continue };
            match self.amplitude.on_value(sensor, now, v, m.quantity) {
                Err(fault) => self.warn(now, InputWarning::ChemValue { stamp, channel: i, reason: fault.to_string() }),
                Ok(Some(x)) if rises => {
                    if let Some(onset) = self.rises[sensor].push(stamp, x) {
                        if self.trains[sensor].push_onset(onset, yaw) {
                            self.stats.onsets += 1;
                            fresh = true;
                        }
                    }
                }
                Ok(_) => {}
            }
        }
        self.amplitude.end_sample(now);
        fresh
    }
}

impl NodeCore for BearingDecoder {
    fn name(&self) -> &str {
        NODE_NAME
    }

    fn inputs(&self) -> Vec<Port> {
        vec![
            Port::of::<OdorEventArray>("odor_events", Qos::Reliable),
            Port::of::<Vector3Stamped>("wind", Qos::SensorData),
            Port::of::<ChemSample>("chem", Qos::SensorData),
            Port::of::<Odometry>("odom", Qos::SensorData),
        ]
    }

    fn outputs(&self) -> Vec<Port> {
        vec![Port::of::<OdorBearing>("odor_bearing", Qos::Reliable)]
    }

    fn timers(&self) -> Vec<Nanos> {
        vec![nanos(1.0 / self.params.rate).max(1)]
    }

    fn on_message(&mut self, now: Nanos, input: usize, msg: &Msg, out: &mut Outbox) {
        match (input, msg) {
            (IN_ODOR_EVENTS, Msg::OdorEventArray(m)) => {
                let fresh = self.on_events(now, m);
                if fresh && self.params.publish_on_evidence {
                    self.publish(now, out);
                }
            }
            (IN_WIND, Msg::Vector3Stamped(m)) => {
                if let Err(w) = self.air.on_wind(now, m) {
                    self.warn(now, w);
                }
            }
            (IN_CHEM, Msg::ChemSample(m)) => {
                let fresh = self.on_chem(now, m);
                if fresh && self.params.publish_on_evidence {
                    self.publish(now, out);
                }
            }
            (IN_ODOM, Msg::Odometry(m)) => {
                if let Err(w) = self.air.on_odom(now, m) {
                    self.warn(now, w);
                }
            }
            _ => {} // the executors deliver only the declared types
        }
    }

    fn on_timer(&mut self, now: Nanos, _timer: usize, out: &mut Outbox) {
        self.publish(now, out);
    }

    fn diagnostics(&self, now: Nanos, out: &mut Vec<DiagnosticStatus>) {
        out.push(crate::diagnostics::status(self, now));
    }

    fn params_yaml(&self) -> serde_yaml::Value {
        params::to_value(&self.params)
    }

    /// Validates and applies new parameters; the onsets, wind and chem state are kept when
    /// the sensor layout, window and conditioning stay the same. A new `rate` applies when
    /// the executor next reads the timers.
    fn set_params_yaml(&mut self, value: &serde_yaml::Value) -> Result<(), ParamError> {
        let mut p = self.params.clone();
        params::apply(&mut p, value)?;
        let mut next = BearingDecoder::new(p)?;
        next.warnings = std::mem::take(&mut self.warnings);
        next.stats = std::mem::take(&mut self.stats);
        next.last = self.last.take();
        let same_array = next.array == self.array;
        if same_array && next.params.timing.max_onsets == self.params.timing.max_onsets && next.params.timing.onsets == self.params.timing.onsets {
            next.trains = std::mem::take(&mut self.trains);
        }
        if same_array && next.params.amplitude.conditioning == self.params.amplitude.conditioning {
            for (i, (r, old)) in next.rises.iter_mut().zip(&self.rises).enumerate() {
                *r = old.clone();
                r.set_settings(next.params.rise_settings(i));
            }
        }
        if same_array {
            next.channels = self.channels.clone();
        }
        if same_array && next.params.amplitude.conditioning == self.params.amplitude.conditioning {
            next.amplitude = self.amplitude.clone();
            next.amplitude.set_settings(&next.params.amplitude, &next.params.front_back);
            next.chem_seen = self.chem_seen;
        }
        next.air = self.air.clone();
        next.air.set_settings(next.params.air_settings());
        *self = next;
        Ok(())
    }
}
