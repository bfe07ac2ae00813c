//! The bag part of a sweep file: recorded bags replayed through the sensing nodes, scored
//! against a truth topic (see docs/tuning.md, "Bag objectives").
//!
//! ```yaml
//! evaluate:
//!   bags:
//!     - ../../out/sim-demo/bag                 # a whole bag (folder, .mcap or .db3)
//!     - {path: run2.mcap, name: run2, start: 30.0, duration: 120.0, source: [1.0, 2.0]}
//!   truth:
//!     topic: /odom              # nav_msgs/Odometry (with a source) or geometry_msgs/PointStamped
//!     source: [3.0, 6.0]        # source x, y[, z] in the odometry frame [m]
//!     scenario: ../scenarios/demo.yaml   # or: the scenario a simulated bag was recorded in
//!     max_gap: 1.0              # [s] largest gap between truth samples to interpolate across
//!     warmup: 0.0               # [s] not scored at the start of each bag (or window)
//!     max_age: 1.0              # [s] an estimate stands for this long after it is published
//!   remaps: ["chem:=/robot/mox"]        # topic remaps for every node
//! ```
//!
//! This module holds the types and their checks; nothing here opens a bag except
//! [`bag_digest`], which the run calls (so `sillage check` accepts a sweep whose bags are not
//! made yet).

use crate::error::TuneError;
use crate::sweep::{fnv1a, Evaluate};
use serde::de::Error as _;
use serde::{Deserialize, Deserializer, Serialize};
use serde_yaml::Value;
use std::io::{Read, Seek, SeekFrom};
use std::path::{Path, PathBuf};

/// One bag to evaluate on: a path, or a map with the path and optional window and source.
#[derive(Debug, Clone, PartialEq, Serialize, Default)]
pub struct BagEntry {
    /// The bag (rosbag2 folder, `.mcap` or `.db3` file), relative to the sweep file.
    pub path: PathBuf,
    /// Label of its case in the results (default: the file stem).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub name: Option<String>,
    /// Start of the window [s after the bag's first message] (default: the start).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub start: Option<f64>,
    /// Length of the window [s] (default: to the end).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub duration: Option<f64>,
    /// Source position for this bag (overrides `evaluate.truth.source`) [m].
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub source: Option<Vec<f64>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct BagMap {
    path: PathBuf,
    #[serde(default)]
    name: Option<String>,
    #[serde(default)]
    start: Option<f64>,
    #[serde(default)]
    duration: Option<f64>,
    #[serde(default)]
    source: Option<Vec<f64>>,
}

impl<'de> Deserialize<'de> for BagEntry {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        match Value::deserialize(d)? {
            Value::String(s) => Ok(BagEntry { path: PathBuf::from(s), ..Default::default() }),
            v @ Value::Mapping(_) => {
                let m = BagMap::deserialize(v).map_err(D::Error::custom)?;
                Ok(BagEntry { path: m.path, name: m.name, start: m.start, duration: m.duration, source: m.source })
            }
            _ => Err(D::Error::custom("expected a bag path, or a map with path (and name, start, duration, source)")),
        }
    }
}

fn one() -> f64 {
    1.0
}

/// Where the truth comes from and how estimates are scored against it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct BagTruth {
    /// Truth topic in the bags: `nav_msgs/msg/Odometry` (the robot's true pose; needs a source
    /// position) or `geometry_msgs/msg/PointStamped` (the source relative to base_link).
    pub topic: String,
    /// Source position x, y[, z] in the odometry frame [m] (without z: horizontal distance).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub source: Option<Vec<f64>>,
    /// The scenario a simulated bag was recorded in (relative to the sweep file): the source
    /// position (x, y of its only source) and the robot geometry (as `sillage sim` applies it).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub scenario: Option<PathBuf>,
    /// Largest gap between truth samples to interpolate across [s].
    #[serde(default = "one")]
    pub max_gap: f64,
    /// Time not scored at the start of each bag or window [s] (the estimators' warm-up).
    #[serde(default)]
    pub warmup: f64,
    /// How long an estimate stands for after it is published [s]; an instant whose latest
    /// estimate is older counts as not covered.
    #[serde(default = "one")]
    pub max_age: f64,
}

