//! # spanfit-web
//!
//! The spanfit core compiled to WebAssembly for the static page. This crate
//! holds no engineering: each exported function turns JavaScript strings
//! into the core's inputs, calls one function of [`spanfit::api`] (or the
//! need and stock readers), and hands back JSON text.
//!
//! Every export that reads user input returns an *envelope*:
//! `{"ok": true, "value": ...}` or `{"ok": false, "error": {...}}`, where
//! the error is the core's [`ErrorReport`] (kind, the full message as the
//! command line prints it, the detail, and file, line, column, CSV column
//! name and key where known). Bad input never throws; only a bug (a panic,
//! which aborts the call on `wasm32-unknown-unknown`) does. `web/README.md`
//! lists the exports and their values.
//!
//! The work is split in two layers:
//! - plain Rust functions ([`check_need_value`], [`solve_value`] ...) that
//!   take Rust closures and return `Result<T, spanfit::Error>`; they build
//!   and are tested natively;
//! - the `#[wasm_bindgen]` exports ([`check_need`], [`solve`] ...), a line
//!   or two each, that adapt JavaScript callbacks and run the plain
//!   function inside [`guarded`], which returns the envelope.
//!
//! Every call runs inside [`guarded`], which turns a panic into an
//! `internal` error where unwinding is available (native builds). On
//! `wasm32-unknown-unknown` a panic aborts the call instead; the panic hook
//! installed at start-up writes the message to `console.error` first, and
//! the page replaces the worker that hosted the module.
//!
//! ```
//! let files = spanfit_web::stock_files_from_json("{}").unwrap();
//! assert!(files.is_empty()); // empty object: the demo stock is used
//! ```

use serde::Serialize;
use serde_json::{json, Value};
use spanfit::api::{Progress, SolveControl};
use spanfit::need_fields::FieldKind;
use spanfit::report::ErrorReport;
use spanfit::stock::StockFile;
use spanfit::{Error, Location};
use std::panic::{catch_unwind, AssertUnwindSafe};
use wasm_bindgen::prelude::*;

pub mod gallery;

/// Run `work` and wrap its outcome in the envelope ([`envelope`]),
/// turning a panic into an `internal` error. Input problems are already
/// `Err` values; this catches the bugs, so a malformed input never takes
/// the module down where the target can unwind.
pub fn guarded<T: Serialize>(work: impl FnOnce() -> Result<T, Error>) -> String {
    let result = match catch_unwind(AssertUnwindSafe(work)) {
        Ok(result) => result.map_err(|e| e.report()),
        Err(payload) => {
            let text = payload
                .downcast_ref::<&str>()
                .map(|s| (*s).to_string())
                .or_else(|| payload.downcast_ref::<String>().cloned())
                .unwrap_or_else(|| "no message".to_string());
            Err(ErrorReport::internal(format!(
                "internal error in spanfit (please report it): {text}"
            )))
        }
    };
    envelope(result)
}

/// The envelope of a result, as JSON text: `{"ok": true, "value": V}` or
/// `{"ok": false, "error": E}`.
pub fn envelope<T: Serialize>(result: Result<T, ErrorReport>) -> String {
    let text = match &result {
        Ok(value) => serde_json::to_string(&json!({"ok": true, "value": value})),
        Err(error) => serde_json::to_string(&json!({"ok": false, "error": error})),
    };
    text.unwrap_or_else(|e| {
        let error = ErrorReport::internal(format!("internal error: cannot write JSON: {e}"));
        json!({"ok": false, "error": error}).to_string()
    })
}

/// A location naming a line and column of a text.
fn at(file: &str, line: usize, column: usize) -> Location {
    let mut at = Location::file(file);
    at.line = Some(line);
    at.column = Some(column.to_string());
    at
}

