//! A point as a ROS 2 parameter file: for every node of the stack, its defaults, then the base
//! file's section for that node (wildcards, bare and fully qualified names merged as the nodes
//! merge them), then the point's values. One section per node, keyed by its fully qualified
//! name, so `sillage check` and r2r take it, and every node is built from it before it is
//! used ([`check_point_text`]), so a value out of a node's range is refused with its key.
//! Empty lists and maps are left out (ROS parameter files cannot type them; unset keys keep
//! their defaults).

use crate::design::Point;
use crate::error::TuneError;
use serde_yaml::{Mapping, Value};
use sillage_core::params::{flatten, section_for, set_key};
use sillage_stack::{node_fqn, NodeKind};

fn strip_empty(v: Value) -> Option<Value> {
    match v {
        Value::Mapping(m) => {
            let out: Mapping = m.into_iter().filter_map(|(k, v)| strip_empty(v).map(|v| (k, v))).collect();
            (!out.is_empty()).then_some(Value::Mapping(out))
        }
        Value::Sequence(s) if s.is_empty() => None,
        v => Some(v),
    }
}

/// The parameter file of `point` over `base_text` for the stack in `namespace`; `header` lines
/// become leading comments.
pub fn point_params_text(base_text: Option<&str>, namespace: &str, point: &Point, header: &[String]) -> Result<String, TuneError> {
    let bad = |reason: String| TuneError::PointParams { point: point.id.clone(), reason };
    let base: Value = match base_text {
        Some(t) => serde_yaml::from_str(t).map_err(|e| bad(format!("base parameter file: invalid YAML: {e}")))?,
        None => Value::Null,
    };
    let mut doc = Mapping::new();
    for kind in NodeKind::ALL {
        let fqn = node_fqn(kind, namespace);
        let section = section_for(&base, "base parameter file", &fqn).map_err(|e| bad(e.to_string()))?;
        let mut params = kind.default_params();
        for (k, v) in flatten(&section) {
            params = set_key(&params, &k, v);
        }
        let prefix = format!("{}.", kind.name());
        for (key, v) in &point.values {
            if let Some(k) = key.strip_prefix(&prefix) {
                params = set_key(&params, k, v.to_yaml());
            }
        }
        let mut inner = Mapping::new();
        inner.insert(Value::from("ros__parameters"), strip_empty(params).unwrap_or(Value::Mapping(Mapping::new())));
        doc.insert(Value::from(fqn), Value::Mapping(inner));
    }
    let body = serde_yaml::to_string(&Value::Mapping(doc)).map_err(|e| bad(e.to_string()))?;
    let comments: String = header.iter().map(|l| format!("# {l}\n")).collect();
    let text = format!("{comments}{body}");
    check_point_text(&text, namespace).map_err(bad)?;
    Ok(text)
}

/// Builds every node of the stack from `text`; the first refusal (file, node, key) as text.
pub fn check_point_text(text: &str, namespace: &str) -> Result<(), String> {
    for kind in NodeKind::ALL {
        kind.build_from_str(Some(text), "point parameters", &node_fqn(kind, namespace)).map_err(|e| e.to_string())?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::ParamValue;

    fn point() -> Point {
        Point::new(
            0,
            vec![
                ("event_encoder.encoding.delta".into(), ParamValue::Float(0.08)),
                ("arbiter.surge.speed".into(), ParamValue::Float(0.3)),
                ("arbiter.strategy".into(), ParamValue::Text("spiral".into())),
            ],
        )
    }

    #[test]
    fn point_files_load_in_every_node_and_pass_the_checker() {
        let base = "event_encoder:\n  ros__parameters:\n    stale_timeout: 3.0\narbiter:\n  ros__parameters:\n    cast:\n      speed: 0.15\n";
        let text = point_params_text(Some(base), "/r1", &point(), &["best point".into()]).unwrap_or_else(|e| panic!("{e}"));
        assert!(text.starts_with("# best point\n/r1/event_encoder:\n  ros__parameters:"), "{text}");
        let doc: Value = serde_yaml::from_str(&text).unwrap_or_else(|e| panic!("{e}"));
        let a = &doc["/r1/arbiter"]["ros__parameters"];
        assert_eq!(a["surge"]["speed"], Value::from(0.3));
        assert_eq!(a["cast"]["speed"], Value::from(0.15), "base file value kept");
        assert_eq!(a["strategy"], Value::from("spiral"));
        assert_eq!(doc["/r1/event_encoder"]["ros__parameters"]["encoding"]["delta"], Value::from(0.08));
        assert_eq!(doc["/r1/event_encoder"]["ros__parameters"]["stale_timeout"], Value::from(3.0));
        // Nodes load it unchanged, with the point's values.
        for kind in NodeKind::ALL {
            let node = kind.build_from_str(Some(&text), "best.yaml", &node_fqn(kind, "/r1")).unwrap_or_else(|e| panic!("{e}"));
            if kind == NodeKind::Arbiter {
                assert_eq!(node.params_yaml()["surge"]["speed"], Value::from(0.3));
            }
        }
        let problems = sillage_ros2::check::params_file::check_text(&text, "best.yaml");
        assert!(problems.iter().all(|p| !p.is_error()), "{problems:?}");
    }

    #[test]
    fn a_value_out_of_a_node_range_is_refused_with_its_key() {
        let p = Point::new(0, vec![("event_encoder.encoding.delta".into(), ParamValue::Float(-1.0))]);
        let e = point_params_text(None, "", &p, &[]).err().map(|e| e.to_string()).unwrap_or_default();
        assert!(e.contains("encoding.delta") && e.contains("/event_encoder"), "{e}");
    }
}
