//! Topic and node names: the `--ros-args` a node gets on its command line, and where its
//! ports end up.
//!
//! rcl applies `--ros-args` itself (the r2r executor passes the declared, relative topic names
//! to r2r, so ROS semantics hold exactly, including chained rules). This module mirrors those
//! rules to report the resolved names (start-up log, diagnostics), to refuse arguments that
//! make no sense for several nodes in one process (`-r __node:=x`), and to check launch
//! files offline. Rules: `-r [node:]from:=to` (first matching rule wins, as in rcl),
//! `-r __ns:=/ns`, `-r __node:=name` (alias `__name`), `-p name:=value`,
//! `--params-file FILE`; arguments end at `--` or at the next `--ros-args`.

use sillage_core::executor::{remap_topic, resolve_topic, Placement};
use sillage_core::NodeCore;
use thiserror::Error;

/// Errors in `--ros-args`.
#[derive(Debug, Error, Clone, PartialEq, Eq)]
pub enum ArgsError {
    /// A flag that needs a value was last.
    #[error("--ros-args: '{flag}' needs a value")]
    MissingValue {
        /// The flag.
        flag: String,
    },
    /// A remap or parameter rule without `:=`.
    #[error("--ros-args: '{rule}' is not of the form from:=to")]
    BadRule {
        /// The rule as given.
        rule: String,
    },
    /// `__node` renames every node of a process, which is wrong when it hosts several.
    #[error("--ros-args: '-r {rule}' would give all {count} nodes of this process the same name; use a node-specific rule ('<node>:__node:=<new name>')")]
    SharedRename {
        /// The rule as given.
        rule: String,
        /// Number of nodes in the process.
        count: usize,
    },
}

/// One remap rule `[node:]from:=to`.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Remap {
    /// Only applies to the node of this (original) name, if set.
    pub node: Option<String>,
    /// Name to match (`__ns` and `__node` are special).
    pub from: String,
    /// Replacement.
    pub to: String,
}

/// The ROS-specific arguments of a command line.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct RosArgs {
    /// Remap rules, in order.
    pub remaps: Vec<Remap>,
    /// `-p name:=value` rules, in order (values as written).
    pub params: Vec<(String, String)>,
    /// `--params-file` arguments, in order.
    pub params_files: Vec<String>,
    /// Arguments inside `--ros-args` this parser does not interpret (logging options and the
    /// like), kept for the start-up log.
    pub other: Vec<String>,
}

fn split_rule(rule: &str) -> Result<(String, String), ArgsError> {
    let (from, to) = rule.split_once(":=").ok_or_else(|| ArgsError::BadRule { rule: rule.to_string() })?;
    if from.is_empty() {
        return Err(ArgsError::BadRule { rule: rule.to_string() });
    }
    Ok((from.to_string(), to.to_string()))
}

fn parse_remap(rule: &str) -> Result<Remap, ArgsError> {
    let (lhs, to) = split_rule(rule)?;
    // `node:from` (a node prefix has no '/' and the rest is not empty).
    let (node, from) = match lhs.split_once(':') {
        Some((n, f)) if !n.is_empty() && !n.contains('/') && !f.is_empty() => (Some(n.to_string()), f.to_string()),
        _ => (None, lhs),
    };
    let from = if from == "__name" { "__node".to_string() } else { from };
    Ok(Remap { node, from, to })
}

/// Flags of rcl that take one value and that this parser skips.
const VALUED_FLAGS: &[&str] = &["--log-level", "--log-config-file", "--log-file-name", "-e", "--enclave"];

impl RosArgs {
    /// Parses a whole command line (`argv`, the program name first or not).
    pub fn parse<I, S>(argv: I) -> Result<RosArgs, ArgsError>
    where
        I: IntoIterator<Item = S>,
        S: AsRef<str>,
    {
        let argv: Vec<String> = argv.into_iter().map(|s| s.as_ref().to_string()).collect();
        let mut out = RosArgs::default();
        let mut inside = false;
        let mut i = 0;
        while i < argv.len() {
            let a = argv[i].as_str();
            i += 1;
            if a == "--ros-args" {
                inside = true;
                continue;
            }
            if !inside {
                continue;
            }
            if a == "--" {
                inside = false;
                continue;
            }
            let mut value = |flag: &str| -> Result<String, ArgsError> {
                let v = argv.get(i).cloned().ok_or_else(|| ArgsError::MissingValue { flag: flag.to_string() })?;
                i += 1;
                Ok(v)
            };
            match a {
                "-r" | "--remap" => out.remaps.push(parse_remap(&value(a)?)?),
                "-p" | "--param" => out.params.push(split_rule(&value(a)?)?),
                "--params-file" => out.params_files.push(value(a)?),
                f if VALUED_FLAGS.contains(&f) => {
                    let v = value(f)?;
                    out.other.push(format!("{f} {v}"));
                }
                other => out.other.push(other.to_string()),
            }
        }
        Ok(out)
    }

