//! QoS on the wire: the same profile per port class as the r2r executor
//! (`sillage_ros2::qos`, re-exported here), plus the `/clock` subscription's profile and, with
//! `dds`, the conversion to `ros2-client` profiles.
//!
//! | class | reliability | durability | history |
//! | --- | --- | --- | --- |
//! | `SensorData` | best effort | volatile | keep last 5 |
//! | `Reliable` | reliable | volatile | keep last 10 |
//! | `Latched` | reliable | transient local | keep last 1 |
//! | `/clock` | best effort | volatile | keep last 1 |

pub use sillage_ros2::qos::{Durability, QosSpec, Reliability};

/// The profile of the `/clock` subscription: keep last 1, best effort, volatile (rclcpp's
/// `ClockQoS`, from memory), which every publisher's profile reaches.
pub const CLOCK: QosSpec = QosSpec { reliability: Reliability::BestEffort, durability: Durability::Volatile, depth: 1 };

/// The `ros2-client` profile of a spec. A reliable publication never blocks the executor's
/// loop: a full send window is a counted publication failure, not a stall of every node.
#[cfg(feature = "dds")]
pub fn profile(q: &QosSpec) -> ros2_client::QosProfile {
    use ros2_client::qos;
    let base = ros2_client::QosProfile::subscription_default().history(qos::History::KeepLast { depth: q.depth });
    let base = match q.reliability {
        Reliability::BestEffort => base.reliability_best_effort(),
        Reliability::Reliable => base.reliability_reliable(qos::WhenFull::Fail),
    };
    base.durability(match q.durability {
        Durability::Volatile => qos::Durability::Volatile,
        Durability::TransientLocal => qos::Durability::TransientLocal,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::Qos;

    #[test]
    fn every_class_reaches_the_clock_subscription() {
        for class in [Qos::SensorData, Qos::Reliable, Qos::Latched] {
            assert_eq!(QosSpec::of(class).mismatch(&CLOCK), None, "{class:?}");
        }
        assert_eq!(CLOCK.describe(), "best effort, keep last 1, volatile");
    }

    #[cfg(feature = "dds")]
    #[test]
    fn converts_to_ros2_client_profiles() {
        use ros2_client::qos;
        let p = profile(&QosSpec::of(Qos::Latched));
        assert_eq!(p.durability, qos::Durability::TransientLocal);
        assert_eq!(p.history, qos::History::KeepLast { depth: 1 });
        assert!(matches!(p.reliability, qos::Reliability::Reliable { when_full: qos::WhenFull::Fail }));
        let s = profile(&QosSpec::of(Qos::SensorData));
        assert_eq!(s.reliability, qos::Reliability::BestEffort);
        assert_eq!(s.history, qos::History::KeepLast { depth: 5 });
        assert_eq!(profile(&QosSpec::of(Qos::Reliable)).durability, qos::Durability::Volatile);
    }
}
