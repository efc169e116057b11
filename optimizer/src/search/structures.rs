//! Resistor grades and structures: a group with a grade per stage (and one
//! for its offset dividers), each with a cost lower bound, taken cheapest
//! bound first.

use super::groups::{source_plan, Group};
use super::Problem;
use crate::design::Source;
use crate::need::{Need, Objective};
use crate::stock::{ResistorPart, Stock};
use std::collections::{BTreeMap, BTreeSet, BinaryHeap};

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
    /// Lower bound on the total cost of any design of the structure, the
    /// filter pair's floor included.
    pub(super) bound: f64,
    /// Parts on the board, with the filter pair's floor.
    pub(super) parts: usize,
}

/// What one group contributes to the walk: the grade slots it has and the
/// cost each slot's grade adds per unit of the grade's cheapest part.
struct GroupSlots {
    /// Index of the group.
    group: usize,
    /// Stages of the group.
    stages: usize,
    /// Whether the last slot is the offset dividers' grade.
    has_divider: bool,
    /// Resistors paid at the slot's grade price, per slot.
    counts: Vec<f64>,
    /// Stage indices of the offset dividers.
    divider_stages: Vec<usize>,
    /// Parts on the board (the grades do not change it).
    parts: usize,
    /// Fewest BOM lines the resistors take, whatever the grades.
    floor_lines: usize,
    /// Resistors of the first stage that may take the cheapest grade
    /// whatever the stage's (its input resistors beside the sensor's
    /// resistance, search/value_sets.rs), paid at that grade's price.
    carried: f64,
}

/// Every structure of every group within the part limit, produced lazily
/// in the order the objective takes them (lowest cost bound first; for
/// `objective = "parts"`, fewest parts first, then lowest bound), so memory
/// stays flat however many grade combinations the stock allows.
///
/// How the order is kept without listing the structures: a structure's
/// bound is the group's fixed cost, plus each slot's resistor count times
/// its grade's cheapest part, plus the BOM-line fee for the distinct
/// grades used. Grades are sorted by cheapest part, so without the line
/// term the bound never falls when one slot moves to a later grade; that
/// "relaxed" bound (with the fewest lines any grade choice needs) is walked
/// best-first over each group's lattice of grade vectors, a vector being
/// reached only from the one that has its last non-zero slot one lower.
/// The true bound is never below the relaxed one, so a structure popped
/// from the lattice waits in a second heap until no structure still in the
/// lattice can have a lower true key; what comes out is in exact bound
/// order, as if every structure had been listed and sorted.
pub(super) struct Structures<'p> {
    problem: &'p Problem<'p>,
    groups: &'p [Group],
    slots: Vec<GroupSlots>,
    /// Grade vectors not yet produced, by relaxed key.
    lattice: BinaryHeap<Pending>,
    /// Structures produced from the lattice, by true key.
    ready: BinaryHeap<Ready>,
    /// Number of structures in all, saturating.
    total: u64,
}

/// A grade vector of one group, keyed by its relaxed bound.
struct Pending {
    key: (f64, f64),
    slots: usize,
    grades: Vec<usize>,
    last: usize,
}

/// A structure keyed by its true bound.
struct Ready {
    key: (f64, f64),
    order: (usize, Vec<usize>),
    structure: Structure,
}

/// Ascending order of `(key, tie)` for a max-heap.
fn heap_order(a: (f64, f64), b: (f64, f64)) -> std::cmp::Ordering {
    b.0.total_cmp(&a.0).then(b.1.total_cmp(&a.1))
}

