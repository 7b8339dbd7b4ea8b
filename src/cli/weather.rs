//! `dryfront weather …`: summarise, clean and synthesise hourly weather.

/// Weather commands.
#[derive(Debug, clap::Subcommand)]
pub enum WeatherCommand {
    /// Summarise a weather file.
    Summary,
}

/// Run a weather command.
pub fn run(_cmd: WeatherCommand) -> anyhow::Result<()> {
    anyhow::bail!("not built yet")
}
