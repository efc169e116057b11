//! Value sets: for one stage of a group in a grade, the few resistor sets
//! (and offset dividers) whose ratios come nearest the stage's target gain
//! and offset, each with its linearised effect at the output; ratio
//! searches over the sorted value list; a design from one set per stage.

use super::groups::{Group, OffsetNetwork, OffsetPlan};
use super::structures::{Grade, Structure};
use super::Problem;
use crate::design::{Design, Injection, Resistor, Shape, Stage};
use std::collections::BTreeMap;

/// Best pairs kept per target ratio.
const PAIRS_PER_RATIO: usize = 3;
/// Value sets kept per stage.
const VALUE_SETS_PER_STAGE: usize = 4;
/// Impedance band of the base resistor of a ratio pair, ohms.
const BAND: (f64, f64) = (1_000.0, 100_000.0);

/// A stage value set with its linearised effect.
#[derive(Debug, Clone)]
pub(super) struct ValueSet {
    /// Value index (in the stage's grade) by role.
    pub(super) resistors: BTreeMap<String, usize>,
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

/// Roles to value indices, with an optional divider (top, bottom).
type RoleValues = (BTreeMap<String, usize>, Option<(usize, usize)>);

/// Ideal stage output for inputs `(vp, vn)` with op-amps ideal; `r` gives
/// ohms by role, `vo` the offset source (or Thevenin) volts, `ro_th` the
/// Thevenin resistance in series where unbuffered, `rs` the sensor's
/// resistance on each input leg (stage 1 only), `rk` the in-amp constant.
#[allow(clippy::too_many_arguments)]
pub(super) fn stage_output(
    shape: Shape,
    how: Option<OffsetNetwork>,
    r: &dyn Fn(&str) -> f64,
    vo: f64,
    rth: f64,
    rs: (f64, f64),
    rk: f64,
    vp: f64,
    vn: f64,
) -> f64 {
    match shape {
        Shape::NonInverting => {
            let rg = r("rg") + rth;
            let rf = r("rf");
            vp * (1.0 + rf / rg) - vo * rf / rg
        }
        Shape::NonInvertingSummed => {
            let ri = r("ri") + rs.0;
            let ro = r("ro");
            let plus = (vp * ro + vo * ri) / (ri + ro);
            plus * (1.0 + r("rf") / r("rg"))
        }
        Shape::Inverting => {
            let ri = r("ri") + rs.0;
            let rf = r("rf");
            let (vb, ro_term) = match how {
                Some(OffsetNetwork::InvertingRo) => (0.0, vo / r("ro")),
                Some(OffsetNetwork::InvertingBias) => (vo, 0.0),
                _ => (0.0, 0.0),
            };
            let ro_cond = if matches!(how, Some(OffsetNetwork::InvertingRo)) {
                1.0 / r("ro")
            } else {
                0.0
            };
            -rf * (vp / ri + ro_term) + vb * (1.0 + rf / ri + rf * ro_cond)
        }
        Shape::Difference => {
            let (r1, r2, r3, r4) = (r("r1") + rs.1, r("r2"), r("r3") + rs.0, r("r4"));
            let beta = r4 / (r3 + r4);
            let plus = vp * beta + vo * r3 / (r3 + r4);
            plus * (1.0 + r2 / r1) - vn * r2 / r1
        }
        Shape::InstrumentationDiscrete => {
            let (rf1, rf2, rg) = (r("rf1"), r("rf2"), r("rg"));
            let d = vp - vn;
            let a1 = vp + rf1 * d / rg;
            let a2 = vn - rf2 * d / rg;
            let (r1, r2, r3, r4) = (r("r1"), r("r2"), r("r3"), r("r4"));
            let plus = a1 * r4 / (r3 + r4) + vo * r3 / (r3 + r4);
            plus * (1.0 + r2 / r1) - a2 * r2 / r1
        }
        Shape::InstrumentationIntegrated => (vp - vn) * (1.0 + rk / r("rg")) + vo,
    }
}

/// Best pairs `(x, y)` from `values` with `y / x` near `ratio`, `x` in
/// the impedance band: a binary search per `x` over the sorted list.
fn ratio_pairs(
    values: &[f64],
    ratio: f64,
    band: (f64, f64),
    keep: usize,
) -> Vec<(usize, usize, f64)> {
    if !(ratio.is_finite() && ratio > 0.0) {
        return Vec::new();
    }
    // The dedupe below may need a few spares.
    let best = bracketed_pairs(
        values,
        band,
        keep * 4,
        |x| x * ratio,
        |x, y| (y / x / ratio - 1.0).abs(),
    );
    let mut out: Vec<(usize, usize, f64)> = Vec::new();
    for b in best {
        if out
            .iter()
            .any(|o| (values[o.1] / values[o.0] - values[b.1] / values[b.0]).abs() < 1e-12 * ratio)
        {
            continue;
        }
        out.push(b);
        if out.len() >= keep {
            break;
        }
    }
    out
}

/// The indices of the values just below and just above `target` in a
/// sorted list (no allocation: the inner loop of the ratio searches).
fn bracket(values: &[f64], target: f64) -> impl Iterator<Item = usize> {
    let ok = target.is_finite() && target > 0.0;
    let j = if ok {
        values.partition_point(|&v| v < target)
    } else {
        0
    };
    let n = if ok { values.len() } else { 0 };
    [j.wrapping_sub(1), j].into_iter().filter(move |&k| k < n)
}

/// Pairs `(base, partner, error)` from one sorted value list: for every
/// base value inside `band`, the two values bracketing `partner_for(base)`,
/// scored by `error(base, partner)`; the `keep` best, best first.
fn bracketed_pairs(
    values: &[f64],
    band: (f64, f64),
    keep: usize,
    partner_for: impl Fn(f64) -> f64,
    error: impl Fn(f64, f64) -> f64,
) -> Vec<(usize, usize, f64)> {
    let mut out = Vec::new();
    for (i, &x) in values.iter().enumerate() {
        if x < band.0 || x > band.1 {
            continue;
        }
        for k in bracket(values, partner_for(x)) {
            out.push((i, k, error(x, values[k])));
        }
    }
    keep_best(&mut out, keep);
    out
}

/// Keep the `k` entries of lowest error (third field), in order, ties by
/// index so the result does not depend on the sort.
fn keep_best(items: &mut Vec<(usize, usize, f64)>, k: usize) {
    let cmp = |a: &(usize, usize, f64), b: &(usize, usize, f64)| {
        a.2.total_cmp(&b.2).then(a.0.cmp(&b.0)).then(a.1.cmp(&b.1))
    };
    if items.len() > k && k > 0 {
        items.select_nth_unstable_by(k - 1, cmp);
        items.truncate(k);
    }
    items.sort_unstable_by(cmp);
}

/// Indices of the values nearest `target` (up to `keep`, both sides).
fn nearest_values(values: &[f64], target: f64, keep: usize) -> Vec<usize> {
    if !(target.is_finite() && target > 0.0) {
        return Vec::new();
    }
    let j = values.partition_point(|&v| v < target);
    let lo = j.saturating_sub(keep / 2 + 1);
    let hi = (j + keep / 2 + 1).min(values.len());
    let mut idx: Vec<usize> = (lo..hi).collect();
    // max(v/t, t/v) orders like |ln(v/t)| without the logarithm.
    let off = |v: f64| (v / target).max(target / v);
    idx.sort_unstable_by(|a, b| off(values[*a]).total_cmp(&off(values[*b])));
    idx.truncate(keep);
    idx
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
        let v = &grade.values;
        let vd = &divider_grade.values;
        let rs = self.sensor_ohms(stage);
        let rk = group
            .inamp
            .map(|i| self.stock.inamps[i].gain_resistor.0)
            .unwrap_or(0.0);
        let mut raw: Vec<RoleValues> = Vec::new();
        // Divider candidates for a needed tap voltage.
        let dividers = |tap: f64| -> Vec<(usize, usize)> {
            if !(tap > 0.0 && tap < vsrc) {
                return Vec::new();
            }
            let q = tap / vsrc;
            let ratio = q / (1.0 - q);
            // Keep the smaller resistor of the pair inside the band.
            if ratio < 1.0 {
                ratio_pairs(vd, 1.0 / ratio, BAND, PAIRS_PER_RATIO)
                    .into_iter()
                    .map(|(b, t, _)| (t, b))
                    .collect()
            } else {
                ratio_pairs(vd, ratio, BAND, PAIRS_PER_RATIO)
                    .into_iter()
                    .map(|(t, b, _)| (t, b))
                    .collect()
            }
        };
        let pairs = |ratio: f64| ratio_pairs(v, ratio, BAND, PAIRS_PER_RATIO);
        let map = |items: &[(&str, usize)]| -> BTreeMap<String, usize> {
            items.iter().map(|(k, i)| (k.to_string(), *i)).collect()
        };
        // A REF-pin stage takes each network with every divider for its
        // offset, or alone when the REF pin is grounded.
        let ref_dividers = if how == Some(OffsetNetwork::RefDivider) {
            dividers(c)
        } else {
            Vec::new()
        };
        let with_ref = |raw: &mut Vec<RoleValues>, m: BTreeMap<String, usize>| {
            if how == Some(OffsetNetwork::RefDivider) {
                for &d in &ref_dividers {
                    raw.push((m.clone(), Some(d)));
                }
            } else {
                raw.push((m, None));
            }
        };
        match shape {
            Shape::NonInverting => {
                if a <= 1.0 {
                    return Vec::new();
                }
                match how {
                    Some(OffsetNetwork::GainLeg) => {
                        let vth = -c / (a - 1.0);
                        for (t, b) in dividers(vth) {
                            let rth = vd[t] * vd[b] / (vd[t] + vd[b]);
                            // rf over the band, rg from the folded leg.
                            let legs = bracketed_pairs(
                                v,
                                (BAND.0, BAND.1 * 10.0),
                                PAIRS_PER_RATIO,
                                |rf| rf / (a - 1.0) - rth,
                                |rf, rg| ((rg + rth) / (rf / (a - 1.0)) - 1.0).abs(),
                            );
                            for (i, k, _) in legs {
                                raw.push((map(&[("rf", i), ("rg", k)]), Some((t, b))));
                            }
                        }
                    }
                    _ => {
                        for (rg, rf, _) in pairs(a - 1.0) {
                            raw.push((map(&[("rg", rg), ("rf", rf)]), None));
                        }
                    }
                }
            }
            Shape::NonInvertingSummed => {
                if vsrc <= 0.0 {
                    return Vec::new();
                }
                let gain = a + c / vsrc;
                let alpha = a / gain;
                if !(gain > 1.05 && alpha > 0.0 && alpha < 1.0) {
                    return Vec::new();
                }
                // ri' / ro = (1 - alpha) / alpha, with ri' = ri + rs.
                let ratio_ri_ro = (1.0 - alpha) / alpha;
                let ri_ro = bracketed_pairs(
                    v,
                    BAND,
                    PAIRS_PER_RATIO,
                    |ro| ro * ratio_ri_ro - rs.0,
                    |ro, ri| (((ri + rs.0) / ro) / ratio_ri_ro - 1.0).abs(),
                );
                for (ro, ri, _) in ri_ro {
                    for (rg, rf, _) in pairs(gain - 1.0) {
                        raw.push((map(&[("ri", ri), ("ro", ro), ("rg", rg), ("rf", rf)]), None));
                    }
                }
            }
            Shape::Inverting => {
                if a >= 0.0 {
                    return Vec::new();
                }
                let gain = -a;
                let ri_rf = bracketed_pairs(
                    v,
                    BAND,
                    PAIRS_PER_RATIO,
                    |ri| gain * (ri + rs.0),
                    |ri, rf| (rf / (ri + rs.0) / gain - 1.0).abs(),
                );
                for (ri, rf, _) in ri_rf {
                    match how {
                        Some(OffsetNetwork::InvertingRo) => {
                            if c >= 0.0 {
                                return Vec::new();
                            }
                            for ro in bracket(v, v[rf] * vsrc / (-c)) {
                                raw.push((map(&[("ri", ri), ("rf", rf), ("ro", ro)]), None));
                            }
                        }
                        Some(OffsetNetwork::InvertingBias) => {
                            let vb = c / (1.0 + v[rf] / (v[ri] + rs.0));
                            for (t, b) in dividers(vb) {
                                raw.push((map(&[("ri", ri), ("rf", rf)]), Some((t, b))));
                            }
                        }
                        _ => raw.push((map(&[("ri", ri), ("rf", rf)]), None)),
                    }
                }
            }
            Shape::Difference => {
                if a <= 0.0 {
                    return Vec::new();
                }
                let r1_r2 = bracketed_pairs(
                    v,
                    BAND,
                    PAIRS_PER_RATIO,
                    |r1| a * (r1 + rs.1),
                    |r1, r2| (r2 / (r1 + rs.1) / a - 1.0).abs(),
                );
                for (r1, r2, _) in r1_r2 {
                    let m = map(&[("r1", r1), ("r2", r2), ("r3", r1), ("r4", r2)]);
                    with_ref(&mut raw, m);
                }
            }
            Shape::InstrumentationDiscrete => {
                if a <= 1.0 {
                    return Vec::new();
                }
                let unity_nearest = nearest_values(v, 10_000.0, 1);
                let Some(&unity) = unity_nearest.first() else {
                    return Vec::new();
                };
                for (rg, rf, _) in pairs((a - 1.0) / 2.0) {
                    let m = map(&[
                        ("rf1", rf),
                        ("rf2", rf),
                        ("rg", rg),
                        ("r1", unity),
                        ("r2", unity),
                        ("r3", unity),
                        ("r4", unity),
                    ]);
                    with_ref(&mut raw, m);
                }
            }
            Shape::InstrumentationIntegrated => {
                if a <= 1.0 || rk <= 0.0 {
                    return Vec::new();
                }
                for rg in nearest_values(v, rk / (a - 1.0), 4) {
                    with_ref(&mut raw, map(&[("rg", rg)]));
                }
            }
        }
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
            let ohms = |role: &str| roles.get(role).map(|&i| v[i]).unwrap_or(f64::NAN);
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
            let f = |p: (f64, f64)| stage_output(shape, how, &ohms, vo, rth, rs, rk, p.0, p.1);
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
            let resistors: BTreeMap<String, Resistor> = value_set
                .resistors
                .iter()
                .map(|(k, &v)| (k.clone(), stage_resistor(v)))
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
            let buffer = if shape == Shape::InstrumentationIntegrated && offset.buffered() {
                group.opamp.map(|o| self.stock.opamps[o].part_id.clone())
            } else {
                None
            };
            let amplifier = if shape == Shape::InstrumentationIntegrated {
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
