//! Feasibility: the checks a design must pass whatever its error (supply
//! range, input common mode, output swing, gain-bandwidth, reference
//! headroom and load, part count, and, once the worst case is known, the ADC
//! window). Each check is a [`Check`]; its label and its detail text come
//! from the variant, so the text reports show is written in one place.
//!
//! The common-mode, swing and ADC-window checks take each node at its raw
//! extremes (`extremes`): both span ends, every part at its limits, before
//! any calibration; the positive rail at the low end of its tolerance.

use super::extremes;
use super::params::Parameter;
use crate::mna::DcSolution;
use crate::need::Need;
use crate::netlist::Netlist;
use crate::stock::Stock;
use crate::topology::{AmplifierKind, Built, Section};
use serde::Serialize;
use std::collections::BTreeMap;

/// Slack on voltage comparisons, volts (rounding of the solve).
pub(crate) const VOLTAGE_SLACK: f64 = 1e-9;

/// A feasibility check.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Check {
    /// The rails against an amplifier's supply range.
    SupplyRange,
    /// A section's inputs inside its input common-mode range.
    CommonMode,
    /// A section's output (and internal outputs) inside its swing.
    OutputSwing,
    /// Closed-loop bandwidth at least ten times the signal bandwidth.
    GainBandwidth,
    /// The current a section's output sources or sinks, at its raw
    /// extremes, into everything it drives (and the filter capacitor's
    /// recharge peak), within the part's `output_current_ma`.
    OutputCurrent,
    /// A reference's voltage plus dropout under the positive rail.
    ReferenceHeadroom,
    /// A reference's load current, at its raw extremes, within what it
    /// may source.
    ReferenceLoad,
    /// Parts on the board against the need's limit.
    PartCount,
    /// How often the design places a part (the filter pair included)
    /// against the quantity the stock holds of it.
    StockQuantity,
    /// The output with its worst-case error inside the ADC window.
    AdcWindow,
    /// The chain's rejection at half the sample rate against
    /// `adc.alias_rejection_db` (only where the need asks for it).
    AliasRejection,
}

impl Check {
    /// Every check, in the order findings list them.
    pub const ALL: [Check; 11] = [
        Check::SupplyRange,
        Check::CommonMode,
        Check::OutputSwing,
        Check::GainBandwidth,
        Check::OutputCurrent,
        Check::ReferenceHeadroom,
        Check::ReferenceLoad,
        Check::PartCount,
        Check::StockQuantity,
        Check::AdcWindow,
        Check::AliasRejection,
    ];

