//! Value sets: for one stage of a group in a grade, the few resistor sets
//! (and offset dividers) whose ratios come nearest the stage's target gain
//! and offset, each with its linearised effect at the output; ratio
//! searches over the sorted value list; a design from one set per stage.
//! Where the stock holds matched networks, a stage whose shape has matched
//! roles also gets sets whose matched roles are elements of one package
//! ([`NetworkPick`]), searched as a variant of the structure.

use super::groups::{Group, OffsetPlan};
use super::structures::{Grade, Structure};
use super::Problem;
use crate::design::{Design, Injection, Resistor, Stage};
use crate::shape::{
    offset_drive, CarriedGrade, MatchedRoles, OffsetNetwork, Role, RoleValues, StageDrive,
    StageShape, ValueSetRequest,
};
use std::collections::BTreeMap;

/// Value sets kept per stage.
const VALUE_SETS_PER_STAGE: usize = 4;
/// Value sets with input resistors of a cheaper grade kept per stage
/// ([`Problem::carried_sets_for_stage`]).
const CARRIED_SETS_PER_STAGE: usize = 4;
/// Network value sets kept per stage.
const NETWORK_SETS_PER_STAGE: usize = 4;
/// Reach of a network value set: its own linearised error at the output
/// (as calibration leaves it) within this many times the target. A package
/// whose ratio misses the stage's gain by more cannot serve it (a later
/// stage could cancel some of it, hence more than one target; a rule of
/// thumb).
const NETWORK_REACH: f64 = 2.0;

/// The elements of one matched network package filling the matched roles
/// of a stage.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord)]
pub(super) struct NetworkPick {
    /// Index of the part in the stock's networks.
    pub(super) part: usize,
    /// Element number (1-based) by role.
    pub(super) elements: BTreeMap<Role, u32>,
}

/// A BOM line a value set places parts on: a resistor part, or a network
/// part (one line however many packages).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub(super) enum PartLine {
    /// Index in the stock's resistors.
    Resistor(usize),
    /// Index in the stock's networks (one package per value set).
    Network(usize),
}

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
    /// Price of its resistors (a network package once).
    pub(super) cost: f64,
    /// The network package filling its matched roles, if any (those roles
    /// are then not in `resistors`).
    pub(super) network: Option<NetworkPick>,
    /// Roles filled by a given stocked resistor (its index in the stock)
    /// outside the stage grade: a first stage's input resistors in a
    /// cheaper grade beside the sensor's resistance (those roles are then
    /// not in `resistors`).
    pub(super) fixed: BTreeMap<Role, usize>,
}

impl ValueSet {
    /// The BOM line of every part the set places, once per part placed (a
    /// network package once).
    pub(super) fn stock_parts(&self, grade: &Grade, divider_grade: &Grade) -> Vec<PartLine> {
        let mut out: Vec<PartLine> = self
            .resistors
            .values()
            .map(|&i| PartLine::Resistor(grade.parts[i]))
            .chain(self.fixed.values().map(|&p| PartLine::Resistor(p)))
            .collect();
        out.extend(
            self.offset_top
                .iter()
                .chain(self.offset_bottom.iter())
                .map(|&i| PartLine::Resistor(divider_grade.parts[i])),
        );
        out.extend(self.network.as_ref().map(|n| PartLine::Network(n.part)));
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
    /// A grounded summed stage's band of noise gain over signal gain.
    ground_band: Option<[f64; 2]>,
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
        let scoring = self.stage_scoring(group, stage, grade, divider_grade, previous_ideal);
        let mut out: Vec<ValueSet> = self
            .shape_candidates(&scoring)
            .into_iter()
            .filter_map(|(roles, divider)| {
                self.score(&scoring, roles, divider, None, BTreeMap::new())
            })
            .collect();
        sort_by_effect(&mut out);
        out.truncate(VALUE_SETS_PER_STAGE);
        out.extend(self.carried_sets_for_stage(&scoring));
        out
    }

