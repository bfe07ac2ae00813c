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
//!   resolved offline: literal paths, `$(find-pkg-share sillage)` (the folder above the launch
//!   file's folder, in the source tree and in `share/sillage/` alike) and `$(var x)` with a
//!   default. An `<include>` passes only arguments the included file declares, and all it
//!   requires.

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
            ("find-pkg-share", [pkg]) if pkg == "sillage" => share.display().to_string(),
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

    /// The path a file attribute resolves to, if it can be known offline.
    fn path_of(&self, value: &str) -> Option<PathBuf> {
        let p = PathBuf::from(resolve(value, &self.args, &self.share, 0)?);
        Some(if p.is_relative() { self.dir.join(p) } else { p })
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
                let _ = self.check_file_ref(n, "from", "parameter file");
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

/// Checks launch XML text; `path` is where the file is (for relative and package paths).
pub fn check_text(text: &str, path: &Path) -> Vec<Problem> {
    let file = path.display().to_string();
    let doc = match Document::parse(text) {
        Ok(d) => d,
        Err(e) => return vec![Problem::error(&file, "", format!("invalid XML: {e}"))],
    };
    let root = doc.root_element();
    if root.tag_name().name() != "launch" {
        return vec![Problem::error(&file, "1", format!("the root element is <{}>, a launch file's is <launch>", root.tag_name().name()))];
    }
    // The package share is the folder above the launch file's folder (source tree and
    // install tree alike); work from the absolute path so relative names resolve too.
    let abs = std::fs::canonicalize(path).unwrap_or_else(|_| path.to_path_buf());
    let dir = abs.parent().map(Path::to_path_buf).unwrap_or_else(|| PathBuf::from("."));
    let share = dir.parent().map(Path::to_path_buf).unwrap_or_else(|| PathBuf::from(".."));
    let mut ctx = Ctx { file, doc: &doc, args: declared_args(&doc), share, dir, out: Vec::new() };
    let mut used = BTreeSet::new();
    ctx.walk(root, &mut used);
    for n in doc.descendants().filter(|n| n.tag_name().name() == "arg" && n.parent_element() == Some(root)) {
        if let Some(name) = n.attribute("name") {
            if !used.contains(name) {
                ctx.warn(n, format!("argument '{name}' is declared but never used"));
            }
        }
    }
    ctx.out
}

/// Checks a launch file on disk.
pub fn check_file(path: &Path) -> Vec<Problem> {
    match std::fs::read_to_string(path) {
        Ok(text) => check_text(&text, path),
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
