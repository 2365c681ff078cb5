//! The pipeline from bytes to output files: read the cohort, compute note
//! features, then for each design fit the score, match, measure balance and
//! estimate the effect. The browser and the command line both call this, so
//! they write the same bytes.

use crate::balance::{self, BalanceRow};
use crate::chart::{LoveDesign, LoveInput, LoveTerm, OverlapInput, OverlapPanel, MAX_DESIGNS};
use crate::distance::{Blend, BlendPart, FnDistance, Mahalanobis, PairDistance, ScoreDistance};
use crate::effect::{self, EffectEstimate, EffectParams, OutcomeKind, SetOutcomes};
use crate::ingest::{read_table, Kind, Table};
use crate::matching::{self, MatchInput, MatchParams, Matching};
use crate::model::{Cohort, Extras, Fill, LeftOut, TermKind, Terms};
use crate::notes::{self, FeatureKind, NoteFeatures, TermShift, TermShiftOptions};
use crate::output;
use crate::score::{fit_logistic, LogitFit, LogitParams};
use crate::sensitivity::{self, EValue, RosenbaumBounds, SensitivityParams};
use crate::study::{Design, DistanceKind, NoteVectors, Study};
use crate::{Error, Result};
use serde::Serialize;

/// A cohort read and prepared for a study's designs.
#[derive(Debug, Clone)]
pub struct Analysis {
    /// The study.
    pub study: Study,
    /// The prepared cohort: rows used, groups and note features.
    pub cohort: Cohort,
    /// Note features, when the study has a notes column.
    pub notes: Option<NoteFeatures>,
    /// Terms of the balance table (the same for every design).
    pub balance_terms: Terms,
    /// Fills of missing values among the balance terms.
    pub fills: Vec<Fill>,
}

/// A file a run writes: its name within the design folder and its text.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct OutputFile {
    /// File name, e.g. `matched.csv`.
    pub name: String,
    /// Contents.
    pub contents: String,
}

/// Effect results for one outcome.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct OutcomeEffect {
    /// Outcome column.
    pub name: String,
    /// Binary or continuous.
    pub kind: OutcomeKind,
    /// Units left out of the estimates because this outcome is missing.
    pub missing_outcome_units: usize,
    /// Treated minus comparison on the whole cohort.
    pub unmatched: EffectEstimate,
    /// Treated minus comparison on the matched sets.
    pub matched: EffectEstimate,
    /// Rosenbaum bounds on the matched comparison.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub sensitivity: Option<RosenbaumBounds>,
    /// E-value of the matched estimate.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub e_value: Option<EValue>,
    /// Why the sensitivity analysis or E-value is absent, if it is.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub notes: Vec<String>,
}

/// How the cohort file was read.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct FileReading {
    /// Encoding the bytes were read as.
    pub encoding: String,
    /// Delimiter, as a display name: "comma", "semicolon" or "tab".
    pub delimiter: String,
    /// Automatic decisions worth knowing (encoding fallback, number formats).
    pub notices: Vec<String>,
}

/// Counts and diagnostics of one design run (`summary.json`).
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Summary {
    /// pairsight version that wrote this.
    pub version: String,
    /// Design name.
    pub design: String,
    /// How the cohort file was read.
    pub cohort_file: FileReading,
    /// Data rows in the file.
    pub rows_read: usize,
    /// Rows used.
    pub rows_used: usize,
    /// Rows left out, with reasons.
    pub left_out: Vec<LeftOut>,
    /// Missing values filled (balance and score terms).
    pub fills: Vec<Fill>,
    /// Treated units.
    pub treated: usize,
    /// Comparison units.
    pub comparison: usize,
    /// Treated units with a matched set.
    pub matched_treated: usize,
    /// Treated units without one.
    pub unmatched_treated: usize,
    /// Treated units left unmatched because every candidate was outside the caliper.
    pub dropped_by_caliper: usize,
    /// Treated units left unmatched because no candidate agreed on the exact columns.
    pub dropped_by_exact: usize,
    /// Matched sets with fewer comparison units than asked for.
    pub short_sets: usize,
    /// Distinct comparison units used.
    pub matched_comparison: usize,
    /// Kish effective sample size of the weighted comparison group.
    pub effective_comparison: f64,
    /// Caliper width on the logit score, when a caliper is set.
    pub caliper_width: Option<f64>,
    /// Sum of the distances within matched sets.
    pub total_distance: f64,
    /// Largest absolute SMD after matching among defined ones.
    pub worst_abs_smd_after: Option<f64>,
    /// Terms whose SMD is undefined (no spread in the unmatched sample).
    pub undefined_smd: Vec<String>,
    /// Score model record.
    pub score_model: ScoreModel,
    /// Parts of the run that could not be computed, and why.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub skipped: Vec<String>,
}

