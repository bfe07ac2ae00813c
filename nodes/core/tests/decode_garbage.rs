//! Every decoder on random and mutated bytes: a typed error or a value, never a panic.

use proptest::prelude::*;
use sillage_core::msg::*;
use sillage_core::Msg;

const TYPES: &[&str] = &[
    "sillage_msgs/msg/ChemSample", "sillage_msgs/msg/OdorEventArray", "sillage_msgs/msg/OdorBearing",
    "sillage_msgs/msg/PlumeFeatures", "sillage_msgs/msg/SearchState", "geometry_msgs/msg/Vector3Stamped",
    "nav_msgs/msg/Odometry", "std_msgs/msg/Bool", "std_msgs/msg/Empty", "sensor_msgs/msg/LaserScan",
    "geometry_msgs/msg/Twist", "geometry_msgs/msg/TwistStamped", "geometry_msgs/msg/PointStamped",
    "diagnostic_msgs/msg/DiagnosticArray", "rosgraph_msgs/msg/Clock", "nav_msgs/msg/OccupancyGrid",
    "geometry_msgs/msg/PoseWithCovarianceStamped",
];

fn seeds() -> Vec<Vec<u8>> {
    let msgs: Vec<Msg> = vec![
        ChemSample { header: Header::new(5, "board"), channels: vec!["l".into(), "rr".into()], values: vec![1.0, 2.0], quantity: 0 }.into(),
        OdorEventArray { header: Header::new(7, "b"), events: vec![OdorEvent { channel: 1, polarity: 1, level: 0.5, ..Default::default() }] }.into(),
        DiagnosticArray { status: vec![DiagnosticStatus::with(1, "n: p", "m", &[("k", "v".into())])], ..Default::default() }.into(),
        LaserScan { ranges: vec![1.0; 5], ..Default::default() }.into(),
    ];
    msgs.iter().map(|m| m.encode().expect("encodes")).collect()
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(2000))]

    #[test]
    fn random_bytes_never_panic(bytes in proptest::collection::vec(any::<u8>(), 0..200), t in 0..TYPES.len()) {
        let _ = Msg::decode(TYPES[t], &bytes);
    }

    #[test]
    fn mutated_and_truncated_messages_never_panic(s in 0usize..4, cut in 0usize..200, pos in 0usize..200, byte in any::<u8>(), t in 0..TYPES.len()) {
        let mut b = seeds()[s].clone();
        if !b.is_empty() {
            let p = pos % b.len();
            b[p] = byte;
        }
        b.truncate(cut.min(b.len()));
        let _ = Msg::decode(TYPES[t], &b);
    }
}

#[test]
fn huge_sequence_length_is_an_error_not_an_allocation() {
    // A ChemSample whose `channels` count claims 2^31 strings in a 40-byte buffer.
    let mut b = ChemSample::default().into_msg_bytes();
    let count_at = 4 + 8 + 4 + 1 + 3; // header, stamp, empty frame_id (len 1 + NUL), padding
    b[count_at..count_at + 4].copy_from_slice(&0x8000_0000u32.to_le_bytes());
    assert!(Msg::decode("sillage_msgs/msg/ChemSample", &b).is_err());
}

trait IntoBytes {
    fn into_msg_bytes(self) -> Vec<u8>;
}
impl IntoBytes for ChemSample {
    fn into_msg_bytes(self) -> Vec<u8> {
        Msg::from(self).encode().expect("encodes")
    }
}
