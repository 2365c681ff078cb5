//! Invariants of the demo generator. The thresholds for rates are the
//! scenario's design targets (stated in docs/demo.md), not outside facts.

use super::notes::{Phrase, FACTOR_TEXT, NOTE_WORDS, TYPOS};
use super::*;
use crate::ingest::read_table;

fn demo(patients: usize, seed: u64) -> Demo {
    generate(&DemoParams { patients, seed }).unwrap()
}

fn notes_of(d: &Demo) -> Vec<String> {
    let t = read_table(d.cohort_csv.as_bytes()).unwrap();
    t.column("admission_note")
        .unwrap()
        .cells
        .iter()
        .map(str::to_string)
        .collect()
}

/// Whether `term` occurs in `text` (lower case) on word boundaries.
fn has_term(text: &str, term: &str) -> usize {
    let lower = text.to_lowercase();
    let bytes = lower.as_bytes();
    let mut count = 0;
    let mut from = 0;
    while let Some(pos) = lower[from..].find(term) {
        let start = from + pos;
        let end = start + term.len();
        let before_ok = start == 0 || !bytes[start - 1].is_ascii_alphanumeric();
        let after_ok = end == bytes.len() || !bytes[end].is_ascii_alphanumeric();
        if before_ok && after_ok {
            count += 1;
        }
        from = start + 1;
    }
    count
}

/// A phrase template in a woman's or a man's voice.
fn voiced(text: &str, female: bool) -> String {
    let (poss, obj, refl) = if female {
        ("her", "her", "herself")
    } else {
        ("his", "him", "himself")
    };
    text.replace("{poss}", poss)
        .replace("{obj}", obj)
        .replace("{refl}", refl)
        .replace("{hostel}", INVENTED_PLACES[3])
        .replace("{carehome}", INVENTED_PLACES[4])
}

fn term_hits(text: &str, terms: &[&str]) -> usize {
    terms.iter().map(|t| has_term(text, t)).sum()
}

/// Whether a phrase template (with `{placeholders}`) occurs in a note: its
/// literal pieces in order, each close after the previous.
fn template_in(note: &str, template: &str) -> bool {
    let pieces: Vec<&str> = template
        .split(['{', '}'])
        .enumerate()
        .filter(|(i, _)| i % 2 == 0)
        .map(|(_, p)| p)
        .filter(|p| !p.is_empty())
        .collect();
    let Some(first) = pieces.first() else {
        return false;
    };
    let mut search = 0;
    while let Some(pos) = note[search..].find(first) {
        let mut at = search + pos + first.len();
        let mut ok = true;
        for piece in &pieces[1..] {
            match note[at..].find(piece) {
                Some(p) if p <= 40 => at += p + piece.len(),
                _ => {
                    ok = false;
                    break;
                }
            }
        }
        if ok {
            return true;
        }
        search += pos + 1;
    }
    false
}

#[test]
fn default_cohort_rates_are_plausible() {
    for seed in [DEFAULT_SEED, 1, 2, 3] {
        let d = demo(DEFAULT_PATIENTS, seed);
        let t = &d.truth;
        assert!(
            (0.25..=0.45).contains(&t.treated_share),
            "seed {seed}: treated share {}",
            t.treated_share
        );
        let readmit = &t.outcomes[0];
        assert!(
            (0.10..=0.25).contains(&readmit.observed_mean),
            "seed {seed}: readmission {}",
            readmit.observed_mean
        );
        let stay = &t.outcomes[1];
        assert!(
            (4.0..=8.0).contains(&stay.observed_mean),
            "seed {seed}: stay {}",
            stay.observed_mean
        );
        // The visit helps, moderately: a risk difference of 4 to 9 points and
        // about half a day shorter on the treated.
        assert!(
            (-0.09..=-0.04).contains(&readmit.effect_on_treated),
            "seed {seed}: {}",
            readmit.effect_on_treated
        );
        assert!(
            (-1.0..=-0.3).contains(&stay.effect_on_treated),
            "seed {seed}: {}",
            stay.effect_on_treated
        );
    }
}

