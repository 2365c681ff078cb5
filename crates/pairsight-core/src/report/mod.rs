//! The report: one self-contained HTML file that collaborators can open from
//! disk, plus the text helpers the rating packet and the command line share.
//!
//! [`report_html`] takes the in-memory results (the [`Analysis`], its
//! [`DesignRun`]s and, when a review round was rated, its
//! [`ReviewResults`]) and returns the page as a string, so the browser's
//! Export and `pairsight report` write the same bytes.
//!
//! The page describes the data by counts only, never by records: no note
//! text, identifier or cell value appears unless the caller opts in to a few
//! example pairs ([`ReportOptions::include_notes`]). Every value that comes
//! from the data or the study file (column names, category labels, design
//! names, notes) goes through [`escape_html`]. The page has no script and a
//! Content-Security-Policy that forbids every network request; its charts
//! are inline SVG drawn by [`crate::chart`].

mod text;

pub use text::{
    base64, csp_hash, escape_html, fixed, fixed_opt, interval, p_text, percent_level, script_json,
};

use crate::balance::BalanceRow;
use crate::chart::{
    love_height_hint, love_svg, overlap_svg, sensitivity_svg, OverlapInput, SensitivityInput,
    MAX_DESIGNS,
};
use crate::effect::EffectEstimate;
use crate::ingest::Kind;
use crate::packet::ReviewResults;
use crate::run::{Analysis, DesignRun, OutcomeEffect, CAUTION};
use crate::study::DistanceKind;
use crate::Result;
use serde::{Deserialize, Serialize};
use std::fmt::Write as _;

/// Terms of the term shift seen fewer times than this in all notes are left
/// out of the report: small counts can point to one patient (the usual
/// small-cell rule of statistical disclosure control; 5 is common practice).
pub const MIN_TERM_COUNT: f64 = 5.0;

/// The report's style sheet (inline; the policy allows inline style only).
pub const REPORT_STYLE: &str = include_str!("report.css");

/// The report's Content-Security-Policy: nothing may be fetched; styles
/// inline only; no script at all.
pub const REPORT_CSP: &str =
    "default-src 'none'; style-src 'unsafe-inline'; img-src data:; base-uri 'none'; form-action 'none'";

/// Settings of [`report_html`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ReportOptions {
    /// Title at the top.
    pub title: String,
    /// Show a few example matched pairs' notes side by side. Off by default:
    /// notes are protected health information.
    pub include_notes: bool,
    /// How many example pairs per design when notes are included: the
    /// closest, the farthest and evenly spaced ones between, by distance.
    pub example_pairs: usize,
    /// The study file as the analyst wrote it; when `None`, the study is
    /// written out from the analysis.
    pub study_text: Option<String>,
    /// Name of the cohort file, shown in the data section.
    pub data_name: Option<String>,
}

impl Default for ReportOptions {
    fn default() -> Self {
        ReportOptions {
            title: "pairsight report".to_string(),
            include_notes: false,
            example_pairs: 3,
            study_text: None,
            data_name: None,
        }
    }
}

/// A small HTML writer: every text argument is escaped here, so callers
/// cannot forget.
struct Page {
    h: String,
}

/// A table cell: text, and whether it is a number (right-aligned) or
/// emphasised.
struct Cell {
    text: String,
    num: bool,
    strong: bool,
}

fn t(s: impl Into<String>) -> Cell {
    Cell {
        text: s.into(),
        num: false,
        strong: false,
    }
}

fn n(s: impl Into<String>) -> Cell {
    Cell {
        text: s.into(),
        num: true,
        strong: false,
    }
}

impl Page {
    fn raw(&mut self, s: &str) {
        self.h.push_str(s);
    }
    fn tag(&mut self, tag: &str, text: &str) {
        let _ = writeln!(self.h, "<{tag}>{}</{tag}>", escape_html(text));
    }
    fn p(&mut self, text: &str) {
        self.tag("p", text);
    }
    fn p_class(&mut self, class: &str, text: &str) {
        let _ = writeln!(self.h, "<p class=\"{class}\">{}</p>", escape_html(text));
    }
    fn section(&mut self, id: &str, title: &str) {
        let _ = writeln!(
            self.h,
            "<section id=\"{id}\">\n<h2>{}</h2>",
            escape_html(title)
        );
    }
    fn end_section(&mut self) {
        self.h.push_str("</section>\n");
    }
    fn table(&mut self, caption: &str, header: &[&str], rows: Vec<Vec<Cell>>) {
        self.h.push_str("<div class=\"wide\"><table>\n");
        if !caption.is_empty() {
            let _ = writeln!(self.h, "<caption>{}</caption>", escape_html(caption));
        }
        self.h.push_str("<thead><tr>");
        for c in header {
            let _ = write!(self.h, "<th scope=\"col\">{}</th>", escape_html(c));
        }
        self.h.push_str("</tr></thead>\n<tbody>\n");
        for row in rows {
            self.h.push_str("<tr>");
            for (i, c) in row.iter().enumerate() {
                let el = if i == 0 { "th scope=\"row\"" } else { "td" };
                let close = if i == 0 { "th" } else { "td" };
                let class = if c.num { " class=\"n\"" } else { "" };
                let body = if c.strong {
                    format!("<strong>{}</strong>", escape_html(&c.text))
                } else {
                    escape_html(&c.text)
                };
                let _ = write!(self.h, "<{el}{class}>{body}</{close}>");
            }
            self.h.push_str("</tr>\n");
        }
        self.h.push_str("</tbody></table></div>\n");
    }
    /// An SVG drawn by the core: its text is already escaped by the SVG
    /// writer, and it holds no script.
    fn figure(&mut self, svg: &str, caption: &str) {
        self.h.push_str("<figure>\n");
        self.h.push_str(svg_body(svg));
        let _ = writeln!(
            self.h,
            "<figcaption>{}</figcaption>\n</figure>",
            escape_html(caption)
        );
    }
}

