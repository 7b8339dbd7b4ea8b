//! `dryfront demo`: the bundled demo scenario end to end.
use std::path::PathBuf;

/// Arguments of `dryfront demo`.
#[derive(Debug, clap::Args)]
pub struct DemoArgs {
    /// Folder to write the demo's outputs into (created if missing).
    #[arg(long, default_value = "demo-out")]
    pub out: PathBuf,
}

/// Run the demo.
pub fn run(_args: DemoArgs) -> anyhow::Result<()> {
    anyhow::bail!("not built yet")
}
