//! Fuzz targets for the parsers (need, stock, design) and for `solve` and
//! `analyze`, as an in-process mutation harness on stable Rust.
//!
//! Each target starts from seeds (`examples/`, `examples/edge/`,
//! `parts-data/demo-stock/`), first runs every saved regression input of
//! its folder under `optimizer/tests/fuzz/corpus/`, then mutates seeds for
//! a while and checks, for every input:
//!
//! - no panic (each call runs under `catch_unwind`);
//! - an error is a located, bounded message: it names the file, a column
//!   (where given) counts from 1, and it is at most [`MAX_MESSAGE_CHARS`]
//!   characters long;
//! - `solve` returns within [`SOLVE_BOUND_MS`] of being told to stop.
//!
//! A plain `cargo test` runs each target for a short while (two seconds).
//! For a longer run, set the seconds per target and, to explore other
//! inputs, the seed:
//!
//! ```text
//! SPANFIT_FUZZ_SECONDS=60 SPANFIT_FUZZ_SEED=7 cargo test -p spanfit-optimizer --release --test fuzz
//! ```
//!
//! An input that fails is written to `target/fuzz-failures/<target>-<hash>`;
//! once fixed, copy it into `optimizer/tests/fuzz/corpus/<target>/` so it
//! runs on every test from then on (a stock input's first line names the
//! table it replaces: `#table resistors.csv`).
// A test reads the examples from disk and the clock, and stops loudly on a
// broken tree; the core itself does none of these.
#![allow(
    clippy::disallowed_methods,
    clippy::disallowed_types,
    clippy::unwrap_used
)]

mod mutator;

use mutator::{mutate, Rng};
use spanfit::error::Error;
use spanfit::stock::{parse_stock, Stock, StockFile};
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

/// Longest error message accepted, in characters.
const MAX_MESSAGE_CHARS: usize = 2000;

/// How long `solve` may run after it is told to stop, in milliseconds (a
/// debug build on a busy machine; the search checks its budget between
/// structures).
const SOLVE_BOUND_MS: u128 = 20_000;

/// How long one `solve` call may search before the harness cancels it.
const SOLVE_BUDGET_MS: f64 = 1_500.0;

fn root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("..")
}

/// Seconds per target: `SPANFIT_FUZZ_SECONDS`, or 2.
fn seconds() -> f64 {
    std::env::var("SPANFIT_FUZZ_SECONDS")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(2.0)
}

/// Generator seed: `SPANFIT_FUZZ_SEED`, or a fixed one.
fn rng(salt: u64) -> Rng {
    let seed = std::env::var("SPANFIT_FUZZ_SEED")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(0x5eed_f00d_u64);
    Rng::new(seed ^ salt.wrapping_mul(0x9e37_79b9_7f4a_7c15))
}

/// The files of a folder with one of the extensions, sorted by name.
fn files(dir: &Path, exts: &[&str]) -> Vec<(String, Vec<u8>)> {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return Vec::new();
    };
    let mut paths: Vec<PathBuf> = entries
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.is_file())
        .filter(|p| exts.is_empty() || p.extension().is_some_and(|x| exts.iter().any(|e| x == *e)))
        .collect();
    paths.sort();
    paths
        .into_iter()
        .map(|p| {
            let name = p.file_name().unwrap().to_string_lossy().to_string();
            (name, std::fs::read(&p).unwrap())
        })
        .collect()
}

fn corpus(target: &str) -> Vec<(String, Vec<u8>)> {
    files(
        &root().join("optimizer/tests/fuzz/corpus").join(target),
        &[],
    )
}

fn demo_stock() -> Stock {
    parse_stock(&spanfit::demo::stock_files()).unwrap()
}

/// Checks on an error: located (the file named, columns from 1) and short.
fn check_error(e: &Error, file: &str) -> Result<(), String> {
    let text = e.to_string();
    if text.chars().count() > MAX_MESSAGE_CHARS {
        return Err(format!("message of {} characters", text.chars().count()));
    }
    if let Error::Input { at, message } = e {
        if message.trim().is_empty() || message.trim_end().ends_with(':') {
            return Err(format!("empty message: {text}"));
        }
        if !at.file.contains(file) {
            return Err(format!("message does not name {file}: {text}"));
        }
        if at.column.as_deref() == Some("0") || at.line == Some(0) {
            return Err(format!("line or column 0: {text}"));
        }
    }
    Ok(())
}