/// The SVG element alone (no XML declaration), ready to sit inside HTML.
fn svg_body(svg: &str) -> &str {
    svg.find("<svg").map_or(svg, |i| &svg[i..])
}

fn yes_no(b: bool) -> &'static str {
    if b {
        "yes"
    } else {
        "no"
    }
}

fn kind_word(k: Kind) -> &'static str {
    match k {
        Kind::Numeric => "numeric",
        Kind::Binary => "binary",
        Kind::Categorical => "categorical",
        Kind::Text => "text",
    }
}

fn distance_word(d: DistanceKind) -> &'static str {
    match d {
        DistanceKind::Score => "score (logit score)",
        DistanceKind::Mahalanobis => "mahalanobis",
        DistanceKind::NoteCosine => "note-cosine",
        DistanceKind::Blend => "blend",
    }
}

fn serde_word<T: Serialize>(v: &T) -> String {
    serde_json::to_value(v)
        .ok()
        .and_then(|v| v.as_str().map(str::to_string))
        .unwrap_or_default()
}

/// The report as one self-contained HTML page.
///
/// `runs` are shown in the order given; `review` adds the review round's
/// agreement and design comparison.
pub fn report_html(
    analysis: &Analysis,
    runs: &[DesignRun],
    review: Option<&ReviewResults>,
    options: &ReportOptions,
) -> Result<String> {
    let mut pg = Page {
        h: String::with_capacity(256 * 1024),
    };
    let title = if options.title.trim().is_empty() {
        "pairsight report"
    } else {
        options.title.trim()
    };
    let _ = write!(
        pg.h,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
         <meta http-equiv=\"Content-Security-Policy\" content=\"{}\">\n\
         <meta name=\"referrer\" content=\"no-referrer\">\n\
         <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n\
         <meta name=\"generator\" content=\"pairsight {}\">\n\
         <title>{}</title>\n<style>{}</style>\n</head>\n<body>\n",
        REPORT_CSP,
        escape_html(crate::VERSION),
        escape_html(title),
        REPORT_STYLE
    );
    pg.raw("<header>\n");
    pg.tag("h1", title);
    let names: Vec<&str> = runs.iter().map(|r| r.design.name.as_str()).collect();
    pg.p_class(
        "meta",
        &format!(
            "Made with pairsight {} · {} design{} · {}",
            crate::VERSION,
            runs.len(),
            if runs.len() == 1 { "" } else { "s" },
            if options.include_notes {
                "includes example notes (chosen by the analyst)"
            } else {
                "no note text"
            }
        ),
    );
    pg.p_class("caution", CAUTION);
    pg.raw("<nav aria-label=\"Contents\"><ol>");
    let mut toc = vec![
        ("data", "Data"),
        ("designs", "Designs"),
        ("balance", "Balance"),
        ("overlap", "Score overlap"),
    ];
    if runs.iter().any(|r| r.term_shift.is_some()) {
        toc.push(("terms", "Term shift"));
    }
    if review.is_some() {
        toc.push(("review", "Expert review"));
    }
    toc.push(("effect", "Effect and sensitivity"));
    if options.include_notes {
        toc.push(("examples", "Example pairs"));
    }
    toc.push(("cautions", "Cautions"));
    toc.push(("study", "Study file"));
    for (id, label) in &toc {
        let _ = write!(
            pg.h,
            "<li><a href=\"#{id}\">{}</a></li>",
            escape_html(label)
        );
    }
    pg.raw("</ol></nav>\n</header>\n<main>\n");

    data_section(&mut pg, analysis, options);
    designs_section(&mut pg, runs);
    balance_section(&mut pg, runs)?;
    overlap_section(&mut pg, analysis, runs)?;
    if runs.iter().any(|r| r.term_shift.is_some()) {
        terms_section(&mut pg, runs);
    }
    if let Some(rv) = review {
        review_section(&mut pg, rv, &names);
    }
    effect_section(&mut pg, analysis, runs)?;
    if options.include_notes {
        examples_section(&mut pg, analysis, runs, options.example_pairs)?;
    }
    cautions_section(&mut pg, review.is_some(), options.include_notes);
    let study_text = match &options.study_text {
        Some(s) => s.clone(),
        None => analysis.study.to_toml()?,
    };
    pg.section("study", "Study file");
    pg.p("The study file re-creates the roles, concepts and designs of this report: open the same cohort file with it in pairsight (browser or command line) to reproduce every number.");
    let _ = writeln!(
        pg.h,
        "<details>\n<summary>Show the study file</summary>\n<pre class=\"study\">{}</pre>\n</details>",
        escape_html(&study_text)
    );
    pg.end_section();
    pg.raw("</main>\n<footer>\n");
    pg.p(&format!(
        "pairsight {} · this page loads nothing from any network and runs no script; every value from the data is shown as text.",
        crate::VERSION
    ));
    pg.raw("</footer>\n</body>\n</html>\n");
    Ok(pg.h)
}