/// The fitted score model as reported.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct ScoreModel {
    /// Estimator used.
    pub method: crate::score::FitMethod,
    /// Whether it converged.
    pub converged: bool,
    /// Newton steps.
    pub iterations: usize,
    /// Log-likelihood at the estimate.
    pub log_likelihood: f64,
    /// Model terms with their coefficients (intercept first), original scale.
    pub coefficients: Vec<(String, f64)>,
    /// Warnings of the fit, in plain words.
    pub warnings: Vec<String>,
}

/// Everything one design produced.
#[derive(Debug, Clone, Serialize)]
pub struct DesignRun {
    /// The design.
    pub design: Design,
    /// Fitted score model.
    #[serde(skip)]
    pub fit: LogitFit,
    /// Matched sets and weights.
    pub matching: Matching,
    /// Balance table.
    pub balance: Vec<BalanceRow>,
    /// Effect per outcome.
    pub effects: Vec<OutcomeEffect>,
    /// Term shift, when there are notes.
    pub term_shift: Option<TermShift>,
    /// Counts and diagnostics.
    pub summary: Summary,
}

fn feature_kind(k: FeatureKind) -> TermKind {
    match k {
        FeatureKind::Note => TermKind::Note,
        FeatureKind::Concept => TermKind::Concept,
    }
}

impl Analysis {
    /// Read a cohort file and prepare it for the study.
    pub fn new(data: &[u8], study: Study) -> Result<Analysis> {
        Analysis::from_table(read_table(data)?, study)
    }

    /// Prepare an already read table for the study.
    pub fn from_table(table: Table, study: Study) -> Result<Analysis> {
        study.validate()?;
        let mut cohort = Cohort::new(table, &study.columns)?;
        let notes = match &study.columns.notes {
            Some(col) => {
                let texts: Vec<&str> = cohort
                    .cells(col)?
                    .into_iter()
                    .map(|c| if crate::ingest::is_missing(c) { "" } else { c })
                    .collect();
                let f = notes::analyze(&texts, &study.concepts, &study.note_options)?;
                cohort.extras = Extras {
                    names: f.names.clone(),
                    kinds: f.kinds.iter().map(|&k| feature_kind(k)).collect(),
                    values: f.values.clone(),
                };
                Some(f)
            }
            None => None,
        };
        let (balance_terms, fills) = cohort.balance_terms(&balance_names(&study))?;
        Ok(Analysis {
            study,
            cohort,
            notes,
            balance_terms,
            fills,
        })
    }

    /// The same cohort under an edited study. The note features are kept
    /// when the roles, concepts and note options are unchanged, so editing
    /// designs never recomputes them; otherwise everything is prepared anew.
    pub fn with_study(&self, study: Study) -> Result<Analysis> {
        let same_notes = study.columns == self.study.columns
            && study.concepts == self.study.concepts
            && study.note_options == self.study.note_options;
        if !same_notes {
            return Analysis::from_table(self.cohort.table.clone(), study);
        }
        study.validate()?;
        let (balance_terms, fills) = self.cohort.balance_terms(&balance_names(&study))?;
        Ok(Analysis {
            study,
            cohort: self.cohort.clone(),
            notes: self.notes.clone(),
            balance_terms,
            fills,
        })
    }

    /// `features.csv`: `id` and every note feature (`note.*`, `concept.*`)
    /// for every row used; `None` when the study has no notes column.
    pub fn features_csv(&self) -> Result<Option<String>> {
        let x = &self.cohort.extras;
        if self.notes.is_none() {
            return Ok(None);
        }
        let mut header = vec!["id"];
        header.extend(x.names.iter().map(String::as_str));
        let rows = self.cohort.ids.iter().zip(x.values.rows()).map(|(id, r)| {
            let mut row = vec![output::safe_cell(id)];
            row.extend(r.iter().map(|&v| output::num(v)));
            row
        });
        output::csv_text(&header, rows).map(Some)
    }

