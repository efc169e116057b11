//! The MILP that picks one value set per stage of a structure: a fee per
//! distinct BOM line (a network part is one line, its package priced once
//! per value set that places one), the linearised error within bounds at
//! both span ends, shelf quantities (a network's in packages), and cuts of
//! picks already refused. The model is plain
//! data; the solver is passed in (good_lp's `Solver`), so a caller may
//! swap the backend.

use super::structures::Structure;
use super::value_sets::{PartLine, ValueSet};
use super::Problem;
use crate::need::Objective;
use good_lp::{variable, variables, Expression, Solution, Solver, SolverModel};
use std::collections::BTreeMap;

/// The solver the search uses: microlp, pure Rust (it builds for wasm).
pub(super) fn default_solver() -> impl Solver {
    good_lp::solvers::microlp::microlp
}

/// What the MILP is asked for one structure.
pub(super) struct SelectionBounds<'b> {
    /// Allowed linearised error at each span end, volts.
    pub(super) allowed: [f64; 2],
    /// Error no value set changes (added to the sum), volts.
    pub(super) constant: [f64; 2],
    /// Picks already refused, one value-set index per stage.
    pub(super) cuts: &'b [Vec<usize>],
}

/// The MILP: one value set per stage, a fee per distinct resistor part,
/// the linearised error within `allowed` at both ends. Returns the chosen
/// value-set index per stage, or `None` when none fits.
// Long: one model written top to bottom (variables, objective, one block
// per constraint family); split, its parts would only pass the model along.
pub(super) fn select_value_sets<S: Solver>(
    problem: &Problem<'_>,
    structure: &Structure,
    value_sets: &[Vec<ValueSet>],
    bounds: &SelectionBounds<'_>,
    solver: S,
) -> Option<Vec<usize>> {
    let (allowed, constant, cuts) = (bounds.allowed, bounds.constant, bounds.cuts);
    let mut vars = variables!();
    let calibration = problem.need.accuracy.calibration;
    let divider_grade = &problem.grades[structure.grades[value_sets.len()]];
    let chosen: Vec<Vec<good_lp::Variable>> = value_sets
        .iter()
        .map(|stage_sets| {
            stage_sets
                .iter()
                .map(|_| vars.add(variable().binary()))
                .collect()
        })
        .collect();
    // BOM lines: one binary per distinct stock part among the value sets.
    let parts: Vec<Vec<Vec<PartLine>>> = value_sets
        .iter()
        .enumerate()
        .map(|(stage, stage_sets)| {
            let grade = &problem.grades[structure.grades[stage]];
            stage_sets
                .iter()
                .map(|set| set.stock_parts(grade, divider_grade))
                .collect()
        })
        .collect();
    let mut lines: BTreeMap<PartLine, good_lp::Variable> = BTreeMap::new();
    for part in parts.iter().flatten().flatten() {
        lines
            .entry(*part)
            .or_insert_with(|| vars.add(variable().binary()));
    }
    let mut objective = Expression::from(0.0);
    let fee = problem.need.search.bom_line_cost;
    let scale = problem.target_v.max(1e-12);
    for (stage, stage_sets) in value_sets.iter().enumerate() {
        for (index, set) in stage_sets.iter().enumerate() {
            let e = calibration.apply(set.contribution);
            let size = e[0].abs().max(e[1].abs()) / scale;
            // Ties in cost go to the smaller error (the weight is far below
            // any price step).
            let weight = match problem.need.search.objective {
                Objective::Error => size + 1e-6 * set.cost,
                _ => set.cost + 1e-7 * size,
            };
            objective += weight * chosen[stage][index];
        }
    }
    if problem.need.search.objective != Objective::Error {
        for line in lines.values() {
            objective += fee * *line;
        }
    }
    let mut model = vars.minimise(objective).using(solver);
    for (stage, stage_sets) in value_sets.iter().enumerate() {
        let sum: Expression = chosen[stage].iter().copied().map(Expression::from).sum();
        model = model.with(sum.eq(1.0));
        for index in 0..stage_sets.len() {
            for part in &parts[stage][index] {
                if let Some(line) = lines.get(part) {
                    model = model.with((Expression::from(chosen[stage][index]) - *line).leq(0.0));
                }
            }
        }
    }
    for end in 0..2 {
        let mut sum = Expression::from(constant[end]);
        for (stage, stage_sets) in value_sets.iter().enumerate() {
            for (index, set) in stage_sets.iter().enumerate() {
                sum += calibration.apply(set.contribution)[end] * chosen[stage][index];
            }
        }
        model = model.with(sum.clone().leq(allowed[end]));
        model = model.with(sum.geq(-allowed[end]));
    }
    // Stock quantities: no part used more often than the shelf holds (a
    // network value set takes one package).
    let shelf = |line: PartLine| match line {
        PartLine::Resistor(i) => problem.stock.resistors.get(i).and_then(|r| r.stock_qty),
        PartLine::Network(i) => problem.stock.networks.get(i).and_then(|n| n.stock_qty),
    };
    let mut uses: BTreeMap<PartLine, Expression> = BTreeMap::new();
    for (stage, stage_sets) in value_sets.iter().enumerate() {
        for index in 0..stage_sets.len() {
            for part in &parts[stage][index] {
                if shelf(*part).is_some() {
                    *uses.entry(*part).or_insert_with(|| Expression::from(0.0)) +=
                        chosen[stage][index];
                }
            }
        }
    }
    for (part, used) in uses {
        if let Some(qty) = shelf(part) {
            model = model.with(used.leq(qty as f64));
        }
    }
    for cut in cuts {
        let sum: Expression = cut
            .iter()
            .enumerate()
            .map(|(stage, &index)| Expression::from(chosen[stage][index]))
            .sum();
        model = model.with(sum.leq(cut.len() as f64 - 1.0));
    }
    let solution = model.solve().ok()?;
    chosen
        .iter()
        .map(|stage_vars| {
            stage_vars
                .iter()
                .enumerate()
                .max_by(|a, b| solution.value(*a.1).total_cmp(&solution.value(*b.1)))
                .map(|(index, _)| index)
        })
        .collect()
}
