//! Decoding by a function chosen once per topic: the reader looks the type up when it first
//! meets a topic, then calls the type's own CDR decoder for every message of it.

use sillage_core::cdr::{self, CdrError};
use sillage_core::msg::*;
use sillage_core::ros_type::RosMessage;
use sillage_core::Msg;

/// Decodes one CDR buffer into a [`Msg`].
pub type DecodeFn = fn(&[u8]) -> Result<Msg, CdrError>;

macro_rules! table {
    ($($v:ident),*) => {
        /// Every topic type of the vocabulary with its decoder.
        pub static DECODERS: &[(&str, DecodeFn)] = &[ $( (<$v as RosMessage>::TYPE_NAME, |b| cdr::decode::<$v>(b).map(Msg::from)), )* ];
    };
}
table!(
    ChemSample, OdorEventArray, OdorBearing, PlumeFeatures, SearchState, Vector3Stamped, Odometry, Bool, Empty, LaserScan, Twist,
    TwistStamped, PointStamped, DiagnosticArray, Clock
);

/// The canonical type name and decoder of a topic type (`pkg/msg/Type` or `pkg/Type`).
pub fn decoder(type_name: &str) -> Option<(&'static str, DecodeFn)> {
    DECODERS.iter().find(|(n, _)| sillage_core::any::same_type(type_name, n)).copied()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_table_covers_the_vocabulary_and_agrees_with_msg_decode() {
        for (name, def) in sillage_core::any::DEFINITIONS {
            // Topic types are exactly those Msg knows; the rest are field types.
            assert_eq!(decoder(name).is_some(), Msg::is_known_type(name), "{name}");
            let _ = def;
        }
        let m: Msg = Bool { data: true }.into();
        let b = m.encode().expect("encodes");
        let (n, f) = decoder("std_msgs/Bool").expect("known");
        assert_eq!(n, "std_msgs/msg/Bool");
        assert_eq!(f(&b), Msg::decode(n, &b));
    }
}
