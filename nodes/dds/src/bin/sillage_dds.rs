//! `sillage_dds`: the sillage stack (or one node) on DDS, no ROS installation needed.
//!
//! See `sillage_dds --help` and docs/no-ros-companion.md. Stops on SIGINT or SIGTERM and prints
//! its counters. Log level: `SILLAGE_DDS_LOG=debug|info|warn` (default info for sillage,
//! warn for the middleware).

use anyhow::Context as _;
use clap::Parser;
use sillage_dds::args::Args;
use sillage_dds::engine::{Engine, EngineOptions};
use std::io::Write as _;
use std::sync::atomic::AtomicBool;
use std::sync::Arc;

struct StderrLog {
    ours: log::LevelFilter,
    others: log::LevelFilter,
}

impl log::Log for StderrLog {
    fn enabled(&self, m: &log::Metadata) -> bool {
        let max = if m.target().starts_with("sillage") {
            self.ours
        } else if m.target().starts_with("rustdds::network::udp_sender") || m.target().starts_with("ros2_client::distributions") {
            // Noise here: a warning for every datagram over 1500 bytes (IP fragments are
            // normal), and one that ROS_DISTRO is unset (there is no ROS on purpose).
            log::LevelFilter::Error
        } else {
            self.others
        };
        m.level() <= max
    }
    fn log(&self, r: &log::Record) {
        if self.enabled(r.metadata()) {
            let _ = writeln!(std::io::stderr(), "[{} {}] {}", r.level(), r.target(), r.args());
        }
    }
    fn flush(&self) {}
}

fn init_log() {
    let (ours, others) = match std::env::var("SILLAGE_DDS_LOG").as_deref() {
        Ok("debug") => (log::LevelFilter::Debug, log::LevelFilter::Info),
        Ok("warn") => (log::LevelFilter::Warn, log::LevelFilter::Warn),
        _ => (log::LevelFilter::Info, log::LevelFilter::Warn),
    };
    if log::set_boxed_logger(Box::new(StderrLog { ours, others })).is_ok() {
        log::set_max_level(ours.max(others));
    }
}

fn main() -> anyhow::Result<()> {
    init_log();
    let argv: Vec<String> = std::env::args().collect();
    let split = argv.iter().position(|a| a == "--ros-args").unwrap_or(argv.len());
    // clap prints --help and --version itself and exits.
    let args = Args::parse_from(&argv[..split]);
    let cfg = args.resolve(&argv[split..], std::env::var("ROS_DOMAIN_ID").ok().as_deref())?;
    let setup = sillage_dds::setup::build(&cfg)?;
    let opts = EngineOptions { max_input_rate: cfg.max_input_rate, ..EngineOptions::default() };
    let mut engine = Engine::new(setup, &opts)?;
    let stop = Arc::new(AtomicBool::new(false));
    for sig in [signal_hook::consts::SIGINT, signal_hook::consts::SIGTERM] {
        signal_hook::flag::register(sig, Arc::clone(&stop)).context("install the signal handlers")?;
    }
    sillage_dds::dds::run(&mut engine, cfg.domain_id, &cfg.namespace, &stop)?;
    let s = engine.stats();
    log::info!(
        "stopped: samples={} delivered={} delivered_local={} malformed={} wrong_type={} type_conflicts={} flood_dropped={} publish_failures={} runaways={} clock_jumps_back={}",
        s.samples, s.delivered, s.delivered_local, s.malformed, s.wrong_type, s.type_conflicts, s.flood_dropped, s.publish_failures, s.runaways, s.clock_jumps_back
    );
    Ok(())
}
