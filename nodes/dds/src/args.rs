//! The `sillage_dds` command line, parsed without touching the network.
//!
//! ```text
//! sillage_dds [--node arbiter] [--params-file FILE] [--namespace /robot1]
//!             [-r FROM:=TO]... [-r NODE:FROM:=TO]... [-r __ns:=/robot1]
//!             [--domain-id N] [--use-sim-time] [--max-input-rate HZ]
//! ```
//! Remaps follow the ROS 2 syntax: `from:=to` applies to every node, `node:from:=to` to one;
//! `__ns:=/x` sets the namespace. `--ros-args` is accepted and ignored, so ROS-style argument
//! lists work. Without `--domain-id`, `ROS_DOMAIN_ID` is used, then 0 (as in ROS 2).

use crate::error::DdsError;
use clap::Parser;
use sillage_stack::NodeKind;
use std::path::PathBuf;

/// Largest DDS domain id whose RTPS ports (7400 + 250 * id + offsets) fit in 16 bits
/// (RTPS 2.x port mapping, common practice).
pub const MAX_DOMAIN_ID: u16 = 232;

/// Command-line arguments as typed.
#[derive(Debug, Clone, Parser)]
#[command(name = "sillage_dds", version, about = "Runs the sillage node cores over DDS (ROS 2 wire protocol), no ROS installation needed")]
pub struct Args {
    /// Run only this node (event_encoder, bearing_decoder, plume_estimator, arbiter); default:
    /// the whole stack in one process.
    #[arg(long, value_name = "NODE")]
    pub node: Option<String>,
    /// ROS 2 parameter file (`node: ros__parameters: ...`).
    #[arg(long, value_name = "FILE")]
    pub params_file: Option<PathBuf>,
    /// Namespace of every node (e.g. /robot1).
    #[arg(long, value_name = "NS")]
    pub namespace: Option<String>,
    /// Topic remap FROM:=TO or NODE:FROM:=TO (repeatable); __ns:=/x sets the namespace.
    #[arg(short = 'r', long = "remap", value_name = "FROM:=TO")]
    pub remaps: Vec<String>,
    /// DDS domain id (default: $ROS_DOMAIN_ID, else 0).
    #[arg(long, value_name = "ID")]
    pub domain_id: Option<u16>,
    /// Follow /clock (rosgraph_msgs/Clock) instead of the system clock.
    #[arg(long)]
    pub use_sim_time: bool,
    /// Inputs arriving faster than this on one topic are a flood: the excess is dropped and
    /// counted (latched inputs such as the e-stop are never dropped) [Hz].
    #[arg(long, value_name = "HZ", default_value_t = 1000.0)]
    pub max_input_rate: f64,
    /// Accepted and ignored (ROS-style argument lists).
    #[arg(long = "ros-args", hide = true)]
    pub ros_args: bool,
}

/// One topic remap.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Remap {
    /// Only for this node (by name), or every node.
    pub node: Option<String>,
    /// Declared or resolved name.
    pub from: String,
    /// Replacement.
    pub to: String,
}

/// What to run, checked.
#[derive(Debug, Clone, PartialEq)]
pub struct RunConfig {
    /// Nodes to run, upstream first.
    pub nodes: Vec<NodeKind>,
    /// Namespace (`""` for the root).
    pub namespace: String,
    /// Parameter file.
    pub params_file: Option<PathBuf>,
    /// Remaps in command-line order.
    pub remaps: Vec<Remap>,
    /// DDS domain id.
    pub domain_id: u16,
    /// `--use-sim-time` was given.
    pub use_sim_time: bool,
    /// Flood threshold per input topic [Hz].
    pub max_input_rate: f64,
}

/// Parses one remap argument.
pub fn parse_remap(arg: &str) -> Result<Remap, DdsError> {
    let bad = |reason: &str| DdsError::BadArgument { arg: format!("-r {arg}"), reason: reason.to_string() };
    let (lhs, to) = arg.split_once(":=").ok_or_else(|| bad("expected FROM:=TO"))?;
    let (node, from) = match lhs.split_once(':') {
        Some((n, f)) => (Some(n.to_string()), f),
        None => (None, lhs),
    };
    if from.is_empty() || to.is_empty() || node.as_deref() == Some("") {
        return Err(bad("empty name"));
    }
    Ok(Remap { node, from: from.to_string(), to: to.to_string() })
}

