//! Charts drawn by the core: the Love plot, the overlap plot and the
//! sensitivity plot.
//!
//! Every chart is one drawing routine written against plotters'
//! [`DrawingBackend`] trait, so the same code paints a canvas in the browser
//! and writes SVG for reports and the command line. Each plot takes a plain
//! input struct of its own (the chart module knows nothing of other modules'
//! types) and comes in two forms: `draw_*` onto any drawing area, and `*_svg`
//! returning the SVG text. The same input always gives the same bytes.
//!
//! Text is laid out by our own width estimate rather than by plotters' font
//! measurement: without a font feature plotters measures text with a crude
//! guess on native targets and through the page's DOM on wasm32, which is
//! absent in a Web Worker. The routines therefore only ever call the
//! backend's `draw_text` (SVG writes `<text>`, canvas calls `fillText`), and
//! never plotters' captions or axis labels, which measure text.
//!
//! Colours come from the palette of Okabe & Ito (2008, "Color Universal
//! Design: how to make figures and presentations that are friendly to
//! colorblind people"), and no meaning is carried by colour alone: every
//! series also has its own marker shape, position or label.
//!
//! ```
//! use pairsight_core::chart::{love_svg, LoveDesign, LoveInput, LoveTerm};
//! let input = LoveInput {
//!     terms: vec![LoveTerm { label: "age".into(), from_note: false, before: Some(0.42) }],
//!     designs: vec![LoveDesign { name: "score only".into(), after: vec![Some(0.03)] }],
//!     ..LoveInput::default()
//! };
//! let svg = love_svg(&input, 800, 600).unwrap();
//! assert!(svg.contains("age"));
//! ```

#[cfg(test)]
mod gallery;
mod love;
mod overlap;
mod sensitivity;

pub use love::{
    draw_love, love_height_hint, love_svg, LoveDesign, LoveInput, LoveTerm, TermOrder, MAX_DESIGNS,
};
pub use overlap::{draw_overlap, overlap_svg, OverlapInput, OverlapPanel};
pub use sensitivity::{draw_sensitivity, sensitivity_svg, SensitivityInput};

use crate::{Error, Result};
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

/// Smallest drawing area any chart accepts, in pixels.
pub const MIN_SIZE: (u32, u32) = (240, 180);

/// The Okabe & Ito (2008) colours we use, by their published names.
pub(crate) mod palette {
    use plotters::style::RGBColor;
    /// Okabe & Ito "black".
    pub const BLACK: RGBColor = RGBColor(0, 0, 0);
    /// Okabe & Ito "orange".
    pub const ORANGE: RGBColor = RGBColor(230, 159, 0);
    /// Okabe & Ito "sky blue".
    pub const SKY_BLUE: RGBColor = RGBColor(86, 180, 233);
    /// Okabe & Ito "bluish green".
    pub const BLUISH_GREEN: RGBColor = RGBColor(0, 158, 115);
    /// Okabe & Ito "blue".
    pub const BLUE: RGBColor = RGBColor(0, 114, 178);
    /// Okabe & Ito "vermillion".
    pub const VERMILLION: RGBColor = RGBColor(213, 94, 0);
    /// Okabe & Ito "reddish purple".
    pub const REDDISH_PURPLE: RGBColor = RGBColor(204, 121, 167);
    /// Neutral ink for text and axes (not part of the palette).
    pub const INK: RGBColor = RGBColor(34, 34, 34);
    /// Secondary text.
    pub const MUTED: RGBColor = RGBColor(90, 90, 90);
    /// Grid lines.
    pub const GRID: RGBColor = RGBColor(222, 222, 222);
    /// Alternate row shading.
    pub const STRIPE: RGBColor = RGBColor(246, 246, 246);
    /// Tolerance band fill.
    pub const BAND: RGBColor = RGBColor(226, 240, 232);
    /// Background.
    pub const PAPER: RGBColor = RGBColor(255, 255, 255);
}

/// Turns a plotters error into the core's error.
pub(crate) fn draw_err(e: impl std::fmt::Display) -> Error {
    Error::compute(format!("could not draw the chart: {e}"))
}

