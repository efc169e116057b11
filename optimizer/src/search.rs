//! The optimiser: from a need and a stock, the cheapest design that meets
//! the accuracy target by the engine's own numbers.
//!
//! The shape of the search (DESIGN.md section 2):
//! 1. *groups*: stage shapes in sequence, the op-amp (and in-amp) part, the
//!    stage that carries the offset and its source, and the gain split;
//!    each group is checked for swing and common mode with the ideal
//!    closed forms before anything costly;
//! 2. *structures*: a group with a resistor grade per stage; each has a
//!    cost lower bound, and structures are taken cheapest bound first, so
//!    the search stops (proven) when the next bound is no better than the
//!    best design found;
//! 3. for each structure, a reference design is analysed once; its budget,
//!    split by stage and rescaled per grade, screens the structure; per
//!    stage the best few value sets for the target ratios come from a ratio
//!    search over the sorted value list;
//! 4. a MILP picks one value set per stage: linearised rounding errors that
//!    may cancel across stages, a fee per distinct BOM line, the error
//!    bound at both span ends; the pick is re-verified by the full
//!    analysis and cut off if it fails.
//!
//! `exhaustive` enumerates the same structures and value sets with no
//! bound, screen or MILP, analysing every combination in full.

use crate::analysis::{part_count, Analysis, Model};
use crate::design::{Design, Injection, Resistor, Shape, Source, Stage};
use crate::error::Result;
use crate::need::{Basis, Calibration, Need, Objective, SensorOutput, Topology};
use crate::stock::{ResistorPart, Stock};
use crate::topology::Built;
use serde::Serialize;
use std::collections::{BTreeMap, BTreeSet};

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
    let mut ids = BTreeSet::new();
    let mut parts_cost = 0.0;
    for r in &built.resistors {
        parts_cost += r.part.unit_cost;
        ids.insert(format!("r:{}", r.part.part_id));
    }
    for p in &built.packages {
        parts_cost += p.unit_cost;
        ids.insert(format!("u:{}", p.part_id));
    }
    for s in &built.sources {
        if let (Some(_), Source::Reference(id)) = (s.reference, &s.source) {
            parts_cost += s.unit_cost;
            ids.insert(format!("v:{id}"));
        }
    }
    let bom_lines = ids.len();
    Costing {
        parts_cost,
        bom_lines,
        part_count: part_count(built),
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
    /// Its full analysis.
    pub analysis: Analysis,
}

/// Counters of a search.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SearchStats {
    /// `"optimised"` or `"exhaustive"`.
    pub mode: String,
    /// Designs fully analysed.
    pub evaluated: u64,
    /// Structures considered.
    pub structures: u64,
    /// MILP problems solved.
    pub milp_solves: u64,
    /// Wall time from the caller's clock.
    pub elapsed_ms: f64,
    /// The optimum over the search space is proven.
    pub proven_optimal: bool,
    /// Proven gap between the best cost found and the lowest cost still
    /// possible, when cut short.
    pub gap: Option<f64>,
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
}

/// Why no design meets the need.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Infeasibility {
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
    /// Why not, when no design meets the need.
    pub infeasible: Option<Infeasibility>,
}

// ---------------------------------------------------------------------
// Resistor grades: groups of stock values that share tolerance and TCR.

/// A resistor grade: one family (or one tolerance/TCR class of single
/// rows), its sorted values and their parts.
#[derive(Debug, Clone)]
struct Grade {
    tolerance: f64,
    tcr: f64,
    values: Vec<f64>,
    parts: Vec<usize>,
    min_cost: f64,
}

