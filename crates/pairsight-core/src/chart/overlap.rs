//! The overlap plot: distributions of the score (or logit score) in the two
//! groups, before matching and after matching under each design, as mirrored
//! histograms: treated bars rise above the zero line, comparison bars hang
//! below it, so group is told by position as well as colour.
//!
//! Bar heights are the share of the group's (weighted) units in each bin, so
//! groups of different sizes compare directly; all panels share one set of
//! bins and one vertical scale. Checking the overlap of score distributions
//! is common practice (Rosenbaum & Rubin 1983; Austin 2011, "An introduction
//! to propensity score methods for reducing the effects of confounding in
//! observational studies", Multivariate Behav Res 46:399-424).

use super::{
    check_size, draw_err, draw_legend, empty_chart, fit_text, nice_step, palette, text_width,
    tick_label, ticks, to_svg, Font, LegendEntry, Pen, Scale, Swatch,
};
use crate::{Error, Result};
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};
use serde::{Deserialize, Serialize};

const TREATED: RGBColor = palette::BLUE;
const COMPARISON: RGBColor = palette::ORANGE;

/// One panel: the two groups' scores at one stage (before matching, or after
/// matching under one design).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
pub struct OverlapPanel {
    /// Panel title, e.g. "before matching" or "after: structured + notes".
    pub label: String,
    /// Scores of treated units.
    pub treated: Vec<f64>,
    /// Scores of comparison units.
    pub comparison: Vec<f64>,
    /// Optional weights of treated units (e.g. from matching with reuse);
    /// equal weights when absent.
    pub treated_weights: Option<Vec<f64>>,
    /// Optional weights of comparison units.
    pub comparison_weights: Option<Vec<f64>>,
}

/// Everything the overlap plot shows.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct OverlapInput {
    /// Title above the plot, if any.
    pub title: Option<String>,
    /// Horizontal axis title, e.g. "logit score".
    pub score_label: String,
    /// Panels, left to right then top to bottom.
    pub panels: Vec<OverlapPanel>,
    /// Number of bins (2 to 200).
    pub bins: usize,
}

impl Default for OverlapInput {
    fn default() -> Self {
        OverlapInput {
            title: None,
            score_label: "logit score".into(),
            panels: Vec::new(),
            bins: 24,
        }
    }
}

/// A group's bin shares, and how many values were left out as non-finite.
struct Binned {
    shares: Vec<f64>,
    n: usize,
    dropped: usize,
}

fn check_weights(values: &[f64], weights: &Option<Vec<f64>>, what: &str) -> Result<()> {
    if let Some(w) = weights {
        if w.len() != values.len() {
            return Err(Error::param(
                what,
                format!(
                    "{} weights for {} scores; give one weight per score",
                    w.len(),
                    values.len()
                ),
            ));
        }
        if let Some(i) = w.iter().position(|x| !(x.is_finite() && *x >= 0.0)) {
            return Err(Error::param(
                what,
                format!(
                    "weight {} at position {} is not a finite non-negative number",
                    w[i],
                    i + 1
                ),
            ));
        }
    }
    Ok(())
}

fn bin(values: &[f64], weights: &Option<Vec<f64>>, lo: f64, width: f64, bins: usize) -> Binned {
    let mut shares = vec![0.0; bins];
    let mut total = 0.0;
    let mut n = 0;
    let mut dropped = 0;
    for (i, &v) in values.iter().enumerate() {
        if !v.is_finite() {
            dropped += 1;
            continue;
        }
        let w = weights.as_ref().map_or(1.0, |w| w[i]);
        let k = (((v - lo) / width).floor().max(0.0) as usize).min(bins - 1);
        shares[k] += w;
        total += w;
        n += 1;
    }
    if total > 0.0 {
        for s in &mut shares {
            *s /= total;
        }
    }
    Binned { shares, n, dropped }
}

