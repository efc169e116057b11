//! Why a need is infeasible: what the search learnt (failed checks, the
//! most accurate design, the nearest rejected group), the binding limit in
//! words, and changes to the need or stock verified by solving again.

use super::{
    solve_with, Candidate, Infeasibility, NeedChange, Progress, SearchMode, SolveControl,
    StockChange, Suggestion, Suggestions,
};
use crate::analysis::Finding;
use crate::need::{Basis, Calibration, Need, Objective};
use crate::stock::Stock;
use std::collections::BTreeMap;

/// What the search learnt about why designs fail, for the infeasible case.
#[derive(Default)]
pub(super) struct Diagnosis {
    /// Failed check name to (designs failing it, one detail).
    failed_checks: BTreeMap<String, (usize, String)>,
    /// The most accurate feasible design analysed.
    best: Option<Candidate>,
    /// Its error, volts.
    pub(super) best_error_v: Option<f64>,
    /// The nearest miss among the groups turned away.
    pub(super) closest_rejection: Option<(String, f64)>,
}

impl Diagnosis {
    /// Count the failed checks of an analysis (keeping the first failure
    /// of each check in plain words).
    pub(super) fn note_findings(&mut self, findings: &[Finding]) {
        for f in findings.iter().filter(|f| !f.ok) {
            let entry = self
                .failed_checks
                .entry(f.check.clone())
                .or_insert_with(|| (0, f.plain_words()));
            entry.0 += 1;
        }
    }

