//! The sensitivity plot: the upper bound of the one-sided p-value against
//! Gamma, the odds ratio of hidden bias in treatment assignment (Rosenbaum
//! 2002, "Observational Studies", 2nd ed., ch. 4), with a horizontal line at
//! alpha and the Gamma at which the bound crosses alpha marked.

use super::{
    check_size, draw_err, draw_legend, empty_chart, fit_text, nice_step, palette, tick_label,
    ticks, to_svg, Font, LegendEntry, Pen, Scale, Shape, Swatch,
};
use crate::{Error, Result};
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};
use serde::{Deserialize, Serialize};

/// Everything the sensitivity plot shows.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SensitivityInput {
    /// Title above the plot, if any.
    pub title: Option<String>,
    /// Gamma values, strictly increasing, each at least 1.
    pub gammas: Vec<f64>,
    /// Upper bound of the one-sided p-value at each Gamma, in [0, 1].
    pub p_upper: Vec<f64>,
    /// Significance level, in (0, 1).
    pub alpha: f64,
    /// The Gamma at which the bound reaches alpha, when the caller has solved
    /// for it exactly; otherwise it is interpolated linearly between the
    /// grid points either side.
    pub crossing: Option<f64>,
}

impl Default for SensitivityInput {
    fn default() -> Self {
        SensitivityInput {
            title: None,
            gammas: Vec::new(),
            p_upper: Vec::new(),
            alpha: 0.05,
            crossing: None,
        }
    }
}

fn validate(input: &SensitivityInput) -> Result<()> {
    if !(input.alpha > 0.0 && input.alpha < 1.0) {
        return Err(Error::param(
            "alpha",
            format!("alpha must lie between 0 and 1, got {}", input.alpha),
        ));
    }
    if input.gammas.len() != input.p_upper.len() {
        return Err(Error::param(
            "p_upper",
            format!(
                "{} p-values for {} Gamma values; give one per Gamma",
                input.p_upper.len(),
                input.gammas.len()
            ),
        ));
    }
    for (i, g) in input.gammas.iter().enumerate() {
        if !(g.is_finite() && *g >= 1.0) || (i > 0 && *g <= input.gammas[i - 1]) {
            return Err(Error::param(
                format!("gammas[{i}]"),
                format!("Gamma values must be finite, at least 1 and strictly increasing; got {g}"),
            ));
        }
    }
    if let Some(i) = input.p_upper.iter().position(|p| !(0.0..=1.0).contains(p)) {
        return Err(Error::param(
            format!("p_upper[{i}]"),
            format!("a p-value must lie in [0, 1], got {}", input.p_upper[i]),
        ));
    }
    Ok(())
}

/// Where the bound first rises above alpha, by linear interpolation between
/// grid points; `None` when it never does, or is above alpha from the start.
fn interpolate_crossing(g: &[f64], p: &[f64], alpha: f64) -> Option<f64> {
    let k = p.iter().position(|&x| x > alpha)?;
    if k == 0 {
        return None;
    }
    let (g0, g1, p0, p1) = (g[k - 1], g[k], p[k - 1], p[k]);
    Some(g0 + (alpha - p0) * (g1 - g0) / (p1 - p0))
}

