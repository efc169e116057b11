//! The optimiser: from a need and a stock, the best design (the cheapest
//! by default) that meets the accuracy target by the engine's own numbers.
//! docs/search.md describes the search space, both modes and every proof.
//!
//! The optimised mode walks part of the space by rules of thumb:
//! 1. *groups* (`groups`): stage shapes in sequence, the op-amp (and
//!    in-amp) part, the stage that carries the offset and its source, and
//!    a few gain splits; each group is checked for swing and common mode
//!    with the ideal closed forms before anything costly;
//! 2. *structures* (`structures`): a group with a resistor grade per
//!    stage, with a cost bound; structures are generated lazily, cheapest
//!    bound first (a best-first walk over each group's grade lattice, so
//!    memory stays flat as the stock grows), and the walk stops a few
//!    structures after the next bound cannot beat the best design (a
//!    stopping rule, not a proof);
//! 3. for each structure, a reference design is analysed once; its budget,
//!    split by stage and rescaled per grade, screens the structure; per
//!    stage the best few value sets for the target ratios come from a ratio
//!    search over the sorted value list (`value_sets`, `ratio`);
//! 4. a MILP (`milp`) picks one value set per stage: linearised rounding
//!    errors that may cancel across stages, a fee per distinct BOM line,
//!    the error bound at both span ends; the pick is re-verified by the
//!    full analysis and cut off if it fails;
//! 5. on a stock with matched networks, a stage with matched roles (a
//!    difference part) also gets value sets from one network package, and
//!    each structure holding it is searched again with those (`strategy`).
//!
//! Its claims rest only on the lower bounds over the whole space
//! (`bounds`). [`SearchMode::Exhaustive`] walks the whole space
//! (`exhaustive`), pruning only by written proofs, so a walk that ends
//! proves its verdict. The Pareto front of verified designs is kept
//! (`pareto`), and a need without a design is explained (`explain`).

mod bounds;
mod exhaustive;
pub(crate) mod explain;
mod floors;
mod groups;
mod milp;
mod pair;
mod pareto;
pub(crate) mod ratio;
mod regrade;
mod strategy;
mod structures;
mod value_sets;
mod verify;

pub use bounds::{first_stage_floor_pct, last_stage_swing_floor_pct, space_cost_floor};
pub use structures::augment_stock;

use crate::analysis::{part_count, Analysis};
use crate::design::{Design, Resistor, Source};
use crate::error::Result;
use crate::need::{Need, SensorOutput};
use crate::stock::{CapacitorPart, Stock};
use crate::topology::Built;
use pair::FilterPairs;
use serde::Serialize;
use std::collections::BTreeSet;
use structures::Grade;

/// Progress of a search, reported through [`SolveControl::progress`].
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Progress {
    /// Candidate structures done.
    pub done: u64,
    /// Candidate structures in all.
    pub total: u64,
    /// Cost of the best design found so far, if any.
    pub best_cost: Option<f64>,
}

/// What a front end hands the search besides the need: a progress sink
/// (return `false` to stop early and keep the best so far) and a clock in
/// milliseconds (the core reads no clock itself).
pub struct SolveControl<'a> {
    /// Called now and then; returning `false` cancels the search.
    pub progress: &'a mut dyn FnMut(Progress) -> bool,
    /// Monotonic milliseconds from any origin.
    pub now_ms: &'a dyn Fn() -> f64,
}

/// How the search walks the space.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SearchMode {
    /// Part of the space, by rules of thumb: cheapest bound first,
    /// screened, one MILP per structure, within `time_limit_ms`. Proven
    /// only where the bound over the whole space proves it.
    Optimised,
    /// Every design of the space, pruned only by written proofs, with no
    /// time limit; a walk that ends proves its verdict.
    Exhaustive,
}

impl SearchMode {
    /// The mode a front end's `--exhaustive` switch asks for.
    pub fn from_exhaustive(exhaustive: bool) -> SearchMode {
        if exhaustive {
            SearchMode::Exhaustive
        } else {
            SearchMode::Optimised
        }
    }