impl PartialEq for Pending {
    fn eq(&self, other: &Self) -> bool {
        self.cmp(other) == std::cmp::Ordering::Equal
    }
}
impl Eq for Pending {}
impl PartialOrd for Pending {
    fn partial_cmp(&self, other: &Self) -> Option<std::cmp::Ordering> {
        Some(self.cmp(other))
    }
}
impl Ord for Pending {
    fn cmp(&self, other: &Self) -> std::cmp::Ordering {
        heap_order(self.key, other.key)
            .then_with(|| other.slots.cmp(&self.slots))
            .then_with(|| other.grades.cmp(&self.grades))
    }
}
impl PartialEq for Ready {
    fn eq(&self, other: &Self) -> bool {
        self.cmp(other) == std::cmp::Ordering::Equal
    }
}
impl Eq for Ready {}
impl PartialOrd for Ready {
    fn partial_cmp(&self, other: &Self) -> Option<std::cmp::Ordering> {
        Some(self.cmp(other))
    }
}
impl Ord for Ready {
    fn cmp(&self, other: &Self) -> std::cmp::Ordering {
        heap_order(self.key, other.key).then_with(|| other.order.cmp(&self.order))
    }
}

/// The structures of `groups`, lazily in walk order (see [`Structures`]).
pub(super) fn structures<'p>(problem: &'p Problem<'p>, groups: &'p [Group]) -> Structures<'p> {
    let grade_count = problem.grades.len();
    let mut slots = Vec::new();
    let mut lattice = BinaryHeap::new();
    let mut total: u64 = 0;
    for (group_index, group) in groups.iter().enumerate() {
        let n = group.shapes.len();
        // Offset dividers, where there are any, share a grade of their own.
        let divider_stages: Vec<usize> = group
            .plans
            .iter()
            .filter(|p| p.network.has_divider())
            .map(|p| p.stage)
            .collect();
        let parts = group.resistors_per_stage.iter().sum::<usize>()
            + group.packages
            + usize::from(source_plan(&group.plans).is_some_and(|p| p.source != Source::Supply));
        if parts > problem.need.search.max_parts || grade_count == 0 {
            continue;
        }
        let mut counts: Vec<f64> = group
            .resistors_per_stage
            .iter()
            .map(|&c| c as f64)
            .collect();
        for &stage in &divider_stages {
            counts[stage] -= 2.0;
        }
        let carried = match group.shapes.first() {
            Some(shape) if problem.sensor_ohms(0) != (0.0, 0.0) => {
                shape.behaviour().carried_roles().len() as f64
            }
            _ => 0.0,
        };
        if let Some(first) = counts.first_mut() {
            *first -= carried;
        }
        if group.has_divider() {
            counts.push(2.0 * divider_stages.len() as f64);
        }
        let floor_lines = if group.resistors_per_stage.iter().any(|&c| c >= 2) {
            2
        } else {
            1
        };
        let entry = GroupSlots {
            group: group_index,
            stages: n,
            has_divider: group.has_divider(),
            counts,
            divider_stages,
            parts,
            floor_lines,
            carried,
        };
        let combos = u32::try_from(entry.counts.len())
            .ok()
            .and_then(|k| (grade_count as u64).checked_pow(k))
            .unwrap_or(u64::MAX);
        total = total.saturating_add(combos);
        let slot = slots.len();
        slots.push(entry);
        let origin = vec![0; slots[slot].counts.len()];
        lattice.push(Pending {
            key: relaxed_key(problem, groups, &slots[slot], &origin),
            slots: slot,
            grades: origin,
            last: 0,
        });
    }
    Structures {
        problem,
        groups,
        slots,
        lattice,
        ready: BinaryHeap::new(),
        total,
    }
}

/// The walk's key of `bound` for a structure of `parts` parts.
fn walk_key(problem: &Problem<'_>, bound: f64, parts: usize) -> (f64, f64) {
    match problem.need.search.objective {
        Objective::Parts => (parts as f64, bound),
        _ => (bound, parts as f64),
    }
}

/// The relaxed key of a grade vector: its bound with the fewest BOM lines
/// any grade choice needs (never above the true bound, never falling as a
/// slot moves to a later grade).
fn relaxed_key(
    problem: &Problem<'_>,
    groups: &[Group],
    slot: &GroupSlots,
    grades: &[usize],
) -> (f64, f64) {
    let group = &groups[slot.group];
    let line = problem.need.search.bom_line_cost;
    let resistor_cost: f64 = grades
        .iter()
        .zip(&slot.counts)
        .map(|(&g, &c)| c * problem.grades[g].min_cost)
        .sum::<f64>()
        + slot.carried * problem.grades[0].min_cost;
    let bound = group.fixed_cost
        + group.pair_floor.cost
        + resistor_cost
        + line * (group.fixed_lines + slot.floor_lines) as f64;
    walk_key(problem, bound, slot.parts + group.pair_floor.parts)
}

