//! The search spaces the search benchmarks time, built in code so that
//! `search.rs` (criterion) and `scaling.rs` (the README table) time the
//! same thing.
//!
//! Every space is the demo need (an invented scenario, see
//! `examples/demo-need.toml`) against the demo op-amps, references and
//! in-amps, with the demo's two resistor families replaced by one 1 %
//! family and one 0.1 % family of the chosen series over 10 ohm to
//! 1 Mohm (costs and TCRs as in the demo stock), and `max_stages` set.
//!
//! Also the one design `analysis.rs` and `filter.rs` analyse
//! ([`three_stage`]): the demo need's bridge through a difference stage
//! with its REF pin on a 1.25 V reference, then two non-inverting stages
//! whose offsets come from buffered dividers.

// Benchmarks read the clock.
#![allow(clippy::disallowed_methods, clippy::disallowed_types)]
// Each bench binary uses part of this module.
#![allow(dead_code)]

use spanfit::design::{parse_design, Design};
use spanfit::need::{parse_need, Need};
use spanfit::search::{solve, Progress, SearchMode, SolveControl, SolveOutcome};
use spanfit::series::Series;
use spanfit::stock::{parse_stock, Stock, StockFile};
use std::time::Instant;

/// The resistor series of the scaling table, smallest first.
pub const SERIES: [Series; 4] = [Series::E12, Series::E24, Series::E96, Series::E192];

/// Time limit given to every benchmarked search: long enough that none
/// is cut short (each row reports whether its optimum was proven).
pub const TIME_LIMIT_MS: u64 = 3_600_000;

/// The demo stock with its resistor families replaced by a 1 % and a
/// 0.1 % family of `series`.
pub fn stock(series: Series) -> Stock {
    let name = series.name();
    let resistors = format!(
        "part_id,series,min_ohms,max_ohms,tolerance_pct,tcr_ppm_per_c,package,unit_cost,stock_qty\n\
         BR-{name}-F1,{name},10,1000000,1.0,100,0603,0.004,\n\
         BR-{name}-F01,{name},10,1000000,0.1,25,0603,0.045,\n"
    );
    let mut files: Vec<StockFile> = spanfit::demo::stock_files()
        .into_iter()
        .filter(|f| f.name != "resistors.csv")
        .collect();
    files.push(StockFile {
        name: "resistors.csv".into(),
        bytes: resistors.into_bytes(),
    });
    parse_stock(&files).unwrap_or_else(|e| panic!("bench stock for {name} does not parse: {e}"))
}

/// Values in one family of `series` over the bench range.
pub fn values_per_family(series: Series) -> usize {
    series.values_in(10.0, 1_000_000.0).len()
}

/// The demo need with `max_stages` and the series set, and a time limit
/// that does not cut any benchmarked search short.
pub fn need(series: Series, max_stages: usize) -> Need {
    let mut need = parse_need(spanfit::demo::NEED_TOML.as_bytes(), "demo-need.toml")
        .unwrap_or_else(|e| panic!("the demo need does not parse: {e}"));
    need.search.max_stages = max_stages;
    need.search.resistor_series = vec![series];
    need.search.time_limit_ms = TIME_LIMIT_MS;
    need
}

/// The same need with another accuracy target, % FS. The demo's
/// 0.5 % FS (worst case, offset-calibrated) has no design with E12 or E24
/// values; 1 % FS has one with every series.
pub fn with_target(mut need: Need, max_error_pct_fs: f64) -> Need {
    need.accuracy.max_error_pct_fs = max_error_pct_fs;
    need
}

/// The demo need and stock exactly as shipped (default time limit).
pub fn demo() -> (Need, Stock) {
    let need = parse_need(spanfit::demo::NEED_TOML.as_bytes(), "demo-need.toml")
        .unwrap_or_else(|e| panic!("the demo need does not parse: {e}"));
    let stock = parse_stock(&spanfit::demo::stock_files())
        .unwrap_or_else(|e| panic!("the demo stock does not parse: {e}"));
    (need, stock)
}

/// One search with the wall clock handed in (benches may read the clock;
/// the core may not).
pub fn run(need: &Need, stock: &Stock, exhaustive: bool) -> SolveOutcome {
    let t0 = Instant::now();
    let clock = move || t0.elapsed().as_secs_f64() * 1000.0;
    let mut progress = |_p: Progress| true;
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &clock,
    };
    solve(
        need,
        stock,
        SearchMode::from_exhaustive(exhaustive),
        &mut control,
    )
    .unwrap_or_else(|e| panic!("solve failed: {e}"))
}

