//! `pairsight packet` then `pairsight agree` on the small invented cohort:
//! a round is drawn, two reviewers' ratings come back, agreement and the
//! design comparison are written; bad ratings files are named precisely.

mod common;
use common::*;
use std::path::{Path, PathBuf};

fn packets(dir: &Path, extra: &[&str]) -> std::process::Output {
    let (data, study) = small();
    let mut a: Vec<std::ffi::OsString> = vec![
        "packet".into(),
        data.into(),
        "--study".into(),
        study.into(),
        "--out".into(),
        dir.into(),
    ];
    a.extend(extra.iter().map(|s| s.into()));
    pairsight(a)
}

fn key_of(dir: &Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(dir.join("round-key.json")).unwrap()).unwrap()
}

/// A ratings file for every pair of the round: rating from `f(index)`.
fn ratings(dir: &Path, key: &serde_json::Value, who: &str, f: impl Fn(usize) -> i64) -> PathBuf {
    let round = key["round"]["round_id"].as_str().unwrap();
    let mut text = String::from("round_id,pair_key,reviewer,rating,comment,time\r\n");
    for (i, it) in key["round"]["items"].as_array().unwrap().iter().enumerate() {
        text.push_str(&format!(
            "{round},{},{who},{},\"ok, fine\",2025-05-06T07:08:09.000Z\r\n",
            it["pair_key"].as_str().unwrap(),
            f(i)
        ));
    }
    let p = dir.join(format!("ratings-{who}.csv"));
    write(&p, &text);
    p
}

#[test]
fn a_round_is_drawn_rated_and_merged() {
    let dir = fresh("packet-round");
    let o = packets(
        &dir,
        &[
            "--reviewers",
            "rev-a,rev-b",
            "--sets-per-design",
            "10",
            "--seed",
            "4",
            "--show",
            "age,ward",
        ],
    );
    ok(&o);
    assert!(stdout(&o).contains("keep"));
    for f in ["packet-rev-a.html", "packet-rev-b.html", "round-key.json"] {
        assert!(dir.join(f).exists(), "{f}");
    }
    let key = key_of(&dir);
    let n = key["round"]["items"].as_array().unwrap().len();
    assert!((11..=20).contains(&n), "{n} pairs");
    let packet = std::fs::read_to_string(dir.join("packet-rev-a.html")).unwrap();
    assert!(packet.contains(key["round"]["round_id"].as_str().unwrap()));
    assert!(!packet.contains("structured") && !packet.contains("with-notes"));
    assert!(!packet.contains("P0"), "no identifier in a packet");

    // Same seed, same round; another seed, another round.
    let again = fresh("packet-round-again");
    ok(&packets(
        &again,
        &[
            "--reviewers",
            "rev-a,rev-b",
            "--sets-per-design",
            "10",
            "--seed",
            "4",
            "--show",
            "age,ward",
        ],
    ));
    assert_eq!(key_of(&again)["round"], key["round"]);
    assert_eq!(
        std::fs::read(again.join("packet-rev-a.html")).unwrap(),
        packet.as_bytes()
    );

    let a = ratings(&dir, &key, "rev-a", |i| (i % 5) as i64 + 1);
    let b = ratings(&dir, &key, "rev-b", |i| ((i + i / 3) % 5) as i64 + 1);
    let o = pairsight([
        "agree".as_ref(),
        "--key".as_ref(),
        dir.join("round-key.json").as_os_str(),
        a.as_os_str(),
        b.as_os_str(),
    ]);
    ok(&o);
    let out = stdout(&o);
    for needle in [
        "kappa, linear weights: rev-a and rev-b",
        "kappa, quadratic weights: rev-a and rev-b",
        "Krippendorff's alpha, ordinal",
        "Krippendorff's alpha, interval",
        "ICC(2,1)",
        "ICC(3,1)",
        "Rated similarity per design",
        "structured",
        "with-notes",
        "Which distance tracks the reviewers",
        "note-cosine distance",
    ] {
        assert!(out.contains(needle), "{needle} missing:\n{out}");
    }
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("agreement.json")).unwrap())
            .unwrap();
    assert_eq!(json["ratings"], 2 * n);
    assert_eq!(json["agreement"]["pairs_complete"], n);
    assert_eq!(json["comparison"]["designs"].as_array().unwrap().len(), 2);
    let k = json["agreement"]["kappas"][0]["quadratic"]["kappa"]
        .as_f64()
        .unwrap();
    assert!((-1.0..=1.0).contains(&k));

    // The report takes the same round.
    let html = dir.join("report.html");
    let (data, study) = small();
    ok(&pairsight([
        "report".as_ref(),
        data.as_os_str(),
        "--study".as_ref(),
        study.as_os_str(),
        "--out".as_ref(),
        html.as_os_str(),
        "--round".as_ref(),
        dir.join("round-key.json").as_os_str(),
        "--ratings".as_ref(),
        a.as_os_str(),
        b.as_os_str(),
    ]));
    let page = std::fs::read_to_string(&html).unwrap();
    assert!(page.contains("<section id=\"review\">"));
    assert!(page.contains("weighted kappa (quadratic), rev-a and rev-b"));
}