/// Rejects drawing areas too small to hold a readable chart.
pub(crate) fn check_size(w: u32, h: u32) -> Result<()> {
    if w < MIN_SIZE.0 || h < MIN_SIZE.1 {
        return Err(Error::param(
            "size",
            format!(
                "a chart needs at least {}x{} pixels, got {w}x{h}",
                MIN_SIZE.0, MIN_SIZE.1
            ),
        ));
    }
    Ok(())
}

/// Renders a drawing routine into an SVG string.
pub(crate) fn to_svg(
    width: u32,
    height: u32,
    draw: impl FnOnce(DrawingArea<plotters_svg::SVGBackend<'_>, Shift>) -> Result<()>,
) -> Result<String> {
    check_size(width, height)?;
    let mut buf = String::new();
    {
        let root =
            plotters_svg::SVGBackend::with_string(&mut buf, (width, height)).into_drawing_area();
        draw(root)?;
    }
    Ok(buf)
}

/// Width of `text` in pixels at `px` pixels per em, for a generic sans-serif
/// face. Our own per-character estimate, widened by a tenth so that wide
/// faces (DejaVu Sans) fit too; it only decides margins and truncation.
pub(crate) fn text_width(text: &str, px: f64) -> f64 {
    let em: f64 = text
        .chars()
        .map(|c| match c {
            'i' | 'j' | 'l' | '.' | ',' | '\'' | ':' | ';' | '!' | '|' | 'I' => 0.28,
            'f' | 't' | 'r' | ' ' | '(' | ')' | '[' | ']' | '-' | '/' => 0.36,
            'm' | 'w' | 'M' | 'W' | '@' | '%' | '—' => 0.9,
            '0'..='9' | '_' | '…' => 0.58,
            c if c.is_ascii_uppercase() => 0.7,
            c if c.is_ascii_lowercase() => 0.56,
            _ => 0.62,
        })
        .sum();
    em * px * 1.1
}

/// `text` cut to fit `max_px` at `px`, with an ellipsis when cut.
pub(crate) fn fit_text(text: &str, px: f64, max_px: f64) -> String {
    if text_width(text, px) <= max_px {
        return text.to_string();
    }
    let mut out = String::new();
    for c in text.chars() {
        out.push(c);
        if text_width(&out, px) + text_width("…", px) > max_px {
            out.pop();
            break;
        }
    }
    format!("{}…", out.trim_end())
}

/// Tick step of 1, 2 or 5 times a power of ten giving about `target`
/// intervals over `range`; the "nice numbers" rule of Heckbert (1990,
/// "Nice numbers for graph labels", Graphics Gems).
pub(crate) fn nice_step(range: f64, target: usize) -> f64 {
    let range = if range > 0.0 && range.is_finite() {
        range
    } else {
        1.0
    };
    let raw = range / target.max(1) as f64;
    let mag = libm::pow(10f64, libm::log10(raw).floor());
    let f = raw / mag;
    let nf = if f < 1.5 {
        1.0
    } else if f < 3.0 {
        2.0
    } else if f < 7.0 {
        5.0
    } else {
        10.0
    };
    nf * mag
}

/// Tick values from `lo` to `hi` (inclusive, within rounding) at `step`.
pub(crate) fn ticks(lo: f64, hi: f64, step: f64) -> Vec<f64> {
    let mut out = Vec::new();
    let first = (lo / step - 1e-9).ceil();
    let mut k = first;
    while k * step <= hi + step * 1e-9 && out.len() < 200 {
        out.push(k * step);
        k += 1.0;
    }
    out
}

/// A tick label with as many decimals as the step needs.
pub(crate) fn tick_label(v: f64, step: f64) -> String {
    let decimals = (-(libm::log10(step) + 1e-9).floor()).max(0.0) as usize;
    let s = format!("{:.*}", decimals, v);
    if s.trim_start_matches('-')
        .chars()
        .all(|c| c == '0' || c == '.')
    {
        s.trim_start_matches('-').to_string()
    } else {
        s
    }
}

/// How the text of one call looks.
#[derive(Clone, Copy)]
pub(crate) struct Font {
    /// Size in rendered pixels.
    pub px: f64,
    pub color: RGBColor,
    pub bold: bool,
    pub italic: bool,
}

impl Font {
    pub fn new(px: f64, color: RGBColor) -> Self {
        Font {
            px,
            color,
            bold: false,
            italic: false,
        }
    }
    pub fn bold(mut self) -> Self {
        self.bold = true;
        self
    }
    pub fn italic(mut self) -> Self {
        self.italic = true;
        self
    }
}

/// Marker shapes; paired with a colour, each series gets both.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum Shape {
    HollowCircle,
    Circle,
    TriangleUp,
    Square,
    Diamond,
    TriangleDown,
    Cross,
}

