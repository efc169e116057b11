//! The front-end surface: the few calls the CLI and the wasm crate make.
//! They take text and bytes and return the typed bundle of
//! [`crate::report::types`] (the JSON contract of `docs/report.md`), so
//! both front ends show the same numbers from the same analysis.
//!
//! Every bundle has the same three parts, for `solve` and `analyze` alike:
//! `report` (the report object), `artifacts` (`spice`, `svg`, `bom_csv`
//! and `bom_table` of the design, or nulls when there is no design) and
//! `text`, the plain-text report.

use crate::analysis::analyze;
use crate::design::{parse_design, Design};
use crate::error::Result;
use crate::need::{Basis, Need};
use crate::report::{self, Artifacts, Bundle, Report};
use crate::search::{costing, Candidate};
use crate::stock::{Stock, StockFile};
use serde_json::Value;

pub use crate::search::{Progress, SolveControl};

/// Monte Carlo builds run for every reported design, so the page can show
/// a histogram.
pub const MONTE_CARLO_BUILDS: u64 = 10_000;
/// Monte Carlo builds when the need's basis is `yield` (the yield decides
/// whether the target is met, so it gets a tighter interval).
pub const MONTE_CARLO_BUILDS_YIELD: u64 = crate::montecarlo::YIELD_BASIS_BUILDS;
/// The seed of those runs: the same design gives the same histogram.
pub const MONTE_CARLO_SEED: u64 = 1;

/// Give a searched design its filter at the ADC input (the search
/// analyses designs without one, its noise and droop at the filter rules'
/// bounds), analyse it again as it is reported, with the pair (or with
/// none where none fits), and cost it with the pair.
fn with_filter(need: &Need, stock: &Stock, candidate: &mut Candidate) {
    if candidate.built.filter.is_none() {
        let builds = if candidate.analysis.yield_result.is_some() {
            monte_carlo_builds(need)
        } else {
            0
        };
        if let Ok((model, analysis)) =
            analyze(need, stock, &candidate.design, builds, MONTE_CARLO_SEED)
        {
            candidate.built = model.built().clone();
            candidate.analysis = analysis;
        }
        candidate.costing = costing(&candidate.built, need.search.bom_line_cost);
    }
}

/// Whether entry `i` of a list of (cost, error) pairs is matched or beaten
/// on both by another entry, strictly on one (a tie on both keeps the
/// earlier of the two).
fn dominated(listed: &[(f64, f64)], i: usize) -> bool {
    let (cost, error) = listed[i];
    listed.iter().enumerate().any(|(j, &(c, e))| {
        j != i
            && c <= cost + 1e-12
            && e <= error + 1e-12
            && (c < cost - 1e-12 || e < error - 1e-12 || j < i)
    })
}

/// Parse a need and a stock together. With no stock files the embedded
/// demo stock is used.
pub fn load(need: &[u8], need_name: &str, stock: &[StockFile]) -> Result<(Need, Stock)> {
    let need = crate::need::parse_need(need, need_name)?;
    let stock = if stock.is_empty() {
        crate::stock::parse_stock(&crate::demo::stock_files())?
    } else {
        crate::stock::parse_stock(stock)?
    };
    Ok((need, stock))
}

fn monte_carlo_builds(need: &Need) -> u64 {
    if need.accuracy.basis == Basis::Yield {
        MONTE_CARLO_BUILDS_YIELD
    } else {
        MONTE_CARLO_BUILDS
    }
}

/// Analyse a design fully (with the reported Monte Carlo run) and cost it.
pub fn evaluate(need: &Need, stock: &Stock, design: &Design) -> Result<Candidate> {
    let (model, analysis) = analyze(
        need,
        stock,
        design,
        monte_carlo_builds(need),
        MONTE_CARLO_SEED,
    )?;
    let (built, _) = crate::filter::attach(need, stock, model.built());
    let costing = costing(&built, need.search.bom_line_cost);
    Ok(Candidate {
        design: design.clone(),
        built,
        costing,
        analysis,
    })
}

