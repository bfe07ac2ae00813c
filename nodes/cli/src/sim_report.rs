//! The `sillage sim` report: `summary.json` / `summary.txt` (what was run, success rate with its
//! Wilson 95 % interval, quantiles of time to declare and path ratio, totals) and
//! `episodes.json` (every episode's metrics).

use crate::sim::Args;
use anyhow::{Context, Result};
use serde::Serialize;
use sillage_sim::summary::Quantiles;
use sillage_sim::{EpisodeResult, Sim, Summary};
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

/// What `summary.json` holds.
#[derive(Debug, Serialize)]
pub struct Report<'a> {
    /// Scenario name.
    pub scenario: String,
    /// Scenario file.
    pub scenario_file: String,
    /// Parameter file given (None: defaults).
    pub params: Option<String>,
    /// Strategy override.
    pub strategy: Option<String>,
    /// Base seed.
    pub seed: u64,
    /// Episode length [s].
    pub time_limit: f64,
    /// Success radius [m].
    pub success_radius: f64,
    /// Parallel jobs.
    pub jobs: usize,
    /// Wall-clock time [s].
    pub wall_s: f64,
    /// Simulated seconds per wall second (all jobs together).
    pub real_time_factor: f64,
    /// Statistics.
    pub summary: &'a Summary,
    /// Files written.
    pub outputs: Vec<String>,
    /// Why the run ended before its last episode (an interrupt), if it did.
    pub interrupted: Option<String>,
}

fn quantiles(name: &str, unit: &str, q: &Option<Quantiles>, none: &str, out: &mut String) {
    match q {
        Some(q) => {
            let _ = writeln!(
                out,
                "{name:<22} median {:.2}{unit}  [q25 {:.2}, q75 {:.2}; q10 {:.2}, q90 {:.2}]  (n = {})",
                q.median, q.q25, q.q75, q.q10, q.q90, q.n
            );
        }
        None => {
            let _ = writeln!(out, "{name:<22} none ({none})");
        }
    }
}

impl<'a> Report<'a> {
    /// The report of a finished run.
    pub fn new(sim: &Sim, args: &Args, jobs: usize, wall_s: f64, summary: &'a Summary, outputs: Vec<String>) -> Report<'a> {
        Report {
            scenario: sim.scenario.name.clone(),
            scenario_file: args.scenario.display().to_string(),
            params: args.params.as_ref().map(|p| p.display().to_string()),
            strategy: args.strategy.clone(),
            seed: args.seed,
            time_limit: sim.time_limit(),
            success_radius: sim.scenario.success_radius,
            jobs,
            wall_s,
            real_time_factor: summary.sim_time / wall_s.max(1e-9),
            summary,
            outputs,
            interrupted: crate::signals::interrupted_note().map(|n| format!("{n}: {} of {} episodes ran (0..{})", summary.episodes, args.episodes, summary.episodes)),
        }
    }

    /// The text form.
    pub fn text(&self) -> String {
        let s = self.summary;
        let mut out = String::new();
        let _ = writeln!(out, "sillage sim: scenario '{}' ({})", self.scenario, self.scenario_file);
        if let Some(i) = &self.interrupted {
            let _ = writeln!(out, "INTERRUPTED: {i}");
        }
        let _ = writeln!(
            out,
            "params {}, strategy {}, seeds {}..{}, time limit {:.0} s, success radius {:.2} m",
            self.params.as_deref().unwrap_or("(defaults)"),
            self.strategy.as_deref().unwrap_or("(from the parameters)"),
            self.seed,
            self.seed + s.episodes as u64 - 1,
            self.time_limit,
            self.success_radius
        );
        let (lo, hi) = s.success_wilson95;
        let _ = writeln!(
            out,
            "success                {}/{} = {:.1} %  (Wilson 95 %: {:.1} - {:.1} %)",
            s.successes,
            s.episodes,
            100.0 * s.success_rate,
            100.0 * lo,
            100.0 * hi
        );
        let (rlo, rhi) = s.reached_wilson95;
        let _ = writeln!(out, "reached the source     {}/{}  (Wilson 95 %: {:.1} - {:.1} %; robot within the radius at some time)", s.reached, s.episodes, 100.0 * rlo, 100.0 * rhi);
        let outcomes: Vec<String> = s.outcomes.iter().map(|(k, v)| format!("{k} {v}")).collect();
        let _ = writeln!(out, "outcomes               {}", outcomes.join(", "));
        quantiles("time to declare", " s", &s.time_to_declare, "no successful episode", &mut out);
        quantiles("path ratio", "", &s.path_ratio, "no successful episode", &mut out);
        quantiles("time to reach", " s", &s.time_to_reach, "no episode reached a source", &mut out);
        quantiles("path ratio to reach", "", &s.reach_path_ratio, "no episode reached a source", &mut out);
        quantiles("closest approach", " m", &s.min_distance, "no episode", &mut out);
        let _ = writeln!(
            out,
            "false declarations {}, halts {}, commands stopped for obstacles {} (control ticks), collisions {} (in {} episodes)",
            s.false_declarations, s.halts, s.obstacle_stops, s.collisions, s.episodes_with_collisions
        );
        for (reason, n) in &s.halt_reasons {
            let _ = writeln!(out, "  halted {n}x: {reason}");
        }
        let _ = writeln!(out, "{:.0} simulated s in {:.2} s wall on {} jobs ({:.0}x real time)", s.sim_time, self.wall_s, self.jobs, self.real_time_factor);
        for o in &self.outputs {
            let _ = writeln!(out, "wrote {o}");
        }
        out
    }

    /// Writes `summary.json`, `summary.txt` and `episodes.json`; returns the first two paths.
    pub fn write(&self, dir: &Path, episodes: &[EpisodeResult]) -> Result<(PathBuf, PathBuf)> {
        let json = dir.join("summary.json");
        let text = dir.join("summary.txt");
        let per = dir.join("episodes.json");
        std::fs::write(&per, serde_json::to_string_pretty(episodes)? + "\n").with_context(|| format!("writing {}", per.display()))?;
        std::fs::write(&json, serde_json::to_string_pretty(self)? + "\n").with_context(|| format!("writing {}", json.display()))?;
        std::fs::write(&text, self.text()).with_context(|| format!("writing {}", text.display()))?;
        Ok((json, text))
    }
}