    /// Run every design of the study, in order.
    pub fn run_all(&self) -> Result<Vec<DesignRun>> {
        self.study.designs.iter().map(|d| self.run(d)).collect()
    }

    /// Run one design: score, distance, matching, balance, effect.
    pub fn run(&self, design: &Design) -> Result<DesignRun> {
        let in_design = |e: Error| match e {
            Error::Study { key, message } if !key.starts_with("designs") => {
                Error::study(format!("design \"{}\" {key}", design.name), message)
            }
            other => other,
        };
        let treated = &self.cohort.treated;
        let (x, mut fills) = self
            .cohort
            .model_terms(&design.score_terms)
            .map_err(in_design)?;
        let in_design_any = |e: Error| match e {
            Error::Compute { message } => {
                Error::compute(format!("design \"{}\": {message}", design.name))
            }
            Error::Param { name, message } => {
                Error::compute(format!("design \"{}\": {name}: {message}", design.name))
            }
            other => in_design(other),
        };
        let mut fit = fit_logistic(x.values.view(), treated, &LogitParams::default())
            .map_err(in_design_any)?;
        // The fit knows its terms by position; the user knows them by name.
        for w in &mut fit.warnings {
            for (j, name) in x.names.iter().enumerate().rev() {
                let at = format!("score term column {j} ");
                if w.contains(&at) {
                    *w = w.replace(&at, &format!("score term \"{name}\" "));
                }
            }
        }
        let exact = if design.exact.is_empty() {
            None
        } else {
            Some(self.cohort.exact_keys(&design.exact)?)
        };
        let distance = self.distance(design, &fit).map_err(in_design)?;
        let params = MatchParams {
            caliper: design.caliper,
            controls: design.controls,
            reuse: design.reuse,
            algorithm: design.algorithm,
        };
        let matching = matching::match_units(
            &MatchInput {
                treated,
                logit: &fit.logit,
                exact: exact.as_deref(),
                distance: distance.as_ref(),
            },
            &params,
        )
        .map_err(in_design_any)?;
        drop(distance);
        if matching.sets.is_empty() {
            let mut why = Vec::new();
            let mut fix = Vec::new();
            if matching.dropped_by_caliper > 0 {
                fix.push("widen the caliper");
                why.push(format!(
                    "{} treated units have no comparison unit within the caliper (width {} on the logit score)",
                    matching.dropped_by_caliper,
                    matching.caliper_width.map_or("NA".to_string(), output::num)
                ));
            }
            if matching.dropped_by_exact > 0 {
                fix.push("drop or coarsen the exact columns");
                why.push(format!(
                    "{} treated units have no comparison unit that agrees on the exact columns ({})",
                    matching.dropped_by_exact,
                    design.exact.join(", ")
                ));
            }
            let why = if why.is_empty() {
                String::new()
            } else {
                format!(": {}", why.join("; "))
            };
            return Err(Error::compute(format!(
                "design \"{}\": no treated unit could be matched{why}; {}",
                design.name,
                if fix.is_empty() {
                    "check that the comparison group has units".to_string()
                } else {
                    fix.join(", or ")
                }
            )));
        }
        let ones = vec![1.0; treated.len()];
        let balance = balance::balance_rows(
            self.balance_terms.values.view(),
            &self.balance_terms.infos(),
            treated,
            &matching.weights,
        )?;
        let effects = self
            .study
            .columns
            .outcomes
            .iter()
            .map(|o| {
                self.outcome_effect(o, design, &matching)
                    .map_err(|e| match e {
                        Error::Compute { message } | Error::Param { message, .. }
                            if !message.starts_with("design ") =>
                        {
                            Error::compute(format!(
                                "design \"{}\", outcome \"{o}\": {message}",
                                design.name
                            ))
                        }
                        other => other,
                    })
            })
            .collect::<Result<Vec<_>>>()?;
        // The term shift is a view of the notes, not part of the design: when
        // it cannot be computed (no terms left after matching), say so and go on.
        let mut skipped = Vec::new();
        let term_shift = match &self.notes {
            Some(f) => match f.term_shift(
                treated,
                &ones,
                &matching.weights,
                &TermShiftOptions::default(),
            ) {
                Ok(t) => Some(t),
                Err(e) => {
                    skipped.push(format!("term shift (terms.csv): {e}"));
                    None
                }
            },
            None => None,
        };
        fills.extend(self.fills.iter().cloned());
        let mut seen = std::collections::BTreeSet::new();
        fills.retain(|f| seen.insert(f.column.clone()));
        fills.sort_by(|a, b| a.column.cmp(&b.column));
        let mut summary = self.summary(design, &fit, &x, &matching, &balance, fills);
        summary.skipped = skipped;
        Ok(DesignRun {
            design: design.clone(),
            fit,
            matching,
            balance,
            effects,
            term_shift,
            summary,
        })
    }

