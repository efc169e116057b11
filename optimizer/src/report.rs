//! Reports of designs and searches: the JSON objects of DESIGN.md
//! section 4 (the contract the CLI's `--json`, the page and outside checks
//! read) and a plain-text report for people.
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

use crate::analysis::{Analysis, BudgetLine, Finding};
use crate::design::{Injection, Source};
use crate::need::Need;
use crate::schematic::{format_ohms, format_quantity};
use crate::search::{Candidate, Infeasibility, SearchStats, SolveOutcome};
use crate::stock::Stock;
use crate::topology::{AmplifierKind, Built, Section};
use serde_json::{json, Value};
use std::fmt::Write as _;

/// The cautions every report carries (DESIGN.md section 6).
pub const CAUTIONS: &str = "spanfit designs low-voltage signal conditioning only; verify on the bench; follow applicable standards and codes";

/// The name a serde enum of the need is written as in specs (`worst-case`,
/// `two-point`): the one place those names live is the enum itself.
fn enum_name<T: serde::Serialize>(value: &T) -> String {
    serde_json::to_value(value)
        .ok()
        .and_then(|v| v.as_str().map(str::to_string))
        .unwrap_or_default()
}

/// The natural order of designators: `U2` before `U10`, `U1A` before `U1B`.
fn designator_key(designator: &str) -> (String, u64, String) {
    let prefix: String = designator
        .chars()
        .take_while(|c| !c.is_ascii_digit())
        .collect();
    let rest = &designator[prefix.len()..];
    let digits: String = rest.chars().take_while(|c| c.is_ascii_digit()).collect();
    let number = digits.parse::<u64>().unwrap_or(0);
    let tail = rest[digits.len()..].to_string();
    (prefix, number, tail)
}

/// Amplifier sections in designator order (packages, then section letter).
fn sections_in_order(built: &Built) -> Vec<&Section> {
    let mut sections: Vec<&Section> = built.sections.iter().collect();
    sections.sort_by_key(|s| designator_key(&s.designator));
    sections
}

/// The `parts[]` array of a design object.
fn parts_json(stock: &Stock, built: &Built) -> Vec<Value> {
    let mut parts = Vec::new();
    for r in &built.resistors {
        let footprint = stock.resistor(&r.part.part_id).map(|p| p.package.clone());
        parts.push(json!({
            "ref": r.designator,
            "kind": "resistor",
            "value": r.part.ohms,
            "value_text": format_ohms(r.part.ohms),
            "part_id": r.part.part_id,
            "unit_cost": r.part.unit_cost,
            "tolerance_pct": r.part.tolerance_pct,
            "tcr_ppm_per_c": r.part.tcr_ppm_per_c,
            "footprint": footprint,
            "stage": r.stage,
            "role": r.role,
        }));
    }
    let mut priced_packages: Vec<&str> = Vec::new();
    for sec in sections_in_order(built) {
        let package = built.packages.iter().find(|p| p.designator == sec.package);
        let package_cost = package.map(|p| p.unit_cost).unwrap_or(0.0);
        let shares_package = priced_packages.contains(&sec.package.as_str());
        if !shares_package {
            priced_packages.push(&sec.package);
        }
        let unit_cost = if shares_package { 0.0 } else { package_cost };
        let channels = package.map(|p| p.channels).unwrap_or(1);
        let part = match sec.kind {
            AmplifierKind::OpAmp(i) => stock.opamps.get(i).map(|p| {
                json!({
                    "ref": sec.designator,
                    "kind": "opamp",
                    "value": p.part_id,
                    "value_text": p.part_id,
                    "part_id": p.part_id,
                    "unit_cost": unit_cost,
                    "shares_package": shares_package,
                    "package": sec.package,
                    "channels": channels,
                    "vos_max_uv": p.vos_max_uv,
                    "ib_max_na": p.ib_max_na,
                    "stage": sec.stage,
                })
            }),
            AmplifierKind::InAmp(i) => stock.inamps.get(i).map(|p| {
                json!({
                    "ref": sec.designator,
                    "kind": "inamp",
                    "value": p.part_id,
                    "value_text": p.part_id,
                    "part_id": p.part_id,
                    "unit_cost": unit_cost,
                    "shares_package": shares_package,
                    "package": sec.package,
                    "channels": channels,
                    "vos_max_uv": p.input_offset_uv,
                    "ib_max_na": p.ib_max_na,
                    "output_offset_uv": p.output_offset_uv,
                    "gain_error_pct": p.gain_error.0,
                    "gain_resistor_ohms": p.gain_resistor.0,
                    "stage": sec.stage,
                })
            }),
        };
        parts.extend(part);
    }
    for src in &built.sources {
        let Some(r) = src.reference.and_then(|i| stock.references.get(i)) else {
            continue;
        };
        parts.push(json!({
            "ref": src.designator,
            "kind": "reference",
            "value": r.volts.0,
            "value_text": format_quantity(r.volts.0, "V"),
            "part_id": r.part_id,
            "unit_cost": r.unit_cost,
            "initial_pct": r.initial.0,
            "tempco_ppm_per_c": r.tempco.0,
        }));
    }
    parts
}

