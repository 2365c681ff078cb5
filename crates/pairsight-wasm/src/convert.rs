//! Crossing the boundary: core values to JavaScript objects, core errors to
//! the one error object the page understands.

use pairsight_core::Error;
use serde::Serialize;
use wasm_bindgen::JsValue;

/// The error object every binding throws. Serialized with absent fields as
/// `null`, so the page can test `err.row !== null` without guessing.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ErrorShape {
    /// `"data"`, `"study"`, `"param"`, `"compute"`, or `"internal"` for a
    /// failure of the binding itself.
    pub kind: &'static str,
    /// The full message, with its location, ready to show as is.
    pub message: String,
    /// The message without the location prefix, for layouts that show the
    /// location separately.
    pub detail: String,
    /// 1-based record number in the file (header = 1), when known.
    pub row: Option<usize>,
    /// Column name, when known.
    pub column: Option<String>,
    /// Study-file key or parameter name, when the error is about one.
    pub key: Option<String>,
}

impl From<&Error> for ErrorShape {
    fn from(e: &Error) -> Self {
        let message = e.to_string();
        let (kind, detail, row, column, key) = match e {
            Error::Data {
                row,
                column,
                message,
            } => ("data", message.clone(), *row, column.clone(), None),
            Error::Study { key, message } => {
                ("study", message.clone(), None, None, Some(key.clone()))
            }
            Error::Param { name, message } => {
                ("param", message.clone(), None, None, Some(name.clone()))
            }
            Error::Compute { message } => ("compute", message.clone(), None, None, None),
        };
        ErrorShape {
            kind,
            message,
            detail,
            row,
            column,
            key,
        }
    }
}

impl ErrorShape {
    /// An error of the binding itself (for example a result that could not be
    /// converted), not of the user's input.
    pub fn internal(message: impl Into<String>) -> Self {
        let message = message.into();
        ErrorShape {
            kind: "internal",
            detail: message.clone(),
            message,
            row: None,
            column: None,
            key: None,
        }
    }
}

fn serializer() -> serde_wasm_bindgen::Serializer {
    // `null` rather than `undefined` for absent values, and plain objects
    // rather than `Map`s, so results survive `postMessage` and JSON alike.
    serde_wasm_bindgen::Serializer::new()
        .serialize_missing_as_null(true)
        .serialize_maps_as_objects(true)
}

/// A core error as the JavaScript error object (see [`ErrorShape`]).
pub fn error_to_js(e: &Error) -> JsValue {
    shape_to_js(&ErrorShape::from(e))
}

fn shape_to_js(shape: &ErrorShape) -> JsValue {
    shape
        .serialize(&serializer())
        .unwrap_or_else(|_| JsValue::from_str(&shape.message))
}

/// A serde value of the core as a plain JavaScript object; a conversion
/// failure becomes an `"internal"` error object.
pub fn to_js<T: Serialize + ?Sized>(value: &T) -> Result<JsValue, JsValue> {
    value.serialize(&serializer()).map_err(|e| {
        shape_to_js(&ErrorShape::internal(format!(
            "result could not be converted for the page: {e}"
        )))
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn data_error_keeps_row_column_and_bare_detail() {
        let e = Error::data(Some(4), Some("age"), "not a number");
        let s = ErrorShape::from(&e);
        assert_eq!(s.kind, "data");
        assert_eq!((s.row, s.column.as_deref()), (Some(4), Some("age")));
        assert_eq!(s.detail, "not a number");
        assert_eq!(s.message, e.to_string());
        assert!(s.message.contains("row 4"), "{}", s.message);
    }

    #[test]
    fn study_and_param_errors_carry_their_key() {
        let s = ErrorShape::from(&Error::study("designs[1].caliper", "must be positive"));
        assert_eq!(
            (s.kind, s.key.as_deref()),
            ("study", Some("designs[1].caliper"))
        );
        let p = ErrorShape::from(&Error::param("k", "at least 1"));
        assert_eq!(
            (p.kind, p.key.as_deref(), p.row),
            ("param", Some("k"), None)
        );
        let c = ErrorShape::from(&Error::compute("no feasible match"));
        assert_eq!(
            (c.kind, c.detail.as_str()),
            ("compute", "no feasible match")
        );
    }
}