/// Parses a remap `from:=to`.
pub fn parse_remap(s: &str) -> Option<(String, String)> {
    let (a, b) = s.split_once(":=")?;
    (!a.is_empty() && !b.is_empty()).then(|| (a.to_string(), b.to_string()))
}

fn check_source(v: &[f64]) -> Result<(), String> {
    if !(2..=3).contains(&v.len()) {
        return Err(format!("expected [x, y] or [x, y, z] [m], got {} numbers", v.len()));
    }
    if v.iter().any(|x| !x.is_finite()) {
        return Err("coordinates must be finite".into());
    }
    Ok(())
}

/// Checks the bag keys of `evaluate` (each error names the key).
pub fn validate(ev: &Evaluate, file: &str) -> Result<(), TuneError> {
    let schema = |key: String, reason: String| TuneError::Schema { file: file.to_string(), key, reason };
    for (i, r) in ev.remaps.iter().enumerate() {
        if parse_remap(r).is_none() {
            return Err(schema(format!("evaluate.remaps[{i}]"), format!("'{r}' is not of the form from:=to")));
        }
    }
    let Some(truth) = &ev.truth else {
        if !ev.bags.is_empty() {
            return Err(schema("evaluate.truth".into(), "bags need a truth topic: evaluate.truth.topic (Odometry with a source, or PointStamped)".into()));
        }
        return Ok(());
    };
    if ev.bags.is_empty() {
        return Err(schema("evaluate.truth".into(), "is for bags, and evaluate.bags is empty".into()));
    }
    if truth.topic.trim().is_empty() {
        return Err(schema("evaluate.truth.topic".into(), "empty topic name".into()));
    }
    if let Some(s) = &truth.source {
        check_source(s).map_err(|r| schema("evaluate.truth.source".into(), r))?;
    }
    if truth.source.is_some() && truth.scenario.is_some() {
        return Err(schema("evaluate.truth.scenario".into(), "give either source or scenario, not both".into()));
    }
    for (key, v, strict) in [("max_gap", truth.max_gap, true), ("warmup", truth.warmup, false), ("max_age", truth.max_age, true)] {
        if !v.is_finite() || v < 0.0 || (strict && v == 0.0) {
            let want = if strict { "> 0" } else { ">= 0" };
            return Err(schema(format!("evaluate.truth.{key}"), format!("must be {want} [s], got {v}")));
        }
    }
    for (i, b) in ev.bags.iter().enumerate() {
        let key = |k: &str| format!("evaluate.bags[{i}].{k}");
        if b.path.as_os_str().is_empty() {
            return Err(schema(key("path"), "empty path".into()));
        }
        if let Some(s) = b.start.filter(|s| !(s.is_finite() && *s >= 0.0)) {
            return Err(schema(key("start"), format!("must be >= 0 [s after the first message], got {s}")));
        }
        if let Some(d) = b.duration.filter(|d| !(d.is_finite() && *d > 0.0)) {
            return Err(schema(key("duration"), format!("must be > 0 [s], got {d}")));
        }
        if let Some(s) = &b.source {
            check_source(s).map_err(|r| schema(key("source"), r))?;
        }
        if b.name.as_deref().is_some_and(|n| n.trim().is_empty() || n.contains('#')) {
            return Err(schema(key("name"), "must be non-empty, without '#'".into()));
        }
    }
    Ok(())
}

/// Bytes read from each end of a bag file for its digest.
const DIGEST_SPAN: u64 = 1 << 20;

