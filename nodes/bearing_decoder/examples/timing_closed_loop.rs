//! Closed-loop measurement of the odor direction cues on a scenario: the share of in-plume
//! time with a TIMING or FUSED bearing, and the error of each cue against the true arrival
//! direction (the direction the local true wind comes from, in base_link: filaments travel
//! with the air).
//!
//! `timing_closed_loop SCENARIO [EPISODES] [BASE_SEED] [HOLD_S]`
//!
//! In-plume time: the 0.1 s timeline ticks at which either sensor's concentration was above
//! zero within the last HOLD_S seconds (default 2). The true wind comes from a twin of the
//! world's wind field (same seed and stream; the field is uniform and does not depend on the
//! robot). Parameters from `SIM_PARAMS` (a parameter file), as for `sillage sim`.
use rand_chacha::rand_core::SeedableRng;
use rand_chacha::ChaCha8Rng;
use sillage_core::msg::OdorBearing;
use sillage_core::Msg;
use sillage_sim::{EpisodeSpec, RunOptions, Sim, StackSetup, WorldParams};
use sillage_world::wind::WindField;
use std::f64::consts::PI;

fn wrap(a: f64) -> f64 {
    (a + PI).rem_euclid(2.0 * PI) - PI
}

fn median(v: &mut [f64]) -> f64 {
    if v.is_empty() {
        return f64::NAN;
    }
    v.sort_by(f64::total_cmp);
    v[v.len() / 2]
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().collect();
    let path = args.get(1).ok_or("usage: timing_closed_loop SCENARIO [EPISODES] [BASE_SEED] [HOLD_S]")?;
    let scenario = sillage_world::Scenario::from_path(std::path::Path::new(path))?;
    let episodes: usize = args.get(2).map(|s| s.parse()).transpose()?.unwrap_or(5);
    let base: u64 = args.get(3).map(|s| s.parse()).transpose()?.unwrap_or(0);
    let hold: f64 = args.get(4).map(|s| s.parse()).transpose()?.unwrap_or(2.0);
    let config = sillage_stack::StackConfig { params_file: std::env::var_os("SIM_PARAMS").map(Into::into), ..Default::default() };
    let sim = Sim {
        stack: StackSetup { strategy: None, config, ..Default::default() },
        world: WorldParams::default(),
        options: RunOptions { timeline_period: Some(0.1), ..Default::default() },
        scenario,
    };
    let (mut ticks, mut covered) = (0usize, 0usize);
    let mut reasons: std::collections::BTreeMap<String, usize> = Default::default();
    let mut last_onsets = String::new();
    let (mut t_err, mut a_err, mut a_side) = (Vec::new(), Vec::new(), (0usize, 0usize));
    for k in 0..episodes {
        let spec = EpisodeSpec::nth(&sim.scenario, base, k);
        let mut bearings: Vec<(f64, u8, f64)> = Vec::new();
        let mut yaws: Vec<(f64, f64)> = Vec::new();
        let mut poses: Vec<[f64; 2]> = Vec::new();
        let mut twists: Vec<(f64, [f64; 2])> = Vec::new();
        let mut winds: Vec<(f64, [f64; 2])> = Vec::new();
        let r = sim.run_episode(spec, &mut |r| match r.msg {
            Msg::OdorBearing(b) => bearings.push((sillage_core::time::secs(r.stamp), b.cue, b.bearing)),
            Msg::Odometry(o) => {
                yaws.push((sillage_core::time::secs(r.stamp), o.pose.pose.orientation.yaw()));
                poses.push([o.pose.pose.position.x, o.pose.pose.position.y]);
                twists.push((sillage_core::time::secs(r.stamp), [o.twist.twist.linear.x, o.twist.twist.linear.y]));
            }
            Msg::DiagnosticArray(d) => {
                for st in d.status.iter().filter(|s| s.name.starts_with("bearing_decoder")) {
                    for kv in &st.values {
                        if kv.key == "timing" {
                            let why = if kv.value.contains("deg") { "bearing".to_string() } else { kv.value.clone() };
                            *reasons.entry(why).or_default() += 1;
                        }
                        if kv.key == "onsets" {
                            last_onsets.clone_from(&kv.value);
                        }
                    }
                }
            }
            Msg::Vector3Stamped(w) if r.topic.ends_with("wind") => winds.push((sillage_core::time::secs(r.stamp), [w.vector.x, w.vector.y])),
            _ => {}
        })?;
        let tl = r.timeline.as_ref().ok_or("no timeline")?;
        let mut rng = ChaCha8Rng::seed_from_u64(spec.seed);
        rng.set_stream(1);
        let mut wind = WindField::new(sim.scenario.wind_params(), rng);
        // The twin must agree with the anemometer (relative reading + odometry velocity, up to
        // its noise and the lever arm), or the truth below is wrong.
        let (mut oi, mut diff2, mut nd) = (0usize, 0.0, 0usize);
        for &(t, m) in &winds {
            while oi < twists.len() && twists[oi].0 <= t {
                oi += 1;
            }
            if oi == 0 {
                continue;
            }
            wind.advance_to(t);
            let g = wind.velocity([0.0; 3], t);
            let (yaw, v) = (yaws[oi - 1].1, twists[oi - 1].1);
            let (s, c) = yaw.sin_cos();
            let b = [c * g[0] + s * g[1] - v[0], -s * g[0] + c * g[1] - v[1]];
            diff2 += (b[0] - m[0]).powi(2) + (b[1] - m[1]).powi(2);
            nd += 1;
        }
        let mut rng = ChaCha8Rng::seed_from_u64(spec.seed);
        rng.set_stream(1);
        let mut wind = WindField::new(sim.scenario.wind_params(), rng);
        let (mut bi, mut yi, mut last_seen) = (0usize, 0usize, f64::NEG_INFINITY);
        let (mut ep_ticks, mut ep_cov) = (0usize, 0usize);
        for (j, &t) in tl.t.iter().enumerate() {
            if tl.concentration[j].iter().any(|&c| c > 0.0) {
                last_seen = t;
            }
            while bi < bearings.len() && bearings[bi].0 <= t {
                bi += 1;
            }
            while yi < yaws.len() && yaws[yi].0 <= t {
                yi += 1;
            }
            if t - last_seen > hold || bi == 0 || yi == 0 {
                continue;
            }
            ticks += 1;
            ep_ticks += 1;
            wind.advance_to(t);
            let w = wind.velocity([0.0; 3], t);
            let truth = wrap((-w[1]).atan2(-w[0]) - yaws[yi - 1].1);
            let (tb, cue, bearing) = bearings[bi - 1];
            if t - tb > 0.2 {
                continue;
            }
            match cue {
                OdorBearing::TIMING | OdorBearing::FUSED => {
                    covered += 1;
                    ep_cov += 1;
                    t_err.push(wrap(bearing - truth).abs().to_degrees());
                }
                OdorBearing::AMPLITUDE => {
                    // A side-only answer lies exactly at +-90 deg: judged by its side only.
                    if (bearing.abs() - PI / 2.0).abs() > 1e-12 {
                        a_err.push(wrap(bearing - truth).abs().to_degrees());
                    }
                    // The side the source lies on (left/right of the heading), from the truth.
                    let (src, p, yaw) = (sim.scenario.sources[0].position, poses[yi - 1], yaws[yi - 1].1);
                    let to_src = wrap((src[1] - p[1]).atan2(src[0] - p[0]) - yaw);
                    if to_src.abs() > 10f64.to_radians() && to_src.abs() < 170f64.to_radians() {
                        a_side.0 += usize::from(bearing.sin() * to_src.sin() > 0.0);
                        a_side.1 += 1;
                    }
                }
                _ => {}
            }
        }
        println!(
            "episode {k} seed {} {:?}: twin vs anemometer rms {:.3} m/s; in-plume {:.1} s, timing/fused {:.0} %",
            spec.seed,
            r.outcome,
            (diff2 / nd.max(1) as f64).sqrt(),
            ep_ticks as f64 * 0.1,
            100.0 * ep_cov as f64 / ep_ticks.max(1) as f64
        );
    }
    println!("timing states in diagnostics: {reasons:?}; onsets (last episode) {last_onsets}");
    let share = 100.0 * covered as f64 / ticks.max(1) as f64;
    println!("in-plume {:.1} s; TIMING or FUSED {share:.1} % of it; median error {:.1} deg (n {})", ticks as f64 * 0.1, median(&mut t_err), t_err.len());
    println!(
        "AMPLITUDE angle alone: median error {:.1} deg (n {}); AMPLITUDE left/right side of the source right {:.1} % (n {})",
        median(&mut a_err),
        a_err.len(),
        100.0 * a_side.0 as f64 / a_side.1.max(1) as f64,
        a_side.1
    );
    Ok(())
}
