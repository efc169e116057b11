//! Nothing non-finite reaches a report. Every example need (`examples/*.toml`,
//! the embedded demo) and every edge need (`examples/edge/*.toml`: the ends
//! of the documented ranges) is solved through `spanfit::api::solve_bundle`,
//! and the solved design (or the demo design) analysed through
//! `analyze_bundle`; every number of the resulting JSON is scanned.
//!
//! serde_json writes NaN and infinities as `null`, so a `null` is a failure
//! unless its key path is one where the report documents a null (listed in
//! [`NULLABLE`]); the texts (report, SPICE deck, BOM, SVG) must not hold
//! `NaN` or `inf`.
// A test reads the examples from disk and the clock, and stops loudly on a
// broken tree; the core itself does none of these.
#![allow(
    clippy::disallowed_methods,
    clippy::disallowed_types,
    clippy::unwrap_used
)]

use serde_json::Value;
use spanfit::api::{analyze_bundle, solve_bundle, Progress, SolveControl};
use std::path::{Path, PathBuf};
use std::time::Instant;

/// Whether a `null` at `key` of the object `parent` is one the report
/// documents (and not a NaN or infinity that serde_json wrote as null).
/// Each rule checks the fact that makes the field absent.
fn null_allowed(key: &str, parent: &serde_json::Map<String, Value>, _report: &Value) -> bool {
    let is_null = |k: &str| parent.get(k).is_none_or(Value::is_null);
    match key {
        // Whole parts that are absent: no design, no search behind an
        // analysis, no shortfall, no exports.
        "design" | "reason" | "search" | "infeasible" | "spice" | "svg" | "bom_csv"
        | "bom_table" => true,
        // A grounded offset or bias node has no source.
        "source" => parent.get("kind").is_some_and(|k| k == "ground"),
        // The sensor-unit column exists only with a physical scale.
        "unit" | "units" => is_null("unit"),
        // The totals in the sensor's unit, likewise (the need has no
        // physical scale, so the totals in LSB stand alone).
        "worst_case_units" | "rss_units" => ["quantity_unit", "quantity_low", "quantity_high"]
            .iter()
            .any(|k| {
                _report
                    .pointer(&format!("/need/sensor/{k}"))
                    .is_none_or(Value::is_null)
            }),
        "quantity_unit" => true,
        "volts_per_unit" => is_null("quantity_unit"),
        // Monte Carlo figures exist only where a Monte Carlo run was made
        // (the reported design, not the alternatives).
        "yield_pct"
        | "yield_confidence_pct"
        | "sigma_pct_fs"
        | "histogram"
        | "yield_builds"
        | "rss_coverage_pct" => is_null("yield_builds") && is_null("histogram"),
        // A gap needs a design and a valid bound: null when proven, with
        // no design, or for the error objective.
        "gap" => true,
        // No best error when no design was evaluated at all.
        "best_error_pct_fs" => parent
            .get("largest")
            .and_then(Value::as_array)
            .is_some_and(Vec::is_empty),
        // No best attempt when no design that passes every check was
        // analysed (then there is no best error either).
        "best_attempt" => is_null("best_error_pct_fs"),
        // A budget line's explanation has a note only where the
        // calibration trimmed something from the line.
        "note" => parent.contains_key("formula"),
        // Package text of a part not in the stock tables.
        "footprint" => true,
        // No filter pair from the stock (docs/filter.md).
        "filter" => true,
        // The settling figures exist only for a sampling input, all three
        // together.
        "kickback_v" | "settling_ns" | "settling_error_lsb" => {
            is_null("kickback_v") && is_null("settling_ns") && is_null("settling_error_lsb")
        }
        // The rejection needs a sample rate; without one there is no
        // alias check either.
        "rejection_at_nyquist_db" => parent
            .get("checks")
            .and_then(Value::as_array)
            .is_some_and(|c| c.iter().all(|x| x["check"] != "alias-rejection")),
        _ => false,
    }
}

fn examples_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples")
}

/// Every need file: `examples/*.toml` and `examples/edge/*.toml`, by name.
pub fn need_files() -> Vec<(String, Vec<u8>)> {
    let mut out = Vec::new();
    for dir in [examples_dir(), examples_dir().join("edge")] {
        let mut names: Vec<PathBuf> = std::fs::read_dir(&dir)
            .unwrap()
            .map(|e| e.unwrap().path())
            .filter(|p| p.extension().is_some_and(|x| x == "toml"))
            .collect();
        names.sort();
        for p in names {
            let name = p
                .strip_prefix(examples_dir())
                .unwrap()
                .display()
                .to_string();
            out.push((name, std::fs::read(&p).unwrap()));
        }
    }
    out.push((
        "embedded demo".to_string(),
        spanfit::demo::NEED_TOML.as_bytes().to_vec(),
    ));
    out
}

