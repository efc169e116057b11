//! Value sets: for one stage of a group in a grade, the few resistor sets
//! (and offset dividers) whose ratios come nearest the stage's target gain
//! and offset, each with its linearised effect at the output; ratio
//! searches over the sorted value list; a design from one set per stage.

use super::groups::{Group, OffsetPlan};
use super::structures::{Grade, Structure};
use super::Problem;
use crate::design::{Design, Injection, Resistor, Stage};
use crate::shape::{offset_drive, OffsetNetwork, Role, StageDrive, StageShape, ValueSetRequest};
use std::collections::BTreeMap;

/// Value sets kept per stage.
const VALUE_SETS_PER_STAGE: usize = 4;

/// A stage value set with its linearised effect.
#[derive(Debug, Clone)]
pub(super) struct ValueSet {
    /// Value index (in the stage's grade) by role.
    pub(super) resistors: BTreeMap<Role, usize>,
    /// Divider top (in the divider grade).
    pub(super) offset_top: Option<usize>,
    /// Divider bottom (in the divider grade).
    pub(super) offset_bottom: Option<usize>,
    /// Closed-form stage gain (ideal op-amps).
    pub(super) gain: f64,
    /// Closed-form stage output offset, volts (ideal op-amps).
    pub(super) offset: f64,
    /// Linearised output error at each span end, volts.
    pub(super) contribution: [f64; 2],
    /// Price of its resistors.
    pub(super) cost: f64,
}

impl ValueSet {
    /// Stock indices of every resistor the set places.
    pub(super) fn stock_parts(&self, grade: &Grade, divider_grade: &Grade) -> Vec<usize> {
        let mut out: Vec<usize> = self.resistors.values().map(|&i| grade.parts[i]).collect();
        out.extend(
            self.offset_top
                .iter()
                .chain(self.offset_bottom.iter())
                .map(|&i| divider_grade.parts[i]),
        );
        out
    }
}

/// What scoring a stage's value sets needs besides the sets.
struct StageScoring<'s> {
    behaviour: &'static dyn StageShape,
    grade: &'s Grade,
    divider_grade: &'s Grade,
    /// Target stage gain and output offset.
    gain: f64,
    offset: f64,
    network: Option<OffsetNetwork>,
    /// Whether a REF divider is unbuffered (its Thevenin resistance then
    /// sits in series with the REF leg).
    unbuffered_ref: bool,
    source_volts: f64,
    sensor_ohms: (f64, f64),
    inamp_gain_ohms: f64,
    /// The stage's (+, -) inputs at both span ends.
    inputs: [(f64, f64); 2],
    /// Gain after the stage.
    gain_after: f64,
    /// Offsets made upstream of the stage, as they reach the output.
    upstream_offset: f64,
    /// The need's overall gain.
    overall_gain: f64,
}

