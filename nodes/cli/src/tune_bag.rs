//! Recorded bags as a sweep evaluator: each (point, bag) replays the bag (or its window) in bag
//! time through the sensing nodes (event encoder, bearing decoder, plume estimator; not the
//! arbiter) built from the point's parameter file, and scores their estimates against the
//! truth topic (see [`crate::truth`]).
//!
//! Scoring, on a grid of instants every 0.1 s from the window's start plus `truth.warmup` to the
//! last message read, keeping the instants where the truth is known (samples at most
//! `truth.max_gap` apart around it). At each instant the latest estimate published at most
//! `truth.max_age` before it is compared with the truth at the estimate's own stamp:
//! - `bearing_error`: mean absolute wrapped difference between the decoder's bearing
//!   (`odor_bearing`, cue not NONE) and the true bearing of the source in base_link [deg];
//! - `bearing_coverage`: fraction of the instants with such an estimate [0..1];
//! - `distance_error`: median of |ln(estimate / true distance)| of the plume estimator's
//!   distance (`plume_features`, finite and > 0) [-; 0.1 is about 10 %];
//! - `distance_relative_error`: median of |estimate - true| / true [-];
//! - `distance_coverage`: fraction of the instants with a distance estimate [0..1].
//!
//! An error is NaN when there is no estimate at all, so a point that never estimates cannot win
//! on error alone; the coverage says how often it estimated.

use anyhow::{bail, Context, Result};
use serde_yaml::Value;
use sillage_bag::{bag_info, Bag, ReadOptions};
use sillage_core::executor::{remap_topic, Executor, Placement, Record};
use sillage_core::msg::{OdorBearing, PlumeFeatures};
use sillage_core::params::{flatten, set_key};
use sillage_core::time::{nanos, secs};
use sillage_core::{Msg, Nanos, RosMessage};
use sillage_stack::{add_stack, node_fqn, NodeKind, StackConfig};
use sillage_tune::bags::{parse_remap, BagEntry, BagTruth};
use sillage_tune::stats::{mean, median};
use sillage_tune::sweep::Evaluate;
use sillage_tune::{Case, Evaluator, Metrics, Point};
use sillage_world::Scenario;
use std::collections::{BTreeMap, HashSet};
use std::path::{Path, PathBuf};

use crate::truth::{norm, relative_source, truth_kind, SourceTrack};

/// Metric names of [`BagEvaluator`].
pub const METRICS: &[&str] = &["bearing_error", "bearing_coverage", "distance_error", "distance_relative_error", "distance_coverage"];

/// Spacing of the scoring instants [ns].
const GRID: Nanos = 100_000_000;

/// The nodes a bag is replayed through.
const NODES: [NodeKind; 3] = [NodeKind::EventEncoder, NodeKind::BearingDecoder, NodeKind::PlumeEstimator];

/// What `evaluate.truth.scenario` gives: the source position and the robot geometry.
pub struct ScenarioTruth {
    /// Source x, y [m].
    pub source: Vec<f64>,
    /// Parameter changes describing the scenario's robot, by node.
    pub geometry: Vec<(NodeKind, Value)>,
}

/// Reads `evaluate.truth.scenario` (also used by `sillage check`).
pub fn scenario_truth(path: &Path) -> Result<ScenarioTruth> {
    let s = Scenario::from_path(path)?;
    let [one] = s.sources.as_slice() else {
        bail!("{}: evaluate.truth.scenario: the scenario has {} sources; the bag objectives need exactly one", path.display(), s.sources.len());
    };
    Ok(ScenarioTruth { source: one.position[..2].to_vec(), geometry: sillage_sim::setup::geometry_overrides(&s) })
}

/// Replays the sweep's bags.
pub struct BagEvaluator {
    bags: Vec<BagEntry>,
    truth: BagTruth,
    source: Option<Vec<f64>>,
    geometry: Vec<(NodeKind, Value)>,
    namespace: String,
    remaps: Vec<(String, String)>,
    points_dir: PathBuf,
}

