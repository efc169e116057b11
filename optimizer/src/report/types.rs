//! The serialisable shapes that cross the boundary: the report object
//! (`spanfit solve --json`), the design object inside it, the bundle the
//! front ends receive (`{report, artifacts, text}`) and the error report.
//! `docs/report.md` documents every field.
//!
//! Field order: the JSON has always listed the keys of every object in
//! sorted (byte) order, so the fields below are declared in that order and
//! serialise byte for byte as before. A test serialises a report directly
//! and through `serde_json::Value` (whose maps sort) and compares the two
//! texts, so a field added out of order is caught.
//!
//! These structs hold presentation only: every number is copied from the
//! analysis or the search, none is computed here.

use crate::analysis::Line;
use crate::bom::BomTable;
use serde::Serialize;
use std::collections::BTreeMap;

/// Whether a design meets the need (`"ok"`), none does (`"infeasible"`),
/// or the search stopped before it found one or proved that none exists
/// (`"unfinished"`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Status {
    /// A design meets the need.
    Ok,
    /// No design (or not the given one) meets the need.
    Infeasible,
    /// The time limit or a cancel stopped the search before it found a
    /// design or proved that none exists.
    Unfinished,
}

/// The report object: what `spanfit solve --json` and `spanfit analyze
/// --json` print, and `report` in every bundle. `analyze` fills it as a
/// solve with no search behind it: no alternatives, `search` and
/// `infeasible` null.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Report {
    /// The cost/error front of a search, each a full design object with
    /// the two figures of the front copied up top.
    pub alternatives: Vec<AlternativeReport>,
    /// The chosen (or analysed) design, or null when a search found none.
    pub design: Option<DesignReport>,
    /// Why no design meets the need, from a search; null otherwise.
    pub infeasible: Option<InfeasibleReport>,
    /// The derived figures of the need.
    pub need: NeedFigures,
    /// The binding limit or the shortfall in words, or null when met.
    pub reason: Option<String>,
    /// The search counters, or null for `analyze`.
    pub search: Option<SearchReport>,
    /// `ok`, `infeasible` (proven) or `unfinished`.
    pub status: Status,
}

/// The derived figures of a need (`need` in the report).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NeedFigures {
    /// The need's `accuracy` table as the run used it, defaults applied.
    pub accuracy: serde_json::Value,
    /// The need's `adc` table as the run used it, defaults applied.
    pub adc: serde_json::Value,
    /// ADC full-scale span in volts.
    pub full_scale_v: f64,
    /// Ideal gain `K`.
    pub ideal_gain: f64,
    /// Ideal offset `B`, volts.
    pub ideal_offset_v: f64,
    /// One LSB in volts.
    pub lsb_v: f64,
    /// The sensor's physical unit, where the need gives one.
    pub quantity_unit: Option<String>,
    /// The need's `search` table as the run used it, defaults applied.
    pub search: serde_json::Value,
    /// The need's `sensor` table as the run used it, defaults applied.
    pub sensor: serde_json::Value,
    /// The need's `stock` table as the run used it, defaults applied.
    pub stock: serde_json::Value,
    /// The need's `supply` table as the run used it, defaults applied.
    pub supply: serde_json::Value,
    /// The target output window `[low, high]`, volts.
    pub target_window_v: [f64; 2],
    /// Volts at the ADC per unit of the physical quantity, where given.
    pub volts_per_unit: Option<f64>,
}