#[test]
fn bad_ratings_are_named_by_file_row_and_column() {
    let dir = fresh("packet-bad-ratings");
    ok(&packets(
        &dir,
        &["--reviewers", "rev-a", "--sets-per-design", "4"],
    ));
    let key = key_of(&dir);
    let round = key["round"]["round_id"].as_str().unwrap();
    let first = key["round"]["items"][0]["pair_key"].as_str().unwrap();
    let bad = dir.join("bad.csv");
    write(
        &bad,
        &format!(
            "round_id,pair_key,reviewer,rating,comment,time\n\
             {round},{first},rev-a,4,,2025-01-01T00:00:00Z\n\
             {round},ZZZ-ZZZ,rev-a,3,,2025-01-01T00:00:00Z\n\
             {round},{first},rev-a,9,,2025-01-01T00:00:00Z\n"
        ),
    );
    let other = dir.join("other-round.csv");
    write(
        &other,
        &format!("round_id,pair_key,reviewer,rating,comment,time\nR-0000000000,{first},rev-b,3,,2025-01-01T00:00:00Z\n"),
    );
    let o = pairsight([
        "agree".as_ref(),
        "--key".as_ref(),
        dir.join("round-key.json").as_os_str(),
        bad.as_os_str(),
        other.as_os_str(),
    ]);
    let err = bad_input(&o);
    assert!(err.contains("bad.csv, row 3, column \"pair_key\""), "{err}");
    assert!(err.contains("ZZZ-ZZZ"), "{err}");
    assert!(err.contains("bad.csv, row 4, column \"rating\""), "{err}");
    assert!(
        err.contains("other-round.csv") && err.contains("R-0000000000"),
        "{err}"
    );
    assert!(!dir.join("agreement.json").exists());

    // A file that is not there, and a key that is not a key.
    let o = pairsight([
        "agree".as_ref(),
        "--key".as_ref(),
        dir.join("round-key.json").as_os_str(),
        dir.join("missing.csv").as_os_str(),
    ]);
    assert!(bad_input(&o).contains("missing.csv"));
    let o = pairsight([
        "agree".as_ref(),
        "--key".as_ref(),
        bad.as_os_str(),
        bad.as_os_str(),
    ]);
    assert!(bad_input(&o).contains("not a round key file"));
}

#[test]
fn packets_refuse_unblinding_fields_and_bad_reviewer_labels() {
    let dir = fresh("packet-refuse");
    let err = bad_input(&packets(
        &dir,
        &["--reviewers", "rev-a", "--show", "early_plan"],
    ));
    assert!(err.contains("early_plan") && err.contains("group"), "{err}");
    let err = bad_input(&packets(
        &dir,
        &["--reviewers", "rev-a", "--show", "readmit_30d"],
    ));
    assert!(err.contains("outcome"), "{err}");
    let err = bad_input(&packets(&dir, &["--reviewers", "rev-a", "--show", "agee"]));
    assert!(err.contains("agee"), "{err}");
    let err = bad_input(&packets(&dir, &["--reviewers", "an a"]));
    assert!(err.contains("an a"), "{err}");
    let err = bad_input(&packets(
        &dir,
        &["--reviewers", "rev-a", "--designs", "nope"],
    ));
    assert!(
        err.contains("nope") && err.contains("small.study.toml"),
        "{err}"
    );
    assert!(!dir.join("round-key.json").exists());
}
