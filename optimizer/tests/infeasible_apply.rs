//! An infeasible need's report shows its best attempt in full and carries
//! each verified suggestion as need keys: setting those keys in the need
//! the report echoes gives a need that a solve meets (docs/report.md,
//! `infeasible`).

mod common;
use common::solve::{demo_need_with, solve_report};
use serde_json::Value;

/// The need as the report echoes it (`need.sensor` ... `need.stock`), a
/// JSON need file.
fn echoed_need(report: &Value) -> Value {
    let mut need = serde_json::Map::new();
    for table in ["sensor", "adc", "supply", "accuracy", "search", "stock"] {
        need.insert(table.into(), report["need"][table].clone());
    }
    Value::Object(need)
}

#[test]
fn the_best_attempt_is_a_design_and_each_suggestion_applies_as_need_keys() {
    // The demo need at a target its one-stage designs miss.
    let report = solve_report(&demo_need_with(0.3, 1), "need");
    assert_ne!(
        report["status"], "ok",
        "the tight need was met: {}",
        report["design"]
    );
    let inf = &report["infeasible"];
    let attempt = &inf["best_attempt"];
    assert!(attempt.is_object(), "no best attempt: {}", inf["binding"]);
    // It is the design the explanation speaks of: the same error, the same
    // largest budget line, every check passed but the target missed.
    assert_eq!(attempt["error"]["basis_pct_fs"], inf["best_error_pct_fs"]);
    assert_eq!(attempt["error"]["meets_target"], false);
    assert_eq!(attempt["feasible"], true);
    let budget = attempt["error"]["budget"].as_array().expect("a budget");
    let largest = budget
        .iter()
        .max_by(|a, b| {
            let size = |v: &Value| v["pct_fs"].as_f64().unwrap_or(0.0);
            size(a).total_cmp(&size(b))
        })
        .expect("budget lines");
    assert_eq!(largest["source"], inf["largest"][0]["source"]);
    assert!(attempt["file"].is_object() && attempt["parts"].is_array());

    let suggestions = inf["suggestions"].as_array().expect("suggestions");
    let applicable: Vec<&Value> = suggestions
        .iter()
        .filter(|s| s["apply"].as_array().is_some_and(|a| !a.is_empty()))
        .collect();
    assert!(
        !applicable.is_empty(),
        "no need change was verified: {suggestions:?}"
    );
    for s in applicable {
        assert!(s["apply_stock"].as_array().is_some_and(Vec::is_empty));
        let mut need = echoed_need(&report);
        for change in s["apply"].as_array().into_iter().flatten() {
            let key = change["key"].as_str().expect("a key");
            let (table, name) = key.split_once('.').expect("section.key");
            assert!(
                need[table].get(name).is_some(),
                "{key} is not a key of the echoed need"
            );
            assert_ne!(need[table][name], change["value"], "{key} does not change");
            need[table][name] = change["value"].clone();
        }
        let again = solve_report(&need.to_string(), "need");
        assert_eq!(
            again["status"], "ok",
            "`{}` applied as {} does not give a feasible need: {}",
            s["change"], s["apply"], again["reason"]
        );
        assert_eq!(again["design"]["error"]["meets_target"], true);
    }
}
