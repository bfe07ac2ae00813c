//! std_msgs.

use super::{ros_message, Time};

ros_message! {
    /// std_msgs/Header: stamp and coordinate frame.
    #[derive(Default)]
    Header = "std_msgs/msg/Header", "builtin_interfaces/Time stamp\nstring frame_id\n";
    { stamp: Time, frame_id: String }
}

ros_message! {
    /// std_msgs/Bool (the e-stop input).
    #[derive(Default, Copy)]
    Bool = "std_msgs/msg/Bool", "bool data\n";
    { data: bool }
}

ros_message! {
    /// std_msgs/Empty (the e-stop reset). ROS 2 serialises an empty struct as one placeholder
    /// byte, which the IDL names `structure_needs_at_least_one_member`.
    #[derive(Default, Copy)]
    Empty = "std_msgs/msg/Empty", "";
    { structure_needs_at_least_one_member: u8 }
}

impl Header {
    /// A header with the given stamp [ns] and frame.
    pub fn new(stamp: crate::Nanos, frame_id: &str) -> Header {
        Header { stamp: Time::from_nanos(stamp), frame_id: frame_id.to_string() }
    }
}
