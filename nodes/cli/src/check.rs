//! `sillage check FILE...`: validates ROS 2 parameter files, launch files and simulation
//! scenarios before they reach a robot. Prints `file:key: error|warning: message` for every
//! problem and fails if there is any error (or any warning with `--strict`).
//!
//! The kind of each file comes from its content, wherever it lies: XML (first non-blank
//! character `<`) is a launch file; YAML whose top-level values hold `ros__parameters` is a
//! parameter file; YAML with a sweep's top-level keys (`design`, `parameters`, `evaluate`) is a
//! sweep file of `sillage tune`; YAML with a scenario's (`arena`, `sources`, `robot`, ...) is a
//! scenario; a YAML map with none of these keys is taken by its folder (`scenarios/`,
//! `sweeps/`) if it lies in one. `--kind` forces a kind. YAML that does not parse is reported with its line and
//! column (indentation, duplicate keys, ...). A folder stands for every `*.xml`, `*.yaml` and
//! `*.yml` file inside it (recursively; `SCHEMA.md` and other files are skipped); a selection
//! with no such file is an error.

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
    /// Treat every file as this kind instead of telling it from its content.
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

/// Top-level keys only a sweep file has.
const SWEEP_KEYS: [&str; 4] = ["design", "parameters", "evaluate", "objective"];
/// Top-level keys only a scenario has.
const SCENARIO_KEYS: [&str; 9] = ["arena", "sources", "plume", "wind", "sensors", "anemometer", "robot", "laser", "success_radius"];

/// Where a repeated key of the mapping starting at (`line`, `column`) (1-based) is written
/// the second time: serde_yaml points at the mapping, not at the repeat.
fn duplicate_at(text: &str, key: &str, line: usize, column: usize) -> Option<(usize, usize)> {
    let indent = column.saturating_sub(1);
    let mut seen = 0;
    for (i, l) in text.lines().enumerate().skip(line.saturating_sub(1)) {
        let body = l.get(indent..)?;
        let lead = &l[..indent.min(l.len())];
        if !lead.chars().all(|c| c == ' ' || c == '-') || body.starts_with(' ') {
            continue;
        }
        let bare = body.strip_prefix(key).is_some_and(|r| r.trim_start().starts_with(':'));
        let quoted = [format!("\"{key}\""), format!("'{key}'")].iter().any(|q| body.strip_prefix(q.as_str()).is_some_and(|r| r.trim_start().starts_with(':')));
        if bare || quoted {
            seen += 1;
            if seen == 2 {
                return Some((i + 1, column));
            }
        }
    }
    None
}

/// A YAML syntax error as `line L, column C: what`.
fn yaml_syntax(e: &serde_yaml::Error, text: &str) -> String {
    let what = e.to_string();
    if let (Some(l), Some(rest)) = (e.location(), what.split_once("duplicate entry with key \"").map(|x| x.1)) {
        let key = rest.split('"').next().unwrap_or("");
        if let Some((line, col)) = duplicate_at(text, key, l.line(), l.column()) {
            return format!("YAML syntax error at line {line}, column {col}: duplicate key '{key}' (a map's keys must be unique)");
        }
    }
    match e.location() {
        // serde_yaml appends " at line L column C" itself: keep the location once, in front.
        Some(l) => {
            let short = what.split(" at line ").next().unwrap_or(&what).to_string();
            format!("YAML syntax error at line {}, column {}: {short}", l.line(), l.column())
        }
        None => format!("YAML syntax error: {what}"),
    }
}

/// The kind of a file from its content.
fn guess_text(text: &str) -> Result<Kind, String> {
    if text.trim_start().starts_with('<') {
        return Ok(Kind::Launch);
    }
    let v: serde_yaml::Value = serde_yaml::from_str(text).map_err(|e| yaml_syntax(&e, text))?;
    let serde_yaml::Value::Mapping(top) = v else {
        return Err("neither XML nor a YAML map: not a parameter, launch, scenario or sweep file".to_string());
    };
    if top.values().any(|v| v.get("ros__parameters").is_some()) {
        return Ok(Kind::Params);
    }
    let has = |k: &str| top.contains_key(k);
    let sweep = SWEEP_KEYS.iter().filter(|k| has(k)).count();
    let scenario = SCENARIO_KEYS.iter().filter(|k| has(k)).count();
    match (sweep, scenario) {
        (0, 0) => Err("no node section with 'ros__parameters', and none of a scenario's or a sweep's top-level keys: \
                       not a parameter, scenario or sweep file (pass --kind to check it as one)"
            .to_string()),
        (a, b) if a >= b => Ok(Kind::Sweep),
        _ => Ok(Kind::Scenario),
    }
}

