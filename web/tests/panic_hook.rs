//! The panic hook, in a test binary of its own: a panic on
//! `wasm32-unknown-unknown` aborts the call and leaves the module's panic
//! state set, so it must not share a module instance with other tests.
#![cfg(target_arch = "wasm32")]
// wasm-bindgen-test functions are tests, though clippy does not know them as such.
#![allow(clippy::unwrap_used)]

use spanfit_web::{check_need, demo_need};
use wasm_bindgen::prelude::*;
use wasm_bindgen_test::*;

wasm_bindgen_test_configure!(run_in_browser);

#[wasm_bindgen_test]
fn a_panic_reaches_console_error_and_the_caller_sees_an_exception() {
    spanfit_web::install_panic_hook();
    // Capture console.error, call the panicking export from JavaScript, and
    // put console.error back.
    let capture = js_sys::Function::new_no_args(
        "globalThis.__spanfitErrors = []; globalThis.__spanfitOldError = console.error; \
         console.error = (...a) => { globalThis.__spanfitErrors.push(a.join(' ')); };",
    );
    capture.call0(&JsValue::NULL).unwrap();
    let call = js_sys::Function::new_with_args(
        "f",
        "try { f(); return 'no exception'; } catch (e) { return e.constructor.name + ': ' + e.message; } \
         finally { console.error = globalThis.__spanfitOldError; }",
    );
    let panicking = Closure::<dyn FnMut()>::new(spanfit_web::diagnostic_panic);
    let outcome = call
        .call1(&JsValue::NULL, panicking.as_ref())
        .unwrap()
        .as_string()
        .unwrap();
    panicking.forget();
    assert!(outcome.starts_with("RuntimeError"), "{outcome}");
    let logged = js_sys::Reflect::get(&js_sys::global(), &"__spanfitErrors".into()).unwrap();
    let logged: Vec<String> = js_sys::Array::from(&logged)
        .iter()
        .filter_map(|v| v.as_string())
        .collect();
    assert!(
        logged
            .iter()
            .any(|m| m.contains("spanfit panic: ") && m.contains("diagnostic panic requested")),
        "{logged:?}"
    );
    // Plain calls still work after the trap.
    let answer: serde_json::Value =
        serde_json::from_str(&check_need(&demo_need(), "demo.toml")).unwrap();
    assert_eq!(answer["ok"], true, "{answer}");
}
