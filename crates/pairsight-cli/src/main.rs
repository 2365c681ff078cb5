//! `pairsight`: the command line over pairsight-core. Each subcommand lives in
//! its own module and is mostly argument handling; exit code 2 means bad input.

use clap::{Parser, Subcommand};
use std::process::ExitCode;

mod demo;
mod io;
mod matching;

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
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Demo(args) => demo::run(&args),
        Command::Match(args) => matching::run(&args),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(message) => {
            eprintln!("pairsight: {message}");
            ExitCode::from(2)
        }
    }
}
