//! The work of a sweep: units (point x case), their deterministic split into shards, and the
//! parallel loop (rayon) that evaluates the units still to do.
//!
//! A case is one scenario with one seed, or one bag (replayed once). Units are numbered point-major
//! (`point.index * cases + case`), and shard `I/N` takes the units whose number is `I` modulo
//! `N`, so shards are disjoint, cover the sweep, and depend only on the sweep file.

use crate::design::Point;
use crate::error::TuneError;
use crate::results::Record;
use crate::sweep::LoadedSweep;
use rayon::prelude::*;
use std::collections::{BTreeMap, HashSet};

/// Metrics of one case, by name (NaN: not defined for this case, e.g. time when it failed).
pub type Metrics = BTreeMap<String, f64>;

/// What a case runs on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum CaseKind {
    /// A scenario episode (`source` indexes `evaluate.scenarios`).
    #[default]
    Scenario,
    /// A bag replay (`source` indexes `evaluate.bags`).
    Bag,
}

/// One scenario with one seed, or one bag.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct Case {
    /// Scenario or bag.
    pub kind: CaseKind,
    /// Index into `evaluate.scenarios` or `evaluate.bags`.
    pub source: usize,
    /// Label of the scenario or bag (its file stem, or the bag's `name`).
    pub source_label: String,
    /// Seed index (0-based) within the scenario (0 for a bag).
    pub seed_index: usize,
    /// The world seed: `base_seed + seed_index` (0 for a bag).
    pub seed: u64,
}

impl Case {
    /// The key that names the case in the results file: `scenario#seed`, or the bag's label.
    pub fn key(&self) -> String {
        match self.kind {
            CaseKind::Scenario => format!("{}#{}", self.source_label, self.seed),
            CaseKind::Bag => self.source_label.clone(),
        }
    }
}

/// Labels from file stems; a stem used twice gets the item's index appended.
fn labels(stems: &[String]) -> Vec<String> {
    stems.iter().enumerate().map(|(i, s)| if stems.iter().filter(|x| *x == s).count() > 1 { format!("{s}.{i}") } else { s.clone() }).collect()
}

fn stem(p: &std::path::Path, default: &str) -> String {
    p.file_stem().and_then(|x| x.to_str()).unwrap_or(default).to_string()
}

/// The cases of a sweep: scenario-major, then one per bag.
pub fn cases(s: &LoadedSweep) -> Vec<Case> {
    let ev = &s.sweep.evaluate;
    let mut out = Vec::new();
    let scenario_labels = labels(&ev.scenarios.iter().map(|p| stem(p, "scenario")).collect::<Vec<_>>());
    for (source, source_label) in scenario_labels.into_iter().enumerate() {
        for seed_index in 0..ev.seeds {
            let seed = ev.base_seed.wrapping_add(seed_index as u64);
            out.push(Case { kind: CaseKind::Scenario, source, source_label: source_label.clone(), seed_index, seed });
        }
    }
    let bag_labels = labels(&ev.bags.iter().map(|b| b.name.clone().unwrap_or_else(|| stem(&b.path, "bag"))).collect::<Vec<_>>());
    out.extend(bag_labels.into_iter().enumerate().map(|(source, source_label)| Case { kind: CaseKind::Bag, source, source_label, ..Default::default() }));
    out
}

/// Turns a point and a case into metrics. Implementations must be deterministic: the same
/// point and case give the same metrics, whatever runs beside them.
pub trait Evaluator: Sync {
    /// The metric names it reports (objective terms may use these).
    fn metrics(&self) -> &[&'static str];
    /// Evaluates `point` (its parameter file text is `params`) on `case`.
    fn evaluate(&self, point: &Point, params: &str, case: &Case) -> Result<Metrics, String>;
}

/// A deterministic slice of a sweep: units whose number is `index` modulo `count`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub struct Shard {
    /// 0-based shard index.
    pub index: usize,
    /// Number of shards.
    pub count: usize,
}

impl Shard {
    /// The whole sweep.
    pub const ALL: Shard = Shard { index: 0, count: 1 };

    /// Parses `I/N` (0 <= I < N).
    pub fn parse(s: &str) -> Result<Shard, TuneError> {
        let bad = || TuneError::Shard(s.to_string());
        let (i, n) = s.split_once('/').ok_or_else(bad)?;
        let (index, count): (usize, usize) = (i.trim().parse().map_err(|_| bad())?, n.trim().parse().map_err(|_| bad())?);
        if count == 0 || index >= count {
            return Err(bad());
        }
        Ok(Shard { index, count })
    }

    /// Whether unit number `n` belongs to this shard.
    pub fn takes(&self, n: usize) -> bool {
        n % self.count == self.index
    }
}

/// One evaluation to do.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Unit {
    /// Index into the points.
    pub point: usize,
    /// Index into the cases.
    pub case: usize,
}

