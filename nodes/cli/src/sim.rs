//! `sillage sim SCENARIO`: seeded closed-loop episodes against the simulated world, in parallel.
//!
//! Episode `i` uses world seed `--seed + i` and start pose `i mod (number of start poses)`;
//! each episode is a pure function of the scenario, the parameters and its seed, so the results
//! are the same whatever `--jobs`, and `--episode K` (with the same `--seed`) reruns episode K
//! of a batch alone, exactly. Writes to the output folder (default `out/sim-<scenario
//! name>`): `episodes.json` (per-episode metrics), `summary.json` and `summary.txt` (headline
//! success = first declaration correct, and correct after resets, with Wilson 95 % intervals;
//! quantiles of time and path ratio; the odor cues' figures), `params.yaml` (the effective
//! parameters of every node: `sillage replay --params` takes it), `plots/`, and with
//! `--record` rosbag2 MCAP bags that `sillage replay` reads: `bag/` for one episode (the first
//! run, or `--record K`), `bags/episode-K/` for each with `--record all`. The summary lists
//! every file written. `--ablate-odor-cues` runs the arbiter without the odor direction cues
//! (`cues.use_bearing` and `cues.use_posterior` false).

#[path = "sim_plots.rs"]
mod sim_plots;
#[path = "sim_report.rs"]
mod sim_report;

use sim_plots::Format;
use anyhow::{Context, Result};
use rayon::prelude::*;
use sillage_bag::{BagWriter, QosProfile, WriterOptions};
use sillage_core::executor::{remap_topic, Placement, Record};
use sillage_core::{NodeCore, Qos};
use sillage_sim::{EpisodeResult, EpisodeSpec, RunOptions, Sim, StackSetup, Summary, WorldParams};
use std::str::FromStr;
use sillage_stack::StackConfig;
use sillage_world::Scenario;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::time::Instant;

/// Arguments of `sillage sim`.
#[derive(clap::Args)]
pub struct Args {
    /// Scenario file (see config/scenarios/SCHEMA.md).
    pub scenario: PathBuf,
    /// ROS 2 parameter file for the nodes (default: built-in defaults).
    #[arg(long)]
    pub params: Option<PathBuf>,
    /// Arbiter strategy replacing the parameter file's (cast_surge, zigzag, spiral, reactive).
    #[arg(long)]
    pub strategy: Option<String>,
    /// Number of episodes.
    #[arg(long, default_value_t = 20)]
    pub episodes: usize,
    /// Run only episode K of the batch (its world seed and start pose), to reproduce it.
    #[arg(long, value_name = "K", conflicts_with = "episodes")]
    pub episode: Option<usize>,
    /// Base seed: episode i uses world seed S + i.
    #[arg(long, default_value_t = 0)]
    pub seed: u64,
    /// Episodes run at once (default: the number of cores).
    #[arg(long)]
    pub jobs: Option<usize>,
    /// Output folder (default: out/sim-<scenario name>).
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Record episodes as rosbag2 MCAP bags: no value, the first episode run (OUT/bag); K,
    /// episode K (OUT/bag); `all`, every episode (OUT/bags/episode-K).
    #[arg(long, value_name = "K|all", num_args = 0..=1, default_missing_value = "first")]
    pub record: Option<RecordSel>,
    /// Remove the odor direction cues from the arbiter (ablation: wind and contact only).
    #[arg(long)]
    pub ablate_odor_cues: bool,
    /// Episode length [s] (default: the scenario's time_limit).
    #[arg(long, value_name = "S")]
    pub time_limit: Option<f64>,
    /// End an episode at its first false declaration (default: the search restarts).
    #[arg(long)]
    pub stop_on_false_declaration: bool,
    /// Plot image format.
    #[arg(long, value_enum, default_value = "svg")]
    pub plot_format: Format,
    /// Do not draw plots.
    #[arg(long)]
    pub no_plots: bool,
    /// Do not show a progress bar.
    #[arg(long)]
    pub quiet: bool,
}

/// Which episodes `--record` records.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RecordSel {
    /// The first episode of the run.
    First,
    /// Episode K.
    Index(usize),
    /// Every episode.
    All,
}