impl Structures<'_> {
    /// Number of structures the walk can produce (saturating).
    pub(super) fn total(&self) -> u64 {
        self.total
    }

    /// The structure of one grade vector, with its true bound.
    fn structure(&self, slot: &GroupSlots, walked: &[usize]) -> Structure {
        let problem = self.problem;
        let group = &self.groups[slot.group];
        let n = slot.stages;
        let mut grades = walked.to_vec();
        if !slot.has_divider {
            grades.push(0);
        }
        let mut resistor_cost: f64 = grades[..n]
            .iter()
            .zip(&slot.counts)
            .map(|(&grade, &count)| count * problem.grades[grade].min_cost)
            .sum::<f64>()
            + slot.carried * problem.grades[0].min_cost;
        let mut distinct: BTreeSet<usize> = grades[..n].iter().copied().collect();
        if slot.has_divider {
            resistor_cost +=
                2.0 * slot.divider_stages.len() as f64 * problem.grades[grades[n]].min_cost;
            distinct.insert(grades[n]);
        }
        let min_lines = distinct.len().max(slot.floor_lines);
        Structure {
            group: slot.group,
            grades,
            bound: group.fixed_cost
                + group.pair_floor.cost
                + resistor_cost
                + problem.need.search.bom_line_cost * (group.fixed_lines + min_lines) as f64,
            parts: slot.parts + group.pair_floor.parts,
        }
    }
}

impl Iterator for Structures<'_> {
    type Item = Structure;

    fn next(&mut self) -> Option<Structure> {
        loop {
            let next_relaxed = self.lattice.peek().map(|p| p.key);
            if let Some(top) = self.ready.peek() {
                let release = match next_relaxed {
                    None => true,
                    Some(next) => heap_order(top.key, next) != std::cmp::Ordering::Less,
                };
                if release {
                    return self.ready.pop().map(|r| r.structure);
                }
            }
            let pending = self.lattice.pop()?;
            let grade_count = self.problem.grades.len();
            let slot = &self.slots[pending.slots];
            for i in pending.last..pending.grades.len() {
                if pending.grades[i] + 1 < grade_count {
                    let mut grades = pending.grades.clone();
                    grades[i] += 1;
                    let key = relaxed_key(self.problem, self.groups, slot, &grades);
                    self.lattice.push(Pending {
                        key,
                        slots: pending.slots,
                        grades,
                        last: i,
                    });
                }
            }
            let structure = self.structure(slot, &pending.grades);
            self.ready.push(Ready {
                key: walk_key(self.problem, structure.bound, structure.parts),
                order: (structure.group, structure.grades.clone()),
                structure,
            });
        }
    }
}

#[cfg(test)]
mod tests {
    use super::super::groups::{enumerate_groups, Rejections};
    use super::*;
    use crate::stock::StockFile;

    /// The demo need against the demo stock with two more resistor
    /// grades (so the grade lattice has four values per slot) and a
    /// BOM-line fee, so the line term matters to the order.
    fn problem_parts(objective: &str) -> (Need, Stock) {
        let need = crate::demo::NEED_TOML
            .replacen(
                "objective = \"cost\"",
                &format!("objective = \"{objective}\""),
                1,
            )
            .replacen("max_stages = 3", "max_stages = 2", 1);
        let mut files = crate::demo::stock_files();
        for file in &mut files {
            if file.name.ends_with("resistors.csv") {
                file.bytes
                    .extend_from_slice(b"TR-A,E24,10,1000000,2.0,150,0603,0.002,\n");
                file.bytes
                    .extend_from_slice(b"TR-B,E96,10,1000000,0.5,50,0603,0.02,\n");
            }
        }
        let files: Vec<StockFile> = files;
        crate::api::load(need.as_bytes(), "need.toml", &files).expect("the test need loads")
    }

