//! The bad-input corpus through the command line: every case of
//! `tests/fixtures/bad/MANIFEST.toml` is run with `pairsight match` and must
//! give its documented outcome -- exit code 2 with a message naming what and
//! where, or exit code 0 with the documented result -- and never a panic, a
//! stack trace, a hang, or a CSV cell a spreadsheet would run as a formula.
//!
//! The manifest is the single source of truth; this file only knows how to
//! read it, how to build the generated inputs, and how to check each field.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::Mutex;
use std::time::{Duration, Instant};

/// Longest a single case may run before it counts as a hang (debug build).
const CASE_TIMEOUT: Duration = Duration::from_secs(180);

fn corpus_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../tests/fixtures/bad")
}

fn scratch(name: &str) -> PathBuf {
    let d = Path::new(env!("CARGO_TARGET_TMPDIR")).join(name);
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).expect("scratch folder");
    d
}

/// One `[[case]]` of the manifest.
#[derive(Debug, Clone)]
struct Case {
    index: usize,
    file: Option<String>,
    generate: Option<String>,
    study: String,
    args: Vec<String>,
    exercises: String,
    outcome: String,
    message: Vec<String>,
    same_as: Option<String>,
    summary: BTreeMap<String, toml::Value>,
    summary_has: Vec<String>,
    effect: BTreeMap<String, toml::Value>,
    balance_na: Vec<String>,
    csv_has: BTreeMap<String, Vec<String>>,
}

impl Case {
    fn label(&self) -> String {
        let input = self
            .file
            .clone()
            .or_else(|| self.generate.clone())
            .unwrap_or_default();
        format!("case {} ({input}, {})", self.index + 1, self.study)
    }
    /// The reference a `same_as` names: that file, the default study, no
    /// extra arguments.
    fn is_reference_for(&self, file: &str) -> bool {
        self.file.as_deref() == Some(file)
            && self.study == "base.study.toml"
            && self.args.is_empty()
    }
}

fn strings(v: Option<&toml::Value>) -> Vec<String> {
    v.and_then(|v| v.as_array())
        .map(|a| {
            a.iter()
                .map(|s| s.as_str().expect("a string").to_string())
                .collect()
        })
        .unwrap_or_default()
}

fn table(v: Option<&toml::Value>) -> BTreeMap<String, toml::Value> {
    v.and_then(|v| v.as_table())
        .map(|t| t.iter().map(|(k, v)| (k.clone(), v.clone())).collect())
        .unwrap_or_default()
}

fn manifest() -> Vec<Case> {
    let text = std::fs::read_to_string(corpus_dir().join("MANIFEST.toml")).expect("manifest");
    let doc: toml::Table = toml::from_str(&text).expect("the manifest is valid TOML");
    let cases = doc["case"].as_array().expect("[[case]] entries");
    cases
        .iter()
        .enumerate()
        .map(|(index, c)| {
            let get = |k: &str| c.get(k);
            let s = |k: &str| get(k).and_then(|v| v.as_str()).map(str::to_string);
            let case = Case {
                index,
                file: s("file"),
                generate: s("generate"),
                study: s("study").unwrap_or_else(|| "base.study.toml".to_string()),
                args: strings(get("args")),
                exercises: s("exercises").unwrap_or_default(),
                outcome: s("outcome").expect("every case has an outcome"),
                message: strings(get("message")),
                same_as: s("same_as"),
                summary: table(get("summary")),
                summary_has: strings(get("summary_has")),
                effect: table(get("effect")),
                balance_na: strings(get("balance_na")),
                csv_has: table(get("csv_has"))
                    .into_iter()
                    .map(|(k, v)| (k, strings(Some(&v))))
                    .collect(),
            };
            let known = [
                "file",
                "generate",
                "study",
                "args",
                "exercises",
                "outcome",
                "message",
                "same_as",
                "summary",
                "summary_has",
                "effect",
                "balance_na",
                "csv_has",
            ];
            for k in c.as_table().expect("a table").keys() {
                assert!(
                    known.contains(&k.as_str()),
                    "{}: unknown field {k}",
                    case.label()
                );
            }
            case
        })
        .collect()
}