impl FromStr for RecordSel {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        match s {
            "first" => Ok(RecordSel::First),
            "all" => Ok(RecordSel::All),
            k => k.parse().map(RecordSel::Index).map_err(|_| format!("expected an episode number or `all`, got `{k}`")),
        }
    }
}

/// The episode indices a run covers: `--episode K` alone, else `0..--episodes`.
pub fn episode_indices(args: &Args) -> Vec<usize> {
    match args.episode {
        Some(k) => vec![k],
        None => (0..args.episodes).collect(),
    }
}

/// Where episode `i` is recorded, if it is.
fn bag_dir(out: &Path, sel: Option<RecordSel>, first: usize, i: usize) -> Option<PathBuf> {
    match sel? {
        RecordSel::First if i == first => Some(out.join("bag")),
        RecordSel::Index(k) if i == k => Some(out.join("bag")),
        RecordSel::All => Some(out.join("bags").join(format!("episode-{i}"))),
        _ => None,
    }
}

/// QoS class of every topic of the graph (stack and world), for the recorded bag.
fn topic_qos(sim: &Sim, built: &sillage_sim::setup::BuiltStack, world: &dyn NodeCore) -> BTreeMap<String, Qos> {
    let cfg = &sim.stack.config;
    let placement = Placement { namespace: cfg.namespace.clone(), name: None, remaps: cfg.remaps.clone() };
    let mut out = BTreeMap::new();
    let mut add = |core: &dyn NodeCore| {
        for p in core.inputs().into_iter().chain(core.outputs()) {
            out.entry(remap_topic(&p.topic, &placement, core.name())).or_insert(p.qos);
        }
    };
    for (_, i) in &built.nodes {
        if let Some(n) = built.executor.node(*i) {
            add(n);
        }
    }
    add(world);
    out
}

fn progress_bar(args: &Args) -> Option<indicatif::ProgressBar> {
    if args.quiet {
        return None;
    }
    let bar = indicatif::ProgressBar::new(episode_indices(args).len() as u64);
    let style = indicatif::ProgressStyle::with_template("{spinner} sim [{bar:40}] {pos}/{len} episodes, {elapsed} elapsed, eta {eta}")
        .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar());
    bar.set_style(style.progress_chars("=> "));
    Some(bar)
}

