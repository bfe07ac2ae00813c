//! The message-level node core: ChemSample in, OdorEventArray out.
//!
//! Per sample: whole-sample checks (lengths, channel count, quantity), time checks (a sample not
//! newer than the last is dropped; one more than `backward_reset` older resets every channel),
//! the name-to-channel mapping ([`crate::layout`]), then each channel's [`Channel::step`]. The
//! events of all channels go out in one OdorEventArray per sample that produced any, sorted by
//! stamp (then by channel index), with the sample's header.
//!
//! **`OdorEvent.channel` is the index into the `channels` array of the sample that produced
//! the event** (the current sample's array, which may differ from earlier samples').

use crate::channel::Channel;
use crate::encoding::Crossing;
use crate::error::InputError;
use crate::layout::{Layout, Slot};
use crate::params::Params;
use crate::warnings::{WarnKind, Warnings};
use crate::NODE_NAME;
use sillage_core::msg::{ChemSample, DiagnosticStatus, Header, OdorEvent, OdorEventArray, Time};
use sillage_core::params::{self, NodeParams, ParamError};
use sillage_core::{Msg, Nanos, NodeCore, Outbox, Port, Qos};

/// Node-level counters.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct InputCounts {
    /// Samples received.
    pub samples: u64,
    /// Samples processed (after the whole-sample and time checks).
    pub accepted: u64,
    /// Samples not newer than the last one (dropped).
    pub dropped_old: u64,
    /// Whole samples rejected: length mismatch.
    pub length_mismatch: u64,
    /// Whole samples rejected: more channels than `max_channels`.
    pub too_many_channels: u64,
    /// Whole samples rejected: unknown quantity.
    pub unknown_quantity: u64,
    /// Single values rejected (bad value, empty or repeated name, no room).
    pub rejected_values: u64,
    /// Resets after a large step back in time.
    pub backward_resets: u64,
    /// Changes of the channel set (names added, removed or reordered).
    pub channel_set_changes: u64,
    /// Messages of another type on the input (ignored).
    pub wrong_type: u64,
    /// OdorEventArray messages published.
    pub arrays: u64,
    /// Events published.
    pub events: u64,
}

impl InputCounts {
    /// Whole samples rejected, all reasons.
    pub fn rejected_samples(&self) -> u64 {
        self.length_mismatch + self.too_many_channels + self.unknown_quantity
    }
}

/// A crossing waiting to be published: sort key (stamp, channel index, arrival order).
#[derive(Debug, Clone, Copy)]
struct Pending {
    stamp: Nanos,
    index: u16,
    seq: u32,
    crossing: Crossing,
}

/// The event encoder node core.
#[derive(Debug, Clone)]
pub struct EventEncoder {
    pub(crate) params: Params,
    pub(crate) layout: Layout,
    pub(crate) counts: InputCounts,
    pub(crate) warnings: Warnings,
    pub(crate) last_stamp: Option<Nanos>,
    pub(crate) last_error: Option<(Nanos, InputError)>,
    pub(crate) last_change: Option<(Nanos, String)>,
    crossings: Vec<Crossing>,
    pending: Vec<Pending>,
    /// Sample stamp of the last published array (heartbeat bookkeeping).
    last_published: Option<Nanos>,
}

impl EventEncoder {
    /// A core with validated parameters.
    pub fn new(params: Params) -> Result<Self, ParamError> {
        params.validate()?;
        let warnings = Warnings::new(params.warn_interval);
        Ok(EventEncoder {
            params,
            layout: Layout::default(),
            counts: InputCounts::default(),
            warnings,
            last_stamp: None,
            last_error: None,
            last_change: None,
            crossings: Vec::new(),
            last_published: None,
            pending: Vec::new(),
        })
    }

    /// The parameters in use.
    pub fn params(&self) -> &Params {
        &self.params
    }

    /// Node-level counters.
    pub fn counts(&self) -> &InputCounts {
        &self.counts
    }

    /// The tracked channel called `name`.
    pub fn channel(&self, name: &str) -> Option<&Channel> {
        self.layout.tracked().iter().find(|t| t.name == name).map(|t| &t.channel)
    }

    /// The channels array of the last accepted sample.
    pub fn channel_names(&self) -> &[String] {
        self.layout.names()
    }

    /// Takes the queued (rate-limited) warnings, oldest first, for the executor to log.
    pub fn take_warnings(&mut self) -> Vec<String> {
        self.warnings.take()
    }

    /// Processes one sample received at `now` [ns]; publishes on output 0.
    pub fn on_sample(&mut self, now: Nanos, s: &ChemSample, out: &mut Outbox) {
        let t = s.header.stamp.to_nanos();
        self.counts.samples += 1;
        if let Err(e) = self.check_sample(t, s) {
            self.reject(now, WarnKind::BadSample, e);
            return;
        }
        if let Some(last) = self.last_stamp {
            if t <= last {
                if last.saturating_sub(t) > sillage_core::time::nanos(self.params.backward_reset) {
                    self.layout.reset_all();
                    self.counts.backward_resets += 1;
                    self.warnings.warn(now, WarnKind::BackwardReset, || {
                        format!("time jumped back from {last} ns to {t} ns (bag loop or simulation reset); every channel starts over")
                    });
                } else {
                    self.counts.dropped_old += 1;
                    self.reject(now, WarnKind::OldSample, InputError::NotNewer { stamp: t, last });
                    return;
                }
            }
        }
        self.counts.accepted += 1;
        self.last_stamp = Some(t);
        if !self.layout.matches(&s.channels) {
            if let Some(change) = self.layout.rebuild(&s.channels, &self.params) {
                self.counts.channel_set_changes += 1;
                self.warnings.warn(now, WarnKind::ChannelSet, || format!("at t = {t} ns: {change}"));
                self.last_change = Some((t, change));
            }
        }
        self.step_channels(now, t, s);
        let heartbeat = sillage_core::time::nanos(self.params.heartbeat);
        let due = heartbeat > 0 && self.last_published.is_none_or(|p| t.saturating_sub(p) >= heartbeat || t < p);
        if !self.pending.is_empty() || due {
            self.last_published = Some(t);
            self.publish(s, out);
        }
    }

