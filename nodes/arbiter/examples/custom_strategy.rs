//! A strategy of your own: "upwind only" surges straight upwind while in contact and waits
//! otherwise (no casting). It plugs into the arbiter with `Arbiter::with_strategy`; the guard,
//! the watchdogs, the e-stop latch and the source declaration apply unchanged.
//!
//! Run: `cargo run -p sillage-arbiter --example custom_strategy`

use sillage_arbiter::drive::Motion;
use sillage_arbiter::strategy::{upwind, Context, Decision, Phase, Strategy};
use sillage_arbiter::{Arbiter, Params};
use sillage_core::executor::{Executor, Record};
use sillage_core::msg::*;
use sillage_core::Msg;

/// Surges upwind in contact, waits otherwise.
#[derive(Debug)]
struct UpwindOnly {
    speed: f64,
}

impl Strategy for UpwindOnly {
    fn name(&self) -> &str {
        "upwind_only"
    }

    fn step(&mut self, ctx: &Context) -> Decision {
        match (ctx.contact.in_contact, upwind(ctx)) {
            (true, Some(heading)) => Decision { phase: Phase::Surging, reason: "contact: straight upwind".into(), motion: Motion::heading(heading, self.speed) },
            _ => Decision::wait("no contact or no wind"),
        }
    }

    fn reset(&mut self) {}
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let core = Arbiter::with_strategy(Params::default(), Box::new(UpwindOnly { speed: 0.2 }))?;
    let mut ex = Executor::new();
    ex.add(Box::new(core))?;
    ex.start(0);
    let mut log = Vec::new();
    // Two seconds of inputs at 20 Hz: the robot at the origin, facing +x, the air moving toward
    // -x (so upwind is +x), a rising odor event every 200 ms.
    for k in 0..40i64 {
        let t = k * 50_000_000;
        let mut odom = Odometry { header: Header::new(t, "odom"), child_frame_id: "base_link".into(), ..Default::default() };
        odom.pose.pose.orientation = Quaternion::from_yaw(0.0);
        ex.inject(t, "/odom", odom.into())?;
        ex.inject(t, "/wind", Vector3Stamped { header: Header::new(t, "base_link"), vector: Vector3 { x: -1.0, y: 0.0, z: 0.0 } }.into())?;
        let events = if k % 4 == 0 { vec![OdorEvent { stamp: Time::from_nanos(t), channel: 0, polarity: OdorEvent::RISING, level: 1.0 }] } else { vec![] };
        ex.inject(t, "/odor_events", OdorEventArray { header: Header::new(t, ""), events }.into())?;
        ex.inject(t, "/plume_features", PlumeFeatures { header: Header::new(t, ""), distance: f64::NAN, distance_sigma: f64::NAN, ..Default::default() }.into())?;
        ex.inject(t, "/odor_bearing", OdorBearing { header: Header::new(t, "base_link"), bearing: f64::NAN, cue: OdorBearing::NONE, ..Default::default() }.into())?;
        ex.run_until(t + 50_000_000, &mut |r: &Record| match r.msg {
            Msg::SearchState(s) => log.push(format!("{:>5.2} s  mode {}  {}", r.stamp as f64 * 1e-9, s.mode, s.reason)),
            Msg::TwistStamped(c) if r.stamp % 500_000_000 == 0 => log.push(format!("{:>5.2} s  cmd_vel linear.x {:.3}", r.stamp as f64 * 1e-9, c.twist.linear.x)),
            _ => {}
        })?;
    }
    for line in log {
        println!("{line}");
    }
    Ok(())
}
