//! Browser tests of the wasm exports, run in headless Chromium by
//! wasm-bindgen-test-runner (`cargo test -p spanfit-web --target
//! wasm32-unknown-unknown`, with CHROMEDRIVER set). They call the exports as
//! the page does and look at what JavaScript receives: envelopes
//! `{"ok": true, "value"}` or `{"ok": false, "error"}` with the core's
//! structured error, never a thrown exception for bad input, and a module
//! that keeps working afterwards.
#![cfg(target_arch = "wasm32")]
// wasm-bindgen-test functions are tests, though clippy does not know them as such.
#![allow(clippy::unwrap_used)]

use serde_json::Value;
use spanfit_web::{
    analyze, check_need, check_stock, demo_need, demo_stock, need_fields, need_keys,
    read_stock_table, solve, solve_exhaustive,
};
use wasm_bindgen::prelude::*;
use wasm_bindgen_test::*;

wasm_bindgen_test_configure!(run_in_browser);

/// An envelope read back: `Ok(value)` or `Err(error)`.
fn open(text: &str) -> Result<Value, Value> {
    let v: Value = serde_json::from_str(text).expect("an envelope is JSON");
    if v["ok"] == true {
        Ok(v["value"].clone())
    } else {
        assert_eq!(v["ok"], false, "{text}");
        Err(v["error"].clone())
    }
}

fn message(error: &Value) -> String {
    error["message"].as_str().unwrap_or_default().to_string()
}

fn demo_stock_with(file: &str, text: &str) -> String {
    let mut stock: serde_json::Map<String, Value> = serde_json::from_str(&demo_stock()).unwrap();
    stock.insert(file.to_string(), Value::from(text));
    Value::Object(stock).to_string()
}

fn never_stop() -> js_sys::Function {
    js_sys::Function::new_no_args("return true;")
}

#[wasm_bindgen_test]
fn demo_need_parses_and_gives_the_ideal_transfer() {
    let checked = open(&check_need(&demo_need(), "demo.toml")).unwrap();
    let derived = &checked["derived"];
    let gain = derived["ideal_gain"].as_f64().unwrap();
    let low = derived["target_low_v"].as_f64().unwrap();
    let high = derived["target_high_v"].as_f64().unwrap();
    assert!(
        gain > 1.0,
        "a small-span sensor needs gain above 1, got {gain}"
    );
    assert!(low < high, "target window {low}..{high}");
    // The gain spans the target window over the sensor span (the job
    // `Vout = K * Vsensor + B`).
    let keys = open(&need_keys(&demo_need(), "demo.toml")).unwrap();
    let span = keys["sensor"]["signal_high_v"].as_f64().unwrap()
        - keys["sensor"]["signal_low_v"].as_f64().unwrap();
    assert!(((high - low) / span - gain).abs() < 1e-9 * gain);
    assert!(checked["need"].is_object());
}

#[wasm_bindgen_test]
fn the_demo_need_as_json_keys_checks_the_same_as_the_toml() {
    let from_toml = check_need(&demo_need(), "demo.toml");
    let keys = open(&need_keys(&demo_need(), "demo.toml")).unwrap();
    let from_json = check_need(&keys.to_string(), "demo.json");
    assert_eq!(from_toml, from_json);
}

#[wasm_bindgen_test]
fn a_bad_value_in_the_need_is_an_error_naming_the_key() {
    let bad = demo_need().replace("bits = 16", "bits = \"sixteen\"");
    assert_ne!(bad, demo_need(), "the demo need changed shape");
    let error = open(&check_need(&bad, "mine.toml")).unwrap_err();
    assert_eq!(error["kind"], "input");
    assert_eq!(error["file"], "mine.toml");
    assert_eq!(error["key"], "adc.bits");
    assert!(message(&error).contains("adc.bits"), "{error}");
    assert!(error["line"].as_u64().is_some_and(|l| l >= 1), "{error}");
}

#[wasm_bindgen_test]
fn a_need_that_is_not_toml_is_an_error_naming_the_line() {
    let error = open(&check_need("[adc]\nlow_v = = 0\n", "broken.toml")).unwrap_err();
    assert_eq!(error["file"], "broken.toml");
    assert_eq!(error["line"], 2);
    let error = open(&need_keys("[adc]\nlow_v = = 0\n", "broken.toml")).unwrap_err();
    assert!(
        message(&error).starts_with("broken.toml, line 2, column "),
        "{error}"
    );
    assert!(error["column"].as_u64().is_some_and(|c| c >= 1), "{error}");
}

#[wasm_bindgen_test]
fn a_bad_stock_cell_is_an_error_naming_file_line_and_column() {
    let demo: Value = serde_json::from_str(&demo_stock()).unwrap();
    let resistors = demo["resistors.csv"].as_str().unwrap();
    let table = open(&read_stock_table("resistors.csv", resistors)).unwrap();
    let cost = table["header"]
        .as_array()
        .unwrap()
        .iter()
        .position(|h| h == "unit_cost")
        .unwrap();
    // The second data row, its unit cost made unreadable.
    let line = table["line_numbers"][1].as_u64().unwrap() as usize;
    let mut lines: Vec<String> = resistors.lines().map(str::to_string).collect();
    let mut cells: Vec<String> = lines[line - 1].split(',').map(str::to_string).collect();
    cells[cost] = "cheap".to_string();
    lines[line - 1] = cells.join(",");
    let broken = lines.join("\n") + "\n";
    let error = open(&check_stock(&demo_stock_with("resistors.csv", &broken))).unwrap_err();
    assert_eq!(error["file"], "resistors.csv");
    assert_eq!(error["line"].as_u64(), Some(line as u64));
    assert_eq!(error["column_name"], "unit_cost");
    // The table reader gives the same error, beside the rows it read.
    let table = open(&read_stock_table("resistors.csv", &broken)).unwrap();
    assert_eq!(table["problem"], error);
    assert_eq!(table["rows"][1][cost], "cheap");
}