/// What one replay produced.
struct Replayed {
    /// (stamp, bearing [rad]; NaN without a cue).
    bearings: Vec<(Nanos, f64)>,
    /// (stamp, distance [m]; NaN when not estimated).
    distances: Vec<(Nanos, f64)>,
    truth: SourceTrack,
    /// First and last log time read.
    span: (Nanos, Nanos),
}

impl BagEvaluator {
    /// The evaluator of `evaluate` (bags, truth, remaps); point files go to `points_dir`.
    pub fn new(ev: &Evaluate, namespace: &str, points_dir: &Path) -> Result<BagEvaluator> {
        let truth = ev.truth.clone().context("evaluate.truth is needed with bags")?;
        let (source, geometry) = match &truth.scenario {
            Some(p) => {
                let s = scenario_truth(p)?;
                (Some(s.source), s.geometry)
            }
            None => (truth.source.clone(), Vec::new()),
        };
        let remaps = ev.remaps.iter().map(|r| parse_remap(r).with_context(|| format!("evaluate.remaps: '{r}' is not from:=to"))).collect::<Result<_>>()?;
        std::fs::create_dir_all(points_dir).with_context(|| format!("creating {}", points_dir.display()))?;
        Ok(BagEvaluator { bags: ev.bags.clone(), truth, source, geometry, namespace: namespace.to_string(), remaps, points_dir: points_dir.to_path_buf() })
    }

    /// The point's parameter text with the scenario's robot geometry merged in (if any).
    fn with_geometry(&self, params: &str) -> Result<String, String> {
        if self.geometry.is_empty() {
            return Ok(params.to_string());
        }
        let mut doc: Value = serde_yaml::from_str(params).map_err(|e| format!("point parameters: {e}"))?;
        for (kind, over) in &self.geometry {
            if let Some(p) = doc.get_mut(node_fqn(*kind, &self.namespace)).and_then(|s| s.get_mut("ros__parameters")) {
                *p = flatten(over).into_iter().fold(p.clone(), |acc, (k, v)| set_key(&acc, &k, v));
            }
        }
        let body = serde_yaml::to_string(&doc).map_err(|e| e.to_string())?;
        Ok(format!("# The point's parameters with the robot geometry of the truth scenario.\n{body}"))
    }

