//! pairsight-wasm: the browser's doorway into pairsight-core. Glue only: every
//! number is computed by the core; this crate converts values at the boundary.
#![deny(missing_docs)]

use wasm_bindgen::prelude::*;

/// Install the panic hook so a bug shows as a console message, not a dead page.
#[wasm_bindgen(start)]
pub fn start() {
    console_error_panic_hook::set_once();
}

/// The core's version.
#[wasm_bindgen]
pub fn version() -> String {
    pairsight_core::VERSION.to_string()
}
