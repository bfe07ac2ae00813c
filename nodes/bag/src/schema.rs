//! Checks that a bag's `ros2msg` schema describes the same wire layout as sillage's definition
//! of the type: same sections (root type and each `MSG: pkg/Type` dependency), and in each the
//! same field types and names in the same order. Comments, constants, default values,
//! whitespace and the order of dependency sections do not matter.

use sillage_core::ros_type::{full_definition, parse_msg, resolve_type, MsgLine, PRIMITIVES};
use std::collections::BTreeMap;

/// Field lists by section: "" for the root type, else `pkg/msg/Type`.
type Layout = BTreeMap<String, Vec<(String, String)>>;

/// The layout of concatenated `.msg` text whose root type is `root` (`pkg/msg/Type`).
fn layout(text: &str, root: &str) -> Layout {
    let mut out = Layout::new();
    let mut section = root.to_string();
    let mut body = String::new();
    let flush = |section: &str, body: &str, out: &mut Layout| {
        let pkg = section.split('/').next().unwrap_or("");
        let fields = parse_msg(body)
            .into_iter()
            .filter_map(|l| match l {
                MsgLine::Field { ty, name } => Some((normalize_field_type(&ty, pkg), name)),
                MsgLine::Constant { .. } => None,
            })
            .collect();
        out.insert(section.to_string(), fields);
    };
    for raw in text.lines() {
        let line = raw.split('#').next().unwrap_or("").trim_end();
        if line.starts_with("=====") && line.trim().chars().all(|c| c == '=') {
            continue;
        }
        if let Some(name) = line.strip_prefix("MSG: ") {
            flush(&section, &body, &mut out);
            body.clear();
            section = resolve_type(name.trim(), "").unwrap_or_else(|| name.trim().to_string());
            continue;
        }
        body.push_str(line);
        body.push('\n');
    }
    flush(&section, &body, &mut out);
    out
}

/// `Header` -> `std_msgs/msg/Header`, `Vector3[]` in geometry_msgs -> `geometry_msgs/msg/Vector3[]`;
/// primitives keep their spelling (with `byte` as `uint8` and `char` as `uint8`, same wire size).
fn normalize_field_type(ty: &str, pkg: &str) -> String {
    let (base, suffix) = match ty.find('[') {
        Some(i) => (&ty[..i], &ty[i..]),
        None => (ty, ""),
    };
    let base = base.split("<=").next().unwrap_or(base);
    if PRIMITIVES.contains(&base) {
        let b = match base {
            "byte" | "char" => "uint8",
            other => other,
        };
        return format!("{b}{suffix}");
    }
    format!("{}{suffix}", resolve_type(base, pkg).unwrap_or_else(|| base.to_string()))
}

/// `Ok(())` when `schema` (from a bag) matches sillage's definition of `type_name`, else the
/// first difference in words. An empty schema (some writers leave it out) is accepted.
pub fn check_ros2msg(type_name: &str, schema: &str) -> Result<(), String> {
    if schema.trim().is_empty() {
        return Ok(());
    }
    let ours_text = full_definition(type_name).ok_or_else(|| format!("no definition of '{type_name}'"))?;
    let ours = layout(&ours_text, type_name);
    let theirs = layout(schema, type_name);
    let root_first = ours.iter().filter(|(s, _)| *s == type_name).chain(ours.iter().filter(|(s, _)| *s != type_name));
    for (section, fields) in root_first {
        let label = if section == type_name { "the root type".to_string() } else { format!("'{section}'") };
        let Some(other) = theirs.get(section) else {
            return Err(format!("the schema has no section for {label}"));
        };
        if other != fields {
            let show = |f: &[(String, String)]| f.iter().map(|(t, n)| format!("{t} {n}")).collect::<Vec<_>>().join("; ");
            return Err(format!("{label} has fields [{}], expected [{}]", show(other), show(fields)));
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn own_schema_matches_and_comments_do_not_matter() {
        for t in ["nav_msgs/msg/Odometry", "sillage_msgs/msg/ChemSample", "std_msgs/msg/Empty"] {
            let text = full_definition(t).expect("known");
            assert_eq!(check_ros2msg(t, &text), Ok(()), "{t}");
            let commented = text.replace('\n', "  # note\n");
            assert_eq!(check_ros2msg(t, &commented), Ok(()), "{t}");
        }
    }

    #[test]
    fn a_different_layout_is_named() {
        let bad = "std_msgs/Header header\nfloat32 x\nfloat64 y\nfloat64 z\n==========\nMSG: std_msgs/Header\nbuiltin_interfaces/Time stamp\nstring frame_id\n";
        let e = check_ros2msg("geometry_msgs/msg/Vector3Stamped", bad).expect_err("mismatch");
        assert!(e.contains("root type"), "{e}");
        let missing = "std_msgs/Header header\ngeometry_msgs/Vector3 vector\n";
        let e = check_ros2msg("geometry_msgs/msg/Vector3Stamped", missing).expect_err("mismatch");
        assert!(e.contains("no section"), "{e}");
    }
}
