//! The `sillage sim` report: `summary.json` / `summary.txt` (what was run; the headline success
//! = first declaration correct and the secondary "correct after resets", each with its Wilson
//! 95 % interval; quantiles of time to declare, path ratio and time from first contact; time
//! in each mode; the odor cues' coverage and errors, defined in `sillage_sim::cues`; totals;
//! every file written) and `episodes.json` (every episode's metrics).

use crate::sim::Args;
use anyhow::{Context, Result};
use serde::Serialize;
use sillage_sim::summary::Quantiles;
use sillage_sim::{EpisodeResult, Sim, Summary};
use std::fmt::Write as _;
use std::path::Path;

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
    /// The odor direction cues were removed from the arbiter (ablation).
    pub odor_cues_ablated: bool,
    /// Base seed.
    pub seed: u64,
    /// Episode indices run (episode i: world seed `seed + i`).
    pub episode_indices: Vec<usize>,
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
}

fn quantiles(name: &str, unit: &str, q: &Option<Quantiles>, out: &mut String) {
    match q {
        Some(q) => {
            let _ = writeln!(
                out,
                "{name:<22} median {:.2}{unit}  [q25 {:.2}, q75 {:.2}; q10 {:.2}, q90 {:.2}]  (n = {})",
                q.median, q.q25, q.q75, q.q10, q.q90, q.n
            );
        }
        None => {
            let _ = writeln!(out, "{name:<22} none (no episode has one)");
        }
    }
}

fn percent(x: Option<f64>) -> String {
    x.map_or("-".into(), |v| format!("{:.0} %", 100.0 * v))
}

/// "median [q25, q75] (n)" of per-episode medians in degrees.
fn degrees(q: Option<&Quantiles>) -> String {
    q.map_or("-".into(), |q| format!("{:.0} deg [{:.0}, {:.0}] (n = {})", q.median.to_degrees(), q.q25.to_degrees(), q.q75.to_degrees(), q.n))
}

fn cue_lines(s: &Summary, out: &mut String) {
    let c = &s.cues;
    let cov = |k: &str| percent(c.coverage.get(k).copied().flatten());
    let _ = writeln!(
        out,
        "in plume               {:.0} s; with a bearing: timing {}, amplitude {}, fused {}, any {}",
        c.in_plume_time,
        cov("timing"),
        cov("amplitude"),
        cov("fused"),
        cov("any")
    );
    for (what, m) in [("source", &c.bearing_error_source), ("upwind", &c.bearing_error_upwind)] {
        let _ = writeln!(out, "bearing error vs {what:<6} all {}", degrees(m.get("all")));
        let parts: Vec<String> = ["timing", "amplitude", "fused"].iter().map(|k| format!("{k} {}", degrees(m.get(k)))).collect();
        let _ = writeln!(out, "                       {}", parts.join("; "));
    }
    let d = c.distance_error.as_ref().map_or("- (no distance estimate)".into(), |q| format!("{:.2} [{:.2}, {:.2}] (n = {})", q.median, q.q25, q.q75, q.n));
    let _ = writeln!(out, "distance |ln ratio|     {d}");
}

