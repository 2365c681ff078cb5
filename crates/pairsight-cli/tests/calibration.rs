//! Calibration on the invented demo cohort, whose generator knows the true
//! effect on the treated (`truth.json`): the structured-only design is
//! visibly biased, the note-aware design recovers the truth and its interval
//! covers it, and the note concepts are imbalanced after structured-only
//! matching but balanced after note-aware matching. Then the rest of the
//! command line (`effect`, `report`, `packet`) runs on the demo.

mod common;
use common::*;
use pairsight_core::study::{DistanceKind, Study};
use std::path::{Path, PathBuf};

/// The demo's files: the repository's `demo/` when present, else freshly
/// generated with `pairsight demo`.
fn demo_files(dir: &Path) -> (PathBuf, PathBuf, PathBuf) {
    let repo = root().join("demo");
    let from = if repo.join("cohort.csv").exists() {
        repo
    } else {
        ok(&pairsight([
            "demo".as_ref(),
            "--out".as_ref(),
            dir.as_os_str(),
        ]));
        dir.to_path_buf()
    };
    (
        from.join("cohort.csv"),
        from.join("demo.study.toml"),
        from.join("truth.json"),
    )
}

/// The first design whose score terms or distance use the notes.
fn note_aware_design(study: &str) -> String {
    let study = Study::from_toml(study).unwrap();
    study
        .designs
        .iter()
        .find(|d| {
            d.score_terms
                .iter()
                .any(|t| t.starts_with("concept.") || t.starts_with("note."))
                || matches!(d.distance, DistanceKind::NoteCosine | DistanceKind::Blend)
        })
        .expect("the demo study has a note-aware design")
        .name
        .clone()
}

/// Matched readmission estimate and interval, and each concept's SMD after
/// matching, of one design run by `pairsight match`.
fn run_design(data: &Path, study: &Path, out: &Path, design: &str) -> (f64, f64, f64, Vec<f64>) {
    ok(&pairsight_match(data, study, out, &["--design", design]));
    let effect: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(out.join(design).join("effect.json")).unwrap(),
    )
    .unwrap();
    let o = effect["outcomes"]
        .as_array()
        .unwrap()
        .iter()
        .find(|o| o["name"] == "readmit_30d")
        .unwrap();
    let m = &o["matched"];
    let balance = std::fs::read_to_string(out.join(design).join("balance.csv")).unwrap();
    let concepts = balance
        .lines()
        .filter(|l| l.split(',').nth(1) == Some("concept"))
        .map(|l| l.split(',').nth(3).unwrap().parse::<f64>().unwrap())
        .collect();
    (
        m["estimate"].as_f64().unwrap(),
        m["ci_low"].as_f64().unwrap(),
        m["ci_high"].as_f64().unwrap(),
        concepts,
    )
}

/// The calibration the demo promises (issue text of the demo scenario): the
/// structured-only design misses the true readmission effect by at least 3
/// percentage points, the note-aware one lands within 1.5; concepts are
/// imbalanced (|SMD| > 0.1) after the first and balanced after the second.
#[test]
fn demo_calibration_structured_is_biased_note_aware_recovers_truth() {
    let dir = fresh("calibration");
    let (data, study, truth) = demo_files(&dir);
    let truth: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&truth).unwrap()).unwrap();
    let att = truth["outcomes"][0]["effect_on_treated"].as_f64().unwrap();
    assert_eq!(truth["outcomes"][0]["name"], "readmit_30d");
    let out = dir.join("runs");
    let (structured, _, _, c_structured) = run_design(&data, &study, &out, "structured");
    let (aware, lo, hi, c_aware) = run_design(&data, &study, &out, "notes-aware");
    assert!(
        (structured - att).abs() >= 0.03,
        "structured-only estimate {structured} should miss the truth {att} by 3 points or more"
    );
    assert!(
        (aware - att).abs() <= 0.015,
        "note-aware estimate {aware} should land within 1.5 points of the truth {att}"
    );
    assert!(lo <= att && att <= hi, "interval {lo}..{hi} misses {att}");
    assert_eq!(
        c_structured.len(),
        6,
        "six note concepts in the balance table"
    );
    assert!(
        c_structured.iter().all(|s| s.abs() > 0.1),
        "concepts after structured-only matching: {c_structured:?}"
    );
    assert!(
        c_aware.iter().all(|s| s.abs() < 0.1),
        "concepts after note-aware matching: {c_aware:?}"
    );
}

#[test]
fn the_rest_of_the_command_line_runs_on_the_demo() {
    let dir = fresh("demo");
    let (data, study, _) = demo_files(&dir);
    let design = note_aware_design(&std::fs::read_to_string(&study).unwrap());
    let o = pairsight([
        "effect".as_ref(),
        data.as_os_str(),
        "--study".as_ref(),
        study.as_os_str(),
    ]);
    ok(&o);
    assert!(stdout(&o).contains(&format!("Design \"{design}\"")));
    let html = dir.join("report.html");
    ok(&pairsight([
        "report".as_ref(),
        data.as_os_str(),
        "--study".as_ref(),
        study.as_os_str(),
        "--out".as_ref(),
        html.as_os_str(),
    ]));
    let page = std::fs::read_to_string(&html).unwrap();
    assert!(page.contains("<section id=\"effect\">"));
    let round = dir.join("round");
    ok(&pairsight([
        "packet".as_ref(),
        data.as_os_str(),
        "--study".as_ref(),
        study.as_os_str(),
        "--out".as_ref(),
        round.as_os_str(),
        "--reviewers".as_ref(),
        "r1,r2".as_ref(),
        "--sets-per-design".as_ref(),
        "10".as_ref(),
    ]));
    assert!(round.join("packet-r1.html").exists() && round.join("round-key.json").exists());
}