/// Every unexplained `null`, every non-finite number and every text
/// holding `NaN`/`inf`, with its key path; `report` is the object whose
/// `status` applies.
fn scan(v: &Value, path: &str, report: &Value, bad: &mut Vec<String>) {
    match v {
        Value::String(s) => {
            for word in ["NaN", "inf", "Infinity"] {
                let hit = s.match_indices(word).any(|(i, _)| {
                    let before = s[..i].chars().next_back();
                    let after = s[i + word.len()..].chars().next();
                    !before.is_some_and(char::is_alphanumeric)
                        && !after.is_some_and(char::is_alphanumeric)
                });
                if hit {
                    bad.push(format!("{path}: text holds `{word}`"));
                }
            }
        }
        Value::Number(n) if !n.as_f64().is_some_and(f64::is_finite) => {
            bad.push(format!("{path}: {n}"))
        }
        Value::Object(map) => {
            for (k, x) in map {
                let here = format!("{path}.{k}");
                if x.is_null() && !null_allowed(k, map, report) {
                    bad.push(format!("{here}: null"));
                }
                scan(x, &here, report, bad);
            }
        }
        Value::Array(items) => {
            for x in items {
                scan(x, &format!("{path}[]"), report, bad);
            }
        }
        _ => {}
    }
}

fn solve(need: &[u8], name: &str) -> Value {
    let start = Instant::now();
    let mut progress = |_: Progress| true;
    let clock = || start.elapsed().as_secs_f64() * 1e3;
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &clock,
    };
    let bundle = solve_bundle(need, name, &[], false, &mut control)
        .unwrap_or_else(|e| panic!("{name} does not solve: {e}"));
    serde_json::to_value(bundle).expect("a bundle serialises")
}

#[test]
fn no_report_of_an_example_or_edge_need_holds_a_non_finite_number() {
    let mut bad = Vec::new();
    let demo_design = std::fs::read(examples_dir().join("demo-design.json")).unwrap();
    for (name, need) in need_files() {
        let solved = solve(&need, &name);
        scan(
            &solved,
            &format!("{name}: solve"),
            &solved["report"],
            &mut bad,
        );
        let design = match solved["report"]["design"].get("file") {
            Some(file) => file.to_string().into_bytes(),
            None => demo_design.clone(),
        };
        match analyze_bundle(&need, &name, &[], &design, "design.json") {
            Ok(analysed) => {
                let analysed = serde_json::to_value(analysed).expect("a bundle serialises");
                scan(&analysed, &format!("{name}: analyze"), &analysed, &mut bad)
            }
            // The demo design may not fit an edge need (its parts cannot
            // run on its rails); that is an input error, not a report.
            Err(e) => assert!(!e.to_string().is_empty(), "{name}"),
        }
    }
    assert!(bad.is_empty(), "non-finite values:\n{}", bad.join("\n"));
}

/// The scan itself: serde_json writes a NaN as `null`, and the scan
/// reports it where no rule explains it.
#[test]
fn the_scan_catches_a_nan_written_as_null() {
    let report = serde_json::json!({
        "status": "ok",
        "design": {"cost": f64::NAN, "error": {"budget": [{"pct_fs": f64::INFINITY, "unit": "bar", "units": 1.0}]}},
        "text": "gain = NaN",
    });
    let mut bad = Vec::new();
    scan(&report, "r", &report, &mut bad);
    assert_eq!(
        bad,
        [
            "r.design.cost: null",
            "r.design.error.budget[].pct_fs: null",
            "r.text: text holds `NaN`"
        ]
    );
}

/// Needs at and beyond the ends of the ranges the fuzzing audit found
/// (spans of 5e-324 V, signals of 1e308 V) are bad input, refused with the
/// key and the allowed range, before any report is made.
#[test]
fn absurd_numbers_are_bad_input_not_reports() {
    let demo = spanfit::demo::NEED_TOML;
    let cases = [
        (
            "signal_high_v = 0.025",
            "signal_high_v = 5e-324",
            "sensor",
            "at least",
        ),
        (
            "signal_high_v = 0.025",
            "signal_high_v = 1e308",
            "sensor.signal_high_v",
            "to 1000",
        ),
        (
            "signal_low_v = 0.0",
            "signal_low_v = -1e308",
            "sensor.signal_low_v",
            "-1000",
        ),
        (
            "source_ohms = 350.0",
            "source_ohms = 1e300",
            "sensor.source_ohms",
            "1000000000",
        ),
        (
            "bandwidth_hz = 10.0",
            "bandwidth_hz = 1e-300",
            "accuracy.bandwidth_hz",
            "0.000001",
        ),
        (
            "max_error_pct_fs = 0.5",
            "max_error_pct_fs = 5e-324",
            "accuracy.max_error_pct_fs",
            "0.000001",
        ),
    ];
    for (from, to, key, range) in cases {
        assert!(demo.contains(from), "{from}");
        let need = demo.replacen(from, to, 1);
        let mut progress = |_: Progress| true;
        let clock = || 0.0;
        let mut control = SolveControl {
            progress: &mut progress,
            now_ms: &clock,
        };
        let err =
            solve_bundle(need.as_bytes(), "need.toml", &[], false, &mut control).expect_err(to);
        assert!(
            matches!(err, spanfit::error::Error::Input { .. }),
            "{to}: {err}"
        );
        let m = err.to_string();
        assert!(
            m.contains("need.toml") && m.contains(key) && m.contains(range),
            "{to}: {m}"
        );
    }
}
