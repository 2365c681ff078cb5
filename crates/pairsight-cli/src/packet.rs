//! `pairsight packet`: draw a blinded review round and write one rating
//! packet per reviewer plus the analyst's key file.

use crate::effect::{chosen_designs, run_designs};
use crate::io::{in_file, write_atomic};
use crate::matching::load;
use pairsight_core::packet::{build_packets, PacketOptions, KEY_FILE};
use pairsight_core::review::{RatingScale, ReviewParams};
use std::path::PathBuf;

/// Arguments of `pairsight packet`.
#[derive(clap::Args)]
pub struct PacketArgs {
    /// The cohort file (CSV; comma, semicolon or tab).
    pub data: PathBuf,
    /// The study file (`*.study.toml`); it must name a notes column.
    #[arg(long)]
    pub study: PathBuf,
    /// Folder to write `packet-<reviewer>.html` files and `round-key.json` into.
    #[arg(long)]
    pub out: PathBuf,
    /// Reviewer labels, comma-separated; each gets a packet.
    #[arg(long, value_delimiter = ',', required = true)]
    pub reviewers: Vec<String>,
    /// Designs to draw pairs from, comma-separated (default: every design).
    #[arg(long, value_delimiter = ',')]
    pub designs: Vec<String>,
    /// Matched sets drawn from each design.
    #[arg(long, default_value_t = 20)]
    pub sets_per_design: usize,
    /// Seed of the draw; the same seed and data give the same round.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Spread the draw evenly over each design's distance quartiles.
    #[arg(long)]
    pub stratify: bool,
    /// Columns shown beside the notes, comma-separated (never the group,
    /// an outcome or the identifier).
    #[arg(long, value_delimiter = ',')]
    pub show: Vec<String>,
    /// Leave concept terms unmarked in the notes.
    #[arg(long)]
    pub no_marks: bool,
    /// Do not offer a comment box.
    #[arg(long)]
    pub no_comment: bool,
    /// Title at the top of each packet.
    #[arg(long, default_value = "Similarity of matched patients")]
    pub title: String,
    /// Extra words to the reviewers, shown above the pairs.
    #[arg(long, default_value = "")]
    pub instructions: String,
}

/// Run the subcommand.
pub fn run(args: &PacketArgs) -> Result<(), String> {
    let analysis = load(&args.data, &args.study)?;
    let designs = chosen_designs(&analysis, &args.study, &args.designs)?;
    let runs = run_designs(&analysis, &designs, &args.data)?;
    let scale = RatingScale {
        allow_comment: !args.no_comment,
        ..RatingScale::default()
    };
    let options = PacketOptions {
        reviewers: args
            .reviewers
            .iter()
            .map(|r| r.trim().to_string())
            .collect(),
        review: ReviewParams {
            seed: args.seed,
            sets_per_design: args.sets_per_design,
            stratify: args.stratify,
            scale,
            show_fields: args.show.iter().map(|f| f.trim().to_string()).collect(),
        },
        marks: !args.no_marks,
        title: args.title.clone(),
        instructions: args.instructions.clone(),
    };
    let packets = build_packets(&analysis, &runs, &options).map_err(|e| match e {
        pairsight_core::Error::Study { .. } => in_file(&args.study)(e),
        pairsight_core::Error::Data { .. } => in_file(&args.data)(e),
        other => other.to_string(),
    })?;
    for f in &packets.files {
        write_atomic(&args.out.join(&f.name), f.html.as_bytes())?;
    }
    let key_path = args.out.join(KEY_FILE);
    write_atomic(
        &key_path,
        packets.key.to_json().map_err(|e| e.to_string())?.as_bytes(),
    )?;
    let round = &packets.key.round;
    println!(
        "round {}: {} pairs from {} design(s); wrote {} packet(s) to {}",
        round.round_id,
        round.items.len(),
        runs.len(),
        packets.files.len(),
        args.out.display()
    );
    println!(
        "keep {} with you: it unblinds the round; send each reviewer only their packet",
        key_path.display()
    );
    Ok(())
}
