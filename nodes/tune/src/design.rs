//! The points of a sweep: every combination (grid), independent uniform draws (random), or a
//! Latin hypercube (McKay, Beckman and Conover, Technometrics 21(2):239-245, 1979: each of the
//! `n` equal strata of every parameter is used by exactly one point, strata paired at random).
//!
//! Draws come from ChaCha8 seeded with `design.seed`, so a sweep file always yields the same
//! points in the same order. A point's id is a hash of its assignment, so results stay
//! attached to the right point whatever the order of evaluation.

use crate::sweep::{fnv1a, parse_type, DesignKind, LoadedSweep, ParamSpec, ParamType, Scale};
use rand::seq::SliceRandom;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use serde::{Deserialize, Serialize};
use serde_yaml::Value;

/// A parameter value of a point.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(untagged)]
pub enum ParamValue {
    /// A boolean.
    Bool(bool),
    /// An integer.
    Int(i64),
    /// A float.
    Float(f64),
    /// A string.
    Text(String),
}

impl ParamValue {
    /// `v` as a value of type `t` (integers are accepted for floats); `None` if it is not one.
    pub fn from_yaml(v: &Value, t: ParamType) -> Option<ParamValue> {
        match (t, v) {
            (ParamType::Float, Value::Number(n)) => n.as_f64().filter(|x| x.is_finite()).map(ParamValue::Float),
            (ParamType::Int, Value::Number(n)) => n.as_i64().map(ParamValue::Int),
            (ParamType::Bool, Value::Bool(b)) => Some(ParamValue::Bool(*b)),
            (ParamType::Text, Value::String(s)) => Some(ParamValue::Text(s.clone())),
            _ => None,
        }
    }

    /// As a YAML value (floats stay floats, so ROS reads them as doubles).
    pub fn to_yaml(&self) -> Value {
        match self {
            ParamValue::Bool(b) => Value::from(*b),
            ParamValue::Int(i) => Value::from(*i),
            ParamValue::Float(x) => Value::from(*x),
            ParamValue::Text(s) => Value::from(s.as_str()),
        }
    }

    /// As a number for plots (`None` for strings; booleans are 0 and 1).
    pub fn as_f64(&self) -> Option<f64> {
        match self {
            ParamValue::Bool(b) => Some(f64::from(u8::from(*b))),
            ParamValue::Int(i) => Some(*i as f64),
            ParamValue::Float(x) => Some(*x),
            ParamValue::Text(_) => None,
        }
    }

    /// Short text (`0.25`, `true`, `cast_surge`).
    pub fn label(&self) -> String {
        match self {
            ParamValue::Bool(b) => b.to_string(),
            ParamValue::Int(i) => i.to_string(),
            ParamValue::Float(x) => format!("{x:?}"),
            ParamValue::Text(s) => s.clone(),
        }
    }
}

/// One point of a sweep: a value for every swept parameter.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Point {
    /// Position in the design (0-based).
    pub index: usize,
    /// Hash of the assignment (16 hex digits).
    pub id: String,
    /// (dotted key, value), in the sweep file's parameter order.
    pub values: Vec<(String, ParamValue)>,
}

impl Point {
    /// A point from its assignment.
    pub fn new(index: usize, values: Vec<(String, ParamValue)>) -> Point {
        let canon = serde_json::to_string(&values).unwrap_or_default();
        Point { index, id: format!("{:016x}", fnv1a(canon.as_bytes())), values }
    }

    /// The value of `key`.
    pub fn get(&self, key: &str) -> Option<&ParamValue> {
        self.values.iter().find(|(k, _)| k == key).map(|(_, v)| v)
    }
}

/// Round to an integer parameter's value.
fn typed(x: f64, t: ParamType) -> ParamValue {
    match t {
        ParamType::Int => ParamValue::Int(x.round() as i64),
        _ => ParamValue::Float(x),
    }
}

/// The position `u` in [0, 1] of a range.
fn along(p: &ParamSpec, lo: f64, hi: f64, u: f64) -> f64 {
    match p.scale {
        Scale::Linear => lo + u * (hi - lo),
        Scale::Log => (lo.ln() + u * (hi.ln() - lo.ln())).exp(),
    }
}

/// The grid values of one parameter.
fn grid_values(p: &ParamSpec, t: ParamType) -> Vec<ParamValue> {
    if let Some(v) = &p.values {
        return v.iter().filter_map(|x| ParamValue::from_yaml(x, t)).collect();
    }
    let (lo, hi) = (p.min.unwrap_or(0.0), p.max.unwrap_or(0.0));
    let n = p.steps.unwrap_or(1).max(1);
    let mut out: Vec<ParamValue> = Vec::new();
    for i in 0..n {
        let u = if n == 1 { 0.5 } else { i as f64 / (n - 1) as f64 };
        let v = typed(along(p, lo, hi, u), t);
        if !out.contains(&v) {
            out.push(v); // integer ranges with more steps than integers
        }
    }
    out
}

/// The value of one parameter at position `u` in [0, 1) (lists: the list cell of `u`).
fn sample(p: &ParamSpec, t: ParamType, u: f64) -> ParamValue {
    if let Some(v) = &p.values {
        let vals: Vec<ParamValue> = v.iter().filter_map(|x| ParamValue::from_yaml(x, t)).collect();
        let i = ((u * vals.len() as f64) as usize).min(vals.len().saturating_sub(1));
        return vals.get(i).cloned().unwrap_or(ParamValue::Float(f64::NAN));
    }
    let (lo, hi) = (p.min.unwrap_or(0.0), p.max.unwrap_or(0.0));
    match t {
        // Integers: uniform over the integers of [lo, hi].
        ParamType::Int => {
            let (a, b) = (lo.ceil(), hi.floor());
            ParamValue::Int((a + (u * (b - a + 1.0)).floor().min(b - a)) as i64)
        }
        _ => ParamValue::Float(along(p, lo, hi, u)),
    }
}

