//! The search timing tables for the README (DESIGN.md section 5), printed
//! as markdown: the demo solve as shipped; the optimiser's time against
//! the resistor series (E12 to E192, one 1 % and one 0.1 % family each,
//! with the demo op-amps, references and in-amps) and `max_stages` 1 to
//! 3 for the demo need; and exhaustive against optimised search on
//! reduced spaces, with the speed-up and whether both found the same
//! optimum.
//!
//! Each time is the median of several runs, timed with `std::time::Instant`
//! around one `solve` call (the core reads no clock; the bench does).
//!
//! Run: `cargo bench -p spanfit-optimizer --bench scaling`.
//! `SPANFIT_BENCH_RUNS=<n>` sets the runs per optimised cell (default 7);
//! exhaustive cells run 3 times.

mod common;

use spanfit::search::SolveOutcome;
use spanfit::series::Series;
use spanfit::stock::Stock;
use std::time::Instant;

/// Median of a non-empty list of times.
fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(|a, b| a.total_cmp(b));
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        (v[n / 2 - 1] + v[n / 2]) / 2.0
    }
}

/// One cell: median wall time in ms over `runs` solves, and the last
/// outcome.
fn time(
    need: &spanfit::need::Need,
    stock: &Stock,
    exhaustive: bool,
    runs: usize,
) -> (f64, SolveOutcome) {
    let mut times = Vec::with_capacity(runs);
    let mut last = None;
    for _ in 0..runs.max(1) {
        let t0 = Instant::now();
        let o = common::run(need, stock, exhaustive);
        times.push(t0.elapsed().as_secs_f64() * 1000.0);
        last = Some(o);
    }
    match last {
        Some(o) => (median(times), o),
        None => unreachable!("at least one run"),
    }
}

fn cost(o: &SolveOutcome) -> String {
    o.best
        .as_ref()
        .map(|b| format!("{:.4}", b.costing.total))
        .unwrap_or_else(|| "none".into())
}

fn main() {
    let runs: usize = std::env::var("SPANFIT_BENCH_RUNS")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(7);
    let exhaustive_runs = 3;

    // The demo as shipped.
    let (need, stock) = common::demo();
    let (ms, o) = time(&need, &stock, false, runs);
    println!("### Demo solve (demo need and demo stock as shipped; median of {runs} runs)\n");
    println!("| median ms | structures | evaluated | MILPs | cost | proven optimal |");
    println!("|---:|---:|---:|---:|---:|:---:|");
    println!(
        "| {ms:.1} | {} | {} | {} | {} | {} |\n",
        o.stats.structures,
        o.stats.evaluated,
        o.stats.milp_solves,
        cost(&o),
        o.stats.proven_optimal
    );

    // Scaling: series x max_stages.
    let mut cells: Vec<(Series, usize, f64, SolveOutcome)> = Vec::new();
    for series in common::SERIES {
        let stock = common::stock(series);
        for stages in 1..=3 {
            let need = common::need(series, stages);
            let (ms, o) = time(&need, &stock, false, runs);
            eprintln!("scaling {} stages {stages}: {ms:.1} ms", series.name());
            cells.push((series, stages, ms, o));
        }
    }
    println!(
        "### Optimiser time against value-set size and stage count (demo need; median of {runs} \
         runs, ms)\n"
    );
    println!("| series | values per family (10 ohm to 1 Mohm) | max_stages = 1 | max_stages = 2 | max_stages = 3 |");
    println!("|---|---:|---:|---:|---:|");
    for series in common::SERIES {
        let row: Vec<String> = (1..=3)
            .map(|s| {
                cells
                    .iter()
                    .find(|c| c.0 == series && c.1 == s)
                    .map(|c| format!("{:.1}", c.2))
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
    println!("| series | max_stages | median ms | structures | evaluated | MILPs | cost | stages used | proven optimal |");
    println!("|---|---:|---:|---:|---:|---:|---:|---:|:---:|");
    for (series, stages, ms, o) in &cells {
        println!(
            "| {} | {stages} | {ms:.1} | {} | {} | {} | {} | {} | {} |",
            series.name(),
            o.stats.structures,
            o.stats.evaluated,
            o.stats.milp_solves,
            cost(o),
            o.best
                .as_ref()
                .map(|b| b.design.stages.len().to_string())
                .unwrap_or_else(|| "-".into()),
            o.stats.proven_optimal
        );
    }
    println!();

    // Exhaustive against optimised on reduced spaces.
    println!(
        "### Exhaustive against optimised search on reduced spaces (demo need; optimised median of \
         {runs} runs, exhaustive median of {exhaustive_runs})\n"
    );
    println!("| space | optimised ms | exhaustive ms | speed-up | optimised cost | exhaustive cost | same optimum | designs analysed (optimised / exhaustive) |");
    println!("|---|---:|---:|---:|---:|---:|:---:|---:|");
    for (series, stages) in [
        (Series::E12, 1),
        (Series::E24, 1),
        (Series::E12, 2),
        (Series::E24, 2),
    ] {
        let stock = common::stock(series);
        let need = common::need(series, stages);
        let (fast_ms, fast) = time(&need, &stock, false, runs);
        let (full_ms, full) = time(&need, &stock, true, exhaustive_runs);
        eprintln!(
            "reduced {} stages {stages}: {fast_ms:.1} ms vs {full_ms:.1} ms",
            series.name()
        );
        let same = match (&fast.best, &full.best) {
            (Some(a), Some(b)) => (a.costing.total - b.costing.total).abs() < 1e-9,
            (None, None) => true,
            _ => false,
        };
        println!(
            "| {}, max_stages = {stages} | {fast_ms:.1} | {full_ms:.1} | {:.0}x | {} | {} | {} | {} / {} |",
            series.name(),
            full_ms / fast_ms.max(1e-9),
            cost(&fast),
            cost(&full),
            if same { "yes" } else { "NO" },
            fast.stats.evaluated,
            full.stats.evaluated
        );
    }
    println!();
    println!(
        "Machine: {} logical cores; `cargo bench -p spanfit-optimizer --bench scaling` (release, \
         opt-level 3).",
        std::thread::available_parallelism()
            .map(|n| n.get())
            .unwrap_or(0)
    );
}
