//! The sweep file (YAML; every map refuses unknown keys).
//!
//! ```yaml
//! name: demo_surge                  # optional label (default: the file stem)
//! base_params: ../sillage.yaml      # ROS 2 parameter file the points start from (optional)
//! namespace: ""                     # node namespace (default: root)
//! design: {kind: grid}              # grid | random | lhs, with samples and seed for the last two
//! parameters:                       # dotted keys: node name, then the node's parameter
//!   - {key: arbiter.surge.speed, min: 0.15, max: 0.35, steps: 3}
//!   - {key: event_encoder.encoding.delta, values: [0.03, 0.05, 0.08]}
//! evaluate:
//!   scenarios: [../scenarios/demo.yaml]
//!   seeds: 4                        # episodes per scenario and point
//!   base_seed: 1                    # world seeds base_seed, base_seed + 1, ...
//!   time_limit: 90.0                # episode length override [s]
//! objective:                        # score = sum of weight * statistic (higher is better)
//!   - {metric: success, stat: rate, weight: 1.0}
//!   - {metric: time, stat: median, weight: -0.002}
//! ```
//!
//! `evaluate` may also (or instead) list recorded bags with a truth topic ([`crate::bags`]):
//! each bag is one case, replayed once through the sensing nodes and scored by bag metrics
//! (bearing and distance error). A sweep may mix scenarios and bags: scenario metrics are taken
//! over the scenario cases, bag metrics over the bag cases, and the score adds the terms.
//!
//! Validation (each error names the key): every parameter key must be one of the node's own
//! parameters (the flattened defaults of [`NodeKind::default_params`]); ranges need
//! `min <= max` (and `min > 0` on a log scale), lists at least one value of the parameter's
//! type; `steps` is for grids, `samples` for random and Latin-hypercube designs; objective
//! metrics must be ones the evaluator reports for what the sweep evaluates on (a bag metric
//! needs bags, a scenario metric scenarios), with a known statistic and a non-zero weight; a
//! sweep over bags only cannot vary arbiter parameters (the arbiter is not replayed).

use crate::bags::{BagEntry, BagTruth};
use crate::design::ParamValue;
use crate::error::TuneError;
use serde::{Deserialize, Serialize};
use serde_yaml::Value;
use sillage_core::params::flatten;
use sillage_stack::NodeKind;
use std::path::{Path, PathBuf};

/// How the points of a sweep are chosen.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum DesignKind {
    /// Every combination of the parameters' values (ranges need `steps`).
    Grid,
    /// `samples` independent uniform draws (seeded).
    Random,
    /// Latin hypercube of `samples` points (seeded): each parameter's range is cut into
    /// `samples` strata and each stratum is used once.
    Lhs,
}

/// The design section.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Design {
    /// Design kind.
    pub kind: DesignKind,
    /// Number of points (random and lhs).
    #[serde(default)]
    pub samples: Option<usize>,
    /// Seed of the draws (random and lhs; default 0).
    #[serde(default)]
    pub seed: u64,
}

/// Spacing of a range.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum Scale {
    /// Evenly spaced values.
    #[default]
    Linear,
    /// Evenly spaced logarithms (min > 0).
    Log,
}

/// One parameter to vary: a range (`min`, `max`, and `steps` for a grid) or a list.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ParamSpec {
    /// `node.param.path`, e.g. `arbiter.surge.speed`.
    pub key: String,
    /// Lower end of the range.
    #[serde(default)]
    pub min: Option<f64>,
    /// Upper end of the range.
    #[serde(default)]
    pub max: Option<f64>,
    /// Grid values over the range, ends included.
    #[serde(default)]
    pub steps: Option<usize>,
    /// Spacing of the range.
    #[serde(default)]
    pub scale: Scale,
    /// Explicit values (instead of a range).
    #[serde(default)]
    pub values: Option<Vec<Value>>,
}

