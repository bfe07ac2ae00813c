//! The `search_restart` service: a `std_srvs/srv/Trigger` beside the `search_restart` topic of
//! a hosted core (the arbiter), for operators who restart a search with `ros2 service call`.
//!
//! A request becomes one `std_msgs/Empty` on that input, handled in order with every other
//! input of the node; the response says it was queued (the arbiter's diagnostics say what it
//! did: restarted, or refused while the e-stop is latched, or nothing declared).
//!
//! std_srvs is not among the interfaces r2r pre-generates for `doc-only`, so the service exists
//! only in real builds (where std_srvs is installed with every ROS 2 distribution's base); under
//! `doc-only` no service is made.

use super::Event;
#[allow(unused_imports)] // StreamExt is used where r2r is real, not under doc-only
use futures::stream::{BoxStream, StreamExt};
use r2r::Node;
use sillage_core::msg::Empty;
use sillage_core::{Msg, Port};

/// The input topic a service is offered for.
pub const TOPIC: &str = "search_restart";

/// CDR of one `std_msgs/Empty` (encapsulation header and the one placeholder byte).
#[cfg_attr(feature = "doc-only", allow(dead_code))]
fn empty_cdr() -> Vec<u8> {
    let mut buf = Vec::with_capacity(8);
    // Encoding an empty struct cannot fail; an empty buffer would be refused by the core.
    let _ = Msg::Empty(Empty::default()).encode_into(&mut buf);
    buf
}

/// The service's event stream for input `index` (port `port`), if it is a restart input.
#[cfg(not(feature = "doc-only"))]
pub fn service(node: &mut Node, index: usize, port: &Port) -> Result<Option<BoxStream<'static, Event>>, r2r::Error> {
    use r2r::std_srvs::srv::Trigger;
    if port.topic != TOPIC || port.type_name != "std_msgs/msg/Empty" {
        return Ok(None);
    }
    let requests = node.create_service::<Trigger::Service>(TOPIC, r2r::QosProfile::default())?;
    let bytes = empty_cdr();
    Ok(Some(
        requests
            .map(move |req| {
                let reply = Trigger::Response { success: true, message: "search_restart queued for the arbiter (see its diagnostics)".into() };
                let _ = req.respond(reply);
                Event::Input(index, bytes.clone())
            })
            .boxed(),
    ))
}

/// Under `doc-only` there is no std_srvs: no service.
#[cfg(feature = "doc-only")]
pub fn service(_node: &mut Node, _index: usize, _port: &Port) -> Result<Option<BoxStream<'static, Event>>, r2r::Error> {
    Ok(None)
}
