//! ROS 2 names on the DDS wire: the one place where sillage turns a ROS topic or type name
//! into the DDS name other ROS 2 implementations expect, and back.
//!
//! Contract (the mapping every ROS 2 middleware on DDS uses; the ROS 2 design article "Topic and Service name mapping to DDS", "ROS 2 on
//! the DDS wire"):
//! - a fully qualified ROS topic `/ns/name` is the DDS topic `rt/ns/name` (prefix `rt`, for
//!   "ROS topic");
//! - a ROS type `pkg/msg/Type` (or the short `pkg/Type`) is the DDS type
//!   `pkg::msg::dds_::Type_`.
//!
//! Topic names are checked against the ROS 2 rules for fully qualified names before they are
//! mapped, so a bad remap or namespace is refused at start-up with the offending name.

use crate::error::DdsError;

/// Prefix of DDS topics that carry ROS 2 topics.
pub const TOPIC_PREFIX: &str = "rt";

/// Checks a fully qualified ROS 2 topic name: starts with `/`, tokens separated by single
/// slashes, each token non-empty, made of ASCII letters, digits and `_`, not starting with a
/// digit (the ROS 2 topic name rules, common practice of rcl's name validation).
pub fn validate_topic(fqn: &str) -> Result<(), DdsError> {
    let bad = |reason: &str| Err(DdsError::BadTopicName { topic: fqn.to_string(), reason: reason.to_string() });
    let Some(rest) = fqn.strip_prefix('/') else {
        return bad("a fully qualified name starts with '/'");
    };
    if rest.is_empty() {
        return bad("the name is empty");
    }
    for token in rest.split('/') {
        let Some(first) = token.chars().next() else {
            return bad("empty token ('//' or trailing '/')");
        };
        if first.is_ascii_digit() {
            return bad("a token must not start with a digit");
        }
        if let Some(c) = token.chars().find(|c| !(c.is_ascii_alphanumeric() || *c == '_')) {
            return bad(&format!("character {c:?} is not allowed (letters, digits, '_' and '/' only)"));
        }
    }
    Ok(())
}

/// The DDS topic of a fully qualified ROS 2 topic: `/cmd_vel` -> `rt/cmd_vel`.
pub fn dds_topic(fqn: &str) -> Result<String, DdsError> {
    validate_topic(fqn)?;
    Ok(format!("{TOPIC_PREFIX}{fqn}"))
}

/// The ROS 2 topic of a DDS topic, if it is one: `rt/cmd_vel` -> `/cmd_vel`.
pub fn ros_topic(dds: &str) -> Option<String> {
    let rest = dds.strip_prefix(TOPIC_PREFIX)?;
    validate_topic(rest).ok()?;
    Some(rest.to_string())
}

/// Splits a ROS type name (`pkg/msg/Type` or `pkg/Type`) into package and type.
pub fn split_type(ros_type: &str) -> Result<(&str, &str), DdsError> {
    let parts: Vec<&str> = ros_type.split('/').collect();
    let (pkg, name) = match parts.as_slice() {
        [p, "msg", t] | [p, t] => (*p, *t),
        _ => return Err(DdsError::BadTypeName { type_name: ros_type.to_string() }),
    };
    let ident = |s: &str| {
        s.chars().next().is_some_and(|c| c.is_ascii_alphabetic())
            && s.chars().all(|c| c.is_ascii_alphanumeric() || c == '_')
    };
    if ident(pkg) && ident(name) {
        Ok((pkg, name))
    } else {
        Err(DdsError::BadTypeName { type_name: ros_type.to_string() })
    }
}

/// The DDS type of a ROS 2 message type:
/// `geometry_msgs/msg/Twist` -> `geometry_msgs::msg::dds_::Twist_`.
pub fn dds_type(ros_type: &str) -> Result<String, DdsError> {
    let (pkg, name) = split_type(ros_type)?;
    Ok(format!("{pkg}::msg::dds_::{name}_"))
}

