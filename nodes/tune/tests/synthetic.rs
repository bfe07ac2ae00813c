//! Sweeps over a synthetic objective with a known best value: send-on-delta sampling of a
//! sinusoid, cost = lambda * report rate + mean absolute reconstruction error.
//!
//! Derivation (send-on-delta counting law, "Send-on-delta concept: an event-based data
//! reporting strategy", Sensors 6(1):49-63, 2006): a sinusoid of amplitude A and frequency f
//! gives about 4 A f / delta reports per second; between reports the held value lags the
//! signal by a nearly uniform amount in [0, delta), so the mean error is about delta / 2
//! (common practice). cost(delta) ~ 4 lambda A f / delta + delta / 2 is smallest at
//! delta* = sqrt(8 lambda A f): 0.4099 for lambda = 0.02, A = 1.05, f = 1 Hz.

use sillage_tune::rank::rank;
use sillage_tune::results::{merge, read_records, RESULTS};
use sillage_tune::run::{run_sweep, Case, Evaluator, Metrics, Shard};
use sillage_tune::sweep::{parse, LoadedSweep};
use sillage_tune::{MetricNames, Point, Ranked};
use std::path::PathBuf;
use std::sync::atomic::{AtomicUsize, Ordering};

const LAMBDA: f64 = 0.02;
const A: f64 = 1.05;
const F: f64 = 1.0;
const KEY: &str = "event_encoder.encoding.delta";

/// Cost of send-on-delta with `delta` on A sin(2 pi f t + phase), 10 s at 1 kHz.
fn cost(delta: f64, phase: f64) -> f64 {
    let (dt, n) = (1e-3, 10_000);
    let x = |i: usize| A * (2.0 * std::f64::consts::PI * F * i as f64 * dt + phase).sin();
    let (mut reference, mut reports, mut err) = (x(0), 0u32, 0.0);
    for i in 1..=n {
        let v = x(i);
        if (v - reference).abs() >= delta {
            reference = v;
            reports += 1;
        }
        err += (v - reference).abs();
    }
    LAMBDA * f64::from(reports) / (n as f64 * dt) + err / n as f64
}

fn phase(seed: u64) -> f64 {
    // Seeds spread the phase over the period (golden-ratio steps).
    (seed as f64 * 0.618_033_988_75).fract() * std::f64::consts::TAU
}

struct SendOnDelta;

impl Evaluator for SendOnDelta {
    fn metrics(&self) -> &[&'static str] {
        &["cost"]
    }
    fn evaluate(&self, p: &Point, params: &str, case: &Case) -> Result<Metrics, String> {
        let delta = p.get(KEY).and_then(|v| v.as_f64()).ok_or("no delta")?;
        // The point's parameter file carries the value the event encoder would load.
        if !params.contains(&format!("delta: {delta}")) {
            return Err(format!("parameter file does not set delta = {delta}"));
        }
        Ok(Metrics::from([("cost".to_string(), cost(delta, phase(case.seed)))]))
    }
}

fn sweep(design: &str, extra: &str) -> LoadedSweep {
    let text = format!(
        "name: sod\ndesign: {design}\nparameters:\n  - {{key: {KEY}, min: 0.05, max: 1.0, {extra}}}\n  - {{key: arbiter.surge.speed, values: [0.2, 0.3]}}\nevaluate: {{scenarios: [synthetic.yaml], seeds: 3, base_seed: 1}}\nobjective:\n  - {{metric: cost, stat: mean, weight: -1.0}}\n"
    );
    let s = parse(&text, "sod.yaml").unwrap_or_else(|e| panic!("{e}"));
    LoadedSweep::from_parts(s, "sod.yaml".into(), "sod".into(), None, MetricNames { scenarios: SendOnDelta.metrics(), bags: &[] }).unwrap_or_else(|e| panic!("{e}"))
}

fn folder(name: &str) -> PathBuf {
    let d = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join(format!("tune-{name}"));
    let _ = std::fs::remove_dir_all(&d);
    d
}

fn run(s: &LoadedSweep, dir: &std::path::Path, shard: Shard, stop_after: Option<usize>) -> Vec<Ranked> {
    let n = AtomicUsize::new(0);
    let stop = || stop_after.is_some_and(|k| n.fetch_add(1, Ordering::SeqCst) >= k);
    run_sweep(s, &SendOnDelta, dir, shard, &|_, _| {}, &stop).unwrap_or_else(|e| panic!("{e}"));
    rank(&s.sweep, &read_records(dir).unwrap_or_else(|e| panic!("{e}")))
}

fn best_delta(r: &[Ranked]) -> f64 {
    r[0].values.iter().find(|(k, _)| k == KEY).and_then(|(_, v)| v.as_f64()).unwrap_or(f64::NAN)
}