fn data_section(pg: &mut Page, a: &Analysis, options: &ReportOptions) {
    let c = &a.study.columns;
    let table = &a.cohort.table;
    let summary = table.summary();
    let n_t = a.cohort.treated.iter().filter(|&&x| x).count();
    let n_c = a.cohort.len() - n_t;
    pg.section("data", "Data");
    let file = options
        .data_name
        .as_deref()
        .map(|s| format!("The cohort file {s}"))
        .unwrap_or_else(|| "The cohort file".to_string());
    pg.p(&format!(
        "{file} has {} rows and {} columns ({} encoding, {}-separated). {} rows were used: {} treated ({} = {}) and {} comparison ({} = {}). This section gives counts only, never records.",
        summary.rows,
        summary.columns,
        summary.encoding,
        summary.delimiter,
        a.cohort.len(),
        n_t,
        c.group,
        a.cohort.group_values.0,
        n_c,
        c.group,
        a.cohort.group_values.1
    ));
    let role = |name: &str| -> String {
        let mut r = Vec::new();
        if name == c.id {
            r.push("id");
        }
        if name == c.group {
            r.push("group");
        }
        if c.outcomes.iter().any(|o| o == name) {
            r.push("outcome");
        }
        if c.covariates.iter().any(|o| o == name) {
            r.push("covariate");
        }
        if c.notes.as_deref() == Some(name) {
            r.push("note");
        }
        if r.is_empty() {
            "not used".to_string()
        } else {
            r.join(", ")
        }
    };
    let rows = summary
        .column_summaries
        .iter()
        .map(|s| {
            let distinct = match s.kind {
                Kind::Binary | Kind::Categorical => s.distinct.to_string(),
                _ => "".to_string(),
            };
            vec![
                t(s.name.clone()),
                t(kind_word(s.kind)),
                t(role(&s.name)),
                n(s.missing.to_string()),
                n(distinct),
            ]
        })
        .collect();
    pg.table(
        "Columns (missing cells: empty, NA, NaN, \".\" or null)",
        &["column", "kind", "role", "missing cells", "distinct values"],
        rows,
    );
    if a.fills.is_empty() {
        pg.p("No missing values among the balance terms needed filling.");
    } else {
        let rows = a
            .fills
            .iter()
            .map(|f| {
                vec![
                    t(f.column.clone()),
                    n(f.cells.to_string()),
                    t(f.method.clone()),
                ]
            })
            .collect();
        pg.table(
            "Missing values filled (each filled covariate also gains a missingness indicator or level)",
            &["column", "cells filled", "fill"],
            rows,
        );
    }
    if a.cohort.left_out.is_empty() {
        pg.p("No rows were left out.");
    } else {
        let mut reasons: std::collections::BTreeMap<&str, usize> = Default::default();
        for l in &a.cohort.left_out {
            *reasons.entry(l.reason.as_str()).or_default() += 1;
        }
        let rows = reasons
            .into_iter()
            .map(|(r, k)| vec![t(r.to_string()), n(k.to_string())])
            .collect();
        pg.table("Rows left out", &["reason", "rows"], rows);
    }
    if let Some(f) = &a.notes {
        let concepts: Vec<String> = a.study.concepts.iter().map(|c| c.name.clone()).collect();
        pg.p(&format!(
            "Note features: {} per note from the column {} ({}), including {} concept{}{}.",
            f.names.len(),
            c.notes.as_deref().unwrap_or(""),
            "length, readability, lexical diversity, latent dimensions and concept counts",
            concepts.len(),
            if concepts.len() == 1 { "" } else { "s" },
            if concepts.is_empty() {
                String::new()
            } else {
                format!(": {}", concepts.join(", "))
            }
        ));
    }
    pg.end_section();
}

