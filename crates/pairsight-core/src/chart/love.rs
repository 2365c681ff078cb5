//! The Love plot: absolute standardized mean difference per covariate,
//! before matching and after matching under each design.
//!
//! The dot-plot display of balance is due to Love (2002; see Ahmed, Husain,
//! Love et al. 2006, "Heart failure, chronic diuretic use, and increase in
//! mortality and hospitalization", Eur Heart J 27:1431-9); the 0.1 tolerance
//! line follows Austin (2009, "Balance diagnostics for comparing the
//! distribution of baseline covariates between treatment groups in
//! propensity-score matched samples", Stat Med 28:3083-107).

use super::{
    check_size, draw_err, draw_legend, empty_chart, fit_text, nice_step, palette, text_width,
    tick_label, ticks, to_svg, Font, LegendEntry, Pen, Scale, Shape, Swatch,
};
use crate::{Error, Result};
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};
use serde::{Deserialize, Serialize};

/// At most this many designs share one Love plot; beyond it markers can no
/// longer be told apart by shape.
pub const MAX_DESIGNS: usize = 6;

/// Colour and shape of each design's "after" marker, in order. The "before"
/// marker is a hollow black circle.
const DESIGN_STYLES: [(Shape, RGBColor); MAX_DESIGNS] = [
    (Shape::Circle, palette::BLUE),
    (Shape::TriangleUp, palette::VERMILLION),
    (Shape::Square, palette::BLUISH_GREEN),
    (Shape::Diamond, palette::REDDISH_PURPLE),
    (Shape::TriangleDown, palette::ORANGE),
    (Shape::Cross, palette::SKY_BLUE),
];

/// Order of the rows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "kebab-case")]
pub enum TermOrder {
    /// Largest before-matching value on top; undefined values last; ties
    /// keep the given order.
    #[default]
    LargestBefore,
    /// The order of [`LoveInput::terms`], top to bottom.
    Given,
}

/// One covariate (or one level of a categorical covariate).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LoveTerm {
    /// Row label, e.g. `age` or `ward: surgical`.
    pub label: String,
    /// True for a note feature; the label is then set in italics with a
    /// "(note)" suffix.
    pub from_note: bool,
    /// SMD in the unmatched cohort; `None` when it is undefined. The sign is
    /// ignored.
    pub before: Option<f64>,
}

/// One design's SMDs after matching, aligned with [`LoveInput::terms`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LoveDesign {
    /// Design name shown in the legend.
    pub name: String,
    /// SMD per term after matching; `None` when undefined. The sign is
    /// ignored.
    pub after: Vec<Option<f64>>,
}

/// Everything the Love plot shows.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LoveInput {
    /// Title above the plot, if any.
    pub title: Option<String>,
    /// Rows.
    pub terms: Vec<LoveTerm>,
    /// Designs overlaid, at most [`MAX_DESIGNS`].
    pub designs: Vec<LoveDesign>,
    /// Tolerance line; 0.1 by default (Austin 2009).
    pub threshold: f64,
    /// Label of the tolerance line.
    pub threshold_label: String,
    /// Row order.
    pub order: TermOrder,
}

impl Default for LoveInput {
    fn default() -> Self {
        LoveInput {
            title: None,
            terms: Vec::new(),
            designs: Vec::new(),
            threshold: 0.1,
            threshold_label: "0.1 (Austin 2009)".to_string(),
            order: TermOrder::LargestBefore,
        }
    }
}

/// A height in pixels that gives every row of a Love plot with `n_terms`
/// rows room for a readable label (about 18 pixels a row plus the frame).
pub fn love_height_hint(n_terms: usize) -> u32 {
    (170 + 18 * n_terms).clamp(300, 20_000) as u32
}

/// A finite absolute value, or `None`.
fn defined(v: Option<f64>) -> Option<f64> {
    v.filter(|x| x.is_finite()).map(f64::abs)
}