fn file_digest(path: &Path, h: &mut Vec<u8>) -> Result<(), TuneError> {
    let mut f = std::fs::File::open(path).map_err(|e| TuneError::io(path, e))?;
    let len = f.metadata().map_err(|e| TuneError::io(path, e))?.len();
    h.extend_from_slice(&len.to_le_bytes());
    let mut head = Vec::new();
    (&mut f).take(DIGEST_SPAN).read_to_end(&mut head).map_err(|e| TuneError::io(path, e))?;
    h.extend_from_slice(&fnv1a(&head).to_le_bytes());
    if len > DIGEST_SPAN {
        f.seek(SeekFrom::Start(len.saturating_sub(DIGEST_SPAN).max(DIGEST_SPAN))).map_err(|e| TuneError::io(path, e))?;
        let mut tail = Vec::new();
        f.take(DIGEST_SPAN).read_to_end(&mut tail).map_err(|e| TuneError::io(path, e))?;
        h.extend_from_slice(&fnv1a(&tail).to_le_bytes());
    }
    Ok(())
}

/// A digest of a bag's contents (16 hex digits): for a file, or each file of a bag folder (by
/// name), its size and the FNV-1a hashes of its first and last MiB. Cheap on large bags, and
/// independent of where the bag lies.
pub fn bag_digest(path: &Path) -> Result<String, TuneError> {
    let mut h = Vec::new();
    if path.is_dir() {
        let mut files: Vec<PathBuf> = std::fs::read_dir(path)
            .map_err(|e| TuneError::io(path, e))?
            .filter_map(|e| e.ok().map(|e| e.path()))
            .filter(|p| p.is_file())
            .collect();
        files.sort();
        for f in &files {
            h.extend_from_slice(f.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_default().as_bytes());
            file_digest(f, &mut h)?;
        }
    } else {
        file_digest(path, &mut h)?;
    }
    Ok(format!("{:016x}", fnv1a(&h)))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_bag_is_a_path_or_a_map_and_unknown_map_keys_are_named() {
        let v: Vec<BagEntry> = serde_yaml::from_str("- a/bag\n- {path: b.mcap, start: 5.0, duration: 10.0}\n").unwrap_or_default();
        assert_eq!(v.len(), 2);
        assert_eq!((v[0].path.as_path(), v[0].start), (Path::new("a/bag"), None));
        assert_eq!((v[1].start, v[1].duration), (Some(5.0), Some(10.0)));
        let e = serde_yaml::from_str::<Vec<BagEntry>>("- {path: b.mcap, strat: 5.0}\n").err().map(|e| e.to_string()).unwrap_or_default();
        assert!(e.contains("unknown field `strat`"), "{e}");
        // The manifest's JSON form reads back.
        let json = serde_json::to_string(&v).unwrap_or_default();
        assert_eq!(serde_json::from_str::<Vec<BagEntry>>(&json).ok(), Some(v));
    }

    #[test]
    fn the_digest_follows_contents_not_the_folder() {
        let d = std::env::temp_dir().join(format!("sillage-tune-digest-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&d);
        for sub in ["a", "b"] {
            std::fs::create_dir_all(d.join(sub)).unwrap_or_else(|e| panic!("{e}"));
            std::fs::write(d.join(sub).join("x_0.mcap"), vec![7u8; 3 << 20]).unwrap_or_else(|e| panic!("{e}"));
        }
        let (a, b) = (bag_digest(&d.join("a")).unwrap_or_default(), bag_digest(&d.join("b")).unwrap_or_default());
        assert_eq!(a, b);
        let mut bytes = vec![7u8; 3 << 20];
        bytes[(3 << 20) - 1] = 8;
        std::fs::write(d.join("b").join("x_0.mcap"), bytes).unwrap_or_else(|e| panic!("{e}"));
        assert_ne!(bag_digest(&d.join("b")).unwrap_or_default(), a, "a change in the last MiB");
        let e = bag_digest(&d.join("nope")).err().map(|e| e.to_string()).unwrap_or_default();
        assert!(e.contains("nope"), "{e}");
        let _ = std::fs::remove_dir_all(&d);
    }
}
