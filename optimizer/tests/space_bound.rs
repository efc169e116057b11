//! The accuracy-aware space bound against the exhaustive walk on small
//! invented spaces (one stage, eight resistor values from 1 k to 471 k).
//!
//! What must hold on every case:
//! - the accuracy floor of a first-stage part never exceeds the error of
//!   any design using it: with that part alone on the shelf, the
//!   exhaustive walk of the error objective finds the most accurate design
//!   of the whole space, and its reported error is at least the floor
//!   (every design on its Pareto front too);
//! - the space's cost floor never exceeds the true optimum the exhaustive
//!   walk proves, and a space the floor proves empty has no design;
//! - an optimised solve that claims `proven_optimal` has the walk's
//!   optimum;
//! - both again on a stock with two invented matched networks, cheaper
//!   per element than any resistor, whose ratios give the difference
//!   stage's gains (the walk places them, and most optima do).
//!
//! The cases span single-ended and differential sensors, small and large
//! gains, op-amps from precise to drifting, an in-amp, every calibration,
//! the worst-case and RSS bases, and targets from below the least error of
//! the space to well above it, so the floor both rules parts out and lets
//! them through.

use spanfit::need::{parse_need, Need};
use spanfit::search::{
    first_stage_floor_pct, solve_unexplained, space_cost_floor, Progress, SearchMode, SolveControl,
    SolveOutcome,
};
use spanfit::stock::{parse_stock, Stock, StockFile};

/// Invented op-amp rows: id, offset drift uV/degC, price (same otherwise;
/// the supply rejection column left at its default).
const OPAMPS: [(&str, f64, f64); 4] = [
    ("T-OA1", 0.05, 1.20),
    ("T-OA2", 1.0, 0.60),
    ("T-OA3", 4.0, 0.30),
    ("T-OA4", 12.0, 0.10),
];

/// An invented in-amp row (integrated shape).
const INAMP: &str = "T-IA,49400,0.1,25,50,200,0.5,2,90,2.7,12,0.1,0.1,0.05,0.05,50,1.0,1.50,";

/// An invented stock: eight 0.1 % resistor values (ratios up to 471, so
/// gains of 101 and 471 are exact in both non-inverting and difference
/// stages), the
/// chosen op-amps and, where asked, the in-amp.
fn stock(opamps: &[usize], inamp: bool) -> Stock {
    parse_stock(&stock_files(opamps, inamp)).expect("the invented stock parses")
}

/// The files of [`stock`].
fn stock_files(opamps: &[usize], inamp: bool) -> Vec<StockFile> {
    let f = |name: &str, text: String| StockFile {
        name: name.into(),
        bytes: text.into_bytes(),
    };
    let mut resistors = String::from(
        "part_id,value_ohms,tolerance_pct,tcr_ppm_per_c,package,unit_cost,stock_qty\n",
    );
    for ohms in [1e3, 4.7e3, 1e4, 4.7e4, 1e5, 1.01e5, 4.7e5, 4.71e5] {
        resistors.push_str(&format!("T-R{ohms},{ohms},0.1,25,0603,0.02,\n"));
    }
    let mut amps = String::from(
        "part_id,channels,supply_min_v,supply_max_v,input_headroom_low_v,input_headroom_high_v,output_headroom_low_v,output_headroom_high_v,vos_max_uv,vos_drift_uv_per_c,ib_max_na,ios_max_na,aol_min_db,gbw_mhz,en_nv_rthz,in_pa_rthz,cmrr_min_db,unit_cost,stock_qty\n",
    );
    for &o in opamps {
        let (id, drift, cost) = OPAMPS[o];
        amps.push_str(&format!(
            "{id},1,2.7,12,0,0,0.02,0.02,200,{drift},0.1,0.1,110,2,20,0.1,100,{cost},\n"
        ));
    }
    let mut files = vec![f("resistors.csv", resistors), f("opamps.csv", amps)];
    if inamp {
        files.push(f(
            "inamps.csv",
            format!("part_id,gain_resistor_ohms,gain_error_pct,gain_drift_ppm_per_c,input_offset_uv,output_offset_uv,offset_drift_uv_per_c,ib_max_na,cmrr_min_db,supply_min_v,supply_max_v,input_headroom_low_v,input_headroom_high_v,output_headroom_low_v,output_headroom_high_v,en_nv_rthz,gbw_mhz,unit_cost,stock_qty\n{INAMP}\n"),
        ));
    }
    files
}