/// One evaluated design (`design` in the report).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DesignReport {
    /// Distinct part numbers on the BOM.
    pub bom_lines: usize,
    /// Total cost: parts plus one fee per BOM line.
    pub cost: f64,
    /// The error figures and the budget.
    pub error: ErrorFigures,
    /// Every feasibility check passed.
    pub feasible: bool,
    /// The design in the file format `analyze` reads back.
    pub file: serde_json::Value,
    /// The filter at the ADC input and its figures, or null when none
    /// could be chosen from the stock.
    pub filter: Option<crate::filter::FilterReport>,
    /// Every feasibility check and its outcome.
    pub findings: Vec<FindingEntry>,
    /// Parts on the board.
    pub part_count: usize,
    /// Resistors, op-amp and in-amp sections, references.
    pub parts: Vec<PartEntry>,
    /// Sum of the part prices.
    pub parts_cost: f64,
    /// Stage shape names, first stage first.
    pub shapes: Vec<String>,
    /// The stages with their parts by designator.
    pub stages: Vec<StageEntry>,
    /// The topology family of the first stage.
    pub topology: Option<String>,
    /// The solved transfer against the ideal one.
    pub transfer: TransferReport,
    /// Plain-language warnings about the verdict (a design judged on the
    /// `rss` basis whose Monte Carlo yield is under the need's
    /// `yield_pct`); empty when there is nothing to flag.
    pub warnings: Vec<String>,
}

/// A design of the cost/error front: the design object plus its worst
/// case and basis error up top, for plotting.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AlternativeReport {
    /// Error on the need's basis, % FS.
    pub basis_pct_fs: f64,
    /// The design object.
    #[serde(flatten)]
    pub design: DesignReport,
    /// Worst-case error, % FS.
    pub worst_case_pct_fs: f64,
}

/// One stage of a design.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StageEntry {
    /// Amplifier part id.
    pub amplifier: String,
    /// How the bias node is driven (null when the design has no such stage).
    pub bias: Option<InjectionReport>,
    /// Stage gain.
    pub gain: f64,
    /// 0-based stage index.
    pub index: usize,
    /// How the offset node is driven.
    pub offset: Option<InjectionReport>,
    /// Stage offset, volts.
    pub offset_v: f64,
    /// Output range over the span, volts.
    pub output_range_v: [f64; 2],
    /// Designators of the stage's parts.
    pub parts: Vec<String>,
    /// Resistor role to designator.
    pub resistors: BTreeMap<String, String>,
    /// Amplifier section designators.
    pub sections: Vec<String>,
    /// Stage shape name.
    pub shape: String,
    /// Topology family of the shape.
    pub topology: Option<String>,
}

/// How an offset or bias node is driven.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(untagged)]
pub enum InjectionReport {
    /// `ground` (source null) or `direct` from a source.
    Plain {
        /// Always false.
        buffered: bool,
        /// `ground` or `direct`.
        kind: &'static str,
        /// The driving source's designator, null for ground.
        source: Option<String>,
    },
    /// A divider from a source.
    Divider {
        /// Designator of the bottom resistor.
        bottom: Option<String>,
        /// An op-amp section buffers the tap.
        buffered: bool,
        /// `divider`.
        kind: &'static str,
        /// The driving source's designator.
        source: String,
        /// Designator of the top resistor.
        top: Option<String>,
    },
}

/// One entry of `parts[]`.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(untagged)]
pub enum PartEntry {
    /// A resistor.
    Resistor(ResistorEntry),
    /// An op-amp or in-amp section.
    Amplifier(AmplifierEntry),
    /// A voltage reference.
    Reference(ReferenceEntry),
    /// A capacitor (the filter at the ADC input, or across a stage's
    /// `rf`).
    Capacitor(CapacitorEntry),
}

/// A capacitor of `parts[]`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CapacitorEntry {
    /// Dielectric text from the stock row.
    pub dielectric: String,
    /// Package text from the stock row.
    pub footprint: Option<String>,
    /// `capacitor`.
    pub kind: &'static str,
    /// Part id.
    pub part_id: String,
    /// Rated voltage, volts.
    pub rated_v: f64,
    /// Designator.
    #[serde(rename = "ref")]
    pub reference: String,
    /// Its place: `filter` (shunt capacitor at the ADC input) or
    /// `feedback` (across the stage's `rf`).
    pub role: String,
    /// 0-based index of its stage (for `filter`: the last, which it
    /// follows).
    pub stage: usize,
    /// Temperature coefficient, ppm/degC.
    pub tempco_ppm_per_c: f64,
    /// Tolerance, %.
    pub tolerance_pct: f64,
    /// Price of one.
    pub unit_cost: f64,
    /// Farads.
    pub value: f64,
    /// Farads as people write them (`4.7 nF`).
    pub value_text: String,
}

