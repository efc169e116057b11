//! The walk over structures, with the two ways of searching one structure
//! behind one interface: [`Optimised`] (screen, reference design, MILP
//! picks verified in full) and [`Exhaustive`] (every combination of value
//! sets analysed). Both hand their verified designs to one
//! [`SearchState::offer`], which keeps the best and the Pareto candidates.
//! On a stock with matched networks, each structure with a stage of
//! matched roles is also searched as a network variant (that stage's
//! network value sets in place of its own; docs/search.md).

use super::bounds::{space_bound, SpaceBound, MATCHED_ROLES};
use super::exhaustive;
use super::explain::Diagnosis;
use super::groups::{enumerate_groups, Group, Rejections, SCREEN_SLACK};
use super::milp::{default_solver, select_value_sets, SelectionBounds};
use super::structures::{structures, Structure};
use super::value_sets::{value_sets_for_structure, ValueSet, ValueSetCache};
use super::verify::{cannot_meet, estimate_random, verify_model};
use super::{costing, Candidate, Problem, Progress, SearchMode, SearchStats, SolveControl, Stop};
use crate::analysis::{Model, RandomSplit};
use crate::need::Objective;
use std::collections::{BTreeMap, BTreeSet};

/// Share of a structure's reference random error that every value set of
/// the structure is assumed to keep (see [`Optimised`]).
const RANDOM_SPREAD: f64 = 0.7;
/// Loosening of the MILP's linearised error bound (see [`Optimised`]).
const LINEAR_SLACK: f64 = 1.25;
/// Most picks cut off in one structure before it is given up.
const MAX_CUTS: usize = 60;
/// Most picks analysed in full in one structure before it is given up.
const MAX_ANALYSED: usize = 16;
/// Structures searched past the proof, for the Pareto front.
const PARETO_EXTRA_STRUCTURES: usize = 6;
/// Largest space (in designs, [`exhaustive::space_size`]), or largest
/// part of one below the best design's bound
/// ([`exhaustive::live_space_size`]), the optimised mode finishes with the
/// exhaustive walk in the time it has left.
const COMPLETION_DESIGNS: u64 = 200_000;
/// Work units ([`exhaustive::WalkBudget::max_work`]) the optimised mode
/// spends walking a space it found no design in, whatever its size: a
/// space whose floors leave little to walk is then settled either way.
const NO_DESIGN_WORK: u64 = 20;

/// Objective key of a verified design (lower is better).
pub(super) fn objective_key(objective: Objective, c: &Candidate) -> (f64, f64, f64) {
    let e = c.analysis.basis_pct_fs;
    let cost = (c.costing.total * 1e9).round() / 1e9;
    let parts = c.costing.part_count as f64;
    match objective {
        Objective::Cost => (cost, parts, e),
        Objective::Parts => (parts, cost, e),
        Objective::Error => (e, cost, parts),
    }
}

/// Whether `a` ranks before `b` under the objective (ties broken by the
/// second and third key).
pub(super) fn ranks_before(objective: Objective, a: &Candidate, b: &Candidate) -> bool {
    let (x, y) = (objective_key(objective, a), objective_key(objective, b));
    x.0 < y.0 - 1e-12
        || ((x.0 - y.0).abs() <= 1e-12
            && (x.1 < y.1 - 1e-12 || ((x.1 - y.1).abs() <= 1e-12 && x.2 < y.2)))
}

/// What a search holds as it goes: the best design, every design that met
/// the target, what it learnt of failures, and its counters.
pub(super) struct SearchState {
    objective: Objective,
    /// The best design meeting the target.
    pub(super) best: Option<Candidate>,
    /// Every verified design meeting the target.
    pub(super) found: Vec<Candidate>,
    /// Failures and the most accurate design, for an infeasible need.
    pub(super) diagnosis: Diagnosis,
    /// Designs analysed.
    pub(super) evaluated: u64,
    /// MILP problems solved.
    milp_solves: u64,
}

impl SearchState {
    /// An empty state for an objective.
    pub(super) fn new(objective: Objective) -> SearchState {
        SearchState {
            objective,
            best: None,
            found: Vec::new(),
            diagnosis: Diagnosis::default(),
            evaluated: 0,
            milp_solves: 0,
        }
    }

