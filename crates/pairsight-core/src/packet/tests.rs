//! Tests of the rating packet and the key file.

use super::*;
use crate::report::csp_hash;
use crate::report::tests::{hostile_analysis, HOSTILE_NOTE};
use crate::review::{merge_ratings, write_ratings_csv, RatingRow, RatingsFile, Side};

fn options(reviewers: &[&str]) -> PacketOptions {
    PacketOptions {
        reviewers: reviewers.iter().map(|r| r.to_string()).collect(),
        review: ReviewParams {
            sets_per_design: 6,
            show_fields: vec!["age".into()],
            ..ReviewParams::default()
        },
        ..PacketOptions::default()
    }
}

fn built() -> (Analysis, Vec<DesignRun>, Packets) {
    let a = hostile_analysis(90);
    let runs = a.run_all().unwrap();
    let p = build_packets(&a, &runs, &options(&["rev1", "rev2"])).unwrap();
    (a, runs, p)
}

/// The JSON of the packet's data block.
fn data_of(html: &str) -> serde_json::Value {
    let open = "<script type=\"application/json\" id=\"packet-data\">";
    let start = html.find(open).unwrap() + open.len();
    let end = start + html[start..].find("</script>").unwrap();
    serde_json::from_str(&html[start..end]).unwrap()
}

#[test]
fn packets_hold_no_design_group_outcome_id_or_row() {
    let (a, _, p) = built();
    assert_eq!(p.files.len(), 2);
    assert_eq!(p.files[0].name, "packet-rev1.html");
    for f in &p.files {
        let h = &f.html;
        let data = data_of(h).to_string();
        // Design names, group and outcome columns and values, identifiers.
        for secret in [
            "plain",
            "noted",
            "\"arm\"",
            "\"outcome\"",
            "\"stay\"",
            "yes",
            "pid",
        ] {
            assert!(!data.contains(secret), "{secret} in the data of {}", f.name);
        }
        for secret in ["\"plain\"", "\"noted\"", "round-key"] {
            assert!(!h.contains(secret), "{secret} in {}", f.name);
        }
        for id in a.cohort.ids.iter() {
            assert!(!h.contains(id.as_str()), "id {id} in the packet");
        }
        let d = data_of(h);
        let pairs = d["pairs"].as_array().unwrap();
        assert_eq!(pairs.len(), p.key.round.items.len());
        // Only the key, notes, shown fields and marks travel.
        let mut fields: Vec<&str> = pairs[0]["left"]
            .as_object()
            .unwrap()
            .keys()
            .map(String::as_str)
            .collect();
        fields.sort_unstable();
        assert_eq!(fields, ["fields", "marks", "note"]);
        assert!(!serde_json::to_string(&d).unwrap().contains("row"));
    }
    // Two packets differ only in the reviewer.
    let strip = |h: &str, r: &str| h.replace(r, "REVIEWER");
    assert_eq!(
        strip(&p.files[0].html, "rev1"),
        strip(&p.files[1].html, "rev2")
    );
}

#[test]
fn each_side_shows_the_row_the_key_says() {
    let (a, _, p) = built();
    let notes = a.cohort.cells("note").unwrap();
    let ages = a.cohort.cells("age").unwrap();
    let d = data_of(&p.files[0].html);
    for (i, item) in p.key.round.items.iter().enumerate() {
        let k = p
            .key
            .round
            .key
            .iter()
            .find(|k| k.pair_key == item.pair_key)
            .unwrap();
        let (left, right) = match k.treated_side {
            Side::Left => (k.treated_row, k.comparison_row),
            Side::Right => (k.comparison_row, k.treated_row),
        };
        let pair = &d["pairs"][i];
        assert_eq!(pair["key"], item.pair_key.as_str());
        assert_eq!(pair["left"]["note"], notes[left]);
        assert_eq!(pair["right"]["note"], notes[right]);
        assert_eq!(pair["left"]["fields"][0], ages[left]);
        assert_eq!(p.key.pairs[i].treated_id, a.cohort.ids[k.treated_row]);
    }
}

#[test]
fn inline_code_is_allowed_by_hash_and_nothing_else_runs() {
    let (_, _, p) = built();
    let h = &p.files[0].html;
    let csp_start = h.find("Content-Security-Policy\" content=\"").unwrap();
    let csp = &h[csp_start..csp_start + h[csp_start..].find("\">").unwrap()];
    assert!(csp.contains("default-src 'none'"));
    assert!(csp.contains("connect-src 'none'"));
    assert!(csp.contains(&format!("script-src {};", csp_hash(PACKET_SCRIPT))));
    assert!(csp.contains(&format!("style-src {};", csp_hash(PACKET_STYLE))));
    assert!(!csp.contains("unsafe-inline"));
    // The script block between its tags is exactly the hashed text.
    assert!(h.contains(&format!("<script>{PACKET_SCRIPT}</script>")));
    assert!(h.contains(&format!("<style>{PACKET_STYLE}</style>")));
    // Exactly two script elements: the data block and the code.
    assert_eq!(h.matches("<script").count(), 2);
    assert_eq!(h.matches("</script>").count(), 2);
    // The code never turns data into markup.
    for sink in [
        "innerHTML",
        "outerHTML",
        "insertAdjacentHTML",
        "document.write",
        "eval(",
        "fetch(",
        "XMLHttpRequest",
    ] {
        assert!(!PACKET_SCRIPT.contains(sink), "{sink}");
    }
}

