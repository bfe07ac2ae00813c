//! Soak run: a 24-hour synthetic stream (`synth.rs`: two MOX channels at 100 Hz, wind 10 Hz,
//! odometry 50 Hz; 13.8 million messages) fed through the default stack in the in-process
//! executor exactly as `sillage replay` feeds a bag (run up to the log time, then inject),
//! generated in-process instead of read from a 24-hour file. The resident set size
//! (`VmRSS` in /proc/self/status) is printed every `--every` hours of stream time; memory must
//! stay flat (bounded buffers everywhere).
//!
//!     cargo run --release -p sillage-tests --example soak -- [--hours 24] [--every 2] [--bag DIR]
//!
//! `--bag DIR` also writes every delivered message to an output bag, as replay does, with the
//! chunk compression `--compression zstd|lz4|none` (default zstd, the writer's default).
//! Exit status 1 when the RSS grew by more than `--max-growth-mib` (default 16) between the
//! end of the first sampling interval and the end of the run.

#![allow(clippy::result_large_err)] // sillage_bag errors carry file, topic and offset

#[path = "synth.rs"]
mod synth;

use sillage_core::executor::Record;
use sillage_core::time::SECOND;
use std::time::Instant;

fn rss_kib() -> u64 {
    let status = std::fs::read_to_string("/proc/self/status").unwrap_or_default();
    let field = |name: &str| {
        status.lines().find_map(|l| l.strip_prefix(name)).and_then(|v| v.split_whitespace().next()).and_then(|v| v.parse::<u64>().ok()).unwrap_or(0)
    };
    field("VmRSS:")
}

fn arg<T: std::str::FromStr>(name: &str, default: T) -> T {
    let args: Vec<String> = std::env::args().collect();
    args.iter().position(|a| a == name).and_then(|i| args.get(i + 1)).and_then(|v| v.parse().ok()).unwrap_or(default)
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let hours: f64 = arg("--hours", 24.0);
    let every: f64 = arg("--every", 2.0);
    let max_growth: f64 = arg("--max-growth-mib", 16.0);
    let bag: Option<String> = std::env::args().skip_while(|a| a != "--bag").nth(1);
    let seconds = hours * 3600.0;
    let mut ex = sillage_stack::build(&sillage_stack::StackConfig::default())?;
    let mut writer = match &bag {
        Some(dir) => {
            let compression = match arg("--compression", "zstd".to_string()).as_str() {
                "zstd" => Some(mcap::Compression::Zstd),
                "lz4" => Some(mcap::Compression::Lz4),
                "none" => None,
                other => return Err(format!("--compression {other}: zstd, lz4 or none").into()),
            };
            Some(sillage_bag::BagWriter::create(dir, sillage_bag::WriterOptions { overwrite: true, compression, ..Default::default() })?)
        }
        None => None,
    };
    let q = [sillage_bag::QosProfile::from(sillage_core::Qos::Reliable)];
    let records = std::cell::Cell::new(0u64);
    let mut write_error: Option<String> = None;
    let mut sink = |r: &Record| {
        records.set(records.get() + 1);
        if let Some(w) = writer.as_mut() {
            if let Err(e) = w.write_on(r.topic, r.stamp, r.msg, &q) {
                write_error.get_or_insert(e.to_string());
            }
        }
    };
    println!("soak: {hours} h of stream time ({} messages), RSS every {every} h{}", synth::Synth::len(seconds), if bag.is_some() { ", writing the output bag" } else { "" });
    println!("{:>8} {:>10} {:>12} {:>14} {:>9}", "hours", "wall_s", "inputs", "records", "rss_mib");
    let start = Instant::now();
    let mut series = vec![(0.0, rss_kib())];
    println!("{:>8.1} {:>10.2} {:>12} {:>14} {:>9.1}", 0.0, 0.0, 0, 0, series[0].1 as f64 / 1024.0);
    let step = (every * 3600.0) as i64 * SECOND;
    let mut next = synth::T0 + step;
    let mut inputs = 0u64;
    let mut last = synth::T0;
    for m in synth::Synth::new(seconds, 1) {
        if m.log_time >= next {
            ex.run_until(next, &mut sink)?;
            let h = (next - synth::T0) as f64 / 3600e9;
            let rss = rss_kib();
            series.push((h, rss));
            println!("{h:>8.1} {:>10.2} {inputs:>12} {:>14} {:>9.1}", start.elapsed().as_secs_f64(), records.get(), rss as f64 / 1024.0);
            next += step;
        }
        ex.run_until(m.log_time, &mut sink)?;
        ex.inject(m.log_time, m.topic, m.msg)?;
        inputs += 1;
        last = m.log_time;
    }
    ex.run_until(last, &mut sink)?;
    if let Some(e) = write_error {
        return Err(format!("writing the output bag: {e}").into());
    }
    if let Some(w) = writer.take() {
        let s = w.finish()?;
        println!("output bag {} ({} messages)", s.dir.display(), s.metadata.message_count);
    }
    let end = rss_kib();
    let wall = start.elapsed().as_secs_f64();
    println!("end: {inputs} inputs, {} records, {wall:.1} s wall, real-time factor {:.0}, RSS {:.1} MiB", records.get(), seconds / wall, end as f64 / 1024.0);
    let stats = ex.stats();
    println!("executor: {} events, {} late inputs, {} type mismatches", stats.events, stats.late_inputs, stats.type_mismatches);
    if let Some(&(h1, first)) = series.get(1) {
        let growth = (end as f64 - first as f64) / 1024.0;
        println!("RSS growth from {h1:.1} h to the end: {growth:+.1} MiB (limit {max_growth} MiB)");
        if growth > max_growth {
            eprintln!("soak: memory grew by {growth:.1} MiB: not flat");
            std::process::exit(1);
        }
    }
    Ok(())
}
