//! An infeasible need's report shows its best attempt in full and carries
//! each verified suggestion as need keys: setting those keys in the need
//! the report echoes gives a need that a solve meets (docs/report.md,
//! `infeasible`).

use serde_json::Value;
use spanfit::api::{solve_bundle, Progress, SolveControl};

/// Solve need text with a clock that never moves (no time limit binds, so
/// the outcome does not depend on the machine's speed).
fn solve(need: &str) -> Value {
    let clock = || 0.0;
    let mut progress = |_p: Progress| true;
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &clock,
    };
    let bundle = solve_bundle(need.as_bytes(), "need", &[], false, &mut control)
        .unwrap_or_else(|e| panic!("the need does not read: {e}"));
    serde_json::to_value(bundle).expect("a bundle serialises")["report"].clone()
}

/// The demo need at a target its one-stage designs miss.
fn tight_need() -> String {
    let need = spanfit::demo::NEED_TOML
        .replace("max_error_pct_fs = 0.5", "max_error_pct_fs = 0.3")
        .replace("max_stages = 3", "max_stages = 1");
    assert_ne!(
        need,
        spanfit::demo::NEED_TOML,
        "the demo need changed shape"
    );
    need
}

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
    let report = solve(&tight_need());
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
        let again = solve(&need.to_string());
        assert_eq!(
            again["status"], "ok",
            "`{}` applied as {} does not give a feasible need: {}",
            s["change"], s["apply"], again["reason"]
        );
        assert_eq!(again["design"]["error"]["meets_target"], true);
    }
}
