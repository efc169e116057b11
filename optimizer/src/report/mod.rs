//! Reports of designs and searches: the JSON report object (the contract
//! the CLI's `--json`, the page and outside checks read; see
//! `docs/report.md`), the bundle the front ends receive, the error report,
//! and the plain-text report for people.
//!
//! - [`types`]: the serialisable structs (the one definition of every
//!   field that crosses to a front end);
//! - [`json`]: building them from the analysis and the search;
//! - [`text`]: the text report, written from the same typed structs.
//!
//! Everything here is presentation of numbers that [`crate::analysis`] and
//! [`crate::search`] computed; nothing is recomputed or estimated.
//!
//! Invariants of the `design` object, held by tests:
//! - every op-amp *section* is its own entry of `parts[]`, named by its
//!   section designator (`U1A`, or `U1` for a single), because the SPICE
//!   export names `VOS_<ref>` after it; the package price sits on the first
//!   section of a package and the others carry 0 with `shares_package`;
//! - so the sum of `unit_cost` over `parts[]` is the price of the parts on
//!   the board;
//! - `file` is the design in the format [`crate::design::parse_design`]
//!   reads, so a reported design can be fed back to `analyze`.

pub mod json;
pub mod need_echo;
pub mod text;
pub mod types;

pub use json::{analysis_report, design_report, need_figures, shortfall, solve_report};
pub use text::{design_text, report_text};
pub use types::{Artifacts, Bundle, DesignReport, ErrorKind, ErrorReport, Report, Status};

use crate::need::Need;
use crate::search::{Candidate, SolveOutcome};
use crate::stock::Stock;
use serde_json::Value;

/// The cautions every report carries.
pub const CAUTIONS: &str = "spanfit designs low-voltage signal conditioning only; verify on the bench; follow applicable standards and codes";

/// A report struct as a JSON value (`null` if it cannot be written, which
/// the types here never cause: their maps have text keys).
fn to_value(value: &impl serde::Serialize) -> Value {
    serde_json::to_value(value).unwrap_or(Value::Null)
}

/// The design object of one evaluated design, as a JSON value.
pub fn design_json(need: &Need, stock: &Stock, candidate: &Candidate) -> Value {
    to_value(&design_report(need, stock, candidate))
}

/// The derived figures of a need (`need` in the report), as a JSON value.
pub fn need_json(need: &Need) -> Value {
    to_value(&need_figures(need))
}

/// The report of a search (the object `spanfit solve --json` prints), as a
/// JSON value; see [`solve_report`].
pub fn solve_json(need: &Need, stock: &Stock, outcome: &SolveOutcome) -> Value {
    to_value(&solve_report(need, stock, outcome))
}

/// A plain-text report of one design; see [`design_text`].
pub fn text_report(need: &Need, stock: &Stock, candidate: &Candidate) -> String {
    design_text(need, &design_report(need, stock, candidate))
}

/// A plain-text report of a search; see [`report_text`].
pub fn solve_text_report(need: &Need, stock: &Stock, outcome: &SolveOutcome) -> String {
    report_text(need, &solve_report(need, stock, outcome))
}

#[cfg(test)]
mod tests {
    use super::json::designator_key;
    use super::*;

    #[test]
    fn designators_sort_naturally() {
        let mut v = vec!["U10", "U2B", "U2A", "U1"];
        v.sort_by_key(|d| designator_key(d));
        assert_eq!(v, ["U1", "U2A", "U2B", "U10"]);
    }

    /// The typed structs write their keys in sorted order, byte for byte
    /// what a `serde_json::Value` (sorted maps) writes: the order the JSON
    /// has always had. Checked on a solve report with alternatives and an
    /// analysis report with a histogram and in-amp parts.
    #[test]
    fn typed_reports_serialise_as_sorted_json() {
        let need = crate::need::parse_need(crate::demo::NEED_TOML.as_bytes(), "demo.toml").unwrap();
        let stock = crate::stock::parse_stock(&crate::demo::stock_files()).unwrap();
        let mut progress = |_: crate::search::Progress| true;
        let clock = || 0.0;
        let mut control = crate::search::SolveControl {
            progress: &mut progress,
            now_ms: &clock,
        };
        let outcome = crate::search::solve(
            &need,
            &stock,
            crate::search::SearchMode::Optimised,
            &mut control,
        )
        .unwrap();
        assert!(!outcome.alternatives.is_empty());
        let design = crate::design::parse_design(
            include_str!("../../../examples/demo-design.json").as_bytes(),
            "demo-design.json",
            &stock,
        )
        .unwrap();
        let analysed = crate::api::evaluate(&need, &stock, &design).unwrap();
        for report in [
            solve_report(&need, &stock, &outcome),
            analysis_report(&need, &stock, &analysed),
        ] {
            let direct = serde_json::to_string_pretty(&report).unwrap();
            let sorted = serde_json::to_string_pretty(&to_value(&report)).unwrap();
            assert_eq!(direct, sorted);
        }
    }

    /// The text of an analysis report is the text of its design: no search
    /// line, no alternatives, no infeasibility section; and it shows the
    /// Monte Carlo seed the JSON leaves out.
    #[test]
    fn analysis_text_is_the_design_text() {
        let need = crate::need::parse_need(crate::demo::NEED_TOML.as_bytes(), "demo.toml").unwrap();
        let stock = crate::stock::parse_stock(&crate::demo::stock_files()).unwrap();
        let design = crate::design::parse_design(
            include_str!("../../../examples/demo-design.json").as_bytes(),
            "demo-design.json",
            &stock,
        )
        .unwrap();
        let c = crate::api::evaluate(&need, &stock, &design).unwrap();
        let report = analysis_report(&need, &stock, &c);
        let text = report_text(&need, &report);
        assert_eq!(text, text_report(&need, &stock, &c));
        assert!(!text.contains("Search ") && !text.contains("Alternatives"));
        let seed = c.analysis.yield_result.as_ref().unwrap().seed;
        assert!(text.contains(&format!("(seed {seed})")), "{text}");
    }
}