/// What the points are evaluated on.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Evaluate {
    /// Scenario files (relative to the sweep file).
    #[serde(default)]
    pub scenarios: Vec<PathBuf>,
    /// Bags with a truth topic (relative to the sweep file); each is one case.
    #[serde(default)]
    pub bags: Vec<BagEntry>,
    /// Seeds (episodes) per scenario and point (scenarios only; bags are replayed once).
    #[serde(default)]
    pub seeds: usize,
    /// First world seed.
    #[serde(default)]
    pub base_seed: u64,
    /// Episode length override [s].
    #[serde(default)]
    pub time_limit: Option<f64>,
    /// The truth the bags are scored against.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub truth: Option<BagTruth>,
    /// Topic remaps `from:=to` for every node when replaying bags.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub remaps: Vec<String>,
}

/// The metric names an evaluation reports, by what it runs on.
#[derive(Debug, Clone, Copy)]
pub struct MetricNames<'a> {
    /// Metrics of a scenario episode.
    pub scenarios: &'a [&'a str],
    /// Metrics of a bag replay.
    pub bags: &'a [&'a str],
}

/// The statistic a term takes over a point's cases.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Stat {
    /// Fraction of cases where the metric is > 0.5 (a 0/1 metric); Wilson 95 % interval.
    Rate,
    /// Median of the finite values; bootstrap 95 % percentile interval.
    Median,
    /// Mean of the finite values; bootstrap 95 % percentile interval.
    Mean,
}

/// One term of the objective.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Term {
    /// Metric name (as the evaluator reports it).
    pub metric: String,
    /// Statistic over the cases.
    pub stat: Stat,
    /// Weight: positive rewards, negative penalises.
    pub weight: f64,
    /// Statistic used when no case has a finite value (default: the point scores NaN and
    /// ranks last).
    #[serde(default)]
    pub missing: Option<f64>,
}

/// A sweep file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Sweep {
    /// Label (default: the file stem).
    #[serde(default)]
    pub name: Option<String>,
    /// Base parameter file (relative to the sweep file).
    #[serde(default)]
    pub base_params: Option<PathBuf>,
    /// Node namespace.
    #[serde(default)]
    pub namespace: String,
    /// The design.
    pub design: Design,
    /// Parameters to vary.
    pub parameters: Vec<ParamSpec>,
    /// What to evaluate on.
    pub evaluate: Evaluate,
    /// The objective terms.
    pub objective: Vec<Term>,
}

/// The type of a node parameter, from its default value.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ParamType {
    /// f64.
    Float,
    /// Integer.
    Int,
    /// bool.
    Bool,
    /// string.
    Text,
}

/// Every tunable parameter of the stack: `node.param` with its type (lists and maps are not
/// swept).
pub fn known_parameters() -> Vec<(String, ParamType)> {
    let mut out = Vec::new();
    for kind in NodeKind::ALL {
        for (k, v) in flatten(&kind.default_params()) {
            let t = match &v {
                Value::Number(n) if n.is_f64() => ParamType::Float,
                Value::Number(_) => ParamType::Int,
                Value::Bool(_) => ParamType::Bool,
                Value::String(_) => ParamType::Text,
                _ => continue,
            };
            out.push((format!("{}.{k}", kind.name()), t));
        }
    }
    out
}

/// A validated sweep with its paths resolved and its base parameter text read.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LoadedSweep {
    /// The sweep (paths absolute or relative to the working directory).
    pub sweep: Sweep,
    /// Label.
    pub name: String,
    /// Where it came from (for messages).
    pub file: String,
    /// Text of the base parameter file.
    pub base_text: Option<String>,
    /// Parameter types, in `sweep.parameters` order.
    pub types: Vec<ParamTypeName>,
    /// FNV-1a digest of each scenario file's bytes, then of the truth scenario's (empty when
    /// not read from files).
    #[serde(default)]
    pub scenario_digests: Vec<String>,
    /// [`crate::bags::bag_digest`] of each bag ([`LoadedSweep::digest_bags`]; empty before).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub bag_digests: Vec<String>,
}