    /// The label shown in reports (`check` in the JSON findings).
    pub fn label(self) -> &'static str {
        match self {
            Check::SupplyRange => "supply range",
            Check::CommonMode => "input common mode",
            Check::OutputSwing => "output swing",
            Check::GainBandwidth => "gain-bandwidth",
            Check::OutputCurrent => "output current",
            Check::ReferenceHeadroom => "reference headroom",
            Check::ReferenceLoad => "reference load",
            Check::PartCount => "part count",
            Check::StockQuantity => "stock quantity",
            Check::AdcWindow => "ADC window",
            Check::AliasRejection => "alias rejection",
        }
    }

    /// The check with this label, if any.
    pub fn from_label(label: &str) -> Option<Check> {
        Check::ALL.into_iter().find(|c| c.label() == label)
    }

    /// Whether no choice of resistor values can change the outcome: the
    /// check depends only on the parts and the rails.
    pub fn fixed_by_parts(self) -> bool {
        matches!(
            self,
            Check::SupplyRange | Check::GainBandwidth | Check::ReferenceHeadroom | Check::PartCount
        )
    }

    /// What was found against what was allowed, from the check's numbers.
    fn detail(self, numbers: [f64; 4]) -> String {
        let [a, b, c, d] = numbers;
        match self {
            Check::SupplyRange => {
                format!("rails span {a:.3} V; the part runs from {b:.3} V to {c:.3} V")
            }
            Check::CommonMode => format!(
                "inputs reach {a:.4} V to {b:.4} V untrimmed; the part accepts {c:.4} V to {d:.4} V"
            ),
            Check::OutputSwing => format!(
                "output reaches {a:.4} V to {b:.4} V untrimmed; the part swings {c:.4} V to {d:.4} V"
            ),
            Check::GainBandwidth => format!(
                "noise gain {a:.1} leaves {b:.0} Hz closed-loop bandwidth; the need asks 10 x {c:.1} Hz"
            ),
            Check::OutputCurrent => {
                let filter = if d == 1.0 {
                    format!(" (of which {c:.4} mA recharging the filter capacitor)")
                } else if d == 2.0 {
                    format!(" (of which {c:.4} mA the filter pair's recharge rule allows)")
                } else {
                    String::new()
                };
                format!(
                    "the output sources or sinks up to {a:.4} mA untrimmed{filter}; the part \
                     drives at most {b:.4} mA"
                )
            }
            Check::ReferenceHeadroom => format!(
                "the reference needs {a:.3} V above ground; the positive rail is {b:.3} V"
            ),
            Check::ReferenceLoad => format!(
                "the network draws up to {a:.4} mA untrimmed; the part sources at most {b:.4} mA"
            ),
            Check::PartCount => {
                format!("{a:.0} parts without the filter pair; the need allows {b:.0}")
            }
            Check::StockQuantity => format!("{a:.0} placed; the stock holds {b:.0}"),
            Check::AdcWindow => format!(
                "output reaches {a:.4} V to {b:.4} V untrimmed; the ADC takes {c:.4} V to {d:.4} V"
            ),
            Check::AliasRejection => {
                if d == 1.0 {
                    format!(
                        "the filter pair this design gets is chosen by its alias rule, which gives \
                         at least the asked {b:.2} dB at {c:.4e} Hz (half the sample rate) at \
                         its parts' tolerance limits"
                    )
                } else if a.is_nan() {
                    format!(
                        "the AC analysis of the chain found no rejection at {c:.4e} Hz (half \
                         the sample rate); asked {b:.2} dB"
                    )
                } else {
                    format!(
                        "the chain rejects {a:.2} dB at {c:.4e} Hz (half the sample rate, \
                         nominal values); asked {b:.2} dB"
                    )
                }
            }
        }
    }
}

/// A feasibility check and its outcome.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Finding {
    /// Which check, as its label (`output swing`, `input common mode`, ...).
    pub check: String,
    /// Which check, as the enum (for matching; not in the JSON).
    #[serde(skip)]
    pub kind: Check,
    /// The part or node it concerns.
    pub subject: String,
    /// Passed.
    pub ok: bool,
    /// What was found against what was allowed.
    pub detail: String,
    /// The 0-based stage of the section it concerns, where it concerns one
    /// (not in the JSON).
    #[serde(skip)]
    pub stage: Option<usize>,
    /// The check's numbers: found low and high (or found and allowed),
    /// allowed low and high (not in the JSON).
    #[serde(skip)]
    pub numbers: [f64; 4],
}

impl Finding {
    /// How far a range check goes past its limit (volts; for the other
    /// checks, in the check's own unit), and on which side (`low` or
    /// `high`); zero when it passes.
    pub fn excess(&self) -> (f64, &'static str) {
        let [a, b, c, d] = self.numbers;
        match self.kind {
            Check::CommonMode | Check::OutputSwing | Check::AdcWindow => {
                let (low, high) = (c - a, b - d);
                if high > low {
                    (high.max(0.0), "high")
                } else {
                    (low.max(0.0), "low")
                }
            }
            Check::SupplyRange => {
                if a > c {
                    (a - c, "high")
                } else {
                    ((b - a).max(0.0), "low")
                }
            }
            Check::GainBandwidth => ((10.0 * c - b).max(0.0), "low"),
            Check::ReferenceHeadroom
            | Check::ReferenceLoad
            | Check::OutputCurrent
            | Check::PartCount
            | Check::StockQuantity => ((a - b).max(0.0), "high"),
            Check::AliasRejection => {
                let short = if a.is_nan() { b } else { b - a };
                (short.max(0.0), "low")
            }
        }
    }

