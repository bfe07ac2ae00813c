//! The results of a sweep on disk, in one output folder:
//! - `manifest.json`: the validated sweep (paths resolved, base parameter text included), its
//!   fingerprint and the shard, written when the folder is first used; a later run or a merge
//!   refuses a folder of another sweep;
//! - `results.jsonl`: one JSON line per finished unit, appended and flushed as each finishes.
//!
//! Resume: an interrupted run leaves complete lines (and at most one partial last line, which
//! is cut off); the next run skips the units already in the file. Merge: the records of several
//! folders of the same sweep, one per unit (the first seen wins; they are identical because
//! evaluation is deterministic).

use crate::design::{ParamValue, Point};
use crate::error::TuneError;
use crate::run::{Case, Metrics, Shard};
use crate::sweep::LoadedSweep;
use serde::{Deserialize, Serialize};
use std::collections::{BTreeMap, HashSet};
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};
use std::sync::Mutex;

/// Manifest file name.
pub const MANIFEST: &str = "manifest.json";
/// Results file name.
pub const RESULTS: &str = "results.jsonl";

/// One finished unit.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Record {
    /// Point id.
    pub point: String,
    /// Point index in the design.
    pub index: usize,
    /// The point's values.
    pub values: Vec<(String, ParamValue)>,
    /// Case key (`scenario#seed`, or the bag's label).
    pub case: String,
    /// World seed.
    pub seed: u64,
    /// Metrics (`null`: not defined for this case).
    pub metrics: BTreeMap<String, Option<f64>>,
    /// Why the evaluation failed.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub error: Option<String>,
}

impl Record {
    /// The record of `point` on `case`.
    pub fn new(point: &Point, case: &Case, outcome: Result<Metrics, String>) -> Record {
        let (metrics, error) = match outcome {
            Ok(m) => (m.into_iter().map(|(k, v)| (k, v.is_finite().then_some(v))).collect(), None),
            Err(e) => (BTreeMap::new(), Some(e)),
        };
        Record { point: point.id.clone(), index: point.index, values: point.values.clone(), case: case.key(), seed: case.seed, metrics, error }
    }

    /// The metric `name` (NaN when absent or undefined).
    pub fn metric(&self, name: &str) -> f64 {
        self.metrics.get(name).copied().flatten().unwrap_or(f64::NAN)
    }

    /// The unit key.
    pub fn unit(&self) -> (String, String) {
        (self.point.clone(), self.case.clone())
    }
}

/// What is stored in `manifest.json`.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct Manifest {
    /// [`LoadedSweep::fingerprint`].
    pub fingerprint: String,
    /// The sweep.
    pub sweep: LoadedSweep,
    /// The shard this folder holds.
    pub shard: Shard,
}

/// Writes the manifest of a new folder, or checks an existing one is of the same sweep.
pub fn open_folder(dir: &Path, sweep: &LoadedSweep, shard: Shard) -> Result<(), TuneError> {
    std::fs::create_dir_all(dir).map_err(|e| TuneError::io(dir, e))?;
    let path = dir.join(MANIFEST);
    let fingerprint = sweep.fingerprint();
    if path.exists() {
        let m = read_manifest(dir)?;
        if m.fingerprint != fingerprint {
            return Err(TuneError::Mismatch { file: path.display().to_string(), found: m.fingerprint, expected: fingerprint });
        }
        return Ok(());
    }
    let m = Manifest { fingerprint, sweep: sweep.clone(), shard };
    let text = serde_json::to_string_pretty(&m).map_err(|e| TuneError::io(&path, std::io::Error::other(e)))?;
    std::fs::write(&path, text).map_err(|e| TuneError::io(&path, e))
}

/// Reads `dir/manifest.json`.
pub fn read_manifest(dir: &Path) -> Result<Manifest, TuneError> {
    let path = dir.join(MANIFEST);
    let text = std::fs::read_to_string(&path).map_err(|e| TuneError::io(&path, e))?;
    serde_json::from_str(&text).map_err(|e| TuneError::Results { file: path.display().to_string(), line: e.line(), reason: e.to_string() })
}

/// Parses results text; a partial last line (no newline: an interrupted write) is ignored,
/// any other bad line is an error naming it.
pub fn parse_records(text: &str, file: &str) -> Result<Vec<Record>, TuneError> {
    let complete = text.rfind('\n').map_or("", |i| &text[..=i]);
    complete
        .lines()
        .enumerate()
        .filter(|(_, l)| !l.trim().is_empty())
        .map(|(i, l)| serde_json::from_str(l).map_err(|e| TuneError::Results { file: file.to_string(), line: i + 1, reason: e.to_string() }))
        .collect()
}

