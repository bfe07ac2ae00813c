//! Checks a ROS 2 launch file (XML front end) offline.
//!
//! - The XML parses and the root is `<launch>`; unknown tags are warnings.
//! - Every `$(var NAME)` names an `<arg>` or `<let>` of the file; every substitution is one
//!   the XML front end knows; declared arguments nobody uses are warnings.
//! - `<node>` has `pkg` and `exec` (not ROS 1's `type`; `namespace`, not `ns`); for
//!   `pkg="sillage"` the executable is one the package installs ([`crate::BINARIES`]); an
//!   inline `<param name>` is one of its parameters or ROS's own; `sillage_stack` gets no
//!   `name` (it would rename all four nodes); every `<remap from>` names a topic of the node
//!   (warning otherwise).
//! - Every file referenced (`<param from>`, `<include file>`) exists, where its path can be
//!   resolved offline: literal paths, `$(find-pkg-share PKG)` and `$(var x)` with a default
//!   or a value given on the command line ([`check_file_with`]). `find-pkg-share sillage` is
//!   the folder above the launch file's folder (the source tree's root, or `share/sillage/` of
//!   an install tree); any package, `sillage` included when that folder lacks the file, is
//!   also looked up as `share/PKG` under each prefix of `AMENT_PREFIX_PATH` (an install tree).
//!   An `<include>` passes only arguments the included file declares, and all it requires.
//! - Every parameter file referenced (`<param from>`, here or in an included launch file, with
//!   the arguments the include passes) is checked as [`super::params_file`] does, and its
//!   problems are reported under its own name; each file once.

use super::Problem;
use crate::spec::NodeSpec;
use crate::{BINARIES, WORLD_BINARY};
use roxmltree::{Document, Node};
use sillage_stack::NodeKind;
use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};

/// Tags of the ROS 2 XML launch front end (launch and launch_ros).
const KNOWN_TAGS: &[&str] = &[
    "launch", "arg", "let", "group", "include", "node", "param", "remap", "env", "set_env", "unset_env",
    "push_ros_namespace", "push-ros-namespace", "set_parameter", "set_remap", "executable", "log", "timer",
    "node_container", "composable_node", "load_composable_node", "extra_arg", "set_use_sim_time", "ros_timer",
];

/// Substitutions of the XML front end.
const KNOWN_SUBSTITUTIONS: &[&str] = &[
    "var", "env", "find-pkg-share", "find-pkg-prefix", "find-exec", "exec-in-pkg", "eval", "dirname", "filename",
    "anon", "command", "not", "and", "or", "equals", "not-equals", "if", "file-content", "path-join",
];

/// One `$(kind args)` found in an attribute.
#[derive(Debug, Clone, PartialEq, Eq)]
struct Substitution {
    kind: String,
    args: Vec<String>,
}

/// The substitutions in `s`, innermost included (`$(eval '$(var x) + 1')` yields both).
fn substitutions(s: &str) -> Vec<Substitution> {
    let mut out = Vec::new();
    let bytes = s.as_bytes();
    let mut i = 0;
    while i + 1 < bytes.len() {
        if bytes[i] == b'$' && bytes[i + 1] == b'(' {
            // Find the matching parenthesis.
            let mut depth = 0;
            let mut end = None;
            for (j, &b) in bytes.iter().enumerate().skip(i + 1) {
                match b {
                    b'(' => depth += 1,
                    b')' => {
                        depth -= 1;
                        if depth == 0 {
                            end = Some(j);
                            break;
                        }
                    }
                    _ => {}
                }
            }
            let Some(end) = end else { break };
            let inner = &s[i + 2..end];
            let mut words = inner.split_whitespace().map(str::to_string);
            if let Some(kind) = words.next() {
                out.push(Substitution { kind, args: words.collect() });
            }
            out.extend(substitutions(inner));
            i = end + 1;
        } else {
            i += 1;
        }
    }
    out
}

/// Values of arguments known offline: name -> default (None: required, no default).
type Args = BTreeMap<String, Option<String>>;

