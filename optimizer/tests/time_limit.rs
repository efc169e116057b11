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

/// The demo stock ten times over (every op-amp, reference and resistor
/// family repeated with its own id and a shifted price and grade), so
/// the number of grade combinations runs into the billions.
fn tenfold_stock() -> Vec<spanfit::stock::StockFile> {
    spanfit::demo::stock_files()
        .into_iter()
        .map(|file| {
            let text = String::from_utf8(file.bytes).expect("demo stock is UTF-8");
            let mut lines = text.lines();
            let header = lines.next().expect("a header").to_string();
            let rows: Vec<&str> = lines.filter(|l| !l.trim().is_empty()).collect();
            let mut out = header.clone() + "\n";
            let cost_column = header
                .split(',')
                .position(|c| c == "unit_cost")
                .expect("a unit_cost column");
            let tolerance_column = header.split(',').position(|c| c == "tolerance_pct");
            for copy in 0..10 {
                for row in &rows {
                    let mut cells: Vec<String> = row.split(',').map(str::to_string).collect();
                    cells[0] = format!("{}-{copy}", cells[0]);
                    let cost: f64 = cells[cost_column].parse().expect("a cost");
                    cells[cost_column] = format!("{:.4}", cost * (1.0 + copy as f64 / 20.0));
                    if let Some(t) = tolerance_column {
                        let tol: f64 = cells[t].parse().expect("a tolerance");
                        cells[t] = format!("{}", tol * (1.0 + copy as f64 / 10.0));
                    }
                    out.push_str(&cells.join(","));
                    out.push('\n');
                }
            }
            spanfit::stock::StockFile {
                name: file.name,
                bytes: out.into_bytes(),
            }
        })
        .collect()
}

/// Before structures were generated lazily, this call listed every grade
/// combination first (billions here) and ran out of memory before it
/// ever read the clock.
#[test]
fn a_tenfold_stock_stops_at_the_limit_without_listing_every_structure() {
    let text = spanfit::demo::NEED_TOML;
    let (mut need, stock) =
        spanfit::api::load(text.as_bytes(), "need.toml", &tenfold_stock()).expect("loads");
    need.search.time_limit_ms = 300;
    let step_ms = 0.05;
    let now = Cell::new(0.0);
    let clock = || {
        now.set(now.get() + step_ms);
        now.get()
    };
    let mut progress = |_: Progress| true;
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &clock,
    };
    let outcome = solve(&need, &stock, SearchMode::Optimised, &mut control).expect("solves");
    assert!(
        outcome.stats.structures > 1_000_000_000,
        "the test stock should give billions of structures, got {}",
        outcome.stats.structures
    );
    assert!(
        now.get() <= need.search.time_limit_ms as f64 + 50.0,
        "the call took {:.1} ms of a {} ms limit",
        now.get(),
        need.search.time_limit_ms
    );
}