/// Read a design from bytes: a design file (`"format": "spanfit-design-1"`)
/// or a whole reported design object, whose `file` key holds the design
/// file (what the page sends back when a point of the front is picked).
pub fn read_design(bytes: &[u8], design_name: &str, stock: &Stock) -> Result<Design> {
    // Small enough to look at first; larger files go straight to the
    // parser, which refuses them with its own message.
    if bytes.len() <= 1 << 20 {
        if let Ok(Value::Object(map)) = serde_json::from_slice::<Value>(bytes) {
            // A design file has no `file` key (the parser refuses unknown
            // keys), so one means a reported design object.
            if let Some(file @ Value::Object(_)) = map.get("file") {
                let text = serde_json::to_string_pretty(file).unwrap_or_default();
                let name = format!("{design_name} (key `file`)");
                return parse_design(text.as_bytes(), &name, stock);
            }
        }
    }
    parse_design(bytes, design_name, stock)
}

/// The export texts of one design: the ngspice deck of
/// [`crate::spice::export`], the schematic of [`crate::schematic::svg`],
/// and the bill of materials of [`crate::bom`] as a table and as the CSV
/// written from that table.
pub fn artifacts(need: &Need, stock: &Stock, design: &Design) -> Result<Artifacts> {
    let (built, _) =
        crate::filter::attach(need, stock, &crate::topology::build(need, stock, design)?);
    let spice = crate::spice::export(need, stock, design)?;
    let bom_table = crate::bom::table(&crate::bom::rows(&built, stock), need.search.bom_line_cost);
    let svg = crate::schematic::svg(&built, design, &need.sensor.label);
    Ok(Artifacts {
        bom_csv: Some(crate::bom::table_csv(&bom_table)),
        bom_table: Some(bom_table),
        spice: Some(spice),
        svg: Some(svg),
    })
}

/// The export texts of a design given as bytes (a design file or a
/// reported design object), for the page's picks on the cost/error front.
pub fn artifacts_for(
    need: &[u8],
    need_name: &str,
    stock: &[StockFile],
    design: &[u8],
    design_name: &str,
) -> Result<Artifacts> {
    let (need, stock) = load(need, need_name, stock)?;
    let design = read_design(design, design_name, &stock)?;
    artifacts(&need, &stock, &design)
}

/// A bundle from a report: the artifacts of its design (all null without
/// one) and the text report.
fn bundle(need: &Need, stock: &Stock, report: Report, design: Option<&Design>) -> Result<Bundle> {
    let artifacts = match design {
        Some(d) => artifacts(need, stock, d)?,
        None => Artifacts::default(),
    };
    let text = report::report_text(need, &report);
    Ok(Bundle {
        artifacts,
        report,
        text,
    })
}

