//! Our CDR bytes against the `rosbags` Python library's serializer (rosbags 0.11.9, ROS2_HUMBLE
//! type store; cross-checked there with mcap-ros2-support 0.6.0): for every case in
//! tests/fixtures/cdr/cdr_cases.json (made by tests/refs/make_cdr_fixtures.py), encoding the
//! value gives exactly the reference bytes, and decoding the reference bytes gives the value.

use serde::de::DeserializeOwned;
use sillage_core::msg::*;
use sillage_core::{cdr, RosMessage};
use std::collections::BTreeMap;

#[derive(serde::Deserialize)]
struct Case {
    #[serde(rename = "type")]
    type_name: String,
    case: String,
    value: serde_json::Value,
    cdr_hex: String,
}

fn check<T: RosMessage + DeserializeOwned>(c: &Case) -> Result<(), String> {
    let value: T = serde_json::from_value(c.value.clone()).map_err(|e| format!("value does not fit the mirror: {e}"))?;
    let want = hex::decode(&c.cdr_hex).map_err(|e| format!("bad hex: {e}"))?;
    let got = cdr::encode(&value).map_err(|e| e.to_string())?;
    if got != want {
        return Err(format!("encoding differs:\n ours {}\n refs {}", hex::encode(&got), c.cdr_hex));
    }
    let back: T = cdr::decode(&want).map_err(|e| e.to_string())?;
    if back != value {
        return Err(format!("decoding differs: {back:?} vs {value:?}"));
    }
    Ok(())
}

macro_rules! dispatch {
    ($case:expr, $($t:ty),* $(,)?) => {{
        let c = $case;
        $( if c.type_name == <$t as RosMessage>::TYPE_NAME { Some(check::<$t>(c)) } else )*
        { None }
    }};
}

#[test]
fn every_fixture_case_matches_rosbags_bytes() {
    let path = concat!(env!("CARGO_MANIFEST_DIR"), "/../../tests/fixtures/cdr/cdr_cases.json");
    let text = std::fs::read_to_string(path).expect("fixture file present");
    let cases: Vec<Case> = serde_json::from_str(&text).expect("fixture JSON");
    let mut failures = Vec::new();
    let mut per_type: BTreeMap<String, usize> = BTreeMap::new();
    for c in &cases {
        let r = dispatch!(c, Time, Clock, Header, Bool, Empty, Vector3, Vector3Stamped, Point, PointStamped,
            Quaternion, Pose, PoseWithCovariance, Twist, TwistStamped, TwistWithCovariance, Odometry,
            LaserScan, KeyValue, DiagnosticStatus, DiagnosticArray, ChemSample, OdorEvent, OdorEventArray,
            OdorBearing, PlumeFeatures, SearchState, PoseWithCovarianceStamped, MapMetaData, OccupancyGrid);
        match r {
            None => failures.push(format!("{} / {}: no Rust mirror for this type", c.type_name, c.case)),
            Some(Err(e)) => failures.push(format!("{} / {}: {e}", c.type_name, c.case)),
            Some(Ok(())) => *per_type.entry(c.type_name.clone()).or_default() += 1,
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
    assert_eq!(per_type.len(), 29, "every vocabulary type has fixture cases: {per_type:?}");
    assert!(cases.len() >= 50, "only {} cases", cases.len());
}