    fn replay(&self, params_file: &Path, bag: &BagEntry, source: Option<&[f64]>) -> Result<Replayed> {
        let label = bag.path.display().to_string();
        let b = Bag::open(&bag.path)?;
        let info = bag_info(&b)?;
        let (first, last) = info.span.with_context(|| format!("bag {label}: no message"))?;
        let start = first + bag.start.map_or(0, nanos);
        anyhow::ensure!(start <= last, "bag {label}: start {:.3} s is past its end ({:.3} s)", secs(start - first), secs(last - first));
        let end = bag.duration.map_or(last, |d| start.saturating_add(nanos(d)));

        let cfg = StackConfig { namespace: self.namespace.clone(), params_file: Some(params_file.to_path_buf()), remaps: self.remaps.clone(), nodes: NODES.to_vec() };
        let mut ex = Executor::new();
        let idx = add_stack(&mut ex, &cfg)?;
        let placement = Placement { namespace: cfg.namespace.clone(), name: None, remaps: cfg.remaps.clone() };
        let mut outputs: BTreeMap<String, &'static str> = BTreeMap::new();
        for n in idx.iter().filter_map(|i| ex.node(*i)) {
            for p in n.outputs() {
                outputs.insert(remap_topic(&p.topic, &placement, n.name()), p.type_name);
            }
        }
        let output = |ty: &str| outputs.iter().find(|(_, t)| **t == ty).map(|(k, _)| k.clone()).unwrap_or_default();
        let (bearing_topic, features_topic) = (output(OdorBearing::TYPE_NAME), output(PlumeFeatures::TYPE_NAME));

        let in_bag = |t: &str| info.topics.iter().find(|x| x.name == t).map(|x| sillage_core::any::normalize_type_name(&x.type_name).to_string());
        let mut inject = HashSet::new();
        for (topic, ty) in ex.subscribed_topics().into_iter().filter(|(t, _)| !outputs.contains_key(*t)) {
            match in_bag(topic) {
                Some(found) if found == ty => {
                    inject.insert(topic.to_string());
                }
                Some(found) => bail!("bag {label}: topic {topic} is {found}; the nodes read {ty} on it (set the sweep's namespace or evaluate.remaps)"),
                None if ty == sillage_core::msg::ChemSample::TYPE_NAME => bail!(
                    "bag {label}: no {ty} topic {topic}, which the nodes read (topics: {}); set the sweep's namespace or evaluate.remaps",
                    crate::truth::topic_list(&info)
                ),
                None => {} // wind or odometry: the nodes do without
            }
        }
        let truth_topic = self.truth.topic.as_str();
        truth_kind(&info, truth_topic, source.is_some(), "evaluate.truth.topic", "evaluate.truth.source (or a bag's source)").with_context(|| format!("bag {label}"))?;

        let mut bearings = Vec::new();
        let mut distances = Vec::new();
        let mut sink = |r: &Record| match r.msg {
            Msg::OdorBearing(b) if r.topic == bearing_topic => {
                bearings.push((r.stamp, if b.cue != OdorBearing::NONE && b.bearing.is_finite() { b.bearing } else { f64::NAN }))
            }
            Msg::PlumeFeatures(f) if r.topic == features_topic => distances.push((r.stamp, f.distance)),
            _ => {}
        };
        let mut truth = SourceTrack::default();
        let topics = inject.iter().cloned().chain(std::iter::once(truth_topic.to_string())).collect();
        let mut span: Option<(Nanos, Nanos)> = None;
        for item in b.messages(&ReadOptions { start, end, topics: Some(topics), strict: false })? {
            let m = item?;
            let t = m.log_time;
            span = Some(span.map_or((t, t), |(a, _)| (a, t)));
            if m.topic.as_ref() == truth_topic {
                if let Some(r) = relative_source(&m.msg, source) {
                    truth.push(t, r);
                }
            }
            if inject.contains(m.topic.as_ref()) {
                ex.run_until(t, &mut sink).with_context(|| format!("bag {label}"))?;
                ex.inject(t, &m.topic, m.msg).with_context(|| format!("bag {label}"))?;
            }
        }
        let span = span.with_context(|| format!("bag {label}: no message of the nodes' inputs or the truth topic in the window"))?;
        ex.run_until(span.1, &mut sink).with_context(|| format!("bag {label}"))?;
        Ok(Replayed { bearings, distances, truth, span })
    }

    fn metrics(&self, r: &Replayed, bag: &BagEntry) -> Result<Metrics> {
        let from = r.span.0.saturating_add(nanos(self.truth.warmup));
        let (max_gap, max_age) = (nanos(self.truth.max_gap), nanos(self.truth.max_age));
        let grid = Grid { truth: &r.truth, from, to: r.span.1, max_gap, max_age };
        let bearing = grid.score(&r.bearings, |b, rel| {
            (b.is_finite() && rel[0].hypot(rel[1]) > 1e-9).then(|| sillage_world::geometry::wrap_angle(b - rel[1].atan2(rel[0])).abs().to_degrees())
        });
        let distance = grid.score(&r.distances, |d, rel| {
            let truth = norm(&rel);
            (d.is_finite() && d > 0.0 && truth > 0.0).then(|| ((d / truth).ln().abs(), (d - truth).abs() / truth))
        });
        if bearing.instants == 0 {
            bail!(
                "bag {}: no truth on {} in the scored span {:.3}..{:.3} s ({} truth samples, max_gap {} s, warmup {} s)",
                bag.path.display(),
                self.truth.topic,
                secs(from - r.span.0),
                secs(r.span.1 - r.span.0),
                r.truth.len(),
                self.truth.max_gap,
                self.truth.warmup
            );
        }
        let sorted = |mut v: Vec<f64>| {
            v.sort_by(f64::total_cmp);
            v
        };
        let (ln_err, rel_err): (Vec<f64>, Vec<f64>) = distance.errors.iter().copied().unzip();
        Ok(Metrics::from([
            ("bearing_error".to_string(), mean(&bearing.errors).unwrap_or(f64::NAN)),
            ("bearing_coverage".to_string(), bearing.coverage()),
            ("distance_error".to_string(), median(&sorted(ln_err)).unwrap_or(f64::NAN)),
            ("distance_relative_error".to_string(), median(&sorted(rel_err)).unwrap_or(f64::NAN)),
            ("distance_coverage".to_string(), distance.coverage()),
        ]))
    }
}

