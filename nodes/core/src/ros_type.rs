//! What every message mirror knows about itself: its ROS type name, its `.msg` definition, and
//! (for the drift test against `msgs/`) its fields and constants.

use serde::{de::DeserializeOwned, Serialize};

/// A Rust mirror of a ROS 2 message type.
pub trait RosMessage: Serialize + DeserializeOwned + Clone + std::fmt::Debug + PartialEq {
    /// Full ROS type name, e.g. `geometry_msgs/msg/Twist`.
    const TYPE_NAME: &'static str;
    /// The type's own `.msg` text (without its dependencies).
    const DEFINITION: &'static str;
    /// Rust fields in declaration (= wire) order: (name, Rust type as written).
    const FIELDS: &'static [(&'static str, &'static str)];
    /// Constants: (name, Rust type, value as written).
    const CONSTANTS: &'static [(&'static str, &'static str, &'static str)];
}

/// The `.msg` text of every type of the vocabulary, by full type name.
pub fn definition_of(type_name: &str) -> Option<&'static str> {
    crate::any::DEFINITIONS.iter().find(|(n, _)| *n == type_name).map(|(_, d)| *d)
}

/// Primitive types of the ROS 2 interface definition language.
pub const PRIMITIVES: &[&str] = &[
    "bool", "byte", "char", "float32", "float64", "int8", "uint8", "int16", "uint16", "int32",
    "uint32", "int64", "uint64", "string", "wstring",
];

/// One field or constant line of a `.msg` file.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum MsgLine {
    /// `type name [default]`; `ty` keeps any array suffix (`float64[36]`, `string[]`).
    Field { ty: String, name: String },
    /// `type NAME=value`.
    Constant { ty: String, name: String, value: String },
}

/// Parses `.msg` text into field and constant lines (comments and blank lines dropped).
pub fn parse_msg(text: &str) -> Vec<MsgLine> {
    let mut out = Vec::new();
    for raw in text.lines() {
        let line = raw.split('#').next().unwrap_or("").trim();
        if line.is_empty() {
            continue;
        }
        let mut parts = line.splitn(2, char::is_whitespace);
        let ty = parts.next().unwrap_or("").to_string();
        let rest = parts.next().unwrap_or("").trim();
        if let Some((name, value)) = rest.split_once('=') {
            out.push(MsgLine::Constant {
                ty,
                name: name.trim().to_string(),
                value: value.trim().to_string(),
            });
        } else {
            let name = rest.split_whitespace().next().unwrap_or("").to_string();
            out.push(MsgLine::Field { ty, name });
        }
    }
    out
}

/// The base type of a field type: `geometry_msgs/Vector3[]` -> `geometry_msgs/Vector3`.
fn base_type(ty: &str) -> &str {
    ty.split('[').next().unwrap_or(ty).split("<=").next().unwrap_or(ty)
}

/// Normalises a field type reference found in package `pkg` to `pkg/msg/Type`, or `None` for a
/// primitive.
pub fn resolve_type(ty: &str, pkg: &str) -> Option<String> {
    let base = base_type(ty);
    if PRIMITIVES.contains(&base) {
        return None;
    }
    let parts: Vec<&str> = base.split('/').collect();
    Some(match parts.as_slice() {
        [t] if *t == "Header" => "std_msgs/msg/Header".to_string(),
        [t] => format!("{pkg}/msg/{t}"),
        [p, t] => format!("{p}/msg/{t}"),
        _ => base.to_string(),
    })
}

/// The full `ros2msg` schema text of a type, as rosbag2 writes it into MCAP schemas: the root
/// definition, then each dependency once, depth first, after a line of 80 `=` and
/// `MSG: pkg/Type`. `None` if the type or one of its dependencies is not in the vocabulary.
pub fn full_definition(type_name: &str) -> Option<String> {
    let mut out = definition_of(type_name)?.trim_end().to_string();
    out.push('\n');
    let mut seen = vec![type_name.to_string()];
    append_deps(type_name, &mut seen, &mut out)?;
    Some(out)
}

fn append_deps(type_name: &str, seen: &mut Vec<String>, out: &mut String) -> Option<()> {
    let pkg = type_name.split('/').next()?;
    for line in parse_msg(definition_of(type_name)?) {
        let MsgLine::Field { ty, .. } = line else { continue };
        let Some(dep) = resolve_type(&ty, pkg) else { continue };
        if seen.contains(&dep) {
            continue;
        }
        seen.push(dep.clone());
        let short = dep.replace("/msg/", "/");
        out.push_str(&"=".repeat(80));
        out.push_str("\nMSG: ");
        out.push_str(&short);
        out.push('\n');
        out.push_str(definition_of(&dep)?.trim_end());
        out.push('\n');
        append_deps(&dep, seen, out)?;
    }
    Some(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parse_fields_constants_and_defaults() {
        let lines = parse_msg("# c\nuint8 A=3 # x\nfloat64 w 1.0\nstring[] names\n");
        assert_eq!(
            lines,
            vec![
                MsgLine::Constant { ty: "uint8".into(), name: "A".into(), value: "3".into() },
                MsgLine::Field { ty: "float64".into(), name: "w".into() },
                MsgLine::Field { ty: "string[]".into(), name: "names".into() },
            ]
        );
    }

    #[test]
    fn odometry_schema_lists_each_dependency_once_depth_first() {
        let text = full_definition("nav_msgs/msg/Odometry").expect("known type");
        let msgs: Vec<&str> =
            text.lines().filter_map(|l| l.strip_prefix("MSG: ")).collect();
        // Depth-first order as rosbag2 writes it (common practice of rosbag2's MCAP plugin).
        assert_eq!(
            msgs,
            vec![
                "std_msgs/Header",
                "builtin_interfaces/Time",
                "geometry_msgs/PoseWithCovariance",
                "geometry_msgs/Pose",
                "geometry_msgs/Point",
                "geometry_msgs/Quaternion",
                "geometry_msgs/TwistWithCovariance",
                "geometry_msgs/Twist",
                "geometry_msgs/Vector3",
            ]
        );
        assert_eq!(text.matches(&"=".repeat(80)).count(), msgs.len());
    }
}
