//! Benchmarks of the AC analysis of a three-stage design with its filter
//! at the ADC input (the README's bar: 200 frequencies under 1 ms, native
//! release):
//!
//! - `ac_200_frequencies`: the transfer from `VSENSE` to `out` at 200
//!   frequencies, one complex LU factorisation each (the Bode data and
//!   the corner search are made of these);
//! - `ac_adjoint_200_frequencies`: the same frequencies with the adjoint
//!   solve the noise integral uses (every source's transfer at once);
//! - `model_reported`: the whole model of the reported design (DC
//!   analysis, the pair's choice and figures, the noise integral).
//!
//! Run: `cargo bench -p spanfit-optimizer --bench filter -- --warm-up-time 1 --measurement-time 3`.
//!
//! The design is the three-stage design of `benches/common` (the demo
//! need's bridge, an invented scenario).

// A benchmark binary: it prints what it measured.
#![allow(clippy::print_stderr)]

mod common;

use common::three_stage;
use criterion::{black_box, criterion_group, criterion_main, Criterion};
use spanfit::analysis::Model;
use spanfit::mna_ac::{log_frequencies, AcSolver};

fn benches(c: &mut Criterion) {
    let (need, stock, design) = three_stage();
    let built = spanfit::topology::build(&need, &stock, &design).expect("the bench design builds");
    let (built, why) = spanfit::filter::attach(&need, &stock, &built);
    assert!(why.is_none(), "the bench design gets its filter: {why:?}");
    assert_eq!(
        built.stage_outputs.len(),
        3,
        "a three-stage design with its filter"
    );
    let amplifiers = spanfit::filter::amplifiers(&stock, &built);
    let frequencies = log_frequencies(1e-1, 1e7, 200);
    let mut solver = AcSolver::new(&built.netlist, &amplifiers);
    eprintln!(
        "three-stage design with its filter: {} amplifier sections, {} elements",
        amplifiers.len(),
        built.netlist.elements.len()
    );
    c.bench_function("ac_200_frequencies", |b| {
        b.iter(|| {
            let mut sum = 0.0;
            for &f in &frequencies {
                let h = solver
                    .transfer(&built.netlist, built.vsense, built.out, black_box(f))
                    .expect("the AC matrix factors");
                sum += h.abs();
            }
            black_box(sum)
        })
    });
    c.bench_function("ac_adjoint_200_frequencies", |b| {
        b.iter(|| {
            let mut sum = 0.0;
            for &f in &frequencies {
                solver
                    .solve_adjoint(&built.netlist, built.out, black_box(f))
                    .expect("the AC matrix factors");
                sum += solver.branch_transfer(built.vsense).abs();
            }
            black_box(sum)
        })
    });
    let mut group = c.benchmark_group("reported");
    group.sample_size(20);
    group.bench_function("model_reported", |b| {
        b.iter(|| {
            black_box(
                Model::reported(black_box(&need), &stock, black_box(&design))
                    .expect("the bench design analyses"),
            )
        })
    });
    group.finish();
}

criterion_group!(filter, benches);
criterion_main!(filter);