#[test]
fn observed_outcomes_are_the_potential_outcome_of_the_group() {
    let d = demo(2000, 5);
    let t = read_table(d.cohort_csv.as_bytes()).unwrap();
    assert_eq!(t.n_rows(), 2000);
    let group = t.column("early_plan").unwrap();
    let readmit = t.column("readmit_30d").unwrap();
    let stay = t.column("length_of_stay").unwrap();
    for (i, p) in d.potential.iter().enumerate() {
        let treated = &group.cells[i] == "1";
        let (r, s) = if treated {
            (p.readmit_treated, p.stay_treated)
        } else {
            (p.readmit_comparison, p.stay_comparison)
        };
        assert_eq!(&readmit.cells[i], r.to_string(), "row {i}");
        assert_eq!(&stay.cells[i], format!("{s:.1}"), "row {i}");
        // The visit never causes a readmission and always shortens the stay
        // (monotone by construction).
        assert!(p.readmit_treated <= p.readmit_comparison);
        assert!(p.stay_treated <= p.stay_comparison);
    }
}

#[test]
fn truth_is_computed_from_the_potential_outcomes() {
    let d = demo(1500, 9);
    let treated: Vec<bool> = {
        let t = read_table(d.cohort_csv.as_bytes()).unwrap();
        t.column("early_plan")
            .unwrap()
            .cells
            .iter()
            .map(|c| c == "1")
            .collect()
    };
    let n_t = treated.iter().filter(|x| **x).count();
    assert_eq!(d.truth.treated, n_t);
    let att: f64 = d
        .potential
        .iter()
        .zip(&treated)
        .filter(|(_, t)| **t)
        .map(|(p, _)| f64::from(p.readmit_treated) - f64::from(p.readmit_comparison))
        .sum::<f64>()
        / n_t as f64;
    let o = &d.truth.outcomes[0];
    assert!((o.effect_on_treated - att).abs() < 1e-6);
    assert!(
        (o.effect_on_treated - (o.treated_mean_with_visit - o.treated_mean_without_visit)).abs()
            < 2e-6
    );
    assert_eq!(d.truth.patients, 1500);
    assert_eq!(d.truth.seed, 9);
}

#[test]
fn same_seed_same_bytes_other_seed_other_bytes() {
    let a = demo(400, 42);
    let b = demo(400, 42);
    assert_eq!(a, b);
    assert_eq!(a.truth_json().unwrap(), b.truth_json().unwrap());
    let c = demo(400, 43);
    assert_ne!(a.cohort_csv, c.cohort_csv);
    // A smaller cohort is the start of a larger one with the same seed, so
    // the browser can preview the first rows of any size.
    let big = demo(800, 42);
    assert!(big.cohort_csv.starts_with(&a.cohort_csv));
}

#[test]
fn the_raw_comparison_is_confounded() {
    let d = demo(DEFAULT_PATIENTS, DEFAULT_SEED);
    for o in &d.truth.outcomes {
        // The unadjusted difference points the wrong way: treated patients
        // look worse although the visit helps them.
        assert!(
            o.naive_difference > 0.0,
            "{}: {}",
            o.name,
            o.naive_difference
        );
        assert!(o.effect_on_treated < 0.0);
    }
    let gap = d.truth.outcomes[0].naive_difference - d.truth.outcomes[0].effect_on_treated;
    assert!(gap > 0.08, "readmission confounding gap {gap}");
    // Every note-only factor is commoner among the treated.
    for f in &d.truth.note_factors {
        assert!(f.treated > f.comparison + 0.02, "{f:?}");
    }
}

#[test]
fn notes_have_the_stated_length_and_headings() {
    for seed in [DEFAULT_SEED, 3] {
        let d = demo(1500, seed);
        for (i, note) in notes_of(&d).iter().enumerate() {
            let words = note.split_whitespace().count();
            assert!(
                (NOTE_WORDS.0..=NOTE_WORDS.1).contains(&words),
                "note {i} has {words} words"
            );
            assert!(note.contains("Meds:") && note.contains("O/E:"), "{note}");
            assert!(!note.contains('{') && !note.contains('}'), "{note}");
        }
    }
}