/// The designator a source is placed under (`VR1`, `VSUP`), or its text.
fn source_designator(built: &Built, source: &Source) -> String {
    built
        .sources
        .iter()
        .find(|s| &s.source == source)
        .map(|s| s.designator.clone())
        .unwrap_or_else(|| match source {
            Source::Supply => "VSUP".to_string(),
            Source::Reference(id) => id.clone(),
        })
}

/// How an offset or bias node is driven, with designators.
fn injection_json(built: &Built, stage: usize, what: &str, inj: &Injection) -> Value {
    let role_ref = |role: &str| {
        built
            .resistors
            .iter()
            .find(|r| r.stage == stage && r.role == role)
            .map(|r| r.designator.clone())
    };
    match inj {
        Injection::Ground => json!({"kind": "ground", "source": null, "buffered": false}),
        Injection::Direct { source } => json!({
            "kind": "direct",
            "source": source_designator(built, source),
            "buffered": false,
        }),
        Injection::Divider {
            source, buffered, ..
        } => json!({
            "kind": "divider",
            "source": source_designator(built, source),
            "top": role_ref(&format!("{what}.top")),
            "bottom": role_ref(&format!("{what}.bottom")),
            "buffered": buffered,
        }),
    }
}

/// The `stages[]` array: the analysis' stage reports plus the resistor
/// roles and amplifier sections of each stage by designator.
fn stages_json(candidate: &Candidate) -> Vec<Value> {
    let built = &candidate.built;
    candidate
        .analysis
        .stages
        .iter()
        .map(|st| {
            let resistors: serde_json::Map<String, Value> = built
                .resistors
                .iter()
                .filter(|r| r.stage == st.index)
                .map(|r| (r.role.clone(), Value::from(r.designator.clone())))
                .collect();
            let sections: Vec<&str> = built
                .sections
                .iter()
                .filter(|s| s.stage == st.index)
                .map(|s| s.designator.as_str())
                .collect();
            let design_stage = candidate.design.stages.get(st.index);
            let topology = design_stage.map(|s| s.shape.topology().name());
            let offset = design_stage
                .map(|s| injection_json(built, st.index, "o", &s.offset))
                .unwrap_or(Value::Null);
            let bias = design_stage
                .map(|s| injection_json(built, st.index, "b", &s.bias))
                .unwrap_or(Value::Null);
            json!({
                "index": st.index,
                "shape": st.shape,
                "topology": topology,
                "amplifier": st.amplifier,
                "gain": st.gain,
                "offset_v": st.offset_v,
                "output_range_v": st.output_range_v,
                "parts": st.parts,
                "resistors": resistors,
                "sections": sections,
                "offset": offset,
                "bias": bias,
            })
        })
        .collect()
}

fn budget_json(need: &Need, line: &BudgetLine) -> Value {
    json!({
        "source": line.source,
        "line": line.line,
        "pct_fs": line.pct_fs,
        "lsb": line.lsb,
        "units": line.units,
        "unit": need.sensor.quantity.as_ref().map(|q| q.unit.clone()),
        "at_ends_pct_fs": line.at_ends_pct_fs,
        "systematic": line.systematic,
    })
}

