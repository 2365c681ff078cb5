//! `pairsight report` on the small invented cohort.

mod common;
use common::*;

fn report(args: &[&str], out: &std::path::Path) -> std::process::Output {
    let (data, study) = small();
    let mut a: Vec<std::ffi::OsString> = vec![
        "report".into(),
        data.into(),
        "--study".into(),
        study.into(),
        "--out".into(),
        out.into(),
    ];
    a.extend(args.iter().map(|s| s.into()));
    pairsight(a)
}

#[test]
fn writes_one_self_contained_page_without_note_text() {
    let dir = fresh("report");
    let out = dir.join("report.html");
    let o = report(&[], &out);
    ok(&o);
    assert!(stdout(&o).contains("no note text"));
    let html = std::fs::read_to_string(&out).unwrap();
    assert!(html.starts_with("<!DOCTYPE html>"));
    assert!(html.contains("default-src 'none'"));
    for id in [
        "data", "designs", "balance", "overlap", "terms", "effect", "cautions", "study",
    ] {
        assert!(html.contains(&format!("<section id=\"{id}\">")), "{id}");
    }
    // The study file is embedded as written, comments included.
    assert!(html.contains("# Study file of the small invented test cohort"));
    // No note text: a phrase only the notes contain is absent.
    assert!(!html.contains("shortness of breath"));
    assert!(!html.contains("P0001"));
    assert!(!html.contains("<script"));
}

#[test]
fn notes_on_request_and_one_design() {
    let dir = fresh("report-notes");
    let out = dir.join("r.html");
    let o = report(
        &[
            "--include-notes",
            "--designs",
            "with-notes",
            "--example-pairs",
            "2",
        ],
        &out,
    );
    ok(&o);
    let html = std::fs::read_to_string(&out).unwrap();
    assert!(html.contains("<section id=\"examples\">"));
    assert_eq!(html.matches("class=\"pair-head\"").count(), 2);
    assert!(html.contains("SMD after: with-notes") && !html.contains("SMD after: structured"));
}

#[test]
fn ratings_without_a_key_and_bad_key_files_are_bad_input() {
    let dir = fresh("report-bad");
    let out = dir.join("r.html");
    let o = report(&["--ratings", "x.csv"], &out);
    assert_eq!(o.status.code(), Some(2));
    let key = dir.join("round-key.json");
    write(&key, "{ not json");
    let ratings = dir.join("a.csv");
    write(&ratings, "round_id,pair_key,reviewer,rating,comment,time\n");
    let o = report(
        &[
            "--round",
            key.to_str().unwrap(),
            "--ratings",
            ratings.to_str().unwrap(),
        ],
        &out,
    );
    let err = bad_input(&o);
    assert!(
        err.contains("round-key.json") && err.contains("not a round key file"),
        "{err}"
    );
    assert!(!out.exists());
}