/// The share folders of `pkg` in the install trees of `AMENT_PREFIX_PATH`.
fn installed_shares(pkg: &str) -> Vec<PathBuf> {
    let prefixes = std::env::var_os("AMENT_PREFIX_PATH").unwrap_or_default();
    std::env::split_paths(&prefixes).map(|p| p.join("share").join(pkg)).filter(|p| p.is_dir()).collect()
}

/// `$(find-pkg-share pkg)` offline: for sillage the folder above the launch file's folder
/// (`share`), else the first install tree holding the package.
fn pkg_share(pkg: &str, share: &Path) -> Option<PathBuf> {
    if pkg == "sillage" {
        Some(share.to_path_buf())
    } else {
        installed_shares(pkg).into_iter().next()
    }
}

/// Resolves `s` offline, or `None` if some part is only known at launch time.
fn resolve(s: &str, args: &Args, share: &Path, depth: usize) -> Option<String> {
    if depth > 8 {
        return None;
    }
    let mut out = String::new();
    let mut rest = s;
    while let Some(start) = rest.find("$(") {
        out.push_str(&rest[..start]);
        let after = &rest[start..];
        let end = after.find(')')?;
        let sub = substitutions(&after[..=end]).into_iter().next()?;
        let value = match (sub.kind.as_str(), sub.args.as_slice()) {
            ("find-pkg-share", [pkg]) => pkg_share(pkg, share)?.display().to_string(),
            ("var", [name]) => resolve(args.get(name)?.as_deref()?, args, share, depth + 1)?,
            _ => return None,
        };
        out.push_str(&value);
        rest = &after[end + 1..];
    }
    out.push_str(rest);
    Some(out)
}

fn line(doc: &Document, n: Node) -> String {
    doc.text_pos_at(n.range().start).row.to_string()
}

/// Declared arguments of a launch document (`<arg>` and `<let>`), with defaults.
fn declared_args(doc: &Document) -> Args {
    let mut args = Args::new();
    for n in doc.descendants().filter(|n| n.is_element()) {
        let Some(name) = n.attribute("name") else { continue };
        match n.tag_name().name() {
            "arg" if n.parent_element().is_some_and(|p| p.tag_name().name() == "launch" || p.tag_name().name() == "group") => {
                args.insert(name.to_string(), n.attribute("default").map(str::to_string));
            }
            "let" => {
                args.insert(name.to_string(), n.attribute("value").map(str::to_string));
            }
            _ => {}
        }
    }
    args
}

/// What the cores a sillage executable hosts declare: topic names and parameter keys (flat).
struct Hosted {
    topics: BTreeSet<String>,
    params: BTreeSet<String>,
}

/// The declared topics and parameters of the cores a sillage executable hosts.
fn hosted(exec: &str) -> Option<Hosted> {
    let specs: Vec<NodeSpec> = if exec == "sillage_stack" {
        NodeKind::ALL.into_iter().map(NodeSpec::of_kind).collect()
    } else if exec == WORLD_BINARY {
        vec![NodeSpec::world()]
    } else {
        let node = BINARIES.iter().find(|(b, _)| *b == exec)?.1;
        vec![NodeSpec::of_kind(NodeKind::from_name(node).ok()?)]
    };
    let mut topics = BTreeSet::new();
    let mut params = BTreeSet::new();
    for spec in specs {
        params.extend(sillage_core::params::flatten(&spec.default_params).into_iter().map(|(k, _)| k));
        if exec == WORLD_BINARY {
            topics.extend(sillage_sim::world_node::TOPICS.iter().map(|t| t.to_string()));
            continue;
        }
        let core = spec.defaults(&format!("/{}", spec.name)).ok()?;
        for p in core.inputs().into_iter().chain(core.outputs()) {
            topics.insert(p.topic);
        }
    }
    Some(Hosted { topics, params })
}

struct Ctx<'a> {
    file: String,
    doc: &'a Document<'a>,
    args: Args,
    share: PathBuf,
    dir: PathBuf,
    out: Vec<Problem>,
    /// Problems of the parameter files referenced (here and in included launch files).
    followed: Vec<Problem>,
    /// Files already followed (parameter files and included launch files).
    seen: BTreeSet<PathBuf>,
    /// Include depth (bounded: a file including itself).
    depth: usize,
}