fn error_json(need: &Need, a: &Analysis) -> Value {
    let fs = need.full_scale();
    let mc = a.yield_result.as_ref();
    json!({
        "worst_case_pct_fs": a.worst_case_pct_fs,
        "rss_pct_fs": a.rss_pct_fs,
        "basis": enum_name(&need.accuracy.basis),
        "basis_pct_fs": a.basis_pct_fs,
        "target_pct_fs": need.accuracy.max_error_pct_fs,
        "calibration": enum_name(&need.accuracy.calibration),
        "first_order_pct_fs": a.first_order_pct_fs,
        "corner_check_pct_fs": a.corner_check_pct_fs,
        "binding_end": if a.binding_end == 0 { "low" } else { "high" },
        "quantisation_pct_fs": a.quantisation_pct_fs,
        "quantisation_lsb": 0.5,
        "noise": {
            "rms_v": a.noise.rms_v,
            "peak_to_peak_v": a.noise.peak_to_peak_v,
            "pct_fs_pp": if fs > 0.0 { 100.0 * a.noise.peak_to_peak_v / fs } else { f64::NAN },
            "noise_bandwidth_hz": a.noise.noise_bandwidth_hz,
        },
        "budget": a.budget.iter().map(|l| budget_json(need, l)).collect::<Vec<_>>(),
        "yield_pct": mc.map(|y| y.yield_pct),
        "yield_confidence_pct": mc.map(|y| y.confidence_pct),
        "yield_target_pct": need.accuracy.yield_pct,
        "yield_builds": mc.map(|y| y.builds),
        "sigma_pct_fs": mc.map(|y| y.sigma_pct_fs),
        "histogram": mc.map(|y| json!({
            "bin_edges_pct_fs": y.histogram.bin_edges_pct_fs,
            "counts": y.histogram.counts,
        })),
        "meets_target": a.meets_target,
    })
}

fn finding_json(f: &Finding) -> Value {
    json!({"check": f.check, "subject": f.subject, "ok": f.ok, "detail": f.detail})
}

/// The `design` object of DESIGN.md section 4 for one evaluated design.
pub fn design_json(need: &Need, stock: &Stock, candidate: &Candidate) -> Value {
    let a = &candidate.analysis;
    let c = &candidate.costing;
    let topology = candidate
        .design
        .stages
        .first()
        .map(|s| s.shape.topology().name());
    let t = &a.transfer;
    json!({
        "topology": topology,
        "shapes": candidate.design.stages.iter().map(|s| s.shape.name()).collect::<Vec<_>>(),
        "stages": stages_json(candidate),
        "parts": parts_json(stock, &candidate.built),
        "transfer": {
            "gain": t.gain,
            "offset_v": t.offset_v,
            "ideal_gain": t.ideal_gain,
            "ideal_offset_v": t.ideal_offset_v,
            "output_at_ends_v": t.output_at_ends_v,
            "ideal_at_ends_v": t.ideal_at_ends_v,
        },
        "error": error_json(need, a),
        "cost": c.total,
        "parts_cost": c.parts_cost,
        "part_count": c.part_count,
        "bom_lines": c.bom_lines,
        "findings": a.findings.iter().map(finding_json).collect::<Vec<_>>(),
        "feasible": a.feasible,
        "file": crate::design::design_to_json(&candidate.design),
    })
}

/// Why an analysed design does not meet the need, in words (the first
/// failed check, or the error against the target), or `None` when it does.
pub fn shortfall(need: &Need, a: &Analysis) -> Option<String> {
    if a.meets_target {
        return None;
    }
    if let Some(f) = a.findings.iter().find(|f| !f.ok) {
        return Some(format!("{} on {}: {}", f.check, f.subject, f.detail));
    }
    let target = need.accuracy.max_error_pct_fs;
    if need.accuracy.basis == crate::need::Basis::Yield {
        if let Some(y) = &a.yield_result {
            return Some(format!(
                "Monte Carlo yield is {:.3} % of builds within {target} % FS; the need asks {} %",
                y.yield_pct, need.accuracy.yield_pct
            ));
        }
    }
    Some(format!(
        "error on the {} basis is {:.4} % FS, above the target {target} % FS by {:.4} % FS",
        enum_name(&need.accuracy.basis),
        a.basis_pct_fs,
        a.basis_pct_fs - target
    ))
}

/// The derived figures of a need (`need` in the solve report).
pub fn need_json(need: &Need) -> Value {
    let (k, b) = need.ideal_transfer();
    let (lo, hi) = need.target_window();
    json!({
        "ideal_gain": k,
        "ideal_offset_v": b,
        "target_window_v": [lo, hi],
        "full_scale_v": need.full_scale(),
        "lsb_v": need.lsb(),
        "volts_per_unit": need.volts_per_unit(),
        "quantity_unit": need.sensor.quantity.as_ref().map(|q| q.unit.clone()),
    })
}