#[test]
fn a_hostile_note_stays_inside_the_data_block() {
    let (_, _, p) = built();
    let d = data_of(&p.files[0].html);
    let notes: Vec<&str> = d["pairs"]
        .as_array()
        .unwrap()
        .iter()
        .flat_map(|x| {
            [
                x["left"]["note"].as_str().unwrap(),
                x["right"]["note"].as_str().unwrap(),
            ]
        })
        .collect();
    if notes.contains(&HOSTILE_NOTE) {
        assert!(p.files[0]
            .html
            .contains("\\u003c/script\\u003e\\u003cscript\\u003ealert(2)"));
    }
    assert!(!p.files[0].html.contains("alert(2)</script>"));
}

#[test]
fn reviewers_and_shown_fields_are_checked() {
    let a = hostile_analysis(90);
    let runs = a.run_all().unwrap();
    for bad in [
        vec![],
        vec!["a b"],
        vec!["../x"],
        vec!["same", "SAME"],
        vec![".hidden"],
    ] {
        assert!(build_packets(&a, &runs, &options(&bad)).is_err(), "{bad:?}");
    }
    for field in ["arm", "outcome", "pid", "note", "no such column"] {
        let mut o = options(&["r"]);
        o.review.show_fields = vec![field.into()];
        let e = build_packets(&a, &runs, &o).unwrap_err().to_string();
        assert!(e.contains(field) || e.contains("no column"), "{e}");
    }
}

#[test]
fn key_file_round_trips_and_carries_every_distance() {
    let (_, runs, p) = built();
    let text = p.key.to_json().unwrap();
    let back = RoundKey::from_json(&text).unwrap();
    // serde_json reads floats to within the last bit; everything else is exact.
    assert_eq!(back.round.items, p.key.round.items);
    assert_eq!(back.pairs, p.key.pairs);
    assert_eq!(back.measures.len(), runs.len() + 1);
    for m in &back.measures {
        assert_eq!(m.values.len(), back.round.items.len());
    }
    // A design's own distance for its own pairs is the matched distance.
    for k in &back.round.key {
        let m = back
            .measures
            .iter()
            .find(|m| m.name.contains(&format!("\"{}\"", k.design)))
            .unwrap();
        let v = m.values.iter().find(|(pk, _)| *pk == k.pair_key).unwrap().1;
        assert!((v - k.distance).abs() < 1e-9, "{v} vs {}", k.distance);
    }
    let wrong = text.replace(KEY_FORMAT, "something else");
    assert!(RoundKey::from_json(&wrong).is_err());
    assert!(RoundKey::from_json("{").is_err());
}

#[test]
fn results_of_a_rated_round() {
    let (_, _, p) = built();
    let key = &p.key;
    let rows = |who: &str, shift: i64| -> Vec<RatingRow> {
        key.round
            .items
            .iter()
            .enumerate()
            .map(|(i, it)| RatingRow {
                round_id: key.round.round_id.clone(),
                pair_key: it.pair_key.clone(),
                reviewer: who.into(),
                rating: ((i as i64 + shift) % 5) + 1,
                comment: String::new(),
                time: "2025-02-03T09:00:00.000Z".into(),
            })
            .collect()
    };
    let files: Vec<RatingsFile> = [("a.csv", rows("rev1", 0)), ("b.csv", rows("rev2", 0))]
        .into_iter()
        .map(|(n, r)| RatingsFile {
            name: n.into(),
            bytes: write_ratings_csv(&r).unwrap().into_bytes(),
        })
        .collect();
    let merged = merge_ratings(&key.round, &files).strict().unwrap();
    let r = review_results(key, &merged, &ResultsParams::default()).unwrap();
    // Identical ratings: perfect agreement everywhere.
    let k = &r.agreement.kappas[0];
    assert!((k.linear.as_ref().unwrap().kappa - 1.0).abs() < 1e-12);
    assert!((k.quadratic.as_ref().unwrap().kappa - 1.0).abs() < 1e-12);
    assert!((r.agreement.alpha_ordinal.as_ref().unwrap().alpha - 1.0).abs() < 1e-12);
    assert_eq!(r.agreement.pairs_complete, key.round.items.len());
    assert_eq!(r.comparison.designs.len(), 2);
    // One reviewer only: agreement is explained, not an error.
    let merged = merge_ratings(&key.round, &files[..1]).strict().unwrap();
    let r = review_results(key, &merged, &ResultsParams::default()).unwrap();
    assert!(r.agreement.kappas.is_empty() && r.agreement.icc.is_none());
    assert!(r.agreement.notes[0].contains("two reviewers"));
}