    /// The failure in plain words, for a need no structure passes: which
    /// stage and node, by how much, and why choosing other resistor values
    /// does not help.
    pub fn plain_words(&self) -> String {
        let [a, b, c, d] = self.numbers;
        let (excess, side) = self.excess();
        let stage = self
            .stage
            .map(|s| format!("stage {} ", s + 1))
            .unwrap_or_default();
        let who = &self.subject;
        match self.kind {
            Check::OutputSwing => format!(
                "the output of {stage}({who}) must reach {a:.4} V to {b:.4} V untrimmed, {excess:.4} V \
                 past the {side} end of what its part can swing to ({c:.4} V to {d:.4} V). \
                 Resistor values set this node's gain and offset, and the chain must still map \
                 the span onto the target window, so where that window (or the node feeding it) \
                 sits that close to a rail no value set the search tried brings it inside; room \
                 from adc.margin_pct, a part that swings nearer the rail, or wider rails can"
            ),
            Check::CommonMode => format!(
                "the input of {stage}({who}) reaches {a:.4} V to {b:.4} V untrimmed, {excess:.4} V \
                 past the {side} end of its part's input common-mode range ({c:.4} V to \
                 {d:.4} V). The sensor's span and common mode (or the node the stage's offset \
                 network sets) fix this voltage before the stage's gain acts, so no value set \
                 the search tried brings it inside; a part whose inputs reach that rail, another \
                 topology, or other rails can"
            ),
            Check::AdcWindow => format!(
                "the output at the ADC reaches {a:.4} V to {b:.4} V untrimmed (every part at its \
                 limit), {excess:.4} V past the {side} end of the ADC's input range ({c:.4} V \
                 to {d:.4} V); calibration cannot undo a reading that clipped, so the target \
                 window must leave room for the raw spread: a larger adc.margin_pct or parts \
                 with smaller limits can"
            ),
            Check::SupplyRange => format!(
                "{who} runs from {b:.3} V to {c:.3} V of total supply but the rails span {a:.3} V \
                 ({excess:.3} V {}); this depends only on the part and the rails, so no value \
                 set helps",
                if side == "high" { "too many" } else { "too few" }
            ),
            Check::GainBandwidth => format!(
                "{who} ({stage}) at noise gain {a:.1} leaves {b:.0} Hz of closed-loop bandwidth, \
                 {excess:.0} Hz short of 10 x {c:.1} Hz; the noise gain follows from the gain the \
                 stage must give, so no value set helps; a faster part or the gain split over \
                 more stages (search.max_stages) can"
            ),
            Check::ReferenceHeadroom => format!(
                "{who} needs {a:.3} V above ground but the positive rail, at the low end of its \
                 tolerance, is {b:.3} V ({excess:.3} V short); this depends only on the part and \
                 the rails, so no value set helps"
            ),
            Check::ReferenceLoad => format!(
                "{who} would source up to {a:.4} mA into the network it drives, {excess:.4} mA \
                 over its {b:.4} mA limit; larger network resistors or a buffered tap lower it"
            ),
            Check::OutputCurrent => format!(
                "the output of {stage}({who}) would source or sink up to {a:.4} mA into its \
                 feedback network, the next stage and the filter ({c:.4} mA of it recharging \
                 the capacitor), {excess:.4} mA over the part's {b:.4} mA; larger resistors or \
                 a part that drives more current can"
            ),
            Check::PartCount => format!(
                "the smallest design has {a:.0} parts without its filter pair, {excess:.0} over \
                 the need's limit of {b:.0}; search.max_parts decides it, not the values"
            ),
            Check::StockQuantity => format!(
                "{who} is placed {a:.0} times (the filter pair included), {excess:.0} more than \
                 the {b:.0} the stock holds; other values, another part or a larger stock_qty can"
            ),
            Check::AliasRejection => format!(
                "the chain rejects {} at {c:.4e} Hz, half the sample rate, {excess:.2} dB short \
                 of the asked {b:.2} dB; the design's filter (or its lack of one: no filter \
                 pair from the stock fits the rules) does not give it: a lower \
                 adc.alias_rejection_db, a higher adc.sample_rate_hz or capacitors in stock \
                 that let a pair fit the rules can",
                if a.is_nan() {
                    "nothing the AC analysis could find".to_string()
                } else {
                    format!("{a:.2} dB")
                }
            ),
        }
    }
}