fn search_json(s: &SearchStats) -> Value {
    json!({
        "mode": s.mode,
        "evaluated": s.evaluated,
        "structures": s.structures,
        "milp_solves": s.milp_solves,
        "elapsed_ms": s.elapsed_ms,
        "proven_optimal": s.proven_optimal,
        "gap": s.gap,
    })
}

fn infeasible_json(i: &Infeasibility) -> Value {
    json!({
        "binding": i.binding,
        "best_error_pct_fs": i.best_error_pct_fs,
        "target_pct_fs": i.target_pct_fs,
        "largest": i.largest.iter().map(|(source, pct)| json!({"source": source, "pct_fs": pct})).collect::<Vec<_>>(),
        "suggestions": i.suggestions.iter().map(|s| json!({
            "change": s.change,
            "cost": s.cost,
            "error_pct_fs": s.error_pct_fs,
        })).collect::<Vec<_>>(),
    })
}

/// The report of a search (the object `spanfit solve --json` prints):
/// `status`, `need`, `design` (or null), `alternatives[]`, `search`,
/// `infeasible` (or null), and `reason` (the binding limit in words, or
/// null).
pub fn solve_json(need: &Need, stock: &Stock, outcome: &SolveOutcome) -> Value {
    let status = if outcome.best.is_some() {
        "ok"
    } else {
        "infeasible"
    };
    let design = outcome
        .best
        .as_ref()
        .map(|c| design_json(need, stock, c))
        .unwrap_or(Value::Null);
    let alternatives: Vec<Value> = outcome
        .alternatives
        .iter()
        .map(|c| {
            let mut d = design_json(need, stock, c);
            if let Value::Object(map) = &mut d {
                // Cost and error up top, for plotting the front.
                map.insert(
                    "worst_case_pct_fs".into(),
                    json!(c.analysis.worst_case_pct_fs),
                );
                map.insert("basis_pct_fs".into(), json!(c.analysis.basis_pct_fs));
            }
            d
        })
        .collect();
    let reason = outcome
        .infeasible
        .as_ref()
        .map(|i| Value::from(i.binding.clone()))
        .unwrap_or(Value::Null);
    json!({
        "status": status,
        "need": need_json(need),
        "design": design,
        "alternatives": alternatives,
        "search": search_json(&outcome.stats),
        "infeasible": outcome.infeasible.as_ref().map(infeasible_json),
        "reason": reason,
    })
}

// ---------------------------------------------------------------------
// Text.

/// Text that came from the user (labels, units, part ids), made safe for a
/// terminal: control characters become `?`.
fn clean(text: &str) -> String {
    text.chars()
        .map(|c| if c.is_control() { '?' } else { c })
        .collect()
}

/// A number with `sig` significant digits, in plain notation where that
/// reads well and in exponent notation for the very small or large.
fn num(v: f64, sig: usize) -> String {
    if !v.is_finite() {
        return format!("{v}");
    }
    if v == 0.0 {
        return "0".to_string();
    }
    // The exponent of the value as rounded to `sig` digits (so 0.09999
    // at three digits counts as 0.100, not 0.0999...).
    let sig = sig.max(1);
    let scientific = format!("{:.*e}", sig - 1, v);
    let mag: i32 = scientific
        .rsplit('e')
        .next()
        .and_then(|e| e.parse().ok())
        .unwrap_or(0);
    if !(-4..6).contains(&mag) {
        return scientific;
    }
    let decimals = (sig as i32 - 1 - mag).max(0) as usize;
    format!("{v:.decimals$}")
}

/// A voltage with an SI prefix, as the schematic and BOM write it.
fn volts_eng(v: f64) -> String {
    format_quantity(v, "V")
}

/// Column alignment of a text table.
#[derive(Clone, Copy, PartialEq)]
enum Align {
    Left,
    Right,
}

/// A plain text table: columns padded to their widest cell.
struct Table {
    header: Vec<String>,
    align: Vec<Align>,
    rows: Vec<Vec<String>>,
}

