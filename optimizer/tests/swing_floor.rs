//! The swing floor (search/floors.rs: where the output must reach against
//! where the last stage's part can swing) on an invented need whose ADC
//! window starts at the negative rail with no margin and no calibration: a
//! single 5 V supply, an ADC from 0 V to 3 V, and two invented op-amps,
//! one whose output stops 150 mV from the rails and one 20 mV.
//!
//! What must hold:
//! - with a target under both parts' floors, the optimised mode calls the
//!   need infeasible as proven (before the floor it said "not finished")
//!   and the finished exhaustive walk finds no design;
//! - with a target between the two floors, the space bound keeps the part
//!   that swings nearer the rail and rules out the other.
//!
//! The floor is also checked against the error of every design the walk
//! returns on the random cases of `exhaustive_agreement.rs`.

mod common;

use common::solve::with_still_clock;
use spanfit::need::{parse_need, Need};
use spanfit::search::{solve_unexplained, space_cost_floor, SearchMode, SolveOutcome};
use spanfit::stock::{parse_stock, Stock, StockFile};

/// Invented op-amp rows: id, output headroom to each rail (volts), price.
const OPAMPS: [(&str, f64, f64); 2] = [("T-SW150", 0.15, 0.10), ("T-SW20", 0.02, 0.90)];

/// An invented stock: six 0.1 % resistor values and the chosen op-amps.
fn stock(opamps: &[usize]) -> Stock {
    let f = |name: &str, text: String| StockFile {
        name: name.into(),
        bytes: text.into_bytes(),
    };
    let mut resistors = String::from(
        "part_id,value_ohms,tolerance_pct,tcr_ppm_per_c,package,unit_cost,stock_qty\n",
    );
    for ohms in [1e3, 2.2e3, 4.7e3, 1e4, 4.7e4, 1e5] {
        resistors.push_str(&format!("T-R{ohms},{ohms},0.1,10,0603,0.02,\n"));
    }
    let mut amps = String::from(
        "part_id,channels,supply_min_v,supply_max_v,input_headroom_low_v,input_headroom_high_v,output_headroom_low_v,output_headroom_high_v,vos_max_uv,vos_drift_uv_per_c,ib_max_na,ios_max_na,aol_min_db,gbw_mhz,en_nv_rthz,in_pa_rthz,cmrr_min_db,unit_cost,stock_qty\n",
    );
    for &o in opamps {
        let (id, headroom, cost) = OPAMPS[o];
        amps.push_str(&format!(
            "{id},1,2.7,12,0,0,{headroom},{headroom},10,0.05,0.1,0.1,120,2,20,0.1,110,{cost},\n"
        ));
    }
    parse_stock(&[f("resistors.csv", resistors), f("opamps.csv", amps)])
        .expect("the invented stock parses")
}

/// The invented need at a target (% FS of 3 V: 0.5 % is 15 mV).
fn need(target_pct: f64) -> Need {
    let text = format!(
        "[sensor]\nsignal_low_v = 0.0\nsignal_high_v = 0.05\nsource_ohms = 0.0\n\
         [adc]\nlow_v = 0.0\nhigh_v = 3.0\nbits = 12\nmargin_pct = 0.0\n\
         [supply]\npositive_v = 5.0\nnegative_v = 0.0\ntolerance_pct = 0.0\n\
         [accuracy]\nmax_error_pct_fs = {target_pct}\ncalibration = \"none\"\nbasis = \"worst-case\"\n\
         temp_min_c = 0.0\ntemp_max_c = 50.0\n\
         [search]\nmax_stages = 2\nmax_parts = 8\nobjective = \"cost\"\n\
         topologies = [\"non-inverting\", \"inverting\"]\ntime_limit_ms = 600000\n"
    );
    parse_need(text.as_bytes(), "swing.toml").unwrap_or_else(|e| panic!("{e}\n{text}"))
}

fn run(need: &Need, stock: &Stock, mode: SearchMode) -> SolveOutcome {
    with_still_clock(|control| solve_unexplained(need, stock, mode, control))
        .expect("the search runs")
}

/// Under both floors (0.5 % FS is 15 mV; the parts stop 20 and 150 mV
/// above 0 V): proven infeasible, and the walk agrees.
#[test]
#[cfg_attr(
    debug_assertions,
    ignore = "release only: scripts/test.sh runs it in its release step (a debug walk is too slow)"
)]
fn a_window_no_part_reaches_is_proven_infeasible() {
    let shelf = stock(&[0, 1]);
    let need = need(0.5);
    assert_eq!(space_cost_floor(&need, &shelf), None, "the bound proves it");
    let fast = run(&need, &shelf, SearchMode::Optimised);
    assert!(fast.best.is_none(), "no design");
    assert!(!fast.unfinished(), "proven, not left unfinished");
    let full = run(&need, &shelf, SearchMode::Exhaustive);
    assert!(
        full.stopped.is_none() && !full.unfinished(),
        "the walk ends"
    );
    assert!(full.best.is_none(), "the walk finds no design either");
}

/// Between the floors (1 % FS is 30 mV): the part that swings within
/// 20 mV is kept, the one that stops 150 mV short is ruled out.
#[test]
fn the_floor_keeps_the_part_that_swings_near_enough() {
    let need = need(1.0);
    assert!(space_cost_floor(&need, &stock(&[1])).is_some());
    assert!(space_cost_floor(&need, &stock(&[0, 1])).is_some());
    assert_eq!(space_cost_floor(&need, &stock(&[0])), None);
    // And at 6 % FS (180 mV), neither is ruled out on its swing.
    assert!(space_cost_floor(&crate::need(6.0), &stock(&[0])).is_some());
}