/// [`ParamType`] in serialisable form.
pub type ParamTypeName = String;

fn type_name(t: ParamType) -> &'static str {
    match t {
        ParamType::Float => "float",
        ParamType::Int => "int",
        ParamType::Bool => "bool",
        ParamType::Text => "string",
    }
}

/// The [`ParamType`] of a name written by [`LoadedSweep`].
pub fn parse_type(name: &str) -> ParamType {
    match name {
        "int" => ParamType::Int,
        "bool" => ParamType::Bool,
        "string" => ParamType::Text,
        _ => ParamType::Float,
    }
}

impl LoadedSweep {
    /// Reads and validates a sweep file; `metrics` are the metric names the evaluator reports.
    /// Scenario and base parameter files are read; bags are not (see [`Self::digest_bags`]).
    pub fn load(path: &Path, metrics: MetricNames) -> Result<LoadedSweep, TuneError> {
        let text = std::fs::read_to_string(path).map_err(|e| TuneError::io(path, e))?;
        let dir = path.parent().unwrap_or(Path::new("."));
        let mut sweep = parse(&text, &path.display().to_string())?;
        let join = |p: &PathBuf| if p.is_absolute() { p.clone() } else { dir.join(p) };
        sweep.base_params = sweep.base_params.as_ref().map(join);
        sweep.evaluate.scenarios = sweep.evaluate.scenarios.iter().map(join).collect();
        for b in &mut sweep.evaluate.bags {
            b.path = join(&b.path);
        }
        if let Some(t) = &mut sweep.evaluate.truth {
            t.scenario = t.scenario.as_ref().map(join);
        }
        let base_text = match &sweep.base_params {
            Some(p) => Some(std::fs::read_to_string(p).map_err(|e| TuneError::io(p, e))?),
            None => None,
        };
        let stem = path.file_stem().and_then(|s| s.to_str()).unwrap_or("sweep").to_string();
        let mut digests = Vec::new();
        let truth_scenario = sweep.evaluate.truth.as_ref().and_then(|t| t.scenario.as_ref());
        for p in sweep.evaluate.scenarios.iter().chain(truth_scenario) {
            let bytes = std::fs::read(p).map_err(|e| TuneError::io(p, e))?;
            digests.push(format!("{:016x}", fnv1a(&bytes)));
        }
        let mut loaded = LoadedSweep::from_parts(sweep, path.display().to_string(), stem, base_text, metrics)?;
        loaded.scenario_digests = digests;
        Ok(loaded)
    }

    /// Validates an already parsed sweep (paths as given).
    pub fn from_parts(sweep: Sweep, file: String, stem: String, base_text: Option<String>, metrics: MetricNames) -> Result<LoadedSweep, TuneError> {
        let types = validate(&sweep, &file, metrics)?;
        let name = sweep.name.clone().unwrap_or(stem);
        let types = types.into_iter().map(|t| type_name(t).to_string()).collect();
        Ok(LoadedSweep { sweep, name, file, base_text, types, scenario_digests: Vec::new(), bag_digests: Vec::new() })
    }

    /// Reads a digest of every bag (so a changed bag is another sweep); a missing or
    /// unreadable bag is an error naming it. Called before a run, not by `sillage check`.
    pub fn digest_bags(&mut self) -> Result<(), TuneError> {
        self.bag_digests = self.sweep.evaluate.bags.iter().map(|b| crate::bags::bag_digest(&b.path)).collect::<Result<_, _>>()?;
        Ok(())
    }

