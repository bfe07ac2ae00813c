//! [`Msg`]: the closed set of messages that travel between node cores, with decoding and
//! encoding by ROS type name (what bag readers and raw transports need).
//!
//! Variants whose message is large (Odometry with its two 36-element covariances, LaserScan,
//! OccupancyGrid, PoseWithCovarianceStamped)
//! hold it in a `Box`, so a `Msg` stays small (about 100 bytes) as it moves through the
//! executor's queues: the enum is as large as its largest variant.

use crate::cdr::{self, CdrError};
use crate::cdr_odometry;
use crate::msg::*;
use crate::ros_type::RosMessage;

/// Decodes one CDR buffer into a [`Msg`].
pub type DecodeFn = fn(&[u8]) -> Result<Msg, CdrError>;

/// The decoder of a variant: the direct path for Odometry, the generic codec otherwise.
macro_rules! decoder {
    (Odometry) => { |b| cdr_odometry::decode(b).map(Msg::Odometry) };
    ($v:ident) => { |b| cdr::decode::<$v>(b).map(Msg::from) };
}

/// The encoder of a variant: the direct path for Odometry, the generic codec otherwise.
macro_rules! encoder {
    (Odometry, $m:expr, $out:expr) => {{
        cdr_odometry::append($m, $out);
        Ok(())
    }};
    ($v:ident, $m:expr, $out:expr) => { cdr::append_to::<$v>($m, $out) };
}

/// The payload type of a variant: the message itself, or boxed.
macro_rules! payload {
    (inline, $t:ty) => { $t };
    (boxed, $t:ty) => { Box<$t> };
}

/// Wraps a message into its variant's payload.
macro_rules! wrap {
    (inline, $m:expr) => { $m };
    (boxed, $m:expr) => { Box::new($m) };
}

macro_rules! vocabulary {
    ( $( $variant:ident : $store:ident ),* $(,)? ) => {
        /// Any message of the vocabulary.
        #[derive(Debug, Clone, PartialEq)]
        pub enum Msg { $( $variant(payload!($store, $variant)), )* }

        $( impl From<$variant> for Msg { fn from(m: $variant) -> Msg { Msg::$variant(wrap!($store, m)) } } )*

        impl Msg {
            /// The full ROS type name of the message inside.
            pub fn type_name(&self) -> &'static str {
                match self { $( Msg::$variant(_) => <$variant as RosMessage>::TYPE_NAME, )* }
            }

            /// Encodes the message as a CDR buffer with header into `out`.
            pub fn encode_into(&self, out: &mut Vec<u8>) -> Result<(), CdrError> {
                out.clear();
                self.append_to(out)
            }

            /// Appends the message's CDR buffer with header to `out` (kept as it is).
            pub fn append_to(&self, out: &mut Vec<u8>) -> Result<(), CdrError> {
                match self { $( Msg::$variant(m) => encoder!($variant, m, out), )* }
            }

            /// Decodes a CDR buffer of the named type.
            pub fn decode(type_name: &str, buf: &[u8]) -> Result<Msg, CdrError> {
                match DECODERS.iter().find(|(n, _)| same_type(type_name, n)) {
                    Some((_, f)) => f(buf),
                    None => Err(CdrError::UnknownType(type_name.to_string())),
                }
            }
        }

        /// Every message type of the vocabulary with its decoder (what bag readers pick once
        /// per topic).
        pub static DECODERS: &[(&str, DecodeFn)] = &[
            $( (<$variant as RosMessage>::TYPE_NAME, decoder!($variant)), )*
        ];

        impl Msg {

            /// Whether the named type is part of the vocabulary.
            pub fn is_known_type(type_name: &str) -> bool {
                [ $( <$variant as RosMessage>::TYPE_NAME ),* ].iter().any(|t| same_type(type_name, t))
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
            (<MapMetaData as RosMessage>::TYPE_NAME, <MapMetaData as RosMessage>::DEFINITION),
            (<KeyValue as RosMessage>::TYPE_NAME, <KeyValue as RosMessage>::DEFINITION),
            (<DiagnosticStatus as RosMessage>::TYPE_NAME, <DiagnosticStatus as RosMessage>::DEFINITION),
            (<OdorEvent as RosMessage>::TYPE_NAME, <OdorEvent as RosMessage>::DEFINITION),
        ];
    };
}

