//! Checks of the optimiser's output against the outside.
//!
//! Every design `spanfit::search::solve` returns (the best and every
//! alternative) for the demo need and for three needs of our own (each an
//! invented scenario, marked as such) is exported with
//! `spanfit::spice::export` and run in ngspice batch mode (Debian package
//! `ngspice`, `ngspice -b`). Against what ngspice prints at both ends of
//! the sensor span:
//!
//! - it matches the core's `transfer.output_at_ends_v` within 1e-6
//!   relative (source: ngspice);
//! - its distance from the ideal output is no more than the core's
//!   uncalibrated nominal error, `|output_at_ends_v - ideal_at_ends_v|`,
//!   plus 1 uV, and the same error with the need's calibration applied is
//!   covered by the budget's `nominal rounding` and `finite open-loop
//!   gain` lines (which the budget reports after calibration);
//! - it lies inside the ADC window.
//!
//! For the 4-20 mA loop (common practice: 4-20 mA across 250 ohm reads
//! 1-5 V) the gain and offset ngspice realises must be within half an E96
//! step of the ideal (IEC 60063: E96 steps by 10^(1/96), so half a step is
//! 10^(1/192) - 1, about 1.2 %), and with only inverting stages the two
//! stages must give a positive overall gain (ngspice).
//!
//! Finally the search's own claims: the demo optimum is proven within the
//! default time limit, and a search cancelled through the progress
//! callback says it is not proven and hands back its best so far.
//!
//! `cargo test -p spanfit-optimizer --test solve_checks -- --nocapture`
//! prints the numbers of every design. ngspice must be on PATH; when it is
//! not, these tests fail with a message saying so (they never skip).

// These checks time the search and print the numbers of every design they
// check (shown with --nocapture), besides running ngspice.
#![allow(
    clippy::disallowed_methods,
    clippy::disallowed_types,
    clippy::print_stdout
)]

mod common;
use common::ngspice::run_ngspice;
use spanfit::analysis::Line;
use spanfit::design::Shape;
use spanfit::need::{parse_need, Calibration, Need};
use spanfit::search::{solve, Candidate, Progress, SearchMode, SolveControl, SolveOutcome};
use spanfit::stock::{parse_stock, Stock};
use std::time::Instant;

/// Relative tolerance of the comparison with ngspice (as in
/// `ngspice_crosscheck.rs`).
const REL_TOL: f64 = 1e-6;
/// Absolute floor of the relative comparison, volts.
const ABS_FLOOR_V: f64 = 1e-10;
/// Absolute allowance on the comparison of errors, volts (1 uV).
const ERROR_SLACK_V: f64 = 1e-6;
/// Half an E96 step (IEC 60063: the E96 series steps by 10^(1/96)).
fn half_e96_step() -> f64 {
    10f64.powf(1.0 / 192.0) - 1.0
}

/// Relative mismatch of `a` against `b`, with the absolute floor.
fn mismatch(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(a.abs()).max(ABS_FLOOR_V / REL_TOL)
}

fn demo_stock() -> Stock {
    parse_stock(&spanfit::demo::stock_files())
        .unwrap_or_else(|e| panic!("the demo stock does not parse: {e}"))
}

/// The demo stock with one more op-amp row, invented for these checks: a
/// dual, rail-to-rail in and out, for supplies up to 16 V. No demo op-amp
/// both takes a 10 V supply span and swings to 4 V below a +5 V rail.
fn stock_with_wide_rail_to_rail() -> Stock {
    let mut files = spanfit::demo::stock_files();
    // The demo header's first 20 columns, then empty cells (the optional
    // columns at their documented defaults) up to the header's width.
    let cells = "XW-RR2,2,2.7,16.0,0.0,0.0,0.05,0.05,500,2,1,0.5,110,2.0,20,0.1,100,0.60,100,100";
    let Some(f) = files.iter_mut().find(|f| f.name == "opamps.csv") else {
        panic!("the demo stock has no opamps.csv");
    };
    let width = String::from_utf8_lossy(&f.bytes)
        .lines()
        .next()
        .map(|h| h.split(',').count())
        .unwrap_or(0);
    let given = cells.split(',').count();
    assert!(width >= given, "the demo op-amp header has {width} columns");
    let row = format!("{cells}{}\n", ",".repeat(width - given));
    if !f.bytes.ends_with(b"\n") {
        f.bytes.push(b'\n');
    }
    f.bytes.extend_from_slice(row.as_bytes());
    parse_stock(&files).unwrap_or_else(|e| panic!("the extended demo stock does not parse: {e}"))
}

