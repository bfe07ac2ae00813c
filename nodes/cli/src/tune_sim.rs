//! The simulator as a sweep evaluator: one closed-loop episode per (point, case), the point's
//! parameter file written once under `points/` and given to the stack as any user's file.
//!
//! Metrics of an episode (see `sillage_sim::episode`): `success` (1 or 0), `time` (time to the
//! correct declaration [s]; a failed episode counts the whole episode length, so the median
//! penalises failures), `path_ratio` (path length / straight-line distance, successes only),
//! `final_distance` and `min_distance` [m], `false_declarations`, `collisions`, `halts`.

use sillage_sim::{EpisodeSpec, RunOptions, Sim, StackSetup, WorldParams};
use sillage_stack::StackConfig;
use sillage_tune::{Case, Evaluator, Metrics, Point};
use sillage_world::Scenario;
use std::path::{Path, PathBuf};

/// Metric names of [`SimEvaluator`].
pub const METRICS: &[&str] = &["success", "time", "path_ratio", "final_distance", "min_distance", "false_declarations", "collisions", "halts"];

/// Runs episodes of the sweep's scenarios.
pub struct SimEvaluator {
    scenarios: Vec<Scenario>,
    namespace: String,
    time_limit: Option<f64>,
    points_dir: PathBuf,
}

impl SimEvaluator {
    /// Loads the scenarios; point files go to `points_dir`.
    pub fn new(scenarios: &[PathBuf], namespace: &str, time_limit: Option<f64>, points_dir: &Path) -> anyhow::Result<SimEvaluator> {
        let scenarios = scenarios.iter().map(|p| Scenario::from_path(p)).collect::<Result<Vec<_>, _>>()?;
        std::fs::create_dir_all(points_dir)?;
        Ok(SimEvaluator { scenarios, namespace: namespace.to_string(), time_limit, points_dir: points_dir.to_path_buf() })
    }

}

/// Writes `dir/<file>` (atomically) if it is not there yet: a point's parameter file, which
/// parallel cases of the point may ask for at once. The stack is built from it.
pub fn point_file(dir: &Path, file: &str, text: &str, case: &Case) -> Result<PathBuf, String> {
    let path = dir.join(file);
    if !path.exists() {
        let tmp = dir.join(format!(".{file}.{:?}.{}.{}.tmp", case.kind, case.source, case.seed_index));
        std::fs::write(&tmp, text).and_then(|()| std::fs::rename(&tmp, &path)).map_err(|e| format!("{}: {e}", path.display()))?;
    }
    Ok(path)
}

impl Evaluator for SimEvaluator {
    fn metrics(&self) -> &[&'static str] {
        METRICS
    }

    fn evaluate(&self, point: &Point, params: &str, case: &Case) -> Result<Metrics, String> {
        let file = point_file(&self.points_dir, &format!("{}.yaml", point.id), params, case)?;
        let scenario = self.scenarios.get(case.source).ok_or("no such scenario")?;
        let sim = Sim {
            scenario: scenario.clone(),
            stack: StackSetup {
                config: StackConfig { namespace: self.namespace.clone(), params_file: Some(file), ..Default::default() },
                strategy: None,
                ablate_odor_cues: false,
            },
            world: WorldParams::default(),
            options: RunOptions { time_limit: self.time_limit, ..Default::default() },
        };
        let starts = scenario.robot.start_poses.len().max(1);
        let spec = EpisodeSpec { index: case.seed_index, seed: case.seed, start_pose: case.seed_index % starts };
        let r = sim.run_episode(spec, &mut |_| {}).map_err(|e| e.to_string())?;
        let time = if r.success { r.time_to_declare.unwrap_or(r.sim_time) } else { r.sim_time };
        let path_ratio = if r.success { r.path_ratio } else { f64::NAN };
        Ok(Metrics::from([
            ("success".to_string(), f64::from(u8::from(r.success))),
            ("time".to_string(), time),
            ("path_ratio".to_string(), path_ratio),
            ("final_distance".to_string(), r.final_distance),
            ("min_distance".to_string(), r.min_distance),
            ("false_declarations".to_string(), f64::from(r.false_declarations)),
            ("collisions".to_string(), f64::from(r.collisions)),
            ("halts".to_string(), f64::from(r.halts)),
        ]))
    }
}
