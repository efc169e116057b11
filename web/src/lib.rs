//! # spanfit-web
//!
//! The spanfit core compiled to WebAssembly for the static page. This crate
//! holds no engineering: each exported function turns JavaScript strings
//! into the core's inputs, calls one function of [`spanfit::api`] (or the
//! need and stock parsers), and hands back JSON text. Errors become
//! JavaScript `Error`s whose message is the core error's `Display` text
//! unchanged, so the page shows the same words as the command line.
//!
//! The work is split in two layers:
//! - plain Rust functions ([`check_need_text`], [`solve_text`] ...) that
//!   take Rust closures and return `Result<String, String>`; they build and
//!   are tested natively;
//! - the `#[wasm_bindgen]` exports ([`check_need`], [`solve`] ...), a line
//!   or two each, that adapt JavaScript callbacks and errors.
//!
//! Every call runs inside [`guarded`], which turns a panic into an error
//! message where unwinding is available (native builds). On
//! `wasm32-unknown-unknown` a panic aborts the call instead; the panic hook
//! installed at start-up writes the message to `console.error` first, and
//! the page replaces the worker that hosted the module.
//!
//! ```
//! let summary = spanfit_web::stock_files_from_json("{}").unwrap();
//! assert!(summary.is_empty()); // empty object: the demo stock is used
//! ```

use spanfit::api::{Progress, SolveControl};
use spanfit::stock::StockFile;
use std::panic::{catch_unwind, AssertUnwindSafe};
use wasm_bindgen::prelude::*;

/// The file name the page uses for a design handed to [`analyze`].
pub const DESIGN_NAME: &str = "design.json";

/// Run `work`, turning a panic into an error message. Input problems are
/// already `Err` values; this catches the bugs, so a malformed input never
/// takes the module down where the target can unwind.
pub fn guarded<T>(work: impl FnOnce() -> Result<T, String>) -> Result<T, String> {
    match catch_unwind(AssertUnwindSafe(work)) {
        Ok(result) => result,
        Err(payload) => {
            let text = payload
                .downcast_ref::<&str>()
                .map(|s| (*s).to_string())
                .or_else(|| payload.downcast_ref::<String>().cloned())
                .unwrap_or_else(|| "no message".to_string());
            Err(format!(
                "internal error in spanfit (please report it): {text}"
            ))
        }
    }
}

/// Read the page's stock object `{"resistors.csv": "<csv text>", ...}` into
/// parser input. An empty object (or empty text) gives no files, which the
/// core takes as "use the embedded demo stock".
pub fn stock_files_from_json(stock_json: &str) -> Result<Vec<StockFile>, String> {
    if stock_json.trim().is_empty() {
        return Ok(Vec::new());
    }
    let value: serde_json::Value = serde_json::from_str(stock_json).map_err(|e| {
        format!(
            "stock: expected a JSON object mapping file names to CSV text; line {}, column {}: {e}",
            e.line(),
            e.column()
        )
    })?;
    let serde_json::Value::Object(map) = value else {
        return Err(format!(
            "stock: expected a JSON object mapping file names (resistors.csv, opamps.csv, references.csv, inamps.csv) to CSV text, found {}",
            json_kind(&value)
        ));
    };
    map.into_iter()
        .map(|(name, text)| match text {
            serde_json::Value::String(text) => Ok(StockFile {
                name,
                bytes: text.into_bytes(),
            }),
            other => Err(format!(
                "stock, file `{name}`: expected the CSV text as a string, found {}",
                json_kind(&other)
            )),
        })
        .collect()
}

fn json_kind(value: &serde_json::Value) -> &'static str {
    match value {
        serde_json::Value::Null => "null",
        serde_json::Value::Bool(_) => "a boolean",
        serde_json::Value::Number(_) => "a number",
        serde_json::Value::String(_) => "a string",
        serde_json::Value::Array(_) => "an array",
        serde_json::Value::Object(_) => "an object",
    }
}

fn to_json(value: &impl serde::Serialize) -> Result<String, String> {
    serde_json::to_string(value).map_err(|e| format!("internal error: cannot write JSON: {e}"))
}

/// Validate a need (TOML, or JSON when it starts with `{`). Returns
/// `{"need": <validated need>, "derived": {...}}` where `derived` holds the
/// figures the form shows beside the inputs (ideal gain and offset, target
/// window, LSB, volts per unit of the physical quantity).
pub fn check_need_text(need_text: &str, need_name: &str) -> Result<String, String> {
    let need =
        spanfit::need::parse_need(need_text.as_bytes(), need_name).map_err(|e| e.to_string())?;
    let (target_low, target_high) = need.target_window();
    let (gain, offset) = need.ideal_transfer();
    let derived = serde_json::json!({
        "full_scale_v": need.full_scale(),
        "lsb_v": need.lsb(),
        "target_low_v": target_low,
        "target_high_v": target_high,
        "ideal_gain": gain,
        "ideal_offset_v": offset,
        "volts_per_unit": need.volts_per_unit(),
        "max_delta_t_c": need.max_delta_t(),
    });
    to_json(&serde_json::json!({ "need": need, "derived": derived }))
}

