//! The QoS profile each [`Qos`] class gets on ROS 2, and the matching rules between a
//! publisher and a subscription (so the graph can be checked offline).
//!
//! - [`Qos::SensorData`] (chem, wind, odom, scan): best effort, keep last 5, volatile, the
//!   ROS 2 `sensor_data` preset: a late sample is worth less than the next one.
//! - [`Qos::Reliable`] (commands, events, estimates): reliable, keep last 10, volatile, the ROS 2
//!   default profile.
//! - [`Qos::Latched`] (search_state): reliable, keep last 1, transient local, so a node that
//!   starts late still gets the current search state.
//! - [`Qos::Safety`] (e_stop): best effort, keep last 10, volatile. Under the DDS
//!   request/offered rules this subscription matches every publisher a user may have
//!   (reliable or best effort, volatile or transient local), so an e-stop can never be
//!   silently unmatched. The price: a sample a transient-local publisher sent *before* the
//!   match is not replayed to a volatile subscription, and best effort may lose a sample on a
//!   lossy link. Both fail closed in the arbiter: it stays HALTED until it has heard one
//!   `e_stop` (`e_stop.required`), and `watchdog.e_stop` (on in the robot example) halts it
//!   when the e-stop stops repeating. So the e-stop publisher must repeat its state
//!   periodically (a heartbeat), which is common practice for safety topics anyway.
//!   Subscribing twice (reliable + transient local and best effort + volatile) was not chosen:
//!   the two streams deliver the same samples in an interleaving of their own, and a late
//!   `true` from one after a `false` from the other would re-latch a released e-stop.

use sillage_core::Qos;

/// Reliability policy.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Reliability {
    /// Retransmit until acknowledged.
    Reliable,
    /// Send once.
    BestEffort,
}

/// Durability policy.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Durability {
    /// Only samples published after the subscription matched.
    Volatile,
    /// The publisher keeps its last `depth` samples for late joiners.
    TransientLocal,
}

/// A keep-last QoS profile (the only history kind sillage uses).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct QosSpec {
    /// Reliability.
    pub reliability: Reliability,
    /// Durability.
    pub durability: Durability,
    /// History depth (keep last N samples).
    pub depth: usize,
}

impl QosSpec {
    /// The profile of a QoS class (values of the ROS 2 presets `sensor_data` and `default`,
    /// rclcpp/rmw `qos_profiles.h`; the latched profile is common practice for state topics).
    pub const fn of(class: Qos) -> QosSpec {
        match class {
            Qos::SensorData => QosSpec { reliability: Reliability::BestEffort, durability: Durability::Volatile, depth: 5 },
            Qos::Reliable => QosSpec { reliability: Reliability::Reliable, durability: Durability::Volatile, depth: 10 },
            Qos::Latched => QosSpec { reliability: Reliability::Reliable, durability: Durability::TransientLocal, depth: 1 },
            Qos::Safety => QosSpec { reliability: Reliability::BestEffort, durability: Durability::Volatile, depth: 10 },
        }
    }

