//! Rise onsets through the node: chem samples of two first-order sensors hit by a plane wave
//! give the analytic lag's bearing; the bearing is held fixed in the odometry frame after a
//! turn; onsets taken before the turn are not paired with the new heading.
use sillage_bearing_decoder::node::{IN_CHEM, IN_ODOM, IN_WIND};
use sillage_bearing_decoder::{BearingDecoder, Params};
use sillage_core::msg::*;
use sillage_core::{Msg, Nanos, NodeCore, Outbox};

const MS: Nanos = 1_000_000;
const DEG: f64 = std::f64::consts::PI / 180.0;

fn odom(yaw: f64) -> Odometry {
    let mut o = Odometry::default();
    o.header.frame_id = "odom".into();
    o.pose.pose.orientation = Quaternion::from_yaw(yaw);
    o
}

/// Response of a first-order sensor (tau 1.8 s rising, 11 s decaying) of gain `g` to 1.5 s
/// odor hits starting at `hits` [s] (the two-time-constant MOX model), integrated exactly
/// per 10 ms step.
fn response(hits: &[f64], g: f64, until: f64) -> Vec<f64> {
    let (mut r, mut out) = (0.0, Vec::new());
    let dt = 0.01;
    for k in 0..(until / dt) as usize {
        let t = k as f64 * dt;
        let on = hits.iter().any(|&h| t >= h && t < h + 1.5);
        let (target, tau) = if on { (g, 1.8) } else { (0.0, 11.0) };
        r += (target - r) * (1.0 - (-dt / tau).exp());
        out.push(r);
    }
    out
}

fn bearing_after(p: Params, yaw_at: impl Fn(f64) -> f64, until: f64) -> (BearingDecoder, Vec<(f64, OdorBearing)>) {
    // Air from 30 deg at 0.5 m/s over sensors +-0.1 m on y: left is hit d sin(30) / U = 0.2 s
    // before right (plane-wave geometry). Hits every 3.7 s; the right sensor is half as
    // sensitive (a level crossing would come later on it).
    let from: f64 = 30.0 * DEG;
    let lag = 0.2 * from.sin() / 0.5;
    let hits: Vec<f64> = (0..6).map(|k| 2.0 + 3.7 * k as f64).collect();
    let late: Vec<f64> = hits.iter().map(|h| h + lag).collect();
    let (left, right) = (response(&hits, 1.0, until), response(&late, 0.5, until));
    let mut node = BearingDecoder::new(p).expect("valid");
    let mut out = Outbox::new();
    let mut said = Vec::new();
    for k in (0..left.len()).step_by(5) {
        let now = k as Nanos * 10 * MS;
        let t = k as f64 * 0.01;
        let yaw = yaw_at(t);
        node.on_message(now, IN_ODOM, &Msg::from(odom(yaw)), &mut out);
        // Ground-fixed wind (odom frame) from 30 deg + yaw at t = 0, i.e. fixed in the world.
        let w = Vector3Stamped { header: Header::new(now, "odom"), vector: Vector3 { x: -0.5 * from.cos(), y: -0.5 * from.sin(), z: 0.0 } };
        node.on_message(now, IN_WIND, &Msg::from(w), &mut out);
        let c = ChemSample { header: Header::new(now, "chem"), channels: vec!["left".into(), "right".into()], values: vec![left[k], right[k]], quantity: ChemSample::RELATIVE };
        node.on_message(now, IN_CHEM, &Msg::from(c), &mut out);
        if k % 10 == 0 {
            node.on_timer(now, 0, &mut out);
        }
        for (_, m) in out.drain() {
            if let Msg::OdorBearing(b) = m {
                said.push((t, b));
            }
        }
    }
    (node, said)
}

fn params() -> Params {
    let mut p = Params::default();
    p.amplitude.enabled = false;
    p
}

#[test]
fn rise_onsets_give_the_plane_wave_bearing_despite_unequal_gains() {
    let (node, said) = bearing_after(params(), |_| 0.0, 24.0);
    let (_, last) = said.last().expect("published");
    assert_eq!(last.cue, OdorBearing::TIMING);
    assert!((last.bearing - 30.0 * DEG).abs() < 2.0 * DEG, "{} deg", last.bearing / DEG);
    assert!((last.lag - 0.2).abs() < 0.01, "lag {}", last.lag);
    assert_eq!(node.stats().onsets, 12, "one onset per hit and sensor");
}

#[test]
fn a_turn_keeps_the_held_bearing_fixed_in_odom_and_drops_old_onsets() {
    // Turn by 60 deg after the hits (at 22 s); no hits follow.
    let turn = |t: f64| if t < 22.0 { 0.0 } else { 60.0 * DEG };
    let (_, said) = bearing_after(params(), turn, 25.0);
    let after: Vec<&OdorBearing> = said.iter().filter(|(t, _)| *t > 22.5).map(|(_, b)| b).collect();
    assert!(!after.is_empty());
    for b in &after {
        // The onsets were taken 60 deg away: not paired; the held bearing (30 deg in odom)
        // is -30 deg in the turned base_link, with less confidence than when fresh.
        assert_eq!(b.cue, OdorBearing::TIMING);
        assert!((b.bearing + 30.0 * DEG).abs() < 2.0 * DEG, "{} deg", b.bearing / DEG);
    }
    // Without the hold the turned robot has no timing bearing.
    let mut p = params();
    p.timing.hold = 0.0;
    let (_, said) = bearing_after(p, turn, 25.0);
    assert!(said.iter().filter(|(t, _)| *t > 22.5).all(|(_, b)| b.cue == OdorBearing::NONE));
}