impl Table {
    fn new(columns: &[(&str, Align)]) -> Table {
        Table {
            header: columns.iter().map(|(h, _)| h.to_string()).collect(),
            align: columns.iter().map(|(_, a)| *a).collect(),
            rows: Vec::new(),
        }
    }

    fn row(&mut self, cells: Vec<String>) {
        self.rows.push(cells);
    }

    /// A rule across the table, drawn before the next row.
    fn rule(&mut self) {
        self.rows.push(Vec::new());
    }

    fn render(&self, out: &mut String, indent: &str) {
        let n = self.header.len();
        let mut width: Vec<usize> = self.header.iter().map(|h| h.chars().count()).collect();
        for r in &self.rows {
            for (i, c) in r.iter().enumerate().take(n) {
                width[i] = width[i].max(c.chars().count());
            }
        }
        let line = |cells: &[String]| {
            let mut s = String::from(indent);
            for (i, (w, align)) in width.iter().zip(&self.align).enumerate() {
                let cell = cells.get(i).map(String::as_str).unwrap_or("");
                let pad = w.saturating_sub(cell.chars().count());
                if i > 0 {
                    s.push_str("  ");
                }
                match align {
                    Align::Left => {
                        s.push_str(cell);
                        if i + 1 < n {
                            s.push_str(&" ".repeat(pad));
                        }
                    }
                    Align::Right => {
                        s.push_str(&" ".repeat(pad));
                        s.push_str(cell);
                    }
                }
            }
            s.trim_end().to_string()
        };
        let total: usize = width.iter().sum::<usize>() + 2 * n.saturating_sub(1);
        let _ = writeln!(out, "{}", line(&self.header));
        let _ = writeln!(out, "{indent}{}", "-".repeat(total));
        for r in &self.rows {
            if r.is_empty() {
                let _ = writeln!(out, "{indent}{}", "-".repeat(total));
            } else {
                let _ = writeln!(out, "{}", line(r));
            }
        }
    }
}

fn write_job(out: &mut String, need: &Need) {
    let (k, b) = need.ideal_transfer();
    let (lo, hi) = need.target_window();
    let s = &need.sensor;
    let _ = writeln!(out, "spanfit report");
    let _ = writeln!(out, "==============");
    let _ = writeln!(out, "Sensor   {}", clean(&s.label));
    let quantity = s
        .quantity
        .as_ref()
        .map(|q| {
            format!(
                " ({} to {} {})",
                num(q.low, 4),
                num(q.high, 4),
                clean(&q.unit)
            )
        })
        .unwrap_or_default();
    let wiring = match s.output {
        crate::need::SensorOutput::Differential => {
            format!("differential at {} common mode", volts_eng(s.common_mode.0))
        }
        crate::need::SensorOutput::SingleEnded => "single-ended".to_string(),
    };
    let _ = writeln!(
        out,
        "         {} to {}{quantity}, {wiring}, source {} ohm",
        volts_eng(s.signal_low.0),
        volts_eng(s.signal_high.0),
        format_ohms(s.source.0)
    );
    let _ = writeln!(
        out,
        "ADC      {} to {}, {} bits, 1 LSB = {}, margin {} % each end",
        volts_eng(need.adc.low.0),
        volts_eng(need.adc.high.0),
        need.adc.bits,
        volts_eng(need.lsb()),
        num(need.adc.margin.0, 3)
    );
    let _ = writeln!(
        out,
        "Supply   {} / {}{}",
        volts_eng(need.supply.positive.0),
        volts_eng(need.supply.negative.0),
        if need.supply.ratiometric {
            ", ratiometric"
        } else {
            ""
        }
    );
    let _ = writeln!(
        out,
        "Job      Vout = K * Vsensor + B with K = {}, B = {}; window {} to {}",
        num(k, 6),
        volts_eng(b),
        volts_eng(lo),
        volts_eng(hi)
    );
    let _ = writeln!(
        out,
        "Target   {} % FS on the {} basis{}, calibration {}, {} to {} degC",
        num(need.accuracy.max_error_pct_fs, 3),
        enum_name(&need.accuracy.basis),
        if need.accuracy.basis == crate::need::Basis::Yield {
            format!(" ({} % of builds)", num(need.accuracy.yield_pct, 4))
        } else {
            String::new()
        },
        enum_name(&need.accuracy.calibration),
        num(need.accuracy.temp_min.0, 3),
        num(need.accuracy.temp_max.0, 3)
    );
}

