//! `pairsight features`: write every note feature of every row used.

use crate::io::{in_file, write_atomic};
use crate::matching::load;
use std::path::PathBuf;

/// Arguments of `pairsight features`.
#[derive(clap::Args)]
pub struct FeaturesArgs {
    /// The cohort file (CSV; comma, semicolon or tab).
    pub data: PathBuf,
    /// The study file (`*.study.toml`); it must name a notes column.
    #[arg(long)]
    pub study: PathBuf,
    /// The CSV file to write: `id`, then one column per note feature.
    #[arg(long)]
    pub out: PathBuf,
}

/// Run the subcommand.
pub fn run(args: &FeaturesArgs) -> Result<(), String> {
    let analysis = load(&args.data, &args.study)?;
    let text = analysis
        .features_csv()
        .map_err(in_file(&args.data))?
        .ok_or_else(|| {
            format!(
                "{}: the study names no notes column, so there are no note features; set columns.notes (see docs/study-file.md)",
                args.study.display()
            )
        })?;
    write_atomic(&args.out, text.as_bytes())?;
    println!(
        "wrote {} note features for {} rows to {}",
        analysis.cohort.extras.names.len(),
        analysis.cohort.len(),
        args.out.display()
    );
    Ok(())
}
