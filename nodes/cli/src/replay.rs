//! `sillage replay` and `sillage bag` (not built yet: their issue is open).

/// Arguments of `sillage replay`.
#[derive(clap::Args)]
pub struct Args {
    /// Bags to replay.
    pub bags: Vec<std::path::PathBuf>,
}

/// `sillage bag ...` subcommands.
#[derive(clap::Subcommand)]
pub enum BagCommand {
    /// Topics, types, counts, duration and storage of a bag.
    Info {
        /// The bag (folder or file).
        bag: std::path::PathBuf,
    },
}

/// Runs `sillage replay`.
pub fn run(_args: Args) -> anyhow::Result<()> {
    anyhow::bail!("'sillage replay' is not available in this build yet")
}

/// Runs `sillage bag ...`.
pub fn run_bag(_c: BagCommand) -> anyhow::Result<()> {
    anyhow::bail!("'sillage bag' is not available in this build yet")
}