/// The scoring instants of one replay.
struct Grid<'a> {
    truth: &'a SourceTrack,
    from: Nanos,
    to: Nanos,
    max_gap: Nanos,
    max_age: Nanos,
}

/// Errors at the covered instants, out of the instants with truth.
struct Scored<T> {
    errors: Vec<T>,
    instants: usize,
}

impl<T> Scored<T> {
    fn coverage(&self) -> f64 {
        if self.instants == 0 {
            f64::NAN
        } else {
            self.errors.len() as f64 / self.instants as f64
        }
    }
}

impl Grid<'_> {
    /// Scores `estimates` ((stamp, value), in time order; NaN: none) with `error(value, truth)`
    /// (`None`: not an estimate).
    fn score<T>(&self, estimates: &[(Nanos, f64)], error: impl Fn(f64, [f64; 3]) -> Option<T>) -> Scored<T> {
        let mut out = Scored { errors: Vec::new(), instants: 0 };
        let mut next = 0; // estimates[..next] are stamped at or before the instant
        let mut g = self.from;
        while g <= self.to {
            if self.truth.at(g, self.max_gap).is_some() {
                out.instants += 1;
                while next < estimates.len() && estimates[next].0 <= g {
                    next += 1;
                }
                let latest = next.checked_sub(1).map(|i| estimates[i]).filter(|(t, _)| g - t <= self.max_age);
                if let Some(e) = latest.and_then(|(t, v)| self.truth.at(t, self.max_gap).and_then(|truth| error(v, truth))) {
                    out.errors.push(e);
                }
            }
            g += GRID;
        }
        out
    }
}

impl Evaluator for BagEvaluator {
    fn metrics(&self) -> &[&'static str] {
        METRICS
    }

    fn evaluate(&self, point: &Point, params: &str, case: &Case) -> Result<Metrics, String> {
        let bag = self.bags.get(case.source).ok_or("no such bag")?;
        let (file, text) = if self.geometry.is_empty() {
            (format!("{}.yaml", point.id), params.to_string())
        } else {
            (format!("{}.bags.yaml", point.id), self.with_geometry(params)?)
        };
        let file = super::sim_eval::point_file(&self.points_dir, &file, &text, case)?;
        let source = bag.source.as_deref().or(self.source.as_deref());
        let replayed = self.replay(&file, bag, source).map_err(|e| format!("{e:#}"))?;
        self.metrics(&replayed, bag).map_err(|e| format!("{e:#}"))
    }
}

#[cfg(test)]
mod tests {
    //! Synthetic bags with a known truth: a robot standing at (1, -2) facing 0.5 rad, a source
    //! 2 m away at a known bearing in base_link, two sensors at y = +-0.1 m (the default pair).
    //! Gas pulses reach the sensors every 2 s, the second sensor later by the plane-wave lag
    //! `0.2 m * sin(bearing) / 0.5 m/s` (nodes/bearing_decoder/src/plane_wave.rs), so the
    //! decoder's timing cue is right when its air speed is 0.5 m/s. The plume estimator with
    //! `rate_coef = 0` estimates `exp(intercept)`, right for `intercept = ln 2`.

