//! `pairsight agree`: merge reviewers' ratings files against the round's key,
//! print the agreement between reviewers and the design comparison, and
//! write them to `agreement.json`.

use crate::effect::wrap;
use crate::io::{read_bytes, read_text, write_atomic};
use pairsight_core::output;
use pairsight_core::packet::{review_results, ResultsParams, ReviewResults, RoundKey};
use pairsight_core::report::{fixed, fixed_opt, interval, p_text, percent_level};
use pairsight_core::review::{merge_ratings, ComparisonParams, RatingsFile};
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

/// Arguments of `pairsight agree`.
#[derive(clap::Args)]
pub struct AgreeArgs {
    /// The round's key file (`round-key.json`, written with the packets).
    #[arg(long)]
    pub key: PathBuf,
    /// Ratings files exported from the packets (any number).
    #[arg(required = true)]
    pub ratings: Vec<PathBuf>,
    /// Where to write the results (default: `agreement.json` beside the key file).
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// A pair counts as alike when its mean rating is at least this point of the scale.
    #[arg(long, default_value_t = 4)]
    pub alike: i64,
    /// Confidence level of every interval.
    #[arg(long, default_value_t = 0.95)]
    pub confidence: f64,
}

/// Read a key file and ratings files and compute the review results. Every
/// problem in the ratings files is listed with file, row and column.
pub fn read_review(
    key_path: &Path,
    ratings: &[PathBuf],
    params: &ResultsParams,
) -> Result<ReviewResults, String> {
    let key = RoundKey::from_json(&read_text(key_path)?)
        .map_err(|e| format!("{}: {e}", key_path.display()))?;
    let files = ratings
        .iter()
        .map(|p| {
            Ok(RatingsFile {
                name: p.display().to_string(),
                bytes: read_bytes(p)?,
            })
        })
        .collect::<Result<Vec<_>, String>>()?;
    let merged = merge_ratings(&key.round, &files)
        .strict()
        .map_err(|e| e.to_string())?;
    review_results(&key, &merged, params).map_err(|e| e.to_string())
}

/// Run the subcommand.
pub fn run(args: &AgreeArgs) -> Result<(), String> {
    let params = ResultsParams {
        comparison: ComparisonParams {
            confidence: args.confidence,
            level: args.alike,
        },
        ..ResultsParams::default()
    };
    let results = read_review(&args.key, &args.ratings, &params)?;
    let out = args.out.clone().unwrap_or_else(|| {
        args.key.parent().map_or_else(
            || PathBuf::from("agreement.json"),
            |d| d.join("agreement.json"),
        )
    });
    write_atomic(
        &out,
        output::json(&results)
            .map_err(|e| e.to_string())?
            .as_bytes(),
    )?;
    print!("{}", results_text(&results));
    println!("wrote {}", out.display());
    Ok(())
}

fn ci(low: Option<f64>, high: Option<f64>, d: usize) -> String {
    match (low, high) {
        (Some(l), Some(h)) => interval(l, h, d),
        _ => "-".to_string(),
    }
}