/// A finding kept as numbers until it is shown (formatting text costs more
/// than the checks themselves on the optimiser's hot path).
#[derive(Debug, Clone, PartialEq)]
pub struct RawFinding {
    check: Check,
    subject: String,
    ok: bool,
    numbers: [f64; 4],
    /// The 0-based stage of the section it concerns, if any.
    stage: Option<usize>,
}

impl RawFinding {
    /// Whether the check passed.
    pub fn ok(&self) -> bool {
        self.ok
    }

    /// Which check.
    pub fn check(&self) -> Check {
        self.check
    }

    /// The finding with its text.
    pub fn finding(&self) -> Finding {
        Finding {
            check: self.check.label().to_string(),
            kind: self.check,
            subject: self.subject.clone(),
            ok: self.ok,
            detail: self.check.detail(self.numbers),
            stage: self.stage,
            numbers: self.numbers,
        }
    }
}

/// The ADC-window check: the output at both ends, widened by the larger of
/// the worst-case error `worst_v` and the raw (untrimmed) half-range at
/// that end, `raw_half_v`, inside the ADC's input range.
pub(crate) fn adc_window(
    need: &Need,
    output: [f64; 2],
    worst_v: f64,
    raw_half_v: [f64; 2],
) -> RawFinding {
    let widen = |end: usize| worst_v.max(raw_half_v[end]);
    let low = (output[0] - widen(0)).min(output[1] - widen(1));
    let high = (output[0] + widen(0)).max(output[1] + widen(1));
    let (adc_low, adc_high) = (need.adc.low.0, need.adc.high.0);
    RawFinding {
        check: Check::AdcWindow,
        subject: "out".into(),
        ok: low >= adc_low - 1e-12 && high <= adc_high + 1e-12,
        numbers: [low, high, adc_low, adc_high],
        stage: None,
    }
}

/// Every check but the ADC window, for a solved design.
pub(crate) fn findings(
    need: &Need,
    stock: &Stock,
    built: &Built,
    netlist: &Netlist,
    dc: &DcSolution,
    params: &[Parameter],
    pair_pending: bool,
) -> Vec<RawFinding> {
    let mut out = Vec::new();
    // The reference hangs from the positive rail at its lowest.
    let positive = need.supply.positive.0 * (1.0 - need.supply.tolerance.fraction());
    let rails = need.supply.positive.0 - need.supply.negative.0;
    for package in &built.packages {
        let (low, high) = match package.kind {
            AmplifierKind::OpAmp(i) => (stock.opamps[i].supply_min.0, stock.opamps[i].supply_max.0),
            AmplifierKind::InAmp(i) => (stock.inamps[i].supply_min.0, stock.inamps[i].supply_max.0),
        };
        out.push(RawFinding {
            check: Check::SupplyRange,
            subject: format!("{} ({})", package.designator, package.part_id),
            ok: rails >= low && rails <= high,
            numbers: [rails, low, high, 0.0],
            stage: None,
        });
    }
    // Adjoints of the section outputs, one solve per distinct node.
    let mut adjoints: BTreeMap<usize, Vec<f64>> = BTreeMap::new();
    adjoints.insert(built.out, dc.output_adjoint().to_vec());
    let recharge = recharge_of(stock, built, netlist, pair_pending);
    for section in &built.sections {
        let raw = RawRanges {
            netlist,
            dc,
            params,
        };
        let recharge = recharge.filter(|r| r.driven == section.out);
        section_findings(
            need,
            stock,
            &raw,
            section,
            recharge,
            &mut adjoints,
            &mut out,
        );
    }
    for source in &built.sources {
        if let Some(i) = source.reference {
            let reference = &stock.references[i];
            let needs = reference.volts.0 + reference.dropout.0;
            out.push(RawFinding {
                check: Check::ReferenceHeadroom,
                subject: format!("{} ({})", source.designator, reference.part_id),
                ok: needs <= positive,
                numbers: [needs, positive, 0.0, 0.0],
                stage: None,
            });
            let load_ma = 1e3 * branch_extreme_a(netlist, dc, params, source.element);
            out.push(RawFinding {
                check: Check::ReferenceLoad,
                subject: format!("{} ({})", source.designator, reference.part_id),
                ok: load_ma <= reference.max_load_ma * (1.0 + 1e-9),
                numbers: [load_ma, reference.max_load_ma, 0.0, 0.0],
                stage: None,
            });
        }
    }
    out.extend(stock_findings(stock, built));
    // `max_parts` judges the design without its filter pair (the search
    // places the pair by rule after the design is chosen, docs/filter.md),
    // so `analyze` judges it so too: the search's candidate and the report
    // of the design it returns reach the same verdict.
    let parts = parts_without_pair(built);
    out.push(RawFinding {
        check: Check::PartCount,
        subject: "design".into(),
        ok: parts <= need.search.max_parts,
        numbers: [parts as f64, need.search.max_parts as f64, 0.0, 0.0],
        stage: None,
    });
    out
}

