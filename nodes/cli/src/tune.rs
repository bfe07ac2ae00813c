//! `sillage tune` (not built yet: its issue is open).

/// Arguments of `sillage tune`.
#[derive(clap::Args)]
pub struct Args {
    /// Inputs.
    pub inputs: Vec<std::path::PathBuf>,
}

/// Runs the subcommand.
pub fn run(_args: Args) -> anyhow::Result<()> {
    anyhow::bail!("'sillage tune' is not available in this build yet")
}
