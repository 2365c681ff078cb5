//! The study file (`*.study.toml`): which column plays which role, the note
//! concepts, and the named designs to compare. Our own schema, documented in
//! `docs/study-file.md`; the browser reads and writes the same file.
//!
//! Unknown keys and bad values are errors that name the key and say what is
//! allowed.

use crate::ingest::{nearest, Kind};
pub use crate::matching::Algorithm;
use crate::notes::{Concept, NoteOptions, MAX_LATENT_DIMS};
use crate::{Error, Result};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// A whole study: roles, concepts, note options and designs.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Study {
    /// What each column is for.
    pub columns: Columns,
    /// Named term lists looked for in notes.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub concepts: Vec<Concept>,
    /// How notes are turned into tokens and vectors.
    #[serde(default)]
    pub note_options: NoteOptions,
    /// Designs to build and compare.
    #[serde(default)]
    pub designs: Vec<Design>,
}

/// Roles of columns.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Columns {
    /// Patient identifier column (unique per row).
    pub id: String,
    /// The two-valued group column.
    pub group: String,
    /// Which value of `group` is treated.
    pub treated: String,
    /// Outcome columns.
    #[serde(default)]
    pub outcomes: Vec<String>,
    /// Structured covariates shown in the balance table.
    #[serde(default)]
    pub covariates: Vec<String>,
    /// The free-text note column, if any.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub notes: Option<String>,
    /// Overrides of inferred column kinds, e.g. `{ ward = "categorical" }`.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub kinds: BTreeMap<String, Kind>,
}

/// How two units' distance is measured.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum DistanceKind {
    /// Absolute difference in logit score.
    Score,
    /// Mahalanobis distance on the design's covariates.
    Mahalanobis,
    /// One minus the cosine similarity of note vectors.
    NoteCosine,
    /// A weighted sum of the standardized distances above.
    Blend,
}

/// Which note vectors the `note-cosine` distance compares.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "kebab-case")]
pub enum NoteVectors {
    /// TF-IDF rows.
    #[default]
    Tfidf,
    /// Latent (LSA) rows.
    Latent,
}

/// Weights of the `blend` distance.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct BlendWeights {
    /// Weight of the logit-score distance.
    pub score: f64,
    /// Weight of the Mahalanobis distance.
    pub mahalanobis: f64,
    /// Weight of the note-cosine distance.
    pub note: f64,
}

impl Default for BlendWeights {
    fn default() -> Self {
        BlendWeights {
            score: 1.0,
            mahalanobis: 1.0,
            note: 1.0,
        }
    }
}

/// A named matching recipe.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Design {
    /// Name, also the output folder name.
    pub name: String,
    /// Terms of the score model: column names, note feature names, and
    /// `square(x)` or `product(x, y)` of numeric ones.
    pub score_terms: Vec<String>,
    /// Distance used to pick partners.
    #[serde(default = "default_distance")]
    pub distance: DistanceKind,
    /// Caliper on the logit score, in pooled SDs of the logit score.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub caliper: Option<f64>,
    /// Columns on which partners must agree exactly.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub exact: Vec<String>,
    /// Comparison units per treated unit.
    #[serde(default = "one")]
    pub controls: usize,
    /// Whether a comparison unit may serve several treated units.
    #[serde(default)]
    pub reuse: bool,
    /// Matching algorithm.
    #[serde(default = "default_algorithm")]
    pub algorithm: Algorithm,
    /// Covariates of the Mahalanobis distance (default: the score terms).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub mahalanobis_terms: Vec<String>,
    /// Which note vectors `note-cosine` compares.
    #[serde(default)]
    pub note_vectors: NoteVectors,
    /// Weights of the `blend` distance.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub blend: Option<BlendWeights>,
}

fn default_distance() -> DistanceKind {
    DistanceKind::Score
}
fn one() -> usize {
    1
}
fn default_algorithm() -> Algorithm {
    Algorithm::Optimal
}