/// Draws the overlap plot onto `root` and presents it.
pub fn draw_overlap<DB: DrawingBackend>(
    root: DrawingArea<DB, Shift>,
    input: &OverlapInput,
) -> Result<()> {
    let (w, h) = root.dim_in_pixel();
    check_size(w, h)?;
    if !(2..=200).contains(&input.bins) {
        return Err(Error::param(
            "bins",
            format!(
                "the number of bins must be from 2 to 200, got {}",
                input.bins
            ),
        ));
    }
    if input.panels.len() > 12 {
        return Err(Error::param(
            "panels",
            format!(
                "at most 12 panels fit one overlap plot, got {}",
                input.panels.len()
            ),
        ));
    }
    for (i, p) in input.panels.iter().enumerate() {
        check_weights(
            &p.treated,
            &p.treated_weights,
            &format!("panels[{i}].treated_weights"),
        )?;
        check_weights(
            &p.comparison,
            &p.comparison_weights,
            &format!("panels[{i}].comparison_weights"),
        )?;
    }
    let all = input
        .panels
        .iter()
        .flat_map(|p| p.treated.iter().chain(p.comparison.iter()))
        .filter(|v| v.is_finite());
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for &v in all {
        lo = lo.min(v);
        hi = hi.max(v);
    }
    if !lo.is_finite() {
        return empty_chart(
            &root,
            input.title.as_deref(),
            "No scores to show: run a design to estimate the score.",
        );
    }
    if hi - lo < 1e-12 {
        lo -= 0.5;
        hi += 0.5;
    }
    let bw = (hi - lo) / input.bins as f64;
    let binned: Vec<(Binned, Binned)> = input
        .panels
        .iter()
        .map(|p| {
            (
                bin(&p.treated, &p.treated_weights, lo, bw, input.bins),
                bin(&p.comparison, &p.comparison_weights, lo, bw, input.bins),
            )
        })
        .collect();
    let top_share = binned
        .iter()
        .flat_map(|(t, c)| t.shares.iter().chain(c.shares.iter()))
        .fold(0.0f64, |a, &b| a.max(b))
        .max(0.01);
    let ystep = nice_step(top_share * 100.0, 2) / 100.0;
    let ymax = (top_share / ystep - 1e-9).ceil() * ystep;

    let pen = Pen::new(&root);
    let (w, h) = (w as i32, h as i32);
    let pad = super::PAD;
    let mut top = pen.start(input.title.as_deref(), w)?;
    let legend = [
        LegendEntry {
            label: "treated (bars above the line)".into(),
            swatch: Swatch::Block(TREATED),
        },
        LegendEntry {
            label: "comparison (bars below the line)".into(),
            swatch: Swatch::Block(COMPARISON),
        },
    ];
    top += draw_legend(&pen, &legend, pad, top, w - 2 * pad, 12.0)? + 8;

    let n = input.panels.len();
    let cols = if n <= 3 {
        n
    } else {
        (n as f64).sqrt().ceil() as usize
    };
    let rows = n.div_ceil(cols);
    let y_title_w = 18;
    let y_tick_w = text_width(&format!("{:.0}%", ymax * 100.0), 11.0).ceil() as i32 + 8;
    let grid_left = pad + y_title_w + y_tick_w;
    let grid_right = w - pad;
    let bottom_title_h = 24;
    let grid_bottom = h - pad - bottom_title_h;
    let gap_x = 18;
    let panel_head = 22;
    let axis_h = 22;
    let cell_w = (grid_right - grid_left - gap_x * (cols as i32 - 1)) / cols as i32;
    let cell_h = (grid_bottom - top) / rows as i32;
    if cell_w < 80 || cell_h < panel_head + axis_h + 40 {
        return Err(Error::param(
            "size",
            format!("{n} panels need a larger drawing area than {w}x{h}"),
        ));
    }
    let xstep = nice_step(hi - lo, ((cell_w / 70).max(2)) as usize);

    for (k, (panel, (t, c))) in input.panels.iter().zip(binned.iter()).enumerate() {
        let (col, row) = ((k % cols) as i32, (k / cols) as i32);
        let x0 = grid_left + col * (cell_w + gap_x);
        let x1 = x0 + cell_w;
        let y0 = top + row * cell_h;
        let plot_top = y0 + panel_head;
        let plot_bottom = y0 + cell_h - axis_h - 8;
        let mid = (plot_top + plot_bottom) / 2;
        let xs = Scale {
            d0: lo,
            d1: hi,
            p0: x0 as f64,
            p1: x1 as f64,
        };
        let ys = Scale {
            d0: 0.0,
            d1: ymax,
            p0: mid as f64,
            p1: plot_top as f64,
        };
        let ys_down = Scale {
            d0: 0.0,
            d1: ymax,
            p0: mid as f64,
            p1: plot_bottom as f64,
        };

        pen.text(
            &fit_text(&panel.label, 12.5, cell_w as f64),
            x0,
            y0 + 2,
            Font::new(12.5, palette::INK).bold(),
            HPos::Left,
            VPos::Top,
        )?;
        for v in ticks(ystep, ymax, ystep) {
            for y in [ys.px(v), ys_down.px(v)] {
                pen.line(&[(x0, y), (x1, y)], palette::GRID, 1)?;
            }
        }
        for b in 0..input.bins {
            let bx0 = xs.px(lo + bw * b as f64);
            let bx1 = xs.px(lo + bw * (b + 1) as f64);
            let inset = if bx1 - bx0 >= 5 { 1 } else { 0 };
            if t.shares[b] > 0.0 {
                pen.rect(
                    bx0 + inset,
                    ys.px(t.shares[b]).min(mid - 1),
                    bx1 - inset,
                    mid,
                    TREATED,
                )?;
            }
            if c.shares[b] > 0.0 {
                pen.rect(
                    bx0 + inset,
                    mid,
                    bx1 - inset,
                    ys_down.px(c.shares[b]).max(mid + 1),
                    COMPARISON,
                )?;
            }
        }
        pen.line(&[(x0, mid), (x1, mid)], palette::INK, 1)?;
        pen.rect_outline(x0, plot_top, x1, plot_bottom, palette::GRID)?;
        let count = |label: &str, b: &Binned| {
            if b.dropped > 0 {
                format!("{label} n = {} ({} not finite, left out)", b.n, b.dropped)
            } else {
                format!("{label} n = {}", b.n)
            }
        };
        pen.text(
            &fit_text(&count("treated", t), 11.0, (cell_w - 8) as f64),
            x1 - 4,
            plot_top + 4,
            Font::new(11.0, palette::MUTED),
            HPos::Right,
            VPos::Top,
        )?;
        pen.text(
            &fit_text(&count("comparison", c), 11.0, (cell_w - 8) as f64),
            x1 - 4,
            plot_bottom - 4,
            Font::new(11.0, palette::MUTED),
            HPos::Right,
            VPos::Bottom,
        )?;
        for v in ticks(lo, hi, xstep) {
            let x = xs.px(v);
            pen.line(&[(x, plot_bottom), (x, plot_bottom + 4)], palette::INK, 1)?;
            pen.text(
                &tick_label(v, xstep),
                x,
                plot_bottom + 6,
                Font::new(11.0, palette::INK),
                HPos::Center,
                VPos::Top,
            )?;
        }
        if col == 0 {
            for v in ticks(0.0, ymax, ystep) {
                let pct = format!("{}%", tick_label(v * 100.0, ystep * 100.0));
                for y in if v == 0.0 {
                    vec![mid]
                } else {
                    vec![ys.px(v), ys_down.px(v)]
                } {
                    pen.text(
                        &pct,
                        x0 - 5,
                        y,
                        Font::new(11.0, palette::INK),
                        HPos::Right,
                        VPos::Center,
                    )?;
                }
            }
            pen.text_rot(
                "share of group",
                pad + 6,
                mid,
                Font::new(12.0, palette::INK),
                HPos::Center,
                VPos::Center,
                true,
            )?;
        }
    }
    pen.text(
        &input.score_label,
        (grid_left + grid_right) / 2,
        h - pad - 4,
        Font::new(12.5, palette::INK),
        HPos::Center,
        VPos::Bottom,
    )?;
    root.present().map_err(draw_err)
}