fn designs_section(pg: &mut Page, runs: &[DesignRun]) {
    pg.section("designs", "Designs");
    pg.p("Each design is a recipe for matching; the first rows are its settings, the rest what it produced. The caliper is in standard deviations of the logit score (Austin 2011).");
    let mut header = vec!["".to_string()];
    header.extend(runs.iter().map(|r| r.design.name.clone()));
    let header_ref: Vec<&str> = header.iter().map(String::as_str).collect();
    type Getter = Box<dyn Fn(&DesignRun) -> String>;
    let lines: Vec<(&str, bool, Getter)> = vec![
        (
            "score terms",
            false,
            Box::new(|r| r.design.score_terms.join(", ")),
        ),
        (
            "distance",
            false,
            Box::new(|r| {
                let d = &r.design;
                let mut s = distance_word(d.distance).to_string();
                if matches!(d.distance, DistanceKind::NoteCosine | DistanceKind::Blend) {
                    let _ = write!(s, "; note vectors {}", serde_word(&d.note_vectors));
                }
                if let (DistanceKind::Blend, Some(b)) = (d.distance, &d.blend) {
                    let _ = write!(
                        s,
                        "; weights score {}, mahalanobis {}, note {}",
                        b.score, b.mahalanobis, b.note
                    );
                }
                if matches!(d.distance, DistanceKind::Mahalanobis | DistanceKind::Blend)
                    && !d.mahalanobis_terms.is_empty()
                {
                    let _ = write!(s, "; mahalanobis terms {}", d.mahalanobis_terms.join(", "));
                }
                s
            }),
        ),
        (
            "caliper",
            true,
            Box::new(|r| match (r.design.caliper, r.summary.caliper_width) {
                (Some(c), Some(w)) => format!("{c} SD ({} on the logit score)", fixed(w, 3)),
                (Some(c), None) => format!("{c} SD"),
                _ => "none".to_string(),
            }),
        ),
        (
            "exact agreement on",
            false,
            Box::new(|r| {
                if r.design.exact.is_empty() {
                    "none".to_string()
                } else {
                    r.design.exact.join(", ")
                }
            }),
        ),
        (
            "comparison units per treated",
            true,
            Box::new(|r| r.design.controls.to_string()),
        ),
        (
            "reuse of comparison units",
            false,
            Box::new(|r| yes_no(r.design.reuse).to_string()),
        ),
        (
            "algorithm",
            false,
            Box::new(|r| serde_word(&r.design.algorithm)),
        ),
        (
            "score model",
            false,
            Box::new(|r| {
                let m = &r.summary.score_model;
                format!(
                    "{}; {} in {} steps",
                    serde_word(&m.method),
                    if m.converged {
                        "converged"
                    } else {
                        "did not converge"
                    },
                    m.iterations
                )
            }),
        ),
        (
            "score model warnings",
            false,
            Box::new(|r| {
                if r.summary.score_model.warnings.is_empty() {
                    "none".to_string()
                } else {
                    r.summary.score_model.warnings.join(" ")
                }
            }),
        ),
        (
            "treated matched",
            true,
            Box::new(|r| format!("{} of {}", r.summary.matched_treated, r.summary.treated)),
        ),
        (
            "treated left unmatched",
            true,
            Box::new(|r| r.summary.unmatched_treated.to_string()),
        ),
        (
            "  of them by the caliper",
            true,
            Box::new(|r| r.summary.dropped_by_caliper.to_string()),
        ),
        (
            "  of them by exact agreement",
            true,
            Box::new(|r| r.summary.dropped_by_exact.to_string()),
        ),
        (
            "sets with fewer comparison units than asked",
            true,
            Box::new(|r| r.summary.short_sets.to_string()),
        ),
        (
            "comparison units used",
            true,
            Box::new(|r| {
                format!(
                    "{} of {}",
                    r.summary.matched_comparison, r.summary.comparison
                )
            }),
        ),
        (
            "effective comparison sample size (Kish)",
            true,
            Box::new(|r| fixed(r.summary.effective_comparison, 1)),
        ),
        (
            "total distance within sets",
            true,
            Box::new(|r| fixed(r.summary.total_distance, 3)),
        ),
        (
            "largest |SMD| after matching",
            true,
            Box::new(|r| fixed_opt(r.summary.worst_abs_smd_after, 3)),
        ),
    ];
    let rows = lines
        .iter()
        .map(|(label, num, get)| {
            let mut row = vec![t(label.to_string())];
            row.extend(runs.iter().map(|r| {
                let mut c = t(get(r));
                c.num = *num;
                c
            }));
            row
        })
        .collect();
    pg.table("Settings and results of each design", &header_ref, rows);
    pg.end_section();
}

fn smd_cell(v: Option<f64>) -> Cell {
    let mut c = n(fixed_opt(v, 3));
    c.strong = v.is_some_and(|x| x.abs() > 0.1);
    c
}

fn term_label(r: &BalanceRow) -> String {
    if r.kind.is_note_derived() {
        format!("{} (note)", r.term)
    } else {
        r.term.clone()
    }
}