/// A thin layer over a pixel-addressed drawing area: text, lines, markers.
/// Margin around every chart, in pixels.
pub(crate) const PAD: i32 = 14;

pub(crate) struct Pen<'a, DB: DrawingBackend> {
    pub area: &'a DrawingArea<DB, Shift>,
    /// plotters' SVG backend writes `font-size` as the requested size
    /// divided by 1.24 while the canvas backend uses it as given; we
    /// compensate so that text is the same size on both surfaces.
    text_scale: f64,
}

impl<'a, DB: DrawingBackend> Pen<'a, DB> {
    pub fn new(area: &'a DrawingArea<DB, Shift>) -> Self {
        let svg = std::any::type_name::<DB>().contains("SVGBackend");
        Pen {
            area,
            text_scale: if svg { 1.24 } else { 1.0 },
        }
    }

    /// Every chart starts the same way: paper background, then the optional
    /// title at the top left. Returns the y below the title.
    pub fn start(&self, title: Option<&str>, width: i32) -> Result<i32> {
        self.area.fill(&palette::PAPER).map_err(draw_err)?;
        let mut top = PAD;
        if let Some(t) = title {
            self.text(
                &fit_text(t, 16.0, (width - 2 * PAD) as f64),
                PAD,
                top,
                Font::new(16.0, palette::INK).bold(),
                HPos::Left,
                VPos::Top,
            )?;
            top += 26;
        }
        Ok(top)
    }

    pub fn text(&self, s: &str, x: i32, y: i32, f: Font, h: HPos, v: VPos) -> Result<()> {
        self.text_rot(s, x, y, f, h, v, false)
    }

    #[allow(clippy::too_many_arguments)]
    pub fn text_rot(
        &self,
        s: &str,
        x: i32,
        y: i32,
        f: Font,
        h: HPos,
        v: VPos,
        rotate: bool,
    ) -> Result<()> {
        if s.is_empty() {
            return Ok(());
        }
        let style = if f.bold {
            FontStyle::Bold
        } else if f.italic {
            FontStyle::Italic
        } else {
            FontStyle::Normal
        };
        let font = FontDesc::new(FontFamily::SansSerif, f.px * self.text_scale, style);
        let mut ts = font.color(&f.color).pos(Pos::new(h, v));
        if rotate {
            ts = ts.transform(FontTransform::Rotate270);
        }
        self.area.draw_text(s, &ts, (x, y)).map_err(draw_err)
    }

    pub fn rect(&self, x0: i32, y0: i32, x1: i32, y1: i32, color: RGBColor) -> Result<()> {
        self.area
            .draw(&Rectangle::new([(x0, y0), (x1, y1)], color.filled()))
            .map_err(draw_err)
    }

    pub fn rect_outline(&self, x0: i32, y0: i32, x1: i32, y1: i32, color: RGBColor) -> Result<()> {
        self.area
            .draw(&Rectangle::new([(x0, y0), (x1, y1)], color.stroke_width(1)))
            .map_err(draw_err)
    }

    pub fn line(&self, pts: &[(i32, i32)], color: RGBColor, width: u32) -> Result<()> {
        self.area
            .draw(&PathElement::new(pts.to_vec(), color.stroke_width(width)))
            .map_err(draw_err)
    }

