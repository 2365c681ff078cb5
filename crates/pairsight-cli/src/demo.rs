//! `pairsight demo`: write the invented demo cohort.

use std::path::PathBuf;

/// Arguments of `pairsight demo`.
#[derive(clap::Args)]
pub struct DemoArgs {
    /// Number of patients to generate.
    #[arg(long, default_value_t = 3000)]
    pub patients: usize,
    /// Seed of the generator; the same seed gives the same bytes.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Folder to write cohort.csv, demo.study.toml and truth.json into.
    #[arg(long, default_value = "demo")]
    pub out: PathBuf,
}

/// Run the subcommand.
pub fn run(_args: &DemoArgs) -> Result<(), String> {
    Err("the demo generator is not built yet".to_string())
}