    use super::*;
    use crate::tune::{run, Args, Command};
    use sillage_bag::{BagWriter, WriterOptions};
    use sillage_core::msg::{ChemSample, Header, Odometry, Point as P3, PointStamped, Pose, Quaternion};
    use sillage_tune::rank::rank;
    use sillage_tune::results::{read_records, RESULTS};
    use sillage_tune::Ranked;

    const T0: Nanos = 1_700_000_000_000_000_000;
    const ROBOT: (f64, f64, f64) = (1.0, -2.0, 0.5);
    const DISTANCE: f64 = 2.0;

    fn temp(name: &str) -> PathBuf {
        let d = std::env::temp_dir().join(format!("sillage-tune-bag-{}-{name}", std::process::id()));
        let _ = std::fs::remove_dir_all(&d);
        std::fs::create_dir_all(&d).expect("temp dir");
        d
    }

    /// The source position in the odometry frame for a bearing in base_link.
    fn source_at(bearing: f64) -> [f64; 2] {
        let a = ROBOT.2 + bearing;
        [ROBOT.0 + DISTANCE * a.cos(), ROBOT.1 + DISTANCE * a.sin()]
    }

    /// Pulse arriving at `a` [s]: a 0.1 s rise to 0.3, 0.4 s plateau, 0.3 s exponential fall.
    fn pulse(s: f64, a: f64) -> f64 {
        match s - a {
            x if x < 0.0 => 0.0,
            x if x < 0.5 => 0.3 * (x / 0.1).min(1.0),
            x => 0.3 * (-(x - 0.5) / 0.3).exp(),
        }
    }

    /// 60 s at 100 Hz with the source at `bearing` [rad]; truth on `/truth`, as Odometry (the
    /// robot's pose) or as PointStamped (the source in base_link); `/odom` at 10 Hz.
    fn write_bag(dir: &Path, name: &str, bearing: f64, truth_as_point: bool) -> PathBuf {
        let path = dir.join(name);
        let mut w = BagWriter::create(&path, WriterOptions { overwrite: true, ..Default::default() }).expect("creates");
        let lag = 0.2 * bearing.sin() / 0.5; // t_right - t_left [s]
        let mut odom = Odometry { header: Header::new(0, "odom"), child_frame_id: "base_link".into(), ..Default::default() };
        odom.pose.pose = Pose { position: P3 { x: ROBOT.0, y: ROBOT.1, z: 0.0 }, orientation: Quaternion::from_yaw(ROBOT.2) };
        for k in 0..6000i64 {
            let t = T0 + k * 10_000_000;
            let s = k as f64 * 0.01;
            let gas = |delay: f64| (0..26).map(|i| pulse(s, 8.0 + 2.0 * f64::from(i) + delay)).sum::<f64>();
            let noise = |c: f64| 1e-4 * ((s * 97.0 + c).sin() + (s * 331.0).cos());
            let values = vec![1.0 + gas(lag.min(0.0).abs()) + noise(0.0), 1.0 + gas(lag.max(0.0)) + noise(1.0)];
            let m = Msg::ChemSample(ChemSample { header: Header::new(t, "base_link"), channels: vec!["left".into(), "right".into()], values, quantity: 4 });
            w.write_on("/chem", t, &m, &[]).expect("writes");
            if k % 10 == 0 {
                odom.header = Header::new(t, "odom");
                w.write_on("/odom", t, &Msg::Odometry(Box::new(odom.clone())), &[]).expect("writes");
                let truth = if truth_as_point {
                    let (sin, cos) = bearing.sin_cos();
                    Msg::PointStamped(PointStamped { header: Header::new(t, "base_link"), point: P3 { x: DISTANCE * cos, y: DISTANCE * sin, z: 0.0 } })
                } else {
                    Msg::Odometry(Box::new(odom.clone()))
                };
                w.write_on("/truth", t, &truth, &[]).expect("writes");
            }
        }
        w.finish().expect("finishes");
        path
    }