/// Draws the sensitivity plot onto `root` and presents it.
pub fn draw_sensitivity<DB: DrawingBackend>(
    root: DrawingArea<DB, Shift>,
    input: &SensitivityInput,
) -> Result<()> {
    validate(input)?;
    let (w, h) = root.dim_in_pixel();
    check_size(w, h)?;
    if input.gammas.is_empty() {
        return empty_chart(
            &root,
            input.title.as_deref(),
            "No sensitivity bounds to show: estimate the effect first.",
        );
    }
    let (g, p, alpha) = (&input.gammas, &input.p_upper, input.alpha);
    let crossing = input
        .crossing
        .filter(|c| c.is_finite())
        .or_else(|| interpolate_crossing(g, p, alpha));

    let pen = Pen::new(&root);
    let (w, h) = (w as i32, h as i32);
    let pad = super::PAD;
    let mut top = pen.start(input.title.as_deref(), w)?;
    let alpha_label = format!("\u{3b1} = {}", fmt_num(alpha));
    let mut legend = vec![
        LegendEntry {
            label: "upper bound of the one-sided p-value".into(),
            swatch: Swatch::Line(palette::BLUE, false),
        },
        LegendEntry {
            label: alpha_label.clone(),
            swatch: Swatch::Line(palette::VERMILLION, true),
        },
    ];
    if crossing.is_some() {
        legend.push(LegendEntry {
            label: "\u{393} where the bound reaches \u{3b1}".into(),
            swatch: Swatch::Marker(Shape::Diamond, palette::BLACK),
        });
    }
    top += draw_legend(&pen, &legend, pad, top, w - 2 * pad, 12.0)? + 10;

    let message = match crossing {
        Some(c) => format!(
            "A hidden bias of \u{393} = {} could explain the result; below it the result holds at \u{3b1} = {}.",
            fmt_num(c),
            fmt_num(alpha)
        ),
        None if p[0] > alpha => format!("The bound exceeds \u{3b1} already at \u{393} = {}.", fmt_num(g[0])),
        None => format!("The bound stays at or below \u{3b1} up to \u{393} = {}, the largest value computed.", fmt_num(g[g.len() - 1])),
    };
    let foot_h = 20;
    let plot_left = pad + 18 + 40;
    let plot_right = w - pad - 10;
    let plot_top = top;
    let plot_bottom = h - pad - foot_h - 44;

    let gmin = g[0];
    let gmax_data = g[g.len() - 1].max(gmin + 0.5);
    let xstep = nice_step(
        gmax_data - gmin,
        ((plot_right - plot_left) / 80).max(2) as usize,
    );
    let gmax = (gmax_data / xstep - 1e-9).ceil() * xstep;
    let pmax = p.iter().fold(alpha * 2.0, |a, &b| a.max(b));
    let ystep = nice_step(pmax, 5);
    let ymax = ((pmax / ystep - 1e-9).ceil() * ystep).min(1.0);
    let xs = Scale {
        d0: gmin,
        d1: gmax,
        p0: plot_left as f64,
        p1: plot_right as f64,
    };
    let ys = Scale {
        d0: 0.0,
        d1: ymax,
        p0: plot_bottom as f64,
        p1: plot_top as f64,
    };

    for v in ticks(0.0, ymax, ystep) {
        let y = ys.px(v);
        pen.line(&[(plot_left, y), (plot_right, y)], palette::GRID, 1)?;
        pen.text(
            &tick_label(v, ystep),
            plot_left - 6,
            y,
            Font::new(11.0, palette::INK),
            HPos::Right,
            VPos::Center,
        )?;
    }
    for v in ticks(gmin, gmax, xstep) {
        let x = xs.px(v);
        pen.line(&[(x, plot_top), (x, plot_bottom)], palette::GRID, 1)?;
        pen.line(&[(x, plot_bottom), (x, plot_bottom + 5)], palette::INK, 1)?;
        pen.text(
            &tick_label(v, xstep),
            x,
            plot_bottom + 7,
            Font::new(11.0, palette::INK),
            HPos::Center,
            VPos::Top,
        )?;
    }
    pen.line(
        &[
            (plot_left, plot_top),
            (plot_left, plot_bottom),
            (plot_right, plot_bottom),
        ],
        palette::INK,
        1,
    )?;

    let ay = ys.px(alpha);
    pen.dashed(
        (plot_left, ay),
        (plot_right, ay),
        palette::VERMILLION,
        2,
        7.0,
        4.0,
    )?;
    pen.text(
        &alpha_label,
        plot_right - 4,
        ay - 4,
        Font::new(11.5, palette::VERMILLION),
        HPos::Right,
        VPos::Bottom,
    )?;

    let pts: Vec<(i32, i32)> = g
        .iter()
        .zip(p.iter())
        .map(|(&a, &b)| (xs.px(a), ys.px(b)))
        .collect();
    if pts.len() > 1 {
        pen.line(&pts, palette::BLUE, 2)?;
    }
    let r = if pts.len() > 40 { 2.0 } else { 3.5 };
    for &(x, y) in &pts {
        pen.marker(Shape::Circle, x, y, r, palette::BLUE)?;
    }
    if let Some(c) = crossing.filter(|c| *c >= gmin && *c <= gmax) {
        let cx = xs.px(c);
        pen.dashed((cx, ay), (cx, plot_bottom), palette::BLACK, 1, 3.0, 3.0)?;
        pen.marker(Shape::Diamond, cx, ay, 5.0, palette::BLACK)?;
        let label = format!("\u{393} = {}", fmt_num(c));
        let right = cx > (plot_left + plot_right) / 2;
        let (lx, anchor) = if right {
            (cx - 8, HPos::Right)
        } else {
            (cx + 8, HPos::Left)
        };
        pen.text(
            &label,
            lx,
            ay + 8,
            Font::new(12.0, palette::INK).bold(),
            anchor,
            VPos::Top,
        )?;
    }
    pen.text(
        "\u{393} (odds ratio of hidden bias in treatment assignment)",
        (plot_left + plot_right) / 2,
        plot_bottom + 26,
        Font::new(12.5, palette::INK),
        HPos::Center,
        VPos::Top,
    )?;
    pen.text_rot(
        "upper bound of p-value",
        pad + 6,
        (plot_top + plot_bottom) / 2,
        Font::new(12.0, palette::INK),
        HPos::Center,
        VPos::Center,
        true,
    )?;
    pen.text(
        &fit_text(&message, 11.5, (w - 2 * pad) as f64),
        pad,
        h - pad - 4,
        Font::new(11.5, palette::MUTED),
        HPos::Left,
        VPos::Bottom,
    )?;
    root.present().map_err(draw_err)
}