    fn applies<'a>(&'a self, node: &'a str) -> impl Iterator<Item = &'a Remap> + 'a {
        self.remaps.iter().filter(move |r| r.node.as_deref().is_none_or(|n| n == node))
    }

    /// Where a node of default name `node` and namespace `namespace` ends up: the first
    /// matching `__ns` and `__node` rules, and the topic rules that apply to it.
    pub fn placement(&self, node: &str, namespace: &str) -> Placement {
        let ns = self.applies(node).find(|r| r.from == "__ns").map(|r| r.to.clone());
        let name = self.applies(node).find(|r| r.from == "__node").map(|r| r.to.clone());
        let remaps = self
            .applies(node)
            .filter(|r| r.from != "__ns" && r.from != "__node")
            .map(|r| (r.from.clone(), r.to.clone()))
            .collect();
        Placement { namespace: ns.unwrap_or_else(|| namespace.to_string()), name, remaps }
    }

    /// Refuses a process-wide `__node` rule when the process hosts `count > 1` nodes.
    pub fn check_shared_process(&self, count: usize) -> Result<(), ArgsError> {
        if count > 1 {
            if let Some(r) = self.remaps.iter().find(|r| r.node.is_none() && r.from == "__node") {
                return Err(ArgsError::SharedRename { rule: format!("{}:={}", r.from, r.to), count });
            }
        }
        Ok(())
    }
}

/// The fully qualified node name of a placement (`/ns/name`).
pub fn node_fqn(p: &Placement, default_name: &str) -> String {
    let name = p.name.as_deref().unwrap_or(default_name);
    resolve_topic(name, &p.namespace, name)
}

/// The resolved topic of every input and output of `core` under placement `p`:
/// (`"in"` or `"out"`, declared name, resolved name, ROS type).
pub fn resolved_ports(core: &dyn NodeCore, p: &Placement) -> Vec<(&'static str, String, String, &'static str)> {
    let name = p.name.clone().unwrap_or_else(|| core.name().to_string());
    let mut out = Vec::new();
    for port in core.inputs() {
        out.push(("in", port.topic.clone(), remap_topic(&port.topic, p, &name), port.type_name));
    }
    for port in core.outputs() {
        out.push(("out", port.topic.clone(), remap_topic(&port.topic, p, &name), port.type_name));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parses_the_rcl_argument_grammar() {
        // Grammar of ROS 2 command-line arguments (design article "ROS command line
        // arguments", docs.ros.org; rcl arguments.c): -r/--remap, -p/--param, --params-file.
        let a = RosArgs::parse([
            "sillage_arbiter", "--verbose", "--ros-args", "-r", "__ns:=/robot1", "--remap", "cmd_vel:=/mux/sillage",
            "-r", "arbiter:scan:=front/scan", "-p", "rate:=5.0", "--params-file", "/tmp/p.yaml", "--log-level", "debug",
            "--", "-r", "ignored:=after_dashes",
        ])
        .expect("parses");
        assert_eq!(a.remaps.len(), 3);
        assert_eq!(a.remaps[2], Remap { node: Some("arbiter".into()), from: "scan".into(), to: "front/scan".into() });
        assert_eq!(a.params, vec![("rate".to_string(), "5.0".to_string())]);
        assert_eq!(a.params_files, vec!["/tmp/p.yaml".to_string()]);
        assert_eq!(a.other, vec!["--log-level debug".to_string()]);
        assert!(matches!(RosArgs::parse(["--ros-args", "-r"]), Err(ArgsError::MissingValue { .. })));
        assert!(matches!(RosArgs::parse(["--ros-args", "-r", "chem"]), Err(ArgsError::BadRule { .. })));
        assert_eq!(RosArgs::parse(["-r", "a:=b"]).expect("no ros args"), RosArgs::default());
    }

    #[test]
    fn placement_resolves_like_rcl() {
        let a = RosArgs::parse([
            "--ros-args", "-r", "__ns:=/robot1", "-r", "arbiter:cmd_vel:=/mux/sillage", "-r", "chem:=sensors/chem",
            "-r", "event_encoder:__node:=encoder", "-r", "chem:=never_used",
        ])
        .expect("parses");
        let arb = a.placement("arbiter", "");
        assert_eq!(arb.namespace, "/robot1");
        assert_eq!(arb.name, None);
        assert_eq!(remap_topic("cmd_vel", &arb, "arbiter"), "/mux/sillage");
        assert_eq!(remap_topic("odom", &arb, "arbiter"), "/robot1/odom");
        let enc = a.placement("event_encoder", "");
        assert_eq!(node_fqn(&enc, "event_encoder"), "/robot1/encoder");
        // First matching rule wins; node-specific rules do not leak to other nodes.
        assert_eq!(remap_topic("chem", &enc, "encoder"), "/robot1/sensors/chem");
        assert_eq!(remap_topic("cmd_vel", &enc, "encoder"), "/robot1/cmd_vel");
    }

    #[test]
    fn one_process_refuses_a_shared_rename() {
        let a = RosArgs::parse(["--ros-args", "-r", "__node:=x"]).expect("parses");
        assert!(a.check_shared_process(1).is_ok());
        let e = a.check_shared_process(4).expect_err("refused");
        assert!(e.to_string().contains("__node:=x"), "{e}");
        let b = RosArgs::parse(["--ros-args", "-r", "arbiter:__name:=x"]).expect("parses");
        assert!(b.check_shared_process(4).is_ok());
        assert_eq!(b.placement("arbiter", "").name.as_deref(), Some("x"));
    }
}
