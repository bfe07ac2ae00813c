//! sillage_msgs: the contract with robots, bags and outside tools (the `.msg` files in
//! `msgs/msg/` are the source of truth; a test proves these mirrors match them).

use super::{ros_message, Header, Time};

ros_message! {
    /// One reading of every chemical sensor channel.
    #[derive(Default)]
    ChemSample = "sillage_msgs/msg/ChemSample", include_str!("../../../../msgs/msg/ChemSample.msg");
    { header: Header, channels: Vec<String>, values: Vec<f64>, quantity: u8 }
    consts { RESISTANCE: u8 = 0, CONDUCTANCE: u8 = 1, VOLTAGE: u8 = 2, CONCENTRATION: u8 = 3, RELATIVE: u8 = 4 }
}

ros_message! {
    /// A send-on-delta event of one conditioned channel.
    #[derive(Default)]
    OdorEvent = "sillage_msgs/msg/OdorEvent", include_str!("../../../../msgs/msg/OdorEvent.msg");
    { stamp: Time, channel: u16, polarity: i8, level: f64 }
    consts { RISING: i8 = 1, FALLING: i8 = -1 }
}

ros_message! {
    /// The events produced by one input sample.
    #[derive(Default)]
    OdorEventArray = "sillage_msgs/msg/OdorEventArray", include_str!("../../../../msgs/msg/OdorEventArray.msg");
    { header: Header, events: Vec<OdorEvent> }
}

ros_message! {
    /// Estimated direction the odor comes from.
    #[derive(Default)]
    OdorBearing = "sillage_msgs/msg/OdorBearing", include_str!("../../../../msgs/msg/OdorBearing.msg");
    { header: Header, bearing: f64, lag: f64, confidence: f64, cue: u8 }
    consts { TIMING: u8 = 0, AMPLITUDE: u8 = 1, FUSED: u8 = 2, NONE: u8 = 3 }
}

ros_message! {
    /// Windowed plume-structure features.
    #[derive(Default)]
    PlumeFeatures = "sillage_msgs/msg/PlumeFeatures", include_str!("../../../../msgs/msg/PlumeFeatures.msg");
    {
        header: Header, window: f64, bouts: u32, bout_rate: f64, bout_amplitude: f64,
        intermittency: f64, distance: f64, distance_sigma: f64, edge_index: f64,
    }
}

ros_message! {
    /// Behaviour state of the arbiter.
    #[derive(Default)]
    SearchState = "sillage_msgs/msg/SearchState", include_str!("../../../../msgs/msg/SearchState.msg");
    { header: Header, mode: u8, reason: String, heading_target: f64, contact_age: f64 }
    consts { WAITING: u8 = 0, SURGING: u8 = 1, CASTING: u8 = 2, DECLARED: u8 = 3, HALTED: u8 = 4 }
}

impl SearchState {
    /// The name of a `mode` value (`"UNKNOWN"` for values outside the constants).
    pub fn mode_name(mode: u8) -> &'static str {
        match mode {
            SearchState::WAITING => "WAITING",
            SearchState::SURGING => "SURGING",
            SearchState::CASTING => "CASTING",
            SearchState::DECLARED => "DECLARED",
            SearchState::HALTED => "HALTED",
            _ => "UNKNOWN",
        }
    }
}