    /// A verified design: learnt from, and kept when it meets the target
    /// (as the best when it ranks first). Returns whether it met the target.
    pub(super) fn offer(&mut self, candidate: Candidate) -> bool {
        self.diagnosis.note(&candidate);
        if !candidate.analysis.meets_target {
            return false;
        }
        if self
            .best
            .as_ref()
            .is_none_or(|b| ranks_before(self.objective, &candidate, b))
        {
            self.best = Some(candidate.clone());
        }
        self.found.push(candidate);
        true
    }
}

/// How one structure is searched.
trait StructureSearch {
    /// The mode, for the report.
    fn mode(&self) -> SearchMode;
    /// Whether the walk stops once the structures' bounds prove the best.
    fn stops_at_proof(&self) -> bool;
    /// Whether a structure (or its network variant at `network_stage`) is
    /// dropped before its value sets are searched.
    fn screens_out(
        &self,
        problem: &Problem<'_>,
        structure: &Structure,
        network_stage: Option<usize>,
    ) -> bool;
    /// Search one structure with its value sets, offering every verified
    /// design to `state`.
    fn search(
        &mut self,
        problem: &Problem<'_>,
        group: &Group,
        structure: &Structure,
        value_sets: &[Vec<ValueSet>],
        state: &mut SearchState,
    );
}

/// Screened by a budget split shared across a group, a reference design
/// per structure, then MILP picks verified in full.
///
/// The random part of the budget is the reference's; other value sets of
/// the structure move it (other ratios, other impedances), so the bound on
/// the nominal error allows it to be smaller by [`RANDOM_SPREAD`]. The MILP
/// bound is loosened by [`LINEAR_SLACK`] for the linearisation's own error;
/// the exact closed-form check of each pick holds the real bound, and the
/// full analysis of each pick is what decides.
#[derive(Default)]
struct Optimised {
    /// Budget split of the first reference design of each group, and of
    /// each of its network variants (by the stage the network fills): a
    /// network element's terms stay as they are when the split is rescaled
    /// to other grades, so a variant is screened by a variant's split.
    splits: BTreeMap<(usize, Option<usize>), RandomSplit>,
}

/// What the reference design of a structure leaves for its MILP.
struct ReferenceBounds {
    /// Allowed nominal error at each span end, volts.
    allowed: [f64; 2],
    /// Error no value set changes: what the closed forms miss plus the
    /// finite-gain error, volts.
    constant: [f64; 2],
}

/// The stage whose value sets are network sets, if any.
fn network_stage(value_sets: &[Vec<ValueSet>]) -> Option<usize> {
    value_sets
        .iter()
        .position(|sets| sets.iter().any(|set| set.network.is_some()))
}

/// The exact nominal error of one value set per stage from the stage
/// closed forms, as calibration leaves it, volts at both span ends.
fn closed_form_error(problem: &Problem<'_>, picks: &[&ValueSet]) -> [f64; 2] {
    let (mut k_real, mut b_real) = (1.0, 0.0);
    for set in picks {
        k_real *= set.gain;
        b_real = set.gain * b_real + set.offset;
    }
    problem.need.accuracy.calibration.apply([
        k_real * problem.signal[0] + b_real - problem.ideal[0],
        k_real * problem.signal[1] + b_real - problem.ideal[1],
    ])
}

