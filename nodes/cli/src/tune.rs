//! `sillage tune SWEEP [--jobs J] [--out DIR] [--shard I/N]`: evaluates every point of a sweep
//! file (docs/tuning.md) against the simulator (scenario episodes) and recorded bags (replays
//! scored against a truth topic), in parallel, streaming one JSON line per finished case to
//! `DIR/results.jsonl`; a rerun with the same folder skips what is there, so an interrupted
//! sweep resumes. Then ranks the points (95 % intervals over cases) and writes `ranking.csv`,
//! `ranking.json`, `best_params.yaml` and `plots/`.
//!
//! `--shard I/N` runs a deterministic slice (units numbered point-major, those equal to I
//! modulo N), so a batch scheduler can spread one sweep over machines; `sillage tune merge
//! DIR... [--out DIR]` joins their folders and writes the same outputs as one run would.

#[path = "tune_bag.rs"]
mod bag_eval;
#[path = "tune_report.rs"]
mod report;
#[path = "tune_sim.rs"]
pub(crate) mod sim_eval;

use anyhow::{Context, Result};
use crate::progress::Progress;
use std::fmt::Write as _;
use std::sync::Mutex;
use sillage_tune::rank::rank;
use sillage_tune::results::{self, read_records, ResultsFile};
use sillage_tune::run::{run_sweep, Shard};
use sillage_tune::{Case, CaseKind, Evaluator, LoadedSweep, MetricNames, Metrics, Point};
use std::path::{Path, PathBuf};

/// Arguments of `sillage tune`.
#[derive(clap::Args)]
#[command(args_conflicts_with_subcommands = true, subcommand_negates_reqs = true)]
pub struct Args {
    /// `merge DIR...`: join the folders of a sharded sweep.
    #[command(subcommand)]
    pub command: Option<Command>,
    /// The sweep file (YAML).
    #[arg(required = true)]
    pub sweep: Option<PathBuf>,
    /// Parallel cases (episodes or bag replays; default: every core).
    #[arg(long, short)]
    pub jobs: Option<usize>,
    /// Output folder (default: out/tune-<sweep name>, with -shard-I-of-N for a shard).
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Run only this slice of the sweep, I/N with 0 <= I < N.
    #[arg(long, value_name = "I/N")]
    pub shard: Option<String>,
    /// Do not draw the sensitivity plots.
    #[arg(long)]
    pub no_plots: bool,
    /// No progress bar.
    #[arg(long)]
    pub quiet: bool,
}

/// `sillage tune` subcommands.
#[derive(clap::Subcommand)]
pub enum Command {
    /// Join the result folders of the shards of one sweep, then rank and write the outputs.
    Merge {
        /// Shard output folders.
        #[arg(required = true)]
        dirs: Vec<PathBuf>,
        /// Output folder (default: out/tune-<sweep name>-merged).
        #[arg(long)]
        out: Option<PathBuf>,
        /// Do not draw the sensitivity plots.
        #[arg(long)]
        no_plots: bool,
    },
}

/// Runs the subcommand.
pub fn run(args: Args) -> Result<()> {
    if let Some(Command::Merge { dirs, out, no_plots }) = args.command {
        return merge(&dirs, out, no_plots);
    }
    let path = args.sweep.context("a sweep file is needed")?;
    let mut sweep = LoadedSweep::load(&path, METRICS)?;
    sweep.digest_bags()?;
    let shard = match &args.shard {
        Some(s) => Shard::parse(s)?,
        None => Shard::ALL,
    };
    let out = args.out.unwrap_or_else(|| {
        let suffix = if shard == Shard::ALL { String::new() } else { format!("-shard-{}-of-{}", shard.index, shard.count) };
        PathBuf::from("out").join(format!("tune-{}{suffix}", sweep.name))
    });
    let eval = Evaluators::new(&sweep, &out.join("points"))?;
    let pool = rayon::ThreadPoolBuilder::new().num_threads(args.jobs.unwrap_or(0)).build()?;
    let points = sillage_tune::design::points(&sweep).len();
    eprintln!(
        "sweep '{}': {points} points x {} cases, shard {}/{}, {} threads, results in {}",
        sweep.name,
        sillage_tune::run::cases(&sweep).len(),
        shard.index,
        shard.count,
        pool.current_num_threads(),
        out.display()
    );
    let bar: Mutex<Option<Progress>> = Mutex::new(None);
    let progress = |done: usize, total: usize| {
        if let Ok(mut b) = bar.lock() {
            if b.is_none() {
                *b = Progress::new("tune", "cases", total as f64, args.quiet);
            }
            if let Some(b) = b.as_mut() {
                b.set(done as f64);
            }
        }
    };
    let report = pool.install(|| run_sweep(&sweep, &eval, &out, shard, &progress, &crate::signals::requested))?;
    if let Some(b) = bar.into_inner().ok().flatten() {
        b.finish();
    }
    eprintln!("{} cases in this shard: {} already done, {} run now", report.shard_units, report.skipped, report.evaluated);
    if shard != Shard::ALL {
        eprintln!("shard {}/{}: the ranking covers this shard only; join the shards with `sillage tune merge DIR...`", shard.index, shard.count);
    }
    let interrupted = crate::signals::interrupted_note().map(|n| {
        format!("{n}: {} of the shard's {} cases are in results.jsonl; the same command resumes", report.skipped + report.evaluated, report.shard_units)
    });
    finish(&out, &sweep, read_records(&out)?, !args.no_plots, interrupted)
}