/// The ROS 2 type of a DDS type, if it follows the ROS 2 convention:
/// `geometry_msgs::msg::dds_::Twist_` -> `geometry_msgs/msg/Twist`.
pub fn ros_type(dds: &str) -> Option<String> {
    let (pkg, rest) = dds.split_once("::msg::dds_::")?;
    let name = rest.strip_suffix('_')?;
    let ros = format!("{pkg}/msg/{name}");
    split_type(&ros).ok()?;
    Some(ros)
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::any::DEFINITIONS;

    #[test]
    fn topics_get_the_rt_prefix() {
        // the ROS 2 design article "Topic and Service name mapping to DDS", "ROS 2 on the DDS wire": /cmd_vel is rt/cmd_vel.
        assert_eq!(dds_topic("/cmd_vel").expect("valid"), "rt/cmd_vel");
        assert_eq!(dds_topic("/robot1/chem").expect("valid"), "rt/robot1/chem");
        assert_eq!(dds_topic("/diagnostics").expect("valid"), "rt/diagnostics");
        assert_eq!(ros_topic("rt/robot1/odom").as_deref(), Some("/robot1/odom"));
        assert_eq!(ros_topic("rq/arbiter/get_parametersRequest"), None);
        assert_eq!(ros_topic("DCPSPublication"), None);
    }

    #[test]
    fn bad_topic_names_are_refused_with_the_reason() {
        for (name, part) in [
            ("cmd_vel", "starts with '/'"),
            ("/", "empty"),
            ("/a//b", "empty token"),
            ("/a/", "empty token"),
            ("/9lives", "digit"),
            ("/odom-raw", "'-'"),
            ("/robot 1/odom", "' '"),
        ] {
            let e = dds_topic(name).expect_err(name);
            let msg = e.to_string();
            assert!(msg.contains(name) && msg.contains(part), "{name}: {msg}");
        }
    }

    #[test]
    fn types_map_to_dds_names_and_back() {
        // rosidl DDS type naming (common practice of every ROS 2 rmw on DDS): geometry_msgs/msg/Twist is geometry_msgs::msg::dds_::Twist_.
        assert_eq!(dds_type("geometry_msgs/msg/Twist").expect("valid"), "geometry_msgs::msg::dds_::Twist_");
        assert_eq!(dds_type("geometry_msgs/Twist").expect("valid"), "geometry_msgs::msg::dds_::Twist_");
        assert_eq!(dds_type("sillage_msgs/msg/ChemSample").expect("valid"), "sillage_msgs::msg::dds_::ChemSample_");
        assert_eq!(dds_type("rosgraph_msgs/msg/Clock").expect("valid"), "rosgraph_msgs::msg::dds_::Clock_");
        assert_eq!(ros_type("std_msgs::msg::dds_::Bool_").as_deref(), Some("std_msgs/msg/Bool"));
        assert_eq!(ros_type("std_msgs::msg::Bool"), None);
        assert_eq!(ros_type("ShapeType"), None);
        for bad in ["Twist", "geometry_msgs/srv/Twist", "a/b/c/d", "/Twist", "geometry_msgs/"] {
            assert!(matches!(dds_type(bad), Err(DdsError::BadTypeName { .. })), "{bad}");
        }
    }

    #[test]
    fn every_vocabulary_type_round_trips() {
        for (ros, _) in DEFINITIONS {
            let dds = dds_type(ros).expect(ros);
            assert!(dds.ends_with('_') && dds.contains("::msg::dds_::"), "{dds}");
            assert_eq!(ros_type(&dds).as_deref(), Some(*ros));
        }
    }

    /// The same mapping as ros2-client's (an independent implementation, 0.12.1), which names
    /// the DDS types of every topic the executor creates.
    #[cfg(feature = "dds")]
    #[test]
    fn agrees_with_ros2_client() {
        use ros2_client::{MessageTypeName, Name, NodeName};
        let node = NodeName::new("/robot1", "arbiter").expect("node name");
        for fqn in ["/cmd_vel", "/robot1/chem", "/a/b/c_d", "/clock"] {
            let name = Name::parse(fqn).expect("ros2-client parses it");
            assert_eq!(name.to_dds_name("rt", &node, ""), dds_topic(fqn).expect("valid"), "{fqn}");
        }
        // A relative name in the node's namespace resolves the same way as ours.
        let rel = Name::parse("odom").expect("relative");
        let ours = sillage_core::executor::resolve_topic("odom", "/robot1", "arbiter");
        assert_eq!(rel.to_dds_name("rt", &node, ""), dds_topic(&ours).expect("valid"));
        for (ros, _) in DEFINITIONS {
            let (pkg, t) = split_type(ros).expect("valid");
            assert_eq!(MessageTypeName::new(pkg, t).dds_msg_type(), dds_type(ros).expect("valid"), "{ros}");
        }
    }
}
