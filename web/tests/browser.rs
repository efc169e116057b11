//! Browser tests of the wasm exports, run in headless Chromium by
//! wasm-bindgen-test-runner (`cargo test -p spanfit-web --target
//! wasm32-unknown-unknown`, with CHROMEDRIVER set). They call the exports as
//! the page does and look at what JavaScript receives: `Error` objects with
//! the core's message, and a module that keeps working afterwards.
#![cfg(target_arch = "wasm32")]

use spanfit_web::{check_need, check_stock, demo_need, demo_stock, need_keys, solve};
use wasm_bindgen::prelude::*;
use wasm_bindgen::JsCast;
use wasm_bindgen_test::*;

wasm_bindgen_test_configure!(run_in_browser);

/// The message of the JavaScript error an export threw, checking that it
/// is a real `Error`.
fn js_message(err: JsError) -> String {
    let value = JsValue::from(err);
    let error = value
        .dyn_ref::<js_sys::Error>()
        .expect("exports throw Error objects");
    String::from(error.message())
}

fn demo_stock_with(file: &str, text: &str) -> String {
    let mut stock: serde_json::Map<String, serde_json::Value> =
        serde_json::from_str(&demo_stock()).unwrap();
    stock.insert(file.to_string(), serde_json::Value::from(text));
    serde_json::Value::Object(stock).to_string()
}

fn never_stop() -> js_sys::Function {
    js_sys::Function::new_no_args("return true;")
}

#[wasm_bindgen_test]
fn demo_need_parses_and_gives_the_ideal_transfer() {
    let checked: serde_json::Value =
        serde_json::from_str(&check_need(&demo_need(), "demo.toml").unwrap()).unwrap();
    let derived = &checked["derived"];
    let gain = derived["ideal_gain"].as_f64().unwrap();
    let low = derived["target_low_v"].as_f64().unwrap();
    let high = derived["target_high_v"].as_f64().unwrap();
    let need = &checked["need"];
    assert!(
        gain > 1.0,
        "a small-span sensor needs gain above 1, got {gain}"
    );
    assert!(low < high, "target window {low}..{high}");
    // The gain spans the target window over the sensor span (docs/need.md, "What the reader derives").
    let keys: serde_json::Value =
        serde_json::from_str(&need_keys(&demo_need(), "demo.toml").unwrap()).unwrap();
    let span = keys["sensor"]["signal_high_v"].as_f64().unwrap()
        - keys["sensor"]["signal_low_v"].as_f64().unwrap();
    assert!(((high - low) / span - gain).abs() < 1e-9 * gain);
    assert!(need.is_object());
}

#[wasm_bindgen_test]
fn the_demo_need_as_json_keys_checks_the_same_as_the_toml() {
    let from_toml = check_need(&demo_need(), "demo.toml").unwrap();
    let keys = need_keys(&demo_need(), "demo.toml").unwrap();
    let from_json = check_need(&keys, "demo.json").unwrap();
    assert_eq!(from_toml, from_json);
}

#[wasm_bindgen_test]
fn a_bad_value_in_the_need_throws_an_error_naming_the_key() {
    let bad = demo_need().replace("bits = 16", "bits = \"sixteen\"");
    assert_ne!(bad, demo_need(), "the demo need changed shape");
    let message = js_message(check_need(&bad, "mine.toml").unwrap_err());
    assert!(message.contains("mine.toml"), "{message}");
    assert!(message.contains("adc.bits"), "{message}");
}

#[wasm_bindgen_test]
fn a_need_that_is_not_toml_throws_an_error_naming_the_line() {
    let message = js_message(check_need("[adc]\nlow_v = = 0\n", "broken.toml").unwrap_err());
    assert!(message.contains("broken.toml"), "{message}");
    assert!(message.contains("line 2"), "{message}");
    let message = js_message(need_keys("[adc]\nlow_v = = 0\n", "broken.toml").unwrap_err());
    assert!(
        message.starts_with("broken.toml, line 2, column "),
        "{message}"
    );
}

