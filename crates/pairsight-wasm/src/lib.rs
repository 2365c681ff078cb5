//! pairsight-wasm: the browser's doorway into pairsight-core.
//!
//! Glue only: every number is computed by the core; this crate converts values
//! at the boundary. Conventions every binding follows (the page's worker relies
//! on them):
//!
//! - Inputs are plain bytes or numbers; results are serde structs of the core,
//!   handed over as plain JavaScript objects ([`to_js`]).
//! - Failures are thrown as one object shape, `{kind, message, detail, row,
//!   column, key}`, built by [`error_to_js`] from the core's
//!   [`pairsight_core::Error`]; fields that do not apply are `null`.
//! - The `session_*` bindings share one session per worker ([`session`]):
//!   the cohort read, the prepared analysis with its note features, and each
//!   design's run, so that editing a design never recomputes the notes.
//!
//! The page never calls these functions on its main thread: `web/worker.js`
//! calls them inside a Web Worker, so a long computation cannot freeze the page.
#![deny(missing_docs)]

pub mod charts;
mod convert;
pub mod effect;
pub mod review;
pub mod session;

pub use convert::{error_to_js, to_js, ErrorShape};

use pairsight_core::study::Study;
use wasm_bindgen::prelude::*;
use web_sys::OffscreenCanvas;

fn js_err(e: pairsight_core::Error) -> JsValue {
    error_to_js(&e)
}

fn from_js<T: serde::de::DeserializeOwned>(value: JsValue, what: &str) -> Result<T, JsValue> {
    serde_wasm_bindgen::from_value(value).map_err(|e| {
        error_to_js(&pairsight_core::Error::param(
            what,
            format!("the page sent a value the core cannot read: {e}"),
        ))
    })
}

/// Install the panic hook so a bug shows as a console message, not a dead page.
#[wasm_bindgen(start)]
pub fn start() {
    console_error_panic_hook::set_once();
}

/// The core's version, shown in the page header.
#[wasm_bindgen]
pub fn version() -> String {
    pairsight_core::VERSION.to_string()
}

/// The cell values the core counts as missing (compared after trimming, in
/// any letter case), so the page can say so without keeping its own list.
#[wasm_bindgen]
pub fn missing_markers() -> Result<JsValue, JsValue> {
    to_js(&pairsight_core::ingest::MISSING_MARKERS)
}

/// Read a cohort file (CSV bytes) and return its summary: rows, columns,
/// encoding, delimiter and, per column, the inferred kind and missing count
/// (`pairsight_core::ingest::TableSummary`). A file that cannot be read throws
/// the error object described in the crate docs, naming row and column where
/// the core knows them.
#[wasm_bindgen]
pub fn summarize_csv(bytes: &[u8]) -> Result<JsValue, JsValue> {
    let table = pairsight_core::ingest::read_table(bytes).map_err(|e| error_to_js(&e))?;
    to_js(&table.summary())
}

/// Start taking in a cohort file of `size` bytes, chunk by chunk, so that
/// the page never holds the whole file: refused up front, with the limit
/// named, when it is larger than the page reads ([`session::begin`]).
#[wasm_bindgen]
pub fn session_begin(size: f64) -> Result<(), JsValue> {
    // A size from the page is a whole number of bytes; anything else is a
    // fault of the page, refused rather than truncated.
    if !(size >= 0.0 && size.fract() == 0.0) {
        return Err(js_err(pairsight_core::Error::param(
            "size",
            format!("the page sent an impossible file size: {size}"),
        )));
    }
    session::begin(size.min(usize::MAX as f64) as usize).map_err(js_err)
}

/// The next chunk of the file begun by [`session_begin`].
#[wasm_bindgen]
pub fn session_push(chunk: &[u8]) -> Result<(), JsValue> {
    session::push(chunk).map_err(js_err)
}

