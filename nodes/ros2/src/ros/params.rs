//! The bridge between r2r's parameter services and a hosted core: r2r's
//! `make_derived_parameter_handler` calls [`ParamBridge`] for `ros2 param set/get` and at
//! registration, and every change goes through [`NodeRuntime::set_param`], so an invalid
//! value is refused (the caller gets `successful: false` with the reason), logged, and the old
//! value kept. Caps (`guard.max_*`) are also refused above their start-up values.
//! describe_parameters gives each key's description from the shipped per-node file (r2r
//! 0.9.7's service carries no ranges).

use crate::param_value::ParamValue;
use crate::runtime::NodeRuntime;
use r2r::indexmap::IndexMap;
use r2r::{Parameter, ParameterValue, RosParams};
use std::sync::{Arc, Mutex, MutexGuard, PoisonError};

/// Locks a runtime; a panic elsewhere leaves the data usable (every method keeps it valid).
pub(crate) fn lock(rt: &Mutex<NodeRuntime>) -> MutexGuard<'_, NodeRuntime> {
    rt.lock().unwrap_or_else(PoisonError::into_inner)
}

/// r2r's value as ours.
pub(crate) fn from_r2r(v: &ParameterValue) -> ParamValue {
    match v {
        ParameterValue::NotSet => ParamValue::NotSet,
        ParameterValue::Bool(b) => ParamValue::Bool(*b),
        ParameterValue::Integer(i) => ParamValue::Integer(*i),
        ParameterValue::Double(f) => ParamValue::Double(*f),
        ParameterValue::String(s) => ParamValue::String(s.clone()),
        ParameterValue::BoolArray(a) => ParamValue::BoolArray(a.clone()),
        ParameterValue::ByteArray(a) => ParamValue::ByteArray(a.clone()),
        ParameterValue::IntegerArray(a) => ParamValue::IntegerArray(a.clone()),
        ParameterValue::DoubleArray(a) => ParamValue::DoubleArray(a.clone()),
        ParameterValue::StringArray(a) => ParamValue::StringArray(a.clone()),
    }
}

/// Our value as r2r's.
pub(crate) fn to_r2r(v: &ParamValue) -> ParameterValue {
    match v {
        ParamValue::NotSet => ParameterValue::NotSet,
        ParamValue::Bool(b) => ParameterValue::Bool(*b),
        ParamValue::Integer(i) => ParameterValue::Integer(*i),
        ParamValue::Double(f) => ParameterValue::Double(*f),
        ParamValue::String(s) => ParameterValue::String(s.clone()),
        ParamValue::BoolArray(a) => ParameterValue::BoolArray(a.clone()),
        ParamValue::ByteArray(a) => ParameterValue::ByteArray(a.clone()),
        ParamValue::IntegerArray(a) => ParameterValue::IntegerArray(a.clone()),
        ParamValue::DoubleArray(a) => ParameterValue::DoubleArray(a.clone()),
        ParamValue::StringArray(a) => ParameterValue::StringArray(a.clone()),
    }
}

/// Speed and acceleration caps (`guard.max_*`): at run time they may be lowered, never raised
/// above the value the node started with (a robot's caps are set by its parameter file; a
/// stray `ros2 param set` must not lift them). Real ROS 2 showed the gap: the core's own
/// validation accepted `guard.max_linear := 3.0` over the services.
fn is_cap(key: &str) -> bool {
    key.starts_with("guard.max_")
}

/// The number a cap's value holds (integers count: the node turns them into doubles).
fn as_number(v: &ParameterValue) -> Option<f64> {
    match v {
        ParameterValue::Double(x) => Some(*x),
        ParameterValue::Integer(i) => Some(*i as f64),
        _ => None,
    }
}

/// The per-node parameter files shipped in `config/`, whose end-of-line comments document
/// every key (each node's tests hold them to that): what `describe_parameters` answers.
const DOCUMENTED: &[(&str, &str)] = &[
    ("event_encoder", include_str!("../../../../config/event_encoder.yaml")),
    ("bearing_decoder", include_str!("../../../../config/bearing_decoder.yaml")),
    ("plume_estimator", include_str!("../../../../config/plume_estimator.yaml")),
    ("arbiter", include_str!("../../../../config/arbiter.yaml")),
    ("source_mapper", include_str!("../../../../config/source_mapper.yaml")),
];

/// Dotted key -> end-of-line comment of a parameter file laid out as the shipped ones are
/// (`node:`, `ros__parameters:`, then nested block maps, one key per line, `# comment` after
/// the value). Lines without a comment, and list items, give nothing.
pub(crate) fn documented_keys(text: &str) -> Vec<(String, String)> {
    let mut out = Vec::new();
    let mut path: Vec<(usize, String)> = Vec::new();
    for line in text.lines() {
        let body = line.trim_start();
        if body.is_empty() || body.starts_with('#') || body.starts_with('-') {
            continue;
        }
        let indent = line.len() - body.len();
        let Some((key, rest)) = body.split_once(':') else { continue };
        if key.contains(char::is_whitespace) {
            continue;
        }
        while path.last().is_some_and(|(i, _)| *i >= indent) {
            path.pop();
        }
        path.push((indent, key.to_string()));
        let comment = rest.split_once(" #").map(|(_, c)| c.trim().to_string()).filter(|c| !c.is_empty());
        if let (Some(c), true) = (comment, path.len() > 2) {
            let dotted: Vec<&str> = path[2..].iter().map(|(_, k)| k.as_str()).collect();
            out.push((dotted.join("."), c));
        }
    }
    out
}

