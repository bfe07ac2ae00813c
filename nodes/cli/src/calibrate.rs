//! `sillage calibrate` (not built yet: its issue is open).

/// Arguments of `sillage calibrate`.
#[derive(clap::Args)]
pub struct Args {
    /// Inputs.
    pub inputs: Vec<std::path::PathBuf>,
}

/// Runs the subcommand.
pub fn run(_args: Args) -> anyhow::Result<()> {
    anyhow::bail!("'sillage calibrate' is not available in this build yet")
}
