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
        for c in std::iter::once(best).chain(&outcome.alternatives) {
            assert_eq!(overused(&stock, c), Vec::<String>::new(), "qty {qty}");
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

/// The demo stock with one more resistor row: `ZQ-1K40`, 1.40 kohm, the
/// value the demo design's filter pair takes, cheaper than every other
/// resistor and held `qty` at a time.
fn stock_with_scarce_pair_resistor(qty: u32) -> spanfit::stock::Stock {
    let mut files = spanfit::demo::stock_files();
    for f in &mut files {
        if f.name == "resistors.csv" {
            let text = String::from_utf8(f.bytes.clone()).expect("demo table is text");
            let mut lines = text.lines();
            let header = lines.next().expect("header");
            let mut out = format!("{header},value_ohms\n");
            for line in lines {
                out.push_str(&format!("{line},\n"));
            }
            out.push_str(&format!("ZQ-1K40,,,,1.0,100,0603,0.001,{qty},1400\n"));
            f.bytes = out.into_bytes();
        }
    }
    parse_stock(&files).expect("stock parses")
}

/// The demo design with its offset divider's bottom resistor (and, with
/// `twice`, its gain resistor too) on the scarce part.
fn design_on_scarce_part(stock: &spanfit::stock::Stock, twice: bool) -> spanfit::design::Design {
    let mut text = include_str!("../../examples/demo-design.json")
        .replace("\"bottom\": \"HR-F1-1K10\"", "\"bottom\": \"ZQ-1K40\"");
    if twice {
        text = text.replace("\"rg\": \"HR-F01-432R\"", "\"rg\": \"ZQ-1K40\"");
    }
    assert!(text.contains("ZQ-1K40"), "the demo design changed");
    spanfit::design::parse_design(text.as_bytes(), "design.json", stock).expect("design parses")
}

/// Every placed part of a reported design (its resistors, the filter
/// pair, packages and references) against the stock's quantity.
fn overused(stock: &spanfit::stock::Stock, c: &spanfit::search::Candidate) -> Vec<String> {
    let mut used: BTreeMap<String, u32> = BTreeMap::new();
    for r in &c.built.resistors {
        *used.entry(r.part.part_id.clone()).or_default() += 1;
    }
    if let Some(f) = &c.built.filter {
        *used.entry(f.series.part_id.clone()).or_default() += 1;
        *used.entry(f.shunt.part_id.clone()).or_default() += 1;
    }
    for p in &c.built.packages {
        *used.entry(p.part_id.clone()).or_default() += 1;
    }
    used.into_iter()
        .filter_map(|(id, n)| {
            let qty = stock
                .resistor(&id)
                .map(|p| p.stock_qty)
                .or_else(|| stock.capacitor(&id).map(|p| p.stock_qty))
                .or_else(|| stock.opamp(&id).map(|p| p.stock_qty))
                .or_else(|| stock.inamp(&id).map(|p| p.stock_qty))
                .flatten()?;
            (n > qty).then(|| format!("{id} placed {n} times, {qty} in stock"))
        })
        .collect()
}

/// The filter pair respects the shelf and counts the design's own use of
/// a part: with the cheapest resistor of the pair's value out of stock,
/// or held once while the design places it once already, the pair takes
/// another resistor; held twice, the pair takes it (the cheapest). No
/// part is placed more often than stocked, and the stock check says so.
#[test]
fn the_filter_pair_counts_the_designs_own_use() {
    let need = spanfit::need::parse_need(spanfit::demo::NEED_TOML.as_bytes(), "demo.toml")
        .expect("need parses");
    for (qty, on_scarce) in [(0u32, false), (1, true), (2, true), (1, false)] {
        let stock = stock_with_scarce_pair_resistor(qty);
        let design = if on_scarce {
            design_on_scarce_part(&stock, false)
        } else {
            spanfit::design::parse_design(
                include_str!("../../examples/demo-design.json").as_bytes(),
                "demo-design.json",
                &stock,
            )
            .expect("design parses")
        };
        let c = spanfit::api::evaluate(&need, &stock, &design).expect("design analyses");
        let series = &c.built.filter.as_ref().expect("a pair is chosen").series;
        let left = qty - u32::from(on_scarce);
        if left >= 1 {
            assert_eq!(
                series.part_id, "ZQ-1K40",
                "the cheapest resistor, {left} left"
            );
        } else {
            assert_ne!(series.part_id, "ZQ-1K40", "none left at qty {qty}");
        }
        assert_eq!(overused(&stock, &c), Vec::<String>::new(), "qty {qty}");
        let stock_findings: Vec<_> = c
            .analysis
            .findings
            .iter()
            .filter(|f| f.check == "stock quantity" && f.subject == "ZQ-1K40")
            .collect();
        let placed = u32::from(on_scarce) + u32::from(left >= 1);
        assert_eq!(stock_findings.len(), usize::from(placed > 0), "qty {qty}");
        assert!(stock_findings.iter().all(|f| f.ok), "{stock_findings:?}");
    }
}

/// The analysis flags a design that places a part more often than the
/// stock holds, and says so in the check's detail.
#[test]
fn the_analysis_flags_a_part_placed_more_often_than_stocked() {
    let need = spanfit::need::parse_need(spanfit::demo::NEED_TOML.as_bytes(), "demo.toml")
        .expect("need parses");
    let stock = stock_with_scarce_pair_resistor(1);
    let design = design_on_scarce_part(&stock, true);
    let c = spanfit::api::evaluate(&need, &stock, &design).expect("design analyses");
    let finding = c
        .analysis
        .findings
        .iter()
        .find(|f| f.check == "stock quantity" && f.subject == "ZQ-1K40")
        .expect("a stock finding for the scarce part");
    assert!(!finding.ok, "{finding:?}");
    assert_eq!(finding.detail, "2 placed; the stock holds 1");
    assert!(!c.analysis.feasible, "a design over stock is not feasible");
}
