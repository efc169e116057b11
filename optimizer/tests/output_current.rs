//! The output-current check: every amplifier section's output current at
//! its raw extremes, into its feedback network, the next stage and the
//! filter capacitor's recharge, against the part's `output_current_ma`.
//! The demo design passes with the demo stock; the same design fails with
//! a tiny limit; the recharge share of the filter's driver is the whole
//! raw output range across the series resistor at its lower tolerance
//! limit (Ohm's law).

use spanfit::analysis::Finding;
use spanfit::need::parse_need;
use spanfit::stock::{parse_stock, Stock, StockFile};

/// The design the demo solve returns (two op-amp stages; the second
/// drives the pair).
const DESIGN: &str = include_str!("../../examples/demo-solved-design.json");

/// The demo stock with every amplifier's `output_current_ma` set to
/// `limit_ma` (`None`: as the demo stock has it).
fn stock(limit_ma: Option<f64>) -> Stock {
    let mut files: Vec<StockFile> = spanfit::demo::stock_files();
    if let Some(limit) = limit_ma {
        for f in &mut files {
            if f.name == "opamps.csv" || f.name == "inamps.csv" {
                let text = String::from_utf8(f.bytes.clone()).expect("text");
                let mut lines = text.lines();
                let header: Vec<&str> = lines.next().expect("header").split(',').collect();
                let column = header
                    .iter()
                    .position(|c| *c == "output_current_ma")
                    .expect("the demo tables carry output_current_ma");
                let mut out = header.join(",") + "\n";
                for line in lines {
                    let mut cells: Vec<String> = line.split(',').map(String::from).collect();
                    cells[column] = limit.to_string();
                    out.push_str(&(cells.join(",") + "\n"));
                }
                f.bytes = out.into_bytes();
            }
        }
    }
    parse_stock(&files).expect("stock parses")
}

fn analyse(stock: &Stock) -> spanfit::search::Candidate {
    let need = parse_need(spanfit::demo::NEED_TOML.as_bytes(), "demo.toml").expect("need");
    let design = spanfit::api::read_design(DESIGN.as_bytes(), "demo-solved-design.json", stock)
        .expect("design");
    spanfit::api::evaluate(&need, stock, &design).expect("analysis")
}

fn current_findings(c: &spanfit::search::Candidate) -> Vec<&Finding> {
    c.analysis
        .findings
        .iter()
        .filter(|f| f.check == "output current")
        .collect()
}

#[test]
fn the_demo_design_drives_within_its_parts_limits() {
    let c = analyse(&stock(None));
    let found = current_findings(&c);
    // One per amplifier section.
    assert_eq!(found.len(), c.built.sections.len(), "{found:?}");
    assert!(found.iter().all(|f| f.ok), "{found:?}");
    // The section driving the pair: its recharge share is the raw output
    // range over the series resistor at its lower limit (Ohm's law), and
    // the total is at least that.
    let filter = c
        .built
        .filter
        .as_ref()
        .expect("the demo design gets a pair");
    let driver = found
        .iter()
        .find(|f| f.detail.contains("recharging the filter capacitor"))
        .expect("the filter's driver shows its recharge");
    let swing = c
        .analysis
        .findings
        .iter()
        .find(|f| f.check == "output swing" && f.subject == driver.subject)
        .expect("the driver's swing finding");
    let [low, high, _, _] = swing.numbers;
    let r_low = filter.series.ohms * (1.0 - filter.series.tolerance_pct / 100.0);
    let want_ma = 1e3 * (high - low) / r_low;
    let [total, limit, recharge, _] = driver.numbers;
    assert!(
        (recharge - want_ma).abs() <= 1e-9 * want_ma.max(1.0),
        "{recharge} mA against Ohm's law {want_ma} mA"
    );
    assert!(total >= recharge && total <= limit, "{driver:?}");
    assert!(
        want_ma > 0.1,
        "the demo's output moves volts across kilohms"
    );
}

#[test]
fn a_tiny_output_current_limit_fails_the_check() {
    let c = analyse(&stock(Some(0.001)));
    let found = current_findings(&c);
    // The offset buffer drives its divider tap into the in-amp's
    // reference pin: microamps, over a 1 uA limit.
    let failed: Vec<_> = found.iter().filter(|f| !f.ok).collect();
    assert!(!failed.is_empty(), "{found:?}");
    assert!(!c.analysis.feasible);
    let words = failed[0].plain_words();
    assert!(words.contains("over the part's 0.0010 mA"), "{words}");
}
