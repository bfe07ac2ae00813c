//! Diagnostics aggregation: once per [`PERIOD`] (1 Hz, the usual rate of /diagnostics) the
//! executor gathers every hosted node's own statuses ([`sillage_core::NodeCore::diagnostics`])
//! and its executor status ([`NodeRuntime::executor_status`]) into one
//! diagnostic_msgs/DiagnosticArray stamped with the ROS time, published on the absolute topic
//! `/diagnostics` (so one aggregator sees every robot).

use crate::runtime::NodeRuntime;
use sillage_core::msg::{DiagnosticArray, DiagnosticStatus, Header};
use sillage_core::time::SECOND;
use sillage_core::Nanos;

/// Diagnostics period [ns]: 1 s.
pub const PERIOD: Nanos = SECOND;

/// The topic diagnostics go to (absolute: not namespaced, by ROS convention).
pub const TOPIC: &str = "/diagnostics";

/// One DiagnosticArray from every hosted node at ROS time `now` [ns]: for each node (in the
/// given order) its executor status, then the core's own statuses.
pub fn collect<'a, I>(now: Nanos, runtimes: I) -> DiagnosticArray
where
    I: IntoIterator<Item = &'a mut NodeRuntime>,
{
    let mut status: Vec<DiagnosticStatus> = Vec::new();
    for rt in runtimes {
        status.push(rt.executor_status());
        rt.core().diagnostics(now, &mut status);
    }
    DiagnosticArray { header: Header::new(now, ""), status }
}