/// A resistor of `parts[]`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ResistorEntry {
    /// Package text from the stock, where the part is a stock row.
    pub footprint: Option<String>,
    /// `resistor`.
    pub kind: &'static str,
    /// Part id.
    pub part_id: String,
    /// Designator.
    #[serde(rename = "ref")]
    pub reference: String,
    /// Role in its stage.
    pub role: String,
    /// 0-based stage index.
    pub stage: usize,
    /// TCR, ppm/degC.
    pub tcr_ppm_per_c: f64,
    /// Tolerance, %.
    pub tolerance_pct: f64,
    /// Price of one.
    pub unit_cost: f64,
    /// Ohms.
    pub value: f64,
    /// Ohms as people write them (`10.0k`).
    pub value_text: String,
    /// Where the resistor is an element of a matched network: its
    /// package, element number and matching figures (absent otherwise).
    /// `tolerance_pct` and `tcr_ppm_per_c` are then the network's absolute
    /// figures, and `unit_cost` is the package price on its first element
    /// listed, 0 on the others.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub network: Option<crate::design::NetworkElement>,
}

/// An op-amp or in-amp section of `parts[]`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AmplifierEntry {
    /// Sections in the package.
    pub channels: u32,
    /// In-amps: gain error limit, %.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub gain_error_pct: Option<f64>,
    /// In-amps: the gain constant `Rk`, ohms.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub gain_resistor_ohms: Option<f64>,
    /// Input bias current limit, nA.
    pub ib_max_na: f64,
    /// `opamp` or `inamp`.
    pub kind: &'static str,
    /// In-amps: output offset limit, uV.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub output_offset_uv: Option<f64>,
    /// Package designator.
    pub package: String,
    /// Part id.
    pub part_id: String,
    /// Section designator (`U1A`).
    #[serde(rename = "ref")]
    pub reference: String,
    /// Another section of the same package carries the price.
    pub shares_package: bool,
    /// 0-based stage index.
    pub stage: usize,
    /// Package price on its first section, 0 on the others.
    pub unit_cost: f64,
    /// The part id.
    pub value: String,
    /// The part id.
    pub value_text: String,
    /// Input offset voltage limit, uV.
    pub vos_max_uv: f64,
}

/// A voltage reference of `parts[]`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ReferenceEntry {
    /// Initial accuracy, %.
    pub initial_pct: f64,
    /// `reference`.
    pub kind: &'static str,
    /// Part id.
    pub part_id: String,
    /// Designator (`VR1`).
    #[serde(rename = "ref")]
    pub reference: String,
    /// Tempco, ppm/degC.
    pub tempco_ppm_per_c: f64,
    /// Price of one.
    pub unit_cost: f64,
    /// Output voltage.
    pub value: f64,
    /// Output voltage as people write it (`1.25 V`).
    pub value_text: String,
}

/// The solved transfer against the ideal one.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TransferReport {
    /// Gain `K`.
    pub gain: f64,
    /// Ideal output at the span ends, volts.
    pub ideal_at_ends_v: [f64; 2],
    /// Ideal gain.
    pub ideal_gain: f64,
    /// Ideal offset, volts.
    pub ideal_offset_v: f64,
    /// Offset `B`, volts.
    pub offset_v: f64,
    /// Output at the span ends, volts.
    pub output_at_ends_v: [f64; 2],
}