fn validate(input: &LoveInput) -> Result<()> {
    if !(input.threshold.is_finite() && input.threshold > 0.0) {
        return Err(Error::param(
            "threshold",
            format!(
                "the tolerance line must be a positive number, got {}",
                input.threshold
            ),
        ));
    }
    if input.designs.len() > MAX_DESIGNS {
        return Err(Error::param(
            "designs",
            format!(
                "one Love plot holds at most {MAX_DESIGNS} designs so that each keeps its own marker shape; got {}. Draw them in two plots.",
                input.designs.len()
            ),
        ));
    }
    for (i, d) in input.designs.iter().enumerate() {
        if d.after.len() != input.terms.len() {
            return Err(Error::param(
                format!("designs[{i}].after"),
                format!(
                    "design \"{}\" has {} values after matching but the plot has {} terms; give one value (or none) per term",
                    d.name,
                    d.after.len(),
                    input.terms.len()
                ),
            ));
        }
    }
    Ok(())
}

/// The row order: indices into `input.terms`, top row first.
fn row_order(input: &LoveInput) -> Vec<usize> {
    let mut idx: Vec<usize> = (0..input.terms.len()).collect();
    if input.order == TermOrder::LargestBefore {
        // Stable sort keeps the given order among ties.
        idx.sort_by(|&a, &b| {
            let (va, vb) = (
                defined(input.terms[a].before),
                defined(input.terms[b].before),
            );
            match (va, vb) {
                (Some(x), Some(y)) => y.total_cmp(&x),
                (Some(_), None) => std::cmp::Ordering::Less,
                (None, Some(_)) => std::cmp::Ordering::Greater,
                (None, None) => std::cmp::Ordering::Equal,
            }
        });
    }
    idx
}

