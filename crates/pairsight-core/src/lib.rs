//! pairsight-core: everything pairsight computes, in pure Rust.
//!
//! Data flows one way: a cohort table is read ([`ingest`]), a study file says
//! what each column is for and which designs to try ([`study`]), note features
//! turn free text into covariates ([`notes`]), each design fits a score model
//! ([`score`]), measures distances ([`distance`]) and matches ([`matching`]),
//! then balance ([`balance`]) and the effect ([`effect`], [`sensitivity`]) are
//! computed on the matched sets. [`run`] strings the steps together and writes
//! the output files, so the browser and the command line produce the same bytes.
//!
//! ```
//! let table = pairsight_core::ingest::read_table(b"id,group,age\n1,1,70\n2,0,64\n").unwrap();
//! assert_eq!(table.n_rows(), 2);
//! ```
#![deny(missing_docs)]

pub mod agreement;
pub mod balance;
pub mod chart;
pub mod demo;
pub mod distance;
pub mod effect;
mod error;
pub mod ingest;
pub mod matching;
pub mod model;
pub mod notes;
pub mod output;
pub mod packet;
pub mod report;
pub mod review;
pub mod rng;
pub mod run;
pub mod score;
pub mod sensitivity;
pub mod stats;
pub mod study;

pub use error::{Error, Result};

/// The version of this core, shown by the page and the command line.
pub const VERSION: &str = env!("CARGO_PKG_VERSION");