/// A small invented space the exhaustive walk finishes: a single-ended
/// sensor over 0.1..0.3 V into a 0..3 V ADC (negative ideal offset), one
/// stage, at most `max_parts` parts, a target of `err` % FS, against
/// `grades` E6 families (1 % and 0.1 %) over 1 to 6.8 kohm, one op-amp and
/// one 2.5 V reference.
pub fn small_space(grades: usize, max_parts: usize, calibration: &str, err: f64) -> (Need, Stock) {
    let text = format!(
        "[sensor]\nsignal_low_v = 0.1\nsignal_high_v = 0.3\noutput = \"single-ended\"\nsource_ohms = 10.0\n\
         [adc]\nlow_v = 0.0\nhigh_v = 3.0\nbits = 12\nmargin_pct = 0.0\n\
         [supply]\npositive_v = 5.0\nnegative_v = 0.0\n\
         [accuracy]\nmax_error_pct_fs = {err}\ncalibration = \"{calibration}\"\ntemp_min_c = 0.0\ntemp_max_c = 50.0\n\
         [search]\nmax_stages = 1\nmax_parts = {max_parts}\nbom_line_cost = 0.02\ntime_limit_ms = {TIME_LIMIT_MS}\n"
    );
    let need = parse_need(text.as_bytes(), "small.toml")
        .unwrap_or_else(|e| panic!("the small need does not parse: {e}"));
    let mut resistors = String::from(
        "part_id,series,min_ohms,max_ohms,tolerance_pct,tcr_ppm_per_c,package,unit_cost,stock_qty\n\
         S-E6-1,E6,1000,6900,1.0,100,0603,0.003,\n",
    );
    if grades > 1 {
        resistors.push_str("S-E6-01,E6,1000,6900,0.1,25,0603,0.02,\n");
    }
    let file = |name: &str, text: String| StockFile {
        name: name.into(),
        bytes: text.into_bytes(),
    };
    let stock = parse_stock(&[
        file("resistors.csv", resistors),
        file(
            "opamps.csv",
            "part_id,channels,supply_min_v,supply_max_v,input_headroom_low_v,input_headroom_high_v,output_headroom_low_v,output_headroom_high_v,vos_max_uv,vos_drift_uv_per_c,ib_max_na,ios_max_na,aol_min_db,gbw_mhz,en_nv_rthz,in_pa_rthz,cmrr_min_db,unit_cost,stock_qty\n\
             S-OA1,1,2.7,12,0,0,0.02,0.02,300,2,0.1,0.1,110,2,20,0.1,100,0.40,\n"
                .into(),
        ),
        file(
            "references.csv",
            "part_id,volts,initial_pct,tempco_ppm_per_c,dropout_v,noise_uv_pp,unit_cost,stock_qty\n\
             S-REF,2.5,0.1,20,0.2,10,0.30,\n"
                .into(),
        ),
    ])
    .unwrap_or_else(|e| panic!("the small stock does not parse: {e}"));
    (need, stock)
}

/// A 0.1 %, 25 ppm/C resistor of `ohms` (invented).
pub fn precise(ohms: f64) -> serde_json::Value {
    serde_json::json!({"ohms": ohms, "tolerance_pct": 0.1, "tcr_ppm_per_c": 25, "unit_cost": 0.045})
}

/// The need, the demo stock and the three-stage design.
pub fn three_stage() -> (Need, Stock, Design) {
    let need = parse_need(spanfit::demo::NEED_TOML.as_bytes(), "demo-need.toml")
        .expect("the demo need parses");
    let stock = parse_stock(&spanfit::demo::stock_files()).expect("the demo stock parses");
    let divider = |source: &str, top: f64, bottom: f64| {
        serde_json::json!({"kind": "divider", "source": source, "top": precise(top),
                           "bottom": precise(bottom), "buffered": true})
    };
    let design = serde_json::json!({
        "format": "spanfit-design-1",
        "stages": [
            {
                "shape": "difference", "amplifier": "OA-ZD2",
                "resistors": {"r1": precise(10_000.0), "r2": precise(40_000.0),
                              "r3": precise(10_000.0), "r4": precise(40_000.0)},
                "offset": {"kind": "direct", "source": "VR-125"}
            },
            {
                "shape": "non-inverting", "amplifier": "OA-ZD2",
                "resistors": {"rf": precise(40_000.0), "rg": precise(10_000.0)},
                "offset": divider("VR-250", 17_000.0, 23_000.0)
            },
            {
                "shape": "non-inverting", "amplifier": "OA-ZD2",
                "resistors": {"rf": precise(49_610.0), "rg": precise(10_000.0)},
                "offset": divider("VR-125", 52_900.0, 47_100.0)
            }
        ]
    })
    .to_string();
    let design = parse_design(design.as_bytes(), "bench-design.json", &stock)
        .expect("the bench design parses");
    (need, stock, design)
}
