//! Solving in tests: a control whose clock never moves, and the demo need
//! at another target.

use serde_json::Value;
use spanfit::search::{Progress, SolveControl};

/// Call `f` with a control whose clock never moves (no time limit binds,
/// so an outcome does not depend on the machine's speed) and whose
/// progress reports are ignored.
pub fn with_still_clock<R>(f: impl FnOnce(&mut SolveControl<'_>) -> R) -> R {
    let clock = || 0.0;
    let mut progress = |_p: Progress| true;
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &clock,
    };
    f(&mut control)
}

/// The demo need at `target_pct_fs` with at most `max_stages` stages;
/// fails when the demo need no longer holds the lines this changes.
pub fn demo_need_with(target_pct_fs: f64, max_stages: usize) -> String {
    let demo = spanfit::demo::NEED_TOML;
    for line in ["max_error_pct_fs = 0.5", "max_stages = 3"] {
        assert!(
            demo.contains(line),
            "the demo need changed shape: no `{line}`"
        );
    }
    demo.replace(
        "max_error_pct_fs = 0.5",
        &format!("max_error_pct_fs = {target_pct_fs}"),
    )
    .replace("max_stages = 3", &format!("max_stages = {max_stages}"))
}

/// Solve need text (on the demo stock unless it names one) with a still
/// clock; the bundle's report as JSON.
pub fn solve_report(need: &str, name: &str) -> Value {
    let bundle = with_still_clock(|control| {
        spanfit::api::solve_bundle(need.as_bytes(), name, &[], false, control)
    })
    .unwrap_or_else(|e| panic!("the need does not read: {e}"));
    serde_json::to_value(bundle).expect("a bundle serialises")["report"].clone()
}

/// Solve need text against stock files with a still clock, then `analyze`
/// the design file the report carries against the same need and stock:
/// the round trip must give the very same reported design (total and
/// budget included). Returns the solve report as JSON; fails when the
/// need does not read, the report is not `ok`, or the two disagree.
pub fn solve_and_analyze(need: &str, name: &str, files: &[spanfit::stock::StockFile]) -> Value {
    let solved = with_still_clock(|control| {
        spanfit::api::solve_bundle(need.as_bytes(), name, files, false, control)
    })
    .unwrap_or_else(|e| panic!("{name}: {e}"));
    let report = serde_json::to_value(solved).expect("a bundle serialises")["report"].clone();
    assert_eq!(report["status"], "ok", "{name}: {}", report["reason"]);
    let file = report["design"]["file"].to_string();
    let analysed =
        spanfit::api::analyze_bundle(need.as_bytes(), name, files, file.as_bytes(), "solved.json")
            .unwrap_or_else(|e| panic!("{name}, its design file: {e}"));
    let analysed = serde_json::to_value(analysed).expect("a bundle serialises")["report"].clone();
    assert_eq!(
        analysed["design"], report["design"],
        "{name}: analyze of the solved design file reports another design"
    );
    report
}
