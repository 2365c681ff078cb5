//! The bindings as the page sees them, run in headless Chromium by
//! `wasm-bindgen-test-runner` (`cargo xtask test` sets it up).
#![cfg(target_arch = "wasm32")]

use js_sys::Reflect;
use wasm_bindgen::JsValue;
use wasm_bindgen_test::*;

wasm_bindgen_test_configure!(run_in_browser);

fn get(obj: &JsValue, key: &str) -> JsValue {
    Reflect::get(obj, &JsValue::from_str(key)).expect("property readable")
}

#[wasm_bindgen_test]
fn version_is_the_core_version() {
    assert_eq!(pairsight_wasm::version(), pairsight_core::VERSION);
}

#[wasm_bindgen_test]
fn missing_markers_are_the_cores() {
    let list = js_sys::Array::from(&pairsight_wasm::missing_markers().expect("a list"));
    let got: Vec<String> = list.iter().filter_map(|v| v.as_string()).collect();
    assert_eq!(got, pairsight_core::ingest::MISSING_MARKERS);
}

#[wasm_bindgen_test]
fn summary_arrives_as_a_plain_object() {
    let csv = b"id,visit,age,ward\n1,1,71,A\n2,0,NA,B\n3,0,64,A\n";
    let s = pairsight_wasm::summarize_csv(csv).expect("readable file");
    assert_eq!(get(&s, "rows").as_f64(), Some(3.0));
    assert_eq!(get(&s, "columns").as_f64(), Some(4.0));
    assert_eq!(get(&s, "delimiter").as_string().as_deref(), Some("comma"));
    let cols = js_sys::Array::from(&get(&s, "column_summaries"));
    assert_eq!(cols.length(), 4);
    let age = cols.get(2);
    assert_eq!(get(&age, "name").as_string().as_deref(), Some("age"));
    assert_eq!(get(&age, "kind").as_string().as_deref(), Some("numeric"));
    assert_eq!(get(&age, "missing").as_f64(), Some(1.0));
    assert_eq!(
        get(&cols.get(1), "kind").as_string().as_deref(),
        Some("binary")
    );
    // A plain object, not a Map: it must survive postMessage and JSON.
    assert!(js_sys::JSON::stringify(&s).is_ok());
}

#[wasm_bindgen_test]
fn error_object_names_row_and_nulls_what_is_unknown() {
    let e = pairsight_wasm::summarize_csv(b"a,b\n1,2\n3,4,5\n").expect_err("ragged row");
    assert_eq!(get(&e, "kind").as_string().as_deref(), Some("data"));
    assert_eq!(get(&e, "row").as_f64(), Some(3.0));
    assert!(get(&e, "column").is_null());
    assert!(get(&e, "key").is_null());
    let msg = get(&e, "message").as_string().unwrap_or_default();
    assert!(msg.contains("row 3"), "{msg}");
}

#[wasm_bindgen_test]
fn error_object_names_the_column_when_known() {
    let e = pairsight_wasm::summarize_csv(b"age,age\n1,2\n").expect_err("duplicate header");
    assert_eq!(get(&e, "row").as_f64(), Some(1.0));
    assert_eq!(get(&e, "column").as_string().as_deref(), Some("age"));
    let detail = get(&e, "detail").as_string().unwrap_or_default();
    assert!(detail.contains("duplicate header"), "{detail}");
}