/// Read the file taken in as the session's table (forgetting the previous
/// study and runs) and return its summary, like [`summarize_csv`];
/// `progress(done, total)` is called with bytes of text read so far.
#[wasm_bindgen]
pub fn session_finish(progress: &js_sys::Function) -> Result<JsValue, JsValue> {
    let mut report = |done: usize, total: usize| {
        // A failing progress callback must not stop the reading.
        let _ = progress.call2(
            &JsValue::NULL,
            &JsValue::from_f64(done as f64),
            &JsValue::from_f64(total as f64),
        );
    };
    to_js(&session::finish(&mut report).map_err(js_err)?)
}

/// The engine's WebAssembly memory in bytes: what the page's large-file
/// test measures against the bound stated in `docs/validation.md`.
#[wasm_bindgen]
pub fn engine_memory() -> f64 {
    #[cfg(target_arch = "wasm32")]
    {
        (core::arch::wasm32::memory_size(0) * 65536) as f64
    }
    #[cfg(not(target_arch = "wasm32"))]
    {
        0.0
    }
}

/// The largest cohort file the page reads, in bytes.
#[wasm_bindgen]
pub fn max_file_bytes() -> f64 {
    session::MAX_FILE_BYTES as f64
}

/// Set the session's study (the page's study object, the same fields as a
/// study file) and prepare it: roles checked, note features computed when
/// roles, concepts or note options changed. Returns [`session::Prepared`].
#[wasm_bindgen]
pub fn session_prepare(study: JsValue) -> Result<JsValue, JsValue> {
    let study: Study = from_js(study, "study")?;
    to_js(&session::prepare(study).map_err(js_err)?)
}

/// Run the design named `name` (or return its cached run): a
/// [`session::RunView`].
#[wasm_bindgen]
pub fn session_run(name: &str) -> Result<JsValue, JsValue> {
    to_js(&session::run(name).map_err(js_err)?)
}

/// Matched set `set` (0-based) of design `name`, side by side.
#[wasm_bindgen]
pub fn session_pair(name: &str, set: usize) -> Result<JsValue, JsValue> {
    to_js(&session::pair(name, set).map_err(js_err)?)
}

/// Per matched set of design `name`, the disagreement on `column`.
#[wasm_bindgen]
pub fn session_disagreement(name: &str, column: &str) -> Result<JsValue, JsValue> {
    to_js(&session::disagreement(name, column).map_err(js_err)?)
}

/// Notes with concept highlights for the concept editor's preview.
#[wasm_bindgen]
pub fn session_preview(
    offset: usize,
    count: usize,
    mentions_only: bool,
) -> Result<JsValue, JsValue> {
    to_js(&session::preview(offset, count, mentions_only).map_err(js_err)?)
}

/// Every output file of design `name` (`[{name, contents}]`), byte for byte
/// what `pairsight match` writes.
#[wasm_bindgen]
pub fn session_files(name: &str) -> Result<JsValue, JsValue> {
    to_js(&session::files(name).map_err(js_err)?)
}

fn names_of(designs: JsValue) -> Result<Vec<String>, JsValue> {
    from_js(designs, "designs")
}

/// Paint the Love plot of the designs named in `designs` (an array of
/// names, run already) on `canvas`.
#[wasm_bindgen]
pub fn session_draw_love(canvas: &OffscreenCanvas, designs: JsValue) -> Result<(), JsValue> {
    let names = names_of(designs)?;
    session::with_runs(&names, |_, runs| charts::paint_love(canvas, &runs)).map_err(js_err)
}

/// Paint the overlap plot of design `name` on `canvas`.
#[wasm_bindgen]
pub fn session_draw_overlap(canvas: &OffscreenCanvas, name: &str) -> Result<(), JsValue> {
    session::with_runs(&[name.to_string()], |a, runs| {
        charts::paint_overlap(canvas, a, runs[0])
    })
    .map_err(js_err)
}

/// The Love plot of the named designs as SVG text.
#[wasm_bindgen]
pub fn session_love_svg(designs: JsValue, width: u32, height: u32) -> Result<String, JsValue> {
    let names = names_of(designs)?;
    session::with_runs(&names, |_, runs| charts::love_svg_of(&runs, width, height)).map_err(js_err)
}

/// The overlap plot of design `name` as SVG text.
#[wasm_bindgen]
pub fn session_overlap_svg(name: &str, width: u32, height: u32) -> Result<String, JsValue> {
    session::with_runs(&[name.to_string()], |a, runs| {
        charts::overlap_svg_of(a, runs[0], width, height)
    })
    .map_err(js_err)
}

