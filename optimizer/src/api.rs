//! The front-end surface: the few calls the CLI and the wasm crate make.
//! They take text and bytes and return JSON values (the contract of
//! DESIGN.md section 4), so both front ends show the same numbers from the
//! same analysis.

use crate::error::{Error, Result};
use crate::need::Need;
use crate::stock::{Stock, StockFile};
use serde::Serialize;

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

/// Solve a need: `{"report": <DESIGN.md section 4 object>, "artifacts":
/// {"spice", "svg", "bom_csv"}}`. An infeasible need is not an error: the
/// report says `status: "infeasible"` with the binding reason.
pub fn solve_bundle(
    need: &[u8],
    need_name: &str,
    stock: &[StockFile],
    exhaustive: bool,
    control: &mut SolveControl<'_>,
) -> Result<serde_json::Value> {
    let _ = (need, need_name, stock, exhaustive, control);
    Err(Error::design("the optimiser is being written"))
}

/// Analyse a design the user already has: `{"design": <design object>,
/// "artifacts": {...}}`.
pub fn analyze_bundle(
    need: &[u8],
    need_name: &str,
    stock: &[StockFile],
    design: &[u8],
    design_name: &str,
) -> Result<serde_json::Value> {
    let _ = (need, need_name, stock, design, design_name);
    Err(Error::design("the analysis is being written"))
}
