//! `sillage`: the offline host. Each subcommand lives in its own module with an `Args` struct
//! and a `run` function; `main` only parses and dispatches.

use clap::{Parser, Subcommand};

mod calibrate;
mod check;
mod palette;
mod progress;
mod replay;
mod signals;
mod sim;
mod sim_table;
mod truth;
mod tune;

/// Odor-guided navigation layer for ROS 2 robots: offline tools.
#[derive(Parser)]
#[command(name = "sillage", version, about)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Run the node graph over recorded rosbag2 bags in virtual time.
    Replay(replay::Args),
    /// Inspect bags.
    #[command(subcommand)]
    Bag(replay::BagCommand),
    /// Closed-loop evaluation against the simulated world.
    Sim(sim::Args),
    /// The efficacy table: every scenario x strategy x {odor cues on, ablated}, as Markdown.
    SimTable(sim_table::Args),
    /// Fit the distance model of the plume estimator from labelled recordings.
    Calibrate(calibrate::Args),
    /// Parameter sweeps over scenarios and bags.
    Tune(tune::Args),
    /// Validate parameter, scenario and launch files.
    Check(check::Args),
}

fn main() {
    let cli = Cli::parse();
    if let Err(e) = signals::install() {
        eprintln!("warning: cannot catch SIGINT/SIGTERM ({e}); an interrupt will lose unfinished outputs");
    }
    let result = match cli.command {
        Command::Replay(a) => replay::run(a),
        Command::Bag(c) => replay::run_bag(c),
        Command::Sim(a) => sim::run(a),
        Command::SimTable(a) => sim_table::run(a),
        Command::Calibrate(a) => calibrate::run(a),
        Command::Tune(a) => tune::run(a),
        Command::Check(a) => check::run(a),
    };
    if let Err(e) = &result {
        eprintln!("error: {}", error_text(e));
    }
    if let Some(sig) = signals::caught() {
        eprintln!("sillage: stopped by {}; the outputs hold what was done until then", signals::name(sig));
        std::process::exit(128 + sig);
    }
    if result.is_err() {
        std::process::exit(1);
    }
}

/// An error and its causes on one line, each cause once (a typed error often repeats its
/// source's text in its own).
fn error_text(e: &anyhow::Error) -> String {
    let mut text = e.to_string();
    for cause in e.chain().skip(1) {
        let c = cause.to_string();
        if !text.contains(&c) {
            text = format!("{text}: {c}");
        }
    }
    text
}