    fn check_sample(&self, stamp: Nanos, s: &ChemSample) -> Result<(), InputError> {
        if s.values.len() != s.channels.len() {
            return Err(InputError::LengthMismatch { stamp, channels: s.channels.len(), values: s.values.len() });
        }
        if s.channels.len() > self.params.max_channels as usize {
            return Err(InputError::TooManyChannels { stamp, count: s.channels.len(), max: self.params.max_channels });
        }
        if s.quantity > ChemSample::RELATIVE {
            return Err(InputError::UnknownQuantity { stamp, quantity: s.quantity });
        }
        Ok(())
    }

    fn reject(&mut self, now: Nanos, kind: WarnKind, e: InputError) {
        match e {
            InputError::LengthMismatch { .. } => self.counts.length_mismatch += 1,
            InputError::TooManyChannels { .. } => self.counts.too_many_channels += 1,
            InputError::UnknownQuantity { .. } => self.counts.unknown_quantity += 1,
            InputError::NotNewer { .. } => {}
            _ => self.counts.rejected_values += 1,
        }
        self.warnings.warn(now, kind, || e.to_string());
        self.last_error = Some((now, e));
    }

    fn step_channels(&mut self, now: Nanos, t: Nanos, s: &ChemSample) {
        self.pending.clear();
        for (i, &raw) in s.values.iter().enumerate() {
            let slot = self.layout.slots().get(i).copied().unwrap_or(Slot::Full);
            let k = match slot {
                Slot::Channel(k) => k,
                Slot::Empty => {
                    self.reject(now, WarnKind::BadValue, InputError::EmptyName { index: i });
                    continue;
                }
                Slot::Duplicate(first) => {
                    let name = s.channels[i].clone();
                    self.reject(now, WarnKind::BadValue, InputError::DuplicateName { index: i, first, name });
                    continue;
                }
                Slot::Full => {
                    let (name, max) = (s.channels.get(i).cloned().unwrap_or_default(), self.params.max_channels);
                    self.reject(now, WarnKind::BadValue, InputError::NoRoom { index: i, name, max });
                    continue;
                }
            };
            let Some(tracked) = self.layout.tracked_mut().get_mut(k) else { continue };
            tracked.last_seen = Some(t);
            tracked.channel.set_quantity(s.quantity);
            self.crossings.clear();
            match tracked.channel.step(t, raw, &mut self.crossings) {
                Ok(_) => {
                    for &crossing in &self.crossings {
                        let seq = self.pending.len() as u32;
                        self.pending.push(Pending { stamp: crossing.stamp, index: i as u16, seq, crossing });
                    }
                }
                Err(fault) => {
                    let name = tracked.name.clone();
                    self.reject(now, WarnKind::BadValue, InputError::Value { stamp: t, index: i, name, fault });
                }
            }
        }
    }

    fn publish(&mut self, s: &ChemSample, out: &mut Outbox) {
        self.pending.sort_unstable_by_key(|p| (p.stamp, p.index, p.seq));
        let events: Vec<OdorEvent> = self
            .pending
            .iter()
            .map(|p| OdorEvent {
                stamp: Time::from_nanos(p.stamp),
                channel: p.index,
                polarity: p.crossing.polarity,
                level: p.crossing.level,
            })
            .collect();
        self.counts.arrays += 1;
        self.counts.events += events.len() as u64;
        let header = Header { stamp: s.header.stamp, frame_id: s.header.frame_id.clone() };
        out.publish(0, OdorEventArray { header, events });
    }
}

impl NodeCore for EventEncoder {
    fn name(&self) -> &str {
        NODE_NAME
    }
    fn inputs(&self) -> Vec<Port> {
        vec![Port::of::<ChemSample>("chem", Qos::SensorData)]
    }
    fn outputs(&self) -> Vec<Port> {
        vec![Port::of::<OdorEventArray>("odor_events", Qos::Reliable)]
    }
    fn on_message(&mut self, now: Nanos, _input: usize, msg: &Msg, out: &mut Outbox) {
        match msg {
            Msg::ChemSample(s) => self.on_sample(now, s, out),
            _ => self.counts.wrong_type += 1,
        }
    }
    fn diagnostics(&self, now: Nanos, out: &mut Vec<DiagnosticStatus>) {
        crate::diagnostics::report(self, now, out);
    }
    fn params_yaml(&self) -> serde_yaml::Value {
        params::to_value(&self.params)
    }
    fn set_params_yaml(&mut self, value: &serde_yaml::Value) -> Result<(), ParamError> {
        params::apply(&mut self.params, value)?;
        let p = &self.params;
        for t in self.layout.tracked_mut() {
            let (c, e) = p.for_channel(&t.name);
            t.channel.set_params(&c, &e, p.stale_timeout);
        }
        self.warnings.set_interval(p.warn_interval);
        Ok(())
    }
}
