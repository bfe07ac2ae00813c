//! ROS 2 parameter values, and the conversion between a node's nested YAML parameters
//! ([`sillage_core::NodeCore::params_yaml`]) and flat ROS parameters (dotted names).
//!
//! ROS parameters are scalars (bool, integer, double, string) or homogeneous arrays of them.
//! A nested map becomes dotted names (`guard.max_linear`), as rcl's YAML parser does with
//! parameter files. A YAML integer given for a float parameter is accepted (users write `1`
//! for `1.0`): [`coerce_like`] turns it into a double using the current value as the type
//! template. Values that no ROS parameter can hold (a list of maps, a list of lists, a list
//! mixing strings and numbers) are refused with the key named.

use serde_yaml::{Mapping, Value};
use sillage_core::params::{flatten, set_key};
use thiserror::Error;

/// A ROS 2 parameter value (mirror of rcl_interfaces/ParameterValue).
#[derive(Debug, Clone, PartialEq)]
pub enum ParamValue {
    /// No value (`null` in YAML).
    NotSet,
    /// bool.
    Bool(bool),
    /// int64.
    Integer(i64),
    /// float64.
    Double(f64),
    /// string.
    String(String),
    /// bool[].
    BoolArray(Vec<bool>),
    /// byte[] (never produced from YAML; accepted from ROS and turned into integers).
    ByteArray(Vec<u8>),
    /// int64[].
    IntegerArray(Vec<i64>),
    /// float64[].
    DoubleArray(Vec<f64>),
    /// string[].
    StringArray(Vec<String>),
}

/// A value that cannot be a ROS parameter.
#[derive(Debug, Error, Clone, PartialEq, Eq)]
#[error("parameter '{key}' cannot be a ROS parameter: {reason}")]
pub struct Unrepresentable {
    /// Dotted key.
    pub key: String,
    /// Why.
    pub reason: String,
}

impl ParamValue {
    /// The ROS type name (as `ros2 param describe` prints it).
    pub fn type_name(&self) -> &'static str {
        match self {
            ParamValue::NotSet => "not set",
            ParamValue::Bool(_) => "boolean",
            ParamValue::Integer(_) => "integer",
            ParamValue::Double(_) => "double",
            ParamValue::String(_) => "string",
            ParamValue::BoolArray(_) => "boolean array",
            ParamValue::ByteArray(_) => "byte array",
            ParamValue::IntegerArray(_) => "integer array",
            ParamValue::DoubleArray(_) => "double array",
            ParamValue::StringArray(_) => "string array",
        }
    }

    /// The value of one YAML leaf (`key` names it in errors). An empty list becomes an empty
    /// double array (ROS needs some type; any array type is accepted back).
    pub fn from_yaml(key: &str, v: &Value) -> Result<ParamValue, Unrepresentable> {
        let bad = |reason: &str| Unrepresentable { key: key.to_string(), reason: reason.to_string() };
        Ok(match v {
            Value::Null => ParamValue::NotSet,
            Value::Bool(b) => ParamValue::Bool(*b),
            Value::Number(_) => match number(v) {
                Some(Num::Int(i)) => ParamValue::Integer(i),
                Some(Num::Float(f)) => ParamValue::Double(f),
                None => return Err(bad("integer out of the int64 range")),
            },
            Value::String(s) => ParamValue::String(s.clone()),
            Value::Sequence(items) => array(items).map_err(|r| bad(&r))?,
            Value::Mapping(_) => return Err(bad("a map is a group of parameters, not a value")),
            Value::Tagged(t) => ParamValue::from_yaml(key, &t.value)?,
        })
    }

    /// The YAML form of the value.
    pub fn to_yaml(&self) -> Value {
        fn seq<T: Into<Value> + Clone>(v: &[T]) -> Value {
            Value::Sequence(v.iter().cloned().map(Into::into).collect())
        }
        match self {
            ParamValue::NotSet => Value::Null,
            ParamValue::Bool(b) => Value::Bool(*b),
            ParamValue::Integer(i) => Value::from(*i),
            ParamValue::Double(f) => Value::from(*f),
            ParamValue::String(s) => Value::String(s.clone()),
            ParamValue::BoolArray(v) => seq(v),
            ParamValue::ByteArray(v) => seq(v),
            ParamValue::IntegerArray(v) => seq(v),
            ParamValue::DoubleArray(v) => seq(v),
            ParamValue::StringArray(v) => seq(v),
        }
    }

    /// A short text form for logs (`0.5`, `[1, 2]`, `"left"`).
    pub fn display(&self) -> String {
        match self {
            ParamValue::String(s) => format!("{s:?}"),
            other => serde_yaml::to_string(&other.to_yaml())
                .map(|s| s.trim().replace('\n', " "))
                .unwrap_or_else(|_| "?".to_string()),
        }
    }
}

