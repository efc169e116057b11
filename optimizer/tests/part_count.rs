//! `search.max_parts` judges a design without its filter pair, in the
//! search and in `analyze` alike (docs/need.md): the demo need (an
//! invented scenario) at a limit of 5 parts is met by its one-stage
//! difference design, 5 parts and the pair's 2, and the report of that
//! design says it meets the need; at 4 parts nothing does.
//!
//! The analysis once counted the pair in this check while the search left
//! it out, so the solve of the demo need at 5 parts found nothing.

mod common;
use common::solve::{demo_need_with, solve_report};

fn demo_with_parts(max_parts: usize) -> String {
    let need = demo_need_with(0.5, 3);
    assert!(need.contains("max_parts = 20"), "the demo need changed");
    need.replace("max_parts = 20", &format!("max_parts = {max_parts}"))
}

#[test]
fn the_filter_pair_is_not_counted_against_max_parts() {
    let report = solve_report(&demo_with_parts(5), "five.toml");
    assert_eq!(report["status"], "ok", "{}", report["reason"]);
    let design = &report["design"];
    assert_eq!(design["part_count"], 7, "five parts and the pair's two");
    assert!(design["filter"].is_object(), "the pair is placed");
    assert_eq!(design["error"]["meets_target"], true);
    let findings = design["findings"].as_array().expect("findings");
    let count = findings
        .iter()
        .find(|f| f["check"] == "part count")
        .expect("a part-count finding");
    assert_eq!(count["ok"], true, "{count}");
    assert!(
        count["detail"]
            .as_str()
            .is_some_and(|d| d.starts_with("5 parts without the filter pair")),
        "{count}"
    );
}

#[test]
fn a_limit_below_the_smallest_design_leaves_none() {
    let report = solve_report(&demo_with_parts(4), "four.toml");
    assert_ne!(report["status"], "ok");
    assert!(report["design"].is_null(), "{}", report["design"]);
}
