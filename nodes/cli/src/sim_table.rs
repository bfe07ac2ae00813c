//! `sillage sim-table`: the efficacy table of docs/simulation.md, every scenario x strategy x
//! {odor cues on, ablated} (x parameter sets) over the same seeds, as Markdown.
//!
//! Episode `i` of every cell uses world seed `--seed + i` and start pose `i mod (number of
//! start poses)`, exactly as `sillage sim` (so `sillage sim SCENARIO --strategy S --episode i`
//! reruns any one of them). Every episode of every cell runs on one pool (`--jobs`); the
//! results do not depend on it. Figures per cell (definitions in `sillage_sim::metrics`,
//! `sillage_sim::cues` and `sillage_sim::summary`):
//! - success: first declaration correct, k/n with the Wilson 95 % interval (the headline);
//! - false declarations (total, and the episodes with one); correct after operator resets k/n;
//! - median time to a correct first declaration [s];
//! - median over episodes of the per-episode median bearing error against the true source
//!   and against the true upwind direction [deg], all cues; of the distance error
//!   |ln(estimate / truth)|;
//! - in-plume coverage by a published bearing per cue (timing / amplitude / fused), pooled.
//!
//! Writes the Markdown table to `--out` (default `out/sim-table.md`) and the summaries of
//! every cell beside it (`.json`), and prints the table.

use anyhow::{Context, Result};
use rayon::prelude::*;
use serde::Serialize;
use sillage_sim::summary::Quantiles;
use sillage_sim::{EpisodeResult, EpisodeSpec, RunOptions, Sim, StackSetup, Summary, WorldParams};
use sillage_stack::StackConfig;
use sillage_world::Scenario;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicUsize, Ordering};
use std::time::Instant;

/// The built-in strategies (the arbiter's `strategy` values).
pub const STRATEGIES: &str = "cast_surge,zigzag,spiral,reactive";

/// Arguments of `sillage sim-table`.
#[derive(clap::Args)]
pub struct Args {
    /// Scenario files or folders of them (`*.yaml` except SCHEMA files; default:
    /// config/scenarios).
    pub scenarios: Vec<PathBuf>,
    /// Strategies, comma-separated.
    #[arg(long, default_value = STRATEGIES, value_delimiter = ',')]
    pub strategies: Vec<String>,
    /// Parameter files, each one set of rows (repeatable; default: the built-in defaults).
    #[arg(long)]
    pub params: Vec<PathBuf>,
    /// Seeds (episodes) per cell.
    #[arg(long, default_value_t = 50)]
    pub seeds: usize,
    /// Base seed: episode i uses world seed S + i.
    #[arg(long, default_value_t = 0)]
    pub seed: u64,
    /// Episode length [s] (default: each scenario's time_limit).
    #[arg(long, value_name = "S")]
    pub time_limit: Option<f64>,
    /// Episodes run at once (default: the number of cores).
    #[arg(long)]
    pub jobs: Option<usize>,
    /// Markdown output (the cell summaries go beside it as .json).
    #[arg(long, default_value = "out/sim-table.md")]
    pub out: PathBuf,
    /// No progress line.
    #[arg(long)]
    pub quiet: bool,
}

/// One row of the table.
#[derive(Serialize)]
struct Cell {
    params: String,
    scenario: String,
    scenario_file: String,
    strategy: String,
    odor_cues_ablated: bool,
    summary: Summary,
}

/// The scenario files of `paths` (folders expanded to their `*.yaml`, sorted).
fn scenario_files(paths: &[PathBuf]) -> Result<Vec<PathBuf>> {
    let defaults = [PathBuf::from("config/scenarios")];
    let mut out = Vec::new();
    for p in if paths.is_empty() { &defaults[..] } else { paths } {
        if p.is_dir() {
            let mut v: Vec<PathBuf> = std::fs::read_dir(p)
                .with_context(|| format!("reading {}", p.display()))?
                .filter_map(|e| e.ok().map(|e| e.path()))
                .filter(|f| f.extension().is_some_and(|x| x == "yaml") && !f.file_stem().is_some_and(|s| s.to_string_lossy().starts_with("SCHEMA")))
                .collect();
            v.sort();
            anyhow::ensure!(!v.is_empty(), "{}: no scenario files (*.yaml)", p.display());
            out.extend(v);
        } else {
            out.push(p.clone());
        }
    }
    Ok(out)
}