fn need(text: &str, file: &str) -> Need {
    parse_need(text.as_bytes(), file)
        .unwrap_or_else(|e| panic!("{file}: need does not parse: {e}\n{text}"))
}

/// INVENTED SCENARIO: a thermocouple-like single-ended 0-40 mV source
/// (kiln exhaust of a made-up pottery, "Cinder Lane"), single 5 V supply,
/// 12-bit 0-3.3 V ADC, no calibration. Cold-junction compensation is out
/// of scope; the source is just a small positive voltage.
const THERMOCOUPLE_TOML: &str = r#"
# INVENTED SCENARIO for a test: no real product is described.
[sensor]
label = "Cinder Lane kiln thermocouple (invented)"
signal_low_v = 0.0
signal_high_v = 0.040
output = "single-ended"
source_ohms = 20.0

[adc]
low_v = 0.0
high_v = 3.3
bits = 12
margin_pct = 2.0

[supply]
positive_v = 5.0
negative_v = 0.0

[accuracy]
max_error_pct_fs = 1.0
basis = "worst-case"
temp_min_c = 0.0
temp_max_c = 60.0
calibration = "none"

[search]
max_stages = 2
bom_line_cost = 0.05
time_limit_ms = 60000
"#;

/// INVENTED SCENARIO: a 4-20 mA loop from a made-up level transmitter
/// ("Marsh Gate" sluice) read across a 250 ohm shunt, so 1-5 V with the
/// shunt as the source resistance (common practice), mapped onto a 12-bit
/// 0-4.096 V ADC on split +/-5 V supplies. `{topologies}` and `{stages}`
/// are filled in per check.
fn loop_toml(topologies: &str, stages: usize) -> String {
    format!(
        r#"
# INVENTED SCENARIO for a test: no real product is described.
[sensor]
label = "Marsh Gate level loop, 4-20 mA across 250 ohm (invented)"
signal_low_v = 1.0
signal_high_v = 5.0
quantity_low = 4.0
quantity_high = 20.0
quantity_unit = "mA"
output = "single-ended"
source_ohms = 250.0

[adc]
low_v = 0.0
high_v = 4.096
bits = 12
margin_pct = 2.0

[supply]
positive_v = 5.0
negative_v = -5.0

[accuracy]
# 1.25 % FS: the budget now counts the droop the filter at the ADC input
# may take (a tenth of the target) and the noise over its band; at 1 %
# the most accurate design of this stock comes to about 1.17 % FS.
max_error_pct_fs = 1.25
basis = "worst-case"
temp_min_c = 0.0
temp_max_c = 50.0
calibration = "none"

[search]
max_stages = {stages}
topologies = [{topologies}]
bom_line_cost = 0.05
time_limit_ms = 60000
"#
    )
}

/// INVENTED SCENARIO: a 0-20 mV differential load-cell bridge (a made-up
/// grain hopper scale, "Tollbar Mill") at 2.5 V common mode, 16-bit
/// 0-2.5 V ADC, single 5 V supply, RSS basis, two-point calibration.
const LOAD_CELL_TOML: &str = r#"
# INVENTED SCENARIO for a test: no real product is described.
[sensor]
label = "Tollbar Mill hopper load cell (invented)"
signal_low_v = 0.0
signal_high_v = 0.020
quantity_low = 0.0
quantity_high = 500.0
quantity_unit = "kg"
output = "differential"
common_mode_v = 2.5
source_ohms = 350.0