enum Num {
    Int(i64),
    Float(f64),
}

fn number(v: &Value) -> Option<Num> {
    let Value::Number(n) = v else { return None };
    if let Some(i) = n.as_i64() {
        Some(Num::Int(i))
    } else if n.is_f64() {
        n.as_f64().map(Num::Float)
    } else {
        None // a u64 above i64::MAX
    }
}

fn array(items: &[Value]) -> Result<ParamValue, String> {
    if items.is_empty() {
        return Ok(ParamValue::DoubleArray(Vec::new()));
    }
    if items.iter().all(|v| matches!(v, Value::Bool(_))) {
        return Ok(ParamValue::BoolArray(items.iter().filter_map(Value::as_bool).collect()));
    }
    if items.iter().all(|v| matches!(v, Value::String(_))) {
        return Ok(ParamValue::StringArray(items.iter().filter_map(|v| v.as_str().map(str::to_string)).collect()));
    }
    if items.iter().all(|v| matches!(v, Value::Number(_))) {
        let nums: Option<Vec<Num>> = items.iter().map(number).collect();
        let nums = nums.ok_or("an integer out of the int64 range")?;
        if nums.iter().all(|n| matches!(n, Num::Int(_))) {
            return Ok(ParamValue::IntegerArray(nums.iter().map(|n| if let Num::Int(i) = n { *i } else { 0 }).collect()));
        }
        return Ok(ParamValue::DoubleArray(
            nums.iter().map(|n| match n { Num::Int(i) => *i as f64, Num::Float(f) => *f }).collect(),
        ));
    }
    if items.iter().any(|v| matches!(v, Value::Mapping(_) | Value::Sequence(_))) {
        return Err("lists of maps or of lists are not ROS parameter values".to_string());
    }
    Err("a list must hold one type (all booleans, all numbers or all strings)".to_string())
}

/// The flat ROS parameters of a nested map, in map order.
pub fn to_flat(nested: &Value) -> Result<Vec<(String, ParamValue)>, Unrepresentable> {
    flatten(nested).into_iter().map(|(k, v)| ParamValue::from_yaml(&k, &v).map(|p| (k, p))).collect()
}

/// The nested map of flat ROS parameters (dotted names become nested maps).
pub fn to_nested<'a, I>(flat: I) -> Value
where
    I: IntoIterator<Item = (&'a str, &'a ParamValue)>,
{
    let mut out = Value::Mapping(Mapping::new());
    for (k, v) in flat {
        out = set_key(&out, k, v.to_yaml());
    }
    out
}

/// `v` without empty lists and without maps left empty (recursively): what a parameter file
/// can hold. rcl cannot give an empty list a type (it loads it as "not set"), and its YAML
/// parser refuses an empty map (`channels: {}`: "Cannot have a value before ros__parameters",
/// seen with Jazzy's rcl_yaml_param_parser).
pub fn without_empty_lists(v: &Value) -> Value {
    match v {
        Value::Mapping(m) => Value::Mapping(
            m.iter()
                .filter(|(_, v)| !v.as_sequence().is_some_and(Vec::is_empty))
                .map(|(k, v)| (k.clone(), without_empty_lists(v)))
                .filter(|(_, v)| !v.as_mapping().is_some_and(|m| m.is_empty()))
                .collect(),
        ),
        other => other.clone(),
    }
}