impl Ctx<'_> {
    fn err(&mut self, n: Node, msg: impl Into<String>) {
        let l = line(self.doc, n);
        self.out.push(Problem::error(&self.file, l, msg));
    }

    fn warn(&mut self, n: Node, msg: impl Into<String>) {
        let l = line(self.doc, n);
        self.out.push(Problem::warning(&self.file, l, msg));
    }

    /// The path a file attribute resolves to, if it can be known offline. A
    /// `$(find-pkg-share sillage)` path missing from the tree of the launch file is looked up
    /// in the install trees too.
    fn path_of(&self, value: &str) -> Option<PathBuf> {
        let p = PathBuf::from(resolve(value, &self.args, &self.share, 0)?);
        let p = if p.is_relative() { self.dir.join(p) } else { p };
        if !p.exists() && value.contains("$(find-pkg-share sillage)") {
            for share in installed_shares("sillage") {
                if let Some(q) = resolve(value, &self.args, &share, 0).map(PathBuf::from).filter(|q| q.exists()) {
                    return Some(q);
                }
            }
        }
        Some(p)
    }

    /// Checks the parameter file at `path` once.
    fn follow_params(&mut self, path: PathBuf) {
        let key = std::fs::canonicalize(&path).unwrap_or_else(|_| path.clone());
        if self.seen.insert(key) {
            self.followed.extend(super::params_file::check_file(&path));
        }
    }

    fn check_file_ref(&mut self, n: Node, attr: &str, what: &str) -> Option<PathBuf> {
        let value = n.attribute(attr)?;
        let path = self.path_of(value)?;
        if path.is_file() {
            Some(path)
        } else {
            self.err(n, format!("{what} '{value}' resolves to {}, which does not exist", path.display()));
            None
        }
    }

    fn check_node(&mut self, n: Node) {
        if n.attribute("type").is_some() {
            self.err(n, "<node type=...> is ROS 1; ROS 2 launch files name the executable with exec=");
        }
        if n.attribute("ns").is_some() {
            self.err(n, "<node ns=...> is ROS 1; the ROS 2 attribute is namespace=");
        }
        let (Some(pkg), Some(exec)) = (n.attribute("pkg"), n.attribute("exec")) else {
            self.err(n, "<node> needs pkg= and exec=");
            return;
        };
        let pkg = resolve(pkg, &self.args, &self.share, 0);
        let exec = resolve(exec, &self.args, &self.share, 0);
        let (Some("sillage"), Some(exec)) = (pkg.as_deref(), exec) else { return };
        if !BINARIES.iter().any(|(b, _)| *b == exec) {
            let known: Vec<&str> = BINARIES.iter().map(|(b, _)| *b).collect();
            self.err(n, format!("package sillage has no executable '{exec}' (it installs {})", known.join(", ")));
            return;
        }
        if exec == "sillage_stack" && n.attribute("name").is_some() {
            self.err(n, "sillage_stack hosts four nodes: name= would give them all one name (the process refuses it); leave it out");
        }
        let Some(Hosted { topics, params }) = hosted(&exec) else { return };
        for p in n.children().filter(|c| c.tag_name().name() == "param") {
            let Some(name) = p.attribute("name") else { continue };
            if !name.contains("$(") && !crate::spec::is_reserved(name) && !params.contains(name) {
                let near: Vec<&str> = params.iter().map(String::as_str).filter(|k| k.rsplit('.').next() == name.rsplit('.').next()).collect();
                let hint = if near.is_empty() { String::new() } else { format!(" (did you mean {}?)", near.join(", ")) };
                self.err(p, format!("{exec} has no parameter '{name}'{hint}"));
            }
        }
        for r in n.children().filter(|c| c.tag_name().name() == "remap") {
            let Some(from) = r.attribute("from") else { continue };
            let bare = from.trim_start_matches('/');
            let bare = bare.rsplit_once('/').map_or(bare, |(_, t)| t);
            if !from.contains("$(") && !topics.contains(from) && !topics.contains(bare) {
                let list: Vec<&str> = topics.iter().map(String::as_str).collect();
                self.warn(r, format!("remap from '{from}' matches no topic of {exec} ({})", list.join(", ")));
            }
        }
    }

    fn check_include(&mut self, n: Node) {
        let Some(path) = self.check_file_ref(n, "file", "included file") else { return };
        let Ok(text) = std::fs::read_to_string(&path) else { return };
        let Ok(inner) = Document::parse(&text) else {
            self.err(n, format!("included file {} is not valid XML", path.display()));
            return;
        };
        let theirs = declared_args(&inner);
        self.follow_include(n, &path, &inner, &theirs);
        let passed: Vec<(Node, String)> = n
            .children()
            .filter(|c| c.tag_name().name() == "arg")
            .filter_map(|c| c.attribute("name").map(|a| (c, a.to_string())))
            .collect();
        for (c, name) in &passed {
            if !theirs.contains_key(name) {
                let list: Vec<&str> = theirs.keys().map(String::as_str).collect();
                self.err(*c, format!("{} declares no argument '{name}' (it has {})", path.display(), list.join(", ")));
            }
        }
        for (name, default) in &theirs {
            if default.is_none() && !passed.iter().any(|(_, p)| p == name) && !self.args.contains_key(name) {
                self.err(n, format!("{} requires argument '{name}', which this include does not pass", path.display()));
            }
        }
    }

    /// Follows the parameter files of an included launch file, with the arguments passed.
    fn follow_include(&mut self, n: Node, path: &Path, inner: &Document, theirs: &Args) {
        let key = std::fs::canonicalize(path).unwrap_or_else(|_| path.to_path_buf());
        if self.depth >= 8 || !self.seen.insert(key) {
            return;
        }
        let mut args = theirs.clone();
        for c in n.children().filter(|c| c.tag_name().name() == "arg") {
            if let (Some(name), Some(value)) = (c.attribute("name"), c.attribute("value")) {
                args.insert(name.to_string(), resolve(value, &self.args, &self.share, 0));
            }
        }
        let (dir, share) = folders(path);
        let mut sub = Ctx {
            file: path.display().to_string(),
            doc: inner,
            args,
            share,
            dir,
            out: Vec::new(),
            followed: Vec::new(),
            seen: std::mem::take(&mut self.seen),
            depth: self.depth + 1,
        };
        sub.walk(inner.root_element(), &mut BTreeSet::new());
        self.seen = sub.seen;
        self.followed.extend(sub.followed);
    }

    fn walk(&mut self, n: Node, used: &mut BTreeSet<String>) {
        for attr in n.attributes() {
            for sub in substitutions(attr.value()) {
                if !KNOWN_SUBSTITUTIONS.contains(&sub.kind.as_str()) {
                    self.err(n, format!("unknown substitution '$({} ...)' in {}=", sub.kind, attr.name()));
                } else if sub.kind == "var" {
                    match sub.args.first() {
                        Some(name) => {
                            used.insert(name.clone());
                            if !self.args.contains_key(name) {
                                self.err(n, format!("$(var {name}) in {}= uses an argument this file does not declare (add <arg name=\"{name}\" .../>)", attr.name()));
                            }
                        }
                        None => self.err(n, format!("$(var) without a name in {}=", attr.name())),
                    }
                }
            }
        }
        let tag = n.tag_name().name();
        if !KNOWN_TAGS.contains(&tag) {
            self.warn(n, format!("unknown launch tag <{tag}>"));
        }
        match tag {
            "node" => self.check_node(n),
            "include" => self.check_include(n),
            "param" => {
                if let Some(path) = self.check_file_ref(n, "from", "parameter file") {
                    self.follow_params(path);
                }
            }
            "remap" if n.attribute("from").is_none_or(str::is_empty) || n.attribute("to").is_none_or(str::is_empty) => {
                self.err(n, "<remap> needs non-empty from= and to=");
            }
            "arg" if n.attribute("name").is_none() => self.err(n, "<arg> needs name="),
            _ => {}
        }
        for c in n.children().filter(|c| c.is_element()) {
            self.walk(c, used);
        }
    }
}