/// Runs `sillage sim`.
pub fn run(args: Args) -> Result<()> {
    let started = Instant::now();
    anyhow::ensure!(args.episodes > 0, "--episodes must be at least 1");
    anyhow::ensure!(args.jobs != Some(0), "--jobs must be at least 1 (0 would run nothing); leave it out to use every core");
    let indices = episode_indices(&args);
    if let Some(RecordSel::Index(k)) = args.record {
        anyhow::ensure!(indices.contains(&k), "--record {k}: episode {k} is not run (this run covers episodes {}..{})", indices[0], indices[indices.len() - 1]);
    }
    let scenario = Scenario::from_path(&args.scenario)?;
    let sim = Sim {
        stack: StackSetup {
            config: StackConfig { params_file: args.params.clone(), ..Default::default() },
            strategy: args.strategy.clone(),
            ablate_odor_cues: args.ablate_odor_cues,
        },
        world: WorldParams { scenario: args.scenario.display().to_string(), ..Default::default() },
        options: RunOptions { time_limit: args.time_limit, stop_on_false_declaration: args.stop_on_false_declaration, ..Default::default() },
        scenario,
    };
    if let Some(t) = args.time_limit {
        anyhow::ensure!(t.is_finite() && t > 0.0, "--time-limit must be > 0 [s], got {t}");
    }
    let out_dir = args.out.clone().unwrap_or_else(|| PathBuf::from("out").join(format!("sim-{}", sim.scenario.name)));
    std::fs::create_dir_all(&out_dir).with_context(|| format!("creating {}", out_dir.display()))?;

    // Build once up front: a bad parameter file or strategy fails here, before any episode.
    let built = sim.build_stack()?;
    let first = EpisodeSpec::nth(&sim.scenario, args.seed, indices[0]);
    let world0 = sim.world_node(&first, built.cmd_vel_type)?;
    let qos = topic_qos(&sim, &built, &world0);
    let world_section = sillage_core::params::to_value(world0.params());
    let params_text = sillage_sim::setup::effective_params_text(&built, &sim.stack.config.namespace, &[(sillage_sim::NODE_NAME, world_section)]);
    let params_path = out_dir.join("params.yaml");
    std::fs::write(&params_path, &params_text).with_context(|| format!("writing {}", params_path.display()))?;
    drop(built);

    let jobs = args.jobs.unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |n| n.get()));
    let pool = rayon::ThreadPoolBuilder::new().num_threads(jobs).build()?;
    let bar = progress_bar(&args);
    let (results, map) = pool.install(|| {
        rayon::join(
            || {
                indices
                    .par_iter()
                    .map(|&i| {
                        let bag = bag_dir(&out_dir, args.record, indices[0], i);
                        let r = run_one(&sim, &args, i, i == indices[0], bag.as_deref().map(|d| (d, &qos)));
                        if let Some(b) = &bar {
                            b.inc(1);
                        }
                        r
                    })
                    .collect::<Vec<Result<(EpisodeResult, Option<String>)>>>()
            },
            || sim_plots::mean_map(&sim.scenario, first.seed, sim.time_limit()),
        )
    });
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    let mut episodes = Vec::with_capacity(results.len());
    let mut outputs = vec![params_path.display().to_string()];
    for r in results {
        let (e, bag) = r?;
        outputs.extend(bag);
        episodes.push(e);
    }
    let summary = Summary::of(&episodes);
    let wall = started.elapsed().as_secs_f64();
    if !args.no_plots {
        match sim_plots::write(&out_dir.join("plots"), args.plot_format, &sim.scenario, &episodes, map.as_ref()) {
            Ok(paths) => outputs.extend(paths.iter().map(|p| p.display().to_string())),
            Err(e) => eprintln!("warning: plots not drawn: {e}"),
        }
    }
    outputs.extend(sim_report::Report::file_names().iter().map(|f| out_dir.join(f).display().to_string()));
    let report = sim_report::Report::new(&sim, &args, jobs, wall, &summary, outputs);
    report.write(&out_dir, &episodes)?;
    print!("{}", report.text());
    Ok(())
}

/// Episode `i`; the first of the run keeps a timeline for the plots; with `record`, the bag
/// is written.
fn run_one(sim: &Sim, args: &Args, i: usize, first: bool, record: Option<(&Path, &BTreeMap<String, Qos>)>) -> Result<(EpisodeResult, Option<String>)> {
    let spec = EpisodeSpec::nth(&sim.scenario, args.seed, i);
    let mut sim = sim.clone();
    if first {
        sim.options.timeline_period = Some(0.1);
    }
    let Some((dir, qos)) = record else { return Ok((sim.run_episode(spec, &mut |_| {})?, None)) };
    record_episode(&sim, spec, dir, qos)
}

fn record_episode(sim: &Sim, spec: EpisodeSpec, dir: &Path, qos: &BTreeMap<String, Qos>) -> Result<(EpisodeResult, Option<String>)> {
    if let Some(parent) = dir.parent() {
        std::fs::create_dir_all(parent).with_context(|| format!("creating {}", parent.display()))?;
    }
    let mut writer = BagWriter::create(dir, WriterOptions { overwrite: true, ..Default::default() })?;
    let mut error = None;
    let result = sim.run_episode(spec, &mut |r: &Record| {
        if error.is_none() {
            let q = qos.get(r.topic).copied().unwrap_or(Qos::Reliable);
            if let Err(e) = writer.write_on(r.topic, r.stamp, r.msg, &[QosProfile::from(q)]) {
                error = Some(e);
            }
        }
    })?;
    if let Some(e) = error {
        return Err(e.into());
    }
    let s = writer.finish()?;
    Ok((result, Some(format!("{} ({} messages, episode {})", s.dir.display(), s.metadata.message_count, spec.index))))
}
