//! Charts on a canvas inside the worker.
//!
//! The core draws every chart against plotters' `DrawingBackend` trait; the
//! SVG files come from plotters' SVG backend. A Web Worker has no
//! `HtmlCanvasElement`, and plotters-canvas accepts only that (its context
//! must be a `CanvasRenderingContext2d`), so this module is the small
//! backend that paints an `OffscreenCanvas` with the same calls. The page
//! turns the painted canvas into an `ImageBitmap` and shows it in its own
//! `<canvas>`: no drawing work happens on the page's main thread.
//!
//! The core's chart code only calls `draw_text` for text (never plotters'
//! font measurement), so nothing here needs a font.

use pairsight_core::chart::{
    draw_love, draw_overlap, draw_sensitivity, love_svg, overlap_svg, SensitivityInput,
};
use pairsight_core::run::{Analysis, DesignRun};
use pairsight_core::{Error, Result};
use plotters::prelude::IntoDrawingArea;
use plotters_backend::text_anchor::{HPos, VPos};
use plotters_backend::{
    BackendColor, BackendCoord, BackendStyle, BackendTextStyle, DrawingBackend, DrawingErrorKind,
    FontTransform,
};
use wasm_bindgen::{JsCast, JsValue};
use web_sys::{OffscreenCanvas, OffscreenCanvasRenderingContext2d};

/// A canvas call that failed, as the browser described it.
#[derive(Debug)]
pub struct CanvasError(String);

impl std::fmt::Display for CanvasError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "canvas: {}", self.0)
    }
}

impl std::error::Error for CanvasError {}

fn cast(e: JsValue) -> DrawingErrorKind<CanvasError> {
    DrawingErrorKind::DrawingError(CanvasError(
        e.as_string().unwrap_or_else(|| format!("{e:?}")),
    ))
}

/// plotters' drawing backend over an `OffscreenCanvas`'s 2D context.
pub struct OffscreenBackend {
    size: (u32, u32),
    ctx: OffscreenCanvasRenderingContext2d,
}

impl OffscreenBackend {
    /// The backend of `canvas`; an error when the canvas has no 2D context.
    pub fn new(canvas: &OffscreenCanvas) -> Result<Self> {
        let ctx = canvas
            .get_context("2d")
            .ok()
            .flatten()
            .and_then(|c| c.dyn_into::<OffscreenCanvasRenderingContext2d>().ok())
            .ok_or_else(|| {
                Error::compute("this browser gives no 2D context to a worker's canvas")
            })?;
        Ok(OffscreenBackend {
            size: (canvas.width(), canvas.height()),
            ctx,
        })
    }

    fn stroke_style(&self, style: &impl BackendStyle) {
        self.ctx.set_stroke_style_str(&css(style.color()));
        self.ctx.set_line_width(style.stroke_width() as f64);
    }
}

fn css(c: BackendColor) -> String {
    let (r, g, b) = c.rgb;
    format!("rgba({r},{g},{b},{})", c.alpha)
}

/// Horizontal and vertical one-pixel lines sit on half pixels, so they are
/// crisp rather than two pixels of half ink (the usual canvas practice).
fn crisp(from: BackendCoord, to: BackendCoord) -> ((f64, f64), (f64, f64)) {
    let (mut a, mut b) = (
        (f64::from(from.0), f64::from(from.1)),
        (f64::from(to.0), f64::from(to.1)),
    );
    if from.0 == to.0 {
        a.0 += 0.5;
        b.0 += 0.5;
    }
    if from.1 == to.1 {
        a.1 += 0.5;
        b.1 += 0.5;
    }
    (a, b)
}

impl DrawingBackend for OffscreenBackend {
    type ErrorType = CanvasError;

    fn get_size(&self) -> (u32, u32) {
        self.size
    }

    fn ensure_prepared(&mut self) -> std::result::Result<(), DrawingErrorKind<CanvasError>> {
        Ok(())
    }

    fn present(&mut self) -> std::result::Result<(), DrawingErrorKind<CanvasError>> {
        Ok(())
    }

    fn draw_pixel(
        &mut self,
        point: BackendCoord,
        color: BackendColor,
    ) -> std::result::Result<(), DrawingErrorKind<CanvasError>> {
        if color.alpha == 0.0 {
            return Ok(());
        }
        self.ctx.set_fill_style_str(&css(color));
        self.ctx
            .fill_rect(f64::from(point.0), f64::from(point.1), 1.0, 1.0);
        Ok(())
    }

    fn draw_line<S: BackendStyle>(
        &mut self,
        from: BackendCoord,
        to: BackendCoord,
        style: &S,
    ) -> std::result::Result<(), DrawingErrorKind<CanvasError>> {
        if style.color().alpha == 0.0 {
            return Ok(());
        }
        let (a, b) = crisp(from, to);
        self.stroke_style(style);
        self.ctx.begin_path();
        self.ctx.move_to(a.0, a.1);
        self.ctx.line_to(b.0, b.1);
        self.ctx.stroke();
        Ok(())
    }

    fn draw_rect<S: BackendStyle>(
        &mut self,
        upper_left: BackendCoord,
        bottom_right: BackendCoord,
        style: &S,
        fill: bool,
    ) -> std::result::Result<(), DrawingErrorKind<CanvasError>> {
        if style.color().alpha == 0.0 {
            return Ok(());
        }
        let (x, y) = (f64::from(upper_left.0), f64::from(upper_left.1));
        let (w, h) = (
            f64::from(bottom_right.0 - upper_left.0),
            f64::from(bottom_right.1 - upper_left.1),
        );
        if fill {
            self.ctx.set_fill_style_str(&css(style.color()));
            self.ctx.fill_rect(x, y, w, h);
        } else {
            self.stroke_style(style);
            self.ctx.stroke_rect(x, y, w, h);
        }
        Ok(())
    }

