//! Runs N episodes of a scenario one after the other and prints the summary (quick checks).
//! `SIM_PARAMS=FILE batch SCENARIO N [STRATEGY] [SECONDS]`
use sillage_sim::{EpisodeSpec, RunOptions, Sim, StackSetup, Summary, WorldParams};
fn main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().collect();
    let scenario = sillage_world::Scenario::from_path(std::path::Path::new(&args[1]))?;
    let n: usize = args.get(2).map(|s| s.parse()).transpose()?.unwrap_or(10);
    let config = sillage_stack::StackConfig { params_file: std::env::var_os("SIM_PARAMS").map(Into::into), ..Default::default() };
    let time_limit = args.get(4).map(|s| s.parse()).transpose()?;
    let sim = Sim { stack: StackSetup { strategy: args.get(3).cloned().filter(|s| s != "-"), config, ablate_odor_cues: false }, world: WorldParams::default(), options: RunOptions { time_limit, ..Default::default() }, scenario };
    let t = std::time::Instant::now();
    let mut results = Vec::new();
    for i in 0..n {
        let r = sim.run_episode(EpisodeSpec::nth(&sim.scenario, 0, i), &mut |_| {})?;
        println!("{i:3} {:?} t {:?} min {:.2} false {} decl {:?}", r.outcome, r.time_to_declare.map(|x| x.round()), r.min_distance, r.false_declarations, r.declarations.iter().map(|d| (d.t.round(), (d.error * 100.0).round() / 100.0)).collect::<Vec<_>>());
        results.push(r);
    }
    let s = Summary::of(&results);
    println!("success {}/{} reached {} false {} time {:?} ratio {:?} wall {:.1}s", s.successes, s.episodes, s.reached, s.false_declarations, s.time_to_declare.map(|q| q.median), s.path_ratio.map(|q| q.median), t.elapsed().as_secs_f64());
    Ok(())
}