#[test]
fn every_phrasing_appears_in_a_large_sample() {
    let d = demo(DEFAULT_PATIENTS, DEFAULT_SEED);
    let notes = notes_of(&d);
    let seen = |template: &str| notes.iter().any(|n| template_in(n, template));
    for ft in &FACTOR_TEXT {
        assert!(ft.affirmed.len() >= 6, "at least five listed phrasings");
        for ph in ft.affirmed {
            assert!(seen(ph.text), "affirmed phrasing never used: {}", ph.text);
        }
        for t in ft.negated.iter().chain(ft.neutral).chain(ft.distractors) {
            assert!(seen(t), "sentence never used: {t}");
        }
        assert!(seen(ft.plan), "plan item never used: {}", ft.plan);
    }
    let typos = TYPOS
        .iter()
        .filter(|(_, w)| notes.iter().any(|n| n.contains(w)));
    assert!(typos.count() >= 5, "typos are too rare");
}

#[test]
fn phrasings_are_caught_or_missed_as_declared() {
    let cues = ["denies", "no", "not", "without"];
    for ft in &FACTOR_TEXT {
        let listed: Vec<&Phrase> = ft.affirmed.iter().filter(|p| p.listed).collect();
        assert!(listed.len() >= 5);
        for (ph, female) in ft.affirmed.iter().flat_map(|p| [(p, true), (p, false)]) {
            let text = voiced(ph.text, female);
            let hits = term_hits(&text, ft.terms);
            if ph.listed {
                assert_eq!(hits, 1, "one concept term in: {}", ph.text);
                // No negation cue anywhere before the term.
                let lower = text.to_lowercase();
                for cue in cues {
                    let first_term = ft.terms.iter().filter_map(|t| lower.find(t)).min().unwrap();
                    assert_eq!(has_term(&lower[..first_term], cue), 0, "{}", ph.text);
                }
            } else {
                assert_eq!(hits, 0, "the unlisted phrasing holds a term: {}", ph.text);
            }
        }
        for t in ft.negated {
            assert!(term_hits(&voiced(t, true), ft.terms) >= 1, "{t}");
            let lower = voiced(t, true).to_lowercase();
            let first_term = ft.terms.iter().filter_map(|x| lower.find(x)).min().unwrap();
            assert!(
                cues.iter().any(|c| has_term(&lower[..first_term], c) > 0),
                "a negation cue comes before the term in: {t}"
            );
        }
        for t in ft.neutral {
            assert_eq!(term_hits(t, ft.terms), 0, "{t}");
        }
        assert_eq!(term_hits(ft.plan, ft.terms), 0, "{}", ft.plan);
        // At least one distractor contains a term (a false positive a term
        // list makes), and at least one only looks relevant.
        let with_term = ft
            .distractors
            .iter()
            .filter(|t| term_hits(t, ft.terms) > 0)
            .count();
        assert!(with_term >= 1, "{:?}", ft.distractors);
    }
    // Typos never touch a concept term.
    for (right, wrong) in TYPOS {
        for ft in &FACTOR_TEXT {
            for term in ft.terms {
                assert!(!term.contains(right) && !term.contains(wrong));
            }
        }
    }
}

/// Real-looking given names and surnames that must never appear in a note.
/// Our own list of common names, for this check only.
const REAL_LOOKING: [&str; 40] = [
    "Smith",
    "Jones",
    "Johnson",
    "Williams",
    "Brown",
    "Taylor",
    "Walker",
    "Wilson",
    "Davies",
    "Evans",
    "Thomas",
    "Roberts",
    "Miller",
    "Anderson",
    "Clark",
    "Lewis",
    "Patel",
    "Nguyen",
    "Garcia",
    "Martin",
    "Mary",
    "John",
    "James",
    "David",
    "Sarah",
    "Michael",
    "Robert",
    "Linda",
    "Susan",
    "Peter",
    "Anne",
    "Margaret",
    "Elizabeth",
    "George",
    "William",
    "Jennifer",
    "Mohammed",
    "Maria",
    "Chen",
    "Kim",
];