/// Turn need text (TOML, or JSON when it starts with `{`) into the JSON
/// object of its raw keys, as the form holds them. Only the syntax is
/// checked here; [`check_need_text`] validates the values.
pub fn need_keys_text(need_text: &str, need_name: &str) -> Result<String, String> {
    let value: serde_json::Value = if need_text.trim_start().starts_with('{') {
        serde_json::from_str(need_text)
            .map_err(|e| format!("{need_name}, line {}, column {}: {e}", e.line(), e.column()))?
    } else {
        let table: toml::Table = toml::from_str(need_text).map_err(|e| {
            let message = e.message().to_string();
            match e.span() {
                Some(span) => {
                    let (line, column) = line_column(need_text, span.start);
                    format!("{need_name}, line {line}, column {column}: {message}")
                }
                None => format!("{need_name}: {message}"),
            }
        })?;
        serde_json::to_value(table).map_err(|e| format!("{need_name}: {e}"))?
    };
    to_json(&value)
}

/// 1-based line and column (in characters) of a byte offset.
fn line_column(text: &str, byte_offset: usize) -> (usize, usize) {
    let mut end = byte_offset.min(text.len());
    while !text.is_char_boundary(end) {
        end -= 1;
    }
    let before = &text[..end];
    let line = before.matches('\n').count() + 1;
    let column = before.rsplit('\n').next().map_or(0, |s| s.chars().count()) + 1;
    (line, column)
}

/// Parse a stock (the page's JSON object of CSV texts) and count its parts:
/// `{"resistors": n, "opamps": n, "references": n, "inamps": n}`. The core
/// reports the first problem with file, line and column.
pub fn check_stock_text(stock_json: &str) -> Result<String, String> {
    let files = stock_files_from_json(stock_json)?;
    let files = if files.is_empty() {
        spanfit::demo::stock_files()
    } else {
        files
    };
    let stock = spanfit::stock::parse_stock(&files).map_err(|e| e.to_string())?;
    to_json(&serde_json::json!({
        "resistors": stock.resistors.len(),
        "opamps": stock.opamps.len(),
        "references": stock.references.len(),
        "inamps": stock.inamps.len(),
    }))
}

/// Solve a need against a stock; returns the core's bundle
/// `{"report": ..., "artifacts": ...}` as JSON text. `progress` is called
/// now and then and returns `false` to stop (the best design so far is
/// returned); `now_ms` is the clock.
pub fn solve_text(
    need_text: &str,
    need_name: &str,
    stock_json: &str,
    progress: &mut dyn FnMut(Progress) -> bool,
    now_ms: &dyn Fn() -> f64,
) -> Result<String, String> {
    let files = stock_files_from_json(stock_json)?;
    let mut control = SolveControl { progress, now_ms };
    let bundle =
        spanfit::api::solve_bundle(need_text.as_bytes(), need_name, &files, false, &mut control)
            .map_err(|e| e.to_string())?;
    to_json(&bundle)
}

/// Analyse a design the user already has (a design object as in the
/// report); returns `{"design": ..., "artifacts": ...}` as JSON text.
pub fn analyze_text(
    need_text: &str,
    need_name: &str,
    stock_json: &str,
    design_json: &str,
) -> Result<String, String> {
    let files = stock_files_from_json(stock_json)?;
    let bundle = spanfit::api::analyze_bundle(
        need_text.as_bytes(),
        need_name,
        &files,
        design_json.as_bytes(),
        DESIGN_NAME,
    )
    .map_err(|e| e.to_string())?;
    to_json(&bundle)
}

/// The demo stock as `{"resistors.csv": "<csv text>", ...}`.
pub fn demo_stock_text() -> String {
    let map: serde_json::Map<String, serde_json::Value> = spanfit::demo::STOCK
        .iter()
        .map(|(name, text)| ((*name).to_string(), serde_json::Value::from(*text)))
        .collect();
    serde_json::Value::Object(map).to_string()
}

fn js_error(message: String) -> JsError {
    JsError::new(&message)
}