/// The largest current through a source's branch (a reference's load, an
/// amplifier's output), amperes: its branch current at both span ends,
/// widened by the raw range of every parameter (untrimmed, every part at
/// its limits), from the adjoint of that branch current.
fn branch_extreme_a(
    netlist: &Netlist,
    dc: &DcSolution,
    params: &[Parameter],
    element: usize,
) -> f64 {
    let Some(adjoint) = dc.branch_current_adjoint(element) else {
        return 0.0;
    };
    let half = extremes::node_half_range(netlist, dc, params, &adjoint);
    (0..2)
        .map(|end| dc.branch_current(end, element).unwrap_or(0.0).abs() + half[end])
        .fold(0.0, f64::max)
}

/// How the filter capacitor loads the section that drives it: the node
/// it is driven from, and either the series resistor at its lower
/// tolerance limit (the pair is placed) or, for a search candidate whose
/// pair is not chosen yet, nothing but the share of the output current
/// the pair's recharge rule allows it.
#[derive(Debug, Clone, Copy)]
struct Recharge {
    /// The driving section's output node.
    driven: usize,
    /// The series resistor at its lower tolerance limit, ohms (`None`: the
    /// pair is not placed yet).
    series_low_ohms: Option<f64>,
}

/// The filter's load on its driver, where the design has one or, for a
/// search candidate (`pair_pending`), may get one.
fn recharge_of(
    stock: &Stock,
    built: &Built,
    netlist: &Netlist,
    pair_pending: bool,
) -> Option<Recharge> {
    match &built.filter {
        Some(f) => {
            let e = netlist.elements.get(f.series_element)?;
            let driven = if e.nodes[0] == built.out {
                e.nodes[1]
            } else {
                e.nodes[0]
            };
            Some(Recharge {
                driven,
                series_low_ohms: Some(f.series.ohms * (1.0 - f.series.tolerance_pct / 100.0)),
            })
        }
        None if pair_pending && crate::filter::stock_has_capacitors(stock) => Some(Recharge {
            driven: built.out,
            series_low_ohms: None,
        }),
        None => None,
    }
}

/// The input, output and bandwidth limits of one amplifier section.
struct SectionLimits {
    input_headroom: [f64; 2],
    output_headroom: [f64; 2],
    gbw_hz: f64,
    output_current_ma: f64,
}

fn section_limits(stock: &Stock, kind: AmplifierKind) -> SectionLimits {
    match kind {
        AmplifierKind::OpAmp(i) => {
            let part = &stock.opamps[i];
            SectionLimits {
                input_headroom: [part.input_headroom_low.0, part.input_headroom_high.0],
                output_headroom: [part.output_headroom_low.0, part.output_headroom_high.0],
                gbw_hz: part.gbw_mhz * 1e6,
                output_current_ma: part.output_current_ma,
            }
        }
        AmplifierKind::InAmp(i) => {
            let part = &stock.inamps[i];
            SectionLimits {
                input_headroom: [part.input_headroom_low.0, part.input_headroom_high.0],
                output_headroom: [part.output_headroom_low.0, part.output_headroom_high.0],
                gbw_hz: part.gbw_mhz * 1e6,
                output_current_ma: part.output_current_ma,
            }
        }
    }
}