    /// A dashed straight line; dashes drawn one by one so every backend
    /// shows the same pattern.
    pub fn dashed(
        &self,
        from: (i32, i32),
        to: (i32, i32),
        color: RGBColor,
        width: u32,
        dash: f64,
        gap: f64,
    ) -> Result<()> {
        let (dx, dy) = ((to.0 - from.0) as f64, (to.1 - from.1) as f64);
        let len = (dx * dx + dy * dy).sqrt();
        if len < 1.0 {
            return Ok(());
        }
        let (ux, uy) = (dx / len, dy / len);
        let mut t = 0.0;
        while t < len {
            let e = (t + dash).min(len);
            let a = (
                from.0 + (ux * t).round() as i32,
                from.1 + (uy * t).round() as i32,
            );
            let b = (
                from.0 + (ux * e).round() as i32,
                from.1 + (uy * e).round() as i32,
            );
            self.line(&[a, b], color, width)?;
            t += dash + gap;
        }
        Ok(())
    }

    pub fn marker(&self, shape: Shape, x: i32, y: i32, r: f64, color: RGBColor) -> Result<()> {
        let p = |dx: f64, dy: f64| (x + dx.round() as i32, y + dy.round() as i32);
        let poly = |pts: Vec<(i32, i32)>| {
            self.area
                .draw(&Polygon::new(pts, color.filled()))
                .map_err(draw_err)
        };
        match shape {
            Shape::HollowCircle => self
                .area
                .draw(&Circle::new(
                    (x, y),
                    r.round().max(2.0) as i32,
                    color.stroke_width(2),
                ))
                .map_err(draw_err),
            Shape::Circle => self
                .area
                .draw(&Circle::new(
                    (x, y),
                    r.round().max(2.0) as i32,
                    color.filled(),
                ))
                .map_err(draw_err),
            Shape::TriangleUp => poly(vec![
                p(0.0, -1.25 * r),
                p(-1.15 * r, 0.85 * r),
                p(1.15 * r, 0.85 * r),
            ]),
            Shape::TriangleDown => poly(vec![
                p(0.0, 1.25 * r),
                p(-1.15 * r, -0.85 * r),
                p(1.15 * r, -0.85 * r),
            ]),
            Shape::Square => poly(vec![
                p(-0.9 * r, -0.9 * r),
                p(0.9 * r, -0.9 * r),
                p(0.9 * r, 0.9 * r),
                p(-0.9 * r, 0.9 * r),
            ]),
            Shape::Diamond => poly(vec![
                p(0.0, -1.3 * r),
                p(1.3 * r, 0.0),
                p(0.0, 1.3 * r),
                p(-1.3 * r, 0.0),
            ]),
            Shape::Cross => {
                let w = (r * 0.55).round().max(2.0) as u32;
                self.line(&[p(-r, -r), p(r, r)], color, w)?;
                self.line(&[p(-r, r), p(r, -r)], color, w)
            }
        }
    }
}

/// One entry of a legend: a swatch drawn by the caller's closure and a label.
pub(crate) struct LegendEntry {
    pub label: String,
    pub swatch: Swatch,
}

/// What a legend entry shows beside its label.
#[derive(Clone, Copy)]
pub(crate) enum Swatch {
    Marker(Shape, RGBColor),
    Block(RGBColor),
    Line(RGBColor, bool),
}