/// Solve a need. An infeasible need is not an error: the report says
/// `status: "infeasible"` with the binding reason, and the artifacts are
/// null.
pub fn solve_bundle(
    need: &[u8],
    need_name: &str,
    stock: &[StockFile],
    exhaustive: bool,
    control: &mut SolveControl<'_>,
) -> Result<Bundle> {
    let (need, stock) = load(need, need_name, stock)?;
    let mut outcome = crate::search::solve(
        &need,
        &stock,
        crate::search::SearchMode::from_exhaustive(exhaustive),
        control,
    )?;
    // The chosen design is reported as `analyze` would report it, Monte
    // Carlo histogram included.
    if let Some(best) = outcome.best.as_mut() {
        let searched = (best.costing.total, best.costing.part_count as f64);
        if best.analysis.yield_result.is_none() {
            *best = evaluate(&need, &stock, &best.design)?;
        } else {
            with_filter(&need, &stock, best);
        }
        // The search costs every design with the filter pair the report
        // attaches (search/pair.rs), so its proof covers the reported cost.
        // Should the attached pair differ from the counted one (the pair's
        // AC analysis can still refuse it), the proof does not cover the
        // report: the claim is dropped, and the gap kept only where the
        // report costs more (then the bound still lies below it).
        let added = match need.search.objective {
            crate::need::Objective::Cost => best.costing.total - searched.0,
            crate::need::Objective::Parts => best.costing.part_count as f64 - searched.1,
            crate::need::Objective::Error => 0.0,
        };
        if added.abs() > 1e-9 {
            let stats = &mut outcome.stats;
            stats.gap = match (stats.proven_optimal, stats.gap) {
                _ if added < 0.0 => None,
                (true, _) => Some(added),
                (false, gap) => gap.map(|g| g + added),
            };
            stats.proven_optimal = false;
        }
    }
    for alternative in &mut outcome.alternatives {
        with_filter(&need, &stock, alternative);
    }
    // The front as reported: an alternative another listed design matches
    // or beats on both cost and error (after the re-analysis above) is not
    // on the front. The chosen design, first, always stays.
    let listed: Vec<(f64, f64)> = outcome
        .alternatives
        .iter()
        .map(|a| (a.costing.total, a.analysis.basis_pct_fs))
        .collect();
    let mut index = 0;
    outcome.alternatives.retain(|_| {
        let i = index;
        index += 1;
        i == 0 || !dominated(&listed, i)
    });
    // The best attempt of an infeasible need is reported as a design too,
    // analysed against this need (the search may have found it under a
    // looser target) as `analyze` would report it.
    if let Some(infeasible) = outcome.infeasible.as_mut() {
        if let Some(attempt) = infeasible.best_attempt.as_deref_mut() {
            let old_words = crate::search::explain::limit_words(&need, attempt);
            *attempt = evaluate(&need, &stock, &attempt.design)?;
            let attempt = attempt.clone();
            crate::search::explain::restate_best(&need, infeasible, &attempt, &old_words);
        }
    }
    let report = report::solve_report(&need, &stock, &outcome);
    bundle(
        &need,
        &stock,
        report,
        outcome.best.as_ref().map(|b| &b.design),
    )
}