/// `v` with integers turned into doubles where `template` (the current value) is a double or
/// a list of doubles, and byte arrays turned into integer arrays. Other values pass through
/// (the node's own validation decides).
pub fn coerce_like(template: &ParamValue, v: ParamValue) -> ParamValue {
    match (template, v) {
        (ParamValue::Double(_), ParamValue::Integer(i)) => ParamValue::Double(i as f64),
        (ParamValue::DoubleArray(_), ParamValue::IntegerArray(a)) => ParamValue::DoubleArray(a.into_iter().map(|i| i as f64).collect()),
        (ParamValue::DoubleArray(_), ParamValue::ByteArray(a)) => ParamValue::DoubleArray(a.into_iter().map(f64::from).collect()),
        (_, ParamValue::ByteArray(a)) => ParamValue::IntegerArray(a.into_iter().map(i64::from).collect()),
        (_, v) => v,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn yaml(s: &str) -> Value {
        serde_yaml::from_str(s).expect("test yaml")
    }

    #[test]
    fn nested_maps_become_dotted_names_and_back() {
        // rcl_yaml_param_parser flattens nested maps into dotted names (ROS 2 "About
        // parameters" documentation, parameter file format).
        let nested = yaml("rate: 10.0\nguard:\n  max_linear: 0.3\n  enabled: true\nchannels: [left, right]\ngains: [1, 2.5]\nids: [3, 4]\nflags: []\nlabel: null\n");
        let flat = to_flat(&nested).expect("representable");
        let names: Vec<&str> = flat.iter().map(|(k, _)| k.as_str()).collect();
        assert_eq!(names, ["rate", "guard.max_linear", "guard.enabled", "channels", "gains", "ids", "flags", "label"]);
        assert_eq!(flat[3].1, ParamValue::StringArray(vec!["left".into(), "right".into()]));
        assert_eq!(flat[4].1, ParamValue::DoubleArray(vec![1.0, 2.5]));
        assert_eq!(flat[5].1, ParamValue::IntegerArray(vec![3, 4]));
        assert_eq!(flat[6].1, ParamValue::DoubleArray(vec![]));
        assert_eq!(flat[7].1, ParamValue::NotSet);
        let back = to_nested(flat.iter().map(|(k, v)| (k.as_str(), v)));
        assert_eq!(back, yaml("rate: 10.0\nguard:\n  max_linear: 0.3\n  enabled: true\nchannels: [left, right]\ngains: [1.0, 2.5]\nids: [3, 4]\nflags: []\nlabel: null\n"));
    }

    #[test]
    fn unrepresentable_values_name_their_key() {
        for (text, key) in [
            ("sensors:\n  - {name: left}\n", "sensors"),
            ("grid: [[1, 2], [3, 4]]\n", "grid"),
            ("a:\n  mixed: [1, x]\n", "a.mixed"),
            ("big: 18446744073709551615\n", "big"),
        ] {
            let e = to_flat(&yaml(text)).expect_err(text);
            assert_eq!(e.key, key, "{text}: {e}");
        }
    }

    #[test]
    fn integers_are_accepted_for_doubles() {
        assert_eq!(coerce_like(&ParamValue::Double(0.5), ParamValue::Integer(2)), ParamValue::Double(2.0));
        assert_eq!(coerce_like(&ParamValue::DoubleArray(vec![]), ParamValue::IntegerArray(vec![1, 2])), ParamValue::DoubleArray(vec![1.0, 2.0]));
        assert_eq!(coerce_like(&ParamValue::Integer(1), ParamValue::Integer(2)), ParamValue::Integer(2));
        // A double for an integer parameter is not rounded here: the node refuses it.
        assert_eq!(coerce_like(&ParamValue::Integer(1), ParamValue::Double(2.5)), ParamValue::Double(2.5));
        assert_eq!(coerce_like(&ParamValue::String("a".into()), ParamValue::ByteArray(vec![7])), ParamValue::IntegerArray(vec![7]));
    }

    proptest! {
        #[test]
        fn scalar_round_trip(i in any::<i64>(), f in any::<f64>().prop_filter("finite", |f| f.is_finite()), s in "[a-z_]{0,12}", b in any::<bool>()) {
            for v in [ParamValue::Integer(i), ParamValue::Double(f), ParamValue::String(s.clone()), ParamValue::Bool(b),
                      ParamValue::DoubleArray(vec![f, f]), ParamValue::IntegerArray(vec![i]), ParamValue::StringArray(vec![s.clone()])] {
                prop_assert_eq!(ParamValue::from_yaml("k", &v.to_yaml()).expect("round trip"), v);
            }
        }
    }

    #[test]
    fn parameter_files_hold_no_empty_collections() {
        // rcl_yaml_param_parser (Jazzy) refuses `channels: {}` and types no `[]`: both go,
        // and so does a map that only held them.
        let v = yaml("a: {b: [], c: {}, d: {e: []}, f: 1.0}\ng: []\n");
        assert_eq!(without_empty_lists(&v), yaml("a: {f: 1.0}\n"));
    }
}