fn write_design(out: &mut String, need: &Need, stock: &Stock, c: &Candidate) {
    let a = &c.analysis;
    let t = &a.transfer;
    let topology = c
        .design
        .stages
        .first()
        .map(|s| s.shape.topology().name())
        .unwrap_or("-");
    let _ = writeln!(out);
    let _ = writeln!(
        out,
        "Design   {topology}, {} stage{}",
        c.design.stages.len(),
        if c.design.stages.len() == 1 { "" } else { "s" }
    );
    let _ = writeln!(
        out,
        "         K = {} (ideal {}), B = {} (ideal {})",
        num(t.gain, 6),
        num(t.ideal_gain, 6),
        volts_eng(t.offset_v),
        volts_eng(t.ideal_offset_v)
    );
    let _ = writeln!(
        out,
        "         output {} to {} (ideal {} to {})",
        volts_eng(t.output_at_ends_v[0]),
        volts_eng(t.output_at_ends_v[1]),
        volts_eng(t.ideal_at_ends_v[0]),
        volts_eng(t.ideal_at_ends_v[1])
    );

    let _ = writeln!(out);
    let _ = writeln!(out, "Stages");
    let mut stages = Table::new(&[
        ("#", Align::Right),
        ("shape", Align::Left),
        ("amplifier", Align::Left),
        ("gain", Align::Right),
        ("offset", Align::Right),
        ("output range", Align::Left),
        ("parts", Align::Left),
    ]);
    for st in &a.stages {
        stages.row(vec![
            (st.index + 1).to_string(),
            st.shape.clone(),
            clean(&st.amplifier),
            num(st.gain, 5),
            volts_eng(st.offset_v),
            format!(
                "{} to {}",
                volts_eng(st.output_range_v[0]),
                volts_eng(st.output_range_v[1])
            ),
            st.parts.join(" "),
        ]);
    }
    stages.render(out, "  ");

    let _ = writeln!(out);
    let _ = writeln!(out, "Parts");
    let mut parts = Table::new(&[
        ("ref", Align::Left),
        ("kind", Align::Left),
        ("value", Align::Right),
        ("part id", Align::Left),
        ("unit cost", Align::Right),
        ("grade", Align::Left),
    ]);
    for p in parts_json(stock, &c.built) {
        let s = |k: &str| p.get(k).and_then(Value::as_str).unwrap_or("").to_string();
        let f = |k: &str| p.get(k).and_then(Value::as_f64).unwrap_or(f64::NAN);
        let grade = match s("kind").as_str() {
            "resistor" => format!(
                "{} %, {} ppm/degC",
                num(f("tolerance_pct"), 2),
                num(f("tcr_ppm_per_c"), 3)
            ),
            "opamp" | "inamp" => {
                let mut g = format!(
                    "Vos {} uV, Ib {} nA",
                    num(f("vos_max_uv"), 3),
                    num(f("ib_max_na"), 3)
                );
                if p.get("shares_package").and_then(Value::as_bool) == Some(true) {
                    let _ = write!(g, ", in {}", s("package"));
                }
                g
            }
            "reference" => format!(
                "{} %, {} ppm/degC",
                num(f("initial_pct"), 2),
                num(f("tempco_ppm_per_c"), 3)
            ),
            _ => String::new(),
        };
        parts.row(vec![
            s("ref"),
            s("kind"),
            clean(&s("value_text")),
            clean(&s("part_id")),
            format!("{:.3}", f("unit_cost")),
            grade,
        ]);
    }
    parts.render(out, "  ");

    write_budget(out, need, a);

    let failed: Vec<&Finding> = a.findings.iter().filter(|f| !f.ok).collect();
    let _ = writeln!(out);
    if failed.is_empty() {
        let _ = writeln!(out, "Checks   all {} pass", a.findings.len());
    } else {
        let _ = writeln!(
            out,
            "Checks   {} of {} FAIL:",
            failed.len(),
            a.findings.len()
        );
        for f in failed {
            let _ = writeln!(
                out,
                "  - {} on {}: {}",
                f.check,
                clean(&f.subject),
                clean(&f.detail)
            );
        }
    }
    let k = &c.costing;
    let _ = writeln!(
        out,
        "Cost     {:.3} = parts {:.3} + {} BOM line{} x {:.3}; {} parts on the board",
        k.total,
        k.parts_cost,
        k.bom_lines,
        if k.bom_lines == 1 { "" } else { "s" },
        need.search.bom_line_cost,
        k.part_count
    );
}

