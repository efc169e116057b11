//! Fixed cases of the optimiser against the true exhaustive walk on a
//! small invented stock (one E6 family over a decade, one op-amp, one
//! reference), kept as regression tests: the cases where the two once
//! disagreed, and the honesty of the optimised mode's claims on a space
//! too large for it to finish (the demo).

mod common;
use common::solve::with_still_clock;
use spanfit::need::Need;
use spanfit::search::{solve, Progress, SearchMode, SolveControl, SolveOutcome};
use spanfit::stock::{parse_stock, Stock, StockFile};

/// The small invented stock's files, with an invented capacitor family
/// or without one.
fn small_files(caps: bool) -> Vec<StockFile> {
    let f = |name: &str, text: &str| StockFile {
        name: name.into(),
        bytes: text.as_bytes().to_vec(),
    };
    let mut files = vec![
        f(
            "resistors.csv",
            "part_id,series,min_ohms,max_ohms,tolerance_pct,tcr_ppm_per_c,package,unit_cost,stock_qty\n\
             Y-E6,E6,1000,6900,1.0,100,0603,0.003,\n",
        ),
        f(
            "opamps.csv",
            "part_id,channels,supply_min_v,supply_max_v,input_headroom_low_v,input_headroom_high_v,output_headroom_low_v,output_headroom_high_v,vos_max_uv,vos_drift_uv_per_c,ib_max_na,ios_max_na,aol_min_db,gbw_mhz,en_nv_rthz,in_pa_rthz,cmrr_min_db,unit_cost,stock_qty\n\
             Y-OA1,1,2.7,12,0,0,0.02,0.02,300,2,0.1,0.1,110,2,20,0.1,100,0.40,\n",
        ),
        f(
            "references.csv",
            "part_id,volts,initial_pct,tempco_ppm_per_c,dropout_v,noise_uv_pp,unit_cost,stock_qty\n\
             Y-REF,2.5,0.1,20,0.2,10,0.30,\n",
        ),
    ];
    if caps {
        files.push(f(
            "capacitors.csv",
            "part_id,value_farads,series,min_farads,max_farads,tolerance_pct,tempco_ppm_per_c,dielectric,rated_v,package,unit_cost,stock_qty\n\
             Y-C,,E6,1e-9,1e-6,10,1500,X7R,25,0603,0.004,\n",
        ));
    }
    files
}

fn small_stock() -> Stock {
    parse_stock(&small_files(false)).expect("the invented stock parses")
}

/// A single-ended invented need over 0.1..0.3 V into 0..3 V (a negative
/// ideal offset), one stage, at most `max_parts` parts, `line` per BOM
/// line, as need text.
fn need_text(err: f64, calibration: &str, max_parts: usize, line: f64) -> String {
    format!(
        "[sensor]\nsignal_low_v = 0.1\nsignal_high_v = 0.3\noutput = \"single-ended\"\nsource_ohms = 10.0\n\
         [adc]\nlow_v = 0.0\nhigh_v = 3.0\nbits = 12\nmargin_pct = 0.0\n\
         [supply]\npositive_v = 5.0\nnegative_v = 0.0\n\
         [accuracy]\nmax_error_pct_fs = {err}\ncalibration = \"{calibration}\"\ntemp_min_c = 0.0\ntemp_max_c = 50.0\n\
         [search]\nmax_stages = 1\nmax_parts = {max_parts}\nbom_line_cost = {line}\ntime_limit_ms = 600000\n"
    )
}

/// The need of [`need_text`] without a BOM-line fee.
fn need(err: f64, calibration: &str, max_parts: usize) -> Need {
    let text = need_text(err, calibration, max_parts, 0.0);
    spanfit::need::parse_need(text.as_bytes(), "case.toml").expect("the need parses")
}

fn run(need: &Need, stock: &Stock, mode: SearchMode) -> SolveOutcome {
    with_still_clock(|control| solve(need, stock, mode, control)).expect("the search runs")
}

/// The case the property test first found: a two-point trim, where the
/// optimised mode's own candidates held no design but the space holds
/// one. The optimised mode now finishes small spaces with the exhaustive
/// walk, so both find the same optimum, and both prove it.
#[test]
fn a_design_the_heuristics_miss_is_found_and_proven() {
    let stock = small_stock();
    for max_parts in [3, 4] {
        let need = need(0.5, "two-point", max_parts);
        let fast = run(&need, &stock, SearchMode::Optimised);
        let full = run(&need, &stock, SearchMode::Exhaustive);
        let (a, b) = (
            fast.best.as_ref().map(|c| c.costing.total),
            full.best.as_ref().map(|c| c.costing.total),
        );
        assert!(b.is_some(), "the exhaustive walk found no design");
        assert_eq!(
            a.map(|c| (c * 1e9).round()),
            b.map(|c| (c * 1e9).round()),
            "max_parts {max_parts}"
        );
        assert!(fast.stats.proven_optimal && full.stats.proven_optimal);
    }
}

