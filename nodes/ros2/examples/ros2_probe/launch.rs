//! Expands a ROS 2 XML launch file into the processes `ros2 launch` would start, so the probe
//! starts each node binary exactly as the launch file says (executable, name, namespace,
//! parameter files, inline parameters, remaps) without the Python launch system.
//!
//! The subset of the XML front end (launch and launch_ros, "Architecture of launch" and the
//! launch_ros XML front end as documented on docs.ros.org) the project's launch files use:
//! `<launch>`, `<arg name default>` (values given by the caller win), `<let>`, `<group>`
//! (scoped), `<push_ros_namespace>`, `<node pkg exec name namespace>` with `<param from>`,
//! `<param name value>` and `<remap from to>`, `<include file>` with `<arg name value>`, `if`
//! and `unless` on `<node>`, `<group>` and `<include>`, and the substitutions `$(var x)` and
//! `$(find-pkg-share sillage)`. Anything else is an error naming the file and line, so a launch
//! file this probe cannot expand fails the test instead of being half-started.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// One process the launch file starts.
#[derive(Debug, Clone)]
pub struct LaunchedNode {
    /// The `exec` attribute (binary name in the package's lib folder).
    pub exec: String,
    /// The `name` attribute, if any (`-r __node:=name`).
    pub name: Option<String>,
    /// The namespace the node gets (`-r __ns:=...`), absolute, "" for the root.
    pub namespace: String,
    /// The command-line arguments after the executable (`--ros-args ...`).
    pub args: Vec<String>,
    /// Where in the launch file it was declared (`file:line`).
    pub at: String,
}

/// Expands `file` with the launch arguments `given` (name -> value); `share` stands for
/// `$(find-pkg-share sillage)`.
pub fn expand(file: &Path, given: &BTreeMap<String, String>, share: &Path) -> Result<Vec<LaunchedNode>, String> {
    let mut out = Vec::new();
    expand_into(file, given, share, "", &mut out, 0)?;
    Ok(out)
}

fn expand_into(
    file: &Path,
    given: &BTreeMap<String, String>,
    share: &Path,
    namespace: &str,
    out: &mut Vec<LaunchedNode>,
    depth: usize,
) -> Result<(), String> {
    if depth > 8 {
        return Err(format!("{}: includes nest deeper than 8", file.display()));
    }
    let text = std::fs::read_to_string(file).map_err(|e| format!("{}: {e}", file.display()))?;
    let doc = roxmltree::Document::parse(&text).map_err(|e| format!("{}: {e}", file.display()))?;
    let root = doc.root_element();
    if root.tag_name().name() != "launch" {
        return Err(format!("{}: the root element is <{}>, not <launch>", file.display(), root.tag_name().name()));
    }
    let mut cx = Cx { file, doc: &doc, share, given, vars: BTreeMap::new(), out, depth };
    cx.children(root, namespace)
}

struct Cx<'a, 'd> {
    file: &'a Path,
    doc: &'a roxmltree::Document<'d>,
    share: &'a Path,
    given: &'a BTreeMap<String, String>,
    vars: BTreeMap<String, String>,
    out: &'a mut Vec<LaunchedNode>,
    depth: usize,
}

impl Cx<'_, '_> {
    fn at(&self, n: roxmltree::Node) -> String {
        format!("{}:{}", self.file.display(), self.doc.text_pos_at(n.range().start).row)
    }

    /// Resolves the substitutions of `s`.
    fn subst(&self, s: &str, n: roxmltree::Node) -> Result<String, String> {
        let mut out = String::new();
        let mut rest = s;
        while let Some(start) = rest.find("$(") {
            out.push_str(&rest[..start]);
            let after = &rest[start + 2..];
            let end = after.find(')').ok_or_else(|| format!("{}: unclosed substitution in '{s}'", self.at(n)))?;
            let words: Vec<&str> = after[..end].split_whitespace().collect();
            let value = match words.as_slice() {
                ["var", name] => self.vars.get(*name).cloned().ok_or_else(|| format!("{}: $(var {name}) is not declared", self.at(n)))?,
                ["find-pkg-share", "sillage"] => self.share.display().to_string(),
                other => return Err(format!("{}: substitution $({}) is not supported by the probe", self.at(n), other.join(" "))),
            };
            out.push_str(&value);
            rest = &after[end + 1..];
        }
        out.push_str(rest);
        Ok(out)
    }

    fn attr(&self, n: roxmltree::Node, name: &str) -> Result<Option<String>, String> {
        n.attribute(name).map(|v| self.subst(v, n)).transpose()
    }

    fn need(&self, n: roxmltree::Node, name: &str) -> Result<String, String> {
        self.attr(n, name)?.ok_or_else(|| format!("{}: <{}> has no '{name}'", self.at(n), n.tag_name().name()))
    }

