//! builtin_interfaces and rosgraph_msgs.

use super::ros_message;

ros_message! {
    /// builtin_interfaces/Time: seconds and nanoseconds since the epoch.
    #[derive(Default, Copy, Eq, PartialOrd, Ord, Hash)]
    Time = "builtin_interfaces/msg/Time", "int32 sec\nuint32 nanosec\n";
    { sec: i32, nanosec: u32 }
}

ros_message! {
    /// rosgraph_msgs/Clock: the simulated time published on /clock.
    #[derive(Default)]
    Clock = "rosgraph_msgs/msg/Clock", "builtin_interfaces/Time clock\n";
    { clock: Time }
}
