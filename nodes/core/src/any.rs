//! [`Msg`]: the closed set of messages that travel between node cores, with decoding and
//! encoding by ROS type name (what bag readers and raw transports need).

use crate::cdr::{self, CdrError};
use crate::msg::*;
use crate::ros_type::RosMessage;

macro_rules! vocabulary {
    ( $( $variant:ident ),* $(,)? ) => {
        /// Any message of the vocabulary.
        #[derive(Debug, Clone, PartialEq)]
        pub enum Msg { $( $variant($variant), )* }

        $( impl From<$variant> for Msg { fn from(m: $variant) -> Msg { Msg::$variant(m) } } )*

        impl Msg {
            /// The full ROS type name of the message inside.
            pub fn type_name(&self) -> &'static str {
                match self { $( Msg::$variant(_) => <$variant as RosMessage>::TYPE_NAME, )* }
            }

            /// Encodes the message as a CDR buffer with header into `out`.
            pub fn encode_into(&self, out: &mut Vec<u8>) -> Result<(), CdrError> {
                match self { $( Msg::$variant(m) => cdr::encode_into(m, out), )* }
            }

            /// Decodes a CDR buffer of the named type.
            pub fn decode(type_name: &str, buf: &[u8]) -> Result<Msg, CdrError> {
                let t = normalize_type_name(type_name);
                $( if t == <$variant as RosMessage>::TYPE_NAME {
                    return cdr::decode::<$variant>(buf).map(Msg::$variant);
                } )*
                Err(CdrError::UnknownType(type_name.to_string()))
            }

            /// Whether the named type is part of the vocabulary.
            pub fn is_known_type(type_name: &str) -> bool {
                let t = normalize_type_name(type_name);
                [ $( <$variant as RosMessage>::TYPE_NAME ),* ].contains(&t.as_ref())
            }
        }

        /// Every type of the vocabulary (plus its dependencies) with its `.msg` text.
        pub static DEFINITIONS: &[(&str, &str)] = &[
            $( (<$variant as RosMessage>::TYPE_NAME, <$variant as RosMessage>::DEFINITION), )*
            (<Time as RosMessage>::TYPE_NAME, <Time as RosMessage>::DEFINITION),
            (<Header as RosMessage>::TYPE_NAME, <Header as RosMessage>::DEFINITION),
            (<Vector3 as RosMessage>::TYPE_NAME, <Vector3 as RosMessage>::DEFINITION),
            (<Point as RosMessage>::TYPE_NAME, <Point as RosMessage>::DEFINITION),
            (<Quaternion as RosMessage>::TYPE_NAME, <Quaternion as RosMessage>::DEFINITION),
            (<Pose as RosMessage>::TYPE_NAME, <Pose as RosMessage>::DEFINITION),
            (<PoseWithCovariance as RosMessage>::TYPE_NAME, <PoseWithCovariance as RosMessage>::DEFINITION),
            (<Twist as RosMessage>::TYPE_NAME, <Twist as RosMessage>::DEFINITION),
            (<TwistWithCovariance as RosMessage>::TYPE_NAME, <TwistWithCovariance as RosMessage>::DEFINITION),
            (<KeyValue as RosMessage>::TYPE_NAME, <KeyValue as RosMessage>::DEFINITION),
            (<DiagnosticStatus as RosMessage>::TYPE_NAME, <DiagnosticStatus as RosMessage>::DEFINITION),
            (<OdorEvent as RosMessage>::TYPE_NAME, <OdorEvent as RosMessage>::DEFINITION),
        ];
    };
}

vocabulary!(
    ChemSample,
    OdorEventArray,
    OdorBearing,
    PlumeFeatures,
    SearchState,
    Vector3Stamped,
    Odometry,
    Bool,
    Empty,
    LaserScan,
    Twist,
    TwistStamped,
    PointStamped,
    DiagnosticArray,
    Clock,
);

/// `pkg/Type` -> `pkg/msg/Type`; full names pass through.
pub fn normalize_type_name(type_name: &str) -> std::borrow::Cow<'_, str> {
    let parts: Vec<&str> = type_name.split('/').collect();
    match parts.as_slice() {
        [p, t] => std::borrow::Cow::Owned(format!("{p}/msg/{t}")),
        _ => std::borrow::Cow::Borrowed(type_name),
    }
}

impl Msg {
    /// Encodes into a fresh buffer.
    pub fn encode(&self) -> Result<Vec<u8>, CdrError> {
        let mut out = Vec::with_capacity(64);
        self.encode_into(&mut out)?;
        Ok(out)
    }

    /// The header stamp [ns] of stamped messages; `None` for unstamped ones.
    pub fn header_stamp(&self) -> Option<crate::Nanos> {
        let h = match self {
            Msg::ChemSample(m) => &m.header,
            Msg::OdorEventArray(m) => &m.header,
            Msg::OdorBearing(m) => &m.header,
            Msg::PlumeFeatures(m) => &m.header,
            Msg::SearchState(m) => &m.header,
            Msg::Vector3Stamped(m) => &m.header,
            Msg::Odometry(m) => &m.header,
            Msg::LaserScan(m) => &m.header,
            Msg::TwistStamped(m) => &m.header,
            Msg::PointStamped(m) => &m.header,
            Msg::DiagnosticArray(m) => &m.header,
            Msg::Clock(c) => return Some(c.clock.to_nanos()),
            Msg::Bool(_) | Msg::Empty(_) | Msg::Twist(_) => return None,
        };
        Some(h.stamp.to_nanos())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ros_type::full_definition;

    #[test]
    fn every_type_round_trips_by_name_and_has_a_full_schema() {
        let samples: Vec<Msg> = vec![
            ChemSample { channels: vec!["left".into()], values: vec![1.5e4], ..Default::default() }.into(),
            Odometry::default().into(),
            Empty::default().into(),
            DiagnosticArray::default().into(),
            Clock::default().into(),
        ];
        for m in samples {
            let b = m.encode().expect("encodes");
            assert_eq!(Msg::decode(m.type_name(), &b).expect("decodes"), m);
            assert!(full_definition(m.type_name()).is_some(), "{}", m.type_name());
        }
        assert!(Msg::is_known_type("std_msgs/Bool"));
        assert!(matches!(Msg::decode("foo/msg/Bar", &[0, 1, 0, 0]), Err(CdrError::UnknownType(_))));
    }
}