vocabulary!(
    ChemSample: inline,
    OdorEventArray: inline,
    OdorBearing: inline,
    PlumeFeatures: inline,
    SearchState: inline,
    Vector3Stamped: inline,
    Odometry: boxed,
    Bool: inline,
    Empty: inline,
    LaserScan: boxed,
    Twist: inline,
    TwistStamped: inline,
    PointStamped: inline,
    DiagnosticArray: inline,
    Clock: inline,
    OccupancyGrid: boxed,
    PoseWithCovarianceStamped: boxed,
);

/// `pkg/Type` -> `pkg/msg/Type`; full names pass through (without allocating).
pub fn normalize_type_name(type_name: &str) -> std::borrow::Cow<'_, str> {
    match short_parts(type_name) {
        Some((p, t)) => std::borrow::Cow::Owned(format!("{p}/msg/{t}")),
        None => std::borrow::Cow::Borrowed(type_name),
    }
}

/// `Some((pkg, Type))` for a short name `pkg/Type` (exactly one slash).
fn short_parts(type_name: &str) -> Option<(&str, &str)> {
    let (p, t) = type_name.split_once('/')?;
    (!t.contains('/')).then_some((p, t))
}

/// Whether `type_name` (full `pkg/msg/Type` or short `pkg/Type`) names the full type
/// `canonical`, compared without allocating.
pub fn same_type(type_name: &str, canonical: &str) -> bool {
    if type_name == canonical {
        return true;
    }
    let Some((p, t)) = short_parts(type_name) else { return false };
    canonical.strip_prefix(p).and_then(|r| r.strip_prefix("/msg/")) == Some(t)
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
            Msg::OccupancyGrid(m) => &m.header,
            Msg::PoseWithCovarianceStamped(m) => &m.header,
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
            OccupancyGrid { data: vec![0, -1, 100], ..Default::default() }.into(),
            PoseWithCovarianceStamped::default().into(),
        ];
        for m in samples {
            let b = m.encode().expect("encodes");
            assert_eq!(Msg::decode(m.type_name(), &b).expect("decodes"), m);
            assert!(full_definition(m.type_name()).is_some(), "{}", m.type_name());
        }
        assert!(Msg::is_known_type("std_msgs/Bool"));
        assert!(Msg::is_known_type("std_msgs/msg/Bool"));
        assert!(!Msg::is_known_type("std_msgs/msg/Boo"));
        assert!(!Msg::is_known_type("std_msgs/Bool/x"));
        assert!(matches!(Msg::decode("nav_msgs/Odometry", &Msg::from(Odometry::default()).encode().expect("encodes")), Ok(Msg::Odometry(_))));
        assert!(matches!(Msg::decode("foo/msg/Bar", &[0, 1, 0, 0]), Err(CdrError::UnknownType(_))));
    }

    #[test]
    fn type_names_compare_short_and_full() {
        assert!(same_type("nav_msgs/Odometry", "nav_msgs/msg/Odometry"));
        assert!(same_type("nav_msgs/msg/Odometry", "nav_msgs/msg/Odometry"));
        assert!(!same_type("nav_msgs/Odom", "nav_msgs/msg/Odometry"));
        assert!(!same_type("geometry_msgs/Odometry", "nav_msgs/msg/Odometry"));
        assert!(!same_type("Odometry", "nav_msgs/msg/Odometry"));
        assert_eq!(normalize_type_name("nav_msgs/Odometry"), "nav_msgs/msg/Odometry");
        assert!(matches!(normalize_type_name("nav_msgs/msg/Odometry"), std::borrow::Cow::Borrowed(_)));
    }

    #[test]
    fn a_msg_stays_small() {
        // Moved by value through the executor's queues: the large messages are boxed.
        assert!(std::mem::size_of::<Msg>() <= 128, "Msg is {} bytes", std::mem::size_of::<Msg>());
    }
}
