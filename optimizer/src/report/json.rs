//! Building the typed report from the analysis and the search: the one
//! place where the engine's structs are turned into the report's shapes
//! ([`super::types`]). Nothing is recomputed here; the few conversions
//! (a percentage of full scale, a designator lookup) are presentation.

use super::types::{
    AlternativeReport, AmplifierEntry, BudgetEntry, CapacitorEntry, Contributor, DesignReport,
    ErrorFigures, ErrorKind, ErrorReport, FindingEntry, HistogramReport, InfeasibleReport,
    InjectionReport, NeedFigures, NoiseReport, PartEntry, ReferenceEntry, Report, ResistorEntry,
    SearchReport, StageEntry, Status, SuggestionEntry, TransferReport,
};
use crate::analysis::{Analysis, BudgetLine, Finding};
use crate::design::{Injection, Source};
use crate::error::Error;
use crate::need::Need;
use crate::schematic::{format_ohms, format_quantity};
use crate::search::{Candidate, Infeasibility, SearchStats, SolveOutcome};
use crate::stock::Stock;
use crate::topology::{AmplifierKind, Built, Section};

/// The name a serde enum of the need is written as in specs (`worst-case`,
/// `two-point`): the one place those names live is the enum itself.
pub(crate) fn enum_name<T: serde::Serialize>(value: &T) -> String {
    serde_json::to_value(value)
        .ok()
        .and_then(|v| v.as_str().map(str::to_string))
        .unwrap_or_default()
}

