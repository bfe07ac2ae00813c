//! The `sillage_dds` command line, parsed without touching the network.
//!
//! ```text
//! sillage_dds [--node arbiter] [--params-file FILE]... [--namespace /robot1]
//!             [-r [NODE:]FROM:=TO]... [-p NAME:=VALUE]... [--domain-id N] [--use-sim-time]
//!             [--max-input-rate HZ] [--ros-args ROS ARGUMENTS...]
//! ```
//! `-r`, `-p` and `--params-file` mean what they mean after `--ros-args` (rcl's grammar, parsed
//! by [`sillage_ros2::names::RosArgs`], the parser of the r2r executor): remaps apply to
//! every node, or to one with the `node:` prefix, first matching rule wins; `-r __ns:=/x`
//! sets the namespace; later parameter files and `-p` override earlier ones. A ROS-style
//! `--ros-args ...` tail is accepted as well, so the same argument lists work for both
//! executors. Without `--domain-id`, `ROS_DOMAIN_ID` is used, then 0 (as in ROS 2).

use crate::error::DdsError;
use clap::Parser;
use sillage_ros2::names::RosArgs;
use sillage_stack::NodeKind;
use std::path::PathBuf;

/// Largest DDS domain id whose RTPS ports (7400 + 250 * id + offsets) fit in 16 bits
/// (RTPS 2.x port mapping, common practice).
pub const MAX_DOMAIN_ID: u16 = 232;

/// Command-line arguments before `--ros-args`.
#[derive(Debug, Clone, Parser)]
#[command(name = "sillage_dds", version, about = "Runs the sillage node cores over DDS (the ROS 2 wire protocol); no ROS installation needed")]
pub struct Args {
    /// Run only this node (event_encoder, bearing_decoder, plume_estimator, arbiter); default:
    /// the whole stack in one process.
    #[arg(long, value_name = "NODE")]
    pub node: Option<String>,
    /// ROS 2 parameter file (`node: ros__parameters: ...`); repeatable, later files win.
    #[arg(long = "params-file", value_name = "FILE")]
    pub params_files: Vec<PathBuf>,
    /// Namespace of every node (e.g. /robot1).
    #[arg(long, value_name = "NS")]
    pub namespace: Option<String>,
    /// Topic remap [NODE:]FROM:=TO (repeatable); __ns:=/x sets the namespace.
    #[arg(short = 'r', long = "remap", value_name = "FROM:=TO")]
    pub remaps: Vec<String>,
    /// Parameter NAME:=VALUE (YAML value; repeatable), for every node.
    #[arg(short = 'p', long = "param", value_name = "NAME:=VALUE")]
    pub params: Vec<String>,
    /// DDS domain id (default: $ROS_DOMAIN_ID, else 0).
    #[arg(long, value_name = "ID")]
    pub domain_id: Option<u16>,
    /// Follow /clock (rosgraph_msgs/Clock) instead of the system clock (same as
    /// `use_sim_time: true` in a parameter file).
    #[arg(long)]
    pub use_sim_time: bool,
    /// Inputs arriving faster than this on one topic are a flood: the excess is dropped and
    /// counted (latched inputs such as the e-stop are never dropped) [Hz].
    #[arg(long, value_name = "HZ", default_value_t = 1000.0)]
    pub max_input_rate: f64,
}

/// What to run, checked.
#[derive(Debug, Clone)]
pub struct RunConfig {
    /// Nodes to run, upstream first.
    pub nodes: Vec<NodeKind>,
    /// Default namespace (`""` for the root; a `__ns` rule overrides it).
    pub namespace: String,
    /// Remaps, parameters and parameter files, in rcl's terms.
    pub ros: RosArgs,
    /// DDS domain id.
    pub domain_id: u16,
    /// `--use-sim-time` was given.
    pub use_sim_time: bool,
    /// Flood threshold per input topic [Hz].
    pub max_input_rate: f64,
}

impl RunConfig {
    /// Parses a whole command line (program name first); `env_domain` is `$ROS_DOMAIN_ID`.
    pub fn from_argv<I, S>(argv: I, env_domain: Option<&str>) -> Result<RunConfig, DdsError>
    where
        I: IntoIterator<Item = S>,
        S: AsRef<str>,
    {
        let argv: Vec<String> = argv.into_iter().map(|s| s.as_ref().to_string()).collect();
        let split = argv.iter().position(|a| a == "--ros-args").unwrap_or(argv.len());
        let args = Args::try_parse_from(&argv[..split]).map_err(|e| DdsError::BadArgument { arg: "command line".into(), reason: e.to_string() })?;
        args.resolve(&argv[split..], env_domain)
    }
}