#[wasm_bindgen_test]
fn a_stock_that_is_not_an_object_is_an_error() {
    let error = open(&check_stock("[\"resistors.csv\"]")).unwrap_err();
    assert!(message(&error).starts_with("stock: "), "{error}");
    let error = open(&solve(
        &demo_need(),
        "demo.toml",
        "{\"opamps.csv\": 5}",
        &never_stop(),
    ))
    .unwrap_err();
    assert_eq!(error["file"], "opamps.csv");
}

#[wasm_bindgen_test]
fn the_module_keeps_working_after_errors() {
    let good = check_need(&demo_need(), "demo.toml");
    assert!(open(&good).is_ok());
    for round in 0..25 {
        let bad = format!("[sensor]\nlabel = {round}\n[[[");
        assert!(open(&check_need(&bad, "bad.toml")).is_err());
        assert!(open(&check_stock("{\"resistors.csv\": \"\"}")).is_err());
        assert_eq!(check_need(&demo_need(), "demo.toml"), good);
    }
    let counts = open(&check_stock("{}")).unwrap();
    assert!(counts["resistors"].as_u64().unwrap() > 0);
    assert!(counts["opamps"].as_u64().unwrap() > 0);
}

#[wasm_bindgen_test]
fn need_fields_list_every_key_once() {
    let fields: Value = serde_json::from_str(&need_fields()).unwrap();
    let fields = fields.as_array().unwrap();
    let mut keys: Vec<&str> = fields.iter().filter_map(|f| f["key"].as_str()).collect();
    let n = keys.len();
    keys.sort_unstable();
    keys.dedup();
    assert_eq!(keys.len(), n);
    assert!(keys.contains(&"adc.high_v") && keys.contains(&"stock.only"));
}

#[wasm_bindgen_test]
fn the_demo_solves_and_reports_progress() {
    let calls = js_sys::Array::new();
    let record = js_sys::Function::new_with_args(
        "calls",
        "return (done, total, best) => { calls.push([done, total, best]); return true; };",
    );
    let progress: js_sys::Function = record.call1(&JsValue::NULL, &calls).unwrap().into();
    // A debug build on a busy machine can use up the demo's two seconds
    // before its first design; a minute leaves the verdict to the stock.
    let need = demo_need().replace("time_limit_ms = 2000", "time_limit_ms = 60000");
    assert_ne!(need, demo_need(), "the demo need changed shape");
    let bundle = open(&solve(&need, "demo.toml", "{}", &progress)).unwrap();
    assert_eq!(bundle["report"]["status"], "ok", "{bundle}");
    assert!(bundle["report"]["design"]["cost"].as_f64().unwrap() > 0.0);
    assert!(bundle["artifacts"]["svg"]
        .as_str()
        .unwrap()
        .contains("<svg"));
    assert!(bundle["artifacts"]["bom_table"]["rows"].is_array());
    assert!(calls.length() > 0, "the progress callback was never called");
    // The chosen design analysed again gives the same design object, in a
    // bundle of the same shape.
    let design = bundle["report"]["design"].to_string();
    let analysed = open(&analyze(&need, "demo.toml", "{}", &design, "picked")).unwrap();
    assert_eq!(analysed["report"]["design"], bundle["report"]["design"]);
    assert_eq!(analysed["artifacts"], bundle["artifacts"]);
}

#[wasm_bindgen_test]
fn a_callback_that_says_stop_or_throws_ends_the_search_without_an_error() {
    for body in ["return false;", "throw new Error('stop');"] {
        let calls = js_sys::Array::new();
        let make = js_sys::Function::new_with_args(
            "calls",
            &format!("return () => {{ calls.push(1); {body} }};"),
        );
        let progress: js_sys::Function = make.call1(&JsValue::NULL, &calls).unwrap().into();
        let bundle = open(&solve(&demo_need(), "demo.toml", "{}", &progress))
            .unwrap_or_else(|e| panic!("after `{body}`: {e}"));
        let search = &bundle["report"]["search"];
        assert!(bundle["report"]["status"].is_string(), "{bundle}");
        // Stopped at the first report: nothing was evaluated, nothing proven.
        assert_eq!(search["evaluated"], 0, "after `{body}`: {search}");
        assert_eq!(search["proven_optimal"], false, "after `{body}`: {search}");
        assert!(calls.length() >= 1);
    }
}

#[wasm_bindgen_test]
fn solve_exhaustive_walks_every_design_and_stops_when_asked() {
    let make =
        js_sys::Function::new_with_args("calls", "return () => { calls.push(1); return false; };");
    let calls = js_sys::Array::new();
    let progress: js_sys::Function = make.call1(&JsValue::NULL, &calls).unwrap().into();
    let bundle = open(&solve_exhaustive(
        &demo_need(),
        "demo.toml",
        "{}",
        &progress,
    ))
    .unwrap();
    let search = &bundle["report"]["search"];
    assert_eq!(search["mode"], "exhaustive", "{search}");
    assert_eq!(search["proven_optimal"], false, "{search}");
    assert!(calls.length() >= 1, "the walk reports progress");
}
