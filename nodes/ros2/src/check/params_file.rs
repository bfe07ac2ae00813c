//! Checks a ROS 2 parameter file against sillage's nodes.
//!
//! - Every top-level key selects a known node (`event_encoder`, `/robot1/arbiter`, ...) or is
//!   the wildcard `/**` / `**`. Keys with wildcards inside (`/**/arbiter`, `/robot*/arbiter`)
//!   are legal for rclcpp but r2r ignores them: a warning (their content is still checked when
//!   the last segment names a node).
//! - Each section is `ros__parameters:` and nothing else.
//! - Every parameter is known to the node it reaches, has the right type and is in range:
//!   each section alone (so the problem is reported where it is written), then the merged
//!   sections of each node (wildcards, bare name, fully qualified name), all through
//!   [`NodeKind::build_from_str`], the same code that starts the nodes. A `/**` section reaches
//!   every node, so it may only set what all of them have.
//! - Values are representable as ROS parameters (no lists of maps); `use_sim_time` is a
//!   boolean; an empty list is a warning (rcl cannot type it). ROS's own parameters (`use_sim_time`, `qos_overrides.*`) are not passed to
//!   the nodes.

use super::{known_nodes, Problem};
use crate::param_value::to_flat;
use crate::spec::{is_reserved, section_text};
use serde_yaml::{Mapping, Value};
use sillage_core::params::{is_r2r_key, ParamFileError};
use sillage_stack::NodeKind;

fn is_wildcard_all(key: &str) -> bool {
    key == "/**" || key == "**"
}

/// The fully qualified form of a node key (`robot1/arbiter` -> `/robot1/arbiter`).
fn fq(key: &str) -> String {
    if key.starts_with('/') {
        key.to_string()
    } else {
        format!("/{key}")
    }
}

/// The `ros__parameters` map of a section with ROS's own parameters removed.
fn strip_reserved(params: &Value) -> Value {
    let Value::Mapping(m) = params else { return params.clone() };
    let kept: Mapping = m
        .iter()
        .filter(|(k, _)| !k.as_str().is_some_and(is_reserved))
        .map(|(k, v)| (k.clone(), v.clone()))
        .collect();
    Value::Mapping(kept)
}

/// A problem from building a node with a parameter file, keyed `<node key>.ros__parameters.<param>`.
fn from_build_error(file: &str, node_key: &str, e: &ParamFileError) -> Problem {
    match e {
        ParamFileError::Param { error, .. } => {
            let key = if error.key().is_empty() {
                format!("{node_key}.ros__parameters")
            } else {
                format!("{node_key}.ros__parameters.{}", error.key())
            };
            Problem::error(file, key, error.to_string())
        }
        ParamFileError::Layout { node, reason, .. } => Problem::error(file, node.clone(), reason.clone()),
        other => Problem::error(file, node_key, other.to_string()),
    }
}

/// One node section, checked: its `ros__parameters` (reserved stripped), or the problems.
fn section_params(file: &str, key: &str, section: &Value, out: &mut Vec<Problem>) -> Option<Value> {
    let Value::Mapping(m) = section else {
        out.push(Problem::error(file, key, "expected a map with 'ros__parameters'"));
        return None;
    };
    let mut params = None;
    for (k, v) in m {
        match k.as_str() {
            Some("ros__parameters") => params = Some(v.clone()),
            other => out.push(Problem::error(
                file,
                format!("{key}.{}", other.unwrap_or("?")),
                "unexpected key: a node section holds only 'ros__parameters'",
            )),
        }
    }
    let Some(params) = params else {
        out.push(Problem::error(file, key, "missing 'ros__parameters'"));
        return None;
    };
    if params.is_null() {
        return Some(Value::Mapping(Mapping::new()));
    }
    if !params.is_mapping() {
        out.push(Problem::error(file, format!("{key}.ros__parameters"), "'ros__parameters' must be a map"));
        return None;
    }
    let unflat = sillage_core::params::unflatten(&params);
    match to_flat(&unflat) {
        Ok(flat) => {
            for (name, v) in flat {
                if name == "use_sim_time" && !matches!(v, crate::ParamValue::Bool(_)) {
                    out.push(Problem::error(file, format!("{key}.ros__parameters.use_sim_time"), "must be true or false"));
                }
                // Only an empty YAML list becomes an empty array here.
                if matches!(&v, crate::ParamValue::DoubleArray(a) if a.is_empty()) {
                    out.push(Problem::warning(
                        file,
                        format!("{key}.ros__parameters.{name}"),
                        "an empty list has no ROS type: rcl loads it as 'not set' (sillage keeps the default, rclcpp tools refuse it); leave the key out instead",
                    ));
                }
            }
        }
        Err(e) => {
            out.push(Problem::error(file, format!("{key}.ros__parameters.{}", e.key), e.reason));
            return None;
        }
    }
    Some(strip_reserved(&unflat))
}