/// Where a section of this part may swing its output, volts: the
/// negative rail plus its low headroom to the positive rail (at the low
/// end of its tolerance) less its high headroom. The output-swing check
/// asks every section's output to stay inside (within [`VOLTAGE_SLACK`]);
/// the search's swing floor reasons from the same interval.
pub(crate) fn output_swing(need: &Need, stock: &Stock, kind: AmplifierKind) -> (f64, f64) {
    let positive = need.supply.positive.0 * (1.0 - need.supply.tolerance.fraction());
    let headroom = section_limits(stock, kind).output_headroom;
    (need.supply.negative.0 + headroom[0], positive - headroom[1])
}

/// What the raw ranges of nodes are computed from.
struct RawRanges<'a> {
    netlist: &'a Netlist,
    dc: &'a DcSolution,
    params: &'a [Parameter],
}

/// Common mode, swing and gain-bandwidth of one section.
fn section_findings(
    need: &Need,
    stock: &Stock,
    raw: &RawRanges<'_>,
    section: &Section,
    recharge: Option<Recharge>,
    adjoints: &mut BTreeMap<usize, Vec<f64>>,
    out: &mut Vec<RawFinding>,
) {
    let dc = raw.dc;
    // The positive rail at the low end of its tolerance (the limits that
    // hang from it are the tightest there).
    let positive = need.supply.positive.0 * (1.0 - need.supply.tolerance.fraction());
    let negative = need.supply.negative.0;
    let limits = section_limits(stock, section.kind);
    // Lowest and highest raw voltage of these nodes at both span ends,
    // every part at its limits.
    let mut range_of =
        |nodes: &[usize]| extremes::nodes_range(raw.netlist, dc, raw.params, nodes, adjoints);
    let (common_low, common_high) = (
        negative + limits.input_headroom[0],
        positive - limits.input_headroom[1],
    );
    let mut inputs = vec![section.plus];
    if matches!(section.kind, AmplifierKind::InAmp(_)) {
        inputs.push(section.minus);
    }
    let (input_min, input_max) = range_of(&inputs);
    out.push(RawFinding {
        check: Check::CommonMode,
        subject: section.designator.clone(),
        ok: input_min >= common_low - VOLTAGE_SLACK && input_max <= common_high + VOLTAGE_SLACK,
        numbers: [input_min, input_max, common_low, common_high],
        stage: Some(section.stage),
    });
    let (swing_low, swing_high) = output_swing(need, stock, section.kind);
    let mut nodes = vec![section.out];
    nodes.extend(&section.internal_outputs);
    let (output_min, output_max) = range_of(&nodes);
    out.push(RawFinding {
        check: Check::OutputSwing,
        subject: section.designator.clone(),
        ok: output_min >= swing_low - VOLTAGE_SLACK && output_max <= swing_high + VOLTAGE_SLACK,
        numbers: [output_min, output_max, swing_low, swing_high],
        stage: Some(section.stage),
    });
    // Output current: the branch current of the element that drives the
    // output pin (an op-amp's gain block; an in-amp's output, behind its
    // internal difference stage) at its raw extremes, from the adjoint of
    // that current; plus the filter capacitor's recharge peak: the output
    // at one raw extreme while the capacitor still holds the other.
    let element = section
        .inamp
        .as_ref()
        .map_or(section.gain_element, |i| i.output_offset);
    let limit_ma = limits.output_current_ma;
    let dc_ma = 1e3 * branch_extreme_a(raw.netlist, dc, raw.params, element);
    let (recharge_ma, recharge_kind) = match recharge {
        Some(Recharge {
            series_low_ohms: Some(ohms),
            ..
        }) if ohms > 0.0 => {
            let (low, high) = if section.internal_outputs.is_empty() {
                (output_min, output_max)
            } else {
                range_of(&[section.out])
            };
            (1e3 * (high - low).max(0.0) / ohms, 1.0)
        }
        // The pair is not chosen yet: its recharge rule keeps it within
        // this share of the part's current.
        Some(_) => (crate::filter::RECHARGE_SHARE * limit_ma, 2.0),
        None => (0.0, 0.0),
    };
    let current_ma = dc_ma + recharge_ma;
    out.push(RawFinding {
        check: Check::OutputCurrent,
        subject: section.designator.clone(),
        ok: current_ma <= limit_ma * (1.0 + 1e-9),
        numbers: [current_ma, limit_ma, recharge_ma, recharge_kind],
        stage: Some(section.stage),
    });
    // Noise gain of this section: its output per volt of its own offset,
    // from the adjoint of its output node (a follower's is 1 without
    // solving).
    let noise_gain =
        if section.minus == section.out && matches!(section.kind, AmplifierKind::OpAmp(_)) {
            1.0
        } else {
            let adjoint = adjoints
                .entry(section.out)
                .or_insert_with(|| dc.adjoint_of(section.out));
            dc.solver()
                .branch_unknown(section.vos)
                .map(|i| adjoint[i].abs())
                .unwrap_or(1.0)
                .max(1.0)
        };
    let needed = 10.0 * need.accuracy.bandwidth.0;
    let closed_loop_hz = limits.gbw_hz / noise_gain;
    out.push(RawFinding {
        check: Check::GainBandwidth,
        subject: section.designator.clone(),
        ok: closed_loop_hz >= needed,
        numbers: [noise_gain, closed_loop_hz, need.accuracy.bandwidth.0, 0.0],
        stage: Some(section.stage),
    });
}