/// The overlap plot as SVG text, `width` x `height` pixels.
pub fn overlap_svg(input: &OverlapInput, width: u32, height: u32) -> Result<String> {
    to_svg(width, height, |root| draw_overlap(root, input))
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use crate::rng::Rng;

    pub(crate) fn sample(designs: usize) -> OverlapInput {
        let mut rng = Rng::new(11);
        let draw =
            |rng: &mut Rng, n: usize, m: f64| (0..n).map(|_| m + rng.normal()).collect::<Vec<_>>();
        let mut panels = vec![OverlapPanel {
            label: "before matching".into(),
            treated: draw(&mut rng, 300, 0.4),
            comparison: draw(&mut rng, 900, -0.6),
            ..OverlapPanel::default()
        }];
        for d in 0..designs {
            panels.push(OverlapPanel {
                label: format!("after: design {d}"),
                treated: draw(&mut rng, 250, 0.2),
                comparison: draw(&mut rng, 250, 0.1),
                ..OverlapPanel::default()
            });
        }
        OverlapInput {
            title: Some("Score overlap".into()),
            panels,
            ..OverlapInput::default()
        }
    }

    #[test]
    fn svg_has_panels_legend_and_bars() {
        let svg = overlap_svg(&sample(2), 800, 600).unwrap();
        for s in [
            "before matching",
            "after: design 0",
            "after: design 1",
            "treated (bars above the line)",
            "logit score",
            "share of group",
            "treated n = 300",
            "comparison n = 900",
        ] {
            assert!(svg.contains(s), "{s}");
        }
        // Every non-empty bin is one rectangle in the group's colour, plus the
        // legend swatch.
        let input = sample(2);
        let mut expected = 1;
        let (lo, hi) = input
            .panels
            .iter()
            .flat_map(|p| p.treated.iter().chain(&p.comparison))
            .fold((f64::MAX, f64::MIN), |(a, b), &v| (a.min(v), b.max(v)));
        for p in &input.panels {
            let b = bin(&p.treated, &None, lo, (hi - lo) / 24.0, 24);
            expected += b.shares.iter().filter(|s| **s > 0.0).count();
        }
        assert_eq!(svg.matches("fill=\"#0072B2\"").count(), expected);
    }

    #[test]
    fn shares_sum_to_one_and_respect_weights() {
        let b = bin(
            &[0.0, 0.1, 0.9, f64::NAN],
            &Some(vec![1.0, 1.0, 2.0, 1.0]),
            0.0,
            0.5,
            2,
        );
        assert_eq!(b.shares, vec![0.5, 0.5]);
        assert_eq!((b.n, b.dropped), (3, 1));
    }

    #[test]
    fn deterministic_and_validated() {
        let input = sample(3);
        assert_eq!(
            overlap_svg(&input, 800, 600).unwrap(),
            overlap_svg(&input, 800, 600).unwrap()
        );
        let mut bad = sample(1);
        bad.panels[0].treated_weights = Some(vec![1.0]);
        assert!(matches!(
            overlap_svg(&bad, 800, 600),
            Err(Error::Param { .. })
        ));
        let bad = OverlapInput {
            bins: 1,
            ..sample(1)
        };
        assert!(overlap_svg(&bad, 800, 600).is_err());
    }

    #[test]
    fn empty_input_gives_a_chart_with_a_message() {
        let svg = overlap_svg(&OverlapInput::default(), 800, 600).unwrap();
        assert!(svg.contains("No scores to show"));
    }
}