    /// A stable fingerprint of everything that decides the results (16 hex digits): the
    /// sweep, the base parameter text, the scenario files' contents and the bags' digests, not
    /// where the files are (shards may run on machines with other paths).
    pub fn fingerprint(&self) -> String {
        let mut s = self.sweep.clone();
        s.name = None;
        s.base_params = None;
        let name = |p: &mut PathBuf| *p = p.file_name().map(PathBuf::from).unwrap_or_default();
        s.evaluate.scenarios.iter_mut().for_each(name);
        s.evaluate.bags.iter_mut().for_each(|b| name(&mut b.path));
        if let Some(t) = s.evaluate.truth.as_mut().and_then(|t| t.scenario.as_mut()) {
            name(t);
        }
        // Sweeps without bags keep the fingerprint they had before bags existed.
        let canon = if self.bag_digests.is_empty() {
            serde_json::to_string(&(&s, &self.base_text, &self.scenario_digests))
        } else {
            serde_json::to_string(&(&s, &self.base_text, &self.scenario_digests, &self.bag_digests))
        };
        format!("{:016x}", fnv1a(canon.unwrap_or_default().as_bytes()))
    }
}

/// FNV-1a 64-bit hash (common practice; stable across platforms and runs).
pub fn fnv1a(bytes: &[u8]) -> u64 {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for b in bytes {
        h ^= u64::from(*b);
        h = h.wrapping_mul(0x0000_0100_0000_01b3);
    }
    h
}

/// Parses sweep-file text; schema errors name the key path.
pub fn parse(text: &str, file: &str) -> Result<Sweep, TuneError> {
    let de = serde_yaml::Deserializer::from_str(text);
    serde_path_to_error::deserialize(de).map_err(|e| {
        let key = e.path().to_string();
        // serde_yaml names the key too (without list indices): say it once.
        let reason = e.inner().to_string();
        let mut bare = key.clone();
        while let (Some(a), Some(b)) = (bare.find('['), bare.find(']')) {
            if b < a {
                break;
            }
            bare.replace_range(a..=b, "");
        }
        let reason = reason.strip_prefix(&format!("{bare}: ")).map(str::to_string).unwrap_or(reason);
        TuneError::Schema { file: file.to_string(), key, reason }
    })
}