/// The results as readable text.
pub fn results_text(r: &ReviewResults) -> String {
    let mut s = String::new();
    let ag = &r.agreement;
    let level = percent_level(r.comparison.confidence);
    let _ = writeln!(
        s,
        "Review round {}: {} ratings from {} reviewer(s) ({}); {} of {} pairs rated, {} by every reviewer",
        r.round_id,
        r.ratings,
        ag.reviewers.len(),
        ag.reviewers.join(", "),
        ag.pairs_rated,
        r.pairs_in_round,
        ag.pairs_complete
    );
    for w in &r.warnings {
        let _ = writeln!(s, "  {w}");
    }
    let _ = writeln!(s, "\nAgreement between reviewers");
    let _ = writeln!(
        s,
        "  {:<46} {:>7}  {:<17} {:>5}",
        "statistic",
        "value",
        format!("{level} interval"),
        "pairs"
    );
    let mut line = |name: String, v: String, c: String, n: String| {
        let _ = writeln!(s, "  {name:<46} {v:>7}  {c:<17} {n:>5}");
    };
    for k in &ag.kappas {
        for (w, kv) in [("linear", &k.linear), ("quadratic", &k.quadratic)] {
            let name = format!("kappa, {w} weights: {} and {}", k.first, k.second);
            match kv {
                Some(x) => line(
                    name,
                    fixed(x.kappa, 3),
                    interval(x.ci_low, x.ci_high, 3),
                    x.n.to_string(),
                ),
                None => line(name, "-".into(), "-".into(), k.pairs.to_string()),
            }
        }
    }
    for (name, a) in [
        ("Krippendorff's alpha, ordinal", &ag.alpha_ordinal),
        ("Krippendorff's alpha, interval", &ag.alpha_interval),
    ] {
        if let Some(a) = a {
            line(
                name.into(),
                fixed(a.alpha, 3),
                ci(a.ci_low, a.ci_high, 3),
                a.n_units.to_string(),
            );
        }
    }
    if let Some(icc) = &ag.icc {
        for x in &icc.rows {
            line(
                format!("intraclass correlation {}", x.label),
                fixed(x.icc, 3),
                interval(x.ci_low, x.ci_high, 3),
                icc.n_units.to_string(),
            );
        }
    }
    for k in &ag.kappas {
        for n in &k.notes {
            let _ = writeln!(s, "  note: {} and {}: {n}", k.first, k.second);
        }
    }
    for n in &ag.notes {
        let _ = writeln!(s, "  note: {n}");
    }
    let c = &r.comparison;
    let _ = writeln!(
        s,
        "\nRated similarity per design (pair means over reviewers)"
    );
    let _ = writeln!(
        s,
        "  {:<20} {:>7} {:>6}  {:<14} {:>7}  {:<12} Spearman rho (distance vs rating)",
        "design",
        "pairs",
        "mean",
        format!("{level} interval"),
        format!(">= {}", c.level),
        "interval",
    );
    for d in &c.designs {
        let _ = writeln!(
            s,
            "  {:<20} {:>7} {:>6}  {:<14} {:>7}  {:<12} {}",
            d.design,
            format!("{}/{}", d.pairs_rated, d.pairs_drawn),
            fixed_opt(d.mean, 2),
            ci(d.ci_low, d.ci_high, 2),
            d.share_alike
                .map_or("-".into(), |x| format!("{}%", fixed(100.0 * x, 0))),
            match (d.share_ci_low, d.share_ci_high) {
                (Some(l), Some(h)) => format!("{}-{}%", fixed(100.0 * l, 0), fixed(100.0 * h, 0)),
                _ => "-".into(),
            },
            d.distance_vs_rating
                .as_ref()
                .map_or("-".into(), |x| format!(
                    "{} (p {}, n {})",
                    fixed(x.rho, 2),
                    p_text(x.p_value),
                    x.n
                ))
        );
    }
    if !c.contrasts.is_empty() {
        let _ = writeln!(
            s,
            "\nDifferences between designs (Welch's t on pair means, Holm-adjusted p)"
        );
        for x in &c.contrasts {
            let _ = writeln!(
                s,
                "  {} minus {}: {} ({}), p {}, Holm p {}, {} shared pairs",
                x.first,
                x.second,
                fixed_opt(x.difference, 2),
                ci(x.ci_low, x.ci_high, 2),
                x.p_value.map_or("-".into(), p_text),
                x.p_holm.map_or("-".into(), p_text),
                x.shared_pairs
            );
        }
    }
    if !c.measures.is_empty() {
        let _ = writeln!(s, "\nWhich distance tracks the reviewers (Spearman rho with the pair mean; negative = closer pairs rated more alike)");
        for m in &c.measures {
            let v = m.correlation.as_ref().map_or("undefined".into(), |x| {
                format!("{} (p {}, n {})", fixed(x.rho, 2), p_text(x.p_value), x.n)
            });
            let _ = writeln!(s, "  {}: {v}", m.name);
        }
    }
    s.push('\n');
    for w in &c.cautions {
        s.push_str(&wrap(&format!("- {w}"), 78));
        s.push('\n');
    }
    s
}