impl Optimised {
    /// Analyse the reference design (the best-rounding value set of every
    /// stage), offer it when it may win, and return the bounds its budget
    /// leaves for the other value sets; `None` ends the structure.
    fn reference(
        &mut self,
        problem: &Problem<'_>,
        group: &Group,
        structure: &Structure,
        value_sets: &[Vec<ValueSet>],
        state: &mut SearchState,
    ) -> Option<ReferenceBounds> {
        let picks: Vec<&ValueSet> = value_sets.iter().map(|sets| &sets[0]).collect();
        let reference_design = problem.design(group, &structure.grades, &picks);
        let gets_pair = |b: &crate::topology::Built, dc: &crate::mna::DcSolution| {
            problem.pairs.gets_pair(b, dc)
        };
        let model =
            Model::candidate(problem.need, problem.stock, &reference_design, &gets_pair).ok()?;
        state.evaluated += 1;
        self.splits
            .entry((structure.group, network_stage(value_sets)))
            .or_insert_with(|| model.random_split(group.shapes.len()));
        // Checks that no choice of values can change end the structure
        // here; a swing or common-mode miss may be the reference values'.
        if !model.feasible() {
            let findings = model.findings();
            state.diagnosis.note_findings(&findings);
            let fixed = findings.iter().any(|f| !f.ok && f.kind.fixed_by_parts());
            if fixed {
                return None;
            }
        }
        let accuracy = &problem.need.accuracy;
        let random = model.random_at_ends(accuracy.basis, accuracy.yield_pct);
        let systematic = model.systematic_at_ends();
        let quick = (random[0] + systematic[0]).max(random[1] + systematic[1]);
        let open_loop = model.open_loop_gain_error();
        let rounding = model.rounding_error();
        let reference_cost =
            costing(model.built(), problem.need.search.bom_line_cost).total + group.pair_floor.cost;
        let could_win = state
            .best
            .as_ref()
            .is_none_or(|b| reference_cost < b.costing.total + 1e-12);
        let worth_explaining = state.diagnosis.best_error_v.is_none_or(|e| quick < e);
        if (quick <= problem.target_v * 1.0 && could_win)
            || (state.best.is_none() && worth_explaining)
        {
            // The reference's model is reported as it is, not built again.
            if let Some(reference) = verify_model(problem, reference_design, model) {
                state.offer(reference);
            }
        }
        let allowed = [
            problem.target_v * SCREEN_SLACK - RANDOM_SPREAD * random[0],
            problem.target_v * SCREEN_SLACK - RANDOM_SPREAD * random[1],
        ];
        if allowed[0] < 0.0 || allowed[1] < 0.0 {
            return None;
        }
        // What the stage closed forms miss (loading by the network, the
        // sensor's resistance where it is not in a closed form) is taken from
        // the reference: its netlist rounding less its closed-form rounding;
        // with the finite-gain error it is the MILP's constant term.
        let reference_closed = closed_form_error(problem, &picks);
        let missed = [
            rounding[0] - reference_closed[0],
            rounding[1] - reference_closed[1],
        ];
        Some(ReferenceBounds {
            allowed,
            constant: [missed[0] + open_loop[0], missed[1] + open_loop[1]],
        })
    }

    /// One MILP pick after another until one is verified, the cuts run out
    /// or the MILP finds none.
    fn picks(
        &mut self,
        problem: &Problem<'_>,
        group: &Group,
        structure: &Structure,
        value_sets: &[Vec<ValueSet>],
        reference: &ReferenceBounds,
        state: &mut SearchState,
    ) {
        let (allowed, constant) = (reference.allowed, reference.constant);
        let mut cuts: Vec<Vec<usize>> = Vec::new();
        let mut analysed = 0;
        while cuts.len() < MAX_CUTS && analysed < MAX_ANALYSED {
            state.milp_solves += 1;
            let bounds = SelectionBounds {
                allowed: [allowed[0] * LINEAR_SLACK, allowed[1] * LINEAR_SLACK],
                constant,
                cuts: &cuts,
            };
            let Some(selection) =
                select_value_sets(problem, structure, value_sets, &bounds, default_solver())
            else {
                break;
            };
            let picks: Vec<&ValueSet> = selection
                .iter()
                .enumerate()
                .map(|(stage, &i)| &value_sets[stage][i])
                .collect();
            // The exact nominal error of the pick from the stage closed
            // forms: the linearisation is rough for coarse series, so a
            // pick it admits wrongly is cut here, before any analysis.
            let nominal = closed_form_error(problem, &picks);
            if (0..2).any(|e| (nominal[e] + constant[e]).abs() > allowed[e]) {
                cuts.push(selection);
                continue;
            }
            analysed += 1;
            // The first-order total of the pick's own model first: a pick
            // that misses by it is cut without the corner solves of a full
            // report (the worst case is never below the first-order sum).
            let design = problem.design(group, &structure.grades, &picks);
            let gets_pair = |b: &crate::topology::Built, dc: &crate::mna::DcSolution| {
                problem.pairs.gets_pair(b, dc)
            };
            let Ok(pick_model) = Model::candidate(problem.need, problem.stock, &design, &gets_pair)
            else {
                cuts.push(selection);
                continue;
            };
            // Judged without the noise and the droop, which the candidate
            // takes at bounds the pair only improves on (a design over the
            // target by them alone is judged as reported in `verify_model`).
            if cannot_meet(problem, &pick_model, None) {
                cuts.push(selection);
                continue;
            }
            let Some(c) = verify_model(problem, design, pick_model) else {
                cuts.push(selection);
                continue;
            };
            state.evaluated += 1;
            if state.offer(c) {
                break;
            }
            cuts.push(selection);
        }
    }
}

