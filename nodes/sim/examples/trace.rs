//! Debug: prints plume features, bearing and the robot's distance to the source once a second.
//! `trace SCENARIO [SEED] [SECONDS] [STRATEGY]`
use sillage_core::Msg;
use sillage_sim::{EpisodeSpec, RunOptions, Sim, StackSetup, WorldParams};
fn main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().collect();
    let scenario = sillage_world::Scenario::from_path(std::path::Path::new(&args[1]))?;
    let seed = args.get(2).map(|s| s.parse()).transpose()?.unwrap_or(0);
    let limit = args.get(3).map(|s| s.parse()).transpose()?.unwrap_or(240.0);
    let config = sillage_stack::StackConfig { params_file: std::env::var_os("SIM_PARAMS").map(Into::into), ..Default::default() };
    let sim = Sim { stack: StackSetup { strategy: args.get(4).cloned(), config, ablate_odor_cues: false }, world: WorldParams::default(), options: RunOptions { time_limit: Some(limit), timeline_period: Some(0.1), halt_timeout: 1e9, ..Default::default() }, scenario };
    let src = sim.scenario.sources[0].position;
    let (mut pose, mut bearing, mut wind) = ((0.0, 0.0, 0.0), (f64::NAN, 0.0, 0u8), (0.0, 0.0));
    let mut events = 0usize;
    let r = sim.run_episode(EpisodeSpec::nth(&sim.scenario, seed, 0), &mut |r| match r.msg {
        Msg::Odometry(o) => pose = (o.pose.pose.position.x, o.pose.pose.position.y, o.pose.pose.orientation.yaw()),
        Msg::OdorBearing(b) => bearing = (b.bearing, b.confidence, b.cue),
        Msg::Vector3Stamped(w) => wind = (w.vector.x, w.vector.y),
        Msg::OdorEventArray(a) => events += a.events.iter().filter(|e| e.polarity > 0).count(),
        Msg::PlumeFeatures(f) if r.stamp % 1_000_000_000 == 0 => {
            let d = (pose.0 - src[0]).hypot(pose.1 - src[1]);
            let to_src = (src[1] - pose.1).atan2(src[0] - pose.0) - pose.2;
            let to_src = (to_src + std::f64::consts::PI).rem_euclid(std::f64::consts::TAU) - std::f64::consts::PI;
            println!("t {:6.1} d {:5.2} pos ({:5.2},{:5.2}) yaw {:5.2} | rate {:4.2} int {:4.2} amp {:7.4} edge {:5.2} | bearing {:6.2} (true {:6.2}) conf {:4.2} cue {} | wind ({:5.2},{:5.2}) | rises {}",
                sillage_core::time::secs(r.stamp), d, pose.0, pose.1, pose.2, f.bout_rate, f.intermittency, f.bout_amplitude, f.edge_index, bearing.0, to_src, bearing.1, bearing.2, wind.0, wind.1, events);
            events = 0;
        }
        _ => {}
    })?;
    for t in &r.transition_log { println!("{:8.2} {:9} {}", t.t, t.mode, t.reason); }
    println!("{:?} decl {:?} min {:.2}", r.outcome, r.declarations, r.min_distance);
    if let Some(tl) = &r.timeline {
        let peak = tl.concentration.iter().flatten().cloned().fold(0.0, f64::max);
        println!("peak concentration at the sensors {peak:.3e} g/m^3");
    }
    Ok(())
}
