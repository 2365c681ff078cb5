//! Note features on a large invented corpus: tokens, concepts, TF-IDF and 50
//! latent dimensions (plus readability and diversity) in one `analyze` call.
//!
//! The corpus is generated here with the core's seeded generator and written
//! to `target/bench/notes-corpus.txt` (one note per line), so that
//! `tests/bench/notes.py` can time scikit-learn on exactly the same notes.
//! Set `PAIRSIGHT_BENCH_NOTES` to change the number of notes (default 20,000).

use std::hint::black_box;
use std::path::PathBuf;

use criterion::{criterion_group, criterion_main, Criterion};
use pairsight_core::notes::{analyze, vectorize, Concept, ConceptMatcher, NoteOptions};
use pairsight_core::rng::Rng;

const FRAGMENTS: &[&str] = &[
    "Lives alone in a flat, daughter visits weekly.",
    "Lives with husband who is the main carer.",
    "Mobilises with a walking frame.",
    "Denies falls, steady on feet.",
    "Fell at home last week, long lie.",
    "Confused overnight, known dementia.",
    "No evidence of cognitive impairment.",
    "Poor adherence, missed doses of insulin.",
    "Not taking medications as prescribed.",
    "Currently homeless, sofa surfing with friends.",
    "Obs stable, afebrile, eating and drinking.",
    "Plan: bloods, physio and OT review.",
];

/// A made-up word from syllables; rank r is drawn with Zipf weights 1/r, so
/// the vocabulary has a long tail like real text.
fn lexicon(n: usize) -> Vec<String> {
    const ONSET: &[&str] = &[
        "b", "c", "d", "f", "g", "h", "l", "m", "n", "p", "r", "s", "t", "v", "st", "pr", "tr",
        "ch",
    ];
    const VOWEL: &[&str] = &["a", "e", "i", "o", "u", "ai", "ea", "ou"];
    const CODA: &[&str] = &["", "n", "r", "s", "t", "l", "nd", "st"];
    let mut rng = Rng::new(7);
    (0..n)
        .map(|_| {
            let syl = 1 + rng.below(3);
            (0..syl)
                .map(|_| {
                    format!(
                        "{}{}{}",
                        ONSET[rng.below(ONSET.len())],
                        VOWEL[rng.below(VOWEL.len())],
                        CODA[rng.below(CODA.len())]
                    )
                })
                .collect::<String>()
        })
        .collect()
}

fn corpus(n_notes: usize) -> Vec<String> {
    let words = lexicon(8000);
    let mut cum = Vec::with_capacity(words.len());
    let mut acc = 0.0;
    for r in 0..words.len() {
        acc += 1.0 / (r + 1) as f64;
        cum.push(acc);
    }
    let mut rng = Rng::new(20_240_611);
    (0..n_notes)
        .map(|_| {
            let mut note = String::with_capacity(1400);
            let mut n_words = 0;
            let target = 170 + rng.below(60);
            while n_words < target {
                if rng.uniform() < 0.25 {
                    let f = FRAGMENTS[rng.below(FRAGMENTS.len())];
                    note.push_str(f);
                    n_words += f.split_whitespace().count();
                } else {
                    let len = 5 + rng.below(10);
                    for k in 0..len {
                        let u = rng.uniform() * acc;
                        let w = &words[cum.partition_point(|&c| c < u).min(words.len() - 1)];
                        if k == 0 {
                            let mut cs = w.chars();
                            if let Some(c) = cs.next() {
                                note.extend(c.to_uppercase());
                                note.push_str(cs.as_str());
                            }
                        } else {
                            note.push_str(w);
                        }
                        note.push(if k + 1 == len { '.' } else { ' ' });
                    }
                    n_words += len;
                }
                note.push(' ');
            }
            note.truncate(note.trim_end().len());
            note
        })
        .collect()
}

fn notes_bench(c: &mut Criterion) {
    let n: usize = std::env::var("PAIRSIGHT_BENCH_NOTES")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(20_000);
    let notes = corpus(n);
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../target/bench");
    std::fs::create_dir_all(&dir).expect("create target/bench");
    std::fs::write(dir.join("notes-corpus.txt"), notes.join("\n") + "\n").expect("write corpus");
    let concepts = vec![
        Concept::new(
            "lives_alone",
            &["lives alone", "lives by herself", "lives by himself"],
        ),
        Concept::new(
            "walking_aid",
            &["walking frame", "walking aid", "walker", "stick"],
        ),
        Concept::new("fall", &["fall", "falls", "fell", "long lie"]),
        Concept::new(
            "cognition",
            &["confused", "confusion", "dementia", "cognitive impairment"],
        ),
        Concept::new(
            "adherence",
            &["poor adherence", "missed doses", "not taking medications"],
        ),
        Concept::new("housing", &["homeless", "sofa surfing", "no fixed abode"]),
    ];
    let options = NoteOptions {
        latent_dims: 50,
        ..NoteOptions::default()
    };
    let mut group = c.benchmark_group("notes");
    group.sample_size(10);
    group.bench_function("analyze_50_latent", |b| {
        b.iter(|| analyze(black_box(&notes), &concepts, &options).expect("analyze"))
    });
    group.finish();

    // Also the best of three plain runs in wall and in process CPU time
    // (all threads), for tests/bench/notes.py: on a shared machine CPU time
    // is the steadier measure of work.
    let mut best_wall = f64::INFINITY;
    let mut best_cpu = f64::INFINITY;
    for _ in 0..3 {
        let (w0, c0) = (std::time::Instant::now(), process_cpu_seconds());
        black_box(analyze(black_box(&notes), &concepts, &options).expect("analyze"));
        best_wall = best_wall.min(w0.elapsed().as_secs_f64());
        if let (Some(a), Some(b)) = (c0, process_cpu_seconds()) {
            best_cpu = best_cpu.min(b - a);
        }
    }
    // The target's own scope: tokens, concept counts, TF-IDF and 50 latent
    // dimensions, without the readability and diversity measures that
    // `analyze` adds and scikit-learn does not compute.
    let matcher = ConceptMatcher::new(&concepts).expect("concepts");
    let mut best_scope = f64::INFINITY;
    for _ in 0..3 {
        let w0 = std::time::Instant::now();
        black_box(vectorize(black_box(&notes), &options).expect("vectorize"));
        for note in &notes {
            black_box(matcher.count(black_box(note)));
        }
        best_scope = best_scope.min(w0.elapsed().as_secs_f64());
    }
    let json = format!(
        "{{\"notes\": {n}, \"wall_seconds_best\": {best_wall}, \"scope_seconds_best\": {best_scope}, \"cpu_seconds_best\": {}}}\n",
        if best_cpu.is_finite() {
            best_cpu.to_string()
        } else {
            "null".to_string()
        }
    );
    std::fs::write(dir.join("notes-rust.json"), json).expect("write notes-rust.json");
}

/// User plus system CPU time of this process (all threads), from
/// /proc/self/stat (Linux; None elsewhere). Clock ticks are taken as 100 Hz,
/// the usual USER_HZ on Linux.
fn process_cpu_seconds() -> Option<f64> {
    let stat = std::fs::read_to_string("/proc/self/stat").ok()?;
    let after = stat.rsplit_once(')')?.1;
    let fields: Vec<&str> = after.split_whitespace().collect();
    // Fields 14 and 15 of the whole line (utime, stime) are 11 and 12 here.
    let utime: f64 = fields.get(11)?.parse().ok()?;
    let stime: f64 = fields.get(12)?.parse().ok()?;
    Some((utime + stime) / 100.0)
}

criterion_group!(benches, notes_bench);
criterion_main!(benches);
