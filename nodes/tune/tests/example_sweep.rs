//! The shipped example sweeps load, and every point of them makes a parameter file that every
//! node takes.

use sillage_tune::design::points;
use sillage_tune::params_out::point_params_text;
use sillage_tune::LoadedSweep;
use std::path::Path;

#[test]
fn shipped_sweeps_load_and_their_points_build_the_stack() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../config/sweeps");
    let mut n = 0;
    for entry in std::fs::read_dir(&dir).unwrap_or_else(|e| panic!("{}: {e}", dir.display())) {
        let path = entry.unwrap_or_else(|e| panic!("{e}")).path();
        if path.extension().and_then(|x| x.to_str()) != Some("yaml") {
            continue;
        }
        // The simulator evaluator's metric names (nodes/cli/src/tune_sim.rs).
        let metrics = ["success", "time", "path_ratio", "final_distance", "min_distance", "false_declarations", "collisions", "halts"];
        let s = LoadedSweep::load(&path, &metrics).unwrap_or_else(|e| panic!("{e}"));
        assert!(s.sweep.evaluate.scenarios.iter().all(|p| p.exists()), "{}: scenario files exist", path.display());
        let pts = points(&s);
        assert!(!pts.is_empty());
        for p in &pts {
            point_params_text(s.base_text.as_deref(), &s.sweep.namespace, p, &[]).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
        }
        n += 1;
    }
    assert!(n > 0, "no sweep in {}", dir.display());
}
