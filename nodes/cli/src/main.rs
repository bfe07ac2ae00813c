//! `sillage`: the offline host. Each subcommand lives in its own module with an `Args` struct
//! and a `run` function; `main` only parses and dispatches.

use clap::{Parser, Subcommand};

mod calibrate;
mod check;
mod replay;
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

fn main() -> anyhow::Result<()> {
    match Cli::parse().command {
        Command::Replay(a) => replay::run(a),
        Command::Bag(c) => replay::run_bag(c),
        Command::Sim(a) => sim::run(a),
        Command::SimTable(a) => sim_table::run(a),
        Command::Calibrate(a) => calibrate::run(a),
        Command::Tune(a) => tune::run(a),
        Command::Check(a) => check::run(a),
    }
}
