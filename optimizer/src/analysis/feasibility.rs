//! Feasibility: the checks a design must pass whatever its error (supply
//! range, input common mode, output swing, gain-bandwidth, reference
//! headroom, part count, and, once the worst case is known, the ADC
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
const VOLTAGE_SLACK: f64 = 1e-9;

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
    /// A reference's voltage plus dropout under the positive rail.
    ReferenceHeadroom,
    /// Parts on the board against the need's limit.
    PartCount,
    /// The output with its worst-case error inside the ADC window.
    AdcWindow,
}

impl Check {
    /// Every check, in the order findings list them.
    pub const ALL: [Check; 7] = [
        Check::SupplyRange,
        Check::CommonMode,
        Check::OutputSwing,
        Check::GainBandwidth,
        Check::ReferenceHeadroom,
        Check::PartCount,
        Check::AdcWindow,
    ];

    /// The label shown in reports (`check` in the JSON findings).
    pub fn label(self) -> &'static str {
        match self {
            Check::SupplyRange => "supply range",
            Check::CommonMode => "input common mode",
            Check::OutputSwing => "output swing",
            Check::GainBandwidth => "gain-bandwidth",
            Check::ReferenceHeadroom => "reference headroom",
            Check::PartCount => "part count",
            Check::AdcWindow => "ADC window",
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
            Check::ReferenceHeadroom => format!(
                "the reference needs {a:.3} V above ground; the positive rail is {b:.3} V"
            ),
            Check::PartCount => format!("{a:.0} parts; the need allows {b:.0}"),
            Check::AdcWindow => format!(
                "output reaches {a:.4} V to {b:.4} V untrimmed; the ADC takes {c:.4} V to {d:.4} V"
            ),
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
}

/// A finding kept as numbers until it is shown (formatting text costs more
/// than the checks themselves on the optimiser's hot path).
#[derive(Debug, Clone, PartialEq)]
pub struct RawFinding {
    check: Check,
    subject: String,
    ok: bool,
    numbers: [f64; 4],
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
        });
    }
    // Adjoints of the section outputs, one solve per distinct node.
    let mut adjoints: BTreeMap<usize, Vec<f64>> = BTreeMap::new();
    adjoints.insert(built.out, dc.output_adjoint().to_vec());
    for section in &built.sections {
        let raw = RawRanges {
            netlist,
            dc,
            params,
        };
        section_findings(need, stock, &raw, section, &mut adjoints, &mut out);
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
            });
        }
    }
    let parts = part_count(built);
    out.push(RawFinding {
        check: Check::PartCount,
        subject: "design".into(),
        ok: parts <= need.search.max_parts,
        numbers: [parts as f64, need.search.max_parts as f64, 0.0, 0.0],
    });
    out
}

/// The input, output and bandwidth limits of one amplifier section.
struct SectionLimits {
    input_headroom: [f64; 2],
    output_headroom: [f64; 2],
    gbw_hz: f64,
}

fn section_limits(stock: &Stock, kind: AmplifierKind) -> SectionLimits {
    match kind {
        AmplifierKind::OpAmp(i) => {
            let part = &stock.opamps[i];
            SectionLimits {
                input_headroom: [part.input_headroom_low.0, part.input_headroom_high.0],
                output_headroom: [part.output_headroom_low.0, part.output_headroom_high.0],
                gbw_hz: part.gbw_mhz * 1e6,
            }
        }
        AmplifierKind::InAmp(i) => {
            let part = &stock.inamps[i];
            SectionLimits {
                input_headroom: [part.input_headroom_low.0, part.input_headroom_high.0],
                output_headroom: [part.output_headroom_low.0, part.output_headroom_high.0],
                gbw_hz: part.gbw_mhz * 1e6,
            }
        }
    }
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
    });
    let (swing_low, swing_high) = (
        negative + limits.output_headroom[0],
        positive - limits.output_headroom[1],
    );
    let mut nodes = vec![section.out];
    nodes.extend(&section.internal_outputs);
    let (output_min, output_max) = range_of(&nodes);
    out.push(RawFinding {
        check: Check::OutputSwing,
        subject: section.designator.clone(),
        ok: output_min >= swing_low - VOLTAGE_SLACK && output_max <= swing_high + VOLTAGE_SLACK,
        numbers: [output_min, output_max, swing_low, swing_high],
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
    });
}

/// Parts on the board: resistors, amplifier packages, references, and
/// the filter pair where the design has one.
pub fn part_count(built: &Built) -> usize {
    built.resistors.len()
        + if built.filter.is_some() { 2 } else { 0 }
        + built.packages.len()
        + built
            .sources
            .iter()
            .filter(|s| s.reference.is_some())
            .count()
}

#[cfg(test)]
mod tests {
    use super::*;

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
