//! The plain-text report for people, written from the typed report
//! ([`super::types`]) and the need it answers; it reads no JSON back and
//! computes nothing the report does not hold.

use super::json::enum_name;
use super::types::{DesignReport, PartEntry, Report, Status};
use super::CAUTIONS;
use crate::need::Need;
use crate::schematic::{format_ohms, format_quantity};
use std::fmt::Write as _;

/// Text that came from the user (labels, units, part ids), made safe for a
/// terminal: control characters become `?`.
pub(crate) fn clean(text: &str) -> String {
    text.chars()
        .map(|c| if c.is_control() { '?' } else { c })
        .collect()
}

/// A number with `sig` significant digits, in plain notation where that
/// reads well and in exponent notation for the very small or large.
pub(crate) fn num(v: f64, sig: usize) -> String {
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
pub(crate) enum Align {
    Left,
    Right,
}

/// A plain text table: columns padded to their widest cell.
pub(crate) struct Table {
    header: Vec<String>,
    align: Vec<Align>,
    rows: Vec<Vec<String>>,
}

impl Table {
    pub(crate) fn new(columns: &[(&str, Align)]) -> Table {
        Table {
            header: columns.iter().map(|(h, _)| h.to_string()).collect(),
            align: columns.iter().map(|(_, a)| *a).collect(),
            rows: Vec::new(),
        }
    }

    pub(crate) fn row(&mut self, cells: Vec<String>) {
        self.rows.push(cells);
    }

    /// A rule across the table, drawn before the next row.
    fn rule(&mut self) {
        self.rows.push(Vec::new());
    }

    pub(crate) fn render(&self, out: &mut String, indent: &str) {
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
        "         {} to {}{quantity}, {wiring}, source {} ohm between its terminals{}",
        volts_eng(s.signal_low.0),
        volts_eng(s.signal_high.0),
        format_ohms(s.source.0),
        match s.excitation {
            crate::need::Excitation::Supply => ", excited from the supply",
            crate::need::Excitation::Independent => "",
        }
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
        "Supply   {} / {}, positive rail within {} %{}",
        volts_eng(need.supply.positive.0),
        volts_eng(need.supply.negative.0),
        num(need.supply.tolerance.0, 3),
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
        "Target   {} % FS on the {} basis{}, calibration {}, {} to {} degC, signal bandwidth {} Hz",
        num(need.accuracy.max_error_pct_fs, 3),
        enum_name(&need.accuracy.basis),
        if need.accuracy.basis == crate::need::Basis::Yield {
            format!(" ({} % of builds)", num(need.accuracy.yield_pct, 4))
        } else {
            String::new()
        },
        enum_name(&need.accuracy.calibration),
        num(need.accuracy.temp_min.0, 3),
        num(need.accuracy.temp_max.0, 3),
        num(need.accuracy.bandwidth.0, 4)
    );
    let search = &need.search;
    let _ = writeln!(
        out,
        "Limits   objective {}, up to {} stages and {} parts, BOM-line fee {}, time limit {} ms, {}",
        search.objective.name(),
        search.max_stages,
        search.max_parts,
        search.bom_line_cost,
        search.time_limit_ms,
        if need.stock.only {
            "stocked parts only"
        } else {
            "series values beyond the stock allowed"
        }
    );
}

fn write_design(out: &mut String, need: &Need, d: &DesignReport) {
    let t = &d.transfer;
    let _ = writeln!(out);
    let _ = writeln!(
        out,
        "Design   {}, {} stage{}",
        d.topology.as_deref().unwrap_or("-"),
        d.shapes.len(),
        if d.shapes.len() == 1 { "" } else { "s" }
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
    write_stages(out, d);
    write_parts(out, d);
    write_filter(out, d);
    write_budget(out, need, d);
    write_checks(out, d);
    let _ = writeln!(
        out,
        "Cost     {:.3} = parts {:.3} + {} BOM line{} x {:.3}; {} parts on the board",
        d.cost,
        d.parts_cost,
        d.bom_lines,
        if d.bom_lines == 1 { "" } else { "s" },
        need.search.bom_line_cost,
        d.part_count
    );
}

fn write_stages(out: &mut String, d: &DesignReport) {
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
    for st in &d.stages {
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
}

/// The filter at the ADC input: its figures, its checks and a coarse
/// table of the chain's response (every tenth Bode point).
fn write_filter(out: &mut String, d: &DesignReport) {
    let _ = writeln!(out);
    let Some(f) = &d.filter else {
        let _ = writeln!(
            out,
            "Filter   none: no resistor and capacitor pair from the stock meets the rules \
             of docs/filter.md"
        );
        return;
    };
    let _ = writeln!(
        out,
        "Filter   {} in series, {} to ground, driven by {}",
        f.series_ref, f.shunt_ref, f.driver
    );
    let _ = writeln!(
        out,
        "         corner {} Hz, noise bandwidth {} Hz, droop at the band edge {} % FS",
        num(f.corner_hz, 4),
        num(f.noise_bandwidth_hz, 4),
        num(f.droop_pct_fs, 3)
    );
    if let Some(r) = f.rejection_at_nyquist_db {
        let _ = writeln!(
            out,
            "         rejection at half the sample rate {} dB",
            num(r, 4)
        );
    }
    if let (Some(t), Some(e)) = (f.settling_ns, f.settling_error_lsb) {
        let _ = writeln!(
            out,
            "         settles to 1/2 LSB in {} ns after a kickback; {} LSB left at the end of \
             the acquisition",
            num(t, 4),
            num(e, 3)
        );
    }
    if let Some(m) = f.phase_margin_deg {
        let _ = writeln!(
            out,
            "         phase margin of {} into the pair {} degrees",
            f.driver,
            num(m, 3)
        );
    }
    for p in &f.feedback_poles {
        let _ = writeln!(
            out,
            "         feedback pole: {} {} F across {} (stage {}), corner {} Hz; noise gain of \
             {} {} to {}, phase margin {} degrees",
            p.reference,
            num(p.farads, 3),
            p.across,
            p.stage + 1,
            num(p.corner_hz, 4),
            p.section,
            num(p.noise_gain_dc, 4),
            num(p.noise_gain_hf, 3),
            num(p.phase_margin_deg, 3)
        );
    }
    for c in &f.checks {
        let _ = writeln!(
            out,
            "         [{}] {}: {}",
            if c.pass { "pass" } else { "FAIL" },
            c.check,
            c.detail
        );
    }
    let mut table = Table::new(&[
        ("Hz", Align::Right),
        ("dB", Align::Right),
        ("deg", Align::Right),
    ]);
    for p in f.bode.iter().step_by(10) {
        table.row(vec![
            num(p.frequency_hz, 4),
            num(p.magnitude_db, 4),
            num(p.phase_deg, 4),
        ]);
    }
    let _ = writeln!(out, "         response from the sensor to the ADC pin:");
    table.render(out, "         ");
}

fn write_parts(out: &mut String, d: &DesignReport) {
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
    for p in &d.parts {
        let (reference, kind, value_text, part_id, unit_cost, grade) = match p {
            PartEntry::Resistor(r) => (
                &r.reference,
                r.kind,
                &r.value_text,
                &r.part_id,
                r.unit_cost,
                match &r.network {
                    None => format!(
                        "{} %, {} ppm/degC",
                        num(r.tolerance_pct, 2),
                        num(r.tcr_ppm_per_c, 3)
                    ),
                    Some(n) => format!(
                        "{} %, {} ppm/degC; network package {} element {}, ratio {} %, \
                         tracking {} ppm/degC",
                        num(r.tolerance_pct, 2),
                        num(r.tcr_ppm_per_c, 3),
                        n.package,
                        n.element,
                        num(n.ratio_tolerance_pct, 2),
                        num(n.tracking_tcr_ppm_per_c, 3)
                    ),
                },
            ),
            PartEntry::Amplifier(a) => {
                let mut g = format!(
                    "Vos {} uV, Ib {} nA",
                    num(a.vos_max_uv, 3),
                    num(a.ib_max_na, 3)
                );
                if a.shares_package {
                    let _ = write!(g, ", in {}", a.package);
                }
                (
                    &a.reference,
                    a.kind,
                    &a.value_text,
                    &a.part_id,
                    a.unit_cost,
                    g,
                )
            }
            PartEntry::Reference(r) => (
                &r.reference,
                r.kind,
                &r.value_text,
                &r.part_id,
                r.unit_cost,
                format!(
                    "{} %, {} ppm/degC",
                    num(r.initial_pct, 2),
                    num(r.tempco_ppm_per_c, 3)
                ),
            ),
            PartEntry::Capacitor(c) => (
                &c.reference,
                c.kind,
                &c.value_text,
                &c.part_id,
                c.unit_cost,
                format!(
                    "{}, {} %, {} V",
                    c.dielectric,
                    num(c.tolerance_pct, 2),
                    num(c.rated_v, 3)
                ),
            ),
        };
        parts.row(vec![
            reference.clone(),
            kind.to_string(),
            clean(value_text),
            clean(part_id),
            format!("{unit_cost:.3}"),
            grade,
        ]);
    }
    parts.render(out, "  ");
}

fn write_checks(out: &mut String, d: &DesignReport) {
    let failed: Vec<_> = d.findings.iter().filter(|f| !f.ok).collect();
    let _ = writeln!(out);
    if failed.is_empty() {
        let _ = writeln!(out, "Checks   all {} pass", d.findings.len());
    } else {
        let _ = writeln!(
            out,
            "Checks   {} of {} FAIL:",
            failed.len(),
            d.findings.len()
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
    // The drive of each amplifier is shown even when it passes (how close
    // the output current comes to the part's limit).
    for f in d
        .findings
        .iter()
        .filter(|f| f.ok && f.check == "output current")
    {
        let _ = writeln!(
            out,
            "  {} on {}: {}",
            f.check,
            clean(&f.subject),
            clean(&f.detail)
        );
    }
}

fn write_budget(out: &mut String, need: &Need, d: &DesignReport) {
    let e = &d.error;
    let unit = need.sensor.quantity.as_ref().map(|q| clean(&q.unit));
    let lsb = need.lsb();
    let fs = need.full_scale();
    let vpu = need.volts_per_unit();
    let _ = writeln!(out);
    let _ = writeln!(
        out,
        "Error budget (output-referred, at the {} end of the span, {} calibration)",
        e.binding_end, e.calibration
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
    for l in &e.budget {
        table.row(row(
            &l.source,
            l.pct_fs,
            if l.systematic { "systematic" } else { "random" },
        ));
    }
    table.rule();
    table.row(row(
        "worst case, first order",
        e.first_order_pct_fs,
        "total",
    ));
    table.row(row(
        "worst case, corner solved",
        e.corner_check_pct_fs,
        "check",
    ));
    table.row(row("worst case", e.worst_case_pct_fs, "total"));
    table.row(row(
        "RSS (root-sum-square of the limits)",
        e.rss_pct_fs,
        "total",
    ));
    table.row(row(
        &format!("on the {} basis", e.basis),
        e.basis_pct_fs,
        "total",
    ));
    table.row(row(
        "target",
        e.target_pct_fs,
        if e.meets_target { "met" } else { "NOT MET" },
    ));
    table.rule();
    table.row(row(
        "quantisation (+/-0.5 LSB, apart)",
        e.quantisation_pct_fs,
        "apart",
    ));
    if fs > 0.0 {
        table.row(row(
            &format!(
                "noise, peak to peak (6.6 sigma; 1/f {} % of the power)",
                num(100.0 * e.noise.flicker_share, 2)
            ),
            e.noise.pct_fs_pp,
            "apart",
        ));
    }
    table.render(out, "  ");
    if let (Some(builds), Some(seed), Some(pct), Some(ci), Some(sigma)) = (
        e.yield_builds,
        e.yield_seed,
        e.yield_pct,
        e.yield_confidence_pct,
        e.sigma_pct_fs,
    ) {
        let _ = writeln!(
            out,
            "  Monte Carlo: {builds} builds (seed {seed}), {} % within the target (95 % interval {} to {} %), sigma {} % FS",
            num(pct, 5),
            num(ci[0], 5),
            num(ci[1], 5),
            num(sigma, 3)
        );
        let _ = writeln!(
            out,
            "  (each build's error is the worst of both span ends at both temperature ends; sigma is the spread of that worst error)"
        );
    }
    if let Some(coverage) = e.rss_coverage_pct {
        let _ = writeln!(
            out,
            "  RSS total covers {} % of the Monte Carlo builds (an RSS of limits, not a fixed number of sigma)",
            num(coverage, 4)
        );
    }
    for warning in &d.warnings {
        let _ = writeln!(out, "  Warning: {}", clean(warning));
    }
}

fn write_cautions(out: &mut String) {
    let _ = writeln!(out);
    let _ = writeln!(out, "Caution: {CAUTIONS}.");
}

/// A plain-text report of one design for people: the job (K, B, window),
/// stages, parts, the error budget in % FS, LSB and the sensor's unit,
/// totals, the checks that failed, cost, and the cautions.
pub fn design_text(need: &Need, design: &DesignReport) -> String {
    let mut out = String::new();
    write_job(&mut out, need);
    write_design(&mut out, need, design);
    write_cautions(&mut out);
    out
}

/// How each budget line of a design is worked out, for people (the CLI's
/// `--explain`): per line its value, its formula and every input with its
/// value, unit, meaning and the parts behind it, all as the analysis
/// wrote them (`design.error.budget[].explain`).
pub fn explain_text(design: &DesignReport) -> String {
    let e = &design.error;
    let mut out = String::new();
    let _ = writeln!(out);
    let _ = writeln!(
        out,
        "How each budget line is worked out (% FS, at the {} end of the span)",
        e.binding_end
    );
    for l in &e.budget {
        let _ = writeln!(out, "  {} = {} % FS", clean(&l.source), num(l.pct_fs, 4));
        let _ = writeln!(out, "    = {}", clean(&l.explain.formula));
        for i in &l.explain.inputs {
            let parts: Vec<String> = i
                .refs
                .iter()
                .chain(i.part_ids.iter())
                .map(|p| clean(p))
                .collect();
            let parts = if parts.is_empty() {
                String::new()
            } else {
                format!(" [{}]", parts.join(" "))
            };
            // A fraction (unit `1`) is shown as a bare number.
            let unit = if i.unit == "1" {
                String::new()
            } else {
                format!(" {}", i.unit)
            };
            let _ = writeln!(
                out,
                "    {} = {}{}: {}{}",
                clean(&i.name),
                num(i.value, 4),
                unit,
                clean(&i.what),
                parts
            );
        }
        if let Some(note) = &l.explain.note {
            let _ = writeln!(out, "    ({})", clean(note));
        }
    }
    out
}

/// A plain-text report of a whole report: the job, the search counters
/// (when there was a search), the design (or why there is none, with the
/// verified suggestions), the alternatives, and the cautions.
pub fn report_text(need: &Need, report: &Report) -> String {
    let mut out = String::new();
    write_job(&mut out, need);
    if let Some(s) = &report.search {
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
    }
    match &report.design {
        Some(d) => write_design(&mut out, need, d),
        None if report.status == Status::Unfinished => {
            let _ = writeln!(out);
            let _ = writeln!(
                out,
                "Not finished: no design found yet, and none shown impossible."
            );
            if let Some(reason) = &report.reason {
                let _ = writeln!(out, "         {}", clean(reason));
            }
        }
        None => {
            let _ = writeln!(out);
            let _ = writeln!(out, "No design meets the need.");
        }
    }
    write_infeasible(&mut out, report);
    write_alternatives(&mut out, report);
    write_cautions(&mut out);
    out
}

fn write_infeasible(out: &mut String, report: &Report) {
    let Some(inf) = &report.infeasible else {
        return;
    };
    let _ = writeln!(out, "Binding  {}", clean(&inf.binding));
    let best = inf
        .best_error_pct_fs
        .map(|e| format!("{} % FS", num(e, 3)))
        .unwrap_or_else(|| "none buildable".to_string());
    let _ = writeln!(
        out,
        "         most accurate design found {best}; target {} % FS",
        num(inf.target_pct_fs, 3)
    );
    if let Some(b) = &inf.best_attempt {
        let _ = writeln!(
            out,
            "         that design: {}, cost {:.3}, {} parts (in full as infeasible.best_attempt in the JSON report)",
            clean(&b.shapes.join(" + ")),
            b.cost,
            b.part_count
        );
    }
    if !inf.proven {
        let _ = writeln!(
            out,
            "         no design was found among those searched; that is not a proof that none exists"
        );
    }
    if !inf.largest.is_empty() {
        let _ = writeln!(out, "         largest contributors of the best design:");
        for c in &inf.largest {
            let _ = writeln!(
                out,
                "           {} % FS  {}",
                num(c.pct_fs, 3),
                clean(&c.source)
            );
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
        t.render(out, "  ");
    }
}

fn write_alternatives(out: &mut String, report: &Report) {
    if report.alternatives.is_empty() {
        return;
    }
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
    for (i, c) in report.alternatives.iter().enumerate() {
        t.row(vec![
            (i + 1).to_string(),
            format!("{:.3}", c.design.cost),
            num(c.worst_case_pct_fs, 3),
            num(c.basis_pct_fs, 3),
            c.design.part_count.to_string(),
            c.design.shapes.join(" + "),
        ]);
    }
    t.render(out, "  ");
}

#[cfg(test)]
mod tests {
    use super::*;

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