/// Validate a need; see [`check_need_text`]. Throws an `Error` naming the
/// file, key, line or column on bad input.
#[wasm_bindgen]
pub fn check_need(need_text: &str, need_name: &str) -> Result<String, JsError> {
    guarded(|| check_need_text(need_text, need_name)).map_err(js_error)
}

/// The raw keys of a need (TOML or JSON) as a JSON object; see
/// [`need_keys_text`].
#[wasm_bindgen]
pub fn need_keys(need_text: &str, need_name: &str) -> Result<String, JsError> {
    guarded(|| need_keys_text(need_text, need_name)).map_err(js_error)
}

/// Parse a stock and count its parts; see [`check_stock_text`].
#[wasm_bindgen]
pub fn check_stock(stock_json: &str) -> Result<String, JsError> {
    guarded(|| check_stock_text(stock_json)).map_err(js_error)
}

/// Solve a need. `stock_json` maps file names to CSV text (`{}` is the demo
/// stock). `progress_callback(done, total, best_cost)` is called now and
/// then (`best_cost` is `null` before the first design); returning `false`
/// stops the search, which then returns the best design so far. A callback
/// that throws stops the search too.
#[wasm_bindgen]
pub fn solve(
    need_text: &str,
    need_name: &str,
    stock_json: &str,
    progress_callback: &js_sys::Function,
) -> Result<String, JsError> {
    let mut progress = |p: Progress| -> bool {
        let best = p.best_cost.map_or(JsValue::NULL, JsValue::from_f64);
        match progress_callback.call3(
            &JsValue::NULL,
            &JsValue::from_f64(p.done as f64),
            &JsValue::from_f64(p.total as f64),
            &best,
        ) {
            Ok(answer) => answer != JsValue::FALSE,
            Err(_) => false,
        }
    };
    let now_ms = js_sys::Date::now;
    guarded(|| solve_text(need_text, need_name, stock_json, &mut progress, &now_ms))
        .map_err(js_error)
}

/// Analyse a given design against a need and stock; see [`analyze_text`].
#[wasm_bindgen]
pub fn analyze(
    need_text: &str,
    need_name: &str,
    stock_json: &str,
    design_json: &str,
) -> Result<String, JsError> {
    guarded(|| analyze_text(need_text, need_name, stock_json, design_json)).map_err(js_error)
}

/// The demo need, as TOML text.
#[wasm_bindgen]
pub fn demo_need() -> String {
    spanfit::demo::NEED_TOML.to_string()
}

/// The demo stock, as JSON text mapping file names to CSV text.
#[wasm_bindgen]
pub fn demo_stock() -> String {
    demo_stock_text()
}

/// The version of this build.
#[wasm_bindgen]
pub fn version() -> String {
    env!("CARGO_PKG_VERSION").to_string()
}

/// Panic on purpose. A diagnostic for the page's self-check and the tests:
/// it shows that a panic reaches `console.error` through the hook and that
/// the page recovers by replacing the worker.
#[wasm_bindgen]
pub fn diagnostic_panic() {
    let reason = std::hint::black_box("diagnostic panic requested");
    panic!("{reason}");
}

#[cfg(target_arch = "wasm32")]
#[wasm_bindgen]
extern "C" {
    #[wasm_bindgen(js_namespace = console, js_name = error)]
    fn console_error(message: &str);
}

/// Install the panic hook: a panic writes `spanfit panic: <message>` to
/// `console.error` before the call aborts. Runs by itself when the module
/// starts; calling it again is harmless.
#[wasm_bindgen]
pub fn install_panic_hook() {
    #[cfg(target_arch = "wasm32")]
    {
        use std::sync::Once;
        static HOOK: Once = Once::new();
        if std::thread::panicking() {
            // After an aborted panic the hook can no longer be changed.
            return;
        }
        HOOK.call_once(|| {
            std::panic::set_hook(Box::new(|info| {
                console_error(&format!("spanfit panic: {info}"));
            }));
        });
    }
}