    /// A design's own distance (the one its matching used) between given
    /// (treated, comparison) pairs of rows used, e.g. for pairs another
    /// design matched, so reviewers' ratings can be set against it.
    pub fn pair_distances(&self, run: &DesignRun, pairs: &[(usize, usize)]) -> Result<Vec<f64>> {
        let n = self.cohort.len();
        if let Some(&(t, c)) = pairs.iter().find(|&&(t, c)| t >= n || c >= n) {
            return Err(Error::param(
                "pairs",
                format!("rows {t} and {c}: the cohort has {n} rows used"),
            ));
        }
        let d = self.distance(&run.design, &run.fit)?;
        Ok(pairs.iter().map(|&(t, c)| d.distance(t, c)).collect())
    }

    fn note_distance(&self, design: &Design) -> Result<Box<dyn PairDistance + '_>> {
        let f = self.notes.as_ref().ok_or_else(|| {
            Error::study(
                "distance",
                "\"note-cosine\" needs a notes column: set columns.notes",
            )
        })?;
        Ok(match design.note_vectors {
            NoteVectors::Tfidf => Box::new(FnDistance::new(move |t, c| {
                notes::cosine_distance(&f.tfidf, t, c)
            })),
            NoteVectors::Latent => {
                if f.latent.ncols() == 0 {
                    return Err(Error::study(
                        "note_vectors",
                        "\"latent\" needs note_options.latent_dims above 0",
                    ));
                }
                Box::new(FnDistance::new(move |t, c| {
                    notes::latent_cosine_distance(&f.latent, t, c)
                }))
            }
        })
    }

    fn mahalanobis(&self, design: &Design) -> Result<Box<dyn PairDistance + '_>> {
        let (m, _) = self.cohort.model_terms(design.mahalanobis_terms())?;
        // The distance knows its columns by position; the user by name.
        let named = |e: Error| match e {
            Error::Compute { message } | Error::Param { message, .. } => {
                let mut message = message;
                for (j, name) in m.names.iter().enumerate().rev() {
                    message = message.replace(
                        &format!("covariate column {j} "),
                        &format!("covariate \"{name}\" "),
                    );
                }
                Error::compute(message)
            }
            other => other,
        };
        Ok(Box::new(
            Mahalanobis::new(m.values.view(), &self.cohort.treated).map_err(named)?,
        ))
    }

    fn distance<'a>(
        &'a self,
        design: &Design,
        fit: &'a LogitFit,
    ) -> Result<Box<dyn PairDistance + 'a>> {
        Ok(match design.distance {
            DistanceKind::Score => Box::new(ScoreDistance::new(&fit.logit)),
            DistanceKind::Mahalanobis => self.mahalanobis(design)?,
            DistanceKind::NoteCosine => self.note_distance(design)?,
            DistanceKind::Blend => {
                let w = design.blend.clone().unwrap_or_default();
                let mut parts = Vec::new();
                if w.score > 0.0 {
                    parts.push(BlendPart {
                        weight: w.score,
                        distance: Box::new(ScoreDistance::new(&fit.logit)),
                    });
                }
                if w.mahalanobis > 0.0 {
                    parts.push(BlendPart {
                        weight: w.mahalanobis,
                        distance: self.mahalanobis(design)?,
                    });
                }
                if w.note > 0.0 && self.notes.is_some() {
                    parts.push(BlendPart {
                        weight: w.note,
                        distance: self.note_distance(design)?,
                    });
                }
                Box::new(Blend::new(
                    parts,
                    &self.cohort.treated,
                    self.study.note_options.seed,
                )?)
            }
        })
    }

    fn outcome_effect(
        &self,
        name: &str,
        design: &Design,
        matching: &Matching,
    ) -> Result<OutcomeEffect> {
        let col = self.cohort.table.column(name)?;
        let kind = match col.kind {
            Kind::Binary => OutcomeKind::Binary,
            Kind::Numeric => OutcomeKind::Continuous,
            other => {
                return Err(Error::data(
                    None,
                    Some(name),
                    format!(
                        "an outcome must be binary (0/1) or numeric, but this column is {}",
                        format!("{other:?}").to_lowercase()
                    ),
                ))
            }
        };
        let y = self.cohort.outcome(name)?;
        let (yy, tt): (Vec<f64>, Vec<bool>) = y
            .iter()
            .zip(&self.cohort.treated)
            .filter_map(|(v, &t)| v.map(|v| (v, t)))
            .unzip();
        let missing = y.len() - yy.len();
        if yy.is_empty() {
            return Err(Error::data(
                None,
                Some(name),
                "every value of this outcome is missing; remove it from columns.outcomes",
            ));
        }
        let params = EffectParams {
            comparison_reused: design.reuse,
            ..EffectParams::default()
        };
        let unmatched = effect::unmatched(&yy, &tt, kind, params.level)?;
        let sets: Vec<SetOutcomes> = matching
            .sets
            .iter()
            .filter_map(|s| {
                let treated = y[s.treated]?;
                let controls: Vec<f64> = s.controls.iter().filter_map(|&(c, _)| y[c]).collect();
                (!controls.is_empty()).then_some(SetOutcomes { treated, controls })
            })
            .collect();
        if sets.is_empty() {
            return Err(Error::compute(format!(
                "design \"{}\": no matched set has outcome \"{name}\" for both sides; loosen the caliper or exact columns",
                design.name
            )));
        }
        let matched = effect::estimate(&sets, kind, &params)?;
        let mut notes = Vec::new();
        let sensitivity = match sensitivity::bounds_for_sets(
            &sets,
            kind,
            design.reuse,
            &SensitivityParams::default(),
        ) {
            Ok(b) => Some(b),
            Err(e) => {
                notes.push(format!("no sensitivity bounds: {e}"));
                None
            }
        };
        let e_value = match sensitivity::e_value_for(&matched) {
            Ok(v) => Some(v),
            Err(e) => {
                notes.push(format!("no E-value: {e}"));
                None
            }
        };
        Ok(OutcomeEffect {
            name: name.to_string(),
            kind,
            missing_outcome_units: missing,
            unmatched,
            matched,
            sensitivity,
            e_value,
            notes,
        })
    }

    fn summary(
        &self,
        design: &Design,
        fit: &LogitFit,
        x: &Terms,
        matching: &Matching,
        balance: &[BalanceRow],
        fills: Vec<Fill>,
    ) -> Summary {
        let treated = &self.cohort.treated;
        let n_t = treated.iter().filter(|&&t| t).count();
        let mut used: Vec<usize> = matching
            .sets
            .iter()
            .flat_map(|s| s.controls.iter().map(|&(c, _)| c))
            .collect();
        used.sort_unstable();
        used.dedup();
        let worst = balance
            .iter()
            .filter_map(|r| r.smd_after.map(f64::abs))
            .fold(None, |m: Option<f64>, v| Some(m.map_or(v, |m| m.max(v))));
        let mut coefficients = vec![("(intercept)".to_string(), fit.coefficients[0])];
        coefficients.extend(
            x.names
                .iter()
                .cloned()
                .zip(fit.coefficients.iter().skip(1).copied()),
        );
        Summary {
            version: crate::VERSION.to_string(),
            design: design.name.clone(),
            cohort_file: FileReading {
                encoding: self.cohort.table.encoding.to_string(),
                delimiter: crate::ingest::delimiter_name(self.cohort.table.delimiter),
                notices: self.cohort.table.notices.clone(),
            },
            rows_read: self.cohort.table.n_rows(),
            rows_used: self.cohort.len(),
            left_out: self.cohort.left_out.clone(),
            fills,
            treated: n_t,
            comparison: treated.len() - n_t,
            matched_treated: matching.sets.len(),
            unmatched_treated: matching.unmatched_treated.len(),
            dropped_by_caliper: matching.dropped_by_caliper,
            dropped_by_exact: matching.dropped_by_exact,
            short_sets: matching.short_sets,
            matched_comparison: used.len(),
            effective_comparison: balance::comparison_ess(&matching.weights, treated),
            caliper_width: matching.caliper_width,
            total_distance: matching.total_distance,
            worst_abs_smd_after: worst,
            undefined_smd: balance
                .iter()
                .filter(|r| r.smd_before.is_none())
                .map(|r| r.term.clone())
                .collect(),
            score_model: ScoreModel {
                method: fit.method,
                converged: fit.converged,
                iterations: fit.iterations,
                log_likelihood: fit.log_likelihood,
                coefficients,
                warnings: fit.warnings.clone(),
            },
            skipped: Vec::new(),
        }
    }
}