/// A number with up to three significant decimals, trailing zeros removed.
fn fmt_num(v: f64) -> String {
    let s = if v.abs() >= 10.0 {
        format!("{v:.1}")
    } else if v.abs() >= 0.1 {
        format!("{v:.2}")
    } else {
        format!("{v:.3}")
    };
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// The sensitivity plot as SVG text, `width` x `height` pixels.
pub fn sensitivity_svg(input: &SensitivityInput, width: u32, height: u32) -> Result<String> {
    to_svg(width, height, |root| draw_sensitivity(root, input))
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;

    pub(crate) fn sample() -> SensitivityInput {
        let gammas: Vec<f64> = (0..=20).map(|i| 1.0 + 0.1 * i as f64).collect();
        let p_upper = gammas
            .iter()
            .map(|g| (0.001 * libm::exp(4.0 * (g - 1.0))).min(1.0))
            .collect();
        SensitivityInput {
            title: Some("Sensitivity to hidden bias".into()),
            gammas,
            p_upper,
            ..SensitivityInput::default()
        }
    }

    #[test]
    fn crossing_is_interpolated_and_drawn() {
        let input = sample();
        // Bound 0.001 e^{4(G-1)} reaches 0.05 at G = 1 + ln(50)/4 = 1.978; the
        // grid interpolation lands within one grid step of it.
        let c = interpolate_crossing(&input.gammas, &input.p_upper, 0.05).unwrap();
        assert!((c - (1.0 + libm::log(50f64) / 4.0)).abs() < 0.02, "{c}");
        let svg = sensitivity_svg(&input, 800, 600).unwrap();
        assert!(svg.contains("\u{3b1} = 0.05"));
        assert!(svg.contains(&format!("\u{393} = {}", fmt_num(c))));
        // 21 grid points plus the legend's crossing marker... the points are
        // filled blue circles.
        assert_eq!(svg.matches("fill=\"#0072B2\" stroke=\"none\"").count(), 21);
        assert_eq!(sensitivity_svg(&input, 800, 600).unwrap(), svg);
    }

    #[test]
    fn given_crossing_wins_and_no_crossing_is_said() {
        let mut input = sample();
        input.crossing = Some(1.97);
        assert!(sensitivity_svg(&input, 800, 600)
            .unwrap()
            .contains("\u{393} = 1.97"));
        input.crossing = None;
        input.p_upper = vec![0.001; 21];
        assert!(sensitivity_svg(&input, 800, 600)
            .unwrap()
            .contains("stays at or below"));
        input.p_upper = vec![0.2; 21];
        assert!(sensitivity_svg(&input, 800, 600)
            .unwrap()
            .contains("already at"));
    }

    #[test]
    fn invalid_input_is_an_error() {
        let mut input = sample();
        input.gammas[3] = 0.5;
        assert!(matches!(
            sensitivity_svg(&input, 800, 600),
            Err(Error::Param { .. })
        ));
        let mut input = sample();
        input.p_upper.pop();
        assert!(sensitivity_svg(&input, 800, 600).is_err());
        let input = SensitivityInput {
            alpha: 1.5,
            ..sample()
        };
        assert!(sensitivity_svg(&input, 800, 600).is_err());
        let svg = sensitivity_svg(&SensitivityInput::default(), 800, 600).unwrap();
        assert!(svg.contains("No sensitivity bounds"));
    }

    #[test]
    fn numbers_are_short() {
        assert_eq!(fmt_num(0.05), "0.05");
        assert_eq!(fmt_num(1.978), "1.98");
        assert_eq!(fmt_num(2.0), "2");
        assert_eq!(fmt_num(12.25), "12.2");
    }
}