    /// A first stage's value sets whose input resistors beside the
    /// sensor's resistance take small values of the cheapest grade while
    /// the rest keep the stage grade (`StageShape::carried_sets`): a
    /// uniform grade prices those roles as precisely as the gain-setting
    /// ones, although the sensor's own resistance, stated in the need,
    /// carries most of the input resistance. Kept apart from the stage's
    /// best few, whose rounding they rarely match: their price is what
    /// they offer. Empty when the stage grade is the cheapest, the shape
    /// has no such roles, or no sensor resistance is in series.
    fn carried_sets_for_stage(&self, scoring: &StageScoring<'_>) -> Vec<ValueSet> {
        let Some(cheapest) = self.grades.first() else {
            return Vec::new();
        };
        if cheapest.min_cost >= scoring.grade.min_cost
            || scoring.behaviour.carried_roles().is_empty()
        {
            return Vec::new();
        }
        let carried = CarriedGrade {
            values: &cheapest.values,
            tolerance: cheapest.tolerance,
        };
        let request = Self::request(scoring);
        let candidates =
            with_tap_dividers(scoring, scoring.behaviour.carried_sets(&request, &carried));
        let mut out: Vec<ValueSet> = candidates
            .into_iter()
            .filter_map(|(mut roles, divider)| {
                let fixed: BTreeMap<Role, usize> = scoring
                    .behaviour
                    .carried_roles()
                    .iter()
                    .filter_map(|role| {
                        let index = roles.remove(role)?;
                        Some((*role, *cheapest.parts.get(index)?))
                    })
                    .collect();
                self.score(scoring, roles, divider, None, fixed)
            })
            .collect();
        sort_by_effect(&mut out);
        out.truncate(CARRIED_SETS_PER_STAGE);
        let sharing: Vec<ValueSet> = out
            .iter()
            .flat_map(|set| self.sharing_dividers(scoring, set))
            .collect();
        for set in sharing {
            let same = |o: &ValueSet| {
                o.resistors == set.resistors
                    && o.fixed == set.fixed
                    && o.offset_top == set.offset_top
                    && o.offset_bottom == set.offset_bottom
            };
            if !out.iter().any(same) {
                out.push(set);
            }
        }
        out
    }

    /// A carried set's variants with an unbuffered REF divider whose
    /// bottom is the part a carried role already places (one BOM line for
    /// both), its top taken for a tap from [`SHARING_TAP_LOW`] of the ideal
    /// up to the ideal: the ratio search aims at the ideal tap only and
    /// never sees the line a shared value saves, and with a trim the offset
    /// need not be the ideal one. Nearest the ideal tap first, at most
    /// [`SHARING_DIVIDERS_PER_SET`]. Empty without an unbuffered REF
    /// divider or a trim.
    fn sharing_dividers(&self, scoring: &StageScoring<'_>, set: &ValueSet) -> Vec<ValueSet> {
        // A trim (offset or two-point) lets the offset differ from the
        // ideal one.
        let trimmed = self.need.accuracy.calibration != crate::need::Calibration::None;
        if !(scoring.unbuffered_ref && trimmed && scoring.source_volts > 0.0) {
            return Vec::new();
        }
        let ideal = scoring.offset / scoring.source_volts;
        if !(ideal > 0.0 && ideal < 1.0) {
            return Vec::new();
        }
        let grade = scoring.divider_grade;
        let mut out = Vec::new();
        let mut bottoms: Vec<usize> = set
            .fixed
            .values()
            .filter_map(|part| grade.parts.iter().position(|p| p == part))
            .collect();
        bottoms.dedup();
        for bottom in bottoms {
            let low = grade.values[bottom];
            // Tops for taps in [SHARING_TAP_LOW ideal, ideal], nearest the
            // ideal first.
            let top_at = |tap: f64| low * (1.0 - tap) / tap;
            let (from, to) = (top_at(ideal), top_at(ideal * SHARING_TAP_LOW));
            let start = grade.values.partition_point(|&v| v < from * (1.0 - 1e-9));
            let tops = grade.values[start..]
                .iter()
                .take_while(|&&v| v <= to * (1.0 + 1e-9))
                .count();
            for top in start..start + tops.min(SHARING_DIVIDERS_PER_SET) {
                if let Some(v) = self.score(
                    scoring,
                    set.resistors.clone(),
                    Some((top, bottom)),
                    None,
                    set.fixed.clone(),
                ) {
                    out.push(v);
                }
            }
        }
        out
    }