/// Terms of the balance table: the covariates, every concept, and any other
/// note feature a design uses.
fn balance_names(study: &Study) -> Vec<String> {
    let mut names: Vec<String> = study.columns.covariates.clone();
    names.extend(study.concepts.iter().map(|c| format!("concept.{}", c.name)));
    for d in &study.designs {
        for t in d.score_terms.iter().chain(d.mahalanobis_terms.iter()) {
            if t.starts_with("note.") || t.starts_with("concept.") {
                names.push(t.clone());
            }
        }
    }
    names
}

fn kind_name<T: Serialize>(k: &T) -> String {
    serde_json::to_value(k)
        .ok()
        .and_then(|v| v.as_str().map(str::to_string))
        .unwrap_or_default()
}

impl DesignRun {
    /// `matched.csv`: one row per matched unit: set, id, group (1 = treated),
    /// weight within the set (1 for the treated unit, 1/m for each of its m
    /// comparison units), distance to the set's treated unit (0 on treated rows).
    pub fn matched_csv(&self, analysis: &Analysis) -> Result<String> {
        let ids = &analysis.cohort.ids;
        let mut rows = Vec::new();
        for (k, s) in self.matching.sets.iter().enumerate() {
            let set = (k + 1).to_string();
            rows.push(vec![
                set.clone(),
                output::safe_cell(&ids[s.treated]),
                "1".to_string(),
                "1".to_string(),
                "0".to_string(),
            ]);
            let w = 1.0 / s.controls.len() as f64;
            for &(c, d) in &s.controls {
                rows.push(vec![
                    set.clone(),
                    output::safe_cell(&ids[c]),
                    "0".to_string(),
                    output::num(w),
                    output::num(d),
                ]);
            }
        }
        output::csv_text(&["set", "id", "group", "weight", "distance"], rows)
    }