/// [`stock`] with two invented matched networks whose ratios give the
/// difference stage's gains of 101 and 471 exactly, each package cheaper
/// than one resistor (so the space bound prices the matched roles at the
/// package's share per element).
fn stock_with_networks(opamps: &[usize], inamp: bool) -> Stock {
    let mut files = stock_files(opamps, inamp);
    files.push(StockFile {
        name: "networks.csv".into(),
        bytes: "part_id,count,value_ohms,abs_tolerance_pct,ratio_tolerance_pct,abs_tcr_ppm_per_c,tracking_tcr_ppm_per_c,package,unit_cost,stock_qty\n\
                T-RN101,4,1000;101000;1000;101000,0.1,0.01,25,2,SOIC-8,0.015,\n\
                T-RN471,4,1000;471000;1000;471000,0.1,0.01,25,2,SOIC-8,0.015,\n"
            .as_bytes()
            .to_vec(),
    });
    parse_stock(&files).expect("the invented stock parses")
}

/// An invented need of one case.
#[derive(Debug, Clone)]
struct Case {
    differential: bool,
    /// Sensor span, volts: from `span / 8` to `9 span / 8`, so the ideal
    /// offset is zero on the ADC window less a 10 % margin (gain 2.4 V
    /// over the span).
    span: f64,
    calibration: &'static str,
    basis: &'static str,
}

impl Case {
    fn need(&self, target_pct: f64, objective: &str) -> Need {
        let (output, cm) = if self.differential {
            ("differential", "common_mode_v = 2.5\n")
        } else {
            ("single-ended", "")
        };
        let text = format!(
            "[sensor]\nsignal_low_v = {}\nsignal_high_v = {}\noutput = \"{output}\"\n{cm}source_ohms = 0.0\n\
             [adc]\nlow_v = 0.0\nhigh_v = 3.0\nbits = 12\nmargin_pct = 10.0\n\
             [supply]\npositive_v = 5.0\nnegative_v = 0.0\n\
             [accuracy]\nmax_error_pct_fs = {target_pct}\ncalibration = \"{}\"\nbasis = \"{}\"\n\
             temp_min_c = -20.0\ntemp_max_c = 60.0\n\
             [search]\nmax_stages = 1\nmax_parts = {}\nbom_line_cost = 0.02\nobjective = \"{objective}\"\n\
             time_limit_ms = 600000\n",
            self.span / 8.0,
            self.span * 9.0 / 8.0,
            self.calibration,
            self.basis,
            if self.differential { 5 } else { 3 }
        );
        parse_need(text.as_bytes(), "case.toml").unwrap_or_else(|e| panic!("{e}\n{text}"))
    }
}

fn run(need: &Need, stock: &Stock, mode: SearchMode) -> SolveOutcome {
    let clock = || 0.0;
    let mut progress = |_p: Progress| true;
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &clock,
    };
    solve_unexplained(need, stock, mode, &mut control).expect("the search runs")
}

/// The optimised mode on the same need and stock as a finished walk: a
/// `proven_optimal` it claims must be the walk's optimum.
fn no_false_proof(need: &Need, shelf: &Stock, full: &SolveOutcome, context: &str) {
    let fast = run(need, shelf, SearchMode::Optimised);
    if fast.stats.proven_optimal {
        let (a, b) = (
            fast.best.as_ref().map(|c| c.costing.total),
            full.best.as_ref().map(|c| c.costing.total),
        );
        assert!(
            matches!((a, b), (Some(a), Some(b)) if (a - b).abs() < 1e-9),
            "false proof: optimised {a:?}, exhaustive {b:?}: {context}"
        );
    }
}