/// The launch file's folder and the package share above it, from its absolute path (source
/// tree and install tree alike).
fn folders(path: &Path) -> (PathBuf, PathBuf) {
    let abs = std::fs::canonicalize(path).unwrap_or_else(|_| path.to_path_buf());
    let dir = abs.parent().map(Path::to_path_buf).unwrap_or_else(|| PathBuf::from("."));
    let share = dir.parent().map(Path::to_path_buf).unwrap_or_else(|| PathBuf::from(".."));
    (dir, share)
}

/// A launch argument given on the command line as `name:=value` (as `ros2 launch` takes it).
pub fn parse_arg(s: &str) -> Result<(String, String), String> {
    match s.split_once(":=") {
        Some((name, value)) if !name.is_empty() && !name.contains(char::is_whitespace) => Ok((name.to_string(), value.to_string())),
        _ => Err(format!("launch argument '{s}': expected NAME:=VALUE")),
    }
}

/// Checks launch XML text; `path` is where the file is (for relative and package paths).
pub fn check_text(text: &str, path: &Path) -> Vec<Problem> {
    check_text_with(text, path, &[])
}

/// Checks launch XML text with launch arguments given as on `ros2 launch` (`(name, value)`;
/// a name the file does not declare is an error).
pub fn check_text_with(text: &str, path: &Path, given: &[(String, String)]) -> Vec<Problem> {
    let file = path.display().to_string();
    let doc = match Document::parse(text) {
        Ok(d) => d,
        Err(e) => return vec![Problem::error(&file, "", format!("invalid XML: {e}"))],
    };
    let root = doc.root_element();
    if root.tag_name().name() != "launch" {
        return vec![Problem::error(&file, "1", format!("the root element is <{}>, a launch file's is <launch>", root.tag_name().name()))];
    }
    let (dir, share) = folders(path);
    let mut args = declared_args(&doc);
    let mut bad_args = Vec::new();
    for (name, value) in given {
        if args.contains_key(name) {
            // A relative path given on the command line is relative to where the command
            // runs (as with `ros2 launch`), not to the launch file.
            let as_path = Path::new(value);
            let value = match std::fs::canonicalize(as_path) {
                Ok(abs) if as_path.is_relative() => abs.display().to_string(),
                _ => value.clone(),
            };
            args.insert(name.clone(), Some(value));
        } else {
            let list: Vec<&str> = args.keys().map(String::as_str).collect();
            bad_args.push(Problem::error(&file, "", format!("launch argument '{name}' given on the command line, but the file declares no such argument (it has {})", list.join(", "))));
        }
    }
    let mut ctx = Ctx { file, doc: &doc, args, share, dir, out: bad_args, followed: Vec::new(), seen: BTreeSet::new(), depth: 0 };
    let mut used = BTreeSet::new();
    ctx.walk(root, &mut used);
    for n in doc.descendants().filter(|n| n.tag_name().name() == "arg" && n.parent_element() == Some(root)) {
        if let Some(name) = n.attribute("name") {
            if !used.contains(name) {
                ctx.warn(n, format!("argument '{name}' is declared but never used"));
            }
        }
    }
    ctx.out.extend(ctx.followed);
    ctx.out
}