/// The units of `shard` not in `done` ((point id, case key) pairs), in unit order.
pub fn units(points: &[Point], cases: &[Case], shard: Shard, done: &HashSet<(String, String)>) -> Vec<Unit> {
    let mut out = Vec::new();
    for (pi, p) in points.iter().enumerate() {
        for (ci, c) in cases.iter().enumerate() {
            let n = p.index * cases.len() + ci;
            if shard.takes(n) && !done.contains(&(p.id.clone(), c.key())) {
                out.push(Unit { point: pi, case: ci });
            }
        }
    }
    out
}

/// Evaluates `todo` in parallel (on the current rayon pool); every finished unit goes to
/// `sink` as soon as it is done (an evaluation error is recorded, not fatal). Stops early
/// when `sink` fails or `stop` returns true; returns the first sink error.
pub fn run_units(
    eval: &dyn Evaluator,
    points: &[Point],
    params: &[String],
    cases: &[Case],
    todo: &[Unit],
    sink: &(dyn Fn(Record) -> Result<(), TuneError> + Sync),
    stop: &(dyn Fn() -> bool + Sync),
) -> Result<(), TuneError> {
    todo.par_iter().try_for_each(|u| {
        if stop() {
            return Ok(());
        }
        let (p, c) = (&points[u.point], &cases[u.case]);
        let outcome = eval.evaluate(p, &params[u.point], c);
        sink(Record::new(p, c, outcome))
    })
}

/// What [`run_sweep`] did.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RunReport {
    /// Units of this shard.
    pub shard_units: usize,
    /// Units found done in the results file (skipped).
    pub skipped: usize,
    /// Units evaluated now.
    pub evaluated: usize,
}

/// Runs (or resumes) `shard` of a sweep into folder `dir`: checks or writes the manifest,
/// skips the units already in `results.jsonl`, builds each point's parameter file (refused
/// values stop the run before anything is evaluated), and evaluates the rest on the current
/// rayon pool. `progress` gets (done, total) after each unit; `stop` ends the run early
/// (what finished is kept).
pub fn run_sweep(
    sweep: &LoadedSweep,
    eval: &dyn Evaluator,
    dir: &std::path::Path,
    shard: Shard,
    progress: &(dyn Fn(usize, usize) + Sync),
    stop: &(dyn Fn() -> bool + Sync),
) -> Result<RunReport, TuneError> {
    crate::results::open_folder(dir, sweep, shard)?;
    let done = crate::results::done_units(&crate::results::read_records(dir)?);
    let points = crate::design::points(sweep);
    let cases = cases(sweep);
    let all = units(&points, &cases, shard, &HashSet::new());
    let todo = units(&points, &cases, shard, &done);
    let header = [format!("sweep {}", sweep.name)];
    let params = points
        .iter()
        .map(|p| {
            let h = [header[0].clone(), format!("point {} (#{})", p.id, p.index)];
            crate::params_out::point_params_text(sweep.base_text.as_deref(), &sweep.sweep.namespace, p, &h)
        })
        .collect::<Result<Vec<String>, TuneError>>()?;
    let file = crate::results::ResultsFile::open(dir)?;
    let skipped = all.len() - todo.len();
    let count = std::sync::atomic::AtomicUsize::new(skipped);
    let sink = |r: Record| {
        file.append(&r)?;
        let n = count.fetch_add(1, std::sync::atomic::Ordering::Relaxed) + 1;
        progress(n, all.len());
        Ok(())
    };
    run_units(eval, &points, &params, &cases, &todo, &sink, stop)?;
    let evaluated = count.into_inner() - skipped;
    Ok(RunReport { shard_units: all.len(), skipped, evaluated })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::ParamValue;
    use proptest::prelude::*;

    fn setup(np: usize, nc: usize) -> (Vec<Point>, Vec<Case>) {
        let points = (0..np).map(|i| Point::new(i, vec![("arbiter.surge.speed".into(), ParamValue::Int(i as i64))])).collect();
        let cases = (0..nc).map(|i| Case { source: 0, source_label: "s".into(), seed_index: i, seed: i as u64, ..Default::default() }).collect();
        (points, cases)
    }

    proptest! {
        #[test]
        fn shards_partition_the_units(np in 1usize..12, nc in 1usize..6, n in 1usize..9) {
            let (p, c) = setup(np, nc);
            let none = HashSet::new();
            let mut seen: Vec<(usize, usize)> = Vec::new();
            for i in 0..n {
                seen.extend(units(&p, &c, Shard { index: i, count: n }, &none).iter().map(|u| (u.point, u.case)));
            }
            seen.sort();
            let all: Vec<(usize, usize)> = units(&p, &c, Shard::ALL, &none).iter().map(|u| (u.point, u.case)).collect();
            prop_assert_eq!(seen, all);
            prop_assert_eq!(units(&p, &c, Shard::ALL, &none).len(), np * nc);
        }
    }

    #[test]
    fn shard_text_is_checked() {
        assert_eq!(Shard::parse("2/5").ok(), Some(Shard { index: 2, count: 5 }));
        for bad in ["5/5", "1", "a/3", "0/0", "-1/2"] {
            let e = Shard::parse(bad).err().map(|e| e.to_string()).unwrap_or_default();
            assert!(e.contains(bad), "{bad}: {e}");
        }
    }
}