#[test]
fn grid_and_latin_hypercube_find_the_known_best_delta() {
    let analytic = (8.0 * LAMBDA * A * F).sqrt();
    // Brute force on a fine grid, the same three phases: the true best of this cost.
    let mean_cost = |d: f64| (1..=3).map(|s| cost(d, phase(s))).sum::<f64>() / 3.0;
    let fine = (50..=1000).map(|i| f64::from(i) * 1e-3).min_by(|a, b| mean_cost(*a).total_cmp(&mean_cost(*b))).unwrap_or(f64::NAN);
    println!("analytic delta* = {analytic:.4}, brute force = {fine:.3}");
    assert!((fine - analytic).abs() < 0.05, "derivation vs brute force: {fine} vs {analytic}");

    let grid = run(&sweep("{kind: grid}", "steps: 20"), &folder("grid"), Shard::ALL, None);
    assert_eq!(grid.len(), 40);
    let g = best_delta(&grid);
    println!("grid best delta = {g:.3}, score {:.4} [{:.4}, {:.4}]", grid[0].score, grid[0].score_low, grid[0].score_high);
    // The tuner picks the grid value a direct evaluation says is best (the cost is flat and
    // jagged near its minimum, as report counts are integers), and that value is in the basin.
    let direct = (0..20).map(|i| 0.05 + 0.05 * f64::from(i)).min_by(|a, b| mean_cost(*a).total_cmp(&mean_cost(*b))).unwrap_or(f64::NAN);
    assert!((g - direct).abs() < 1e-9, "tuner {g}, direct {direct}");
    assert!((grid[0].score + mean_cost(g)).abs() < 1e-12, "score is minus the mean cost");
    assert!(mean_cost(g) <= 1.02 * mean_cost(fine) && (g - analytic).abs() <= 0.1, "best {g}");
    assert!(grid.last().is_some_and(|w| !w.overlaps_best), "the worst point is clearly worse");

    let lhs = run(&sweep("{kind: lhs, samples: 30, seed: 11}", "scale: log"), &folder("lhs"), Shard::ALL, None);
    let l = best_delta(&lhs);
    println!("lhs best delta = {l:.3}, mean cost {:.4} (fine minimum {:.4})", mean_cost(l), mean_cost(fine));
    assert!(mean_cost(l) <= 1.03 * mean_cost(fine) && (l - analytic).abs() <= 0.15, "lhs best {l}");
}

#[test]
fn shards_merged_rank_like_one_run() {
    let s = sweep("{kind: grid}", "steps: 7");
    let whole = run(&s, &folder("whole"), Shard::ALL, None);
    let dirs: Vec<PathBuf> = (0..3).map(|i| folder(&format!("shard{i}"))).collect();
    let mut counts = Vec::new();
    for (i, d) in dirs.iter().enumerate() {
        run(&s, d, Shard { index: i, count: 3 }, None);
        counts.push(read_records(d).unwrap_or_default().len());
    }
    assert_eq!(counts.iter().sum::<usize>(), 14 * 3, "shards are disjoint and cover the sweep: {counts:?}");
    let (merged_sweep, records) = merge(&dirs).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(rank(&merged_sweep.sweep, &records), whole);
    // A folder of another sweep is refused.
    let other = folder("other");
    run(&sweep("{kind: grid}", "steps: 3"), &other, Shard::ALL, None);
    let e = merge(&[dirs[0].clone(), other]).err().map(|e| e.to_string()).unwrap_or_default();
    assert!(e.contains("another sweep"), "{e}");
}

#[test]
fn an_interrupted_sweep_resumes_to_the_same_result() {
    let s = sweep("{kind: grid}", "steps: 10");
    let whole = run(&s, &folder("uninterrupted"), Shard::ALL, None);
    let dir = folder("interrupted");
    let partial = run(&s, &dir, Shard::ALL, Some(17));
    let kept = read_records(&dir).unwrap_or_default().len();
    assert!(kept > 0 && kept < 60, "interrupted after {kept} of 60 units");
    assert_ne!(partial, whole);
    // A write cut in the middle of a line.
    let path = dir.join(RESULTS);
    let mut text = std::fs::read_to_string(&path).unwrap_or_default();
    text.push_str("{\"point\":\"12");
    std::fs::write(&path, text).unwrap_or_else(|e| panic!("{e}"));
    let report = run_sweep(&s, &SendOnDelta, &dir, Shard::ALL, &|_, _| {}, &|| false).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!((report.skipped, report.evaluated), (kept, 60 - kept));
    let records = read_records(&dir).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(records.len(), 60, "every unit once");
    assert_eq!(rank(&s.sweep, &records), whole);
}