/// Save a failing input and describe it.
fn failure(target: &str, input: &[u8], what: &str) -> String {
    let hash = input.iter().fold(0xcbf2_9ce4_8422_2325_u64, |h, &b| {
        (h ^ u64::from(b)).wrapping_mul(0x100_0000_01b3)
    });
    let dir = root().join("target/fuzz-failures");
    let _ = std::fs::create_dir_all(&dir);
    let path = dir.join(format!("{target}-{hash:016x}"));
    let _ = std::fs::write(&path, input);
    format!("{target}: {what}; input saved to {}", path.display())
}

/// Run one input through `call` under `catch_unwind`.
fn run_one(
    target: &str,
    input: &[u8],
    call: &dyn Fn(&[u8]) -> Result<(), String>,
) -> Result<(), String> {
    match catch_unwind(AssertUnwindSafe(|| call(input))) {
        Ok(Ok(())) => Ok(()),
        Ok(Err(what)) => Err(failure(target, input, &what)),
        Err(panic) => {
            let what = panic
                .downcast_ref::<String>()
                .cloned()
                .or_else(|| panic.downcast_ref::<&str>().map(|s| s.to_string()))
                .unwrap_or_default();
            Err(failure(target, input, &format!("panic: {what}")))
        }
    }
}

/// The corpus, then mutations of the seeds for the target's time.
fn fuzz(target: &str, salt: u64, seeds: Vec<Vec<u8>>, call: &dyn Fn(&[u8]) -> Result<(), String>) {
    assert!(!seeds.is_empty(), "{target}: no seeds");
    let mut runs = 0usize;
    for (name, input) in corpus(target) {
        run_one(target, &input, call).unwrap_or_else(|e| panic!("corpus {name}: {e}"));
        runs += 1;
    }
    for seed in &seeds {
        run_one(target, seed, call).unwrap_or_else(|e| panic!("seed: {e}"));
    }
    let mut rng = rng(salt);
    let deadline = Instant::now() + Duration::from_secs_f64(seconds());
    while Instant::now() < deadline {
        let seed = &seeds[rng.below(seeds.len())];
        let input = mutate(&mut rng, seed, &seeds);
        run_one(target, &input, call).unwrap_or_else(|e| panic!("{e}"));
        runs += 1;
    }
    assert!(runs > 0);
}

fn need_seeds() -> Vec<Vec<u8>> {
    let mut seeds: Vec<Vec<u8>> = files(&root().join("examples"), &["toml"])
        .into_iter()
        .chain(files(&root().join("examples/edge"), &["toml"]))
        .map(|(_, b)| b)
        .collect();
    // The demo as JSON too, so the JSON reader is fuzzed as well.
    let need = spanfit::need::parse_need(spanfit::demo::NEED_TOML.as_bytes(), "d").unwrap();
    let mut json = serde_json::json!({});
    if let Ok(toml::Value::Table(t)) = spanfit::demo::NEED_TOML.parse::<toml::Value>() {
        json = serde_json::to_value(t).unwrap();
    }
    assert!(need.adc.bits > 0);
    seeds.push(serde_json::to_vec_pretty(&json).unwrap());
    seeds
}

#[test]
fn fuzz_need_parser() {
    fuzz("need", 1, need_seeds(), &|input| {
        match spanfit::need::parse_need(input, "fuzz.toml") {
            Ok(need) => {
                // A need that reads has finite numbers in range.
                let (k, b) = need.ideal_transfer();
                if !(k.is_finite() && b.is_finite() && need.lsb() > 0.0) {
                    return Err(format!("accepted a need with K = {k}, B = {b}"));
                }
                Ok(())
            }
            Err(e) => check_error(&e, "fuzz.toml"),
        }
    });
}

/// A stock input is one table: its first line `#table <name>` (regression
/// files) or, for mutated seeds, the table the seed came from.
fn stock_input(input: &[u8]) -> (String, Vec<u8>) {
    let text = String::from_utf8_lossy(input);
    if let Some(rest) = text.strip_prefix("#table ") {
        let (name, body) = rest.split_once('\n').unwrap_or((rest, ""));
        return (name.trim().to_string(), body.as_bytes().to_vec());
    }
    ("resistors.csv".to_string(), input.to_vec())
}