impl Design {
    /// Terms of the Mahalanobis distance: the listed ones, else the score terms.
    pub fn mahalanobis_terms(&self) -> &[String] {
        if self.mahalanobis_terms.is_empty() {
            &self.score_terms
        } else {
            &self.mahalanobis_terms
        }
    }
}

/// Line (1-based) of a byte offset in text.
fn line_of(text: &str, offset: usize) -> usize {
    text.as_bytes()[..offset.min(text.len())]
        .iter()
        .filter(|&&b| b == b'\n')
        .count()
        + 1
}

impl Study {
    /// Parse and validate a study file.
    pub fn from_toml(text: &str) -> Result<Study> {
        let study: Study = toml::from_str(text).map_err(|e| {
            let at = e
                .span()
                .map(|s| {
                    let line = line_of(text, s.start);
                    // Name the key written on that line, when there is one.
                    let key = text
                        .lines()
                        .nth(line - 1)
                        .and_then(|l| l.split_once('='))
                        .map(|(k, _)| k.trim().trim_matches('"'))
                        .filter(|k| !k.is_empty() && !k.starts_with('#') && !k.starts_with('['));
                    match key {
                        Some(k) => format!("{k} (line {line})"),
                        None => format!("line {line}"),
                    }
                })
                .unwrap_or_else(|| "file".to_string());
            let msg = e.message().trim().to_string();
            let hint = if msg.contains("unknown field") {
                "; see docs/study-file.md for the keys each table allows"
            } else if msg.contains("expected a string") {
                "; put the value in double quotes, e.g. treated = \"1\""
            } else {
                ""
            };
            Error::study(at, format!("{msg}{hint}"))
        })?;
        study.validate()?;
        Ok(study)
    }

    /// The study as TOML text (what the browser exports).
    pub fn to_toml(&self) -> Result<String> {
        toml::to_string_pretty(self)
            .map_err(|e| Error::compute(format!("could not write the study file: {e}")))
    }

    /// Check values that the schema alone cannot: names, ranges, references.
    pub fn validate(&self) -> Result<()> {
        let c = &self.columns;
        for (key, v) in [("columns.id", &c.id), ("columns.group", &c.group)] {
            if v.trim().is_empty() {
                return Err(Error::study(key, "must name a column"));
            }
        }
        if c.notes.as_deref() == Some("") {
            return Err(Error::study(
                "columns.notes",
                "must name a column or be left out",
            ));
        }
        if !self.concepts.is_empty() && c.notes.is_none() {
            return Err(Error::study(
                "concepts",
                "concepts are looked for in notes: set columns.notes, or remove the [[concepts]]",
            ));
        }
        let mut seen = BTreeMap::new();
        for (i, concept) in self.concepts.iter().enumerate() {
            let key = format!("concepts[{}]", i + 1);
            if !valid_name(&concept.name) {
                return Err(Error::study(
                    format!("{key}.name"),
                    format!(
                        "\"{}\" is not a usable name; use letters, digits, '_' or '-'",
                        concept.name
                    ),
                ));
            }
            if seen.insert(concept.name.clone(), i).is_some() {
                return Err(Error::study(
                    format!("{key}.name"),
                    format!(
                        "a concept named \"{}\" appears twice; names must be unique",
                        concept.name
                    ),
                ));
            }
            if concept.terms.iter().all(|t| t.trim().is_empty()) {
                return Err(Error::study(
                    format!("{key}.terms"),
                    "needs at least one term",
                ));
            }
        }
        if self.note_options.latent_dims > MAX_LATENT_DIMS {
            return Err(Error::study(
                "note_options.latent_dims",
                format!("at most {MAX_LATENT_DIMS} latent dimensions are supported"),
            ));
        }
        let mut names = BTreeMap::new();
        for (i, d) in self.designs.iter().enumerate() {
            let key = format!("designs[{}]", i + 1);
            if !valid_name(&d.name) {
                return Err(Error::study(
                    format!("{key}.name"),
                    format!(
                        "\"{}\" is not a usable design name (it becomes a folder name); use letters, digits, '_' or '-'",
                        d.name
                    ),
                ));
            }
            if names.insert(d.name.clone(), i).is_some() {
                return Err(Error::study(
                    format!("{key}.name"),
                    format!(
                        "a design named \"{}\" appears twice; names must be unique",
                        d.name
                    ),
                ));
            }
            if d.score_terms.is_empty() {
                return Err(Error::study(
                    format!("{key}.score_terms"),
                    "needs at least one term for the score model",
                ));
            }
            for t in &d.score_terms {
                parse_term(t).map_err(|m| Error::study(format!("{key}.score_terms"), m))?;
            }
            if let Some(cal) = d.caliper {
                if !(cal.is_finite() && cal > 0.0) {
                    return Err(Error::study(
                        format!("{key}.caliper"),
                        "must be a positive number of SDs of the logit score (0.2 is common)",
                    ));
                }
            }
            if d.controls == 0 || d.controls > 20 {
                return Err(Error::study(
                    format!("{key}.controls"),
                    "must be a whole number from 1 to 20",
                ));
            }
            if d.distance == DistanceKind::NoteCosine && c.notes.is_none() {
                return Err(Error::study(
                    format!("{key}.distance"),
                    "\"note-cosine\" needs a notes column: set columns.notes",
                ));
            }
            if let Some(b) = &d.blend {
                let ws = [b.score, b.mahalanobis, b.note];
                if ws.iter().any(|w| !w.is_finite() || *w < 0.0) || ws.iter().all(|w| *w == 0.0) {
                    return Err(Error::study(
                        format!("{key}.blend"),
                        "weights must be non-negative numbers, not all zero",
                    ));
                }
            }
        }
        Ok(())
    }