/// Reads `dir/results.jsonl` (no file: no records).
pub fn read_records(dir: &Path) -> Result<Vec<Record>, TuneError> {
    let path = dir.join(RESULTS);
    match std::fs::read_to_string(&path) {
        Ok(t) => parse_records(&t, &path.display().to_string()),
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(Vec::new()),
        Err(e) => Err(TuneError::io(&path, e)),
    }
}

/// The units in `records`.
pub fn done_units(records: &[Record]) -> HashSet<(String, String)> {
    records.iter().map(Record::unit).collect()
}

/// The results file of a folder, open for appending.
pub struct ResultsFile {
    path: PathBuf,
    out: Mutex<BufWriter<std::fs::File>>,
}

impl ResultsFile {
    /// Opens `dir/results.jsonl` for appending, cutting off a partial last line first.
    pub fn open(dir: &Path) -> Result<ResultsFile, TuneError> {
        let path = dir.join(RESULTS);
        if let Ok(text) = std::fs::read_to_string(&path) {
            let keep = text.rfind('\n').map_or(0, |i| i + 1);
            if keep < text.len() {
                let f = std::fs::OpenOptions::new().write(true).open(&path).map_err(|e| TuneError::io(&path, e))?;
                f.set_len(keep as u64).map_err(|e| TuneError::io(&path, e))?;
            }
        }
        let f = std::fs::OpenOptions::new().create(true).append(true).open(&path).map_err(|e| TuneError::io(&path, e))?;
        Ok(ResultsFile { path, out: Mutex::new(BufWriter::new(f)) })
    }

    /// Appends one record and flushes it.
    pub fn append(&self, r: &Record) -> Result<(), TuneError> {
        let line = serde_json::to_string(r).map_err(|e| TuneError::io(&self.path, std::io::Error::other(e)))?;
        let mut out = self.out.lock().map_err(|_| TuneError::io(&self.path, std::io::Error::other("writer poisoned")))?;
        writeln!(out, "{line}").and_then(|()| out.flush()).map_err(|e| TuneError::io(&self.path, e))
    }
}

/// The sweep and the records of several folders of one sweep (one record per unit).
pub fn merge(dirs: &[PathBuf]) -> Result<(LoadedSweep, Vec<Record>), TuneError> {
    let mut sweep: Option<(LoadedSweep, String)> = None;
    let mut seen = HashSet::new();
    let mut out = Vec::new();
    for dir in dirs {
        let m = read_manifest(dir)?;
        match &sweep {
            Some((_, fp)) if *fp != m.fingerprint => {
                return Err(TuneError::Mismatch { file: dir.join(MANIFEST).display().to_string(), found: m.fingerprint, expected: fp.clone() })
            }
            Some(_) => {}
            None => sweep = Some((m.sweep, m.fingerprint)),
        }
        for r in read_records(dir)? {
            if seen.insert(r.unit()) {
                out.push(r);
            }
        }
    }
    let (s, _) = sweep.ok_or(TuneError::Shard("merge: no folder given".into()))?;
    Ok((s, out))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_partial_last_line_is_ignored_and_other_bad_lines_are_named() {
        let p = Point::new(0, vec![("arbiter.surge.speed".into(), ParamValue::Float(0.2))]);
        let c = Case { source: 0, source_label: "demo".into(), seed_index: 0, seed: 3, ..Default::default() };
        let mut m = Metrics::new();
        m.insert("time".into(), f64::NAN);
        m.insert("success".into(), 1.0);
        let r = Record::new(&p, &c, Ok(m));
        let line = serde_json::to_string(&r).unwrap_or_default();
        assert!(line.contains("\"time\":null"), "{line}");
        let text = format!("{line}\n{}", &line[..20]);
        assert_eq!(parse_records(&text, "r.jsonl").unwrap_or_default(), vec![r.clone()]);
        assert!(r.metric("time").is_nan() && r.metric("success") == 1.0);
        let e = parse_records(&format!("{{oops\n{line}\n"), "r.jsonl").err().map(|e| e.to_string()).unwrap_or_default();
        assert!(e.starts_with("r.jsonl:1:"), "{e}");
    }
}