impl StructureSearch for Optimised {
    fn mode(&self) -> SearchMode {
        SearchMode::Optimised
    }

    fn stops_at_proof(&self) -> bool {
        true
    }

    /// Screen by the group's shared budget split where one exists: the
    /// same netlist with other grades, rescaled.
    fn screens_out(
        &self,
        problem: &Problem<'_>,
        structure: &Structure,
        network_stage: Option<usize>,
    ) -> bool {
        let key = (structure.group, network_stage);
        self.splits.get(&key).is_some_and(|split| {
            let estimate = estimate_random(problem, split, &structure.grades);
            estimate[0] > problem.target_v * SCREEN_SLACK
                || estimate[1] > problem.target_v * SCREEN_SLACK
        })
    }

    fn search(
        &mut self,
        problem: &Problem<'_>,
        group: &Group,
        structure: &Structure,
        value_sets: &[Vec<ValueSet>],
        state: &mut SearchState,
    ) {
        if let Some(bounds) = self.reference(problem, group, structure, value_sets, state) {
            self.picks(problem, group, structure, value_sets, &bounds, state);
        }
    }
}

/// What a run hands back.
pub(super) struct RunResult {
    /// What stopped the walk before it finished or proved its optimum.
    pub(super) stopped: Option<Stop>,
    /// The best design meeting the target.
    pub(super) best: Option<Candidate>,
    /// Every verified design meeting the target.
    pub(super) found: Vec<Candidate>,
    /// What it learnt of failures.
    pub(super) diagnosis: Diagnosis,
    /// No design in the whole space can meet the need (a proof, not a
    /// failure to find one).
    pub(super) proven_infeasible: bool,
    /// The exhaustive walk visited (or ruled out by proof) every
    /// structure of the space.
    pub(super) walked: bool,
    /// Counters.
    pub(super) stats: SearchStats,
}

/// Where the walk stands against the structures' bounds. The optimised
/// walk stops here by rule, not by proof: it searches each structure
/// heuristically, so its claim of optimality rests on the space bound
/// ([`super::bounds`]) alone.
#[derive(Default)]
struct StopRule {
    /// The next structure bound could not beat the best design.
    reached: bool,
    /// Structures searched since.
    extra: usize,
}

/// The objective's lower bound over the whole space (`None` for the error
/// objective, which has none, and for a space proven empty).
fn space_floor(objective: Objective, space: &SpaceBound) -> Option<f64> {
    match objective {
        Objective::Cost => space.cost,
        Objective::Parts => space.parts.map(|p| p as f64),
        Objective::Error => None,
    }
}

/// Whether the best design is proven optimal by the space bound, and
/// otherwise the proven gap to it (the objective's own unit).
fn proof_from_space(
    objective: Objective,
    space: &SpaceBound,
    best: Option<&Candidate>,
) -> (bool, Option<f64>) {
    match (space_floor(objective, space), best) {
        (Some(floor), Some(best)) => {
            let key = objective_key(objective, best).0;
            if key <= floor + 1e-9 {
                (true, None)
            } else {
                (false, Some(key - floor))
            }
        }
        _ => (false, None),
    }
}

/// Whether a network variant of a structure cannot be cheaper than the
/// best design (cost objective only): the structure's bound with the
/// matched roles' resistors at the grade's cheapest part taken out and
/// the cheapest package on the shelf put in. A rule of thumb that keeps
/// the variants few (the bound's line count is the structure's).
fn variant_cannot_win(
    problem: &Problem<'_>,
    structure: &Structure,
    stage: usize,
    state: &SearchState,
) -> bool {
    if problem.need.search.objective != Objective::Cost {
        return false;
    }
    let Some(best) = state.best.as_ref() else {
        return false;
    };
    let package = problem
        .stock
        .networks
        .iter()
        .filter(|part| part.stock_qty != Some(0))
        .map(|part| part.unit_cost)
        .fold(f64::INFINITY, f64::min);
    let grade = &problem.grades[structure.grades[stage]];
    let bound = structure.bound - MATCHED_ROLES as f64 * grade.min_cost + package;
    bound >= best.costing.total - 1e-12
}