impl Problem<'_> {
    /// The value sets of one stage of a group in a grade, best first: the
    /// shape's candidates scored by their linearised effect at the output.
    pub(super) fn value_sets_for_stage(
        &self,
        group: &Group,
        stage: usize,
        grade: &Grade,
        divider_grade: &Grade,
        previous_ideal: [f64; 2],
    ) -> Vec<ValueSet> {
        let plan = group.plan(stage);
        let scoring = StageScoring {
            behaviour: group.shapes[stage].behaviour(),
            grade,
            divider_grade,
            gain: group.gains[stage],
            offset: group.offsets[stage],
            network: plan.map(|p| p.network),
            unbuffered_ref: plan
                .is_some_and(|p| p.network == OffsetNetwork::RefDivider && !p.buffered),
            source_volts: plan.map(|p| p.volts).unwrap_or(0.0),
            sensor_ohms: self.sensor_ohms(stage),
            inamp_gain_ohms: group
                .inamp
                .map(|i| self.stock.inamps[i].gain_resistor.0)
                .unwrap_or(0.0),
            inputs: self.stage_inputs(stage, previous_ideal),
            gain_after: group.gains[stage + 1..].iter().product(),
            upstream_offset: (0..stage)
                .map(|i| group.offsets[i] * group.gains[i + 1..].iter().product::<f64>())
                .sum(),
            overall_gain: self.need.ideal_transfer().0,
        };
        let request = ValueSetRequest {
            values: &grade.values,
            divider_values: &divider_grade.values,
            gain: scoring.gain,
            offset: scoring.offset,
            network: scoring.network,
            source_volts: scoring.source_volts,
            sensor_ohms: scoring.sensor_ohms,
            inamp_gain_ohms: scoring.inamp_gain_ohms,
        };
        let mut candidates = scoring.behaviour.value_sets(&request);
        if scoring.unbuffered_ref && scoring.source_volts > 0.0 {
            let tap = scoring.offset / scoring.source_volts;
            candidates = with_unbuffered_dividers(candidates, divider_grade, tap);
        }
        let mut out: Vec<ValueSet> = candidates
            .into_iter()
            .filter_map(|(roles, divider)| self.score(&scoring, roles, divider))
            .collect();
        out.sort_by(|x, y| {
            let mx = x.contribution[0].abs().max(x.contribution[1].abs());
            let my = y.contribution[0].abs().max(y.contribution[1].abs());
            mx.total_cmp(&my).then(x.cost.total_cmp(&y.cost))
        });
        out.truncate(VALUE_SETS_PER_STAGE);
        out
    }

    /// One candidate's exact stage gain and offset from the shape's closed
    /// form, its linearised effect at the output and its price; `None`
    /// when the closed form gives no usable gain.
    fn score(
        &self,
        scoring: &StageScoring<'_>,
        roles: BTreeMap<Role, usize>,
        divider: Option<(usize, usize)>,
    ) -> Option<ValueSet> {
        let values = &scoring.grade.values;
        let divider_values = &scoring.divider_grade.values;
        let ohms = |role: Role| roles.get(&role).map(|&i| values[i]).unwrap_or(f64::NAN);
        let divider_ohms =
            divider.map(|(top, bottom)| (divider_values[top], divider_values[bottom]));
        let (offset_volts, mut thevenin_ohms) =
            offset_drive(scoring.network, scoring.source_volts, divider_ohms);
        if let (true, Some((top, bottom))) = (scoring.unbuffered_ref, divider_ohms) {
            thevenin_ohms = top * bottom / (top + bottom);
        }
        let drive = StageDrive {
            ohms: &ohms,
            network: scoring.network,
            offset_volts,
            thevenin_ohms,
            sensor_ohms: scoring.sensor_ohms,
            inamp_gain_ohms: scoring.inamp_gain_ohms,
        };
        let ins = scoring.inputs;
        let output =
            |(plus, minus): (f64, f64)| scoring.behaviour.ideal_output(&drive, plus, minus);
        let (y0, y1) = (output(ins[0]), output(ins[1]));
        let dx = ins[1].0 - ins[1].1 - (ins[0].0 - ins[0].1);
        let gain = (y1 - y0) / dx;
        let offset = y0 - gain * (ins[0].0 - ins[0].1);
        if !(gain.is_finite() && offset.is_finite()) {
            return None;
        }
        // The effect at the output, linear in logarithms: the overall
        // gain is the product of stage gains and the offset the product
        // of the offset stage's offset and the gains after it, so their
        // log errors add exactly across stages; only exp(L) - 1 ~ L is
        // approximate, and that is small where the total is small.
        let ratio = gain / scoring.gain;
        if ratio <= 0.0 {
            return None;
        }
        let log_gain_error = ratio.ln();
        let offset_term = (offset - scoring.offset) * scoring.gain_after;
        let mut contribution = [0.0; 2];
        for (end, at_end) in contribution.iter_mut().enumerate() {
            *at_end = log_gain_error
                * (scoring.overall_gain * self.signal[end] + scoring.upstream_offset)
                + offset_term;
        }
        let price = |grade: &Grade, i: usize| self.stock.resistors[grade.parts[i]].unit_cost;
        let mut cost: f64 = roles.values().map(|&i| price(scoring.grade, i)).sum();
        if let Some((top, bottom)) = divider {
            cost += price(scoring.divider_grade, top) + price(scoring.divider_grade, bottom);
        }
        Some(ValueSet {
            resistors: roles,
            offset_top: divider.map(|d| d.0),
            offset_bottom: divider.map(|d| d.1),
            gain,
            offset,
            contribution,
            cost,
        })
    }

    /// Turn one value set per stage into a design.
    pub(super) fn design(&self, group: &Group, grades: &[usize], picks: &[&ValueSet]) -> Design {
        let mut stages = Vec::new();
        for (i, (&shape, value_set)) in group.shapes.iter().zip(picks).enumerate() {
            let grade = &self.grades[grades[i]];
            let divider_grade = &self.grades[grades[group.shapes.len()]];
            let stage_resistor =
                |idx: usize| Resistor::from(&self.stock.resistors[grade.parts[idx]]);
            let divider_resistor =
                |idx: usize| Resistor::from(&self.stock.resistors[divider_grade.parts[idx]]);
            let resistors: BTreeMap<Role, Resistor> = value_set
                .resistors
                .iter()
                .map(|(&role, &index)| (role, stage_resistor(index)))
                .collect();
            let plan = group.plan(i);
            let divider = |buffered: bool, p: &OffsetPlan| match (
                value_set.offset_top,
                value_set.offset_bottom,
            ) {
                (Some(t), Some(b)) => Injection::Divider {
                    source: p.source.clone(),
                    top: divider_resistor(t),
                    bottom: divider_resistor(b),
                    buffered,
                },
                _ => Injection::Direct {
                    source: p.source.clone(),
                },
            };
            let (offset, bias) = match plan {
                None => (Injection::Ground, Injection::Ground),
                Some(p) => match p.network {
                    OffsetNetwork::GainLeg => (divider(false, p), Injection::Ground),
                    OffsetNetwork::Summed | OffsetNetwork::InvertingRo => (
                        Injection::Direct {
                            source: p.source.clone(),
                        },
                        Injection::Ground,
                    ),
                    OffsetNetwork::InvertingBias => (Injection::Ground, divider(false, p)),
                    OffsetNetwork::RefDivider => (divider(p.buffered, p), Injection::Ground),
                },
            };
            let buffer = if shape.integrated() && offset.buffered() {
                group.opamp.map(|o| self.stock.opamps[o].part_id.clone())
            } else {
                None
            };
            let amplifier = if shape.integrated() {
                group
                    .inamp
                    .map(|i| self.stock.inamps[i].part_id.clone())
                    .unwrap_or_default()
            } else {
                group
                    .opamp
                    .map(|o| self.stock.opamps[o].part_id.clone())
                    .unwrap_or_default()
            };
            stages.push(Stage {
                shape,
                amplifier,
                resistors,
                offset,
                bias,
                buffer,
                feedback_capacitor: None,
            });
        }
        let mut design = Design { stages };
        // A pole in the last stage's feedback where the rule places one.
        self.pairs.place_feedback(self.stock, &mut design);
        design
    }
}