    /// The network value sets of one stage: the shape's candidates with
    /// their matched roles taken from the elements of one package of a
    /// stocked network part (on the shelf), each scored like any value set;
    /// those within [`NETWORK_REACH`] of the target, best first. Empty for
    /// a shape without matched roles or a stock without networks.
    pub(super) fn network_sets_for_stage(
        &self,
        group: &Group,
        stage: usize,
        grade: &Grade,
        divider_grade: &Grade,
        previous_ideal: [f64; 2],
    ) -> Vec<ValueSet> {
        let Some(matched) = group.shapes[stage].behaviour().matched_roles() else {
            return Vec::new();
        };
        let picks = network_picks(self.stock, matched);
        if picks.is_empty() {
            return Vec::new();
        }
        let scoring = self.stage_scoring(group, stage, grade, divider_grade, previous_ideal);
        let taken = matched.roles();
        // The shape's candidates without the matched roles: what the grade
        // still fills (and the divider), once each.
        let mut bases: Vec<RoleValues> = Vec::new();
        for (mut roles, divider) in self.shape_candidates(&scoring) {
            roles.retain(|role, _| !taken.contains(role));
            if !bases.iter().any(|b| b.0 == roles && b.1 == divider) {
                bases.push((roles, divider));
            }
        }
        let calibration = self.need.accuracy.calibration;
        let reach = NETWORK_REACH * self.target_v;
        let mut out: Vec<ValueSet> = Vec::new();
        for (roles, divider) in &bases {
            for pick in &picks {
                let Some(set) = self.score(
                    &scoring,
                    roles.clone(),
                    *divider,
                    Some(pick.clone()),
                    BTreeMap::new(),
                ) else {
                    continue;
                };
                let e = calibration.apply(set.contribution);
                if e[0].abs().max(e[1].abs()) <= reach {
                    out.push(set);
                }
            }
        }
        sort_by_effect(&mut out);
        out.truncate(NETWORK_SETS_PER_STAGE);
        out
    }

