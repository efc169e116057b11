//! Value sets: for one stage of a group in a grade, the few resistor sets
//! (and offset dividers) whose ratios come nearest the stage's target gain
//! and offset, each with its linearised effect at the output; ratio
//! searches over the sorted value list; a design from one set per stage.

use super::groups::{Group, OffsetPlan};
use super::structures::{Grade, Structure};
use super::Problem;
use crate::design::{Design, Injection, Resistor, Stage};
use crate::shape::{OffsetNetwork, Role, StageDrive, ValueSetRequest};
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

impl Problem<'_> {
    /// Generate value sets for one stage of a group in a grade.
    pub(super) fn value_sets_for_stage(
        &self,
        group: &Group,
        stage: usize,
        grade: &Grade,
        divider_grade: &Grade,
        prev_ideal: [f64; 2],
    ) -> Vec<ValueSet> {
        let shape = group.shapes[stage];
        let a = group.gains[stage];
        let c = group.offsets[stage];
        let plan = group.plan(stage);
        let how = plan.map(|p| p.network);
        let vsrc = plan.map(|p| p.volts).unwrap_or(0.0);
        let rk = group
            .inamp
            .map(|i| self.stock.inamps[i].gain_resistor.0)
            .unwrap_or(0.0);
        let behaviour = shape.behaviour();
        let request = ValueSetRequest {
            values: &grade.values,
            divider_values: &divider_grade.values,
            gain: a,
            offset: c,
            network: how,
            source_volts: vsrc,
            sensor_ohms: self.sensor_ohms(stage),
            inamp_gain_ohms: rk,
        };
        let raw = behaviour.value_sets(&request);
        let (v, vd, rs) = (&grade.values, &divider_grade.values, request.sensor_ohms);
        // Score by the linearised effect at the output.
        let k_total = self.need.ideal_transfer().0;
        let down: f64 = group.gains[stage + 1..].iter().product();
        // Offsets made upstream of this stage, as they reach the output.
        let upstream: f64 = (0..stage)
            .map(|i| group.offsets[i] * group.gains[i + 1..].iter().product::<f64>())
            .sum();
        let ins = self.stage_inputs(stage, prev_ideal);
        let mut out: Vec<ValueSet> = Vec::new();
        for (roles, div) in raw {
            let ohms = |role: Role| roles.get(&role).map(|&i| v[i]).unwrap_or(f64::NAN);
            let (vo, rth) = match (how, div) {
                (Some(OffsetNetwork::GainLeg), Some((t, b)))
                | (Some(OffsetNetwork::InvertingBias), Some((t, b))) => (
                    vsrc * vd[b] / (vd[t] + vd[b]),
                    if how == Some(OffsetNetwork::GainLeg) {
                        vd[t] * vd[b] / (vd[t] + vd[b])
                    } else {
                        0.0
                    },
                ),
                (Some(OffsetNetwork::RefDivider), Some((t, b))) => {
                    (vsrc * vd[b] / (vd[t] + vd[b]), 0.0)
                }
                (Some(_), None) => (vsrc, 0.0),
                _ => (0.0, 0.0),
            };
            let drive = StageDrive {
                ohms: &ohms,
                network: how,
                offset_volts: vo,
                thevenin_ohms: rth,
                sensor_ohms: rs,
                inamp_gain_ohms: rk,
            };
            let f = |p: (f64, f64)| behaviour.ideal_output(&drive, p.0, p.1);
            let y0 = f(ins[0]);
            let y1 = f(ins[1]);
            let dx = ins[1].0 - ins[1].1 - (ins[0].0 - ins[0].1);
            let a_real = (y1 - y0) / dx;
            let c_real = y0 - a_real * (ins[0].0 - ins[0].1);
            if !(a_real.is_finite() && c_real.is_finite()) {
                continue;
            }
            // The effect at the output, linear in logarithms: the overall
            // gain is the product of stage gains and the offset the product
            // of the offset stage's offset and the gains after it, so their
            // log errors add exactly across stages; only exp(L) - 1 ~ L is
            // approximate, and that is small where the total is small.
            let ratio = a_real / a;
            if ratio <= 0.0 {
                continue;
            }
            let rel = ratio.ln();
            let offset_term = (c_real - c) * down;
            let mut contribution = [0.0; 2];
            for (e, ce) in contribution.iter_mut().enumerate() {
                *ce = rel * (k_total * self.signal[e] + upstream) + offset_term;
            }
            let mut cost: f64 = roles
                .values()
                .map(|&i| self.stock.resistors[grade.parts[i]].unit_cost)
                .sum();
            if let Some((t, b)) = div {
                cost += self.stock.resistors[divider_grade.parts[t]].unit_cost
                    + self.stock.resistors[divider_grade.parts[b]].unit_cost;
            }
            out.push(ValueSet {
                resistors: roles,
                offset_top: div.map(|d| d.0),
                offset_bottom: div.map(|d| d.1),
                gain: a_real,
                offset: c_real,
                contribution,
                cost,
            });
        }
        out.sort_by(|x, y| {
            let mx = x.contribution[0].abs().max(x.contribution[1].abs());
            let my = y.contribution[0].abs().max(y.contribution[1].abs());
            mx.total_cmp(&my).then(x.cost.total_cmp(&y.cost))
        });
        out.truncate(VALUE_SETS_PER_STAGE);
        out
    }

    /// Turn one choice per stage into a design.
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
                    OffsetNetwork::RefDivider => (divider(true, p), Injection::Ground),
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
            });
        }
        Design { stages }
    }
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