/// Draws the Love plot onto `root` and presents it.
pub fn draw_love<DB: DrawingBackend>(
    root: DrawingArea<DB, Shift>,
    input: &LoveInput,
) -> Result<()> {
    validate(input)?;
    let (w, h) = root.dim_in_pixel();
    check_size(w, h)?;
    if input.terms.is_empty() {
        return empty_chart(
            &root,
            input.title.as_deref(),
            "No covariates to show: choose covariates and run a design.",
        );
    }
    let pen = Pen::new(&root);
    let (w, h) = (w as i32, h as i32);
    let pad = super::PAD;
    let mut top = pen.start(input.title.as_deref(), w)?;

    let mut legend = vec![LegendEntry {
        label: "before matching".into(),
        swatch: Swatch::Marker(Shape::HollowCircle, palette::BLACK),
    }];
    for (i, d) in input.designs.iter().enumerate() {
        let (shape, color) = DESIGN_STYLES[i];
        legend.push(LegendEntry {
            label: format!("after: {}", d.name),
            swatch: Swatch::Marker(shape, color),
        });
    }
    top += draw_legend(&pen, &legend, pad, top, w - 2 * pad, 12.0)? + 6;

    // Room above the plot area for the tolerance line's label.
    let band_label_h = 18;
    let plot_top = top + band_label_h;

    let any_note = input.terms.iter().any(|t| t.from_note);
    let undefined_row = |i: usize| {
        defined(input.terms[i].before).is_none()
            || input.designs.iter().any(|d| defined(d.after[i]).is_none())
    };
    let any_undefined = (0..input.terms.len()).any(undefined_row);
    let mut footnotes = Vec::new();
    if any_note {
        footnotes.push("(note) marks a covariate derived from note text.".to_string());
    }
    if any_undefined {
        footnotes.push(
            "\u{2014} undefined: the SMD could not be computed (for example, no variation); its point is left out."
                .to_string(),
        );
    }
    let foot_h = 16 * footnotes.len() as i32;
    let axis_h = 6 + 16 + 20;
    let plot_bottom = h - pad - foot_h - axis_h;
    if plot_bottom - plot_top < 20 {
        return Err(Error::param(
            "size",
            format!("the Love plot needs more height for its legend and axis; try a height of {} or more", love_height_hint(input.terms.len())),
        ));
    }

    let order = row_order(input);
    let n = order.len();
    let row_h = (plot_bottom - plot_top) as f64 / n as f64;
    // Half-pixel steps keep the written sizes short.
    let label_px = ((row_h * 0.62).clamp(8.0, 12.5) * 2.0).round() / 2.0;
    // (label, marks, italic): the marks are kept whole when a long label
    // is shortened, since they carry meaning.
    let labels: Vec<(String, String, bool)> = order
        .iter()
        .map(|&i| {
            let t = &input.terms[i];
            let mut marks = String::new();
            if t.from_note {
                marks.push_str(" (note)");
            }
            if undefined_row(i) {
                marks.push_str(" \u{2014} undefined");
            }
            (t.label.clone(), marks, t.from_note)
        })
        .collect();
    let widest = labels
        .iter()
        .map(|(s, m, _)| text_width(s, label_px) + text_width(m, label_px))
        .fold(0.0, f64::max);
    let label_w = widest.min(w as f64 * 0.42).ceil() as i32;
    let plot_left = pad + label_w + 10;
    let plot_right = w - pad - 12;
    if plot_right - plot_left < 60 {
        return Err(Error::param(
            "size",
            "the Love plot needs more width for its labels",
        ));
    }

    // Largest value shown decides the axis; at least twice the tolerance line
    // so the band never fills the plot.
    let mut vmax = input.threshold * 2.0;
    for t in &input.terms {
        if let Some(v) = defined(t.before) {
            vmax = vmax.max(v);
        }
    }
    for d in &input.designs {
        for v in d.after.iter().filter_map(|v| defined(*v)) {
            vmax = vmax.max(v);
        }
    }
    let step = nice_step(vmax, 5);
    let xmax = (vmax / step - 1e-9).ceil() * step;
    let xs = Scale {
        d0: 0.0,
        d1: xmax,
        p0: plot_left as f64,
        p1: plot_right as f64,
    };
    let row_y = |r: usize| (plot_top as f64 + row_h * (r as f64 + 0.5)).round() as i32;

    // Stripes on every other row guide the eye from label to points.
    for r in (1..n).step_by(2) {
        let y0 = (plot_top as f64 + row_h * r as f64).round() as i32;
        let y1 = (plot_top as f64 + row_h * (r + 1) as f64).round() as i32;
        pen.rect(pad, y0, plot_right, y1, palette::STRIPE)?;
    }
    // Tolerance band from 0 to the threshold.
    let tx = xs.px(input.threshold.min(xmax));
    pen.rect(plot_left, plot_top, tx, plot_bottom, palette::BAND)?;
    for v in ticks(0.0, xmax, step) {
        let x = xs.px(v);
        pen.line(&[(x, plot_top), (x, plot_bottom)], palette::GRID, 1)?;
    }
    pen.dashed(
        (tx, plot_top - 4),
        (tx, plot_bottom),
        palette::BLUISH_GREEN,
        2,
        6.0,
        4.0,
    )?;
    let tl = &input.threshold_label;
    let tl_w = text_width(tl, 11.5) as i32;
    let (tl_x, tl_anchor) = if tx + tl_w / 2 > plot_right {
        (tx, HPos::Right)
    } else if tx - tl_w / 2 < plot_left {
        (tx, HPos::Left)
    } else {
        (tx, HPos::Center)
    };
    pen.text(
        tl,
        tl_x,
        plot_top - 8,
        Font::new(11.5, palette::MUTED),
        tl_anchor,
        VPos::Bottom,
    )?;

    // Axis.
    pen.line(
        &[(plot_left, plot_bottom), (plot_right, plot_bottom)],
        palette::INK,
        1,
    )?;
    pen.line(
        &[(plot_left, plot_top), (plot_left, plot_bottom)],
        palette::INK,
        1,
    )?;
    for v in ticks(0.0, xmax, step) {
        let x = xs.px(v);
        pen.line(&[(x, plot_bottom), (x, plot_bottom + 5)], palette::INK, 1)?;
        pen.text(
            &tick_label(v, step),
            x,
            plot_bottom + 7,
            Font::new(11.5, palette::INK),
            HPos::Center,
            VPos::Top,
        )?;
    }
    pen.text(
        "absolute standardized mean difference",
        (plot_left + plot_right) / 2,
        plot_bottom + 26,
        Font::new(12.5, palette::INK),
        HPos::Center,
        VPos::Top,
    )?;
    for (k, note) in footnotes.iter().enumerate() {
        pen.text(
            &fit_text(note, 11.0, (w - 2 * pad) as f64),
            pad,
            h - pad - foot_h + 16 * k as i32 + 8,
            Font::new(11.0, palette::MUTED),
            HPos::Left,
            VPos::Center,
        )?;
    }

    // Rows: label, then markers. Designs are spread a little vertically
    // within the row so equal values do not hide each other.
    let r = (row_h * 0.26).clamp(2.5, 5.0);
    let nd = input.designs.len();
    let spread = (row_h * 0.55 / (nd.max(1) as f64 + 1.0)).min(4.0);
    for (rank, &i) in order.iter().enumerate() {
        let y = row_y(rank);
        let (label, marks, italic) = &labels[rank];
        let room = label_w as f64 - text_width(marks, label_px);
        let mut f = Font::new(label_px, palette::INK);
        if *italic {
            f = f.italic();
        }
        pen.text(
            &format!("{}{marks}", fit_text(label, label_px, room)),
            plot_left - 8,
            y,
            f,
            HPos::Right,
            VPos::Center,
        )?;
        if let Some(v) = defined(input.terms[i].before) {
            pen.marker(Shape::HollowCircle, xs.px(v), y, r + 0.5, palette::BLACK)?;
        }
        for (k, d) in input.designs.iter().enumerate() {
            if let Some(v) = defined(d.after[i]) {
                let (shape, color) = DESIGN_STYLES[k];
                let dy = ((k as f64 - (nd as f64 - 1.0) / 2.0) * spread).round() as i32;
                pen.marker(shape, xs.px(v), y + dy, r, color)?;
            }
        }
    }
    root.present().map_err(draw_err)
}

