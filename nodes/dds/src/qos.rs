//! QoS choices on the wire: each port's [`Qos`] class becomes one DDS profile, the same on both
//! ends of a link, so sillage's own publishers and subscribers always match.
//!
//! | class | reliability | durability | history |
//! | --- | --- | --- | --- |
//! | `SensorData` | best effort | volatile | keep last 5 |
//! | `Reliable` | reliable | volatile | keep last 10 |
//! | `Latched` | reliable | transient local | keep last 1 |
//! | `/clock` | best effort | volatile | keep last 1 |
//!
//! These are the presets of ROS 2 (`sensor_data`, `default`, a latched topic, and the clock
//! subscription of rclcpp's time source; shared/ros2-notes.md, common practice). Matching rules
//! a peer must respect: a best-effort publisher does not reach a reliable subscription, and a
//! volatile publisher does not reach a transient-local one.

use sillage_core::Qos;

/// Delivery guarantee.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Reliability {
    /// Samples may be lost.
    BestEffort,
    /// Lost samples are repaired.
    Reliable,
}

/// What late-joining subscriptions get.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Durability {
    /// Only what is published after they match.
    Volatile,
    /// The last `depth` samples published before they matched.
    TransientLocal,
}

/// One DDS QoS profile (keep-last history).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct QosSpec {
    /// Reliability.
    pub reliability: Reliability,
    /// Durability.
    pub durability: Durability,
    /// Keep-last depth [samples].
    pub depth: usize,
}

impl QosSpec {
    /// The profile of a port class.
    pub const fn of(class: Qos) -> QosSpec {
        match class {
            Qos::SensorData => QosSpec { reliability: Reliability::BestEffort, durability: Durability::Volatile, depth: 5 },
            Qos::Reliable => QosSpec { reliability: Reliability::Reliable, durability: Durability::Volatile, depth: 10 },
            Qos::Latched => QosSpec { reliability: Reliability::Reliable, durability: Durability::TransientLocal, depth: 1 },
        }
    }

    /// The profile of the `/clock` subscription (rclcpp's clock QoS: keep last 1, best effort).
    pub const CLOCK: QosSpec = QosSpec { reliability: Reliability::BestEffort, durability: Durability::Volatile, depth: 1 };

    /// Whether a publisher with profile `self` reaches a subscription with profile `sub`
    /// (the DDS request/offered rules for reliability and durability).
    pub fn reaches(&self, sub: &QosSpec) -> bool {
        let rel = self.reliability == Reliability::Reliable || sub.reliability == Reliability::BestEffort;
        let dur = self.durability == Durability::TransientLocal || sub.durability == Durability::Volatile;
        rel && dur
    }
}

#[cfg(feature = "dds")]
impl From<&QosSpec> for ros2_client::QosProfile {
    fn from(q: &QosSpec) -> Self {
        use ros2_client::qos;
        let base = ros2_client::QosProfile::subscription_default().history(qos::History::KeepLast { depth: q.depth });
        let base = match q.reliability {
            Reliability::BestEffort => base.reliability_best_effort(),
            // Publishing never blocks the executor's loop: a full reliable window is a counted
            // publish failure, not a stall of every node.
            Reliability::Reliable => base.reliability_reliable(qos::WhenFull::Fail),
        };
        base.durability(match q.durability {
            Durability::Volatile => qos::Durability::Volatile,
            Durability::TransientLocal => qos::Durability::TransientLocal,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn classes_match_themselves_and_presets_are_the_documented_ones() {
        for class in [Qos::SensorData, Qos::Reliable, Qos::Latched] {
            let q = QosSpec::of(class);
            assert!(q.reaches(&q), "{class:?} must match itself");
        }
        assert_eq!(QosSpec::of(Qos::SensorData).depth, 5);
        assert_eq!(QosSpec::of(Qos::Reliable).depth, 10);
        assert_eq!(QosSpec::of(Qos::Latched).durability, Durability::TransientLocal);
        // DDS matching rules (shared/ros2-notes.md): best effort does not reach reliable,
        // volatile does not reach transient local; the clock subscription takes anything.
        let be = QosSpec::of(Qos::SensorData);
        let rel = QosSpec::of(Qos::Reliable);
        let latched = QosSpec::of(Qos::Latched);
        assert!(!be.reaches(&rel));
        assert!(rel.reaches(&be));
        assert!(!rel.reaches(&latched));
        assert!(latched.reaches(&rel));
        for p in [be, rel, latched] {
            assert!(p.reaches(&QosSpec::CLOCK));
        }
    }

    #[cfg(feature = "dds")]
    #[test]
    fn converts_to_ros2_client_profiles() {
        use ros2_client::qos;
        let p = ros2_client::QosProfile::from(&QosSpec::of(Qos::Latched));
        assert_eq!(p.durability, qos::Durability::TransientLocal);
        assert_eq!(p.history, qos::History::KeepLast { depth: 1 });
        assert!(matches!(p.reliability, qos::Reliability::Reliable { when_full: qos::WhenFull::Fail }));
        let s = ros2_client::QosProfile::from(&QosSpec::of(Qos::SensorData));
        assert_eq!(s.reliability, qos::Reliability::BestEffort);
        assert_eq!(s.history, qos::History::KeepLast { depth: 5 });
    }
}