    /// What scoring one stage's value sets reads.
    fn stage_scoring<'s>(
        &self,
        group: &Group,
        stage: usize,
        grade: &'s Grade,
        divider_grade: &'s Grade,
        previous_ideal: [f64; 2],
    ) -> StageScoring<'s> {
        let plan = group.plan(stage);
        StageScoring {
            behaviour: group.shapes[stage].behaviour(),
            grade,
            divider_grade,
            gain: group.gains[stage],
            offset: group.offsets[stage],
            network: plan.map(|p| p.network),
            unbuffered_ref: plan
                .is_some_and(|p| p.network == OffsetNetwork::RefDivider && !p.buffered),
            source_volts: plan.map(|p| p.volts).unwrap_or(0.0),
            ground_band: plan.and_then(|p| p.ground_band),
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
        }
    }

    /// The shape's candidates for a stage (with the dividers of an
    /// unbuffered REF tap at every impedance level).
    fn shape_candidates(&self, scoring: &StageScoring<'_>) -> Vec<RoleValues> {
        let request = Self::request(scoring);
        with_tap_dividers(scoring, scoring.behaviour.value_sets(&request))
    }

    /// What the shape's generators are asked for a stage.
    fn request<'s>(scoring: &StageScoring<'s>) -> ValueSetRequest<'s> {
        ValueSetRequest {
            values: &scoring.grade.values,
            divider_values: &scoring.divider_grade.values,
            gain: scoring.gain,
            offset: scoring.offset,
            network: scoring.network,
            source_volts: scoring.source_volts,
            ground_band: scoring.ground_band,
            sensor_ohms: scoring.sensor_ohms,
            inamp_gain_ohms: scoring.inamp_gain_ohms,
            common_mode: scoring.inputs[0].1,
        }
    }

    /// One candidate's exact stage gain and offset from the shape's closed
    /// form, its linearised effect at the output and its price; `None`
    /// when the closed form gives no usable gain. The roles of `network`
    /// take its elements' values, the roles of `fixed` their stocked
    /// resistor's.
    fn score(
        &self,
        scoring: &StageScoring<'_>,
        roles: BTreeMap<Role, usize>,
        divider: Option<(usize, usize)>,
        network: Option<NetworkPick>,
        fixed: BTreeMap<Role, usize>,
    ) -> Option<ValueSet> {
        let values = &scoring.grade.values;
        let divider_values = &scoring.divider_grade.values;
        let package = network
            .as_ref()
            .and_then(|n| self.stock.networks.get(n.part).map(|part| (n, part)));
        let ohms = |role: Role| {
            let element = package.and_then(|(n, part)| {
                let index = usize::try_from(*n.elements.get(&role)?)
                    .ok()?
                    .checked_sub(1)?;
                part.values.get(index).map(|v| v.0)
            });
            element
                .or_else(|| roles.get(&role).map(|&i| values[i]))
                .or_else(|| {
                    let part = self.stock.resistors.get(*fixed.get(&role)?)?;
                    Some(part.value.0)
                })
                .unwrap_or(f64::NAN)
        };
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
        let mut cost: f64 = roles
            .values()
            .map(|&i| price(scoring.grade, i))
            .sum::<f64>()
            + fixed
                .values()
                .filter_map(|&p| self.stock.resistors.get(p))
                .map(|part| part.unit_cost)
                .sum::<f64>();
        if let Some((top, bottom)) = divider {
            cost += price(scoring.divider_grade, top) + price(scoring.divider_grade, bottom);
        }
        if let Some((_, part)) = package {
            cost += part.unit_cost;
        }
        Some(ValueSet {
            resistors: roles,
            offset_top: divider.map(|d| d.0),
            offset_bottom: divider.map(|d| d.1),
            gain,
            offset,
            contribution,
            cost,
            network,
            fixed,
        })
    }

    /// Turn one value set per stage into a design.
    pub(super) fn design(&self, group: &Group, grades: &[usize], picks: &[&ValueSet]) -> Design {
        let mut stages = Vec::new();
        // Packages placed so far, by network part: each set takes its own.
        let mut packages: BTreeMap<usize, u32> = BTreeMap::new();
        for (i, (&shape, value_set)) in group.shapes.iter().zip(picks).enumerate() {
            let grade = &self.grades[grades[i]];
            let divider_grade = &self.grades[grades[group.shapes.len()]];
            let stage_resistor =
                |idx: usize| Resistor::from(&self.stock.resistors[grade.parts[idx]]);
            let divider_resistor =
                |idx: usize| Resistor::from(&self.stock.resistors[divider_grade.parts[idx]]);
            let mut resistors: BTreeMap<Role, Resistor> = value_set
                .resistors
                .iter()
                .map(|(&role, &index)| (role, stage_resistor(index)))
                .chain(value_set.fixed.iter().filter_map(|(&role, &part)| {
                    Some((role, Resistor::from(self.stock.resistors.get(part)?)))
                }))
                .collect();
            if let Some(n) = &value_set.network {
                let count = packages.entry(n.part).or_insert(0);
                *count += 1;
                if let Some(part) = self.stock.networks.get(n.part) {
                    for (&role, &element) in &n.elements {
                        if let Some(r) = Resistor::network_element(part, *count, element) {
                            resistors.insert(role, r);
                        }
                    }
                }
            }
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
                // A summed stage's `ro` returned to ground.
                Some(p) if !p.sourced() => (Injection::Ground, Injection::Ground),
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

/// A stage's candidates with the dividers of an unbuffered REF tap at
/// every impedance level ([`with_unbuffered_dividers`]) where the stage
/// has one.
fn with_tap_dividers(scoring: &StageScoring<'_>, candidates: Vec<RoleValues>) -> Vec<RoleValues> {
    if scoring.unbuffered_ref && scoring.source_volts > 0.0 && !candidates.is_empty() {
        let tap = scoring.offset / scoring.source_volts;
        return with_unbuffered_dividers(candidates, scoring.divider_grade, tap);
    }
    candidates
}

/// Sort value sets by their linearised effect at the output, then price.
fn sort_by_effect(sets: &mut [ValueSet]) {
    sets.sort_by(|x, y| {
        let mx = x.contribution[0].abs().max(x.contribution[1].abs());
        let my = y.contribution[0].abs().max(y.contribution[1].abs());
        mx.total_cmp(&my).then(x.cost.total_cmp(&y.cost))
    });
}

/// Every way one package of a stocked network part (`stock_qty` not 0)
/// fills a stage's matched roles: two elements of one value for `low`, two
/// of one value for `high` (the same value too, from four elements), the
/// lowest-numbered elements of each value, once per pair of values.
fn network_picks(stock: &crate::stock::Stock, matched: MatchedRoles) -> Vec<NetworkPick> {
    let mut out = Vec::new();
    for (part, network) in stock.networks.iter().enumerate() {
        if network.stock_qty == Some(0) {
            continue;
        }
        // Element numbers (1-based) by distinct value, in element order.
        let mut classes: Vec<(f64, Vec<u32>)> = Vec::new();
        for (i, v) in network.values.iter().enumerate() {
            let Ok(number) = u32::try_from(i + 1) else {
                break;
            };
            match classes
                .iter_mut()
                .find(|(value, _)| (value - v.0).abs() <= 1e-9 * value.abs())
            {
                Some((_, elements)) => elements.push(number),
                None => classes.push((v.0, vec![number])),
            }
        }
        for (low, low_elements) in classes.iter().map(|(_, e)| e).enumerate() {
            for (high, high_elements) in classes.iter().map(|(_, e)| e).enumerate() {
                let (l, h): (&[u32], &[u32]) = if low == high {
                    if low_elements.len() < 4 {
                        continue;
                    }
                    (&low_elements[..2], &low_elements[2..4])
                } else {
                    if low_elements.len() < 2 || high_elements.len() < 2 {
                        continue;
                    }
                    (&low_elements[..2], &high_elements[..2])
                };
                let elements: BTreeMap<Role, u32> = matched
                    .roles()
                    .into_iter()
                    .zip([l[0], l[1], h[0], h[1]])
                    .collect();
                out.push(NetworkPick { part, elements });
            }
        }
    }
    out
}

/// Dividers kept per decade of the divider's smaller resistor for an
/// unbuffered REF divider.
const UNBUFFERED_DIVIDERS_PER_DECADE: usize = 2;

/// Lowest share of the ideal tap a sharing divider is aimed at
/// ([`sharing_dividers`]): with a trim, a lower offset moves less with
/// the source's tolerance while the output stays inside its limits (the
/// analysis judges that; our rule for how far to look).
const SHARING_TAP_LOW: f64 = 0.6;
/// Sharing dividers kept per carried value set.
const SHARING_DIVIDERS_PER_SET: usize = 8;

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

/// Value sets already generated, by (group, stage, grade, divider grade,
/// network sets or not): structures of one group share them.
pub(super) type ValueSetCache = BTreeMap<(usize, usize, usize, usize, bool), Vec<ValueSet>>;

/// Value sets for every stage of a structure, chained through ideal
/// outputs; `None` when a stage has none. With `network_stage`, that
/// stage's sets are its network sets only ([`Problem::network_sets_for_stage`]).
pub(super) fn value_sets_for_structure(
    problem: &Problem<'_>,
    group: &Group,
    structure: &Structure,
    cache: &mut ValueSetCache,
    network_stage: Option<usize>,
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
        let networks = network_stage == Some(i);
        let key = (
            structure.group,
            i,
            structure.grades[i],
            divider_grade,
            networks,
        );
        let stage_sets = cache
            .entry(key)
            .or_insert_with(|| {
                let (grade, divider) = (
                    &problem.grades[structure.grades[i]],
                    &problem.grades[structure.grades[n]],
                );
                if networks {
                    problem.network_sets_for_stage(group, i, grade, divider, prev)
                } else {
                    problem.value_sets_for_stage(group, i, grade, divider, prev)
                }
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
