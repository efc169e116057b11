//! The search timing tables for the README (its Performance section), printed
//! as markdown:
//!
//! 1. the demo solve as shipped (bar: proven optimum under 100 ms);
//! 2. the optimiser's time against the resistor series (E12 to E192, one
//!    1 % and one 0.1 % family each, with the demo op-amps, references and
//!    in-amps) and `max_stages` 1 to 3, for the demo need at its own
//!    target (0.5 % FS) and at 1 % FS, where every series has a design;
//! 3. exhaustive against optimised search on small invented spaces the
//!    exhaustive walk finishes (`common::small_space`), with whether both
//!    found the same optimum and proved it.
//!
//! Each time is the median of several runs, timed with `std::time::Instant`
//! around one `solve` call (the core reads no clock; the bench does). An
//! infeasible search's time includes the re-solves that verify its
//! suggestions, as a user's call would.
//!
//! Run: `cargo bench -p spanfit-optimizer --bench scaling`.
//! `SPANFIT_BENCH_RUNS=<n>` sets the runs per optimised cell (default 7);
//! exhaustive cells run 3 times. `SPANFIT_BENCH_ONLY=small` prints the
//! third table alone.

// A benchmark binary: it reads the clock and the environment and prints
// its tables.
#![allow(
    clippy::disallowed_methods,
    clippy::disallowed_types,
    clippy::print_stdout,
    clippy::print_stderr
)]

mod common;

use spanfit::need::Need;
use spanfit::search::SolveOutcome;
use spanfit::series::Series;
use spanfit::stock::Stock;
use std::time::Instant;

/// Median of a list of times (0 for an empty list).
fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(|a, b| a.total_cmp(b));
    let n = v.len();
    match n {
        0 => 0.0,
        _ if n % 2 == 1 => v[n / 2],
        _ => (v[n / 2 - 1] + v[n / 2]) / 2.0,
    }
}

/// One cell: the median wall time in ms over `runs` solves (at least
/// one), and the outcome of the first.
fn time(need: &Need, stock: &Stock, exhaustive: bool, runs: usize) -> (f64, SolveOutcome) {
    let t0 = Instant::now();
    let first = common::run(need, stock, exhaustive);
    let mut times = vec![t0.elapsed().as_secs_f64() * 1000.0];
    for _ in 1..runs {
        let t0 = Instant::now();
        let o = common::run(need, stock, exhaustive);
        times.push(t0.elapsed().as_secs_f64() * 1000.0);
        std::hint::black_box(o);
    }
    (median(times), first)
}

fn cost(o: &SolveOutcome) -> String {
    o.best
        .as_ref()
        .map(|b| format!("{:.3}", b.costing.total))
        .unwrap_or_else(|| "none".into())
}

fn stages_used(o: &SolveOutcome) -> String {
    o.best
        .as_ref()
        .map(|b| b.design.stages.len().to_string())
        .unwrap_or_else(|| "-".into())
}

/// Table 2 for one accuracy target.
fn scaling_table(target: f64, runs: usize) {
    let mut cells: Vec<(Series, usize, f64, SolveOutcome)> = Vec::new();
    for series in common::SERIES {
        let stock = common::stock(series);
        for stages in 1..=3 {
            let need = common::with_target(common::need(series, stages), target);
            let (ms, o) = time(&need, &stock, false, runs);
            eprintln!(
                "scaling {target} % FS, {} stages {stages}: {ms:.1} ms",
                series.name()
            );
            cells.push((series, stages, ms, o));
        }
    }
    println!(
        "### Optimiser time against value-set size and stage count: demo need at \
         max_error_pct_fs = {target} (median of {runs} runs, ms; \"none\": no design meets it)\n"
    );
    println!(
        "| series | values per family (10 ohm to 1 Mohm) | max_stages = 1 | max_stages = 2 | \
         max_stages = 3 |"
    );
    println!("|---|---:|---:|---:|---:|");
    for series in common::SERIES {
        let row: Vec<String> = (1..=3)
            .map(|s| {
                cells
                    .iter()
                    .find(|c| c.0 == series && c.1 == s)
                    .map(|c| {
                        if c.3.best.is_some() {
                            format!("{:.1}", c.2)
                        } else {
                            format!("{:.1} (none)", c.2)
                        }
                    })
                    .unwrap_or_default()
            })
            .collect();
        println!(
            "| {} | {} | {} |",
            series.name(),
            common::values_per_family(series),
            row.join(" | ")
        );
    }
    println!();
    println!(
        "| series | max_stages | median ms | structures | designs analysed | MILPs | cost | \
         stages used | % FS (worst case) | proven optimal |"
    );
    println!("|---|---:|---:|---:|---:|---:|---:|---:|---:|:---:|");
    for (series, stages, ms, o) in &cells {
        println!(
            "| {} | {stages} | {ms:.1} | {} | {} | {} | {} | {} | {} | {} |",
            series.name(),
            o.stats.structures,
            o.stats.evaluated,
            o.stats.milp_solves,
            cost(o),
            stages_used(o),
            o.best
                .as_ref()
                .map(|b| format!("{:.3}", b.analysis.basis_pct_fs))
                .unwrap_or_else(|| "-".into()),
            o.stats.proven_optimal
        );
    }
    println!();
}