/// Build a generated input (see the manifest's header) from base.csv.
fn generate(spec: &str, dir: &Path) -> PathBuf {
    let base = std::fs::read_to_string(corpus_dir().join("base.csv")).expect("base.csv");
    let (kind, n) = spec.split_once(':').expect("kind:N");
    let n: usize = n.parse().expect("a count");
    let lines: Vec<&str> = base.lines().collect();
    let text = match kind {
        "wide" => {
            let mut out = String::with_capacity(base.len() + lines.len() * n * 3);
            for (r, line) in lines.iter().enumerate() {
                out.push_str(line);
                for c in 1..=n {
                    out.push(',');
                    if r == 0 {
                        out.push_str(&format!("x{c}"));
                    } else {
                        out.push_str(&((r * c) % 97).to_string());
                    }
                }
                out.push('\n');
            }
            out
        }
        "long_note" => {
            let sentence = "Lives alone; recent fall. ";
            let note: String = sentence.repeat(n / sentence.len() + 1)[..n].to_string();
            let mut out = String::new();
            for (r, line) in lines.iter().enumerate() {
                if r == 1 {
                    // The first patient's note is the last field and unquoted.
                    let cut = line.rfind(',').expect("a note field");
                    out.push_str(&line[..cut]);
                    out.push_str(",\"");
                    out.push_str(&note);
                    out.push('"');
                } else {
                    out.push_str(line);
                }
                out.push('\n');
            }
            out
        }
        "long_header" => {
            let mut out = String::new();
            for (r, line) in lines.iter().enumerate() {
                out.push_str(line);
                out.push(',');
                if r == 0 {
                    out.push_str(&"h".repeat(n));
                } else {
                    out.push('1');
                }
                out.push('\n');
            }
            out
        }
        other => panic!("unknown generated input {other}"),
    };
    let path = dir.join(format!("{}.csv", spec.replace(':', "_")));
    std::fs::write(&path, text).expect("write generated input");
    path
}

/// What one run produced.
struct Ran {
    code: Option<i32>,
    stdout: String,
    stderr: String,
    out: PathBuf,
    seconds: f64,
}

/// Run `pairsight match` with a time limit, so a hang fails the case rather
/// than the whole test run.
fn run_case(case: &Case, root: &Path) -> Ran {
    let out = root.join(format!("case{:03}", case.index + 1));
    let input = match (&case.file, &case.generate) {
        (Some(f), None) => corpus_dir().join(f),
        (None, Some(g)) => generate(g, root),
        _ => panic!("{}: give exactly one of file and generate", case.label()),
    };
    let start = Instant::now();
    let mut child = Command::new(env!("CARGO_BIN_EXE_pairsight"))
        .arg("match")
        .arg(&input)
        .arg("--study")
        .arg(corpus_dir().join(&case.study))
        .arg("--out")
        .arg(&out)
        .args(&case.args)
        .env("RUST_BACKTRACE", "1")
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the pairsight binary starts");
    // Read the pipes on their own threads so a chatty child cannot block.
    let mut so = child.stdout.take().expect("stdout");
    let mut se = child.stderr.take().expect("stderr");
    let t_out = std::thread::spawn(move || {
        let mut s = String::new();
        let _ = std::io::Read::read_to_string(&mut so, &mut s);
        s
    });
    let t_err = std::thread::spawn(move || {
        let mut s = String::new();
        let _ = std::io::Read::read_to_string(&mut se, &mut s);
        s
    });
    let status = loop {
        if let Some(st) = child.try_wait().expect("wait") {
            break Some(st);
        }
        if start.elapsed() > CASE_TIMEOUT {
            let _ = child.kill();
            let _ = child.wait();
            break None;
        }
        std::thread::sleep(Duration::from_millis(20));
    };
    Ran {
        code: status.and_then(|s| s.code()),
        stdout: t_out.join().unwrap_or_default(),
        stderr: t_err.join().unwrap_or_default(),
        out,
        seconds: start.elapsed().as_secs_f64(),
    }
}

/// Design folders a run wrote, by name.
fn design_dirs(out: &Path) -> Vec<PathBuf> {
    let mut dirs: Vec<PathBuf> = std::fs::read_dir(out)
        .map(|rd| {
            rd.filter_map(|e| e.ok().map(|e| e.path()))
                .filter(|p| p.is_dir())
                .collect()
        })
        .unwrap_or_default();
    dirs.sort();
    dirs
}