/// Every case of the sample: sensors, spans, calibrations, each on one of
/// the two bases in turn (so the walks stay quick).
fn cases() -> Vec<Case> {
    let mut all = Vec::new();
    let mut n = 0usize;
    for differential in [false, true] {
        for span in [2.4 / 471.0, 2.4 / 101.0, 0.2] {
            for calibration in ["none", "offset", "two-point"] {
                n += 1;
                all.push(Case {
                    differential,
                    span,
                    calibration,
                    basis: ["worst-case", "rss"][n % 2],
                });
            }
        }
    }
    all
}

/// The least error the space of a stock reaches for a case (the
/// exhaustive walk of the error objective with a loose target), with the
/// designs of its front; `None` when no design passes every check.
fn least_error(case: &Case, stock: &Stock) -> Option<SolveOutcome> {
    let need = case.need(50.0, "error");
    let walk = run(&need, stock, SearchMode::Exhaustive);
    assert!(
        walk.stopped.is_none() && !walk.unfinished(),
        "the walk finishes: {case:?}"
    );
    walk.best.is_some().then_some(walk)
}

/// The floor of each first-stage part is below the error of every design
/// using it: with the part alone on the shelf, the most accurate design
/// of the whole space (and every design on the walk's front) reaches at
/// least the floor. The floor must also bind somewhere, or this proves
/// nothing.
#[test]
#[cfg_attr(
    debug_assertions,
    ignore = "release only: scripts/test.sh runs it in its release step (a debug walk is too slow)"
)]
fn part_floor_is_below_every_design_of_the_part() {
    let mut binding = 0;
    let mut checked = 0;
    for case in cases() {
        let mut shelves: Vec<(Vec<usize>, bool)> =
            vec![(vec![0], false), (vec![2], false), (vec![3], false)];
        if case.differential {
            shelves.push((Vec::new(), true));
        }
        for (opamps, inamp) in shelves {
            let shelf = stock(&opamps, inamp);
            let Some(walk) = least_error(&case, &shelf) else {
                continue;
            };
            let need = case.need(50.0, "error");
            for design in walk.best.iter().chain(walk.alternatives.iter()) {
                let floor = first_stage_floor_pct(&need, &shelf, &design.design)
                    .expect("the design's part is in the stock");
                let error = design.analysis.basis_pct_fs;
                checked += 1;
                assert!(
                    floor <= error * (1.0 + 1e-9),
                    "floor {floor} % FS over the error {error} % FS of a design of the part: \
                     {case:?} opamps {opamps:?} in-amp {inamp}\n{:?}",
                    design.design
                );
                if floor > 0.3 * error {
                    binding += 1;
                }
            }
        }
    }
    println!("{checked} designs checked, the floor near the error on {binding}");
    assert!(checked > 20, "only {checked} designs checked");
    assert!(
        binding > 3,
        "the floor came near the error only {binding} times"
    );
}