fn main() {
    let runs: usize = std::env::var("SPANFIT_BENCH_RUNS")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(7)
        .max(1);
    let exhaustive_runs = 3;

    // `SPANFIT_BENCH_ONLY=small` prints the third table alone.
    let only_small = std::env::var("SPANFIT_BENCH_ONLY").is_ok_and(|v| v == "small");
    if !only_small {
        demo_and_scaling(runs);
    }
    small_spaces(runs, exhaustive_runs);
    println!();
    println!(
        "Machine: {} logical cores; `cargo bench -p spanfit-optimizer --bench scaling` (release \
         profile, opt-level 3).",
        std::thread::available_parallelism()
            .map(|n| n.get())
            .unwrap_or(0)
    );
}

/// Tables 1 and 2: the demo as shipped, then series against stages.
fn demo_and_scaling(runs: usize) {
    // 1. The demo as shipped.
    let (need, stock) = common::demo();
    let (ms, o) = time(&need, &stock, false, runs);
    println!("### Demo solve (demo need and demo stock as shipped; median of {runs} runs)\n");
    println!("| median ms | structures | designs analysed | MILPs | cost | proven optimal |");
    println!("|---:|---:|---:|---:|---:|:---:|");
    println!(
        "| {ms:.1} | {} | {} | {} | {} | {} |\n",
        o.stats.structures,
        o.stats.evaluated,
        o.stats.milp_solves,
        cost(&o),
        o.stats.proven_optimal
    );

    // 2. Scaling: series x max_stages, at the demo target and at 1 % FS.
    scaling_table(need.accuracy.max_error_pct_fs, runs);
    scaling_table(1.0, runs);
}

/// Table 3: exhaustive against optimised on small spaces the walk
/// finishes.
fn small_spaces(runs: usize, exhaustive_runs: usize) {
    println!(
        "### Exhaustive against optimised search on small invented spaces \
         (`common::small_space`; optimised median of {runs} runs, exhaustive median of \
         {exhaustive_runs}, ms)\n"
    );
    println!(
        "| space | optimised ms | exhaustive ms | speed-up | optimised cost | exhaustive cost | \
         same optimum | proven (optimised / exhaustive) |"
    );
    println!("|---|---:|---:|---:|---:|---:|:---:|:---:|");
    for (grades, max_parts, calibration, err) in [
        (1, 3, "none", 5.0),
        (1, 4, "offset", 2.0),
        (2, 3, "two-point", 1.0),
        (2, 4, "none", 5.0),
        (2, 4, "offset", 1.0),
    ] {
        let (need, stock) = common::small_space(grades, max_parts, calibration, err);
        let (fast_ms, fast) = time(&need, &stock, false, runs);
        let (full_ms, full) = time(&need, &stock, true, exhaustive_runs);
        let same = match (&fast.best, &full.best) {
            (Some(a), Some(b)) => (a.costing.total - b.costing.total).abs() < 1e-9,
            (None, None) => true,
            _ => false,
        };
        println!(
            "| {grades} grade(s), max_parts = {max_parts}, calibration {calibration}, {err} % FS | \
             {fast_ms:.1} | {full_ms:.1} | {:.1}x | {} | {} | {} | {} / {} |",
            full_ms / fast_ms.max(1e-9),
            cost(&fast),
            cost(&full),
            if same { "yes" } else { "NO" },
            fast.stats.proven_optimal || fast.infeasible.as_ref().is_some_and(|i| i.proven),
            full.stats.proven_optimal || full.infeasible.as_ref().is_some_and(|i| i.proven),
        );
    }
}
