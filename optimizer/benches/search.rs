//! Criterion benchmarks of the optimiser (the README's performance bars):
//!
//! - `demo_solve`: the demo need against the demo stock, as shipped
//!   (bar: proven optimum in under 100 ms, native release);
//! - `scaling/<series>/stages-<n>`: the demo need against a stock of one
//!   1 % and one 0.1 % family of each series (E12, E24, E96, E192) and the
//!   demo op-amps, references and in-amps, with `max_stages` 1 to 3 (at
//!   the demo's 0.5 % FS no E12 or E24 design exists, so those rows time a
//!   search that proves infeasibility and verifies its suggestions);
//! - `reduced/optimised` and `reduced/exhaustive`: the same search on a
//!   small invented space the exhaustive walk finishes
//!   (`common::small_space`), where both modes must find the same
//!   optimum. The optimised mode finishes such a space with the same
//!   walk, so its time there is the walk's, pruned from its own best.
//!
//! Run: `cargo bench -p spanfit-optimizer --bench search -- --warm-up-time 1 --measurement-time 3`.
//! The markdown tables for the README come from the `scaling` bench
//! (`cargo bench -p spanfit-optimizer --bench scaling`).

mod common;

use criterion::{black_box, criterion_group, criterion_main, BenchmarkId, Criterion};

fn demo_solve(c: &mut Criterion) {
    let (need, stock) = common::demo();
    c.bench_function("demo_solve", |b| {
        b.iter(|| {
            let o = common::run(black_box(&need), black_box(&stock), false);
            black_box(o.best.map(|b| b.costing.total))
        })
    });
}

fn scaling(c: &mut Criterion) {
    let mut group = c.benchmark_group("scaling");
    group.sample_size(10);
    for series in common::SERIES {
        let stock = common::stock(series);
        for stages in 1..=3 {
            let need = common::need(series, stages);
            group.bench_with_input(
                BenchmarkId::new(series.name(), format!("stages-{stages}")),
                &need,
                |b, need| {
                    b.iter(|| {
                        let o = common::run(black_box(need), black_box(&stock), false);
                        black_box(o.best.map(|b| b.costing.total))
                    })
                },
            );
        }
    }
    group.finish();
}

fn reduced(c: &mut Criterion) {
    let (need, stock) = common::small_space(2, 4, "none", 5.0);
    // Both modes must agree before their times mean anything.
    let fast = common::run(&need, &stock, false);
    let full = common::run(&need, &stock, true);
    let cost = |o: &spanfit::search::SolveOutcome| o.best.as_ref().map(|b| b.costing.total);
    match (cost(&fast), cost(&full)) {
        (Some(a), Some(b)) if (a - b).abs() < 1e-9 => {}
        (None, None) => {}
        (a, b) => panic!("reduced space: optimised {a:?} vs exhaustive {b:?}"),
    }
    let mut group = c.benchmark_group("reduced");
    group.sample_size(10);
    for (name, exhaustive) in [("optimised", false), ("exhaustive", true)] {
        group.bench_function(name, |b| {
            b.iter(|| {
                let o = common::run(black_box(&need), black_box(&stock), exhaustive);
                black_box(o.best.map(|b| b.costing.total))
            })
        });
    }
    group.finish();
}

criterion_group!(benches, demo_solve, scaling, reduced);
criterion_main!(benches);
