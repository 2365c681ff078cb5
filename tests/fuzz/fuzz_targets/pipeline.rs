//! Any bytes as a cohort file behind a fixed study with notes, concepts and
//! two designs: the whole pipeline gives an error or output files, never a
//! panic.
#![no_main]

use libfuzzer_sys::fuzz_target;
use pairsight_core::run::Analysis;
use pairsight_core::study::Study;
use std::sync::OnceLock;

const STUDY: &str = r#"[columns]
id = "id"
group = "g"
treated = "1"
outcomes = ["y"]
covariates = ["x", "c"]
notes = "note"

[note_options]
latent_dims = 2

[[concepts]]
name = "fall"
terms = ["fall", "falls"]

[[designs]]
name = "greedy"
score_terms = ["x", "c", "concept.fall"]
algorithm = "greedy"
caliper = 0.5
exact = ["c"]

[[designs]]
name = "optimal"
score_terms = ["x"]
distance = "blend"
controls = 2
"#;

fn study() -> &'static Study {
    static S: OnceLock<Study> = OnceLock::new();
    S.get_or_init(|| Study::from_toml(STUDY).expect("the study reads"))
}

fuzz_target!(|data: &[u8]| {
    // Keep each run short: the cost of a cohort grows with its rows.
    if data.len() > 4096 {
        return;
    }
    let Ok(a) = Analysis::new(data, study().clone()) else {
        return;
    };
    for d in &a.study.designs {
        if let Ok(run) = a.run(d) {
            run.files(&a).expect("a run writes its files");
        }
    }
});