fn write_budget(out: &mut String, need: &Need, a: &Analysis) {
    let unit = need.sensor.quantity.as_ref().map(|q| clean(&q.unit));
    let lsb = need.lsb();
    let fs = need.full_scale();
    let vpu = need.volts_per_unit();
    let _ = writeln!(out);
    let _ = writeln!(
        out,
        "Error budget (output-referred, at the {} end of the span, {} calibration)",
        if a.binding_end == 0 { "low" } else { "high" },
        enum_name(&need.accuracy.calibration)
    );
    let unit_header = unit.clone().unwrap_or_default();
    let mut columns = vec![
        ("source", Align::Left),
        ("% FS", Align::Right),
        ("LSB", Align::Right),
    ];
    if unit.is_some() {
        columns.push((unit_header.as_str(), Align::Right));
    }
    columns.push(("kind", Align::Left));
    let mut table = Table::new(&columns);
    // A row from a figure in % FS.
    let row = |label: &str, pct: f64, kind: &str| {
        let volts = pct / 100.0 * fs;
        let mut cells = vec![label.to_string(), num(pct, 3), num(volts / lsb, 3)];
        if unit.is_some() {
            cells.push(vpu.map(|k| num(volts / k, 3)).unwrap_or_default());
        }
        cells.push(kind.to_string());
        cells
    };
    for l in &a.budget {
        table.row(row(
            &l.source,
            l.pct_fs,
            if l.systematic { "systematic" } else { "random" },
        ));
    }
    table.rule();
    table.row(row(
        "worst case, first order",
        a.first_order_pct_fs,
        "total",
    ));
    table.row(row(
        "worst case, corner solved",
        a.corner_check_pct_fs,
        "check",
    ));
    table.row(row("worst case", a.worst_case_pct_fs, "total"));
    table.row(row("RSS", a.rss_pct_fs, "total"));
    table.row(row(
        &format!("on the {} basis", enum_name(&need.accuracy.basis)),
        a.basis_pct_fs,
        "total",
    ));
    table.row(row(
        "target",
        need.accuracy.max_error_pct_fs,
        if a.meets_target { "met" } else { "NOT MET" },
    ));
    table.rule();
    table.row(row(
        "quantisation (+/-0.5 LSB, apart)",
        a.quantisation_pct_fs,
        "apart",
    ));
    if fs > 0.0 {
        table.row(row(
            "noise, peak to peak (6.6 sigma)",
            100.0 * a.noise.peak_to_peak_v / fs,
            "apart",
        ));
    }
    table.render(out, "  ");
    if let Some(y) = &a.yield_result {
        let _ = writeln!(
            out,
            "  Monte Carlo: {} builds (seed {}), {} % within the target (95 % interval {} to {} %), sigma {} % FS",
            y.builds,
            y.seed,
            num(y.yield_pct, 5),
            num(y.confidence_pct[0], 5),
            num(y.confidence_pct[1], 5),
            num(y.sigma_pct_fs, 3)
        );
    }
}

fn write_cautions(out: &mut String) {
    let _ = writeln!(out);
    let _ = writeln!(out, "Caution: {CAUTIONS}.");
}

/// A plain-text report of one design for people: the job (K, B, window),
/// stages, parts, the error budget in % FS, LSB and the sensor's unit,
/// totals, the checks that failed, cost, and the cautions.
pub fn text_report(need: &Need, stock: &Stock, candidate: &Candidate) -> String {
    let mut out = String::new();
    write_job(&mut out, need);
    write_design(&mut out, need, stock, candidate);
    write_cautions(&mut out);
    out
}

