//! Tests of the whole note pipeline and the negation table.

use super::*;

fn demo_concepts() -> Vec<Concept> {
    vec![
        Concept::new(
            "lives_alone",
            &[
                "lives alone",
                "live alone",
                "living alone",
                "lives by herself",
                "lives by himself",
            ],
        ),
        Concept::new(
            "walking_aid",
            &["walking aid", "walking frame", "walker", "cane"],
        ),
        Concept::new("fall", &["fall", "falls", "fell", "fallen"]),
        Concept::new(
            "cognition",
            &[
                "confused",
                "confusion",
                "dementia",
                "cognitive impairment",
                "memory problems",
            ],
        ),
        Concept::new(
            "adherence",
            &[
                "poor adherence",
                "non-adherent",
                "missed doses",
                "not taking medications",
            ],
        ),
        Concept::new(
            "housing",
            &["homeless", "no fixed abode", "unstable housing"],
        ),
    ]
}

/// Expected readings of short sentences: (sentence, concept, affirmed,
/// negated). These follow common clinical reading of negation (common
/// practice, as annotated in NegEx-style evaluations; the sentences are our
/// own, invented).
const NEGATION_TABLE: &[(&str, &str, usize, usize)] = &[
    ("Patient lives alone.", "lives_alone", 1, 0),
    ("Does not live alone.", "lives_alone", 0, 1),
    ("Denies falls.", "fall", 0, 1),
    ("Recent fall at home.", "fall", 1, 0),
    ("No falls in the last year.", "fall", 0, 1),
    ("Fell twice this month.", "fall", 1, 0),
    ("No history of falls.", "fall", 0, 1),
    ("Negative for confusion.", "cognition", 0, 1),
    ("Confused overnight.", "cognition", 1, 0),
    ("Uses a walking frame.", "walking_aid", 1, 0),
    ("Mobilises without a walking aid.", "walking_aid", 0, 1),
    ("Without walker.", "walking_aid", 0, 1),
    ("Denies fever, chills, nausea or falls.", "fall", 0, 1),
    (
        "Denies chest pain but reports a fall yesterday.",
        "fall",
        1,
        0,
    ),
    ("No chest pain. Fell at home.", "fall", 1, 0),
    ("No chest pain; fell at home.", "fall", 1, 0),
    ("No fever\nFell at home", "fall", 1, 0),
    ("Dementia ruled out.", "cognition", 0, 1),
    (
        "Cognitive impairment has been ruled out.",
        "cognition",
        0,
        1,
    ),
    ("Not only confused but also agitated.", "cognition", 1, 0),
    ("No change in confusion.", "cognition", 1, 0),
    ("Confusion not ruled out.", "cognition", 1, 0),
    ("Free of falls since discharge.", "fall", 0, 1),
    ("Homeless, no fixed abode.", "housing", 2, 0),
    ("Not homeless.", "housing", 0, 1),
    ("Daughter states she lives alone.", "lives_alone", 1, 0),
    ("Patient is not confused.", "cognition", 0, 1),
    ("Pt isn\u{2019}t confused today.", "cognition", 0, 1),
    ("Never fallen.", "fall", 0, 1),
    ("No falls or confusion.", "fall", 0, 1),
    ("No falls or confusion.", "cognition", 0, 1),
    ("Poor adherence to medications.", "adherence", 1, 0),
    ("Non-adherent with insulin.", "adherence", 1, 0),
    ("Not taking medications as prescribed.", "adherence", 1, 0),
    ("Denies missed doses.", "adherence", 0, 1),
    ("Missed doses were denied.", "adherence", 0, 1),
    ("Falls: denied.", "fall", 0, 1),
    ("Falls: none.", "fall", 0, 1),
    ("Memory problems, no falls.", "cognition", 1, 0),
    ("Memory problems, no falls.", "fall", 0, 1),
    ("Walker at bedside, not using it.", "walking_aid", 1, 0),
    ("Walker not present on the ward.", "walking_aid", 0, 1),
    (
        "No longer lives alone; moved to daughter's.",
        "lives_alone",
        0,
        1,
    ),
    ("Has not fallen.", "fall", 0, 1),
    ("He is at risk of falls.", "fall", 1, 0),
    ("Absence of dementia on screening.", "cognition", 0, 1),
    ("Gram negative sepsis; confused.", "cognition", 1, 0),
    ("Previously homeless, however now housed.", "housing", 1, 0),
    ("No evidence of cognitive impairment.", "cognition", 0, 1),
    ("Fall risk: negative.", "fall", 0, 1),
    (
        "Denies being confused, however daughter reports confusion.",
        "cognition",
        1,
        1,
    ),
    (
        "No walking aid required; walks with a cane.",
        "walking_aid",
        1,
        1,
    ),
    ("The patient was confused and fell.", "fall", 1, 0),
    (
        "Unsteady, fell over the weekend, no injuries.",
        "fall",
        1,
        0,
    ),
    (
        "She lives by herself and uses a walker.",
        "lives_alone",
        1,
        0,
    ),
    (
        "She lives by herself and uses a walker.",
        "walking_aid",
        1,
        0,
    ),
    ("No falls reported.", "fall", 0, 1),
    (
        "Does not use a walking aid but fell last week.",
        "walking_aid",
        0,
        1,
    ),
    (
        "Does not use a walking aid but fell last week.",
        "fall",
        1,
        0,
    ),
    ("Lives alone with no support.", "lives_alone", 1, 0),
    ("Patient denies living alone.", "lives_alone", 0, 1),
    ("Negative for falls or confusion.", "cognition", 0, 1),
    ("NO FALLS.", "fall", 0, 1),
    (
        "Unstable housing, sofa surfing, denies drug use.",
        "housing",
        1,
        0,
    ),
];