/// How often a built design places each part whose stock quantity is
/// limited (resistors, amplifier packages, references, feedback
/// capacitors, and the filter pair where the design has one), against that quantity: one finding per
/// such part, in part-id order. Parts without a quantity (families,
/// inline values) are unlimited and get none.
pub fn stock_findings(stock: &Stock, built: &Built) -> Vec<RawFinding> {
    // (part id, its quantity) for every placed part with a limited one.
    let mut placed: Vec<(&str, u32)> = Vec::new();
    let resistor_qty = |r: &crate::design::Resistor| {
        stock
            .resistor_valued(&r.part_id, r.ohms)
            .and_then(|p| p.stock_qty)
    };
    for r in &built.resistors {
        if r.part.network.is_some() {
            continue;
        }
        if let Some(q) = resistor_qty(&r.part) {
            placed.push((&r.part.part_id, q));
        }
    }
    for c in &built.feedback_capacitors {
        if let Some(q) = c.part.stock_qty {
            placed.push((&c.part.part_id, q));
        }
    }
    // A matched network: one part per package.
    let packages = crate::design::network_packages(built.resistors.iter().map(|r| &r.part));
    for package in &packages {
        if let Some(q) = stock.network(&package.part_id).and_then(|p| p.stock_qty) {
            placed.push((&package.part_id, q));
        }
    }
    if let Some(f) = &built.filter {
        if let Some(q) = resistor_qty(&f.series) {
            placed.push((&f.series.part_id, q));
        }
        if let Some(q) = f.shunt.stock_qty {
            placed.push((&f.shunt.part_id, q));
        }
    }
    for p in &built.packages {
        let qty = match p.kind {
            AmplifierKind::OpAmp(i) => stock.opamps.get(i).and_then(|p| p.stock_qty),
            AmplifierKind::InAmp(i) => stock.inamps.get(i).and_then(|p| p.stock_qty),
        };
        if let Some(q) = qty {
            placed.push((&p.part_id, q));
        }
    }
    for s in &built.sources {
        if let Some(part) = s.reference.and_then(|i| stock.references.get(i)) {
            if let Some(q) = part.stock_qty {
                placed.push((&part.part_id, q));
            }
        }
    }
    let mut used: BTreeMap<&str, (u32, u32)> = BTreeMap::new();
    for (id, q) in placed {
        used.entry(id).or_insert((0, q)).0 += 1;
    }
    used.into_iter()
        .map(|(id, (count, q))| RawFinding {
            check: Check::StockQuantity,
            subject: id.to_string(),
            ok: count <= q,
            numbers: [f64::from(count), f64::from(q), 0.0, 0.0],
            stage: None,
        })
        .collect()
}