    /// The name in the report's `search.mode` field.
    pub fn name(self) -> &'static str {
        match self {
            SearchMode::Optimised => "optimised",
            SearchMode::Exhaustive => "exhaustive",
        }
    }
}

/// Money and counts of a built design.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Costing {
    /// Sum of unit costs of all parts.
    pub parts_cost: f64,
    /// Distinct part numbers.
    pub bom_lines: usize,
    /// Parts on the board.
    pub part_count: usize,
    /// Parts cost plus one line fee per distinct part number.
    pub total: f64,
}

/// Cost a built design.
pub fn costing(built: &Built, bom_line_cost: f64) -> Costing {
    costing_with(built, None, bom_line_cost)
}

/// Cost a built design as it will be reported: with `pair` (the filter
/// pair the report will attach, for a design analysed without one) added
/// as the report adds it.
pub(crate) fn costing_with(
    built: &Built,
    pair: Option<&(Resistor, CapacitorPart)>,
    bom_line_cost: f64,
) -> Costing {
    let mut ids = BTreeSet::new();
    let mut parts_cost = 0.0;
    for r in &built.resistors {
        parts_cost += r.part.unit_cost;
        ids.insert(format!("r:{}", r.part.part_id));
    }
    // A matched network is priced once per package.
    for package in crate::design::network_packages(built.resistors.iter().map(|r| &r.part)) {
        parts_cost += package.unit_cost;
    }
    for p in &built.packages {
        parts_cost += p.unit_cost;
        ids.insert(format!("u:{}", p.part_id));
    }
    for source in &built.sources {
        if let (Some(_), Source::Reference(id)) = (source.reference, &source.source) {
            parts_cost += source.unit_cost;
            ids.insert(format!("v:{id}"));
        }
    }
    // Capacitors across a stage's feedback resistor.
    for c in &built.feedback_capacitors {
        parts_cost += c.part.unit_cost;
        ids.insert(format!("c:{}", c.part.part_id));
    }
    // The filter at the ADC input, where a reported design has one.
    if let Some(f) = &built.filter {
        parts_cost += f.series.unit_cost + f.shunt.unit_cost;
        ids.insert(format!("r:{}", f.series.part_id));
        ids.insert(format!("c:{}", f.shunt.part_id));
    }
    let mut added_parts = 0;
    if let (None, Some((series, shunt))) = (&built.filter, pair) {
        parts_cost += series.unit_cost + shunt.unit_cost;
        ids.insert(format!("r:{}", series.part_id));
        ids.insert(format!("c:{}", shunt.part_id));
        added_parts = 2;
    }
    let bom_lines = ids.len();
    Costing {
        parts_cost,
        bom_lines,
        part_count: part_count(built) + added_parts,
        total: parts_cost + bom_line_cost * bom_lines as f64,
    }
}

/// One evaluated design.
#[derive(Debug, Clone)]
pub struct Candidate {
    /// The design.
    pub design: Design,
    /// Its netlist and part map.
    pub built: Built,
    /// Its costing.
    pub costing: Costing,
    /// Its full analysis. A design as the search ranked it carries no
    /// budget-line explanations (`explain` empty); the report's design is
    /// analysed again with them (`spanfit::api`).
    pub analysis: Analysis,
}

/// Counters of a search.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SearchStats {
    /// `"optimised"` or `"exhaustive"` ([`SearchMode::name`]).
    pub mode: String,
    /// Designs fully analysed.
    pub evaluated: u64,
    /// Structures considered.
    pub structures: u64,
    /// MILP problems solved.
    pub milp_solves: u64,
    /// Wall time from the caller's clock.
    pub elapsed_ms: f64,
    /// No design in the whole space ranks before the best found, by a
    /// proof (docs/search.md): a complete exhaustive walk, or a best that
    /// reaches the lower bound over the whole space. Never for the error
    /// objective in the optimised mode, which has no such bound.
    pub proven_optimal: bool,
    /// When not proven: the best's objective (cost, or parts) less a valid
    /// lower bound over every design not ruled out, in the objective's
    /// unit; `None` when there is no design or no valid bound.
    pub gap: Option<f64>,
}

