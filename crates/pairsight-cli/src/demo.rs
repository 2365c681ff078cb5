//! `pairsight demo`: write the invented demo cohort, its study file and its
//! known truth.

use crate::io::write_atomic;
use pairsight_core::demo::{generate, DemoParams, DEFAULT_PATIENTS, DEFAULT_SEED};
use std::path::{Path, PathBuf};

/// Arguments of `pairsight demo`.
#[derive(clap::Args)]
pub struct DemoArgs {
    /// Number of patients to generate.
    #[arg(long, default_value_t = DEFAULT_PATIENTS)]
    pub patients: usize,
    /// Seed of the generator; the same seed gives the same bytes.
    #[arg(long, default_value_t = DEFAULT_SEED)]
    pub seed: u64,
    /// Folder to write cohort.csv, demo.study.toml and truth.json into.
    #[arg(long, default_value = "demo")]
    pub out: PathBuf,
}

fn write(dir: &Path, name: &str, content: &str) -> Result<PathBuf, String> {
    let path = dir.join(name);
    write_atomic(&path, content.as_bytes())?;
    Ok(path)
}

/// Run the subcommand.
pub fn run(args: &DemoArgs) -> Result<(), String> {
    let demo = generate(&DemoParams {
        patients: args.patients,
        seed: args.seed,
    })
    .map_err(|e| e.to_string())?;
    std::fs::create_dir_all(&args.out)
        .map_err(|e| format!("could not create folder {}: {e}", args.out.display()))?;
    let truth = demo.truth_json().map_err(|e| e.to_string())?;
    let written = [
        write(&args.out, "cohort.csv", &demo.cohort_csv)?,
        write(&args.out, "demo.study.toml", &demo.study_toml)?,
        write(&args.out, "truth.json", &truth)?,
    ];
    let t = &demo.truth;
    println!(
        "Invented demo cohort: {} patients, {} treated ({:.1}%), seed {}. Every record is invented.",
        t.patients,
        t.treated,
        100.0 * t.treated_share,
        t.seed
    );
    for o in &t.outcomes {
        println!(
            "  true effect on the treated, {}: {:+.4} (raw treated - comparison: {:+.4})",
            o.name, o.effect_on_treated, o.naive_difference
        );
    }
    for path in written {
        println!("wrote {}", path.display());
    }
    Ok(())
}