/// The Love plot as SVG text, `width` x `height` pixels.
pub fn love_svg(input: &LoveInput, width: u32, height: u32) -> Result<String> {
    to_svg(width, height, |root| draw_love(root, input))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sample(n_terms: usize, n_designs: usize) -> LoveInput {
        let terms = (0..n_terms)
            .map(|i| LoveTerm {
                label: format!("covariate {i}"),
                from_note: i % 3 == 0,
                before: Some(0.05 + 0.6 * ((i * 7) % 11) as f64 / 11.0),
            })
            .collect();
        let designs = (0..n_designs)
            .map(|d| LoveDesign {
                name: format!("design {d}"),
                after: (0..n_terms)
                    .map(|i| Some(0.01 + 0.02 * ((i + d) % 5) as f64))
                    .collect(),
            })
            .collect();
        LoveInput {
            title: Some("Balance before and after matching".into()),
            terms,
            designs,
            ..LoveInput::default()
        }
    }

    #[test]
    fn svg_has_labels_legend_and_one_marker_per_value() {
        let input = sample(5, 2);
        let svg = love_svg(&input, 800, 600).unwrap();
        for i in 0..5 {
            assert!(svg.contains(&format!("covariate {i}")), "label {i}");
        }
        assert!(svg.contains("covariate 0 (note)"));
        assert!(svg.contains("font-style=\"italic\""));
        assert!(svg.contains("0.1 (Austin 2009)"));
        assert!(svg.contains("after: design 0") && svg.contains("after: design 1"));
        assert!(svg.contains("before matching"));
        // 5 hollow before-circles + 1 in the legend; 5 filled circles for
        // design 0 + 1 in the legend; 5 triangles for design 1 + 1 in the legend.
        let hollow = "fill=\"none\" stroke=\"#000000\"";
        assert_eq!(svg.matches(hollow).count(), 6);
        assert_eq!(svg.matches("fill=\"#0072B2\" stroke=\"none\"").count(), 6);
        assert_eq!(
            svg.matches("<polygon opacity=\"1\" fill=\"#D55E00\"")
                .count(),
            6
        );
    }

    #[test]
    fn svg_text_is_written_at_the_size_asked_for() {
        // plotters' SVG backend divides the size by 1.24; the pen compensates,
        // so the 12-pixel legend is written as font-size 12.
        let svg = love_svg(&sample(5, 1), 800, 600).unwrap();
        assert!(svg.contains("font-size=\"12\""));
        assert!(
            svg.contains("font-size=\"16\" opacity=\"1\" fill=\"#222222\" font-weight=\"bold\"")
        );
    }

    #[test]
    fn same_input_same_bytes() {
        let input = sample(12, 3);
        assert_eq!(
            love_svg(&input, 800, 600).unwrap(),
            love_svg(&input, 800, 600).unwrap()
        );
    }

    #[test]
    fn undefined_values_are_left_out_and_marked() {
        let mut input = sample(3, 1);
        input.terms[1].before = None;
        input.designs[0].after[2] = Some(f64::NAN);
        let svg = love_svg(&input, 800, 600).unwrap();
        assert_eq!(
            svg.matches("\u{2014} undefined").count(),
            3,
            "two rows and the footnote"
        );
        // 2 before points + 1 legend; 2 after points + 1 legend.
        assert_eq!(svg.matches("fill=\"none\" stroke=\"#000000\"").count(), 3);
        assert_eq!(svg.matches("fill=\"#0072B2\" stroke=\"none\"").count(), 3);
    }

    #[test]
    fn shortened_labels_keep_their_marks() {
        let mut input = sample(3, 1);
        input.terms[0].label = "an extremely long note feature name ".repeat(6);
        input.terms[0].before = None;
        let svg = love_svg(&input, 800, 600).unwrap();
        assert!(svg.contains("\u{2026} (note) \u{2014} undefined"));
    }

    #[test]
    fn rows_sorted_by_largest_before() {
        let input = LoveInput {
            terms: vec![
                LoveTerm {
                    label: "small".into(),
                    from_note: false,
                    before: Some(0.02),
                },
                LoveTerm {
                    label: "none".into(),
                    from_note: false,
                    before: None,
                },
                LoveTerm {
                    label: "big".into(),
                    from_note: false,
                    before: Some(-0.8),
                },
            ],
            ..LoveInput::default()
        };
        assert_eq!(row_order(&input), vec![2, 0, 1]);
        let given = LoveInput {
            order: TermOrder::Given,
            ..input
        };
        assert_eq!(row_order(&given), vec![0, 1, 2]);
    }

    #[test]
    fn empty_input_gives_a_chart_with_a_message() {
        let svg = love_svg(&LoveInput::default(), 800, 600).unwrap();
        assert!(svg.contains("No covariates to show"));
        assert!(svg.starts_with("<svg"));
    }

    #[test]
    fn bad_input_is_an_error_not_a_panic() {
        let mut input = sample(3, 1);
        input.designs[0].after.pop();
        assert!(matches!(
            love_svg(&input, 800, 600),
            Err(Error::Param { .. })
        ));
        let input = sample(3, 7);
        assert!(love_svg(&input, 800, 600).is_err());
        let mut input = sample(3, 1);
        input.threshold = f64::NAN;
        assert!(love_svg(&input, 800, 600).is_err());
        assert!(love_svg(&sample(3, 1), 50, 50).is_err());
    }

    #[test]
    fn many_terms_fit_a_tall_chart() {
        let input = sample(45, 3);
        let svg = love_svg(&input, 800, love_height_hint(45)).unwrap();
        assert!(svg.contains("covariate 44"));
    }
}
