//! Typed node parameters from ROS 2 parameter YAML.
//!
//! A parameter file maps node keys to `ros__parameters:` maps. The keys that select a node are
//! the ones r2r and rclcpp both honour: `/**` and `**` (every node), the fully qualified node
//! name (`/robot1/arbiter`, with or without the leading `/`) and the bare node name. Sections
//! merge from general to specific: wildcards, then the bare name, then the fully qualified one.
//! Nested maps are dotted parameter names (`guard.max_linear`), and dotted keys are accepted
//! too. YAML integers are accepted for float parameters.

use serde::{de::DeserializeOwned, Serialize};
use serde_yaml::{Mapping, Value};
use std::path::Path;
use thiserror::Error;

/// A node's parameter struct: documented defaults, validation of ranges.
pub trait NodeParams: Serialize + DeserializeOwned + Default + Clone + std::fmt::Debug {
    /// Checks ranges and consistency; the error names the dotted key.
    fn validate(&self) -> Result<(), ParamError>;
}

/// A problem with one parameter.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum ParamError {
    /// The key is not a parameter of the node.
    #[error("unknown parameter '{key}'")]
    Unknown { key: String },
    /// The value has the wrong type or cannot be parsed.
    #[error("parameter '{key}': {reason}")]
    Invalid { key: String, reason: String },
    /// The value is out of its allowed range or inconsistent with another parameter.
    #[error("parameter '{key}' out of range: {reason}")]
    OutOfRange { key: String, reason: String },
}

impl ParamError {
    /// The dotted key the error is about.
    pub fn key(&self) -> &str {
        match self {
            ParamError::Unknown { key }
            | ParamError::Invalid { key, .. }
            | ParamError::OutOfRange { key, .. } => key,
        }
    }
}

/// A problem with a parameter file.
#[derive(Debug, Error)]
pub enum ParamFileError {
    /// The file could not be read.
    #[error("{file}: cannot read: {source}")]
    Io { file: String, source: std::io::Error },
    /// The file is not valid YAML.
    #[error("{file}: invalid YAML: {reason}")]
    Yaml { file: String, reason: String },
    /// The file's shape is not `node: ros__parameters: {...}`.
    #[error("{file}: node key '{node}': {reason}")]
    Layout { file: String, node: String, reason: String },
    /// A parameter of the node is wrong.
    #[error("{file}: node '{node}': {error}")]
    Param { file: String, node: String, error: ParamError },
}

/// `Err(OutOfRange)` naming `key` unless `ok`.
pub fn ensure(ok: bool, key: &str, reason: impl Into<String>) -> Result<(), ParamError> {
    if ok {
        Ok(())
    } else {
        Err(ParamError::OutOfRange { key: key.to_string(), reason: reason.into() })
    }
}

/// Parameters from a nested map, validated.
pub fn from_value<P: NodeParams>(value: &Value) -> Result<P, ParamError> {
    let nested = unflatten(value);
    let p: P = serde_path_to_error::deserialize(nested).map_err(|e| {
        let path = e.path().to_string();
        let reason = e.inner().to_string();
        if let Some(field) = unknown_field_name(&reason) {
            let key = if path == field || path.ends_with(&format!(".{field}")) {
                path
            } else if path.is_empty() || path == "." {
                field
            } else {
                format!("{path}.{field}")
            };
            ParamError::Unknown { key }
        } else {
            ParamError::Invalid { key: path, reason }
        }
    })?;
    p.validate()?;
    Ok(p)
}

/// Parameters as a nested map.
pub fn to_value<P: NodeParams>(p: &P) -> Value {
    serde_yaml::to_value(p).unwrap_or(Value::Null)
}

fn unknown_field_name(reason: &str) -> Option<String> {
    let rest = reason.strip_prefix("unknown field `")?;
    Some(rest.split('`').next()?.to_string())
}

/// Turns dotted keys (`a.b: 1`) into nested maps, recursively; other values pass through.
pub fn unflatten(value: &Value) -> Value {
    let Value::Mapping(map) = value else { return value.clone() };
    let mut out = Mapping::new();
    for (k, v) in map {
        let v = unflatten(v);
        match k.as_str() {
            Some(key) if key.contains('.') => {
                let parts: Vec<&str> = key.split('.').collect();
                insert_path(&mut out, &parts, v);
            }
            _ => merge_into(&mut out, k.clone(), v),
        }
    }
    Value::Mapping(out)
}

fn insert_path(map: &mut Mapping, parts: &[&str], v: Value) {
    match parts {
        [] => {}
        [last] => merge_into(map, Value::from(*last), v),
        [first, rest @ ..] => {
            let mut inner = Mapping::new();
            insert_path(&mut inner, rest, v);
            merge_into(map, Value::from(*first), Value::Mapping(inner));
        }
    }
}