#[test]
fn fuzz_stock_parser() {
    let seeds: Vec<Vec<u8>> = files(&root().join("parts-data/demo-stock"), &["csv"])
        .into_iter()
        .map(|(name, bytes)| {
            let mut s = format!("#table {name}\n").into_bytes();
            s.extend(bytes);
            s
        })
        .collect();
    fuzz("stock", 2, seeds, &|input| {
        let (name, bytes) = stock_input(input);
        let mut stock = spanfit::demo::stock_files();
        stock.retain(|f| f.name != name);
        stock.push(StockFile {
            name: name.clone(),
            bytes,
        });
        match parse_stock(&stock) {
            Ok(s) => {
                let bad = s
                    .resistors
                    .iter()
                    .find(|r| !(r.value.0.is_finite() && r.value.0 > 0.0 && r.tcr.0.is_finite()));
                match bad {
                    Some(r) => Err(format!("accepted resistor {r:?}")),
                    None => Ok(()),
                }
            }
            // The message names some stock file (a mutated name may be
            // refused as an unknown file).
            Err(e) => check_error(&e, ""),
        }
    });
}

fn design_seeds() -> Vec<Vec<u8>> {
    let mut seeds: Vec<Vec<u8>> = files(&root().join("examples"), &["json"])
        .into_iter()
        .map(|(_, b)| b)
        .collect();
    // Inline resistors, with and without their own id.
    seeds.push(
        br#"{"format": "spanfit-design-1", "stages": [{"shape": "non-inverting", "amplifier": "OA-RR1",
        "resistors": {"rf": {"ohms": 99000, "tolerance_pct": 0.1, "tcr_ppm_per_c": 25, "part_id": "MY-1"},
        "rg": {"ohms": 1000, "tolerance_pct": 1, "tcr_ppm_per_c": 100, "unit_cost": 0.01}},
        "offset": {"kind": "direct", "source": "supply"}}]}"#
            .to_vec(),
    );
    seeds
}

#[test]
fn fuzz_design_parser() {
    let stock = demo_stock();
    fuzz("design", 3, design_seeds(), &|input| {
        match spanfit::design::parse_design(input, "fuzz.json", &stock) {
            Ok(d) => {
                // What reads writes back and reads again as itself.
                let file = spanfit::design::design_file_json(&d, &stock).to_string();
                match spanfit::design::parse_design(file.as_bytes(), "again.json", &stock) {
                    Ok(again) if again == d => Ok(()),
                    Ok(_) => Err(format!("reads back as another design: {file}")),
                    Err(e) => Err(format!("written file refused: {e}")),
                }
            }
            Err(e) => check_error(&e, "fuzz.json"),
        }
    });
}

#[test]
fn fuzz_solve() {
    // Fewer, slower calls: each may search up to the budget.
    fuzz("solve", 4, need_seeds(), &|input| {
        let start = Instant::now();
        let mut progress =
            |_: spanfit::api::Progress| (start.elapsed().as_secs_f64() * 1e3) < SOLVE_BUDGET_MS;
        let clock = || start.elapsed().as_secs_f64() * 1e3;
        let mut control = spanfit::api::SolveControl {
            progress: &mut progress,
            now_ms: &clock,
        };
        let result = spanfit::api::solve_bundle(input, "fuzz.toml", &[], false, &mut control);
        let took = start.elapsed().as_millis();
        if took > SOLVE_BUDGET_MS as u128 + SOLVE_BOUND_MS {
            return Err(format!("solve took {took} ms"));
        }
        match result.map(|b| serde_json::to_value(b).unwrap_or_default()) {
            Ok(v) if v["report"]["status"].is_string() => Ok(()),
            Ok(v) => Err(format!("report without a status: {}", v["report"])),
            Err(e) => check_error(&e, "fuzz.toml"),
        }
    });
}

#[test]
fn fuzz_analyze() {
    let need = spanfit::demo::NEED_TOML.as_bytes();
    fuzz("analyze", 5, design_seeds(), &|input| {
        let result = spanfit::api::analyze_bundle(need, "demo-need.toml", &[], input, "fuzz.json")
            .map(|b| serde_json::to_value(b).unwrap_or_default());
        match result {
            Ok(v) if v["report"]["status"].is_string() => Ok(()),
            Ok(v) => Err(format!("analysis without a status: {}", v["report"])),
            // Input errors name the design (or need) file; errors of the
            // analysis itself (a design that cannot be built) carry none.
            Err(e) => check_error(&e, ""),
        }
    });
}
