//! Conditioning one MOX channel by hand with the shared `conditioning` module, then encoding it
//! with send-on-delta: what the event encoder does per channel, in a few lines.
//!
//!     cargo run -p sillage-event-encoder --example condition_mox

use sillage_core::msg::ChemSample;
use sillage_event_encoder::conditioning::{ConditioningParams, Conditioner, Transform};
use sillage_event_encoder::encoding::{EncodingParams, LevelEncoder};

fn main() {
    // R0/R with R0 learned over the first 5 s; baseline removal with a 5 min time constant.
    let cp = ConditioningParams { transform: Transform::R0Ratio, r0_learn_time: 5.0, ..ConditioningParams::default() };
    cp.check("conditioning").expect("valid conditioning parameters");
    let ep = EncodingParams { delta: 0.1, ..EncodingParams::default() };
    ep.check("encoding").expect("valid encoding parameters");
    let (mut cond, mut enc) = (Conditioner::new(&cp), LevelEncoder::new(&ep));
    let mut events = Vec::new();
    for k in 0..2_000i64 {
        let t = k * 10_000_000; // 100 Hz
        // 10 kohm in clean air; from 10 s to 12 s a plume filament halves the resistance.
        let rs = if (1_000..1_200).contains(&k) { 5_000.0 } else { 10_000.0 };
        match cond.step(t, rs, ChemSample::RESISTANCE) {
            Ok(x) => {
                enc.step(t, x, true, &mut events);
            }
            Err(fault) => eprintln!("t = {t} ns: {fault}"),
        }
    }
    println!("R0 = {:.0} ohm, status {}, baseline {:.4}", cond.r0().unwrap_or(f64::NAN), cond.status().as_str(), cond.baseline().unwrap_or(f64::NAN));
    for e in &events {
        println!("t = {:.3} s  {:+}  level {:.2}", e.stamp as f64 * 1e-9, e.polarity, e.level);
    }
}