/// Checks parameter-file text; `file` names it in the problems.
pub fn check_text(text: &str, file: &str) -> Vec<Problem> {
    let mut out = Vec::new();
    let doc: Value = match serde_yaml::from_str(text) {
        Ok(d) => d,
        Err(e) => return vec![Problem::error(file, "", format!("invalid YAML: {e}"))],
    };
    let top = match doc {
        Value::Mapping(m) => m,
        Value::Null => return vec![Problem::warning(file, "", "empty parameter file")],
        _ => return vec![Problem::error(file, "", "the top level must map node names to 'ros__parameters' sections")],
    };

    // (kind, fqn it is validated as, node key, params) of every usable section.
    let mut sections: Vec<(NodeKind, String, String, Value)> = Vec::new();
    for (k, section) in &top {
        let Some(key) = k.as_str() else {
            out.push(Problem::error(file, "", format!("node key {k:?} is not a string")));
            continue;
        };
        let kinds: Vec<(NodeKind, String)> = if is_wildcard_all(key) {
            NodeKind::ALL.iter().map(|&kind| (kind, fq(kind.name()))).collect()
        } else {
            let last = key.rsplit('/').next().unwrap_or(key);
            if !is_r2r_key(key) {
                out.push(Problem::warning(
                    file,
                    key,
                    "r2r does not expand wildcards inside node keys (it matches only '/**', '**', a fully qualified name or a bare node name): sillage's nodes ignore this section",
                ));
            }
            match NodeKind::from_name(last) {
                Ok(kind) => vec![(kind, if is_r2r_key(key) { fq(key) } else { fq(kind.name()) })],
                Err(_) if !is_r2r_key(key) => Vec::new(),
                Err(_) => {
                    out.push(Problem::error(file, key, format!("unknown node '{last}' (known: {}, or '/**' for all)", known_nodes())));
                    Vec::new()
                }
            }
        };
        let Some(params) = section_params(file, key, section, &mut out) else { continue };
        for (kind, fqn) in kinds {
            sections.push((kind, fqn, key.to_string(), params.clone()));
        }
    }

    // Each section alone, reported where it is written.
    let mut failed: Vec<(NodeKind, String)> = Vec::new();
    for (kind, fqn, key, params) in &sections {
        if let Err(e) = kind.build_from_str(Some(&section_text(fqn, params)), file, fqn) {
            let mut p = from_build_error(file, key, &e);
            if is_wildcard_all(key) {
                p.message = format!("{} (for {}: a '{key}' section reaches every node)", p.message, kind.name());
            }
            out.push(p);
            failed.push((*kind, fqn.clone()));
        }
    }
    // Then the merged view of every node that passed alone, in r2r's merge order.
    let live: Vec<&(NodeKind, String, String, Value)> = sections.iter().filter(|s| is_r2r_key(&s.2)).collect();
    let mut nodes: Vec<(NodeKind, String)> = Vec::new();
    for (kind, fqn, key, _) in &live {
        if !is_wildcard_all(key) && !nodes.contains(&(*kind, fqn.clone())) {
            nodes.push((*kind, fqn.clone()));
        }
    }
    if live.iter().any(|s| is_wildcard_all(&s.2)) {
        for kind in NodeKind::ALL {
            if !nodes.iter().any(|(k, _)| *k == kind) {
                nodes.push((kind, fq(kind.name())));
            }
        }
    }
    for (kind, fqn) in nodes {
        if failed.iter().any(|(k, f)| *k == kind && (*f == fqn || f == &fq(kind.name()))) {
            continue;
        }
        let mut merged = Mapping::new();
        for (_, _, key, params) in live.iter().filter(|s| s.0 == kind) {
            let mut inner = Mapping::new();
            inner.insert(Value::from("ros__parameters"), params.clone());
            merged.insert(Value::from(key.as_str()), Value::Mapping(inner));
        }
        let text = serde_yaml::to_string(&Value::Mapping(merged)).unwrap_or_default();
        if let Err(e) = kind.build_from_str(Some(&text), file, &fqn) {
            let mut p = from_build_error(file, &fqn, &e);
            p.message = format!("{} (with every section that reaches {fqn} merged)", p.message);
            out.push(p);
        }
    }
    out
}

/// Checks a parameter file on disk.
pub fn check_file(path: &std::path::Path) -> Vec<Problem> {
    let file = path.display().to_string();
    match std::fs::read_to_string(path) {
        Ok(text) => check_text(&text, &file),
        Err(e) => vec![Problem::error(&file, "", format!("cannot read: {e}"))],
    }
}

