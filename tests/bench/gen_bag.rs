//! Writes the benchmark bag: the synthetic stream of `synth.rs` (two MOX channels at 100 Hz,
//! wind 10 Hz, odometry 50 Hz) as a rosbag2 MCAP bag folder, with sillage-bag's writer.
//!
//!     cargo run --release -p sillage-tests --example bench_bag -- OUT_DIR [SECONDS] [SEED]
//!
//! Default: one hour (576 000 messages), seed 1. Deterministic: the same arguments give the
//! same bytes.

#![allow(clippy::result_large_err)] // sillage_bag errors carry file, topic and offset

#[path = "synth.rs"]
mod synth;

use sillage_bag::{BagWriter, QosProfile, WriterOptions};
use sillage_core::Qos;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let mut args = std::env::args().skip(1);
    let dir = args.next().ok_or("usage: bench_bag OUT_DIR [SECONDS] [SEED]")?;
    let seconds: f64 = args.next().map(|s| s.parse()).transpose()?.unwrap_or(3600.0);
    let seed: u64 = args.next().map(|s| s.parse()).transpose()?.unwrap_or(1);
    let t = std::time::Instant::now();
    let mut w = BagWriter::create(&dir, WriterOptions { overwrite: true, ..Default::default() })?;
    let q = [QosProfile::from(Qos::SensorData)];
    let chem = w.add_topic("/chem", "sillage_msgs/msg/ChemSample", &q)?;
    let wind = w.add_topic("/wind", "geometry_msgs/msg/Vector3Stamped", &q)?;
    let odom = w.add_topic("/odom", "nav_msgs/msg/Odometry", &q)?;
    for m in synth::Synth::new(seconds, seed) {
        let id = match m.topic {
            "/chem" => chem,
            "/wind" => wind,
            _ => odom,
        };
        w.write(id, m.log_time, &m.msg)?;
    }
    let s = w.finish()?;
    let size: u64 = std::fs::read_dir(&s.dir)?.filter_map(|e| e.ok()?.metadata().ok()).map(|m| m.len()).sum();
    println!(
        "{}: {} messages, {:.0} s of bag time, {:.1} MiB, written in {:.2} s",
        s.dir.display(),
        s.metadata.message_count,
        seconds,
        size as f64 / 1048576.0,
        t.elapsed().as_secs_f64()
    );
    Ok(())
}
