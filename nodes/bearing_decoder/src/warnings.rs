//! Run-time input problems: every one is a typed warning, counted per kind and reported in the
//! diagnostics (the latest one with its message), never a panic and never a silent drop.
//! Start-up problems are [`sillage_core::params::ParamError`]s naming the parameter key.

use sillage_core::Nanos;
use thiserror::Error;

/// A problem with one input message (the input is dropped, or the cue it feeds says nothing).
#[derive(Debug, Error, Clone, PartialEq)]
pub enum InputWarning {
    /// An event names a channel index outside the current channel list.
    #[error("odor_events: event at t={stamp} ns for channel {channel}, but the channel list has {known} channel(s)")]
    UnknownChannel { stamp: Nanos, channel: u16, known: usize },
    /// An event's channel has no configured sensor position.
    #[error("odor_events: event at t={stamp} ns for channel {channel} ('{name}'), which has no position in sensors.names")]
    UnplacedChannel { stamp: Nanos, channel: u16, name: String },
    /// An event is older than the previous event of its channel.
    #[error("odor_events: channel {channel} event at t={stamp} ns is before the previous one at t={previous} ns (dropped)")]
    OutOfOrder { stamp: Nanos, channel: u16, previous: Nanos },
    /// An event's polarity is neither +1 nor -1.
    #[error("odor_events: channel {channel} event at t={stamp} ns has polarity {polarity} (expected +1 or -1)")]
    BadPolarity { stamp: Nanos, channel: u16, polarity: i8 },
    /// A wind vector with NaN or infinite components.
    #[error("wind: non-finite vector at t={stamp} ns; no timing bearing until a valid one")]
    NonFiniteWind { stamp: Nanos },
    /// A wind speed below `wind.min_speed`.
    #[error("wind: true speed {speed:.3} m/s at t={stamp} ns is below wind.min_speed; no timing bearing")]
    StillAir { stamp: Nanos, speed: f64 },
    /// A wind message in a frame that cannot be turned into base_link.
    #[error("wind: frame '{frame}' at t={stamp} ns is neither base_frame nor the odometry frame (dropped)")]
    WindFrame { stamp: Nanos, frame: String },
    /// Odometry with NaN or infinite twist or pose.
    #[error("odom: non-finite twist or yaw at t={stamp} ns (dropped)")]
    NonFiniteOdom { stamp: Nanos },
    /// A chem sample whose values and channels differ in number, or with repeated names.
    #[error("chem: sample at t={stamp} ns has {values} value(s) for {channels} channel(s) or repeated channel names (dropped)")]
    ChemShape { stamp: Nanos, values: usize, channels: usize },
    /// A chem value the conditioning refused.
    #[error("chem: channel {channel} at t={stamp} ns: {reason}")]
    ChemValue { stamp: Nanos, channel: usize, reason: String },
    /// The pairs with matched onsets do not span the plane (N-sensor fit).
    #[error("timing: at t={stamp} ns the sensor pairs with matched onsets do not span the plane (singular plane-wave fit)")]
    SingularFit { stamp: Nanos },
}

/// Number of warning kinds.
pub const KINDS: usize = 11;

impl InputWarning {
    /// Stable index of the kind, `0..KINDS`.
    pub fn index(&self) -> usize {
        match self {
            InputWarning::UnknownChannel { .. } => 0,
            InputWarning::UnplacedChannel { .. } => 1,
            InputWarning::OutOfOrder { .. } => 2,
            InputWarning::BadPolarity { .. } => 3,
            InputWarning::NonFiniteWind { .. } => 4,
            InputWarning::StillAir { .. } => 5,
            InputWarning::WindFrame { .. } => 6,
            InputWarning::NonFiniteOdom { .. } => 7,
            InputWarning::ChemShape { .. } => 8,
            InputWarning::ChemValue { .. } => 9,
            InputWarning::SingularFit { .. } => 10,
        }
    }
}

/// Counter names, by [`InputWarning::index`].
pub const NAMES: [&str; KINDS] = [
    "unknown_channel",
    "unplaced_channel",
    "out_of_order",
    "bad_polarity",
    "non_finite_wind",
    "still_air",
    "wind_frame",
    "non_finite_odom",
    "chem_shape",
    "chem_value",
    "singular_fit",
];

/// Warning counters and the latest warning.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct WarningLog {
    counts: [u64; KINDS],
    last: Option<(Nanos, InputWarning)>,
}

impl WarningLog {
    /// Counts `w` seen at `now` [ns].
    pub fn record(&mut self, now: Nanos, w: InputWarning) {
        self.counts[w.index()] += 1;
        self.last = Some((now, w));
    }

    /// How many warnings of the kind called `name` were seen (0 for an unknown name).
    pub fn count(&self, name: &str) -> u64 {
        NAMES.iter().position(|n| *n == name).map_or(0, |i| self.counts[i])
    }

    /// Every counter with its name.
    pub fn counts(&self) -> impl Iterator<Item = (&'static str, u64)> + '_ {
        NAMES.iter().copied().zip(self.counts.iter().copied())
    }

    /// The latest warning and when it was seen.
    pub fn last(&self) -> Option<&(Nanos, InputWarning)> {
        self.last.as_ref()
    }

    /// Total of all counters.
    pub fn total(&self) -> u64 {
        self.counts.iter().sum()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn indices_match_names_and_messages_say_where() {
        let all = [
            InputWarning::UnknownChannel { stamp: 1, channel: 7, known: 2 },
            InputWarning::UnplacedChannel { stamp: 1, channel: 2, name: "temp".into() },
            InputWarning::OutOfOrder { stamp: 1, channel: 0, previous: 2 },
            InputWarning::BadPolarity { stamp: 1, channel: 0, polarity: 3 },
            InputWarning::NonFiniteWind { stamp: 1 },
            InputWarning::StillAir { stamp: 1, speed: 0.0 },
            InputWarning::WindFrame { stamp: 1, frame: "map".into() },
            InputWarning::NonFiniteOdom { stamp: 1 },
            InputWarning::ChemShape { stamp: 1, values: 1, channels: 2 },
            InputWarning::ChemValue { stamp: 1, channel: 0, reason: "x".into() },
            InputWarning::SingularFit { stamp: 1 },
        ];
        let mut log = WarningLog::default();
        for (i, w) in all.iter().enumerate() {
            assert_eq!(w.index(), i);
            let topic = w.to_string();
            assert!(["odor_events:", "wind:", "odom:", "chem:", "timing:"].iter().any(|t| topic.starts_with(t)), "{topic}");
            log.record(5, w.clone());
        }
        assert_eq!(log.total(), KINDS as u64);
        assert_eq!(log.count("out_of_order"), 1);
        assert!(all[0].to_string().contains("channel 7"));
    }
}
