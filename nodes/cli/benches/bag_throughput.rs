//! Bag read throughput and replay real-time factor on a generated one-hour bag (a bench
//! binary, not a timed test):
//!
//!     cargo bench -p sillage-cli --bench bag_throughput [-- --minutes N] [--read-only] [--bag DIR] [--keep]
//!
//! The bag: two MOX channels at 100 Hz on /chem, wind at 10 Hz, odometry at 50 Hz (576 000
//! messages for an hour), zstd-chunked MCAP written by sillage-bag. Prints messages per second
//! for the raw read path (records in log-time order, not decoded), the decoded read path
//! (`Msg` values), and the replay through the default stack without the output bag, then
//! writing it as `sillage replay` does (on the writer thread) with zstd, lz4 and no chunk
//! compression, and once with zstd on the caller's thread; bag time over wall time, and the
//! CPU time of the process (all threads) over the same span.

#![allow(clippy::result_large_err)] // sillage_bag errors carry file, topic and offset

use sillage_bag::replay::replay;
use sillage_bag::{Bag, BagWriter, QosProfile, ReadOptions, WriterOptions};
use sillage_core::msg::*;
use sillage_core::{Msg, Nanos, Qos};
use std::time::Instant;

const T0: Nanos = 1_800_000_000_000_000_000;

fn generate(dir: &std::path::Path, minutes: f64) -> u64 {
    let mut w = BagWriter::create(dir, WriterOptions { overwrite: true, ..Default::default() }).expect("creates");
    let q = [QosProfile::from(Qos::SensorData)];
    let chem = w.add_topic("/chem", "sillage_msgs/msg/ChemSample", &q).expect("topic");
    let wind = w.add_topic("/wind", "geometry_msgs/msg/Vector3Stamped", &q).expect("topic");
    let odom = w.add_topic("/odom", "nav_msgs/msg/Odometry", &q).expect("topic");
    let ticks = (minutes * 60.0 * 100.0) as i64; // 10 ms ticks
    let mut rng: u64 = 0x2545_f491_4f6c_dd1d;
    let mut noise = || {
        rng ^= rng << 13;
        rng ^= rng >> 7;
        rng ^= rng << 17;
        (rng >> 11) as f64 / (1u64 << 53) as f64 - 0.5
    };
    for k in 0..ticks {
        let t = T0 + k * 10_000_000;
        let s = k as f64 * 0.01;
        let burst = ((s * 0.7).sin() * (s * 0.13).cos()).max(0.0);
        let m = ChemSample {
            header: Header::new(t, "chem_link"),
            channels: vec!["left".into(), "right".into()],
            values: vec![40_000.0 / (1.0 + 2.0 * burst) + 50.0 * noise(), 38_000.0 / (1.0 + 1.8 * burst) + 50.0 * noise()],
            quantity: ChemSample::RESISTANCE,
        };
        w.write(chem, t + 700_000, &m.into()).expect("writes");
        if k % 2 == 0 {
            let o = Odometry {
                header: Header::new(t, "odom"),
                child_frame_id: "base_link".into(),
                pose: PoseWithCovariance {
                    pose: Pose { position: Point { x: 0.1 * s.cos(), y: 0.1 * s.sin(), z: 0.0 }, orientation: Quaternion::from_yaw(0.1 * s) },
                    ..Default::default()
                },
                twist: TwistWithCovariance { twist: Twist { linear: Vector3 { x: 0.1, y: 0.0, z: 0.0 }, ..Default::default() }, ..Default::default() },
            };
            w.write(odom, t + 900_000, &o.into()).expect("writes");
        }
        if k % 10 == 0 {
            let v = Vector3Stamped { header: Header::new(t, "base_link"), vector: Vector3 { x: 0.4 + 0.05 * noise(), y: 0.05 * noise(), z: 0.0 } };
            w.write(wind, t + 1_100_000, &v.into()).expect("writes");
        }
    }
    w.finish().expect("finishes").metadata.message_count
}

