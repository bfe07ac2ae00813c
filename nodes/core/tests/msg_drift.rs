//! The Rust mirrors of sillage_msgs against the interface package in msgs/msg/: same fields in
//! the same order with the same types, the same constants with the same values, and no message
//! without a mirror. (The CDR fixture test then proves the serde layout matches the bytes.)

use sillage_core::msg::*;
use sillage_core::ros_type::{parse_msg, MsgLine};
use sillage_core::RosMessage;

/// The Rust type a ROS field type must be mirrored as (ROS 2 interface definition, type
/// mapping of the rosidl design document: primitives, unbounded sequences as Vec).
fn rust_type(ros: &str) -> String {
    if let Some(inner) = ros.strip_suffix("[]") {
        return format!("Vec<{}>", rust_type(inner));
    }
    let prim = match ros {
        "bool" => "bool",
        "byte" | "uint8" | "char" => "u8",
        "int8" => "i8",
        "int16" => "i16",
        "uint16" => "u16",
        "int32" => "i32",
        "uint32" => "u32",
        "int64" => "i64",
        "uint64" => "u64",
        "float32" => "f32",
        "float64" => "f64",
        "string" => "String",
        other => return other.rsplit('/').next().unwrap_or(other).to_string(),
    };
    prim.to_string()
}

fn squash(s: &str) -> String {
    s.chars().filter(|c| !c.is_whitespace()).collect()
}

fn compare<T: RosMessage>(file_text: &str) -> Vec<String> {
    let mut errs = Vec::new();
    let lines = parse_msg(file_text);
    let fields: Vec<(String, String)> = lines
        .iter()
        .filter_map(|l| match l {
            MsgLine::Field { ty, name } => Some((name.clone(), rust_type(ty))),
            _ => None,
        })
        .collect();
    let ours: Vec<(String, String)> = T::FIELDS.iter().map(|(n, t)| (n.to_string(), squash(t))).collect();
    if fields != ours {
        errs.push(format!("{}: fields differ\n msg  {fields:?}\n rust {ours:?}", T::TYPE_NAME));
    }
    let consts: Vec<(String, String, i64)> = lines
        .iter()
        .filter_map(|l| match l {
            MsgLine::Constant { ty, name, value } => Some((name.clone(), rust_type(ty), value.parse().unwrap_or(i64::MIN))),
            _ => None,
        })
        .collect();
    let our_consts: Vec<(String, String, i64)> = T::CONSTANTS
        .iter()
        .map(|(n, t, v)| (n.to_string(), squash(t), squash(v).parse().unwrap_or(i64::MAX)))
        .collect();
    if consts != our_consts {
        errs.push(format!("{}: constants differ\n msg  {consts:?}\n rust {our_consts:?}", T::TYPE_NAME));
    }
    if squash(T::DEFINITION) != squash(file_text) {
        errs.push(format!("{}: embedded definition is not the file's text", T::TYPE_NAME));
    }
    errs
}

#[test]
fn mirrors_match_the_interface_package() {
    let dir = concat!(env!("CARGO_MANIFEST_DIR"), "/../../msgs/msg");
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .expect("msgs/msg exists")
        .filter_map(|e| e.ok())
        .map(|e| e.file_name().to_string_lossy().to_string())
        .filter(|n| n.ends_with(".msg"))
        .collect();
    names.sort();
    let mut errs = Vec::new();
    for name in &names {
        let text = std::fs::read_to_string(format!("{dir}/{name}")).expect("readable");
        let e = match name.as_str() {
            "ChemSample.msg" => compare::<ChemSample>(&text),
            "OdorEvent.msg" => compare::<OdorEvent>(&text),
            "OdorEventArray.msg" => compare::<OdorEventArray>(&text),
            "OdorBearing.msg" => compare::<OdorBearing>(&text),
            "PlumeFeatures.msg" => compare::<PlumeFeatures>(&text),
            "SearchState.msg" => compare::<SearchState>(&text),
            other => vec![format!("{other}: no Rust mirror")],
        };
        errs.extend(e);
    }
    assert_eq!(names.len(), 6, "{names:?}");
    assert!(errs.is_empty(), "{}", errs.join("\n"));
}

#[test]
fn the_comparison_catches_drift() {
    // A changed field type, a renamed field and a changed constant are all reported.
    let good = std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/../../msgs/msg/OdorBearing.msg")).expect("readable");
    assert!(compare::<OdorBearing>(&good).is_empty());
    assert!(!compare::<OdorBearing>(&good.replace("float64 lag", "float32 lag")).is_empty());
    assert!(!compare::<OdorBearing>(&good.replace("confidence", "certainty")).is_empty());
    assert!(!compare::<OdorBearing>(&good.replace("NONE=3", "NONE=4")).is_empty());
}