fn balance_section(pg: &mut Page, runs: &[DesignRun]) -> Result<()> {
    pg.section("balance", "Balance");
    pg.p("Standardized mean difference (SMD) of each covariate, treated minus comparison, divided by the pooled standard deviation of the unmatched sample, so before and after share one denominator (Austin 2009). Bold: |SMD| above 0.1, a common tolerance (Austin 2009). Terms marked (note) are computed from the notes.");
    let Some(first) = runs.first() else {
        pg.p("No design was run.");
        pg.end_section();
        return Ok(());
    };
    for (k, chunk) in runs.chunks(MAX_DESIGNS).enumerate() {
        let refs: Vec<&DesignRun> = chunk.iter().collect();
        let input = crate::run::love_input(&refs)?;
        let svg = love_svg(&input, 760, love_height_hint(input.terms.len()))?;
        let which = if runs.len() > MAX_DESIGNS {
            format!(
                " (designs {} to {})",
                k * MAX_DESIGNS + 1,
                k * MAX_DESIGNS + chunk.len()
            )
        } else {
            String::new()
        };
        pg.figure(
            &svg,
            &format!("Love plot{which}: absolute SMD before matching (hollow circles) and after matching under each design, with the 0.1 line."),
        );
    }
    let mut header = vec![
        "term".to_string(),
        "kind".to_string(),
        "SMD before".to_string(),
    ];
    header.extend(runs.iter().map(|r| format!("SMD after: {}", r.design.name)));
    let header_ref: Vec<&str> = header.iter().map(String::as_str).collect();
    let rows = first
        .balance
        .iter()
        .enumerate()
        .map(|(i, b)| {
            let mut row = vec![
                t(term_label(b)),
                t(serde_word(&b.kind)),
                smd_cell(b.smd_before),
            ];
            row.extend(
                runs.iter()
                    .map(|r| smd_cell(r.balance.get(i).and_then(|x| x.smd_after))),
            );
            row
        })
        .collect();
    pg.table("Standardized mean differences", &header_ref, rows);
    for r in runs {
        let rows = r
            .balance
            .iter()
            .map(|b| {
                vec![
                    t(term_label(b)),
                    smd_cell(b.smd_before),
                    smd_cell(b.smd_after),
                    n(fixed_opt(b.variance_ratio_before, 3)),
                    n(fixed_opt(b.variance_ratio_after, 3)),
                    n(fixed_opt(b.ks_before, 3)),
                    n(fixed_opt(b.ks_after, 3)),
                ]
            })
            .collect();
        let _ = writeln!(
            pg.h,
            "<details>\n<summary>Full balance table of design {}</summary>",
            escape_html(&r.design.name)
        );
        pg.table(
            "Variance ratio is treated over comparison; KS is the Kolmogorov-Smirnov distance of the two groups' distribution functions (weighted after matching).",
            &["term", "SMD before", "SMD after", "variance ratio before", "variance ratio after", "KS before", "KS after"],
            rows,
        );
        pg.raw("</details>\n");
        if !r.summary.undefined_smd.is_empty() {
            pg.p(&format!(
                "Design {}: the SMD is undefined for {} (no spread in the unmatched sample).",
                r.design.name,
                r.summary.undefined_smd.join(", ")
            ));
        }
    }
    pg.end_section();
    Ok(())
}

fn overlap_section(pg: &mut Page, a: &Analysis, runs: &[DesignRun]) -> Result<()> {
    pg.section("overlap", "Score overlap");
    pg.p("Distribution of the logit score in the two groups, before matching and after matching (weighted by the matching). Each design fits its own score model, so each has its own pair of panels. Little overlap before matching means some treated patients have no comparable comparison patients.");
    for r in runs {
        let input = OverlapInput {
            title: None,
            ..r.overlap_input(a)
        };
        let svg = overlap_svg(&input, 760, 300)?;
        pg.figure(
            &svg,
            &format!("Overlap of the logit score, design {}.", r.design.name),
        );
    }
    pg.end_section();
    Ok(())
}

fn terms_section(pg: &mut Page, runs: &[DesignRun]) {
    pg.section("terms", "Term shift");
    pg.p(&format!(
        "Words most over-represented in the notes of one group, before and after matching: log-odds ratio with an informative Dirichlet prior and its z-score (Monroe, Colaresi & Quinn 2008). Positive values lean to the treated group. Words seen fewer than {} times in all notes are left out of this report.",
        MIN_TERM_COUNT
    ));
    for r in runs {
        let Some(ts) = &r.term_shift else { continue };
        let rows: Vec<Vec<Cell>> = ts
            .rows
            .iter()
            .filter(|x| x.count >= MIN_TERM_COUNT)
            .map(|x| {
                vec![
                    t(x.term.clone()),
                    n(fixed(x.count, 0)),
                    n(fixed(x.delta_before, 3)),
                    n(fixed(x.z_before, 2)),
                    n(fixed(x.delta_after, 3)),
                    n(fixed(x.z_after, 2)),
                ]
            })
            .collect();
        if rows.is_empty() {
            pg.p(&format!(
                "Design {}: no word is frequent enough to show.",
                r.design.name
            ));
            continue;
        }
        let _ = writeln!(
            pg.h,
            "<details open>\n<summary>Term shift of design {} ({} words)</summary>",
            escape_html(&r.design.name),
            rows.len()
        );
        pg.table(
            "",
            &[
                "word",
                "count",
                "log-odds before",
                "z before",
                "log-odds after",
                "z after",
            ],
            rows,
        );
        pg.raw("</details>\n");
    }
    pg.end_section();
}