/// One need key set to a new value, in the need file's keys and units
/// (`accuracy.basis` to `"rss"`), so a front end can apply a suggestion.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NeedChange {
    /// The need key, `section.key` as in the need file.
    pub key: String,
    /// Its new value as the need file writes it; null takes the key out.
    pub value: serde_json::Value,
}

/// One column of a stock table set to one value in every row, so a front
/// end can apply a suggestion to its shelf.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StockChange {
    /// The column (`tolerance_pct`).
    pub column: String,
    /// The stock file (`resistors.csv`).
    pub file: String,
    /// The value every row gets.
    pub value: f64,
}

/// A change that would make an infeasible need feasible, verified by
/// solving again with it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Suggestion {
    /// What to change, in words.
    pub change: String,
    /// Cost of the cheapest design with the change.
    pub cost: f64,
    /// Its error on the need's basis, % FS.
    pub error_pct_fs: f64,
    /// The change as need keys and values (every key the changed need
    /// holds differently); empty for a change of the stock.
    pub apply: Vec<NeedChange>,
    /// The change as stock columns set in every row; empty for a change of
    /// the need.
    pub apply_stock: Vec<StockChange>,
}

/// Why no design meets the need, or why none was found.
#[derive(Debug, Clone)]
pub struct Infeasibility {
    /// Whether it is proven that no design in the space meets the need;
    /// `false` when the search found none among those it tried.
    pub proven: bool,
    /// The limit that binds, in words, with by how much.
    pub binding: String,
    /// Best error reached with this stock on the need's basis, % FS.
    pub best_error_pct_fs: Option<f64>,
    /// The target.
    pub target_pct_fs: f64,
    /// Largest contributors of the best design: (source, % FS).
    pub largest: Vec<(String, f64)>,
    /// Verified changes that would make it feasible.
    pub suggestions: Vec<Suggestion>,
    /// The most accurate design the search analysed that passes every
    /// check but misses the target (the one `best_error_pct_fs` and
    /// `largest` describe), when there is one.
    pub best_attempt: Option<Box<Candidate>>,
}

/// What stopped a search before it finished its walk or proved its
/// optimum.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Stop {
    /// `search.time_limit_ms` ran out.
    TimeLimit {
        /// The limit, ms.
        limit_ms: u64,
    },
    /// The caller's progress callback asked to stop.
    Cancelled,
}

impl Stop {
    /// Why a search that found no design did not finish, and what to do.
    pub fn reason(self) -> String {
        match self {
            Stop::TimeLimit { limit_ms } => format!(
                "the time limit of {limit_ms} ms ran out before any design was found or shown \
                 impossible; raise search.time_limit_ms (at most 3600000)"
            ),
            Stop::Cancelled => "the search was stopped before any design was found or shown \
                                impossible"
                .to_string(),
        }
    }
}

/// The outcome of a search.
#[derive(Debug, Clone)]
pub struct SolveOutcome {
    /// The chosen design, when one meets the need.
    pub best: Option<Candidate>,
    /// The cost/error Pareto front (each a full design), best first.
    pub alternatives: Vec<Candidate>,
    /// Counters.
    pub stats: SearchStats,
    /// Why not, when the search finished without a design: proven
    /// (`Infeasibility::proven`) or only not found.
    pub infeasible: Option<Infeasibility>,
    /// What stopped the search early, if anything. With no design found,
    /// the outcome is unfinished: neither a design nor a proof that none
    /// exists.
    pub stopped: Option<Stop>,
}

impl SolveOutcome {
    /// The search ended without a design and without a proof that none
    /// meets the need: stopped early, or finished its walk without finding
    /// one where its walk proves nothing.
    pub fn unfinished(&self) -> bool {
        self.best.is_none()
            && (self.stopped.is_some() || self.infeasible.as_ref().is_some_and(|i| !i.proven))
    }