#[cfg(target_arch = "wasm32")]
#[wasm_bindgen(start)]
fn start() {
    install_panic_hook();
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn empty_stock_object_means_demo_stock() {
        assert!(stock_files_from_json("{}").unwrap().is_empty());
        assert!(stock_files_from_json("  ").unwrap().is_empty());
    }

    #[test]
    fn stock_object_becomes_files_by_name() {
        let files =
            stock_files_from_json(r#"{"resistors.csv":"a,b\n1,2\n","opamps.csv":""}"#).unwrap();
        let names: Vec<&str> = files.iter().map(|f| f.name.as_str()).collect();
        assert_eq!(names, ["opamps.csv", "resistors.csv"]);
        let resistors = files.iter().find(|f| f.name == "resistors.csv").unwrap();
        assert_eq!(resistors.bytes, b"a,b\n1,2\n");
    }

    #[test]
    fn stock_that_is_not_json_names_line_and_column() {
        let err = stock_files_from_json("{\n \"resistors.csv\": nope}").unwrap_err();
        assert!(err.starts_with("stock: "), "{err}");
        assert!(err.contains("line 2, column"), "{err}");
    }

    #[test]
    fn stock_that_is_not_an_object_says_what_it_found() {
        let err = stock_files_from_json("[1, 2]").unwrap_err();
        assert!(err.contains("found an array"), "{err}");
        let err = stock_files_from_json(r#"{"opamps.csv": 3}"#).unwrap_err();
        assert!(err.contains("file `opamps.csv`"), "{err}");
        assert!(err.contains("found a number"), "{err}");
    }

    #[test]
    fn demo_stock_round_trips_to_the_embedded_tables() {
        let files = stock_files_from_json(&demo_stock_text()).unwrap();
        assert_eq!(files.len(), spanfit::demo::STOCK.len());
        for (name, text) in spanfit::demo::STOCK {
            let file = files.iter().find(|f| f.name == name).unwrap();
            assert_eq!(file.bytes, text.as_bytes(), "{name}");
        }
    }

    #[test]
    fn need_keys_turn_the_demo_toml_into_its_sections() {
        let keys: serde_json::Value =
            serde_json::from_str(&need_keys_text(&demo_need(), "demo.toml").unwrap()).unwrap();
        let demo: toml::Table = toml::from_str(spanfit::demo::NEED_TOML).unwrap();
        assert_eq!(
            keys["adc"]["bits"].as_i64(),
            demo["adc"]["bits"].as_integer()
        );
        assert_eq!(
            keys["sensor"]["signal_high_v"].as_f64(),
            demo["sensor"]["signal_high_v"].as_float()
        );
        let topologies = keys["search"]["topologies"].as_array().unwrap();
        assert_eq!(
            topologies.len(),
            demo["search"]["topologies"].as_array().unwrap().len()
        );
    }

    #[test]
    fn need_keys_name_line_and_column_of_a_toml_mistake() {
        let err = need_keys_text("[adc]\nlow_v = 0.0\nhigh_v = = 3\n", "mine.toml").unwrap_err();
        assert!(err.starts_with("mine.toml, line 3, column "), "{err}");
        let err = need_keys_text("{\"adc\": }", "mine.json").unwrap_err();
        assert!(err.starts_with("mine.json, line 1, column "), "{err}");
    }

    #[test]
    fn line_column_counts_characters_not_bytes() {
        assert_eq!(line_column("ab\ncd", 4), (2, 2));
        assert_eq!(line_column("\u{b5}x", 2), (1, 2));
        assert_eq!(line_column("\u{b5}x", 1), (1, 1));
        assert_eq!(line_column("abc", 99), (1, 4));
    }

    #[test]
    fn guarded_turns_a_panic_into_an_error() {
        let err = guarded::<()>(|| {
            let reason = std::hint::black_box("boom");
            panic!("{reason}")
        })
        .unwrap_err();
        assert!(err.contains("internal error"), "{err}");
        assert!(err.contains("boom"), "{err}");
        assert_eq!(guarded(|| Ok::<_, String>(7)), Ok(7));
    }

    #[test]
    fn check_need_errors_keep_the_core_message() {
        let err = check_need_text("not = [valid", "need.toml").unwrap_err();
        let core = spanfit::need::parse_need(b"not = [valid", "need.toml").unwrap_err();
        assert_eq!(err, core.to_string());
        assert!(err.contains("need.toml"), "{err}");
    }

    #[test]
    fn check_stock_errors_keep_the_core_message() {
        let stock = r#"{"resistors.csv": "part_id,value_ohms\nR1,abc\n"}"#;
        let err = check_stock_text(stock).unwrap_err();
        let core = spanfit::stock::parse_stock(&stock_files_from_json(stock).unwrap()).unwrap_err();
        assert_eq!(err, core.to_string());
        assert!(err.contains("resistors.csv"), "{err}");
    }

    #[test]
    fn solve_errors_keep_the_core_message() {
        let mut progress = |_: Progress| true;
        let clock = || 0.0;
        let ours = solve_text("[adc]\n", "bad.toml", "{}", &mut progress, &clock);
        let mut progress = |_: Progress| true;
        let mut control = SolveControl {
            progress: &mut progress,
            now_ms: &clock,
        };
        let core = spanfit::api::solve_bundle(b"[adc]\n", "bad.toml", &[], false, &mut control);
        assert_eq!(ours.unwrap_err(), core.unwrap_err().to_string());
    }
}
