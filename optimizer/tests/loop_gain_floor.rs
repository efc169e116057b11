//! The sequence floors (search/floors.rs: the loop-gain floor of
//! single-section stages, the common-mode floor of a first discrete
//! instrumentation stage) against the analysis, on the invented demo need
//! and stock.
//!
//! What must hold: with one op-amp alone on the shelf, every design the
//! error objective returns (its most accurate designs, best and front)
//! reports an error at least the floor of its own stage sequence and
//! first part, at every stage count; and the floors must bind, ruling the
//! cheap drifting single op-amp out of the demo's 0.5 % FS target, or this
//! proves nothing. Hand-built designs with that part (the examples' demo
//! designs with the part swapped in) are checked the same way.

use spanfit::analysis::analyze;
use spanfit::design::{parse_design, Design};
use spanfit::need::{parse_need, Need};
use spanfit::search::{
    first_stage_floor_pct, solve_unexplained, space_cost_floor, Progress, SearchMode, SolveControl,
    SolveOutcome,
};
use spanfit::stock::{parse_stock, Stock, StockFile};

/// The demo need with another objective and stage limit. The error
/// objective gets a looser target (1.5 % FS), so its search returns the
/// most accurate designs of parts that cannot meet the demo's 0.5 % FS
/// (not much looser: the filter may droop by a tenth of the target), and
/// 5 % of ADC margin each end (K = 108), so drifting parts' untrimmed
/// offsets still fit the ADC window.
fn demo_need(objective: &str, max_stages: usize) -> Need {
    let (target, margin) = if objective == "error" {
        ("1.5", "5.0")
    } else {
        ("0.5", "2.0")
    };
    let text = include_str!("../../examples/demo-need.toml")
        .replace(
            "max_error_pct_fs = 0.5",
            &format!("max_error_pct_fs = {target}"),
        )
        .replace("margin_pct = 2.0", &format!("margin_pct = {margin}"))
        .replace(
            "objective = \"cost\"",
            &format!("objective = \"{objective}\""),
        )
        .replace("max_stages = 3", &format!("max_stages = {max_stages}"));
    parse_need(text.as_bytes(), "demo-need.toml").expect("the demo need parses")
}

/// The demo stock folder (`parts-data/demo-stock`, with its matched
/// networks), its files taken in at compile time.
fn demo_stock() -> Stock {
    macro_rules! file {
        ($name:literal) => {
            StockFile {
                name: $name.into(),
                bytes: include_bytes!(concat!("../../parts-data/demo-stock/", $name)).to_vec(),
            }
        };
    }
    parse_stock(&[
        file!("capacitors.csv"),
        file!("inamps.csv"),
        file!("networks.csv"),
        file!("opamps.csv"),
        file!("references.csv"),
        file!("resistors.csv"),
    ])
    .expect("the demo stock parses")
}

/// The demo stock with only the op-amp `id` on its shelf (and no in-amp).
fn shelf(id: &str) -> Stock {
    let mut stock = demo_stock();
    stock.inamps.clear();
    stock.opamps.retain(|p| p.part_id == id);
    assert_eq!(stock.opamps.len(), 1, "{id} is in the demo stock");
    stock
}

fn run(need: &Need, stock: &Stock) -> SolveOutcome {
    let clock = || 0.0;
    let mut progress = |_p: Progress| true;
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &clock,
    };
    solve_unexplained(need, stock, SearchMode::Optimised, &mut control).expect("the search runs")
}

/// Floor against error for every design the error objective returns, per
/// op-amp and stage count; the floor must come near the error somewhere.
#[test]
#[cfg_attr(
    debug_assertions,
    ignore = "release only: scripts/test.sh runs it in its release step (debug searches are slow)"
)]
fn floors_are_below_the_most_accurate_designs() {
    let mut checked = 0;
    let mut near = 0;
    for id in ["OA-GP4", "OA-RR1", "OA-RR2", "OA-ZD1"] {
        let stock = shelf(id);
        for stages in 1..=2 {
            let need = demo_need("error", stages);
            let outcome = run(&need, &stock);
            for design in outcome.best.iter().chain(outcome.alternatives.iter()) {
                let floor = first_stage_floor_pct(&need, &stock, &design.design)
                    .expect("the design's part is on the shelf");
                let error = design.analysis.basis_pct_fs;
                let shapes: Vec<_> = design.design.stages.iter().map(|s| s.shape).collect();
                checked += 1;
                assert!(
                    floor <= error * (1.0 + 1e-9),
                    "{id}, {stages} stage(s), {shapes:?}: floor {floor} % FS over the error \
                     {error} % FS"
                );
                if floor > 0.4 * error {
                    near += 1;
                }
            }
        }
    }
    assert!(checked >= 8, "only {checked} designs checked");
    assert!(near >= 2, "the floor came near the error only {near} times");
}