/// The natural order of designators: `U2` before `U10`, `U1A` before `U1B`.
pub(crate) fn designator_key(designator: &str) -> (String, u64, String) {
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

/// The `parts[]` of a design: resistors, amplifier sections in designator
/// order (the package price on the first section of a package), then
/// references.
pub fn parts(stock: &Stock, built: &Built) -> Vec<PartEntry> {
    let mut parts = Vec::new();
    let mut priced_networks: Vec<(&str, u32)> = Vec::new();
    for r in &built.resistors {
        // A network's price sits on the first element listed of each
        // package (as a shared op-amp package's on its first section).
        let unit_cost = match &r.part.network {
            None => r.part.unit_cost,
            Some(n) if priced_networks.contains(&(n.part_id.as_str(), n.package)) => 0.0,
            Some(n) => {
                priced_networks.push((n.part_id.as_str(), n.package));
                n.package_cost
            }
        };
        parts.push(PartEntry::Resistor(ResistorEntry {
            footprint: stock
                .resistor(&r.part.part_id)
                .map(|p| p.package.clone())
                .or_else(|| stock.network(&r.part.part_id).map(|p| p.package.clone())),
            kind: "resistor",
            part_id: r.part.part_id.clone(),
            reference: r.designator.clone(),
            role: r.role.name().to_string(),
            stage: r.stage,
            tcr_ppm_per_c: r.part.tcr_ppm_per_c,
            tolerance_pct: r.part.tolerance_pct,
            unit_cost,
            value: r.part.ohms,
            value_text: format_ohms(r.part.ohms),
            network: r.part.network.as_deref().cloned(),
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
        let section = |kind, part_id: &str, vos_max_uv, ib_max_na| AmplifierEntry {
            channels: package.map(|p| p.channels).unwrap_or(1),
            gain_error_pct: None,
            gain_resistor_ohms: None,
            ib_max_na,
            kind,
            output_offset_uv: None,
            package: sec.package.clone(),
            part_id: part_id.to_string(),
            reference: sec.designator.clone(),
            shares_package,
            stage: sec.stage,
            unit_cost: if shares_package { 0.0 } else { package_cost },
            value: part_id.to_string(),
            value_text: part_id.to_string(),
            vos_max_uv,
        };
        let entry = match sec.kind {
            AmplifierKind::OpAmp(i) => stock
                .opamps
                .get(i)
                .map(|p| section("opamp", &p.part_id, p.vos_max_uv, p.ib_max_na)),
            AmplifierKind::InAmp(i) => stock.inamps.get(i).map(|p| AmplifierEntry {
                gain_error_pct: Some(p.gain_error.0),
                gain_resistor_ohms: Some(p.gain_resistor.0),
                output_offset_uv: Some(p.output_offset_uv),
                ..section("inamp", &p.part_id, p.input_offset_uv, p.ib_max_na)
            }),
        };
        parts.extend(entry.map(PartEntry::Amplifier));
    }
    for src in &built.sources {
        let Some(r) = src.reference.and_then(|i| stock.references.get(i)) else {
            continue;
        };
        parts.push(PartEntry::Reference(ReferenceEntry {
            initial_pct: r.initial.0,
            kind: "reference",
            part_id: r.part_id.clone(),
            reference: src.designator.clone(),
            tempco_ppm_per_c: r.tempco.0,
            unit_cost: r.unit_cost,
            value: r.volts.0,
            value_text: format_quantity(r.volts.0, "V"),
        }));
    }
    for f in &built.feedback_capacitors {
        let c = &f.part;
        parts.push(PartEntry::Capacitor(CapacitorEntry {
            dielectric: c.dielectric.clone(),
            footprint: (!c.package.is_empty()).then(|| c.package.clone()),
            kind: "capacitor",
            part_id: c.part_id.clone(),
            rated_v: c.rated.0,
            reference: f.designator.clone(),
            role: "feedback".to_string(),
            stage: f.stage,
            tempco_ppm_per_c: c.tempco.0,
            tolerance_pct: c.tolerance.0,
            unit_cost: c.unit_cost,
            value: c.value.0,
            value_text: format_quantity(c.value.0, "F"),
        }));
    }
    if let Some(f) = &built.filter {
        let stage = built.stage_outputs.len().saturating_sub(1);
        parts.push(PartEntry::Resistor(ResistorEntry {
            footprint: stock.resistor(&f.series.part_id).map(|p| p.package.clone()),
            kind: "resistor",
            part_id: f.series.part_id.clone(),
            reference: f.series_ref.clone(),
            role: "filter".to_string(),
            stage,
            tcr_ppm_per_c: f.series.tcr_ppm_per_c,
            tolerance_pct: f.series.tolerance_pct,
            unit_cost: f.series.unit_cost,
            value: f.series.ohms,
            value_text: format_ohms(f.series.ohms),
            network: None,
        }));
        let c = &f.shunt;
        parts.push(PartEntry::Capacitor(CapacitorEntry {
            dielectric: c.dielectric.clone(),
            footprint: Some(c.package.clone()),
            kind: "capacitor",
            part_id: c.part_id.clone(),
            rated_v: c.rated.0,
            reference: f.shunt_ref.clone(),
            role: "filter".to_string(),
            stage,
            tempco_ppm_per_c: c.tempco.0,
            tolerance_pct: c.tolerance.0,
            unit_cost: c.unit_cost,
            value: c.value.0,
            value_text: format_quantity(c.value.0, "F"),
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
fn injection(built: &Built, stage: usize, what: &str, inj: &Injection) -> InjectionReport {
    let role_ref = |role: &str| {
        built
            .resistors
            .iter()
            .find(|r| r.stage == stage && r.role.name() == role)
            .map(|r| r.designator.clone())
    };
    match inj {
        Injection::Ground => InjectionReport::Plain {
            buffered: false,
            kind: "ground",
            source: None,
        },
        Injection::Direct { source } => InjectionReport::Plain {
            buffered: false,
            kind: "direct",
            source: Some(source_designator(built, source)),
        },
        Injection::Divider {
            source, buffered, ..
        } => InjectionReport::Divider {
            bottom: role_ref(&format!("{what}.bottom")),
            buffered: *buffered,
            kind: "divider",
            source: source_designator(built, source),
            top: role_ref(&format!("{what}.top")),
        },
    }
}

/// The `stages[]`: the analysis' stage reports plus the resistor roles and
/// amplifier sections of each stage by designator.
fn stages(candidate: &Candidate) -> Vec<StageEntry> {
    let built = &candidate.built;
    candidate
        .analysis
        .stages
        .iter()
        .map(|st| {
            let design_stage = candidate.design.stages.get(st.index);
            StageEntry {
                amplifier: st.amplifier.clone(),
                bias: design_stage.map(|s| injection(built, st.index, "b", &s.bias)),
                gain: st.gain,
                index: st.index,
                offset: design_stage.map(|s| injection(built, st.index, "o", &s.offset)),
                offset_v: st.offset_v,
                output_range_v: st.output_range_v,
                parts: st.parts.clone(),
                resistors: built
                    .resistors
                    .iter()
                    .filter(|r| r.stage == st.index)
                    .map(|r| (r.role.name().to_string(), r.designator.clone()))
                    .collect(),
                sections: built
                    .sections
                    .iter()
                    .filter(|s| s.stage == st.index)
                    .map(|s| s.designator.clone())
                    .collect(),
                shape: st.shape.clone(),
                topology: design_stage.map(|s| s.shape.topology().name().to_string()),
            }
        })
        .collect()
}

fn budget_entry(need: &Need, line: &BudgetLine) -> BudgetEntry {
    BudgetEntry {
        at_ends_pct_fs: line.at_ends_pct_fs,
        explain: line.explain.clone(),
        line: line.line,
        lsb: line.lsb,
        pct_fs: line.pct_fs,
        source: line.source.clone(),
        systematic: line.systematic,
        unit: need.sensor.quantity.as_ref().map(|q| q.unit.clone()),
        units: line.units,
    }
}

fn error_figures(need: &Need, a: &Analysis) -> ErrorFigures {
    let fs = need.full_scale();
    let mc = a.yield_result.as_ref();
    // A total in % FS as LSB and in the sensor's unit (a size, so the
    // volts per unit counts by its magnitude).
    let lsb = |pct: f64| pct / 100.0 * fs / need.lsb();
    let units = |pct: f64| {
        need.volts_per_unit()
            .map(|per_unit| pct / 100.0 * fs / per_unit.abs())
    };
    ErrorFigures {
        basis: enum_name(&need.accuracy.basis),
        basis_pct_fs: a.basis_pct_fs,
        binding_end: if a.binding_end == 0 { "low" } else { "high" },
        budget: a.budget.iter().map(|l| budget_entry(need, l)).collect(),
        calibration: enum_name(&need.accuracy.calibration),
        corner_check_pct_fs: a.corner_check_pct_fs,
        first_order_pct_fs: a.first_order_pct_fs,
        histogram: mc.map(|y| HistogramReport {
            bin_edges_pct_fs: y.histogram.bin_edges_pct_fs.clone(),
            counts: y.histogram.counts.clone(),
        }),
        meets_target: a.meets_target,
        noise: NoiseReport {
            flicker_share: a.noise.flicker_share,
            noise_bandwidth_hz: a.noise.noise_bandwidth_hz,
            pct_fs_pp: if fs > 0.0 {
                100.0 * a.noise.peak_to_peak_v / fs
            } else {
                f64::NAN
            },
            peak_to_peak_v: a.noise.peak_to_peak_v,
            rms_v: a.noise.rms_v,
        },
        quantisation_lsb: 0.5,
        quantisation_pct_fs: a.quantisation_pct_fs,
        rss_coverage_pct: mc.map(|y| y.rss_coverage_pct),
        rss_lsb: lsb(a.rss_pct_fs),
        rss_pct_fs: a.rss_pct_fs,
        rss_units: units(a.rss_pct_fs),
        sigma_pct_fs: mc.map(|y| y.sigma_pct_fs),
        target_pct_fs: need.accuracy.max_error_pct_fs,
        worst_case_lsb: lsb(a.worst_case_pct_fs),
        worst_case_pct_fs: a.worst_case_pct_fs,
        worst_case_units: units(a.worst_case_pct_fs),
        yield_builds: mc.map(|y| y.builds),
        yield_confidence_pct: mc.map(|y| y.confidence_pct),
        yield_pct: mc.map(|y| y.yield_pct),
        yield_seed: mc.map(|y| y.seed),
        yield_target_pct: need.accuracy.yield_pct,
    }
}

fn finding(f: &Finding) -> FindingEntry {
    FindingEntry {
        check: f.check.clone(),
        detail: f.detail.clone(),
        ok: f.ok,
        subject: f.subject.clone(),
    }
}

/// The design object for one evaluated design.
pub fn design_report(need: &Need, stock: &Stock, candidate: &Candidate) -> DesignReport {
    let a = &candidate.analysis;
    let c = &candidate.costing;
    let t = &a.transfer;
    DesignReport {
        bom_lines: c.bom_lines,
        cost: c.total,
        error: error_figures(need, a),
        feasible: a.feasible,
        file: crate::design::design_file_json(&candidate.design, stock),
        findings: a.findings.iter().map(finding).collect(),
        part_count: c.part_count,
        parts: parts(stock, &candidate.built),
        parts_cost: c.parts_cost,
        shapes: candidate
            .design
            .stages
            .iter()
            .map(|s| s.shape.name().to_string())
            .collect(),
        stages: stages(candidate),
        filter: candidate.built.filter.as_ref().map(|f| (*f.report).clone()),
        topology: candidate
            .design
            .stages
            .first()
            .map(|s| s.shape.topology().name().to_string()),
        transfer: TransferReport {
            gain: t.gain,
            ideal_at_ends_v: t.ideal_at_ends_v,
            ideal_gain: t.ideal_gain,
            ideal_offset_v: t.ideal_offset_v,
            offset_v: t.offset_v,
            output_at_ends_v: t.output_at_ends_v,
        },
        warnings: a.warnings(need),
    }
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

/// The derived figures of a need.
pub fn need_figures(need: &Need) -> NeedFigures {
    let (k, b) = need.ideal_transfer();
    let (lo, hi) = need.target_window();
    let [sensor, adc, supply, accuracy, search, stock] = super::need_echo::need_tables(need);
    NeedFigures {
        accuracy,
        adc,
        search,
        sensor,
        stock,
        supply,
        full_scale_v: need.full_scale(),
        ideal_gain: k,
        ideal_offset_v: b,
        lsb_v: need.lsb(),
        quantity_unit: need.sensor.quantity.as_ref().map(|q| q.unit.clone()),
        target_window_v: [lo, hi],
        volts_per_unit: need.volts_per_unit(),
    }
}

fn search_report(s: &SearchStats) -> SearchReport {
    SearchReport {
        elapsed_ms: s.elapsed_ms,
        evaluated: s.evaluated,
        gap: s.gap,
        milp_solves: s.milp_solves,
        mode: s.mode.clone(),
        proven_optimal: s.proven_optimal,
        structures: s.structures,
    }
}

fn infeasible_report(need: &Need, stock: &Stock, i: &Infeasibility) -> InfeasibleReport {
    InfeasibleReport {
        best_attempt: i
            .best_attempt
            .as_ref()
            .map(|c| Box::new(design_report(need, stock, c))),
        best_error_pct_fs: i.best_error_pct_fs,
        binding: i.binding.clone(),
        largest: i
            .largest
            .iter()
            .map(|(source, pct)| Contributor {
                pct_fs: *pct,
                source: source.clone(),
            })
            .collect(),
        proven: i.proven,
        suggestions: i
            .suggestions
            .iter()
            .map(|s| SuggestionEntry {
                apply: s.apply.clone(),
                apply_stock: s.apply_stock.clone(),
                change: s.change.clone(),
                cost: s.cost,
                error_pct_fs: s.error_pct_fs,
            })
            .collect(),
        target_pct_fs: i.target_pct_fs,
    }
}

/// The report of a search: `status`, `need`, `design` (or null),
/// `alternatives[]`, `search`, `infeasible` (or null) and `reason` (the
/// binding limit in words, or null).
pub fn solve_report(need: &Need, stock: &Stock, outcome: &SolveOutcome) -> Report {
    // The chosen design as reported (with its filter pair, or with none
    // where none fits) may miss what the search's bounds promised: then
    // the report says so, as the analysis of a design the user has would.
    let best_short = outcome
        .best
        .as_ref()
        .and_then(|b| shortfall(need, &b.analysis));
    Report {
        alternatives: outcome
            .alternatives
            .iter()
            .map(|c| AlternativeReport {
                basis_pct_fs: c.analysis.basis_pct_fs,
                design: design_report(need, stock, c),
                worst_case_pct_fs: c.analysis.worst_case_pct_fs,
            })
            .collect(),
        design: outcome.best.as_ref().map(|c| design_report(need, stock, c)),
        infeasible: outcome
            .infeasible
            .as_ref()
            .map(|i| infeasible_report(need, stock, i)),
        need: need_figures(need),
        reason: match (&outcome.infeasible, outcome.unfinished_reason()) {
            _ if best_short.is_some() => best_short.clone(),
            (_, Some(why)) => Some(why),
            (Some(i), None) => Some(i.binding.clone()),
            (None, None) => None,
        },
        search: Some(search_report(&outcome.stats)),
        status: if best_short.is_some() {
            Status::Infeasible
        } else if outcome.best.is_some() {
            Status::Ok
        } else if outcome.unfinished() {
            Status::Unfinished
        } else {
            Status::Infeasible
        },
    }
}

/// The report of one design the user already has: the shape of a solve
/// report with no search behind it. `status` is `ok` when the design meets
/// the need and `infeasible` otherwise, with `reason` saying why.
pub fn analysis_report(need: &Need, stock: &Stock, candidate: &Candidate) -> Report {
    let reason = shortfall(need, &candidate.analysis);
    Report {
        alternatives: Vec::new(),
        design: Some(design_report(need, stock, candidate)),
        infeasible: None,
        need: need_figures(need),
        status: if reason.is_none() {
            Status::Ok
        } else {
            Status::Infeasible
        },
        reason,
        search: None,
    }
}

impl From<&Error> for ErrorReport {
    fn from(e: &Error) -> Self {
        match e {
            Error::Input { at, message } => ErrorReport {
                column: at.column_number(),
                column_name: at.column_name().map(str::to_string),
                detail: message.clone(),
                file: Some(at.file.clone()),
                key: at.key.clone(),
                kind: ErrorKind::Input,
                line: at.line,
                message: e.to_string(),
            },
            Error::Design { message } => ErrorReport {
                column: None,
                column_name: None,
                detail: message.clone(),
                file: None,
                key: None,
                kind: ErrorKind::Design,
                line: None,
                message: e.to_string(),
            },
        }
    }
}

impl ErrorReport {
    /// An internal error (a bug): `message` is shown as it is.
    pub fn internal(message: impl Into<String>) -> Self {
        let message = message.into();
        ErrorReport {
            column: None,
            column_name: None,
            detail: message.clone(),
            file: None,
            key: None,
            kind: ErrorKind::Internal,
            line: None,
            message,
        }
    }
}