/// Analyse a design the user already has. The report has the shape of a
/// solve report with no search behind it: `status` is `"ok"` when the
/// design meets the need and `"infeasible"` otherwise, with `reason`
/// saying why; `alternatives` is empty, `search` and `infeasible` null.
/// The design may be a design file or a whole reported design object (see
/// [`read_design`]).
pub fn analyze_bundle(
    need: &[u8],
    need_name: &str,
    stock: &[StockFile],
    design: &[u8],
    design_name: &str,
) -> Result<Bundle> {
    let (need, stock) = load(need, need_name, stock)?;
    let design = read_design(design, design_name, &stock)?;
    let candidate = evaluate(&need, &stock, &design)?;
    let report = report::analysis_report(&need, &stock, &candidate);
    bundle(&need, &stock, report, Some(&design))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::Status;

    const DESIGN: &str = include_str!("../../examples/demo-design.json");

    fn demo_analysis() -> Bundle {
        analyze_bundle(
            crate::demo::NEED_TOML.as_bytes(),
            "demo-need.toml",
            &[],
            DESIGN.as_bytes(),
            "demo-design.json",
        )
        .unwrap()
    }

    #[test]
    fn analysis_of_the_demo_design_has_a_histogram() {
        let b = demo_analysis();
        let e = &b.report.design.as_ref().unwrap().error;
        let total: u64 = e.histogram.as_ref().unwrap().counts.iter().sum();
        assert_eq!(total, MONTE_CARLO_BUILDS);
        assert!(e.yield_pct.unwrap() >= 0.0);
        assert!(b.text.contains("verify on the bench"));
    }

    /// A design matched or beaten on both cost and error by another is off
    /// the front; of two equal ones the earlier stays.
    #[test]
    fn dominated_entries_leave_the_front() {
        let listed = [(1.0, 0.5), (1.2, 0.4), (1.3, 0.45), (1.2, 0.4), (0.9, 0.6)];
        let kept: Vec<usize> = (0..listed.len())
            .filter(|&i| !dominated(&listed, i))
            .collect();
        assert_eq!(kept, [0, 1, 4]);
    }

    /// A reported design object fed back gives the same report.
    #[test]
    fn a_reported_design_reads_back() {
        let first = demo_analysis();
        let design = serde_json::to_string(&first.report.design).unwrap();
        let again = analyze_bundle(
            crate::demo::NEED_TOML.as_bytes(),
            "demo-need.toml",
            &[],
            design.as_bytes(),
            "picked",
        )
        .unwrap();
        assert_eq!(first.report.design, again.report.design);
    }

    #[test]
    fn a_bad_design_names_the_key() {
        let bad = DESIGN.replace("\"IA-3\"", "\"IA-404\"");
        let err = analyze_bundle(
            crate::demo::NEED_TOML.as_bytes(),
            "demo-need.toml",
            &[],
            bad.as_bytes(),
            "mine.json",
        )
        .unwrap_err()
        .to_string();
        assert!(
            err.contains("mine.json") && err.contains("stages[0].amplifier"),
            "{err}"
        );
    }

    /// The verdict of `analyze` follows the analysis, and its bundle has
    /// the shape of a solve bundle with no search behind it.
    #[test]
    fn analysis_status_follows_the_verdict() {
        let b = demo_analysis();
        let meets = b.report.design.as_ref().unwrap().error.meets_target;
        let want = if meets {
            Status::Ok
        } else {
            Status::Infeasible
        };
        assert_eq!(b.report.status, want);
        assert_eq!(b.report.reason.is_none(), meets);
        assert!(b.report.search.is_none() && b.report.infeasible.is_none());
        assert!(b.report.alternatives.is_empty());
        let v = serde_json::to_value(&b).unwrap();
        let keys: Vec<&String> = v.as_object().unwrap().keys().collect();
        assert_eq!(keys, ["artifacts", "report", "text"]);
        let report: Vec<&String> = v["report"].as_object().unwrap().keys().collect();
        assert_eq!(
            report,
            [
                "alternatives",
                "design",
                "infeasible",
                "need",
                "reason",
                "search",
                "status"
            ]
        );
    }

    /// The BOM CSV is the BOM table written out.
    #[test]
    fn the_bom_csv_is_the_bom_table() {
        let b = demo_analysis();
        let table = b.artifacts.bom_table.as_ref().unwrap();
        assert_eq!(
            b.artifacts.bom_csv.as_deref(),
            Some(crate::bom::table_csv(table).as_str())
        );
        let parts = &b.report.design.as_ref().unwrap().parts;
        for p in parts {
            let id = match p {
                crate::report::types::PartEntry::Resistor(r) => &r.part_id,
                crate::report::types::PartEntry::Amplifier(a) => &a.part_id,
                crate::report::types::PartEntry::Reference(r) => &r.part_id,
                crate::report::types::PartEntry::Capacitor(c) => &c.part_id,
            };
            assert!(table.rows.iter().any(|row| &row[3] == id), "{id}");
        }
    }

    /// The chosen design of a search is reported exactly as `analyze`
    /// reports the same design, and its exports are all there.
    #[test]
    fn solve_and_analyze_agree_on_the_chosen_design() {
        let mut progress = |_: Progress| true;
        let clock = || 0.0;
        let mut control = SolveControl {
            progress: &mut progress,
            now_ms: &clock,
        };
        let need = crate::demo::NEED_TOML.as_bytes();
        let solved = solve_bundle(need, "demo-need.toml", &[], false, &mut control).unwrap();
        let report = &solved.report;
        assert_eq!(report.status, Status::Ok);
        let a = &solved.artifacts;
        assert!(a.spice.is_some() && a.svg.is_some() && a.bom_csv.is_some());
        assert!(a.bom_table.is_some());
        let design = report.design.as_ref().unwrap();
        let file = design.file.to_string();
        let analysed =
            analyze_bundle(need, "demo-need.toml", &[], file.as_bytes(), "file").unwrap();
        assert_eq!(analysed.report.design.as_ref(), Some(design));
        assert_eq!(analysed.report.status, Status::Ok);
        let picked = artifacts_for(
            need,
            "demo-need.toml",
            &[],
            serde_json::to_string(design).unwrap().as_bytes(),
            "picked",
        )
        .unwrap();
        assert_eq!(picked, solved.artifacts);
    }
}