/// Whether YAML text looks like a ROS 2 parameter file (some top-level value holds
/// `ros__parameters`).
pub fn looks_like_params(text: &str) -> bool {
    let Ok(Value::Mapping(top)) = serde_yaml::from_str::<Value>(text) else { return false };
    top.values().any(|v| v.get("ros__parameters").is_some())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn problems(text: &str) -> Vec<String> {
        check_text(text, "p.yaml").iter().map(ToString::to_string).collect()
    }

    /// The first parameter of `kind` with a float default, to build test files from whatever
    /// parameters the node has today.
    fn float_param(kind: NodeKind) -> String {
        to_flat(&kind.default_params())
            .expect("representable")
            .into_iter()
            .find(|(_, v)| matches!(v, crate::ParamValue::Double(_)))
            .map(|(k, _)| k)
            .expect("the node has a float parameter")
    }

    #[test]
    fn defaults_of_every_node_pass() {
        for kind in NodeKind::ALL {
            let text = section_text(&format!("/robot1/{}", kind.name()), &crate::param_value::without_empty_lists(&kind.default_params()));
            assert_eq!(problems(&text), Vec::<String>::new(), "{}", kind.name());
        }
        assert!(problems("/**:\n  ros__parameters:\n    use_sim_time: true\n").is_empty());
    }

    #[test]
    fn unknown_nodes_keys_and_types_are_errors_with_their_key() {
        let p = problems("arbitre:\n  ros__parameters: {}\n");
        assert!(p.len() == 1 && p[0].starts_with("p.yaml:arbitre: error: unknown node 'arbitre'"), "{p:?}");

        let p = problems("/r1/arbiter:\n  ros__parameters:\n    no_such_key: 1.0\n");
        assert!(p.len() == 1 && p[0].starts_with("p.yaml:/r1/arbiter.ros__parameters.no_such_key: error:"), "{p:?}");

        let key = float_param(NodeKind::Arbiter);
        let p = problems(&format!("arbiter:\n  ros__parameters:\n    {key}: fast\n"));
        assert!(p.len() == 1 && p[0].contains(&format!("arbiter.ros__parameters.{key}")), "{p:?}");

        let p = problems("arbiter:\n  parameters: {}\n");
        assert!(p.iter().any(|m| m.contains("arbiter.parameters: error")), "{p:?}");
        assert!(problems("arbiter: [").iter().all(|m| m.contains("invalid YAML")));
        let p = problems("/**:\n  ros__parameters:\n    use_sim_time: 1\n");
        assert!(p.len() == 1 && p[0].contains("use_sim_time: error: must be true or false"), "{p:?}");
        let w = check_text("/**:\n  ros__parameters:\n    use_sim_time: false\n    nothing: []\n", "p.yaml");
        assert!(w.iter().any(|p| !p.is_error() && p.key == "/**.ros__parameters.nothing"), "{w:?}");
        let p = problems("arbiter:\n  ros__parameters:\n    list: [{a: 1}]\n");
        assert!(p.len() == 1 && p[0].contains("arbiter.ros__parameters.list: error"), "{p:?}");
    }

    #[test]
    fn integers_are_fine_for_floats_and_ranges_are_checked() {
        let key = float_param(NodeKind::EventEncoder);
        assert_eq!(problems(&format!("event_encoder:\n  ros__parameters:\n    {key}: 1\n")), Vec::<String>::new());
        // Range checks come from the node: `rate` [Hz] must be > 0 where a node has one.
        for kind in NodeKind::ALL {
            if kind.default_params().get("rate").is_some() {
                let p = problems(&format!("{}:\n  ros__parameters:\n    rate: -5.0\n", kind.name()));
                assert!(p.len() == 1 && p[0].contains(".ros__parameters.rate: error"), "{}: {p:?}", kind.name());
            }
        }
    }

    #[test]
    fn wildcards_reach_every_node_and_r2r_ignored_keys_warn() {
        // A parameter only the arbiter has, under /**, breaks every other node.
        let arb_only = to_flat(&NodeKind::Arbiter.default_params())
            .expect("flat")
            .into_iter()
            .map(|(k, _)| k)
            .find(|k| NodeKind::ALL.iter().filter(|n| **n != NodeKind::Arbiter).all(|n| !to_flat(&n.default_params()).expect("flat").iter().any(|(o, _)| o == k)));
        if let Some(k) = arb_only {
            let v = NodeKind::Arbiter.default_params();
            let value = serde_yaml::to_string(&sillage_core::params::flatten(&v).into_iter().find(|(n, _)| *n == k).expect("present").1).expect("yaml");
            let p = problems(&format!("/**:\n  ros__parameters:\n    {k}: {}", value.trim()));
            assert_eq!(p.len(), NodeKind::ALL.len() - 1, "{p:?}");
            assert!(p.iter().all(|m| m.contains("a '/**' section reaches every node")), "{p:?}");
        }
        let p = check_text("/**/arbiter:\n  ros__parameters: {}\n", "p.yaml");
        assert_eq!(p.len(), 1);
        assert!(!p[0].is_error() && p[0].key == "/**/arbiter", "{p:?}");
        assert!(looks_like_params("a:\n  ros__parameters: {}\n") && !looks_like_params("arena:\n  width: 3\n"));
    }
}