/// The space's cost floor against the optimum the exhaustive walk proves,
/// with a cheap drifting op-amp and a dear precise one on the shelf and
/// targets around the least error of the space; and no false proof from
/// the optimised mode.
#[test]
#[cfg_attr(
    debug_assertions,
    ignore = "release only: scripts/test.sh runs it in its release step (a debug walk is too slow)"
)]
fn cost_floor_never_exceeds_the_true_optimum() {
    let mut ruled_out = 0;
    let mut compared = 0;
    for case in cases() {
        for (cheap, dear) in [(3usize, 0usize)] {
            let shelf = stock(&[cheap, dear], case.differential);
            let Some(walk) = least_error(&case, &shelf) else {
                continue;
            };
            let least = walk.best.as_ref().map_or(50.0, |b| b.analysis.basis_pct_fs);
            for factor in [0.9, 1.0001, 3.0] {
                let target = (least * factor).clamp(1e-4, 50.0);
                let need = case.need(target, "cost");
                let full = run(&need, &shelf, SearchMode::Exhaustive);
                assert!(full.stopped.is_none() && !full.unfinished(), "{case:?}");
                let floor = space_cost_floor(&need, &shelf);
                match (&full.best, floor) {
                    (Some(best), Some(floor)) => {
                        compared += 1;
                        assert!(
                            floor <= best.costing.total + 1e-9,
                            "floor {floor} over the optimum {}: {case:?} target {target}",
                            best.costing.total
                        );
                    }
                    (Some(best), None) => panic!(
                        "the floor proves the space empty, the walk found {}: {case:?} target {target}",
                        best.costing.total
                    ),
                    (None, _) => {}
                }
                // The cheap part ruled out by its floor at this target.
                if case.differential || case.calibration != "two-point" {
                    let probe = walk.best.as_ref().map(|b| &b.design);
                    if let Some(design) = probe {
                        let mut cheap_design = design.clone();
                        if !cheap_design.stages[0].shape.integrated() {
                            cheap_design.stages[0].amplifier = OPAMPS[cheap].0.to_string();
                            if first_stage_floor_pct(&need, &shelf, &cheap_design)
                                .is_some_and(|f| f > target)
                            {
                                ruled_out += 1;
                            }
                        }
                    }
                }
                no_false_proof(&need, &shelf, &full, &format!("{case:?} target {target}"));
            }
        }
    }
    println!("{compared} optima compared, the cheap part ruled out {ruled_out} times");
    assert!(compared > 15, "only {compared} optima compared");
    assert!(
        ruled_out > 3,
        "the floor ruled the cheap part out only {ruled_out} times"
    );
}

/// On a stock with matched networks, the space's cost floor (which prices
/// a matched role at a package's share per element) never exceeds the
/// true optimum the exhaustive walk proves (the walk places the networks
/// too), and an optimised solve that claims `proven_optimal` has the
/// walk's optimum. Some optima place a network, or this proves little.
#[test]
#[cfg_attr(
    debug_assertions,
    ignore = "release only: scripts/test.sh runs it in its release step (a debug walk is too slow)"
)]
fn cost_floor_holds_with_networks() {
    let mut compared = 0;
    let mut with_network = 0;
    // The spans whose gains (101, 471) a network ratio gives.
    for case in cases()
        .into_iter()
        .filter(|c| c.differential && c.span < 0.1)
    {
        let shelf = stock_with_networks(&[0], false);
        let Some(walk) = least_error(&case, &shelf) else {
            continue;
        };
        let least = walk.best.as_ref().map_or(50.0, |b| b.analysis.basis_pct_fs);
        for factor in [1.0001, 3.0] {
            let target = (least * factor).clamp(1e-4, 50.0);
            let need = case.need(target, "cost");
            let full = run(&need, &shelf, SearchMode::Exhaustive);
            assert!(full.stopped.is_none() && !full.unfinished(), "{case:?}");
            assert_eq!(full.best.is_some(), full.stats.proven_optimal, "{case:?}");
            let floor = space_cost_floor(&need, &shelf);
            if let Some(best) = &full.best {
                compared += 1;
                let floor = floor.unwrap_or_else(|| {
                    panic!(
                        "the floor proves the space empty, the walk found {}: {case:?}",
                        best.costing.total
                    )
                });
                assert!(
                    floor <= best.costing.total + 1e-9,
                    "floor {floor} over the optimum {}: {case:?} target {target}",
                    best.costing.total
                );
                if best
                    .design
                    .stages
                    .iter()
                    .flat_map(|s| s.resistors.values())
                    .any(|r| r.network.is_some())
                {
                    with_network += 1;
                }
            }
            no_false_proof(&need, &shelf, &full, &format!("{case:?} target {target}"));
        }
    }
    println!("{compared} optima compared, {with_network} placing a network");
    assert!(compared >= 4, "only {compared} optima compared");
    assert!(with_network >= 2, "a network in {with_network} optima");
}