/// Read the page's stock object `{"resistors.csv": "<csv text>", ...}` into
/// reader input. An empty object (or empty text) gives no files, which the
/// core takes as "use the embedded demo stock".
pub fn stock_files_from_json(stock_json: &str) -> Result<Vec<StockFile>, Error> {
    if stock_json.trim().is_empty() {
        return Ok(Vec::new());
    }
    let value: Value = serde_json::from_str(stock_json).map_err(|e| {
        let full = e.to_string();
        let message = full
            .rsplit_once(" at line ")
            .map_or(full.as_str(), |(head, _)| head);
        Error::input(
            at("stock", e.line(), e.column()),
            format!("expected a JSON object mapping file names to CSV text: {message}"),
        )
    })?;
    let Value::Object(map) = value else {
        return Err(Error::input(
            Location::file("stock"),
            format!(
                "expected a JSON object mapping file names (resistors.csv, opamps.csv, references.csv, inamps.csv, capacitors.csv, networks.csv) to CSV text, found {}",
                json_kind(&value)
            ),
        ));
    };
    map.into_iter()
        .map(|(name, text)| match text {
            Value::String(text) => Ok(StockFile {
                name,
                bytes: text.into_bytes(),
            }),
            other => Err(Error::input(
                Location::file(&name),
                format!(
                    "expected the CSV text of the file as a string in the stock object, found {}",
                    json_kind(&other)
                ),
            )),
        })
        .collect()
}

fn json_kind(value: &Value) -> &'static str {
    match value {
        Value::Null => "null",
        Value::Bool(_) => "a boolean",
        Value::Number(_) => "a number",
        Value::String(_) => "a string",
        Value::Array(_) => "an array",
        Value::Object(_) => "an object",
    }
}

/// Validate a need (TOML, or JSON when it starts with `{`). The value is
/// `{"need": <validated need>, "derived": {...}}` where `derived` holds the
/// figures the form shows beside the inputs (ideal gain and offset, target
/// window, LSB, volts per unit of the physical quantity).
pub fn check_need_value(need_text: &str, need_name: &str) -> Result<Value, Error> {
    let need = spanfit::need::parse_need(need_text.as_bytes(), need_name)?;
    let (target_low, target_high) = need.target_window();
    let (gain, offset) = need.ideal_transfer();
    let derived = json!({
        "full_scale_v": need.full_scale(),
        "lsb_v": need.lsb(),
        "target_low_v": target_low,
        "target_high_v": target_high,
        "ideal_gain": gain,
        "ideal_offset_v": offset,
        "volts_per_unit": need.volts_per_unit(),
        "max_delta_t_c": need.max_delta_t(),
    });
    Ok(json!({ "need": need, "derived": derived }))
}