/// Checks a launch file on disk.
pub fn check_file(path: &Path) -> Vec<Problem> {
    check_file_with(path, &[])
}

/// Checks a launch file on disk with launch arguments (see [`check_text_with`]).
pub fn check_file_with(path: &Path, given: &[(String, String)]) -> Vec<Problem> {
    match std::fs::read_to_string(path) {
        Ok(text) => check_text_with(&text, path, given),
        Err(e) => vec![Problem::error(&path.display().to_string(), "", format!("cannot read: {e}"))],
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn check(xml: &str) -> Vec<String> {
        let dir = std::env::temp_dir().join(format!("sillage-launch-{}", std::process::id()));
        let launch = dir.join("launch");
        std::fs::create_dir_all(dir.join("config")).expect("dirs");
        std::fs::create_dir_all(&launch).expect("dirs");
        std::fs::write(dir.join("config/p.yaml"), "/**:\n  ros__parameters: {}\n").expect("write");
        std::fs::write(launch.join("inner.launch.xml"), "<launch><arg name=\"ns\"/><arg name=\"opt\" default=\"x\"/></launch>").expect("write");
        check_text(xml, &launch.join("t.launch.xml")).iter().map(ToString::to_string).collect()
    }

    #[test]
    fn referenced_parameter_files_are_checked_with_default_and_given_arguments() {
        let dir = std::env::temp_dir().join(format!("sillage-launch-follow-{}", std::process::id()));
        std::fs::create_dir_all(dir.join("config")).expect("dirs");
        std::fs::create_dir_all(dir.join("launch")).expect("dirs");
        let bad = "/**:\n  ros__parameters:\n    guard:\n      max_linear: -0.5\n";
        std::fs::write(dir.join("config/bad.yaml"), bad).expect("write");
        std::fs::write(dir.join("config/good.yaml"), "/**:\n  ros__parameters: {}\n").expect("write");
        std::fs::write(dir.join("config/fast.yaml"), "arbiter:\n  ros__parameters:\n    guard:\n      max_linear: 5.0\n").expect("write");
        let inner = r#"<launch><arg name="p" default="$(find-pkg-share sillage)/config/good.yaml"/>
  <node pkg="sillage" exec="sillage_arbiter"><param from="$(var p)"/></node></launch>"#;
        std::fs::write(dir.join("launch/inner.launch.xml"), inner).expect("write");
        let outer = r#"<launch>
  <arg name="params" default="$(find-pkg-share sillage)/config/bad.yaml"/>
  <arg name="inner_params" default="$(find-pkg-share sillage)/config/good.yaml"/>
  <node pkg="sillage" exec="sillage_arbiter"><param from="$(var params)"/></node>
  <include file="$(find-pkg-share sillage)/launch/inner.launch.xml"><arg name="p" value="$(var inner_params)"/></include>
</launch>"#;
        let path = dir.join("launch/outer.launch.xml");
        std::fs::write(&path, outer).expect("write");
        let text = |v: Vec<Problem>| v.iter().map(ToString::to_string).collect::<Vec<_>>();
        // The default argument: the negative cap in bad.yaml is reported under its own name.
        let p = text(check_file(&path));
        assert!(p.iter().any(|m| m.contains("bad.yaml") && m.contains("guard.max_linear") && m.contains("error")), "{p:#?}");
        // Arguments from the command line, also through the include.
        let given = [("params".to_string(), dir.join("config/good.yaml").display().to_string())];
        assert_eq!(text(check_file_with(&path, &given)), Vec::<String>::new());
        let given = [("inner_params".to_string(), dir.join("config/fast.yaml").display().to_string()), ("params".to_string(), dir.join("config/good.yaml").display().to_string())];
        let p = text(check_file_with(&path, &given));
        assert!(p.iter().any(|m| m.contains("fast.yaml") && m.contains("limits.max_linear")), "{p:#?}");
        let p = text(check_file_with(&path, &[("nope".to_string(), "1".to_string())]));
        assert!(p.iter().any(|m| m.contains("launch argument 'nope'")), "{p:#?}");
        assert_eq!(parse_arg("params:=/a/b.yaml"), Ok(("params".to_string(), "/a/b.yaml".to_string())));
        assert!(parse_arg("params=/a").is_err());
        let _ = std::fs::remove_dir_all(&dir);
    }

    #[test]
    fn find_pkg_share_resolves_in_an_install_tree() {
        // colcon installs launch/ and config/ to <prefix>/share/sillage/: the launch file
        // there finds its parameter files beside it, and their errors are reported.
        let prefix = std::env::temp_dir().join(format!("sillage-install-{}", std::process::id()));
        let share = prefix.join("share/sillage");
        std::fs::create_dir_all(share.join("config")).expect("dirs");
        std::fs::create_dir_all(share.join("launch")).expect("dirs");
        std::fs::write(share.join("config/x.yaml"), "/**:\n  ros__parameters:\n    guard:\n      max_angular: -1.0\n").expect("write");
        let launch = r#"<launch><arg name="p" default="$(find-pkg-share sillage)/config/x.yaml"/>
  <node pkg="sillage" exec="sillage_arbiter"><param from="$(var p)"/></node></launch>"#;
        std::fs::write(share.join("launch/r.launch.xml"), launch).expect("write");
        let p: Vec<String> = check_file(&share.join("launch/r.launch.xml")).iter().map(ToString::to_string).collect();
        assert!(p.iter().any(|m| m.contains("share/sillage/config/x.yaml") && m.contains("guard.max_angular")), "{p:#?}");
        // Another package's share is only known through AMENT_PREFIX_PATH: unresolved here
        // unless that variable names an install tree holding it.
        let v = "$(find-pkg-share some_robot_cfg)/config/x.yaml";
        assert_eq!(resolve(v, &Args::new(), &share, 0).is_some(), !installed_shares("some_robot_cfg").is_empty());
        let _ = std::fs::remove_dir_all(&prefix);
    }

    #[test]
    fn substitutions_are_found_with_nesting() {
        let s = substitutions("$(find-pkg-share sillage)/a/$(eval '$(var x) + 1')");
        let kinds: Vec<&str> = s.iter().map(|s| s.kind.as_str()).collect();
        assert_eq!(kinds, ["find-pkg-share", "eval", "var"]);
        assert_eq!(s[2].args, ["x"]);
    }

    #[test]
    fn a_good_file_passes() {
        let p = check(
            r#"<launch>
  <arg name="namespace" default=""/>
  <arg name="params_file" default="$(find-pkg-share sillage)/config/p.yaml"/>
  <group>
    <push_ros_namespace namespace="$(var namespace)"/>
    <node pkg="sillage" exec="sillage_arbiter" name="arbiter" output="screen">
      <param from="$(var params_file)"/>
      <remap from="cmd_vel" to="/mux/sillage"/>
    </node>
  </group>
  <include file="$(find-pkg-share sillage)/launch/inner.launch.xml"><arg name="ns" value="$(var namespace)"/></include>
  <node pkg="other_pkg" exec="whatever"/>
</launch>"#,
        );
        assert_eq!(p, Vec::<String>::new());
    }

    #[test]
    fn mistakes_are_reported_with_their_line() {
        let p = check(
            r#"<launch>
  <arg name="unused" default="1"/>
  <node pkg="sillage" exec="sillage_arbitr"/>
  <node pkg="sillage" type="sillage_arbiter" ns="/r"/>
  <node pkg="sillage" exec="sillage_stack" name="stack" namespace="$(var robot)"/>
  <node pkg="sillage" exec="sillage_event_encoder"><remap from="chm" to="x"/><param from="$(find-pkg-share sillage)/config/none.yaml"/></node>
  <include file="$(find-pkg-share sillage)/launch/inner.launch.xml"><arg name="nss" value="a"/></include>
  <node pkg="sillage" exec="sillage_world"><param name="scenario" value="a.yaml"/><param name="seeds" value="1"/><remap from="odom" to="truth"/></node>
  <param name="x" value="$(frobnicate a)"/>
</launch>"#,
        );
        let has = |needle: &str| p.iter().any(|m| m.contains(needle));
        assert!(has("t.launch.xml:3: error: package sillage has no executable 'sillage_arbitr'"), "{p:#?}");
        assert!(has(":4: error: <node type=...> is ROS 1"), "{p:#?}");
        assert!(has(":4: error: <node ns=...> is ROS 1"), "{p:#?}");
        assert!(has(":5: error: $(var robot)"), "{p:#?}");
        assert!(has(":5: error: sillage_stack hosts four nodes"), "{p:#?}");
        assert!(has(":6: warning: remap from 'chm' matches no topic"), "{p:#?}");
        assert!(has(":6: error: parameter file"), "{p:#?}");
        assert!(has(":7: error:") && has("declares no argument 'nss'"), "{p:#?}");
        assert!(has("requires argument 'ns'"), "{p:#?}");
        assert!(has(":8: error: sillage_world has no parameter 'seeds'"), "{p:#?}");
        assert!(!has("parameter 'scenario'") && !has("remap from 'odom'"), "{p:#?}");
        assert!(has(":9: error: unknown substitution '$(frobnicate"), "{p:#?}");
        assert!(has(":2: warning: argument 'unused' is declared but never used"), "{p:#?}");
        assert!(check("<launch").iter().all(|m| m.contains("invalid XML")));
        assert!(check("<robot/>")[0].contains("a launch file's is <launch>"));
    }
}