#[test]
fn negation_table() {
    assert!(NEGATION_TABLE.len() >= 40);
    let concepts = demo_concepts();
    let m = ConceptMatcher::new(&concepts).unwrap();
    let mut wrong = Vec::new();
    for &(sentence, concept, aff, neg) in NEGATION_TABLE {
        let c = concepts.iter().position(|c| c.name == concept).unwrap();
        let got = m.count(sentence)[c];
        if got != (aff, neg) {
            wrong.push(format!(
                "{sentence:?} {concept}: got {got:?}, want ({aff}, {neg})"
            ));
        }
    }
    assert!(wrong.is_empty(), "{}", wrong.join("\n"));
}

#[test]
fn analyze_names_kinds_and_empty_notes() {
    let notes = [
        "Lives alone. Denies falls. Uses a walker at home.",
        "",
        "Recent fall; confused overnight. Daughter visits daily.",
        "Walks without aid. Lives with husband.",
    ];
    let f = analyze(
        &notes,
        &demo_concepts(),
        &NoteOptions {
            latent_dims: 2,
            ..Default::default()
        },
    )
    .unwrap();
    assert_eq!(
        &f.names[..8],
        [
            "note.tokens",
            "note.sentences",
            "note.flesch",
            "note.fk_grade",
            "note.ttr",
            "note.mtld",
            "note.lsa1",
            "note.lsa2"
        ]
    );
    assert_eq!(f.names[8], "concept.lives_alone");
    assert_eq!(f.names[9], "concept.lives_alone.negated");
    assert_eq!(f.names.len(), 8 + 12);
    assert_eq!(f.kinds[7], FeatureKind::Note);
    assert_eq!(f.kinds[8], FeatureKind::Concept);
    assert_eq!(f.values.dim(), (4, 20));
    assert!(f.values.iter().all(|x| x.is_finite()));
    // The empty note is all zeros.
    assert!(f.values.row(1).iter().all(|&x| x == 0.0));
    let col = |n: &str| f.column(n).unwrap();
    assert_eq!(f.values[[0, col("note.tokens")]], 8.0);
    assert_eq!(f.values[[0, col("note.sentences")]], 3.0);
    assert_eq!(f.values[[0, col("concept.fall.negated")]], 1.0);
    assert_eq!(f.values[[2, col("concept.fall")]], 1.0);
    assert_eq!(f.values[[2, col("concept.cognition")]], 1.0);
    assert_eq!(f.values[[0, col("concept.walking_aid")]], 1.0);
    // Unit TF-IDF rows, distance 1 to the empty note.
    assert!((f.tfidf.row_dot(0, 0) - 1.0).abs() < 1e-12);
    assert_eq!(cosine_distance(&f.tfidf, 0, 1), 1.0);
    // Same options, same bytes.
    let g = analyze(
        &notes,
        &demo_concepts(),
        &NoteOptions {
            latent_dims: 2,
            ..Default::default()
        },
    )
    .unwrap();
    assert_eq!(
        serde_json::to_string(&f).unwrap(),
        serde_json::to_string(&g).unwrap()
    );
}