impl Args {
    /// Checks the arguments; `env_domain` is `$ROS_DOMAIN_ID` if set.
    pub fn resolve(&self, env_domain: Option<&str>) -> Result<RunConfig, DdsError> {
        let nodes = match &self.node {
            Some(n) => vec![NodeKind::from_name(n)?],
            None => NodeKind::ALL.to_vec(),
        };
        let mut namespace = self.namespace.clone().unwrap_or_default();
        let mut remaps = Vec::new();
        for r in &self.remaps {
            let r = parse_remap(r)?;
            if r.from == "__ns" && r.node.is_none() {
                namespace = r.to;
            } else if r.from.starts_with("__") {
                return Err(DdsError::BadArgument { arg: format!("-r {}:={}", r.from, r.to), reason: "only __ns is supported among the special remaps".into() });
            } else {
                remaps.push(r);
            }
        }
        if !namespace.is_empty() && !namespace.starts_with('/') {
            namespace.insert(0, '/');
        }
        let namespace = namespace.trim_end_matches('/').to_string();
        if !namespace.is_empty() {
            crate::names::validate_topic(&namespace)
                .map_err(|e| DdsError::BadArgument { arg: format!("--namespace {namespace}"), reason: e.to_string() })?;
        }
        let domain_id = match (self.domain_id, env_domain.map(str::trim).filter(|s| !s.is_empty())) {
            (Some(d), _) => d,
            (None, Some(s)) => s.parse::<u16>().map_err(|_| DdsError::BadArgument {
                arg: format!("ROS_DOMAIN_ID={s}"),
                reason: "not an integer".into(),
            })?,
            (None, None) => 0,
        };
        if domain_id > MAX_DOMAIN_ID {
            return Err(DdsError::BadArgument { arg: format!("--domain-id {domain_id}"), reason: format!("must be 0..={MAX_DOMAIN_ID}") });
        }
        if !(self.max_input_rate.is_finite() && self.max_input_rate > 0.0) {
            return Err(DdsError::BadArgument { arg: format!("--max-input-rate {}", self.max_input_rate), reason: "must be > 0 [Hz]".into() });
        }
        Ok(RunConfig {
            nodes,
            namespace,
            params_file: self.params_file.clone(),
            remaps,
            domain_id,
            use_sim_time: self.use_sim_time,
            max_input_rate: self.max_input_rate,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse(argv: &[&str]) -> Args {
        Args::try_parse_from(std::iter::once("sillage_dds").chain(argv.iter().copied())).expect("parses")
    }

    #[test]
    fn ros_style_arguments_resolve() {
        let a = parse(&["--ros-args", "--node", "arbiter", "-r", "cmd_vel:=/base/cmd_vel", "-r", "arbiter:odom:=odometry/filtered", "-r", "__ns:=robot1", "--domain-id", "42", "--use-sim-time"]);
        let c = a.resolve(Some("7")).expect("valid");
        assert_eq!(c.nodes, vec![NodeKind::Arbiter]);
        assert_eq!(c.namespace, "/robot1");
        assert_eq!(c.domain_id, 42, "the flag wins over ROS_DOMAIN_ID");
        assert!(c.use_sim_time);
        assert_eq!(
            c.remaps,
            vec![
                Remap { node: None, from: "cmd_vel".into(), to: "/base/cmd_vel".into() },
                Remap { node: Some("arbiter".into()), from: "odom".into(), to: "odometry/filtered".into() },
            ]
        );
        let d = parse(&[]).resolve(Some("12")).expect("valid");
        assert_eq!((d.domain_id, d.nodes.len(), d.namespace.as_str()), (12, 4, ""));
        assert_eq!(parse(&[]).resolve(None).expect("valid").domain_id, 0);
    }

    #[test]
    fn bad_arguments_name_themselves() {
        for (argv, env, part) in [
            (vec!["-r", "cmd_vel"], None, "FROM:=TO"),
            (vec!["-r", ":=x"], None, "empty"),
            (vec!["-r", "__node:=x"], None, "__ns"),
            (vec!["--domain-id", "233"], None, "0..=232"),
            (vec![], Some("abc"), "ROS_DOMAIN_ID=abc"),
            (vec!["--namespace", "/9bad"], None, "--namespace"),
            (vec!["--node", "mapper"], None, "mapper"),
            (vec!["--max-input-rate", "0"], None, "max-input-rate"),
        ] {
            let e = parse(&argv).resolve(env).expect_err("refused");
            assert!(e.to_string().contains(part), "{argv:?}: {e}");
        }
    }
}