    /// Find a design by name; the error lists the designs there are.
    pub fn design(&self, name: &str) -> Result<&Design> {
        self.designs.iter().find(|d| d.name == name).ok_or_else(|| {
            let names: Vec<&str> = self.designs.iter().map(|d| d.name.as_str()).collect();
            let hint = nearest(name, &names)
                .map(|n| format!(" did you mean \"{n}\"?"))
                .unwrap_or_default();
            Error::study(
                "designs",
                format!(
                    "no design named \"{name}\"; the study has: {}.{hint}",
                    names.join(", ")
                ),
            )
        })
    }
}

fn valid_name(s: &str) -> bool {
    !s.is_empty()
        && s.len() <= 64
        && s.chars()
            .all(|ch| ch.is_ascii_alphanumeric() || ch == '_' || ch == '-' || ch == '.')
        && !s.starts_with('.')
}

/// A score term as written in a study file.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum TermSpec {
    /// A column or note feature by name.
    Plain(String),
    /// `square(x)`: x times x.
    Square(String),
    /// `product(x, y)`: x times y.
    Product(String, String),
}

/// Parse a score term: `name`, `square(name)` or `product(a, b)`.
pub fn parse_term(text: &str) -> std::result::Result<TermSpec, String> {
    let t = text.trim();
    let inner = |prefix: &str| {
        t.strip_prefix(prefix)
            .and_then(|r| r.strip_suffix(')'))
            .map(str::trim)
    };
    if t.is_empty() {
        return Err("an empty term; remove it or name a column".to_string());
    }
    if let Some(arg) = inner("square(") {
        if arg.is_empty() || arg.contains(',') {
            return Err(format!(
                "\"{t}\": square() takes one column, e.g. square(age)"
            ));
        }
        return Ok(TermSpec::Square(arg.to_string()));
    }
    if let Some(args) = inner("product(") {
        let parts: Vec<&str> = args.split(',').map(str::trim).collect();
        if parts.len() != 2 || parts.iter().any(|p| p.is_empty()) {
            return Err(format!(
                "\"{t}\": product() takes two columns, e.g. product(age, creatinine)"
            ));
        }
        return Ok(TermSpec::Product(
            parts[0].to_string(),
            parts[1].to_string(),
        ));
    }
    if t.contains('(') || t.contains(')') {
        return Err(format!(
            "\"{t}\" is not a term; write a column name, square(x) or product(x, y)"
        ));
    }
    Ok(TermSpec::Plain(t.to_string()))
}