/// What finishing a run with the exhaustive walk settled.
struct WalkVerdict {
    state: SearchState,
    /// A cancel stopped the walk.
    stopped: Option<Stop>,
    /// The walk ended: its verdict is proven.
    walked: bool,
    proven_optimal: bool,
    proven_infeasible: bool,
    gap: Option<f64>,
}

/// Walk the space from the run's state within `budget`: a walk that ends
/// proves its verdict (optimal, or infeasible when it found nothing); one
/// cut short leaves the proof to the space bound.
fn finish_by_walk(
    problem: &Problem<'_>,
    control: &mut SolveControl<'_>,
    state: SearchState,
    budget: &exhaustive::WalkBudget,
    space: &SpaceBound,
) -> WalkVerdict {
    let objective = problem.need.search.objective;
    let end = exhaustive::walk(problem, control, state, budget);
    let stopped = end.cancelled.then_some(Stop::Cancelled);
    let state = end.state;
    if end.finished {
        WalkVerdict {
            walked: true,
            proven_optimal: state.best.is_some(),
            proven_infeasible: state.best.is_none(),
            gap: None,
            stopped,
            state,
        }
    } else {
        let (proven_optimal, gap) = proof_from_space(objective, space, state.best.as_ref());
        WalkVerdict {
            walked: false,
            proven_optimal,
            proven_infeasible: space.proven_empty(),
            gap,
            stopped,
            state,
        }
    }
}