/// Deep merge: maps merge key by key, anything else replaces.
fn merge_into(map: &mut Mapping, k: Value, v: Value) {
    match (map.get_mut(&k), v) {
        (Some(Value::Mapping(old)), Value::Mapping(new)) => {
            for (k2, v2) in new {
                merge_into(old, k2, v2);
            }
        }
        (_, v) => {
            map.insert(k, v);
        }
    }
}

/// Flattens a nested map into (dotted key, leaf value) pairs, in map order.
pub fn flatten(value: &Value) -> Vec<(String, Value)> {
    let mut out = Vec::new();
    flatten_into("", value, &mut out);
    out
}

fn flatten_into(prefix: &str, value: &Value, out: &mut Vec<(String, Value)>) {
    match value {
        Value::Mapping(map) => {
            for (k, v) in map {
                let key = match k.as_str() {
                    Some(s) => s.to_string(),
                    None => serde_yaml::to_string(k).unwrap_or_default().trim().to_string(),
                };
                let full = if prefix.is_empty() { key } else { format!("{prefix}.{key}") };
                flatten_into(&full, v, out);
            }
        }
        leaf => out.push((prefix.to_string(), leaf.clone())),
    }
}

/// Sets one dotted key in a nested map (for run-time parameter changes).
pub fn set_key(nested: &Value, key: &str, v: Value) -> Value {
    let mut map = match unflatten(nested) {
        Value::Mapping(m) => m,
        _ => Mapping::new(),
    };
    let parts: Vec<&str> = key.split('.').collect();
    insert_path(&mut map, &parts, v);
    Value::Mapping(map)
}

/// The node keys of a parameter file that select the node `fqn` (e.g. `/robot1/arbiter`), in
/// merge order.
pub fn selecting_keys(fqn: &str) -> Vec<String> {
    let fqn = if fqn.starts_with('/') { fqn.to_string() } else { format!("/{fqn}") };
    let bare = fqn.rsplit('/').next().unwrap_or(&fqn).to_string();
    vec!["/**".into(), "**".into(), bare, fqn.trim_start_matches('/').to_string(), fqn]
}

/// Whether a node key is one r2r matches (wildcards inside keys, like `/**/arbiter`, are not).
pub fn is_r2r_key(key: &str) -> bool {
    key == "/**" || key == "**" || !key.contains('*')
}

/// The merged `ros__parameters` map for node `fqn` from a parsed parameter file.
pub fn section_for(doc: &Value, file: &str, fqn: &str) -> Result<Value, ParamFileError> {
    let layout = |node: &str, reason: &str| ParamFileError::Layout {
        file: file.to_string(),
        node: node.to_string(),
        reason: reason.to_string(),
    };
    let Value::Mapping(top) = doc else {
        return if doc.is_null() { Ok(Value::Mapping(Mapping::new())) } else {
            Err(layout("", "the top level must be a map of node names"))
        };
    };
    let mut merged = Mapping::new();
    for key in selecting_keys(fqn) {
        let Some(section) = top.get(Value::from(key.as_str())) else { continue };
        let Value::Mapping(section) = section else {
            return Err(layout(&key, "expected a map with 'ros__parameters'"));
        };
        for (k, v) in section {
            if k.as_str() != Some("ros__parameters") {
                let name = k.as_str().unwrap_or("?");
                return Err(layout(&key, &format!("unexpected key '{name}' (only 'ros__parameters' is allowed here)")));
            }
            if let Value::Mapping(_) = v {
                merge_into(&mut merged, Value::from("p"), unflatten(v));
            } else if !v.is_null() {
                return Err(layout(&key, "'ros__parameters' must be a map"));
            }
        }
    }
    Ok(merged.remove("p").unwrap_or(Value::Mapping(Mapping::new())))
}

/// Loads node `fqn`'s parameters from parameter-file text; `file` names it in errors. Keys the
/// file does not set keep their defaults.
pub fn load_str<P: NodeParams>(text: &str, file: &str, fqn: &str) -> Result<P, ParamFileError> {
    let doc: Value = serde_yaml::from_str(text)
        .map_err(|e| ParamFileError::Yaml { file: file.to_string(), reason: e.to_string() })?;
    let section = section_for(&doc, file, fqn)?;
    let mut base = to_value(&P::default());
    if let (Value::Mapping(b), Value::Mapping(s)) = (&mut base, section) {
        for (k, v) in s {
            merge_into(b, k, v);
        }
    }
    from_value(&base).map_err(|error| ParamFileError::Param {
        file: file.to_string(),
        node: fqn.to_string(),
        error,
    })
}

/// Loads node `fqn`'s parameters from a parameter file.
pub fn load_file<P: NodeParams>(path: &Path, fqn: &str) -> Result<P, ParamFileError> {
    let file = path.display().to_string();
    let text = std::fs::read_to_string(path).map_err(|source| ParamFileError::Io { file: file.clone(), source })?;
    load_str(&text, &file, fqn)
}

