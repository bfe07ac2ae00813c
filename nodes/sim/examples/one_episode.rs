//! Runs one episode of a scenario and prints its metrics as JSON.
//! `cargo run --release -p sillage-sim --example one_episode -- config/scenarios/demo.yaml [SEED] [STRATEGY]`

use sillage_sim::{EpisodeSpec, RunOptions, Sim, StackSetup, WorldParams};

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().collect();
    let path = args.get(1).ok_or("usage: one_episode SCENARIO [SEED] [STRATEGY]")?;
    let seed: u64 = args.get(2).map(|s| s.parse()).transpose()?.unwrap_or(0);
    let scenario = sillage_world::Scenario::from_path(std::path::Path::new(path))?;
    let sim = Sim {
        stack: StackSetup { strategy: args.get(3).cloned(), ..Default::default() },
        world: WorldParams::default(),
        options: RunOptions { halt_timeout: 1e9, ..Default::default() },
        scenario,
    };
    let spec = EpisodeSpec::nth(&sim.scenario, seed, 0);
    let started = std::time::Instant::now();
    let r = sim.run_episode(spec, &mut |_| {})?;
    let wall = started.elapsed().as_secs_f64();
    println!("{:#?}", (r.outcome, r.time_to_declare, r.min_distance, r.path_ratio, &r.declarations, r.halts, &r.halt_reasons, r.collisions, r.sim_time));
    for t in &r.transition_log {
        println!("{:8.2} {:9} {}", t.t, t.mode, t.reason);
    }
    println!("wall {wall:.3} s, {:.0}x real time", r.sim_time / wall);
    Ok(())
}