    /// `score.csv`: id, score, logit_score for every row used.
    pub fn score_csv(&self, analysis: &Analysis) -> Result<String> {
        let rows = analysis
            .cohort
            .ids
            .iter()
            .zip(self.fit.scores.iter().zip(&self.fit.logit))
            .map(|(id, (s, l))| vec![output::safe_cell(id), output::num(*s), output::num(*l)]);
        output::csv_text(&["id", "score", "logit_score"], rows)
    }

    /// `balance.csv`: the balance table.
    pub fn balance_csv(&self) -> Result<String> {
        let rows = self.balance.iter().map(|r| {
            vec![
                output::safe_cell(&r.term),
                kind_name(&r.kind),
                output::opt(r.smd_before),
                output::opt(r.smd_after),
                output::opt(r.variance_ratio_before),
                output::opt(r.variance_ratio_after),
                output::opt(r.ks_before),
                output::opt(r.ks_after),
            ]
        });
        output::csv_text(
            &[
                "term",
                "kind",
                "smd_before",
                "smd_after",
                "variance_ratio_before",
                "variance_ratio_after",
                "ks_before",
                "ks_after",
            ],
            rows,
        )
    }

    /// `terms.csv`: the term shift, when there are notes.
    pub fn terms_csv(&self) -> Result<Option<String>> {
        let Some(ts) = &self.term_shift else {
            return Ok(None);
        };
        let rows = ts.rows.iter().map(|r| {
            vec![
                output::safe_cell(&r.term),
                output::num(r.count),
                output::num(r.delta_before),
                output::num(r.z_before),
                output::num(r.delta_after),
                output::num(r.z_after),
            ]
        });
        output::csv_text(
            &[
                "term",
                "count",
                "delta_before",
                "z_before",
                "delta_after",
                "z_after",
            ],
            rows,
        )
        .map(Some)
    }