/// A plain-text report of a search: the job, the search counters, the
/// chosen design (or why there is none, with the verified suggestions),
/// the alternatives, and the cautions.
pub fn solve_text_report(need: &Need, stock: &Stock, outcome: &SolveOutcome) -> String {
    let mut out = String::new();
    write_job(&mut out, need);
    let s = &outcome.stats;
    let _ = writeln!(
        out,
        "Search   {}: {} structures, {} designs analysed, {} MILP solves, {} ms; {}",
        s.mode,
        s.structures,
        s.evaluated,
        s.milp_solves,
        num(s.elapsed_ms, 3),
        if s.proven_optimal {
            "optimum proven".to_string()
        } else {
            match s.gap {
                Some(g) => format!("not proven optimal (gap {})", num(g, 3)),
                None => "not proven optimal".to_string(),
            }
        }
    );
    match &outcome.best {
        Some(best) => write_design(&mut out, need, stock, best),
        None => {
            let _ = writeln!(out);
            let _ = writeln!(out, "No design meets the need.");
        }
    }
    if let Some(inf) = &outcome.infeasible {
        let _ = writeln!(out, "Binding  {}", clean(&inf.binding));
        let best = inf
            .best_error_pct_fs
            .map(|e| format!("{} % FS", num(e, 3)))
            .unwrap_or_else(|| "none buildable".to_string());
        let _ = writeln!(
            out,
            "         best error with this stock {best}; target {} % FS",
            num(inf.target_pct_fs, 3)
        );
        if !inf.largest.is_empty() {
            let _ = writeln!(out, "         largest contributors of the best design:");
            for (source, pct) in &inf.largest {
                let _ = writeln!(out, "           {} % FS  {}", num(*pct, 3), clean(source));
            }
        }
        if inf.suggestions.is_empty() {
            let _ = writeln!(out, "         no single verified change was found");
        } else {
            let _ = writeln!(out, "What to relax (each verified by solving again):");
            let mut t = Table::new(&[
                ("change", Align::Left),
                ("cost", Align::Right),
                ("error % FS", Align::Right),
            ]);
            for sg in &inf.suggestions {
                t.row(vec![
                    clean(&sg.change),
                    format!("{:.3}", sg.cost),
                    num(sg.error_pct_fs, 3),
                ]);
            }
            t.render(&mut out, "  ");
        }
    }
    if !outcome.alternatives.is_empty() {
        let _ = writeln!(out);
        let _ = writeln!(out, "Alternatives (cost against error)");
        let mut t = Table::new(&[
            ("#", Align::Right),
            ("cost", Align::Right),
            ("worst case % FS", Align::Right),
            ("basis % FS", Align::Right),
            ("parts", Align::Right),
            ("shapes", Align::Left),
        ]);
        for (i, c) in outcome.alternatives.iter().enumerate() {
            t.row(vec![
                (i + 1).to_string(),
                format!("{:.3}", c.costing.total),
                num(c.analysis.worst_case_pct_fs, 3),
                num(c.analysis.basis_pct_fs, 3),
                c.costing.part_count.to_string(),
                c.design
                    .stages
                    .iter()
                    .map(|s| s.shape.name())
                    .collect::<Vec<_>>()
                    .join(" + "),
            ]);
        }
        t.render(&mut out, "  ");
    }
    write_cautions(&mut out);
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn designators_sort_naturally() {
        let mut v = vec!["U10", "U2B", "U2A", "U1"];
        v.sort_by_key(|d| designator_key(d));
        assert_eq!(v, ["U1", "U2A", "U2B", "U10"]);
    }

    #[test]
    fn table_columns_line_up() {
        let mut t = Table::new(&[("name", Align::Left), ("value", Align::Right)]);
        t.row(vec!["a".into(), "1.5".into()]);
        t.row(vec!["longer name".into(), "12.25".into()]);
        let mut s = String::new();
        t.render(&mut s, "");
        let lines: Vec<&str> = s.lines().collect();
        // Right-aligned numbers end in the same column.
        assert_eq!(lines[2].len(), lines[3].len(), "{s}");
        assert!(
            lines[2].ends_with("1.5") && lines[3].ends_with("12.25"),
            "{s}"
        );
    }

    #[test]
    fn user_text_loses_control_characters() {
        assert_eq!(clean("bar\x1b[31m"), "bar?[31m");
    }

    #[test]
    fn numbers_keep_significant_digits() {
        assert_eq!(num(0.012345, 3), "0.0123");
        assert_eq!(num(115.2, 4), "115.2");
        assert_eq!(num(0.0, 3), "0");
        assert_eq!(num(1.5e-7, 2), "1.5e-7");
        assert_eq!(num(0.099_999_999, 3), "0.100");
        assert_eq!(num(9.9996, 3), "10.0");
    }
}