impl Args {
    /// Checks the arguments; `ros_tail` is the `--ros-args ...` part of the command line (may
    /// be empty); `env_domain` is `$ROS_DOMAIN_ID` if set.
    pub fn resolve(&self, ros_tail: &[String], env_domain: Option<&str>) -> Result<RunConfig, DdsError> {
        let nodes = match &self.node {
            Some(n) => vec![NodeKind::from_name(n)?],
            None => NodeKind::ALL.to_vec(),
        };
        // The flags before --ros-args are rcl rules too: parse them with the same grammar.
        let mut head: Vec<String> = vec!["--ros-args".into()];
        for f in &self.params_files {
            head.extend(["--params-file".into(), f.display().to_string()]);
        }
        for r in &self.remaps {
            head.extend(["-r".into(), r.clone()]);
        }
        for p in &self.params {
            head.extend(["-p".into(), p.clone()]);
        }
        let mut ros = RosArgs::parse(&head)?;
        let tail = RosArgs::parse(ros_tail)?;
        ros.remaps.extend(tail.remaps);
        ros.params.extend(tail.params);
        ros.params_files.extend(tail.params_files);
        ros.other.extend(tail.other);
        ros.check_shared_process(nodes.len())?;

        let mut namespace = self.namespace.clone().unwrap_or_default();
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
        Ok(RunConfig { nodes, namespace, ros, domain_id, use_sim_time: self.use_sim_time, max_input_rate: self.max_input_rate })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::executor::remap_topic;
    use sillage_ros2::names::node_fqn;

    fn cfg(argv: &[&str], env: Option<&str>) -> Result<RunConfig, DdsError> {
        RunConfig::from_argv(std::iter::once("sillage_dds").chain(argv.iter().copied()), env)
    }

    #[test]
    fn flags_and_a_ros_args_tail_resolve_like_rcl() {
        let c = cfg(
            &[
                "--node", "arbiter", "-r", "cmd_vel:=/base/cmd_vel", "-r", "arbiter:odom:=odometry/filtered", "--domain-id", "42",
                "--use-sim-time", "--params-file", "a.yaml", "--ros-args", "-r", "__ns:=/robot1", "-p", "rate:=5.0",
                "--params-file", "b.yaml",
            ],
            Some("7"),
        )
        .expect("valid");
        assert_eq!(c.nodes, vec![NodeKind::Arbiter]);
        assert_eq!(c.domain_id, 42, "the flag wins over ROS_DOMAIN_ID");
        assert!(c.use_sim_time);
        assert_eq!(c.ros.params_files, vec!["a.yaml".to_string(), "b.yaml".to_string()]);
        assert_eq!(c.ros.params, vec![("rate".to_string(), "5.0".to_string())]);
        let p = c.ros.placement("arbiter", &c.namespace);
        assert_eq!(node_fqn(&p, "arbiter"), "/robot1/arbiter");
        assert_eq!(remap_topic("cmd_vel", &p, "arbiter"), "/base/cmd_vel");
        assert_eq!(remap_topic("odom", &p, "arbiter"), "/robot1/odometry/filtered");
        let e = c.ros.placement("event_encoder", &c.namespace);
        assert_eq!(remap_topic("odom", &e, "event_encoder"), "/robot1/odom", "node-specific rules stay with their node");
        let d = cfg(&["--namespace", "robot2/"], Some("12")).expect("valid");
        assert_eq!((d.domain_id, d.nodes.len(), d.namespace.as_str()), (12, 5, "/robot2"));
        assert_eq!(cfg(&[], None).expect("valid").domain_id, 0);
    }

    #[test]
    fn bad_arguments_name_themselves() {
        for (argv, env, part) in [
            (vec!["-r", "cmd_vel"], None, "cmd_vel"),
            (vec!["-r", "__node:=x"], None, "__node:=x"),
            (vec!["--domain-id", "233"], None, "0..=232"),
            (vec![], Some("abc"), "ROS_DOMAIN_ID=abc"),
            (vec!["--namespace", "/9bad"], None, "--namespace"),
            (vec!["--node", "mapper"], None, "mapper"),
            (vec!["--max-input-rate", "0"], None, "max-input-rate"),
            (vec!["--ros-args", "-p"], None, "-p"),
            (vec!["--frobnicate"], None, "frobnicate"),
        ] {
            let e = cfg(&argv, env).expect_err("refused");
            assert!(e.to_string().contains(part), "{argv:?}: {e}");
        }
        // One node in the process: a shared rename is fine.
        assert!(cfg(&["--node", "arbiter", "-r", "__node:=arb2"], None).is_ok());
    }
}
