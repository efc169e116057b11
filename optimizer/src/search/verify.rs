//! Verification of a design by the full analysis, the shelf-quantity
//! check, and the estimate of a structure's random error from another
//! structure of its group.

use super::{costing_with, Candidate, Problem};
use crate::analysis::{Model, RandomSplit};
use crate::design::{Design, Source};
use crate::need::Basis;
use crate::stock::Stock;
use crate::topology::Built;
use std::collections::BTreeMap;

/// Whether a built design uses no part more often than the stock holds.
fn within_stock(stock: &Stock, built: &Built) -> bool {
    let mut used: BTreeMap<&str, u32> = BTreeMap::new();
    for r in built.resistors.iter().filter(|r| r.part.network.is_none()) {
        *used.entry(r.part.part_id.as_str()).or_default() += 1;
    }
    let networks = crate::design::network_packages(built.resistors.iter().map(|r| &r.part));
    for package in &networks {
        *used.entry(package.part_id.as_str()).or_default() += 1;
    }
    for p in &built.packages {
        *used.entry(p.part_id.as_str()).or_default() += 1;
    }
    for source in &built.sources {
        if let Source::Reference(id) = &source.source {
            *used.entry(id.as_str()).or_default() += 1;
        }
    }
    used.iter().all(|(id, &count)| {
        let qty = stock
            .resistor(id)
            .map(|p| p.stock_qty)
            .or_else(|| stock.opamp(id).map(|p| p.stock_qty))
            .or_else(|| stock.inamp(id).map(|p| p.stock_qty))
            .or_else(|| stock.reference(id).map(|p| p.stock_qty))
            .or_else(|| stock.network(id).map(|p| p.stock_qty))
            .flatten();
        qty.is_none_or(|q| count <= q)
    })
}

/// The full report of a design whose model is built already.
pub(super) fn verify_model(
    problem: &Problem<'_>,
    design: Design,
    model: Model,
) -> Option<Candidate> {
    if !within_stock(problem.stock, model.built()) {
        return None;
    }
    let builds = if problem.need.accuracy.basis == Basis::Yield {
        crate::montecarlo::YIELD_BASIS_BUILDS
    } else {
        0
    };
    // The search ranks by numbers; the report analyses the design it
    // returns again with every line explained (api).
    let analysis = model.report_unexplained(problem.need, builds, 1).ok()?;
    let built = model.built().clone();
    // Costed with the filter pair the report will attach (search/pair.rs).
    let pair = problem.pairs.share(&built);
    let costing = costing_with(&built, pair.as_ref(), problem.need.search.bom_line_cost);
    Some(Candidate {
        design,
        built,
        costing,
        analysis,
    })
}

/// The random part of a structure's budget estimated from another
/// structure of the same group (same netlist shape, other grades): the
/// per-unit resistor sums rescaled by each slot's grade.
pub(super) fn estimate_random(
    problem: &Problem<'_>,
    split: &RandomSplit,
    grades: &[usize],
) -> [f64; 2] {
    let n = split.per_stage.len() / 2;
    let mut out = [0.0; 2];
    for (end, estimate) in out.iter_mut().enumerate() {
        let mut worst = split.other_worst[end];
        let mut squares = split.other_squares[end];
        for (slot, sums) in split.per_stage.iter().enumerate() {
            let stage = slot / 2;
            let grade = if slot % 2 == 1 {
                &problem.grades[grades[n]]
            } else {
                &problem.grades[grades[stage]]
            };
            worst += grade.tolerance * sums.tolerance_worst[end] + grade.tcr * sums.tcr_worst[end];
            squares += grade.tolerance.powi(2) * sums.tolerance_squares[end]
                + grade.tcr.powi(2) * sums.tcr_squares[end];
        }
        *estimate = problem.need.accuracy.basis.random_total(
            &bounded_spread(worst, squares),
            problem.need.accuracy.yield_pct,
        );
    }
    out
}

/// The spread of bounded terms only (no noise), from the sum of their
/// limits and the sum of their squares: what the search's estimates hand
/// to [`crate::need::Basis::random_total`].
pub(super) fn bounded_spread(limit_sum: f64, limit_squares: f64) -> crate::analysis::Spread {
    crate::analysis::Spread {
        limit_sum,
        limit_squares,
        noise_rms: 0.0,
        noise_peak: 0.0,
    }
}