    /// `effect.json`.
    pub fn effect_json(&self) -> Result<String> {
        #[derive(Serialize)]
        struct EffectFile<'a> {
            design: &'a str,
            caution: &'a str,
            outcomes: &'a [OutcomeEffect],
        }
        output::json(&EffectFile {
            design: &self.design.name,
            caution: CAUTION,
            outcomes: &self.effects,
        })
    }

    /// Every file of the design folder, in a fixed order.
    pub fn files(&self, analysis: &Analysis) -> Result<Vec<OutputFile>> {
        let mut files = vec![
            ("matched.csv", self.matched_csv(analysis)?),
            ("score.csv", self.score_csv(analysis)?),
            ("balance.csv", self.balance_csv()?),
            ("effect.json", self.effect_json()?),
            ("summary.json", output::json(&self.summary)?),
        ];
        if let Some(t) = self.terms_csv()? {
            files.push(("terms.csv", t));
        }
        Ok(files
            .into_iter()
            .map(|(name, contents)| OutputFile {
                name: name.to_string(),
                contents,
            })
            .collect())
    }
}

/// The caution that goes with every estimate.
pub const CAUTION: &str = "A matched comparison estimates an effect only under the assumption of no unmeasured confounding; the sensitivity analysis bounds but does not remove that doubt. These results support study design and need review by qualified people; follow local research-ethics and data-governance rules.";

/// The Love plot input of up to [`crate::chart::MAX_DESIGNS`] design runs:
/// every balance term with its SMD before matching (from the first run; the
/// balance terms and their "before" are the same for every design) and each
/// design's SMD after matching. An empty list gives an empty plot.
pub fn love_input(runs: &[&DesignRun]) -> Result<LoveInput> {
    let Some(first) = runs.first() else {
        return Ok(LoveInput::default());
    };
    if runs.len() > MAX_DESIGNS {
        return Err(Error::param(
            "designs",
            format!("one Love plot compares at most {MAX_DESIGNS} designs; choose fewer"),
        ));
    }
    Ok(LoveInput {
        terms: first
            .balance
            .iter()
            .map(|r| LoveTerm {
                label: r.term.clone(),
                from_note: r.kind.is_note_derived(),
                before: r.smd_before,
            })
            .collect(),
        designs: runs
            .iter()
            .map(|r| LoveDesign {
                name: r.design.name.clone(),
                after: r.balance.iter().map(|b| b.smd_after).collect(),
            })
            .collect(),
        ..LoveInput::default()
    })
}