/// The kind from the content; content that says nothing (a YAML map without any telling key)
/// falls back on the folder: `scenarios/` or `sweeps/`.
fn guess(path: &Path) -> Result<Kind, String> {
    let text = std::fs::read_to_string(path).map_err(|e| format!("cannot read: {e}"))?;
    let kind = guess_text(&text);
    if kind.as_ref().is_err_and(|e| e.starts_with("no node section")) {
        let under = |d: &str| path.components().any(|c| c.as_os_str() == d);
        if under("scenarios") {
            return Ok(Kind::Scenario);
        }
        if under("sweeps") {
            return Ok(Kind::Sweep);
        }
    }
    kind
}

/// A scenario's problem keyed by its dotted key (a missing field by the key it lacks), with
/// the file named once.
fn check_scenario(path: &Path) -> Vec<Problem> {
    let file = path.display().to_string();
    let (key, message) = match sillage_world::Scenario::from_path(path) {
        Ok(_) => return Vec::new(),
        Err(sillage_world::WorldError::Parse { key, message, .. }) => {
            let root = if key == "." { String::new() } else { key };
            match message.strip_prefix("missing field `").and_then(|m| m.split_once('`')) {
                Some((field, rest)) => {
                    let k = if root.is_empty() { field.to_string() } else { format!("{root}.{field}") };
                    (k, format!("missing (required){}", rest.split(" at line ").next().unwrap_or("")))
                }
                None => (root, message),
            }
        }
        Err(sillage_world::WorldError::Invalid { key, reason, .. }) => (key, reason),
        Err(e) => (String::new(), e.to_string()),
    };
    vec![Problem { file, key, severity: Severity::Error, message }]
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
    if files.is_empty() {
        let names: Vec<String> = args.inputs.iter().map(|p| p.display().to_string()).collect();
        bail!("nothing to check: no .xml, .yaml or .yml file in {}", names.join(", "));
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn kinds_come_from_the_content() {
        assert_eq!(guess_text("<launch>\n</launch>"), Ok(Kind::Launch));
        assert_eq!(guess_text("arbiter:\n  ros__parameters:\n    rate: 10.0\n"), Ok(Kind::Params));
        assert_eq!(guess_text("name: s\ndesign: {kind: grid}\nparameters: []\nevaluate: {}\n"), Ok(Kind::Sweep));
        assert_eq!(guess_text("name: s\narena: {}\nsources: []\nrobot: {}\n"), Ok(Kind::Scenario));
        assert!(guess_text("a: 1\n").is_err_and(|e| e.contains("--kind")));
    }

    #[test]
    fn yaml_syntax_errors_say_line_and_column() {
        // A mapping key at a column that matches no open block (YAML 1.2, 6.1 Indentation
        // Spaces), and a repeated key (YAML 1.2, 3.2.1.1: keys of a mapping are unique).
        let e = guess_text("a:\n  b: 1\n c: 2\n").expect_err("bad indentation");
        assert!(e.starts_with("YAML syntax error at line 3, column "), "{e}");
        let e = guess_text("a: 1\nb: 2\na: 3\n").expect_err("duplicate key");
        assert!(e.starts_with("YAML syntax error at line 3, column 1: ") && e.contains("duplicate"), "{e}");
        let e = guess_text("x:\n  ros__parameters:\n    rate: 1.0\n    gain: 2.0\n    rate: 3.0\n").expect_err("nested duplicate");
        assert!(e.starts_with("YAML syntax error at line 5, column 5: duplicate key 'rate'"), "{e}");
    }
}