fn review_section(pg: &mut Page, rv: &ReviewResults, designs_run: &[&str]) {
    pg.section("review", "Expert review");
    let ag = &rv.agreement;
    pg.p(&format!(
        "Review round {}: {} pairs drawn across designs with design labels hidden, order and sides shuffled; {} reviewer{} gave {} ratings; {} pairs were rated at least once and {} by every reviewer.",
        rv.round_id,
        rv.pairs_in_round,
        ag.reviewers.len(),
        if ag.reviewers.len() == 1 { "" } else { "s" },
        rv.ratings,
        ag.pairs_rated,
        ag.pairs_complete
    ));
    let level = percent_level(rv.comparison.confidence);
    let mut rows = Vec::new();
    for k in &ag.kappas {
        for (w, kv) in [("linear", &k.linear), ("quadratic", &k.quadratic)] {
            let label = format!("weighted kappa ({w}), {} and {}", k.first, k.second);
            rows.push(match kv {
                Some(x) => vec![
                    t(label),
                    n(fixed(x.kappa, 3)),
                    n(interval(x.ci_low, x.ci_high, 3)),
                    n(x.n.to_string()),
                ],
                None => vec![t(label), n("undefined"), n(""), n(k.pairs.to_string())],
            });
        }
    }
    for (name, a) in [
        ("Krippendorff's alpha (ordinal)", &ag.alpha_ordinal),
        ("Krippendorff's alpha (interval)", &ag.alpha_interval),
    ] {
        if let Some(a) = a {
            let ci = match (a.ci_low, a.ci_high) {
                (Some(l), Some(h)) => interval(l, h, 3),
                _ => "".to_string(),
            };
            rows.push(vec![
                t(name),
                n(fixed(a.alpha, 3)),
                n(ci),
                n(a.n_units.to_string()),
            ]);
        }
    }
    if let Some(icc) = &ag.icc {
        for r in &icc.rows {
            rows.push(vec![
                t(format!("intraclass correlation {}", r.label)),
                n(fixed(r.icc, 3)),
                n(interval(r.ci_low, r.ci_high, 3)),
                n(icc.n_units.to_string()),
            ]);
        }
    }
    pg.table(
        &format!("Agreement between reviewers ({level} intervals; kappa: Cohen 1968 with Fleiss, Cohen & Everitt 1969 standard errors; alpha: Krippendorff 2011 with a bootstrap over pairs; ICC: Shrout & Fleiss 1979)"),
        &["statistic", "value", &format!("{level} interval"), "pairs"],
        rows,
    );
    for note in &ag.notes {
        pg.p_class("note", note);
    }
    let c = &rv.comparison;
    let rows = c
        .designs
        .iter()
        .map(|d| {
            vec![
                t(d.design.clone()),
                n(format!("{} of {}", d.pairs_rated, d.pairs_drawn)),
                n(fixed_opt(d.mean, 2)),
                n(match (d.ci_low, d.ci_high) {
                    (Some(l), Some(h)) => interval(l, h, 2),
                    _ => "".into(),
                }),
                n(d.share_alike
                    .map_or("".into(), |s| format!("{}%", fixed(100.0 * s, 0)))),
                n(match (d.share_ci_low, d.share_ci_high) {
                    (Some(l), Some(h)) => {
                        format!("{}% to {}%", fixed(100.0 * l, 0), fixed(100.0 * h, 0))
                    }
                    _ => "".into(),
                }),
                n(d.distance_vs_rating.as_ref().map_or("".into(), |r| {
                    format!("{} (p {})", fixed(r.rho, 2), p_text(r.p_value))
                })),
            ]
        })
        .collect();
    pg.table(
        &format!("Rated similarity per design (pair means over reviewers; t interval for the mean, Wilson interval for the share rated {} or more)", c.level),
        &["design", "pairs rated", "mean rating", &format!("{level} interval"), &format!("share at {} or more", c.level), &format!("{level} interval of share"), "Spearman rho, distance vs rating"],
        rows,
    );
    if !c.contrasts.is_empty() {
        let rows = c
            .contrasts
            .iter()
            .map(|x| {
                vec![
                    t(format!("{} minus {}", x.first, x.second)),
                    n(fixed_opt(x.difference, 2)),
                    n(match (x.ci_low, x.ci_high) {
                        (Some(l), Some(h)) => interval(l, h, 2),
                        _ => "".into(),
                    }),
                    n(x.p_value.map_or("".into(), p_text)),
                    n(x.p_holm.map_or("".into(), p_text)),
                    n(x.shared_pairs.to_string()),
                ]
            })
            .collect();
        pg.table(
            "Differences between designs (Welch's t test on pair means; Holm's adjustment over all differences)",
            &["designs", "difference in mean rating", &format!("{level} interval"), "p-value", "p-value (Holm)", "shared pairs"],
            rows,
        );
    }
    if !c.measures.is_empty() {
        let rows = c
            .measures
            .iter()
            .map(|m| match &m.correlation {
                Some(r) => vec![
                    t(m.name.clone()),
                    n(fixed(r.rho, 2)),
                    n(p_text(r.p_value)),
                    n(r.n.to_string()),
                ],
                None => vec![t(m.name.clone()), n("undefined"), n(""), n("")],
            })
            .collect();
        pg.table(
            "Which distance tracks the reviewers: Spearman rank correlation of each distance with the pair's mean rating over all reviewed pairs (negative: closer pairs were rated more alike)",
            &["distance", "Spearman rho", "p-value", "pairs"],
            rows,
        );
    }
    let unknown: Vec<&str> = c
        .designs
        .iter()
        .map(|d| d.design.as_str())
        .filter(|d| !designs_run.contains(d))
        .collect();
    if !unknown.is_empty() {
        pg.p_class(
            "note",
            &format!(
                "The review round also covers designs not shown elsewhere in this report: {}.",
                unknown.join(", ")
            ),
        );
    }
    if !rv.warnings.is_empty() {
        let _ = writeln!(
            pg.h,
            "<details>\n<summary>{} note{} from reading the ratings files</summary>\n<ul>",
            rv.warnings.len(),
            if rv.warnings.len() == 1 { "" } else { "s" }
        );
        for w in &rv.warnings {
            pg.tag("li", w);
        }
        pg.raw("</ul>\n</details>\n");
    }
    pg.raw("<ul class=\"cautions\">\n");
    for w in &c.cautions {
        pg.tag("li", w);
    }
    pg.raw("</ul>\n");
    pg.end_section();
}