    /// Why a publisher with `self` does not match a subscription with `sub` (`None`: they
    /// match). DDS request/offered rules: a best-effort offer cannot serve a reliable request,
    /// a volatile offer cannot serve a transient-local request.
    pub fn mismatch(&self, sub: &QosSpec) -> Option<&'static str> {
        if self.reliability == Reliability::BestEffort && sub.reliability == Reliability::Reliable {
            return Some("best-effort publisher, reliable subscription");
        }
        if self.durability == Durability::Volatile && sub.durability == Durability::TransientLocal {
            return Some("volatile publisher, transient-local subscription");
        }
        None
    }

    /// Short human-readable form, e.g. `best effort, keep last 5, volatile`.
    pub fn describe(&self) -> String {
        let r = match self.reliability {
            Reliability::Reliable => "reliable",
            Reliability::BestEffort => "best effort",
        };
        let d = match self.durability {
            Durability::Volatile => "volatile",
            Durability::TransientLocal => "transient local",
        };
        format!("{r}, keep last {}, {d}", self.depth)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::executor::remap_topic;
    use sillage_core::executor::Placement;
    use sillage_stack::NodeKind;
    use std::collections::HashMap;

    #[test]
    fn classes_map_to_the_ros_presets() {
        // Depths and policies of rmw's qos_profile_sensor_data (5, best effort, volatile) and
        // qos_profile_default (10, reliable, volatile), rmw/qos_profiles.h (from memory).
        assert_eq!(QosSpec::of(Qos::SensorData).describe(), "best effort, keep last 5, volatile");
        assert_eq!(QosSpec::of(Qos::Reliable).describe(), "reliable, keep last 10, volatile");
        assert_eq!(QosSpec::of(Qos::Latched).describe(), "reliable, keep last 1, transient local");
        assert_eq!(QosSpec::of(Qos::Safety).describe(), "best effort, keep last 10, volatile");
    }

    #[test]
    fn the_safety_subscription_matches_every_publisher() {
        // DDS 1.4 section 2.2.3 (request/offered): a subscription requesting best effort and
        // volatile is served by every reliability and durability offer.
        let sub = QosSpec::of(Qos::Safety);
        for reliability in [Reliability::Reliable, Reliability::BestEffort] {
            for durability in [Durability::Volatile, Durability::TransientLocal] {
                let offer = QosSpec { reliability, durability, depth: 1 };
                assert_eq!(offer.mismatch(&sub), None, "{}", offer.describe());
                // The old latched subscription missed some of them.
                let missed = offer.mismatch(&QosSpec::of(Qos::Latched)).is_some();
                assert_eq!(missed, reliability == Reliability::BestEffort || durability == Durability::Volatile);
            }
        }
        // Every e_stop input of the stack is a safety subscription.
        for kind in NodeKind::ALL {
            let Ok(core) = kind.build_from_str(None, "(defaults)", kind.name()) else { continue };
            for port in core.inputs().iter().filter(|p| p.topic == "e_stop") {
                assert_eq!(port.qos, Qos::Safety, "{}", kind.name());
            }
        }
    }

    #[test]
    fn matching_follows_request_offered_rules() {
        let (s, r, l) = (QosSpec::of(Qos::SensorData), QosSpec::of(Qos::Reliable), QosSpec::of(Qos::Latched));
        assert_eq!(r.mismatch(&s), None, "reliable offer serves a best-effort request");
        assert!(s.mismatch(&r).is_some());
        assert_eq!(l.mismatch(&r), None, "transient-local offer serves a volatile request");
        assert!(r.mismatch(&l).is_some());
        assert!(s.mismatch(&l).is_some());
        assert_eq!(l.mismatch(&l), None);
    }

    #[test]
    fn every_link_of_the_stack_matches() {
        // Every topic one sillage node publishes and another subscribes must connect.
        let mut pubs: HashMap<String, (String, QosSpec)> = HashMap::new();
        let mut subs: Vec<(String, String, QosSpec)> = Vec::new();
        for kind in NodeKind::ALL {
            let core = match kind.build_from_str(None, "(defaults)", kind.name()) {
                Ok(c) => c,
                Err(e) => panic!("{} does not build from defaults: {e}", kind.name()),
            };
            let p = Placement::default();
            for port in core.outputs() {
                pubs.insert(remap_topic(&port.topic, &p, kind.name()), (kind.name().to_string(), QosSpec::of(port.qos)));
            }
            for port in core.inputs() {
                subs.push((remap_topic(&port.topic, &p, kind.name()), kind.name().to_string(), QosSpec::of(port.qos)));
            }
        }
        let mut links = 0;
        for (topic, node, sub) in &subs {
            if let Some((publisher, offered)) = pubs.get(topic) {
                links += 1;
                assert_eq!(offered.mismatch(sub), None, "{topic}: {publisher} -> {node}");
            }
        }
        assert!(links >= 3, "the stack has internal links (odor_events, odor_bearing, plume_features): {links}");
    }
}