fn median(q: &Option<Quantiles>) -> Option<f64> {
    q.as_ref().map(|q| q.median)
}

fn fmt(x: Option<f64>, digits: usize) -> String {
    x.map_or("–".into(), |v| format!("{v:.digits$}"))
}

fn pct(x: Option<f64>) -> String {
    x.map_or("–".into(), |v| format!("{:.0}", 100.0 * v))
}

/// The Markdown table of `cells`.
fn markdown(cells: &[Cell], seeds: usize, base_seed: u64) -> String {
    let mut out = String::new();
    let _ = writeln!(
        out,
        "{seeds} seeds per row (world seeds {base_seed}..{}); success = first declaration correct (Wilson 95 %); \
         bearing errors: median over episodes of each episode's median |error| [deg], all cues; \
         coverage: share of in-plume time with a published bearing per cue [%].\n",
        base_seed + seeds.saturating_sub(1) as u64
    );
    let _ = writeln!(
        out,
        "| parameters | scenario | strategy | odor cues | success | false decl. (episodes) | correct after resets | median time to declare [s] | bearing error vs source [deg] | vs upwind [deg] | distance \\|ln ratio\\| | coverage timing / amplitude / fused [%] |"
    );
    let _ = writeln!(out, "|---|---|---|---|---|---|---|---|---|---|---|---|");
    for c in cells {
        let s = &c.summary;
        let (lo, hi) = s.success_wilson95;
        let cov = |k: &str| pct(s.cues.coverage.get(k).copied().flatten());
        let deg = |m: &std::collections::BTreeMap<&str, Quantiles>| fmt(m.get("all").map(|q| q.median.to_degrees()), 0);
        let _ = writeln!(
            out,
            "| {} | {} | {} | {} | {}/{} ({:.0}–{:.0} %) | {} ({}) | {}/{} | {} | {} | {} | {} | {} / {} / {} |",
            c.params,
            c.scenario,
            c.strategy,
            if c.odor_cues_ablated { "ablated" } else { "on" },
            s.successes,
            s.episodes,
            100.0 * lo,
            100.0 * hi,
            s.false_declarations,
            s.episodes_with_false_declarations,
            s.correct_after_resets,
            s.episodes,
            fmt(median(&s.time_to_declare), 0),
            deg(&s.cues.bearing_error_source),
            deg(&s.cues.bearing_error_upwind),
            fmt(median(&s.cues.distance_error), 2),
            cov("timing"),
            cov("amplitude"),
            cov("fused"),
        );
    }
    out
}