fn estimate_row(label: String, e: &EffectEstimate) -> Vec<Cell> {
    vec![
        t(label),
        n(fixed(e.estimate, 3)),
        n(interval(e.ci_low, e.ci_high, 3)),
        n(p_text(e.p_value)),
        t(e.test.clone()),
        n(if e.n_sets == 0 {
            "".into()
        } else {
            e.n_sets.to_string()
        }),
        n(e.n_treated.to_string()),
        n(e.n_comparison_units.to_string()),
    ]
}

fn effect_section(pg: &mut Page, a: &Analysis, runs: &[DesignRun]) -> Result<()> {
    pg.section("effect", "Effect and sensitivity");
    pg.p_class("caution", CAUTION);
    for (o, name) in a.study.columns.outcomes.iter().enumerate() {
        let effects: Vec<(&DesignRun, &OutcomeEffect)> = runs
            .iter()
            .filter_map(|r| r.effects.get(o).map(|e| (r, e)))
            .collect();
        let Some((_, first)) = effects.first() else {
            continue;
        };
        let level = percent_level(first.matched.level);
        let _ = writeln!(pg.h, "<h3>Outcome {}</h3>", escape_html(name));
        pg.p(&format!(
            "{} outcome; the effect on the treated as a {}, treated minus comparison.{}",
            if serde_word(&first.kind) == "binary" {
                "Binary"
            } else {
                "Continuous"
            },
            first.matched.measure,
            if first.missing_outcome_units > 0 {
                format!(
                    " {} units with a missing value were left out.",
                    first.missing_outcome_units
                )
            } else {
                String::new()
            }
        ));
        let mut rows = vec![estimate_row(
            "unmatched (whole cohort)".into(),
            &first.unmatched,
        )];
        for (r, e) in &effects {
            rows.push(estimate_row(
                format!("matched: {}", r.design.name),
                &e.matched,
            ));
        }
        pg.table(
            &format!("{} estimates", first.matched.measure),
            &[
                "sample",
                "estimate",
                &format!("{level} interval"),
                "p-value",
                "test",
                "sets",
                "treated",
                "comparison",
            ],
            rows,
        );
        let rr_rows: Vec<Vec<Cell>> =
            std::iter::once(("unmatched (whole cohort)".to_string(), &first.unmatched))
                .chain(
                    effects
                        .iter()
                        .map(|(r, e)| (format!("matched: {}", r.design.name), &e.matched)),
                )
                .filter_map(|(l, e)| {
                    e.risk_ratio.as_ref().map(|rr| {
                        vec![
                            t(l),
                            n(fixed(rr.estimate, 3)),
                            n(interval(rr.ci_low, rr.ci_high, 3)),
                        ]
                    })
                })
                .collect();
        if !rr_rows.is_empty() {
            pg.table(
                "Risk ratios",
                &["sample", "risk ratio", &format!("{level} interval")],
                rr_rows,
            );
        }
        for (r, e) in &effects {
            let _ = writeln!(pg.h, "<h4>Design {}</h4>", escape_html(&r.design.name));
            pg.p(&format!("Interval: {}.", e.matched.method));
            if let Some(ev) = &e.e_value {
                pg.p(&format!(
                    "E-value (VanderWeele & Ding 2017): {} for the estimate and {} for the interval limit nearer the null, on the {} scale ({}). An unmeasured confounder associated with both treatment and outcome by a risk ratio this large could explain the estimate away.",
                    fixed(ev.e_point, 2), fixed(ev.e_limit, 2), ev.scale, fixed(ev.risk_ratio, 3)
                ));
            }
            if let Some(b) = &e.sensitivity {
                let verdict = if !b.significant_without_bias {
                    format!("The one-sided test is not significant at {} even with no hidden bias (Gamma 1).", b.alpha)
                } else {
                    match b.gamma_critical {
                        Some(g) => format!("The upper bound on the one-sided p-value passes {} at Gamma {}: hidden bias that multiplies the odds of treatment within a pair by this much could explain the result.", b.alpha, fixed(g, 2)),
                        None => format!("The upper bound on the one-sided p-value stays below {} up to Gamma {}, the end of the grid.", b.alpha, fixed(b.points.last().map_or(f64::NAN, |p| p.gamma), 2)),
                    }
                };
                pg.p(&format!("Rosenbaum bounds (Rosenbaum 2002) on {}, direction {}, {} pairs used. {verdict}", b.test, b.direction, b.n_used));
                let input = SensitivityInput {
                    title: None,
                    gammas: b.points.iter().map(|p| p.gamma).collect(),
                    p_upper: b.points.iter().map(|p| p.p_upper.clamp(0.0, 1.0)).collect(),
                    alpha: b.alpha,
                    crossing: if b.significant_without_bias {
                        b.gamma_critical
                    } else {
                        None
                    },
                };
                let svg = sensitivity_svg(&input, 640, 300)?;
                pg.figure(&svg, &format!("Upper bound on the one-sided p-value against Gamma, outcome {name}, design {}.", r.design.name));
                let rows = b
                    .points
                    .iter()
                    .map(|p| {
                        vec![
                            n(fixed(p.gamma, 2)),
                            n(fixed(p.p_upper, 4)),
                            n(fixed(p.p_lower, 4)),
                        ]
                    })
                    .collect();
                let _ = writeln!(pg.h, "<details>\n<summary>Bounds at each Gamma</summary>");
                pg.table("", &["Gamma", "upper bound on p", "lower bound on p"], rows);
                pg.raw("</details>\n");
            }
            for note in &e.notes {
                pg.p_class("note", note);
            }
        }
    }
    pg.end_section();
    Ok(())
}