    /// Every structure the lazy walk yields, against the full list built
    /// here independently: the same set, each once, in non-decreasing
    /// key order, with the bound of the written formula.
    fn check(objective: &str) {
        let (need, user_stock) = problem_parts(objective);
        let stock = augment_stock(&need, &user_stock);
        let signal = [need.sensor.signal_low.0, need.sensor.signal_high.0];
        let problem = Problem {
            need: &need,
            stock: &stock,
            grades: grades(&stock),
            signal,
            ideal: need.ideal_outputs(),
            target_v: need.accuracy.max_error_pct_fs / 100.0 * need.full_scale(),
            pairs: super::super::pair::FilterPairs::new(&need, &user_stock),
        };
        assert_eq!(problem.grades.len(), 4, "the test stock has four grades");
        let groups = enumerate_groups(&problem, &mut Rejections::default());
        assert!(!groups.is_empty());
        let walk = structures(&problem, &groups);
        let total = walk.total();
        let list: Vec<Structure> = walk.collect();
        assert_eq!(list.len() as u64, total);
        let mut seen = BTreeSet::new();
        let line = need.search.bom_line_cost;
        let mut previous: Option<(f64, f64)> = None;
        for s in &list {
            assert!(
                seen.insert((s.group, s.grades.clone())),
                "a structure twice"
            );
            let group = &groups[s.group];
            let n = group.shapes.len();
            // The bound written out: resistors at their grade's cheapest
            // price (divider pairs at the divider grade), fixed parts, and
            // one fee per distinct BOM line.
            let mut cost = group.fixed_cost + group.pair_floor.cost;
            let mut lines: BTreeSet<usize> = BTreeSet::new();
            for stage in 0..n {
                let dividers = group
                    .plans
                    .iter()
                    .filter(|p| p.stage == stage && p.network.has_divider())
                    .count();
                // A first stage's input resistors beside the sensor's
                // resistance at the cheapest grade's price.
                let carried = if stage == 0 && problem.sensor_ohms(0) != (0.0, 0.0) {
                    group.shapes[0].behaviour().carried_roles().len()
                } else {
                    0
                };
                let own = group.resistors_per_stage[stage] - 2 * dividers - carried;
                cost += own as f64 * problem.grades[s.grades[stage]].min_cost;
                cost += carried as f64 * problem.grades[0].min_cost;
                cost += 2.0 * dividers as f64 * problem.grades[s.grades[n]].min_cost;
                lines.insert(s.grades[stage]);
            }
            if group.has_divider() {
                lines.insert(s.grades[n]);
            }
            let floor = if group.resistors_per_stage.iter().any(|&c| c >= 2) {
                2
            } else {
                1
            };
            cost += line * (group.fixed_lines + lines.len().max(floor)) as f64;
            assert!((cost - s.bound).abs() < 1e-9, "bound {} vs {cost}", s.bound);
            let key = walk_key(&problem, s.bound, s.parts);
            if let Some(p) = previous {
                assert_ne!(
                    heap_order(p, key),
                    std::cmp::Ordering::Less,
                    "out of order: {p:?} then {key:?}"
                );
            }
            previous = Some(key);
        }
        let expected: u64 = groups
            .iter()
            .map(|g| {
                let parts = g.resistors_per_stage.iter().sum::<usize>()
                    + g.packages
                    + usize::from(
                        source_plan(&g.plans).is_some_and(|p| p.source != Source::Supply),
                    );
                if parts > need.search.max_parts {
                    0
                } else {
                    4u64.pow((g.shapes.len() + usize::from(g.has_divider())) as u32)
                }
            })
            .sum();
        assert_eq!(total, expected);
    }

    #[test]
    fn the_lazy_walk_yields_every_structure_once_in_cost_order() {
        check("cost");
    }

    #[test]
    fn the_lazy_walk_yields_every_structure_once_in_part_order() {
        check("parts");
    }
}