/// Follow a dotted path (`a.b.0.c`) into JSON.
fn at<'a>(json: &'a serde_json::Value, path: &str) -> Option<&'a serde_json::Value> {
    path.split('.')
        .try_fold(json, |v, key| match key.parse::<usize>() {
            Ok(i) if v.is_array() => v.get(i),
            _ => v.get(key),
        })
}

fn same_value(json: &serde_json::Value, want: &toml::Value) -> bool {
    match want {
        toml::Value::String(s) => json.as_str() == Some(s.as_str()),
        toml::Value::Integer(i) => json.as_i64() == Some(*i) || json.as_f64() == Some(*i as f64),
        toml::Value::Float(f) => json.as_f64() == Some(*f),
        toml::Value::Boolean(b) => json.as_bool() == Some(*b),
        _ => false,
    }
}

/// Every cell of every CSV under `dir`: a text cell that starts with a
/// character a spreadsheet reads as the start of a formula must have been
/// neutralised (OWASP, "CSV Injection"); only a negative number may start
/// with '-'.
fn formula_problems(dir: &Path) -> Vec<String> {
    let mut problems = Vec::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        let Ok(rd) = std::fs::read_dir(&d) else {
            continue;
        };
        for e in rd.flatten() {
            let p = e.path();
            if p.is_dir() {
                stack.push(p);
            } else if p.extension().is_some_and(|x| x == "csv") {
                let mut r = csv::ReaderBuilder::new()
                    .has_headers(false)
                    .flexible(true)
                    .from_path(&p)
                    .expect("open output CSV");
                for (i, rec) in r.records().enumerate() {
                    let rec = match rec {
                        Ok(r) => r,
                        Err(e) => {
                            problems.push(format!("{}: unreadable CSV: {e}", p.display()));
                            break;
                        }
                    };
                    for cell in rec.iter() {
                        if !formula_safe(cell) {
                            problems.push(format!(
                                "{} line {}: formula-like cell {cell:?}",
                                p.display(),
                                i + 1
                            ));
                        }
                    }
                }
            }
        }
    }
    problems
}

fn formula_safe(cell: &str) -> bool {
    match cell.chars().next() {
        Some('=' | '+' | '@' | '\t' | '\r') => false,
        Some('-') => cell.parse::<f64>().is_ok_and(f64::is_finite),
        _ => true,
    }
}

/// The outputs `same_as` compares, as text; summary.json without its record
/// of how the file was read (which is what differs between the variants).
fn comparable_outputs(out: &Path) -> BTreeMap<String, String> {
    let mut files = BTreeMap::new();
    for d in design_dirs(out) {
        let design = d
            .file_name()
            .unwrap_or_default()
            .to_string_lossy()
            .into_owned();
        for name in [
            "matched.csv",
            "score.csv",
            "balance.csv",
            "terms.csv",
            "effect.json",
            "summary.json",
        ] {
            let Ok(text) = std::fs::read_to_string(d.join(name)) else {
                continue;
            };
            let text = if name == "summary.json" {
                let mut v: serde_json::Value = serde_json::from_str(&text).expect("summary JSON");
                if let Some(o) = v.as_object_mut() {
                    o.remove("cohort_file");
                }
                v.to_string()
            } else {
                text
            };
            files.insert(format!("{design}/{name}"), text);
        }
    }
    files
}

