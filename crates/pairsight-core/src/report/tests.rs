//! Tests of the report: hostile values stay text, no note text without the
//! opt-in, no way to reach the network.

use super::*;
use crate::rng::Rng;
use crate::run::Analysis;
use crate::study::Study;

/// A markup payload in every place the data can reach the page.
pub(crate) const HOSTILE_COLUMN: &str = "<script>alert(\"col\")</script>";
pub(crate) const HOSTILE_LEVEL: &str = "\"><img src=x onerror=alert(1)>";
pub(crate) const HOSTILE_NOTE: &str =
    "</textarea></script><script>alert(2)</script> lives alone <!-- javascript:alert(3)";

/// An invented cohort of `n` rows with hostile strings in a column name, a
/// category label and some notes (test data only).
pub(crate) fn hostile_analysis(n: usize) -> Analysis {
    let mut rng = Rng::new(11);
    let mut csv = format!(
        "pid,arm,age,ward,{},outcome,stay,note\n",
        csv_quote(HOSTILE_COLUMN)
    );
    for i in 0..n {
        let age = 50.0 + 40.0 * rng.uniform();
        let treated = rng.uniform() < 0.3 + (age - 50.0) / 100.0;
        let ward = if rng.uniform() < 0.5 {
            HOSTILE_LEVEL
        } else {
            "east"
        };
        let lab = (100.0 * rng.uniform()).round();
        let y = u8::from(rng.uniform() < 0.3);
        let stay = 3.0 + 4.0 * rng.uniform();
        let note = if i % 7 == 0 {
            HOSTILE_NOTE.to_string()
        } else if rng.uniform() < 0.4 {
            format!("zebracrossing{i} lives alone, uses a frame")
        } else {
            format!("zebracrossing{i} lives with family; denies falls")
        };
        csv.push_str(&format!(
            "Q{i:03},{},{age:.1},{},{lab},{y},{stay:.1},{}\n",
            if treated { "yes" } else { "no" },
            csv_quote(ward),
            csv_quote(&note)
        ));
    }
    let study = Study::from_toml(&format!(
        r#"
[columns]
id = "pid"
group = "arm"
treated = "yes"
outcomes = ["outcome", "stay"]
covariates = ["age", "ward", {col:?}]
notes = "note"
kinds = {{ ward = "categorical" }}

[note_options]
latent_dims = 2

[[concepts]]
name = "alone"
terms = ["lives alone"]

[[designs]]
name = "plain"
score_terms = ["age", "ward"]

[[designs]]
name = "noted"
score_terms = ["age", "ward", "concept.alone"]
distance = "blend"
blend = {{ score = 1.0, mahalanobis = 0.0, note = 1.0 }}
"#,
        col = HOSTILE_COLUMN
    ))
    .unwrap();
    Analysis::new(csv.as_bytes(), study).unwrap()
}

fn csv_quote(s: &str) -> String {
    format!("\"{}\"", s.replace('"', "\"\""))
}

fn report(include_notes: bool) -> String {
    let a = hostile_analysis(90);
    let runs = a.run_all().unwrap();
    report_html(
        &a,
        &runs,
        None,
        &ReportOptions {
            include_notes,
            ..ReportOptions::default()
        },
    )
    .unwrap()
}

#[test]
fn hostile_values_are_text_never_markup() {
    for include_notes in [false, true] {
        let html = report(include_notes);
        let lower = html.to_lowercase();
        // No script element, image, frame or link of any kind.
        for tag in [
            "<script",
            "<img",
            "<iframe",
            "<object",
            "<embed",
            "<link",
            "<base",
            "<form",
            "<textarea",
            "<meta http-equiv=\"refresh\"",
        ] {
            assert!(!lower.contains(tag), "{tag} in the report");
        }
        // Every <svg is one of our charts.
        assert_eq!(
            lower.matches("<svg").count(),
            lower.matches("<svg width=").count()
        );
        // The payloads are there, escaped.
        assert!(html.contains(&escape_html(HOSTILE_COLUMN)));
        assert!(html.contains("&lt;img src=x onerror=alert(1)&gt;"));
        if include_notes {
            assert!(html.contains("&lt;/script&gt;&lt;script&gt;alert(2)&lt;/script&gt;"));
        }
    }
}

#[test]
fn note_text_only_with_the_opt_in() {
    let without = report(false);
    assert!(!without.contains("zebracrossing"));
    assert!(!without.contains("alert(2)"));
    assert!(!without.contains("id=\"examples\""));
    let with = report(true);
    assert!(with.contains("zebracrossing"));
    assert!(with.contains("id=\"examples\""));
}

#[test]
fn nothing_can_be_fetched() {
    let html = report(true);
    assert!(html.contains(&format!(
        "<meta http-equiv=\"Content-Security-Policy\" content=\"{}\">",
        REPORT_CSP
    )));
    // The policy is the first thing in <head> after the charset.
    let head = &html[..html.find("</head>").unwrap()];
    assert!(head.find("charset").unwrap() < head.find("Content-Security-Policy").unwrap());
    // The only URLs are the SVG namespace (a name, never fetched) and
    // in-page anchors.
    let urls = html.matches("http").count();
    assert_eq!(
        urls,
        html.matches("http://www.w3.org/2000/svg").count() + html.matches("http-equiv").count()
    );
    for attr in [" href=\"h", " href=\"/", " href=\"j", "url("] {
        assert!(!html.contains(attr), "{attr}");
    }
    // "src=" occurs only inside the escaped payload's text.
    assert_eq!(
        html.matches("src=").count(),
        html.matches("&lt;img src=x").count()
    );
}

#[test]
fn every_section_is_there_and_the_study_file_is_embedded() {
    let html = report(false);
    for id in [
        "data", "designs", "balance", "overlap", "terms", "effect", "cautions", "study",
    ] {
        assert!(html.contains(&format!("<section id=\"{id}\">")), "{id}");
    }
    assert!(html.contains("<pre class=\"study\">[columns]"));
    assert!(html.contains("no unmeasured confounding"));
    // Two Love-plot designs, two overlap plots, a sensitivity plot per design
    // and outcome where bounds exist.
    assert!(html.matches("<figure>").count() >= 3);
    // The same input gives the same bytes.
    assert_eq!(html, report(false));
}

#[test]
fn counts_not_records() {
    let html = report(false);
    // No identifier of any row appears.
    assert!(!html.contains("Q001") && !html.contains("Q042"));
    assert!(html.contains("90 rows used") || html.contains("90 rows were used"));
}