    const BASE: &str = "bearing_decoder:\n  ros__parameters:\n    amplitude: {enabled: false}\nplume_estimator:\n  ros__parameters:\n    distance: {calibrated: true, rate_coef: 0.0}\n";

    /// A sweep over air speed and distance intercept on two bags (30 deg with an Odometry truth,
    /// -45 deg with a PointStamped truth).
    fn setup(name: &str) -> (PathBuf, PathBuf) {
        let dir = temp(name);
        let a = write_bag(&dir, "left", 30f64.to_radians(), false);
        write_bag(&dir, "right", (-45f64).to_radians(), true);
        std::fs::write(dir.join("base.yaml"), BASE).expect("writes");
        let [x, y] = source_at(30f64.to_radians());
        let sweep = format!(
            "name: synthetic\nbase_params: base.yaml\ndesign: {{kind: grid}}\nparameters:\n  - {{key: bearing_decoder.wind.air_speed, values: [0.25, 0.5, 1.0]}}\n  - {{key: plume_estimator.distance.intercept, values: [0.0, {}, {}]}}\nevaluate:\n  bags: [{{path: {}, source: [{x}, {y}]}}, right]\n  truth: {{topic: /truth, warmup: 20.0}}\nobjective:\n  - {{metric: bearing_error, stat: mean, weight: -0.01}}\n  - {{metric: bearing_coverage, stat: mean, weight: 0.5}}\n  - {{metric: distance_error, stat: median, weight: -1.0}}\n",
            2f64.ln(),
            4f64.ln(),
            a.file_name().and_then(|n| n.to_str()).unwrap_or_default()
        );
        let path = dir.join("sweep.yaml");
        std::fs::write(&path, sweep).expect("writes");
        (dir, path)
    }

    fn args(sweep: &Path, out: &Path, shard: Option<&str>) -> Args {
        Args { command: None, sweep: Some(sweep.to_path_buf()), jobs: Some(2), out: Some(out.to_path_buf()), shard: shard.map(String::from), no_plots: true, quiet: true }
    }

    fn ranking(sweep: &Path, out: &Path) -> Vec<Ranked> {
        let s = sillage_tune::LoadedSweep::load(sweep, crate::tune::METRICS).expect("loads");
        rank(&s.sweep, &read_records(out).expect("records"))
    }

    fn term(r: &Ranked, metric: &str) -> f64 {
        r.terms.iter().find(|t| t.metric == metric).map_or(f64::NAN, |t| t.estimate)
    }

    fn value(r: &Ranked, key: &str) -> f64 {
        r.values.iter().find(|(k, _)| k == key).and_then(|(_, v)| v.as_f64()).unwrap_or(f64::NAN)
    }

