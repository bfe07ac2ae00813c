//! The node's parameters: node-wide conditioning and encoding groups, per-channel overrides
//! keyed by channel name, and the input policy (time, staleness, warnings).
//!
//! A channel override is a flat map of any conditioning or encoding key, e.g.
//! `channels.left.gain: 1.2` or `channels.right.delta: 0.08`; keys not set keep the node-wide
//! value. Channel names containing `.` cannot be overridden (the dot nests keys).

use crate::conditioning::{ConditioningOverrides, ConditioningParams};
use crate::encoding::{EncodingOverrides, EncodingParams};
use serde::de::Error as _;
use serde::{Deserialize, Deserializer, Serialize, Serializer};
use serde_yaml::{Mapping, Value};
use sillage_core::params::{ensure, NodeParams, ParamError};
use std::collections::BTreeMap;

/// Parameters of the event encoder.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Params {
    /// Node-wide conditioning (see [`ConditioningParams`]).
    pub conditioning: ConditioningParams,
    /// Node-wide encoding (see [`EncodingParams`]).
    pub encoding: EncodingParams,
    /// Per-channel overrides by channel name.
    pub channels: BTreeMap<String, ChannelOverrides>,
    /// A channel with no sample for this long is stale; crossings are not interpolated across
    /// a longer gap [s]; > 0.
    pub stale_timeout: f64,
    /// A sample stamped this much before the last one resets every channel (bag loop, sim
    /// reset); smaller steps back are dropped [s]; > 0.
    pub backward_reset: f64,
    /// Shortest interval between two warnings of one kind (the rest are counted) [s]; >= 0.
    pub warn_interval: f64,
    /// Most channels tracked at once (channels gone from the set are forgotten first); 1..=65536.
    pub max_channels: u32,
    /// Liveness: when no event array went out for this long (sample time), an accepted sample
    /// without crossings publishes an empty array, so subscribers' watchdogs can tell a quiet
    /// channel from a dead encoder [s]; 0 = publish only arrays with events; >= 0.
    pub heartbeat: f64,
}

impl Default for Params {
    fn default() -> Self {
        Params {
            conditioning: ConditioningParams::default(),
            encoding: EncodingParams::default(),
            channels: BTreeMap::new(),
            stale_timeout: 2.0,
            backward_reset: 1.0,
            warn_interval: 10.0,
            max_channels: 64,
            heartbeat: 0.25,
        }
    }
}

impl NodeParams for Params {
    fn validate(&self) -> Result<(), ParamError> {
        self.conditioning.check("conditioning")?;
        self.encoding.check("encoding")?;
        for name in self.channels.keys() {
            let (c, e) = self.for_channel(name);
            c.check(&format!("channels.{name}"))?;
            e.check(&format!("channels.{name}"))?;
        }
        ensure(self.stale_timeout.is_finite() && self.stale_timeout > 0.0, "stale_timeout", "must be > 0 [s]")?;
        ensure(self.backward_reset.is_finite() && self.backward_reset > 0.0, "backward_reset", "must be > 0 [s]")?;
        ensure(self.warn_interval.is_finite() && self.warn_interval >= 0.0, "warn_interval", "must be >= 0 [s]")?;
        ensure(self.heartbeat.is_finite() && self.heartbeat >= 0.0, "heartbeat", "must be >= 0 [s]")?;
        ensure((1..=65_536).contains(&self.max_channels), "max_channels", "must be in 1..=65536")
    }
}

impl Params {
    /// The conditioning and encoding parameters of channel `name` (node-wide values with the
    /// channel's overrides applied).
    pub fn for_channel(&self, name: &str) -> (ConditioningParams, EncodingParams) {
        match self.channels.get(name) {
            Some(o) => (o.conditioning.apply(&self.conditioning), o.encoding.apply(&self.encoding)),
            None => (self.conditioning.clone(), self.encoding.clone()),
        }
    }
}

/// Overrides for one channel: any conditioning or encoding key, in one flat map.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ChannelOverrides {
    /// Conditioning keys set for this channel.
    pub conditioning: ConditioningOverrides,
    /// Encoding keys set for this channel.
    pub encoding: EncodingOverrides,
}

impl Serialize for ChannelOverrides {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let mut map = Mapping::new();
        for part in [serde_yaml::to_value(&self.conditioning), serde_yaml::to_value(&self.encoding)] {
            if let Value::Mapping(m) = part.map_err(serde::ser::Error::custom)? {
                map.extend(m);
            }
        }
        map.serialize(s)
    }
}