/// A height that gives each row of a Love plot with `terms` rows room.
#[wasm_bindgen]
pub fn love_height(terms: usize) -> u32 {
    pairsight_core::chart::love_height_hint(terms)
}

/// The page's study object as study-file text (TOML), after validation.
#[wasm_bindgen]
pub fn study_to_toml(study: JsValue) -> Result<String, JsValue> {
    let study: Study = from_js(study, "study")?;
    study.validate().map_err(js_err)?;
    study.to_toml().map_err(js_err)
}

/// A study file's text as the page's study object; errors name the key or
/// the line.
#[wasm_bindgen]
pub fn study_from_toml(text: &str) -> Result<JsValue, JsValue> {
    to_js(&Study::from_toml(text).map_err(js_err)?)
}

/// Distinct values of a column of the session's table (at most `limit`).
#[wasm_bindgen]
pub fn session_levels(column: &str, limit: usize) -> Result<JsValue, JsValue> {
    to_js(&session::levels(column, limit).map_err(js_err)?)
}

/// The default demo cohort (invented), as CSV bytes: the same bytes as the
/// committed `demo/cohort.csv`, generated by the core.
#[wasm_bindgen]
pub fn demo_cohort() -> Result<Vec<u8>, JsValue> {
    let demo = pairsight_core::demo::generate(&pairsight_core::demo::DemoParams::default())
        .map_err(|e| error_to_js(&e))?;
    Ok(demo.cohort_csv.into_bytes())
}

/// The default demo cohort's study file (TOML text).
#[wasm_bindgen]
pub fn demo_study() -> Result<String, JsValue> {
    let demo = pairsight_core::demo::generate(&pairsight_core::demo::DemoParams::default())
        .map_err(|e| error_to_js(&e))?;
    Ok(demo.study_toml)
}

/// The caution shown beside every estimate (the core's words).
#[wasm_bindgen]
pub fn effect_caution() -> String {
    pairsight_core::run::CAUTION.to_string()
}

/// Paint the sensitivity plot of design `name`, outcome `outcome` on `canvas`.
#[wasm_bindgen]
pub fn session_draw_sensitivity(
    canvas: &OffscreenCanvas,
    name: &str,
    outcome: &str,
) -> Result<(), JsValue> {
    effect::paint(canvas, name, outcome).map_err(js_err)
}

/// The sensitivity plot of design `name`, outcome `outcome` as SVG text.
#[wasm_bindgen]
pub fn session_sensitivity_svg(
    name: &str,
    outcome: &str,
    width: u32,
    height: u32,
) -> Result<String, JsValue> {
    effect::svg(name, outcome, width, height).map_err(js_err)
}

/// The self-contained HTML report ([`effect::ReportRequest`]).
#[wasm_bindgen]
pub fn session_report(request: JsValue) -> Result<String, JsValue> {
    let req: effect::ReportRequest = from_js(request, "report")?;
    effect::report(&req).map_err(js_err)
}

/// Draw a review round and write its packets and key
/// ([`review::RoundRequest`] in, [`review::RoundMade`] out).
#[wasm_bindgen]
pub fn session_round(request: JsValue) -> Result<JsValue, JsValue> {
    let req: review::RoundRequest = from_js(request, "round")?;
    to_js(&review::make_round(&req).map_err(js_err)?)
}

/// The default packet options (scale with its anchors, draw settings), so
/// the page shows the core's defaults rather than keeping its own copy.
#[wasm_bindgen]
pub fn packet_defaults() -> Result<JsValue, JsValue> {
    to_js(&pairsight_core::packet::PacketOptions::default())
}

/// Merge ratings files against a key and compute agreement and the design
/// comparison ([`review::RatingsUpload`] in, [`review::MergeView`] out).
#[wasm_bindgen]
pub fn review_merge(upload: JsValue) -> Result<JsValue, JsValue> {
    let up: review::RatingsUpload = from_js(upload, "ratings")?;
    to_js(&review::results_of(&up).map_err(js_err)?)
}