fn grades(stock: &Stock) -> Vec<Grade> {
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
    let mut s = stock.clone();
    if need.stock.only {
        return s;
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
            if s.resistor(&id).is_some() {
                continue;
            }
            s.resistors.push(ResistorPart {
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
    s.resistors.sort_by(|a, b| {
        a.value
            .0
            .total_cmp(&b.value.0)
            .then(a.unit_cost.total_cmp(&b.unit_cost))
    });
    s
}

// ---------------------------------------------------------------------
// Ideal closed forms of each stage, for candidate generation.

/// How the offset of the offset-carrying stage is made.
#[derive(Debug, Clone, Copy, PartialEq)]
enum OffsetHow {
    /// Non-inverting: unbuffered divider at the bottom of the gain leg.
    GainLeg,
    /// Summed at the + input through `ro` straight from the source.
    Summed,
    /// Inverting: `ro` from the source into the summing node.
    InvertingRo,
    /// Inverting: unbuffered divider biasing the + input.
    InvertingBias,
    /// REF node (difference, instrumentation) from a buffered divider.
    RefDivider,
}

#[derive(Debug, Clone, PartialEq)]
struct OffsetPlan {
    stage: usize,
    how: OffsetHow,
    source: Source,
    volts: f64,
    cost: f64,
}

/// A structure before grades: shapes, parts, offset plan, gain split.
#[derive(Debug, Clone)]
struct Group {
    shapes: Vec<Shape>,
    opamp: Option<usize>,
    inamp: Option<usize>,
    /// Offset plans, at most one per stage, all from one source.
    plans: Vec<OffsetPlan>,
    gains: Vec<f64>,
    offsets: Vec<f64>,
    fixed_cost: f64,
    fixed_lines: usize,
    resistors_per_stage: Vec<usize>,
    packages: usize,
}

impl Group {
    /// The offset plan of a stage, if it has one.
    fn plan(&self, stage: usize) -> Option<&OffsetPlan> {
        self.plans.iter().find(|p| p.stage == stage)
    }

    /// Whether a plan places a divider (whose grade is its own slot).
    fn has_divider(&self) -> bool {
        self.plans.iter().any(|p| {
            matches!(
                p.how,
                OffsetHow::GainLeg | OffsetHow::InvertingBias | OffsetHow::RefDivider
            )
        })
    }
}

/// A stage value set with its linearised effect.
#[derive(Debug, Clone)]
struct Choice {
    resistors: BTreeMap<String, usize>,
    offset_top: Option<usize>,
    offset_bottom: Option<usize>,
    /// Closed-form stage gain and offset (ideal op-amps).
    a: f64,
    c: f64,
    /// Linearised output error at each span end, volts.
    contribution: [f64; 2],
    cost: f64,
}

impl Choice {
    /// Stock indices of every resistor the choice places.
    fn stock_parts(&self, grade: &Grade, divider_grade: &Grade) -> Vec<usize> {
        let mut out: Vec<usize> = self.resistors.values().map(|&i| grade.parts[i]).collect();
        out.extend(
            self.offset_top
                .iter()
                .chain(self.offset_bottom.iter())
                .map(|&i| divider_grade.parts[i]),
        );
        out
    }
}

/// Roles to value indices, with an optional divider (top, bottom).
type RawChoice = (BTreeMap<String, usize>, Option<(usize, usize)>);

/// Ideal stage output for inputs `(vp, vn)` with op-amps ideal; `r` gives
/// ohms by role, `vo` the offset source (or Thevenin) volts, `ro_th` the
/// Thevenin resistance in series where unbuffered, `rs` the sensor's
/// resistance on each input leg (stage 1 only), `rk` the in-amp constant.
#[allow(clippy::too_many_arguments)]
fn stage_output(
    shape: Shape,
    how: Option<OffsetHow>,
    r: &dyn Fn(&str) -> f64,
    vo: f64,
    rth: f64,
    rs: (f64, f64),
    rk: f64,
    vp: f64,
    vn: f64,
) -> f64 {
    match shape {
        Shape::NonInverting => {
            let rg = r("rg") + rth;
            let rf = r("rf");
            vp * (1.0 + rf / rg) - vo * rf / rg
        }
        Shape::NonInvertingSummed => {
            let ri = r("ri") + rs.0;
            let ro = r("ro");
            let plus = (vp * ro + vo * ri) / (ri + ro);
            plus * (1.0 + r("rf") / r("rg"))
        }
        Shape::Inverting => {
            let ri = r("ri") + rs.0;
            let rf = r("rf");
            let (vb, ro_term) = match how {
                Some(OffsetHow::InvertingRo) => (0.0, vo / r("ro")),
                Some(OffsetHow::InvertingBias) => (vo, 0.0),
                _ => (0.0, 0.0),
            };
            let ro_cond = if matches!(how, Some(OffsetHow::InvertingRo)) {
                1.0 / r("ro")
            } else {
                0.0
            };
            -rf * (vp / ri + ro_term) + vb * (1.0 + rf / ri + rf * ro_cond)
        }
        Shape::Difference => {
            let (r1, r2, r3, r4) = (r("r1") + rs.1, r("r2"), r("r3") + rs.0, r("r4"));
            let beta = r4 / (r3 + r4);
            let plus = vp * beta + vo * r3 / (r3 + r4);
            plus * (1.0 + r2 / r1) - vn * r2 / r1
        }
        Shape::InstrumentationDiscrete => {
            let (rf1, rf2, rg) = (r("rf1"), r("rf2"), r("rg"));
            let d = vp - vn;
            let a1 = vp + rf1 * d / rg;
            let a2 = vn - rf2 * d / rg;
            let (r1, r2, r3, r4) = (r("r1"), r("r2"), r("r3"), r("r4"));
            let plus = a1 * r4 / (r3 + r4) + vo * r3 / (r3 + r4);
            plus * (1.0 + r2 / r1) - a2 * r2 / r1
        }
        Shape::InstrumentationIntegrated => (vp - vn) * (1.0 + rk / r("rg")) + vo,
    }
}

/// Best pairs `(x, y)` from `values` with `y / x` near `ratio`, `x` in
/// the impedance band: a binary search per `x` over the sorted list.
fn ratio_pairs(
    values: &[f64],
    ratio: f64,
    band: (f64, f64),
    keep: usize,
) -> Vec<(usize, usize, f64)> {
    if !(ratio.is_finite() && ratio > 0.0) {
        return Vec::new();
    }
    // The dedupe below may need a few spares.
    let best = bracketed_pairs(
        values,
        band,
        keep * 4,
        |x| x * ratio,
        |x, y| (y / x / ratio - 1.0).abs(),
    );
    let mut out: Vec<(usize, usize, f64)> = Vec::new();
    for b in best {
        if out
            .iter()
            .any(|o| (values[o.1] / values[o.0] - values[b.1] / values[b.0]).abs() < 1e-12 * ratio)
        {
            continue;
        }
        out.push(b);
        if out.len() >= keep {
            break;
        }
    }
    out
}

/// The indices of the values just below and just above `target` in a
/// sorted list (no allocation: the inner loop of the ratio searches).
fn bracket(values: &[f64], target: f64) -> impl Iterator<Item = usize> {
    let ok = target.is_finite() && target > 0.0;
    let j = if ok {
        values.partition_point(|&v| v < target)
    } else {
        0
    };
    let n = if ok { values.len() } else { 0 };
    [j.wrapping_sub(1), j].into_iter().filter(move |&k| k < n)
}

/// Pairs `(base, partner, error)` from one sorted value list: for every
/// base value inside `band`, the two values bracketing `partner_for(base)`,
/// scored by `error(base, partner)`; the `keep` best, best first.
fn bracketed_pairs(
    values: &[f64],
    band: (f64, f64),
    keep: usize,
    partner_for: impl Fn(f64) -> f64,
    error: impl Fn(f64, f64) -> f64,
) -> Vec<(usize, usize, f64)> {
    let mut out = Vec::new();
    for (i, &x) in values.iter().enumerate() {
        if x < band.0 || x > band.1 {
            continue;
        }
        for k in bracket(values, partner_for(x)) {
            out.push((i, k, error(x, values[k])));
        }
    }
    keep_best(&mut out, keep);
    out
}

/// Keep the `k` entries of lowest error (third field), in order, ties by
/// index so the result does not depend on the sort.
fn keep_best(items: &mut Vec<(usize, usize, f64)>, k: usize) {
    let cmp = |a: &(usize, usize, f64), b: &(usize, usize, f64)| {
        a.2.total_cmp(&b.2).then(a.0.cmp(&b.0)).then(a.1.cmp(&b.1))
    };
    if items.len() > k && k > 0 {
        items.select_nth_unstable_by(k - 1, cmp);
        items.truncate(k);
    }
    items.sort_unstable_by(cmp);
}

/// Indices of the values nearest `target` (up to `keep`, both sides).
fn nearest_values(values: &[f64], target: f64, keep: usize) -> Vec<usize> {
    if !(target.is_finite() && target > 0.0) {
        return Vec::new();
    }
    let j = values.partition_point(|&v| v < target);
    let lo = j.saturating_sub(keep / 2 + 1);
    let hi = (j + keep / 2 + 1).min(values.len());
    let mut idx: Vec<usize> = (lo..hi).collect();
    // max(v/t, t/v) orders like |ln(v/t)| without the logarithm.
    let off = |v: f64| (v / target).max(target / v);
    idx.sort_unstable_by(|a, b| off(values[*a]).total_cmp(&off(values[*b])));
    idx.truncate(keep);
    idx
}

/// Search settings shared by both modes.
const PAIRS_PER_RATIO: usize = 3;
const CHOICES_PER_STAGE: usize = 4;
const BAND: (f64, f64) = (1_000.0, 100_000.0);
/// Screening slack: a structure is dropped only when its estimate exceeds
/// the target by more than this factor.
const SCREEN_SLACK: f64 = 1.15;
/// Share of a structure's reference random error that every value set of
/// the structure is assumed to keep (see `run`).
const RANDOM_SPREAD: f64 = 0.7;
/// Loosening of the MILP's linearised error bound (see `run`).
const LINEAR_SLACK: f64 = 1.25;
/// Most picks cut off in one structure before it is given up.
const MAX_CUTS: usize = 60;
/// Most picks analysed in full in one structure before it is given up.
const MAX_ANALYSED: usize = 16;

struct Ctx<'a> {
    need: &'a Need,
    stock: &'a Stock,
    grades: Vec<Grade>,
    signal: [f64; 2],
    ideal: [f64; 2],
    target_v: f64,
}

impl<'a> Ctx<'a> {
    fn rs(&self, stage: usize) -> (f64, f64) {
        if stage > 0 {
            return (0.0, 0.0);
        }
        let r = self.need.sensor.source.0;
        match self.need.sensor.output {
            SensorOutput::Differential => (r, r),
            SensorOutput::SingleEnded => (r, 0.0),
        }
    }

    fn stage_inputs(&self, stage: usize, prev: [f64; 2]) -> [(f64, f64); 2] {
        if stage == 0 {
            let cm = match self.need.sensor.output {
                SensorOutput::Differential => self.need.sensor.common_mode.0,
                SensorOutput::SingleEnded => 0.0,
            };
            [(cm + self.signal[0], cm), (cm + self.signal[1], cm)]
        } else {
            [(prev[0], 0.0), (prev[1], 0.0)]
        }
    }

    /// Generate value sets for one stage of a group in a grade.
    fn choices(
        &self,
        g: &Group,
        stage: usize,
        grade: &Grade,
        divider_grade: &Grade,
        prev_ideal: [f64; 2],
    ) -> Vec<Choice> {
        let shape = g.shapes[stage];
        let a = g.gains[stage];
        let c = g.offsets[stage];
        let plan = g.plan(stage);
        let how = plan.map(|p| p.how);
        let vsrc = plan.map(|p| p.volts).unwrap_or(0.0);
        let v = &grade.values;
        let vd = &divider_grade.values;
        let rs = self.rs(stage);
        let rk = g
            .inamp
            .map(|i| self.stock.inamps[i].gain_resistor.0)
            .unwrap_or(0.0);
        let mut raw: Vec<RawChoice> = Vec::new();
        // Divider candidates for a needed tap voltage.
        let dividers = |tap: f64| -> Vec<(usize, usize)> {
            if !(tap > 0.0 && tap < vsrc) {
                return Vec::new();
            }
            let q = tap / vsrc;
            let ratio = q / (1.0 - q);
            // Keep the smaller resistor of the pair inside the band.
            if ratio < 1.0 {
                ratio_pairs(vd, 1.0 / ratio, BAND, PAIRS_PER_RATIO)
                    .into_iter()
                    .map(|(b, t, _)| (t, b))
                    .collect()
            } else {
                ratio_pairs(vd, ratio, BAND, PAIRS_PER_RATIO)
                    .into_iter()
                    .map(|(t, b, _)| (t, b))
                    .collect()
            }
        };
        let pairs = |ratio: f64| ratio_pairs(v, ratio, BAND, PAIRS_PER_RATIO);
        let map = |items: &[(&str, usize)]| -> BTreeMap<String, usize> {
            items.iter().map(|(k, i)| (k.to_string(), *i)).collect()
        };
        // A REF-pin stage takes each network with every divider for its
        // offset, or alone when the REF pin is grounded.
        let ref_dividers = if how == Some(OffsetHow::RefDivider) {
            dividers(c)
        } else {
            Vec::new()
        };
        let with_ref = |raw: &mut Vec<RawChoice>, m: BTreeMap<String, usize>| {
            if how == Some(OffsetHow::RefDivider) {
                for &d in &ref_dividers {
                    raw.push((m.clone(), Some(d)));
                }
            } else {
                raw.push((m, None));
            }
        };
        match shape {
            Shape::NonInverting => {
                if a <= 1.0 {
                    return Vec::new();
                }
                match how {
                    Some(OffsetHow::GainLeg) => {
                        let vth = -c / (a - 1.0);
                        for (t, b) in dividers(vth) {
                            let rth = vd[t] * vd[b] / (vd[t] + vd[b]);
                            // rf over the band, rg from the folded leg.
                            let legs = bracketed_pairs(
                                v,
                                (BAND.0, BAND.1 * 10.0),
                                PAIRS_PER_RATIO,
                                |rf| rf / (a - 1.0) - rth,
                                |rf, rg| ((rg + rth) / (rf / (a - 1.0)) - 1.0).abs(),
                            );
                            for (i, k, _) in legs {
                                raw.push((map(&[("rf", i), ("rg", k)]), Some((t, b))));
                            }
                        }
                    }
                    _ => {
                        for (g_, f, _) in pairs(a - 1.0) {
                            raw.push((map(&[("rg", g_), ("rf", f)]), None));
                        }
                    }
                }
            }
            Shape::NonInvertingSummed => {
                if vsrc <= 0.0 {
                    return Vec::new();
                }
                let gain = a + c / vsrc;
                let alpha = a / gain;
                if !(gain > 1.05 && alpha > 0.0 && alpha < 1.0) {
                    return Vec::new();
                }
                // ri' / ro = (1 - alpha) / alpha, with ri' = ri + rs.
                let ratio_ri_ro = (1.0 - alpha) / alpha;
                let ri_ro = bracketed_pairs(
                    v,
                    BAND,
                    PAIRS_PER_RATIO,
                    |ro| ro * ratio_ri_ro - rs.0,
                    |ro, ri| (((ri + rs.0) / ro) / ratio_ri_ro - 1.0).abs(),
                );
                for (ro, ri, _) in ri_ro {
                    for (rg, rf, _) in pairs(gain - 1.0) {
                        raw.push((map(&[("ri", ri), ("ro", ro), ("rg", rg), ("rf", rf)]), None));
                    }
                }
            }
            Shape::Inverting => {
                if a >= 0.0 {
                    return Vec::new();
                }
                let gain = -a;
                let ri_rf = bracketed_pairs(
                    v,
                    BAND,
                    PAIRS_PER_RATIO,
                    |ri| gain * (ri + rs.0),
                    |ri, rf| (rf / (ri + rs.0) / gain - 1.0).abs(),
                );
                for (ri, rf, _) in ri_rf {
                    match how {
                        Some(OffsetHow::InvertingRo) => {
                            if c >= 0.0 {
                                return Vec::new();
                            }
                            for ro in bracket(v, v[rf] * vsrc / (-c)) {
                                raw.push((map(&[("ri", ri), ("rf", rf), ("ro", ro)]), None));
                            }
                        }
                        Some(OffsetHow::InvertingBias) => {
                            let vb = c / (1.0 + v[rf] / (v[ri] + rs.0));
                            for (t, b) in dividers(vb) {
                                raw.push((map(&[("ri", ri), ("rf", rf)]), Some((t, b))));
                            }
                        }
                        _ => raw.push((map(&[("ri", ri), ("rf", rf)]), None)),
                    }
                }
            }
            Shape::Difference => {
                if a <= 0.0 {
                    return Vec::new();
                }
                let r1_r2 = bracketed_pairs(
                    v,
                    BAND,
                    PAIRS_PER_RATIO,
                    |r1| a * (r1 + rs.1),
                    |r1, r2| (r2 / (r1 + rs.1) / a - 1.0).abs(),
                );
                for (r1, r2, _) in r1_r2 {
                    let m = map(&[("r1", r1), ("r2", r2), ("r3", r1), ("r4", r2)]);
                    with_ref(&mut raw, m);
                }
            }
            Shape::InstrumentationDiscrete => {
                if a <= 1.0 {
                    return Vec::new();
                }
                let unity = nearest_values(v, 10_000.0, 1);
                let Some(&u) = unity.first() else {
                    return Vec::new();
                };
                for (rg, rf, _) in pairs((a - 1.0) / 2.0) {
                    let m = map(&[
                        ("rf1", rf),
                        ("rf2", rf),
                        ("rg", rg),
                        ("r1", u),
                        ("r2", u),
                        ("r3", u),
                        ("r4", u),
                    ]);
                    with_ref(&mut raw, m);
                }
            }
            Shape::InstrumentationIntegrated => {
                if a <= 1.0 || rk <= 0.0 {
                    return Vec::new();
                }
                for rg in nearest_values(v, rk / (a - 1.0), 4) {
                    with_ref(&mut raw, map(&[("rg", rg)]));
                }
            }
        }
        // Score by the linearised effect at the output.
        let k_total = self.need.ideal_transfer().0;
        let down: f64 = g.gains[stage + 1..].iter().product();
        // Offsets made upstream of this stage, as they reach the output.
        let upstream: f64 = (0..stage)
            .map(|i| g.offsets[i] * g.gains[i + 1..].iter().product::<f64>())
            .sum();
        let ins = self.stage_inputs(stage, prev_ideal);
        let mut out: Vec<Choice> = Vec::new();
        for (roles, div) in raw {
            let ohms = |role: &str| roles.get(role).map(|&i| v[i]).unwrap_or(f64::NAN);
            let (vo, rth) = match (how, div) {
                (Some(OffsetHow::GainLeg), Some((t, b)))
                | (Some(OffsetHow::InvertingBias), Some((t, b))) => (
                    vsrc * vd[b] / (vd[t] + vd[b]),
                    if how == Some(OffsetHow::GainLeg) {
                        vd[t] * vd[b] / (vd[t] + vd[b])
                    } else {
                        0.0
                    },
                ),
                (Some(OffsetHow::RefDivider), Some((t, b))) => {
                    (vsrc * vd[b] / (vd[t] + vd[b]), 0.0)
                }
                (Some(_), None) => (vsrc, 0.0),
                _ => (0.0, 0.0),
            };
            let f = |p: (f64, f64)| stage_output(shape, how, &ohms, vo, rth, rs, rk, p.0, p.1);
            let y0 = f(ins[0]);
            let y1 = f(ins[1]);
            let dx = ins[1].0 - ins[1].1 - (ins[0].0 - ins[0].1);
            let a_real = (y1 - y0) / dx;
            let c_real = y0 - a_real * (ins[0].0 - ins[0].1);
            if !(a_real.is_finite() && c_real.is_finite()) {
                continue;
            }
            // The effect at the output, linear in logarithms: the overall
            // gain is the product of stage gains and the offset the product
            // of the offset stage's offset and the gains after it, so their
            // log errors add exactly across stages; only exp(L) - 1 ~ L is
            // approximate, and that is small where the total is small.
            let ratio = a_real / a;
            if ratio <= 0.0 {
                continue;
            }
            let rel = ratio.ln();
            let offset_term = (c_real - c) * down;
            let mut contribution = [0.0; 2];
            for (e, ce) in contribution.iter_mut().enumerate() {
                *ce = rel * (k_total * self.signal[e] + upstream) + offset_term;
            }
            let mut cost: f64 = roles
                .values()
                .map(|&i| self.stock.resistors[grade.parts[i]].unit_cost)
                .sum();
            if let Some((t, b)) = div {
                cost += self.stock.resistors[divider_grade.parts[t]].unit_cost
                    + self.stock.resistors[divider_grade.parts[b]].unit_cost;
            }
            out.push(Choice {
                resistors: roles,
                offset_top: div.map(|d| d.0),
                offset_bottom: div.map(|d| d.1),
                a: a_real,
                c: c_real,
                contribution,
                cost,
            });
        }
        out.sort_by(|x, y| {
            let mx = x.contribution[0].abs().max(x.contribution[1].abs());
            let my = y.contribution[0].abs().max(y.contribution[1].abs());
            mx.total_cmp(&my).then(x.cost.total_cmp(&y.cost))
        });
        out.truncate(CHOICES_PER_STAGE);
        out
    }

    /// Turn one choice per stage into a design.
    fn design(&self, g: &Group, grades: &[usize], picks: &[&Choice]) -> Design {
        let mut stages = Vec::new();
        for (i, (&shape, ch)) in g.shapes.iter().zip(picks).enumerate() {
            let grade = &self.grades[grades[i]];
            let dgrade = &self.grades[grades[g.shapes.len()]];
            let res = |idx: usize| Resistor::from(&self.stock.resistors[grade.parts[idx]]);
            let dres = |idx: usize| Resistor::from(&self.stock.resistors[dgrade.parts[idx]]);
            let resistors: BTreeMap<String, Resistor> = ch
                .resistors
                .iter()
                .map(|(k, &v)| (k.clone(), res(v)))
                .collect();
            let plan = g.plan(i);
            let divider = |buffered: bool, p: &OffsetPlan| match (ch.offset_top, ch.offset_bottom) {
                (Some(t), Some(b)) => Injection::Divider {
                    source: p.source.clone(),
                    top: dres(t),
                    bottom: dres(b),
                    buffered,
                },
                _ => Injection::Direct {
                    source: p.source.clone(),
                },
            };
            let (offset, bias) = match plan {
                None => (Injection::Ground, Injection::Ground),
                Some(p) => match p.how {
                    OffsetHow::GainLeg => (divider(false, p), Injection::Ground),
                    OffsetHow::Summed | OffsetHow::InvertingRo => (
                        Injection::Direct {
                            source: p.source.clone(),
                        },
                        Injection::Ground,
                    ),
                    OffsetHow::InvertingBias => (Injection::Ground, divider(false, p)),
                    OffsetHow::RefDivider => (divider(true, p), Injection::Ground),
                },
            };
            let buffer = if shape == Shape::InstrumentationIntegrated && offset.buffered() {
                g.opamp.map(|o| self.stock.opamps[o].part_id.clone())
            } else {
                None
            };
            let amplifier = if shape == Shape::InstrumentationIntegrated {
                g.inamp
                    .map(|i| self.stock.inamps[i].part_id.clone())
                    .unwrap_or_default()
            } else {
                g.opamp
                    .map(|o| self.stock.opamps[o].part_id.clone())
                    .unwrap_or_default()
            };
            stages.push(Stage {
                shape,
                amplifier,
                resistors,
                offset,
                bias,
                buffer,
            });
        }
        Design { stages }
    }
}

// ---------------------------------------------------------------------
// Groups and structures.

fn shapes_for(need: &Need, stock: &Stock, first: bool) -> Vec<Shape> {
    let allowed = |t: Topology| need.search.topologies.contains(&t);
    let mut out = Vec::new();
    let differential = need.sensor.output == SensorOutput::Differential;
    if first && differential {
        if allowed(Topology::Difference) {
            out.push(Shape::Difference);
        }
        if allowed(Topology::Instrumentation) {
            out.push(Shape::InstrumentationDiscrete);
            if !stock.inamps.is_empty() {
                out.push(Shape::InstrumentationIntegrated);
            }
        }
        return out;
    }
    if allowed(Topology::NonInverting) {
        out.push(Shape::NonInverting);
        out.push(Shape::NonInvertingSummed);
    }
    if allowed(Topology::Inverting) {
        out.push(Shape::Inverting);
    }
    if first && allowed(Topology::Difference) {
        out.push(Shape::Difference);
    }
    out
}

fn gain_splits(k: f64, n: usize, signs: &[f64]) -> Vec<Vec<f64>> {
    let m = k.abs();
    let fractions: Vec<Vec<f64>> = match n {
        1 => vec![vec![1.0]],
        2 => vec![vec![0.5, 0.5], vec![0.65, 0.35], vec![0.8, 0.2]],
        _ => vec![
            vec![0.4, 0.3, 0.3],
            vec![0.5, 0.25, 0.25],
            vec![0.6, 0.2, 0.2],
        ],
    };
    fractions
        .into_iter()
        .map(|f| f.iter().zip(signs).map(|(t, s)| s * m.powf(*t)).collect())
        .collect()
}

/// Every group that passes the closed-form swing and supply checks; the
/// nearest miss among the rest is kept in `closest` to explain an
/// infeasible need.
fn enumerate_groups(
    ctx: &Ctx<'_>,
    closest: &mut Option<(String, f64)>,
    floor_miss: &mut Option<(String, f64)>,
) -> Vec<Group> {
    let need = ctx.need;
    let stock = ctx.stock;
    let (k, b) = need.ideal_transfer();
    let mut sequences: Vec<Vec<Shape>> = Vec::new();
    let firsts = shapes_for(need, stock, true);
    let laters = shapes_for(need, stock, false);
    for n in 1..=need.search.max_stages.clamp(1, 3) {
        let mut seqs: Vec<Vec<Shape>> = firsts.iter().map(|s| vec![*s]).collect();
        for _ in 1..n {
            let mut next = Vec::new();
            for s in &seqs {
                for l in &laters {
                    let mut t = s.clone();
                    t.push(*l);
                    next.push(t);
                }
            }
            seqs = next;
        }
        sequences.extend(seqs);
    }
    let mut sources: Vec<(Source, f64, f64)> = Vec::new();
    if need.supply.positive.0 > 0.0 {
        sources.push((Source::Supply, need.supply.positive.0, 0.0));
    }
    for r in stock.references.iter().filter(|r| r.stock_qty != Some(0)) {
        sources.push((Source::Reference(r.part_id.clone()), r.volts.0, r.unit_cost));
    }
    let mut groups = Vec::new();
    for shapes in sequences {
        let signs: Vec<f64> = shapes
            .iter()
            .map(|s| if *s == Shape::Inverting { -1.0 } else { 1.0 })
            .collect();
        let sign: f64 = signs.iter().product();
        if sign * k <= 0.0 {
            continue;
        }
        let integrated = shapes.contains(&Shape::InstrumentationIntegrated);
        let opamp_sections: usize = shapes.iter().map(|s| s.sections()).sum();
        let inamps: Vec<Option<usize>> = if integrated {
            (0..stock.inamps.len()).map(Some).collect()
        } else {
            vec![None]
        };
        for gains in gain_splits(k, shapes.len(), &signs) {
            // Offset plans: none; one stage from one source; or, for two or
            // more stages, every stage lifted so its output starts a tenth
            // of the rails above the negative rail (so no intermediate node
            // clips), each from the same source.
            let hows_for = |shape: Shape, c: f64| -> Option<OffsetHow> {
                match shape {
                    Shape::NonInverting if c < 0.0 => Some(OffsetHow::GainLeg),
                    Shape::NonInvertingSummed if c > 0.0 => Some(OffsetHow::Summed),
                    Shape::Inverting if c < 0.0 => Some(OffsetHow::InvertingRo),
                    Shape::Inverting if c > 0.0 => Some(OffsetHow::InvertingBias),
                    Shape::Difference
                    | Shape::InstrumentationDiscrete
                    | Shape::InstrumentationIntegrated
                        if c > 0.0 =>
                    {
                        Some(OffsetHow::RefDivider)
                    }
                    _ => None,
                }
            };
            let mut plan_sets: Vec<(Vec<OffsetPlan>, Vec<f64>)> = Vec::new();
            if b.abs() < 1e-9 {
                plan_sets.push((Vec::new(), vec![0.0; shapes.len()]));
            } else {
                for (stage, &shape) in shapes.iter().enumerate() {
                    let down: f64 = gains[stage + 1..].iter().product();
                    let c = b / down;
                    if let Some(how) = hows_for(shape, c) {
                        for (src, volts, cost) in &sources {
                            let mut offsets = vec![0.0; shapes.len()];
                            offsets[stage] = c;
                            plan_sets.push((
                                vec![OffsetPlan {
                                    stage,
                                    how,
                                    source: src.clone(),
                                    volts: *volts,
                                    cost: *cost,
                                }],
                                offsets,
                            ));
                        }
                    }
                }
            }
            if shapes.len() >= 2 {
                let pos = need.supply.positive.0;
                let neg = need.supply.negative.0;
                let floor = neg + 0.1 * (pos - neg);
                let mut offsets = vec![0.0; shapes.len()];
                let mut v = ctx.signal;
                for (i, &a) in gains.iter().enumerate() {
                    let y = [a * v[0], a * v[1]];
                    offsets[i] = if i + 1 == shapes.len() {
                        ctx.ideal[0] - y[0]
                    } else {
                        floor - y[0].min(y[1])
                    };
                    v = [y[0] + offsets[i], y[1] + offsets[i]];
                }
                let staged: Option<Vec<OffsetHow>> = shapes
                    .iter()
                    .zip(&offsets)
                    .map(|(&sh, &c)| {
                        if c.abs() < 1e-9 {
                            Some(None)
                        } else {
                            hows_for(sh, c).map(Some)
                        }
                    })
                    .collect::<Option<Vec<Option<OffsetHow>>>>()
                    .map(|v| v.into_iter().flatten().collect());
                let count = offsets.iter().filter(|c| c.abs() >= 1e-9).count();
                if let Some(hows) = staged.filter(|_| count >= 2) {
                    let stages_with: Vec<usize> = (0..shapes.len())
                        .filter(|&i| offsets[i].abs() >= 1e-9)
                        .collect();
                    for (src, volts, cost) in &sources {
                        let plans = stages_with
                            .iter()
                            .zip(&hows)
                            .map(|(&stage, &how)| OffsetPlan {
                                stage,
                                how,
                                source: src.clone(),
                                volts: *volts,
                                cost: *cost,
                            })
                            .collect();
                        plan_sets.push((plans, offsets.clone()));
                    }
                }
            }
            for (plans, offsets) in plan_sets {
                let buffer_sections = plans
                    .iter()
                    .filter(|p| p.how == OffsetHow::RefDivider)
                    .count();
                let sections = opamp_sections + buffer_sections;
                let opamps: Vec<Option<usize>> = if sections == 0 {
                    vec![None]
                } else {
                    (0..stock.opamps.len()).map(Some).collect()
                };
                for &opamp in &opamps {
                    for &inamp in &inamps {
                        let mut fixed_cost = plans.first().map(|p| p.cost).unwrap_or(0.0);
                        let mut fixed_lines =
                            usize::from(plans.first().is_some_and(|p| p.source != Source::Supply));
                        let mut packages = 0;
                        if let Some(o) = opamp {
                            let ch = stock.opamps[o].channels.max(1) as usize;
                            let needed = sections.div_ceil(ch);
                            if stock.opamps[o]
                                .stock_qty
                                .is_some_and(|q| (q as usize) < needed)
                            {
                                continue;
                            }
                            packages += needed;
                            fixed_cost += packages as f64 * stock.opamps[o].unit_cost;
                            fixed_lines += 1;
                        }
                        if let Some(i) = inamp {
                            if stock.inamps[i].stock_qty == Some(0) {
                                continue;
                            }
                            packages += 1;
                            fixed_cost += stock.inamps[i].unit_cost;
                            fixed_lines += 1;
                        }
                        let resistors_per_stage: Vec<usize> = shapes
                            .iter()
                            .enumerate()
                            .map(|(i, s)| {
                                let base = match s {
                                    Shape::NonInverting => 2,
                                    Shape::NonInvertingSummed => 4,
                                    Shape::Inverting => 2,
                                    Shape::Difference => 4,
                                    Shape::InstrumentationDiscrete => 7,
                                    Shape::InstrumentationIntegrated => 1,
                                };
                                let extra = match plans.iter().find(|p| p.stage == i).map(|p| p.how)
                                {
                                    Some(
                                        OffsetHow::GainLeg
                                        | OffsetHow::InvertingBias
                                        | OffsetHow::RefDivider,
                                    ) => 2,
                                    Some(OffsetHow::Summed) => 0,
                                    Some(OffsetHow::InvertingRo) => 1,
                                    None => 0,
                                };
                                base + extra
                            })
                            .collect();
                        let g = Group {
                            shapes: shapes.clone(),
                            opamp,
                            inamp,
                            plans: plans.clone(),
                            gains: gains.clone(),
                            offsets: offsets.clone(),
                            fixed_cost,
                            fixed_lines,
                            resistors_per_stage,
                            packages,
                        };
                        match swing_ok(ctx, &g) {
                            Ok(()) => {
                                let floor = amplifier_floor(ctx, &g);
                                if floor <= ctx.target_v * SCREEN_SLACK {
                                    groups.push(g);
                                } else {
                                    let by = floor - ctx.target_v;
                                    if floor_miss.as_ref().is_none_or(|c: &(String, f64)| by < c.1)
                                    {
                                        let why = format!(
                                            "accuracy: amplifier offset drift alone comes to {:.4} % FS against {:.4} % FS",
                                            100.0 * floor / ctx.need.full_scale(),
                                            ctx.need.accuracy.max_error_pct_fs
                                        );
                                        *floor_miss = Some((why, by));
                                    }
                                }
                            }
                            Err((miss, by)) => {
                                if closest.as_ref().is_none_or(|c: &(String, f64)| by < c.1) {
                                    *closest = Some((miss.text(by), by));
                                }
                            }
                        }
                    }
                }
            }
        }
    }
    groups
}

/// Why a group fails the closed-form checks, kept as numbers until shown.
#[derive(Debug, Clone)]
enum Miss {
    NoPart,
    Supply {
        part: String,
        span: f64,
        min: f64,
        max: f64,
    },
    Swing {
        stage: usize,
        part: String,
        at: f64,
        lo: f64,
        hi: f64,
    },
}

impl Miss {
    fn text(&self, by: f64) -> String {
        match self {
            Miss::NoPart => "no amplifier part for a stage".into(),
            Miss::Supply { part, span, min, max } => format!(
                "supply range: the rails span {span:.3} V but {part} runs from {min:.3} V to {max:.3} V"
            ),
            Miss::Swing { stage, part, at, lo, hi } => format!(
                "output swing: stage {stage} ({part}) must reach {at:.4} V but swings only {lo:.4} V to {hi:.4} V ({by:.4} V short)"
            ),
        }
    }
}

/// Ideal stage outputs inside the amplifier's swing and supply range
/// (closed form); `Err` says which limit fails and by how much (volts).
fn swing_ok(ctx: &Ctx<'_>, g: &Group) -> std::result::Result<(), (Miss, f64)> {
    let pos = ctx.need.supply.positive.0;
    let neg = ctx.need.supply.negative.0;
    let span = pos - neg;
    let mut v = ctx.signal;
    for (i, &shape) in g.shapes.iter().enumerate() {
        let (id, lo, hi, smin, smax) = if shape == Shape::InstrumentationIntegrated {
            let Some(p) = g.inamp.map(|x| &ctx.stock.inamps[x]) else {
                return Err((Miss::NoPart, f64::INFINITY));
            };
            (
                &p.part_id,
                neg + p.output_headroom_low.0,
                pos - p.output_headroom_high.0,
                p.supply_min.0,
                p.supply_max.0,
            )
        } else {
            let Some(p) = g.opamp.map(|x| &ctx.stock.opamps[x]) else {
                return Err((Miss::NoPart, f64::INFINITY));
            };
            (
                &p.part_id,
                neg + p.output_headroom_low.0,
                pos - p.output_headroom_high.0,
                p.supply_min.0,
                p.supply_max.0,
            )
        };
        if span < smin || span > smax {
            let by = if span < smin {
                smin - span
            } else {
                span - smax
            };
            return Err((
                Miss::Supply {
                    part: id.clone(),
                    span,
                    min: smin,
                    max: smax,
                },
                1e3 + by,
            ));
        }
        for x in v.iter_mut() {
            *x = g.gains[i] * *x + g.offsets[i];
            if *x < lo || *x > hi {
                let by = if *x < lo { lo - *x } else { *x - hi };
                return Err((
                    Miss::Swing {
                        stage: i + 1,
                        part: id.clone(),
                        at: *x,
                        lo,
                        hi,
                    },
                    by,
                ));
            }
        }
    }
    Ok(())
}

/// A lower bound on the error a group can reach whatever its resistors:
/// the output-referred offset drift of its amplifiers (and their initial
/// offset where no calibration removes it), each times its noise gain and
/// the gain after it, on the need's basis. Volts.
fn amplifier_floor(ctx: &Ctx<'_>, g: &Group) -> f64 {
    let dt = ctx.need.max_delta_t();
    let calibrated = ctx.need.accuracy.calibration != Calibration::None;
    let mut worst = 0.0;
    let mut squares = 0.0;
    for (i, &shape) in g.shapes.iter().enumerate() {
        let a = g.gains[i].abs();
        let down: f64 = g.gains[i + 1..].iter().map(|x| x.abs()).product();
        let (vos, drift) = if shape == Shape::InstrumentationIntegrated {
            match g.inamp.map(|x| &ctx.stock.inamps[x]) {
                Some(p) => (p.input_offset_uv * 1e-6, p.offset_drift_uv_per_c * 1e-6),
                None => (0.0, 0.0),
            }
        } else {
            match g.opamp.map(|x| &ctx.stock.opamps[x]) {
                Some(p) => (p.vos_max_uv * 1e-6, p.vos_drift_uv_per_c * 1e-6),
                None => (0.0, 0.0),
            }
        };
        let noise_gain = match shape {
            Shape::Inverting | Shape::Difference => 1.0 + a,
            _ => a.max(1.0),
        };
        let per_volt = noise_gain * down;
        let mut terms = vec![drift * dt * per_volt];
        if !calibrated {
            terms.push(vos * per_volt);
        }
        for t in terms {
            worst += t;
            squares += t * t;
        }
    }
    match ctx.need.accuracy.basis {
        Basis::WorstCase => worst,
        Basis::Rss => squares.sqrt(),
        Basis::Yield => {
            crate::analysis::yield_k_sigma(ctx.need.accuracy.yield_pct) * (squares / 3.0).sqrt()
        }
    }
}

/// One structure: a group with a grade per stage (and, last, one for the
/// offset divider), and its cost bound.
#[derive(Debug, Clone)]
struct Structure {
    group: usize,
    grades: Vec<usize>,
    bound: f64,
    parts: usize,
}

fn structures(ctx: &Ctx<'_>, groups: &[Group]) -> Vec<Structure> {
    let line = ctx.need.search.bom_line_cost;
    let mut out = Vec::new();
    let ng = ctx.grades.len();
    for (gi, g) in groups.iter().enumerate() {
        let n = g.shapes.len();
        // Offset dividers, where there are any, share a grade of their own.
        let divider_stages: Vec<usize> = g
            .plans
            .iter()
            .filter(|p| {
                matches!(
                    p.how,
                    OffsetHow::GainLeg | OffsetHow::InvertingBias | OffsetHow::RefDivider
                )
            })
            .map(|p| p.stage)
            .collect();
        let slots = n + usize::from(g.has_divider());
        let combos = ng.pow(slots as u32);
        for code in 0..combos {
            let mut grades = Vec::with_capacity(n + 1);
            let mut c = code;
            for _ in 0..slots {
                grades.push(c % ng);
                c /= ng;
            }
            if !g.has_divider() {
                grades.push(0);
            }
            let mut counts = g.resistors_per_stage.clone();
            for &k in &divider_stages {
                counts[k] -= 2;
            }
            let mut resistor_cost: f64 = grades[..n]
                .iter()
                .zip(&counts)
                .map(|(&gr, &cnt)| cnt as f64 * ctx.grades[gr].min_cost)
                .sum();
            let mut distinct: BTreeSet<usize> = grades[..n].iter().copied().collect();
            if g.has_divider() {
                resistor_cost += 2.0 * divider_stages.len() as f64 * ctx.grades[grades[n]].min_cost;
                distinct.insert(grades[n]);
            }
            let min_lines = distinct
                .len()
                .max(if g.resistors_per_stage.iter().any(|&c| c >= 2) {
                    2
                } else {
                    1
                });
            let parts = g.resistors_per_stage.iter().sum::<usize>()
                + g.packages
                + usize::from(g.plans.first().is_some_and(|p| p.source != Source::Supply));
            if parts > ctx.need.search.max_parts {
                continue;
            }
            out.push(Structure {
                group: gi,
                grades,
                bound: g.fixed_cost + resistor_cost + line * (g.fixed_lines + min_lines) as f64,
                parts,
            });
        }
    }
    let objective = ctx.need.search.objective;
    out.sort_by(|a, b| match objective {
        Objective::Parts => a.parts.cmp(&b.parts).then(a.bound.total_cmp(&b.bound)),
        _ => a.bound.total_cmp(&b.bound).then(a.parts.cmp(&b.parts)),
    });
    out
}

// ---------------------------------------------------------------------
// Selection.

/// Objective key of a verified design (lower is better).
fn key(objective: Objective, c: &Candidate) -> (f64, f64, f64) {
    let e = c.analysis.basis_pct_fs;
    let cost = (c.costing.total * 1e9).round() / 1e9;
    let parts = c.costing.part_count as f64;
    match objective {
        Objective::Cost => (cost, parts, e),
        Objective::Parts => (parts, cost, e),
        Objective::Error => (e, cost, parts),
    }
}

fn better(objective: Objective, a: &Candidate, b: &Candidate) -> bool {
    let (x, y) = (key(objective, a), key(objective, b));
    x.0 < y.0 - 1e-12
        || ((x.0 - y.0).abs() <= 1e-12
            && (x.1 < y.1 - 1e-12 || ((x.1 - y.1).abs() <= 1e-12 && x.2 < y.2)))
}

fn calibrated(cal: Calibration, v: [f64; 2]) -> [f64; 2] {
    match cal {
        Calibration::None => v,
        Calibration::Offset => [0.0, v[1] - v[0]],
        Calibration::TwoPoint => [0.0, 0.0],
    }
}

/// The MILP: one choice per stage, a fee per distinct resistor part, the
/// linearised error within `allowed` at both ends. Returns choice indices.
fn pick(
    ctx: &Ctx<'_>,
    st: &Structure,
    choices: &[Vec<Choice>],
    allowed: [f64; 2],
    constant: [f64; 2],
    cuts: &[Vec<usize>],
) -> Option<Vec<usize>> {
    use good_lp::{variable, variables, Expression, Solution, SolverModel};
    let mut vars = variables!();
    let cal = ctx.need.accuracy.calibration;
    let dgrade = &ctx.grades[st.grades[choices.len()]];
    let z: Vec<Vec<good_lp::Variable>> = choices
        .iter()
        .map(|slot| slot.iter().map(|_| vars.add(variable().binary())).collect())
        .collect();
    // BOM lines: one binary per distinct stock part among the choices.
    let parts: Vec<Vec<Vec<usize>>> = choices
        .iter()
        .enumerate()
        .map(|(s, slot)| {
            let grade = &ctx.grades[st.grades[s]];
            slot.iter()
                .map(|ch| ch.stock_parts(grade, dgrade))
                .collect()
        })
        .collect();
    let mut lines: BTreeMap<usize, good_lp::Variable> = BTreeMap::new();
    for part in parts.iter().flatten().flatten() {
        lines
            .entry(*part)
            .or_insert_with(|| vars.add(variable().binary()));
    }
    let mut objective = Expression::from(0.0);
    let fee = ctx.need.search.bom_line_cost;
    let scale = ctx.target_v.max(1e-12);
    for (s, slot) in choices.iter().enumerate() {
        for (c, ch) in slot.iter().enumerate() {
            let e = calibrated(cal, ch.contribution);
            let size = e[0].abs().max(e[1].abs()) / scale;
            // Ties in cost go to the smaller error (the weight is far below
            // any price step).
            let w = match ctx.need.search.objective {
                Objective::Error => size + 1e-6 * ch.cost,
                _ => ch.cost + 1e-7 * size,
            };
            objective += w * z[s][c];
        }
    }
    if ctx.need.search.objective != Objective::Error {
        for v in lines.values() {
            objective += fee * *v;
        }
    }
    let mut model = vars
        .minimise(objective)
        .using(good_lp::solvers::microlp::microlp);
    for (s, slot) in choices.iter().enumerate() {
        let sum: Expression = z[s].iter().copied().map(Expression::from).sum();
        model = model.with(sum.eq(1.0));
        for c in 0..slot.len() {
            for part in &parts[s][c] {
                if let Some(l) = lines.get(part) {
                    model = model.with((Expression::from(z[s][c]) - *l).leq(0.0));
                }
            }
        }
    }
    for end in 0..2 {
        let mut sum = Expression::from(constant[end]);
        for (s, slot) in choices.iter().enumerate() {
            for (c, ch) in slot.iter().enumerate() {
                sum += calibrated(cal, ch.contribution)[end] * z[s][c];
            }
        }
        model = model.with(sum.clone().leq(allowed[end]));
        model = model.with(sum.geq(-allowed[end]));
    }
    // Stock quantities: no part used more often than the shelf holds.
    let mut uses: BTreeMap<usize, Expression> = BTreeMap::new();
    for (s, slot) in choices.iter().enumerate() {
        for c in 0..slot.len() {
            for part in &parts[s][c] {
                if ctx.stock.resistors[*part].stock_qty.is_some() {
                    *uses.entry(*part).or_insert_with(|| Expression::from(0.0)) += z[s][c];
                }
            }
        }
    }
    for (part, used) in uses {
        if let Some(qty) = ctx.stock.resistors[part].stock_qty {
            model = model.with(used.leq(qty as f64));
        }
    }
    for cut in cuts {
        let sum: Expression = cut
            .iter()
            .enumerate()
            .map(|(s, &c)| Expression::from(z[s][c]))
            .sum();
        model = model.with(sum.leq(cut.len() as f64 - 1.0));
    }
    let sol = model.solve().ok()?;
    z.iter()
        .map(|zs| {
            zs.iter()
                .enumerate()
                .max_by(|a, b| sol.value(*a.1).total_cmp(&sol.value(*b.1)))
                .map(|(i, _)| i)
        })
        .collect()
}

/// Value sets already generated, by (group, stage, grade, divider grade):
/// structures of one group share them.
type ChoiceCache = BTreeMap<(usize, usize, usize, usize), Vec<Choice>>;

/// Choices for every stage of a structure, chained through ideal outputs.
fn all_choices(
    ctx: &Ctx<'_>,
    g: &Group,
    st: &Structure,
    cache: &mut ChoiceCache,
) -> Option<Vec<Vec<Choice>>> {
    let n = g.shapes.len();
    let mut prev = ctx.signal;
    let mut out = Vec::new();
    for i in 0..n {
        // The divider grade matters only to a stage with a divider.
        let dgrade = if g.plan(i).is_some() {
            st.grades[n]
        } else {
            usize::MAX
        };
        let key = (st.group, i, st.grades[i], dgrade);
        let ch = cache
            .entry(key)
            .or_insert_with(|| {
                ctx.choices(
                    g,
                    i,
                    &ctx.grades[st.grades[i]],
                    &ctx.grades[st.grades[n]],
                    prev,
                )
            })
            .clone();
        if ch.is_empty() {
            return None;
        }
        for p in prev.iter_mut() {
            *p = g.gains[i] * *p + g.offsets[i];
        }
        out.push(ch);
    }
    Some(out)
}

/// Whether a built design uses no part more often than the stock holds.
fn within_stock(stock: &Stock, built: &Built) -> bool {
    let mut used: BTreeMap<&str, u32> = BTreeMap::new();
    for r in &built.resistors {
        *used.entry(r.part.part_id.as_str()).or_default() += 1;
    }
    for p in &built.packages {
        *used.entry(p.part_id.as_str()).or_default() += 1;
    }
    for s in &built.sources {
        if let Source::Reference(id) = &s.source {
            *used.entry(id.as_str()).or_default() += 1;
        }
    }
    used.iter().all(|(id, &n)| {
        let qty = stock
            .resistor(id)
            .map(|p| p.stock_qty)
            .or_else(|| stock.opamp(id).map(|p| p.stock_qty))
            .or_else(|| stock.inamp(id).map(|p| p.stock_qty))
            .or_else(|| stock.reference(id).map(|p| p.stock_qty))
            .flatten();
        qty.is_none_or(|q| n <= q)
    })
}

fn verify(ctx: &Ctx<'_>, design: Design) -> Option<Candidate> {
    let model = Model::new(ctx.need, ctx.stock, &design).ok()?;
    verify_model(ctx, design, model)
}

/// The full report of a design whose model is built already.
fn verify_model(ctx: &Ctx<'_>, design: Design, model: Model) -> Option<Candidate> {
    if !within_stock(ctx.stock, model.built()) {
        return None;
    }
    let builds = if ctx.need.accuracy.basis == Basis::Yield {
        20_000
    } else {
        0
    };
    let analysis = model.report(ctx.need, builds, 1).ok()?;
    let built = model.built().clone();
    let costing = costing(&built, ctx.need.search.bom_line_cost);
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
fn estimate_random(
    ctx: &Ctx<'_>,
    split: &crate::analysis::RandomSplit,
    grades: &[usize],
) -> [f64; 2] {
    let n = split.per_stage.len() / 2;
    let mut out = [0.0; 2];
    for (end, o) in out.iter_mut().enumerate() {
        let mut worst = split.other_worst[end];
        let mut squares = split.other_squares[end];
        for (slot, sums) in split.per_stage.iter().enumerate() {
            let stage = slot / 2;
            let g = if slot % 2 == 1 {
                &ctx.grades[grades[n]]
            } else {
                &ctx.grades[grades[stage]]
            };
            worst += g.tolerance * sums.tolerance_worst[end] + g.tcr * sums.tcr_worst[end];
            squares += g.tolerance.powi(2) * sums.tolerance_squares[end]
                + g.tcr.powi(2) * sums.tcr_squares[end];
        }
        *o = match ctx.need.accuracy.basis {
            Basis::WorstCase => worst,
            Basis::Rss => squares.sqrt(),
            Basis::Yield => {
                crate::analysis::yield_k_sigma(ctx.need.accuracy.yield_pct) * (squares / 3.0).sqrt()
            }
        };
    }
    out
}

/// What the search learnt about why designs fail, for the infeasible case.
#[derive(Default)]
struct Diagnosis {
    failed_checks: BTreeMap<String, (usize, String)>,
    best: Option<Candidate>,
    best_error_v: Option<f64>,
    closest_rejection: Option<(String, f64)>,
}

impl Diagnosis {
    fn note_findings(&mut self, findings: &[crate::analysis::Finding]) {
        for f in findings.iter().filter(|f| !f.ok) {
            let e = self
                .failed_checks
                .entry(f.check.clone())
                .or_insert((0, f.detail.clone()));
            e.0 += 1;
        }
    }

    fn note(&mut self, c: &Candidate) {
        if !c.analysis.feasible {
            self.note_findings(&c.analysis.findings);
            return;
        }
        let replace = match &self.best {
            None => true,
            Some(b) => c.analysis.basis_pct_fs < b.analysis.basis_pct_fs,
        };
        if replace {
            self.best_error_v = Some(c.analysis.basis_pct_fs / 100.0 * c.analysis.full_scale_v);
            self.best = Some(c.clone());
        }
    }
}

struct RunResult {
    cancelled: bool,
    best: Option<Candidate>,
    found: Vec<Candidate>,
    diagnosis: Diagnosis,
    stats: SearchStats,
}

fn run(ctx: &Ctx<'_>, exhaustive: bool, control: &mut SolveControl<'_>) -> RunResult {
    let start = (control.now_ms)();
    let objective = ctx.need.search.objective;
    let mut diagnosis = Diagnosis::default();
    let mut closest = None;
    let mut floor_miss = None;
    let groups = enumerate_groups(ctx, &mut closest, &mut floor_miss);
    // An accuracy floor is the nearer miss when some group had the swing.
    diagnosis.closest_rejection = floor_miss.or(closest);
    let list = structures(ctx, &groups);
    let total = list.len() as u64;
    let mut best: Option<Candidate> = None;
    let mut found: Vec<Candidate> = Vec::new();
    let mut splits: BTreeMap<usize, crate::analysis::RandomSplit> = BTreeMap::new();
    let mut choice_cache = ChoiceCache::new();
    let mut evaluated = 0u64;
    let mut milp_solves = 0u64;
    let mut proven = true;
    let mut cancelled = false;
    let mut gap = None;
    let mut extra_after_proof = 0usize;
    let mut proof_reached = false;
    let limit = ctx.need.search.time_limit_ms as f64;
    for (done, st) in list.iter().enumerate() {
        let bound_key = match objective {
            Objective::Cost => Some(st.bound),
            Objective::Parts => Some(st.parts as f64),
            Objective::Error => None,
        };
        if !exhaustive {
            if let (Some(b), Some(cur)) = (bound_key, best.as_ref()) {
                if b >= key(objective, cur).0 - 1e-12 && !proof_reached {
                    proof_reached = true;
                }
            }
            if proof_reached {
                // A few more structures for the Pareto front, then stop.
                extra_after_proof += 1;
                if extra_after_proof > 6 {
                    break;
                }
            }
        }
        let elapsed = (control.now_ms)() - start;
        let keep_going = (control.progress)(Progress {
            done: done as u64,
            total,
            best_cost: best.as_ref().map(|b| b.costing.total),
        });
        if !keep_going {
            cancelled = true;
        }
        if !keep_going || elapsed > limit {
            if !proof_reached {
                proven = false;
                if let (Some(b), Some(cur)) = (bound_key, best.as_ref()) {
                    gap = Some((key(objective, cur).0 - b).max(0.0));
                }
            }
            break;
        }
        let g = &groups[st.group];
        if !exhaustive {
            // Screen by the group's shared budget split where one exists: the
            // same netlist with other grades, rescaled.
            if let Some(split) = splits.get(&st.group) {
                let est = estimate_random(ctx, split, &st.grades);
                if est[0] > ctx.target_v * SCREEN_SLACK || est[1] > ctx.target_v * SCREEN_SLACK {
                    continue;
                }
            }
        }
        let Some(choices) = all_choices(ctx, g, st, &mut choice_cache) else {
            continue;
        };
        if exhaustive {
            let n = choices.len();
            let mut idx = vec![0usize; n];
            loop {
                let picks: Vec<&Choice> = idx
                    .iter()
                    .enumerate()
                    .map(|(s, &c)| &choices[s][c])
                    .collect();
                if let Some(c) = verify(ctx, ctx.design(g, &st.grades, &picks)) {
                    evaluated += 1;
                    diagnosis.note(&c);
                    if c.analysis.meets_target {
                        if best.as_ref().is_none_or(|b| better(objective, &c, b)) {
                            best = Some(c.clone());
                        }
                        found.push(c);
                    }
                }
                let mut s = 0;
                loop {
                    if s == n {
                        break;
                    }
                    idx[s] += 1;
                    if idx[s] < choices[s].len() {
                        break;
                    }
                    idx[s] = 0;
                    s += 1;
                }
                if s == n {
                    break;
                }
            }
            continue;
        }
        // Reference design: the best-rounding choice of every stage.
        let picks: Vec<&Choice> = choices.iter().map(|c| &c[0]).collect();
        let reference_design = ctx.design(g, &st.grades, &picks);
        let Ok(model) = Model::new(ctx.need, ctx.stock, &reference_design) else {
            continue;
        };
        evaluated += 1;
        splits
            .entry(st.group)
            .or_insert_with(|| model.random_split(g.shapes.len()));
        // Checks that no choice of values can change end the structure
        // here; a swing or common-mode miss may be the reference values'.
        if !model.feasible() {
            let findings = model.findings();
            diagnosis.note_findings(&findings);
            let fixed = findings.iter().any(|f| {
                !f.ok
                    && matches!(
                        f.check.as_str(),
                        "supply range" | "gain-bandwidth" | "reference headroom" | "part count"
                    )
            });
            if fixed {
                continue;
            }
        }
        let random = model.random_at_ends(ctx.need.accuracy.basis, ctx.need.accuracy.yield_pct);
        let sys = model.systematic_at_ends();
        let quick = (random[0] + sys[0]).max(random[1] + sys[1]);
        let aol = model.open_loop_gain_error();
        let rounding = model.rounding_error();
        let ref_cost = costing(model.built(), ctx.need.search.bom_line_cost).total;
        let could_win = best
            .as_ref()
            .is_none_or(|b| ref_cost < b.costing.total + 1e-12);
        let worth_explaining = diagnosis.best_error_v.is_none_or(|e| quick < e);
        if (quick <= ctx.target_v * 1.0 && could_win) || (best.is_none() && worth_explaining) {
            // The reference's model is reported as it is, not built again.
            if let Some(reference) = verify_model(ctx, reference_design, model) {
                diagnosis.note(&reference);
                if reference.analysis.meets_target {
                    if best
                        .as_ref()
                        .is_none_or(|b| better(objective, &reference, b))
                    {
                        best = Some(reference.clone());
                    }
                    found.push(reference);
                }
            }
        }
        // The random part is the reference's; other value sets of the
        // structure move it (other ratios, other impedances), so the bound
        // on the nominal error allows it to be smaller by RANDOM_SPREAD.
        // The full analysis of each pick is what decides.
        let allowed = [
            ctx.target_v * SCREEN_SLACK - RANDOM_SPREAD * random[0],
            ctx.target_v * SCREEN_SLACK - RANDOM_SPREAD * random[1],
        ];
        if allowed[0] < 0.0 || allowed[1] < 0.0 {
            continue;
        }
        // What the stage closed forms miss (loading by the network, the
        // sensor's resistance where it is not in a closed form) is taken from
        // the reference: its netlist rounding less its closed-form rounding;
        // with the finite-gain error it is the MILP's constant term.
        let cal = ctx.need.accuracy.calibration;
        let closed_form = |picks: &[&Choice]| -> [f64; 2] {
            let (mut k_real, mut b_real) = (1.0, 0.0);
            for ch in picks {
                k_real *= ch.a;
                b_real = ch.a * b_real + ch.c;
            }
            calibrated(
                cal,
                [
                    k_real * ctx.signal[0] + b_real - ctx.ideal[0],
                    k_real * ctx.signal[1] + b_real - ctx.ideal[1],
                ],
            )
        };
        let reference_closed = closed_form(&picks);
        let missed = [
            rounding[0] - reference_closed[0],
            rounding[1] - reference_closed[1],
        ];
        let constant_abs = [missed[0] + aol[0], missed[1] + aol[1]];
        let mut cuts: Vec<Vec<usize>> = Vec::new();
        let mut analysed = 0;
        while cuts.len() < MAX_CUTS && analysed < MAX_ANALYSED {
            milp_solves += 1;
            // The MILP bound is loosened by the linearisation's own error
            // (a stage gain error times the others'); the exact closed-form
            // check below holds the real bound.
            let loose = [allowed[0] * LINEAR_SLACK, allowed[1] * LINEAR_SLACK];
            let Some(sel) = pick(ctx, st, &choices, loose, constant_abs, &cuts) else {
                break;
            };
            let picks: Vec<&Choice> = sel
                .iter()
                .enumerate()
                .map(|(s, &c)| &choices[s][c])
                .collect();
            // The exact nominal error of the pick from the stage closed
            // forms: the linearisation is rough for coarse series, so a
            // pick it admits wrongly is cut here, before any analysis.
            let nominal = closed_form(&picks);
            if (0..2).any(|e| (nominal[e] + constant_abs[e]).abs() > allowed[e]) {
                cuts.push(sel);
                continue;
            }
            analysed += 1;
            // The first-order total of the pick's own model first: a pick
            // that misses by it is cut without the corner solves of a full
            // report (the worst case is never below the first-order sum).
            let design = ctx.design(g, &st.grades, &picks);
            let Ok(pick_model) = Model::new(ctx.need, ctx.stock, &design) else {
                cuts.push(sel);
                continue;
            };
            let first_order = {
                let r =
                    pick_model.random_at_ends(ctx.need.accuracy.basis, ctx.need.accuracy.yield_pct);
                let sys = pick_model.systematic_at_ends();
                (r[0] + sys[0]).max(r[1] + sys[1])
            };
            let quick_miss = ctx.need.accuracy.basis != Basis::Yield && first_order > ctx.target_v;
            if !pick_model.feasible() || quick_miss {
                cuts.push(sel);
                continue;
            }
            let Some(c) = verify_model(ctx, design, pick_model) else {
                cuts.push(sel);
                continue;
            };
            evaluated += 1;
            diagnosis.note(&c);
            if c.analysis.meets_target {
                if best.as_ref().is_none_or(|b| better(objective, &c, b)) {
                    best = Some(c.clone());
                }
                found.push(c);
                break;
            }
            cuts.push(sel);
        }
    }
    let elapsed_ms = (control.now_ms)() - start;
    RunResult {
        cancelled,
        best,
        found,
        diagnosis,
        stats: SearchStats {
            mode: if exhaustive {
                "exhaustive".into()
            } else {
                "optimised".into()
            },
            evaluated,
            structures: total,
            milp_solves,
            elapsed_ms,
            proven_optimal: proven,
            gap,
        },
    }
}

/// The cost/error Pareto front of verified designs, cheapest first.
fn pareto(mut found: Vec<Candidate>) -> Vec<Candidate> {
    found.sort_by(|a, b| {
        a.costing
            .total
            .total_cmp(&b.costing.total)
            .then(a.analysis.basis_pct_fs.total_cmp(&b.analysis.basis_pct_fs))
    });
    let mut out: Vec<Candidate> = Vec::new();
    for c in found {
        if out.iter().any(|o| o.design == c.design) {
            continue;
        }
        let dominated = out
            .iter()
            .any(|o| o.analysis.basis_pct_fs <= c.analysis.basis_pct_fs + 1e-12);
        if !dominated {
            out.push(c);
        }
        if out.len() >= 12 {
            break;
        }
    }
    out
}

/// Search for the cheapest design meeting the need (or, with
/// `objective = "error"` / `"parts"`, the most accurate / the fewest parts).
pub fn solve(
    need: &Need,
    stock: &Stock,
    exhaustive: bool,
    control: &mut SolveControl<'_>,
) -> Result<SolveOutcome> {
    solve_inner(need, stock, exhaustive, control, true)
}

fn solve_inner(
    need: &Need,
    stock: &Stock,
    exhaustive: bool,
    control: &mut SolveControl<'_>,
    suggest: bool,
) -> Result<SolveOutcome> {
    let stock = augment_stock(need, stock);
    let (k, b) = need.ideal_transfer();
    let signal = [need.sensor.signal_low.0, need.sensor.signal_high.0];
    let ctx = Ctx {
        need,
        stock: &stock,
        grades: grades(&stock),
        signal,
        ideal: [k * signal[0] + b, k * signal[1] + b],
        target_v: need.accuracy.max_error_pct_fs / 100.0 * need.full_scale(),
    };
    let r = run(&ctx, exhaustive, control);
    let mut alternatives = pareto(r.found);
    if let Some(best) = &r.best {
        alternatives.retain(|a| {
            a.design != best.design
                && !((a.costing.total - best.costing.total).abs() < 1e-12
                    && (a.analysis.basis_pct_fs - best.analysis.basis_pct_fs).abs() < 1e-12)
        });
        alternatives.insert(0, best.clone());
    }
    let infeasible = if r.best.is_none() && r.cancelled {
        Some(Infeasibility {
            binding: "stopped before any design was found".into(),
            best_error_pct_fs: None,
            target_pct_fs: need.accuracy.max_error_pct_fs,
            largest: Vec::new(),
            suggestions: Vec::new(),
        })
    } else if r.best.is_none() {
        Some(explain(need, &stock, &r.diagnosis, control, suggest))
    } else {
        None
    };
    Ok(SolveOutcome {
        best: r.best,
        alternatives,
        stats: r.stats,
        infeasible,
    })
}

fn explain(
    need: &Need,
    stock: &Stock,
    d: &Diagnosis,
    control: &mut SolveControl<'_>,
    suggest: bool,
) -> Infeasibility {
    let target = need.accuracy.max_error_pct_fs;
    // The best error this stock can reach: a search for the most accurate
    // design, whatever its cost (the cost search screens out the accurate
    // but dear structures before analysing them).
    // It is searched over the best resistor grade on the shelf only, which
    // keeps it to a fraction of the cost search's structures.
    let most_accurate = if suggest {
        let mut n = need.clone();
        n.search.objective = Objective::Error;
        n.accuracy.max_error_pct_fs = 100.0;
        n.search.time_limit_ms = need.search.time_limit_ms.min(1000);
        let best_grade = stock
            .resistors
            .iter()
            .map(|r| (r.tolerance.0, r.tcr.0))
            .reduce(|a, b| if (b.0, b.1) < (a.0, a.1) { b } else { a });
        let mut precise = stock.clone();
        if let Some((tol, tcr)) = best_grade {
            precise
                .resistors
                .retain(|r| r.tolerance.0 == tol && r.tcr.0 == tcr);
        }
        solve_inner(&n, &precise, false, control, false)
            .ok()
            .and_then(|o| o.best)
    } else {
        None
    };
    let best_known = match (&d.best, most_accurate) {
        (Some(b), Some(m)) if m.analysis.basis_pct_fs < b.analysis.basis_pct_fs => Some(m),
        (Some(b), _) => Some(b.clone()),
        (None, m) => m,
    };
    let (binding, best_error, largest) = match &best_known {
        Some(b) => {
            let e = b.analysis.basis_pct_fs;
            let mut lines: Vec<(String, f64)> = b
                .analysis
                .budget
                .iter()
                .map(|l| (l.source.clone(), l.pct_fs))
                .collect();
            lines.sort_by(|x, y| y.1.total_cmp(&x.1));
            lines.truncate(4);
            (
                format!(
                    "accuracy: the best design this stock allows reaches {e:.4} % FS on the {} basis against a target of {target:.4} % FS ({:.4} % FS over)",
                    basis_name(need.accuracy.basis),
                    e - target
                ),
                Some(e),
                lines,
            )
        }
        None => {
            let worst = d.failed_checks.iter().max_by_key(|(_, v)| v.0);
            match worst {
                Some((check, (_, detail))) => (format!("{check}: no structure passes; for example {detail}"), None, Vec::new()),
                None => match &d.closest_rejection {
                    Some((why, _)) => (format!("no structure passes; the nearest miss: {why}"), None, Vec::new()),
                    None => ("no structure can be built from this stock for this need (check the topologies, the supplies and the offset sources)".into(), None, Vec::new()),
                },
            }
        }
    };
    let mut suggestions = Vec::new();
    if suggest {
        let mut tries: Vec<(String, Need)> = Vec::new();
        for (cal, name) in [
            (Calibration::Offset, "offset"),
            (Calibration::TwoPoint, "two-point"),
        ] {
            if need.accuracy.calibration != cal
                && !(need.accuracy.calibration == Calibration::TwoPoint)
            {
                let mut n = need.clone();
                n.accuracy.calibration = cal;
                tries.push((
                    format!("calibrate after assembly: calibration = \"{name}\""),
                    n,
                ));
            }
        }
        if need.accuracy.basis == Basis::WorstCase {
            let mut n = need.clone();
            n.accuracy.basis = Basis::Rss;
            tries.push((
                "judge the budget by RSS instead of worst case: basis = \"rss\"".into(),
                n,
            ));
        }
        if need.search.max_stages < 3 {
            let mut n = need.clone();
            n.search.max_stages = 3;
            tries.push(("allow up to three stages: max_stages = 3".into(), n));
        }
        if let Some(e) = best_error {
            let relaxed = (e * 1.05 * 1000.0).ceil() / 1000.0;
            let mut n = need.clone();
            n.accuracy.max_error_pct_fs = relaxed;
            tries.push((format!("relax the target: max_error_pct_fs = {relaxed}"), n));
        }
        if need.adc.margin.0 > 0.0 {
            let mut n = need.clone();
            n.adc.margin = crate::units::Percent(need.adc.margin.0 / 2.0);
            tries.push((
                format!(
                    "halve the ADC margin: margin_pct = {}",
                    need.adc.margin.0 / 2.0
                ),
                n,
            ));
        }
        if need.supply.negative.0 == 0.0 && need.supply.positive.0 > 0.0 {
            let mut n = need.clone();
            n.supply.negative = crate::units::Volts(-need.supply.positive.0);
            tries.push((
                format!(
                    "add a negative rail: negative_v = {}",
                    -need.supply.positive.0
                ),
                n,
            ));
        }
        // Stock the search did not use for want of a grade: every resistor
        // at the best tolerance and TCR the stock offers.
        if let (Some(tol), Some(tcr)) = (
            stock
                .resistors
                .iter()
                .map(|r| r.tolerance.0)
                .reduce(f64::min),
            stock.resistors.iter().map(|r| r.tcr.0).reduce(f64::min),
        ) {
            if stock
                .resistors
                .iter()
                .any(|r| r.tolerance.0 > tol || r.tcr.0 > tcr)
            {
                let mut tighter = stock.clone();
                for r in &mut tighter.resistors {
                    r.tolerance = crate::units::Percent(tol);
                    r.tcr = crate::units::PpmPerC(tcr);
                }
                if let Ok(o) = solve_inner(need, &tighter, false, control, false) {
                    if let Some(b) = o.best {
                        suggestions.push(Suggestion {
                            change: format!(
                                "stock every resistor value of the design in the best grade on the shelf ({tol} %, {tcr} ppm/degC)"
                            ),
                            cost: b.costing.total,
                            error_pct_fs: b.analysis.basis_pct_fs,
                        });
                    }
                }
            }
        }
        for (change, n) in tries {
            if let Ok(o) = solve_inner(&n, stock, false, control, false) {
                if let Some(b) = o.best {
                    suggestions.push(Suggestion {
                        change,
                        cost: b.costing.total,
                        error_pct_fs: b.analysis.basis_pct_fs,
                    });
                }
            }
        }
    }
    Infeasibility {
        binding,
        best_error_pct_fs: best_error,
        target_pct_fs: target,
        largest,
        suggestions,
    }
}

fn basis_name(b: Basis) -> &'static str {
    match b {
        Basis::WorstCase => "worst-case",
        Basis::Rss => "RSS",
        Basis::Yield => "yield",
    }
}
