//! The front-end surface: the few calls the CLI and the wasm crate make.
//! They take text and bytes and return JSON values (the contract of
//! DESIGN.md section 4), so both front ends show the same numbers from the
//! same analysis.
//!
//! Every bundle has the same three parts: the report object, the
//! `artifacts` (`spice`, `svg`, `bom_csv` texts of the design, or nulls
//! when there is no design) and `text`, the plain-text report.

use crate::analysis::analyze;
use crate::design::{parse_design, Design};
use crate::error::Result;
use crate::need::{Basis, Need};
use crate::report;
use crate::search::{costing, Candidate};
use crate::stock::{Stock, StockFile};
use serde_json::{json, Value};

pub use crate::search::{Progress, SolveControl};

/// Monte Carlo builds run for every reported design, so the page can show
/// a histogram.
pub const MONTE_CARLO_BUILDS: u64 = 10_000;
/// Monte Carlo builds when the need's basis is `yield` (the yield decides
/// whether the target is met, so it gets a tighter interval).
pub const MONTE_CARLO_BUILDS_YIELD: u64 = 20_000;
/// The seed of those runs: the same design gives the same histogram.
pub const MONTE_CARLO_SEED: u64 = 1;

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
    let built = model.built().clone();
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

/// The export texts of one design: `{"spice"` (the ngspice deck of
/// [`crate::spice::export`]), `"svg"` (the schematic of
/// [`crate::schematic::svg`]) and `"bom_csv"` (the bill of materials of
/// [`crate::bom::csv`])`}`.
pub fn artifacts(need: &Need, stock: &Stock, design: &Design) -> Result<Value> {
    let built = crate::topology::build(need, stock, design)?;
    let spice = crate::spice::export(need, stock, design)?;
    let bom_csv = crate::bom::csv(&crate::bom::rows(&built, stock), need.search.bom_line_cost);
    let svg = crate::schematic::svg(&built, design, &need.sensor.label);
    Ok(json!({"spice": spice, "svg": svg, "bom_csv": bom_csv}))
}

/// The artifacts object when there is no design.
fn no_artifacts() -> Value {
    json!({"spice": null, "svg": null, "bom_csv": null})
}

/// The export texts of a design given as bytes (a design file or a
/// reported design object), for the page's picks on the cost/error front.
pub fn artifacts_for(
    need: &[u8],
    need_name: &str,
    stock: &[StockFile],
    design: &[u8],
    design_name: &str,
) -> Result<Value> {
    let (need, stock) = load(need, need_name, stock)?;
    let design = read_design(design, design_name, &stock)?;
    artifacts(&need, &stock, &design)
}

/// Solve a need: `{"report": <DESIGN.md section 4 object>, "artifacts":
/// {"spice", "svg", "bom_csv"}, "text": <plain-text report>}`. An
/// infeasible need is not an error: the report says `status:
/// "infeasible"` with the binding reason, and the artifacts are null.
pub fn solve_bundle(
    need: &[u8],
    need_name: &str,
    stock: &[StockFile],
    exhaustive: bool,
    control: &mut SolveControl<'_>,
) -> Result<Value> {
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
        if best.analysis.yield_result.is_none() {
            *best = evaluate(&need, &stock, &best.design)?;
        }
    }
    let artifacts = match &outcome.best {
        Some(best) => artifacts(&need, &stock, &best.design)?,
        None => no_artifacts(),
    };
    Ok(json!({
        "report": report::solve_json(&need, &stock, &outcome),
        "artifacts": artifacts,
        "text": report::solve_text_report(&need, &stock, &outcome),
    }))
}

/// Analyse a design the user already has: `{"status", "need", "design":
/// <design object>, "reason", "alternatives": [], "search": null,
/// "artifacts": {...}, "text": <plain-text report>}`, where `status` is
/// `"ok"` when the design meets the need and `"infeasible"` otherwise, with
/// `reason` saying why (the same top-level shape as a solve report, with no
/// search behind it). The design may be a
/// design file or a whole reported design object (see [`read_design`]).
pub fn analyze_bundle(
    need: &[u8],
    need_name: &str,
    stock: &[StockFile],
    design: &[u8],
    design_name: &str,
) -> Result<Value> {
    let (need, stock) = load(need, need_name, stock)?;
    let design = read_design(design, design_name, &stock)?;
    let candidate = evaluate(&need, &stock, &design)?;
    let reason = report::shortfall(&need, &candidate.analysis);
    Ok(json!({
        "status": if reason.is_none() { "ok" } else { "infeasible" },
        "need": report::need_json(&need),
        "design": report::design_json(&need, &stock, &candidate),
        "reason": reason,
        "alternatives": [],
        "search": null,
        "artifacts": artifacts(&need, &stock, &design)?,
        "text": report::text_report(&need, &stock, &candidate),
    }))
}

#[cfg(test)]
mod tests {
    use super::*;

    const DESIGN: &str = include_str!("../../examples/demo-design.json");

    fn demo_analysis() -> Value {
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
        let e = &b["design"]["error"];
        let counts = e["histogram"]["counts"].as_array().unwrap();
        let total: u64 = counts.iter().filter_map(Value::as_u64).sum();
        assert_eq!(total, MONTE_CARLO_BUILDS);
        assert!(e["yield_pct"].as_f64().unwrap() >= 0.0);
        assert!(b["text"].as_str().unwrap().contains("verify on the bench"));
    }

    /// A reported design object fed back gives the same report.
    #[test]
    fn a_reported_design_reads_back() {
        let first = demo_analysis();
        let again = analyze_bundle(
            crate::demo::NEED_TOML.as_bytes(),
            "demo-need.toml",
            &[],
            first["design"].to_string().as_bytes(),
            "picked",
        )
        .unwrap();
        assert_eq!(first["design"], again["design"]);
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

    /// The verdict of `analyze` follows the analysis.
    #[test]
    fn analysis_status_follows_the_verdict() {
        let b = demo_analysis();
        let meets = b["design"]["error"]["meets_target"].as_bool().unwrap();
        assert_eq!(b["status"], if meets { "ok" } else { "infeasible" });
        assert_eq!(b["reason"].is_null(), meets);
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
        let report = &solved["report"];
        assert_eq!(report["status"], "ok");
        for key in ["spice", "svg", "bom_csv"] {
            assert!(solved["artifacts"][key].is_string(), "artifacts.{key}");
        }
        let file = report["design"]["file"].to_string();
        let analysed =
            analyze_bundle(need, "demo-need.toml", &[], file.as_bytes(), "file").unwrap();
        assert_eq!(analysed["design"], report["design"]);
        assert_eq!(analysed["status"], "ok");
        let picked = artifacts_for(
            need,
            "demo-need.toml",
            &[],
            report["design"].to_string().as_bytes(),
            "picked",
        )
        .unwrap();
        assert_eq!(picked, solved["artifacts"]);
    }
}