fn validate(s: &Sweep, file: &str, metrics: MetricNames) -> Result<Vec<ParamType>, TuneError> {
    let schema = |key: &str, reason: String| TuneError::Schema { file: file.to_string(), key: key.to_string(), reason };
    let known = known_parameters();
    match s.design.kind {
        DesignKind::Grid if s.design.samples.is_some() => {
            return Err(schema("design.samples", "is for random and lhs designs; a grid takes every combination".into()))
        }
        DesignKind::Random | DesignKind::Lhs if s.design.samples.unwrap_or(0) == 0 => {
            return Err(schema("design.samples", "random and lhs designs need samples >= 1".into()))
        }
        _ => {}
    }
    if s.parameters.is_empty() {
        return Err(schema("parameters", "no parameter to vary".into()));
    }
    let mut types = Vec::new();
    for (i, p) in s.parameters.iter().enumerate() {
        if s.parameters[..i].iter().any(|q| q.key == p.key) {
            return Err(param_err(file, &p.key, "listed twice".into()));
        }
        let Some((_, t)) = known.iter().find(|(k, _)| *k == p.key) else {
            let node = p.key.split('.').next().unwrap_or("");
            let reason = if NodeKind::from_name(node).is_err() {
                format!("unknown node '{node}' (known: event_encoder, bearing_decoder, plume_estimator, arbiter)")
            } else {
                format!("not a parameter of node '{node}' (lists and maps cannot be swept)")
            };
            return Err(param_err(file, &p.key, reason));
        };
        validate_param(p, *t, s.design.kind, file)?;
        types.push(*t);
    }
    let ev = &s.evaluate;
    if ev.scenarios.is_empty() && ev.bags.is_empty() {
        return Err(schema("evaluate.scenarios", "no scenario and no bag (evaluate.bags) to evaluate on".into()));
    }
    if ev.scenarios.is_empty() {
        if ev.seeds != 0 || ev.time_limit.is_some() {
            let key = if ev.seeds != 0 { "evaluate.seeds" } else { "evaluate.time_limit" };
            return Err(schema(key, "is for scenarios; each bag is replayed once".into()));
        }
        if let Some(p) = s.parameters.iter().find(|p| p.key.starts_with("arbiter.")) {
            return Err(param_err(file, &p.key, "the arbiter is not replayed on bags: it cannot change a bag metric".into()));
        }
    } else if ev.seeds == 0 {
        return Err(schema("evaluate.seeds", "must be >= 1".into()));
    }
    if let Some(t) = ev.time_limit {
        if !(t.is_finite() && t > 0.0) {
            return Err(schema("evaluate.time_limit", format!("must be > 0 [s], got {t}")));
        }
    }
    crate::bags::validate(ev, file)?;
    if s.objective.is_empty() {
        return Err(schema("objective", "no objective term".into()));
    }
    for (index, t) in s.objective.iter().enumerate() {
        let bad = |reason: String| TuneError::Objective { file: file.to_string(), index, metric: t.metric.clone(), reason };
        let m = t.metric.as_str();
        if metrics.scenarios.contains(&m) {
            if ev.scenarios.is_empty() {
                return Err(bad("a scenario metric, and the sweep evaluates no scenario (evaluate.scenarios)".into()));
            }
        } else if metrics.bags.contains(&m) {
            if ev.bags.is_empty() {
                return Err(bad("a bag metric, and the sweep evaluates no bag (evaluate.bags)".into()));
            }
        } else {
            return Err(bad(format!("unknown metric; scenario metrics: {}; bag metrics: {}", metrics.scenarios.join(", "), metrics.bags.join(", "))));
        }
        if !(t.weight.is_finite() && t.weight != 0.0) {
            return Err(bad(format!("weight must be finite and non-zero, got {}", t.weight)));
        }
        if t.missing.is_some_and(|m| !m.is_finite()) {
            return Err(bad("missing must be finite".into()));
        }
    }
    Ok(types)
}

fn param_err(file: &str, key: &str, reason: String) -> TuneError {
    TuneError::Parameter { file: file.to_string(), key: key.to_string(), reason }
}

fn validate_param(p: &ParamSpec, t: ParamType, design: DesignKind, file: &str) -> Result<(), TuneError> {
    let err = |reason: String| param_err(file, &p.key, reason);
    match (&p.values, p.min, p.max) {
        (Some(_), Some(_), _) | (Some(_), _, Some(_)) => Err(err("give either values or min/max, not both".into())),
        (Some(v), None, None) => {
            if v.is_empty() {
                return Err(err("empty list of values".into()));
            }
            if p.steps.is_some() {
                return Err(err("steps is for ranges".into()));
            }
            for x in v {
                ParamValue::from_yaml(x, t).ok_or_else(|| err(format!("value {} is not a {}", show(x), type_name(t))))?;
            }
            Ok(())
        }
        (None, Some(lo), Some(hi)) => {
            if !matches!(t, ParamType::Float | ParamType::Int) {
                return Err(err(format!("a {} parameter takes a list of values, not a range", type_name(t))));
            }
            if !(lo.is_finite() && hi.is_finite()) || lo > hi {
                return Err(err(format!("empty range: min {lo} > max {hi}")));
            }
            if p.scale == Scale::Log && lo <= 0.0 {
                return Err(err(format!("log scale needs min > 0, got {lo}")));
            }
            if t == ParamType::Int && lo.ceil() > hi.floor() {
                return Err(err(format!("empty range: no integer in [{lo}, {hi}]")));
            }
            match (design, p.steps) {
                (DesignKind::Grid, None) => Err(err("a grid range needs steps".into())),
                (DesignKind::Grid, Some(0)) => Err(err("empty range: steps = 0".into())),
                (DesignKind::Grid, Some(n)) if n > 1 && lo == hi => Err(err(format!("empty range: min = max = {lo} with {n} steps"))),
                (DesignKind::Random | DesignKind::Lhs, Some(_)) => Err(err("steps is for grid designs (random and lhs sample the range)".into())),
                _ => Ok(()),
            }
        }
        _ => Err(err("needs values, or both min and max".into())),
    }
}

