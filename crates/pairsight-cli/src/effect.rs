//! `pairsight effect`: the effect per design and outcome as a readable table,
//! with the sensitivity to hidden bias and the caution below it.

use crate::io::in_file;
use crate::matching::load;
use pairsight_core::report::{fixed, fixed_opt, interval, p_text, percent_level};
use pairsight_core::run::{Analysis, DesignRun, OutcomeEffect, CAUTION};
use pairsight_core::study::Design;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

/// Arguments of `pairsight effect`.
#[derive(clap::Args)]
pub struct EffectArgs {
    /// The cohort file (CSV; comma, semicolon or tab).
    pub data: PathBuf,
    /// The study file (`*.study.toml`).
    #[arg(long)]
    pub study: PathBuf,
    /// Show only this design (default: every design of the study).
    #[arg(long)]
    pub design: Option<String>,
}

/// The designs to run: the named ones in the order given, or every design
/// of the study. An unknown name is an error naming the study file.
pub fn chosen_designs(
    analysis: &Analysis,
    study: &Path,
    names: &[String],
) -> Result<Vec<Design>, String> {
    let designs: Vec<Design> = if names.is_empty() {
        analysis.study.designs.clone()
    } else {
        names
            .iter()
            .map(|n| analysis.study.design(n).cloned().map_err(in_file(study)))
            .collect::<Result<_, _>>()?
    };
    if designs.is_empty() {
        return Err(format!(
            "{}: the study has no [[designs]]; add one (see docs/study-file.md)",
            study.display()
        ));
    }
    Ok(designs)
}

/// Run each design; errors name the cohort file.
pub fn run_designs(
    analysis: &Analysis,
    designs: &[Design],
    data: &Path,
) -> Result<Vec<DesignRun>, String> {
    designs
        .iter()
        .map(|d| analysis.run(d).map_err(in_file(data)))
        .collect()
}

/// Run the subcommand.
pub fn run(args: &EffectArgs) -> Result<(), String> {
    let analysis = load(&args.data, &args.study)?;
    let names: Vec<String> = args.design.iter().cloned().collect();
    let designs = chosen_designs(&analysis, &args.study, &names)?;
    let runs = run_designs(&analysis, &designs, &args.data)?;
    let mut out = String::new();
    for r in &runs {
        design_table(&mut out, r);
    }
    out.push_str(&wrap(&format!("Caution: {CAUTION}"), 78));
    out.push('\n');
    print!("{out}");
    Ok(())
}

/// One line of the estimate table.
fn row(out: &mut String, label: &str, e: &pairsight_core::effect::EffectEstimate) {
    let sets = if e.n_sets == 0 {
        "-".to_string()
    } else {
        e.n_sets.to_string()
    };
    let _ = writeln!(
        out,
        "  {label:<10} {:>9}  {:<21} {:>8}  {:>5} {:>8} {:>10}  {}",
        fixed(e.estimate, 3),
        interval(e.ci_low, e.ci_high, 3),
        p_text(e.p_value),
        sets,
        e.n_treated,
        e.n_comparison_units,
        e.test
    );
}

fn design_table(out: &mut String, r: &DesignRun) {
    let d = &r.design;
    let s = &r.summary;
    let _ = writeln!(out, "Design \"{}\"", d.name);
    let caliper = d
        .caliper
        .map_or("no caliper".to_string(), |c| format!("caliper {c} SD"));
    let _ = writeln!(
        out,
        "  1:{} {} matching{}, {}; {} of {} treated matched with {} comparison units",
        d.controls,
        serde_name(&d.algorithm),
        if d.reuse { " with reuse" } else { "" },
        caliper,
        s.matched_treated,
        s.treated,
        s.matched_comparison
    );
    for o in &r.effects {
        out.push('\n');
        outcome_table(out, o);
    }
    out.push('\n');
}

fn outcome_table(out: &mut String, o: &OutcomeEffect) {
    let m = &o.matched;
    let _ = writeln!(
        out,
        "Outcome \"{}\" ({}; {}, treated minus comparison)",
        o.name,
        serde_name(&o.kind),
        m.measure
    );
    let _ = writeln!(
        out,
        "  {:<10} {:>9}  {:<21} {:>8}  {:>5} {:>8} {:>10}  test",
        "",
        "estimate",
        format!("{} interval", percent_level(m.level)),
        "p-value",
        "sets",
        "treated",
        "comparison"
    );
    row(out, "unmatched", &o.unmatched);
    row(out, "matched", m);
    if let Some(rr) = &m.risk_ratio {
        let _ = writeln!(
            out,
            "  risk ratio, matched: {} ({})",
            fixed(rr.estimate, 3),
            interval(rr.ci_low, rr.ci_high, 3)
        );
    }
    let _ = writeln!(out, "  interval, matched: {}", m.method);
    if o.missing_outcome_units > 0 {
        let _ = writeln!(
            out,
            "  left out: {} units with a missing \"{}\"",
            o.missing_outcome_units, o.name
        );
    }
    if let Some(b) = &o.sensitivity {
        let verdict = match b.gamma_critical {
            _ if !b.significant_without_bias => format!(
                "not significant at one-sided {} even without hidden bias (Gamma 1)",
                b.alpha
            ),
            Some(g) => format!(
                "the bound exceeds one-sided {} from Gamma {} on (critical Gamma)",
                b.alpha,
                fixed(g, 2)
            ),
            None => format!(
                "still significant at one-sided {} at Gamma {}, the end of the grid",
                b.alpha,
                fixed(b.points.last().map_or(f64::NAN, |p| p.gamma), 2)
            ),
        };
        let _ = writeln!(
            out,
            "  hidden bias: Rosenbaum bound on {} ({}): {}",
            b.test, b.direction, verdict
        );
    }
    if let Some(e) = &o.e_value {
        let _ = writeln!(
            out,
            "  E-value: {} for the estimate, {} for the interval limit nearer the null ({} {})",
            fixed(e.e_point, 2),
            fixed(e.e_limit, 2),
            e.scale,
            fixed_opt(Some(e.risk_ratio), 3)
        );
    }
    for n in &o.notes {
        let _ = writeln!(out, "  note: {n}");
    }
}

/// The serialized (lower-case) name of an enum value.
fn serde_name<T: serde::Serialize>(v: &T) -> String {
    serde_json::to_value(v)
        .ok()
        .and_then(|v| v.as_str().map(str::to_string))
        .unwrap_or_default()
}

/// Break text into lines of at most `width` characters at spaces.
pub fn wrap(text: &str, width: usize) -> String {
    let mut out = String::new();
    let mut line = 0;
    for word in text.split_whitespace() {
        let n = word.chars().count();
        if line > 0 && line + 1 + n > width {
            out.push('\n');
            line = 0;
        } else if line > 0 {
            out.push(' ');
            line += 1;
        }
        out.push_str(word);
        line += n;
    }
    out
}