/// Dividers kept per decade of the divider's smaller resistor for an
/// unbuffered REF divider.
const UNBUFFERED_DIVIDERS_PER_DECADE: usize = 2;

/// The candidates of a stage whose REF divider is unbuffered: each of the
/// shape's resistor sets with its own dividers and with dividers at every
/// impedance level of the divider grade. The shape's dividers keep their
/// smaller resistor inside the ratio band, which suits a buffered tap; an
/// unbuffered tap puts the divider's Thevenin resistance in series with the
/// REF leg, where a low one unbalances the stage least (its common-mode
/// rejection and its gain), so lower levels are offered too and the
/// scoring (the stage's closed form, Thevenin resistance included) ranks
/// them.
fn with_unbuffered_dividers(
    candidates: Vec<crate::shape::RoleValues>,
    divider_grade: &Grade,
    tap: f64,
) -> Vec<crate::shape::RoleValues> {
    if !(tap > 0.0 && tap < 1.0) {
        return candidates;
    }
    let values = &divider_grade.values;
    let ratio = tap / (1.0 - tap);
    // The smaller resistor of the pair is the base; its partner brackets
    // base / ratio (bottom small) or base * ratio (top small). The values
    // are sorted, so the bases come decade by decade.
    let mut dividers: Vec<(usize, usize)> = Vec::new();
    let mut decade: Vec<(usize, usize, f64)> = Vec::new();
    let mut decade_top = f64::NEG_INFINITY;
    for (i, &small) in values.iter().enumerate() {
        if small >= decade_top {
            super::ratio::keep_best(&mut decade, UNBUFFERED_DIVIDERS_PER_DECADE);
            dividers.extend(decade.drain(..).map(|(t, b, _)| (t, b)));
            decade_top = 10f64.powf(small.log10().floor() + 1.0);
        }
        let partner = if ratio < 1.0 {
            small / ratio
        } else {
            small * ratio
        };
        for k in super::ratio::bracket(values, partner) {
            let (top, bottom) = if ratio < 1.0 { (k, i) } else { (i, k) };
            let got = values[bottom] / (values[top] + values[bottom]);
            decade.push((top, bottom, (got / tap - 1.0).abs()));
        }
    }
    super::ratio::keep_best(&mut decade, UNBUFFERED_DIVIDERS_PER_DECADE);
    dividers.extend(decade.drain(..).map(|(t, b, _)| (t, b)));
    let mut out: Vec<crate::shape::RoleValues> = Vec::new();
    for (roles, divider) in candidates {
        if !out.iter().any(|(r, _)| *r == roles) {
            for &d in &dividers {
                out.push((roles.clone(), Some(d)));
            }
        }
        if let Some(d) = divider {
            if !dividers.contains(&d) {
                out.push((roles, Some(d)));
            }
        }
    }
    out
}

/// Value sets already generated, by (group, stage, grade, divider grade):
/// structures of one group share them.
pub(super) type ValueSetCache = BTreeMap<(usize, usize, usize, usize), Vec<ValueSet>>;

/// Value sets for every stage of a structure, chained through ideal
/// outputs; `None` when a stage has none.
pub(super) fn value_sets_for_structure(
    problem: &Problem<'_>,
    group: &Group,
    structure: &Structure,
    cache: &mut ValueSetCache,
) -> Option<Vec<Vec<ValueSet>>> {
    let n = group.shapes.len();
    let mut prev = problem.signal;
    let mut out = Vec::new();
    for i in 0..n {
        // The divider grade matters only to a stage with a divider.
        let divider_grade = if group.plan(i).is_some() {
            structure.grades[n]
        } else {
            usize::MAX
        };
        let key = (structure.group, i, structure.grades[i], divider_grade);
        let stage_sets = cache
            .entry(key)
            .or_insert_with(|| {
                problem.value_sets_for_stage(
                    group,
                    i,
                    &problem.grades[structure.grades[i]],
                    &problem.grades[structure.grades[n]],
                    prev,
                )
            })
            .clone();
        if stage_sets.is_empty() {
            return None;
        }
        for p in prev.iter_mut() {
            *p = group.gains[i] * *p + group.offsets[i];
        }
        out.push(stage_sets);
    }
    Some(out)
}