#[wasm_bindgen_test]
fn a_bad_stock_cell_throws_an_error_naming_file_and_line() {
    let demo: serde_json::Value = serde_json::from_str(&demo_stock()).unwrap();
    let resistors = demo["resistors.csv"].as_str().unwrap();
    let mut lines: Vec<String> = resistors.lines().map(str::to_string).collect();
    assert!(lines.len() >= 3, "the demo resistor table has rows");
    // Line 3 of the file: second data row, the unit cost made unreadable.
    let mut cells: Vec<String> = lines[2].split(',').map(str::to_string).collect();
    let header: Vec<&str> = lines[0].split(',').collect();
    let cost = header.iter().position(|h| *h == "unit_cost").unwrap();
    cells[cost] = "cheap".to_string();
    lines[2] = cells.join(",");
    let stock = demo_stock_with("resistors.csv", &(lines.join("\n") + "\n"));
    let message = js_message(check_stock(&stock).unwrap_err());
    assert!(message.contains("resistors.csv"), "{message}");
    assert!(message.contains("line 3"), "{message}");
    assert!(message.contains("unit_cost"), "{message}");
}

#[wasm_bindgen_test]
fn a_stock_that_is_not_an_object_throws() {
    let message = js_message(check_stock("[\"resistors.csv\"]").unwrap_err());
    assert!(message.starts_with("stock: "), "{message}");
    let message = js_message(
        solve(
            &demo_need(),
            "demo.toml",
            "{\"opamps.csv\": 5}",
            &never_stop(),
        )
        .unwrap_err(),
    );
    assert!(message.contains("opamps.csv"), "{message}");
}

#[wasm_bindgen_test]
fn the_module_keeps_working_after_errors() {
    let good = check_need(&demo_need(), "demo.toml").unwrap();
    for round in 0..25 {
        let bad = format!("[sensor]\nlabel = {round}\n[[[");
        assert!(check_need(&bad, "bad.toml").is_err());
        assert!(check_stock("{\"resistors.csv\": \"\"}").is_err());
        assert_eq!(check_need(&demo_need(), "demo.toml").unwrap(), good);
    }
    let counts: serde_json::Value = serde_json::from_str(&check_stock("{}").unwrap()).unwrap();
    assert!(counts["resistors"].as_u64().unwrap() > 0);
    assert!(counts["opamps"].as_u64().unwrap() > 0);
}

#[wasm_bindgen_test]
fn the_demo_solves_and_reports_progress() {
    let calls = js_sys::Array::new();
    let record = js_sys::Function::new_with_args(
        "calls",
        "return (done, total, best) => { calls.push([done, total, best]); return true; };",
    );
    let progress: js_sys::Function = record.call1(&JsValue::NULL, &calls).unwrap().into();
    let text = solve(&demo_need(), "demo.toml", "{}", &progress).unwrap();
    let bundle: serde_json::Value = serde_json::from_str(&text).unwrap();
    assert_eq!(bundle["report"]["status"], "ok", "{text}");
    assert!(bundle["report"]["design"]["cost"].as_f64().unwrap() > 0.0);
    assert!(bundle["artifacts"]["svg"]
        .as_str()
        .unwrap()
        .contains("<svg"));
    assert!(calls.length() > 0, "the progress callback was never called");
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
        let text = solve(&demo_need(), "demo.toml", "{}", &progress)
            .map_err(js_message)
            .unwrap();
        let bundle: serde_json::Value = serde_json::from_str(&text).unwrap();
        let search = &bundle["report"]["search"];
        assert!(bundle["report"]["status"].is_string(), "{text}");
        // Stopped at the first report: nothing was evaluated, nothing proven.
        assert_eq!(search["evaluated"], 0, "after `{body}`: {search}");
        assert_eq!(search["proven_optimal"], false, "after `{body}`: {search}");
        assert!(calls.length() >= 1);
    }
}