    /// Why the outcome is unfinished, in words (`None` when it is not).
    pub fn unfinished_reason(&self) -> Option<String> {
        if !self.unfinished() {
            return None;
        }
        if let Some(stop) = self.stopped {
            return Some(stop.reason());
        }
        let binding = self
            .infeasible
            .as_ref()
            .map(|i| format!("; {}", i.binding))
            .unwrap_or_default();
        Some(format!(
            "no design was found among those the optimised search tried, which does not \
             show that none exists; solve with --exhaustive to search every design{binding}"
        ))
    }
}

/// Whether an infeasible need is explained with verified suggestions (each
/// a search of its own) or with the binding limit alone (the searches the
/// suggestions run use this, so they do not recurse).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Suggestions {
    /// Search for the most accurate design and try each change.
    Try,
    /// The binding limit only.
    Skip,
}

/// What every part of the search reads: the need, the stock as augmented,
/// its resistor grades, and the need's numbers the search uses most.
struct Problem<'a> {
    need: &'a Need,
    stock: &'a Stock,
    grades: Vec<Grade>,
    /// Sensor signal at the low and high span ends, volts.
    signal: [f64; 2],
    /// Ideal output at the span ends, volts.
    ideal: [f64; 2],
    /// Allowed error on the need's basis, volts at the output.
    target_v: f64,
    /// The filter pair each design will be reported with, and its floors.
    pairs: FilterPairs<'a>,
}