/// Check one case's run against its documented outcome; problems in words.
fn check(case: &Case, ran: &Ran) -> Vec<String> {
    let mut p = Vec::new();
    for bad in ["panicked", "RUST_BACKTRACE", "stack backtrace"] {
        if ran.stderr.contains(bad) || ran.stdout.contains(bad) {
            p.push(format!(
                "a panic or stack trace reached the user ({bad}):\n{}",
                ran.stderr
            ));
        }
    }
    match ran.code {
        None => p.push(format!("no exit within {CASE_TIMEOUT:?} (a hang)")),
        Some(c) if c != 0 && c != 2 => p.push(format!("exit code {c}, expected 0 or 2")),
        _ => {}
    }
    p.extend(formula_problems(&ran.out));
    match case.outcome.as_str() {
        "error" => {
            if ran.code != Some(2) {
                p.push(format!(
                    "expected exit 2, got {:?}; stdout: {}",
                    ran.code, ran.stdout
                ));
            }
            if !ran.stderr.starts_with("pairsight: ") {
                p.push(format!(
                    "the message does not start with \"pairsight: \": {}",
                    ran.stderr
                ));
            }
            if ran.stderr.trim().lines().count() != 1 {
                p.push(format!("the message is not one line: {}", ran.stderr));
            }
            for m in &case.message {
                if !ran.stderr.contains(m.as_str()) {
                    p.push(format!("message lacks {m:?}: {}", ran.stderr.trim()));
                }
            }
            if case.message.is_empty() {
                p.push("an error case must list message substrings".to_string());
            }
        }
        "ok" => {
            if ran.code != Some(0) {
                p.push(format!(
                    "expected exit 0, got {:?}: {}",
                    ran.code,
                    ran.stderr.trim()
                ));
                return p;
            }
            let dirs = design_dirs(&ran.out);
            if dirs.is_empty() {
                p.push("no design folder was written".to_string());
            }
            for d in &dirs {
                for f in [
                    "matched.csv",
                    "score.csv",
                    "balance.csv",
                    "effect.json",
                    "summary.json",
                ] {
                    if !d.join(f).is_file() {
                        p.push(format!("{} lacks {f}", d.display()));
                    }
                }
                let read_json = |name: &str| -> Option<(String, serde_json::Value)> {
                    let text = std::fs::read_to_string(d.join(name)).ok()?;
                    let v = serde_json::from_str(&text).ok()?;
                    Some((text, v))
                };
                if let Some((text, json)) = read_json("summary.json") {
                    for (path, want) in &case.summary {
                        match at(&json, path) {
                            Some(v) if same_value(v, want) => {}
                            got => p.push(format!("summary.json {path}: want {want}, got {got:?}")),
                        }
                    }
                    for s in &case.summary_has {
                        if !text.contains(s.as_str()) {
                            p.push(format!("summary.json lacks {s:?}"));
                        }
                    }
                } else {
                    p.push("summary.json is missing or not JSON".to_string());
                }
                if let Some((_, json)) = read_json("effect.json") {
                    for (path, want) in &case.effect {
                        match at(&json, path) {
                            Some(v) if same_value(v, want) => {}
                            got => p.push(format!("effect.json {path}: want {want}, got {got:?}")),
                        }
                    }
                }
                if !case.balance_na.is_empty() {
                    let text = std::fs::read_to_string(d.join("balance.csv")).unwrap_or_default();
                    let mut r = csv::Reader::from_reader(text.as_bytes());
                    let header = r.headers().cloned().unwrap_or_default();
                    let col = |n: &str| header.iter().position(|h| h == n);
                    let rows: Vec<csv::StringRecord> = r.records().flatten().collect();
                    for term in &case.balance_na {
                        match rows.iter().find(|row| row.get(0) == Some(term.as_str())) {
                            None => p.push(format!("balance.csv has no row {term:?}")),
                            Some(row) => {
                                for c in ["smd_before", "smd_after"] {
                                    let v = col(c).and_then(|i| row.get(i));
                                    if v != Some("NA") {
                                        p.push(format!(
                                            "balance.csv {term} {c} is {v:?}; an undefined SMD must be NA"
                                        ));
                                    }
                                }
                            }
                        }
                    }
                }
                for (file, cells) in &case.csv_has {
                    let text = std::fs::read_to_string(d.join(file)).unwrap_or_default();
                    let all: Vec<String> = csv::ReaderBuilder::new()
                        .has_headers(false)
                        .from_reader(text.as_bytes())
                        .records()
                        .flatten()
                        .flat_map(|r| r.iter().map(str::to_string).collect::<Vec<_>>())
                        .collect();
                    for c in cells {
                        if !all.contains(c) {
                            p.push(format!("{file} has no cell {c:?}"));
                        }
                    }
                }
            }
        }
        other => p.push(format!("unknown outcome {other:?}")),
    }
    p
}

#[test]
fn manifest_lists_every_corpus_file_and_only_existing_ones() {
    let cases = manifest();
    assert!(cases.len() >= 50, "the corpus needs at least 50 cases");
    let dir = corpus_dir();
    let mut listed = std::collections::BTreeSet::new();
    for c in &cases {
        for f in c.file.iter().chain(std::iter::once(&c.study)) {
            assert!(dir.join(f).is_file(), "{}: {f} does not exist", c.label());
            listed.insert(f.clone());
        }
        if let Some(s) = &c.same_as {
            assert!(
                cases.iter().any(|r| r.is_reference_for(s)),
                "{}: same_as {s} names no case with that file, the base study and no arguments",
                c.label()
            );
        }
        assert!(
            !c.exercises.is_empty(),
            "{}: say what it exercises",
            c.label()
        );
    }
    for e in std::fs::read_dir(&dir).expect("corpus folder").flatten() {
        let name = e.file_name().to_string_lossy().into_owned();
        let is_input = name.ends_with(".csv") || name.ends_with(".toml");
        if is_input && name != "MANIFEST.toml" {
            assert!(
                listed.contains(&name),
                "{name} is in the corpus but not in the manifest"
            );
        }
    }
}