/// Turn need text (TOML, or JSON when it starts with `{`) into the JSON
/// object of its raw keys, as the form holds them. Only the syntax is
/// checked here; [`check_need_value`] validates the values.
pub fn need_keys_value(need_text: &str, need_name: &str) -> Result<Value, Error> {
    if need_text.trim_start().starts_with('{') {
        return serde_json::from_str(need_text)
            .map_err(|e| Error::input(at(need_name, e.line(), e.column()), e.to_string()));
    }
    let table: toml::Table = toml::from_str(need_text).map_err(|e| {
        let message = e.message().to_string();
        let location = match e.span() {
            Some(span) => {
                let (line, column) = line_column(need_text, span.start);
                at(need_name, line, column)
            }
            None => Location::file(need_name),
        };
        Error::input(location, message)
    })?;
    serde_json::to_value(table).map_err(|e| Error::input(Location::file(need_name), e.to_string()))
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

/// Read a stock (the page's JSON object of CSV texts) and count its parts:
/// `{"resistors": n, "opamps": n, "references": n, "inamps": n,
/// "capacitors": n, "networks": n}` (resistor and capacitor families count
/// each value; a network counts once per row).
/// The core
/// reports the first problem with file, line and column.
pub fn check_stock_value(stock_json: &str) -> Result<Value, Error> {
    let files = stock_files_from_json(stock_json)?;
    let files = if files.is_empty() {
        spanfit::demo::stock_files()
    } else {
        files
    };
    let stock = spanfit::stock::parse_stock(&files)?;
    Ok(json!({
        "resistors": stock.resistors.len(),
        "opamps": stock.opamps.len(),
        "references": stock.references.len(),
        "inamps": stock.inamps.len(),
        "capacitors": stock.capacitors.len(),
        "networks": stock.networks.len(),
    }))
}

/// One stock table as the core reads it: `{"file", "kind", "header",
/// "rows", "line_numbers", "problem"}`, where `problem` is the first row
/// check that failed (or null) (see [`spanfit::stock_table::StockTable`]).
pub fn read_stock_table_value(
    file_name: &str,
    csv_text: &str,
) -> Result<spanfit::stock_table::StockTable, Error> {
    spanfit::stock_table::read_stock_table(file_name, csv_text.as_bytes())
}

/// Solve a need against a stock; the value is the core's bundle
/// `{"report", "artifacts", "text"}`. `progress` is called now and then
/// and returns `false` to stop (the best design so far is returned);
/// `now_ms` is the clock.
pub fn solve_value(
    need_text: &str,
    need_name: &str,
    stock_json: &str,
    progress: &mut dyn FnMut(Progress) -> bool,
    now_ms: &dyn Fn() -> f64,
) -> Result<spanfit::report::Bundle, Error> {
    solve_mode_value(need_text, need_name, stock_json, false, progress, now_ms)
}

/// As [`solve_value`], with the search mode chosen: `exhaustive` walks
/// every design of the space (no time limit of its own; only a stop ends
/// it early), as the command line's `--exhaustive` does.
pub fn solve_mode_value(
    need_text: &str,
    need_name: &str,
    stock_json: &str,
    exhaustive: bool,
    progress: &mut dyn FnMut(Progress) -> bool,
    now_ms: &dyn Fn() -> f64,
) -> Result<spanfit::report::Bundle, Error> {
    let files = stock_files_from_json(stock_json)?;
    let mut control = SolveControl { progress, now_ms };
    spanfit::api::solve_bundle(
        need_text.as_bytes(),
        need_name,
        &files,
        exhaustive,
        &mut control,
    )
}

/// Analyse a design the user already has (a design file, or a design
/// object as in the report); the value is the same bundle as a solve's.
pub fn analyze_value(
    need_text: &str,
    need_name: &str,
    stock_json: &str,
    design_text: &str,
    design_name: &str,
) -> Result<spanfit::report::Bundle, Error> {
    let files = stock_files_from_json(stock_json)?;
    spanfit::api::analyze_bundle(
        need_text.as_bytes(),
        need_name,
        &files,
        design_text.as_bytes(),
        design_name,
    )
}

/// The error of a design over the need's temperature range: `{"points":
/// [{"temp_c", "worst_case_pct_fs", "rss_pct_fs"}, ...], "target_pct_fs"}`
/// from the core's analysis at a few temperatures (worst case and RSS, no
/// Monte Carlo; see [`spanfit::sweep`]).
pub fn temperature_sweep_value(
    need_text: &str,
    need_name: &str,
    stock_json: &str,
    design_text: &str,
    design_name: &str,
) -> Result<spanfit::sweep::Sweep, Error> {
    let files = stock_files_from_json(stock_json)?;
    let (need, stock) = spanfit::api::load(need_text.as_bytes(), need_name, &files)?;
    let design = spanfit::api::read_design(design_text.as_bytes(), design_name, &stock)?;
    spanfit::sweep::temperature_sweep(&need, &stock, &design, 7)
}

/// The need keys described for a form, as a JSON array (see
/// [`spanfit::need_fields::need_fields`]).
pub fn need_fields_text() -> String {
    serde_json::to_string(&spanfit::need_fields::need_fields()).unwrap_or_else(|_| "[]".into())
}

/// Read the texts of a form's number fields, `{"adc.high_v": "3.3 V",
/// ...}`, as numbers of those need keys, accepting SI prefixes and the
/// field's unit ([`spanfit::si_input::read_quantity`]). The value maps each
/// key to `{"value": 3.3, "understood": "3.3 V"}` or to `{"detail": "<what
/// is wrong and what to enter>"}`; a key that is not a number field of the
/// need gets a detail saying so.
pub fn read_numbers_value(texts_json: &str) -> Result<Value, Error> {
    let texts: serde_json::Map<String, Value> = serde_json::from_str(texts_json).map_err(|e| {
        Error::input(
            Location::file("fields"),
            format!("expected a JSON object of field texts: {e}"),
        )
    })?;
    let fields = spanfit::need_fields::need_fields();
    let mut out = serde_json::Map::new();
    for (key, text) in texts {
        let field = fields.iter().find(|f| f.key == key);
        let answer = match (field, text.as_str()) {
            (None, _) => json!({"detail": format!("{key} is not a key of the need")}),
            (Some(f), _) if !matches!(f.kind, FieldKind::Number | FieldKind::Integer) => {
                json!({"detail": format!("{key} does not take a number")})
            }
            (Some(_), None) => json!({"detail": "expected the field's text"}),
            (Some(f), Some(text)) => match spanfit::si_input::read_quantity(text, f.unit) {
                Ok(r) if f.kind == FieldKind::Integer && r.value.fract() != 0.0 => json!({
                    "detail": format!("\"{}\" is {}; enter a whole number", text.trim(), r.understood)
                }),
                Ok(r) => json!({"value": r.value, "understood": r.understood}),
                Err(detail) => json!({ "detail": detail }),
            },
        };
        out.insert(key, answer);
    }
    Ok(Value::Object(out))
}

/// The demo stock as `{"resistors.csv": "<csv text>", ...}`.
pub fn demo_stock_text() -> String {
    let map: serde_json::Map<String, Value> = spanfit::demo::STOCK
        .iter()
        .map(|(name, text)| ((*name).to_string(), Value::from(*text)))
        .collect();
    Value::Object(map).to_string()
}

/// Validate a need; see [`check_need_value`]. Returns the envelope.
#[wasm_bindgen]
pub fn check_need(need_text: &str, need_name: &str) -> String {
    guarded(|| check_need_value(need_text, need_name))
}

/// The raw keys of a need (TOML or JSON) as a JSON object; see
/// [`need_keys_value`]. Returns the envelope.
#[wasm_bindgen]
pub fn need_keys(need_text: &str, need_name: &str) -> String {
    guarded(|| need_keys_value(need_text, need_name))
}

/// Read a stock and count its parts; see [`check_stock_value`]. Returns
/// the envelope.
#[wasm_bindgen]
pub fn check_stock(stock_json: &str) -> String {
    guarded(|| check_stock_value(stock_json))
}

/// One stock table as the core reads and validates it; see
/// [`read_stock_table_value`]. Returns the envelope.
#[wasm_bindgen]
pub fn read_stock_table(file_name: &str, csv_text: &str) -> String {
    guarded(|| read_stock_table_value(file_name, csv_text))
}

/// Every need key described for a form: a JSON array of `{key, section,
/// label, unit, kind, choices, default, min, max, required, hint}`.
#[wasm_bindgen]
pub fn need_fields() -> String {
    need_fields_text()
}

/// Read form texts as numbers of their need fields (SI prefixes and
/// units accepted); see [`read_numbers_value`]. Returns the envelope.
#[wasm_bindgen]
pub fn read_numbers(texts_json: &str) -> String {
    guarded(|| read_numbers_value(texts_json))
}

/// The error of a design over the temperature range; see
/// [`temperature_sweep_value`]. Returns the envelope.
#[wasm_bindgen]
pub fn temperature_sweep(
    need_text: &str,
    need_name: &str,
    stock_json: &str,
    design_text: &str,
    design_name: &str,
) -> String {
    guarded(|| temperature_sweep_value(need_text, need_name, stock_json, design_text, design_name))
}

/// Solve a need. `stock_json` maps file names to CSV text (`{}` is the demo
/// stock). `progress_callback(done, total, best_cost)` is called now and
/// then (`best_cost` is `null` before the first design); returning `false`
/// stops the search, which then returns the best design so far. A callback
/// that throws stops the search too. Returns the envelope of the bundle.
#[wasm_bindgen]
pub fn solve(
    need_text: &str,
    need_name: &str,
    stock_json: &str,
    progress_callback: &js_sys::Function,
) -> String {
    solve_in_mode(need_text, need_name, stock_json, false, progress_callback)
}

/// Solve a need by walking every design of the space (the exhaustive
/// search); arguments and answer as [`solve()`]. It has no time limit of
/// its own: only `false` from the callback (a stop) ends it early.
#[wasm_bindgen]
pub fn solve_exhaustive(
    need_text: &str,
    need_name: &str,
    stock_json: &str,
    progress_callback: &js_sys::Function,
) -> String {
    solve_in_mode(need_text, need_name, stock_json, true, progress_callback)
}

fn solve_in_mode(
    need_text: &str,
    need_name: &str,
    stock_json: &str,
    exhaustive: bool,
    progress_callback: &js_sys::Function,
) -> String {
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
    guarded(|| {
        solve_mode_value(
            need_text,
            need_name,
            stock_json,
            exhaustive,
            &mut progress,
            &now_ms,
        )
    })
}

/// Analyse a given design against a need and stock; see
/// [`analyze_value`]. Returns the envelope of the bundle.
#[wasm_bindgen]
pub fn analyze(
    need_text: &str,
    need_name: &str,
    stock_json: &str,
    design_text: &str,
    design_name: &str,
) -> String {
    guarded(|| analyze_value(need_text, need_name, stock_json, design_text, design_name))
}

/// The gallery of invented examples, as JSON text (see [`gallery`]).
#[wasm_bindgen]
pub fn gallery_examples() -> String {
    gallery::gallery_text()
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

    /// An envelope's text read back: `Ok(value)` or `Err(error)`.
    fn open(text: &str) -> Result<Value, Value> {
        let v: Value = serde_json::from_str(text).expect("an envelope is JSON");
        match v["ok"].as_bool() {
            Some(true) => {
                assert!(v.get("error").is_none(), "{text}");
                Ok(v["value"].clone())
            }
            Some(false) => {
                assert!(v.get("value").is_none(), "{text}");
                Err(v["error"].clone())
            }
            None => panic!("no `ok` in {text}"),
        }
    }

    fn never_stop(_: Progress) -> bool {
        true
    }

    #[test]
    fn empty_stock_object_means_demo_stock() {
        assert!(stock_files_from_json("{}").unwrap().is_empty());
        assert!(stock_files_from_json("  ").unwrap().is_empty());
    }

    /// The shelf count names every table the core reads, capacitors too,
    /// and the message for a stock that is not an object lists them all.
    #[test]
    fn stock_counts_and_messages_know_every_table() {
        let counts = check_stock_value("{}").unwrap();
        for (name, _) in spanfit::demo::STOCK {
            let key = name.trim_end_matches(".csv");
            assert!(
                counts[key].as_u64().is_some_and(|n| n > 0),
                "{key}: {counts}"
            );
        }
        let message = stock_files_from_json("[]").unwrap_err().to_string();
        for (name, _) in spanfit::demo::STOCK {
            assert!(message.contains(name), "{name}: {message}");
        }
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
        let r = err.report();
        assert!(
            r.message.starts_with("stock, line 2, column "),
            "{}",
            r.message
        );
        assert_eq!((r.file.as_deref(), r.line), (Some("stock"), Some(2)));
        assert!(r.column.is_some_and(|c| c >= 1));
        assert!(!r.detail.contains(" at line "), "{}", r.detail);
    }

    #[test]
    fn stock_that_is_not_an_object_says_what_it_found() {
        let err = stock_files_from_json("[1, 2]").unwrap_err().to_string();
        assert!(err.starts_with("stock: "), "{err}");
        assert!(err.contains("found an array"), "{err}");
        let err = stock_files_from_json(r#"{"opamps.csv": 3}"#).unwrap_err();
        assert_eq!(err.report().file.as_deref(), Some("opamps.csv"));
        assert!(err.to_string().contains("found a number"), "{err}");
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
        let keys = open(&need_keys(&demo_need(), "demo.toml")).unwrap();
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
    fn need_keys_name_line_and_column_of_a_mistake() {
        let err = open(&need_keys(
            "[adc]\nlow_v = 0.0\nhigh_v = = 3\n",
            "mine.toml",
        ))
        .unwrap_err();
        let message = err["message"].as_str().unwrap();
        assert!(message.starts_with("mine.toml, line 3, column "), "{err}");
        assert_eq!(err["kind"], "input");
        assert_eq!(
            (err["file"].as_str(), err["line"].as_u64()),
            (Some("mine.toml"), Some(3))
        );
        assert!(err["column"].as_u64().is_some_and(|c| c >= 1), "{err}");
        assert!(message.ends_with(err["detail"].as_str().unwrap()), "{err}");
        let err = open(&need_keys("{\"adc\": }", "mine.json")).unwrap_err();
        assert!(
            err["message"]
                .as_str()
                .unwrap()
                .starts_with("mine.json, line 1, column "),
            "{err}"
        );
    }

    #[test]
    fn line_column_counts_characters_not_bytes() {
        assert_eq!(line_column("ab\ncd", 4), (2, 2));
        assert_eq!(line_column("\u{b5}x", 2), (1, 2));
        assert_eq!(line_column("\u{b5}x", 1), (1, 1));
        assert_eq!(line_column("abc", 99), (1, 4));
    }

    #[test]
    fn guarded_turns_a_panic_into_an_internal_error() {
        let err = open(&guarded::<()>(|| {
            let reason = std::hint::black_box("boom");
            panic!("{reason}")
        }))
        .unwrap_err();
        assert_eq!(err["kind"], "internal");
        let message = err["message"].as_str().unwrap();
        assert!(message.contains("internal error"), "{err}");
        assert!(message.contains("boom"), "{err}");
        assert!(err["file"].is_null() && err["line"].is_null());
        assert_eq!(open(&guarded(|| Ok::<_, Error>(7))), Ok(json!(7)));
    }

    #[test]
    fn check_need_errors_are_the_core_error() {
        let err = open(&check_need("not = [valid", "need.toml")).unwrap_err();
        let core = spanfit::need::parse_need(b"not = [valid", "need.toml").unwrap_err();
        assert_eq!(err, serde_json::to_value(core.report()).unwrap());
        assert_eq!(err["message"], core.to_string());
        assert_eq!(err["file"], "need.toml");
    }

    #[test]
    fn a_bad_need_value_names_the_key() {
        let bad = demo_need().replace("bits = 16", "bits = \"sixteen\"");
        assert_ne!(bad, demo_need());
        let err = open(&check_need(&bad, "mine.toml")).unwrap_err();
        assert_eq!(err["key"], "adc.bits");
        assert_eq!(err["kind"], "input");
        assert!(err["line"].as_u64().is_some() && err["column"].as_u64().is_some());
    }

    #[test]
    fn check_stock_errors_are_the_core_error() {
        let stock = r#"{"resistors.csv": "part_id,value_ohms\nR1,abc\n"}"#;
        let err = open(&check_stock(stock)).unwrap_err();
        let core = spanfit::stock::parse_stock(&stock_files_from_json(stock).unwrap()).unwrap_err();
        assert_eq!(err, serde_json::to_value(core.report()).unwrap());
        assert_eq!(err["file"], "resistors.csv");
        let counts = open(&check_stock("{}")).unwrap();
        assert!(counts["resistors"].as_u64().unwrap() > 0);
    }

    #[test]
    fn a_bad_stock_cell_names_file_line_and_column_name() {
        let demo: Value = serde_json::from_str(&demo_stock_text()).unwrap();
        let text = demo["resistors.csv"].as_str().unwrap();
        let t = open(&read_stock_table("resistors.csv", text)).unwrap();
        let cost = t["header"]
            .as_array()
            .unwrap()
            .iter()
            .position(|h| h == "unit_cost")
            .unwrap();
        let line = t["line_numbers"][0].as_u64().unwrap() as usize;
        let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
        let mut cells: Vec<String> = lines[line - 1].split(',').map(str::to_string).collect();
        cells[cost] = "cheap".into();
        lines[line - 1] = cells.join(",");
        let broken = lines.join("\n");
        // The rows come back, with the first bad cell as `problem`.
        let t = open(&read_stock_table("resistors.csv", &broken)).unwrap();
        assert_eq!(t["rows"][0][cost], "cheap");
        let err = t["problem"].clone();
        assert_eq!(err["file"], "resistors.csv");
        assert_eq!(err["line"].as_u64(), Some(line as u64));
        assert_eq!(err["column_name"], "unit_cost");
        assert!(err["column"].is_null());
        // The same error as the whole stock gives.
        let stock = json!({"resistors.csv": broken}).to_string();
        assert_eq!(open(&check_stock(&stock)).unwrap_err(), err);
    }

    #[test]
    fn stock_tables_read_as_the_core_reads_them() {
        for (name, text) in spanfit::demo::STOCK {
            let t = open(&read_stock_table(name, text)).unwrap();
            assert_eq!(t["file"], name);
            let rows = t["rows"].as_array().unwrap();
            assert_eq!(rows.len(), t["line_numbers"].as_array().unwrap().len());
            let width = t["header"].as_array().unwrap().len();
            assert!(rows.iter().all(|r| r.as_array().unwrap().len() == width));
        }
        let err = open(&read_stock_table("caps.csv", "a\n")).unwrap_err();
        assert_eq!(err["file"], "caps.csv");
    }

    #[test]
    fn need_fields_cover_the_demo_need() {
        let fields: Value = serde_json::from_str(&need_fields()).unwrap();
        let fields = fields.as_array().unwrap();
        let keys = open(&need_keys(&demo_need(), "demo.toml")).unwrap();
        for (table, entries) in keys.as_object().unwrap() {
            for name in entries.as_object().unwrap().keys() {
                let key = format!("{table}.{name}");
                let n = fields.iter().filter(|f| f["key"] == key.as_str()).count();
                assert_eq!(n, 1, "{key}");
            }
        }
        for f in fields {
            for member in [
                "key", "section", "label", "unit", "kind", "choices", "default",
            ] {
                assert!(f.get(member).is_some(), "{member} in {f}");
            }
            for member in ["min", "max", "required", "hint"] {
                assert!(f.get(member).is_some(), "{member} in {f}");
            }
        }
        let basis = fields
            .iter()
            .find(|f| f["key"] == "accuracy.basis")
            .unwrap();
        assert_eq!(basis["kind"], "choice");
        assert_eq!(basis["choices"], json!(["worst-case", "rss", "yield"]));
    }

    #[test]
    fn solve_errors_are_the_core_error() {
        let clock = || 0.0;
        let mut progress = never_stop;
        let ours = solve_value("[adc]\n", "bad.toml", "{}", &mut progress, &clock).unwrap_err();
        let mut progress = never_stop;
        let mut control = SolveControl {
            progress: &mut progress,
            now_ms: &clock,
        };
        let core = spanfit::api::solve_bundle(b"[adc]\n", "bad.toml", &[], false, &mut control);
        assert_eq!(ours, core.unwrap_err());
    }

    /// The search mode the page asks for is the one the core runs: a
    /// search stopped at its first progress report still says its mode.
    #[test]
    fn solve_mode_value_runs_the_mode_asked_for() {
        let clock = || 0.0;
        for (exhaustive, mode) in [(true, "exhaustive"), (false, "optimised")] {
            let mut stop = |_: Progress| false;
            let bundle = solve_mode_value(
                &demo_need(),
                "demo.toml",
                "{}",
                exhaustive,
                &mut stop,
                &clock,
            )
            .unwrap();
            let value = serde_json::to_value(&bundle).unwrap();
            assert_eq!(
                value["report"]["search"]["mode"], mode,
                "{}",
                value["report"]["search"]
            );
        }
    }

    /// `analyze` returns the bundle shape of `solve`: `{report, artifacts,
    /// text}`, artifacts with the BOM table.
    #[test]
    fn analyze_returns_the_solve_bundle_shape() {
        let design = include_str!("../../examples/demo-design.json");
        let text = analyze(&demo_need(), "demo.toml", "{}", design, "demo-design.json");
        let b = open(&text).unwrap();
        let keys: Vec<&String> = b.as_object().unwrap().keys().collect();
        assert_eq!(keys, ["artifacts", "report", "text"]);
        assert!(b["report"]["design"]["cost"].as_f64().unwrap() > 0.0);
        assert!(b["report"]["search"].is_null());
        let a = &b["artifacts"];
        for key in ["spice", "svg", "bom_csv"] {
            assert!(a[key].is_string(), "{key}");
        }
        assert_eq!(a["bom_table"]["header"][0], "refs");
        assert!(b["text"].as_str().unwrap().contains("Error budget"));
        let bad = design.replace("\"IA-3\"", "\"IA-404\"");
        let err = open(&analyze(&demo_need(), "demo.toml", "{}", &bad, "mine.json")).unwrap_err();
        assert!(
            err["message"].as_str().unwrap().contains("mine.json"),
            "{err}"
        );
    }

    #[test]
    fn form_numbers_read_with_prefixes_and_units() {
        let texts = json!({
            "sensor.signal_high_v": "25 mV",
            "sensor.source_ohms": "4.7k",
            "adc.bits": "12.5",
            "adc.high_v": "3 A",
            "sensor.label": "x",
        });
        let v = open(&read_numbers(&texts.to_string())).unwrap();
        assert_eq!(v["sensor.signal_high_v"]["value"].as_f64(), Some(0.025));
        assert_eq!(v["sensor.signal_high_v"]["understood"], "0.025 V");
        assert_eq!(v["sensor.source_ohms"]["value"].as_f64(), Some(4700.0));
        assert!(v["adc.bits"]["detail"]
            .as_str()
            .unwrap()
            .contains("whole number"));
        assert!(v["adc.high_v"]["detail"]
            .as_str()
            .unwrap()
            .contains("unit V"));
        assert!(v["sensor.label"]["detail"].is_string());
        assert!(open(&read_numbers("[1]")).is_err());
    }

    #[test]
    fn the_temperature_sweep_covers_the_range() {
        let design = include_str!("../../examples/demo-design.json");
        let v = open(&temperature_sweep(
            &demo_need(),
            "demo.toml",
            "{}",
            design,
            "d.json",
        ))
        .unwrap();
        let points = v["points"].as_array().unwrap();
        assert!(points.len() >= 2 && points.len() <= spanfit::sweep::MAX_POINTS);
        assert!(points
            .iter()
            .all(|p| p["worst_case_pct_fs"].as_f64().unwrap() > 0.0));
        assert!(v["target_pct_fs"].as_f64().unwrap() > 0.0);
        assert!(open(&temperature_sweep(
            &demo_need(),
            "demo.toml",
            "{}",
            "{}",
            "d.json"
        ))
        .is_err());
    }
}
