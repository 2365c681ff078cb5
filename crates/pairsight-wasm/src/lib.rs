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
//! - No binding keeps state between calls; the worker owns the session.
//!
//! The page never calls these functions on its main thread: `web/worker.js`
//! calls them inside a Web Worker, so a long computation cannot freeze the page.
#![deny(missing_docs)]

mod convert;

pub use convert::{error_to_js, to_js, ErrorShape};

use wasm_bindgen::prelude::*;

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