#[test]
fn every_corpus_case_gives_its_documented_outcome() {
    let cases = manifest();
    let root = scratch("bad-input");
    let next = AtomicUsize::new(0);
    let results: Mutex<BTreeMap<usize, Ran>> = Mutex::new(BTreeMap::new());
    // Two workers: the machines that run this have few cores.
    std::thread::scope(|s| {
        for _ in 0..2 {
            s.spawn(|| loop {
                let i = next.fetch_add(1, Ordering::SeqCst);
                let Some(case) = cases.get(i) else {
                    break;
                };
                let ran = run_case(case, &root);
                results.lock().expect("results").insert(i, ran);
            });
        }
    });
    let results = results.into_inner().expect("results");
    let mut failures = Vec::new();
    let mut slowest = (0.0, String::new());
    for case in &cases {
        let ran = &results[&case.index];
        if ran.seconds > slowest.0 {
            slowest = (ran.seconds, case.label());
        }
        let mut problems = check(case, ran);
        if let Some(reference) = &case.same_as {
            let r = cases
                .iter()
                .find(|c| c.is_reference_for(reference))
                .expect("a reference case");
            let want = comparable_outputs(&results[&r.index].out);
            let got = comparable_outputs(&ran.out);
            if want.is_empty() {
                problems.push(format!("the reference {reference} wrote nothing"));
            }
            for (name, text) in &want {
                match got.get(name) {
                    Some(t) if t == text => {}
                    Some(_) => problems.push(format!("{name} differs from that of {reference}")),
                    None => problems.push(format!("{name} was not written (as for {reference})")),
                }
            }
        }
        if !problems.is_empty() {
            failures.push(format!(
                "{} -- {}:\n  {}",
                case.label(),
                case.exercises,
                problems.join("\n  ")
            ));
        }
    }
    eprintln!(
        "{} corpus cases run; slowest {:.1} s ({})",
        cases.len(),
        slowest.0,
        slowest.1
    );
    assert!(
        failures.is_empty(),
        "{} of {} corpus cases failed:\n{}",
        failures.len(),
        cases.len(),
        failures.join("\n")
    );
}

/// Run `pairsight` with arguments; the output, with no panic allowed.
fn pairsight(args: &[&std::ffi::OsStr]) -> std::process::Output {
    let o = Command::new(env!("CARGO_BIN_EXE_pairsight"))
        .args(args)
        .env("RUST_BACKTRACE", "1")
        .output()
        .expect("the pairsight binary runs");
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        !err.contains("panicked") && !err.contains("stack backtrace"),
        "a panic reached the user:\n{err}"
    );
    assert!(o.status.success(), "exit {:?}: {err}", o.status.code());
    o
}

/// The cells of a CSV file, header first.
fn csv_rows(path: &Path) -> Vec<Vec<String>> {
    csv::ReaderBuilder::new()
        .has_headers(false)
        .from_path(path)
        .expect("open CSV")
        .records()
        .map(|r| {
            r.expect("a CSV record")
                .iter()
                .map(str::to_string)
                .collect()
        })
        .collect()
}