fn show(v: &Value) -> String {
    serde_yaml::to_string(v).unwrap_or_default().trim().to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    const METRICS: MetricNames = MetricNames { scenarios: &["success", "time", "path_ratio"], bags: &["bearing_error", "distance_error"] };

    fn load(text: &str) -> Result<LoadedSweep, TuneError> {
        let s = parse(text, "s.yaml")?;
        LoadedSweep::from_parts(s, "s.yaml".into(), "s".into(), None, METRICS)
    }

    const GOOD: &str = "design: {kind: grid}\nparameters:\n  - {key: arbiter.surge.speed, min: 0.1, max: 0.3, steps: 3}\n  - {key: event_encoder.encoding.delta, values: [0.03, 0.05]}\nevaluate: {scenarios: [demo.yaml], seeds: 2}\nobjective:\n  - {metric: success, stat: rate, weight: 1.0}\n";

    fn err_of(text: &str) -> String {
        load(text).err().map(|e| e.to_string()).unwrap_or_else(|| "accepted".into())
    }

    #[test]
    fn a_good_sweep_loads_and_every_known_key_is_a_node_parameter() {
        let s = load(GOOD).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(s.types, vec!["float", "float"]);
        let known = known_parameters();
        assert!(known.iter().any(|(k, t)| k == "event_encoder.encoding.delta" && *t == ParamType::Float));
        assert!(known.iter().any(|(k, t)| k == "event_encoder.encoding.mode" && *t == ParamType::Text));
        assert_eq!(s.fingerprint(), load(GOOD).unwrap_or_else(|e| panic!("{e}")).fingerprint());
    }

    #[test]
    fn bad_sweeps_are_refused_naming_the_key() {
        let cases = [
            (GOOD.replace("arbiter.surge.speed", "arbiter.surge.sped"), "arbiter.surge.sped"),
            (GOOD.replace("arbiter.surge.speed", "mapper.speed"), "unknown node 'mapper'"),
            (GOOD.replace("min: 0.1, max: 0.3", "min: 0.3, max: 0.1"), "empty range"),
            (GOOD.replace("values: [0.03, 0.05]", "values: []"), "event_encoder.encoding.delta': empty list"),
            (GOOD.replace("values: [0.03, 0.05]", "values: [fast]"), "is not a float"),
            (GOOD.replace("steps: 3", "steps: 0"), "steps = 0"),
            (GOOD.replace("metric: success", "metric: sucess"), "objective[0] 'sucess': unknown metric"),
            (GOOD.replace("metric: success", "metric: bearing_error"), "objective[0] 'bearing_error': a bag metric, and the sweep evaluates no bag"),
            (GOOD.replace("weight: 1.0", "weight: 0.0"), "non-zero"),
            (GOOD.replace("stat: rate", "stat: mode"), "objective[0].stat"),
            (GOOD.replace("seeds: 2", "seeds: 2, bags: [b]"), "evaluate.truth: bags need a truth topic"),
            (GOOD.replace("seeds: 2", "seeds: 2, seed: 3"), "unknown field `seed`"),
            (GOOD.replace("kind: grid", "kind: lhs"), "design.samples"),
        ];
        for (text, want) in cases {
            let m = err_of(&text);
            assert!(m.contains(want), "want '{want}', got: {m}");
        }
    }

    const BAGS: &str = "design: {kind: grid}\nparameters:\n  - {key: bearing_decoder.wind.air_speed, values: [0.25, 0.5]}\nevaluate:\n  bags: [a/run1, {path: run2.mcap, start: 5.0, duration: 60.0}]\n  truth: {topic: /odom, source: [3.0, 6.0]}\nobjective:\n  - {metric: bearing_error, stat: mean, weight: -1.0}\n";

    #[test]
    fn a_bag_sweep_loads_and_mixing_with_scenarios_is_allowed() {
        let s = load(BAGS).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(s.sweep.evaluate.bags[1].duration, Some(60.0));
        assert_eq!(s.sweep.evaluate.truth.as_ref().map(|t| (t.max_gap, t.warmup, t.max_age)), Some((1.0, 0.0, 1.0)));
        let mixed = BAGS.replace("evaluate:\n", "evaluate:\n  scenarios: [demo.yaml]\n  seeds: 2\n") + "  - {metric: success, stat: rate, weight: 1.0}\n";
        load(&mixed).unwrap_or_else(|e| panic!("mixed: {e}"));
        // A digest of the bags changes the fingerprint; without bags it is as before.
        let mut d = s.clone();
        d.bag_digests = vec!["0".into(), "1".into()];
        assert_ne!(d.fingerprint(), s.fingerprint());
    }

    #[test]
    fn bad_bag_sweeps_are_refused_naming_the_key() {
        let cases = [
            (BAGS.replace("  truth: {topic: /odom, source: [3.0, 6.0]}\n", ""), "evaluate.truth: bags need a truth topic"),
            (BAGS.replace("topic: /odom", "topic: ''"), "evaluate.truth.topic: empty topic name"),
            (BAGS.replace("topic: /odom", "topc: /odom"), "evaluate.truth: unknown field `topc`"),
            (BAGS.replace("source: [3.0, 6.0]", "source: [3.0]"), "evaluate.truth.source: expected [x, y] or [x, y, z]"),
            (BAGS.replace("source: [3.0, 6.0]", "source: [3.0, 6.0], scenario: s.yaml"), "evaluate.truth.scenario: give either"),
            (BAGS.replace("source: [3.0, 6.0]", "source: [3.0, 6.0], max_gap: 0.0"), "evaluate.truth.max_gap: must be > 0"),
            (BAGS.replace("source: [3.0, 6.0]", "source: [3.0, 6.0], warmup: -1.0"), "evaluate.truth.warmup: must be >= 0"),
            (BAGS.replace("start: 5.0", "strat: 5.0"), "s.yaml: evaluate.bags[1]: unknown field `strat`"),
            (BAGS.replace("start: 5.0", "start: -5.0"), "evaluate.bags[1].start: must be >= 0"),
            (BAGS.replace("duration: 60.0", "duration: 0.0"), "evaluate.bags[1].duration: must be > 0"),
            (BAGS.replace("bags: [a/run1, ", "bags: [7, "), "evaluate.bags[0]: expected a bag path"),
            (BAGS.replace("evaluate:\n", "evaluate:\n  seeds: 3\n"), "evaluate.seeds: is for scenarios"),
            (BAGS.replace("evaluate:\n", "evaluate:\n  remaps: [chem]\n"), "evaluate.remaps[0]: 'chem' is not of the form from:=to"),
            (BAGS.replace("metric: bearing_error", "metric: success"), "objective[0] 'success': a scenario metric, and the sweep evaluates no scenario"),
            (BAGS.replace("metric: bearing_error", "metric: bearing_eror"), "unknown metric; scenario metrics: success, time, path_ratio; bag metrics: bearing_error"),
            (BAGS.replace("bearing_decoder.wind.air_speed", "arbiter.surge.speed"), "parameter 'arbiter.surge.speed': the arbiter is not replayed"),
            (BAGS.replace("  bags: [a/run1, {path: run2.mcap, start: 5.0, duration: 60.0}]\n", ""), "evaluate.scenarios: no scenario and no bag"),
        ];
        for (text, want) in cases {
            let m = err_of(&text);
            assert!(m.contains(want), "want '{want}', got: {m}");
        }
    }
}