/// The error figures of a design (`design.error`).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ErrorFigures {
    /// `worst-case`, `rss` or `yield`.
    pub basis: String,
    /// Error on that basis, % FS.
    pub basis_pct_fs: f64,
    /// The span end where the worst case binds: `low` or `high`.
    pub binding_end: &'static str,
    /// The budget lines.
    pub budget: Vec<BudgetEntry>,
    /// `none`, `offset` or `two-point`.
    pub calibration: String,
    /// Worst case solved at the extreme corner, % FS.
    pub corner_check_pct_fs: f64,
    /// Worst case to first order, % FS.
    pub first_order_pct_fs: f64,
    /// Monte Carlo histogram, where run.
    pub histogram: Option<HistogramReport>,
    /// The basis error is within the target and every check passed.
    pub meets_target: bool,
    /// Output noise.
    pub noise: NoiseReport,
    /// Quantisation, LSB (half an LSB).
    pub quantisation_lsb: f64,
    /// Quantisation, % FS.
    pub quantisation_pct_fs: f64,
    /// Share of Monte Carlo builds whose error is inside the RSS total, %,
    /// where run.
    pub rss_coverage_pct: Option<f64>,
    /// The RSS total in LSB.
    pub rss_lsb: f64,
    /// Root-sum-square total of the limits, % FS.
    pub rss_pct_fs: f64,
    /// The RSS total in the sensor's unit, where the need gives one.
    pub rss_units: Option<f64>,
    /// Standard deviation of the Monte Carlo builds' error at each build's
    /// worst condition (both span ends, both temperature ends), % FS,
    /// where run.
    pub sigma_pct_fs: Option<f64>,
    /// The need's target, % FS.
    pub target_pct_fs: f64,
    /// The worst-case total in LSB.
    pub worst_case_lsb: f64,
    /// Worst-case total, % FS.
    pub worst_case_pct_fs: f64,
    /// The worst-case total in the sensor's unit, where the need gives one.
    pub worst_case_units: Option<f64>,
    /// Monte Carlo builds, where run.
    pub yield_builds: Option<u64>,
    /// 95 % interval of the yield, %, where run.
    pub yield_confidence_pct: Option<[f64; 2]>,
    /// Monte Carlo yield, %, where run.
    pub yield_pct: Option<f64>,
    /// Monte Carlo seed, where run. Not in the JSON; the text report shows it.
    #[serde(skip)]
    pub yield_seed: Option<u64>,
    /// The need's yield target, %.
    pub yield_target_pct: f64,
}

/// One line of the error budget.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BudgetEntry {
    /// Contribution at the low and high end of the span, % FS.
    pub at_ends_pct_fs: [f64; 2],
    /// How the line is worked out: a formula over named inputs whose value
    /// is `pct_fs`, with the parts behind each input.
    pub explain: crate::analysis::LineExplain,
    /// Which contributor.
    pub line: Line,
    /// The same in LSB.
    pub lsb: f64,
    /// At the binding end, % FS.
    pub pct_fs: f64,
    /// The contributor in words.
    pub source: String,
    /// Systematic (true) or random.
    pub systematic: bool,
    /// The sensor's unit, where the need gives one.
    pub unit: Option<String>,
    /// The same in the sensor's unit, where given.
    pub units: Option<f64>,
}

/// Output noise figures.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NoiseReport {
    /// Share of the RMS power from the amplifiers' 1/f noise, voltage and
    /// current, counted from `accuracy.noise_low_hz` (fraction).
    pub flicker_share: f64,
    /// Noise bandwidth, Hz.
    pub noise_bandwidth_hz: f64,
    /// Peak to peak, % FS (null when the full scale is not positive).
    pub pct_fs_pp: f64,
    /// Peak to peak (6.6 sigma), volts.
    pub peak_to_peak_v: f64,
    /// RMS, volts.
    pub rms_v: f64,
}

/// The Monte Carlo histogram.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HistogramReport {
    /// Bin edges, % FS (one more than the counts).
    pub bin_edges_pct_fs: Vec<f64>,
    /// Builds per bin.
    pub counts: Vec<u64>,
}

/// One feasibility check.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FindingEntry {
    /// Which check.
    pub check: String,
    /// What was found against what was allowed.
    pub detail: String,
    /// Passed.
    pub ok: bool,
    /// The part or node it concerns.
    pub subject: String,
}