/// User + system CPU time of this process, all threads [s] (from /proc/self/stat; 0 elsewhere).
fn cpu_seconds() -> f64 {
    let stat = std::fs::read_to_string("/proc/self/stat").unwrap_or_default();
    // Fields after the command name (which is in parentheses): utime and stime are 14 and 15.
    let rest = stat.rsplit_once(')').map_or("", |(_, r)| r);
    let f: Vec<&str> = rest.split_whitespace().collect();
    let ticks = |i: usize| f.get(i).and_then(|v| v.parse::<f64>().ok()).unwrap_or(0.0);
    (ticks(11) + ticks(12)) / 100.0 // USER_HZ is 100 on Linux (common practice)
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let minutes = args.iter().position(|a| a == "--minutes").and_then(|i| args.get(i + 1)).and_then(|v| v.parse().ok()).unwrap_or(60.0);
    let root = std::env::temp_dir().join(format!("sillage-bench-{}", std::process::id()));
    // `--bag DIR`: read an existing bag instead of generating one (for profiling).
    let given = args.iter().position(|a| a == "--bag").and_then(|i| args.get(i + 1)).map(std::path::PathBuf::from);
    let dir = given.clone().unwrap_or_else(|| root.join("hour"));
    let t = Instant::now();
    let n = if given.is_some() { 0 } else { generate(&dir, minutes) };
    let size: u64 = std::fs::read_dir(&dir).expect("dir").filter_map(|e| e.ok()?.metadata().ok()).map(|m| m.len()).sum();
    println!("generated {n} messages ({minutes} min of bag time, {:.1} MiB) in {:.2} s", size as f64 / 1048576.0, t.elapsed().as_secs_f64());
    let bag = Bag::open(&dir).expect("opens");

    let best = |f: &mut dyn FnMut() -> u64| -> (u64, f64) {
        let mut best = f64::MAX;
        let mut count = 0;
        for _ in 0..3 {
            let t = Instant::now();
            count = f();
            best = best.min(t.elapsed().as_secs_f64());
        }
        (count, best)
    };
    let (c, s) = best(&mut || {
        let mut it = bag.messages(&ReadOptions::default()).expect("reads");
        let mut c = 0u64;
        let mut bytes = 0usize;
        while let Some(m) = it.next_raw() {
            bytes += m.expect("raw").data.len();
            c += 1;
        }
        std::hint::black_box(bytes);
        c
    });
    println!("read (raw records, log-time order): {c} messages in {s:.3} s = {:.2} M messages/s", c as f64 / s / 1e6);
    let (c, s) = best(&mut || {
        let mut c = 0u64;
        for m in bag.messages(&ReadOptions::default()).expect("reads") {
            std::hint::black_box(&m.expect("message").msg);
            c += 1;
        }
        c
    });
    println!("read (decoded to Msg):              {c} messages in {s:.3} s = {:.2} M messages/s", c as f64 / s / 1e6);

    let bag_s = minutes * 60.0;
    use sillage_bag::Compression::{Lz4, Zstd};
    // (label, output bag: compression, on the writer thread)
    type OutputBag = Option<(Option<sillage_bag::Compression>, bool)>;
    let all: &[(&str, OutputBag)] = &[
        ("", None),
        (" writing the output bag (zstd, writer thread)", Some((Some(Zstd), true))),
        (" writing the output bag (lz4, writer thread)", Some((Some(Lz4), true))),
        (" writing the output bag (no compression, writer thread)", Some((None, true))),
        (" writing the output bag (zstd, one thread)", Some((Some(Zstd), false))),
    ];
    let replays = if args.iter().any(|a| a == "--read-only") { &all[..0] } else { all };
    for &(label, write) in replays {
        let cfg = sillage_stack::StackConfig::default();
        let mut ex = sillage_stack::build(&cfg).expect("stack");
        let inputs = sillage_bag::replay::Inputs {
            inject: [
                ("/chem".to_string(), "sillage_msgs/msg/ChemSample"),
                ("/wind".to_string(), "geometry_msgs/msg/Vector3Stamped"),
                ("/odom".to_string(), "nav_msgs/msg/Odometry"),
            ]
            .into_iter()
            .collect(),
            outputs: Default::default(),
        };
        let mut out = write.map(|(compression, background)| {
            BagWriter::create(root.join("out"), WriterOptions { overwrite: true, compression, background, ..Default::default() }).expect("out")
        });
        let mut records = 0u64;
        let q = [QosProfile::from(Qos::Reliable)];
        let mut rec = |r: &sillage_core::executor::Record| {
            records += 1;
            match &mut out {
                Some(w) => w.write_on(r.topic, r.stamp, r.msg, &q),
                None => Ok(()),
            }
        };
        let t = Instant::now();
        let cpu0 = cpu_seconds();
        let mut msgs = bag.messages(&ReadOptions::default()).expect("reads");
        let o = replay(&mut ex, &mut msgs, &inputs, &mut rec, &mut |_| {});
        if let Some(w) = out.take() {
            w.finish().expect("finishes");
        }
        let wall = t.elapsed().as_secs_f64();
        let cpu = cpu_seconds() - cpu0;
        assert!(o.error.is_none(), "{:?}", o.error);
        println!(
            "replay through the default stack{label}: {} inputs, {records} records, {wall:.3} s wall (real-time factor {:.0}), {cpu:.3} s cpu",
            o.injected,
            bag_s / wall
        );
    }
    if args.iter().any(|a| a == "--keep") {
        println!("kept {}", dir.display());
    } else {
        let _ = std::fs::remove_dir_all(&root);
    }
    let _: Option<Msg> = None;
}