/// The hostile cohort (tests/fixtures/hostile.csv): markup, script and
/// formula payloads in notes, column names, category labels and ids. Every
/// command that reads a cohort runs on it; every CSV written is safe in a
/// spreadsheet and gives back the payloads exactly once the guard apostrophe
/// is taken off; no HTML written holds a payload as markup.
#[test]
fn hostile_cohort_stays_text_in_every_output() {
    use pairsight_core::output::restore_cell;
    let fixtures = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../tests/fixtures");
    let data = fixtures.join("hostile.csv");
    let study = fixtures.join("hostile.study.toml");
    let input = csv_rows(&data);
    let header = &input[0];
    let id_col = header.iter().position(|h| h == "patient_id").expect("ids");
    let ids: Vec<String> = input[1..]
        .iter()
        .map(|r| r[id_col].trim().to_string())
        .collect();
    let markup: Vec<&str> = input
        .iter()
        .flatten()
        .map(String::as_str)
        .filter(|c| c.contains('<'))
        .collect();
    assert!(
        markup.len() >= 20,
        "the fixture should carry at least 20 markup payloads"
    );
    let dir = scratch("hostile");
    let o = |p: &Path| p.as_os_str().to_owned();

    // match: every CSV safe; ids and labels come back exactly.
    let out = dir.join("match");
    pairsight(&[
        "match".as_ref(),
        &o(&data),
        "--study".as_ref(),
        &o(&study),
        "--out".as_ref(),
        &o(&out),
    ]);
    let problems = formula_problems(&out);
    assert!(problems.is_empty(), "{problems:#?}");
    let design = out.join("hostile");
    let score = csv_rows(&design.join("score.csv"));
    let back: Vec<String> = score[1..].iter().map(|r| restore_cell(&r[0])).collect();
    assert_eq!(back, ids, "ids in score.csv differ from the cohort's");
    for r in &csv_rows(&design.join("matched.csv"))[1..] {
        assert!(ids.contains(&restore_cell(&r[1])), "unknown id {:?}", r[1]);
    }
    let terms: Vec<String> = csv_rows(&design.join("balance.csv"))[1..]
        .iter()
        .map(|r| restore_cell(&r[0]))
        .collect();
    for want in [
        "<img src=x onerror=alert(1)>",
        "=HYPERLINK(\"http://example.invalid\",\"x\")",
        "@risk",
        "-flag",
        "unit=<script>alert(1)</script>",
        "unit=\"><svg onload=alert(1)>",
        "unit==cmd|' /C calc'!A0",
        "unit={{7*7}}",
    ] {
        assert!(
            terms.iter().any(|t| t == want),
            "balance.csv lacks {want:?}: {terms:?}"
        );
    }

    // features: the same guard on the id column.
    let features = dir.join("features.csv");
    pairsight(&[
        "features".as_ref(),
        &o(&data),
        "--study".as_ref(),
        &o(&study),
        "--out".as_ref(),
        &o(&features),
    ]);
    let problems = formula_problems(&dir);
    assert!(problems.is_empty(), "{problems:#?}");
    let rows = csv_rows(&features);
    let back: Vec<String> = rows[1..].iter().map(|r| restore_cell(&r[0])).collect();
    assert_eq!(back, ids);

    // effect: plain text with the caution beside the estimate.
    let eff = pairsight(&["effect".as_ref(), &o(&data), "--study".as_ref(), &o(&study)]);
    let text = String::from_utf8_lossy(&eff.stdout);
    assert!(text.contains("unmeasured confounding"), "{text}");

    // report (with notes) and packets: no payload survives as markup.
    let report = dir.join("report.html");
    pairsight(&[
        "report".as_ref(),
        &o(&data),
        "--study".as_ref(),
        &o(&study),
        "--out".as_ref(),
        &o(&report),
        "--include-notes".as_ref(),
    ]);
    let packets = dir.join("packets");
    pairsight(&[
        "packet".as_ref(),
        &o(&data),
        "--study".as_ref(),
        &o(&study),
        "--out".as_ref(),
        &o(&packets),
        "--reviewers".as_ref(),
        "a,b".as_ref(),
        "--show".as_ref(),
        "unit,@risk,<img src=x onerror=alert(1)>".as_ref(),
    ]);
    let mut pages = vec![report.clone()];
    pages.extend(
        std::fs::read_dir(&packets)
            .expect("packets")
            .flatten()
            .map(|e| e.path())
            .filter(|p| p.extension().is_some_and(|x| x == "html")),
    );
    assert_eq!(pages.len(), 3, "a report and two packets");
    for page in &pages {
        let html = std::fs::read_to_string(page).expect("HTML");
        for p in &markup {
            assert!(
                !html.contains(p),
                "{} holds the payload {p:?} as markup",
                page.display()
            );
        }
    }
    let html = std::fs::read_to_string(&report).expect("report");
    assert!(
        html.contains("&lt;img src=x onerror=alert(1)&gt;"),
        "the report shows the column name as text"
    );
    let problems = formula_problems(&dir);
    assert!(problems.is_empty(), "{problems:#?}");
}