/// The points of a validated sweep, in design order.
pub fn points(s: &LoadedSweep) -> Vec<Point> {
    let specs = &s.sweep.parameters;
    let types: Vec<ParamType> = s.types.iter().map(|t| parse_type(t)).collect();
    let keys: Vec<String> = specs.iter().map(|p| p.key.clone()).collect();
    let rows: Vec<Vec<ParamValue>> = match s.sweep.design.kind {
        DesignKind::Grid => {
            let axes: Vec<Vec<ParamValue>> = specs.iter().zip(&types).map(|(p, t)| grid_values(p, *t)).collect();
            let mut rows = vec![Vec::new()];
            for axis in &axes {
                rows = rows.into_iter().flat_map(|r| axis.iter().map(move |v| [r.clone(), vec![v.clone()]].concat())).collect();
            }
            rows
        }
        DesignKind::Random => {
            let mut rng = ChaCha8Rng::seed_from_u64(s.sweep.design.seed);
            let n = s.sweep.design.samples.unwrap_or(0);
            (0..n).map(|_| specs.iter().zip(&types).map(|(p, t)| sample(p, *t, rng.random::<f64>())).collect()).collect()
        }
        DesignKind::Lhs => {
            let mut rng = ChaCha8Rng::seed_from_u64(s.sweep.design.seed);
            let n = s.sweep.design.samples.unwrap_or(0);
            let columns: Vec<Vec<ParamValue>> = specs
                .iter()
                .zip(&types)
                .map(|(p, t)| {
                    let mut strata: Vec<usize> = (0..n).collect();
                    strata.shuffle(&mut rng);
                    strata.into_iter().map(|k| sample(p, *t, (k as f64 + rng.random::<f64>()) / n as f64)).collect()
                })
                .collect();
            (0..n).map(|i| columns.iter().map(|c| c[i].clone()).collect()).collect()
        }
    };
    rows.into_iter().enumerate().map(|(i, r)| Point::new(i, keys.iter().cloned().zip(r).collect())).collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sweep::parse;

    fn sweep(design: &str, params: &str) -> LoadedSweep {
        let text = format!("design: {design}\nparameters:\n{params}\nevaluate: {{scenarios: [d.yaml], seeds: 1}}\nobjective: [{{metric: m, stat: mean, weight: 1.0}}]\n");
        let s = parse(&text, "t.yaml").unwrap_or_else(|e| panic!("{e}"));
        LoadedSweep::from_parts(s, "t.yaml".into(), "t".into(), None, crate::MetricNames { scenarios: &["m"], bags: &[] }).unwrap_or_else(|e| panic!("{e}"))
    }

    #[test]
    fn grid_is_the_cartesian_product_with_ends_included() {
        let s = sweep("{kind: grid}", "  - {key: arbiter.surge.speed, min: 0.1, max: 0.3, steps: 3}\n  - {key: arbiter.strategy, values: [cast_surge, spiral]}\n  - {key: arbiter.cast.max_legs, min: 2, max: 3, steps: 5}");
        let p = points(&s);
        assert_eq!(p.len(), 3 * 2 * 2);
        assert_eq!(p[0].get("arbiter.surge.speed"), Some(&ParamValue::Float(0.1)));
        assert_eq!(p[11].get("arbiter.surge.speed"), Some(&ParamValue::Float(0.3)));
        assert_eq!(p[1].get("arbiter.cast.max_legs"), Some(&ParamValue::Int(3)));
        let mut ids: Vec<&str> = p.iter().map(|q| q.id.as_str()).collect();
        ids.sort();
        ids.dedup();
        assert_eq!(ids.len(), p.len(), "ids are unique");
    }

    #[test]
    fn log_grid_spaces_logarithms_evenly() {
        let s = sweep("{kind: grid}", "  - {key: event_encoder.encoding.delta, min: 0.01, max: 1.0, steps: 3, scale: log}");
        let v: Vec<f64> = points(&s).iter().filter_map(|p| p.values[0].1.as_f64()).collect();
        assert!((v[0] - 0.01).abs() < 1e-12 && (v[1] - 0.1).abs() < 1e-12 && (v[2] - 1.0).abs() < 1e-12, "{v:?}");
    }

    #[test]
    fn latin_hypercube_uses_every_stratum_once_and_is_seeded() {
        let params = "  - {key: arbiter.surge.speed, min: 0.0, max: 1.0}\n  - {key: arbiter.cast.speed, min: 0.0, max: 2.0}";
        let s = sweep("{kind: lhs, samples: 10, seed: 4}", params);
        let p = points(&s);
        for (col, width) in [(0usize, 0.1), (1, 0.2)] {
            let mut strata: Vec<usize> = p.iter().filter_map(|q| q.values[col].1.as_f64()).map(|x| (x / width) as usize).collect();
            strata.sort();
            assert_eq!(strata, (0..10).collect::<Vec<_>>(), "column {col}");
        }
        assert_eq!(p, points(&s), "same seed, same points");
        assert_ne!(p, points(&sweep("{kind: lhs, samples: 10, seed: 5}", params)));
        let r = points(&sweep("{kind: random, samples: 50, seed: 1}", params));
        assert_eq!(r.len(), 50);
        assert!(r.iter().all(|q| q.values[1].1.as_f64().is_some_and(|x| (0.0..=2.0).contains(&x))));
    }
}