/// Parts on the board: those of [`parts_without_pair`] and the filter
/// pair where the design has one.
pub fn part_count(built: &Built) -> usize {
    parts_without_pair(built) + if built.filter.is_some() { 2 } else { 0 }
}

/// Parts on the board but the filter pair, which `search.max_parts` does
/// not count: resistors (a matched network package counting once, however
/// many of its elements are used), amplifier packages, references and the
/// feedback capacitors.
fn parts_without_pair(built: &Built) -> usize {
    let packages = crate::design::network_packages(built.resistors.iter().map(|r| &r.part));
    let elements: usize = packages.iter().map(|p| p.elements.len()).sum();
    built.resistors.len() - elements
        + packages.len()
        + built.feedback_capacitors.len()
        + built.packages.len()
        + built
            .sources
            .iter()
            .filter(|s| s.reference.is_some())
            .count()
}

/// The `alias rejection` finding, where the need asks for a rejection at
/// half the sample rate: a design only meets the need with it. A search
/// candidate that gets a filter pair once reported (`pair_coming`) has it
/// by the pair's alias rule, which holds at the parts' tolerance limits
/// (docs/filter.md); any other design is judged by its own response as
/// built (the pair where it has one, feedback poles, every amplifier's
/// closed-loop pole), with nominal values, as the filter report shows it.
pub(crate) fn alias_finding(
    need: &Need,
    stock: &Stock,
    built: &Built,
    pair_coming: bool,
) -> Option<RawFinding> {
    let (rate, asked) = (need.adc.sample_rate?.0, need.adc.alias_rejection?.0);
    let nyquist = rate / 2.0;
    let (got, ok, by_rule) = if pair_coming && built.filter.is_none() {
        (asked, true, 1.0)
    } else {
        match crate::filter::rejection_db(stock, built, nyquist) {
            Some(got) => (got, got >= asked, 0.0),
            None => (f64::NAN, false, 0.0),
        }
    };
    Some(RawFinding {
        check: Check::AliasRejection,
        subject: "out".into(),
        ok,
        numbers: [got, asked, nyquist, by_rule],
        stage: None,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A failed swing names its stage, the node, the side and the amount
    /// in plain words, and says why values do not help.
    #[test]
    fn plain_words_name_stage_side_and_amount() {
        let finding = RawFinding {
            check: Check::OutputSwing,
            subject: "U1B".into(),
            ok: false,
            numbers: [-0.02, 2.9, 0.02, 4.95],
            stage: Some(1),
        }
        .finding();
        assert_eq!(finding.excess(), (0.04, "low"));
        let words = finding.plain_words();
        assert!(words.contains("stage 2 (U1B)"), "{words}");
        assert!(words.contains("0.0400 V past the low end"), "{words}");
        assert!(words.contains("no value set"), "{words}");
        // A load over the reference's limit, by how much.
        let load = RawFinding {
            check: Check::ReferenceLoad,
            subject: "VR1 (VR-250)".into(),
            ok: false,
            numbers: [1.5, 1.0, 0.0, 0.0],
            stage: None,
        }
        .finding();
        assert_eq!(load.excess(), (0.5, "high"));
        assert!(
            load.plain_words().contains("0.5000 mA over"),
            "{}",
            load.plain_words()
        );
    }

    #[test]
    fn labels_are_distinct_and_read_back() {
        for check in Check::ALL {
            assert_eq!(Check::from_label(check.label()), Some(check));
        }
        assert_eq!(Check::from_label("no such check"), None);
    }

    #[test]
    fn detail_text_carries_the_numbers() {
        let finding = RawFinding {
            check: Check::OutputSwing,
            subject: "U1A".into(),
            ok: false,
            numbers: [0.01, 4.99, 0.05, 4.95],
            stage: None,
        }
        .finding();
        assert_eq!(finding.check, "output swing");
        assert_eq!(finding.kind, Check::OutputSwing);
        assert_eq!(
            finding.detail,
            "output reaches 0.0100 V to 4.9900 V untrimmed; the part swings 0.0500 V to 4.9500 V"
        );
    }
}