#[test]
fn names_come_only_from_the_invented_lists() {
    let d = demo(DEFAULT_PATIENTS, DEFAULT_SEED);
    let notes = notes_of(&d);
    let mut doctors = 0;
    for note in &notes {
        for word in note.split(|c: char| !c.is_ascii_alphabetic()) {
            assert!(
                !REAL_LOOKING.contains(&word),
                "real-looking name {word} in: {note}"
            );
        }
        let mut rest = note.as_str();
        while let Some(pos) = rest.find("Dr. ") {
            let after = &rest[pos + 4..];
            let name: String = after
                .chars()
                .take_while(|c| c.is_ascii_alphabetic())
                .collect();
            assert!(
                INVENTED_PEOPLE.contains(&name.as_str()),
                "unlisted name Dr. {name}"
            );
            doctors += 1;
            rest = after;
        }
        for suffix in ["Surgery", "Hospital", "House", "Lodge", "General"] {
            let mut rest = note.as_str();
            while let Some(pos) = rest.find(suffix) {
                let upto = &rest[..pos + suffix.len()];
                let whole_word =
                    !rest[pos + suffix.len()..].starts_with(|c: char| c.is_ascii_alphabetic());
                assert!(
                    !whole_word || INVENTED_PLACES.iter().any(|p| upto.ends_with(p)),
                    "a place not from the invented list near: {}",
                    &upto[upto.len().saturating_sub(60)..]
                );
                rest = &rest[pos + suffix.len()..];
            }
        }
    }
    assert!(
        doctors >= DEFAULT_PATIENTS,
        "every note names an invented clinician"
    );
}

#[test]
fn missing_values_are_present_but_modest() {
    let d = demo(DEFAULT_PATIENTS, DEFAULT_SEED);
    let t = read_table(d.cohort_csv.as_bytes()).unwrap();
    let n = t.n_rows() as f64;
    let sodium = t.column("sodium").unwrap();
    let creat = t.column("creatinine").unwrap();
    let s_missing = sodium.missing_count() as f64 / n;
    let c_missing = creat.missing_count() as f64 / n;
    assert!((0.01..=0.05).contains(&s_missing), "{s_missing}");
    assert!((0.02..=0.07).contains(&c_missing), "{c_missing}");
    assert!(sodium.cells.iter().any(|c| c == "NA"));
    assert!(creat.cells.iter().any(|c| c.is_empty()));
    for name in [
        "age",
        "sex",
        "ward",
        "admission_route",
        "prior_admissions",
        "heart_rate",
    ] {
        assert_eq!(t.column(name).unwrap().missing_count(), 0, "{name}");
    }
    assert_eq!(t.column("ward").unwrap().levels().len(), WARDS.len());
}

#[test]
fn the_study_file_names_roles_concepts_and_designs() {
    let d = demo(10, 1);
    let v: toml::Value = toml::from_str(&d.study_toml).unwrap();
    assert_eq!(v["columns"]["group"].as_str(), Some("early_plan"));
    assert_eq!(v["columns"]["treated"].as_str(), Some("1"));
    let concepts = v["concepts"].as_array().unwrap();
    let names: Vec<&str> = concepts
        .iter()
        .map(|c| c["name"].as_str().unwrap())
        .collect();
    assert_eq!(names, Factors::NAMES.to_vec());
    let designs = v["designs"].as_array().unwrap();
    let by_name = |n: &str| {
        designs
            .iter()
            .find(|d| d["name"].as_str() == Some(n))
            .unwrap()
    };
    let terms = |d: &toml::Value| -> Vec<String> {
        d["score_terms"]
            .as_array()
            .unwrap()
            .iter()
            .map(|t| t.as_str().unwrap().to_string())
            .collect()
    };
    let structured = terms(by_name("structured"));
    let aware = terms(by_name("notes-aware"));
    assert!(structured.iter().all(|t| !t.starts_with("concept.")));
    for n in Factors::NAMES {
        assert!(aware.contains(&format!("concept.{n}")));
    }
    assert!(structured.iter().all(|t| aware.contains(t)));
    // The cohort's header holds every column the study file names.
    let header = d.cohort_csv.lines().next().unwrap();
    for t in &structured {
        assert!(header.split(',').any(|h| h == t), "{t}");
    }
}

#[test]
fn bad_sizes_are_errors() {
    assert!(matches!(
        generate(&DemoParams {
            patients: 0,
            seed: 1
        }),
        Err(Error::Param { .. })
    ));
    assert!(generate(&DemoParams {
        patients: MAX_PATIENTS + 1,
        seed: 1
    })
    .is_err());
    assert_eq!(demo(1, 1).potential.len(), 1);
}
