//! `dryfront props …`: property look-ups.

/// Property look-ups.
#[derive(Debug, clap::Subcommand)]
pub enum PropsCommand {
    /// Moist-air state from dry bulb and RH.
    Air,
}

/// Run a property look-up.
pub fn run(_cmd: PropsCommand) -> anyhow::Result<()> {
    anyhow::bail!("not built yet")
}
