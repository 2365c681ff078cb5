//! `pairsight match`: run a study's designs and write one folder per design.

use crate::io::{in_file, read_bytes, read_text, write_atomic};
use pairsight_core::run::Analysis;
use pairsight_core::study::Study;
use std::path::{Path, PathBuf};

/// Arguments of `pairsight match`.
#[derive(clap::Args)]
pub struct MatchArgs {
    /// The cohort file (CSV; comma, semicolon or tab).
    pub data: PathBuf,
    /// The study file (`*.study.toml`).
    #[arg(long)]
    pub study: PathBuf,
    /// Folder to write `<design>/matched.csv`, `balance.csv`, ... into.
    #[arg(long)]
    pub out: PathBuf,
    /// Run only this design (default: every design of the study).
    #[arg(long)]
    pub design: Option<String>,
}

/// Read the cohort and study into an analysis; errors name the file.
pub fn load(data: &Path, study: &Path) -> Result<Analysis, String> {
    let study_text = read_text(study)?;
    let parsed = Study::from_toml(&study_text).map_err(in_file(study))?;
    let bytes = read_bytes(data)?;
    // A study-key error found while checking roles against the data belongs
    // to the study file; every other error to the cohort file.
    Analysis::new(&bytes, parsed).map_err(|e| match e {
        pairsight_core::Error::Study { .. } => in_file(study)(e),
        other => in_file(data)(other),
    })
}

/// Run the subcommand.
pub fn run(args: &MatchArgs) -> Result<(), String> {
    let analysis = load(&args.data, &args.study)?;
    let designs: Vec<_> = match &args.design {
        Some(name) => vec![analysis
            .study
            .design(name)
            .map_err(in_file(&args.study))?
            .clone()],
        None => analysis.study.designs.clone(),
    };
    if designs.is_empty() {
        return Err(format!(
            "{}: the study has no [[designs]]; add one (see docs/study-file.md)",
            args.study.display()
        ));
    }
    for design in &designs {
        let result = analysis.run(design).map_err(|e| match e {
            pairsight_core::Error::Study { .. } => in_file(&args.study)(e),
            other => in_file(&args.data)(other),
        })?;
        let dir = args.out.join(&design.name);
        for f in result.files(&analysis).map_err(|e| e.to_string())? {
            write_atomic(&dir.join(&f.name), f.contents.as_bytes())?;
        }
        let s = &result.summary;
        let worst = s
            .worst_abs_smd_after
            .map_or("undefined".to_string(), |w| format!("{w:.3}"));
        println!(
            "{}: matched {} of {} treated with {} comparison units; worst |SMD| after {}; wrote {}",
            design.name,
            s.matched_treated,
            s.treated,
            s.matched_comparison,
            worst,
            dir.display()
        );
    }
    Ok(())
}
