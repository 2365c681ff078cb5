//! The Effect step's doorway: the sensitivity plot of one design and
//! outcome (drawn by the core on the worker's canvas, or as SVG) and the
//! self-contained report. Glue only: the bounds, the E-value and the report
//! are the core's.

use crate::charts;
use crate::review::{results_of, RatingsUpload};
use crate::session;
use pairsight_core::chart::{sensitivity_svg, SensitivityInput};
use pairsight_core::report::{report_html, ReportOptions};
use pairsight_core::run::DesignRun;
use pairsight_core::{Error, Result};
use serde::Deserialize;
use web_sys::OffscreenCanvas;

/// The plot input of design run `r`'s outcome `outcome`, as the report
/// builds it: the bound at each Gamma, and the crossing of alpha only when
/// the test is significant without hidden bias (otherwise there is nothing
/// to overturn).
pub fn sensitivity_input(r: &DesignRun, outcome: &str) -> Result<SensitivityInput> {
    let effect = r
        .effects
        .iter()
        .find(|e| e.name == outcome)
        .ok_or_else(|| {
            Error::param(
                "outcome",
                format!("design \"{}\" has no outcome \"{outcome}\"", r.design.name),
            )
        })?;
    let b = effect.sensitivity.as_ref().ok_or_else(|| {
        Error::param(
            "outcome",
            format!(
                "outcome \"{outcome}\" of design \"{}\" has no sensitivity analysis: {}",
                r.design.name,
                effect.notes.join("; ")
            ),
        )
    })?;
    Ok(SensitivityInput {
        title: Some(format!("{outcome}, design {}", r.design.name)),
        gammas: b.points.iter().map(|p| p.gamma).collect(),
        p_upper: b.points.iter().map(|p| p.p_upper.clamp(0.0, 1.0)).collect(),
        alpha: b.alpha,
        crossing: if b.significant_without_bias {
            b.gamma_critical
        } else {
            None
        },
    })
}

/// Paint the sensitivity plot of design `name`, outcome `outcome` on `canvas`.
pub fn paint(canvas: &OffscreenCanvas, name: &str, outcome: &str) -> Result<()> {
    session::with_runs(&[name.to_string()], |_, runs| {
        charts::paint_sensitivity(canvas, &sensitivity_input(runs[0], outcome)?)
    })
}

/// The same plot as SVG text.
pub fn svg(name: &str, outcome: &str, width: u32, height: u32) -> Result<String> {
    session::with_runs(&[name.to_string()], |_, runs| {
        sensitivity_svg(&sensitivity_input(runs[0], outcome)?, width, height)
    })
}

/// What the page asks of a report.
#[derive(Debug, Clone, Deserialize)]
pub struct ReportRequest {
    /// Designs to include, in this order (each run already).
    pub designs: Vec<String>,
    /// Title at the top.
    pub title: String,
    /// Whether to show example pairs' notes (off unless the user opts in).
    pub include_notes: bool,
    /// Example pairs per design when notes are included.
    pub example_pairs: usize,
    /// Name of the cohort file, for the data section.
    pub data_name: Option<String>,
    /// The study file's text; written out from the session's study when absent.
    pub study_text: Option<String>,
    /// A review round's key file text and its ratings files, for the
    /// expert-review section.
    pub review: Option<RatingsUpload>,
}

/// The self-contained HTML report of the requested designs.
pub fn report(req: &ReportRequest) -> Result<String> {
    if req.designs.is_empty() {
        return Err(Error::param(
            "designs",
            "choose at least one design for the report",
        ));
    }
    let review = match &req.review {
        Some(up) => results_of(up)?.results,
        None => None,
    };
    session::with_runs(&req.designs, |a, runs| {
        let owned: Vec<DesignRun> = runs.into_iter().cloned().collect();
        let options = ReportOptions {
            title: req.title.clone(),
            include_notes: req.include_notes,
            example_pairs: req.example_pairs,
            study_text: req.study_text.clone(),
            data_name: req.data_name.clone(),
        };
        report_html(a, &owned, review.as_ref(), &options)
    })
}