impl<'a> Problem<'a> {
    /// The problem of a need, with the user's stock (the filter pair is
    /// chosen from it, as the report chooses it) and the search's
    /// augmented stock.
    fn new(need: &'a Need, user_stock: &'a Stock, stock: &'a Stock) -> Problem<'a> {
        let signal = [need.sensor.signal_low.0, need.sensor.signal_high.0];
        Problem {
            need,
            stock,
            grades: structures::grades(stock),
            signal,
            ideal: need.ideal_outputs(),
            target_v: need.accuracy.max_error_pct_fs / 100.0 * need.full_scale(),
            pairs: FilterPairs::new(need, user_stock),
        }
    }

    /// The sensor's own resistance on the (+, -) input legs of a stage
    /// (zero past the first stage).
    fn sensor_ohms(&self, stage: usize) -> (f64, f64) {
        if stage > 0 {
            return (0.0, 0.0);
        }
        self.need.sensor.leg_ohms()
    }

    /// The (+, -) input voltages of a stage at both span ends; `previous`
    /// is the ideal output of the stage before.
    fn stage_inputs(&self, stage: usize, previous: [f64; 2]) -> [(f64, f64); 2] {
        if stage == 0 {
            let cm = match self.need.sensor.output {
                SensorOutput::Differential => self.need.sensor.common_mode.0,
                SensorOutput::SingleEnded => 0.0,
            };
            [(cm + self.signal[0], cm), (cm + self.signal[1], cm)]
        } else {
            [(previous[0], 0.0), (previous[1], 0.0)]
        }
    }
}

/// The most accurate design of the whole space (`Some(None)`: none is
/// feasible at all), by the exhaustive walk of the error objective with
/// a loose target; `None` when the deadline or a cancel cut it short.
/// Progress is reported as the main search's end (`total`).
fn least_error(
    need: &Need,
    stock: &Stock,
    control: &mut SolveControl<'_>,
    deadline_ms: f64,
    total: u64,
) -> Option<Option<Candidate>> {
    let mut loose = need.clone();
    loose.search.objective = crate::need::Objective::Error;
    loose.accuracy.filter_target_pct_fs = Some(need.accuracy.filter_target_pct_fs());
    loose.accuracy.max_error_pct_fs = 100.0;
    let augmented = augment_stock(&loose, stock);
    let problem = Problem::new(&loose, stock, &augmented);
    let end = exhaustive::walk(
        &problem,
        control,
        strategy::SearchState::new(crate::need::Objective::Error),
        &exhaustive::WalkBudget {
            deadline_ms,
            report_as: Some(total),
            max_work: u64::MAX,
        },
    );
    end.finished.then_some(end.state.best)
}

/// The search alone, for callers that need only its verdict and design
/// (the cross-checks of the two modes): as [`solve`], except that a need
/// without a design is explained by its binding limit only, without the
/// verified suggestions and the walk for the least error of the space,
/// each a search of its own.
pub fn solve_unexplained(
    need: &Need,
    stock: &Stock,
    mode: SearchMode,
    control: &mut SolveControl<'_>,
) -> Result<SolveOutcome> {
    solve_with(need, stock, mode, control, Suggestions::Skip)
}

/// Designs in the whole space of a need and a stock (docs/search.md),
/// counted without building any, or `None` once the count passes `limit`.
pub fn space_designs(need: &Need, stock: &Stock, limit: u64) -> Option<u64> {
    let augmented = augment_stock(need, stock);
    exhaustive::space_size(&Problem::new(need, stock, &augmented), limit)
}

/// Search for the cheapest design meeting the need (or, with
/// `objective = "error"` / `"parts"`, the most accurate / the fewest parts).
pub fn solve(
    need: &Need,
    stock: &Stock,
    mode: SearchMode,
    control: &mut SolveControl<'_>,
) -> Result<SolveOutcome> {
    solve_with(need, stock, mode, control, Suggestions::Try)
}

fn solve_with(
    need: &Need,
    stock: &Stock,
    mode: SearchMode,
    control: &mut SolveControl<'_>,
    suggestions: Suggestions,
) -> Result<SolveOutcome> {
    // The whole call, explanation and suggestions included, shares the
    // need's time limit; the exhaustive mode has none (only a cancel stops
    // it), and its explanation's re-solves keep their own caps.
    let deadline_ms = match mode {
        SearchMode::Optimised => (control.now_ms)() + need.search.time_limit_ms as f64,
        SearchMode::Exhaustive => f64::INFINITY,
    };
    let augmented = augment_stock(need, stock);
    let problem = Problem::new(need, stock, &augmented);
    let run = strategy::run(&problem, mode, control);
    let mut alternatives = pareto::front(run.found);
    if let Some(best) = &run.best {
        alternatives.retain(|a| {
            a.design != best.design
                && !((a.costing.total - best.costing.total).abs() < 1e-12
                    && (a.analysis.basis_pct_fs - best.analysis.basis_pct_fs).abs() < 1e-12)
        });
        alternatives.insert(0, best.clone());
    }
    // A walk cut short without a design proves nothing: unfinished, not
    // infeasible. A finished walk without one is explained, and marked
    // proven only where a proof holds.
    let infeasible = if run.best.is_none() && run.stopped.is_none() {
        let mut diagnosis = run.diagnosis;
        // Where the walk covered the whole space, the least error of the
        // space is found by walking it again for the error objective (in
        // the time left); the explanation then starts from that design.
        let least = if run.walked && suggestions == Suggestions::Try {
            least_error(need, stock, control, deadline_ms, run.stats.structures)
        } else {
            None
        };
        if let Some(Some(design)) = &least {
            diagnosis.note(design);
        }
        // The re-solves start from the user's stock, as this call did.
        let mut why = explain::explain(
            need,
            stock,
            &diagnosis,
            &mut explain::Budget {
                control,
                deadline_ms,
                total: run.stats.structures,
            },
            suggestions,
        );
        why.proven = run.proven_infeasible;
        if let Some(found) = least {
            let least_pct = found.map(|c| c.analysis.basis_pct_fs);
            // The least error of the space is the best error there is.
            if why.best_error_pct_fs.is_some() && why.best_error_pct_fs == least_pct {
                why.binding
                    .push_str("; every design of the space was walked, and none is more accurate");
            }
        }
        Some(why)
    } else {
        None
    };
    Ok(SolveOutcome {
        best: run.best,
        alternatives,
        stats: run.stats,
        infeasible,
        stopped: run.stopped,
    })
}
