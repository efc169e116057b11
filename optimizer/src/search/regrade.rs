//! Cheaper parts of the same values: after the walk, each resistor of the
//! best design (and each group of resistors sharing one part number) is
//! tried with every cheaper stocked part of exactly its value, cheapest
//! first, and the change is kept when the full analysis still meets the
//! need and the design then ranks before the best (exact cost with its
//! BOM lines, the shelf quantities checked).
//!
//! The walk gives every resistor of a stage one grade (and the divider
//! its own); a role whose value barely moves the output (a large
//! resistance beside the sensor's own, a divider of a small offset, the
//! resistors that set only the common-mode balance where the common mode
//! is steady) can often take a cheaper grade than its neighbours. The
//! nominal values stay, so the netlist at its nominal point is the same
//! and only the tolerance and drift lines change; the analysis judges
//! every change. The pass only lowers the best design's objective: the
//! space bound and every verdict the search proves are unchanged by it.

use super::strategy::{ranks_before, SearchState};
use super::verify::verify_model;
use super::Problem;
use crate::analysis::Model;
use crate::design::{Design, Injection, Resistor};
use crate::need::Objective;
use crate::shape::Role;

/// Where a resistor sits in a design.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Slot {
    /// A stage role.
    Role(usize, Role),
    /// A stage's offset divider: top (`true`) or bottom.
    Offset(usize, bool),
    /// A stage's bias divider: top (`true`) or bottom.
    Bias(usize, bool),
}

fn divider(injection: &Injection, top: bool) -> Option<&Resistor> {
    match injection {
        Injection::Divider {
            top: t, bottom: b, ..
        } => Some(if top { t } else { b }),
        _ => None,
    }
}

fn divider_mut(injection: &mut Injection, top: bool) -> Option<&mut Resistor> {
    match injection {
        Injection::Divider {
            top: t, bottom: b, ..
        } => Some(if top { t } else { b }),
        _ => None,
    }
}

/// Every discrete resistor of a design with its place (network elements
/// are left out: their package fixes them).
fn slots(design: &Design) -> Vec<(Slot, &Resistor)> {
    let mut out = Vec::new();
    for (i, stage) in design.stages.iter().enumerate() {
        for (&role, r) in &stage.resistors {
            out.push((Slot::Role(i, role), r));
        }
        for top in [true, false] {
            if let Some(r) = divider(&stage.offset, top) {
                out.push((Slot::Offset(i, top), r));
            }
            if let Some(r) = divider(&stage.bias, top) {
                out.push((Slot::Bias(i, top), r));
            }
        }
    }
    out.retain(|(_, r)| r.network.is_none());
    out
}

fn resistor_mut(design: &mut Design, slot: Slot) -> Option<&mut Resistor> {
    match slot {
        Slot::Role(i, role) => design.stages.get_mut(i)?.resistors.get_mut(&role),
        Slot::Offset(i, top) => divider_mut(&mut design.stages.get_mut(i)?.offset, top),
        Slot::Bias(i, top) => divider_mut(&mut design.stages.get_mut(i)?.bias, top),
    }
}

/// A move: slots that take one part together, with the value and the
/// unit price they hold now.
struct Move {
    slots: Vec<Slot>,
    ohms: f64,
    unit_cost: f64,
}

/// The moves tried on a design: each part number placed more than once
/// as a whole (a BOM line may go), then each resistor on its own.
fn moves(design: &Design) -> Vec<Move> {
    let slots = slots(design);
    let mut out: Vec<Move> = Vec::new();
    let mut ids: Vec<&str> = slots.iter().map(|(_, r)| r.part_id.as_str()).collect();
    ids.sort_unstable();
    ids.dedup();
    for id in ids {
        let holders: Vec<&(Slot, &Resistor)> =
            slots.iter().filter(|(_, r)| r.part_id == id).collect();
        if let [(_, first), _, ..] = holders.as_slice() {
            out.push(Move {
                slots: holders.iter().map(|(s, _)| *s).collect(),
                ohms: first.ohms,
                unit_cost: first.unit_cost,
            });
        }
    }
    out.extend(slots.iter().map(|(s, r)| Move {
        slots: vec![*s],
        ohms: r.ohms,
        unit_cost: r.unit_cost,
    }));
    out
}

/// Stock indices of the parts of exactly `ohms` cheaper than `cost` and
/// on the shelf, cheapest first.
fn cheaper_parts(problem: &Problem<'_>, ohms: f64, cost: f64) -> Vec<usize> {
    let mut out: Vec<usize> = problem
        .stock
        .resistors
        .iter()
        .enumerate()
        .filter(|(_, p)| {
            p.stock_qty != Some(0)
                && (p.value.0 - ohms).abs() <= 1e-9 * ohms.abs()
                && p.unit_cost < cost - 1e-12
        })
        .map(|(i, _)| i)
        .collect();
    out.sort_by(|&a, &b| {
        let (pa, pb) = (&problem.stock.resistors[a], &problem.stock.resistors[b]);
        pa.unit_cost
            .total_cmp(&pb.unit_cost)
            .then_with(|| pa.part_id.cmp(&pb.part_id))
    });
    out
}

/// Try cheaper parts of the same values on the best design until no move
/// improves it or `out_of_time` says stop (cost and part-count
/// objectives; the error objective never gains from a looser part).
pub(super) fn cheaper_same_values(
    problem: &Problem<'_>,
    state: &mut SearchState,
    out_of_time: &mut dyn FnMut() -> bool,
) {
    let objective = problem.need.search.objective;
    if objective == Objective::Error {
        return;
    }
    let gets_pair =
        |b: &crate::topology::Built, dc: &crate::mna::DcSolution| problem.pairs.gets_pair(b, dc);
    'improve: loop {
        let Some(best) = state.best.as_ref() else {
            return;
        };
        let design = best.design.clone();
        for change in moves(&design) {
            for part in cheaper_parts(problem, change.ohms, change.unit_cost) {
                if out_of_time() {
                    return;
                }
                let mut changed = design.clone();
                let replacement = Resistor::from(&problem.stock.resistors[part]);
                if !change
                    .slots
                    .iter()
                    .all(|&s| match resistor_mut(&mut changed, s) {
                        Some(r) => {
                            *r = replacement.clone();
                            true
                        }
                        None => false,
                    })
                {
                    continue;
                }
                let Ok(model) = Model::candidate(problem.need, problem.stock, &changed, &gets_pair)
                else {
                    continue;
                };
                state.evaluated += 1;
                let Some(candidate) = verify_model(problem, changed, model) else {
                    continue;
                };
                let wins = candidate.analysis.meets_target
                    && state
                        .best
                        .as_ref()
                        .is_none_or(|b| ranks_before(objective, &candidate, b));
                state.offer(candidate);
                if wins {
                    continue 'improve;
                }
            }
        }
        return;
    }
}
