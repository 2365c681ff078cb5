//! `pairsight features` on the small invented cohort.

mod common;
use common::*;

#[test]
fn writes_id_and_every_note_feature_for_every_row() {
    let (data, study) = small();
    let dir = fresh("features");
    let out = dir.join("features.csv");
    let o = pairsight([
        "features".as_ref(),
        data.as_os_str(),
        "--study".as_ref(),
        study.as_os_str(),
        "--out".as_ref(),
        out.as_os_str(),
    ]);
    ok(&o);
    let (header, rows) = read_csv(&out);
    assert_eq!(header[0], "id");
    for name in [
        "note.tokens",
        "note.flesch",
        "note.lsa3",
        "concept.lives_alone",
        "concept.lives_alone.negated",
        "concept.fall.negated",
    ] {
        assert!(header.iter().any(|h| h == name), "{name} in {header:?}");
    }
    assert!(header[1..]
        .iter()
        .all(|h| h.starts_with("note.") || h.starts_with("concept.")));
    assert_eq!(rows.len(), 160);
    assert_eq!(rows[0][0], "P0001");
    for r in &rows {
        assert_eq!(r.len(), header.len());
        for v in &r[1..] {
            assert!(v.parse::<f64>().is_ok(), "{v}");
        }
    }
    // Row 2 of the fixture reads "Lives alone. ..." (tests/fixtures/small.csv).
    let col = header
        .iter()
        .position(|h| h == "concept.lives_alone")
        .unwrap();
    assert_eq!(rows[1][col], "1");
}

#[test]
fn a_study_without_notes_is_bad_input_naming_the_study_file() {
    let (data, study) = small();
    let dir = fresh("features-no-notes");
    let text = std::fs::read_to_string(&study)
        .unwrap()
        .replace("notes = \"admission_note\"\n", "")
        .replace(
            ", \"concept.lives_alone\", \"concept.frail\", \"concept.fall\"",
            "",
        )
        .replace("note = 0.5", "note = 0.0");
    let study2 = dir.join("plain.study.toml");
    write(&study2, &text);
    let o = pairsight([
        "features".as_ref(),
        data.as_os_str(),
        "--study".as_ref(),
        study2.as_os_str(),
        "--out".as_ref(),
        dir.join("f.csv").as_os_str(),
    ]);
    let err = bad_input(&o);
    assert!(
        err.contains("plain.study.toml") && err.contains("notes"),
        "{err}"
    );
    assert!(!dir.join("f.csv").exists());
}

#[test]
fn a_missing_covariate_column_names_the_file_and_column() {
    let (data, study) = small();
    let dir = fresh("features-bad-column");
    let text =
        std::fs::read_to_string(&data)
            .unwrap()
            .replacen("prior_admits", "prior_admissions", 1);
    let data2 = dir.join("renamed.csv");
    write(&data2, &text);
    let o = pairsight([
        "features".as_ref(),
        data2.as_os_str(),
        "--study".as_ref(),
        study.as_os_str(),
        "--out".as_ref(),
        dir.join("f.csv").as_os_str(),
    ]);
    let err = bad_input(&o);
    assert!(
        err.contains("renamed.csv") && err.contains("prior_admits"),
        "{err}"
    );
}
