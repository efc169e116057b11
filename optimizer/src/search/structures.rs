//! Resistor grades and structures: a group with a grade per stage (and one
//! for its offset dividers), each with a cost lower bound, taken cheapest
//! bound first.

use super::groups::Group;
use super::Problem;
use crate::design::Source;
use crate::need::{Need, Objective};
use crate::stock::{ResistorPart, Stock};
use std::collections::{BTreeMap, BTreeSet};

/// A resistor grade: one family (or one tolerance/TCR class of single
/// rows), its sorted values and their parts.
#[derive(Debug, Clone)]
pub(super) struct Grade {
    /// Tolerance as a fraction.
    pub(super) tolerance: f64,
    /// TCR as a fraction per degC.
    pub(super) tcr: f64,
    /// Sorted values, ohms.
    pub(super) values: Vec<f64>,
    /// Stock index of each value's part.
    pub(super) parts: Vec<usize>,
    /// Cheapest part of the grade.
    pub(super) min_cost: f64,
}

/// The grades of a stock, cheapest first.
pub(super) fn grades(stock: &Stock) -> Vec<Grade> {
    let mut map: BTreeMap<String, Vec<usize>> = BTreeMap::new();
    for (i, r) in stock.resistors.iter().enumerate() {
        let key = match &r.family {
            Some(f) => format!("family:{f}"),
            // Rows held in limited quantity form a grade apart from rows
            // that can be had in any number, so a design short of one can
            // fall back on the other.
            None => format!(
                "single:{}:{}:{}",
                r.tolerance.0,
                r.tcr.0,
                r.stock_qty.is_some()
            ),
        };
        map.entry(key).or_default().push(i);
    }
    let mut out = Vec::new();
    for (_, idx) in map {
        let mut by_value: BTreeMap<u64, usize> = BTreeMap::new();
        for i in idx {
            let r = &stock.resistors[i];
            let k = r.value.0.to_bits();
            match by_value.get(&k) {
                Some(&j) if stock.resistors[j].unit_cost <= r.unit_cost => {}
                _ => {
                    by_value.insert(k, i);
                }
            }
        }
        let mut parts: Vec<usize> = by_value.into_values().collect();
        parts.sort_by(|a, b| {
            stock.resistors[*a]
                .value
                .0
                .total_cmp(&stock.resistors[*b].value.0)
        });
        if parts.is_empty() {
            continue;
        }
        let min_cost = parts
            .iter()
            .map(|&i| stock.resistors[i].unit_cost)
            .fold(f64::INFINITY, f64::min);
        let first = &stock.resistors[parts[0]];
        out.push(Grade {
            tolerance: first.tolerance.fraction(),
            tcr: first.tcr.fraction_per_c(),
            values: parts.iter().map(|&i| stock.resistors[i].value.0).collect(),
            parts,
            min_cost,
        });
    }
    // Worst grades last, so ties in cost go to the better grade's error.
    out.sort_by(|a, b| a.min_cost.total_cmp(&b.min_cost));
    out
}

/// The stock the search uses: the user's, plus generic parts of the
/// need's standard series when `stock.only` is false (1 % and 100 ppm/degC
/// for E48 and above, 5 % and 200 ppm/degC below; common practice).
pub fn augment_stock(need: &Need, stock: &Stock) -> Stock {
    let mut augmented = stock.clone();
    if need.stock.only {
        return augmented;
    }
    for series in &need.search.resistor_series {
        let (tol, tcr, cost) = match series {
            crate::series::Series::E6 | crate::series::Series::E12 | crate::series::Series::E24 => {
                (5.0, 200.0, 0.003)
            }
            crate::series::Series::E192 => (0.5, 50.0, 0.02),
            _ => (1.0, 100.0, 0.005),
        };
        for v in series.values_in(10.0, 1e6) {
            let id = format!("GEN-{}-{}", series.name(), crate::series::value_code(v));
            if augmented.resistor(&id).is_some() {
                continue;
            }
            augmented.resistors.push(ResistorPart {
                part_id: id,
                value: crate::units::Ohms(v),
                tolerance: crate::units::Percent(tol),
                tcr: crate::units::PpmPerC(tcr),
                package: "generic".into(),
                unit_cost: cost,
                stock_qty: None,
                family: Some(format!("GEN-{}", series.name())),
            });
        }
    }
    augmented.resistors.sort_by(|a, b| {
        a.value
            .0
            .total_cmp(&b.value.0)
            .then(a.unit_cost.total_cmp(&b.unit_cost))
    });
    augmented
}

/// One structure: a group with a grade per stage (and, last, one for the
/// offset divider), and its cost bound.
#[derive(Debug, Clone)]
pub(super) struct Structure {
    /// Index of its group.
    pub(super) group: usize,
    /// Grade index per stage, then the divider grade.
    pub(super) grades: Vec<usize>,
    /// Lower bound on the total cost of any design of the structure.
    pub(super) bound: f64,
    /// Parts on the board.
    pub(super) parts: usize,
}

/// Every structure of every group within the part limit, in the order the
/// objective takes them (lowest bound first).
pub(super) fn structures(problem: &Problem<'_>, groups: &[Group]) -> Vec<Structure> {
    let line = problem.need.search.bom_line_cost;
    let mut out = Vec::new();
    let grade_count = problem.grades.len();
    for (group_index, group) in groups.iter().enumerate() {
        let n = group.shapes.len();
        // Offset dividers, where there are any, share a grade of their own.
        let divider_stages: Vec<usize> = group
            .plans
            .iter()
            .filter(|p| p.network.has_divider())
            .map(|p| p.stage)
            .collect();
        let slots = n + usize::from(group.has_divider());
        let combos = grade_count.pow(slots as u32);
        for code in 0..combos {
            let mut grades = Vec::with_capacity(n + 1);
            let mut rest = code;
            for _ in 0..slots {
                grades.push(rest % grade_count);
                rest /= grade_count;
            }
            if !group.has_divider() {
                grades.push(0);
            }
            let mut counts = group.resistors_per_stage.clone();
            for &stage in &divider_stages {
                counts[stage] -= 2;
            }
            let mut resistor_cost: f64 = grades[..n]
                .iter()
                .zip(&counts)
                .map(|(&grade, &count)| count as f64 * problem.grades[grade].min_cost)
                .sum();
            let mut distinct: BTreeSet<usize> = grades[..n].iter().copied().collect();
            if group.has_divider() {
                resistor_cost +=
                    2.0 * divider_stages.len() as f64 * problem.grades[grades[n]].min_cost;
                distinct.insert(grades[n]);
            }
            let min_lines =
                distinct
                    .len()
                    .max(if group.resistors_per_stage.iter().any(|&c| c >= 2) {
                        2
                    } else {
                        1
                    });
            let parts = group.resistors_per_stage.iter().sum::<usize>()
                + group.packages
                + usize::from(
                    group
                        .plans
                        .first()
                        .is_some_and(|p| p.source != Source::Supply),
                );
            if parts > problem.need.search.max_parts {
                continue;
            }
            out.push(Structure {
                group: group_index,
                grades,
                bound: group.fixed_cost
                    + resistor_cost
                    + line * (group.fixed_lines + min_lines) as f64,
                parts,
            });
        }
    }
    let objective = problem.need.search.objective;
    out.sort_by(|a, b| match objective {
        Objective::Parts => a.parts.cmp(&b.parts).then(a.bound.total_cmp(&b.bound)),
        _ => a.bound.total_cmp(&b.bound).then(a.parts.cmp(&b.parts)),
    });
    out
}
