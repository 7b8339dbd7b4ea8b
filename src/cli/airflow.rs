//! `dryfront airflow`: solve a container + fan + fill.

/// Arguments of `dryfront airflow`.
#[derive(Debug, clap::Args)]
pub struct AirflowArgs {}

/// Run the airflow solve.
pub fn run(_args: AirflowArgs) -> anyhow::Result<()> {
    anyhow::bail!("not built yet")
}
