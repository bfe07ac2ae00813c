//! The shipped example sweeps load, and every point of them makes a parameter file that every
//! node takes.

use sillage_tune::design::points;
use sillage_tune::params_out::point_params_text;
use sillage_tune::{LoadedSweep, MetricNames};

/// The metric names of the simulator and bag evaluators (nodes/cli/src/tune_sim.rs and
/// nodes/cli/src/tune_bag.rs).
const METRICS: MetricNames = MetricNames {
    scenarios: &["success", "time", "path_ratio", "final_distance", "min_distance", "false_declarations", "collisions", "halts"],
    bags: &["bearing_error", "bearing_coverage", "distance_error", "distance_relative_error", "distance_coverage"],
};
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
        // Bags are made by the user (e.g. `sillage sim --record`), so they need not exist.
        let s = LoadedSweep::load(&path, METRICS).unwrap_or_else(|e| panic!("{e}"));
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

#[test]
fn the_fingerprint_follows_file_contents_not_paths() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../config");
    let tmp = Path::new(env!("CARGO_TARGET_TMPDIR")).join("tune-fingerprint");
    let _ = std::fs::remove_dir_all(&tmp);
    std::fs::create_dir_all(tmp.join("sweeps")).unwrap_or_else(|e| panic!("{e}"));
    std::fs::create_dir_all(tmp.join("scenarios")).unwrap_or_else(|e| panic!("{e}"));
    for f in ["sweeps/demo_declare.yaml", "scenarios/demo.yaml", "sillage.yaml"] {
        std::fs::copy(root.join(f), tmp.join(f)).unwrap_or_else(|e| panic!("{f}: {e}"));
    }
    let fp = |p: &Path| LoadedSweep::load(p, METRICS).unwrap_or_else(|e| panic!("{e}")).fingerprint();
    let shipped = fp(&root.join("sweeps/demo_declare.yaml"));
    assert_eq!(fp(&tmp.join("sweeps/demo_declare.yaml")), shipped, "same files elsewhere");
    let scenario = tmp.join("scenarios/demo.yaml");
    let text = std::fs::read_to_string(&scenario).unwrap_or_default().replace("time_limit: 240.0", "time_limit: 200.0");
    std::fs::write(&scenario, text).unwrap_or_else(|e| panic!("{e}"));
    assert_ne!(fp(&tmp.join("sweeps/demo_declare.yaml")), shipped, "a changed scenario is another sweep");
}
