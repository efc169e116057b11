//! The whole solve call (the search, the explanation of an infeasible
//! need and the re-solves that verify its suggestions) stays within the
//! need's `time_limit_ms`, on the caller's clock. The clock here is a
//! counter that advances a fixed step at every reading, so the test
//! measures the call in clock readings, not in the machine's speed.

use spanfit::search::{solve, Progress, SearchMode, SolveControl};
use std::cell::Cell;

/// The demo need at a target its stock misses: the search finishes
/// without a design and the explanation runs its re-solves.
fn tight_demo() -> (spanfit::need::Need, spanfit::stock::Stock) {
    let text =
        spanfit::demo::NEED_TOML.replacen("max_error_pct_fs = 0.5", "max_error_pct_fs = 0.1", 1);
    assert_ne!(
        text,
        spanfit::demo::NEED_TOML,
        "the demo need changed shape"
    );
    spanfit::api::load(text.as_bytes(), "tight.toml", &[]).expect("the need loads")
}

#[test]
fn an_infeasible_need_with_its_explanation_stays_within_the_limit() {
    let (mut need, stock) = tight_demo();
    need.search.time_limit_ms = 400;
    let step_ms = 0.05;
    let now = Cell::new(0.0);
    let clock = || {
        now.set(now.get() + step_ms);
        now.get()
    };
    let totals = std::cell::RefCell::new(std::collections::BTreeSet::new());
    let mut progress = |p: Progress| {
        totals.borrow_mut().insert(p.total);
        true
    };
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &clock,
    };
    let outcome = solve(&need, &stock, SearchMode::Optimised, &mut control).expect("solves");
    let spent = now.get();
    assert!(outcome.best.is_none());
    // One structure's work past the limit at most: the walk reads the
    // clock between structures.
    assert!(
        spent <= need.search.time_limit_ms as f64 + 50.0,
        "the call took {spent:.1} ms of a {} ms limit",
        need.search.time_limit_ms
    );
    assert_eq!(
        totals.borrow().len(),
        1,
        "progress changed its total within one call: {:?}",
        totals.borrow()
    );
    if let Some(why) = &outcome.infeasible {
        assert!(
            !why.binding.contains("allows"),
            "an unproven best is not what the stock allows: {}",
            why.binding
        );
    }
}