impl<'a> Report<'a> {
    /// The report of a finished run.
    pub fn new(sim: &Sim, args: &Args, jobs: usize, wall_s: f64, summary: &'a Summary, outputs: Vec<String>) -> Report<'a> {
        Report {
            scenario: sim.scenario.name.clone(),
            scenario_file: args.scenario.display().to_string(),
            params: args.params.as_ref().map(|p| p.display().to_string()),
            strategy: args.strategy.clone(),
            odor_cues_ablated: args.ablate_odor_cues,
            seed: args.seed,
            episode_indices: crate::sim::episode_indices(args),
            time_limit: sim.time_limit(),
            success_radius: sim.scenario.success_radius,
            jobs,
            wall_s,
            real_time_factor: summary.sim_time / wall_s.max(1e-9),
            summary,
            outputs,
        }
    }

    /// The text form.
    pub fn text(&self) -> String {
        let s = self.summary;
        let mut out = String::new();
        let _ = writeln!(out, "sillage sim: scenario '{}' ({})", self.scenario, self.scenario_file);
        let which = match self.episode_indices.as_slice() {
            [k] => format!("episode {k} (world seed {})", self.seed + *k as u64),
            [a, .., b] => format!("episodes {a}..{b} (world seeds {}..{})", self.seed + *a as u64, self.seed + *b as u64),
            [] => "no episode".into(),
        };
        let _ = writeln!(
            out,
            "params {}, strategy {}{}, {which}, time limit {:.0} s, success radius {:.2} m",
            self.params.as_deref().unwrap_or("(defaults)"),
            self.strategy.as_deref().unwrap_or("(from the parameters)"),
            if self.odor_cues_ablated { ", ODOR CUES ABLATED (arbiter: wind and contact only)" } else { "" },
            self.time_limit,
            self.success_radius
        );
        let (lo, hi) = s.success_wilson95;
        let _ = writeln!(
            out,
            "success                {}/{} = {:.1} %  (Wilson 95 %: {:.1} - {:.1} %; first declaration correct)",
            s.successes,
            s.episodes,
            100.0 * s.success_rate,
            100.0 * lo,
            100.0 * hi
        );
        let (clo, chi) = s.correct_after_resets_wilson95;
        let _ = writeln!(
            out,
            "correct after resets   {}/{}  (Wilson 95 %: {:.1} - {:.1} %; the operator reset each false declaration)",
            s.correct_after_resets,
            s.episodes,
            100.0 * clo,
            100.0 * chi
        );
        let (rlo, rhi) = s.reached_wilson95;
        let _ = writeln!(out, "reached the source     {}/{}  (Wilson 95 %: {:.1} - {:.1} %; robot within the radius at some time)", s.reached, s.episodes, 100.0 * rlo, 100.0 * rhi);
        let outcomes: Vec<String> = s.outcomes.iter().map(|(k, v)| format!("{k} {v}")).collect();
        let _ = writeln!(out, "outcomes               {}", outcomes.join(", "));
        quantiles("time to declare", " s", &s.time_to_declare, &mut out);
        quantiles("path ratio", "", &s.path_ratio, &mut out);
        quantiles("time to reach", " s", &s.time_to_reach, &mut out);
        quantiles("path ratio to reach", "", &s.reach_path_ratio, &mut out);
        quantiles("closest approach", " m", &s.min_distance, &mut out);
        quantiles("contact to declaration", " s", &s.contact_to_declare, &mut out);
        let total: f64 = s.time_in_mode.values().sum();
        let modes: Vec<String> = s.time_in_mode.iter().map(|(m, t)| format!("{m} {:.0} %", 100.0 * t / total.max(1e-9))).collect();
        let _ = writeln!(out, "time in mode           {}", modes.join(", "));
        cue_lines(s, &mut out);
        let _ = writeln!(
            out,
            "false declarations {} (in {} episodes), halts {}, obstacle stops {}, collisions {} (in {} episodes)",
            s.false_declarations, s.episodes_with_false_declarations, s.halts, s.obstacle_stops, s.collisions, s.episodes_with_collisions
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

    /// The files [`Report::write`] writes, in the output folder.
    pub fn file_names() -> [&'static str; 3] {
        ["episodes.json", "summary.json", "summary.txt"]
    }

    /// Writes `episodes.json`, `summary.json` and `summary.txt` ([`Report::file_names`]).
    pub fn write(&self, dir: &Path, episodes: &[EpisodeResult]) -> Result<()> {
        let [per, json, text] = Report::file_names().map(|f| dir.join(f));
        std::fs::write(&per, serde_json::to_string_pretty(episodes)? + "\n").with_context(|| format!("writing {}", per.display()))?;
        std::fs::write(&json, serde_json::to_string_pretty(self)? + "\n").with_context(|| format!("writing {}", json.display()))?;
        std::fs::write(&text, self.text()).with_context(|| format!("writing {}", text.display()))?;
        Ok(())
    }
}
