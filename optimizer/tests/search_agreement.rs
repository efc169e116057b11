//! The optimiser against the exhaustive mode on small spaces: random
//! needs (single-ended and differential sensors, one or two stages) with a
//! small stock (an E12 1 % family and a coarse E6 0.1 % family, where stage
//! gains round by up to 10 % and only cancellation across stages meets a
//! tight target); both must reach the same optimum objective.

use proptest::prelude::*;
use spanfit::search::{solve, Progress, SearchMode, SolveControl};
use spanfit::stock::{parse_stock, StockFile};

fn small_stock() -> Vec<StockFile> {
    let f = |name: &str, text: &str| StockFile {
        name: name.into(),
        bytes: text.as_bytes().to_vec(),
    };
    vec![
        f(
            "resistors.csv",
            "part_id,series,min_ohms,max_ohms,tolerance_pct,tcr_ppm_per_c,package,unit_cost,stock_qty\n\
             T-E12,E12,100,1000000,1.0,100,0603,0.003,\n\
             T-E6P,E6,100,1000000,0.1,25,0603,0.03,\n",
        ),
        f(
            "opamps.csv",
            "part_id,channels,supply_min_v,supply_max_v,input_headroom_low_v,input_headroom_high_v,output_headroom_low_v,output_headroom_high_v,vos_max_uv,vos_drift_uv_per_c,ib_max_na,ios_max_na,aol_min_db,gbw_mhz,en_nv_rthz,in_pa_rthz,cmrr_min_db,unit_cost,stock_qty\n\
             T-OA2,2,2.7,12,0,0,0.02,0.02,50,0.5,0.1,0.1,110,2,20,0.1,100,0.50,100\n",
        ),
        f(
            "references.csv",
            "part_id,volts,initial_pct,tempco_ppm_per_c,dropout_v,noise_uv_pp,unit_cost,stock_qty\n\
             T-REF2,2.048,0.1,20,0.2,10,0.40,100\n",
        ),
    ]
}

fn need_text(differential: bool, span_mv: f64, high_v: f64, err: f64, stages: usize) -> String {
    let (output, cm) = if differential {
        ("differential", "common_mode_v = 2.5\n")
    } else {
        ("single-ended", "")
    };
    format!(
        "[sensor]\nsignal_low_v = 0.0\nsignal_high_v = {}\noutput = \"{output}\"\n{cm}source_ohms = 100.0\n\
         [adc]\nlow_v = 0.0\nhigh_v = {high_v}\nbits = 12\nmargin_pct = 8.0\n\
         [supply]\npositive_v = 5.0\nnegative_v = 0.0\n\
         [accuracy]\nmax_error_pct_fs = {err}\ncalibration = \"offset\"\ntemp_min_c = 0.0\ntemp_max_c = 50.0\n\
         [search]\nmax_stages = {stages}\nbom_line_cost = 0.02\ntime_limit_ms = 600000\n",
        span_mv / 1000.0
    )
}

/// The cost of the best design (if any) and the number of designs the
/// search analysed in full.
fn run_counted(need: &spanfit::need::Need, exhaustive: bool) -> (Option<f64>, u64) {
    let stock = parse_stock(&small_stock()).expect("stock parses");
    let clock = || 0.0;
    let mut progress = |_p: Progress| true;
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &clock,
    };
    let outcome = solve(
        need,
        &stock,
        SearchMode::from_exhaustive(exhaustive),
        &mut control,
    )
    .expect("search runs");
    (
        outcome.best.map(|b| b.costing.total),
        outcome.stats.evaluated,
    )
}

/// The cost of the best design, if any.
fn run(need: &spanfit::need::Need, exhaustive: bool) -> Option<f64> {
    run_counted(need, exhaustive).0
}

proptest! {
    #![proptest_config(ProptestConfig {
        cases: 16,
        // A fixed seed, so a failure reproduces and CI runs the same cases.
        rng_seed: proptest::test_runner::RngSeed::Fixed(1),
        failure_persistence: None,
        .. ProptestConfig::default()
    })]
    #[test]
    fn optimiser_matches_exhaustive(
        differential in any::<bool>(),
        span_mv in 20.0f64..400.0,
        high_v in prop::sample::select(vec![2.5f64, 3.0, 4.096]),
        err in prop::sample::select(vec![0.3f64, 0.6, 1.5]),
        stages in 1usize..=2,
    ) {
        let text = need_text(differential, span_mv, high_v, err, stages);
        let need = spanfit::need::parse_need(text.as_bytes(), "random.toml").expect("need parses");
        let fast = run(&need, false);
        let full = run(&need, true);
        match (fast, full) {
            (Some(a), Some(b)) => prop_assert!((a - b).abs() < 1e-9, "optimised {a} vs exhaustive {b} for\n{text}"),
            (None, None) => {}
            (a, b) => prop_assert!(false, "optimised {a:?} vs exhaustive {b:?} for\n{text}"),
        }
    }
}

/// A need that has designs: both modes find one, at the same cost, and the
/// optimiser analyses fewer designs in full than the exhaustive mode.
#[test]
fn feasible_case_agrees() {
    for (differential, stages) in [(false, 1), (false, 2), (true, 1), (true, 2)] {
        let text = need_text(differential, 100.0, 3.0, 3.0, stages);
        let need = spanfit::need::parse_need(text.as_bytes(), "case.toml").expect("need parses");
        let (fast, fast_evaluated) = run_counted(&need, false);
        let (full, full_evaluated) = run_counted(&need, true);
        assert!(fast.is_some(), "optimiser found no design for\n{text}");
        assert_eq!(
            fast.map(|c| (c * 1e9).round()),
            full.map(|c| (c * 1e9).round()),
            "{text}"
        );
        assert!(
            fast_evaluated < full_evaluated,
            "the optimiser analysed {fast_evaluated} designs, the exhaustive mode \
             {full_evaluated}, for\n{text}"
        );
    }
}

/// Cases where the two modes once disagreed (found by the property test
/// with other seeds; all single-ended, two stages): optima at the edge of
/// the target, reached only by value sets whose errors cancel across
/// stages. The property test keeps no failure file (its seed is fixed), so
/// every such case lives here.
#[test]
fn former_disagreements_agree() {
    for (span_mv, high_v, err) in [
        (140.754_258_498_921_67, 4.096, 1.5),
        (133.937_810_854_299_87, 4.096, 0.6),
        (133.937_810_854_299_87, 3.0, 0.6),
        (68.176_384_646_760_35, 3.0, 1.5),
    ] {
        let text = need_text(false, span_mv, high_v, err, 2);
        let need = spanfit::need::parse_need(text.as_bytes(), "case.toml").expect("need parses");
        let fast = run(&need, false).map(|c| (c * 1e9).round());
        let full = run(&need, true).map(|c| (c * 1e9).round());
        assert_eq!(fast, full, "{text}");
    }
}