#[test]
fn analyze_handles_no_notes_and_too_many_dims() {
    let f = analyze::<&str>(&[], &[], &NoteOptions::default()).unwrap();
    assert_eq!(f.values.dim(), (0, 6));
    assert!(analyze(
        &["x"],
        &[],
        &NoteOptions {
            latent_dims: 10_000,
            ..Default::default()
        }
    )
    .is_err());
    let one = analyze(&["only one note here"], &[], &NoteOptions::default()).unwrap();
    assert_eq!(one.latent.dim(), (1, 1));
}

#[test]
fn options_deserialize_with_defaults() {
    let o: NoteOptions = toml::from_str("stem = true").unwrap();
    assert!(o.stem && !o.bigrams && o.latent_dims == 10);
    let c: Concept = toml::from_str("name = \"lives_alone\"\nterms = [\"lives alone\"]").unwrap();
    assert!(c.negation);
}

#[test]
fn corpus_diversity_equals_per_note_diversity() {
    let notes = [
        "Lives alone, lives alone; the the the cat. Don't fall!",
        "",
        "a a a b b c Lives ALONE lives",
        "Unique words only here",
        "Lives alone, lives alone; the the the cat. Don't fall!",
    ];
    let f = analyze(
        &notes,
        &[],
        &NoteOptions {
            latent_dims: 0,
            ..Default::default()
        },
    )
    .unwrap();
    let (ct, cm) = (
        f.column("note.ttr").unwrap(),
        f.column("note.mtld").unwrap(),
    );
    for (i, n) in notes.iter().enumerate() {
        let lower = n.to_lowercase();
        let w: Vec<&str> = super::tokens::words(&lower)
            .into_iter()
            .map(|(s, e)| &lower[s..e])
            .collect();
        assert_eq!(f.values[[i, ct]], type_token_ratio(&w), "note {i}");
        assert_eq!(f.values[[i, cm]], mtld(&w), "note {i}");
    }
}

#[test]
fn split_over_threads_equals_one_pass() {
    // Enough notes for several ranges; per-note features and counts must not
    // depend on how the notes were split.
    let frags = [
        "Lives alone.",
        "Denies falls; uses a walker.",
        "Confused, café ½ x",
        "",
        "No dementia. Fell twice",
    ];
    let notes: Vec<String> = (0..5000)
        .map(|i| format!("{} {} note{}", frags[i % 5], frags[(i / 5) % 5], i % 97))
        .collect();
    let f = analyze(
        &notes,
        &demo_concepts(),
        &NoteOptions {
            latent_dims: 3,
            ..Default::default()
        },
    )
    .unwrap();
    let whole = super::tokens::count_terms(&notes, &NoteOptions::default());
    assert_eq!(f.vocabulary, whole.vocabulary);
    assert_eq!(f.counts.indptr, whole.indptr);
    assert_eq!(f.counts.indices, whole.indices);
    let m = ConceptMatcher::new(&demo_concepts()).unwrap();
    let alone = f.column("concept.lives_alone").unwrap();
    let fall_neg = f.column("concept.fall.negated").unwrap();
    for i in (0..notes.len()).step_by(37) {
        let one = analyze(
            &notes[i..i + 1],
            &[],
            &NoteOptions {
                latent_dims: 0,
                ..Default::default()
            },
        )
        .unwrap();
        for j in 0..BASE_FEATURES.len() {
            assert_eq!(f.values[[i, j]], one.values[[0, j]], "note {i} feature {j}");
        }
        let c = m.count(&notes[i]);
        assert_eq!(f.values[[i, alone]], c[0].0 as f64);
        assert_eq!(f.values[[i, fall_neg]], c[2].1 as f64);
    }
}

#[test]
fn vectorize_equals_analyze_vectors() {
    let notes = [
        "Lives alone. Denies falls.",
        "",
        "Recent fall; confused. Lives with son.",
        "walker walker frame",
    ];
    let o = NoteOptions {
        latent_dims: 2,
        bigrams: true,
        ..Default::default()
    };
    let f = analyze(&notes, &[], &o).unwrap();
    let v = vectorize(&notes, &o).unwrap();
    assert_eq!(v.vocabulary, f.vocabulary);
    assert_eq!(v.counts, f.counts);
    assert_eq!(v.tfidf, f.tfidf);
    assert_eq!(v.latent, f.latent);
    assert!(vectorize(
        &notes,
        &NoteOptions {
            latent_dims: 100_000,
            ..Default::default()
        }
    )
    .is_err());
}
