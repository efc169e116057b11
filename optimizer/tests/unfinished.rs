//! A search stopped by its time limit or by a cancel before it found a
//! design reports `unfinished`, never `infeasible`: it has neither a
//! design nor a proof that none exists. The clock here is a counter that
//! jumps by far more than the limit at every reading, so the stop is
//! certain and the test does not depend on the machine's speed.

use spanfit::report::Status;
use spanfit::search::{solve, Progress, SearchMode, SolveControl, Stop};
use std::cell::Cell;

fn demo() -> (spanfit::need::Need, spanfit::stock::Stock) {
    spanfit::api::load(spanfit::demo::NEED_TOML.as_bytes(), "demo-need.toml", &[])
        .expect("the demo loads")
}

#[test]
fn a_time_limit_reached_before_any_design_is_unfinished() {
    let (need, stock) = demo();
    let now = Cell::new(0.0);
    let clock = || {
        now.set(now.get() + 1e6);
        now.get()
    };
    let mut progress = |_: Progress| true;
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &clock,
    };
    let outcome = solve(&need, &stock, SearchMode::Optimised, &mut control).expect("solves");
    assert!(outcome.best.is_none());
    assert!(outcome.infeasible.is_none(), "{:?}", outcome.infeasible);
    assert_eq!(
        outcome.stopped,
        Some(Stop::TimeLimit {
            limit_ms: need.search.time_limit_ms
        })
    );
    assert!(outcome.unfinished());
    assert!(!outcome.stats.proven_optimal);
    let report = spanfit::report::solve_report(&need, &stock, &outcome);
    assert_eq!(report.status, Status::Unfinished);
    assert!(report.infeasible.is_none());
    let json = serde_json::to_value(&report).expect("serialises");
    assert_eq!(json["status"], "unfinished");
}

#[test]
fn a_cancel_before_any_design_is_unfinished() {
    let (need, stock) = demo();
    let clock = || 0.0;
    let mut progress = |_: Progress| false;
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &clock,
    };
    let outcome = solve(&need, &stock, SearchMode::Optimised, &mut control).expect("solves");
    assert!(outcome.best.is_none());
    assert!(outcome.infeasible.is_none());
    assert_eq!(outcome.stopped, Some(Stop::Cancelled));
    let report = spanfit::report::solve_report(&need, &stock, &outcome);
    assert_eq!(report.status, Status::Unfinished);
    assert!(report
        .reason
        .as_deref()
        .is_some_and(|r| r.contains("stopped")));
}

#[test]
fn a_search_with_time_enough_is_ok_and_not_stopped() {
    let (need, stock) = demo();
    let clock = || 0.0;
    let mut progress = |_: Progress| true;
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &clock,
    };
    let outcome = solve(&need, &stock, SearchMode::Optimised, &mut control).expect("solves");
    assert!(outcome.best.is_some());
    assert!(!outcome.unfinished());
    assert!(outcome.stopped.is_none());
    // The demo's space is too large to finish: no proof, a valid gap.
    assert_eq!(outcome.stats.proven_optimal, outcome.stats.gap.is_none());
}

/// The optimised search finishing its walk without a design on a space
/// too large to finish exhaustively proves nothing: `unfinished` (exit 3),
/// with the explanation marked unproven and a reason that says so. The
/// target (0.2 % FS) is below what the search reaches and above what the
/// floors prove (at 0.01 % FS they now prove the need infeasible).
#[test]
fn no_design_found_without_a_proof_is_unfinished_not_infeasible() {
    let text =
        spanfit::demo::NEED_TOML.replacen("max_error_pct_fs = 0.5", "max_error_pct_fs = 0.2", 1);
    assert_ne!(
        text,
        spanfit::demo::NEED_TOML,
        "the demo need changed shape"
    );
    let (need, stock) = spanfit::api::load(text.as_bytes(), "tight.toml", &[]).expect("loads");
    let clock = || 0.0;
    let mut progress = |_: Progress| true;
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &clock,
    };
    let outcome = solve(&need, &stock, SearchMode::Optimised, &mut control).expect("solves");
    assert!(outcome.best.is_none());
    assert!(outcome.stopped.is_none());
    let why = outcome.infeasible.as_ref().expect("explained");
    assert!(!why.proven);
    assert!(outcome.unfinished());
    let report = spanfit::report::solve_report(&need, &stock, &outcome);
    assert_eq!(report.status, Status::Unfinished);
    let json = serde_json::to_value(&report).expect("serialises");
    assert_eq!(json["infeasible"]["proven"], false);
    let reason = report.reason.as_deref().unwrap_or_default();
    assert!(
        reason.contains("does not show that none exists"),
        "{reason}"
    );
    let text = spanfit::report::report_text(&need, &report);
    assert!(!text.contains("No design meets the need"), "{text}");
    assert!(text.contains("not a proof that none exists"), "{text}");
}