    /// Learn from a verified design.
    pub(super) fn note(&mut self, c: &Candidate) {
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

/// What the explanation may spend: the caller's control, the deadline of
/// the whole call (its `time_limit_ms` from the call's start) and the
/// progress total of the main search, which the re-solves report against
/// so the caller sees one total per call.
pub(super) struct Budget<'c, 'a> {
    /// The caller's clock and progress callback.
    pub(super) control: &'c mut SolveControl<'a>,
    /// When the whole call must end, on the caller's clock, ms.
    pub(super) deadline_ms: f64,
    /// The main search's structure count.
    pub(super) total: u64,
}

impl Budget<'_, '_> {
    /// Solve a changed need with what is left of the call's time (at
    /// most `cap_ms`), reporting progress as the main search's end; `None`
    /// when no time is left or the caller cancelled.
    fn solve(&mut self, need: &Need, stock: &Stock, cap_ms: u64) -> Option<super::SolveOutcome> {
        let left = self.deadline_ms - (self.control.now_ms)();
        if left < 1.0 {
            return None;
        }
        let mut limited = need.clone();
        limited.search.time_limit_ms = (left.floor() as u64).min(cap_ms).max(1);
        let total = self.total;
        let outer = &mut *self.control.progress;
        let mut forward = |_: Progress| {
            outer(Progress {
                done: total,
                total,
                best_cost: None,
            })
        };
        let mut sub = SolveControl {
            progress: &mut forward,
            now_ms: self.control.now_ms,
        };
        let outcome = solve_with(
            &limited,
            stock,
            SearchMode::Optimised,
            &mut sub,
            Suggestions::Skip,
        )
        .ok()?;
        // A cancel stops the rest of the explanation too.
        if outcome.stopped == Some(super::Stop::Cancelled) {
            self.deadline_ms = f64::NEG_INFINITY;
        }
        Some(outcome)
    }
}

/// The best error this stock can reach: a search for the most accurate
/// design, whatever its cost (the cost search screens out the accurate but
/// dear structures before analysing them). It is searched over the best
/// resistor grade on the shelf only, which keeps it to a fraction of the
/// cost search's structures.
fn most_accurate(need: &Need, stock: &Stock, budget: &mut Budget<'_, '_>) -> Option<Candidate> {
    let mut loose = need.clone();
    loose.search.objective = Objective::Error;
    loose.accuracy.filter_target_pct_fs = Some(need.accuracy.filter_target_pct_fs());
    loose.accuracy.max_error_pct_fs = 100.0;
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
    budget.solve(&loose, &precise, 1000).and_then(|o| o.best)
}

/// The accuracy limit of the most accurate design known: its words, its
/// error on the need's basis (% FS) and its four largest budget lines.
fn accuracy_limit(need: &Need, b: &Candidate) -> (String, f64, Vec<(String, f64)>) {
    let e = b.analysis.basis_pct_fs;
    let mut lines: Vec<(String, f64)> = b
        .analysis
        .budget
        .iter()
        .map(|l| (l.source.clone(), l.pct_fs))
        .collect();
    lines.sort_by(|x, y| y.1.total_cmp(&x.1));
    lines.truncate(4);
    (limit_words(need, b), e, lines)
}

/// What stops the most accurate design known, in words. Where its error
/// is over the target, the accuracy; where it is within the target, the
/// checks it fails (the design misses the need by them, not by its
/// error), the first of them in plain words.
pub(crate) fn limit_words(need: &Need, b: &Candidate) -> String {
    let e = b.analysis.basis_pct_fs;
    let target = need.accuracy.max_error_pct_fs;
    let basis = basis_name(need.accuracy.basis);
    if e <= target {
        let failed: Vec<&crate::analysis::Finding> =
            b.analysis.findings.iter().filter(|f| !f.ok).collect();
        if let Some(first) = failed.first() {
            let mut labels: Vec<&str> = failed.iter().map(|f| f.check.as_str()).collect();
            labels.dedup();
            return format!(
                "{}: the most accurate design found reaches {e:.4} % FS on the {basis} basis, \
                 within the target of {target:.4} % FS, but fails the {} check{}; {}",
                first.check,
                labels.join(", "),
                if labels.len() == 1 { "" } else { "s" },
                first.plain_words()
            );
        }
        return format!(
            "accuracy: the most accurate design found reaches {e:.4} % FS on the {basis} basis, \
             within the target of {target:.4} % FS, yet it does not meet the need"
        );
    }
    format!(
        "accuracy: the most accurate design found reaches {e:.4} % FS on the {basis} basis against a target of {target:.4} % FS ({:.4} % FS over)",
        e - target
    )
}

/// Restate an explanation after its best attempt was analysed again as it
/// is reported (with its filter pair, against the need itself), so the
/// binding words, the best error and the largest lines are that report's.
/// `old_words` are [`limit_words`] of the attempt before.
pub(crate) fn restate_best(
    need: &Need,
    infeasible: &mut Infeasibility,
    attempt: &Candidate,
    old_words: &str,
) {
    let (words, e, lines) = accuracy_limit(need, attempt);
    if let Some(rest) = infeasible.binding.strip_prefix(old_words) {
        infeasible.binding = format!("{words}{rest}");
    }
    infeasible.best_error_pct_fs = Some(e);
    infeasible.largest = lines;
}

/// The binding limit in words, the best error (% FS) and the largest
/// contributors of the best design known.
fn binding_limit(
    need: &Need,
    diagnosis: &Diagnosis,
    best_known: Option<&Candidate>,
) -> (String, Option<f64>, Vec<(String, f64)>) {
    match best_known {
        Some(b) => {
            let (words, e, lines) = accuracy_limit(need, b);
            (words, Some(e), lines)
        }
        None => {
            let worst = diagnosis.failed_checks.iter().max_by_key(|(_, v)| v.0);
            match worst {
                Some((check, (count, words))) => (
                    format!(
                        "{check}: no structure the search tried passes ({count} of the designs analysed fail it); for example {words}"
                    ),
                    None,
                    Vec::new(),
                ),
                None => match &diagnosis.closest_rejection {
                    Some((why, _)) => (format!("no structure the search tried passes; the nearest miss: {why}"), None, Vec::new()),
                    None => ("the search built no structure from this stock for this need (check the topologies, the supplies and the offset sources)".into(), None, Vec::new()),
                },
            }
        }
    }
}

/// Explain an infeasible need: the binding limit and, with
/// [`Suggestions::Try`], the verified changes.
pub(super) fn explain(
    need: &Need,
    stock: &Stock,
    diagnosis: &Diagnosis,
    budget: &mut Budget<'_, '_>,
    suggestions: Suggestions,
) -> Infeasibility {
    let most_accurate = match suggestions {
        Suggestions::Try => most_accurate(need, stock, budget),
        Suggestions::Skip => None,
    };
    let best_known = match (&diagnosis.best, most_accurate) {
        (Some(b), Some(m)) if m.analysis.basis_pct_fs < b.analysis.basis_pct_fs => Some(m),
        (Some(b), _) => Some(b.clone()),
        (None, m) => m,
    };
    let (binding, best_error, largest) = binding_limit(need, diagnosis, best_known.as_ref());
    let verified = match suggestions {
        Suggestions::Try => verified_suggestions(need, stock, best_error, budget),
        Suggestions::Skip => Vec::new(),
    };
    Infeasibility {
        // The caller knows whether its walk proves it.
        proven: false,
        binding,
        best_error_pct_fs: best_error,
        target_pct_fs: need.accuracy.max_error_pct_fs,
        largest,
        suggestions: verified,
        best_attempt: best_known.map(Box::new),
    }
}

/// Changes to the need worth trying, each with the need it makes.
fn need_changes(need: &Need, best_error: Option<f64>) -> Vec<(String, Need)> {
    let mut tries: Vec<(String, Need)> = Vec::new();
    for (calibration, name) in [
        (Calibration::Offset, "offset"),
        (Calibration::TwoPoint, "two-point"),
    ] {
        if need.accuracy.calibration != calibration
            && need.accuracy.calibration != Calibration::TwoPoint
        {
            let mut changed = need.clone();
            changed.accuracy.calibration = calibration;
            tries.push((
                format!("calibrate after assembly: calibration = \"{name}\""),
                changed,
            ));
        }
    }
    if need.accuracy.basis == Basis::WorstCase {
        let mut changed = need.clone();
        changed.accuracy.basis = Basis::Rss;
        tries.push((
            "judge the budget by RSS instead of worst case: basis = \"rss\"".into(),
            changed,
        ));
    }
    if need.search.max_stages < 3 {
        let mut changed = need.clone();
        changed.search.max_stages = 3;
        tries.push(("allow up to three stages: max_stages = 3".into(), changed));
    }
    if let Some(e) = best_error {
        let relaxed = (e * 1.05 * 1000.0).ceil() / 1000.0;
        let mut changed = need.clone();
        changed.accuracy.max_error_pct_fs = relaxed;
        tries.push((
            format!("relax the target: max_error_pct_fs = {relaxed}"),
            changed,
        ));
    }
    if need.adc.margin.0 > 0.0 {
        let mut changed = need.clone();
        changed.adc.margin = crate::units::Percent(need.adc.margin.0 / 2.0);
        tries.push((
            format!(
                "halve the ADC margin: margin_pct = {}",
                need.adc.margin.0 / 2.0
            ),
            changed,
        ));
    }
    if need.supply.negative.0 == 0.0 && need.supply.positive.0 > 0.0 {
        let mut changed = need.clone();
        changed.supply.negative = crate::units::Volts(-need.supply.positive.0);
        tries.push((
            format!(
                "add a negative rail: negative_v = {}",
                -need.supply.positive.0
            ),
            changed,
        ));
    }
    tries
}

/// ADC margins tried, in %, smallest first, for a need no structure
/// passes: the first that makes the need feasible is suggested.
const MARGIN_LADDER_PCT: [f64; 4] = [1.0, 2.0, 5.0, 10.0];

/// For a need no structure passes, the smallest ADC margin of
/// [`MARGIN_LADDER_PCT`] above the need's own that makes it feasible,
/// verified by solving again ("set adc.margin_pct to N"): with no margin
/// the output must reach the ends of the ADC window, which a single
/// supply puts at or near a rail, and untrimmed errors then clip.
fn margin_suggestion(
    need: &Need,
    stock: &Stock,
    budget: &mut Budget<'_, '_>,
) -> Option<Suggestion> {
    for margin in MARGIN_LADDER_PCT {
        if margin <= need.adc.margin.0 {
            continue;
        }
        let mut changed = need.clone();
        changed.adc.margin = crate::units::Percent(margin);
        let change = format!(
            "leave room at the ends of the ADC window: set adc.margin_pct to {margin} (it is {})",
            need.adc.margin.0
        );
        let apply = need_diff(need, &changed);
        if let Some(found) = try_change(change, &changed, stock, budget, apply, Vec::new()) {
            return Some(found);
        }
    }
    None
}

/// The need keys whose values differ between two needs, with their values
/// in `changed`, in the need file's keys (from the need's own echo, so
/// every change `need_changes` makes is carried without a list of its own).
fn need_diff(need: &Need, changed: &Need) -> Vec<NeedChange> {
    const SECTIONS: [&str; 6] = ["sensor", "adc", "supply", "accuracy", "search", "stock"];
    let before = crate::report::need_echo::need_tables(need);
    let after = crate::report::need_echo::need_tables(changed);
    let mut out = Vec::new();
    for ((section, old), new) in SECTIONS.iter().zip(&before).zip(&after) {
        let (Some(old), Some(new)) = (old.as_object(), new.as_object()) else {
            continue;
        };
        for (key, value) in new {
            if old.get(key) != Some(value) {
                out.push(NeedChange {
                    key: format!("{section}.{key}"),
                    value: value.clone(),
                });
            }
        }
        for key in old.keys().filter(|k| !new.contains_key(*k)) {
            out.push(NeedChange {
                key: format!("{section}.{key}"),
                value: serde_json::Value::Null,
            });
        }
    }
    out
}

/// The cheapest design of a changed need or stock, as a suggestion
/// carrying the change as need keys (`apply`) or stock columns
/// (`apply_stock`).
fn try_change(
    change: String,
    need: &Need,
    stock: &Stock,
    budget: &mut Budget<'_, '_>,
    apply: Vec<NeedChange>,
    apply_stock: Vec<StockChange>,
) -> Option<Suggestion> {
    let outcome = budget.solve(need, stock, need.search.time_limit_ms)?;
    outcome.best.map(|b| Suggestion {
        change,
        cost: b.costing.total,
        error_pct_fs: b.analysis.basis_pct_fs,
        apply,
        apply_stock,
    })
}

/// Every change that makes the need feasible, each verified by a search.
fn verified_suggestions(
    need: &Need,
    stock: &Stock,
    best_error: Option<f64>,
    budget: &mut Budget<'_, '_>,
) -> Vec<Suggestion> {
    let tries = need_changes(need, best_error);
    let mut out = Vec::new();
    // Stock the search did not use for want of a grade: every resistor at
    // the best tolerance and TCR the stock offers.
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
            let change = format!(
                "stock every resistor value of the design in the best grade on the shelf ({tol} %, {tcr} ppm/degC)"
            );
            let apply_stock = [("tolerance_pct", tol), ("tcr_ppm_per_c", tcr)]
                .map(|(column, value)| StockChange {
                    file: "resistors.csv".into(),
                    column: column.into(),
                    value,
                })
                .to_vec();
            out.extend(try_change(
                change,
                need,
                &tighter,
                budget,
                Vec::new(),
                apply_stock,
            ));
        }
    }
    for (change, changed) in tries {
        let apply = need_diff(need, &changed);
        out.extend(try_change(
            change,
            &changed,
            stock,
            budget,
            apply,
            Vec::new(),
        ));
    }
    if best_error.is_none() {
        out.extend(margin_suggestion(need, stock, budget));
    }
    out
}