/// The description of every documented key of node `name`, as r2r wants it (`&'static`:
/// leaked once per key when a node starts, a few kilobytes per process).
fn descriptions(name: &str) -> Vec<(String, &'static str)> {
    DOCUMENTED
        .iter()
        .filter(|(n, _)| *n == name)
        .flat_map(|(_, text)| documented_keys(text))
        .map(|(k, c)| (k, &*Box::leak(c.into_boxed_str())))
        .collect()
}

/// The parameters of one hosted node as r2r sees them.
pub(crate) struct ParamBridge {
    pub(crate) rt: Arc<Mutex<NodeRuntime>>,
    pub(crate) logger: String,
    /// Start-up values of the caps (key -> ceiling).
    ceilings: Vec<(String, f64)>,
    /// What describe_parameters says of each documented key.
    descriptions: Vec<(String, &'static str)>,
}

impl ParamBridge {
    /// A bridge for `rt`; its caps' current values become their ceilings.
    pub(crate) fn new(rt: Arc<Mutex<NodeRuntime>>, logger: String) -> ParamBridge {
        let ceilings = lock(&rt)
            .flat_params()
            .into_iter()
            .filter(|(k, _)| is_cap(k))
            .filter_map(|(k, v)| as_number(&to_r2r(&v)).map(|x| (k, x)))
            .collect();
        let descriptions = descriptions(lock(&rt).core().name());
        ParamBridge { rt, logger, ceilings, descriptions }
    }

    /// Refuses a value above a cap's ceiling.
    fn check_ceiling(&self, name: &str, value: &ParameterValue) -> Result<(), String> {
        let Some((_, ceiling)) = self.ceilings.iter().find(|(k, _)| k == name) else { return Ok(()) };
        match as_number(value) {
            Some(x) if x > *ceiling => Err(format!(
                "{name} is a cap: at run time it can be lowered but not raised above its start-up value {ceiling} \
                 (got {x}); restart the node with a new parameter file to raise it"
            )),
            _ => Ok(()),
        }
    }
}

impl RosParams for ParamBridge {
    /// Declares every parameter of the core with its current value (defaults merged with the
    /// values the node was started with). ROS's own (`use_sim_time`) stay as r2r loaded them.
    fn register_parameters(&mut self, _prefix: &str, _param: Option<Parameter>, params: &mut IndexMap<String, Parameter>) -> r2r::Result<()> {
        for (k, v) in lock(&self.rt).flat_params() {
            let description = self.descriptions.iter().find(|(d, _)| *d == k).map_or("", |(_, d)| *d);
            params.insert(k, Parameter { value: to_r2r(&v), description });
        }
        Ok(())
    }

    fn get_parameter(&mut self, name: &str) -> r2r::Result<ParameterValue> {
        lock(&self.rt).param(name).map(|v| to_r2r(&v)).ok_or_else(|| r2r::Error::InvalidParameterName { name: name.to_string() })
    }

    fn set_parameter(&mut self, name: &str, value: &ParameterValue) -> r2r::Result<()> {
        let v = from_r2r(value);
        if let Err(msg) = self.check_ceiling(name, value) {
            r2r::log_warn!(&self.logger, "refused parameter change {name} := {}: {msg}; the old value stays", v.display());
            return Err(r2r::Error::ParameterValueConv { name: name.to_string(), msg });
        }
        let result = lock(&self.rt).set_param(name, v.clone());
        match result {
            Ok(now) => {
                r2r::log_info!(&self.logger, "parameter {name} set to {}", now.display());
                Ok(())
            }
            Err(e) => {
                r2r::log_warn!(&self.logger, "refused parameter change {name} := {}: {e}; the old value stays", v.display());
                Err(r2r::Error::ParameterValueConv { name: name.to_string(), msg: e.to_string() })
            }
        }
    }

    fn check_parameter(&self, name: &str, value: &ParameterValue) -> r2r::Result<()> {
        self.check_ceiling(name, value).map_err(|msg| r2r::Error::ParameterValueConv { name: name.to_string(), msg })?;
        lock(&self.rt)
            .check_param(name, from_r2r(value))
            .map_err(|e| r2r::Error::ParameterValueConv { name: name.to_string(), msg: e.to_string() })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_shipped_key_has_a_description() {
        let keys = documented_keys(DOCUMENTED[3].1);
        let find = |k: &str| keys.iter().find(|(d, _)| d == k).map(|(_, c)| c.as_str());
        assert_eq!(find("guard.max_linear"), Some("planar speed cap |(linear.x, linear.y)| [m/s]"));
        assert!(find("rate").is_some_and(|c| c.contains("[Hz]")), "{keys:?}");
        assert!(find("declare.front.min_stalls").is_some(), "{keys:?}");
    }
}