/// The drifting single op-amp of the demo stock in the demo's designs
/// (a difference stage on discrete resistors, and on the matched network):
/// its floor in a one-stage difference sequence is over the 0.5 % FS
/// target, and the analysis agrees: the design fails a check, and if it
/// passed them all it would report at least the floor.
#[test]
fn the_drifting_part_is_ruled_out_of_the_demo_and_the_analysis_agrees() {
    let need = demo_need("cost", 3);
    let stock = demo_stock();
    for text in [
        include_str!("../../examples/demo-solved-design.json"),
        include_str!("../../examples/demo-network-design.json"),
    ] {
        let swapped = text.replace("OA-ZD1", "OA-RR1").replace("OA-ZD2", "OA-RR1");
        let design: Design = parse_design(swapped.as_bytes(), "swapped.json", &stock)
            .expect("the example design reads");
        assert_eq!(design.stages[0].amplifier, "OA-RR1");
        let floor = first_stage_floor_pct(&need, &stock, &design).expect("OA-RR1 is stocked");
        assert!(floor > 0.5, "floor {floor} % FS does not rule OA-RR1 out");
        let (_, analysis) =
            analyze(&need, &stock, &design, 0, 1).expect("the swapped design analyses");
        let error = analysis.basis_pct_fs;
        // The floor holds for designs that pass every check; this one
        // must fail one (its untrimmed offset takes the output out of the
        // ADC window) or report at least the floor.
        assert!(
            !analysis.feasible || floor <= error,
            "floor {floor} % FS over the analysed error {error} % FS of a buildable design"
        );
        assert!(
            !analysis.meets_target,
            "the analysis passes the swapped design"
        );
    }
}

/// On the embedded demo need and stock, the space bound rules out every
/// op-amp cheaper than the precise single one (their floors are over the
/// target in every sequence), so the least cost it proves is at least
/// that part's price, and never above the cost of the design the search
/// returns.
#[test]
fn the_demo_bound_holds_the_precise_part() {
    let need = parse_need(spanfit::demo::NEED_TOML.as_bytes(), "demo-need.toml")
        .expect("the demo need parses");
    let stock = parse_stock(&spanfit::demo::stock_files()).expect("the demo stock parses");
    let precise = stock
        .opamps
        .iter()
        .find(|p| p.part_id == "OA-ZD1")
        .expect("OA-ZD1 in the demo stock")
        .unit_cost;
    let floor = space_cost_floor(&need, &stock).expect("the demo space holds designs");
    assert!(
        floor > precise,
        "bound {floor} not above OA-ZD1's {precise}"
    );
    let outcome = run(&need, &stock);
    let best = outcome.best.expect("the demo need has a design");
    assert!(floor <= best.costing.total + 1e-9);
}

/// At 0.01 % FS the demo need is proven infeasible by the floors: every
/// single-section sequence pays at least the finest stocked resistor's
/// 0.1 % over the span (about 0.1 % FS), a first discrete instrumentation
/// stage its part's drift twice (0.013 % FS on the precise op-amp), and
/// every other first part its own floor; before these floors the
/// optimised mode could only say it found nothing.
#[test]
fn a_target_under_the_loop_gain_floor_is_proven_infeasible() {
    let text =
        spanfit::demo::NEED_TOML.replacen("max_error_pct_fs = 0.5", "max_error_pct_fs = 0.01", 1);
    let need = parse_need(text.as_bytes(), "tight.toml").expect("the need parses");
    let stock = parse_stock(&spanfit::demo::stock_files()).expect("the demo stock parses");
    assert!(
        space_cost_floor(&need, &stock).is_none(),
        "the bound proves no design"
    );
    let outcome = run(&need, &stock);
    assert!(outcome.best.is_none());
    assert!(outcome.infeasible.as_ref().is_some_and(|i| i.proven));
}
