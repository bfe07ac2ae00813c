//! The closed loop on the demo scenario with the default parameters (`cast_surge`), over 10
//! seeds within the scenario's own time limit (240 s); prints the metrics. Outside
//! references are checked in the world crate (Gaussian plume against Briggs/Turner, filament
//! cross-section against Taylor dispersion, MOX step response, kinematics); here the whole
//! graph must find and declare the source.
//!
//! Thresholds: a correct declaration (estimate within the 0.5 m success radius) in a majority
//! of the seeds, at most two false declarations in all, no collision. In the world with the
//! grid wind, unit spread and room background (issue 18) these seeds declare correctly in
//! 8/10 with two false declarations (seeds 2 and 6, both then running to the time limit); in
//! the uniform-wind world before it they gave 9/10 with one (seed 2).

use sillage_sim::{EpisodeSpec, RunOptions, Sim, StackSetup, Summary, WorldParams};
use sillage_stack::StackConfig;
use sillage_world::Scenario;

#[test]
fn cast_surge_declares_the_demo_source_in_most_seeds() {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../..");
    let scenario = Scenario::from_path(&root.join("config/scenarios/demo.yaml")).unwrap_or_else(|e| panic!("{e}"));
    let sim = Sim {
        scenario,
        stack: StackSetup { config: StackConfig::default(), strategy: Some("cast_surge".into()), ablate_odor_cues: false },
        world: WorldParams::default(),
        options: RunOptions::default(),
    };
    let results: Vec<_> = (0..10)
        .map(|i| sim.run_episode(EpisodeSpec::nth(&sim.scenario, 0, i), &mut |_| {}).unwrap_or_else(|e| panic!("episode {i}: {e}")))
        .collect();
    for r in &results {
        println!(
            "seed {:2} start {}: {:?}, declared at {:?} s, closest {:.2} m, path ratio {:.2}, false declarations {}, halts {}, collisions {}",
            r.spec.seed, r.spec.start_pose, r.outcome, r.time_to_declare, r.min_distance, r.path_ratio, r.false_declarations, r.halts, r.collisions
        );
    }
    let s = Summary::of(&results);
    println!("{}", serde_json::to_string_pretty(&s).unwrap_or_default());
    assert!(s.successes >= 6, "declared correctly in {}/10", s.successes);
    // Measured: 2 (seeds 2 and 6) since the grid wind and sensor units; 1 before.
    assert!(s.false_declarations <= 2, "{} false declarations", s.false_declarations);
    assert_eq!(s.collisions, 0, "collisions");
}
