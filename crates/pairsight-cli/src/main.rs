//! `pairsight`: the command line over pairsight-core. Each subcommand lives in
//! its own module and is mostly argument handling; exit code 2 means bad input.

use clap::{Parser, Subcommand};
use std::process::ExitCode;

mod agree;
mod demo;
mod effect;
mod features;
mod io;
mod matching;
mod packet;
mod report;

/// pairsight: match treated and comparison patients on structured and
/// note-derived covariates, check balance, estimate the effect. Runs offline.
#[derive(Parser)]
#[command(name = "pairsight", version, about)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Write the invented demo cohort, its study file and its known truth.
    Demo(demo::DemoArgs),
    /// Run a study's designs: score, match, balance and effect, one folder per design.
    Match(matching::MatchArgs),
    /// Write every note feature of every row used to a CSV file.
    Features(features::FeaturesArgs),
    /// Print the effect per design and outcome, with its sensitivity to hidden bias.
    Effect(effect::EffectArgs),
    /// Write one self-contained HTML report of the study's designs.
    Report(report::ReportArgs),
    /// Draw a blinded review round: one rating packet per reviewer and a key file.
    Packet(packet::PacketArgs),
    /// Merge reviewers' ratings files: agreement and the design comparison.
    Agree(agree::AgreeArgs),
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Demo(args) => demo::run(&args),
        Command::Match(args) => matching::run(&args),
        Command::Features(args) => features::run(&args),
        Command::Effect(args) => effect::run(&args),
        Command::Report(args) => report::run(&args),
        Command::Packet(args) => packet::run(&args),
        Command::Agree(args) => agree::run(&args),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(message) => {
            eprintln!("pairsight: {message}");
            ExitCode::from(2)
        }
    }
}