    #[test]
    fn a_bag_sweep_ranks_the_known_best_values_first() {
        let (dir, sweep) = setup("rank");
        let out = dir.join("out");
        run(args(&sweep, &out, None)).expect("runs");
        let r = ranking(&sweep, &out);
        for x in &r {
            println!(
                "air_speed {:.2} intercept {:.3}: bearing error {:.2} deg, coverage {:.3}, distance error {:.4}, score {:.4}",
                value(x, "bearing_decoder.wind.air_speed"),
                value(x, "plume_estimator.distance.intercept"),
                term(x, "bearing_error"),
                term(x, "bearing_coverage"),
                term(x, "distance_error"),
                x.score
            );
        }
        assert_eq!(r.len(), 9);
        assert!(r.iter().all(|x| x.cases == 2 && x.errors == 0), "every bag scored");
        let best = &r[0];
        assert_eq!(value(best, "bearing_decoder.wind.air_speed"), 0.5);
        assert!((value(best, "plume_estimator.distance.intercept") - 2f64.ln()).abs() < 1e-12);
        assert!(term(best, "bearing_error") < 5.0 && term(best, "bearing_coverage") > 0.8, "{:?}", best.terms);
        assert!(term(best, "distance_error") < 1e-9, "exp(ln 2) = 2 m: {:?}", best.terms);
        // Each wrong air speed is worse on bearing; each wrong intercept costs ln 2 in distance.
        let at = |u: f64, i: f64| r.iter().find(|x| value(x, "bearing_decoder.wind.air_speed") == u && (value(x, "plume_estimator.distance.intercept") - i).abs() < 1e-9).expect("point");
        let good = term(at(0.5, 0.0), "bearing_error");
        for u in [0.25, 1.0] {
            let e = term(at(u, 0.0), "bearing_error");
            assert!(e.is_nan() || e > good + 10.0, "air speed {u}: {e} vs {good}");
        }
        for i in [0.0, 4f64.ln()] {
            assert!((term(at(0.5, i), "distance_error") - 2f64.ln()).abs() < 1e-9);
        }
        let written = std::fs::read_to_string(out.join("best_params.yaml")).expect("best params");
        assert!(written.contains("air_speed: 0.5"), "{written}");
        let _ = std::fs::remove_dir_all(&dir);
    }

    #[test]
    fn bag_shards_merge_and_resume_like_one_run() {
        let (dir, sweep) = setup("shards");
        let whole = dir.join("whole");
        run(args(&sweep, &whole, None)).expect("runs");
        let want = ranking(&sweep, &whole);
        let shards: Vec<PathBuf> = (0..2).map(|i| dir.join(format!("s{i}"))).collect();
        for (i, d) in shards.iter().enumerate() {
            run(args(&sweep, d, Some(&format!("{i}/2")))).expect("shard runs");
        }
        let merged = dir.join("merged");
        run(Args { command: Some(Command::Merge { dirs: shards.clone(), out: Some(merged.clone()), no_plots: true }), ..args(&sweep, &merged, None) }).expect("merges");
        assert_eq!(ranking(&sweep, &merged), want);
        // Interrupted: keep 7 of 18 results and a partial line, then run again.
        let path = whole.join(RESULTS);
        let text = std::fs::read_to_string(&path).expect("results");
        let kept: Vec<&str> = text.lines().take(7).collect();
        std::fs::write(&path, format!("{}\n{{\"point\":\"ab", kept.join("\n"))).expect("writes");
        run(args(&sweep, &whole, None)).expect("resumes");
        assert_eq!(read_records(&whole).expect("records").len(), 18);
        assert_eq!(ranking(&sweep, &whole), want);
        // A changed bag is another sweep: the folder is refused.
        write_bag(&dir, "right", (-40f64).to_radians(), true);
        let e = run(args(&sweep, &whole, None)).expect_err("changed bag");
        assert!(e.to_string().contains("another sweep"), "{e}");
        let _ = std::fs::remove_dir_all(&dir);
    }