    fn draw_path<S: BackendStyle, I: IntoIterator<Item = BackendCoord>>(
        &mut self,
        path: I,
        style: &S,
    ) -> std::result::Result<(), DrawingErrorKind<CanvasError>> {
        if style.color().alpha == 0.0 {
            return Ok(());
        }
        let mut points = path.into_iter();
        let Some(first) = points.next() else {
            return Ok(());
        };
        self.stroke_style(style);
        self.ctx.begin_path();
        self.ctx.move_to(f64::from(first.0), f64::from(first.1));
        for p in points {
            self.ctx.line_to(f64::from(p.0), f64::from(p.1));
        }
        self.ctx.stroke();
        Ok(())
    }

    fn fill_polygon<S: BackendStyle, I: IntoIterator<Item = BackendCoord>>(
        &mut self,
        vert: I,
        style: &S,
    ) -> std::result::Result<(), DrawingErrorKind<CanvasError>> {
        if style.color().alpha == 0.0 {
            return Ok(());
        }
        let mut points = vert.into_iter();
        let Some(first) = points.next() else {
            return Ok(());
        };
        self.ctx.set_fill_style_str(&css(style.color()));
        self.ctx.begin_path();
        self.ctx.move_to(f64::from(first.0), f64::from(first.1));
        for p in points {
            self.ctx.line_to(f64::from(p.0), f64::from(p.1));
        }
        self.ctx.close_path();
        self.ctx.fill();
        Ok(())
    }

    fn draw_circle<S: BackendStyle>(
        &mut self,
        center: BackendCoord,
        radius: u32,
        style: &S,
        fill: bool,
    ) -> std::result::Result<(), DrawingErrorKind<CanvasError>> {
        if style.color().alpha == 0.0 {
            return Ok(());
        }
        if fill {
            self.ctx.set_fill_style_str(&css(style.color()));
        } else {
            self.stroke_style(style);
        }
        self.ctx.begin_path();
        self.ctx
            .arc(
                f64::from(center.0),
                f64::from(center.1),
                f64::from(radius),
                0.0,
                std::f64::consts::TAU,
            )
            .map_err(cast)?;
        if fill {
            self.ctx.fill();
        } else {
            self.ctx.stroke();
        }
        Ok(())
    }

    fn draw_text<S: BackendTextStyle>(
        &mut self,
        text: &str,
        style: &S,
        pos: BackendCoord,
    ) -> std::result::Result<(), DrawingErrorKind<CanvasError>> {
        let color = style.color();
        if color.alpha == 0.0 {
            return Ok(());
        }
        let turn = match style.transform() {
            FontTransform::None => 0.0,
            FontTransform::Rotate90 => 0.5,
            FontTransform::Rotate180 => 1.0,
            FontTransform::Rotate270 => 1.5,
        } * std::f64::consts::PI;
        let (mut x, mut y) = (f64::from(pos.0), f64::from(pos.1));
        if turn != 0.0 {
            self.ctx.save();
            self.ctx.translate(x, y).map_err(cast)?;
            self.ctx.rotate(turn).map_err(cast)?;
            x = 0.0;
            y = 0.0;
        }
        self.ctx.set_text_baseline(match style.anchor().v_pos {
            VPos::Top => "top",
            VPos::Center => "middle",
            VPos::Bottom => "bottom",
        });
        self.ctx.set_text_align(match style.anchor().h_pos {
            HPos::Left => "start",
            HPos::Right => "end",
            HPos::Center => "center",
        });
        self.ctx.set_fill_style_str(&css(color));
        self.ctx.set_font(&format!(
            "{} {}px {}",
            style.style().as_str(),
            style.size(),
            style.family().as_str()
        ));
        self.ctx.fill_text(text, x, y).map_err(cast)?;
        if turn != 0.0 {
            self.ctx.restore();
        }
        Ok(())
    }
}

pub use pairsight_core::run::love_input;

/// Paint the Love plot of `runs` on `canvas`.
pub fn paint_love(canvas: &OffscreenCanvas, runs: &[&DesignRun]) -> Result<()> {
    let input = love_input(runs)?;
    draw_love(OffscreenBackend::new(canvas)?.into_drawing_area(), &input)
}

/// Paint the overlap plot of one run on `canvas`.
pub fn paint_overlap(canvas: &OffscreenCanvas, a: &Analysis, r: &DesignRun) -> Result<()> {
    draw_overlap(
        OffscreenBackend::new(canvas)?.into_drawing_area(),
        &r.overlap_input(a),
    )
}

/// Paint a sensitivity plot on `canvas`.
pub fn paint_sensitivity(canvas: &OffscreenCanvas, input: &SensitivityInput) -> Result<()> {
    draw_sensitivity(OffscreenBackend::new(canvas)?.into_drawing_area(), input)
}

/// The Love plot of `runs` as SVG text (the export).
pub fn love_svg_of(runs: &[&DesignRun], width: u32, height: u32) -> Result<String> {
    love_svg(&love_input(runs)?, width, height)
}

/// The overlap plot of one run as SVG text.
pub fn overlap_svg_of(a: &Analysis, r: &DesignRun, width: u32, height: u32) -> Result<String> {
    overlap_svg(&r.overlap_input(a), width, height)
}
