//! The exhaustive walk hears a Stop inside a structure, not only between
//! structures: while it takes one structure's resistor assignments it
//! calls the progress sink now and then (by the clock), and a `false`
//! ends the walk as unfinished, never infeasible. The clock here jumps by
//! more than the reporting interval at every reading, so the reports
//! inside a structure are certain and the test does not depend on the
//! machine's speed; a report inside a structure repeats the count of
//! structures done, which a report between structures never does.

use spanfit::search::{solve, Progress, SearchMode, SolveControl, Stop};
use std::cell::Cell;

#[test]
fn a_cancel_inside_a_structure_ends_the_walk_unfinished() {
    let (need, stock) =
        spanfit::api::load(spanfit::demo::NEED_TOML.as_bytes(), "demo-need.toml", &[])
            .expect("the demo loads");
    let now = Cell::new(0.0);
    let clock = || {
        now.set(now.get() + 1_000.0);
        now.get()
    };
    let previous: Cell<Option<u64>> = Cell::new(None);
    let inside = Cell::new(false);
    let calls = Cell::new(0u32);
    let mut progress = |p: Progress| {
        calls.set(calls.get() + 1);
        if previous.get() == Some(p.done) {
            // A second report at the same count: from inside a structure.
            inside.set(true);
            return false;
        }
        previous.set(Some(p.done));
        true
    };
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &clock,
    };
    let outcome = solve(&need, &stock, SearchMode::Exhaustive, &mut control).expect("solves");
    assert!(
        inside.get(),
        "no report inside a structure in {} calls",
        calls.get()
    );
    assert_eq!(outcome.stopped, Some(Stop::Cancelled));
    assert!(outcome.infeasible.is_none(), "{:?}", outcome.infeasible);
    assert!(!outcome.stats.proven_optimal);
    let report = spanfit::report::solve_report(&need, &stock, &outcome);
    let json = serde_json::to_value(&report).expect("serialises");
    if outcome.best.is_none() {
        assert_eq!(json["status"], "unfinished");
    }
    assert_ne!(json["status"], "infeasible");
}