    #[test]
    fn bag_problems_are_reported_naming_the_file_and_topic() {
        let (dir, sweep) = setup("problems");
        let text = std::fs::read_to_string(&sweep).expect("sweep");
        // A bag that is not there: the run stops before anything is evaluated, naming it.
        let missing = dir.join("missing.yaml");
        std::fs::write(&missing, text.replace("right]", "nowhere.mcap]")).expect("writes");
        let e = run(args(&missing, &dir.join("o1"), None)).expect_err("no bag");
        assert!(format!("{e:#}").contains("nowhere.mcap"), "{e:#}");
        // A truth topic that is not in the bags, and the chemical topic under another name:
        // every case records why, naming the bag and the topic.
        let other = dir.join("other.yaml");
        std::fs::write(&other, text.replace("topic: /truth", "topic: /ground_truth")).expect("writes");
        run(args(&other, &dir.join("o2"), None)).expect("runs, recording the errors");
        let records = read_records(&dir.join("o2")).expect("records");
        assert!(!records.is_empty());
        for r in &records {
            let e = r.error.as_deref().unwrap_or("");
            assert!(e.contains("/ground_truth") && e.contains("not a topic of the bag") && e.contains("/chem"), "{e}");
            assert!(e.contains(&dir.display().to_string()), "names the bag: {e}");
        }
        let remapped = dir.join("remapped.yaml");
        std::fs::write(&remapped, text.replace("evaluate:\n", "evaluate:\n  remaps: [\"chem:=/nose\"]\n")).expect("writes");
        run(args(&remapped, &dir.join("o3"), None)).expect("runs, recording the errors");
        for r in &read_records(&dir.join("o3")).expect("records") {
            let e = r.error.as_deref().unwrap_or("");
            assert!(e.contains("no sillage_msgs/msg/ChemSample topic /nose"), "{e}");
        }
        let _ = std::fs::remove_dir_all(&dir);
    }

    #[test]
    fn a_window_replays_only_its_span_and_a_window_past_the_end_is_refused() {
        let dir = temp("window");
        let bag = write_bag(&dir, "left", 30f64.to_radians(), false);
        let [x, y] = source_at(30f64.to_radians());
        let text = format!("bags: [{{path: {}, start: 30.0, duration: 20.0}}, {{path: {}, start: 75.0}}]\ntruth: {{topic: /truth, source: [{x}, {y}], warmup: 6.0}}\n", bag.display(), bag.display());
        let ev: Evaluate = serde_yaml::from_str(&text).expect("evaluate section");
        let e = BagEvaluator::new(&ev, "", &dir.join("points")).expect("evaluator");
        let params = dir.join("p.yaml");
        std::fs::write(&params, BASE).expect("writes");
        let r = e.replay(&params, &ev.bags[0], ev.truth.as_ref().and_then(|t| t.source.as_deref())).expect("replays");
        assert_eq!(r.span, (T0 + 30 * 1_000_000_000, T0 + 50 * 1_000_000_000));
        assert!(r.bearings.iter().all(|(t, _)| (r.span.0..=r.span.1).contains(t)) && !r.bearings.is_empty());
        // The nodes start cold at the window's start: the warm-up leaves out their first onsets.
        let m = e.metrics(&r, &ev.bags[0]).expect("scores");
        assert!(m["bearing_error"] < 1.0 && m["bearing_coverage"] > 0.95, "{m:?}");
        let past = e.replay(&params, &ev.bags[1], None).err().map(|e| format!("{e:#}")).unwrap_or_default();
        assert!(past.contains("start 75.000 s is past its end (59.990 s)") && past.contains("left"), "{past}");
        let _ = std::fs::remove_dir_all(&dir);
    }

    #[test]
    fn the_grid_scores_only_fresh_estimates_where_the_truth_is_known() {
        let s = 1_000_000_000;
        let mut truth = SourceTrack::default();
        for k in 0..=10 {
            truth.push(k * s, [1.0, 0.0, 0.0]);
        }
        // Truth from 0 to 10 s; estimates at 0 s (stale after 1 s) and from 5 s on.
        let grid = Grid { truth: &truth, from: 0, to: 10 * s, max_gap: s, max_age: s };
        let est = [(0, 0.1), (5 * s, f64::NAN), (6 * s, 0.2)];
        let scored = grid.score(&est, |v, _| v.is_finite().then_some(v));
        // 101 instants; covered: 0..=1 s (11) and 6..=7 s (11); 5..6 s holds a NaN.
        assert_eq!(scored.instants, 101);
        assert_eq!(scored.errors.len(), 22);
        assert!((scored.coverage() - 22.0 / 101.0).abs() < 1e-12);
    }
}