fn merge(dirs: &[PathBuf], out: Option<PathBuf>, no_plots: bool) -> Result<()> {
    let (sweep, records) = results::merge(dirs)?;
    let out = out.unwrap_or_else(|| PathBuf::from("out").join(format!("tune-{}-merged", sweep.name)));
    anyhow::ensure!(!dirs.contains(&out), "{}: the merge output must be a new folder, not one of the shards", out.display());
    results::open_folder(&out, &sweep, Shard::ALL)?;
    let have = results::done_units(&read_records(&out)?);
    let file = ResultsFile::open(&out)?;
    for r in records.iter().filter(|r| !have.contains(&r.unit())) {
        file.append(r)?;
    }
    let points = sillage_tune::design::points(&sweep).len() * sillage_tune::run::cases(&sweep).len();
    let merged = read_records(&out)?;
    eprintln!("merged {} folders: {} of {points} cases", dirs.len(), merged.len());
    finish(&out, &sweep, merged, !no_plots, None)
}

/// Ranks, writes the outputs and `summary.txt` (the printed table; first a line saying the run
/// was interrupted, when it was).
fn finish(out: &Path, sweep: &LoadedSweep, records: Vec<sillage_tune::Record>, plots: bool, interrupted: Option<String>) -> Result<()> {
    let errors: Vec<&sillage_tune::Record> = records.iter().filter(|r| r.error.is_some()).collect();
    for r in errors.iter().take(5) {
        eprintln!("warning: point {} case {}: {}", r.point, r.case, r.error.as_deref().unwrap_or(""));
    }
    let ranked = rank(&sweep.sweep, &records);
    let mut files = report::write(out, sweep, &ranked, plots)?;
    let mut text = String::new();
    if let Some(i) = &interrupted {
        let _ = writeln!(text, "INTERRUPTED: {i}");
    }
    let _ = writeln!(text, "rank  score [95 % interval]            cases  values");
    for r in ranked.iter().take(5) {
        let values: Vec<String> = r.values.iter().map(|(k, v)| format!("{k}={}", v.label())).collect();
        let terms: Vec<String> = r.terms.iter().map(|t| format!("{} {:.3} [{:.3}, {:.3}]", t.metric, t.estimate, t.low, t.high)).collect();
        let _ = writeln!(text, "{:>4}  {:>8.4} [{:.4}, {:.4}]  {:>5}  {}  ({})", r.rank, r.score, r.score_low, r.score_high, r.cases, values.join(" "), terms.join("; "));
    }
    if !errors.is_empty() {
        let _ = writeln!(text, "{} cases failed to run (see results.jsonl)", errors.len());
    }
    let summary = out.join("summary.txt");
    std::fs::write(&summary, &text).with_context(|| format!("{}: cannot write", summary.display()))?;
    files.push(summary);
    print!("{text}");
    for f in files {
        println!("wrote {}", f.display());
    }
    Ok(())
}

/// The metric names of the evaluators.
pub(crate) const METRICS: MetricNames = MetricNames { scenarios: sim_eval::METRICS, bags: bag_eval::METRICS };

/// Validates a sweep file as `sillage tune` would load it (for `sillage check`), and builds every
/// point's parameter file (a value out of a node's range is refused with its key); the bags
/// themselves are not opened (they may not be recorded yet).
pub fn check_sweep(path: &std::path::Path) -> Result<(), String> {
    let s = LoadedSweep::load(path, METRICS).map_err(|e| e.to_string())?;
    if let Some(p) = s.sweep.evaluate.truth.as_ref().and_then(|t| t.scenario.as_ref()) {
        bag_eval::scenario_truth(p).map_err(|e| format!("{e:#}"))?;
    }
    for p in sillage_tune::design::points(&s) {
        sillage_tune::params_out::point_params_text(s.base_text.as_deref(), &s.sweep.namespace, &p, &[]).map_err(|e| e.to_string())?;
    }
    Ok(())
}

/// The simulator for scenario cases and the bag replayer for bag cases.
struct Evaluators {
    sim: Option<sim_eval::SimEvaluator>,
    bags: Option<bag_eval::BagEvaluator>,
    metrics: Vec<&'static str>,
}

impl Evaluators {
    fn new(sweep: &LoadedSweep, points_dir: &Path) -> Result<Evaluators> {
        let (ev, ns) = (&sweep.sweep.evaluate, &sweep.sweep.namespace);
        let sim = (!ev.scenarios.is_empty()).then(|| sim_eval::SimEvaluator::new(&ev.scenarios, ns, ev.time_limit, points_dir)).transpose()?;
        let bags = (!ev.bags.is_empty()).then(|| bag_eval::BagEvaluator::new(ev, ns, points_dir)).transpose()?;
        Ok(Evaluators { sim, bags, metrics: sim_eval::METRICS.iter().chain(bag_eval::METRICS).copied().collect() })
    }
}

impl Evaluator for Evaluators {
    fn metrics(&self) -> &[&'static str] {
        &self.metrics
    }

    fn evaluate(&self, point: &Point, params: &str, case: &Case) -> Result<Metrics, String> {
        match case.kind {
            CaseKind::Scenario => self.sim.as_ref().ok_or("no scenario in the sweep")?.evaluate(point, params, case),
            CaseKind::Bag => self.bags.as_ref().ok_or("no bag in the sweep")?.evaluate(point, params, case),
        }
    }
}
