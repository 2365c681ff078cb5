//! Shared helpers for the reference checks: loading the values that the
//! Python scripts in `tests/reference/` computed with outside libraries.
#![deny(missing_docs)]

use std::path::PathBuf;

/// Folder holding the reference JSON files: `$PAIRSIGHT_REFERENCE_DIR`, or
/// `target/reference` at the workspace root. `cargo xtask reference` (also run
/// by `cargo xtask test`) writes them.
pub fn reference_dir() -> PathBuf {
    match std::env::var_os("PAIRSIGHT_REFERENCE_DIR") {
        Some(d) => PathBuf::from(d),
        None => PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../target/reference"),
    }
}

/// Load `<reference_dir>/<name>.json`. Panics with the command to run when the
/// file is absent, so a check can never pass without its reference values.
pub fn reference(name: &str) -> serde_json::Value {
    let path = reference_dir().join(format!("{name}.json"));
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| {
        panic!(
            "reference values {} are missing ({e}); run `cargo xtask reference` first (`cargo xtask test` does it)",
            path.display()
        )
    });
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("{} is not JSON: {e}", path.display()))
}

/// A JSON array of numbers as a vector.
pub fn floats(v: &serde_json::Value) -> Vec<f64> {
    v.as_array()
        .expect("array")
        .iter()
        .map(|x| x.as_f64().expect("number"))
        .collect()
}

/// A JSON array of arrays of numbers as rows.
pub fn rows(v: &serde_json::Value) -> Vec<Vec<f64>> {
    v.as_array().expect("array").iter().map(floats).collect()
}

/// Relative closeness with an absolute floor for values near zero.
pub fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * a.abs().max(b.abs()).max(1.0)
}