/// Walk the structures in bound order and search each.
pub(super) fn run(
    problem: &Problem<'_>,
    mode: SearchMode,
    control: &mut SolveControl<'_>,
) -> RunResult {
    // The exhaustive walk covers the whole space, matched networks
    // included (search/exhaustive.rs): its verdicts count on any stock.
    if mode == SearchMode::Exhaustive {
        return super::exhaustive::run(problem, control);
    }
    let start = (control.now_ms)();
    let objective = problem.need.search.objective;
    let space = space_bound(problem);
    let mut state = SearchState::new(objective);
    let mut rejections = Rejections::default();
    let groups = enumerate_groups(problem, &mut rejections);
    // An accuracy floor is the nearer miss when some group had the swing.
    state.diagnosis.closest_rejection = rejections.floor_miss.or(rejections.closest);
    let list = structures(problem, &groups);
    let total = list.total();
    let mut strategy: Box<dyn StructureSearch> = Box::new(Optimised::default());
    let mut cache = ValueSetCache::new();
    // Network variants already taken up, by group, stage and the grades
    // that change their sets.
    let mut variants_done: BTreeSet<(usize, usize, Vec<usize>)> = BTreeSet::new();
    let mut rule = StopRule::default();
    let mut stopped = None;
    let limit = problem.need.search.time_limit_ms as f64;
    for (done, structure) in list.enumerate() {
        let structure = &structure;
        let bound_key = match objective {
            Objective::Cost => Some(structure.bound),
            Objective::Parts => Some(structure.parts as f64),
            Objective::Error => None,
        };
        if strategy.stops_at_proof() {
            if let (Some(bound), Some(best)) = (bound_key, state.best.as_ref()) {
                if bound >= objective_key(objective, best).0 - 1e-12 {
                    rule.reached = true;
                }
            }
            if rule.reached {
                // A few more structures for the Pareto front, then stop.
                rule.extra += 1;
                if rule.extra > PARETO_EXTRA_STRUCTURES {
                    break;
                }
            }
        }
        let elapsed = (control.now_ms)() - start;
        let keep_going = (control.progress)(Progress {
            done: done as u64,
            total,
            best_cost: state.best.as_ref().map(|b| b.costing.total),
        });
        if !keep_going || elapsed > limit {
            stopped = Some(if keep_going {
                Stop::TimeLimit {
                    limit_ms: problem.need.search.time_limit_ms,
                }
            } else {
                Stop::Cancelled
            });
            break;
        }
        let group = &groups[structure.group];
        if !strategy.screens_out(problem, structure, None) {
            if let Some(value_sets) =
                value_sets_for_structure(problem, group, structure, &mut cache, None)
            {
                strategy.search(problem, group, structure, &value_sets, &mut state);
            }
        }
        // The structure's network variants: a stage with matched roles
        // takes them from one package of a stocked network. Not screened
        // by the group's split (a discrete grade's random error, which a
        // matched package does not have).
        if problem.stock.networks.is_empty() {
            continue;
        }
        for stage in 0..group.shapes.len() {
            let Some(matched) = group.shapes[stage].behaviour().matched_roles() else {
                continue;
            };
            // Once per variant: the grade of a stage the package fills
            // whole, and the divider grade of a group without a divider,
            // change none of its sets (nor its bound below, nor its
            // screen), so they are left out of the key.
            let n = group.shapes.len();
            let shape = group.shapes[stage];
            let whole = shape
                .required_roles()
                .iter()
                .chain(shape.behaviour().optional_roles())
                .all(|role| matched.roles().contains(role));
            let divided = (0..n).any(|i| group.plan(i).is_some());
            let key: Vec<usize> = structure
                .grades
                .iter()
                .enumerate()
                .map(|(i, &g)| {
                    if (i == stage && whole) || (i == n && !divided) {
                        usize::MAX
                    } else {
                        g
                    }
                })
                .collect();
            if !variants_done.insert((structure.group, stage, key))
                || variant_cannot_win(problem, structure, stage, &state)
                || strategy.screens_out(problem, structure, Some(stage))
            {
                continue;
            }
            if let Some(value_sets) =
                value_sets_for_structure(problem, group, structure, &mut cache, Some(stage))
            {
                strategy.search(problem, group, structure, &value_sets, &mut state);
            }
        }
    }
    // Cheaper parts of the same values on the best design, in the time
    // left (search/regrade.rs); a cancelled or cut run keeps what it has.
    if stopped.is_none() {
        let mut out_of_time = || (control.now_ms)() - start > limit;
        super::regrade::cheaper_same_values(problem, &mut state, &mut out_of_time);
    }
    let (mut proven_optimal, mut gap) = proof_from_space(objective, &space, state.best.as_ref());
    let mut proven_infeasible = space.proven_empty();
    let mut walked = false;
    // A small space is finished by the exhaustive walk in the time left,
    // from the best design found as its incumbent: a walk that ends
    // proves the verdict. So is a large one whose structures below the
    // best design's bound hold few designs (the walk never opens the
    // rest: proof 1 of the walk).
    let small = || exhaustive::space_size(problem, COMPLETION_DESIGNS).is_some();
    let live_small = || match (objective, state.best.as_ref()) {
        (Objective::Cost | Objective::Parts, Some(best)) => exhaustive::live_space_size(
            problem,
            objective_key(objective, best).0,
            COMPLETION_DESIGNS,
        )
        .is_some(),
        _ => false,
    };
    // No design found and nothing proven: the walk may still settle the
    // space when its floors and checks leave little of it (a need whose
    // `max_parts` makes the space too large to count as small, say). It
    // gets half the time left and a fixed amount of work, so the
    // explanation that follows keeps its share and a still clock ends it;
    // a walk cut short changes nothing.
    let budget = if stopped.is_some() || proven_optimal || proven_infeasible {
        None
    } else if small() || live_small() {
        Some(exhaustive::WalkBudget {
            deadline_ms: start + limit,
            report_as: Some(total),
            max_work: u64::MAX,
        })
    } else if state.best.is_none() {
        let now = (control.now_ms)();
        Some(exhaustive::WalkBudget {
            deadline_ms: now + 0.5 * (start + limit - now).max(0.0),
            report_as: Some(total),
            max_work: NO_DESIGN_WORK,
        })
    } else {
        None
    };
    if let Some(budget) = budget {
        let end = finish_by_walk(problem, control, state, &budget, &space);
        state = end.state;
        stopped = end.stopped;
        (walked, proven_optimal, proven_infeasible, gap) = (
            end.walked,
            end.proven_optimal,
            end.proven_infeasible,
            end.gap,
        );
    }
    let elapsed_ms = (control.now_ms)() - start;
    RunResult {
        stopped,
        best: state.best,
        found: state.found,
        diagnosis: state.diagnosis,
        proven_infeasible,
        walked,
        stats: SearchStats {
            mode: strategy.mode().name().into(),
            evaluated: state.evaluated,
            structures: total,
            milp_solves: state.milp_solves,
            elapsed_ms,
            proven_optimal,
            gap,
        },
    }
}