[adc]
low_v = 0.0
high_v = 2.5
bits = 16
margin_pct = 4.0

[supply]
positive_v = 5.0
negative_v = 0.0

[accuracy]
max_error_pct_fs = 0.1
basis = "rss"
temp_min_c = 10.0
temp_max_c = 40.0
calibration = "two-point"

[search]
max_stages = 2
bom_line_cost = 0.05
time_limit_ms = 60000
"#;

/// Solve with the wall clock (tests may read the clock; the core may not)
/// and a progress callback that never cancels.
fn solve_timed(need: &Need, stock: &Stock, exhaustive: bool) -> SolveOutcome {
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

/// The best design and every alternative, each once.
fn returned_designs(o: &SolveOutcome) -> Vec<&Candidate> {
    let mut out: Vec<&Candidate> = Vec::new();
    for c in o.best.iter().chain(o.alternatives.iter()) {
        if !out.iter().any(|x| x.design == c.design) {
            out.push(c);
        }
    }
    out
}

/// An error pair with the need's calibration applied (offset: a one-point
/// trim at the low end; two-point: gain and offset trimmed away).
fn calibrated(cal: Calibration, e: [f64; 2]) -> [f64; 2] {
    match cal {
        Calibration::None => e,
        Calibration::Offset => [0.0, e[1] - e[0]],
        Calibration::TwoPoint => [0.0, 0.0],
    }
}

/// Sum of the budget's systematic lines at each end, volts.
fn nominal_lines_v(need: &Need, c: &Candidate) -> [f64; 2] {
    let fs = need.full_scale();
    let mut v = [0.0; 2];
    for l in &c.analysis.budget {
        if matches!(l.line, Line::NominalRounding | Line::OpenLoopGain) {
            for (end, x) in v.iter_mut().enumerate() {
                *x += l.at_ends_pct_fs[end] / 100.0 * fs;
            }
        }
    }
    v
}

/// What ngspice gave for one design.
struct Simulated {
    ngspice_v: [f64; 2],
}

/// Export one design, run it in ngspice, and check it against the core's
/// numbers, the ideal window, the budget lines and the ADC window.
fn check_design(name: &str, need: &Need, stock: &Stock, i: usize, c: &Candidate) -> Simulated {
    let tag = format!("{name}-{i}");
    let deck = spanfit::spice::export(need, stock, &c.design)
        .unwrap_or_else(|e| panic!("{tag}: export failed: {e}"));
    let ng = run_ngspice(&deck, &tag);
    let t = &c.analysis.transfer;
    let core = t.output_at_ends_v;
    let ideal = t.ideal_at_ends_v;
    let lines = nominal_lines_v(need, c);
    let cal = need.accuracy.calibration;
    let ng_err = [ng[0] - ideal[0], ng[1] - ideal[1]];
    let ng_err_cal = calibrated(cal, ng_err);
    let shapes: Vec<&str> = c.design.stages.iter().map(|s| s.shape.name()).collect();
    for end in 0..2 {
        // ngspice against the core's nominal output.
        let m = mismatch(ng[end], core[end]);
        assert!(
            m <= REL_TOL,
            "{tag} ({shapes:?}): end {end}: ngspice {} V, spanfit {} V (relative mismatch \
             {m:e})\n{deck}",
            ng[end],
            core[end]
        );
        // Inside the reported (uncalibrated) nominal error of the ideal.
        let nominal = (core[end] - ideal[end]).abs();
        assert!(
            ng_err[end].abs() <= nominal + ERROR_SLACK_V,
            "{tag} ({shapes:?}): end {end}: ngspice is {:e} V from the ideal {} V, the \
             reported nominal error is {nominal:e} V\n{deck}",
            ng_err[end],
            ideal[end]
        );
        // The budget's systematic lines (after calibration) cover it.
        assert!(
            ng_err_cal[end].abs() <= lines[end] + ERROR_SLACK_V,
            "{tag} ({shapes:?}): end {end}: ngspice error after {cal:?} calibration is {:e} V, \
             the rounding and finite-gain lines sum to {:e} V",
            ng_err_cal[end],
            lines[end]
        );
        // Inside the ADC window.
        assert!(
            ng[end] >= need.adc.low.0 && ng[end] <= need.adc.high.0,
            "{tag} ({shapes:?}): end {end}: ngspice output {} V is outside the ADC window \
             {} V to {} V",
            ng[end],
            need.adc.low.0,
            need.adc.high.0
        );
    }
    println!(
        "{tag}: {} | cost {:.4} | {} % FS {:.4} | ngspice [{:.9}, {:.9}] V, ideal [{:.9}, \
         {:.9}] V, error [{:+.3e}, {:+.3e}] V, lines [{:.3e}, {:.3e}] V",
        shapes.join(" + "),
        c.costing.total,
        if need.accuracy.basis == spanfit::need::Basis::Rss {
            "rss"
        } else {
            "wc"
        },
        c.analysis.basis_pct_fs,
        ng[0],
        ng[1],
        ideal[0],
        ideal[1],
        ng_err[0],
        ng_err[1],
        lines[0],
        lines[1]
    );
    Simulated { ngspice_v: ng }
}

/// Solve a need and check every returned design in ngspice; fails when
/// the search returns no design.
fn check_need(name: &str, need: &Need, stock: &Stock) -> Vec<(Candidate, Simulated)> {
    let o = solve_timed(need, stock, false);
    println!(
        "{name}: {} designs, {} evaluated, {} structures, {} MILPs, {:.1} ms, proven {}",
        returned_designs(&o).len(),
        o.stats.evaluated,
        o.stats.structures,
        o.stats.milp_solves,
        o.stats.elapsed_ms,
        o.stats.proven_optimal
    );
    assert!(
        o.best.is_some(),
        "{name}: the search found no design: {:?}",
        o.infeasible
    );
    let designs = returned_designs(&o);
    let mut out = Vec::new();
    for (i, c) in designs.iter().enumerate() {
        assert!(
            c.analysis.meets_target,
            "{name}-{i}: a returned design does not meet the target by the core's own numbers"
        );
        let s = check_design(name, need, stock, i, c);
        out.push(((*c).clone(), s));
    }
    out
}

#[test]
fn demo_designs_agree_with_ngspice() {
    let n = need(spanfit::demo::NEED_TOML, "demo-need.toml");
    let checked = check_need("demo", &n, &demo_stock());
    assert!(!checked.is_empty());
}

#[test]
fn thermocouple_designs_agree_with_ngspice() {
    let n = need(THERMOCOUPLE_TOML, "thermocouple.toml");
    let checked = check_need("thermocouple", &n, &demo_stock());
    assert!(!checked.is_empty());
}

#[test]
fn load_cell_designs_agree_with_ngspice() {
    let n = need(LOAD_CELL_TOML, "load-cell.toml");
    let checked = check_need("load-cell", &n, &demo_stock());
    assert!(!checked.is_empty());
}

/// The realised gain and offset of one design from ngspice's two points,
/// against the ideal, within half an E96 step (IEC 60063) in gain and the
/// same fraction of full scale in offset.
fn check_loop_transfer(tag: &str, need: &Need, c: &Candidate, ng: [f64; 2]) -> (f64, f64) {
    let span = [need.sensor.signal_low.0, need.sensor.signal_high.0];
    let k = (ng[1] - ng[0]) / (span[1] - span[0]);
    let b = ng[0] - k * span[0];
    let (k_ideal, b_ideal) = need.ideal_transfer();
    let step = half_e96_step();
    let k_rel = k / k_ideal - 1.0;
    let b_fs = (b - b_ideal) / need.full_scale();
    assert!(
        k_rel.abs() <= step,
        "{tag}: gain {k} against the ideal {k_ideal}: {:.4} % off, more than half an E96 step \
         ({:.4} %)",
        k_rel * 100.0,
        step * 100.0
    );
    assert!(
        b_fs.abs() <= step,
        "{tag}: offset {b} V against the ideal {b_ideal} V: {:.4} % FS off, more than {:.4} % FS",
        b_fs * 100.0,
        step * 100.0
    );
    // The core's transfer says the same.
    assert!(
        mismatch(c.analysis.transfer.gain, k) <= 1e-5,
        "{tag}: core gain {} vs ngspice {k}",
        c.analysis.transfer.gain
    );
    (k_rel, b_fs)
}

/// Can any op-amp row of the stock take the loop need's supply span and
/// swing to the top of its target window? (From the rows' supply range and
/// output headroom; headroom 0 means rail to rail.)
fn some_opamp_reaches_window(need: &Need, stock: &Stock) -> bool {
    let span = need.supply.positive.0 - need.supply.negative.0;
    let (_, vhi) = need.target_window();
    stock.opamps.iter().any(|p| {
        span >= p.supply_min.0
            && span <= p.supply_max.0
            && need.supply.positive.0 - p.output_headroom_high.0 >= vhi
    })
}

#[test]
fn loop_on_split_rails_with_demo_stock_matches_op_amp_limits() {
    // With the demo stock alone: the search finds designs exactly when
    // some op-amp row can take the 10 V supply span and reach the window.
    let n = need(
        &loop_toml("\"non-inverting\", \"inverting\", \"difference\"", 2),
        "loop.toml",
    );
    let stock = demo_stock();
    let reachable = some_opamp_reaches_window(&n, &stock);
    let o = solve_timed(&n, &stock, false);
    println!(
        "loop with the demo stock: an op-amp row reaches the window: {reachable}; search: \
         best {:?}, infeasible {:?}",
        o.best.as_ref().map(|b| b.costing.total),
        o.infeasible.as_ref().map(|i| &i.binding)
    );
    assert_eq!(
        o.best.is_some(),
        reachable,
        "the search's answer disagrees with the op-amp rows: {:?}",
        o.infeasible
    );
    if reachable {
        for (i, c) in returned_designs(&o).iter().enumerate() {
            let s = check_design("loop-demo", &n, &stock, i, c);
            check_loop_transfer(&format!("loop-demo-{i}"), &n, c, s.ngspice_v);
        }
    } else {
        let why = o
            .infeasible
            .as_ref()
            .map(|i| i.binding.clone())
            .unwrap_or_default();
        assert!(
            !why.is_empty(),
            "an infeasible outcome must say which limit binds"
        );
    }
}

/// `docs/report.md`: an infeasible need gets the binding reason (which
/// limit, by how much). Here the limit is the op-amp output swing
/// (by the stock rows, as in the check above), so the reason must name it.
#[test]
fn loop_infeasibility_names_the_output_swing() {
    let n = need(
        &loop_toml("\"non-inverting\", \"inverting\", \"difference\"", 2),
        "loop.toml",
    );
    let stock = demo_stock();
    assert!(
        !some_opamp_reaches_window(&n, &stock),
        "the premise changed: a demo op-amp now reaches the loop's window"
    );
    let o = solve_timed(&n, &stock, false);
    let Some(why) = o.infeasible.as_ref() else {
        panic!("expected an infeasible outcome");
    };
    assert!(
        why.binding.to_lowercase().contains("swing"),
        "the binding reason does not name the output swing that rules out every op-amp row \
         of the stock: `{}`",
        why.binding
    );
}

#[test]
fn loop_designs_realise_gain_and_offset_within_rounding() {
    let n = need(
        &loop_toml("\"non-inverting\", \"inverting\", \"difference\"", 2),
        "loop.toml",
    );
    let stock = stock_with_wide_rail_to_rail();
    let checked = check_need("loop", &n, &stock);
    for (i, (c, s)) in checked.iter().enumerate() {
        let (k_rel, b_fs) = check_loop_transfer(&format!("loop-{i}"), &n, c, s.ngspice_v);
        println!(
            "loop-{i}: gain {:+.4} %, offset {:+.4} % FS off ideal (limit {:.4} %)",
            k_rel * 100.0,
            b_fs * 100.0,
            half_e96_step() * 100.0
        );
    }
}

#[test]
fn loop_with_inverting_stages_only_has_two_stages_and_positive_gain() {
    let n = need(&loop_toml("\"inverting\"", 2), "loop-inverting.toml");
    let stock = stock_with_wide_rail_to_rail();
    let checked = check_need("loop-inverting", &n, &stock);
    for (i, (c, s)) in checked.iter().enumerate() {
        let shapes: Vec<Shape> = c.design.stages.iter().map(|s| s.shape).collect();
        assert_eq!(
            shapes,
            vec![Shape::Inverting, Shape::Inverting],
            "loop-inverting-{i}: expected two inverting stages"
        );
        assert!(
            c.analysis.transfer.gain > 0.0,
            "loop-inverting-{i}: overall gain {} is not positive",
            c.analysis.transfer.gain
        );
        let span = n.sensor.signal_high.0 - n.sensor.signal_low.0;
        let ng_gain = (s.ngspice_v[1] - s.ngspice_v[0]) / span;
        assert!(
            ng_gain > 0.0,
            "loop-inverting-{i}: ngspice overall gain {ng_gain} is not positive"
        );
        check_loop_transfer(&format!("loop-inverting-{i}"), &n, c, s.ngspice_v);
    }
}

/// The demo solves within its default time limit, and claims a proven
/// optimum only with a proof: its space is far too large for the
/// exhaustive walk, so it says `gap` (to the bound over the whole space)
/// unless its best reaches that bound.
#[test]
fn demo_solves_within_the_default_time_limit_and_claims_no_unproven_optimum() {
    let n = need(spanfit::demo::NEED_TOML, "demo-need.toml");
    assert_eq!(n.search.time_limit_ms, 2000, "the demo keeps the default");
    let o = solve_timed(&n, &demo_stock(), false);
    println!(
        "demo: proven {}, {:.1} ms, {} evaluated, {} structures",
        o.stats.proven_optimal, o.stats.elapsed_ms, o.stats.evaluated, o.stats.structures
    );
    assert!(o.best.is_some(), "no demo design: {:?}", o.infeasible);
    assert!(o.stopped.is_none(), "the demo search was cut short");
    assert_eq!(o.stats.proven_optimal, o.stats.gap.is_none());
    if let (Some(gap), Some(best)) = (o.stats.gap, &o.best) {
        assert!(gap > 0.0 && gap < best.costing.total, "gap {gap}");
    }
}

#[test]
fn cancelled_search_is_not_proven_and_keeps_its_best() {
    let n = need(spanfit::demo::NEED_TOML, "demo-need.toml");
    let stock = demo_stock();
    // The full run, recording what the callback saw.
    let mut seen: Vec<Progress> = Vec::new();
    let full = {
        let clock = || 0.0;
        let mut progress = |p: Progress| {
            seen.push(p);
            true
        };
        let mut control = SolveControl {
            progress: &mut progress,
            now_ms: &clock,
        };
        solve(&n, &stock, SearchMode::Optimised, &mut control)
            .unwrap_or_else(|e| panic!("solve failed: {e}"))
    };
    let Some(optimum) = full.best.as_ref().map(|b| b.costing.total) else {
        panic!("no demo design: {:?}", full.infeasible);
    };
    assert!(full.stopped.is_none());
    // Cut-off points: at the very start, and at the first call that
    // already has a best so far (the run then holds a design).
    let first_with_best = seen.iter().position(|p| p.best_cost.is_some());
    let mut cuts = vec![1usize, 2];
    if let Some(i) = first_with_best {
        cuts.push(i + 1);
    }
    println!(
        "full run: {} progress calls, first with a best at {:?}, optimum {optimum:.4}",
        seen.len(),
        first_with_best.map(|i| i + 1)
    );
    let mut had_design = false;
    for cut in cuts {
        let mut calls = 0usize;
        let mut first_false: Option<usize> = None;
        let clock = || 0.0;
        let mut progress = |_p: Progress| {
            calls += 1;
            if calls >= cut {
                first_false.get_or_insert(calls);
                false
            } else {
                true
            }
        };
        let mut control = SolveControl {
            progress: &mut progress,
            now_ms: &clock,
        };
        let o = solve(&n, &stock, SearchMode::Optimised, &mut control)
            .unwrap_or_else(|e| panic!("solve failed: {e}"));
        println!(
            "cut after {cut} calls: proven {}, best {:?}, gap {:?}",
            o.stats.proven_optimal,
            o.best.as_ref().map(|b| b.costing.total),
            o.stats.gap
        );
        assert_eq!(
            first_false,
            Some(cut),
            "the callback was asked {calls} times"
        );
        assert!(
            !o.stats.proven_optimal,
            "a search cancelled at progress call {cut} of {} claims a proven optimum",
            seen.len()
        );
        if let Some(b) = &o.best {
            had_design = true;
            assert!(b.analysis.meets_target, "cut {cut}: best so far misses");
            assert!(
                b.costing.total >= optimum - 1e-9,
                "cut {cut}: best so far {} is cheaper than the full run's best {optimum}",
                b.costing.total
            );
            assert_eq!(
                o.alternatives.first().map(|a| &a.design),
                Some(&b.design),
                "cut {cut}: the best so far heads the alternatives"
            );
            if let Some(g) = o.stats.gap {
                assert!(g >= 0.0 && g.is_finite(), "cut {cut}: gap {g}");
            }
        }
    }
    assert!(
        first_with_best.is_none() || had_design,
        "a run cut after a design was found handed back no best so far"
    );
}

/// With no ADC margin the demo need (an invented scenario) asks the output
/// to reach 0 V on a single supply, which no demo op-amp swings to: no
/// structure passes. The explanation names the stage and the shortfall,
/// and suggests the smallest margin of its ladder that a re-solve shows to
/// work; solving the need with that margin finds a design.
#[test]
fn a_need_short_of_margin_gets_a_verified_margin_suggestion() {
    // A longer time limit than the demo's, so the re-solves that verify
    // the suggestions have time left on a loaded machine.
    let text = spanfit::demo::NEED_TOML
        .replace("margin_pct = 2.0", "margin_pct = 0.0")
        .replace("time_limit_ms = 2000", "time_limit_ms = 30000");
    let n = need(&text, "no-margin.toml");
    let stock = demo_stock();
    let o = solve_timed(&n, &stock, false);
    assert!(
        o.best.is_none(),
        "a design without margin: {:?}",
        o.best.map(|b| b.design)
    );
    let why = o.infeasible.as_ref().expect("an explanation");
    assert!(why.binding.contains("stage 1"), "{}", why.binding);
    let suggestion = why
        .suggestions
        .iter()
        .find(|s| s.change.contains("set adc.margin_pct to"))
        .unwrap_or_else(|| panic!("no margin suggestion: {:?}", why.suggestions));
    let margin: f64 = suggestion
        .change
        .split("set adc.margin_pct to ")
        .nth(1)
        .and_then(|rest| rest.split_whitespace().next())
        .and_then(|v| v.parse().ok())
        .expect("a margin in the suggestion");
    let mut with_margin = n.clone();
    with_margin.adc.margin = spanfit::units::Percent(margin);
    let fixed = solve_timed(&with_margin, &stock, false);
    assert!(fixed.best.is_some(), "margin {margin} % finds no design");
}