#[cfg(test)]
mod tests {
    use super::*;

    const GOOD: &str = r#"
[columns]
id = "patient_id"
group = "early_plan"
treated = "1"
outcomes = ["readmit_30d"]
covariates = ["age", "ward"]
notes = "admission_note"

[[concepts]]
name = "lives_alone"
terms = ["lives alone"]

[[designs]]
name = "structured"
score_terms = ["age", "ward", "square(age)", "product(age, ward)"]
caliper = 0.2
exact = ["ward"]
"#;

    #[test]
    fn reads_defaults() {
        let s = Study::from_toml(GOOD).unwrap();
        let d = &s.designs[0];
        assert_eq!(d.distance, DistanceKind::Score);
        assert_eq!(d.algorithm, Algorithm::Optimal);
        assert_eq!((d.controls, d.reuse), (1, false));
        assert!(s.concepts[0].negation);
        assert_eq!(s.note_options.latent_dims, 10);
    }

    #[test]
    fn round_trips() {
        let s = Study::from_toml(GOOD).unwrap();
        let again = Study::from_toml(&s.to_toml().unwrap()).unwrap();
        assert_eq!(s, again);
    }

    #[test]
    fn unknown_key_names_key_and_line() {
        let bad = GOOD.replace("caliper = 0.2", "calliper = 0.2");
        let e = Study::from_toml(&bad).unwrap_err().to_string();
        assert!(e.contains("calliper") && e.contains("line 17"), "{e}");
    }

    #[test]
    fn bad_values_name_key() {
        let e = Study::from_toml(&GOOD.replace("caliper = 0.2", "caliper = -1"))
            .unwrap_err()
            .to_string();
        assert!(e.contains("designs[1].caliper"), "{e}");
        let e = Study::from_toml(&GOOD.replace("\"optimal\"", "x").replace(
            "exact = [\"ward\"]",
            "exact = [\"ward\"]\nalgorithm = \"fastest\"",
        ))
        .unwrap_err()
        .to_string();
        assert!(e.contains("fastest") && e.contains("greedy"), "{e}");
    }

    #[test]
    fn parse_errors_name_the_key_on_their_line() {
        let e = Study::from_toml(&GOOD.replace("treated = \"1\"", "treated = 1"))
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("treated (line 5)") && e.contains("double quotes"),
            "{e}"
        );
        let e = Study::from_toml(&GOOD.replace("caliper = 0.2", "caliper = 0.2\ncaliper = 0.1"))
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("caliper (line 18)") && e.contains("duplicate"),
            "{e}"
        );
    }

    #[test]
    fn concepts_need_a_notes_column() {
        let e = Study::from_toml(&GOOD.replace("notes = \"admission_note\"\n", ""))
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("\"concepts\"") && e.contains("set columns.notes"),
            "{e}"
        );
    }

    #[test]
    fn term_syntax() {
        assert_eq!(parse_term("age"), Ok(TermSpec::Plain("age".into())));
        assert_eq!(
            parse_term("square( age )"),
            Ok(TermSpec::Square("age".into()))
        );
        assert_eq!(
            parse_term("product(age,sex)"),
            Ok(TermSpec::Product("age".into(), "sex".into()))
        );
        assert!(parse_term("log(age)").is_err());
        assert!(parse_term("product(age)").is_err());
    }

    #[test]
    fn design_lookup_suggests() {
        let s = Study::from_toml(GOOD).unwrap();
        let e = s.design("structurd").unwrap_err().to_string();
        assert!(e.contains("did you mean \"structured\""), "{e}");
    }
}
