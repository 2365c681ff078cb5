//! `pairsight report`: one self-contained HTML report of a study's designs.

use crate::agree::read_review;
use crate::effect::{chosen_designs, run_designs};
use crate::io::{read_text, write_atomic};
use crate::matching::load;
use pairsight_core::packet::ResultsParams;
use pairsight_core::report::{report_html, ReportOptions};
use std::path::PathBuf;

/// Arguments of `pairsight report`.
#[derive(clap::Args)]
pub struct ReportArgs {
    /// The cohort file (CSV; comma, semicolon or tab).
    pub data: PathBuf,
    /// The study file (`*.study.toml`); it is embedded in the report.
    #[arg(long)]
    pub study: PathBuf,
    /// The HTML file to write.
    #[arg(long)]
    pub out: PathBuf,
    /// Designs to include, comma-separated (default: every design).
    #[arg(long, value_delimiter = ',')]
    pub designs: Vec<String>,
    /// Show a few example matched pairs' notes. Notes are protected health
    /// information: include them only where the report's readers may see them.
    #[arg(long)]
    pub include_notes: bool,
    /// Example pairs per design with --include-notes.
    #[arg(long, default_value_t = 3)]
    pub example_pairs: usize,
    /// A review round's key file; with --ratings, adds the expert review.
    #[arg(long, requires = "ratings")]
    pub round: Option<PathBuf>,
    /// Ratings files of that round.
    #[arg(long, num_args = 1.., requires = "round")]
    pub ratings: Vec<PathBuf>,
    /// Title at the top of the report.
    #[arg(long, default_value = "pairsight report")]
    pub title: String,
}

/// Run the subcommand.
pub fn run(args: &ReportArgs) -> Result<(), String> {
    let analysis = load(&args.data, &args.study)?;
    let designs = chosen_designs(&analysis, &args.study, &args.designs)?;
    let runs = run_designs(&analysis, &designs, &args.data)?;
    let review = match &args.round {
        Some(key) => Some(read_review(key, &args.ratings, &ResultsParams::default())?),
        None => None,
    };
    let options = ReportOptions {
        title: args.title.clone(),
        include_notes: args.include_notes,
        example_pairs: args.example_pairs,
        study_text: Some(read_text(&args.study)?),
        data_name: args
            .data
            .file_name()
            .map(|f| f.to_string_lossy().into_owned()),
    };
    let html =
        report_html(&analysis, &runs, review.as_ref(), &options).map_err(|e| e.to_string())?;
    write_atomic(&args.out, html.as_bytes())?;
    println!(
        "wrote {} ({} designs{}{})",
        args.out.display(),
        runs.len(),
        if review.is_some() {
            ", expert review"
        } else {
            ""
        },
        if args.include_notes {
            ", WITH example notes"
        } else {
            ", no note text"
        }
    );
    Ok(())
}