/// The counters of a search.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SearchReport {
    /// Wall time, ms.
    pub elapsed_ms: f64,
    /// Designs fully analysed.
    pub evaluated: u64,
    /// Proven gap when cut short.
    pub gap: Option<f64>,
    /// MILP problems solved.
    pub milp_solves: u64,
    /// `optimised` or `exhaustive`.
    pub mode: String,
    /// The optimum is proven.
    pub proven_optimal: bool,
    /// Structures considered.
    pub structures: u64,
}

/// Why no design meets the need (proven) or why none was found.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InfeasibleReport {
    /// The most accurate design the search analysed that passes every
    /// check but misses the target, as a full design object (the one
    /// `best_error_pct_fs` and `largest` describe); null when the search
    /// analysed none.
    pub best_attempt: Option<Box<DesignReport>>,
    /// Error of the most accurate design the search analysed, % FS: the
    /// least of the whole space where the search walked all of it
    /// (`binding` then says so), otherwise not a bound on what the stock
    /// allows.
    pub best_error_pct_fs: Option<f64>,
    /// The binding limit in words.
    pub binding: String,
    /// Largest contributors of the best design.
    pub largest: Vec<Contributor>,
    /// Whether it is proven that no design in the space meets the need
    /// (`status` `infeasible`); `false` when none was found among the
    /// designs searched (`status` `unfinished`).
    pub proven: bool,
    /// Verified changes that would make the need feasible.
    pub suggestions: Vec<SuggestionEntry>,
    /// The target, % FS.
    pub target_pct_fs: f64,
}

/// A budget contributor and its size.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Contributor {
    /// Its size, % FS.
    pub pct_fs: f64,
    /// The contributor in words.
    pub source: String,
}

/// A verified change.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SuggestionEntry {
    /// The change as need keys and their new values, in need-file keys;
    /// empty for a change of the stock.
    pub apply: Vec<crate::search::NeedChange>,
    /// The change as stock columns set in every row of a table; empty for
    /// a change of the need.
    pub apply_stock: Vec<crate::search::StockChange>,
    /// What to change.
    pub change: String,
    /// Cost of the cheapest design with it.
    pub cost: f64,
    /// Its error on the need's basis, % FS.
    pub error_pct_fs: f64,
}

/// The export texts of a design; every member null when there is no
/// design.
#[derive(Debug, Clone, PartialEq, Default, Serialize)]
pub struct Artifacts {
    /// The bill of materials as CSV text.
    pub bom_csv: Option<String>,
    /// The same bill of materials as rows of cell texts.
    pub bom_table: Option<BomTable>,
    /// The SPICE netlist.
    pub spice: Option<String>,
    /// The schematic, SVG text.
    pub svg: Option<String>,
}

/// What `solve`, `analyze` and `demo` hand a front end: the report
/// object, the export texts and the plain-text report.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Bundle {
    /// The export texts.
    pub artifacts: Artifacts,
    /// The report object.
    pub report: Report,
    /// The plain-text report.
    pub text: String,
}

/// Which side an error is on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum ErrorKind {
    /// The user's input (need, stock, design file) is wrong.
    Input,
    /// A design refers to parts that are not there or cannot be built.
    Design,
    /// A bug in spanfit.
    Internal,
}

/// An error as a front end shows it: the full message as the CLI prints
/// it, the detail without the location, and the location in parts.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct ErrorReport {
    /// 1-based column (characters), where known.
    pub column: Option<usize>,
    /// The CSV column header the problem is in, where known.
    pub column_name: Option<String>,
    /// What is wrong and what to enter, without the location prefix.
    pub detail: String,
    /// The file (or upload) the text came from, where known.
    pub file: Option<String>,
    /// The dotted key (`adc.high_v`), where known.
    pub key: Option<String>,
    /// `input`, `design` or `internal`.
    pub kind: ErrorKind,
    /// 1-based line, where known.
    pub line: Option<usize>,
    /// The full text, as the CLI prints it.
    pub message: String,
}
