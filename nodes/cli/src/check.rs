//! `sillage check FILE...`: validates ROS 2 parameter files, launch files and simulation
//! scenarios before they reach a robot. Prints `file:key: error|warning: message` for every
//! problem and fails if there is any error (or any warning with `--strict`).
//!
//! The kind of each file comes from its name and content: `*.xml` is a launch file; a YAML
//! file under a `scenarios/` folder is a scenario, one under a `sweeps/` folder a sweep file
//! of `sillage tune`; other YAML with `ros__parameters` sections
//! is a parameter file. `--kind` overrides the guess. A folder stands for every `*.xml`,
//! `*.yaml` and `*.yml` file inside it (recursively; `SCHEMA.md` and other files are skipped).

use anyhow::{bail, Context};
use sillage_ros2::check::{launch_file, params_file, Problem, Severity};
use std::path::{Path, PathBuf};

/// What a file is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Kind {
    /// ROS 2 parameter file (`node: ros__parameters: ...`).
    Params,
    /// ROS 2 launch file (XML).
    Launch,
    /// Simulation scenario (config/scenarios/*.yaml).
    Scenario,
    /// Sweep file of `sillage tune` (config/sweeps/*.yaml).
    Sweep,
}

/// Arguments of `sillage check`.
#[derive(clap::Args)]
pub struct Args {
    /// Files or folders to check.
    #[arg(required = true)]
    pub inputs: Vec<PathBuf>,
    /// Treat every file as this kind instead of guessing from its name and content.
    #[arg(long, value_enum)]
    pub kind: Option<Kind>,
    /// Fail on warnings too.
    #[arg(long)]
    pub strict: bool,
    /// A launch argument for the launch files checked, as on `ros2 launch` (repeatable).
    #[arg(long = "arg", value_name = "NAME:=VALUE", value_parser = launch_file::parse_arg)]
    pub launch_args: Vec<(String, String)>,
}

fn collect(path: &Path, out: &mut Vec<PathBuf>) -> anyhow::Result<()> {
    if path.is_dir() {
        let mut entries: Vec<PathBuf> = std::fs::read_dir(path)
            .with_context(|| format!("{}: cannot list the folder", path.display()))?
            .filter_map(|e| e.ok().map(|e| e.path()))
            .collect();
        entries.sort();
        for e in entries {
            let ext = e.extension().and_then(|x| x.to_str()).unwrap_or("");
            if e.is_dir() || matches!(ext, "xml" | "yaml" | "yml") {
                collect(&e, out)?;
            }
        }
    } else {
        out.push(path.to_path_buf());
    }
    Ok(())
}

fn guess(path: &Path) -> Result<Kind, String> {
    let ext = path.extension().and_then(|x| x.to_str()).unwrap_or("");
    if ext == "xml" {
        return Ok(Kind::Launch);
    }
    if path.components().any(|c| c.as_os_str() == "scenarios") {
        return Ok(Kind::Scenario);
    }
    if path.components().any(|c| c.as_os_str() == "sweeps") {
        return Ok(Kind::Sweep);
    }
    let text = std::fs::read_to_string(path).map_err(|e| format!("cannot read: {e}"))?;
    if params_file::looks_like_params(&text) {
        Ok(Kind::Params)
    } else {
        Err("not a parameter file (no node section with 'ros__parameters') nor a launch file; \
             scenarios live under a scenarios/ folder, or pass --kind"
            .to_string())
    }
}

fn check_scenario(path: &Path) -> Vec<Problem> {
    match sillage_world::Scenario::from_path(path) {
        Ok(_) => Vec::new(),
        Err(e) => vec![Problem { file: path.display().to_string(), key: String::new(), severity: Severity::Error, message: e.to_string() }],
    }
}

/// Checks one file; returns its kind and problems.
/// `launch_args` (`name`, `value`) apply to a launch file.
pub fn check_path(path: &Path, kind: Option<Kind>, launch_args: &[(String, String)]) -> (Option<Kind>, Vec<Problem>) {
    let file = path.display().to_string();
    let kind = match kind.map_or_else(|| guess(path), Ok) {
        Ok(k) => k,
        Err(message) => return (None, vec![Problem { file, key: String::new(), severity: Severity::Error, message }]),
    };
    let problems = match kind {
        Kind::Params => params_file::check_file(path),
        Kind::Launch => launch_file::check_file_with(path, launch_args),
        Kind::Scenario => check_scenario(path),
        Kind::Sweep => match crate::tune::check_sweep(path) {
            Ok(()) => Vec::new(),
            Err(message) => vec![Problem { file: file.clone(), key: String::new(), severity: Severity::Error, message }],
        },
    };
    (Some(kind), problems)
}

/// Runs the subcommand.
pub fn run(args: Args) -> anyhow::Result<()> {
    let mut files = Vec::new();
    for input in &args.inputs {
        if !input.exists() {
            bail!("{}: no such file or folder", input.display());
        }
        collect(input, &mut files)?;
    }
    let (mut errors, mut warnings) = (0usize, 0usize);
    for path in &files {
        let (kind, problems) = check_path(path, args.kind, &args.launch_args);
        for p in &problems {
            println!("{p}");
        }
        let e = problems.iter().filter(|p| p.is_error()).count();
        errors += e;
        warnings += problems.len() - e;
        if problems.is_empty() {
            let kind = match kind {
                Some(Kind::Params) => "parameter file",
                Some(Kind::Launch) => "launch file",
                Some(Kind::Scenario) => "scenario",
                Some(Kind::Sweep) => "sweep file",
                None => "file",
            };
            println!("{}: ok ({kind})", path.display());
        }
    }
    println!("checked {} file(s): {errors} error(s), {warnings} warning(s)", files.len());
    if errors > 0 || (args.strict && warnings > 0) {
        bail!("{errors} error(s), {warnings} warning(s) in {} file(s)", files.len());
    }
    Ok(())
}
