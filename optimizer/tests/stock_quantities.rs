//! Stock quantities bind the search: with single resistor rows held one
//! or two at a time, no returned design uses a part more often than the
//! shelf holds, and the search still finds a design.

use spanfit::search::{solve, Progress, SearchMode, SolveControl};
use spanfit::stock::{parse_stock, StockFile};
use std::collections::BTreeMap;

/// Single rows of every E24 value: a 1 % grade, and two 0.1 % grades of
/// the same values, the cheaper held `qty` at a time, the dearer unlimited.
fn stock(qty: u32) -> Vec<StockFile> {
    let mut rows = String::from(
        "part_id,value_ohms,tolerance_pct,tcr_ppm_per_c,package,unit_cost,stock_qty\n",
    );
    for v in spanfit::series::Series::E24.values_in(100.0, 1e6) {
        let code = spanfit::series::value_code(v);
        rows.push_str(&format!("Q1-{code},{v},1.0,100,0603,0.004,\n"));
        rows.push_str(&format!("QA-{code},{v},0.1,25,0603,0.04,{qty}\n"));
        rows.push_str(&format!("QB-{code},{v},0.1,25,0603,0.05,\n"));
    }
    let mut files = spanfit::demo::stock_files();
    files.retain(|f| f.name != "resistors.csv");
    files.push(StockFile {
        name: "resistors.csv".into(),
        bytes: rows.into_bytes(),
    });
    files
}

#[test]
fn no_part_is_used_more_often_than_stocked() {
    let need_text =
        spanfit::demo::NEED_TOML.replace("max_error_pct_fs = 0.5", "max_error_pct_fs = 1.0");
    let need = spanfit::need::parse_need(need_text.as_bytes(), "demo.toml").expect("need parses");
    for qty in [1u32, 2] {
        let stock = parse_stock(&stock(qty)).expect("stock parses");
        let clock = || 0.0;
        let mut progress = |_p: Progress| true;
        let mut control = SolveControl {
            progress: &mut progress,
            now_ms: &clock,
        };
        let outcome =
            solve(&need, &stock, SearchMode::Optimised, &mut control).expect("search runs");
        let best = outcome.best.as_ref().expect("a design within stock");
        for c in &outcome.alternatives {
            let mut used: BTreeMap<&str, u32> = BTreeMap::new();
            for r in &c.built.resistors {
                *used.entry(r.part.part_id.as_str()).or_default() += 1;
            }
            for (id, n) in used {
                let part = stock.resistor(id).expect("part from stock");
                if let Some(limit) = part.stock_qty {
                    assert!(
                        n <= limit,
                        "{id} used {n} times, {limit} in stock (qty {qty})"
                    );
                }
            }
        }
        assert!(best.analysis.meets_target);
    }
}