/// A roomier part limit makes the space too large for the count that
/// starts the finishing walk (which ignores the floors that prune it), and
/// the optimised mode's own candidates hold no design: it then walks the
/// space anyway with a little work, finds the exhaustive walk's optimum
/// and proves it, where it once said "not finished".
#[test]
fn a_space_too_large_to_count_as_small_is_still_settled_by_the_walk() {
    let stock = small_stock();
    let need = need(0.5, "two-point", 6);
    assert!(spanfit::search::space_designs(&need, &stock, 200_000).is_none());
    let fast = run(&need, &stock, SearchMode::Optimised);
    let full = run(&need, &stock, SearchMode::Exhaustive);
    let cost = |o: &SolveOutcome| o.best.as_ref().map(|c| (c.costing.total * 1e9).round());
    assert!(cost(&full).is_some(), "the exhaustive walk found no design");
    assert_eq!(cost(&fast), cost(&full));
    assert!(fast.stats.proven_optimal && full.stats.proven_optimal);
}

/// A target no design of the space meets: the exhaustive walk proves it
/// (`infeasible`, proven), and so does the optimised mode, which finishes
/// the small space; neither claims a design.
#[test]
fn an_impossible_target_is_proven_infeasible_by_both() {
    let stock = small_stock();
    let need = need(0.001, "none", 3);
    for mode in [SearchMode::Optimised, SearchMode::Exhaustive] {
        let o = run(&need, &stock, mode);
        assert!(o.best.is_none(), "{mode:?}");
        assert!(!o.unfinished(), "{mode:?}");
        assert!(
            o.infeasible.as_ref().is_some_and(|i| i.proven),
            "{mode:?}: {:?}",
            o.infeasible
        );
    }
}

/// On the demo (a space far too large to finish), the optimised mode
/// claims no proof it does not have: its `gap` is the distance to the
/// bound over the whole space, which no design of the space can beat.
#[test]
fn the_demo_claims_only_what_its_bound_proves() {
    let (need, stock) =
        spanfit::api::load(spanfit::demo::NEED_TOML.as_bytes(), "demo-need.toml", &[])
            .expect("the demo loads");
    let o = run(&need, &stock, SearchMode::Optimised);
    let best = o.best.as_ref().expect("the demo has a design");
    match o.stats.gap {
        Some(gap) => {
            assert!(!o.stats.proven_optimal);
            assert!(gap > 0.0 && gap <= best.costing.total, "gap {gap}");
        }
        None => assert!(o.stats.proven_optimal),
    }
}

/// A need no design meets, on a space the search walks whole: the best
/// error it reports is the least error of the space (the exhaustive walk
/// of the error objective with a loose target finds no design more
/// accurate), the binding limit says so, and progress keeps one total
/// through the search, the walk for the least error and the re-solves.
#[test]
fn the_best_error_of_a_walked_space_is_its_least() {
    let stock = small_stock();
    let need = need(0.001, "two-point", 3);
    let mut totals = std::collections::BTreeSet::new();
    let clock = || 0.0;
    let mut progress = |p: Progress| {
        totals.insert(p.total);
        assert!(p.done <= p.total, "done {} of {}", p.done, p.total);
        true
    };
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &clock,
    };
    let o = solve(&need, &stock, SearchMode::Optimised, &mut control).expect("the search runs");
    let why = o.infeasible.as_ref().expect("no design meets 0.001 % FS");
    assert!(why.proven, "the small space is walked whole");
    let mut loose = need.clone();
    loose.search.objective = spanfit::need::Objective::Error;
    loose.accuracy.max_error_pct_fs = 100.0;
    let least = run(&loose, &stock, SearchMode::Exhaustive)
        .best
        .map(|b| b.analysis.basis_pct_fs)
        .expect("some design of the space is feasible");
    assert_eq!(why.best_error_pct_fs, Some(least), "{}", why.binding);
    assert!(
        why.binding.contains("none is more accurate"),
        "{}",
        why.binding
    );
    assert_eq!(totals.len(), 1, "one progress total per call: {totals:?}");
}

/// With capacitors on the shelf every reported design carries the filter
/// pair at the ADC input; the search counts it, so both modes prove the
/// same optimum with the pair included, and the report keeps the proof
/// (its cost is the cost the search ranked).
#[test]
fn the_filter_pair_is_inside_the_proof() {
    // The part-count check (`max_parts`, here 4) judges the design
    // without the pair: the design of three parts meets it with its pair.
    let need = need_text(0.5, "two-point", 4, 0.05);
    let solve = |caps: bool, exhaustive: bool| {
        with_still_clock(|control| {
            spanfit::api::solve_bundle(
                need.as_bytes(),
                "case.toml",
                &small_files(caps),
                exhaustive,
                control,
            )
        })
        .expect("the search runs")
        .report
    };
    let bare = solve(false, false);
    let bare_cost = bare.design.as_ref().expect("a design").cost;
    let mut costs = Vec::new();
    for exhaustive in [false, true] {
        let r = solve(true, exhaustive);
        let design = r.design.as_ref().expect("a design");
        assert!(design.filter.is_some(), "the pair is attached");
        assert_eq!(design.part_count, 5, "three parts and the pair's two");
        assert!(
            design.error.meets_target,
            "the report's own verdict: {:?}",
            design.findings
        );
        let search = r.search.as_ref().expect("a search");
        assert!(search.proven_optimal, "exhaustive {exhaustive}: {search:?}");
        assert!(search.gap.is_none());
        costs.push(design.cost);
    }
    assert!((costs[0] - costs[1]).abs() < 1e-9, "{costs:?}");
    // The pair adds its two parts and at least the capacitor's line.
    assert!(
        costs[0] >= bare_cost + 0.05 - 1e-9,
        "{costs:?} against {bare_cost}"
    );
}