impl<'de> Deserialize<'de> for ChannelOverrides {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let map = Mapping::deserialize(d)?;
        let (mut cond, mut enc) = (Mapping::new(), Mapping::new());
        for (k, v) in map {
            let key = k.as_str().unwrap_or("");
            if ConditioningParams::FIELDS.contains(&key) {
                cond.insert(k, v);
            } else if EncodingParams::FIELDS.contains(&key) {
                enc.insert(k, v);
            } else {
                let shown = if key.is_empty() { serde_yaml::to_string(&k).unwrap_or_default().trim().to_string() } else { key.to_string() };
                let all: Vec<&str> = ConditioningParams::FIELDS.iter().chain(EncodingParams::FIELDS).copied().collect();
                return Err(D::Error::custom(format!("unknown field `{shown}`, expected one of {}", all.join(", "))));
            }
        }
        Ok(ChannelOverrides {
            conditioning: serde_yaml::from_value(Value::Mapping(cond)).map_err(D::Error::custom)?,
            encoding: serde_yaml::from_value(Value::Mapping(enc)).map_err(D::Error::custom)?,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::conditioning::Transform;
    use crate::encoding::Mode;
    use sillage_core::params::{self, ParamFileError};

    #[test]
    fn the_shipped_parameter_file_loads_and_documents_every_key() {
        let text = include_str!("../../../config/event_encoder.yaml");
        let p: Params = params::load_str(text, "config/event_encoder.yaml", "/event_encoder").expect("loads");
        assert_eq!(p, Params::default(), "the file states the defaults");
        // Every parameter is in the file, each with a comment.
        for (key, _) in params::flatten(&params::to_value(&Params::default())) {
            let leaf = key.rsplit('.').next().unwrap_or(&key);
            let line = text.lines().find(|l| l.trim_start().starts_with(&format!("{leaf}:")));
            let line = line.unwrap_or_else(|| panic!("{key} missing from config/event_encoder.yaml"));
            assert!(line.contains('#'), "{key}: no comment on its line");
        }
    }

    #[test]
    fn flat_channel_overrides() {
        let text = "event_encoder:\n  ros__parameters:\n    encoding:\n      delta: 0.1\n    channels:\n      left:\n        gain: 2\n        mode: level_crossing\n    channels.right.transform: r0_ratio\n";
        let p: Params = params::load_str(text, "p.yaml", "/r/event_encoder").expect("loads");
        let (c, e) = p.for_channel("left");
        assert_eq!((c.gain, e.mode, e.delta), (2.0, Mode::LevelCrossing, 0.1));
        let (c, e) = p.for_channel("right");
        assert_eq!((c.transform, c.gain, e.mode), (Transform::R0Ratio, 1.0, Mode::SendOnDelta));
        assert_eq!(p.for_channel("other").0, p.conditioning);
        // Written back and read again unchanged.
        let again: Params = params::load_str(&params::to_file_text("/**", &p), "w.yaml", "/x").expect("reloads");
        assert_eq!(again, p);
    }

    #[test]
    fn bad_keys_are_named() {
        let e = params::load_str::<Params>("event_encoder:\n  ros__parameters:\n    channels.left.gian: 2.0\n", "p.yaml", "/event_encoder")
            .expect_err("typo");
        assert!(matches!(&e, ParamFileError::Param { error: ParamError::Unknown { key }, .. } if key == "channels.left.gian"), "{e}");
        let e = params::load_str::<Params>("event_encoder:\n  ros__parameters:\n    channels.left.delta: -1.0\n", "p.yaml", "/event_encoder")
            .expect_err("range");
        assert!(matches!(&e, ParamFileError::Param { error: ParamError::OutOfRange { key, .. }, .. } if key == "channels.left.delta"), "{e}");
        let e = params::load_str::<Params>("event_encoder:\n  ros__parameters:\n    encoding.hysteresis: 2.0\n", "p.yaml", "/event_encoder")
            .expect_err("range");
        assert!(e.to_string().contains("encoding.hysteresis"), "{e}");
        let e = params::load_str::<Params>("event_encoder:\n  ros__parameters:\n    conditioning.transform: sqrt\n", "p.yaml", "/event_encoder")
            .expect_err("bad enum");
        assert!(e.to_string().contains("conditioning.transform"), "{e}");
    }
}