impl DesignRun {
    /// The overlap plot input of this design: the logit score by group
    /// before matching, and after matching weighted by the matching weights
    /// (units outside the matched sets are not in the after panel).
    pub fn overlap_input(&self, analysis: &Analysis) -> OverlapInput {
        let split = |w: Option<&[f64]>| {
            let (mut ts, mut cs, mut tw, mut cw) = (Vec::new(), Vec::new(), Vec::new(), Vec::new());
            for (i, (&l, &tr)) in self
                .fit
                .logit
                .iter()
                .zip(&analysis.cohort.treated)
                .enumerate()
            {
                let wi = w.map_or(1.0, |w| w[i]);
                if wi <= 0.0 {
                    continue;
                }
                if tr {
                    ts.push(l);
                    tw.push(wi);
                } else {
                    cs.push(l);
                    cw.push(wi);
                }
            }
            (ts, cs, tw, cw)
        };
        let (tb, cb, _, _) = split(None);
        let (ta, ca, twa, cwa) = split(Some(&self.matching.weights));
        OverlapInput {
            title: Some(format!("Design {}", self.design.name)),
            panels: vec![
                OverlapPanel {
                    label: "before matching".into(),
                    treated: tb,
                    comparison: cb,
                    ..OverlapPanel::default()
                },
                OverlapPanel {
                    label: "after matching".into(),
                    treated: ta,
                    comparison: ca,
                    treated_weights: Some(twa),
                    comparison_weights: Some(cwa),
                },
            ],
            ..OverlapInput::default()
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A small cohort: eight treated, eight comparison units, ages apart.
    fn cohort(extra_header: &str, extra: impl Fn(usize) -> String) -> Vec<u8> {
        let mut s = format!("id,g,age,y{extra_header}\n");
        for i in 0..16 {
            let t = i % 2;
            let age = 50 + i * 3 + t * 2;
            s.push_str(&format!("p{i},{t},{age},{}{}\n", i % 3 % 2, extra(i)));
        }
        s.into_bytes()
    }

    fn study(design: &str) -> Study {
        Study::from_toml(&format!(
            "[columns]\nid = \"id\"\ngroup = \"g\"\ntreated = \"1\"\noutcomes = [\"y\"]\ncovariates = [\"age\"]\n\n[[designs]]\n{design}\n"
        ))
        .unwrap()
    }

    #[test]
    fn a_design_that_matches_no_one_says_why() {
        let s = study("name = \"tight\"\nscore_terms = [\"age\"]\ncaliper = 0.000001");
        let a = Analysis::new(&cohort("", |_| String::new()), s).unwrap();
        let e = a.run(&a.study.designs[0]).unwrap_err().to_string();
        assert!(
            e.contains("design \"tight\"")
                && e.contains("8 treated units have no comparison unit within the caliper")
                && e.contains("widen the caliper"),
            "{e}"
        );
    }

    #[test]
    fn score_warnings_name_the_term_and_the_file_reading_is_recorded() {
        let s = study("name = \"d\"\nscore_terms = [\"age\", \"flat\"]\nalgorithm = \"greedy\"");
        let a = Analysis::new(&cohort(",flat", |_| ",5".to_string()), s).unwrap();
        let r = a.run(&a.study.designs[0]).unwrap();
        assert_eq!(
            r.summary.score_model.warnings,
            ["score term \"flat\" is constant; it was left out of the score model"]
        );
        assert_eq!(r.summary.cohort_file.encoding, "UTF-8");
        assert_eq!(r.summary.cohort_file.delimiter, "comma");
    }

    #[test]
    fn effect_errors_name_the_design_and_the_outcome() {
        let s = study("name = \"d\"\nscore_terms = [\"age\"]\ncaliper = 0.000001");
        // Two of the treated units get an exact twin among the comparison
        // units; the one matched set left is too few for an effect.
        let mut data = String::from_utf8(cohort("", |_| String::new())).unwrap();
        data.push_str("twin,0,55,1\n");
        let a = Analysis::new(data.as_bytes(), s).unwrap();
        let e = a.run(&a.study.designs[0]).unwrap_err().to_string();
        assert!(e.contains("design \"d\", outcome \"y\""), "{e}");
    }

    #[test]
    fn a_term_shift_that_cannot_be_computed_does_not_stop_the_design() {
        let s = Study::from_toml(
            "[columns]\nid = \"id\"\ngroup = \"g\"\ntreated = \"1\"\noutcomes = [\"y\"]\ncovariates = [\"age\"]\nnotes = \"note\"\n\n[note_options]\nlatent_dims = 0\n\n[[designs]]\nname = \"d\"\nscore_terms = [\"age\"]\n",
        )
        .unwrap();
        // Only treated units have note text.
        let data = cohort(",note", |i| {
            if i % 2 == 1 {
                ",lives alone after a fall".to_string()
            } else {
                ",".to_string()
            }
        });
        let a = Analysis::new(&data, s).unwrap();
        let r = a.run(&a.study.designs[0]).unwrap();
        assert!(r.term_shift.is_none());
        assert!(
            r.summary.skipped[0].starts_with("term shift"),
            "{:?}",
            r.summary.skipped
        );
        assert!(r.files(&a).unwrap().iter().all(|f| f.name != "terms.csv"));
    }

    #[test]
    fn mahalanobis_problems_name_the_covariate() {
        let s = study(
            "name = \"m\"\nscore_terms = [\"age\"]\ndistance = \"mahalanobis\"\nmahalanobis_terms = [\"age\", \"flat\"]",
        );
        let a = Analysis::new(&cohort(",flat", |_| ",5".to_string()), s).unwrap();
        let e = a.run(&a.study.designs[0]).unwrap_err().to_string();
        assert!(e.contains("covariate \"flat\" is constant"), "{e}");
    }

    #[test]
    fn an_outcome_with_no_values_is_named() {
        let s = study("name = \"d\"\nscore_terms = [\"age\"]");
        let data = String::from_utf8(cohort("", |_| String::new()))
            .unwrap()
            .lines()
            .enumerate()
            .map(|(i, l)| {
                if i == 0 {
                    l.to_string()
                } else {
                    format!("{},NA", &l[..l.rfind(',').unwrap()])
                }
            })
            .collect::<Vec<_>>()
            .join("\n");
        let a = Analysis::new(data.as_bytes(), s).unwrap();
        let e = a.run(&a.study.designs[0]).unwrap_err().to_string();
        assert!(
            e.contains("column \"y\"") && e.contains("every value of this outcome is missing"),
            "{e}"
        );
    }
}