/// Writes parameters as a parameter file section keyed by `node_key`.
pub fn to_file_text<P: NodeParams>(node_key: &str, p: &P) -> String {
    let mut inner = Mapping::new();
    inner.insert(Value::from("ros__parameters"), to_value(p));
    let mut top = Mapping::new();
    top.insert(Value::from(node_key), Value::Mapping(inner));
    serde_yaml::to_string(&Value::Mapping(top)).unwrap_or_default()
}

/// Helper for [`crate::NodeCore::set_params_yaml`]: validates `value` as `P` and replaces
/// `current` only if it is valid. Keys missing from `value` keep their current values.
pub fn apply<P: NodeParams>(current: &mut P, value: &Value) -> Result<(), ParamError> {
    let mut base = to_value(current);
    if let (Value::Mapping(b), Value::Mapping(s)) = (&mut base, unflatten(value)) {
        for (k, v) in s {
            merge_into(b, k, v);
        }
    }
    *current = from_value(&base)?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde::Deserialize;

    #[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
    #[serde(deny_unknown_fields, default)]
    struct Inner {
        max_linear: f64,
        enabled: bool,
    }
    impl Default for Inner {
        fn default() -> Self {
            Inner { max_linear: 0.3, enabled: true }
        }
    }
    #[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
    #[serde(deny_unknown_fields, default)]
    struct P {
        rate: f64,
        name: String,
        guard: Inner,
    }
    impl Default for P {
        fn default() -> Self {
            P { rate: 10.0, name: "a".into(), guard: Inner::default() }
        }
    }
    impl NodeParams for P {
        fn validate(&self) -> Result<(), ParamError> {
            ensure(self.rate > 0.0, "rate", "must be > 0 [Hz]")?;
            ensure(self.guard.max_linear >= 0.0, "guard.max_linear", "must be >= 0 [m/s]")
        }
    }

    #[test]
    fn sections_merge_from_wildcard_to_fully_qualified() {
        let text = "/**:\n  ros__parameters:\n    rate: 5\n    name: w\nnode:\n  ros__parameters:\n    name: bare\n/ns/node:\n  ros__parameters:\n    guard.max_linear: 0.5\nother:\n  ros__parameters:\n    rate: 99.0\n";
        let p: P = load_str(text, "f.yaml", "/ns/node").expect("loads");
        assert_eq!(p, P { rate: 5.0, name: "bare".into(), guard: Inner { max_linear: 0.5, enabled: true } });
    }

    #[test]
    fn errors_name_file_node_and_key() {
        let unknown = "node:\n  ros__parameters:\n    guard:\n      max_speed: 1.0\n";
        let e = load_str::<P>(unknown, "f.yaml", "node").expect_err("unknown key");
        assert!(matches!(&e, ParamFileError::Param { error: ParamError::Unknown { key }, .. } if key == "guard.max_speed"), "{e}");
        let msg = e.to_string();
        assert!(msg.contains("f.yaml") && msg.contains("node") && msg.contains("guard.max_speed"), "{msg}");

        let wrong = "node:\n  ros__parameters:\n    guard:\n      enabled: maybe\n";
        let e = load_str::<P>(wrong, "f.yaml", "node").expect_err("wrong type");
        assert!(matches!(&e, ParamFileError::Param { error: ParamError::Invalid { key, .. }, .. } if key == "guard.enabled"), "{e}");

        let range = "/**:\n  ros__parameters:\n    guard.max_linear: -1.0\n";
        let e = load_str::<P>(range, "f.yaml", "node").expect_err("range");
        assert!(matches!(&e, ParamFileError::Param { error: ParamError::OutOfRange { key, .. }, .. } if key == "guard.max_linear"), "{e}");

        let layout = "node:\n  parameters:\n    rate: 1.0\n";
        assert!(matches!(load_str::<P>(layout, "f.yaml", "node"), Err(ParamFileError::Layout { .. })));
        assert!(matches!(load_str::<P>("node: [", "f.yaml", "node"), Err(ParamFileError::Yaml { .. })));
    }

    #[test]
    fn apply_keeps_old_values_on_error() {
        let mut p = P::default();
        let bad = set_key(&Value::Mapping(Mapping::new()), "rate", Value::from(-1.0));
        assert!(apply(&mut p, &bad).is_err());
        assert_eq!(p, P::default());
        let good = set_key(&Value::Mapping(Mapping::new()), "guard.max_linear", Value::from(1));
        apply(&mut p, &good).expect("valid");
        assert_eq!(p.guard.max_linear, 1.0);
        let flat: Vec<String> = flatten(&to_value(&p)).into_iter().map(|(k, _)| k).collect();
        assert_eq!(flat, vec!["rate", "name", "guard.max_linear", "guard.enabled"]);
    }

    #[test]
    fn written_files_load_back() {
        let p = P { rate: 2.5, ..P::default() };
        let text = to_file_text("/**", &p);
        assert_eq!(load_str::<P>(&text, "w.yaml", "/x/y").expect("loads"), p);
        assert!(is_r2r_key("/robot/arbiter") && !is_r2r_key("/**/arbiter"));
    }
}