fn examples_section(pg: &mut Page, a: &Analysis, runs: &[DesignRun], k: usize) -> Result<()> {
    pg.section("examples", "Example pairs");
    pg.p_class("caution", "This section shows note text by the analyst's choice. Notes are protected health information: share this report only as local research-ethics and data-governance rules allow.");
    let Some(col) = a.study.columns.notes.as_deref() else {
        pg.p("The study has no notes column.");
        pg.end_section();
        return Ok(());
    };
    let notes = a.cohort.cells(col)?;
    for r in runs {
        let mut sets: Vec<(usize, usize, f64)> = r
            .matching
            .sets
            .iter()
            .filter_map(|s| s.controls.first().map(|&(c, d)| (s.treated, c, d)))
            .collect();
        sets.sort_by(|x, y| x.2.total_cmp(&y.2).then(x.0.cmp(&y.0)));
        let _ = writeln!(pg.h, "<h3>Design {}</h3>", escape_html(&r.design.name));
        if sets.is_empty() || k == 0 {
            pg.p("No matched pairs to show.");
            continue;
        }
        let m = sets.len();
        let mut picks: Vec<usize> = if k == 1 {
            vec![0]
        } else {
            (0..k).map(|i| i * (m - 1) / (k - 1)).collect()
        };
        picks.dedup();
        for (j, &i) in picks.iter().enumerate() {
            let (tr, co, d) = sets[i];
            let which = if j == 0 {
                "closest"
            } else if j + 1 == picks.len() {
                "farthest"
            } else {
                "between"
            };
            let _ = writeln!(
                pg.h,
                "<div class=\"pair\">\n<p class=\"pair-head\">Pair {} of {} shown ({}), distance {}</p>",
                j + 1,
                picks.len(),
                which,
                escape_html(&fixed(d, 3))
            );
            for (label, row) in [("treated", tr), ("comparison", co)] {
                let text = notes.get(row).copied().unwrap_or("");
                let _ = writeln!(
                    pg.h,
                    "<div class=\"note\"><p class=\"side\">{label}</p><pre>{}</pre></div>",
                    escape_html(text)
                );
            }
            pg.raw("</div>\n");
        }
    }
    pg.end_section();
    Ok(())
}

fn cautions_section(pg: &mut Page, reviewed: bool, notes: bool) {
    pg.section("cautions", "Cautions");
    pg.raw("<ul class=\"cautions\">\n");
    pg.tag("li", "pairsight supports the design of an observational study. A matched comparison estimates the effect on the treated only under the assumption of no unmeasured confounding: that matching on the measured covariates and note features made the groups comparable.");
    pg.tag("li", "Balance on measured covariates does not show balance on unmeasured ones. The sensitivity analysis and the E-value say how strong hidden bias would have to be to change the conclusion; they bound that doubt but do not remove it.");
    pg.tag("li", "Intervals and tests treat the matched sets as fixed; the uncertainty of the score model and of the choice among designs is not included. Choosing among several designs by their outcomes would bias the result: choose by balance and review, before looking at outcomes.");
    if reviewed {
        pg.tag("li", "Reviewers' ratings support the review of the design; they are not judgments about any patient's care.");
    }
    pg.tag("li", if notes { "This report includes note text. It is protected health information." } else { "This report holds counts and summaries only, no note text or records; small word counts are suppressed. Summaries of small groups can still point to individuals: check before sharing." });
    pg.tag("li", "Results need review by qualified people before they inform any clinical or policy decision, and their use must follow local research-ethics and data-governance rules.");
    pg.raw("</ul>\n");
    pg.end_section();
}

#[cfg(test)]
pub(crate) mod tests;
