//! Benchmarks of the analysis of one three-stage design (the README's
//! performance bars: the linear model with every budget line under 50 us;
//! 100,000 Monte Carlo builds under 200 ms, native release):
//!
//! - `model_new_quick_totals`: build the netlist, solve it at both ends,
//!   the adjoint sensitivities, every error parameter, noise and the
//!   feasibility findings, then the worst-case, RSS and sigma totals;
//! - `report_no_monte_carlo`: the full report from a built model (budget
//!   lines, corner check by exact solves, findings);
//! - `monte_carlo_100k`: 100,000 seeded builds over the linear model.
//!
//! Run: `cargo bench -p spanfit-optimizer --bench analysis -- --warm-up-time 1 --measurement-time 3`.
//!
//! The design is the demo need's bridge (an invented scenario) through a
//! difference stage with its REF pin on a 1.25 V reference, then two
//! non-inverting stages whose offsets come from buffered dividers.

// A benchmark binary: it prints what it measured.
#![allow(clippy::print_stderr)]

mod common;

use common::three_stage;
use criterion::{black_box, criterion_group, criterion_main, Criterion};
use spanfit::analysis::Model;

fn benches(c: &mut Criterion) {
    let (need, stock, design) = three_stage();
    let model = Model::new(&need, &stock, &design).expect("the bench design analyses");
    let report = model.report(&need, 0, 1).expect("the bench design reports");
    assert_eq!(report.stages.len(), 3, "a three-stage design");
    let limit_v = need.accuracy.max_error_pct_fs / 100.0 * need.full_scale();

    c.bench_function("model_new_quick_totals", |b| {
        b.iter(|| {
            let m = Model::new(black_box(&need), &stock, black_box(&design))
                .expect("the bench design analyses");
            black_box(m.quick_totals())
        })
    });
    c.bench_function("report_no_monte_carlo", |b| {
        b.iter(|| black_box(model.report(black_box(&need), 0, 1).expect("report")))
    });
    // Where the time of `Model::new` goes: building the netlist, and one
    // LU factorisation of its MNA matrix (the model factors twice: with
    // the real op-amps and with ideal ones for the rounding line).
    let built = spanfit::topology::build(&need, &stock, &design).expect("the bench design builds");
    let mut breakdown = c.benchmark_group("breakdown");
    breakdown.bench_function("topology_build", |b| {
        b.iter(|| {
            black_box(spanfit::topology::build(black_box(&need), &stock, &design).expect("build"))
        })
    });
    breakdown.bench_function("mna_factor_and_two_solves", |b| {
        let mut solver = spanfit::mna::Solver::new(&built.netlist);
        let mut x = vec![0.0; solver.size()];
        b.iter(|| {
            solver.factor(black_box(&built.netlist)).expect("factor");
            for _ in 0..2 {
                solver.rhs(&built.netlist, &mut x);
                solver.solve_in_place(&mut x);
            }
            black_box(x[0])
        })
    });
    breakdown.bench_function("mna_transposed_solve", |b| {
        let mut solver = spanfit::mna::Solver::new(&built.netlist);
        solver.factor(&built.netlist).expect("factor");
        let mut y = vec![0.0; solver.size()];
        b.iter(|| {
            y.iter_mut().for_each(|v| *v = 0.0);
            y[0] = 1.0;
            solver.solve_transposed_in_place(black_box(&mut y));
            black_box(y[0])
        })
    });
    breakdown.bench_function("netlist_clone", |b| {
        b.iter(|| black_box(built.netlist.clone()))
    });
    breakdown.finish();
    eprintln!(
        "three-stage design: {} MNA unknowns, {} elements, {} error parameters",
        spanfit::mna::Solver::new(&built.netlist).size(),
        built.netlist.elements.len(),
        model.parameter_count()
    );

    let mut group = c.benchmark_group("monte_carlo");
    group.sample_size(10);
    group.bench_function("monte_carlo_100k", |b| {
        b.iter(|| black_box(model.monte_carlo(100_000, black_box(7), limit_v)))
    });
    group.finish();
}

criterion_group!(analysis, benches);
criterion_main!(analysis);