/// Runs `sillage sim-table`.
pub fn run(args: Args) -> Result<()> {
    let started = Instant::now();
    anyhow::ensure!(args.seeds > 0, "--seeds must be at least 1");
    anyhow::ensure!(args.jobs != Some(0), "--jobs must be at least 1 (0 would run nothing); leave it out to use every core");
    anyhow::ensure!(!args.strategies.is_empty(), "--strategies: give at least one");
    if let Some(t) = args.time_limit {
        anyhow::ensure!(t.is_finite() && t > 0.0, "--time-limit must be > 0 [s], got {t}");
    }
    let files = scenario_files(&args.scenarios)?;
    let param_sets: Vec<Option<PathBuf>> = if args.params.is_empty() { vec![None] } else { args.params.iter().cloned().map(Some).collect() };
    let mut sims: Vec<(String, PathBuf, Sim)> = Vec::new();
    for params in &param_sets {
        for f in &files {
            let scenario = Scenario::from_path(f)?;
            for strategy in &args.strategies {
                for ablate in [false, true] {
                    let sim = Sim {
                        scenario: scenario.clone(),
                        stack: StackSetup {
                            config: StackConfig { params_file: params.clone(), ..Default::default() },
                            strategy: Some(strategy.clone()),
                            ablate_odor_cues: ablate,
                        },
                        world: WorldParams { scenario: f.display().to_string(), ..Default::default() },
                        options: RunOptions { time_limit: args.time_limit, ..Default::default() },
                    };
                    // A bad parameter file or strategy fails here, before any episode.
                    sim.build_stack().with_context(|| format!("{} with strategy {strategy}", f.display()))?;
                    let label = params.as_ref().map_or("defaults".to_string(), |p| p.display().to_string());
                    sims.push((label, f.clone(), sim));
                }
            }
        }
    }
    let jobs = args.jobs.unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |n| n.get()));
    let pool = rayon::ThreadPoolBuilder::new().num_threads(jobs).build()?;
    let tasks: Vec<(usize, usize)> = (0..sims.len()).flat_map(|c| (0..args.seeds).map(move |i| (c, i))).collect();
    let done = AtomicUsize::new(0);
    let total = tasks.len();
    let results: Vec<Result<EpisodeResult>> = pool.install(|| {
        tasks
            .par_iter()
            .map(|&(c, i)| {
                let sim = &sims[c].2;
                let r = sim.run_episode(EpisodeSpec::nth(&sim.scenario, args.seed, i), &mut |_| {}).map_err(anyhow::Error::from);
                let n = done.fetch_add(1, Ordering::Relaxed) + 1;
                if !args.quiet && (n.is_multiple_of(10) || n == total) {
                    eprint!("\rsim-table: {n}/{total} episodes, {:.0} s", started.elapsed().as_secs_f64());
                }
                r.with_context(|| format!("{} strategy {:?} episode {i}", sims[c].1.display(), sims[c].2.stack.strategy))
            })
            .collect()
    });
    if !args.quiet {
        eprintln!();
    }
    let mut per_cell: Vec<Vec<EpisodeResult>> = (0..sims.len()).map(|_| Vec::with_capacity(args.seeds)).collect();
    for ((c, _), r) in tasks.iter().zip(results) {
        per_cell[*c].push(r?);
    }
    let cells: Vec<Cell> = sims
        .iter()
        .zip(&per_cell)
        .map(|((label, file, sim), eps)| Cell {
            params: label.clone(),
            scenario: file.file_stem().map_or(sim.scenario.name.clone(), |s| s.to_string_lossy().into_owned()),
            scenario_file: file.display().to_string(),
            strategy: sim.stack.strategy.clone().unwrap_or_default(),
            odor_cues_ablated: sim.stack.ablate_odor_cues,
            summary: Summary::of(eps),
        })
        .collect();
    let text = markdown(&cells, args.seeds, args.seed);
    write(&args.out, &text, &cells)?;
    print!("{text}");
    let wall = started.elapsed().as_secs_f64();
    let simulated: f64 = cells.iter().map(|c| c.summary.sim_time).sum();
    println!("\n{total} episodes, {simulated:.0} simulated s in {wall:.1} s wall on {jobs} jobs ({:.0}x real time)", simulated / wall.max(1e-9));
    println!("wrote {}", args.out.display());
    println!("wrote {}", args.out.with_extension("json").display());
    Ok(())
}

fn write(path: &Path, text: &str, cells: &[Cell]) -> Result<()> {
    if let Some(dir) = path.parent().filter(|d| !d.as_os_str().is_empty()) {
        std::fs::create_dir_all(dir).with_context(|| format!("creating {}", dir.display()))?;
    }
    std::fs::write(path, text).with_context(|| format!("writing {}", path.display()))?;
    let json = path.with_extension("json");
    std::fs::write(&json, serde_json::to_string_pretty(cells)? + "\n").with_context(|| format!("writing {}", json.display()))?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn folders_expand_to_their_scenarios_without_the_schema() {
        let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../config/scenarios");
        let files = scenario_files(std::slice::from_ref(&root)).expect("lists");
        assert!(files.iter().any(|f| f.ends_with("demo.yaml")), "{files:?}");
        assert!(files.iter().all(|f| f.extension().is_some_and(|x| x == "yaml") && !f.to_string_lossy().contains("SCHEMA")), "{files:?}");
        let empty = std::env::temp_dir().join(format!("sillage-sim-table-{}", std::process::id()));
        std::fs::create_dir_all(&empty).expect("dir");
        let e = scenario_files(std::slice::from_ref(&empty)).expect_err("empty folder");
        assert!(e.to_string().contains("no scenario files"), "{e}");
        let _ = std::fs::remove_dir_all(&empty);
    }
}
