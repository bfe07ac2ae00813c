//! Debug: where the contact periods of an episode end, along the wind, relative to the source.
//! `fronts SCENARIO [EPISODES]` (env SIM_PARAMS: a parameter file)
use sillage_core::Msg;
use sillage_sim::{EpisodeSpec, RunOptions, Sim, StackSetup, WorldParams};
fn main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().collect();
    let path = args.get(1).ok_or("usage: fronts SCENARIO [EPISODES]")?;
    let scenario = sillage_world::Scenario::from_path(std::path::Path::new(path))?;
    let n: usize = args.get(2).map(|s| s.parse()).transpose()?.unwrap_or(5);
    let config = sillage_stack::StackConfig { params_file: std::env::var_os("SIM_PARAMS").map(Into::into), ..Default::default() };
    let sim = Sim { stack: StackSetup { strategy: None, config, ablate_odor_cues: false }, world: WorldParams::default(), options: RunOptions { halt_timeout: 1e9, timeline_period: Some(0.1), ..Default::default() }, scenario };
    let src = sim.scenario.sources.first().ok_or("the scenario has no source")?.position;
    let wdir = sim.scenario.wind.direction;
    let (dx, dy) = (wdir.cos(), wdir.sin());
    for i in 0..n {
        let mut pose = (0.0f64, 0.0f64);
        let mut mode = 0u8;
        let mut front = f64::INFINITY; // most upwind hit (downwind coordinate relative to the source)
        let mut line = String::new();
        let mut upwind_hits: Vec<(f64, f64)> = Vec::new();
        let r = sim.run_episode(EpisodeSpec::nth(&sim.scenario, 0, i), &mut |r| match r.msg {
            Msg::Odometry(o) => pose = (o.pose.pose.position.x, o.pose.pose.position.y),
            Msg::OdorEventArray(a) if a.events.iter().any(|e| e.polarity > 0 && e.level > 0.0) => {
                let s = (pose.0 - src[0]) * dx + (pose.1 - src[1]) * dy;
                front = front.min(s);
                if s < -0.5 {
                    upwind_hits.push((sillage_core::time::secs(r.stamp), s));
                }
                if std::env::var_os("UPWIND").is_some() && s < -0.3 {
                    for e in a.events.iter().filter(|e| e.polarity > 0) {
                        println!("  t {:.2} along {s:+.2} ch {} level {:.4}", sillage_core::time::secs(r.stamp), e.channel, e.level);
                    }
                }
            }
            Msg::SearchState(s) if s.mode != mode => {
                let along = (pose.0 - src[0]) * dx + (pose.1 - src[1]) * dy;
                let across = -(pose.0 - src[0]) * dy + (pose.1 - src[1]) * dx;
                if mode == 1 {
                    line += &format!(" [{:.0}s end {along:+.2},{across:+.2} front {front:+.2}]", sillage_core::time::secs(r.stamp));
                }
                mode = s.mode;
            }
            _ => {}
        })?;
        if let Some(tl) = &r.timeline {
            for &(t, s) in upwind_hits.iter().take(6) {
                let c: Vec<String> = tl.t.iter().enumerate().filter(|(_, &u)| u > t - 3.0 && u <= t).map(|(k, _)| format!("{:.1e}", tl.concentration[k].iter().cloned().fold(0.0, f64::max))).collect();
                println!("  upwind hit t {t:.1} along {s:+.2}: max conc over the 3 s before: {}", c.iter().step_by(5).cloned().collect::<Vec<_>>().join(" "));
            }
        }
        println!("ep {i}: min_d {:.2} reached {} {:?}{line}", r.min_distance, r.reached, r.outcome);
    }
    Ok(())
}