    /// Whether the `if`/`unless` conditions of `n` hold.
    fn enabled(&self, n: roxmltree::Node) -> Result<bool, String> {
        let truth = |v: String| match v.to_ascii_lowercase().as_str() {
            "true" | "1" => Ok(true),
            "false" | "0" => Ok(false),
            other => Err(format!("{}: condition '{other}' is neither true nor false", self.at(n))),
        };
        let yes = match self.attr(n, "if")? {
            Some(v) => truth(v)?,
            None => true,
        };
        let no = match self.attr(n, "unless")? {
            Some(v) => truth(v)?,
            None => false,
        };
        Ok(yes && !no)
    }

    fn children(&mut self, parent: roxmltree::Node, namespace: &str) -> Result<(), String> {
        let mut ns = namespace.to_string();
        for n in parent.children().filter(|n| n.is_element()) {
            match n.tag_name().name() {
                "arg" => {
                    let name = n.attribute("name").ok_or_else(|| format!("{}: <arg> without a name", self.at(n)))?.to_string();
                    let value = match (self.given.get(&name), n.attribute("default")) {
                        (Some(v), _) => v.clone(),
                        (None, Some(d)) => self.subst(d, n)?,
                        (None, None) => return Err(format!("{}: launch argument '{name}' is required", self.at(n))),
                    };
                    self.vars.insert(name, value);
                }
                "let" => {
                    let name = self.need(n, "name")?;
                    let value = self.need(n, "value")?;
                    self.vars.insert(name, value);
                }
                "push_ros_namespace" | "push-ros-namespace" => ns = join_ns(&ns, &self.need(n, "namespace")?),
                "group" => {
                    if self.enabled(n)? {
                        let saved = self.vars.clone();
                        self.children(n, &ns)?;
                        self.vars = saved;
                    }
                }
                "node" => {
                    if self.enabled(n)? {
                        let node = self.node(n, &ns)?;
                        self.out.push(node);
                    }
                }
                "include" => {
                    if self.enabled(n)? {
                        let file = PathBuf::from(self.need(n, "file")?);
                        let mut args = BTreeMap::new();
                        for a in n.children().filter(|c| c.is_element()) {
                            if a.tag_name().name() != "arg" {
                                return Err(format!("{}: <{}> inside <include> is not supported", self.at(a), a.tag_name().name()));
                            }
                            args.insert(self.need(a, "name")?, self.need(a, "value")?);
                        }
                        expand_into(&file, &args, self.share, &ns, self.out, self.depth + 1)?;
                    }
                }
                other => return Err(format!("{}: <{other}> is not supported by the probe", self.at(n))),
            }
        }
        Ok(())
    }

    fn node(&self, n: roxmltree::Node, ns: &str) -> Result<LaunchedNode, String> {
        let pkg = self.need(n, "pkg")?;
        if pkg != "sillage" {
            return Err(format!("{}: node of package '{pkg}', the probe starts only sillage's", self.at(n)));
        }
        let exec = self.need(n, "exec")?;
        let name = self.attr(n, "name")?;
        let namespace = match self.attr(n, "namespace")? {
            Some(own) => join_ns(ns, &own),
            None => ns.to_string(),
        };
        let mut args = vec!["--ros-args".to_string()];
        if let Some(name) = &name {
            args.extend(["-r".to_string(), format!("__node:={name}")]);
        }
        if !namespace.is_empty() {
            args.extend(["-r".to_string(), format!("__ns:={namespace}")]);
        }
        for c in n.children().filter(|c| c.is_element()) {
            match c.tag_name().name() {
                "param" => match (self.attr(c, "from")?, self.attr(c, "name")?, self.attr(c, "value")?) {
                    (Some(from), None, None) => {
                        if !Path::new(&from).is_file() {
                            return Err(format!("{}: parameter file '{from}' does not exist", self.at(c)));
                        }
                        args.extend(["--params-file".to_string(), from]);
                    }
                    (None, Some(name), Some(value)) => args.extend(["-p".to_string(), format!("{name}:={value}")]),
                    _ => return Err(format!("{}: <param> needs 'from', or 'name' and 'value'", self.at(c))),
                },
                "remap" => args.extend(["-r".to_string(), format!("{}:={}", self.need(c, "from")?, self.need(c, "to")?)]),
                other => return Err(format!("{}: <{other}> inside <node> is not supported by the probe", self.at(c))),
            }
        }
        Ok(LaunchedNode { exec, name, namespace, args, at: self.at(n) })
    }
}

/// `push_ros_namespace` semantics: an absolute namespace replaces, a relative one nests, an
/// empty one changes nothing.
fn join_ns(current: &str, pushed: &str) -> String {
    let pushed = pushed.trim_end_matches('/');
    if pushed.is_empty() {
        current.to_string()
    } else if pushed.starts_with('/') {
        pushed.to_string()
    } else {
        format!("{}/{pushed}", current.trim_end_matches('/'))
    }
}