/// Lays a legend out in rows across `width` starting at (`x`, `y`); returns
/// the height used. Entries wrap to new rows; a long label is shortened.
pub(crate) fn draw_legend<DB: DrawingBackend>(
    pen: &Pen<'_, DB>,
    entries: &[LegendEntry],
    x: i32,
    y: i32,
    width: i32,
    px: f64,
) -> Result<i32> {
    let row_h = (px * 1.6).round() as i32;
    let swatch_w = 18;
    let gap_after = 22;
    let mut cx = x;
    let mut cy = y + row_h / 2;
    let mut rows = 1;
    for e in entries {
        let label = fit_text(&e.label, px, (width - swatch_w - 6) as f64);
        let w = swatch_w + 6 + text_width(&label, px).ceil() as i32;
        if cx > x && cx + w > x + width {
            cx = x;
            cy += row_h;
            rows += 1;
        }
        let sx = cx + swatch_w / 2;
        match e.swatch {
            Swatch::Marker(shape, color) => pen.marker(shape, sx, cy, px * 0.38, color)?,
            Swatch::Block(color) => pen.rect(cx + 2, cy - 5, cx + swatch_w - 2, cy + 5, color)?,
            Swatch::Line(color, dashed) => {
                if dashed {
                    pen.dashed((cx, cy), (cx + swatch_w, cy), color, 2, 4.0, 3.0)?
                } else {
                    pen.line(&[(cx, cy), (cx + swatch_w, cy)], color, 2)?
                }
            }
        }
        pen.text(
            &label,
            cx + swatch_w + 6,
            cy,
            Font::new(px, palette::INK),
            HPos::Left,
            VPos::Center,
        )?;
        cx += w + gap_after;
    }
    Ok(rows * row_h)
}

/// A linear map from data values to pixels.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Scale {
    pub d0: f64,
    pub d1: f64,
    pub p0: f64,
    pub p1: f64,
}

impl Scale {
    pub fn px(&self, v: f64) -> i32 {
        let span = self.d1 - self.d0;
        let t = if span.abs() < f64::EPSILON {
            0.5
        } else {
            (v - self.d0) / span
        };
        (self.p0 + t * (self.p1 - self.p0)).round() as i32
    }
}

/// A centred message on an otherwise empty chart, for input with nothing to
/// draw.
pub(crate) fn empty_chart<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    title: Option<&str>,
    message: &str,
) -> Result<()> {
    root.fill(&palette::PAPER).map_err(draw_err)?;
    let (w, h) = root.dim_in_pixel();
    let pen = Pen::new(root);
    if let Some(t) = title {
        pen.text(
            &fit_text(t, 16.0, w as f64 - 28.0),
            14,
            14,
            Font::new(16.0, palette::INK).bold(),
            HPos::Left,
            VPos::Top,
        )?;
    }
    pen.rect_outline(14, 40, w as i32 - 14, h as i32 - 14, palette::GRID)?;
    pen.text(
        &fit_text(message, 14.0, w as f64 - 48.0),
        w as i32 / 2,
        h as i32 / 2,
        Font::new(14.0, palette::MUTED),
        HPos::Center,
        VPos::Center,
    )?;
    root.present().map_err(draw_err)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nice_steps_follow_one_two_five() {
        assert_eq!(nice_step(1.0, 5), 0.2);
        assert_eq!(nice_step(0.45, 5), 0.1);
        assert_eq!(nice_step(9.0, 5), 2.0);
        assert_eq!(nice_step(30.0, 5), 5.0);
    }

    #[test]
    fn ticks_and_labels() {
        let t = ticks(0.0, 0.5, 0.1);
        assert_eq!(t.len(), 6);
        let labels: Vec<String> = t.iter().map(|v| tick_label(*v, 0.1)).collect();
        assert_eq!(labels, ["0.0", "0.1", "0.2", "0.3", "0.4", "0.5"]);
        assert_eq!(tick_label(-0.0, 1.0), "0");
        assert_eq!(tick_label(-0.00001, 0.1), "0.0");
        assert_eq!(tick_label(2.0, 0.5), "2.0");
        assert_eq!(tick_label(20.0, 5.0), "20");
    }

    #[test]
    fn fit_text_shortens_with_ellipsis() {
        let s = fit_text("a very long covariate name indeed", 12.0, 80.0);
        assert!(s.ends_with('…'));
        assert!(text_width(&s, 12.0) <= 80.0);
        assert_eq!(fit_text("age", 12.0, 80.0), "age");
    }

    #[test]
    fn small_areas_are_refused() {
        assert!(check_size(100, 100).is_err());
        assert!(check_size(240, 180).is_ok());
    }
}