fn basis_name(b: Basis) -> &'static str {
    match b {
        Basis::WorstCase => "worst-case",
        Basis::Rss => "RSS",
        Basis::Yield => "yield",
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn demo() -> Need {
        crate::need::parse_need(crate::demo::NEED_TOML.as_bytes(), "demo.toml").unwrap()
    }

    /// A best attempt within the accuracy target that misses the need by
    /// a check is explained by that check, not as an accuracy shortfall
    /// (no "over" of a negative amount): the invented demo design against
    /// the demo need asked for 60 dB of rejection at 1 kHz.
    #[test]
    fn an_attempt_within_the_target_is_explained_by_its_failed_check() {
        let text = crate::demo::NEED_TOML.replacen(
            "[adc]\n",
            "[adc]\nsample_rate_hz = 2000\nalias_rejection_db = 60\n",
            1,
        );
        let need = crate::need::parse_need(text.as_bytes(), "alias.toml").unwrap();
        let stock = crate::stock::parse_stock(&crate::demo::stock_files()).unwrap();
        let design = crate::design::parse_design(
            include_bytes!("../../../examples/demo-solved-design.json"),
            "demo-solved-design.json",
            &stock,
        )
        .unwrap();
        let attempt = crate::api::evaluate(&need, &stock, &design).unwrap();
        assert!(attempt.analysis.basis_pct_fs <= need.accuracy.max_error_pct_fs);
        let words = limit_words(&need, &attempt);
        assert!(words.starts_with("alias rejection: "), "{words}");
        assert!(words.contains("within the target"), "{words}");
        assert!(words.contains("dB short"), "{words}");
        assert!(!words.contains("over)"), "{words}");
        // Over the target, the words are the accuracy's.
        let mut tight = need.clone();
        tight.accuracy.max_error_pct_fs = attempt.analysis.basis_pct_fs / 2.0;
        let words = limit_words(&tight, &attempt);
        assert!(words.starts_with("accuracy: "), "{words}");
        assert!(words.contains("% FS over)"), "{words}");
    }

    /// The change of a suggestion is exactly the keys its need changes, in
    /// need-file keys and values.
    #[test]
    fn need_diff_names_the_changed_keys_only() {
        let need = demo();
        assert!(need_diff(&need, &need).is_empty());
        for (change, changed) in need_changes(&need, Some(0.7)) {
            assert!(
                !need_diff(&need, &changed).is_empty(),
                "{change}: no key changed"
            );
        }
        let mut changed = need.clone();
        changed.accuracy.basis = Basis::Rss;
        changed.adc.margin = crate::units::Percent(1.0);
        let diff = need_diff(&need, &changed);
        let keys: Vec<(&str, &serde_json::Value)> =
            diff.iter().map(|d| (d.key.as_str(), &d.value)).collect();
        assert_eq!(
            keys,
            [
                ("adc.margin_pct", &serde_json::json!(1.0)),
                ("accuracy.basis", &serde_json::json!("rss"))
            ]
        );
    }
}
